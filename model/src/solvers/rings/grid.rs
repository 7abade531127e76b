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
//! 2 pi / (sigma dz ln(r_out / r_in)) ([`crate::kernels::inductance::ring_resistance_ohm`]), from which
//! it differs by O((w / r)^2). Measured on the invented 12 mm magnet / 13 mm bore / 1.5 mm
//! copper wall scenario, the long-tube quasi-static damping with 2 layers was 0.06 % from the
//! converged value this way, 0.16 % with the annulus resistance at the same nodes, and 0.63 %
//! with two equal layers sampled at their middles; with 4 layers the error was 3e-5.

use crate::MU0;
use crate::kernels::inductance::RingCell;
use crate::kernels::quadrature::gauss_legendre;
use crate::records::design::Design;
use crate::records::error::{FieldError, ModelError};
use crate::records::limits::Limits;

/// Default axial ring width as a fraction of the field's shortest axial scale (see
/// [`field_scale_m`]): at most min(a, Lm) / 8 where the stack passes, so that the pole regions
/// span several rings.
pub const RING_WIDTH_FRACTION: f64 = 1.0 / 8.0;

/// Radial layers are made at least this many times thinner than the skin depth at the
/// expected speed, so that the current's decay across the wall is resolved. Measured on an
/// invented three-magnet alternating stack entering a 3 mm copper wall at 12 m/s: with 2 per
/// skin depth (3 layers) the exit speed was 0.6 % below the 6-layer run; the ring circuit's
/// layered wall converges as the inverse square of the layer count at such speeds.
pub const LAYERS_PER_SKIN_DEPTH: f64 = 4.0;

/// Fewest radial layers: one mid-wall node underweights the inner surface, where the field is
/// strongest (worst at small clearance).
pub const MIN_LAYERS: usize = 2;

/// Relative error of the wall quadrature aimed at by the clearance rule of [`default_layers`].
const WALL_QUADRATURE_TOLERANCE: f64 = 2e-3;
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

/// The field's shortest axial scale along the wall, m: min(a, max(Lm, g)) with g the radial
/// clearance. A magnet shorter than its distance to the wall does not make the field at the
/// wall vary faster than that distance (the field of a short source at distance g spreads over
/// about g), so a tiny magnet does not shrink the rings below what the tube needs.
pub fn field_scale_m(design: &Design) -> f64 {
    let g = design.clearance_m().max(0.0);
    design
        .tube
        .inner_radius_m
        .min(design.magnets.magnet_length_m.max(g))
}

/// Ring widths per distance from the magnet's surface to the innermost layer node (see
/// [`default_ring_width_m`]).
pub const RING_WIDTH_PER_NODE_DISTANCE: f64 = 2.0;

/// Default axial ring width for `design`, m: [`RING_WIDTH_FRACTION`] x [`field_scale_m`], and
/// at most [`RING_WIDTH_PER_NODE_DISTANCE`] x the distance from the magnet's surface to the
/// innermost layer node. The flux derivative at that node has features about that wide at the
/// magnet ends; sampled at ring centres, features narrower than a ring alias into a ripple of
/// the braking along the stroke (measured on an invented 12 mm magnet in a 12.2 mm bore with a
/// 1 mm copper wall: the mid-tube speed rippled by 0.5 % at 0.76 mm rings, by 0.02 % at 0.38 mm
/// with the node 0.17 mm from the magnet).
pub fn default_ring_width_m(design: &Design) -> f64 {
    let w = design.tube.wall_thickness_m();
    let (nodes, _) = gauss_legendre(clearance_layers(design).min(64));
    let inner = nodes.iter().fold(1.0_f64, |m, x| m.min(*x));
    let node_distance = design.clearance_m().max(0.0) + 0.5 * w * (1.0 + inner);
    (field_scale_m(design) * RING_WIDTH_FRACTION).min(RING_WIDTH_PER_NODE_DISTANCE * node_distance)
}

/// Skin depth sqrt(2 / (omega mu0 sigma)) at the angular frequency with which a stack moving at
/// `speed_m_per_s` sweeps its field past the wall, m. The field's shortest axial scale is taken
/// as ell = [`field_scale_m`] (pole regions), so omega = pi v / ell (half a wavelength per ell).
/// Skin depth formula: e.g. Jackson, Classical Electrodynamics, 3rd ed., sec. 5.18.
pub fn skin_depth_at_speed_m(design: &Design, speed_m_per_s: f64) -> f64 {
    let ell = field_scale_m(design);
    let omega = std::f64::consts::PI * speed_m_per_s.abs() / ell;
    if omega <= 0.0 {
        return f64::INFINITY;
    }
    (2.0 / (omega * MU0 * design.tube.conductivity_s_per_m)).sqrt()
}

/// Layers the wall quadrature needs for the field's radial decay across the wall. The field
/// of the stack, seen from the wall, is analytic in r up to the magnet's surface at a distance
/// g (the clearance) inside the bore; mapped onto the Gauss-Legendre interval [-1, 1] of the
/// wall w, that point lies at x0 = -(1 + 2 g / w), and an n-point rule converges as rho^(-2n)
/// with rho = |x0| + sqrt(x0^2 - 1) (Bernstein ellipse; Trefethen, Approximation Theory and
/// Approximation Practice, 2013, ch. 19). Measured on invented cases (walls 1-3 mm, clearances
/// 0.1-1 mm) the damping error fell faster, about rho^(-3n); this rule uses that rate.
pub fn clearance_layers(design: &Design) -> usize {
    let w = design.tube.wall_thickness_m();
    let g = design.clearance_m().max(1e-9 * w);
    let x0 = 1.0 + 2.0 * g / w;
    let rho = x0 + (x0 * x0 - 1.0).sqrt();
    let n = ((1.0 / WALL_QUADRATURE_TOLERANCE).ln() / (3.0 * rho.ln())).ceil();
    if n.is_finite() && n < 1.0e6 {
        (n as usize).max(MIN_LAYERS)
    } else {
        1_000_000
    }
}

/// Default radial layers: at least [`MIN_LAYERS`]; cells no flatter than square (layer
/// thickness at most the ring width); enough for the field's radial decay across the wall
/// ([`clearance_layers`]); and, when `skin_speed_m_per_s` is given, at least
/// [`LAYERS_PER_SKIN_DEPTH`] layers per skin depth at that speed. Returns the count before any
/// cap.
pub fn default_layers(
    design: &Design,
    ring_width_m: f64,
    skin_speed_m_per_s: Option<f64>,
) -> usize {
    let w = design.tube.wall_thickness_m();
    let square = (w / ring_width_m).ceil().max(MIN_LAYERS as f64);
    let skin = match skin_speed_m_per_s {
        Some(v) => {
            let delta = skin_depth_at_speed_m(design, v);
            (LAYERS_PER_SKIN_DEPTH * w / delta).ceil()
        }
        None => 1.0,
    };
    let n = square.max(skin).max(clearance_layers(design) as f64);
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
    ///
    /// # Errors
    ///
    /// [`ModelError::Invalid`] for a ring width or layer count outside the allowed range,
    /// [`ModelError::TooLarge`] for a grid above the work limits.
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
            let (path, cause) = if ring_width_m.is_some() {
                ("options.ring_width_m", String::new())
            } else {
                (
                    "options.ring_width_m",
                    format!(
                        " (automatic ring width {target:.3e} m, 1/8 of the field scale \
                         min(bore radius, max(magnet length, clearance)), over the tube length \
                         {length} m; give a coarser options.ring_width_m or a shorter tube)"
                    ),
                )
            };
            return Err(ModelError::TooLarge {
                path: path.into(),
                message: format!(
                    "ring cells would be at least {rings_f}, above the service limit of {cap}{cause}"
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
        let path = if radial_layers.is_some() {
            "options.radial_layers"
        } else {
            "options.ring_width_m"
        };
        if rings * layers > limits.max_ring_cells {
            return Err(ModelError::TooLarge {
                path: path.into(),
                message: format!(
                    "ring cells would be {} ({rings} rings of {dz:.3e} m x {layers} radial \
                     layers{}), above the service limit of {}",
                    rings * layers,
                    if radial_layers.is_some() || ring_width_m.is_some() {
                        ""
                    } else {
                        ", both chosen automatically; give a coarser options.ring_width_m or \
                         fewer options.radial_layers"
                    },
                    limits.max_ring_cells
                ),
            });
        }
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
    pub(crate) fn cell(&self, j: i64, l: usize) -> RingCell {
        RingCell {
            r_m: self.layer_mean_m[l],
            z_m: self.ring_centre_m(j),
            axial_m: self.ring_width_m,
            radial_m: self.layer_outer_m[l] - self.layer_inner_m[l],
        }
    }
}

/// Margin of the current-carrying window beyond each end of the stack, in outer radii of the
/// tube. The stack's dPhi/dzeta falls off as d^-4 and the dissipation as d^-8, so rings beyond
/// it carry a negligible share (the dropped energy is counted and reported).
pub const WINDOW_MARGIN_OUTER_RADII: f64 = 5.0;

/// The window is widened behind the stack by this many current decay lengths v tau, with
/// tau = mu0 sigma w r / 2 the slowest (uniform-current) time constant of a thin tube, so that
/// the wake of a fast stack stays inside it.
pub const WAKE_DECAY_LENGTHS: f64 = 3.0;

/// Half-length of the current-carrying window around the stack centre, m: half the stack,
/// the margin, and the wake at `speed_m_per_s`.
pub fn window_half_length_m(design: &Design, speed_m_per_s: f64) -> f64 {
    let b = design.tube.outer_radius_m;
    0.5 * design.magnets.total_length_m()
        + WINDOW_MARGIN_OUTER_RADII * b
        + WAKE_DECAY_LENGTHS * speed_m_per_s.abs() * slowest_time_constant_s(design)
}

/// Slowest current decay time of the tube, mu0 sigma w r_mean / 2, s (uniform azimuthal current
/// in a thin tube: L' = mu0 pi r^2, R' = 2 pi r / (sigma w) per unit length).
pub fn slowest_time_constant_s(design: &Design) -> f64 {
    let t = &design.tube;
    let r = 0.5 * (t.inner_radius_m + t.outer_radius_m);
    0.5 * MU0 * t.conductivity_s_per_m * t.wall_thickness_m() * r
}
