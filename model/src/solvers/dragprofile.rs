//! Quasi-static drag of a finite tube: the damping coefficient c(x) felt by the stack with
//! its centre at x (tube from 0 to its length).
//!
//! With inductance neglected each ring cell carries I = e / R, e = v dPhi/dzeta, so the
//! braking force is c(x) v with c(x) = sum_j (dPhi/dzeta(r_j, z_j - x))^2 / R_j over the ring
//! cells of the tube (the quasi-static limit of the ring circuit; e.g. Levin, da Silveira &
//! Rizzato, Am. J. Phys. 74, 815 (2006) for the same sum in integral form). Exact at low
//! magnetic Reynolds number, and it shows the end effects of a finite tube: with the stack
//! centre at an open end only the rings on one side brake, about half the mid-tube value.
//!
//! Speed: q(zeta) = sum over layers of (dPhi/dzeta)^2 / R is sampled once on the ring-aligned
//! grid of [`FluxTable`] (spacing dz / K); on stack positions that are multiples of dz / 4,
//! c(x) is an exact sum of table samples over the rings within reach. Where the reach lies
//! inside the tube, c(x) is periodic with the ring width and is taken from one period; between
//! grid positions c is interpolated by cubics.

use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::limits::Limits;
use crate::solvers::rings::fluxtable::{FluxTable, POINTS_PER_RING, cubic_weights};
use crate::solvers::rings::grid::RingGrid;
use crate::solvers::rings::grid::window_half_length_m;

/// Positions per ring width at which c(x) is tabulated.
pub const PROFILE_POINTS_PER_RING: i64 = 4;

/// The tabulated damping coefficient c(x) of a finite tube.
#[derive(Debug, Clone, PartialEq)]
pub struct DragProfile {
    /// Spacing of the position grid, m.
    spacing_m: f64,
    /// Index of the first grid position (position = index * spacing).
    first: i64,
    /// c at each grid position, N s/m.
    values: Vec<f64>,
    /// c of an infinitely long tube averaged over one ring width, N s/m.
    long_tube_n_s_per_m: f64,
    /// Largest tabulated c, N s/m.
    max_n_s_per_m: f64,
    /// Half-length of the reach around the stack centre, m.
    reach_m: f64,
}

/// Builds the drag profile of `design` at the default (or overridden) ring width and layers.
///
/// # Errors
///
/// As [`RingGrid::new`] for the grid, and
/// [`ModelError::TooLarge`] or [`ModelError::Cancelled`] from the flux table and the ring sums.
pub fn drag_profile(
    design: &Design,
    ring_width_m: Option<f64>,
    radial_layers: Option<usize>,
    limits: &Limits,
) -> Result<DragProfile, ModelError> {
    let grid = RingGrid::new(design, ring_width_m, radial_layers, None, limits)?;
    let reach = window_half_length_m(design, 0.0);
    let table = FluxTable::checked(&design.magnets, &grid, reach, limits)?;
    Ok(DragProfile::new(&grid, &table, reach))
}

/// The long-tube (mid-tube) damping coefficient alone, N s/m: the ring sum of an infinitely
/// long tube averaged over one ring width (cheaper than the whole profile).
pub fn long_tube_damping_n_s_per_m(grid: &RingGrid, table: &FluxTable, reach_m: f64) -> f64 {
    let sums = RingSums::new(grid, table, reach_m);
    let period: Vec<f64> = (0..PROFILE_POINTS_PER_RING)
        .map(|p| sums.at(p, None))
        .collect();
    period.iter().sum::<f64>() / period.len() as f64
}

/// q(zeta) = sum over layers of (dPhi/dzeta)^2 / R on the table grid, and the ring sums of it.
/// The rings sample q with stride K = [`POINTS_PER_RING`], so `cum` holds running sums of q
/// along each residue class modulo K: any ring sum is a difference of two entries, and the
/// whole profile costs time linear in its length (a direct sum per position would cost
/// positions x rings, quadratic in the tube length in ring widths).
struct RingSums {
    /// cum[i] = q[i] + cum[i - K], with q zero beyond the reach.
    cum: Vec<f64>,
    half: i64,
    reach_n: i64,
    step: i64,
}

impl RingSums {
    fn new(grid: &RingGrid, table: &FluxTable, reach_m: f64) -> Self {
        let h = table.spacing_m();
        let half = table.half_points();
        let reach_n = ((reach_m / h).floor() as i64).min(half);
        let q: Vec<f64> = (-half..=half)
            .map(|n| {
                if n.abs() > reach_n {
                    return 0.0;
                }
                (0..grid.layers)
                    .map(|l| table.sample(l, n).powi(2) / grid.layer_resistance_ohm[l])
                    .sum()
            })
            .collect();
        let k = POINTS_PER_RING as usize;
        let mut cum = q;
        for i in k..cum.len() {
            cum[i] += cum[i - k];
        }
        Self {
            cum,
            half,
            reach_n,
            step: POINTS_PER_RING / PROFILE_POINTS_PER_RING,
        }
    }

    /// cum at table index `n` (relative to zeta = 0), zero below the table.
    fn cum_at(&self, n: i64) -> f64 {
        let i = n + self.half;
        if i < 0 {
            0.0
        } else {
            self.cum.get(i as usize).copied().unwrap_or(0.0)
        }
    }

    /// c at position index p (x = p dz / PROFILE_POINTS_PER_RING), rings clipped to
    /// 0 .. rings when `clip` is given. Ring j has zeta index (2j + 1) K / 2 - p step.
    fn at(&self, p: i64, clip: Option<usize>) -> f64 {
        let k = POINTS_PER_RING;
        let shift = p * self.step;
        let j_lo = ((shift - self.reach_n) as f64 / k as f64 - 0.5).ceil() as i64;
        let j_hi = ((shift + self.reach_n) as f64 / k as f64 - 0.5).floor() as i64;
        let (j_lo, j_hi) = match clip {
            Some(n) => (j_lo.max(0), j_hi.min(n as i64 - 1)),
            None => (j_lo, j_hi),
        };
        // Keep the ring indices on the table (q is zero beyond the reach anyway).
        let j_lo = j_lo.max(((shift - self.half) as f64 / k as f64 - 0.5).ceil() as i64);
        let j_hi = j_hi.min(((shift + self.half) as f64 / k as f64 - 0.5).floor() as i64);
        if j_lo > j_hi {
            return 0.0;
        }
        let n_hi = (2 * j_hi + 1) * k / 2 - shift;
        let n_lo = (2 * j_lo + 1) * k / 2 - shift;
        self.cum_at(n_hi) - self.cum_at(n_lo - k)
    }
}

impl DragProfile {
    /// Tabulates c(x) for the tube of `grid`, summing rings with |z_j - x| <= `reach_m`.
    pub fn new(grid: &RingGrid, table: &FluxTable, reach_m: f64) -> Self {
        let sums = RingSums::new(grid, table, reach_m);
        let hx = grid.ring_width_m / PROFILE_POINTS_PER_RING as f64;
        let c_sum = |p: i64, clip: Option<usize>| sums.at(p, clip);
        // One period of the long-tube value (positions p = 0 .. PROFILE_POINTS_PER_RING).
        let period: Vec<f64> = (0..PROFILE_POINTS_PER_RING)
            .map(|p| c_sum(p, None))
            .collect();
        let long_tube = period.iter().sum::<f64>() / period.len() as f64;
        let length = grid.rings as f64 * grid.ring_width_m;
        let first = -((reach_m / hx).ceil() as i64) - 2;
        let last = ((length + reach_m) / hx).ceil() as i64 + 2;
        let values: Vec<f64> = (first..=last)
            .map(|p| {
                let x = p as f64 * hx;
                if x - reach_m >= 0.0 && x + reach_m <= length {
                    period[p.rem_euclid(PROFILE_POINTS_PER_RING) as usize]
                } else {
                    c_sum(p, Some(grid.rings))
                }
            })
            .collect();
        let max = values.iter().copied().fold(long_tube, f64::max);
        Self {
            spacing_m: hx,
            first,
            values,
            long_tube_n_s_per_m: long_tube,
            max_n_s_per_m: max,
            reach_m,
        }
    }

    /// Damping coefficient c with the stack centre at `x_m`, N s/m (zero outside the reach).
    pub fn damping_n_s_per_m(&self, x_m: f64) -> f64 {
        let s = x_m / self.spacing_m - self.first as f64;
        if !(s >= 1.0 && s < (self.values.len() - 3) as f64) {
            return 0.0;
        }
        let base = s.floor();
        let i = base as usize;
        let w = cubic_weights(s - base);
        (w[0] * self.values[i - 1]
            + w[1] * self.values[i]
            + w[2] * self.values[i + 1]
            + w[3] * self.values[i + 2])
            .max(0.0)
    }

    /// Mid-tube value: c of an infinitely long tube, averaged over one ring width, N s/m.
    pub fn mid_tube_n_s_per_m(&self) -> f64 {
        self.long_tube_n_s_per_m
    }

    /// Largest c anywhere along the tube, N s/m.
    pub fn max_n_s_per_m(&self) -> f64 {
        self.max_n_s_per_m
    }

    /// Half-length of the axial reach summed around the stack centre, m.
    pub fn reach_m(&self) -> f64 {
        self.reach_m
    }
}
