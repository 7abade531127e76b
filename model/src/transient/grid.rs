//! The ring discretisation of the tube wall: axial rings of equal width, each cut into radial
//! layers, every cell a circular ring of rectangular cross-section carrying azimuthal current.
//!
//! Rings are numbered from the entry end: ring j spans [j dz, (j + 1) dz] along the axis, so
//! its centre is at (j + 1/2) dz. Negative and beyond-the-end indices are meaningful only for
//! the infinitely long tube used by the constant-speed solver.
//!
//! Radial layers follow the Gauss-Legendre rule across the wall [a, b]: layer l is the annulus
//! whose thickness w is the rule's weight times (b - a)/2, stacked from the bore outwards, and
//! its flux linkage and inductance are evaluated at the rule's node, which lies inside that
//! annulus. Its resistance to azimuthal current is that of a current sheet at the node,
//! R = 2 pi r_node / (sigma dz w): the quadrature-consistent form of the annulus resistance
//! 2 pi / (sigma dz ln(r_out / r_in)) ([`crate::inductance::ring_resistance_ohm`]), from which
//! it differs by O((w / r)^2). Measured on the invented 12 mm magnet / 13 mm bore / 1.5 mm
//! copper wall scenario, the long-tube quasi-static damping with 2 layers was 0.06 % from the
//! converged value this way, 0.16 % with the annulus resistance at the same nodes, and 0.63 %
//! with two equal layers sampled at their middles; with 4 layers the error was 3e-5.

use crate::MU0;
use crate::design::Design;
use crate::error::{FieldError, ModelError};
use crate::inductance::RingCell;
use crate::limits::Limits;
use crate::quadrature::gauss_legendre;

/// Default axial ring width as a fraction of min(bore radius, magnet length): at most
/// min(a, Lm) / 8 where the stack passes, so that the pole regions span several rings.
pub const RING_WIDTH_FRACTION: f64 = 1.0 / 8.0;

/// Radial layers are made at least this many times thinner than the skin depth at the
/// expected speed, so that the current's decay across the wall is resolved.
pub const LAYERS_PER_SKIN_DEPTH: f64 = 2.0;

/// The discretised wall of a uniform tube.
#[derive(Debug, Clone, PartialEq)]
pub struct RingGrid {
    /// Axial ring width dz, m (the tube length is an integer number of rings).
    pub ring_width_m: f64,
    /// Rings along the tube.
    pub rings: usize,
    /// Radial layers per ring.
    pub layers: usize,
    /// Inner radius of each layer, m.
    pub layer_inner_m: Vec<f64>,
    /// Outer radius of each layer, m.
    pub layer_outer_m: Vec<f64>,
    /// Radius of each layer's Gauss-Legendre node, where its flux linkage and inductance are
    /// evaluated, m.
    pub layer_mean_m: Vec<f64>,
    /// Resistance of one ring cell of each layer, Ohm.
    pub layer_resistance_ohm: Vec<f64>,
}

/// Default axial ring width for `design`, m: min(a, Lm) / 8.
pub fn default_ring_width_m(design: &Design) -> f64 {
    design
        .tube
        .inner_radius_m
        .min(design.magnets.magnet_length_m)
        * RING_WIDTH_FRACTION
}

/// Skin depth sqrt(2 / (omega mu0 sigma)) at the angular frequency with which a stack moving at
/// `speed_m_per_s` sweeps its field past the wall, m. The field's shortest axial scale is taken
/// as ell = min(a, Lm) (pole regions), so omega = pi v / ell (half a wavelength per ell).
/// Skin depth formula: e.g. Jackson, Classical Electrodynamics, 3rd ed., sec. 5.18.
pub fn skin_depth_at_speed_m(design: &Design, speed_m_per_s: f64) -> f64 {
    let ell = design
        .tube
        .inner_radius_m
        .min(design.magnets.magnet_length_m);
    let omega = std::f64::consts::PI * speed_m_per_s.abs() / ell;
    if omega <= 0.0 {
        return f64::INFINITY;
    }
    (2.0 / (omega * MU0 * design.tube.conductivity_s_per_m)).sqrt()
}

/// Default radial layers: cells near square (layer thickness close to the ring width), and,
/// when `skin_speed_m_per_s` is given, at least [`LAYERS_PER_SKIN_DEPTH`] layers per skin depth
/// at that speed. Returns the count before any cap.
pub fn default_layers(
    design: &Design,
    ring_width_m: f64,
    skin_speed_m_per_s: Option<f64>,
) -> usize {
    let w = design.tube.wall_thickness_m();
    let square = (w / ring_width_m).round().max(1.0);
    let skin = match skin_speed_m_per_s {
        Some(v) => {
            let delta = skin_depth_at_speed_m(design, v);
            (LAYERS_PER_SKIN_DEPTH * w / delta).ceil()
        }
        None => 1.0,
    };
    let n = square.max(skin);
    if n.is_finite() && n < 1.0e6 {
        n as usize
    } else {
        1_000_000
    }
}

impl RingGrid {
    /// Builds the grid. `ring_width_m` and `radial_layers` are the caller's overrides (validated
    /// here: they come from the request); the defaults are [`default_ring_width_m`] and
    /// [`default_layers`] (the automatic layer count is capped at the service limit).
    /// `skin_speed_m_per_s` is the speed whose skin depth the layers must resolve (None for the
    /// quasi-static model, which has no skin effect).
    pub fn new(
        design: &Design,
        ring_width_m: Option<f64>,
        radial_layers: Option<usize>,
        skin_speed_m_per_s: Option<f64>,
        limits: &Limits,
    ) -> Result<Self, ModelError> {
        let tube = &design.tube;
        let length = tube.length_m;
        let target = match ring_width_m {
            Some(w) => {
                if !(w.is_finite() && w > 0.0 && w <= length) {
                    return Err(ModelError::Invalid(vec![FieldError::new(
                        "options.ring_width_m",
                        format!("must be greater than 0 and at most the tube length ({length} m)"),
                    )]));
                }
                w
            }
            None => default_ring_width_m(design),
        };
        let rings_f = (length / target).round().max(1.0);
        let cap = limits.max_ring_cells.max(1);
        if rings_f > cap as f64 {
            let path = if ring_width_m.is_some() {
                "options.ring_width_m"
            } else {
                "design.tube.length_m"
            };
            return Err(ModelError::TooLarge {
                path: path.into(),
                message: format!(
                    "ring cells would be at least {rings_f}, above the service limit of {cap}"
                ),
            });
        }
        let rings = rings_f as usize;
        let dz = length / rings as f64;
        let layers = match radial_layers {
            Some(n) => {
                if n == 0 {
                    return Err(ModelError::field(
                        "options.radial_layers",
                        "must be at least 1",
                    ));
                }
                Limits::check(
                    "options.radial_layers",
                    "radial layers",
                    n,
                    limits.max_radial_layers,
                )?;
                n
            }
            None => {
                default_layers(design, dz, skin_speed_m_per_s).min(limits.max_radial_layers.max(1))
            }
        };
        let path = if ring_width_m.is_some() {
            "options.ring_width_m"
        } else {
            "design.tube.length_m"
        };
        Limits::check(path, "ring cells", rings * layers, limits.max_ring_cells)?;
        Ok(Self::build(design, dz, rings, layers))
    }

    /// Builds a grid with exactly `rings` rings of width `dz` and `layers` layers (trusted
    /// values; used for the infinitely long tube of the constant-speed solver).
    pub(crate) fn build(design: &Design, dz: f64, rings: usize, layers: usize) -> Self {
        let (a, b) = (design.tube.inner_radius_m, design.tube.outer_radius_m);
        let sigma = design.tube.conductivity_s_per_m;
        let half = 0.5 * (b - a);
        let (nodes, weights) = gauss_legendre(layers);
        let mut layer_inner_m = Vec::with_capacity(layers);
        let mut layer_outer_m = Vec::with_capacity(layers);
        let mut edge = a;
        for (l, w) in weights.iter().enumerate() {
            layer_inner_m.push(edge);
            edge = if l + 1 == layers { b } else { edge + half * w };
            layer_outer_m.push(edge);
        }
        let layer_mean_m: Vec<f64> = nodes.iter().map(|x| a + half * (1.0 + x)).collect();
        let layer_resistance_ohm = layer_mean_m
            .iter()
            .zip(&weights)
            .map(|(&r, &w)| 2.0 * std::f64::consts::PI * r / (sigma * dz * half * w))
            .collect();
        Self {
            ring_width_m: dz,
            rings,
            layers,
            layer_inner_m,
            layer_outer_m,
            layer_mean_m,
            layer_resistance_ohm,
        }
    }

    /// Axial centre of ring `j`, m.
    pub fn ring_centre_m(&self, j: i64) -> f64 {
        (j as f64 + 0.5) * self.ring_width_m
    }

    /// Total ring cells (rings x layers).
    pub fn cells(&self) -> usize {
        self.rings * self.layers
    }

    /// The cell of ring `j`, layer `l`.
    pub fn cell(&self, j: i64, l: usize) -> RingCell {
        RingCell {
            r_m: self.layer_mean_m[l],
            z_m: self.ring_centre_m(j),
            axial_m: self.ring_width_m,
            radial_m: self.layer_outer_m[l] - self.layer_inner_m[l],
        }
    }
}
