//! Named scalar metrics of a design, for sweeps and sizing: every scalar of the steady force
//! curve and of the stroke summary, by the names the HTTP contract uses.

use crate::records::caution::{Caution, CautionKind, push_unique, steady_load_cautions};
use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::records::stroke::{StrokeOptions, StrokeSummary};
use crate::solvers::spectral::{Resolution, SteadyMetrics, SteadySolver};
use serde::{Deserialize, Serialize};

/// A scalar result that sweeps and sizing can report.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub enum Metric {
    /// Steady speed at which braking balances the load, m/s (null on runaway).
    #[serde(rename = "terminal_speed_m_per_s")]
    TerminalSpeed,
    /// Low-speed damping coefficient, N s/m.
    #[serde(rename = "damping_n_s_per_m")]
    Damping,
    /// Peak braking force, N.
    #[serde(rename = "peak_force_n")]
    PeakForce,
    /// Speed of the peak braking force, m/s.
    #[serde(rename = "critical_speed_m_per_s")]
    CriticalSpeed,
    /// Magnetic Reynolds number at the terminal (or critical) speed.
    #[serde(rename = "magnetic_reynolds_number")]
    MagneticReynolds,
    /// Steady driving force of the load, N.
    #[serde(rename = "drive_force_n")]
    DriveForce,
    /// Moving mass, kg.
    #[serde(rename = "moving_mass_kg")]
    MovingMass,
    /// Time for the stack centre to reach the far end of the tube, s (null if never).
    #[serde(rename = "exit_time_s")]
    ExitTime,
    /// Speed at that moment, m/s.
    #[serde(rename = "exit_speed_m_per_s")]
    ExitSpeed,
    /// Largest speed of the stroke, m/s.
    #[serde(rename = "max_speed_m_per_s")]
    MaxSpeed,
    /// Largest deceleration of the stroke, m/s^2.
    #[serde(rename = "max_deceleration_m_per_s2")]
    MaxDeceleration,
    /// Largest braking force of the stroke, N.
    #[serde(rename = "max_braking_force_n")]
    MaxBrakingForce,
    /// Heat dissipated in the tube per stroke, J.
    #[serde(rename = "heat_j")]
    Heat,
    /// Adiabatic temperature rise of the swept tube, K.
    #[serde(rename = "tube_temperature_rise_k")]
    TubeTemperatureRise,
    /// Relative energy-ledger imbalance of the stroke.
    #[serde(rename = "energy_balance_error")]
    EnergyBalanceError,
    /// Speed at the end stop (the landing speed), m/s (null if the stack never gets there).
    #[serde(rename = "landing_speed_m_per_s")]
    LandingSpeed,
    /// Time from the start to the end stop, s (null if never).
    #[serde(rename = "stroke_time_s")]
    StrokeTime,
    /// Largest speed before the stack centre reaches the entry, m/s.
    #[serde(rename = "max_speed_before_entry_m_per_s")]
    MaxSpeedBeforeEntry,
}

/// What a metric needs computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Source {
    /// The design record alone (mass, driving force).
    Design,
    /// The steady solver.
    Steady,
    /// A stroke simulation.
    Stroke,
}

/// One row of the metric table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MetricInfo {
    /// Name in requests and responses (the serde name).
    pub name: &'static str,
    /// Words for an axis title (`terminal speed`).
    pub words: &'static str,
    /// Unit as a plot prints it (`m/s`, `1` when dimensionless).
    pub unit: &'static str,
    /// What computes it.
    pub source: Source,
}

const fn row(
    name: &'static str,
    words: &'static str,
    unit: &'static str,
    source: Source,
) -> MetricInfo {
    MetricInfo {
        name,
        words,
        unit,
        source,
    }
}

/// The metric table, in the order of [`Metric::ALL`].
static METRICS: [MetricInfo; 18] = [
    row(
        "terminal_speed_m_per_s",
        "terminal speed",
        "m/s",
        Source::Steady,
    ),
    row("damping_n_s_per_m", "damping", "N s/m", Source::Steady),
    row("peak_force_n", "peak force", "N", Source::Steady),
    row(
        "critical_speed_m_per_s",
        "critical speed",
        "m/s",
        Source::Steady,
    ),
    row(
        "magnetic_reynolds_number",
        "magnetic reynolds number",
        "1",
        Source::Steady,
    ),
    row("drive_force_n", "drive force", "N", Source::Design),
    row("moving_mass_kg", "moving mass", "kg", Source::Design),
    row("exit_time_s", "exit time", "s", Source::Stroke),
    row("exit_speed_m_per_s", "exit speed", "m/s", Source::Stroke),
    row("max_speed_m_per_s", "max speed", "m/s", Source::Stroke),
    row(
        "max_deceleration_m_per_s2",
        "max deceleration",
        "m/s²",
        Source::Stroke,
    ),
    row(
        "max_braking_force_n",
        "max braking force",
        "N",
        Source::Stroke,
    ),
    row("heat_j", "heat", "J", Source::Stroke),
    row(
        "tube_temperature_rise_k",
        "tube temperature rise",
        "K",
        Source::Stroke,
    ),
    row(
        "energy_balance_error",
        "energy balance error",
        "1",
        Source::Stroke,
    ),
    row(
        "landing_speed_m_per_s",
        "landing speed",
        "m/s",
        Source::Stroke,
    ),
    row("stroke_time_s", "stroke time", "s", Source::Stroke),
    row(
        "max_speed_before_entry_m_per_s",
        "max speed before entry",
        "m/s",
        Source::Stroke,
    ),
];

impl Metric {
    /// Every metric, in table order.
    pub const ALL: [Self; 18] = [
        Self::TerminalSpeed,
        Self::Damping,
        Self::PeakForce,
        Self::CriticalSpeed,
        Self::MagneticReynolds,
        Self::DriveForce,
        Self::MovingMass,
        Self::ExitTime,
        Self::ExitSpeed,
        Self::MaxSpeed,
        Self::MaxDeceleration,
        Self::MaxBrakingForce,
        Self::Heat,
        Self::TubeTemperatureRise,
        Self::EnergyBalanceError,
        Self::LandingSpeed,
        Self::StrokeTime,
        Self::MaxSpeedBeforeEntry,
    ];

    /// The metric's row in the table.
    pub fn info(self) -> &'static MetricInfo {
        &METRICS[self as usize]
    }

    /// The metric's name in requests and responses.
    pub fn name(self) -> &'static str {
        self.info().name
    }

    /// An axis title: the words and the unit (`terminal speed [m/s]`).
    pub fn axis_title(self) -> String {
        format!("{} [{}]", self.info().words, self.info().unit)
    }

    /// Whether the metric needs a stroke simulation (otherwise the steady solver serves).
    pub fn needs_stroke(self) -> bool {
        self.info().source == Source::Stroke
    }

    /// Whether the metric needs the steady solver.
    pub fn needs_steady(self) -> bool {
        self.info().source == Source::Steady
    }
}

/// Metrics order by name, so that maps keyed by them list names alphabetically, as maps keyed
/// by the names did.
impl Ord for Metric {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        self.name().cmp(other.name())
    }
}

impl PartialOrd for Metric {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}

impl std::fmt::Display for Metric {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// The values of `metrics` for one design, with the cautions that computing them decided.
#[derive(Debug, Clone, PartialEq)]
pub struct Evaluation {
    /// The values in the order asked; None where a metric does not exist.
    pub values: Vec<Option<f64>>,
    /// The design's cautions and those of the results (runaway, margin against it, heating,
    /// numerical remarks), without the standing safety caution.
    pub cautions: Vec<Caution>,
    /// Estimated relative numerical error of the values (the larger of the steady companion's
    /// change and the stroke's own estimate), None when neither was measured.
    pub error_estimate_relative: Option<f64>,
}

/// The values of `metrics` for one design, in the order asked. A steady solver built for the
/// same magnets and tube may be passed in to be reused.
///
/// # Errors
/// As the solvers: work limits, cancellation, a stroke that cannot run.
pub fn evaluate(
    design: &Design,
    metrics: &[Metric],
    stroke: &StrokeOptions,
    limits: &Limits,
    solver: Option<&SteadySolver>,
) -> Result<Vec<Option<f64>>, ModelError> {
    Ok(evaluate_with(design, metrics, stroke, limits, solver, None)?.values)
}

/// A steady solver and its resolution companion ([`Resolution::Companion`]), built once and
/// shared by every design with the same magnets and tube.
#[derive(Debug, Clone)]
pub struct SteadyPair {
    /// The solver at the default resolution.
    pub solver: SteadySolver,
    /// The coarser companion for the error estimate.
    pub companion: SteadySolver,
}

impl SteadyPair {
    /// Both solvers for `design` at the default resolution, within the work `limits`.
    ///
    /// # Errors
    /// [`ModelError::TooLarge`] above the work limits, [`ModelError::Cancelled`] when the
    /// job's token fires.
    pub fn new(design: &Design, limits: &Limits) -> Result<Self, ModelError> {
        Ok(Self {
            solver: SteadySolver::new_within(design, None, limits)?,
            companion: SteadySolver::at(design, None, Resolution::Companion, limits)?,
        })
    }
}

/// Like [`evaluate`], with the cautions of the design and of the results: the same cautions
/// the force-curve and simulate endpoints give for this design, decided by the same functions
/// ([`crate::records::caution::steady_load_cautions`], the stroke's own). The estimate covers the
/// stroke only (no steady companion is built); see [`evaluate_estimated`].
///
/// # Errors
/// As the solvers: work limits, cancellation, a stroke that cannot run.
pub fn evaluate_with_cautions(
    design: &Design,
    metrics: &[Metric],
    stroke: &StrokeOptions,
    limits: &Limits,
    solver: Option<&SteadySolver>,
) -> Result<Evaluation, ModelError> {
    evaluate_with(design, metrics, stroke, limits, solver, None)
}

/// Like [`evaluate_with_cautions`], and the estimated relative numerical error of the values:
/// the larger of the steady solver's ([`crate::solvers::spectral::metrics_change`]) and the stroke's
/// (`error_estimate_relative` of the stroke), None when neither ran. A solver pair built for
/// the same magnets and tube may be passed in to be reused.
///
/// # Errors
/// As the solvers: work limits, cancellation, a stroke that cannot run.
pub fn evaluate_estimated(
    design: &Design,
    metrics: &[Metric],
    stroke: &StrokeOptions,
    limits: &Limits,
    solvers: Option<&SteadyPair>,
) -> Result<Evaluation, ModelError> {
    let needs_steady = metrics.iter().any(|m| m.needs_steady());
    let own;
    let pair = match solvers {
        Some(p) => Some(p),
        None if needs_steady => {
            own = SteadyPair::new(design, limits)?;
            Some(&own)
        }
        None => None,
    };
    evaluate_with(
        design,
        metrics,
        stroke,
        limits,
        pair.map(|p| &p.solver),
        pair.map(|p| &p.companion),
    )
}

/// The values and cautions, with an estimate from the steady companion when one is given.
fn evaluate_with(
    design: &Design,
    metrics: &[Metric],
    stroke: &StrokeOptions,
    limits: &Limits,
    solver: Option<&SteadySolver>,
    companion: Option<&SteadySolver>,
) -> Result<Evaluation, ModelError> {
    let mut estimate: Option<f64> = None;
    let mut cautions: Vec<Caution> = Vec::new();
    for c in &design.cautions {
        push_unique(&mut cautions, c.clone());
    }
    let own;
    let solver = match solver {
        Some(s) => Some(s),
        None if metrics.iter().any(|m| m.needs_steady()) => {
            own = SteadySolver::new_within(design, None, limits)?;
            Some(&own)
        }
        None => None,
    };
    let needs_steady = metrics.iter().any(|m| m.needs_steady());
    let steady: Option<SteadyMetrics> = if let Some(solver) = solver.filter(|_| needs_steady) {
        let m = solver.metrics(design);
        if let Some(c) = companion {
            estimate = Some(crate::solvers::spectral::metrics_change(
                &m,
                &c.metrics(design),
            ));
        }
        for c in steady_load_cautions(
            m.drive_force_n,
            m.peak_force_n,
            m.critical_speed_m_per_s,
            m.terminal_speed_m_per_s,
        ) {
            push_unique(&mut cautions, c);
        }
        Some(m)
    } else {
        None
    };
    let summary: Option<StrokeSummary> = if metrics.iter().any(|m| m.needs_stroke()) {
        // The stroke reads runaway from the same steady solver instead of building another.
        let run = crate::solvers::transient::simulate_stroke_with(design, stroke, limits, solver)?;
        if let Some(e) = run.model.error_estimate_relative {
            estimate = Some(estimate.map_or(e, |x| x.max(e)));
        }
        for c in run.cautions {
            if c.kind != CautionKind::Safety {
                push_unique(&mut cautions, c);
            }
        }
        Some(run.summary)
    } else {
        None
    };
    let values = metrics
        .iter()
        .map(|m| {
            let s = steady.as_ref();
            let t = summary.as_ref();
            match m {
                Metric::TerminalSpeed => s.and_then(|s| s.terminal_speed_m_per_s),
                Metric::Damping => s.map(|s| s.damping_n_s_per_m),
                Metric::PeakForce => s.map(|s| s.peak_force_n),
                Metric::CriticalSpeed => s.map(|s| s.critical_speed_m_per_s),
                Metric::MagneticReynolds => s.map(|s| s.magnetic_reynolds_number),
                Metric::DriveForce => Some(design.steady_drive_force_n()),
                Metric::MovingMass => Some(design.moving_mass_kg()),
                Metric::ExitTime => t.and_then(|t| t.exit_time_s),
                Metric::ExitSpeed => t.and_then(|t| t.exit_speed_m_per_s),
                Metric::MaxSpeed => t.map(|t| t.max_speed_m_per_s),
                Metric::MaxDeceleration => t.map(|t| t.max_deceleration_m_per_s2),
                Metric::MaxBrakingForce => t.map(|t| t.max_braking_force_n),
                Metric::Heat => t.map(|t| t.heat_j),
                Metric::TubeTemperatureRise => t.and_then(|t| t.tube_temperature_rise_k),
                Metric::EnergyBalanceError => t.map(|t| t.energy_balance_error),
                Metric::LandingSpeed => t.and_then(|t| t.landing_speed_m_per_s),
                Metric::StrokeTime => t.and_then(|t| t.stroke_time_s),
                Metric::MaxSpeedBeforeEntry => t.and_then(|t| t.max_speed_before_entry_m_per_s),
            }
            .filter(|x| x.is_finite())
        })
        .collect();
    Ok(Evaluation {
        values,
        cautions,
        error_estimate_relative: estimate.filter(|e| e.is_finite()),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_names_are_the_serde_names() {
        for (i, m) in Metric::ALL.iter().enumerate() {
            assert_eq!(*m as usize, i, "table order");
            assert_eq!(
                serde_json::to_value(m).expect("serialises"),
                serde_json::Value::String(m.name().to_string())
            );
        }
        assert_eq!(
            Metric::MaxDeceleration.axis_title(),
            "max deceleration [m/s²]"
        );
    }
}
