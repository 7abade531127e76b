//! Health, readiness, metrics, request ids, logs, configuration and graceful shutdown.

use crate::helpers::{
    Logs, expect_problem, heavy_force_curve, sample_design, spawn_binary_with, start_app,
    start_app_with,
};
use serde_json::{Value, json};
use std::time::Duration;

#[tokio::test]
async fn health_and_readiness() {
    let app = start_app_with(&["--max-concurrent-jobs", "3"]).await;
    let health: Value = app.get("/healthz").await.json().await.expect("json");
    assert_eq!(health, json!({ "status": "ok" }));
    let ready = app.get("/readyz").await;
    assert_eq!(ready.status().as_u16(), 200);
    let ready: Value = ready.json().await.expect("json");
    assert_eq!(ready["status"], "ready");
    assert_eq!(ready["job_slots"], 3);
    assert_eq!(ready["job_slots_free"], 3);
}

#[tokio::test]
async fn metrics_count_requests_by_route_and_status() {
    let app = start_app().await;
    app.get("/healthz").await;
    app.post_ok("/v1/force-curve", &json!({ "design": sample_design() }))
        .await;
    let mut bad = sample_design();
    bad["tube"]["material"] = json!("mild-steel");
    expect_problem(
        app.post_json("/v1/force-curve", &json!({ "design": bad }))
            .await,
        422,
    )
    .await;
    expect_problem(app.get("/no/such/path").await, 404).await;
    let response = app.get("/metrics").await;
    assert_eq!(response.status().as_u16(), 200);
    let content_type = response
        .headers()
        .get("content-type")
        .and_then(|v| v.to_str().ok())
        .unwrap_or_default()
        .to_string();
    // source: Prometheus exposition formats, text format version 0.0.4.
    assert!(
        content_type.starts_with("text/plain; version=0.0.4"),
        "{content_type}"
    );
    let text = response.text().await.expect("text");
    for needle in [
        r#"ringdrag_http_requests_total{method="GET",route="/healthz",status="200"} 1"#,
        r#"ringdrag_http_requests_total{method="POST",route="/v1/force-curve",status="200"} 1"#,
        r#"ringdrag_http_requests_total{method="POST",route="/v1/force-curve",status="422"} 1"#,
        r#"ringdrag_http_requests_total{method="GET",route="unmatched",status="404"} 1"#,
        r#"ringdrag_http_request_duration_seconds_bucket{method="POST",route="/v1/force-curve",status="200",le="60"} 1"#,
        r#"ringdrag_jobs_total{job="force_curve",outcome="ok"} 1"#,
        r#"ringdrag_jobs_in_flight{job="force_curve"} 0"#,
        "ringdrag_job_slots_free ",
        "# TYPE ringdrag_job_duration_seconds histogram",
    ] {
        assert!(text.contains(needle), "metrics lack {needle}:\n{text}");
    }
}

#[tokio::test]
async fn request_ids_are_kept_or_made() {
    let app = start_app().await;
    let response = app
        .client
        .get(format!("{}/healthz", app.base))
        .header("x-request-id", "client-chosen-42")
        .send()
        .await
        .expect("sent");
    assert_eq!(
        response
            .headers()
            .get("x-request-id")
            .and_then(|v| v.to_str().ok()),
        Some("client-chosen-42")
    );
    let response = app.get("/v1/nothing").await;
    let made = response
        .headers()
        .get("x-request-id")
        .and_then(|v| v.to_str().ok())
        .unwrap_or_default()
        .to_string();
    // A made id is a UUID in its 36-character text form (source: RFC 9562, UUIDs, 2024).
    assert_eq!(made.len(), 36, "{made}");
    assert_eq!(made.matches('-').count(), 4, "{made}");
}

#[tokio::test]
async fn json_logs_carry_the_request_id() {
    let log_path =
        std::env::temp_dir().join(format!("ringdrag-json-log-{}.log", std::process::id()));
    let file = std::fs::File::create(&log_path).expect("log file");
    let mut app = spawn_binary_with(
        &["--log-format", "json"],
        &[("RUST_LOG", "info")],
        Logs::File(file),
    )
    .await;
    let response = app
        .client
        .get(format!("{}/v1/materials", app.base))
        .header("x-request-id", "log-probe-7")
        .send()
        .await
        .expect("sent");
    assert_eq!(response.status().as_u16(), 200);
    app.terminate();
    let status = tokio::time::timeout(Duration::from_secs(20), app.child().wait())
        .await
        .expect("exits after SIGTERM")
        .expect("wait");
    assert!(status.success(), "exit status {status}");
    let logs = std::fs::read_to_string(&log_path).expect("log readable");
    let _ = std::fs::remove_file(&log_path);
    let lines: Vec<&str> = logs.lines().filter(|l| !l.trim().is_empty()).collect();
    assert!(lines.len() >= 2, "too few log lines:\n{logs}");
    for line in &lines {
        serde_json::from_str::<Value>(line).unwrap_or_else(|e| panic!("not JSON ({e}): {line}"));
    }
    assert!(
        lines.iter().any(|l| l.contains("log-probe-7")),
        "no log line carries the request id:\n{logs}"
    );
}

#[tokio::test]
async fn settings_fall_back_to_environment_variables() {
    let app = spawn_binary_with(&[], &[("RINGDRAG_MAX_SPEEDS", "3")], Logs::Quiet).await;
    let ok = json!({ "design": sample_design(), "speeds_m_per_s": [0.1, 0.2, 0.3] });
    app.post_ok("/v1/force-curve", &ok).await;
    let over = json!({ "design": sample_design(), "speeds_m_per_s": [0.1, 0.2, 0.3, 0.4] });
    let problem = expect_problem(app.post_json("/v1/force-curve", &over).await, 422).await;
    assert_eq!(problem["type"], "urn:ringdrag:problem:job-too-large");
    assert!(
        problem["errors"][0]["message"]
            .as_str()
            .unwrap_or_default()
            .contains('3')
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn sigterm_finishes_in_flight_requests_then_exits() {
    let mut app = spawn_binary_with(
        &["--max-concurrent-jobs", "1", "--queue-wait-ms", "30000"],
        &[],
        Logs::Quiet,
    )
    .await;
    let body = heavy_force_curve(2000);
    let mut tasks = Vec::new();
    for _ in 0..4 {
        let client = app.client.clone();
        let url = format!("{}/v1/force-curve", app.base);
        let body = body.clone();
        tasks.push(tokio::spawn(async move {
            let r = client.post(url).json(&body).send().await.expect("sent");
            let status = r.status().as_u16();
            let value: Value = r.json().await.expect("json");
            (status, value)
        }));
    }
    // Wait until the server has taken all four (one computing, three waiting for the slot).
    let mut waiting = false;
    for _ in 0..200 {
        let text = app.get("/metrics").await.text().await.expect("text");
        if text.contains(r#"ringdrag_jobs_waiting{job="force_curve"} 3"#) {
            waiting = true;
            break;
        }
        tokio::time::sleep(Duration::from_millis(10)).await;
    }
    assert!(waiting, "the four requests never queued up");
    app.terminate();
    for task in tasks {
        let (status, value) = task.await.expect("task");
        assert_eq!(status, 200, "{value}");
        assert!(value["peak_force_n"].as_f64().is_some_and(|f| f > 0.0));
    }
    let status = tokio::time::timeout(Duration::from_secs(30), app.child().wait())
        .await
        .expect("the server exits after draining")
        .expect("wait");
    assert!(status.success(), "exit status {status}");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn readiness_turns_off_before_the_listener_closes() {
    // Order, not wall time: readiness turns off first; then, still inside the delay, the
    // service is alive and computes; then it exits. The delay (4 s) is long against the
    // polling and one small force curve so that the order holds on a loaded machine.
    let mut app = spawn_binary_with(&["--shutdown-delay-s", "4"], &[], Logs::Quiet).await;
    assert_eq!(app.get("/readyz").await.status().as_u16(), 200);
    app.terminate();
    // Within the delay: not ready (a problem with Retry-After), alive, and refusing new work.
    let mut turned = false;
    for _ in 0..100 {
        let r = app.get("/readyz").await;
        if r.status().as_u16() == 503 {
            assert!(r.headers().get("retry-after").is_some());
            let problem = expect_problem(r, 503).await;
            assert_eq!(problem["type"], "urn:ringdrag:problem:shutting-down");
            turned = true;
            break;
        }
        tokio::time::sleep(Duration::from_millis(10)).await;
    }
    assert!(turned, "readiness never turned off");
    // Still alive, but no new computing work is taken: 503 shutting-down with Retry-After.
    app.assert_healthy().await;
    let r = app
        .post_json("/v1/force-curve", &json!({ "design": sample_design() }))
        .await;
    assert!(r.headers().get("retry-after").is_some());
    let problem = expect_problem(r, 503).await;
    assert_eq!(problem["type"], "urn:ringdrag:problem:shutting-down");
    let r = app.get("/v1/materials").await;
    expect_problem(r, 503).await;
    let status = tokio::time::timeout(Duration::from_secs(20), app.child().wait())
        .await
        .expect("the server exits after the delay")
        .expect("wait");
    assert!(status.success(), "exit status {status}");
}
