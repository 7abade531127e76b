//! Accuracy at the default resolution and the honesty of `error_estimate_relative`, over a
//! validation set of invented designs (walls 0.1-6 mm, clearances 0.1-5 mm, magnetic Reynolds
//! numbers from about 0.01 to 10, stacks, ring magnets, inclines, friction, perforation and
//! entries at speed).
//!
//! Reference values:
//! - strokes: refined runs of the same model, stored in `fixtures/accuracy_reference.json`
//!   (source: refined run; resolution per case in the fixture: twice the default radial layers
//!   plus two, a quarter of the default ring width for quasi-static runs, and for ring-circuit
//!   runs half the default ring width Richardson-extrapolated with the default width). The
//!   command that regenerates the fixture is at its top and in
//!   `model/examples/accuracy_reference.rs`; this test recomputes a sample of the references,
//!   so a stale fixture fails.
//! - force curves: the same design at 24 radial layers (source: refined run), recomputed here.
//!
//! The test prints its table (run with `--nocapture` to see it).

#[path = "support/accuracy_cases.rs"]
mod accuracy_cases;

use accuracy_cases::{mid_tube_index, reference_limits};
use ringdrag_model::records::spec::DesignSpec;
use ringdrag_model::{
    Design, Fidelity, ForceCurve, ForceCurveOptions, Limits, Stroke, StrokeOptions, force_curve,
    simulate_stroke,
};
use serde_json::Value;

const FIXTURE: &str = include_str!("fixtures/accuracy_reference.json");

/// Default answers must land this close to the converged answer (source: issue requirement,
/// common practice for an engineering estimate).
const DEFAULT_ACCURACY: f64 = 0.005;

/// The cases of the fixture (computed from [`accuracy_cases::cases`]).
fn cases() -> Vec<Value> {
    let v: Value = serde_json::from_str(FIXTURE).expect("fixture parses");
    v["cases"].as_array().expect("cases").clone()
}

fn design_of(case: &Value) -> Design {
    let spec: DesignSpec = serde_json::from_value(case["design"].clone()).expect("design parses");
    Design::from_spec(&spec).expect("design is valid")
}

fn options_of(case: &Value) -> StrokeOptions {
    StrokeOptions {
        start_position_m: case["start_position_m"].as_f64().expect("x0"),
        start_speed_m_per_s: case["start_speed_m_per_s"].as_f64().expect("v0"),
        fidelity: serde_json::from_value(case["fidelity"].clone()).expect("fidelity"),
        samples: 2000,
        ..StrokeOptions::default()
    }
}

fn mid_tube_speed(s: &Stroke, tube_length_m: f64) -> f64 {
    let i = mid_tube_index(&s.series.position_m, tube_length_m).expect("samples");
    s.series.speed_m_per_s[i]
}

fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

/// The largest relative deviation of the stroke's headline numbers from the reference: exit
/// time, exit speed and largest braking force when the stack exits, otherwise the distance
/// travelled and the largest braking force.
fn stroke_error(s: &Stroke, case: &Value) -> (f64, &'static str) {
    let r = &case["reference"];
    let mut worst = (
        rel(
            s.summary.max_braking_force_n,
            r["max_braking_force_n"].as_f64().expect("braking"),
        ),
        "max_braking_force_n",
    );
    let mut take = |e: f64, what: &'static str| {
        if e > worst.0 {
            worst = (e, what);
        }
    };
    match (s.summary.exit_time_s, r["exit_time_s"].as_f64()) {
        (Some(t), Some(tr)) => {
            take(rel(t, tr), "exit_time_s");
            let v = s.summary.exit_speed_m_per_s.expect("exit speed");
            take(
                rel(v, r["exit_speed_m_per_s"].as_f64().expect("speed")),
                "exit_speed_m_per_s",
            );
        }
        (None, None) => {
            let x0 = case["start_position_m"].as_f64().expect("x0");
            let d = s.summary.end_position_m - x0;
            let dr = r["end_position_m"].as_f64().expect("end") - x0;
            take(rel(d, dr), "distance_m");
        }
        _ => take(f64::INFINITY, "exit (one run exits, the other not)"),
    }
    worst
}

/// The largest relative deviation of the force curve's headline numbers from a refined curve.
fn curve_error(fc: &ForceCurve, reference: &ForceCurve) -> f64 {
    let mut e = rel(fc.damping_n_s_per_m, reference.damping_n_s_per_m)
        .max(rel(fc.peak_force_n, reference.peak_force_n))
        .max(rel(
            fc.critical_speed_m_per_s,
            reference.critical_speed_m_per_s,
        ));
    if let (Some(t), Some(tr)) = (fc.terminal_speed_m_per_s, reference.terminal_speed_m_per_s)
        && tr > 0.0
    {
        e = e.max(rel(t, tr));
    }
    e
}

struct Row {
    name: String,
    what: String,
    error: f64,
    estimate: f64,
}

/// Prints the validation table (run with `--nocapture`) and returns the share of rows whose
/// estimate bounds the error.
fn print_table(rows: &[Row], paths: &[(String, f64, f64)]) -> f64 {
    println!(
        "{:<32} {:<44} {:>10} {:>10} {:>7}",
        "design", "quantity", "error %", "estimate %", "ratio"
    );
    for r in rows {
        println!(
            "{:<32} {:<44} {:>10.4} {:>10.4} {:>7.2}",
            r.name,
            r.what,
            100.0 * r.error,
            100.0 * r.estimate,
            r.estimate / r.error.max(1e-300)
        );
    }
    let bounded = rows.iter().filter(|r| r.estimate >= r.error).count();
    let coverage = bounded as f64 / rows.len() as f64;
    println!(
        "estimate >= error in {bounded} of {} rows ({:.1} %)",
        rows.len(),
        100.0 * coverage
    );
    for (name, gap, allowed) in paths {
        println!(
            "{name}: mid-tube speed vs force-curve terminal speed {:.4} %, larger estimate {:.4} %",
            100.0 * gap,
            100.0 * allowed
        );
    }
    coverage
}

#[test]
fn default_resolution_is_accurate_and_the_estimate_bounds_the_error() {
    let limits = Limits::default();
    let refined_curve =
        ForceCurveOptions::new(None, Some(24), "radial_layers", &limits).expect("valid options");
    let mut rows = Vec::new();
    let mut paths = Vec::new();
    let mut designs: Vec<(String, Design)> = Vec::new();
    for case in cases() {
        let name = case["name"].as_str().expect("name").to_string();
        let design = design_of(&case);
        let stroke = simulate_stroke(&design, &options_of(&case), &limits).expect("stroke runs");
        let used: Fidelity = serde_json::from_value(case["fidelity_used"].clone()).expect("used");
        assert_eq!(stroke.model.fidelity, used, "{name}: fidelity changed");
        let (error, what) = stroke_error(&stroke, &case);
        let estimate = stroke.model.error_estimate_relative.expect("estimated");
        rows.push(Row {
            name: name.clone(),
            what: format!("stroke {used:?} {what}"),
            error,
            estimate,
        });
        if case["steady_mid_tube"].as_bool() == Some(true) {
            let fc = force_curve(&design, &ForceCurveOptions::default(), &limits).expect("curve");
            let v_mid = mid_tube_speed(&stroke, design.tube.length_m);
            let terminal = fc.terminal_speed_m_per_s.expect("held");
            let allowed = estimate.max(fc.model.error_estimate_relative.expect("estimated"));
            paths.push((name.clone(), rel(v_mid, terminal), allowed));
        }
        designs.push((name, design));
    }
    // Force curves of every design, and one six-magnet alternating stack in a thick wall
    // (invented: six N52 12 x 6 mm, copper 12.6 mm bore, 4 mm wall).
    let six: DesignSpec = serde_json::from_str(
        r#"{"magnets":{"grade":"N52","outer_diameter_m":0.012,"length_m":0.006,"count":6,
             "polarity":"alternating"},
            "tube":{"material":"copper-c11000","inner_diameter_m":0.0126,
                    "wall_thickness_m":0.004,"length_m":0.5}}"#,
    )
    .expect("parses");
    designs.push((
        "six-n52-alternating-w4".into(),
        Design::from_spec(&six).expect("valid"),
    ));
    for (name, design) in &designs {
        let fc = force_curve(design, &ForceCurveOptions::default(), &limits).expect("curve");
        let reference = force_curve(design, &refined_curve, &limits).expect("refined curve");
        let mut error = curve_error(&fc, &reference);
        // The force at three times the critical speed (beyond the peak).
        let v3 = 3.0 * reference.critical_speed_m_per_s;
        let at3 = |c: &ForceCurve| {
            force_curve(
                design,
                &ForceCurveOptions::new(
                    Some(vec![v3]),
                    c.model
                        .discretisation
                        .radial_layers
                        .and_then(|n| u32::try_from(n).ok()),
                    "radial_layers",
                    &limits,
                )
                .expect("valid options"),
                &limits,
            )
            .expect("point")
            .points[0]
                .force_n
        };
        error = error.max(rel(at3(&fc), at3(&reference)));
        rows.push(Row {
            name: name.clone(),
            what: "force curve".into(),
            error,
            estimate: fc.model.error_estimate_relative.expect("estimated"),
        });
    }

    let coverage = print_table(&rows, &paths);
    // source: issue requirement (at least 30 designs).
    assert!(designs.len() >= 30, "{} designs", designs.len());
    for r in &rows {
        // source: issue requirement (0.5 % at default resolution).
        assert!(
            r.error <= DEFAULT_ACCURACY,
            "{} {}: error {:.3} % above {} %",
            r.name,
            r.what,
            100.0 * r.error,
            100.0 * DEFAULT_ACCURACY
        );
        // source: issue requirement (never below half the true error).
        assert!(
            r.estimate >= 0.5 * r.error,
            "{} {}: estimate {:.4} % below half the error {:.4} %",
            r.name,
            r.what,
            100.0 * r.estimate,
            100.0 * r.error
        );
    }
    // source: issue requirement (a bound in at least 95 % of cases).
    assert!(coverage >= 0.95, "coverage {coverage}");
    for (name, gap, allowed) in &paths {
        // source: issue requirement (both paths agree within the larger estimate).
        assert!(
            gap <= allowed,
            "{name}: mid-tube vs terminal {gap} above {allowed}"
        );
    }
}

#[test]
fn the_fixture_is_current() {
    // Recompute a sample of the references (the cheapest quasi-static ones and one
    // ring-circuit run) at their stored resolution; a stale fixture fails here.
    // source: refined run (the fixture's own numbers, reproduced to 1e-9).
    let all = cases();
    // The fixture holds exactly the validation set, design for design.
    let listed = accuracy_cases::cases();
    assert_eq!(
        all.len(),
        listed.len(),
        "cases in the fixture and in the list"
    );
    for (stored, (name, design_json, ..)) in all.iter().zip(&listed) {
        assert_eq!(stored["name"], *name, "fixture order or name");
        let design: Value = serde_json::from_str(design_json).expect("listed design parses");
        assert_eq!(stored["design"], design, "{name}: the fixture's design");
    }
    let sample: Vec<&Value> = all
        .iter()
        .filter(|c| {
            matches!(
                c["name"].as_str(),
                Some("cu-12x20-bore13-w1.5" | "al-6x6-bore6.4-w0.5" | "cu-clearance-0.1")
            )
        })
        .collect();
    assert_eq!(sample.len(), 3, "sample cases present in the fixture");
    for case in sample {
        let design = design_of(case);
        let used: Fidelity = serde_json::from_value(case["fidelity_used"].clone()).expect("used");
        let opts = StrokeOptions {
            ring_width_m: case["reference_ring_width_m"].as_f64(),
            radial_layers: case["reference_radial_layers"].as_u64().map(|n| n as usize),
            fidelity: used,
            ..options_of(case)
        };
        let s = simulate_stroke(&design, &opts, &reference_limits()).expect("reference runs");
        let r = &case["reference_fine"];
        for (got, key) in [
            (s.summary.exit_time_s, "exit_time_s"),
            (s.summary.exit_speed_m_per_s, "exit_speed_m_per_s"),
            (Some(s.summary.max_braking_force_n), "max_braking_force_n"),
        ] {
            match (got, r[key].as_f64()) {
                (Some(a), Some(b)) => {
                    assert!(rel(a, b) < 1e-9, "{}: {key} {a} vs {b}", case["name"])
                }
                (None, None) => {}
                (a, b) => panic!("{}: {key} {a:?} vs {b:?}", case["name"]),
            }
        }
    }
}

#[test]
fn resolution_follows_the_gap_the_wall_and_the_skin_depth() {
    use ringdrag_model::solvers::rings::grid::{RingGrid, default_layers, default_ring_width_m};
    let limits = Limits::default();
    let spec = |magnet_length_m: f64, bore_m: f64, wall_m: f64| -> Design {
        let json = format!(
            r#"{{"magnets":{{"grade":"N42","outer_diameter_m":0.012,"length_m":{magnet_length_m}}},
                "tube":{{"material":"copper-c12200","inner_diameter_m":{bore_m},
                         "wall_thickness_m":{wall_m},"length_m":0.3}}}}"#
        );
        Design::from_spec(&serde_json::from_str(&json).expect("parses")).expect("valid")
    };
    // A wall about one ring wide still gets two layers: one mid-wall node underweights the
    // inner surface (source: issue finding, the 1.2 mm wall case; Gauss-Legendre nodes).
    let d = spec(0.008, 0.0266, 0.0012);
    let dz = default_ring_width_m(&d);
    assert!(default_layers(&d, dz, None) >= 2);
    // A smaller gap asks for more layers and narrower rings (source: common practice - the
    // field falls off over about the gap).
    let wide = spec(0.012, 0.013, 0.001);
    let tight = spec(0.012, 0.0122, 0.001);
    assert!(
        default_layers(&tight, default_ring_width_m(&tight), None)
            > default_layers(&wide, default_ring_width_m(&wide), None)
    );
    assert!(default_ring_width_m(&tight) < default_ring_width_m(&wide));
    // More speed, thinner skin, more layers (source: skin depth sqrt(2 / (omega mu0 sigma)),
    // Jackson, Classical Electrodynamics, 3rd ed., sec. 5.18).
    let thick = spec(0.012, 0.013, 0.004);
    let w = default_ring_width_m(&thick);
    assert!(default_layers(&thick, w, Some(30.0)) > default_layers(&thick, w, Some(1.0)));
    // A 0.5 mm disc in a 14 mm bore: the rings follow the 1 mm gap, not the disc, and the job
    // fits the default limits (source: issue finding).
    let disc = spec(0.0005, 0.014, 0.001);
    assert!(default_ring_width_m(&disc) >= 0.001 / 8.0 * 0.999);
    RingGrid::new(&disc, None, None, None, &limits).expect("fits the limits");
    // A job too large names the automatic ring width as the cause (source: issue finding).
    let long: DesignSpec = serde_json::from_str(
        r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.0005},
            "tube":{"material":"copper-c12200","inner_diameter_m":0.014,
                    "wall_thickness_m":0.001,"length_m":20.0}}"#,
    )
    .expect("parses");
    let long = Design::from_spec(&long).expect("valid");
    match RingGrid::new(&long, None, None, None, &limits) {
        Err(ringdrag_model::ModelError::TooLarge { path, message }) => {
            assert_eq!(path, "options.ring_width_m");
            assert!(message.contains("automatic ring width"), "{message}");
        }
        other => panic!("expected job-too-large, got {other:?}"),
    }
}

#[test]
fn sweeps_and_sizing_carry_the_estimate_of_their_numbers() {
    use ringdrag_model::DesignField;
    use ringdrag_model::jobs::metrics::Metric;
    use ringdrag_model::jobs::sizing::{SizeRequest, SizeTarget, size};
    use ringdrag_model::jobs::sweep::{SweepAxis, SweepPlan};
    // Invented: a 15 mm N42 pair, alternating, in a 16 mm bore 6063 aluminium tube.
    let base: DesignSpec = serde_json::from_str(
        r#"{"magnets":{"grade":"N42","outer_diameter_m":0.015,"length_m":0.015,"count":2,
             "polarity":"alternating"},
            "tube":{"material":"aluminium-6063-t5","inner_diameter_m":0.016,
                    "wall_thickness_m":0.002,"length_m":1.0},
            "load":{"payload_mass_kg":0.2}}"#,
    )
    .expect("parses");
    let plan = SweepPlan::new(
        base.clone(),
        vec![SweepAxis::linspace(
            DesignField::TubeWallThickness,
            0.001,
            0.004,
            3,
        )],
        vec![Metric::TerminalSpeed],
        StrokeOptions::default(),
        Limits::default(),
    )
    .expect("plan");
    for p in plan.run_collect() {
        let mut spec = base.clone();
        DesignField::TubeWallThickness
            .set(&mut spec, p.inputs[&DesignField::TubeWallThickness])
            .expect("set");
        let d = Design::from_spec(&spec).expect("valid");
        let fc = force_curve(&d, &ForceCurveOptions::default(), &Limits::default()).expect("fc");
        // The sweep point's estimate is the force curve's for the same design (source: the
        // same solver pair, so equal to rounding - common practice).
        let e = p.error_estimate_relative.expect("estimated");
        let f = fc.model.error_estimate_relative.expect("estimated");
        assert!((e - f).abs() <= 1e-12 + 1e-9 * f, "{e} vs {f}");
    }
    let r = size(
        &SizeRequest {
            base,
            field: DesignField::TubeWallThickness,
            min: 0.0005,
            max: 0.006,
            target: SizeTarget {
                max_terminal_speed_m_per_s: Some(0.5),
                ..SizeTarget::default()
            },
            safety_factor: 1.25,
            hot_temperature_c: None,
            stroke: StrokeOptions::default(),
            seek: Default::default(),
            tolerances: None,
        },
        &Limits::default(),
    )
    .expect("sized");
    let e = r.model.error_estimate_relative.expect("sizing estimates");
    // source: common practice (a real, small, positive change between two resolutions).
    assert!(e > 0.0 && e < 0.01, "{e}");
}
