//! Inductive strokes at sweep speed: the goals of the stroke-speed work, each as the service
//! runs it (error estimate and cautions included).
//!
//! - `inductive_validation/<case>`: every ring-circuit stroke of the accuracy validation set
//!   (`model/tests/fixtures/accuracy_reference.json`, the cases whose `fidelity_used` is
//!   `inductive`), at the default resolution; README reports the median over the set.
//! - `audit_high_speed/{default,refined}`: the high-speed entry of the accuracy audit (invented:
//!   three N42 20 x 10 mm magnets, alternating, 2 mm spacers, 1.5 kg payload, horizontal, in a
//!   C11000 copper tube of 22 mm bore, 3 mm wall, 0.4 m; launched at 12 m/s from 0.15 m before
//!   the entry), at the default resolution and at 0.625 mm rings with 6 radial layers (the
//!   resolution that brings the exit speed within 0.3 % of the converged value).
//! - `sweep_inductive/exit_speed_1000_points`: 1000 inductive strokes of the copper drop
//!   (N42 12 x 20 mm in a C12200 tube of 13 mm bore, 0.3 m) over wall thickness (40 values,
//!   0.5-3 mm) x payload (25 values, 0-1 kg), both cores. Every point is a distinct design;
//!   nothing is cached between iterations.
//! - `configurator/size_magnet_count_landing_speed`: the sizing job of
//!   `examples/size-magnet-count-for-landing-speed.json` (fewest magnets landing a 2 kg load at
//!   <= 0.3 m/s, safety factor 1.25, hot and at every tolerance corner).
//!
//! Run: `cargo bench -p ringdrag-model --bench inductive -- --warm-up-time 1`
//! (each group sets its own sample count; filter by group name to run one).

#![allow(missing_docs)]

use criterion::{Criterion, criterion_group, criterion_main};
use ringdrag_model::jobs::metrics::Metric;
use ringdrag_model::jobs::sizing::{SizeRequest, SizeTarget, size};
use ringdrag_model::jobs::sweep::{SweepAxis, SweepPlan};
use ringdrag_model::records::designfield::DesignField;
use ringdrag_model::{Design, DesignSpec, Fidelity, Limits, StrokeOptions, simulate_stroke};
use serde_json::Value;
use std::hint::black_box;
use std::time::Duration;

const FIXTURE: &str = include_str!("../tests/fixtures/accuracy_reference.json");

/// The ring-circuit strokes of the accuracy validation set, as the accuracy test runs them.
fn validation_cases() -> Vec<(String, Design, StrokeOptions)> {
    let v: Value = serde_json::from_str(FIXTURE).expect("fixture parses");
    v["cases"]
        .as_array()
        .expect("cases")
        .iter()
        .filter(|c| c["fidelity_used"].as_str() == Some("inductive"))
        .map(|c| {
            let spec: DesignSpec =
                serde_json::from_value(c["design"].clone()).expect("design parses");
            let design = Design::from_spec(&spec).expect("design is valid");
            let opts = StrokeOptions {
                start_position_m: c["start_position_m"].as_f64().expect("x0"),
                start_speed_m_per_s: c["start_speed_m_per_s"].as_f64().expect("v0"),
                fidelity: serde_json::from_value(c["fidelity"].clone()).expect("fidelity"),
                samples: 2000,
                ..StrokeOptions::default()
            };
            (c["name"].as_str().expect("name").to_string(), design, opts)
        })
        .collect()
}

/// The audit's high-speed entry (see the module documentation).
fn audit_case() -> (Design, StrokeOptions) {
    let spec: DesignSpec = serde_json::from_str(
        r#"{"magnets":{"grade":"N42","outer_diameter_m":0.02,"length_m":0.01,"count":3,
             "polarity":"alternating","spacer_length_m":0.002},
            "tube":{"material":"copper-c11000","inner_diameter_m":0.022,
                    "wall_thickness_m":0.003,"length_m":0.4},
            "load":{"payload_mass_kg":1.5,"incline_deg":0}}"#,
    )
    .expect("audit design parses");
    let opts = StrokeOptions {
        start_position_m: -0.15,
        start_speed_m_per_s: 12.0,
        fidelity: Fidelity::Inductive,
        ..StrokeOptions::default()
    };
    (
        Design::from_spec(&spec).expect("audit design is valid"),
        opts,
    )
}

fn bench_validation(c: &mut Criterion) {
    let limits = Limits::default();
    let mut group = c.benchmark_group("inductive_validation");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(3));
    for (name, design, opts) in validation_cases() {
        group.bench_function(&name, |b| {
            b.iter(|| simulate_stroke(black_box(&design), &opts, &limits).expect("stroke"))
        });
    }
    group.finish();
}

fn bench_audit(c: &mut Criterion) {
    let limits = Limits::default();
    let (design, opts) = audit_case();
    let refined = StrokeOptions {
        ring_width_m: Some(0.000625),
        radial_layers: Some(6),
        ..opts.clone()
    };
    let mut group = c.benchmark_group("audit_high_speed");
    group.sample_size(10);
    group.bench_function("default", |b| {
        b.iter(|| simulate_stroke(black_box(&design), &opts, &limits).expect("stroke"))
    });
    group.bench_function("refined", |b| {
        b.iter(|| simulate_stroke(black_box(&design), &refined, &limits).expect("stroke"))
    });
    group.finish();
}

fn bench_sweep(c: &mut Criterion) {
    let base: DesignSpec = serde_json::from_str(
        r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},
            "tube":{"material":"copper-c12200","inner_diameter_m":0.013,
                    "wall_thickness_m":0.0015,"length_m":0.3}}"#,
    )
    .expect("sweep design parses");
    let stroke = StrokeOptions {
        start_position_m: -0.03,
        fidelity: Fidelity::Inductive,
        samples: 2,
        ..StrokeOptions::default()
    };
    // The service's default sweep limit prices an inductive point at 50 steady solves, so a
    // 1000-point inductive sweep needs a raised point budget here.
    let limits = Limits {
        max_sweep_points: 50_000,
        ..Limits::default()
    };
    let plan = SweepPlan::new(
        base,
        vec![
            SweepAxis::linspace(DesignField::TubeWallThickness, 0.0005, 0.003, 40),
            SweepAxis::linspace(DesignField::PayloadMass, 0.0, 1.0, 25),
        ],
        vec![Metric::ExitSpeed, Metric::MaxBrakingForce],
        stroke,
        limits,
    )
    .expect("plan");
    let mut group = c.benchmark_group("sweep_inductive");
    group.sample_size(10);
    group.bench_function("exit_speed_1000_points", |b| {
        b.iter(|| {
            let points = plan.run_collect();
            assert!(points.iter().all(|p| p.error.is_none()), "every point runs");
            points
        })
    });
    group.finish();
}

fn bench_configurator(c: &mut Criterion) {
    let request: Value = serde_json::from_str(include_str!(
        "../../examples/size-magnet-count-for-landing-speed.json"
    ))
    .expect("example parses");
    let job = SizeRequest {
        base: serde_json::from_value(request["design"].clone()).expect("design"),
        field: DesignField::from_path(request["vary"]["path"].as_str().expect("path"))
            .expect("a design field"),
        min: request["vary"]["min"].as_f64().expect("min"),
        max: request["vary"]["max"].as_f64().expect("max"),
        target: SizeTarget {
            max_landing_speed_m_per_s: request["target"]["max_landing_speed_m_per_s"].as_f64(),
            ..SizeTarget::default()
        },
        safety_factor: request["safety_factor"].as_f64().expect("factor"),
        hot_temperature_c: request["hot_temperature_c"].as_f64(),
        stroke: StrokeOptions {
            samples: 2,
            stop_position_m: request["stop_position_m"].as_f64(),
            ..StrokeOptions::default()
        },
        seek: Default::default(),
        tolerances: Some(serde_json::from_value(request["tolerances"].clone()).expect("tol")),
    };
    let limits = Limits::default();
    let mut group = c.benchmark_group("configurator");
    group.sample_size(10);
    group.bench_function("size_magnet_count_landing_speed", |b| {
        b.iter(|| size(black_box(&job), &limits).expect("sized"))
    });
    group.finish();
}

criterion_group!(
    benches,
    bench_validation,
    bench_audit,
    bench_configurator,
    bench_sweep
);
criterion_main!(benches);
