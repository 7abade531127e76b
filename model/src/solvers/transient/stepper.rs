//! Time stepping of the ring circuit L dI/dt + R I = v G(x) on a moving window of rings.
//!
//! Scheme: BDF2 (second-order backward differentiation; Hairer & Wanner, Solving Ordinary
//! Differential Equations II, 1996, sec. V.1), L-stable, so the stiff ring modes (L/R from
//! microseconds to milliseconds) are damped whatever the step. With flux linkages Psi = L I,
//!
//!   A I^{n+1} = h + v^{n+1} G,   A = (3 / (2 dt)) L + R,   h = (4 Psi^n - Psi^{n-1}) / (2 dt),
//!
//! and Psi^{n+1} = (2 dt / 3) (h + v^{n+1} G - R I^{n+1}) follows from the solve without a
//! matrix product. The mechanics is coupled by a Schur complement: I = y1 + v y2 with
//! y1 = A^{-1} h and y2 = A^{-1} G (one fused pair of banded solves), so the braking force
//! -G.I is affine in v and the momentum equation gives v^{n+1} in closed form.
//!
//! Start: the currents start at zero, I^{-1} = I^0 = 0 (exact when the stack starts outside
//! the field reach or at rest; a stack launched inside the tube starts with the currents of a
//! stack at rest).
//!
//! Window: only rings within a half-length H of the stack centre carry current. Ordered
//! ring-major, the matrix of any window of consecutive rings (also one clipped by a tube end)
//! is a leading principal submatrix of the matrix of the largest window, so one banded Cholesky
//! factor serves every step ([`crate::kernels::banded`]); it is refactored only when dt changes. A ring
//! entering the window starts with zero current; the currents of rings leaving it are dropped
//! and the magnetic energy removed with them is counted in the ledger.
//!
//! Step size: the stack should move at most about half a ring width per step. dt is doubled
//! when the speed allows (the history at the doubled spacing is already stored) and halved when
//! the stack moves faster than planned (the history is resampled by quadratic interpolation);
//! each change refactors A (factors are cached per step size).

use crate::kernels::banded::BandCholesky;
use crate::records::error::ModelError;
use crate::solvers::rings::fluxtable::FluxTable;
use crate::solvers::rings::grid::RingGrid;
use crate::solvers::transient::circuit::RingCircuit;

/// Factors kept for reuse when dt returns to an earlier size.
const FACTOR_CACHE: usize = 4;

/// Share of Milne's predictor-corrector difference that is BDF2's local error: C / (1 + C)
/// with BDF2's error constant C = 2/9 against the quadratic extrapolation's 1.
const BDF2_MILNE: f64 = 2.0 / 11.0;

/// Which rings carry current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum WindowMode {
    /// Rings within `half_length_m` of the stack centre; `finite` clips to the tube.
    Moving { half_length_m: f64, finite: bool },
    /// Every ring of the (finite) tube, always: the dense reference.
    #[cfg_attr(not(feature = "dense-reference"), allow(dead_code))]
    WholeTube,
}

/// Rings in the largest window of `mode` on `grid` (a finite tube caps it at its ring count).
pub(crate) fn window_capacity_rings(grid: &RingGrid, mode: WindowMode) -> usize {
    match mode {
        WindowMode::Moving {
            half_length_m,
            finite,
        } => {
            let n = (2.0 * half_length_m / grid.ring_width_m).floor() as usize + 1;
            if finite { n.min(grid.rings) } else { n }
        }
        WindowMode::WholeTube => grid.rings,
    }
}

/// Current, flux linkage and speed at one time level.
#[derive(Debug, Clone, PartialEq)]
struct Level {
    current: Vec<f64>,
    psi: Vec<f64>,
    speed: f64,
}

/// The ring circuit's state and its step machinery.
#[derive(Debug, Clone)]
pub(crate) struct Stepper<'a> {
    grid: &'a RingGrid,
    table: &'a FluxTable,
    circuit: &'a RingCircuit,
    mode: WindowMode,
    /// Largest window, rings (the order of the factorised matrix / layers).
    max_rings: usize,
    /// Current window: first ring (global index) and ring count.
    lo: i64,
    count: usize,
    /// Levels n, n-1, n-2 (index 0 is the newest).
    levels: [Level; 3],
    /// How many of the levels are valid at the current spacing (1..=3).
    valid_levels: usize,
    pub(crate) dt_s: f64,
    factors: Vec<(u64, BandCholesky)>,
    // Per-step work.
    g: Vec<f64>,
    y1: Vec<f64>,
    y2: Vec<f64>,
    h: Vec<f64>,
    gy1: f64,
    gy2: f64,
    /// Magnetic energy removed with currents dropped at the window edge, J.
    pub(crate) dropped_energy_j: f64,
    pub(crate) refactorisations: usize,
    /// Local error estimate of the last step in the force, N (see [`Stepper::force_error_n`]).
    force_error_n: Option<f64>,
    /// Whether the next steps estimate their error (the step control asks only where the step
    /// may change on it).
    pub(crate) estimate_error: bool,
}

impl<'a> Stepper<'a> {
    /// A stepper with zero currents, the stack at `x_m` moving at `v_m_per_s`, step `dt_s`.
    pub(crate) fn new(
        grid: &'a RingGrid,
        table: &'a FluxTable,
        circuit: &'a RingCircuit,
        mode: WindowMode,
        dt_s: f64,
        x_m: f64,
        v_m_per_s: f64,
    ) -> Result<Self, ModelError> {
        let max_rings = window_capacity_rings(grid, mode);
        let n = max_rings * grid.layers;
        let level = |speed| Level {
            current: vec![0.0; n],
            psi: vec![0.0; n],
            speed,
        };
        let mut s = Self {
            grid,
            table,
            circuit,
            mode,
            max_rings,
            lo: 0,
            count: 0,
            levels: [level(v_m_per_s), level(v_m_per_s), level(v_m_per_s)],
            valid_levels: 1,
            dt_s,
            factors: Vec::new(),
            g: vec![0.0; n],
            y1: vec![0.0; n],
            y2: vec![0.0; n],
            h: vec![0.0; n],
            gy1: 0.0,
            gy2: 0.0,
            dropped_energy_j: 0.0,
            refactorisations: 0,
            force_error_n: None,
            estimate_error: true,
        };
        let (lo, count) = s.window_for(x_m);
        s.lo = lo;
        s.count = count;
        Ok(s)
    }

    /// Sets the speed history (levels n-1 and n-2) for the first step, e.g. v - a dt.
    pub(crate) fn set_speed_history(&mut self, prev: f64, prev2: f64) {
        self.levels[1].speed = prev;
        self.levels[2].speed = prev2;
        self.valid_levels = 3;
    }

    fn window_for(&self, x_m: f64) -> (i64, usize) {
        match self.mode {
            WindowMode::WholeTube => (0, self.grid.rings),
            WindowMode::Moving {
                half_length_m,
                finite,
            } => {
                let dz = self.grid.ring_width_m;
                let s = x_m / dz - 0.5;
                let mut lo = (s - half_length_m / dz).ceil() as i64;
                let mut hi = (s + half_length_m / dz).floor() as i64;
                // Clip to the tube first, then to the capacity: capping first could leave a
                // window wider than the tube entirely outside it (no current at all).
                if finite {
                    lo = lo.max(0);
                    hi = hi.min(self.grid.rings as i64 - 1);
                }
                if hi - lo + 1 > self.max_rings as i64 {
                    hi = lo + self.max_rings as i64 - 1;
                }
                if hi < lo {
                    (lo, 0)
                } else {
                    (lo, (hi - lo + 1) as usize)
                }
            }
        }
    }

    fn factor_key(dt_s: f64) -> u64 {
        dt_s.to_bits()
    }

    /// Index in the cache of the factor for `dt_s`, factorising it first when it is not there
    /// (the least recently used factor makes room). Factorising only when a step needs it
    /// keeps steps over an empty window (free flight outside the tube) free of it.
    fn factor_for(&mut self, dt_s: f64) -> Result<usize, ModelError> {
        let key = Self::factor_key(dt_s);
        if let Some(i) = self.factors.iter().position(|(k, _)| *k == key) {
            // Most recently used last.
            let f = self.factors.remove(i);
            self.factors.push(f);
            return Ok(self.factors.len() - 1);
        }
        let a = self
            .circuit
            .system_matrix(self.max_rings, 1.5 / dt_s)
            .cholesky()?;
        self.refactorisations += 1;
        if self.factors.len() >= FACTOR_CACHE {
            self.factors.remove(0);
        }
        self.factors.push((key, a));
        Ok(self.factors.len() - 1)
    }

    /// Whether a factor for `dt_s` is cached (a change to it costs no factorisation).
    pub(crate) fn has_factor(&self, dt_s: f64) -> bool {
        let key = Self::factor_key(dt_s);
        self.factors.iter().any(|(k, _)| *k == key)
    }

    /// Moves the window to the one for `x_m`, carrying currents over and counting the energy
    /// of dropped currents.
    fn shift_window(&mut self, x_m: f64) {
        let (lo, count) = self.window_for(x_m);
        if lo == self.lo && count == self.count {
            return;
        }
        if count == 0 || self.count == 0 {
            // Nothing overlaps: the energy held in the old window is dropped.
            let e = self.stored_energy_j();
            self.dropped_energy_j += e;
            for level in &mut self.levels {
                level.current.fill(0.0);
                level.psi.fill(0.0);
            }
            self.lo = lo;
            self.count = count;
            return;
        }
        let nl = self.grid.layers;
        let old_lo = self.lo;
        let old_hi = self.lo + self.count as i64; // exclusive
        let new_hi = lo + count as i64;
        let reach = self.circuit.reach_rings() as i64;
        let energy_before = self.stored_energy_j();
        for level in &mut self.levels {
            let mut cur = vec![0.0; self.max_rings * nl];
            let mut psi = vec![0.0; self.max_rings * nl];
            for j in lo.max(old_lo)..new_hi.min(old_hi) {
                let (src, dst) = (((j - old_lo) as usize) * nl, ((j - lo) as usize) * nl);
                cur[dst..dst + nl].copy_from_slice(&level.current[src..src + nl]);
                psi[dst..dst + nl].copy_from_slice(&level.psi[src..src + nl]);
            }
            let kept = |j: i64| j >= lo && j < new_hi && j >= old_lo && j < old_hi;
            // Dropped rings: remove their coupling from kept rings.
            for k in old_lo..old_hi {
                if k >= lo && k < new_hi {
                    continue;
                }
                let src = ((k - old_lo) as usize) * nl;
                let ik = &level.current[src..src + nl];
                if ik.iter().all(|&c| c == 0.0) {
                    continue;
                }
                for j in (k - reach).max(lo)..=(k + reach).min(new_hi - 1) {
                    if kept(j) {
                        let dst = ((j - lo) as usize) * nl;
                        self.circuit.add_coupling(
                            &mut psi[dst..dst + nl],
                            ik,
                            j.abs_diff(k) as usize,
                            -1.0,
                        );
                    }
                }
            }
            // New rings: their linkage with the kept currents.
            for j in lo..new_hi {
                if j >= old_lo && j < old_hi {
                    continue;
                }
                let dst = ((j - lo) as usize) * nl;
                for k in (j - reach).max(old_lo)..=(j + reach).min(old_hi - 1) {
                    if kept(k) {
                        let src = ((k - lo) as usize) * nl;
                        self.circuit.add_coupling(
                            &mut psi[dst..dst + nl],
                            &cur[src..src + nl],
                            j.abs_diff(k) as usize,
                            1.0,
                        );
                    }
                }
            }
            level.current = cur;
            level.psi = psi;
        }
        self.lo = lo;
        self.count = count;
        let energy_after = self.stored_energy_j();
        self.dropped_energy_j += energy_before - energy_after;
    }

    /// Magnetic energy of the ring currents, I.Psi / 2, J.
    pub(crate) fn stored_energy_j(&self) -> f64 {
        let n = self.count * self.grid.layers;
        let l = &self.levels[0];
        0.5 * l.current[..n]
            .iter()
            .zip(&l.psi[..n])
            .map(|(i, p)| i * p)
            .sum::<f64>()
    }

    /// Prepares the step to t + dt with the flux derivative evaluated at the predicted stack
    /// position `x_pred_m`: moves the window, forms h and G, and solves for y1, y2. Returns
    /// (G.y1, G.y2): the braking force will be G.y1 + v G.y2. Factorises the step matrix for
    /// the current step size when no cached factor serves it; fails only if that matrix is not
    /// positive definite.
    pub(crate) fn prepare(&mut self, x_pred_m: f64) -> Result<(f64, f64), ModelError> {
        self.shift_window(x_pred_m);
        let nl = self.grid.layers;
        let n = self.count * nl;
        if n == 0 {
            self.gy1 = 0.0;
            self.gy2 = 0.0;
            return Ok((0.0, 0.0));
        }
        let al = self.table.align(self.grid, x_pred_m);
        for r in 0..self.count {
            let j = self.lo + r as i64;
            for l in 0..nl {
                self.g[r * nl + l] = self.table.at_ring(l, j, &al);
            }
        }
        let inv = 1.0 / (2.0 * self.dt_s);
        let (p0, p1) = (&self.levels[0].psi, &self.levels[1].psi);
        for k in 0..n {
            self.h[k] = (4.0 * p0[k] - p1[k]) * inv;
        }
        self.y1[..n].copy_from_slice(&self.h[..n]);
        self.y2[..n].copy_from_slice(&self.g[..n]);
        let i = self.factor_for(self.dt_s)?;
        self.factors[i]
            .1
            .solve_leading2(&mut self.y1[..n], &mut self.y2[..n]);
        let (mut a, mut b) = (0.0, 0.0);
        for k in 0..n {
            a += self.g[k] * self.y1[k];
            b += self.g[k] * self.y2[k];
        }
        self.gy1 = a;
        self.gy2 = b;
        Ok((a, b))
    }

    /// Completes the prepared step with the new speed: forms I and Psi, shifts the levels.
    /// Returns (electromagnetic force along travel, dissipated power) at the new level.
    ///
    /// Also estimates the local error of the step in the braking force (see
    /// [`Stepper::force_error_n`]).
    pub(crate) fn commit(&mut self, v_m_per_s: f64) -> (f64, f64) {
        let nl = self.grid.layers;
        let n = self.count * nl;
        // The quadratic predictor through levels n, n-1, n-2 needs three levels at one spacing.
        let predict = self.estimate_error && self.valid_levels >= 3;
        self.levels.rotate_right(1);
        let scale = 2.0 * self.dt_s / 3.0;
        let r = self.circuit.resistance_ohm();
        let mut power = 0.0;
        let mut deviation = 0.0;
        {
            let [lvl, l1, l2] = &mut self.levels;
            lvl.speed = v_m_per_s;
            for k in 0..n {
                let i = self.y1[k] + v_m_per_s * self.y2[k];
                let rk = r[k % nl];
                if predict {
                    // lvl still holds level n-2 here; l1 is level n, l2 level n-1.
                    let pred = 3.0 * l1.current[k] - 3.0 * l2.current[k] + lvl.current[k];
                    deviation += (self.g[k] - rk * self.y2[k]) * (i - pred);
                }
                lvl.current[k] = i;
                lvl.psi[k] = scale * (self.h[k] + v_m_per_s * self.g[k] - rk * i);
                power += rk * i * i;
            }
            lvl.current[n..].fill(0.0);
            lvl.psi[n..].fill(0.0);
        }
        self.force_error_n = predict.then_some(BDF2_MILNE * deviation.abs());
        self.valid_levels = (self.valid_levels + 1).min(3);
        let force = -(self.gy1 + v_m_per_s * self.gy2);
        (force, power)
    }

    /// Estimated local error of the last committed step in the braking force, N, or None when
    /// the levels before it were not equally spaced (the step after a change of dt).
    ///
    /// Milne's device: the BDF2 solution minus the quadratic extrapolation of the three previous
    /// currents is (1 + 2/9) h^3 I''' for a smooth solution, of which BDF2's own local error is
    /// the part 2/9 (Hairer & Wanner, Solving ODEs II, 1996, sec. III.7 and IV.8 on error
    /// estimation in stiff codes). For stiff ring modes (L/R far below dt) that raw difference
    /// overstates the error, so it is filtered through the step matrix, e = A^{-1} (3/(2 dt)) L
    /// dI (as in Hairer & Wanner's RADAU5 estimate), and only its effect on the force is taken:
    /// G.e = y2.(A - R) dI = (G - R y2).dI with y2 = A^{-1} G from the step itself, so the
    /// estimate costs one dot product and no solve.
    pub(crate) fn force_error_n(&self) -> Option<f64> {
        self.force_error_n
    }

    /// Speeds at levels n and n-1.
    pub(crate) fn speeds(&self) -> (f64, f64) {
        (self.levels[0].speed, self.levels[1].speed)
    }

    /// Shrinks dt to `new_dt` (<= dt): levels n-1 and n-2 are resampled at t - new_dt and
    /// t - 2 new_dt by the quadratic through levels n, n-1, n-2 (linear through n, n-1 when
    /// only two are known).
    pub(crate) fn shrink_dt(&mut self, new_dt: f64) -> Result<(), ModelError> {
        if new_dt >= self.dt_s {
            return Ok(());
        }
        let r = new_dt / self.dt_s;
        let three = self.valid_levels >= 3;
        // Weights on (level n, n-1, n-2) at s = -r and s = -2 r (time in units of old dt).
        let weights = |s: f64| -> (f64, f64, f64) {
            if three {
                (
                    (s + 1.0) * (s + 2.0) / 2.0,
                    -s * (s + 2.0),
                    s * (s + 1.0) / 2.0,
                )
            } else {
                (1.0 + s, -s, 0.0)
            }
        };
        let (a0, a1, a2) = weights(-r);
        let (b0, b1, b2) = weights(-2.0 * r);
        let [l0, l1, l2] = &mut self.levels;
        for k in 0..l0.current.len() {
            let (c0, c1, c2) = (l0.current[k], l1.current[k], l2.current[k]);
            l1.current[k] = a0 * c0 + a1 * c1 + a2 * c2;
            l2.current[k] = b0 * c0 + b1 * c1 + b2 * c2;
            let (p0, p1, p2) = (l0.psi[k], l1.psi[k], l2.psi[k]);
            l1.psi[k] = a0 * p0 + a1 * p1 + a2 * p2;
            l2.psi[k] = b0 * p0 + b1 * p1 + b2 * p2;
        }
        let (s0, s1, s2) = (l0.speed, l1.speed, l2.speed);
        l1.speed = a0 * s0 + a1 * s1 + a2 * s2;
        l2.speed = b0 * s0 + b1 * s1 + b2 * s2;
        // With two known levels the linear rule extrapolates level n-2 (s = -2r >= -2 is
        // within reach of the line only for r <= 1/2); it is used only for further shrinking.
        self.valid_levels = if three || r <= 0.5 { 3 } else { 2 };
        self.dt_s = new_dt;
        Ok(())
    }

    /// Doubles dt when three levels are known at the current spacing (level n-2 becomes
    /// n-1 exactly). Returns false (nothing changed) otherwise.
    pub(crate) fn try_double_dt(&mut self) -> Result<bool, ModelError> {
        if self.valid_levels < 3 {
            return Ok(false);
        }
        let new_dt = 2.0 * self.dt_s;
        self.levels.swap(1, 2);
        self.valid_levels = 2;
        self.dt_s = new_dt;
        Ok(true)
    }
}
