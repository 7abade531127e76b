//! `POST /v1/sweep`: grids of designs against separate force-curve calls, the NDJSON stream
//! (one line per point, arriving while the sweep still computes), failed points, and bad
//! requests named by field.

use crate::helpers::{
    Logs, TestApp, error_paths, expect_problem, rel, sample_design, spawn_binary_with, start_app,
    start_app_with,
};
use futures_util::StreamExt;
use serde_json::{Value, json};
use std::time::{Duration, Instant};

/// A wall-thickness sweep of the invented copper drop (`sample_design`).
fn wall_sweep(steps: u32, metrics: &[&str]) -> Value {
    json!({
        "design": sample_design(),
        "vary": [{ "path": "tube.wall_thickness_m", "from": 0.0005, "to": 0.004, "steps": steps }],
        "metrics": metrics
    })
}

/// `POST /v1/sweep` with `Accept: application/x-ndjson`, returning each line with the time it
/// arrived (from just before the request was sent).
pub(crate) async fn post_ndjson(app: &TestApp, body: &Value) -> Vec<(Duration, Value)> {
    let started = Instant::now();
    let response = app
        .client
        .post(format!("{}/v1/sweep", app.base))
        .header("accept", "application/x-ndjson")
        .json(body)
        .send()
        .await
        .expect("request sent");
    assert_eq!(response.status().as_u16(), 200);
    assert_eq!(
        response
            .headers()
            .get("content-type")
            .and_then(|v| v.to_str().ok()),
        Some("application/x-ndjson")
    );
    let mut lines = Vec::new();
    let mut pending = Vec::new();
    let mut chunks = response.bytes_stream();
    while let Some(chunk) = chunks.next().await {
        pending.extend_from_slice(&chunk.expect("chunk"));
        while let Some(at) = pending.iter().position(|b| *b == b'\n') {
            let line: Vec<u8> = pending.drain(..=at).collect();
            let value = serde_json::from_slice(&line).expect("each line is one JSON object");
            lines.push((started.elapsed(), value));
        }
    }
    assert!(pending.is_empty(), "the stream ends with a newline");
    lines
}

#[tokio::test]
async fn terminal_speed_falls_with_the_wall_and_each_point_equals_a_force_curve_call() {
    let app = start_app().await;
    let body = app
        .post_ok(
            "/v1/sweep",
            &wall_sweep(6, &["terminal_speed_m_per_s", "damping_n_s_per_m"]),
        )
        .await;
    let points = body["points"].as_array().expect("points");
    // Six steps asked; every wall from 0.5 mm to 4 mm is a valid design (the model's range
    // for a wall is above 0 and at most 0.5 m).
    assert_eq!(points.len(), 6);
    assert_eq!(body["failed_points"], 0);
    assert_eq!(body["axes"][0]["path"], "tube.wall_thickness_m");
    assert_eq!(
        body["metrics"],
        json!(["terminal_speed_m_per_s", "damping_n_s_per_m"])
    );
    crate::force_curve::assert_standing_caution_first(&body);
    let mut previous = f64::INFINITY;
    for (i, p) in points.iter().enumerate() {
        assert_eq!(p["index"], i, "JSON points come in grid order");
        assert!(p["error"].is_null(), "{p}");
        let wall = p["inputs"]["tube.wall_thickness_m"].as_f64().expect("wall");
        // source: the grid of the request, from + (to - from) i / (steps - 1) (common practice).
        assert!(rel(wall, 0.0005 + 0.0035 * i as f64 / 5.0) < 1e-12);
        let vt = p["metrics"]["terminal_speed_m_per_s"]
            .as_f64()
            .expect("terminal speed");
        // A thicker wall carries more eddy current: damping grows as 1/a^3 - 1/b^3 with the
        // outer radius b (source: Levin, da Silveira & Rizzato, Am. J. Phys. 74, 815, 2006,
        // integrated across the wall), so the terminal speed m g / c falls.
        assert!(vt < previous, "terminal speed {vt} after {previous}");
        previous = vt;
        // Each point equals a separate force-curve call on the same design: same solver, same
        // resolution, agreement to rounding (common practice).
        let mut design = sample_design();
        design["tube"]["wall_thickness_m"] = json!(wall);
        let curve = app
            .post_ok("/v1/force-curve", &json!({ "design": design }))
            .await;
        let direct = curve["terminal_speed_m_per_s"].as_f64().expect("direct");
        assert!(rel(vt, direct) < 1e-9, "sweep {vt} vs force curve {direct}");
        let c = p["metrics"]["damping_n_s_per_m"].as_f64().expect("damping");
        let c_direct = curve["damping_n_s_per_m"].as_f64().expect("damping");
        assert!(
            rel(c, c_direct) < 1e-9,
            "sweep {c} vs force curve {c_direct}"
        );
    }
}

#[tokio::test]
async fn the_stream_has_a_header_one_line_per_point_and_an_end_line() {
    let app = start_app().await;
    let request = json!({
        "design": sample_design(),
        "vary": [
            { "path": "tube.wall_thickness_m", "values": [0.001, 0.002, 0.003] },
            { "path": "load.payload_mass_kg", "from": 0.0, "to": 0.1, "steps": 4 }
        ],
        "metrics": ["terminal_speed_m_per_s", "drive_force_n"]
    });
    let lines = post_ndjson(&app, &request).await;
    let kinds: Vec<&str> = lines
        .iter()
        .map(|(_, l)| l["kind"].as_str().expect("kind"))
        .collect();
    // source: the stream layout documented for the endpoint (a header, one line per point,
    // an end line); 3 x 4 = 12 points.
    assert_eq!(kinds.len(), 1 + 12 + 1);
    assert_eq!(kinds[0], "header");
    assert_eq!(kinds[13], "end");
    assert!(kinds[1..13].iter().all(|k| *k == "point"));
    let header = &lines[0].1;
    assert_eq!(header["points_total"], 12);
    crate::force_curve::assert_standing_caution_first(header);
    let end = &lines[13].1;
    assert_eq!(end["complete"], true);
    assert_eq!(end["points_sent"], 12);
    assert_eq!(end["failed_points"], 0);
    assert!(end["reason"].is_null());
    // Every grid index exactly once, and each streamed point equals the JSON answer's.
    let json_answer = app.post_ok("/v1/sweep", &request).await;
    let mut seen: Vec<u64> = Vec::new();
    for (_, line) in &lines[1..13] {
        let index = line["index"].as_u64().expect("index");
        seen.push(index);
        let same = &json_answer["points"][index as usize];
        assert_eq!(line["inputs"], same["inputs"]);
        assert_eq!(line["metrics"], same["metrics"]);
        // The driving force of a vertical drop is the weight (m_magnet + payload) g; payload
        // steps of 0.1/3 kg add 0.1/3 g each (source: Newton's second law, common practice).
        let payload = line["inputs"]["load.payload_mass_kg"]
            .as_f64()
            .expect("payload");
        let drive = line["metrics"]["drive_force_n"].as_f64().expect("drive");
        let bare = json_answer["points"][0]["metrics"]["drive_force_n"]
            .as_f64()
            .expect("bare drive");
        assert!(
            (drive - bare - payload * crate::helpers::G0).abs() < 1e-9 * drive,
            "drive {drive} with payload {payload} kg, bare {bare}"
        );
    }
    seen.sort_unstable();
    assert_eq!(seen, (0..12).collect::<Vec<u64>>());
    // Load axes vary fastest (they share the steady solver), whatever the request's order.
    assert_eq!(json_answer["axes"][1]["path"], "load.payload_mass_kg");
}

/// An invented heavy design (eight alternating magnets in a 10 mm copper wall, as in the
/// concurrency tests) over `steps` wall thicknesses: seconds of work on two cores, every point
/// needing its own steady solver.
fn heavy_sweep(steps: u32) -> Value {
    let mut request = json!({
        "design": crate::helpers::heavy_force_curve(1)["design"].clone(),
        "vary": [{ "path": "tube.wall_thickness_m", "from": 0.002, "to": 0.012, "steps": steps }],
        "metrics": ["terminal_speed_m_per_s"]
    });
    request["design"]["load"] = json!({ "payload_mass_kg": 0.5 });
    request
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_stream_past_the_request_timeout_ends_with_an_incomplete_end_line() {
    let app = start_app_with(&["--request-timeout-s", "1"]).await;
    let lines = post_ndjson(&app, &heavy_sweep(8000)).await;
    let (arrived, end) = lines.last().expect("lines");
    assert_eq!(end["kind"], "end", "{end}");
    assert_eq!(end["complete"], false);
    let reason = end["reason"].as_str().unwrap_or_default();
    assert!(reason.contains("timeout"), "{reason}");
    let sent = end["points_sent"].as_u64().expect("points_sent");
    assert_eq!(
        sent as usize,
        lines.len() - 2,
        "the end line counts the point lines"
    );
    assert!(sent < 8000);
    // The stream ends at the deadline, not when the computation ends (source: the endpoint's
    // documented behaviour; 1 s timeout, generous margin for a loaded machine).
    assert!(*arrived < Duration::from_secs(5), "ended after {arrived:?}");
    app.assert_healthy().await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_client_that_goes_away_frees_the_slot_when_the_computation_ends() {
    let app = start_app_with(&["--max-concurrent-jobs", "1"]).await;
    let response = app
        .client
        .post(format!("{}/v1/sweep", app.base))
        .header("accept", "application/x-ndjson")
        .json(&heavy_sweep(300))
        .send()
        .await
        .expect("request sent");
    let mut chunks = response.bytes_stream();
    let first = chunks
        .next()
        .await
        .expect("a first chunk")
        .expect("readable");
    assert!(first.starts_with(br#"{"kind":"header""#));
    drop(chunks);
    // The slot stays taken while the remaining points compute, then frees (common practice:
    // running computations cannot be cancelled, only bounded).
    let deadline = Instant::now() + Duration::from_secs(60);
    loop {
        let ready: Value = app.get("/readyz").await.json().await.expect("json");
        if ready["job_slots_free"] == 1 {
            break;
        }
        assert!(Instant::now() < deadline, "the slot never freed: {ready}");
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
    let metrics = app.get("/metrics").await.text().await.expect("metrics");
    assert!(
        metrics.contains(r#"ringdrag_jobs_total{job="sweep",outcome="client_gone"} 1"#),
        "{metrics}"
    );
    // The service takes the next sweep at once.
    let body = app
        .post_ok("/v1/sweep", &wall_sweep(3, &["damping_n_s_per_m"]))
        .await;
    assert_eq!(body["points"].as_array().map(Vec::len), Some(3));
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_first_point_arrives_while_a_large_sweep_still_computes() {
    // A process of its own: a long sweep keeps rayon's pool busy, and the pool is per
    // process (see `bounded::red_team_requests_are_refused_or_bounded`).
    let app = spawn_binary_with(&["--request-timeout-s", "600"], &[], Logs::Quiet).await;
    let request = heavy_sweep(800);
    let started = Instant::now();
    let response = app
        .client
        .post(format!("{}/v1/sweep", app.base))
        .header("accept", "application/x-ndjson")
        .json(&request)
        .send()
        .await
        .expect("request sent");
    assert_eq!(response.status().as_u16(), 200);
    let mut chunks = response.bytes_stream();
    let mut pending = Vec::new();
    let mut first_point_at = None;
    let mut in_flight_at_first_point = None;
    let mut points = 0u64;
    let mut end = Value::Null;
    while let Some(chunk) = chunks.next().await {
        pending.extend_from_slice(&chunk.expect("chunk"));
        while let Some(at) = pending.iter().position(|b| *b == b'\n') {
            let line: Value =
                serde_json::from_slice(&pending.drain(..=at).collect::<Vec<u8>>()).expect("line");
            match line["kind"].as_str() {
                Some("point") => {
                    points += 1;
                    if first_point_at.is_none() {
                        first_point_at = Some(started.elapsed());
                        // Is the sweep's job still running? (The gauge drops to 0 when the
                        // computation ends.)
                        let metrics = app.get("/metrics").await.text().await.expect("metrics");
                        in_flight_at_first_point = Some(sweep_jobs_in_flight(&metrics));
                    }
                }
                Some("end") => end = line,
                _ => {}
            }
        }
    }
    let total = started.elapsed();
    let first = first_point_at.expect("a point arrived");
    assert_eq!(points, 800);
    assert_eq!(end["complete"], true, "{end}");
    // The stream is not buffered until the end: when the first point arrives the sweep still
    // holds its job slot (order, not wall time; common practice for streaming: progress is
    // visible while the job runs).
    assert_eq!(
        in_flight_at_first_point,
        Some(1.0),
        "first point after {first:?} of {total:?}"
    );
    app.assert_healthy().await;
}

/// The value of `ringdrag_jobs_in_flight{job="sweep"}` in a Prometheus exposition.
fn sweep_jobs_in_flight(metrics: &str) -> f64 {
    metrics
        .lines()
        .find(|l| l.starts_with(r#"ringdrag_jobs_in_flight{job="sweep"}"#))
        .and_then(|l| l.rsplit(' ').next())
        .and_then(|v| v.parse().ok())
        .unwrap_or(0.0)
}

#[tokio::test]
async fn a_failed_point_keeps_its_error_and_the_others_still_arrive() {
    let app = start_app().await;
    // The bore is 13 mm: a 14 mm magnet does not fit (source: geometry, common practice).
    let request = json!({
        "design": sample_design(),
        "vary": [{ "path": "magnets.outer_diameter_m", "values": [0.010, 0.014, 0.012] }],
        "metrics": ["damping_n_s_per_m"]
    });
    let body = app.post_ok("/v1/sweep", &request).await;
    let points = body["points"].as_array().expect("points");
    assert_eq!(body["failed_points"], 1);
    let error = points[1]["error"].as_str().expect("the 14 mm point fails");
    assert!(error.contains("magnets.outer_diameter_m"), "{error}");
    assert!(points[1]["metrics"]["damping_n_s_per_m"].is_null());
    assert!(points[0]["metrics"]["damping_n_s_per_m"].as_f64().is_some());
    assert!(points[2]["metrics"]["damping_n_s_per_m"].as_f64().is_some());
    assert!(
        body["cautions"]
            .as_array()
            .expect("cautions")
            .iter()
            .any(|c| c
                .as_str()
                .is_some_and(|c| c.contains("1 of 3 points failed")))
    );
    let lines = post_ndjson(&app, &request).await;
    let end = &lines.last().expect("lines").1;
    assert_eq!(end["kind"], "end");
    assert_eq!(end["complete"], true);
    assert_eq!(end["points_sent"], 3);
    assert_eq!(end["failed_points"], 1);
}

#[tokio::test]
async fn bad_sweeps_are_refused_naming_the_field() {
    let app = start_app_with(&["--max-sweep-points", "100"]).await;
    let cases = [
        (
            json!([{ "path": "tube.colour_m", "values": [1.0] }]),
            json!(["damping_n_s_per_m"]),
            "vary[0].path",
            "invalid-input",
        ),
        (
            json!([{ "path": "tube.wall_thickness_m", "values": [0.001] }]),
            json!(["damping_n_s_per_m", "braking_colour"]),
            "metrics[1]",
            "invalid-input",
        ),
        (
            // 11 x 10 = 110 points against a limit of 100.
            json!([
                { "path": "tube.wall_thickness_m", "from": 0.001, "to": 0.002, "steps": 11 },
                { "path": "load.payload_mass_kg", "from": 0.0, "to": 1.0, "steps": 10 }
            ]),
            json!(["damping_n_s_per_m"]),
            "vary",
            "job-too-large",
        ),
        (
            // Refused before four billion values are made.
            json!([{ "path": "tube.wall_thickness_m", "from": 0.001, "to": 0.002, "steps": 4_000_000_000u64 }]),
            json!(["damping_n_s_per_m"]),
            "vary[0].steps",
            "job-too-large",
        ),
        (
            // 30 points of inductive strokes cost 30 x 50 = 1500 units against 100.
            json!([{ "path": "tube.wall_thickness_m", "from": 0.001, "to": 0.002, "steps": 30 }]),
            json!(["exit_time_s"]),
            "metrics",
            "job-too-large",
        ),
        (
            json!([{ "path": "tube.wall_thickness_m", "from": 0.001, "to": 0.002 }]),
            json!(["damping_n_s_per_m"]),
            "vary[0]",
            "invalid-input",
        ),
        (
            json!([{ "path": "tube.wall_thickness_m", "values": [0.001] },
                   { "path": "design.tube.wall_thickness_m", "values": [0.002] }]),
            json!(["damping_n_s_per_m"]),
            "vary[1].path",
            "invalid-input",
        ),
        (
            json!([]),
            json!(["damping_n_s_per_m"]),
            "vary",
            "invalid-input",
        ),
    ];
    for (vary, metrics, path, kind) in cases {
        let body = json!({ "design": sample_design(), "vary": vary, "metrics": metrics });
        let problem = expect_problem(app.post_json("/v1/sweep", &body).await, 422).await;
        let paths = error_paths(&problem);
        assert_eq!(paths, [path], "{problem}");
        assert_eq!(
            problem["type"],
            format!("urn:ringdrag:problem:{kind}"),
            "{problem}"
        );
    }
    // A bad base design field that is not varied is refused at once; the varied one is left
    // to the points.
    let mut design = sample_design();
    design["tube"]["material"] = json!("unobtainium");
    design["tube"]["wall_thickness_m"] = json!(-1.0);
    let body = json!({
        "design": design,
        "vary": [{ "path": "tube.wall_thickness_m", "values": [0.001] }],
        "metrics": ["damping_n_s_per_m"]
    });
    let problem = expect_problem(app.post_json("/v1/sweep", &body).await, 422).await;
    assert_eq!(error_paths(&problem), ["design.tube.material"], "{problem}");
    // Accept that allows none of JSON, NDJSON and SVG.
    let response = app
        .client
        .post(format!("{}/v1/sweep", app.base))
        .header("accept", "text/html")
        .json(&wall_sweep(2, &["damping_n_s_per_m"]))
        .send()
        .await
        .expect("sent");
    let problem = expect_problem(response, 406).await;
    let detail = problem["detail"].as_str().unwrap_or_default();
    assert!(detail.contains("application/x-ndjson"), "{detail}");
    app.assert_healthy().await;
}
