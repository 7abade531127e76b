//! The invented demo requests in `examples/` get the answers they are meant to get, and each
//! is listed (as invented) in `examples/README.md`.

use crate::helpers::{error_paths, expect_problem, spawn_app};
use serde_json::Value;
use std::path::PathBuf;

fn examples_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("..")
        .join("examples")
}

fn example(name: &str) -> Value {
    let text = std::fs::read_to_string(examples_dir().join(name))
        .unwrap_or_else(|e| panic!("examples/{name}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("examples/{name}: {e}"))
}

#[test]
fn every_example_is_listed_as_invented() {
    let readme = std::fs::read_to_string(examples_dir().join("README.md")).expect("README");
    assert!(readme.contains("invented"));
    let entries = std::fs::read_dir(examples_dir()).expect("examples dir");
    for entry in entries {
        let name = entry
            .expect("entry")
            .file_name()
            .to_string_lossy()
            .to_string();
        if name.ends_with(".json") {
            assert!(readme.contains(&format!("`{name}`")), "{name} not listed");
        }
    }
}

#[tokio::test]
async fn the_force_curve_examples_compute() {
    let app = spawn_app().await;
    for name in [
        "force-curve-copper-drop.json",
        "force-curve-aluminium-stack.json",
    ] {
        let body = app.post_ok("/v1/force-curve", &example(name)).await;
        assert!(
            body["peak_force_n"].as_f64().is_some_and(|f| f > 0.0),
            "{name}: {body}"
        );
    }
}

#[tokio::test]
async fn the_simulate_examples_compute() {
    let app = spawn_app().await;
    for name in [
        "simulate-copper-drop.json",
        "simulate-incline-carriage.json",
    ] {
        let body = app.post_ok("/v1/simulate", &example(name)).await;
        assert!(
            body["summary"]["max_speed_m_per_s"]
                .as_f64()
                .is_some_and(|v| v > 0.0),
            "{name}: {body}"
        );
    }
}

#[tokio::test]
async fn the_invalid_example_names_its_faults() {
    let app = spawn_app().await;
    let response = app
        .post_json(
            "/v1/force-curve",
            &example("invalid-magnet-wider-than-bore.json"),
        )
        .await;
    let problem = expect_problem(response, 422).await;
    let paths = error_paths(&problem);
    for named in ["design.magnets.outer_diameter_m", "design.tube.material"] {
        assert!(paths.iter().any(|p| p == named), "{named} not in {paths:?}");
    }
}

#[tokio::test]
async fn the_sweep_examples_compute() {
    let app = spawn_app().await;
    for (name, points) in [
        ("sweep-wall-thickness.json", 8),
        ("sweep-wall-and-payload.json", 24),
    ] {
        let body = app.post_ok("/v1/sweep", &example(name)).await;
        let got = body["points"].as_array().map_or(0, Vec::len);
        assert_eq!(got, points, "{name}");
        assert_eq!(body["failed_points"], 0, "{name}: {body}");
    }
}

#[tokio::test]
async fn the_sizing_example_finds_a_wall() {
    let app = spawn_app().await;
    let body = app
        .post_ok("/v1/size", &example("size-wall-for-speed-limit.json"))
        .await;
    assert_eq!(body["feasible"], true, "{body}");
    assert!(body["tolerance_bands"]["bands"]["terminal_speed_m_per_s"].is_object());
}

#[tokio::test]
async fn the_landing_speed_sizing_and_the_selection_examples_compute() {
    let app = spawn_app().await;
    let size = app
        .post_ok(
            "/v1/size",
            &example("size-magnet-count-for-landing-speed.json"),
        )
        .await;
    assert_eq!(size["feasible"], true, "{size}");
    assert!(size["value"].is_u64(), "{size}");
    assert!(size["margins_worst_corner"]["max_landing_speed_m_per_s"].as_f64() >= Some(1.25));
    let select = app
        .post_ok("/v1/select", &example("select-stocked-parts.json"))
        .await;
    assert_eq!(select["feasible"], true, "{select}");
    let designs = select["designs"].as_array().expect("designs");
    assert!(
        designs
            .iter()
            .all(|d| d["margin"].as_f64().is_some_and(|m| m >= 1.25)),
        "{select}"
    );
    assert!(
        select["pruned_by_steady_bound"].as_u64() > Some(0),
        "{select}"
    );
}
