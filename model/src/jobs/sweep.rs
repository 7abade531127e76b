//! Sweeps: a grid over one to three design fields, chosen metrics at every point.
//!
//! Points run in parallel (rayon) and are handed to a sink as they finish, so a caller can
//! stream them. What does not change between points is computed once: when the grid varies
//! only load fields (mass, incline, applied force, friction, gravity) along some axes, the
//! steady solver — the expensive part — depends only on the other axes, so points are
//! grouped by those and each group builds its solver once (and drops it when its last point
//! is done, keeping memory bounded). A point that fails (an invalid design at that corner of
//! the grid, say) carries its error; the others still arrive.

use crate::jobs::metrics::{Evaluation, Metric, SteadyPair, evaluate_estimated};
use crate::records::caution::Caution;
use crate::records::design::Design;
use crate::records::designfield::DesignField;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::records::spec::DesignSpec;
use crate::records::stroke::StrokeOptions;
use rayon::prelude::*;
use serde::Serialize;
use std::collections::BTreeMap;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};

/// Most axes in one sweep.
pub const MAX_AXES: usize = 3;

/// One axis of the grid: a design field and its values.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepAxis {
    /// The design field.
    pub field: DesignField,
    /// Values the field takes.
    pub values: Vec<f64>,
}

impl SweepAxis {
    /// `steps` evenly spaced values of `field` from `from` to `to` inclusive.
    pub fn linspace(field: DesignField, from: f64, to: f64, steps: usize) -> Self {
        Self {
            field,
            values: linspace(from, to, steps),
        }
    }
}

/// `steps` evenly spaced values from `from` to `to` inclusive (`from` alone for one step).
pub fn linspace(from: f64, to: f64, steps: usize) -> Vec<f64> {
    if steps <= 1 {
        vec![from]
    } else {
        (0..steps)
            .map(|i| from + (to - from) * i as f64 / (steps - 1) as f64)
            .collect()
    }
}

/// One computed point.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct SweepPoint {
    /// Position of the point in the grid (row-major, the last axis fastest).
    pub index: usize,
    /// Value of each varied field at this point, by path.
    pub inputs: BTreeMap<DesignField, f64>,
    /// Each requested metric by name; null where it does not exist (e.g. no terminal speed
    /// on runaway) or the point failed.
    pub metrics: BTreeMap<Metric, Option<f64>>,
    /// Why the point failed, or null.
    pub error: Option<String>,
    /// Estimated relative numerical error of the point's metrics (the change between two
    /// resolutions of the steady solver, and the stroke's own estimate), or null.
    pub error_estimate_relative: Option<f64>,
    /// Cautions of this point's design and results (runaway, clearance, magnet temperature...;
    /// no standing caution), decided as on every other endpoint.
    pub cautions: Vec<Caution>,
}

/// Fields that leave the steady solver unchanged (see [`DesignField::changes_solver`]).
fn is_solver_invariant(field: DesignField) -> bool {
    !field.changes_solver()
}

/// A validated sweep, ready to run.
#[derive(Debug, Clone)]
pub struct SweepPlan {
    base: DesignSpec,
    axes: Vec<SweepAxis>,
    metrics: Vec<Metric>,
    stroke: StrokeOptions,
    limits: Limits,
    /// Axis order used to enumerate points: solver-changing axes first, load axes last.
    strides: Vec<usize>,
    group_size: usize,
}

/// Relative cost of a point by the metrics it needs (units: one steady solve).
fn point_cost(metrics: &[Metric], stroke: &StrokeOptions) -> usize {
    if metrics.iter().any(|m| m.needs_stroke()) {
        match stroke.fidelity {
            crate::records::report::Fidelity::QuasiStatic => 5,
            _ => 50,
        }
    } else {
        1
    }
}

impl SweepPlan {
    /// Checks the axes (1 to 3, distinct fields, finite values, whole numbers for whole-number
    /// fields), the metrics (at least one, distinct) and the size of the job against `limits`.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming the axis or metric at fault, [`ModelError::TooLarge`]
    /// above the work limits.
    pub fn new(
        base: DesignSpec,
        axes: Vec<SweepAxis>,
        metrics: Vec<Metric>,
        stroke: StrokeOptions,
        limits: Limits,
    ) -> Result<Self, ModelError> {
        if axes.is_empty() || axes.len() > MAX_AXES {
            return Err(ModelError::field(
                "vary",
                format!("give 1 to {MAX_AXES} axes"),
            ));
        }
        let mut points = 1usize;
        for (i, axis) in axes.iter().enumerate() {
            if axes[..i].iter().any(|a| a.field == axis.field) {
                return Err(ModelError::field(
                    format!("vary[{i}].path"),
                    "each path may be varied once",
                ));
            }
            if axis.values.is_empty() {
                return Err(ModelError::field(
                    format!("vary[{i}].values"),
                    "give at least one value",
                ));
            }
            if let Some(j) = axis.values.iter().position(|v| !v.is_finite()) {
                return Err(ModelError::field(
                    format!("vary[{i}].values[{j}]"),
                    "must be a finite number",
                ));
            }
            for v in &axis.values {
                axis.field.check_whole(
                    *v,
                    &format!("vary[{i}]"),
                    " (for a range, choose from, to and steps so that every step is whole)",
                )?;
            }
            points = points.saturating_mul(axis.values.len());
        }
        if metrics.is_empty() {
            return Err(ModelError::field("metrics", "give at least one metric"));
        }
        for (i, m) in metrics.iter().enumerate() {
            if metrics[..i].contains(m) {
                return Err(ModelError::field(
                    format!("metrics[{i}]"),
                    "each metric may be asked once",
                ));
            }
        }
        Limits::check(
            "vary",
            "number of sweep points",
            points,
            limits.max_sweep_points,
        )?;
        let work = points.saturating_mul(point_cost(&metrics, &stroke));
        Limits::check(
            "metrics",
            "estimated work (points x cost per point: 1 steady, 5 quasi-static stroke, 50 inductive stroke)",
            work,
            limits.max_sweep_points,
        )?;
        // Enumerate solver-changing axes first so that load axes vary fastest.
        let mut order: Vec<usize> = (0..axes.len())
            .filter(|&i| !is_solver_invariant(axes[i].field))
            .collect();
        let load: Vec<usize> = (0..axes.len())
            .filter(|&i| is_solver_invariant(axes[i].field))
            .collect();
        let group_size = load.iter().map(|&i| axes[i].values.len()).product();
        order.extend(load);
        let axes: Vec<SweepAxis> = order.into_iter().map(|i| axes[i].clone()).collect();
        let mut strides = vec![1; axes.len()];
        for k in (0..axes.len().saturating_sub(1)).rev() {
            strides[k] = strides[k + 1] * axes[k + 1].values.len();
        }
        Ok(Self {
            base,
            axes,
            metrics,
            stroke,
            limits,
            strides,
            group_size,
        })
    }

    /// Number of points.
    pub fn len(&self) -> usize {
        self.axes.iter().map(|a| a.values.len()).product()
    }

    /// Whether the grid is empty (never, once validated).
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The axes in enumeration order.
    pub fn axes(&self) -> &[SweepAxis] {
        &self.axes
    }

    /// The metrics asked.
    pub fn metrics(&self) -> &[Metric] {
        &self.metrics
    }

    fn inputs(&self, index: usize) -> Vec<(DesignField, f64)> {
        self.axes
            .iter()
            .zip(&self.strides)
            .map(|(axis, &stride)| {
                (
                    axis.field,
                    axis.values[(index / stride) % axis.values.len()],
                )
            })
            .collect()
    }

    fn design_at(&self, index: usize) -> Result<Design, ModelError> {
        let mut spec = self.base.clone();
        for (field, value) in self.inputs(index) {
            field.set(&mut spec, value)?;
        }
        Design::from_spec(&spec)
    }

    fn point(&self, index: usize, values: Result<Evaluation, ModelError>) -> SweepPoint {
        let inputs = self.inputs(index).into_iter().collect();
        match values {
            Ok(v) => SweepPoint {
                index,
                inputs,
                metrics: self.metrics.iter().copied().zip(v.values).collect(),
                error: None,
                error_estimate_relative: v.error_estimate_relative,
                cautions: v.cautions,
            },
            Err(e) => SweepPoint {
                index,
                inputs,
                metrics: self.metrics.iter().map(|m| (*m, None)).collect(),
                error: Some(e.to_string()),
                error_estimate_relative: None,
                cautions: Vec::new(),
            },
        }
    }

    /// This plan with `cancel` as its cancellation token (see [`SweepPlan::run_while`]).
    pub fn with_cancel(mut self, cancel: crate::records::cancel::CancelToken) -> Self {
        self.limits.cancel = cancel;
        self
    }

    /// Runs every point in parallel, handing each to `sink` as it finishes (in no fixed order).
    pub fn run(&self, sink: impl Fn(SweepPoint) + Sync + Send) {
        self.run_while(|| true, sink);
    }

    /// Like [`SweepPlan::run`], but a point not yet started is skipped (and not handed to the
    /// sink) once `keep_going` answers false or the plan's cancellation token
    /// (`Limits::cancel`) fires: a caller whose client has gone, or whose deadline has passed,
    /// stops the remaining work. Points already running stop at their next cancellation check
    /// and are dropped too.
    pub fn run_while(
        &self,
        keep_going: impl Fn() -> bool + Sync + Send,
        sink: impl Fn(SweepPoint) + Sync + Send,
    ) {
        // One table cache for the job: points of the same geometry share flux tables.
        let limits = self.limits.with_job_cache();
        let limits = &limits;
        let needs_steady = self.metrics.iter().any(|m| m.needs_steady());
        let groups = self.len() / self.group_size.max(1);
        let slots: Vec<(Mutex<Option<Arc<SteadyPair>>>, AtomicUsize)> = (0..groups)
            .map(|_| (Mutex::new(None), AtomicUsize::new(self.group_size)))
            .collect();
        // A group's solver is dropped once its last point is done (or skipped).
        let release = |index: usize| {
            if needs_steady {
                let (slot, remaining) = &slots[index / self.group_size];
                if remaining.fetch_sub(1, Ordering::AcqRel) == 1 {
                    *slot.lock().unwrap_or_else(|p| p.into_inner()) = None;
                }
            }
        };
        (0..self.len()).into_par_iter().for_each(|index| {
            if !keep_going() || limits.cancel.is_cancelled() {
                release(index);
                return;
            }
            let values = self.design_at(index).and_then(|design| {
                let solver = if needs_steady {
                    let (slot, _) = &slots[index / self.group_size];
                    let mut guard = slot.lock().unwrap_or_else(|p| p.into_inner());
                    let s = match guard.as_ref() {
                        Some(s) => Arc::clone(s),
                        None => {
                            let s = Arc::new(SteadyPair::new(&design, limits)?);
                            *guard = Some(Arc::clone(&s));
                            s
                        }
                    };
                    Some(s)
                } else {
                    None
                };
                evaluate_estimated(
                    &design,
                    &self.metrics,
                    &self.stroke,
                    limits,
                    solver.as_deref(),
                )
            });
            release(index);
            // A point stopped by the job's cancellation is not a result: it is dropped like
            // the points never started.
            if matches!(values, Err(ModelError::Cancelled)) {
                return;
            }
            sink(self.point(index, values));
        });
    }

    /// Runs every point and returns them in grid order.
    pub fn run_collect(&self) -> Vec<SweepPoint> {
        let out = Mutex::new(Vec::with_capacity(self.len()));
        self.run(|p| out.lock().unwrap_or_else(|e| e.into_inner()).push(p));
        let mut v = out.into_inner().unwrap_or_else(|e| e.into_inner());
        v.sort_by_key(|p| p.index);
        v
    }
}
