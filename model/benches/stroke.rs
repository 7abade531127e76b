//! Stroke timing: one magnet dropped through a 300 mm copper tube, quasi-static and inductive
//! (each as the service runs it, the resolution check included), and the naive dense baseline
//! of the same ring discretisation (every ring carrying current, dense inductance matrix, dense
//! Cholesky per step size, dense triangular solves every step).
//! Scenario (invented): an N42 cylinder 12 mm x 20 mm released 30 mm above a C12200 copper tube
//! of 13 mm bore, 1.5 mm wall and 300 mm length (369 rings x 2 layers = 738 ring cells).
//!
//! Run: `cargo bench -p ringdrag-model --bench stroke -- --warm-up-time 1 --measurement-time 5`

#![allow(missing_docs)]

use criterion::{Criterion, criterion_group, criterion_main};
use ringdrag_model::solvers::transient::simulate_stroke_dense_reference;
use ringdrag_model::{Design, DesignSpec, Fidelity, Limits, StrokeOptions, simulate_stroke};
use std::hint::black_box;

fn design() -> Design {
    let json = r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},
        "tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,
                "length_m":0.3}}"#;
    let spec: DesignSpec = serde_json::from_str(json).expect("bench design parses");
    Design::from_spec(&spec).expect("bench design is valid")
}

fn options(fidelity: Fidelity) -> StrokeOptions {
    StrokeOptions {
        start_position_m: -0.03,
        start_speed_m_per_s: 0.0,
        fidelity,
        ..StrokeOptions::default()
    }
}

fn bench(c: &mut Criterion) {
    let d = design();
    let limits = Limits::default();
    let qs = options(Fidelity::QuasiStatic);
    let ind = options(Fidelity::Inductive);
    c.bench_function("stroke_300mm_quasi_static", |b| {
        b.iter(|| simulate_stroke(black_box(&d), &qs, &limits).expect("stroke"))
    });
    c.bench_function("stroke_300mm_inductive_windowed", |b| {
        b.iter(|| simulate_stroke(black_box(&d), &ind, &limits).expect("stroke"))
    });
    let mut dense = c.benchmark_group("dense_baseline");
    dense.sample_size(10);
    dense.bench_function("stroke_300mm_inductive_dense", |b| {
        b.iter(|| simulate_stroke_dense_reference(black_box(&d), &ind, &limits).expect("stroke"))
    });
    dense.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
