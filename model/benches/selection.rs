//! A selection over 500 combinations of stocked parts with a stroke target (landing speed at
//! the end stop), run in parallel as the service runs it.
//! Scenario (invented): a shop's five tube profiles (copper C12200 and aluminium 6061-T6 /
//! 6063-T5, 27 mm bore) cut to 0.6 or 0.7 m, five 25 mm NdFeB discs, 1 to 10 magnets with
//! 3 mm spacers, lowering a 2 kg load 0.5 m onto its stop; land at <= 0.3 m/s with safety
//! factor 1.25, cold and hot (60 C); quasi-static strokes.
//!
//! Run: `cargo bench -p ringdrag-model --bench selection`

#![allow(missing_docs)]

use criterion::{Criterion, criterion_group, criterion_main};
use ringdrag_model::jobs::selection::{Objective, SelectionPlan, Stock};
use ringdrag_model::jobs::sizing::SizeTarget;
use ringdrag_model::jobs::targets::Judge;
use ringdrag_model::records::spec::LoadSpec;
use ringdrag_model::{Fidelity, Limits, StrokeOptions};

fn bench(c: &mut Criterion) {
    let stock: Stock = serde_json::from_str(
        r#"{"tubes":[
             {"id":"CU-27x3","material":"copper-c12200","inner_diameter_m":0.027,"wall_thickness_m":0.003,"lengths_m":[0.6,0.7],"cost_per_m":42},
             {"id":"CU-27x2","material":"copper-c12200","inner_diameter_m":0.027,"wall_thickness_m":0.002,"lengths_m":[0.6,0.7],"cost_per_m":31},
             {"id":"CU-27x1.5","material":"copper-c12200","inner_diameter_m":0.027,"wall_thickness_m":0.0015,"lengths_m":[0.6,0.7],"cost_per_m":25},
             {"id":"AL61-27x3","material":"aluminium-6061-t6","inner_diameter_m":0.027,"wall_thickness_m":0.003,"lengths_m":[0.6,0.7],"cost_per_m":12},
             {"id":"AL63-27x2","material":"aluminium-6063-t5","inner_diameter_m":0.027,"wall_thickness_m":0.002,"lengths_m":[0.6,0.7],"cost_per_m":9}],
           "magnets":[
             {"id":"N42-25x12","grade":"N42","outer_diameter_m":0.025,"length_m":0.012,"cost_each":2.6},
             {"id":"N45-25x12","grade":"N45","outer_diameter_m":0.025,"length_m":0.012,"cost_each":3.1},
             {"id":"N52-25x12","grade":"N52","outer_diameter_m":0.025,"length_m":0.012,"cost_each":4.4},
             {"id":"N45-25x10","grade":"N45","outer_diameter_m":0.025,"length_m":0.010,"cost_each":2.7},
             {"id":"N52-25x8","grade":"N52","outer_diameter_m":0.025,"length_m":0.008,"cost_each":3.3}],
           "counts":[1,2,3,4,5,6,7,8,9,10],
           "spacers":[{"id":"PA-3","length_m":0.003,"cost_each":0.15}],
           "polarity":"alternating"}"#,
    )
    .expect("bench stock parses");
    let load = LoadSpec {
        payload_mass_kg: 2.0,
        ..LoadSpec::default()
    };
    let target = SizeTarget {
        max_landing_speed_m_per_s: Some(0.3),
        ..SizeTarget::default()
    };
    let stroke = StrokeOptions {
        fidelity: Fidelity::QuasiStatic,
        samples: 2,
        stop_position_m: Some(0.5),
        ..StrokeOptions::default()
    };
    let limits = Limits::default();
    let judge = Judge::new(&target, 1.25, Some(60.0), None, stroke, limits.clone()).expect("judge");
    let plan =
        SelectionPlan::new(stock, load, judge, Objective::LowestCost, &limits).expect("plan");
    assert_eq!(plan.len(), 500);
    let mut group = c.benchmark_group("selection");
    group.sample_size(10);
    group.bench_function("landing_speed_500_combinations", |b| {
        b.iter(|| plan.run_while(&|| true).expect("selection"))
    });
    group.finish();
    let s = plan.run_while(&|| true).expect("selection");
    eprintln!(
        "selection: {} feasible, {} pruned by the steady bound, {} judged in full, rejected {:?}",
        s.feasible.len(),
        s.pruned_by_steady_bound,
        s.judged_in_full,
        s.rejected
    );
}

criterion_group!(benches, bench);
criterion_main!(benches);
