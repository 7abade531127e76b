//! Work limits: caps that keep one job within a bounded time and memory. The service sets
//! them from its configuration; exceeding one is a [`ModelError::TooLarge`] naming the field
//! that drives the size.

use crate::records::cancel::CancelToken;
use crate::records::error::ModelError;

/// Caps on the size of a job.
#[derive(Debug, Clone, PartialEq)]
pub struct Limits {
    /// Most speeds in one force curve.
    pub max_speeds: usize,
    /// Most ring cells (axial rings x radial layers) in one ring-circuit run.
    pub max_ring_cells: usize,
    /// Most time steps in one stroke.
    pub max_steps: usize,
    /// Longest simulated time, s.
    pub max_time_s: f64,
    /// Most samples in a returned series.
    pub max_samples: usize,
    /// Most radial layers.
    pub max_radial_layers: usize,
    /// Most points in one sweep.
    pub max_sweep_points: usize,
    /// Largest band storage of one factorised ring-circuit window matrix, entries (it also
    /// bounds the work of one time step to about 4x this many multiply-adds).
    pub max_band_entries: usize,
    /// Most entries (radial layers x axial points) in one tabulation of the stack's flux
    /// derivative, and in its drag profile; 8 bytes each.
    pub max_table_entries: usize,
    /// Most evaluations of the loop-mutual kernel (complete elliptic integrals, about 0.1 us
    /// each) to build one flux table.
    pub max_kernel_evaluations: usize,
    /// Most evaluations of the stack factor (Gauss points x magnets) in the spectral solver's
    /// product integration, about 20 ns each.
    pub max_quadrature_terms: usize,
    /// Stops the job cooperatively when its deadline passes or its caller goes away; the
    /// default never cancels.
    pub cancel: CancelToken,
}

/// Largest band storage of one factorised window matrix of the stroke solver, entries (16 MB
/// of f64; up to four factors are cached per run). It also bounds the work of one step to
/// about 4x this many multiply-adds.
pub const MAX_BAND_ENTRIES: usize = 2 << 20;

impl Default for Limits {
    fn default() -> Self {
        Self {
            max_speeds: 2000,
            max_ring_cells: 20_000,
            max_steps: 2_000_000,
            max_time_s: 3600.0,
            max_samples: 20_000,
            max_radial_layers: 32,
            max_sweep_points: 10_000,
            max_band_entries: MAX_BAND_ENTRIES,
            max_table_entries: 1 << 22,
            max_kernel_evaluations: 20_000_000,
            max_quadrature_terms: 100_000_000,
            cancel: CancelToken::never(),
        }
    }
}

impl Limits {
    /// These limits with `cancel` as the job's cancellation token.
    pub fn with_cancel(&self, cancel: CancelToken) -> Self {
        Self {
            cancel,
            ..self.clone()
        }
    }

    /// Checks `value <= cap`, naming `path` otherwise.
    ///
    /// # Errors
    ///
    /// [`ModelError::TooLarge`] naming `path` when `value` exceeds `cap`.
    pub fn check(path: &str, what: &str, value: usize, cap: usize) -> Result<(), ModelError> {
        if value > cap {
            Err(ModelError::TooLarge {
                path: path.to_string(),
                message: format!("{what} would be {value}, above the service limit of {cap}"),
            })
        } else {
            Ok(())
        }
    }
}
