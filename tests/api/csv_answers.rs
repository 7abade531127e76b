//! CSV answers (`Accept: text/csv`): RFC 4180 tables with a header row whose names carry the
//! units, one row per point, the same numbers as the JSON answer.

use crate::helpers::{TestApp, expect_ok_as, post_accepting, sample_design, start_app};
use serde_json::{Value, json};

/// The CSV answer of `POST path`, checked to be `text/csv`, split into records and fields.
/// The fields here hold no quotes (errors are checked separately).
async fn post_csv(app: &TestApp, path: &str, body: &Value) -> Vec<Vec<String>> {
    let response = post_accepting(app, path, "text/csv", body).await;
    let (content_type, text) = expect_ok_as(response, "text/csv").await;
    // source: RFC 4180, section 3 (media type text/csv, optional charset and header).
    assert!(content_type.contains("header=present"), "{content_type}");
    // source: RFC 4180, section 2, rule 1: records end with CRLF.
    assert!(text.ends_with("\r\n"), "{text:?}");
    assert!(
        !text.replace("\r\n", "").contains('\n'),
        "bare LF in {text:?}"
    );
    text.trim_end_matches("\r\n")
        .split("\r\n")
        .map(|r| r.split(',').map(str::to_string).collect())
        .collect()
}

fn num(field: &str) -> f64 {
    field
        .parse()
        .unwrap_or_else(|_| panic!("not a number: {field:?}"))
}

#[tokio::test]
async fn a_force_curve_as_csv_has_one_row_per_speed() {
    let app = start_app().await;
    let request = json!({ "design": sample_design(), "speeds_m_per_s": [0.0, 0.1, 1.0, 10.0] });
    let json = app.post_ok("/v1/force-curve", &request).await;
    let rows = post_csv(&app, "/v1/force-curve", &request).await;
    assert_eq!(rows[0], ["speed_m_per_s", "force_n"]);
    assert_eq!(rows.len(), 1 + 4);
    for (row, point) in rows[1..]
        .iter()
        .zip(json["points"].as_array().expect("points"))
    {
        assert_eq!(
            num(&row[0]),
            point["speed_m_per_s"].as_f64().expect("speed")
        );
        assert_eq!(num(&row[1]), point["force_n"].as_f64().expect("force"));
    }
}

#[tokio::test]
async fn a_stroke_as_csv_has_the_series_columns() {
    let app = start_app().await;
    let request = json!({ "design": sample_design(), "samples": 50 });
    let json = app.post_ok("/v1/simulate", &request).await;
    let rows = post_csv(&app, "/v1/simulate", &request).await;
    assert_eq!(
        rows[0],
        [
            "time_s",
            "position_m",
            "speed_m_per_s",
            "force_n",
            "power_w"
        ]
    );
    let n = json["series"]["time_s"].as_array().map_or(0, Vec::len);
    assert!(n >= 2);
    assert_eq!(rows.len(), 1 + n);
    let last = &rows[n];
    assert_eq!(
        num(&last[0]),
        json["series"]["time_s"][n - 1].as_f64().expect("time")
    );
    // The CSV and JSON answers are two computations of the same stroke: the model is
    // deterministic, and both formats write the shortest representation that reads back to
    // the same f64 (JSON read with serde_json's correctly rounded `float_roundtrip` parser), so
    // they agree to the bit (source: common practice - shortest round-trip formatting).
    let speed = json["series"]["speed_m_per_s"][n - 1]
        .as_f64()
        .expect("speed");
    assert_eq!(
        num(&last[2]).to_bits(),
        speed.to_bits(),
        "{} vs {speed}",
        num(&last[2])
    );
    assert!(rows.iter().all(|r| r.len() == 5));
}

#[tokio::test]
async fn a_sweep_as_csv_carries_inputs_then_metrics_in_the_asked_order() {
    let app = start_app().await;
    // Metrics asked in non-alphabetical order; a point that fails (magnet wider than the bore)
    // keeps its row with empty metrics and its error quoted.
    let request = json!({
        "design": sample_design(),
        "vary": [
            { "path": "magnets.outer_diameter_m", "values": [0.010, 0.014] },
            { "path": "load.payload_mass_kg", "values": [0.0, 0.5] }
        ],
        "metrics": ["terminal_speed_m_per_s", "damping_n_s_per_m"]
    });
    let json = app.post_ok("/v1/sweep", &request).await;
    // JSON keeps the asked order too (read from the text: a parsed map would sort its keys).
    let raw = app
        .post_json("/v1/sweep", &request)
        .await
        .text()
        .await
        .expect("body");
    let first = &raw[raw.find("\"metrics\":{").expect("a point's metrics")..];
    assert!(
        first.find("terminal_speed").expect("listed") < first.find("damping").expect("listed"),
        "{first}"
    );
    let text = post_accepting(&app, "/v1/sweep", "text/csv", &request)
        .await
        .text()
        .await
        .expect("body");
    let mut lines = text.split("\r\n");
    assert_eq!(
        lines.next(),
        Some(
            "index,magnets.outer_diameter_m,load.payload_mass_kg,terminal_speed_m_per_s,\
             damping_n_s_per_m,error"
        )
    );
    let rows: Vec<&str> = lines.filter(|l| !l.is_empty()).collect();
    assert_eq!(rows.len(), 4);
    let failed: Vec<&&str> = rows.iter().filter(|r| r.contains(",0.014,")).collect();
    assert_eq!(failed.len(), 2, "{text}");
    for row in failed {
        // index, two inputs, two empty metrics, then the error (quoted only if it holds a
        // comma, a quote or a line break: RFC 4180, section 2, rule 6).
        let fields: Vec<&str> = row.splitn(6, ',').collect();
        assert_eq!(fields[3..5], ["", ""], "{row}");
        assert!(fields[5].contains("narrower than the tube bore"), "{row}");
    }
    for row in rows.iter().filter(|r| r.contains(",0.01,")) {
        let fields: Vec<&str> = row.split(',').collect();
        assert_eq!(fields.len(), 6, "{row}");
        let index: usize = fields[0].parse().expect("index");
        let point = &json["points"][index];
        assert_eq!(
            num(fields[4]),
            point["metrics"]["damping_n_s_per_m"]
                .as_f64()
                .expect("damping")
        );
    }
}
