//! Many requests at once: right answers, bounded computation, shed load, deadlines, and a
//! liveness probe that keeps answering.

use crate::helpers::{expect_problem, heavy_force_curve, rel, sample_design, start_app_with};
use serde_json::{Value, json};
use std::time::{Duration, Instant};

fn in_flight(metrics: &str) -> f64 {
    metrics
        .lines()
        .find(|l| l.starts_with(r#"ringdrag_jobs_in_flight{job="force_curve"}"#))
        .and_then(|l| l.rsplit(' ').next())
        .and_then(|v| v.parse().ok())
        .unwrap_or(0.0)
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn many_concurrent_requests_are_answered_correctly() {
    let app = start_app_with(&["--queue-wait-ms", "60000"]).await;
    let n = 24;
    let mut tasks = Vec::new();
    for k in 1..=n {
        let client = app.client.clone();
        let url = format!("{}/v1/force-curve", app.base);
        let mut design = sample_design();
        design["tube"]["conductivity_s_per_m"] = json!(1.0e6 * k as f64);
        let body = json!({ "design": design, "speeds_m_per_s": [0.01, 0.1] });
        tasks.push(tokio::spawn(async move {
            let r = client.post(url).json(&body).send().await.expect("sent");
            assert_eq!(r.status().as_u16(), 200);
            let v: Value = r.json().await.expect("json");
            (k, v["damping_n_s_per_m"].as_f64().expect("damping"))
        }));
    }
    let mut results = Vec::new();
    for t in tasks {
        results.push(t.await.expect("task"));
    }
    // Each answer belongs to its own request: the low-speed damping is proportional to the
    // conductivity (source: Levin, da Silveira & Rizzato, Am. J. Phys. 74, 815, 2006).
    let (_, base) = results[0];
    for (k, damping) in results {
        assert!(
            rel(damping, base * k as f64) < 1e-6,
            "request {k}: damping {damping}, expected {}",
            base * k as f64
        );
    }
    app.assert_healthy().await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn liveness_answers_while_every_slot_computes() {
    let app = start_app_with(&["--max-concurrent-jobs", "1", "--queue-wait-ms", "60000"]).await;
    // Calibration: one heavy job alone, timed on this machine now (a distinct speed, so the
    // cache does not answer the jobs below).
    let mut alone = heavy_force_curve(2000);
    alone["speeds_m_per_s"][0] = json!(0.000123);
    let started = Instant::now();
    app.post_ok("/v1/force-curve", &alone).await;
    let one_job = started.elapsed();
    let body = heavy_force_curve(2000);
    let mut tasks = Vec::new();
    for _ in 0..6 {
        let client = app.client.clone();
        let url = format!("{}/v1/force-curve", app.base);
        let body = body.clone();
        tasks.push(tokio::spawn(async move {
            client
                .post(url)
                .json(&body)
                .send()
                .await
                .expect("sent")
                .status()
                .as_u16()
        }));
    }
    tokio::time::sleep(Duration::from_millis(100)).await;
    let mut slowest = Duration::ZERO;
    let mut max_in_flight: f64 = 0.0;
    for _ in 0..10 {
        let started = Instant::now();
        app.assert_healthy().await;
        slowest = slowest.max(started.elapsed());
        let metrics = app.get("/metrics").await.text().await.expect("metrics");
        max_in_flight = max_in_flight.max(in_flight(&metrics));
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
    // The slot was seen busy, and never more than the configured one.
    assert_eq!(max_in_flight, 1.0, "in flight {max_in_flight}");
    // Liveness does not wait for a job: the slowest probe took well under the time of one
    // heavy job measured above on this machine (common practice: a probe answers inside its
    // timeout whatever the load).
    assert!(
        slowest < one_job / 2,
        "healthz took {slowest:?}; one job alone {one_job:?}"
    );
    for t in tasks {
        assert_eq!(t.await.expect("task"), 200);
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn overload_is_shed_with_503_and_retry_after() {
    let app = start_app_with(&["--max-concurrent-jobs", "1", "--queue-wait-ms", "0"]).await;
    let body = heavy_force_curve(2000);
    let mut tasks = Vec::new();
    for _ in 0..8 {
        let client = app.client.clone();
        let url = format!("{}/v1/force-curve", app.base);
        let body = body.clone();
        tasks.push(tokio::spawn(async move {
            client.post(url).json(&body).send().await.expect("sent")
        }));
    }
    let (mut ok, mut shed) = (0, 0);
    for t in tasks {
        let response = t.await.expect("task");
        match response.status().as_u16() {
            200 => ok += 1,
            503 => {
                let retry: u64 = response
                    .headers()
                    .get("retry-after")
                    .and_then(|v| v.to_str().ok())
                    .and_then(|v| v.parse().ok())
                    .expect("Retry-After in whole seconds");
                assert!(retry >= 1);
                let problem = expect_problem(response, 503).await;
                assert_eq!(problem["type"], "urn:ringdrag:problem:overloaded");
                shed += 1;
            }
            other => panic!("unexpected status {other}"),
        }
    }
    assert!(ok >= 1 && shed >= 1, "ok {ok}, shed {shed}");
    app.assert_healthy().await;
    let metrics = app.get("/metrics").await.text().await.expect("metrics");
    assert!(metrics.contains(r#"ringdrag_jobs_total{job="force_curve",outcome="overloaded"}"#));
    assert!(metrics.contains(r#"route="/v1/force-curve",status="503"}"#));
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_job_past_the_request_timeout_is_503() {
    // A larger speed cap (and body limit) makes one force curve take several seconds: 300,000
    // speeds took about 4 s here, past the 1 s timeout. The checks are on order and outcome:
    // the 503 comes while the job still holds its slot (it keeps it until it really ends).
    let app = start_app_with(&[
        "--request-timeout-s",
        "1",
        "--max-speeds",
        "1000000",
        "--max-body-bytes",
        "8000000",
    ])
    .await;
    let response = app
        .post_json("/v1/force-curve", &heavy_force_curve(300_000))
        .await;
    let metrics = app.get("/metrics").await.text().await.expect("metrics");
    assert!(response.headers().get("retry-after").is_some());
    let problem = expect_problem(response, 503).await;
    assert_eq!(problem["type"], "urn:ringdrag:problem:timeout");
    assert_eq!(
        in_flight(&metrics),
        1.0,
        "the answer waited for the job to end"
    );
    app.assert_healthy().await;
}
