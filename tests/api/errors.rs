//! The problem format, and a battery of bad inputs: each is answered 4xx with the field named,
//! and the server stays healthy.
//!
//! Expected statuses: source: RFC 9110, HTTP Semantics, 2022 (400, 404, 405, 413, 415, 422)
//! as assigned by the HTTP contract of this service; problem members: source: RFC 9457,
//! Problem Details for HTTP APIs, 2023.

use crate::helpers::{
    PROBLEM_JSON, error_paths, expect_problem, heavy_force_curve, request_with_design,
    sample_design, start_app, start_app_with,
};
use serde_json::{Value, json};

/// Posts `body` to `path` and expects 422 naming `path_named` among the errors.
async fn expect_named(
    app: &crate::helpers::TestApp,
    path: &str,
    body: &Value,
    named: &str,
) -> Value {
    let problem = expect_problem(app.post_json(path, body).await, 422).await;
    let paths = error_paths(&problem);
    assert!(
        paths.iter().any(|p| p == named),
        "{named} not named in {paths:?}: {problem}"
    );
    for e in problem["errors"].as_array().expect("errors") {
        assert!(e["message"].as_str().is_some_and(|m| !m.is_empty()), "{e}");
    }
    problem
}

#[tokio::test]
async fn the_problem_document_has_the_rfc_9457_members() {
    let app = start_app().await;
    let body = request_with_design(|d| d["tube"]["inner_diameter_m"] = json!(-0.013));
    let response = app.post_json("/v1/force-curve", &body).await;
    assert!(response.headers().get("x-request-id").is_some());
    let problem = expect_problem(response, 422).await;
    // source: RFC 9457, Problem Details for HTTP APIs, 2023, section 3.1 (type, title,
    // status, detail, instance) and 3.2 (extension members: here `errors`).
    assert_eq!(problem["type"], "urn:ringdrag:problem:invalid-input");
    assert_eq!(problem["title"], "Invalid input");
    let errors = problem["errors"].as_array().expect("errors");
    assert!(
        errors
            .iter()
            .any(|e| e["path"] == "design.tube.inner_diameter_m")
    );
    for e in errors {
        let keys: Vec<&String> = e.as_object().expect("object").keys().collect();
        assert_eq!(keys, ["message", "path"], "{e}");
    }
    assert!(
        problem["detail"]
            .as_str()
            .is_some_and(|d| d.contains("design.tube.inner_diameter_m")),
        "{problem}"
    );
}

#[tokio::test]
async fn invalid_designs_name_the_field() {
    let app = start_app().await;
    let cases: Vec<(Value, &str)> = vec![
        (
            request_with_design(|d| d["magnets"]["outer_diameter_m"] = json!(0.0)),
            "design.magnets.outer_diameter_m",
        ),
        (
            request_with_design(|d| d["magnets"]["length_m"] = json!(-0.02)),
            "design.magnets.length_m",
        ),
        (
            request_with_design(|d| d["tube"]["wall_thickness_m"] = json!(0)),
            "design.tube.wall_thickness_m",
        ),
        (
            request_with_design(|d| d["tube"]["length_m"] = json!(-1)),
            "design.tube.length_m",
        ),
        // NaN and numbers as strings: JSON has no NaN, and a string is not a number.
        (
            request_with_design(|d| d["magnets"]["length_m"] = json!("NaN")),
            "design.magnets.length_m",
        ),
        (
            request_with_design(|d| d["tube"]["inner_diameter_m"] = json!("0.013")),
            "design.tube.inner_diameter_m",
        ),
        (
            request_with_design(|d| d["load"]["incline_deg"] = json!("Infinity")),
            "design.load.incline_deg",
        ),
        // A magnet wider than the bore.
        (
            request_with_design(|d| d["magnets"]["outer_diameter_m"] = json!(0.014)),
            "design.magnets.outer_diameter_m",
        ),
        // A ring bore wider than the ring.
        (
            request_with_design(|d| d["magnets"]["inner_diameter_m"] = json!(0.013)),
            "design.magnets.inner_diameter_m",
        ),
        (
            request_with_design(|d| d["tube"]["material"] = json!("unobtainium")),
            "design.tube.material",
        ),
        (
            request_with_design(|d| d["magnets"]["grade"] = json!("N99")),
            "design.magnets.grade",
        ),
        (
            request_with_design(|d| d["magnets"]["count"] = json!(1_000_000)),
            "design.magnets.count",
        ),
        (
            request_with_design(|d| d["magnets"]["count"] = json!(-1)),
            "design.magnets.count",
        ),
        (
            request_with_design(|d| d["magnets"]["polarity"] = json!("sideways")),
            "design.magnets.polarity",
        ),
        (
            request_with_design(|d| d["tube"]["perforation_fraction"] = json!(0.9)),
            "design.tube.perforation_fraction",
        ),
        (
            request_with_design(|d| d["tube"]["temperature_c"] = json!(1e6)),
            "design.tube.temperature_c",
        ),
    ];
    for (body, named) in cases {
        expect_named(&app, "/v1/force-curve", &body, named).await;
    }
    // A number that overflows a double, the JSON way of writing infinity; it cannot be built
    // as a serde_json value, so it is sent as text.
    let text = serde_json::to_string(&sample_design())
        .expect("serialises")
        .replace("\"length_m\":0.3", "\"length_m\":1e400");
    let body = format!("{{\"design\":{text}}}");
    assert!(body.contains("1e400"));
    let problem = expect_problem(
        app.post_raw(
            "/v1/force-curve",
            body.into_bytes(),
            Some("application/json"),
        )
        .await,
        422,
    )
    .await;
    assert_eq!(error_paths(&problem), ["design.tube.length_m"], "{problem}");
    app.assert_healthy().await;
}

#[tokio::test]
async fn a_ferromagnetic_tube_is_refused_with_the_reason() {
    let app = start_app().await;
    for material in ["mild-steel", "stainless-430", "iron"] {
        let body = request_with_design(|d| d["tube"]["material"] = json!(material));
        let problem = expect_named(&app, "/v1/force-curve", &body, "design.tube.material").await;
        let message = problem["errors"][0]["message"].as_str().unwrap_or_default();
        assert!(message.contains("ferromagnetic"), "{material}: {message}");
    }
    app.assert_healthy().await;
}

#[tokio::test]
async fn unknown_fields_are_rejected_by_path() {
    let app = start_app().await;
    let mut body = json!({ "design": sample_design(), "speed": [1.0] });
    expect_named(&app, "/v1/force-curve", &body, "speed").await;
    body = request_with_design(|d| d["tube"]["colour"] = json!("red"));
    expect_named(&app, "/v1/force-curve", &body, "design.tube.colour").await;
    body = request_with_design(|d| d["magnets"]["outer_diameter_mm"] = json!(12));
    expect_named(
        &app,
        "/v1/force-curve",
        &body,
        "design.magnets.outer_diameter_mm",
    )
    .await;
    body = json!({ "design": sample_design(), "start": { "position": 0.0 } });
    expect_named(&app, "/v1/simulate", &body, "start.position").await;
    // A missing required field is named too.
    body = request_with_design(|d| {
        d["tube"]
            .as_object_mut()
            .map(|t| t.remove("inner_diameter_m"));
    });
    expect_named(
        &app,
        "/v1/force-curve",
        &body,
        "design.tube.inner_diameter_m",
    )
    .await;
    expect_named(&app, "/v1/force-curve", &json!({}), "design").await;
    app.assert_healthy().await;
}

#[tokio::test]
async fn bad_job_options_are_named() {
    let app = start_app().await;
    let design = sample_design();
    let cases = [
        (
            "/v1/force-curve",
            json!({ "design": design, "speeds_m_per_s": [1.0, -2.0] }),
            "speeds_m_per_s[1]",
        ),
        (
            "/v1/force-curve",
            json!({ "design": design, "speeds_m_per_s": [1.0, "fast"] }),
            "speeds_m_per_s[1]",
        ),
        (
            "/v1/force-curve",
            json!({ "design": design, "speeds_m_per_s": [] }),
            "speeds_m_per_s",
        ),
        (
            "/v1/force-curve",
            json!({ "design": design, "speeds_m_per_s": [1e9] }),
            "speeds_m_per_s[0]",
        ),
        (
            "/v1/force-curve",
            json!({ "design": design, "resolution": { "radial_layers": 1000 } }),
            "resolution.radial_layers",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "fidelity": "turbo" }),
            "fidelity",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "samples": 1 }),
            "samples",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "samples": 4_294_967_296u64 }),
            "samples",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "samples": 2.5 }),
            "samples",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "max_time_s": 0 }),
            "max_time_s",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "start": { "position_m": 1e6 } }),
            "start.position_m",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "start": { "speed_m_per_s": -1 } }),
            "start.speed_m_per_s",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "resolution": { "ring_width_m": 0 } }),
            "resolution.ring_width_m",
        ),
    ];
    for (path, body, named) in cases {
        let problem = expect_named(&app, path, &body, named).await;
        assert_eq!(problem["type"], "urn:ringdrag:problem:invalid-input");
    }
    app.assert_healthy().await;
}

#[tokio::test]
async fn enormous_jobs_are_refused_by_the_limits() {
    let app = start_app().await;
    let design = sample_design();
    let speeds: Vec<f64> = (0..2001).map(|i| i as f64 * 0.001).collect();
    let cases = [
        (
            "/v1/force-curve",
            json!({ "design": design, "speeds_m_per_s": speeds }),
            "speeds_m_per_s",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "max_time_s": 1e6 }),
            "max_time_s",
        ),
        (
            "/v1/simulate",
            json!({ "design": design, "samples": 1_000_000 }),
            "samples",
        ),
    ];
    for (path, body, named) in cases {
        let problem = expect_named(&app, path, &body, named).await;
        assert_eq!(
            problem["type"], "urn:ringdrag:problem:job-too-large",
            "{problem}"
        );
    }
    app.assert_healthy().await;
}

#[tokio::test]
async fn malformed_bodies_are_400() {
    let app = start_app().await;
    let truncated = r#"{"design": {"magnets": {"grade": "N42", "outer_di"#;
    let trailing = format!("{} {{", json!({ "design": sample_design() }));
    for body in [
        truncated.to_string(),
        String::new(),
        "{,}".to_string(),
        trailing,
    ] {
        let problem = expect_problem(
            app.post_raw(
                "/v1/force-curve",
                body.into_bytes(),
                Some("application/json"),
            )
            .await,
            400,
        )
        .await;
        assert_eq!(problem["type"], "urn:ringdrag:problem:malformed-json");
    }
    app.assert_healthy().await;
}

#[tokio::test]
async fn deeply_nested_json_is_refused_without_harm() {
    let app = start_app().await;
    let depth = 100_000;
    let nested = format!("{{\"design\": {}{}}}", "[".repeat(depth), "]".repeat(depth));
    let bare = format!("{}{}", "{\"a\":".repeat(depth), "}".repeat(depth));
    for body in [nested, bare] {
        let response = app
            .post_raw(
                "/v1/force-curve",
                body.into_bytes(),
                Some("application/json"),
            )
            .await;
        // Well-formed JSON of the wrong shape: 422 naming the first field that goes wrong
        // (the request's shape is never 128 levels deep, so serde_json's depth limit, a 400,
        // is not reached first).
        let problem = expect_problem(response, 422).await;
        assert_eq!(problem["type"], "urn:ringdrag:problem:invalid-input");
        assert!(!error_paths(&problem).is_empty(), "{problem}");
    }
    app.assert_healthy().await;
}

#[tokio::test]
async fn an_oversized_body_is_413() {
    let app = start_app().await;
    // 1.5 MiB of valid JSON, above the default 1 MiB limit.
    let filler = "0.5,".repeat(400_000);
    let body = format!(
        "{{\"design\": {}, \"speeds_m_per_s\": [{}0.5]}}",
        sample_design(),
        filler
    );
    assert!(body.len() > 3 << 19);
    let response = app
        .post_raw(
            "/v1/force-curve",
            body.into_bytes(),
            Some("application/json"),
        )
        .await;
    let problem = expect_problem(response, 413).await;
    assert!(
        problem["detail"]
            .as_str()
            .unwrap_or_default()
            .contains("1048576")
    );
    app.assert_healthy().await;
}

#[tokio::test]
async fn a_configured_body_limit_is_honoured() {
    let app = start_app_with(&["--max-body-bytes", "2048"]).await;
    let small = json!({ "design": sample_design(), "speeds_m_per_s": [1.0] });
    app.post_ok("/v1/force-curve", &small).await;
    let big = heavy_force_curve(500);
    expect_problem(app.post_json("/v1/force-curve", &big).await, 413).await;
    app.assert_healthy().await;
}

#[tokio::test]
async fn the_wrong_content_type_is_415() {
    let app = start_app().await;
    let body = json!({ "design": sample_design() }).to_string();
    for content_type in [
        Some("text/plain"),
        Some("application/x-www-form-urlencoded"),
        None,
    ] {
        let problem = expect_problem(
            app.post_raw("/v1/simulate", body.clone().into_bytes(), content_type)
                .await,
            415,
        )
        .await;
        assert!(
            problem["detail"]
                .as_str()
                .unwrap_or_default()
                .contains("application/json"),
            "{problem}"
        );
    }
    // A charset parameter is fine.
    let response = app
        .post_raw(
            "/v1/force-curve",
            body.into_bytes(),
            Some("application/json; charset=utf-8"),
        )
        .await;
    assert_eq!(response.status().as_u16(), 200);
}

#[tokio::test]
async fn unknown_routes_and_methods_answer_problems() {
    let app = start_app().await;
    let problem = expect_problem(app.get("/v1/nothing-here").await, 404).await;
    assert_eq!(problem["instance"], "/v1/nothing-here");
    // The job routes exist: an empty body is a request without its design.
    for path in ["/v1/sweep", "/v1/size"] {
        let problem = expect_problem(app.post_json(path, &json!({})).await, 422).await;
        assert_eq!(problem["errors"][0]["path"], "design", "{path}: {problem}");
    }
    let response = app.get("/v1/force-curve").await;
    let allow = response
        .headers()
        .get("allow")
        .and_then(|v| v.to_str().ok())
        .unwrap_or_default()
        .to_string();
    assert!(allow.contains("POST"), "Allow: {allow}");
    expect_problem(response, 405).await;
    let response = app
        .client
        .delete(format!("{}/v1/materials", app.base))
        .send()
        .await
        .expect("sent");
    assert_eq!(
        response
            .headers()
            .get("content-type")
            .and_then(|v| v.to_str().ok()),
        Some(PROBLEM_JSON)
    );
    expect_problem(response, 405).await;
}
