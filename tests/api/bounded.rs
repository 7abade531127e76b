//! Bounded work end to end (issue 14): the red-team requests that used to abort the process or
//! hold a job slot for minutes to days answer a 4xx naming the field to change, or finish within
//! their deadline, while `/healthz` keeps answering; and a job past its deadline frees its
//! slot for the next request instead of leaving it 503.

use crate::helpers::{
    Logs, TestApp, error_paths, sample_design, spawn_binary_with, start_app_with,
};
use serde_json::{Value, json};
use std::time::{Duration, Instant};

/// Request timeout of the server in the red-team test, s.
const TIMEOUT_S: u64 = 10;

fn design(od: f64, lm: f64, count: u32, spacer: f64, bore: f64, wall: f64, tube_len: f64) -> Value {
    json!({
        "magnets": {"outer_diameter_m": od, "length_m": lm, "count": count, "grade": "N42",
                    "spacer_length_m": spacer, "polarity": "alternating"},
        "tube": {"inner_diameter_m": bore, "wall_thickness_m": wall, "length_m": tube_len,
                 "material": "copper-c12200"},
        "load": {}
    })
}

/// The copper-drop example with the magnet 1e-12 m narrower than the bore.
fn copper_drop_to_the_bore() -> Value {
    let mut d = sample_design();
    d["magnets"]["outer_diameter_m"] = json!(0.012999999999);
    d
}

/// Sends `body` to `path`: it must answer 200, a 422 naming a request field, or (on a loaded
/// machine) the 503 `timeout` of a job cancelled at its deadline, within the deadline plus
/// slack; and `/healthz` must answer right after.
async fn bounded(app: &TestApp, what: &str, path: &str, body: &Value, accept: Option<&str>) {
    let started = Instant::now();
    let mut req = app.client.post(format!("{}{path}", app.base)).json(body);
    if let Some(a) = accept {
        req = req.header("accept", a);
    }
    let r = req.send().await.expect("sent");
    let status = r.status().as_u16();
    let text = r.text().await.expect("body");
    let elapsed = started.elapsed();
    match status {
        200 => {}
        422 => {
            let problem: Value = serde_json::from_str(&text).expect("problem");
            let paths = error_paths(&problem);
            assert!(!paths.is_empty(), "{what}: no field named: {problem}");
            assert!(
                problem["type"]
                    .as_str()
                    .is_some_and(|t| t.ends_with("job-too-large") || t.ends_with("invalid-input")),
                "{what}: {problem}"
            );
        }
        503 if text.contains("urn:ringdrag:problem:timeout") => {}
        other => panic!("{what}: answered {other}: {text}"),
    }
    // Relative slack: the deadline, plus as much again for a shared machine.
    assert!(
        elapsed < Duration::from_secs(2 * TIMEOUT_S),
        "{what}: took {elapsed:?}"
    );
    app.assert_healthy().await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn red_team_requests_are_refused_or_bounded() {
    let timeout = TIMEOUT_S.to_string();
    // A process of its own: these jobs keep rayon's pool busy up to their deadline, and the
    // pool is per process (rayon runs a worker's own tasks before jobs injected from outside,
    // so in process the other tests' sweeps and sizings would wait for them).
    let app = spawn_binary_with(
        &["--request-timeout-s", &timeout, "--cache-entries", "0"],
        &[],
        Logs::Quiet,
    )
    .await;
    // The 1 um magnet driven at 100 N from 1 m before a 1 mm tube (150 GB flux table before).
    let tiny = json!({"design":{"magnets":{"outer_diameter_m":1e-06,"length_m":0.0005,"count":1,"grade":"N42"},
        "tube":{"inner_diameter_m":0.002,"wall_thickness_m":0.001,"length_m":0.001,"material":"copper-c12200"},
        "load":{"applied_force_n":100.0}},"fidelity":"auto","start":{"position_m":-1.0,"speed_m_per_s":0.0}});
    bounded(&app, "1 um magnet", "/v1/simulate", &tiny, None).await;
    // The same design through a sweep with a stroke metric and sizing with a time target.
    let sweep = json!({"design": tiny["design"],
        "vary": [{"path": "load.applied_force_n", "from": 50.0, "to": 100.0, "steps": 3}],
        "metrics": ["exit_time_s"], "start": {"position_m": -1.0}});
    bounded(&app, "1 um magnet, sweep", "/v1/sweep", &sweep, None).await;
    bounded(
        &app,
        "1 um magnet, sweep NDJSON",
        "/v1/sweep",
        &sweep,
        Some("application/x-ndjson"),
    )
    .await;
    let size = json!({"design": tiny["design"],
        "vary": {"path": "load.applied_force_n", "min": 1.0, "max": 100.0},
        "target": {"max_exit_time_s": 1.0}, "start": {"position_m": -1.0}});
    bounded(&app, "1 um magnet, size", "/v1/size", &size, None).await;
    // 64 magnets 60 um across, 1 m long, 0.63 m spacers, 0.1 mm bore, quasi-static (68 GB).
    let long = json!({"design": design(60e-6, 1.0, 64, 0.63, 1e-4, 5e-5, 0.01),
        "fidelity": "quasi_static", "start": {"position_m": -1.0}});
    let r = app.post_json("/v1/simulate", &long).await;
    let problem = crate::helpers::expect_problem(r, 422).await;
    assert_eq!(
        problem["type"], "urn:ringdrag:problem:job-too-large",
        "{problem}"
    );
    assert!(
        error_paths(&problem)
            .iter()
            .any(|p| p.starts_with("design.magnets")),
        "{problem}"
    );
    app.assert_healthy().await;
    // 64 one-metre magnets 1 mm across in a 1.2 mm bore (2.9 GB before).
    let metre = json!({"design": design(1e-3, 1.0, 64, 0.0, 1.2e-3, 1e-3, 1.0)});
    bounded(&app, "64 one-metre magnets", "/v1/simulate", &metre, None).await;
    bounded(
        &app,
        "64 one-metre magnets",
        "/v1/force-curve",
        &metre,
        None,
    )
    .await;
    // Clearances 1e-5 .. 1e-8 m (0.07 s .. 47 s before): each computes.
    for clearance in [1e-5, 1e-6, 1e-7, 1e-8] {
        let mut d = sample_design();
        d["magnets"]["outer_diameter_m"] = json!(0.013 - 2.0 * clearance);
        let r = app
            .post_json("/v1/force-curve", &json!({"design": d}))
            .await;
        assert_eq!(r.status().as_u16(), 200, "clearance {clearance}");
        app.assert_healthy().await;
    }
    // The copper-drop example against the bore (days before).
    let drop = copper_drop_to_the_bore();
    bounded(
        &app,
        "copper drop to the bore",
        "/v1/force-curve",
        &json!({"design": drop}),
        None,
    )
    .await;
    bounded(
        &app,
        "copper drop to the bore",
        "/v1/simulate",
        &json!({"design": drop, "start": {"position_m": -0.03}}),
        None,
    )
    .await;
    // Sweeps to the bore with a stroke metric, JSON and NDJSON.
    let sweep = json!({"design": sample_design(),
        "vary": [{"path": "magnets.outer_diameter_m", "from": 0.0125, "to": 0.012999999999, "steps": 4}],
        "metrics": ["exit_time_s", "terminal_speed_m_per_s"], "start": {"position_m": -0.03}});
    bounded(&app, "sweep to the bore", "/v1/sweep", &sweep, None).await;
    bounded(
        &app,
        "sweep to the bore, NDJSON",
        "/v1/sweep",
        &sweep,
        Some("application/x-ndjson"),
    )
    .await;
    // Sizing over a range up to the bore with a time target.
    let size = json!({"design": sample_design(),
        "vary": {"path": "magnets.outer_diameter_m", "min": 0.008, "max": 0.012999999999},
        "target": {"min_exit_time_s": 1.0}, "start": {"position_m": -0.03}});
    bounded(&app, "size to the bore", "/v1/size", &size, None).await;
    // Tolerance corners that push the magnet to the bore.
    let mut d = sample_design();
    d["magnets"]["outer_diameter_m"] = json!(0.0129);
    let tol = json!({"design": d, "tolerances": {"magnet_outer_diameter_m": 0.0000999999}});
    bounded(
        &app,
        "tolerances to the bore",
        "/v1/force-curve",
        &tol,
        None,
    )
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn subnormal_inputs_name_the_field() {
    let app = crate::helpers::start_app().await;
    let mut d = sample_design();
    d["magnets"]["outer_diameter_m"] = json!(5e-324);
    let r = app
        .post_json("/v1/force-curve", &json!({"design": d}))
        .await;
    let problem = crate::helpers::expect_problem(r, 422).await;
    assert!(
        error_paths(&problem).contains(&"design.magnets.outer_diameter_m".to_string()),
        "{problem}"
    );
}

/// In-flight jobs of every kind, read from `/metrics`.
async fn jobs_in_flight(app: &TestApp) -> f64 {
    let text = app.get("/metrics").await.text().await.expect("metrics");
    text.lines()
        .filter(|l| l.starts_with("ringdrag_jobs_in_flight"))
        .filter_map(|l| l.rsplit(' ').next()?.parse::<f64>().ok())
        .sum()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_timed_out_job_frees_its_slot() {
    // One slot, a 1 s request timeout, a 500 ms queue wait, no cache.
    let app = start_app_with(&[
        "--max-concurrent-jobs",
        "1",
        "--request-timeout-s",
        "1",
        "--queue-wait-ms",
        "500",
        "--cache-entries",
        "0",
    ])
    .await;
    // A sweep of 150 ring-circuit strokes through a 2 m tube: many seconds of work.
    let mut d = sample_design();
    d["tube"]["length_m"] = json!(2.0);
    let heavy = json!({"design": d,
        "vary": [{"path": "tube.wall_thickness_m", "from": 0.001, "to": 0.004, "steps": 10},
                 {"path": "magnets.length_m", "from": 0.01, "to": 0.03, "steps": 15}],
        "metrics": ["exit_time_s"], "fidelity": "inductive", "start": {"position_m": -0.03}});
    let r = app.post_json("/v1/sweep", &heavy).await;
    let at_deadline = Instant::now();
    let problem = crate::helpers::expect_problem(r, 503).await;
    assert_eq!(problem["type"], "urn:ringdrag:problem:timeout", "{problem}");
    // The slot frees once the cancelled job returns; poll the gauge (bounded loop).
    let mut released = None;
    for _ in 0..400 {
        if jobs_in_flight(&app).await == 0.0 {
            released = Some(at_deadline.elapsed());
            break;
        }
        tokio::time::sleep(Duration::from_millis(5)).await;
    }
    let released = released.expect("the timed-out job frees its slot");
    eprintln!("slot released {released:?} after the timeout answer");
    // A following request gets the slot rather than 503.
    let r = app
        .post_json("/v1/force-curve", &json!({"design": sample_design()}))
        .await;
    assert_eq!(r.status().as_u16(), 200);
    app.assert_healthy().await;
}
