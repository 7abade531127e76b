//! Steady braking in a long uniform tube by the spectral (axial Fourier) method.
//!
//! In the magnet's rest frame the tube streams past at speed v and every field is steady, so
//! an axial Fourier transform f^(kappa) = integral f e^{-i kappa z} dz decouples wavenumbers.
//! The wall is cut into radial layers j (radius r_j, thickness w_j; Gauss-Legendre in r),
//! each a sheet of azimuthal current density K_j with resistance parameter
//! alpha_j = 2 pi r_j / (sigma w_j). Per wavenumber the sheet currents obey
//!
//!   (diag(alpha) - i kappa v Mhat) Khat = i kappa v Phihat,
//!
//! with Mhat(kappa; r1, r2) = 2 pi mu0 r< r> I1(|kappa| r<) K1(|kappa| r>), the transform of
//! Maxwell's coaxial-loop mutual inductance (Smythe, Static and Dynamic Electricity, 1950,
//! ch. 7; the Bessel representation of the loop vector potential), and Phihat_j the transform
//! of the magnet flux through layer j. The dissipated power gives the braking force
//! F(v) = (1 / (2 pi v)) sum_j alpha_j integral |Khat_j|^2 dkappa.
//!
//! Speed enters only through kappa v, so with S = D Mhat D, D = diag(alpha^{-1/2}), and the
//! symmetric eigen-decomposition S = Q diag(lambda) Q^T (one per wavenumber, shared by every
//! speed), the force collapses to
//!
//!   F(v) = (v / pi) integral_0^inf |s(kappa)|^2 kappa^2 sum_n h_n^2 / (1 + (kappa v lambda_n)^2) dkappa,
//!
//! where h = Q^T D Psi, Psi_j = K_s [Mhat(Ro, r_j) - Mhat(Ri, r_j)] is the single-magnet
//! sheet kernel and s(kappa) = (2 sin(kappa Lm / 2) / kappa) sum_i s_i e^{-i kappa o_i}
//! carries the stack's length, offsets o_i and polarities s_i. The stack factor |s|^2
//! oscillates with period 2 pi / (stack length); everything else is smooth. So the smooth part
//! is sampled on a graded grid of nodes and |s|^2 is integrated exactly enough against the
//! piecewise-linear hat functions of that grid once per design (product integration); each
//! speed then costs one pass over the nodes. At v -> 0 the formula reduces, by Parseval, to
//! the quasi-static ring sum c = sum_j integral (dPhi_j/dz)^2 / alpha_j dz.

use crate::MU0;
use crate::kernels::bessel::{i1_k1, i1e, k1e};
use crate::kernels::eigen::{jacobi, jacobi_from};
use crate::kernels::quadrature::gauss_legendre;
use crate::records::caution::{Caution, CautionKind, push_unique};
use crate::records::design::Design;
use crate::records::error::ModelError;
use crate::records::forcecurve::{ForceCurve, ForceCurveOptions, ForcePoint};
use crate::records::limits::Limits;
use crate::records::report::{Discretisation, Fidelity, ModelInfo};
use std::f64::consts::PI;

/// Smallest radial clearance (bore radius minus magnet radius) that the solver resolves, m.
/// Ground bores, magnet coatings and tube ovality vary by micrometres, so a nominal clearance
/// below this is not a manufacturable gap: the wavenumber reach is computed as if the clearance
/// were this value (bounded work) and a caution says so.
pub const MIN_MODEL_CLEARANCE_M: f64 = 1.0e-6;

/// An interval of the wavenumber grid that spans at least this many periods of the slowest
/// oscillation of the stack factor takes the factor's mean instead of resolving it: the
/// neglected oscillating part integrates against the smooth hat functions to a relative
/// O((2 pi periods)^-2) (integration by parts; the hats are continuous).
const AVERAGE_PERIODS: f64 = 32.0;

/// Radial layers used by default, before the wall-thickness and skin-depth rules (see
/// [`default_layers`]). With the slab self-linkage correction six layers keep the force within
/// about 0.1 % of 32 layers up to ten times the critical speed on the invented cases measured
/// (walls 1-3 mm, clearances 0.1-1 mm).
pub const MIN_LAYERS: usize = 6;
/// Layers per skin depth at the fastest speed the curve is meant for.
pub const LAYERS_PER_SKIN_DEPTH: f64 = 3.0;
/// The curve's layers resolve the skin depth at this multiple of the thin-sheet characteristic
/// speed 2 / (mu0 sigma w), which is of the order of the critical speed (the default curve
/// runs to ten times the critical speed; the headline numbers live at and below it).
pub const SKIN_SPEED_PER_CHARACTERISTIC: f64 = 3.0;
/// Hard cap on radial layers (the records' bound, which options are checked against).
pub const MAX_LAYERS: usize = crate::records::forcecurve::MAX_RADIAL_LAYERS;

/// Self-linkage correction of a layer: a current sheet at the layer's node links more of its
/// own flux than the layer of thickness w it stands for, because inside a conductor carrying a
/// uniform current the field grows across the thickness instead of jumping at one radius. For
/// one planar slab the energy difference gives Mhat_jj(sheet) - Mhat_jj(slab) = pi mu0 r w / 3
/// (the slab's internal inductance; planar energy argument, e.g. Grover, Inductance
/// Calculations, 1946, on the self GMD of a strip). With the Gauss-node sheets of the
/// neighbouring layers taking part of it into their mutuals, the leading n^-2 error of the
/// layered force is cancelled by half of it (the fraction is measured, not derived: on four
/// invented designs, walls 1-3 mm and clearances 0.1-1 mm, the error at the critical speed with
/// 6 layers against 32 fell from 0.15-0.6 % to 0.0015-0.006 %, and the convergence order in the
/// layer count rose from 2 to about 4; the low-speed damping is unchanged).
const SLAB_SELF_FRACTION: f64 = 0.5;

/// The self-linkage correction of a layer of radius `r_m` and thickness `w_m` at wavenumber
/// `kappa`, H m: SLAB_SELF_FRACTION x (planar sheet self term pi mu0 r / kappa) x (1 - g(u)),
/// u = kappa w, where g(u) = 2 (u - 1 + e^-u) / u^2 is the slab's mean of e^(-kappa |x - x'|)
/// over both thicknesses (the planar Green's function e^(-kappa |x|) / (2 kappa)). For u -> 0 it
/// is SLAB_SELF_FRACTION x pi mu0 r w / 3; for u -> infinity it tends to a fraction of the
/// sheet's own self term, so the diagonal stays positive.
fn slab_self_correction(kappa: f64, r_m: f64, w_m: f64) -> f64 {
    let u = kappa * w_m;
    let one_minus_g = if u < 1e-3 {
        u / 3.0 - u * u / 12.0 + u * u * u / 60.0
    } else {
        1.0 - 2.0 * (u + (-u).exp_m1()) / (u * u)
    };
    SLAB_SELF_FRACTION * PI * MU0 * r_m / kappa * one_minus_g
}

/// Wavenumber resolution of one solver: nodes per unit of log-wavenumber and the reach.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Grid {
    /// Nodes per unit of u, where kappa = kappa_c (e^u - 1).
    nodes_per_unit: f64,
    /// e-folds of the magnet-to-wall decay integrated.
    reach_efolds: f64,
}

const FINE: Grid = Grid {
    nodes_per_unit: 40.0,
    reach_efolds: 40.0,
};
const COARSE: Grid = Grid {
    nodes_per_unit: 20.0,
    reach_efolds: 30.0,
};

/// One wavenumber node: the eigenvalues and squared projections at that node, and the
/// product-integration weight of the stack factor.
#[derive(Debug, Clone)]
struct Node {
    /// weight_i * kappa^2 * h_n^2 for each mode n.
    strength: Vec<f64>,
    /// kappa * lambda_n for each mode n (s/m).
    time_scale: Vec<f64>,
}

/// The resolution a [`SteadySolver`] is built at.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Resolution {
    /// The answer's own resolution.
    Full,
    /// The coarser companion whose change against the full solver is the error estimate
    /// ([`metrics_change`]).
    Companion,
}

/// Steady-state braking force of one design in a long tube, ready for any speed.
#[derive(Debug, Clone)]
pub struct SteadySolver {
    nodes: Vec<Node>,
    layers: usize,
    max_kappa: f64,
}

/// Default radial layers: thin walls need few (the eddy current is nearly uniform across them
/// at the speeds of interest), thick walls more. Refined by the caller's override.
pub fn default_layers(design: &Design) -> usize {
    let w = design.tube.wall_thickness_m();
    let a = design.tube.inner_radius_m;
    let v_char = 2.0 / (MU0 * design.tube.conductivity_s_per_m * w);
    let delta = crate::solvers::rings::grid::skin_depth_at_speed_m(
        design,
        SKIN_SPEED_PER_CHARACTERISTIC * v_char,
    );
    let skin = (LAYERS_PER_SKIN_DEPTH * w / delta).ceil();
    let skin = if skin.is_finite() {
        skin.min(MAX_LAYERS as f64) as usize
    } else {
        MAX_LAYERS
    };
    (MIN_LAYERS.max(4 + (8.0 * w / a).ceil() as usize).max(skin))
        .max(crate::solvers::rings::grid::clearance_layers(design))
        .clamp(MIN_LAYERS, 16)
}

impl SteadySolver {
    /// Builds the solver with `radial_layers` layers (default from [`default_layers`]).
    ///
    /// # Errors
    /// [`ModelError::TooLarge`] for a layer count or work above the limits,
    /// [`ModelError::Cancelled`] when the limits' token fires.
    pub fn new(design: &Design, radial_layers: Option<usize>) -> Result<Self, ModelError> {
        Self::new_within(design, radial_layers, &Limits::default())
    }

    /// Like [`SteadySolver::new`], within the work `limits` and stopping when their
    /// cancellation token fires.
    ///
    /// # Errors
    /// [`ModelError::TooLarge`] for a layer count or work above the limits,
    /// [`ModelError::Cancelled`] when the limits' token fires.
    pub fn new_within(
        design: &Design,
        radial_layers: Option<usize>,
        limits: &Limits,
    ) -> Result<Self, ModelError> {
        Self::at(design, radial_layers, Resolution::Full, limits)
    }

    /// The solver of `design` at `resolution`: [`Resolution::Full`] with `radial_layers`
    /// layers (default from [`default_layers`]), or its [`Resolution::Companion`] (fewer layers
    /// and half the wavenumber density, see [`metrics_change`]), within the work `limits` and
    /// stopping when their cancellation token fires.
    ///
    /// # Errors
    /// A layer count outside 1 ..= `MAX_LAYERS` (path `radial_layers`), work beyond `limits`,
    /// or cancellation.
    pub fn at(
        design: &Design,
        radial_layers: Option<usize>,
        resolution: Resolution,
        limits: &Limits,
    ) -> Result<Self, ModelError> {
        let layers = radial_layers.unwrap_or_else(|| default_layers(design));
        if layers == 0 || layers > MAX_LAYERS {
            return Err(ModelError::field(
                "radial_layers",
                format!("must be between 1 and {MAX_LAYERS}"),
            ));
        }
        match resolution {
            Resolution::Full => Self::build(design, layers, FINE, limits),
            Resolution::Companion => Self::build(design, coarse_layers(layers), COARSE, limits),
        }
    }

    fn build(
        design: &Design,
        layers: usize,
        grid: Grid,
        limits: &Limits,
    ) -> Result<Self, ModelError> {
        let tube = &design.tube;
        let stack = &design.magnets;
        let (a, b) = (tube.inner_radius_m, tube.outer_radius_m);
        let sigma = tube.conductivity_s_per_m;

        // Radial layers at Gauss-Legendre points of [a, b].
        let (xs, ws) = gauss_legendre(layers);
        let radii: Vec<f64> = xs.iter().map(|x| a + 0.5 * (b - a) * (1.0 + x)).collect();
        let widths: Vec<f64> = ws.iter().map(|w| 0.5 * (b - a) * w).collect();
        let alpha: Vec<f64> = radii
            .iter()
            .zip(&widths)
            .map(|(r, w)| 2.0 * PI * r / (sigma * w))
            .collect();
        let d: Vec<f64> = alpha.iter().map(|x| 1.0 / x.sqrt()).collect();
        let mut slab_correction = vec![0.0; layers];

        // Graded wavenumber grid: kappa = kc (e^u - 1), fine near zero (scale 1/b) and
        // reaching past the decay length of the magnet-to-wall gap.
        let gap = (a - stack.outer_radius_m).max(MIN_MODEL_CLEARANCE_M);
        let kc = 0.25 / b;
        let kmax = (grid.reach_efolds / (2.0 * gap))
            .max(60.0 / b)
            .max(20.0 / stack.magnet_length_m.min(b));
        let umax = (kmax / kc).ln_1p();
        let n_nodes = (umax * grid.nodes_per_unit).ceil() as usize + 1;
        let kappas: Vec<f64> = (0..n_nodes)
            .map(|i| kc * (umax * i as f64 / (n_nodes - 1) as f64).exp_m1())
            .collect();

        let weights = stack_weights(design, &kappas, limits)?;
        let ks = stack.surface_current_a_per_m();
        let (ro, ri) = (stack.outer_radius_m, stack.inner_radius_m);

        let mut nodes = Vec::with_capacity(n_nodes);
        let mut mat = vec![0.0; layers * layers];
        let mut psi = vec![0.0; layers];
        let mut previous: Option<Vec<f64>> = None;
        let mut ie = vec![0.0; layers];
        let mut ke = vec![0.0; layers];
        for (&kappa, &weight) in kappas.iter().zip(&weights) {
            if kappa == 0.0 || weight == 0.0 {
                continue;
            }
            limits.cancel.check()?;
            // Scaled Bessel values once per radius; the layer radii ascend, so for j <= i,
            // Mhat_ij = 2 pi mu0 r_j r_i I1(kappa r_j) K1(kappa r_i).
            for i in 0..layers {
                ie[i] = i1e(kappa * radii[i]);
                ke[i] = k1e(kappa * radii[i]);
            }
            for i in 0..layers {
                slab_correction[i] = slab_self_correction(kappa, radii[i], widths[i]);
            }
            let ie_outer = i1e(kappa * ro);
            let ie_inner = if ri > 0.0 { i1e(kappa * ri) } else { 0.0 };
            for i in 0..layers {
                for j in 0..=i {
                    let m = 2.0
                        * PI
                        * MU0
                        * radii[j]
                        * radii[i]
                        * ie[j]
                        * ke[i]
                        * (kappa * (radii[j] - radii[i])).exp();
                    let m = if i == j { m - slab_correction[i] } else { m };
                    mat[i * layers + j] = d[i] * m * d[j];
                    mat[j * layers + i] = d[i] * m * d[j];
                }
                let sheet = |r: f64, ie_r: f64| {
                    2.0 * PI * MU0 * r * radii[i] * ie_r * ke[i] * (kappa * (r - radii[i])).exp()
                };
                let mut p = sheet(ro, ie_outer);
                if ri > 0.0 {
                    p -= sheet(ri, ie_inner);
                }
                psi[i] = ks * p * d[i];
            }
            let eig = match &previous {
                Some(q) => jacobi_from(&mat, layers, q),
                None => jacobi(&mat, layers),
            };
            let mut strength = Vec::with_capacity(layers);
            let mut time_scale = Vec::with_capacity(layers);
            for n in 0..layers {
                let q = &eig.vectors[n * layers..(n + 1) * layers];
                let h: f64 = q.iter().zip(&psi).map(|(qi, pi)| qi * pi).sum();
                strength.push(weight * kappa * kappa * h * h);
                time_scale.push(kappa * eig.values[n].max(0.0));
            }
            previous = Some(eig.vectors);
            nodes.push(Node {
                strength,
                time_scale,
            });
        }
        Ok(Self {
            nodes,
            layers,
            max_kappa: kmax,
        })
    }

    /// Braking force at steady speed `speed_m_per_s` (> 0), N. Even in v by symmetry of the tube.
    pub fn force_n(&self, speed_m_per_s: f64) -> f64 {
        let v = speed_m_per_s.abs();
        let mut sum = 0.0;
        for node in &self.nodes {
            for (s, t) in node.strength.iter().zip(&node.time_scale) {
                let x = t * v;
                sum += s / (x * x + 1.0);
            }
        }
        v * sum / PI
    }

    /// Low-speed damping coefficient dF/dv at v = 0, N s/m.
    pub fn damping_n_s_per_m(&self) -> f64 {
        self.nodes
            .iter()
            .map(|n| n.strength.iter().sum::<f64>())
            .sum::<f64>()
            / PI
    }

    /// Number of radial layers.
    pub fn layers(&self) -> usize {
        self.layers
    }

    /// Wavenumber nodes in the integral.
    pub fn nodes(&self) -> usize {
        self.nodes.len()
    }

    /// Peak force and the speed where it occurs: a log-spaced scan then golden-section
    /// refinement of the largest sample.
    pub fn peak(&self, reference_speed_m_per_s: f64) -> (f64, f64) {
        let mut lo = reference_speed_m_per_s * 1e-4;
        let mut hi = reference_speed_m_per_s * 1e4;
        // Widen until the scan's maximum is interior (F rises as v, falls at least as v^-1/2).
        for _ in 0..6 {
            let (vbest, idx, n) = self.scan_max(lo, hi, 33);
            if idx == 0 {
                lo /= 1e3;
            } else if idx == n - 1 {
                hi *= 1e3;
            } else {
                let ratio = (hi / lo).powf(1.0 / (n - 1) as f64);
                return self.golden(vbest / ratio, vbest * ratio);
            }
        }
        let (v, _, _) = self.scan_max(lo, hi, 33);
        (v, self.force_n(v))
    }

    fn scan_max(&self, lo: f64, hi: f64, n: usize) -> (f64, usize, usize) {
        let mut best = (lo, 0, f64::MIN);
        for i in 0..n {
            let v = lo * (hi / lo).powf(i as f64 / (n - 1) as f64);
            let f = self.force_n(v);
            if f > best.2 {
                best = (v, i, f);
            }
        }
        (best.0, best.1, n)
    }

    fn golden(&self, mut lo: f64, mut hi: f64) -> (f64, f64) {
        // Golden-section search in log v.
        let g = (5.0_f64.sqrt() - 1.0) / 2.0;
        let (mut a, mut b) = (lo.ln(), hi.ln());
        let mut c = b - g * (b - a);
        let mut d = a + g * (b - a);
        let mut fc = self.force_n(c.exp());
        let mut fd = self.force_n(d.exp());
        for _ in 0..80 {
            if fc > fd {
                b = d;
                d = c;
                fd = fc;
                c = b - g * (b - a);
                fc = self.force_n(c.exp());
            } else {
                a = c;
                c = d;
                fc = fd;
                d = a + g * (b - a);
                fd = self.force_n(d.exp());
            }
            if (b - a).abs() < 1e-5 {
                break;
            }
        }
        lo = a.exp();
        hi = b.exp();
        let v = (lo * hi).sqrt();
        (v, self.force_n(v))
    }

    /// Smallest speed on the rising branch at which the braking force equals `drive_n`
    /// (0 < drive_n <= peak), by bracketing and bisection in log v.
    pub fn speed_for_force(&self, drive_n: f64, critical_speed_m_per_s: f64) -> Option<f64> {
        if drive_n <= 0.0 {
            return Some(0.0);
        }
        // The linear-law estimate drive / c brackets the answer from below (F <= c v).
        let c = self.damping_n_s_per_m();
        let mut lo = (drive_n / c).min(critical_speed_m_per_s);
        if self.force_n(lo) >= drive_n {
            return Some(lo);
        }
        let hi0 = critical_speed_m_per_s;
        if self.force_n(hi0) < drive_n {
            return None;
        }
        // Illinois (modified regula falsi) on g(v) = F(v) - drive: bracketed, superlinear.
        let mut hi = hi0;
        let mut g_lo = self.force_n(lo) - drive_n;
        let mut g_hi = self.force_n(hi) - drive_n;
        let mut side = 0i8;
        for _ in 0..200 {
            let mut mid = (lo * g_hi - hi * g_lo) / (g_hi - g_lo);
            if !(mid > lo && mid < hi) {
                mid = 0.5 * (lo + hi);
            }
            let g = self.force_n(mid) - drive_n;
            if g >= 0.0 {
                hi = mid;
                g_hi = g;
                if side == 1 {
                    g_lo *= 0.5;
                }
                side = 1;
            } else {
                lo = mid;
                g_lo = g;
                if side == -1 {
                    g_hi *= 0.5;
                }
                side = -1;
            }
            if hi - lo <= 1e-12 * hi || g.abs() <= 1e-13 * drive_n {
                return Some(mid);
            }
        }
        Some(0.5 * (lo + hi))
    }
}

/// The scalar steady-state numbers of a design in a long tube.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SteadyMetrics {
    /// Low-speed slope F/v, N s/m.
    pub damping_n_s_per_m: f64,
    /// Largest braking force, N.
    pub peak_force_n: f64,
    /// Speed of the peak, m/s.
    pub critical_speed_m_per_s: f64,
    /// Speed at which braking balances the steady driving force; None on runaway.
    pub terminal_speed_m_per_s: Option<f64>,
    /// Steady driving force of the load, N.
    pub drive_force_n: f64,
    /// mu0 sigma w v at the terminal speed (at the critical speed when there is none).
    pub magnetic_reynolds_number: f64,
    /// Thin-sheet characteristic speed 2 / (mu0 sigma w), m/s.
    pub characteristic_speed_m_per_s: f64,
}

impl SteadySolver {
    /// Damping, peak, critical and terminal speed for `design`'s load. The solver must have
    /// been built for the same magnets and tube; only the load is read from `design`, so one
    /// solver serves every load.
    pub fn metrics(&self, design: &Design) -> SteadyMetrics {
        let w = design.tube.wall_thickness_m();
        let sigma = design.tube.conductivity_s_per_m;
        let v_char = 2.0 / (MU0 * sigma * w);
        let (critical, peak) = self.peak(v_char);
        let drive = design.steady_drive_force_n();
        let terminal = self.speed_for_force(drive, critical);
        let rm_speed = terminal.filter(|t| *t > 0.0).unwrap_or(critical);
        SteadyMetrics {
            damping_n_s_per_m: self.damping_n_s_per_m(),
            peak_force_n: peak,
            critical_speed_m_per_s: critical,
            terminal_speed_m_per_s: terminal,
            drive_force_n: drive,
            magnetic_reynolds_number: MU0 * sigma * w * rm_speed,
            characteristic_speed_m_per_s: v_char,
        }
    }
}

/// Mhat(kappa; r1, r2) = 2 pi mu0 r< r> I1(kappa r<) K1(kappa r>), H (per unit wavenumber).
pub fn mhat(kappa: f64, r1: f64, r2: f64) -> f64 {
    let (rs, rl) = if r1 <= r2 { (r1, r2) } else { (r2, r1) };
    2.0 * PI * MU0 * rs * rl * i1_k1(kappa * rs, kappa * rl)
}

/// Product-integration weights w_i = integral_0^kmax |s(kappa)|^2 phi_i(kappa) dkappa of the
/// stack factor against the hat functions of the node grid. Sub-panels of four Gauss
/// points, each at most a quarter period of the fastest oscillation of |s|^2, so the
/// oscillation is integrated to near machine precision.
///
/// Bounded work: kappa^2 |s|^2 = |sum_k c_k e^{-i kappa e_k}|^2 over the stack's current-sheet
/// ends e_k (coefficients c_k), whose mean over the oscillation is sum_k c_k^2. An interval
/// spanning at least [`AVERAGE_PERIODS`] periods of the slowest cross term (the smallest end
/// separation) integrates that mean against the hats; so the number of panels grows with the
/// stack length times the wavenumber where averaging starts, not with the reach set by the
/// clearance. The panel count is estimated first and refused above
/// `limits.max_quadrature_terms`.
fn stack_weights(design: &Design, kappas: &[f64], limits: &Limits) -> Result<Vec<f64>, ModelError> {
    let stack = &design.magnets;
    let offsets: Vec<(f64, f64)> = stack.magnets().collect();
    let lm = stack.magnet_length_m;
    let span = stack.total_length_m();
    let quarter = 0.25 * 2.0 * PI / span;
    let ends = crate::solvers::rings::fluxtable::sheet_ends(stack);
    let mean: f64 = ends.iter().map(|(_, c)| c * c).sum();
    let mut d_min = f64::INFINITY;
    for (k, (ek, _)) in ends.iter().enumerate() {
        for (el, _) in &ends[k + 1..] {
            let d = (ek - el).abs();
            if d > 0.0 {
                d_min = d_min.min(d);
            }
        }
    }
    let average_len = AVERAGE_PERIODS * 2.0 * PI / d_min;
    let exact_panels = |k0: f64, len: f64| -> Option<f64> {
        (k0 == 0.0 || len < average_len).then(|| (len / quarter).ceil().max(1.0))
    };
    let terms: f64 = kappas
        .windows(2)
        .map(|p| exact_panels(p[0], p[1] - p[0]).map_or(4.0, |n| 4.0 * n * offsets.len() as f64))
        .sum();
    // Not within the cap, NaN included.
    if !matches!(
        terms.partial_cmp(&(limits.max_quadrature_terms as f64)),
        Some(std::cmp::Ordering::Less | std::cmp::Ordering::Equal)
    ) {
        return Err(ModelError::TooLarge {
            path: if stack.count > 1 && stack.spacer_length_m > 0.0 {
                "design.magnets.spacer_length_m".into()
            } else if stack.count > 1 {
                "design.magnets.count".into()
            } else {
                "design.magnets.length_m".into()
            },
            message: format!(
                "the spectral quadrature of the stack factor would take {} terms, above the service \
                 limit of {}: a stack {} m long with ends as close as {} m; use fewer magnets, \
                 a shorter stack or spacers that are either zero or not much shorter than the magnets",
                crate::records::error::show(terms),
                limits.max_quadrature_terms,
                crate::records::error::show(span),
                crate::records::error::show(d_min)
            ),
        });
    }
    let s2 = |k: f64| {
        let shape = if k == 0.0 {
            lm
        } else {
            2.0 * (0.5 * k * lm).sin() / k
        };
        let (mut re, mut im) = (0.0, 0.0);
        for &(o, s) in &offsets {
            let (sn, cs) = (k * o).sin_cos();
            re += s * cs;
            im -= s * sn;
        }
        shape * shape * (re * re + im * im)
    };
    const G: [(f64, f64); 4] = [
        (-0.861_136_311_594_052_6, 0.347_854_845_137_453_9),
        (-0.339_981_043_584_856_3, 0.652_145_154_862_546_1),
        (0.339_981_043_584_856_3, 0.652_145_154_862_546_1),
        (0.861_136_311_594_052_6, 0.347_854_845_137_453_9),
    ];
    let mut w = vec![0.0; kappas.len()];
    for i in 0..kappas.len().saturating_sub(1) {
        let (k0, k1) = (kappas[i], kappas[i + 1]);
        let len = k1 - k0;
        limits.cancel.check()?;
        let Some(panels) = exact_panels(k0, len) else {
            // The mean sum_k c_k^2 / kappa^2 against the two hats: smooth, one 4-point rule.
            for &(x, gw) in &G {
                let k = k0 + 0.5 * len * (1.0 + x);
                let f = mean / (k * k) * 0.5 * len * gw;
                let t = (k - k0) / len;
                w[i] += f * (1.0 - t);
                w[i + 1] += f * t;
            }
            continue;
        };
        let panels = panels as usize;
        let h = len / panels as f64;
        for p in 0..panels {
            let mid = k0 + (p as f64 + 0.5) * h;
            for &(x, gw) in &G {
                let k = mid + 0.5 * h * x;
                let f = s2(k) * 0.5 * h * gw;
                let t = (k - k0) / len;
                w[i] += f * (1.0 - t);
                w[i + 1] += f * t;
            }
        }
    }
    Ok(w)
}

/// Error estimate of steady numbers: the largest relative change of damping, peak force,
/// critical speed and terminal speed between a solve (`fine`) and its resolution companion
/// (`coarse`, [`Resolution::Companion`]). The layered force converges about as n^-3 in the
/// layer count with the slab correction, so the change from n - 2 layers (and half the
/// wavenumber density) is well above the error of n layers.
pub fn metrics_change(fine: &SteadyMetrics, coarse: &SteadyMetrics) -> f64 {
    let rel = |f: f64, c: f64| if f != 0.0 { (c / f - 1.0).abs() } else { 0.0 };
    let mut err = rel(fine.damping_n_s_per_m, coarse.damping_n_s_per_m)
        .max(rel(fine.peak_force_n, coarse.peak_force_n))
        .max(rel(
            fine.critical_speed_m_per_s,
            coarse.critical_speed_m_per_s,
        ));
    if let (Some(t), Some(tc)) = (fine.terminal_speed_m_per_s, coarse.terminal_speed_m_per_s)
        && t > 0.0
    {
        err = err.max(rel(t, tc));
    }
    err
}

/// Layers of the resolution companion of an `n`-layer solve.
fn coarse_layers(n: usize) -> usize {
    n.saturating_sub(2).max(n.div_ceil(2)).max(1)
}

/// The model-limit caution of a clearance below what manufacturing can hold (the wavenumber
/// reach is computed at [`MIN_MODEL_CLEARANCE_M`]).
fn clearance_caution(design: &Design) -> Option<Caution> {
    let clearance = design.clearance_m();
    (clearance < MIN_MODEL_CLEARANCE_M).then(|| {
        Caution::new(
            CautionKind::ModelLimit,
            format!(
                "Radial clearance {} m is below the {} m that manufacturing can hold; the \
                 wavenumber reach was computed as if the clearance were {} m, so the near field of \
                 a nominal sub-micrometre gap is not resolved (braking may be understated).",
                crate::records::error::show(clearance),
                crate::records::error::show(MIN_MODEL_CLEARANCE_M),
                crate::records::error::show(MIN_MODEL_CLEARANCE_M)
            ),
        )
    })
}

/// An error estimate above this relative size raises a numerical caution.
pub const NUMERICAL_CAUTION_RELATIVE: f64 = 0.01;

/// Default speeds: 40 log-spaced points from well below the terminal (or critical) speed to
/// ten times the critical speed.
fn default_speeds(terminal: Option<f64>, critical: f64) -> Vec<f64> {
    let low = terminal
        .filter(|t| *t > 0.0)
        .unwrap_or(critical)
        .min(critical)
        / 30.0;
    let high = critical * 10.0;
    (0..40)
        .map(|i| low * (high / low).powf(i as f64 / 39.0))
        .collect()
}

/// The steady force-speed curve of `design` in a long tube, with damping coefficient, peak
/// force, critical speed, terminal speed for the design's load and a resolution check.
///
/// # Errors
/// [`ModelError::TooLarge`] above the work limits (speeds, quadrature terms),
/// [`ModelError::Cancelled`] when the job's token fires.
pub fn force_curve(
    design: &Design,
    opts: &ForceCurveOptions,
    limits: &Limits,
) -> Result<ForceCurve, ModelError> {
    // The options were checked when they were made (`ForceCurveOptions::new`); only the
    // work limits of this run are checked here.
    if let Some(speeds) = &opts.speeds_m_per_s {
        Limits::check(
            "speeds_m_per_s",
            "number of speeds",
            speeds.len(),
            limits.max_speeds,
        )?;
    }
    let layers = opts.radial_layers.unwrap_or_else(|| default_layers(design));
    let solver = SteadySolver::at(design, Some(layers), Resolution::Full, limits)?;
    // The companion: two layers fewer and half the wavenumber density. The layered force
    // converges about as n^-3 in the layer count, so its change bounds the error of n layers.
    let check = SteadySolver::at(design, Some(layers), Resolution::Companion, limits)?;
    let metrics = solver.metrics(design);
    let SteadyMetrics {
        damping_n_s_per_m: damping,
        peak_force_n: peak,
        critical_speed_m_per_s: critical,
        terminal_speed_m_per_s: terminal,
        drive_force_n: drive,
        ..
    } = metrics;

    // Resolution check: the same numbers from a coarser solver.
    let err = metrics_change(&metrics, &check.metrics(design));

    let speeds = match &opts.speeds_m_per_s {
        Some(s) => s.clone(),
        None => default_speeds(terminal, critical),
    };
    let points = speeds
        .iter()
        .map(|&v| ForcePoint {
            speed_m_per_s: v,
            force_n: solver.force_n(v),
        })
        .collect();

    let mut cautions = vec![Caution::standing_safety()];
    for c in &design.cautions {
        push_unique(&mut cautions, c.clone());
    }
    cautions.extend(clearance_caution(design));
    for c in crate::records::caution::steady_load_cautions(drive, peak, critical, terminal) {
        cautions.push(c);
    }
    if err > NUMERICAL_CAUTION_RELATIVE {
        cautions.push(Caution::new(
            CautionKind::Numerical,
            format!(
                "Estimated numerical error {:.2} % (the change of the headline numbers between {} \
                 and {} radial layers) exceeds {:.0} %; raise resolution.radial_layers (up to {}); \
                 the cost grows about as the cube of the layer count.",
                err * 100.0,
                layers,
                coarse_layers(layers),
                100.0 * NUMERICAL_CAUTION_RELATIVE,
                limits.max_radial_layers.min(MAX_LAYERS)
            ),
        ));
    }
    let mut model = ModelInfo::new(
        "spectral",
        Fidelity::Inductive,
        Discretisation {
            radial_layers: Some(solver.layers()),
            wavenumbers: Some(solver.nodes()),
            max_wavenumber_per_m: Some(solver.max_kappa),
            ..Discretisation::default()
        },
    );
    model.error_estimate_relative = Some(err);
    Ok(ForceCurve {
        points,
        damping_n_s_per_m: damping,
        peak_force_n: peak,
        critical_speed_m_per_s: critical,
        terminal_speed_m_per_s: terminal,
        drive_force_n: drive,
        magnetic_reynolds_number: metrics.magnetic_reynolds_number,
        characteristic_speed_m_per_s: metrics.characteristic_speed_m_per_s,
        cautions,
        model,
    })
}
