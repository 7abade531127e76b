//! High-speed (inductive) braking against references written outside the project.
//!
//! `fixtures/tube_force.json` holds the exact steady force of magnets moving along the axis of
//! a long, continuous thick-walled tube: the Fourier-Bessel integral with
//! q^2 = k^2 - i mu0 sigma v k (source: Partovi & Morris, Can. J. Phys. 84, 253, 2006;
//! Knyazev, Kotel'nikov, Tyutin & Cherkasskii, Phys. Usp. 49, 937, 2006), evaluated by scipy
//! in the committed script `fixtures/make_tube_force.py`, which imports nothing from the
//! project and first checks itself against the thick-wall dipole law of Levin, da Silveira &
//! Rizzato (Am. J. Phys. 74, 815, 2006) to 3e-12 and against mpmath to 4e-14. Regenerate with
//!
//! ```text
//! python3 -m pip install scipy==1.17.1 mpmath==1.3.0 numpy
//! python3 model/tests/fixtures/make_tube_force.py
//! ```
//!
//! The spectral solver discretises the wall into Gauss-Legendre current sheets and the
//! wavenumber integral into nodes; the exact solution has neither, so these tests measure the
//! solver's discretisation error, including in the inductive regime (Rm around 1 and above:
//! peak force, critical speed, fall-off) that the low-speed dipole laws cannot reach.

use ringdrag_model::Limits;
use ringdrag_model::records::design::Design;
use ringdrag_model::records::spec::DesignSpec;
use ringdrag_model::solvers::spectral::SteadySolver;
use ringdrag_model::solvers::transient::constant_speed_force;
use serde::Deserialize;

const TUBE_FORCE_JSON: &str = include_str!("fixtures/tube_force.json");

#[derive(Deserialize)]
struct TubeForce {
    mu0: f64,
    cases: Vec<Case>,
}

#[derive(Deserialize)]
struct Case {
    name: String,
    remanence_t: f64,
    magnet_radius_m: f64,
    magnet_length_m: f64,
    count: u32,
    spacer_m: f64,
    alternating: bool,
    conductivity_s_per_m: f64,
    inner_radius_m: f64,
    outer_radius_m: f64,
    damping_n_s_per_m: f64,
    peak_force_n: f64,
    critical_speed_m_per_s: f64,
    points: Vec<Point>,
}

#[derive(Deserialize)]
struct Point {
    speed_m_per_s: f64,
    force_n: f64,
}

fn fixture() -> TubeForce {
    let f: TubeForce = serde_json::from_str(TUBE_FORCE_JSON).expect("fixture parses");
    assert_eq!(f.mu0, ringdrag_model::MU0);
    f
}

fn design(c: &Case) -> Design {
    let polarity = if c.alternating {
        "alternating"
    } else {
        "aligned"
    };
    let spec: DesignSpec = serde_json::from_str(&format!(
        r#"{{"magnets":{{"remanence_t":{},"outer_diameter_m":{},"length_m":{},"count":{},
                        "polarity":"{polarity}","spacer_length_m":{}}},
            "tube":{{"conductivity_s_per_m":{},"inner_diameter_m":{},
                     "wall_thickness_m":{},"length_m":2.0}}}}"#,
        c.remanence_t,
        2.0 * c.magnet_radius_m,
        c.magnet_length_m,
        c.count,
        c.spacer_m,
        c.conductivity_s_per_m,
        2.0 * c.inner_radius_m,
        c.outer_radius_m - c.inner_radius_m,
    ))
    .expect("fixture design parses");
    Design::from_spec(&spec).expect("fixture design is valid")
}

fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

/// Radial layers at which the spectral solver is held to 0.5 %. Measured against this fixture
/// (worst relative error over damping, peak, critical speed and the seven speeds of each case):
/// default layers (6-9 here) 4.5e-3 to 8.1e-3, 12 layers 1.3e-3 to 3.8e-3, 16 layers 7e-4 to
/// 2.2e-3, 24 layers 3.5e-4 to 1.0e-3; the error falls about as 1 / layers. The default does
/// not reach 0.5 % for three of the four cases, so this test refines.
const REFINED_LAYERS: usize = 16;

#[test]
fn spectral_force_matches_the_exact_tube_integral_at_refined_resolution() {
    for c in fixture().cases {
        let s = SteadySolver::new(&design(&c), Some(REFINED_LAYERS)).expect("solver");
        let name = &c.name;
        // source: the fixture (exact integral, Partovi & Morris 2006); 0.5 %: the accuracy
        // asked of the steady solver and the ring circuit (common practice), far wider than
        // the fixture's own 1e-11 quadrature tolerance.
        let damping = s.damping_n_s_per_m();
        assert!(
            rel(damping, c.damping_n_s_per_m) < 0.005,
            "{name}: damping {damping} vs {}",
            c.damping_n_s_per_m
        );
        let (vc, peak) = s.peak(c.critical_speed_m_per_s);
        // source: the fixture, as above (0.5 %).
        assert!(
            rel(peak, c.peak_force_n) < 0.005,
            "{name}: peak {peak} vs {}",
            c.peak_force_n
        );
        // source: the fixture, as above (0.5 %; the fixture's peak speed is good to 1e-6).
        assert!(
            rel(vc, c.critical_speed_m_per_s) < 0.005,
            "{name}: critical speed {vc} vs {}",
            c.critical_speed_m_per_s
        );
        for p in &c.points {
            let f = s.force_n(p.speed_m_per_s);
            // source: the fixture, as above (0.5 %), below and above the critical speed.
            assert!(
                rel(f, p.force_n) < 0.005,
                "{name}: force at {} m/s {f} vs {}",
                p.speed_m_per_s,
                p.force_n
            );
        }
    }
}

#[test]
fn default_resolution_stays_within_one_percent_of_the_exact_integral() {
    // What a caller gets without options: the force curve flags a change above 1 % between
    // two resolutions, so 1 % is the accuracy it claims (source: the fixture as above; band:
    // the project's own caution threshold, common practice).
    for c in fixture().cases {
        let s = SteadySolver::new(&design(&c), None).expect("solver");
        let (vc, peak) = s.peak(c.critical_speed_m_per_s);
        assert!(rel(peak, c.peak_force_n) < 0.01, "{}: peak {peak}", c.name);
        assert!(
            rel(vc, c.critical_speed_m_per_s) < 0.01,
            "{}: vc {vc}",
            c.name
        );
        for p in &c.points {
            let f = s.force_n(p.speed_m_per_s);
            assert!(rel(f, p.force_n) < 0.01, "{}: {f} vs {}", c.name, p.force_n);
        }
    }
}

#[test]
fn alternating_stack_brakes_as_much_more_as_the_exact_integral_says() {
    // Three 10 mm magnets with like poles facing against the same three aligned: the exact
    // integral gives a damping ratio of about 3.0 (source: the fixture, as above); 0.5 %.
    let f = fixture();
    let find = |name: &str| f.cases.iter().find(|c| c.name == name).expect("case");
    let (alt, ali) = (
        find("three_alternating_in_aluminium"),
        find("three_aligned_in_aluminium"),
    );
    let exact = alt.damping_n_s_per_m / ali.damping_n_s_per_m;
    let ratio = SteadySolver::new(&design(alt), None)
        .expect("solver")
        .damping_n_s_per_m()
        / SteadySolver::new(&design(ali), None)
            .expect("solver")
            .damping_n_s_per_m();
    assert!(rel(ratio, exact) < 0.005, "{ratio} vs exact {exact}");
}

#[test]
fn ring_circuit_matches_the_exact_tube_integral_at_and_above_rm_one() {
    // The stroke solver's ring circuit at constant speed in a long tube, held to the exact
    // force (source: the fixture, as above; 0.5 %) at Rm = mu0 sigma v w = 1, where the eddy
    // currents' own field lowers braking by 8 % below c v, and at twice the critical speed
    // (Rm about 8, on the falling branch). Measured: default layers (4 here after the speed
    // rule) 1.6e-3 at Rm = 1 and 4.1e-3 above critical; 8 layers 2.6e-4 and 1.8e-4. The test
    // uses 8 layers above critical, where the default is close to the band.
    let f = fixture();
    let c = f
        .cases
        .iter()
        .find(|c| c.name == "cylinder_in_copper_1p5mm_wall")
        .expect("case");
    let d = design(c);
    for (p, layers) in [
        (&c.points[2], None),
        (&c.points[2], Some(8)),
        (&c.points[5], Some(8)),
    ] {
        let ring = constant_speed_force(&d, p.speed_m_per_s, None, layers, 2, &Limits::default())
            .expect("ring force");
        assert!(
            rel(ring.force_n, p.force_n) < 0.005,
            "{} m/s, {layers:?} layers: ring {} vs exact {}",
            p.speed_m_per_s,
            ring.force_n,
            p.force_n
        );
    }
    // The regime is really inductive here (source: the fixture; the linear law c v is 8 %
    // above the exact force at Rm = 1).
    assert!(c.points[2].force_n < 0.95 * c.damping_n_s_per_m * c.points[2].speed_m_per_s);
}

#[test]
fn steady_fall_speed_and_heat_per_metre_match_outside_values() {
    // A vertical drop of the 1.5 mm wall case through 1 m of tube. In the steady middle part
    // (source for both values: linear drag at Rm ~ 5e-3, common practice; the damping from the
    // fixture, as above):
    // - the speed is m g / c with the exact c: a scale error in the solver's c fails;
    // - the heat per metre of travel equals the weight m g (energy conservation at constant
    //   speed), read from the reported dissipated power, so an error in the heat accounting
    //   fails too. Unlike the energy ledger these do not balance by construction.
    use ringdrag_model::{StrokeOptions, simulate_stroke};
    let f = fixture();
    let c = f
        .cases
        .iter()
        .find(|c| c.name == "cylinder_in_copper_1p5mm_wall")
        .expect("case");
    let mut d = design(c);
    d.tube.length_m = 1.0;
    let weight = d.moving_mass_kg() * 9.80665;
    let opts = StrokeOptions {
        start_position_m: -0.03,
        samples: 2000,
        ..StrokeOptions::default()
    };
    let s = simulate_stroke(&d, &opts, &Limits::default()).expect("stroke");
    let (x, v, t, p) = (
        &s.series.position_m,
        &s.series.speed_m_per_s,
        &s.series.time_s,
        &s.series.power_w,
    );
    let i0 = x.iter().position(|&x| x >= 0.3).expect("reaches 0.3 m");
    let i1 = x.iter().position(|&x| x >= 0.7).expect("reaches 0.7 m");
    let terminal = weight / c.damping_n_s_per_m;
    for i in [i0, (i0 + i1) / 2, i1] {
        // 0.5 %: the accuracy asked of the solvers (common practice).
        assert!(
            rel(v[i], terminal) < 0.005,
            "speed {} at {} m vs m g / c = {terminal}",
            v[i],
            x[i]
        );
    }
    let heat: f64 = (i0..i1)
        .map(|i| 0.5 * (p[i] + p[i + 1]) * (t[i + 1] - t[i]))
        .sum();
    let per_metre = heat / (x[i1] - x[i0]);
    // source: energy conservation at constant speed (common practice); 0.5 %, as above.
    assert!(
        rel(per_metre, weight) < 0.005,
        "heat per metre {per_metre} vs weight {weight}"
    );
}

// ---------------------------------------------------------------------------------------------
// The dense ring-circuit stroke reference.
// ---------------------------------------------------------------------------------------------

/// Written by `fixtures/make_ring_stroke.py` (numpy/scipy, imports nothing from the project):
/// a dense, untruncated ring circuit of the whole tube with uniform cells, Gauss-averaged
/// Maxwell mutuals (source: Maxwell's coaxial-loop formula; Rosa & Grover, Bull. Bureau of
/// Standards 8, 1, 1912 for the self-inductance) and the trapezoidal rule, checked by its
/// script against the exact steady force above. Regenerate with
///
/// ```text
/// python3 -m pip install scipy==1.17.1 numpy
/// python3 model/tests/fixtures/make_ring_stroke.py
/// ```
const RING_STROKE_JSON: &str = include_str!("fixtures/ring_stroke.json");

#[derive(Deserialize)]
struct RingStroke {
    cases: Vec<StrokeCase>,
}

#[derive(Deserialize)]
struct StrokeCase {
    name: String,
    remanence_t: f64,
    magnet_radius_m: f64,
    magnet_length_m: f64,
    magnet_density_kg_per_m3: f64,
    payload_mass_kg: f64,
    moving_mass_kg: f64,
    conductivity_s_per_m: f64,
    inner_radius_m: f64,
    outer_radius_m: f64,
    tube_length_m: f64,
    start_position_m: f64,
    start_speed_m_per_s: f64,
    fine: StrokeResult,
    estimated_error: std::collections::BTreeMap<String, f64>,
}

#[derive(Deserialize)]
struct StrokeResult {
    exit_time_s: f64,
    exit_speed_m_per_s: f64,
    heat_j: f64,
}

/// Also the regression test of a window defect this reference found: at high speed the moving
/// window (which grows with the wake length) was capped to its capacity before being clipped
/// to a short tube, and so could lie wholly outside it: the 25 m/s case braked with 0.003 N
/// instead of about 50 N.
#[test]
fn inductive_stroke_matches_the_dense_ring_circuit_reference() {
    use ringdrag_model::{Fidelity, StrokeOptions, simulate_stroke};
    let f: RingStroke = serde_json::from_str(RING_STROKE_JSON).expect("fixture parses");
    for c in f.cases {
        let spec: DesignSpec = serde_json::from_str(&format!(
            r#"{{"magnets":{{"remanence_t":{},"outer_diameter_m":{},"length_m":{},
                            "density_kg_per_m3":{}}},
                "tube":{{"conductivity_s_per_m":{},"inner_diameter_m":{},
                         "wall_thickness_m":{},"length_m":{}}},
                "load":{{"payload_mass_kg":{},"incline_deg":0}}}}"#,
            c.remanence_t,
            2.0 * c.magnet_radius_m,
            c.magnet_length_m,
            c.magnet_density_kg_per_m3,
            c.conductivity_s_per_m,
            2.0 * c.inner_radius_m,
            c.outer_radius_m - c.inner_radius_m,
            c.tube_length_m,
            c.payload_mass_kg,
        ))
        .expect("fixture design parses");
        let d = Design::from_spec(&spec).expect("fixture design is valid");
        assert!(rel(d.moving_mass_kg(), c.moving_mass_kg) < 1e-12);
        // Measured against the fixture (speed lost, heat): the 1.5 mm wall at 10 m/s with the
        // default resolution -0.44 %, -0.39 %; the 3 mm wall at 25 m/s (Rm ~ 6.6) with the
        // default 4 layers +0.99 %, +0.96 %, with 8 layers +0.38 %, +0.30 %: that case refines.
        let radial_layers = (c.outer_radius_m - c.inner_radius_m > 0.002).then_some(8);
        let opts = StrokeOptions {
            start_position_m: c.start_position_m,
            start_speed_m_per_s: c.start_speed_m_per_s,
            fidelity: Fidelity::Inductive,
            radial_layers,
            // The reference runs until the stack centre has passed the far end by one stack
            // length (the run-out), so the heat after the far end is counted.
            run_out: true,
            ..StrokeOptions::default()
        };
        let s = simulate_stroke(&d, &opts, &Limits::default()).expect("stroke");
        let name = &c.name;
        let exit_time = s.summary.exit_time_s.expect("exits");
        let exit_speed = s.summary.exit_speed_m_per_s.expect("exits");
        let v0 = c.start_speed_m_per_s;
        // The reference's own change between its two resolutions is at most half the band
        // (source: the fixture's estimated_error: 8.6e-4 and 2.2e-3 in heat, less elsewhere).
        for (key, e) in &c.estimated_error {
            assert!(*e < 0.0025, "{name}: reference not converged in {key}: {e}");
        }
        // source: the fixture (dense reference, as above); 0.5 %: the accuracy asked of the
        // ring circuit (common practice). The speed lost in the tube is compared, not the
        // exit speed itself, which would hide a braking error behind v0.
        let (loss, loss_ref) = (v0 - exit_speed, v0 - c.fine.exit_speed_m_per_s);
        assert!(
            rel(loss, loss_ref) < 0.005,
            "{name}: speed lost {loss} vs reference {loss_ref}"
        );
        // source: as above (0.5 %).
        assert!(
            rel(s.summary.heat_j, c.fine.heat_j) < 0.005,
            "{name}: heat {} vs reference {}",
            s.summary.heat_j,
            c.fine.heat_j
        );
        // source: as above (0.5 %).
        assert!(
            rel(exit_time, c.fine.exit_time_s) < 0.005,
            "{name}: exit time {exit_time} vs reference {}",
            c.fine.exit_time_s
        );
    }
}
