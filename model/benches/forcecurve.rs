//! Force-speed curve timing: 40 speeds for one magnet and for a stack of three, each with the
//! resolution check included (the full `force_curve` job as the service runs it).
//! Scenario (invented): N42 magnets, 12 mm x 20 mm, in a C12200 copper tube of 13 mm bore and
//! 1.5 mm wall.
//!
//! Run: `cargo bench -p ringdrag-model --bench forcecurve`

#![allow(missing_docs)]

use criterion::{Criterion, criterion_group, criterion_main};
use ringdrag_model::{Design, DesignSpec, ForceCurveOptions, Limits, force_curve};
use std::hint::black_box;

fn design(count: u32) -> Design {
    let json = format!(
        r#"{{"magnets":{{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02,"count":{count},
             "polarity":"alternating"}},
            "tube":{{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,"length_m":0.3}}}}"#
    );
    let spec: DesignSpec = serde_json::from_str(&json).expect("bench design parses");
    Design::from_spec(&spec).expect("bench design is valid")
}

fn bench(c: &mut Criterion) {
    let limits = Limits::default();
    let opts = ForceCurveOptions::default();
    for count in [1, 3] {
        let d = design(count);
        c.bench_function(&format!("force_curve_40_speeds_{count}_magnet"), |b| {
            b.iter(|| force_curve(black_box(&d), &opts, &limits).expect("curve"))
        });
    }
}

criterion_group!(benches, bench);
criterion_main!(benches);
