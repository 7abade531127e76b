//! `GET /v1/materials`: both tables, each row with its source, and every id usable in a design.

use crate::helpers::{rel, sample_design, start_app};
use serde_json::{Value, json};

#[tokio::test]
async fn both_tables_with_sources() {
    let app = start_app().await;
    let response = app.get("/v1/materials").await;
    assert_eq!(response.status().as_u16(), 200);
    assert!(
        response
            .headers()
            .get("cache-control")
            .and_then(|v| v.to_str().ok())
            .is_some_and(|v| v.contains("max-age")),
    );
    let body: Value = response.json().await.expect("json");
    let conductors = body["conductors"].as_array().expect("conductors");
    let grades = body["magnet_grades"].as_array().expect("magnet_grades");
    assert!(conductors.len() >= 12 && grades.len() >= 12);
    for row in conductors.iter().chain(grades) {
        assert!(
            row["source"].as_str().is_some_and(|s| s.len() > 10),
            "row without source: {row}"
        );
    }
    for c in conductors {
        let sigma = c["conductivity_s_per_m"].as_f64().expect("sigma");
        let iacs = c["iacs_percent"].as_f64().expect("iacs");
        // 100 %IACS = 58.0 MS/m (source: IEC 60028, International Annealed Copper Standard);
        // exact where the source gave %IACS, within the rounding of the shown figures (three
        // significant figures of %IACS) where it gave a resistivity.
        assert!(rel(sigma, iacs * 0.01 * 58.0e6) < 2.5e-3, "{c}");
        // No float noise: every figure reads back from a short decimal.
        assert!(c["iacs_percent"].to_string().len() <= 5, "{c}");
        assert!(
            c["provenance"]
                .as_str()
                .is_some_and(|p| p.contains("data sheet")),
            "{c}"
        );
    }
    let cu = conductors
        .iter()
        .find(|c| c["id"] == "copper-c11000")
        .expect("copper-c11000 row");
    // Electrolytic tough-pitch copper is 100 %IACS (source: IEC 60028; ASTM B152 C11000).
    assert!(rel(cu["conductivity_s_per_m"].as_f64().expect("sigma"), 58.0e6) < 0.02);
    let n42 = grades.iter().find(|g| g["id"] == "N42").expect("N42 row");
    // N42 sintered NdFeB: remanence 1.28-1.32 T (from memory: common manufacturer grade tables).
    let br = n42["remanence_t"].as_f64().expect("Br");
    assert!((1.28..=1.33).contains(&br), "N42 Br {br}");
    assert_eq!(n42["family"], "ndfeb");
}

#[tokio::test]
async fn every_listed_id_is_accepted_in_a_design() {
    let app = start_app().await;
    let body: Value = app.get("/v1/materials").await.json().await.expect("json");
    let speeds = json!([0.1]);
    for c in body["conductors"].as_array().expect("conductors") {
        let mut design = sample_design();
        design["tube"]["material"] = c["id"].clone();
        let r = app
            .post_ok(
                "/v1/force-curve",
                &json!({ "design": design, "speeds_m_per_s": speeds }),
            )
            .await;
        assert!(
            r["points"][0]["force_n"].as_f64().is_some_and(|f| f > 0.0),
            "{c}"
        );
    }
    for g in body["magnet_grades"].as_array().expect("grades") {
        let mut design = sample_design();
        design["magnets"]["grade"] = g["id"].clone();
        app.post_ok(
            "/v1/force-curve",
            &json!({ "design": design, "speeds_m_per_s": speeds }),
        )
        .await;
    }
}
