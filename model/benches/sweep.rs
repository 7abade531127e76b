//! A 1000-point sweep of terminal speed over two fields (wall thickness x magnet length,
//! 40 x 25), run in parallel as the service runs it.
//! Scenario (invented): an N42 pair in an aluminium 6063 tube with a 0.2 kg payload.
//!
//! Run: `cargo bench -p ringdrag-model --bench sweep`

#![allow(missing_docs)]

use criterion::{Criterion, criterion_group, criterion_main};
use ringdrag_model::jobs::metrics::Metric;
use ringdrag_model::jobs::sweep::{SweepAxis, SweepPlan};
use ringdrag_model::{DesignSpec, Limits, StrokeOptions};

fn bench(c: &mut Criterion) {
    let base: DesignSpec = serde_json::from_str(
        r#"{"magnets":{"grade":"N42","outer_diameter_m":0.015,"length_m":0.015,"count":2,"polarity":"alternating"},
            "tube":{"material":"aluminium-6063-t5","inner_diameter_m":0.016,"wall_thickness_m":0.002,"length_m":1.0},
            "load":{"payload_mass_kg":0.2}}"#,
    )
    .expect("bench design parses");
    let plan = SweepPlan::new(
        base,
        vec![
            SweepAxis::linspace("tube.wall_thickness_m", 0.0005, 0.004, 40),
            SweepAxis::linspace("magnets.length_m", 0.005, 0.03, 25),
        ],
        vec![Metric::TerminalSpeed],
        StrokeOptions::default(),
        Limits::default(),
    )
    .expect("plan");
    let mut group = c.benchmark_group("sweep");
    group.sample_size(10);
    group.bench_function("terminal_speed_1000_points_2_fields", |b| {
        b.iter(|| plan.run_collect())
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
