//! The inductance of the ring cells of a uniform tube, as block-Toeplitz coupling blocks,
//! and the banded system matrix (c0 / dt) L + R of a window of rings.
//!
//! In a uniform tube the inductance between ring j, layer l1 and ring j + d, layer l2 depends
//! only on d, l1 and l2: `T_d[l1][l2]`. T_0's diagonal holds the self-inductances of rings of
//! rectangular cross-section (Rosa & Grover, Bull. Bureau of Standards 8(1), 1912; see
//! [`crate::kernels::inductance::self_rectangular_ring_h`]); every other entry is the mutual
//! inductance averaged over both cross-sections ([`crate::kernels::inductance::mutual_cells_h`]),
//! which, unlike filaments at the cell centres, keeps the matrix positive definite. T_d is
//! symmetric in (l1, l2) because the mutual inductance of coaxial loops is symmetric in the
//! radii and even in the separation.
//!
//! Mutual terms fall off as d^-3 (the far field of coaxial loops); coupling is kept out to
//! [`COUPLING_REACH_OUTER_RADII`] outer radii and dropped beyond (the change this makes is
//! measured in the tests). Unknowns are ordered ring-major (index = ring * layers + layer), so
//! the window matrix is banded with half-bandwidth (p + 1) layers - 1 for a reach of p rings.

use crate::kernels::banded::BandMatrix;
use crate::kernels::inductance::{mutual_cells_h, self_rectangular_ring_h};
use crate::solvers::rings::grid::RingGrid;

/// Axial reach of the mutual coupling kept in the ring circuit, in outer radii of the tube.
/// Measured on a three-magnet stack at 10 m/s with 1200 rings: dropping mutual terms beyond 4
/// radii changed the force by 6e-5, beyond 2 radii by 0.5 %; at 1 radius the truncated matrix
/// was no longer positive definite.
pub const COUPLING_REACH_OUTER_RADII: f64 = 4.0;

/// Block-Toeplitz inductance of a uniform tube truncated at a reach of `reach_rings` rings.
#[derive(Debug, Clone, PartialEq)]
pub struct RingCircuit {
    layers: usize,
    reach_rings: usize,
    /// blocks[d * layers^2 + l1 * layers + l2] = T_d[l1][l2], H.
    blocks: Vec<f64>,
    /// Resistance of a ring cell of each layer, Ohm.
    resistance_ohm: Vec<f64>,
}

impl RingCircuit {
    /// Coupling blocks of `grid` out to `reach_rings` rings.
    pub fn new(grid: &RingGrid, reach_rings: usize) -> Self {
        let nl = grid.layers;
        let mut blocks = vec![0.0; (reach_rings + 1) * nl * nl];
        for d in 0..=reach_rings {
            for l1 in 0..nl {
                for l2 in l1..nl {
                    let v = if d == 0 && l1 == l2 {
                        let c = grid.cell(0, l1);
                        self_rectangular_ring_h(c.r_m, c.axial_m, c.radial_m)
                    } else {
                        mutual_cells_h(&grid.cell(0, l1), &grid.cell(d as i64, l2))
                    };
                    blocks[d * nl * nl + l1 * nl + l2] = v;
                    blocks[d * nl * nl + l2 * nl + l1] = v;
                }
            }
        }
        Self {
            layers: nl,
            reach_rings,
            blocks,
            resistance_ohm: grid.layer_resistance_ohm.clone(),
        }
    }

    /// Reach of the coupling in rings for `grid` (the named constant times the outer radius).
    pub fn default_reach_rings(grid: &RingGrid, outer_radius_m: f64) -> usize {
        ((COUPLING_REACH_OUTER_RADII * outer_radius_m / grid.ring_width_m).ceil() as usize).max(1)
    }

    /// Coupling reach in rings.
    pub fn reach_rings(&self) -> usize {
        self.reach_rings
    }

    /// Layers per ring.
    pub fn layers(&self) -> usize {
        self.layers
    }

    /// Resistance per layer, Ohm.
    pub fn resistance_ohm(&self) -> &[f64] {
        &self.resistance_ohm
    }

    /// T_d as a layers x layers row-major block (d = ring offset, 0 ..= reach).
    pub fn block(&self, d: usize) -> &[f64] {
        let n2 = self.layers * self.layers;
        &self.blocks[d * n2..(d + 1) * n2]
    }

    /// Inductance between (ring j1, layer l1) and (ring j2, layer l2) with the truncation, H.
    pub fn inductance_h(&self, j1: i64, l1: usize, j2: i64, l2: usize) -> f64 {
        let d = (j1 - j2).unsigned_abs() as usize;
        if d > self.reach_rings {
            0.0
        } else {
            self.block(d)[l1 * self.layers + l2]
        }
    }

    /// Half-bandwidth of the window matrix in unknowns.
    pub fn half_bandwidth(&self) -> usize {
        (self.reach_rings + 1) * self.layers - 1
    }

    /// The window matrix `inductance_scale` L + R for `rings` consecutive rings.
    pub(crate) fn system_matrix(&self, rings: usize, inductance_scale: f64) -> BandMatrix {
        let nl = self.layers;
        let n = rings * nl;
        let mut a = BandMatrix::zeros(n, self.half_bandwidth());
        for j in 0..rings {
            for d in 0..=self.reach_rings.min(j) {
                let blk = self.block(d);
                for l1 in 0..nl {
                    for l2 in 0..nl {
                        let i = j * nl + l1;
                        let k = (j - d) * nl + l2;
                        if k > i {
                            continue;
                        }
                        let mut v = inductance_scale * blk[l1 * nl + l2];
                        if i == k {
                            v += self.resistance_ohm[l1];
                        }
                        a.set(i, k, v);
                    }
                }
            }
        }
        a
    }

    /// psi[ring r] += scale * T_|d| i[ring s] for one pair of rings at offset d = r - s
    /// (no-op beyond the reach). `psi` and `current` are per-ring slices of `layers` values.
    pub fn add_coupling(&self, psi: &mut [f64], current: &[f64], d: usize, scale: f64) {
        if d > self.reach_rings {
            return;
        }
        let nl = self.layers;
        let blk = self.block(d);
        for l1 in 0..nl {
            let row = &blk[l1 * nl..(l1 + 1) * nl];
            let s: f64 = row.iter().zip(current).map(|(t, c)| t * c).sum();
            psi[l1] += scale * s;
        }
    }

    /// Flux linkage psi = L i of a window of `rings` rings (ring-major vectors).
    pub fn flux_linkage(&self, current: &[f64], psi: &mut [f64]) {
        let nl = self.layers;
        let rings = current.len() / nl;
        psi[..rings * nl].fill(0.0);
        for r in 0..rings {
            let lo = r.saturating_sub(self.reach_rings);
            let hi = (r + self.reach_rings).min(rings.saturating_sub(1));
            for s in lo..=hi {
                let d = r.abs_diff(s);
                let (p, c) = (
                    &mut psi[r * nl..(r + 1) * nl],
                    &current[s * nl..(s + 1) * nl],
                );
                self.add_coupling(p, c, d, 1.0);
            }
        }
    }
}
