//! The configurator's questions end to end: sizing on the landing speed at the end stop with
//! tolerances, choosing from stocked parts (checked by simulating every combination),
//! runaway on every endpoint, and whole numbers staying whole.

use crate::helpers::{TestApp, error_paths, expect_problem, start_app};
use serde_json::{Value, json};

/// Invented scenario: a 2 kg load lowered 0.5 m vertically by a stack of N45 discs
/// (25 mm x 12 mm, like poles facing, 3 mm spacers) in a C12200 copper tube of 27 mm bore and
/// 3 mm wall, 0.6 m long, stopping at 0.5 m.
fn load_design(count: u32) -> Value {
    json!({
        "magnets": {
            "grade": "N45",
            "outer_diameter_m": 0.025,
            "length_m": 0.012,
            "count": count,
            "polarity": "alternating",
            "spacer_length_m": 0.003
        },
        "tube": {
            "material": "copper-c12200",
            "inner_diameter_m": 0.027,
            "wall_thickness_m": 0.003,
            "length_m": 0.6
        },
        "load": { "payload_mass_kg": 2.0 }
    })
}

/// Landing speed at 0.5 m from `/v1/simulate`, tube and magnets at `c`.
async fn landing_at(app: &TestApp, design: &Value, c: f64) -> Option<f64> {
    let mut design = design.clone();
    design["tube"]["temperature_c"] = json!(c);
    design["magnets"]["temperature_c"] = json!(c);
    let body = app
        .post_ok(
            "/v1/simulate",
            &json!({ "design": design, "stop_position_m": 0.5, "samples": 2 }),
        )
        .await;
    body["summary"]["landing_speed_m_per_s"].as_f64()
}

#[tokio::test]
async fn the_configurator_load_is_sized_on_landing_speed_at_the_worst_corner_hot() {
    let app = start_app().await;
    let request = json!({
        "design": load_design(1),
        "vary": { "path": "magnets.count", "min": 1, "max": 16 },
        "target": { "max_landing_speed_m_per_s": 0.3 },
        "safety_factor": 1.25,
        "hot_temperature_c": 60,
        "stop_position_m": 0.5,
        "tolerances": { "remanence_fraction": 0.02, "conductivity_fraction": 0.05,
                        "wall_thickness_m": 0.0002 }
    });
    let body = app.post_ok("/v1/size", &request).await;
    assert_eq!(body["feasible"], true, "{body}");
    // A count is reported as an integer.
    let count = body["value"].as_u64().expect("a whole count");
    let governing = &body["governing"]["max_landing_speed_m_per_s"];
    assert_eq!(governing["temperature"], "hot", "{body}");
    // Weakest braking: remanence, conductivity and wall at their low ends (source: braking
    // grows with remanence squared, conductivity and wall, Levin, da Silveira & Rizzato, Am.
    // J. Phys. 74, 815, 2006).
    assert_eq!(
        governing["corner"], "remanence- conductivity- wall-",
        "{body}"
    );
    let nominal = body["margins_nominal"]["max_landing_speed_m_per_s"]
        .as_f64()
        .expect("nominal margin");
    let corner = body["margins_worst_corner"]["max_landing_speed_m_per_s"]
        .as_f64()
        .expect("corner margin");
    assert!(corner < nominal && corner >= 1.25, "{corner} vs {nominal}");
    // Independent check with /v1/simulate: the sized design hot, and its weakest corner hot,
    // land at or under 0.3 / 1.25 m/s (grade N45 1.35 T and C12200 4.93e7 S/m as
    // GET /v1/materials lists them).
    let allowed = 0.3 / 1.25;
    let design = body["design"].clone();
    assert_eq!(design["magnets"]["count"].as_u64(), Some(count));
    let hot = landing_at(&app, &design, 60.0).await.expect("lands");
    assert!(hot <= allowed, "nominal hot lands at {hot}");
    let mut worst = design.clone();
    worst["magnets"]["remanence_t"] = json!(1.35 * 0.98);
    worst["tube"]["conductivity_s_per_m"] = json!(4.93e7 * 0.95);
    worst["tube"]["wall_thickness_m"] = json!(0.003 - 0.0002);
    let worst_hot = landing_at(&app, &worst, 60.0).await.expect("lands");
    assert!(
        worst_hot <= allowed * (1.0 + 1e-9),
        "worst corner lands at {worst_hot}"
    );
    assert!(worst_hot > hot, "{worst_hot} vs {hot}");
    // The answer is the smallest count: one magnet fewer misses at that corner.
    let fewer = {
        let mut d = worst.clone();
        d["magnets"]["count"] = json!(count - 1);
        landing_at(&app, &d, 60.0).await.expect("lands")
    };
    assert!(fewer > allowed, "{} magnets land at {fewer}", count - 1);
}

/// An invented shop: two copper profiles, an aluminium one, one magnet, three counts.
fn shop_request() -> Value {
    json!({
        "parts": {
            "tubes": [
                { "id": "CU-27x3", "material": "copper-c12200", "inner_diameter_m": 0.027,
                  "wall_thickness_m": 0.003, "lengths_m": [0.6, 0.7], "cost_per_m": 40.0 },
                { "id": "AL-27x3", "material": "aluminium-6063-t5", "inner_diameter_m": 0.027,
                  "wall_thickness_m": 0.003, "lengths_m": [0.6], "cost_per_m": 12.0 },
                { "id": "CU-24x2", "material": "copper-c12200", "inner_diameter_m": 0.024,
                  "wall_thickness_m": 0.002, "lengths_m": [0.6], "cost_per_m": 30.0 }
            ],
            "magnets": [
                { "id": "N45-25x12", "grade": "N45", "outer_diameter_m": 0.025,
                  "length_m": 0.012, "cost_each": 3.0 }
            ],
            "counts": [6, 8, 10],
            "spacers": [ { "id": "S3", "length_m": 0.003, "cost_each": 0.2 } ],
            "polarity": "alternating"
        },
        "load": { "payload_mass_kg": 2.0 },
        "target": { "max_landing_speed_m_per_s": 0.3 },
        "safety_factor": 1.25,
        "hot_temperature_c": 60,
        "stop_position_m": 0.5
    })
}

#[tokio::test]
async fn selection_returns_the_cheapest_feasible_combination_checked_by_simulation() {
    let app = start_app().await;
    let request = shop_request();
    let body = app.post_ok("/v1/select", &request).await;
    assert_eq!(body["feasible"], true, "{body}");
    let combinations = body["combinations"].as_u64().expect("count");
    assert_eq!(combinations, 12);
    let designs = body["designs"].as_array().expect("designs");
    let rejected: u64 = body["rejected"]
        .as_object()
        .expect("reasons")
        .values()
        .map(|v| v.as_u64().expect("count"))
        .sum();
    assert_eq!(designs.len() as u64 + rejected, combinations, "{body}");
    // The 24 mm bore does not take a 25 mm magnet.
    assert_eq!(body["rejected"]["clearance"], 3, "{body}");
    // Independent check: simulate every listed combination cold and hot, price it, and find
    // the cheapest one that lands at or under 0.3 / 1.25 m/s at both temperatures.
    let allowed = 0.3 / 1.25;
    let mut cheapest: Option<(f64, String, f64, u64)> = None;
    let mut feasible = 0;
    for tube in request["parts"]["tubes"].as_array().expect("tubes") {
        for length in tube["lengths_m"].as_array().expect("lengths") {
            for count in [6u64, 8, 10] {
                let length = length.as_f64().expect("length");
                let mut design = load_design(count as u32);
                design["tube"]["material"] = tube["material"].clone();
                design["tube"]["inner_diameter_m"] = tube["inner_diameter_m"].clone();
                design["tube"]["wall_thickness_m"] = tube["wall_thickness_m"].clone();
                design["tube"]["length_m"] = json!(length);
                let fits = app
                    .post_json(
                        "/v1/simulate",
                        &json!({ "design": design, "stop_position_m": 0.5, "samples": 2 }),
                    )
                    .await
                    .status()
                    .is_success();
                if !fits {
                    continue;
                }
                let cold = landing_at(&app, &design, 20.0).await;
                let hot = landing_at(&app, &design, 60.0).await;
                let ok = [cold, hot].iter().all(|v| v.is_some_and(|v| v <= allowed));
                if !ok {
                    continue;
                }
                feasible += 1;
                let cost = tube["cost_per_m"].as_f64().expect("cost") * length
                    + count as f64 * 3.0
                    + (count - 1) as f64 * 0.2;
                let id = tube["id"].as_str().expect("id").to_string();
                if cheapest.as_ref().is_none_or(|c| cost < c.0) {
                    cheapest = Some((cost, id, length, count));
                }
            }
        }
    }
    assert_eq!(designs.len(), feasible, "{body}");
    let (cost, id, length, count) = cheapest.expect("some combination is feasible");
    let best = &designs[0];
    assert_eq!(best["rank"], 1);
    assert_eq!(best["tube_id"], id.as_str(), "{best}");
    assert_eq!(best["tube_length_m"].as_f64(), Some(length));
    assert_eq!(best["count"].as_u64(), Some(count));
    assert!((best["cost"].as_f64().expect("cost") - cost).abs() < 1e-9);
    // Ranked by cost.
    let costs: Vec<f64> = designs
        .iter()
        .map(|d| d["cost"].as_f64().expect("cost"))
        .collect();
    assert!(costs.windows(2).all(|w| w[0] <= w[1]), "{costs:?}");
    crate::force_curve::assert_standing_caution_first(&body);
}

#[tokio::test]
async fn a_target_no_stocked_part_meets_is_an_answer_with_reasons() {
    let app = start_app().await;
    let mut request = shop_request();
    request["target"] = json!({ "max_landing_speed_m_per_s": 0.001 });
    let body = app.post_ok("/v1/select", &request).await;
    assert_eq!(body["feasible"], false);
    assert_eq!(body["designs"].as_array().map(Vec::len), Some(0));
    assert_eq!(body["rejected"]["clearance"], 3, "{body}");
    assert_eq!(
        body["rejected"]["misses_max_landing_speed_m_per_s"], 9,
        "{body}"
    );
    // The steady bound rejects such a target without a stroke (source: braking is at most
    // the long-tube damping times the speed, the selection's documented bound).
    assert_eq!(body["pruned_by_steady_bound"], 9, "{body}");
}

#[tokio::test]
async fn bad_selections_are_refused_by_field() {
    let app = start_app().await;
    let mut empty = shop_request();
    empty["parts"]["tubes"] = json!([]);
    let p = expect_problem(app.post_json("/v1/select", &empty).await, 422).await;
    assert!(error_paths(&p).contains(&"parts.tubes".to_string()), "{p}");
    let mut negative = shop_request();
    negative["parts"]["magnets"][0]["cost_each"] = json!(-1.0);
    let p = expect_problem(app.post_json("/v1/select", &negative).await, 422).await;
    assert!(
        error_paths(&p).contains(&"parts.magnets[0].cost_each".to_string()),
        "{p}"
    );
    let mut behind = shop_request();
    behind["stop_position_m"] = json!(-0.1);
    let p = expect_problem(app.post_json("/v1/select", &behind).await, 422).await;
    assert!(
        error_paths(&p).contains(&"stop_position_m".to_string()),
        "{p}"
    );
    // 40 counts x 4 tube lengths x 1 magnet x 1 spacer x 2 conditions x 50 (automatic-fidelity
    // strokes) = 16000 work units, above the default limit of 10000 (the documented rule).
    let mut big = shop_request();
    big["parts"]["counts"] = json!((1..=40).collect::<Vec<u32>>());
    let p = expect_problem(app.post_json("/v1/select", &big).await, 422).await;
    let paths = error_paths(&p);
    for list in ["parts.tubes", "parts.magnets", "parts.counts"] {
        assert!(paths.contains(&list.to_string()), "{p}");
    }
}

/// Invented runaway case: one N45 disc in a thin copper wall carrying 30 kg.
fn runaway_design() -> Value {
    json!({
        "magnets": { "grade": "N45", "outer_diameter_m": 0.025, "length_m": 0.012 },
        "tube": { "material": "copper-c12200", "inner_diameter_m": 0.027,
                  "wall_thickness_m": 0.001, "length_m": 1.0 },
        "load": { "payload_mass_kg": 30.0 }
    })
}

fn has_runaway(details: &Value) -> bool {
    details
        .as_array()
        .is_some_and(|a| a.iter().any(|c| c["kind"] == "runaway"))
}

#[tokio::test]
async fn runaway_is_flagged_by_simulate_and_on_each_sweep_point() {
    let app = start_app().await;
    // The force curve decides it: no terminal speed (the load is above the peak force).
    let curve = app
        .post_ok("/v1/force-curve", &json!({ "design": runaway_design() }))
        .await;
    assert!(curve["terminal_speed_m_per_s"].is_null(), "{curve}");
    let stroke = app
        .post_ok(
            "/v1/simulate",
            &json!({ "design": runaway_design(), "fidelity": "quasi_static", "samples": 2 }),
        )
        .await;
    assert!(has_runaway(&stroke["caution_details"]), "{stroke}");
    let sweep = app
        .post_ok(
            "/v1/sweep",
            &json!({
                "design": runaway_design(),
                "vary": [{ "path": "load.payload_mass_kg", "values": [0.0, 30.0] }],
                "metrics": ["terminal_speed_m_per_s"]
            }),
        )
        .await;
    let points = sweep["points"].as_array().expect("points");
    let heavy = points
        .iter()
        .find(|p| p["inputs"]["load.payload_mass_kg"] == 30.0)
        .expect("heavy point");
    assert!(heavy["metrics"]["terminal_speed_m_per_s"].is_null());
    assert!(
        heavy["caution_kinds"]
            .as_array()
            .is_some_and(|k| k.iter().any(|k| k == "runaway")),
        "{heavy}"
    );
    assert!(
        heavy["cautions"].as_array().is_some_and(|c| c
            .iter()
            .any(|c| c.as_str().is_some_and(|c| c.contains("RUNAWAY")))),
        "{heavy}"
    );
}

#[tokio::test]
async fn whole_numbers_stay_whole() {
    let app = start_app().await;
    // from 1 to 6 in 4 steps gives 2.667 and 4.333: refused, naming the axis.
    let p = expect_problem(
        app.post_json(
            "/v1/sweep",
            &json!({
                "design": load_design(1),
                "vary": [{ "path": "magnets.count", "from": 1, "to": 6, "steps": 4 }],
                "metrics": ["damping_n_s_per_m"]
            }),
        )
        .await,
        422,
    )
    .await;
    assert_eq!(error_paths(&p), vec!["vary[0]".to_string()], "{p}");
    let p = expect_problem(
        app.post_json(
            "/v1/size",
            &json!({
                "design": load_design(1),
                "vary": { "path": "magnets.count", "min": 1.5, "max": 8 },
                "target": { "max_terminal_speed_m_per_s": 0.3 },
                "safety_factor": 1.25,
                "hot_temperature_c": 60
            }),
        )
        .await,
        422,
    )
    .await;
    assert_eq!(error_paths(&p), vec!["vary.min".to_string()], "{p}");
    // Whole counts are reported as integers.
    let sweep = app
        .post_ok(
            "/v1/sweep",
            &json!({
                "design": load_design(1),
                "vary": [{ "path": "magnets.count", "from": 1, "to": 3, "steps": 3 }],
                "metrics": ["damping_n_s_per_m"]
            }),
        )
        .await;
    assert_eq!(sweep["axes"][0]["values"], json!([1, 2, 3]));
    for p in sweep["points"].as_array().expect("points") {
        assert!(p["inputs"]["magnets.count"].is_u64(), "{p}");
    }
}
