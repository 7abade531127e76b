//! Pieces shared by the quasi-static and the ring-circuit stroke solvers: the implicit
//! Coulomb-friction update, the end-of-run rules, the running statistics and energy ledger,
//! and the decimating recorder of the time series.

use crate::records::stroke::{StrokeEnd, StrokeSeries};

/// Mechanics of the moving stack along its travel.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Mechanics {
    /// Moving mass, kg.
    pub(crate) mass_kg: f64,
    /// Gravity along travel plus the applied force, N.
    pub(crate) drive_n: f64,
    /// Magnitude of Coulomb friction while sliding (static = kinetic), N.
    pub(crate) friction_n: f64,
}

impl Mechanics {
    /// Solves beta v = p + F_f for v with Coulomb friction F_f in -f sign(v), the set-valued
    /// law (static and kinetic coefficients equal): sliding when |p| > f, sticking (v = 0,
    /// F_f = -p) otherwise. Returns (v, F_f). `beta` > 0.
    pub(crate) fn implicit_velocity(&self, p: f64, beta: f64) -> (f64, f64) {
        let f = self.friction_n;
        if p > f {
            ((p - f) / beta, -f)
        } else if p < -f {
            ((p + f) / beta, f)
        } else {
            (0.0, -p)
        }
    }
}

/// One completed time step, as the solvers report it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct StepRecord {
    pub(crate) t0: f64,
    pub(crate) x0: f64,
    pub(crate) v0: f64,
    pub(crate) t1: f64,
    pub(crate) x1: f64,
    pub(crate) v1: f64,
    /// Electromagnetic force on the stack along travel at the step end, N.
    pub(crate) em_force_n: f64,
    /// Friction force along travel at the step end, N.
    pub(crate) friction_force_n: f64,
    /// Power dissipated in the tube at the step start and end, W.
    pub(crate) power0_w: f64,
    pub(crate) power1_w: f64,
}

impl StepRecord {
    /// Time and speed at which the stack centre passes `x` within this forward step
    /// (x0 <= x <= x1): v^2 linear in position and the mean speed over the part, both exact for
    /// constant acceleration (the trapezoidal and BDF2 steps are exact then too).
    pub(crate) fn crossing(&self, x: f64) -> (f64, f64) {
        let dx = self.x1 - self.x0;
        if dx <= 0.0 {
            return (self.t1, self.v1);
        }
        let f = ((x - self.x0) / dx).clamp(0.0, 1.0);
        let v2 = self.v0 * self.v0 + f * (self.v1 * self.v1 - self.v0 * self.v0);
        let v = v2.max(0.0).sqrt();
        let t = if self.v0 + v > 0.0 {
            (self.t0 + 2.0 * (x - self.x0) / (self.v0 + v)).min(self.t1)
        } else {
            self.t0 + f * (self.t1 - self.t0)
        };
        (t, v)
    }
}

/// Where the run ends and what counts as stopped.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct EndRules {
    pub(crate) tube_length_m: f64,
    /// Where the load meets its end stop (stack centre position).
    pub(crate) stop_position_m: f64,
    /// The run ends when the stack centre passes this position: the stop, or with a run-out
    /// the larger of the stop and tube length + stack length.
    pub(crate) end_position_m: f64,
    pub(crate) max_time_s: f64,
    /// Below this speed, with no drive beyond friction, the stack counts as stopped.
    pub(crate) stop_speed_m_per_s: f64,
}

/// Statistics and ledger accumulated over the run.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Tally {
    pub(crate) mech: Mechanics,
    pub(crate) rules: EndRules,
    pub(crate) start_x_m: f64,
    pub(crate) start_v_m_per_s: f64,
    pub(crate) steps: usize,
    pub(crate) max_speed_m_per_s: f64,
    pub(crate) max_deceleration_m_per_s2: f64,
    pub(crate) max_braking_n: f64,
    pub(crate) heat_j: f64,
    pub(crate) friction_work_j: f64,
    pub(crate) exit: Option<(f64, f64)>,
    /// (t, v) when the stack centre reached the stop.
    pub(crate) landing: Option<(f64, f64)>,
    /// Largest speed before the stack centre reached the entry; None when it started inside.
    pub(crate) max_speed_before_entry_m_per_s: Option<f64>,
    /// (t, x, v) where the run ended (the turning point when the stack reversed).
    pub(crate) end_state: (f64, f64, f64),
    /// (x, v) at the last step whose accounting entered the ledger.
    pub(crate) ledger_state: (f64, f64),
    /// Largest position reached and smallest, m.
    pub(crate) x_range_m: (f64, f64),
}

impl Tally {
    pub(crate) fn new(mech: Mechanics, rules: EndRules, x0: f64, v0: f64) -> Self {
        Self {
            mech,
            rules,
            start_x_m: x0,
            start_v_m_per_s: v0,
            steps: 0,
            max_speed_m_per_s: if x0 >= 0.0 { v0.abs() } else { 0.0 },
            max_deceleration_m_per_s2: 0.0,
            max_braking_n: 0.0,
            heat_j: 0.0,
            friction_work_j: 0.0,
            exit: if x0 >= rules.tube_length_m {
                Some((0.0, v0))
            } else {
                None
            },
            landing: None,
            max_speed_before_entry_m_per_s: (x0 < 0.0).then_some(v0.abs()),
            end_state: (0.0, x0, v0),
            ledger_state: (x0, v0),
            x_range_m: (x0, x0),
        }
    }

    /// Accounts one step; returns why the run ends, if it does.
    pub(crate) fn after_step(&mut self, s: &StepRecord) -> Option<StrokeEnd> {
        self.steps += 1;
        let dt = s.t1 - s.t0;
        let dx = s.x1 - s.x0;
        self.heat_j += 0.5 * dt * (s.power0_w + s.power1_w);
        self.friction_work_j += -s.friction_force_n * dx;
        self.ledger_state = (s.x1, s.v1);
        self.x_range_m = (self.x_range_m.0.min(s.x1), self.x_range_m.1.max(s.x1));
        let braking = -s.em_force_n;
        self.max_braking_n = self.max_braking_n.max(braking);
        let accel = (self.mech.drive_n + s.em_force_n + s.friction_force_n) / self.mech.mass_kg;
        // Figures of the stroke proper (entry to stop) and of the run-up before the entry.
        let stop = self.rules.stop_position_m;
        let in_stroke = self.landing.is_none();
        let mut v_in = s.v1;
        if in_stroke && s.x0 < stop && s.x1 >= stop {
            let (t, v) = s.crossing(stop);
            v_in = v;
            self.landing = Some((t, v));
        }
        if in_stroke && s.x1 >= 0.0 {
            self.max_speed_m_per_s = self.max_speed_m_per_s.max(v_in.abs());
            self.max_deceleration_m_per_s2 = self.max_deceleration_m_per_s2.max(-accel);
        }
        if s.x0 < 0.0 {
            let v_entry = if s.x1 < 0.0 { s.v1 } else { s.crossing(0.0).1 };
            let before = self.max_speed_before_entry_m_per_s.unwrap_or(0.0);
            self.max_speed_before_entry_m_per_s = Some(before.max(v_entry.abs()));
            if s.x1 >= 0.0 && in_stroke {
                self.max_speed_m_per_s = self.max_speed_m_per_s.max(v_entry.abs());
            }
        }
        if self.exit.is_none()
            && s.x0 < self.rules.tube_length_m
            && s.x1 >= self.rules.tube_length_m
        {
            self.exit = Some(s.crossing(self.rules.tube_length_m));
        }
        self.end_state = (s.t1, s.x1, s.v1);
        let mech = &self.mech;
        if s.x1 >= self.rules.end_position_m {
            if self.rules.end_position_m <= stop
                && let Some((t, v)) = self.landing
            {
                // The stroke ends at the stop: the state there, not past it.
                self.end_state = (t, stop, v);
                return Some(StrokeEnd::ReachedStop);
            }
            return Some(StrokeEnd::PassedTube);
        }
        if s.v1 < 0.0 {
            // The stack turned back: the stroke ends at the turning point (linear in v).
            let f = if s.v0 > s.v1 {
                s.v0 / (s.v0 - s.v1)
            } else {
                0.0
            };
            let x_turn = s.x0 + 0.5 * f * dt * s.v0;
            self.end_state = (s.t0 + f * dt, x_turn, 0.0);
            return Some(StrokeEnd::Stopped);
        }
        if s.v1 == 0.0 && mech.drive_n <= mech.friction_n {
            return Some(StrokeEnd::Stopped);
        }
        if s.v1 <= self.rules.stop_speed_m_per_s && mech.drive_n <= mech.friction_n {
            return Some(StrokeEnd::Stopped);
        }
        if s.t1 >= self.rules.max_time_s * (1.0 - 1e-12) {
            return Some(StrokeEnd::TimeLimit);
        }
        None
    }

    /// Work of the drive (gravity along travel and applied force), J.
    pub(crate) fn drive_work_j(&self) -> f64 {
        self.mech.drive_n * (self.ledger_state.0 - self.start_x_m)
    }

    /// Change of kinetic energy, J.
    pub(crate) fn kinetic_change_j(&self) -> f64 {
        0.5 * self.mech.mass_kg * (self.ledger_state.1.powi(2) - self.start_v_m_per_s.powi(2))
    }

    /// Relative imbalance |W_drive - (dKE + heat + stored + friction + dropped)| divided by the
    /// largest term of the ledger.
    pub(crate) fn energy_balance_error(&self, stored_j: f64, dropped_j: f64) -> f64 {
        let w = self.drive_work_j();
        let dke = self.kinetic_change_j();
        let terms = [
            w,
            dke,
            self.heat_j,
            stored_j,
            self.friction_work_j,
            dropped_j,
        ];
        let scale = terms.iter().fold(0.0_f64, |m, t| m.max(t.abs()));
        if scale <= 0.0 {
            return 0.0;
        }
        (w - (dke + self.heat_j + stored_j + self.friction_work_j + dropped_j)).abs() / scale
    }
}

/// Keeps at most about `4 * samples` evenly spaced steps of the run by doubling its stride
/// when full; the series returned holds `samples` of them, first and last included.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Recorder {
    samples: usize,
    stride: usize,
    counter: usize,
    rows: Vec<[f64; 5]>,
}

impl Recorder {
    pub(crate) fn new(samples: usize) -> Self {
        Self {
            samples: samples.max(2),
            stride: 1,
            counter: 0,
            rows: Vec::new(),
        }
    }

    /// Offers the state after a step (or the initial state): time, position, speed, braking
    /// force (positive opposes motion), dissipated power.
    pub(crate) fn offer(&mut self, row: [f64; 5]) {
        if self.counter.is_multiple_of(self.stride) {
            self.rows.push(row);
            if self.rows.len() >= 4 * self.samples {
                let mut k = 0;
                self.rows.retain(|_| {
                    k += 1;
                    (k - 1) % 2 == 0
                });
                self.stride *= 2;
            }
        }
        self.counter += 1;
    }

    /// The series: `samples` rows evenly spread over the kept ones, `last` appended as the
    /// final row (replacing a kept row at the same time).
    pub(crate) fn finish(mut self, last: [f64; 5]) -> StrokeSeries {
        if self.rows.last().is_some_and(|r| r[0] >= last[0]) {
            self.rows.pop();
        }
        self.rows.push(last);
        let n = self.rows.len();
        let m = self.samples.min(n);
        let mut s = StrokeSeries::default();
        for i in 0..m {
            let idx = if m == 1 {
                0
            } else {
                (i * (n - 1) + (m - 1) / 2) / (m - 1)
            };
            let r = self.rows[idx.min(n - 1)];
            s.time_s.push(r[0]);
            s.position_m.push(r[1]);
            s.speed_m_per_s.push(r[2]);
            s.force_n.push(r[3]);
            s.power_w.push(r[4]);
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn friction_sticks_below_its_limit() {
        let m = Mechanics {
            mass_kg: 1.0,
            drive_n: 0.0,
            friction_n: 2.0,
        };
        // source: common practice (Coulomb's law with equal static and kinetic coefficients).
        assert_eq!(m.implicit_velocity(1.5, 10.0), (0.0, -1.5));
        assert_eq!(m.implicit_velocity(5.0, 10.0), (0.3, -2.0));
        assert_eq!(m.implicit_velocity(-5.0, 10.0), (-0.3, 2.0));
    }

    #[test]
    fn recorder_keeps_first_and_last() {
        let mut r = Recorder::new(10);
        for i in 0..1000 {
            r.offer([i as f64, 0.0, 0.0, 0.0, 0.0]);
        }
        let s = r.finish([1000.0, 1.0, 0.0, 0.0, 0.0]);
        // source: common practice (the series contract: requested length, first and last kept).
        assert_eq!(s.time_s.len(), 10);
        assert_eq!(s.time_s[0], 0.0);
        assert_eq!(s.time_s[9], 1000.0);
        assert!(s.time_s.windows(2).all(|w| w[1] > w[0]));
    }
}
