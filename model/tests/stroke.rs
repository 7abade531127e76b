//! Stroke simulation through a finite tube: closed-form kinematics, the quasi-static limit of
//! the ring circuit, the energy ledger, end effects, the dense reference, and the spectral
//! steady state.

use ringdrag_model::records::caution::CautionKind;
use ringdrag_model::records::design::Design;
use ringdrag_model::records::spec::DesignSpec;
use ringdrag_model::records::stroke::{Stroke, StrokeEnd, StrokeOptions};
use ringdrag_model::solvers::dragprofile::{drag_profile, long_tube_damping_n_s_per_m};
use ringdrag_model::solvers::rings::fluxtable::FluxTable;
use ringdrag_model::solvers::rings::grid::RingGrid;
use ringdrag_model::solvers::spectral::{SteadySolver, force_curve};
use ringdrag_model::solvers::transient::{
    AUTO_INDUCTIVE_REYNOLDS, constant_speed_force, magnetic_reynolds_number,
    simulate_stroke_dense_reference, window_half_length_m,
};
use ringdrag_model::{Fidelity, ForceCurveOptions, Limits, MU0, ModelError, simulate_stroke};

/// An invented design from JSON.
fn design(json: &str) -> Design {
    let spec: DesignSpec = serde_json::from_str(json).expect("test design parses");
    Design::from_spec(&spec).expect("test design is valid")
}

/// Invented scenario: a 12 mm N42 cylinder 20 mm long in a C12200 copper tube of 13 mm bore
/// and 1.5 mm wall, `length_m` long, with the given load object.
fn copper(length_m: f64, load: &str) -> Design {
    design(&format!(
        r#"{{"magnets":{{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02}},
            "tube":{{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,
                     "length_m":{length_m}}},
            "load":{load}}}"#
    ))
}

fn run(d: &Design, x0: f64, v0: f64, fidelity: Fidelity) -> Stroke {
    let opts = StrokeOptions {
        start_position_m: x0,
        start_speed_m_per_s: v0,
        fidelity,
        ..StrokeOptions::default()
    };
    simulate_stroke(d, &opts, &Limits::default()).expect("stroke runs")
}

fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

#[test]
fn quasi_static_and_inductive_agree_at_low_reynolds_number() {
    // At low magnetic Reynolds number the ring currents follow the EMF, I = e / R, and the ring
    // circuit reduces to the quasi-static drag c(x) v (source: Levin, da Silveira & Rizzato,
    // Am. J. Phys. 74, 815, 2006, who derive the braking in this limit).
    let d = copper(0.3, "{}");
    let qs = run(&d, -0.03, 0.0, Fidelity::QuasiStatic);
    let ind = run(&d, -0.03, 0.0, Fidelity::Inductive);
    assert_eq!(qs.model.method, "quasi_static_ring_sum");
    assert_eq!(ind.model.method, "ring_circuit");
    let (tq, ti) = (
        qs.summary.exit_time_s.expect("exits"),
        ind.summary.exit_time_s.expect("exits"),
    );
    // source: common practice (0.5 % agreement asked of the two fidelities at low Rm).
    assert!(rel(tq, ti) < 0.005, "exit times {tq} vs {ti}");
    let (vq, vi) = (
        qs.summary.exit_speed_m_per_s.expect("exits"),
        ind.summary.exit_speed_m_per_s.expect("exits"),
    );
    // source: common practice (same tolerance).
    assert!(rel(vq, vi) < 0.005, "exit speeds {vq} vs {vi}");
    // source: common practice (same tolerance).
    assert!(rel(qs.summary.heat_j, ind.summary.heat_j) < 0.005);
}

#[test]
fn steady_ring_circuit_tends_to_the_quasi_static_sum_and_the_auto_threshold_holds() {
    // The ring circuit at a crawl reproduces c_mid v of the same discretisation; at the Auto
    // threshold the quasi-static model overstates braking by ~0.1 Rm^2 only (source: common
    // practice - the low-Rm expansion of eddy-current drag is even in Rm, e.g. Reitz,
    // J. Appl. Phys. 41, 2067, 1970, drag ~ 1 / (1 + (v/w)^2) for a sheet).
    let d = copper(0.3, "{}");
    let limits = Limits::default();
    let c_mid = drag_profile(&d, None, None, &limits)
        .expect("profile")
        .mid_tube_n_s_per_m();
    let slow = 1e-3;
    let f = constant_speed_force(&d, slow, None, None, 2, &limits).expect("ring force");
    // source: common practice (the low-speed limit of the ring circuit; rounding only).
    assert!(
        rel(f.force_n, c_mid * slow) < 1e-5,
        "{} vs {}",
        f.force_n,
        c_mid * slow
    );
    let v = AUTO_INDUCTIVE_REYNOLDS / magnetic_reynolds_number(&d, 1.0);
    let f = constant_speed_force(&d, v, None, None, 2, &limits).expect("ring force");
    let overstatement = c_mid * v / f.force_n - 1.0;
    // source: common practice (Rm^2 law as above: a positive overstatement below 0.2 %).
    assert!(
        overstatement > 0.0 && overstatement < 0.002,
        "{overstatement}"
    );
    let f4 = constant_speed_force(&d, 4.0 * v, None, None, 2, &limits).expect("ring force");
    let over4 = c_mid * 4.0 * v / f4.force_n - 1.0;
    // source: common practice (even law: four times the speed, about sixteen times the effect).
    assert!(
        over4 > 10.0 * overstatement && over4 < 20.0 * overstatement,
        "{over4}"
    );
}

#[test]
fn energy_ledger_closes_to_the_time_step_error() {
    // Work of the drive = kinetic energy change + heat + stored magnetic energy + friction work
    // (source: common practice - Poynting's theorem for the rings, Newton for the stack).
    // This measures the time integration only: in the quasi-static pass heat is summed as
    // c v^2 and braking is c v, so a scale error in c cancels. Scale-sensitive checks of heat
    // and braking against outside references are in tests/highspeed.rs.
    // A heavy cart on a 30 degree incline with friction, launched at 3 m/s into the tube
    // (Rm ~ 0.3: the ring inductance matters).
    let d = copper(
        0.3,
        r#"{"payload_mass_kg":0.3,"incline_deg":30,"friction_coefficient":0.1}"#,
    );
    for fidelity in [Fidelity::Inductive, Fidelity::QuasiStatic] {
        let s = run(&d, -0.02, 3.0, fidelity);
        // source: common practice (0.5 % ledger closure).
        assert!(
            s.summary.energy_balance_error < 0.005,
            "{fidelity:?}: {}",
            s.summary.energy_balance_error
        );
        assert!(s.summary.heat_j > 0.0);
    }
}

#[test]
fn negligible_conductivity_gives_free_fall() {
    // h = g t^2 / 2 (source: textbook kinematics, common practice).
    let d = design(
        r#"{"magnets":{"remanence_t":1.3,"outer_diameter_m":0.012,"length_m":0.02},
            "tube":{"conductivity_s_per_m":1e-3,"inner_diameter_m":0.013,"wall_thickness_m":0.0015,
                    "length_m":0.3}}"#,
    );
    let g: f64 = 9.80665;
    let expected = (2.0 * 0.3 / g).sqrt();
    for fidelity in [Fidelity::QuasiStatic, Fidelity::Inductive] {
        let s = run(&d, 0.0, 0.0, fidelity);
        let t = s.summary.exit_time_s.expect("falls through");
        // source: common practice (second-order integrators are exact for constant
        // acceleration; 1e-6 leaves room for the braking of 1e-3 S/m).
        assert!(rel(t, expected) < 1e-6, "{fidelity:?}: {t} vs {expected}");
        let v = s.summary.exit_speed_m_per_s.expect("exits");
        // source: common practice (v = g t).
        assert!(rel(v, g * expected) < 1e-6);
        // The default stop is the far end: the landing is the exit.
        assert_eq!(s.summary.end_reason, StrokeEnd::ReachedStop);
        assert_eq!(s.summary.landing_speed_m_per_s, Some(v));
        assert_eq!(s.summary.stroke_time_s, Some(t));
    }
}

#[test]
fn incline_and_friction_give_the_reduced_acceleration() {
    // a = g (sin theta - mu cos theta), L = a t^2 / 2 (source: textbook mechanics, common
    // practice).
    let d = design(
        r#"{"magnets":{"remanence_t":1.3,"outer_diameter_m":0.012,"length_m":0.02},
            "tube":{"conductivity_s_per_m":1e-3,"inner_diameter_m":0.013,"wall_thickness_m":0.0015,
                    "length_m":0.5},
            "load":{"incline_deg":40,"friction_coefficient":0.3}}"#,
    );
    let g: f64 = 9.80665;
    let th = 40.0_f64.to_radians();
    let a = g * (th.sin() - 0.3 * th.cos());
    let s = run(&d, 0.0, 0.0, Fidelity::QuasiStatic);
    let t = s.summary.exit_time_s.expect("slides through");
    // source: common practice (as above).
    assert!(rel(t, (2.0 * 0.5 / a).sqrt()) < 1e-6, "{t}");
}

#[test]
fn friction_holds_a_stack_below_the_angle_of_repose() {
    // tan theta < mu: static friction holds the stack (source: textbook mechanics, common
    // practice).
    let d = copper(0.3, r#"{"incline_deg":10,"friction_coefficient":0.3}"#);
    let s = run(&d, 0.1, 0.0, Fidelity::Auto);
    assert_eq!(s.summary.end_reason, StrokeEnd::Stopped);
    assert_eq!(s.summary.end_position_m, 0.1);
    assert_eq!(s.summary.exit_time_s, None);
}

#[test]
fn horizontal_entry_follows_linear_drag() {
    // m v dv/dx = -c v: v = v0 - (c/m) x, stopping distance m v0 / c (source: closed form of
    // linear drag, common practice). The stack starts deep inside a long tube, where c is the
    // mid-tube value.
    let d = copper(2.0, r#"{"incline_deg":0,"payload_mass_kg":0.05}"#);
    let limits = Limits::default();
    let c = drag_profile(&d, None, None, &limits)
        .expect("profile")
        .mid_tube_n_s_per_m();
    let m = d.moving_mass_kg();
    let (x0, v0) = (0.5, 0.2);
    let opts = StrokeOptions {
        start_position_m: x0,
        start_speed_m_per_s: v0,
        fidelity: Fidelity::QuasiStatic,
        samples: 400,
        ..StrokeOptions::default()
    };
    let s = simulate_stroke(&d, &opts, &limits).expect("runs");
    assert_eq!(s.summary.end_reason, StrokeEnd::Stopped);
    let distance = s.summary.end_position_m - x0;
    // source: closed form above; 0.5 % covers the ring ripple of c along the axis.
    assert!(
        rel(distance, m * v0 / c) < 0.005,
        "{distance} vs {}",
        m * v0 / c
    );
    for (x, v) in s.series.position_m.iter().zip(&s.series.speed_m_per_s) {
        let linear = v0 - c / m * (x - x0);
        // source: closed form above (0.5 % of v0).
        assert!((v - linear).abs() < 0.005 * v0, "x {x}: v {v} vs {linear}");
    }
}

#[test]
fn coulomb_friction_and_linear_drag_stop_at_the_closed_form_distance() {
    // m v dv/dx = -f - c v gives x = (m/c) [v0 - (f/c) ln(1 + c v0 / f)] (source: closed form,
    // common practice).
    let d = copper(
        2.0,
        r#"{"incline_deg":0,"payload_mass_kg":0.05,"friction_coefficient":0.05}"#,
    );
    let limits = Limits::default();
    let c = drag_profile(&d, None, None, &limits)
        .expect("profile")
        .mid_tube_n_s_per_m();
    let (m, f) = (d.moving_mass_kg(), d.friction_force_n());
    let v0 = 0.2;
    let s = run(&d, 0.5, v0, Fidelity::QuasiStatic);
    assert_eq!(s.summary.end_reason, StrokeEnd::Stopped);
    assert_eq!(s.summary.end_speed_m_per_s, 0.0);
    let closed = m / c * (v0 - f / c * (c * v0 / f).ln_1p());
    let distance = s.summary.end_position_m - 0.5;
    // source: closed form above (0.5 % for the ring ripple of c).
    assert!(rel(distance, closed) < 0.005, "{distance} vs {closed}");
}

#[test]
fn uphill_launch_ends_at_the_turning_point() {
    // Without braking, v0^2 = 2 g sin(theta) x (source: textbook kinematics, common practice).
    let d = design(
        r#"{"magnets":{"remanence_t":1.3,"outer_diameter_m":0.012,"length_m":0.02},
            "tube":{"conductivity_s_per_m":1e-3,"inner_diameter_m":0.013,"wall_thickness_m":0.0015,
                    "length_m":1.0},
            "load":{"incline_deg":-30}}"#,
    );
    let v0 = 2.0;
    let s = run(&d, 0.0, v0, Fidelity::QuasiStatic);
    assert_eq!(s.summary.end_reason, StrokeEnd::Stopped);
    let closed = v0 * v0 / (2.0 * 9.80665 * 0.5);
    // source: as above; the turning point is interpolated within one step of 1e-4 m.
    assert!(
        (s.summary.end_position_m - closed).abs() < 2e-4,
        "{}",
        s.summary.end_position_m
    );
    assert!(
        s.cautions
            .iter()
            .any(|c| c.kind == CautionKind::Assumption && c.message.contains("turns back"))
    );
}

#[test]
fn open_end_halves_the_damping() {
    // With the stack centre at an open end only the rings on one side brake; for a single
    // magnet (dPhi/dzeta)^2 is even about its centre, so the open-end value is half the
    // mid-tube value (source: common practice - symmetry; about half, as for a semi-infinite
    // tube).
    let d = copper(0.3, "{}");
    let p = drag_profile(&d, None, None, &Limits::default()).expect("profile");
    let mid = p.mid_tube_n_s_per_m();
    for end in [0.0, 0.3] {
        let ratio = p.damping_n_s_per_m(end) / mid;
        // source: as above (ring ripple below 1e-3).
        assert!((ratio - 0.5).abs() < 1e-3, "end {end}: {ratio}");
    }
    // Mid-tube equals the long-tube value (source: common practice, same ring sum).
    assert!(rel(p.damping_n_s_per_m(0.15), mid) < 1e-3);
    // Far outside, nothing (source: common practice, no conductor in reach).
    assert_eq!(p.damping_n_s_per_m(-0.5), 0.0);
    assert_eq!(p.damping_n_s_per_m(1.0), 0.0);
}

#[test]
fn quasi_static_damping_matches_the_thin_wall_dipole_law() {
    // Point dipole on the axis of a thin-walled tube, low speed:
    // c = 45 mu0^2 m^2 sigma w / (1024 a^4) (source: Levin, da Silveira & Rizzato,
    // Am. J. Phys. 74, 815, 2006). A 1 mm magnet in a 50 mm bore is a dipole to (R/a)^2 ~ 4e-4;
    // w / a = 1e-3 keeps the thin-wall law's O(w/a) error at 0.2 %.
    let d = design(
        r#"{"magnets":{"remanence_t":1.3,"outer_diameter_m":0.001,"length_m":0.001},
            "tube":{"conductivity_s_per_m":5.8e7,"inner_diameter_m":0.05,"wall_thickness_m":25e-6,
                    "length_m":0.3}}"#,
    );
    let limits = Limits::default();
    let grid = RingGrid::new(&d, Some(0.002), None, None, &limits).expect("grid");
    let reach = window_half_length_m(&d, 0.0);
    let table = FluxTable::new(&d.magnets, &grid, reach);
    let c = long_tube_damping_n_s_per_m(&grid, &table, reach);
    let m = d.magnets.dipole_moment_a_m2();
    let a = d.tube.inner_radius_m;
    let closed = 45.0 * MU0 * MU0 * m * m * 5.8e7 * 25e-6 / (1024.0 * a.powi(4));
    // source: as above (0.5 %, the law's own accuracy here).
    assert!(
        rel(c, closed) < 0.005,
        "ring sum {c} vs dipole law {closed}"
    );
}

#[test]
fn dense_reference_agrees_with_the_windowed_solver() {
    // Same discretisation, every ring carrying current and full mutual coupling: the window and
    // the coupling truncation change the result by far less than the discretisation error
    // (source: common practice - a truncation check of a d^-3 tail).
    let d = copper(0.1, "{}");
    let opts = StrokeOptions {
        start_position_m: -0.03,
        fidelity: Fidelity::Inductive,
        ..StrokeOptions::default()
    };
    let limits = Limits::default();
    let windowed = simulate_stroke(&d, &opts, &limits).expect("windowed");
    let (dense, _) = simulate_stroke_dense_reference(&d, &opts, &limits).expect("dense");
    let (tw, td) = (
        windowed.summary.exit_time_s.expect("exits"),
        dense.summary.exit_time_s.expect("exits"),
    );
    // source: common practice (truncation far below the 0.1 % discretisation error).
    assert!(rel(tw, td) < 2e-4, "{tw} vs {td}");
    assert!(rel(windowed.summary.heat_j, dense.summary.heat_j) < 1e-3);
}

#[test]
fn mid_tube_speed_equals_the_spectral_terminal_speed() {
    // A long vertical stroke settles at the speed where braking balances the weight; the
    // spectral force curve gives that speed independently (source: common practice - steady
    // state of the stroke; spectral method: Smythe, Static and Dynamic Electricity, 1950, ch. 7
    // kernel, in this crate's spectral module).
    let d = copper(1.0, "{}");
    let curve = force_curve(&d, &ForceCurveOptions::default(), &Limits::default()).expect("curve");
    let terminal = curve.terminal_speed_m_per_s.expect("brake holds");
    let opts = StrokeOptions {
        start_position_m: -0.03,
        samples: 2000,
        ..StrokeOptions::default()
    };
    let s = simulate_stroke(&d, &opts, &Limits::default()).expect("stroke");
    let (i, _) = s
        .series
        .position_m
        .iter()
        .enumerate()
        .min_by(|a, b| (a.1 - 0.5).abs().total_cmp(&(b.1 - 0.5).abs()))
        .expect("samples");
    let v = s.series.speed_m_per_s[i];
    // source: common practice (1 % agreement of the two methods).
    assert!(
        rel(v, terminal) < 0.01,
        "mid-tube {v} vs spectral {terminal}"
    );
}

#[test]
fn constant_speed_ring_circuit_matches_the_spectral_force_near_rm_one() {
    // At Rm ~ 1 the eddy currents' own field lowers braking by ~7 %; the refined ring circuit
    // and the spectral solution are independent discretisations of the same physics (source:
    // common practice - two methods refined to agreement within 0.5 %).
    let d = copper(0.3, "{}");
    let v = 1.0 / magnetic_reynolds_number(&d, 1.0);
    let ring =
        constant_speed_force(&d, v, None, Some(8), 2, &Limits::default()).expect("ring force");
    let spectral = SteadySolver::new(&d, Some(16)).expect("solver").force_n(v);
    // source: as above (0.5 %).
    assert!(
        rel(ring.force_n, spectral) < 0.005,
        "ring {} vs spectral {spectral}",
        ring.force_n
    );
    let c = SteadySolver::new(&d, None)
        .expect("solver")
        .damping_n_s_per_m();
    // The inductive reduction is real (source: common practice, Rm ~ 1 leaves the linear law).
    assert!(ring.force_n < 0.97 * c * v);
}

#[test]
fn a_load_beyond_the_peak_force_is_a_runaway() {
    // Above the critical speed braking falls as speed rises; a drive above the peak force cannot
    // be held (source: Partovi & Morris, Can. J. Phys. 84, 253, 2006 on the force peak).
    let thick = r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},
        "tube":{"material":"copper-c11000","inner_diameter_m":0.013,"wall_thickness_m":0.004,
                "length_m":1.0}}"#;
    let d0 = design(thick);
    let curve = force_curve(&d0, &ForceCurveOptions::default(), &Limits::default()).expect("curve");
    let payload = 1.5 * curve.peak_force_n / 9.80665 - d0.moving_mass_kg();
    let d = design(&thick.replace(
        r#""length_m":1.0}}"#,
        &format!(r#""length_m":1.0}},"load":{{"payload_mass_kg":{payload}}}}}"#),
    ));
    let s = run(&d, 0.0, 1.2 * curve.critical_speed_m_per_s, Fidelity::Auto);
    assert_eq!(s.model.fidelity, Fidelity::Inductive);
    assert!(
        s.cautions.iter().any(|c| c.kind == CautionKind::Runaway),
        "{:?}",
        s.cautions
    );
    // A held load raises no such caution (source: common practice).
    let calm = run(&copper(0.3, "{}"), -0.03, 0.0, Fidelity::Auto);
    assert!(!calm.cautions.iter().any(|c| c.kind == CautionKind::Runaway));
}

#[test]
fn results_carry_contract_fields() {
    let d = copper(0.3, "{}");
    let s = run(&d, -0.03, 0.0, Fidelity::Auto);
    // Low Rm (a 3 cm drop, ~0.07): Auto picks the quasi-static model (source: common practice,
    // the threshold constant).
    assert_eq!(s.model.fidelity, Fidelity::QuasiStatic);
    assert_eq!(s.cautions[0].kind, CautionKind::Safety);
    let n = s.series.time_s.len();
    assert_eq!(n, 200);
    for len in [
        s.series.position_m.len(),
        s.series.speed_m_per_s.len(),
        s.series.force_n.len(),
        s.series.power_w.len(),
    ] {
        assert_eq!(len, n);
    }
    assert_eq!(s.series.time_s[0], 0.0);
    assert_eq!(s.series.time_s[n - 1], s.summary.end_time_s);
    assert_eq!(s.summary.end_reason, StrokeEnd::ReachedStop);
    assert_eq!(s.summary.end_position_m, 0.3);
    assert_eq!(s.series.position_m[n - 1], 0.3);
    let rise = s
        .summary
        .tube_temperature_rise_k
        .expect("copper has a heat capacity");
    // The field sweeps the whole 0.3 m tube, so the mean adiabatic rise is Q / (rho c_p A L)
    // with copper's 8940 kg/m^3 and 385 J/(kg K) (source: Copper Development Association
    // data for C12200) and A = pi (8^2 - 6.5^2) mm^2: about 6e-4 K here. 1e-9: arithmetic.
    let capacity_j_per_k =
        8940.0 * 385.0 * std::f64::consts::PI * (0.008_f64.powi(2) - 0.0065_f64.powi(2)) * 0.3;
    assert!(
        rel(rise, s.summary.heat_j / capacity_j_per_k) < 1e-9,
        "rise {rise} K"
    );
    let e = s.model.error_estimate_relative.expect("estimated");
    // source: common practice (the 1 % accuracy the stroke reports claim).
    assert!(e > 0.0 && e < 0.01, "{e}");
    // Heat equals the drop in potential and kinetic energy, m g (x_end - x_start) - m v_end^2 / 2
    // (source: energy conservation, common practice). A time-step check only: in the
    // quasi-static pass this balances whatever c is (heat against outside references:
    // tests/highspeed.rs). 0.5 %: the ledger tolerance above.
    let m = d.moving_mass_kg();
    let lost = m * 9.80665 * (s.summary.end_position_m + 0.03)
        - 0.5 * m * s.summary.end_speed_m_per_s.powi(2);
    assert!(
        rel(s.summary.heat_j, lost) < 0.005,
        "heat {} vs {lost}",
        s.summary.heat_j
    );
}

#[test]
fn a_hot_tube_brakes_less() {
    // rho(T) = rho20 (1 + alpha (T - 20)) with alpha = 0.00393 /K for annealed copper
    // (source: IEC 60028, International standard of resistance for copper): a 60 K warmer
    // C11000 tube conducts 1 + 0.00393 x 60 = 1.2358 times less, the stack exits sooner.
    let d = design(
        r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},
            "tube":{"material":"copper-c11000","inner_diameter_m":0.013,"wall_thickness_m":0.0015,
                    "length_m":0.3}}"#,
    );
    let hot = d.at_temperatures(80.0, 20.0);
    let tc = run(&d, -0.03, 0.0, Fidelity::QuasiStatic)
        .summary
        .exit_time_s
        .expect("exit");
    let th = run(&hot, -0.03, 0.0, Fidelity::QuasiStatic)
        .summary
        .exit_time_s
        .expect("exit");
    // source: as above.
    assert!(th < tc);
    // In the linear regime the time spent at terminal speed scales with the conductivity
    // (source: terminal speed ~ 1/sigma, Levin, da Silveira & Rizzato, Am. J. Phys. 74, 815,
    // 2006); the free-fall start and the tube ends make the exit-time ratio a little smaller
    // (measured 0.07 %). 0.5 %: a coefficient off by 0.0001 /K fails.
    let ratio = 1.0 + 0.00393 * 60.0;
    assert!(rel(tc / th, ratio) < 0.005, "{} vs {ratio}", tc / th);
}

#[test]
fn invalid_options_name_their_fields() {
    let d = copper(0.3, "{}");
    let limits = Limits::default();
    let bad = StrokeOptions {
        start_position_m: f64::NAN,
        start_speed_m_per_s: -1.0,
        max_time_s: 0.0,
        samples: 1,
        ..StrokeOptions::default()
    };
    let Err(ModelError::Invalid(errs)) = simulate_stroke(&d, &bad, &limits) else {
        panic!("must fail")
    };
    for p in [
        "start.position_m",
        "start.speed_m_per_s",
        "max_time_s",
        "samples",
    ] {
        assert!(errs.iter().any(|e| e.path == p), "missing {p}");
    }
    let fine = StrokeOptions {
        ring_width_m: Some(1e-6),
        ..StrokeOptions::default()
    };
    match simulate_stroke(&d, &fine, &limits) {
        Err(ModelError::TooLarge { path, .. }) => assert_eq!(path, "options.ring_width_m"),
        other => panic!("expected TooLarge, got {other:?}"),
    }
    let layers = StrokeOptions {
        radial_layers: Some(100),
        ..StrokeOptions::default()
    };
    match simulate_stroke(&d, &layers, &limits) {
        Err(ModelError::TooLarge { path, .. }) => assert_eq!(path, "options.radial_layers"),
        other => panic!("expected TooLarge, got {other:?}"),
    }
    let long = StrokeOptions {
        max_time_s: 1e9,
        ..StrokeOptions::default()
    };
    assert!(matches!(
        simulate_stroke(&d, &long, &limits),
        Err(ModelError::TooLarge { .. })
    ));
}

#[test]
fn auto_falls_back_to_quasi_static_when_the_ring_circuit_is_too_large() {
    // A 20 mm copper wall around a 13 mm bore: Rm ~ 1 at the entry speed, but the near-square
    // layers make a band matrix far above the cap. Auto says so and runs the quasi-static model;
    // an explicit inductive request is refused (source: common practice - the limits contract).
    let d = design(
        r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},
            "tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.02,
                    "length_m":0.3}}"#,
    );
    let s = run(&d, -0.03, 0.0, Fidelity::Auto);
    assert_eq!(s.model.fidelity, Fidelity::QuasiStatic);
    assert!(
        s.cautions
            .iter()
            .any(|c| c.kind == CautionKind::Numerical && c.message.contains("too large"))
    );
    let opts = StrokeOptions {
        start_position_m: -0.03,
        fidelity: Fidelity::Inductive,
        ..StrokeOptions::default()
    };
    assert!(matches!(
        simulate_stroke(&d, &opts, &Limits::default()),
        Err(ModelError::TooLarge { .. })
    ));
}

#[test]
fn a_stroke_ends_at_the_users_stop_and_reports_the_landing() {
    // Free fall from 5 cm above the entry to a stop 0.2 m into a 0.3 m tube of negligible
    // conductivity: v = sqrt(2 g h), t = sqrt(2 h / g) (source: textbook kinematics, common
    // practice).
    let d = design(
        r#"{"magnets":{"remanence_t":1.3,"outer_diameter_m":0.012,"length_m":0.02},
            "tube":{"conductivity_s_per_m":1e-3,"inner_diameter_m":0.013,"wall_thickness_m":0.0015,
                    "length_m":0.3}}"#,
    );
    let g: f64 = 9.80665;
    for fidelity in [Fidelity::QuasiStatic, Fidelity::Inductive] {
        let opts = StrokeOptions {
            start_position_m: -0.05,
            stop_position_m: Some(0.2),
            fidelity,
            ..StrokeOptions::default()
        };
        let s = simulate_stroke(&d, &opts, &Limits::default()).expect("runs");
        let sum = &s.summary;
        assert_eq!(sum.end_reason, StrokeEnd::ReachedStop);
        assert_eq!(sum.stop_position_m, 0.2);
        let v = sum.landing_speed_m_per_s.expect("lands");
        // source: common practice (second-order integrators are exact for constant
        // acceleration; 1e-6 leaves room for the braking of 1e-3 S/m).
        assert!(rel(v, (2.0 * g * 0.25).sqrt()) < 1e-6, "{fidelity:?}: {v}");
        let t = sum.stroke_time_s.expect("lands");
        assert!(rel(t, (2.0 * 0.25 / g).sqrt()) < 1e-6, "{t}");
        // The largest speed in the stroke is the landing speed; the fall before the entry is
        // reported apart (sqrt(2 g 0.05)).
        assert!(rel(sum.max_speed_m_per_s, v) < 1e-9);
        let before = sum.max_speed_before_entry_m_per_s.expect("started above");
        assert!(rel(before, (2.0 * g * 0.05).sqrt()) < 1e-6, "{before}");
        // The series ends at the stop; the far end is never reached.
        assert_eq!(sum.exit_time_s, None);
        assert_eq!(s.series.position_m.last().copied(), Some(0.2));
        assert_eq!(s.series.time_s.last().copied(), Some(t));
        assert_eq!(sum.end_time_s, t);
        // A run-out continues past the tube; the landing figures still refer to the stop.
        let run_out = StrokeOptions {
            run_out: true,
            ..opts.clone()
        };
        let r = simulate_stroke(&d, &run_out, &Limits::default()).expect("runs");
        assert_eq!(r.summary.end_reason, StrokeEnd::PassedTube);
        assert!(r.summary.end_position_m >= 0.32);
        assert!(rel(r.summary.landing_speed_m_per_s.expect("lands"), v) < 1e-9);
        assert!(rel(r.summary.max_speed_m_per_s, v) < 1e-9);
        assert!(r.summary.end_speed_m_per_s > v);
    }
    // A stop behind the start is refused by name.
    let behind = StrokeOptions {
        start_position_m: 0.1,
        stop_position_m: Some(0.05),
        ..StrokeOptions::default()
    };
    match simulate_stroke(&d, &behind, &Limits::default()) {
        Err(ModelError::Invalid(e)) => assert_eq!(e[0].path, "stop_position_m"),
        other => panic!("expected a refusal, got {other:?}"),
    }
}

#[test]
fn the_same_stroke_computed_twice_agrees_to_the_bit() {
    // The model has no parallel or order-dependent reduction inside a stroke: the same
    // request on another thread (as the service's job pool runs it) gives the same bits
    // (source: common practice - a deterministic computation).
    let d = copper(0.3, "{}");
    let bits = |s: &Stroke| -> Vec<u64> {
        let m = &s.summary;
        let mut v = vec![
            m.max_braking_force_n.to_bits(),
            m.heat_j.to_bits(),
            m.end_time_s.to_bits(),
            m.end_speed_m_per_s.to_bits(),
        ];
        v.extend(s.series.speed_m_per_s.iter().map(|x| x.to_bits()));
        v.extend(s.series.force_n.iter().map(|x| x.to_bits()));
        v
    };
    for fidelity in [Fidelity::QuasiStatic, Fidelity::Inductive] {
        let here = bits(&run(&d, -0.03, 0.0, fidelity));
        let d2 = d.clone();
        let there = std::thread::spawn(move || bits(&run(&d2, -0.03, 0.0, fidelity)))
            .join()
            .expect("thread");
        assert_eq!(here, there, "{fidelity:?}");
    }
}
