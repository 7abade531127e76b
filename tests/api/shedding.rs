//! Saturation: past its one job slot the service sheds work with 503 and `Retry-After`, while
//! `/healthz` and `/readyz` keep answering promptly.

use crate::helpers::{expect_problem, heavy_force_curve, start_app_with};
use serde_json::json;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

/// How long the clients keep the service saturated.
const SATURATION: Duration = Duration::from_millis(1500);

/// Clients sending heavy requests back to back.
const CLIENTS: usize = 4;

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_saturated_service_sheds_load_and_stays_live() {
    // One slot, a 10 ms queue wait, and no cache (every request must compute).
    let app = start_app_with(&[
        "--max-concurrent-jobs",
        "1",
        "--queue-wait-ms",
        "10",
        "--cache-entries",
        "0",
    ])
    .await;
    // Calibration: one heavy job alone, timed on this machine now.
    let started = Instant::now();
    app.post_ok("/v1/force-curve", &heavy_force_curve(2000))
        .await;
    let one_job = started.elapsed();
    let running = Arc::new(AtomicBool::new(true));
    let mut clients = Vec::new();
    for c in 0..CLIENTS {
        let client = app.client.clone();
        let url = format!("{}/v1/force-curve", app.base);
        let running = Arc::clone(&running);
        clients.push(tokio::spawn(async move {
            let (mut ok, mut shed) = (0u32, 0u32);
            let mut n = 0;
            // Bounded: stops when told, and after 200 requests at most.
            while running.load(Ordering::Relaxed) && n < 200 {
                n += 1;
                // Distinct speeds, so no two requests are the same job.
                let mut body = heavy_force_curve(2000);
                body["speeds_m_per_s"][0] = json!(0.001 * (c * 1000 + n) as f64);
                let r = client.post(&url).json(&body).send().await.expect("sent");
                match r.status().as_u16() {
                    200 => ok += 1,
                    503 => {
                        let retry: u64 = r
                            .headers()
                            .get("retry-after")
                            .and_then(|v| v.to_str().ok())
                            .and_then(|v| v.parse().ok())
                            .expect("Retry-After in whole seconds");
                        assert!(retry >= 1);
                        let problem = expect_problem(r, 503).await;
                        assert_eq!(problem["type"], "urn:ringdrag:problem:overloaded");
                        shed += 1;
                    }
                    other => panic!("unexpected status {other}"),
                }
            }
            (ok, shed)
        }));
    }
    // While the clients saturate the slot, the probes answer, fast.
    tokio::time::sleep(Duration::from_millis(100)).await;
    let started = Instant::now();
    let mut slowest = Duration::ZERO;
    let mut probes = 0;
    let mut saw_busy = false;
    while started.elapsed() < SATURATION {
        let t = Instant::now();
        app.assert_healthy().await;
        slowest = slowest.max(t.elapsed());
        let ready: serde_json::Value = app.get("/readyz").await.json().await.expect("json");
        assert_eq!(ready["status"], "ready", "busy is not unready");
        saw_busy |= ready["job_slots_free"] == json!(0);
        probes += 1;
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
    running.store(false, Ordering::Relaxed);
    let (mut ok, mut shed) = (0, 0);
    for c in clients {
        let (o, s) = c.await.expect("client task");
        ok += o;
        shed += s;
    }
    assert!(saw_busy, "the slot was never seen busy");
    assert!(ok >= 1 && shed >= 1, "ok {ok}, shed {shed}");
    // Probes do not wait for jobs: the slowest took well under one heavy job measured above
    // on this machine (common practice: a liveness probe must answer well inside its timeout).
    assert!(
        slowest < one_job / 2,
        "healthz took {slowest:?} over {probes} probes; one job alone {one_job:?}"
    );
    app.assert_healthy().await;
}
