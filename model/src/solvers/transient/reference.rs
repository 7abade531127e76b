//! The naive dense reference of the inductive stroke (cargo feature `dense-reference`), for
//! the benchmarks' baseline and the tests: every ring of the tube carries current, the
//! inductance matrix is dense, and every step does dense triangular solves over all rings.

use super::circuit::RingCircuit;
use super::inductive::{check_band, ring_circuit_info, run_inductive};
use super::plan::{plan, validate};
use super::stepper::WindowMode;
use super::summary::assemble;
use crate::records::caution::Caution;
use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::records::stroke::{Stroke, StrokeOptions};
use crate::solvers::dragprofile::DragProfile;
use crate::solvers::rings::fluxtable::FluxTable;
use crate::solvers::rings::grid::RingGrid;
use crate::solvers::rings::grid::window_half_length_m;

/// The naive dense reference of the inductive stroke, for benchmarks and tests only: the same
/// discretisation, time stepping and step control, but every ring of the tube carries current,
/// the inductance matrix is dense (no truncation of mutual coupling), each step size is
/// factorised by a dense Cholesky, and every step does dense triangular solves over all rings.
/// Returns the stroke and the number of factorisations.
#[doc(hidden)]
pub fn simulate_stroke_dense_reference(
    design: &Design,
    opts: &StrokeOptions,
    limits: &Limits,
) -> Result<(Stroke, usize), ModelError> {
    validate(opts, design, limits)?;
    let qs_grid = RingGrid::new(design, opts.ring_width_m, opts.radial_layers, None, limits)?;
    let base_reach = window_half_length_m(design, 0.0);
    let qs_table = FluxTable::checked(&design.magnets, &qs_grid, base_reach, limits)?;
    let profile = DragProfile::new(&qs_grid, &qs_table, base_reach);
    let plan = plan(design, opts, limits, profile.mid_tube_n_s_per_m());
    let grid = RingGrid::new(
        design,
        opts.ring_width_m,
        opts.radial_layers,
        Some(plan.speeds.in_tube_m_per_s),
        limits,
    )?;
    // The whole tube is within reach of every ring: tabulate over the tube length.
    // Every ring is within reach of the stack while it is near the tube (beyond the table the
    // flux derivative counts as zero, as in the windowed solver).
    let table = FluxTable::checked(
        &design.magnets,
        &grid,
        design.tube.length_m + design.magnets.total_length_m() + base_reach,
        limits,
    )?;
    let circuit = RingCircuit::new(&grid, grid.rings.saturating_sub(1));
    check_band(
        &grid,
        &circuit,
        WindowMode::WholeTube,
        opts.radial_layers.is_some(),
        limits.max_band_entries,
    )?;
    let (outcome, factors) = run_inductive(
        &plan,
        &grid,
        &table,
        &circuit,
        WindowMode::WholeTube,
        profile.max_n_s_per_m(),
    )?;
    let err = outcome
        .tally
        .energy_balance_error(outcome.stored_j, outcome.dropped_j);
    let mut info = ring_circuit_info(
        "ring_circuit_dense_reference",
        &grid,
        &outcome,
        design.tube.length_m,
    );
    info.error_estimate_relative = Some(err);
    let cautions = vec![Caution::standing_safety()];
    let runaway = super::plan::runaway_cautions(design, &plan, limits, None)?;
    Ok((
        assemble(design, &plan, outcome, info, cautions, runaway),
        factors,
    ))
}
