//! The stack's flux derivative dPhi/dzeta per radial layer, tabulated once per run on a fine
//! axial grid so that no elliptic integral is evaluated inside a time loop.
//!
//! The grid spacing is h = dz / K with K = [`POINTS_PER_RING`] (an even integer), and the grid
//! is aligned with the rings: for a stack centre at x, every ring j sits at the same fractional
//! position between table points, zeta_j = z_j - x = (i0 + j K + phi) h. One set of four
//! cubic (Lagrange) weights per time step then serves every ring of every layer; at stack
//! positions on the grid the values are exact samples.
//!
//! dPhi/dzeta has its sharpest features at the magnet ends, of width about the distance from
//! the magnet surface to the layer (at least half a layer, about dz/2): with K = 16 the cubic
//! interpolation error is far below the discretisation error of the rings themselves.

use crate::kernels::inductance::mutual_filaments_h;
use crate::records::cancel::CancelToken;
use crate::records::design::MagnetStack;
use crate::records::error::{ModelError, show};
use crate::records::limits::Limits;
use crate::solvers::rings::grid::RingGrid;

/// Kernel evaluations (about 0.1 us each) between two cancellation checks of a tabulation.
const CANCEL_CHECK_POINTS: usize = 4096;

/// Stacks with at most this many current-sheet ends are tabulated by direct evaluation.
pub const DIRECT_ENDS: usize = 8;

/// The stack's current-sheet ends: (axial position from the stack centre, coefficient), with
/// coincident ends merged and cancelled ones dropped.
pub fn sheet_ends(stack: &MagnetStack) -> Vec<(f64, f64)> {
    let half = 0.5 * stack.magnet_length_m;
    let tol = 1e-9 * stack.magnet_length_m;
    let mut ends: Vec<(f64, f64)> = Vec::with_capacity(2 * stack.count);
    for (o, s) in stack.magnets() {
        for (e, c) in [(o - half, s), (o + half, -s)] {
            match ends.iter_mut().find(|(p, _)| (p - e).abs() <= tol) {
                Some(slot) => slot.1 += c,
                None => ends.push((e, c)),
            }
        }
    }
    ends.retain(|(_, c)| c.abs() > 1e-12);
    ends
}

/// Table points per ring width (even, so that ring centres fall on table points when the stack
/// centre is on one).
pub const POINTS_PER_RING: i64 = 16;

/// dPhi/dzeta of the stack per layer, on zeta = n h for |n| <= half_points.
#[derive(Debug, Clone, PartialEq)]
pub struct FluxTable {
    spacing_m: f64,
    half_points: i64,
    layers: usize,
    /// values[l * len + (n + half_points)].
    values: Vec<f64>,
}

/// Four cubic Lagrange weights on nodes -1, 0, 1, 2 at fractional position `phi` in [0, 1).
pub fn cubic_weights(phi: f64) -> [f64; 4] {
    let (p, pm1, pm2, pp1) = (phi, phi - 1.0, phi - 2.0, phi + 1.0);
    [
        -p * pm1 * pm2 / 6.0,
        pp1 * pm1 * pm2 / 2.0,
        -pp1 * p * pm2 / 2.0,
        pp1 * p * pm1 / 6.0,
    ]
}

/// Where the rings sit in the table for one stack position: ring j uses table index
/// `base + j * POINTS_PER_RING` (relative to zeta = 0) and the four `weights` on indices
/// base - 1 ..= base + 2.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RingAlignment {
    /// Table index (relative to zeta = 0) at or below ring 0's zeta.
    pub base: i64,
    /// Cubic weights.
    pub weights: [f64; 4],
}

/// Whether `value <= cap` (false for NaN).
fn within(value: f64, cap: f64) -> bool {
    matches!(
        value.partial_cmp(&cap),
        Some(std::cmp::Ordering::Less | std::cmp::Ordering::Equal)
    )
}

/// Memory and work of one tabulation, estimated from the stack and the grid before anything
/// is allocated (f64 arithmetic, so absurd designs cannot overflow the estimate).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TableCost {
    /// f64 entries held at once (the table, plus the kernel table of long stacks).
    pub entries: f64,
    /// Kernel (loop-mutual) evaluations, interpolation terms counted as 1/16 of one.
    pub evaluations: f64,
}

impl TableCost {
    /// The cost of tabulating `stack` on `grid` over |zeta| <= `reach_m`, as [`FluxTable::new`]
    /// would do it.
    pub fn of(stack: &MagnetStack, grid: &RingGrid, reach_m: f64) -> Self {
        let h = grid.ring_width_m / POINTS_PER_RING as f64;
        let len = 2.0 * ((reach_m / h).ceil() + 3.0) + 1.0;
        let layers = grid.layers as f64;
        let ends = sheet_ends(stack);
        let sheets = if stack.inner_radius_m > 0.0 { 2.0 } else { 1.0 };
        let n_ends = ends.len() as f64;
        if ends.len() <= DIRECT_ENDS {
            Self {
                entries: layers * len,
                evaluations: layers * len * n_ends * sheets,
            }
        } else {
            let span = ends.iter().fold(0.0_f64, |m, (e, _)| m.max(e.abs()));
            let kernel = 2.0 * (((reach_m + span) / (0.25 * h)).ceil() + 4.0) + 1.0;
            Self {
                entries: layers * len + kernel,
                evaluations: layers * sheets * (kernel + n_ends * len / 16.0),
            }
        }
    }

    /// Refuses a tabulation above `limits`, naming the design field that drives its size.
    ///
    /// # Errors
    /// [`ModelError::TooLarge`] naming the design field that drives the size.
    pub fn check(
        &self,
        stack: &MagnetStack,
        grid: &RingGrid,
        limits: &Limits,
    ) -> Result<(), ModelError> {
        // NaN counts as over.
        let entries_over = !within(self.entries, limits.max_table_entries as f64);
        let work_over = !within(self.evaluations, limits.max_kernel_evaluations as f64);
        if !(entries_over || work_over) {
            return Ok(());
        }
        let stack_length = stack.total_length_m();
        // The table spans half the stack plus a margin of outer radii, on a spacing set by
        // min(bore radius, magnet length): name what dominates.
        let a = grid.layer_inner_m.first().copied().unwrap_or(0.0);
        let b = grid.layer_outer_m.last().copied().unwrap_or(0.0);
        let path = if stack.count > 1 && stack_length > 4.0 * stack.magnet_length_m {
            "design.magnets.count"
        } else if 0.5 * stack_length >= 5.0 * b || stack.magnet_length_m < a {
            "design.magnets.length_m"
        } else {
            "design.tube.wall_thickness_m"
        };
        let what = if entries_over {
            format!(
                "the flux table would hold {} entries, above the service limit of {}",
                show(self.entries),
                limits.max_table_entries
            )
        } else {
            format!(
                "the flux table would need {} kernel evaluations, above the service limit of {}",
                show(self.evaluations),
                limits.max_kernel_evaluations
            )
        };
        Err(ModelError::TooLarge {
            path: path.into(),
            message: format!(
                "{what}: a stack {} m long (magnets {} m long, {} m across) is resolved on rings \
                 {} m wide with {} radial layers; shorten the stack, use fewer or longer magnets, \
                 or set a coarser options.ring_width_m",
                show(stack_length),
                show(stack.magnet_length_m),
                show(2.0 * stack.outer_radius_m),
                show(grid.ring_width_m),
                grid.layers
            ),
        })
    }
}

/// What a tabulation depends on besides the stack's surface current: the current-sheet ends,
/// the sheet radii, the grid (ring width and layer radii) and the reach, as exact bits.
fn table_key(stack: &MagnetStack, grid: &RingGrid, reach_m: f64) -> Vec<u64> {
    let mut key = vec![
        stack.outer_radius_m.to_bits(),
        stack.inner_radius_m.to_bits(),
        grid.ring_width_m.to_bits(),
        grid.layers as u64,
        reach_m.to_bits(),
    ];
    key.extend(grid.layer_mean_m.iter().map(|r| r.to_bits()));
    for (e, c) in sheet_ends(stack) {
        key.extend([e.to_bits(), c.to_bits()]);
    }
    key
}

impl FluxTable {
    /// Like [`FluxTable::new`], after checking its [`TableCost`] against `limits` (every
    /// request-driven tabulation goes through here).
    ///
    /// Within a job that carries a table cache ([`Limits::with_job_cache`]) a table of the same
    /// geometry (stack ends and radii, grid and reach) is taken from the cache and scaled by
    /// the stack's surface current: the table is linear in it, so conditions that differ only
    /// in remanence, temperature or conductivity share one tabulation.
    ///
    /// # Errors
    /// The tabulation would exceed `limits` ([`ModelError::TooLarge`]), or the job was cancelled.
    pub fn checked(
        stack: &MagnetStack,
        grid: &RingGrid,
        reach_m: f64,
        limits: &Limits,
    ) -> Result<Self, ModelError> {
        TableCost::of(stack, grid, reach_m).check(stack, grid, limits)?;
        let ks = stack.surface_current_a_per_m();
        let key = table_key(stack, grid, reach_m);
        if let Some(unit) = limits.tables.get::<FluxTable>(&key) {
            return Ok(unit.scaled(ks));
        }
        let unit = Self::tabulate_unit(stack, grid, reach_m, &limits.cancel)?;
        let table = unit.scaled(ks);
        if limits.tables.is_enabled() {
            let n = unit.values.len();
            limits.tables.insert(key, std::sync::Arc::new(unit), n);
        }
        Ok(table)
    }

    /// This table with every value times `factor`.
    fn scaled(&self, factor: f64) -> Self {
        Self {
            spacing_m: self.spacing_m,
            half_points: self.half_points,
            layers: self.layers,
            values: self.values.iter().map(|v| v * factor).collect(),
        }
    }

    /// Tabulates the stack's dPhi/dzeta for the layers of `grid` over |zeta| <= `reach_m`
    /// (plus a few points for interpolation).
    ///
    /// The stack is reduced to its current-sheet ends: magnet i (centre o_i, sign s_i) adds
    /// +s_i at o_i - Lm/2 and -s_i at o_i + Lm/2, coincident ends are merged (an aligned stack
    /// without spacers keeps only its two outer ends), and dPhi/dzeta =
    /// K sum_k c_k [M(Ro, r, zeta - e_k) - M(Ri, r, zeta - e_k)] with M Maxwell's loop mutual
    /// inductance (the closed form of [`crate::solvers::flux`]). Up to [`DIRECT_ENDS`] ends every table
    /// point is evaluated directly; beyond, M is first tabulated at a quarter of the spacing and
    /// each end's term is interpolated from it (cubic), which keeps long stacks linear in cost.
    pub fn new(stack: &MagnetStack, grid: &RingGrid, reach_m: f64) -> Self {
        match Self::tabulate_unit(stack, grid, reach_m, &CancelToken::never()) {
            Ok(unit) => unit.scaled(stack.surface_current_a_per_m()),
            // A token that never fires never stops the tabulation.
            Err(_) => Self {
                spacing_m: grid.ring_width_m / POINTS_PER_RING as f64,
                half_points: 0,
                layers: grid.layers,
                values: vec![0.0; grid.layers],
            },
        }
    }

    /// [`FluxTable::new`] for a unit surface current (1 A/m), checking `cancel` every
    /// [`CANCEL_CHECK_POINTS`] table points: the caller scales it by the stack's, so a cached
    /// and a fresh table give the same bits.
    fn tabulate_unit(
        stack: &MagnetStack,
        grid: &RingGrid,
        reach_m: f64,
        cancel: &CancelToken,
    ) -> Result<Self, ModelError> {
        let h = grid.ring_width_m / POINTS_PER_RING as f64;
        let half_points = (reach_m / h).ceil() as i64 + 3;
        let len = (2 * half_points + 1) as usize;
        let ends = sheet_ends(stack);
        // Unit surface current; the caller scales.
        let ks = 1.0;
        let mut sheets = vec![(stack.outer_radius_m, 1.0)];
        if stack.inner_radius_m > 0.0 {
            sheets.push((stack.inner_radius_m, -1.0));
        }
        let mut values = vec![0.0; grid.layers * len];
        for l in 0..grid.layers {
            let r = grid.layer_mean_m[l];
            let row = &mut values[l * len..(l + 1) * len];
            if ends.len() <= DIRECT_ENDS {
                for (k, slot) in row.iter_mut().enumerate() {
                    if k % CANCEL_CHECK_POINTS == 0 {
                        cancel.check()?;
                    }
                    let zeta = (k as i64 - half_points) as f64 * h;
                    let mut sum = 0.0;
                    for &(e, c) in &ends {
                        for &(radius, sign) in &sheets {
                            sum += c * sign * mutual_filaments_h(radius, r, zeta - e);
                        }
                    }
                    *slot = ks * sum;
                }
            } else {
                // M(d) on a grid of spacing h / 4 covering every |zeta - e_k|.
                let hm = 0.25 * h;
                let span = ends.iter().fold(0.0_f64, |m, (e, _)| m.max(e.abs()));
                let half_m = ((reach_m + span) / hm).ceil() as i64 + 4;
                for &(radius, sign) in &sheets {
                    cancel.check()?;
                    let mut kernel = Vec::with_capacity((2 * half_m + 1).max(0) as usize);
                    for n in -half_m..=half_m {
                        if n % CANCEL_CHECK_POINTS as i64 == 0 {
                            cancel.check()?;
                        }
                        kernel.push(mutual_filaments_h(radius, r, n as f64 * hm));
                    }
                    for &(e, c) in &ends {
                        cancel.check()?;
                        // zeta_k - e = (4 (k - half_points) - e / hm) hm: one fraction per end.
                        let s0 = -e / hm;
                        let base = s0.floor();
                        let w = cubic_weights(s0 - base);
                        let base = base as i64;
                        for (k, slot) in row.iter_mut().enumerate() {
                            let n = 4 * (k as i64 - half_points) + base;
                            let i = n - 1 + half_m;
                            if i < 0 || i + 3 >= kernel.len() as i64 {
                                continue;
                            }
                            let i = i as usize;
                            let m = w[0] * kernel[i]
                                + w[1] * kernel[i + 1]
                                + w[2] * kernel[i + 2]
                                + w[3] * kernel[i + 3];
                            *slot += ks * c * sign * m;
                        }
                    }
                }
            }
        }
        Ok(Self {
            spacing_m: h,
            half_points,
            layers: grid.layers,
            values,
        })
    }

    /// Table spacing h, m.
    pub fn spacing_m(&self) -> f64 {
        self.spacing_m
    }

    /// Largest |table index| (relative to zeta = 0).
    pub fn half_points(&self) -> i64 {
        self.half_points
    }

    /// The sample at table index `n` (relative to zeta = 0) of layer `l`; zero off the table.
    pub fn sample(&self, l: usize, n: i64) -> f64 {
        if n.abs() > self.half_points {
            return 0.0;
        }
        let len = (2 * self.half_points + 1) as usize;
        self.values[l * len + (n + self.half_points) as usize]
    }

    /// Samples of layer `l` as a slice indexed by n + half_points.
    pub fn layer(&self, l: usize) -> &[f64] {
        let len = (2 * self.half_points + 1) as usize;
        &self.values[l * len..(l + 1) * len]
    }

    /// Number of layers.
    pub fn layers(&self) -> usize {
        self.layers
    }

    /// The alignment of the rings of `grid` for a stack centre at `x_m`.
    pub fn align(&self, grid: &RingGrid, x_m: f64) -> RingAlignment {
        // Ring 0's zeta in table units.
        let s = (0.5 * grid.ring_width_m - x_m) / self.spacing_m;
        let base = s.floor();
        RingAlignment {
            base: base as i64,
            weights: cubic_weights(s - base),
        }
    }

    /// dPhi/dzeta of layer `l` at ring `j` for the alignment `al`, Wb/m (zero off the table).
    pub fn at_ring(&self, l: usize, j: i64, al: &RingAlignment) -> f64 {
        let n = al.base + j * POINTS_PER_RING;
        if n - 1 < -self.half_points || n + 2 > self.half_points {
            return 0.0;
        }
        let row = self.layer(l);
        let i = (n - 1 + self.half_points) as usize;
        let w = &al.weights;
        w[0] * row[i] + w[1] * row[i + 1] + w[2] * row[i + 2] + w[3] * row[i + 3]
    }

    /// dPhi/dzeta of layer `l` at an arbitrary `zeta_m` by cubic interpolation, Wb/m.
    pub fn at(&self, l: usize, zeta_m: f64) -> f64 {
        let s = zeta_m / self.spacing_m;
        let base = s.floor();
        let n = base as i64;
        let w = cubic_weights(s - base);
        (0..4)
            .map(|k| w[k] * self.sample(l, n - 1 + k as i64))
            .sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::records::design::Design;
    use crate::records::limits::Limits;
    use crate::records::spec::Polarity;
    use crate::solvers::flux::flux_derivative_wb_per_m;

    #[test]
    fn cubic_weights_reproduce_cubics() {
        // source: common practice (4-point Lagrange interpolation is exact for cubics).
        let f = |x: f64| 0.3 * x * x * x - x * x + 2.0 * x - 0.5;
        for phi in [0.0, 0.25, 0.5, 0.9] {
            let w = cubic_weights(phi);
            let v: f64 = (0..4).map(|k| w[k] * f(k as f64 - 1.0)).sum();
            assert!((v - f(phi)).abs() < 1e-13);
        }
    }

    #[test]
    fn interpolation_matches_direct_evaluation() {
        let d = Design::from_spec(&crate::records::design::tests::sample_spec()).expect("valid");
        let grid = RingGrid::new(&d, None, None, None, &Limits::default()).expect("grid");
        let table = FluxTable::new(&d.magnets, &grid, 0.05);
        let peak = (0..2000)
            .map(|i| table.at(0, -0.02 + i as f64 * 2e-5).abs())
            .fold(0.0, f64::max);
        for i in 0..97 {
            let zeta = -0.03 + i as f64 * 0.000_613;
            for l in 0..grid.layers {
                let direct = flux_derivative_wb_per_m(&d.magnets, grid.layer_mean_m[l], zeta);
                // source: common practice (interpolation error well below the 1e-3 relative
                // accuracy the ring discretisation itself reaches).
                assert!(
                    (table.at(l, zeta) - direct).abs() < 2e-4 * peak,
                    "{zeta} {l}"
                );
            }
        }
    }

    #[test]
    fn stacks_tabulate_their_closed_form() {
        // Both tabulation paths (direct and via the kernel table) against the closed-form
        // flux derivative of the whole stack at the table points (source: Amperian current
        // model, Jackson, Classical Electrodynamics, 3rd ed., sec. 5.8-5.10, as in crate::solvers::flux).
        let mut spec = crate::records::design::tests::sample_spec();
        for (count, polarity, spacer, inner) in [
            (3, Polarity::Alternating, 0.002, 0.0),
            (2, Polarity::Aligned, 0.0, 0.004),
            (12, Polarity::Alternating, 0.0, 0.0),
            (10, Polarity::Aligned, 0.003, 0.005),
        ] {
            spec.magnets.count = count;
            spec.magnets.polarity = polarity;
            spec.magnets.spacer_length_m = spacer;
            spec.magnets.inner_diameter_m = inner;
            spec.magnets.length_m = 0.005;
            let d = Design::from_spec(&spec).expect("valid");
            let grid = RingGrid::new(&d, None, None, None, &Limits::default()).expect("grid");
            let reach = 0.5 * d.magnets.total_length_m() + 0.02;
            let table = FluxTable::new(&d.magnets, &grid, reach);
            let n = (reach / table.spacing_m()) as i64;
            let mut peak = 0.0_f64;
            let mut worst = 0.0_f64;
            for l in 0..grid.layers {
                for k in (-n..=n).step_by(7) {
                    let zeta = k as f64 * table.spacing_m();
                    let direct = flux_derivative_wb_per_m(&d.magnets, grid.layer_mean_m[l], zeta);
                    peak = peak.max(direct.abs());
                    worst = worst.max((table.sample(l, k) - direct).abs());
                }
            }
            // source: common practice (direct path to rounding; kernel path to its cubic
            // interpolation at a quarter of the spacing).
            assert!(worst < 1e-5 * peak, "count {count}: {worst} vs peak {peak}");
        }
        // An aligned stack without spacers keeps only its two outer ends (source: common
        // practice - the inner sheets of touching magnets cancel).
        spec.magnets.count = 5;
        spec.magnets.polarity = Polarity::Aligned;
        spec.magnets.spacer_length_m = 0.0;
        let d = Design::from_spec(&spec).expect("valid");
        assert_eq!(sheet_ends(&d.magnets).len(), 2);
    }
}
