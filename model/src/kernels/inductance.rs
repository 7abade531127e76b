//! Inductance and resistance of coaxial circular rings.
//!
//! - Mutual inductance of two coaxial filament loops, Maxwell's formula
//!   M = mu0 sqrt(r1 r2) [(2/k - k) K(k) - (2/k) E(k)], k^2 = 4 r1 r2 / ((r1 + r2)^2 + d^2)
//!   (Maxwell, Treatise, 1873, art. 701; Rosa & Grover, Bull. Bureau of Standards 8(1), 1912,
//!   formula (1)); evaluated through [`crate::kernels::elliptic::maxwell_bracket`], stable for far and
//!   for close loops.
//! - Self-inductance of a ring of rectangular cross-section, L = mu0 r (ln(8 r / g) - 2), with
//!   g the self geometric mean distance of the rectangle (Rosa & Grover 1912; Grover,
//!   Inductance Calculations, 1946). The leading term of Stefan's formula: curvature terms of
//!   relative size (cell/r)^2 are neglected, below 1 % for the cells this crate builds.
//! - Mutual inductance of two ring cells of rectangular cross-section, averaged over both
//!   cross-sections by tensor Gauss-Legendre points, elongated cells cut into near-square
//!   pieces when close (filaments at the centres only when far apart and small against the
//!   radius).
//! - Resistance of a ring to azimuthal current, R = 2 pi rho / (dz ln(r_o / r_i)).

use crate::MU0;
use crate::kernels::elliptic::maxwell_bracket;

/// Mutual inductance of two coaxial filament loops of radii `r1`, `r2` at axial separation
/// `d`, H. Symmetric in r1, r2 and even in d. Coincident loops (r1 = r2, d = 0) give +inf.
pub(crate) fn mutual_filaments_h(r1_m: f64, r2_m: f64, d_m: f64) -> f64 {
    let sum2 = (r1_m + r2_m).powi(2) + d_m * d_m;
    let m = 4.0 * r1_m * r2_m / sum2;
    let m1 = ((r1_m - r2_m).powi(2) + d_m * d_m) / sum2;
    MU0 * (r1_m * r2_m).sqrt() * maxwell_bracket(m, m1)
}

/// Natural log of the self geometric mean distance of a rectangle with sides `x`, `y`
/// (Rosa & Grover 1912, formula for the GMD of a rectangle; a square gives g = 0.44705 side).
pub(crate) fn ln_gmd_rectangle(x: f64, y: f64) -> f64 {
    let d = x.hypot(y);
    d.ln()
        - (x * x / (6.0 * y * y)) * (1.0 + y * y / (x * x)).sqrt().ln()
        - (y * y / (6.0 * x * x)) * (1.0 + x * x / (y * y)).sqrt().ln()
        + (2.0 * x / (3.0 * y)) * (y / x).atan()
        + (2.0 * y / (3.0 * x)) * (x / y).atan()
        - 25.0 / 12.0
}

/// Self-inductance of a circular ring of mean radius `r` with a rectangular cross-section
/// `axial` x `radial`, H: L = mu0 r (ln(8 r / g) - 2).
pub(crate) fn self_rectangular_ring_h(r_m: f64, axial_m: f64, radial_m: f64) -> f64 {
    MU0 * r_m * ((8.0 * r_m).ln() - ln_gmd_rectangle(axial_m, radial_m) - 2.0)
}

/// A ring cell: mean radius, axial centre, and its cross-section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct RingCell {
    /// Mean radius, m.
    pub(crate) r_m: f64,
    /// Axial position of the centre, m.
    pub(crate) z_m: f64,
    /// Axial width, m.
    pub(crate) axial_m: f64,
    /// Radial thickness, m.
    pub(crate) radial_m: f64,
}

/// Gauss-Legendre nodes and weights on [-1/2, 1/2] (weights sum to 1).
fn gauss_half(n: usize) -> &'static [(f64, f64)] {
    const G2: [(f64, f64); 2] = [
        (-0.288_675_134_594_812_9, 0.5),
        (0.288_675_134_594_812_9, 0.5),
    ];
    const G4: [(f64, f64); 4] = [
        (-0.430_568_155_797_026_3, 0.173_927_422_568_727),
        (-0.169_990_521_792_428_1, 0.326_072_577_431_273),
        (0.169_990_521_792_428_1, 0.326_072_577_431_273),
        (0.430_568_155_797_026_3, 0.173_927_422_568_727),
    ];
    if n <= 2 { &G2 } else { &G4 }
}

/// Mutual inductance of two distinct ring cells, H, averaged over both cross-sections
/// (uniform current density in each).
///
/// A tensor Gauss rule loses accuracy when the cells are close compared with their shorter
/// side: the filament kernel has a logarithmic singularity where the cells touch. So, for
/// cells within three cross-section diagonals of each other, an elongated cell (long side over
/// 1.5 times the short one) is first cut along its long side into near-square pieces, and each
/// pair of pieces is averaged by its own rule: 4x4 Gauss points per piece within three piece
/// diagonals, 2x2 within ten, and beyond that the centre filaments, but only when the cells are
/// also small against their radius (diagonal below 1 % of it). The centre-filament error is the
/// second-order term of the cross-section average, about (w/r)^2 / 8 relative at any distance,
/// so larger cells keep the 2x2 rule.
///
/// Measured against exact averages (integration tests): touching square cells of side r/15,
/// 1.8e-4 relative; touching flat cells of aspect 1:4 and 1:10, 4e-5 and 2e-5 (4e-3 and
/// 1.8e-2 with an uncut 4x4 rule, enough to make the inductance matrix of a column of such
/// cells indefinite); separated cells, below 1e-5. Cost: about 10 us for a near pair of
/// square cells, 1.5-6 ms for a near pair of flat cells (aspect 1:10 to 1:100).
pub(crate) fn mutual_cells_h(a: &RingCell, b: &RingCell) -> f64 {
    let diag = cell_diagonal(a).max(cell_diagonal(b));
    let dist = (a.r_m - b.r_m).hypot(a.z_m - b.z_m);
    if dist >= 3.0 * diag {
        return mutual_cell_pieces_h(a, b);
    }
    let (na_r, na_z) = near_square_pieces(a);
    let (nb_r, nb_z) = near_square_pieces(b);
    if na_r * na_z * nb_r * nb_z == 1 {
        return mutual_cell_pieces_h(a, b);
    }
    let mut sum = 0.0;
    for pa in cell_pieces(a, na_r, na_z) {
        for pb in cell_pieces(b, nb_r, nb_z) {
            sum += mutual_cell_pieces_h(&pa, &pb);
        }
    }
    // Equal-area pieces: the mean over pairs is the mean over both cross-sections.
    sum / (na_r * na_z * nb_r * nb_z) as f64
}

/// Largest number of pieces along one side when an elongated cell is cut (bounds the cost
/// for extreme aspect ratios; pieces then stay elongated but the error stays small).
const MAX_PIECES: usize = 32;

fn cell_diagonal(c: &RingCell) -> f64 {
    c.axial_m.hypot(c.radial_m)
}

/// Pieces (radial, axial) that cut a cell into near-square parts along its long side.
fn near_square_pieces(c: &RingCell) -> (usize, usize) {
    let (long, short) = if c.radial_m >= c.axial_m {
        (c.radial_m, c.axial_m)
    } else {
        (c.axial_m, c.radial_m)
    };
    if short <= 0.0 || long <= 1.5 * short {
        return (1, 1);
    }
    let n = ((long / short).round() as usize).clamp(1, MAX_PIECES);
    if c.radial_m >= c.axial_m {
        (n, 1)
    } else {
        (1, n)
    }
}

/// The `nr` x `nz` equal pieces of a cell.
fn cell_pieces(c: &RingCell, nr: usize, nz: usize) -> impl Iterator<Item = RingCell> + '_ {
    let (dr, dz) = (c.radial_m / nr as f64, c.axial_m / nz as f64);
    (0..nr).flat_map(move |i| {
        (0..nz).map(move |j| RingCell {
            r_m: c.r_m - 0.5 * c.radial_m + (i as f64 + 0.5) * dr,
            z_m: c.z_m - 0.5 * c.axial_m + (j as f64 + 0.5) * dz,
            axial_m: dz,
            radial_m: dr,
        })
    })
}

/// Cross-section average of the filament mutual for two cells by a rule chosen from their
/// distance (see [`mutual_cells_h`]).
fn mutual_cell_pieces_h(a: &RingCell, b: &RingCell) -> f64 {
    let diag = cell_diagonal(a).max(cell_diagonal(b));
    let dist = (a.r_m - b.r_m).hypot(a.z_m - b.z_m);
    let n = if dist < 3.0 * diag {
        4
    } else if dist < 10.0 * diag || diag > 0.01 * a.r_m.min(b.r_m) {
        2
    } else {
        return mutual_filaments_h(a.r_m, b.r_m, a.z_m - b.z_m);
    };
    let g = gauss_half(n);
    let mut sum = 0.0;
    for &(ra, wra) in g {
        let r1 = a.r_m + ra * a.radial_m;
        for &(za, wza) in g {
            let z1 = a.z_m + za * a.axial_m;
            for &(rb, wrb) in g {
                let r2 = b.r_m + rb * b.radial_m;
                for &(zb, wzb) in g {
                    let z2 = b.z_m + zb * b.axial_m;
                    sum += wra * wza * wrb * wzb * mutual_filaments_h(r1, r2, z1 - z2);
                }
            }
        }
    }
    sum
}

/// Resistance of a ring of axial width `dz` spanning radii `r_in`..`r_out` to azimuthal
/// current, Ohm: R = 2 pi / (sigma dz ln(r_out / r_in)) (exact for uniform conductivity).
#[cfg(test)] // only the checks use it since the kernels became crate-private
pub(crate) fn ring_resistance_ohm(
    conductivity_s_per_m: f64,
    r_in_m: f64,
    r_out_m: f64,
    dz_m: f64,
) -> f64 {
    2.0 * std::f64::consts::PI / (conductivity_s_per_m * dz_m * (r_out_m / r_in_m).ln())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn square_gmd() {
        // source: Rosa & Grover, Bull. Bureau of Standards 8(1), 1912: GMD of a square is
        // 0.44705 times its side.
        assert!((ln_gmd_rectangle(1.0, 1.0).exp() - 0.44705).abs() < 5e-6);
        assert!((ln_gmd_rectangle(2.0, 2.0).exp() - 2.0 * 0.44705).abs() < 1e-5);
    }

    #[test]
    fn reciprocity_and_parity() {
        let m12 = mutual_filaments_h(0.01, 0.013, 0.004);
        let m21 = mutual_filaments_h(0.013, 0.01, -0.004);
        assert!((m12 - m21).abs() <= 1e-15 * m12.abs());
    }

    #[test]
    fn far_field_limit() {
        // Far coaxial loops: M -> pi mu0 a^2 b^2 / (2 d^3) (source: dipole-dipole limit of
        // Maxwell's formula, e.g. Grover, Inductance Calculations, 1946).
        let (a, b, d): (f64, f64, f64) = (0.01, 0.02, 5.0);
        let exact = std::f64::consts::PI * MU0 * a * a * b * b / (2.0 * d.powi(3));
        assert!((mutual_filaments_h(a, b, d) / exact - 1.0).abs() < 1e-4);
    }

    #[test]
    fn close_loops_limit() {
        // Close equal loops: M -> mu0 a (ln(8a/d) - 2) (source: Rosa & Grover 1912, the
        // logarithmic limit of Maxwell's formula), error O((d/a)^2 ln).
        let (a, d) = (0.1, 1e-5);
        let approx = MU0 * a * ((8.0 * a / d).ln() - 2.0);
        assert!((mutual_filaments_h(a, a, d) / approx - 1.0).abs() < 1e-6);
    }
}
