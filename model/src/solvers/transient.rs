//! Stroke simulation: the stack travels through the finite tube in time, entry and exit
//! included, under gravity, an applied force, Coulomb friction and the eddy-current brake.
//!
//! Two fidelities share one discretisation of the wall ([`grid`](crate::solvers::rings::grid): axial rings of width
//! dz <= min(a, Lm)/8, cut into radial layers) and one tabulation of the stack's flux
//! derivative ([`fluxtable`](crate::solvers::rings::fluxtable)):
//!
//! - **Quasi-static** (inductance neglected, method `quasi_static_ring_sum`):
//!   m dv/dt = F_drive - friction - c(x) v with the drag profile c(x) of the finite tube
//!   ([`crate::solvers::dragprofile`]), trapezoidal in v (implicit), Coulomb friction implicit.
//!   Exact at low magnetic Reynolds number.
//! - **Inductive** (full ring circuit, method `ring_circuit`): L dI/dt + R I = v G(x),
//!   F = -G.I, BDF2 with a Schur-complement coupling to the mechanics on a moving window of
//!   rings with one banded Cholesky factor (the `stepper` submodule, [`circuit`],
//!   `kernels::banded`). The step is about half a ring width, and grows up to eight
//!   times that where the motion is steady and the estimated local error of the braking force
//!   stays small (the `inductive` submodule).
//!
//! Submodules: `plan` (validated options, expected speeds, end rules, what a run returns),
//! `quasistatic` and `inductive` (the two runs and their resolution checks), `summary` (the
//! stroke record and the run's cautions), and `reference` (the naive dense ring circuit, behind
//! the cargo feature `dense-reference`, for the benchmarks' baseline and the tests).
//!
//! `Auto` picks the inductive model when the magnetic Reynolds number Rm = mu0 sigma v w at
//! the expected largest speed in the tube exceeds [`AUTO_INDUCTIVE_REYNOLDS`].
//!
//! The run ends when the stack centre passes tube length + stack length, when it stops (stuck
//! by friction, or coasting below a tiny speed with no drive beyond friction), when it turns
//! back (an uphill launch: the stroke ends at the turning point), or at `max_time_s`.
//!
//! Error estimate (`model.error_estimate_relative`), the larger of two checks:
//! - *radial*: the relative change of the long-tube quasi-static damping when the radial layers
//!   are doubled (the wall quadrature is the leading spatial error; the axial ring sum of a
//!   smooth field converges much faster);
//! - *quasi-static runs*: the run is repeated at twice the ring width and step, and the relative
//!   change of the headline number (exit time, or the distance travelled when the stack does
//!   not exit) is taken; *inductive runs*: the relative imbalance of the energy ledger (work of
//!   the drive = kinetic change + heat + stored magnetic energy + friction work + energy of the
//!   currents dropped at the window edge), which measures the time integration.

pub mod circuit;
mod inductive;
mod plan;
mod quasistatic;
#[cfg(feature = "dense-reference")]
mod reference;
mod run;
mod stepper;
mod summary;

pub use inductive::{ConstantSpeedForce, constant_speed_force};
#[cfg(feature = "dense-reference")]
pub use reference::simulate_stroke_dense_reference;

use crate::records::caution::{Caution, CautionKind, push_unique};
use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::records::report::Fidelity;
use crate::records::stroke::{Stroke, StrokeOptions};
use crate::solvers::dragprofile::DragProfile;
use crate::solvers::rings::fluxtable::FluxTable;
use crate::solvers::rings::grid::RingGrid;
use crate::solvers::spectral::SteadySolver;
use inductive::inductive_path;
pub use plan::{
    AUTO_INDUCTIVE_REYNOLDS, ExpectedSpeeds, STEP_FRACTION, expected_speeds,
    magnetic_reynolds_number, quasi_static_overstatement,
};
use plan::{QuasiStaticContext, overstatement_note, plan, runaway_cautions, validate};
use quasistatic::quasi_static_path;
use summary::assemble;

/// The default cap on one factorised window matrix, kept with the other work limits.
pub use crate::records::limits::MAX_BAND_ENTRIES;

/// The window reach and the tube's slowest time constant live with the ring grid, which the
/// drag profile shares (so that `dragprofile` need not import this module).
pub use crate::solvers::rings::grid::{slowest_time_constant_s, window_half_length_m};

/// Simulates one stroke of `design` through its finite tube.
///
/// Validates the options (paths `start.position_m`, `start.speed_m_per_s`, `max_time_s`,
/// `samples`, `options.ring_width_m`, `options.radial_layers`), picks the fidelity, runs it,
/// and returns the summary, the series downsampled to `samples` points (first and last
/// included), the cautions (the standing safety caution first, then the design's, then the
/// run's) and the model block. See the module documentation for methods and the error
/// estimate.
///
/// # Errors
/// Invalid options ([`ModelError::Invalid`] naming each field), work beyond `limits`
/// ([`ModelError::TooLarge`]), cancellation by the limits' token, or a numerical failure of
/// the ring circuit.
pub fn simulate_stroke(
    design: &Design,
    opts: &StrokeOptions,
    limits: &Limits,
) -> Result<Stroke, ModelError> {
    simulate_stroke_with(design, opts, limits, None)
}

/// [`simulate_stroke`] with the steady solver of the same design (magnets and tube at the same
/// temperatures) when the caller already has one: the runaway and margin cautions are read
/// from it instead of building another. Without one, the stroke builds its own within
/// `limits` (cancellable by their token).
///
/// # Errors
/// As [`simulate_stroke`].
pub fn simulate_stroke_with(
    design: &Design,
    opts: &StrokeOptions,
    limits: &Limits,
    steady: Option<&SteadySolver>,
) -> Result<Stroke, ModelError> {
    validate(opts, design, limits)?;
    // Quasi-static profile at the default (or requested) resolution: needed by both
    // fidelities for the expected speed.
    let qs_grid = RingGrid::new(design, opts.ring_width_m, opts.radial_layers, None, limits)?;
    let base_reach = window_half_length_m(design, 0.0);
    let qs_table = FluxTable::checked(&design.magnets, &qs_grid, base_reach, limits)?;
    let profile = DragProfile::new(&qs_grid, &qs_table, base_reach);
    let c_mid = profile.mid_tube_n_s_per_m();
    let plan = plan(design, opts, limits, c_mid);
    let rm = magnetic_reynolds_number(design, plan.speeds.in_tube_m_per_s);
    let fidelity = match opts.fidelity {
        Fidelity::Auto => {
            if rm > AUTO_INDUCTIVE_REYNOLDS {
                Fidelity::Inductive
            } else {
                Fidelity::QuasiStatic
            }
        }
        f => f,
    };
    let mut cautions = vec![Caution::standing_safety()];
    for c in &design.cautions {
        push_unique(&mut cautions, c.clone());
    }
    let ctx = QuasiStaticContext {
        grid: &qs_grid,
        table: &qs_table,
        profile: &profile,
        base_reach_m: base_reach,
        c_mid_n_s_per_m: c_mid,
        reynolds: rm,
    };
    let (outcome, info) = match fidelity {
        Fidelity::Inductive => {
            match inductive_path(design, opts, limits, &plan, &ctx, &mut cautions) {
                Err(ModelError::TooLarge { message, .. }) if opts.fidelity == Fidelity::Auto => {
                    push_unique(
                        &mut cautions,
                        Caution::new(
                            CautionKind::Numerical,
                            format!(
                                "The inductive model is too large for the service limits ({message}); \
                                 the quasi-static model was used instead. {}",
                                overstatement_note(rm)
                            ),
                        ),
                    );
                    quasi_static_path(design, limits, &plan, &ctx, &mut cautions, false)?
                }
                other => other?,
            }
        }
        _ => quasi_static_path(design, limits, &plan, &ctx, &mut cautions, true)?,
    };
    let runaway = runaway_cautions(design, &plan, limits, steady)?;
    Ok(assemble(design, &plan, outcome, info, cautions, runaway))
}
