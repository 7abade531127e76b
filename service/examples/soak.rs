//! `soak`: a bounded loopback soak of the ringdrag service with hostile and heavy clients at
//! once.
//!
//! It starts the release `ringdrag` binary on 127.0.0.1 (by default under an open-file limit
//! of 1024, as on many hosts) and, for `--duration-s` seconds (at most 300), runs together:
//! - **idle connections** (`--idle`): opened and never used; reopened whenever the server
//!   closes them (an attacker holding sockets);
//! - **slow heads** (`--slow-heads`): send a request head one byte every 2 s; reconnect when
//!   cut off;
//! - **slow bodies** (`--slow-bodies`): send a complete head for `POST /v1/force-curve` with a
//!   5,000-byte body, then one byte every 2 s; reconnect when cut off;
//! - **heavy jobs** (`--heavy`): clients sending a heavy stroke (the invented incline carriage
//!   of `examples/`) back to back, each a little different so that the cache cannot help;
//! - **pathological jobs** (`--pathological`, default 0): clients sending the work-bomb
//!   designs of issue 14 (a magnet 1e-12 m narrower than its bore; a micrometre magnet in a
//!   long simulated stroke), which a service without work caps and cancellation cannot bound;
//! - **churn**: every 20 s a wave of `--churn` short connections (each one kept-alive request,
//!   then closed), and once, half-way, a burst of `--burst` connections at the same time,
//!   beyond the connection cap.
//!
//! Throughout it probes `GET /healthz` every 100 ms on a kept-alive connection, and every
//! 500 ms on a fresh connection, and samples the server's resident memory (`VmRSS`) every
//! 100 ms. At the end it closes every connection, waits 5 s and reads the memory again. It
//! prints one Markdown table of figures.
//!
//! ```sh
//! cargo build --release -p ringdrag-service --bin ringdrag --example soak
//! target/release/examples/soak                       # 120 s, the default mix
//! target/release/examples/soak --duration-s 30 --idle 200 --pathological 1
//! ```
//!
//! Bounds: 300 s, 2,000 idle connections, 500 slow clients of each kind, 64 heavy clients,
//! 2,000 connections per wave and burst; 127.0.0.1 only.

#[path = "support/loopback.rs"]
mod loopback;

use clap::Parser;
use loopback::{LoopbackServer, default_server, memory_kib, start_server};
use serde_json::{Value, json};
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::time::{Duration, Instant};
use tokio::io::{AsyncReadExt, AsyncWriteExt};
use tokio::net::TcpStream;
use tokio::sync::Mutex;

const SIMULATE_HEAVY: &str = include_str!("../../examples/simulate-incline-carriage.json");
const SAMPLE_EVERY: Duration = Duration::from_millis(100);

/// Bounded loopback soak of the ringdrag service.
#[derive(Debug, Parser)]
struct Args {
    /// The `ringdrag` binary (default: beside the `examples` directory of this program).
    #[arg(long)]
    server: Option<PathBuf>,
    /// An argument for the server, e.g. `--server-arg=--max-connections=512`; repeatable.
    #[arg(long = "server-arg", allow_hyphen_values = true)]
    server_args: Vec<String>,
    /// Open-file limit the server is started under (soft and hard); 0: inherit.
    #[arg(long, default_value_t = 1024)]
    server_file_limit: u64,
    /// Seconds of soak.
    #[arg(long, default_value_t = 120)]
    duration_s: u64,
    /// Idle connections held open.
    #[arg(long, default_value_t = 600)]
    idle: usize,
    /// Clients sending a request head one byte every 2 s.
    #[arg(long, default_value_t = 100)]
    slow_heads: usize,
    /// Clients sending a request body one byte every 2 s.
    #[arg(long, default_value_t = 50)]
    slow_bodies: usize,
    /// Clients sending heavy strokes back to back.
    #[arg(long, default_value_t = 4)]
    heavy: usize,
    /// Clients sending the work-bomb designs of issue 14 back to back.
    #[arg(long, default_value_t = 0)]
    pathological: usize,
    /// Short connections per churn wave (every 20 s).
    #[arg(long, default_value_t = 1000)]
    churn: usize,
    /// Connections opened at once half-way through (beyond the cap).
    #[arg(long, default_value_t = 600)]
    burst: usize,
}

#[derive(Debug, Default)]
struct Counters {
    idle_opened: AtomicU64,
    idle_closed_by_server: AtomicU64,
    slow_cut: AtomicU64,
    slow_answered: AtomicU64,
    heavy_ok: AtomicU64,
    heavy_503: AtomicU64,
    heavy_other: AtomicU64,
    patho_answers: Mutex<Vec<(u16, String, f64)>>,
    churn_ok: AtomicU64,
    churn_503: AtomicU64,
    churn_failed: AtomicU64,
    burst_ok: AtomicU64,
    burst_503: AtomicU64,
    burst_failed: AtomicU64,
    connect_failed: AtomicU64,
}

/// Resident memory of process `pid` now, KiB.
fn rss_kib(pid: u32) -> Option<u64> {
    memory_kib(pid).map(|(now, _peak)| now)
}

/// The one-minute load average of the machine, as `/proc/loadavg` says.
fn load_average() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .and_then(|t| t.split_whitespace().next().map(str::to_string))
        .unwrap_or_else(|| "?".to_string())
}

fn percentile(sorted: &[f64], p: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let rank = ((p * sorted.len() as f64).ceil() as usize).clamp(1, sorted.len());
    sorted[rank - 1]
}

/// Raises this program's own soft open-file limit (it holds many sockets).
#[cfg(unix)]
fn raise_own_file_limit() {
    use rustix::process::{Resource, Rlimit, getrlimit, setrlimit};
    let limit = getrlimit(Resource::Nofile);
    let _ = setrlimit(
        Resource::Nofile,
        Rlimit {
            current: limit.maximum,
            maximum: limit.maximum,
        },
    );
}

#[cfg(not(unix))]
fn raise_own_file_limit() {}

/// Starts the server of `args` (the release binary next to this example by default).
async fn start(args: &Args) -> Result<LoopbackServer, String> {
    let path = args
        .server
        .clone()
        .or_else(default_server)
        .ok_or("give --server PATH")?;
    let file_limit = (args.server_file_limit > 0).then_some(args.server_file_limit);
    start_server(&path, &args.server_args, file_limit).await
}

/// Reads until the server closes or `bound` passes; true when it closed.
async fn closed_within(stream: &mut TcpStream, bound: Duration) -> bool {
    let mut buf = [0u8; 2048];
    tokio::time::timeout(bound, async {
        loop {
            match stream.read(&mut buf).await {
                Ok(0) | Err(_) => return,
                Ok(_) => {}
            }
        }
    })
    .await
    .is_ok()
}

/// One kept-alive request on a new connection: the status, or `None` on a transport error.
async fn one_request(addr: &str) -> Option<u16> {
    let mut s = TcpStream::connect(addr).await.ok()?;
    s.write_all(b"GET /healthz HTTP/1.1\r\nHost: soak\r\n\r\n")
        .await
        .ok()?;
    let mut buf = [0u8; 1024];
    let n = tokio::time::timeout(Duration::from_secs(10), s.read(&mut buf))
        .await
        .ok()?
        .ok()?;
    let text = std::str::from_utf8(&buf[..n]).ok()?;
    text.split(' ').nth(1)?.parse().ok()
}

fn heavy_body(n: u64) -> Vec<u8> {
    let mut body: Value = serde_json::from_str(SIMULATE_HEAVY).unwrap_or(Value::Null);
    body["start"]["speed_m_per_s"] = Value::from(1.5 + 0.1 * (n % 100_000) as f64 / 100_000.0);
    serde_json::to_vec(&body).unwrap_or_default()
}

/// The work-bomb requests of issue 14, in turn, each a little different (never a cache hit).
fn pathological_body(n: u64) -> (&'static str, Value) {
    match n % 2 {
        0 => {
            let mut body: Value =
                serde_json::from_str(include_str!("../../examples/force-curve-copper-drop.json"))
                    .unwrap_or(Value::Null);
            body["design"]["magnets"]["outer_diameter_m"] = json!(0.012999999999);
            // A slightly different tube each time, so that the cache cannot answer.
            body["design"]["tube"]["length_m"] = json!(0.3 + 1e-6 * (n % 100_000) as f64);
            ("/v1/force-curve", body)
        }
        _ => (
            "/v1/simulate",
            json!({"design":{"magnets":{"outer_diameter_m":1e-06,"length_m":0.0005,"count":1,
                "grade":"N42"},"tube":{"inner_diameter_m":0.002,"wall_thickness_m":0.001,
                "length_m":0.001,"material":"copper-c12200"},
                "load":{"applied_force_n":100.0 + 1e-3 * (n % 100_000) as f64}},
                "fidelity":"auto","start":{"position_m":-1.0,"speed_m_per_s":0.0}}),
        ),
    }
}

/// What the health probes and memory samples saw.
struct Probes {
    kept_ms: Vec<f64>,
    fresh_ms: Vec<f64>,
    kept_failed: u64,
    fresh_refused: u64,
    fresh_failed: u64,
    rss_peak: u64,
}

/// Probes `/healthz` on a kept-alive connection every sample and on a fresh one every fifth,
/// and samples the server's resident memory, until `duration` has passed since `started`.
async fn probe_until(
    base: &str,
    pid: u32,
    started: Instant,
    duration: Duration,
    rss_start: u64,
) -> Result<Probes, String> {
    let probe_client = reqwest::Client::builder()
        .timeout(Duration::from_secs(10))
        .pool_max_idle_per_host(1)
        .build()
        .map_err(|e| e.to_string())?;
    let fresh_client = reqwest::Client::builder()
        .timeout(Duration::from_secs(10))
        .pool_max_idle_per_host(0)
        .build()
        .map_err(|e| e.to_string())?;
    let health = format!("{base}/healthz");
    let (mut kept_ms, mut fresh_ms) = (Vec::new(), Vec::new());
    let (mut kept_failed, mut fresh_refused, mut fresh_failed) = (0u64, 0u64, 0u64);
    let mut rss_peak = rss_start;
    let mut tick = 0u64;
    while started.elapsed() < duration {
        let t = Instant::now();
        match probe_client.get(&health).send().await {
            Ok(r) if r.status().is_success() => kept_ms.push(t.elapsed().as_secs_f64() * 1e3),
            _ => kept_failed += 1,
        }
        if tick.is_multiple_of(5) {
            let t = Instant::now();
            match fresh_client.get(&health).send().await {
                Ok(r) if r.status().is_success() => {
                    fresh_ms.push(t.elapsed().as_secs_f64() * 1e3);
                }
                Ok(r) if r.status().as_u16() == 503 => fresh_refused += 1,
                _ => fresh_failed += 1,
            }
        }
        tick += 1;
        if let Some(rss) = rss_kib(pid) {
            rss_peak = rss_peak.max(rss);
        }
        tokio::time::sleep(SAMPLE_EVERY).await;
    }
    Ok(Probes {
        kept_ms,
        fresh_ms,
        kept_failed,
        fresh_refused,
        fresh_failed,
        rss_peak,
    })
}

/// The client-side counters as table rows.
async fn print_counters(c: &Counters, burst: usize) {
    let get = |a: &AtomicU64| a.load(Ordering::Relaxed);
    println!(
        "| heavy strokes: 200 / 503 / other | {} / {} / {} |",
        get(&c.heavy_ok),
        get(&c.heavy_503),
        get(&c.heavy_other)
    );
    {
        let answers = c.patho_answers.lock().await;
        if !answers.is_empty() {
            let mut kinds: std::collections::BTreeMap<String, (u64, f64)> = Default::default();
            for (status, kind, secs) in answers.iter() {
                let e = kinds.entry(format!("{status} {kind}")).or_default();
                e.0 += 1;
                e.1 = e.1.max(*secs);
            }
            let text: Vec<String> = kinds
                .iter()
                .map(|(k, (n, max))| format!("{k}: {n} (slowest {max:.1} s)"))
                .collect();
            println!("| pathological jobs: answers | {} |", text.join("; "));
        }
    }
    println!(
        "| idle connections opened / closed by the server | {} / {} |",
        get(&c.idle_opened),
        get(&c.idle_closed_by_server)
    );
    println!(
        "| slow clients cut off / answered | {} / {} |",
        get(&c.slow_cut),
        get(&c.slow_answered)
    );
    println!(
        "| churn connections: 200 / 503 / failed | {} / {} / {} |",
        get(&c.churn_ok),
        get(&c.churn_503),
        get(&c.churn_failed)
    );
    println!(
        "| burst of {burst} at once: 200 / 503 / failed | {} / {} / {} |",
        get(&c.burst_ok),
        get(&c.burst_503),
        get(&c.burst_failed)
    );
}

/// Starts the load: idle and slow connections, heavy and pathological jobs, churn waves and
/// the burst; every task stops when `stop` is raised.
fn spawn_load(
    (idle_n, slow_heads, slow_bodies): (usize, usize, usize),
    (heavy, pathological, churn, burst): (usize, usize, usize, usize),
    base: &str,
    counters: &Arc<Counters>,
    stop: &Arc<AtomicBool>,
    (started, duration): (Instant, Duration),
) -> Result<Vec<tokio::task::JoinHandle<()>>, String> {
    let addr = Arc::new(base.trim_start_matches("http://").to_string());
    let base = base.to_string();
    let mut tasks = Vec::new();

    // Idle connections, reopened when closed.
    for _ in 0..idle_n {
        let (addr, c, stop) = (Arc::clone(&addr), Arc::clone(counters), Arc::clone(stop));
        tasks.push(tokio::spawn(idle_connection(addr, c, stop)));
    }
    // Slow heads and slow bodies, reconnecting when cut off.
    for i in 0..(slow_heads + slow_bodies) {
        let (addr, c, stop) = (Arc::clone(&addr), Arc::clone(counters), Arc::clone(stop));
        tasks.push(tokio::spawn(slow_client(addr, c, stop, i >= slow_heads)));
    }
    // Heavy and pathological jobs.
    let client = reqwest::Client::builder()
        .timeout(Duration::from_secs(120))
        .build()
        .map_err(|e| e.to_string())?;
    for _ in 0..heavy {
        let (c, stop) = (Arc::clone(counters), Arc::clone(stop));
        tasks.push(tokio::spawn(heavy_client(
            client.clone(),
            c,
            stop,
            base.clone(),
        )));
    }
    for _ in 0..pathological {
        let (c, stop) = (Arc::clone(counters), Arc::clone(stop));
        tasks.push(tokio::spawn(pathological_client(
            client.clone(),
            c,
            stop,
            base.clone(),
        )));
    }
    // Churn waves every 20 s, and one burst half-way.
    {
        let (addr, c, stop) = (Arc::clone(&addr), Arc::clone(counters), Arc::clone(stop));
        let half = duration / 2;
        tasks.push(tokio::spawn(churn_waves(
            addr,
            c,
            stop,
            (started, half),
            (churn, burst),
        )));
    }

    Ok(tasks)
}

/// Distinct request numbers, so that no request is a cache hit.
static N: AtomicU64 = AtomicU64::new(0);

/// One idle connection, reopened when the server closes it.
async fn idle_connection(addr: Arc<String>, c: Arc<Counters>, stop: Arc<AtomicBool>) {
    while !stop.load(Ordering::Relaxed) {
        let Ok(mut s) = TcpStream::connect(addr.as_str()).await else {
            c.connect_failed.fetch_add(1, Ordering::Relaxed);
            tokio::time::sleep(Duration::from_secs(1)).await;
            continue;
        };
        c.idle_opened.fetch_add(1, Ordering::Relaxed);
        while !stop.load(Ordering::Relaxed) {
            if closed_within(&mut s, Duration::from_secs(1)).await {
                c.idle_closed_by_server.fetch_add(1, Ordering::Relaxed);
                break;
            }
        }
    }
}

/// One slow client (a trickled head, or a trickled body when `body`), reconnecting when
/// cut off.
async fn slow_client(addr: Arc<String>, c: Arc<Counters>, stop: Arc<AtomicBool>, body: bool) {
    while !stop.load(Ordering::Relaxed) {
        let Ok(mut s) = TcpStream::connect(addr.as_str()).await else {
            c.connect_failed.fetch_add(1, Ordering::Relaxed);
            tokio::time::sleep(Duration::from_secs(1)).await;
            continue;
        };
        let (first, trickle): (Vec<u8>, &[u8]) = if body {
            (
                b"POST /v1/force-curve HTTP/1.1\r\nHost: soak\r\nContent-Type: \
                  application/json\r\nContent-Length: 5000\r\n\r\n"
                    .to_vec(),
                b"{\"design\": {\"magnets\": {\"grade\": \"N42\"",
            )
        } else {
            (
                Vec::new(),
                b"GET /healthz HTTP/1.1\r\nHost: soak\r\nX-Slow: aaaaaaaaaaaaaaaaaaaa",
            )
        };
        if s.write_all(&first).await.is_err() {
            continue;
        }
        let mut cut = false;
        for byte in trickle {
            if stop.load(Ordering::Relaxed) {
                break;
            }
            if s.write_all(&[*byte]).await.is_err() {
                cut = true;
                break;
            }
            // Wait 2 s, noticing a close or an answer meanwhile.
            let mut buf = [0u8; 2048];
            match tokio::time::timeout(Duration::from_secs(2), s.read(&mut buf)).await {
                Ok(Ok(0) | Err(_)) => {
                    cut = true;
                    break;
                }
                Ok(Ok(_)) => {
                    c.slow_answered.fetch_add(1, Ordering::Relaxed);
                    cut = closed_within(&mut s, Duration::from_secs(5)).await;
                    break;
                }
                Err(_) => {}
            }
        }
        if cut {
            c.slow_cut.fetch_add(1, Ordering::Relaxed);
        }
    }
}

/// One client posting heavy strokes, each a little different.
async fn heavy_client(
    client: reqwest::Client,
    c: Arc<Counters>,
    stop: Arc<AtomicBool>,
    base: String,
) {
    while !stop.load(Ordering::Relaxed) {
        let n = N.fetch_add(1, Ordering::Relaxed);
        let r = client
            .post(format!("{base}/v1/simulate"))
            .header("content-type", "application/json")
            .body(heavy_body(n))
            .send()
            .await;
        match r.map(|r| r.status().as_u16()) {
            Ok(200) => c.heavy_ok.fetch_add(1, Ordering::Relaxed),
            Ok(503) => {
                tokio::time::sleep(Duration::from_millis(200)).await;
                c.heavy_503.fetch_add(1, Ordering::Relaxed)
            }
            _ => c.heavy_other.fetch_add(1, Ordering::Relaxed),
        };
    }
}

/// One client posting the work-bomb requests in turn.
async fn pathological_client(
    client: reqwest::Client,
    c: Arc<Counters>,
    stop: Arc<AtomicBool>,
    base: String,
) {
    while !stop.load(Ordering::Relaxed) {
        let n = N.fetch_add(1, Ordering::Relaxed);
        let (path, body) = pathological_body(n);
        let t = Instant::now();
        let r = client
            .post(format!("{base}{path}"))
            .json(&body)
            .send()
            .await;
        let (status, kind) = match r {
            Ok(r) => {
                let status = r.status().as_u16();
                let v: Value = r.json().await.unwrap_or(Value::Null);
                let kind = v["type"].as_str().unwrap_or("ok").to_string();
                (status, kind)
            }
            Err(e) => (0, format!("transport: {e}")),
        };
        c.patho_answers
            .lock()
            .await
            .push((status, kind, t.elapsed().as_secs_f64()));
        tokio::time::sleep(Duration::from_millis(200)).await;
    }
}

/// Churn waves of `churn` short connections every 20 s, and one burst of `burst` at once
/// after `half`.
async fn churn_waves(
    addr: Arc<String>,
    c: Arc<Counters>,
    stop: Arc<AtomicBool>,
    (started, half): (Instant, Duration),
    (churn, burst): (usize, usize),
) {
    let mut burst_done = false;
    let mut wave = tokio::time::interval(Duration::from_secs(20));
    while !stop.load(Ordering::Relaxed) {
        wave.tick().await;
        if stop.load(Ordering::Relaxed) {
            break;
        }
        // A wave: `churn` connections, 100 at a time.
        let mut left = churn;
        while left > 0 && !stop.load(Ordering::Relaxed) {
            let batch = left.min(100);
            left -= batch;
            let mut js = Vec::new();
            for _ in 0..batch {
                let addr = Arc::clone(&addr);
                js.push(tokio::spawn(async move { one_request(&addr).await }));
            }
            for j in js {
                match j.await.ok().flatten() {
                    Some(200) => c.churn_ok.fetch_add(1, Ordering::Relaxed),
                    Some(503) => c.churn_503.fetch_add(1, Ordering::Relaxed),
                    _ => c.churn_failed.fetch_add(1, Ordering::Relaxed),
                };
            }
        }
        if !burst_done && started.elapsed() >= half {
            burst_done = true;
            let mut js = Vec::new();
            for _ in 0..burst {
                let addr = Arc::clone(&addr);
                js.push(tokio::spawn(async move { one_request(&addr).await }));
            }
            for j in js {
                match j.await.ok().flatten() {
                    Some(200) => c.burst_ok.fetch_add(1, Ordering::Relaxed),
                    Some(503) => c.burst_503.fetch_add(1, Ordering::Relaxed),
                    _ => c.burst_failed.fetch_add(1, Ordering::Relaxed),
                };
            }
        }
    }
}

async fn run(args: Args) -> Result<(), String> {
    raise_own_file_limit();
    let duration = Duration::from_secs(args.duration_s.clamp(5, 300));
    let idle_n = args.idle.min(2000);
    let slow_heads = args.slow_heads.min(500);
    let slow_bodies = args.slow_bodies.min(500);
    let heavy = args.heavy.min(64);
    let pathological = args.pathological.min(8);
    let churn = args.churn.min(2000);
    let burst = args.burst.min(2000);
    let server = start(&args).await?;
    let (base, pid) = (server.url.clone(), server.pid);
    let counters = Arc::new(Counters::default());
    let stop = Arc::new(AtomicBool::new(false));
    let started = Instant::now();
    let rss_start = rss_kib(pid).unwrap_or(0);
    let load_start = load_average();
    let tasks = spawn_load(
        (idle_n, slow_heads, slow_bodies),
        (heavy, pathological, churn, burst),
        &base,
        &counters,
        &stop,
        (started, duration),
    )?;

    // Probes and memory samples.
    let Probes {
        mut kept_ms,
        mut fresh_ms,
        kept_failed,
        fresh_refused,
        fresh_failed,
        rss_peak,
    } = probe_until(&base, pid, started, duration, rss_start).await?;
    stop.store(true, Ordering::Relaxed);
    let rss_at_stop = rss_kib(pid).unwrap_or(0);
    for t in tasks {
        let _ = tokio::time::timeout(Duration::from_secs(15), t).await;
    }
    tokio::time::sleep(Duration::from_secs(5)).await;
    let rss_after = rss_kib(pid).unwrap_or(0);
    let metrics = reqwest::get(format!("{base}/metrics"))
        .await
        .map_err(|e| e.to_string())?
        .text()
        .await
        .map_err(|e| e.to_string())?;
    let metric = |name: &str| -> f64 {
        metrics
            .lines()
            .filter(|l| l.starts_with(name))
            .filter_map(|l| l.rsplit(' ').next()?.parse::<f64>().ok())
            .fold(0.0, |a, b| a + b)
    };

    kept_ms.sort_by(f64::total_cmp);
    fresh_ms.sort_by(f64::total_cmp);
    let c = &counters;
    println!(
        "soak: {} s, server {base} (open-file limit {}), {} cores; idle {idle_n}, slow heads \
         {slow_heads}, slow bodies {slow_bodies}, heavy {heavy}, pathological {pathological}, \
         churn {churn} per 20 s wave, burst {burst}",
        duration.as_secs(),
        args.server_file_limit,
        std::thread::available_parallelism().map_or(1, std::num::NonZeroUsize::get)
    );
    println!(
        "machine load average (1 min) at start / end: {} / {} (other work on the machine \
         shares the cores)",
        load_start,
        load_average()
    );
    println!();
    println!("| figure | value |");
    println!("|---|---|");
    println!(
        "| /healthz, kept-alive probe every 100 ms: p50 / p99 / max ms (failed) | {:.2} / {:.2} / {:.2} ({kept_failed} of {}) |",
        percentile(&kept_ms, 0.5),
        percentile(&kept_ms, 0.99),
        kept_ms.last().copied().unwrap_or(f64::NAN),
        kept_ms.len() as u64 + kept_failed
    );
    println!(
        "| /healthz, fresh connection every 500 ms: p50 / p99 / max ms (503 refused, failed) | {:.2} / {:.2} / {:.2} ({fresh_refused}, {fresh_failed} of {}) |",
        percentile(&fresh_ms, 0.5),
        percentile(&fresh_ms, 0.99),
        fresh_ms.last().copied().unwrap_or(f64::NAN),
        fresh_ms.len() as u64 + fresh_refused + fresh_failed
    );
    print_counters(c, burst).await;
    println!(
        "| server: connections refused (503 / closed), timed out | {} / {}, {} |",
        metric("ringdrag_connections_refused_total{answer=\"503\"}"),
        metric("ringdrag_connections_refused_total{answer=\"closed\"}"),
        metric("ringdrag_connections_timed_out_total")
    );
    println!(
        "| server RSS: start / peak / at stop / 5 s after all closed, MiB | {:.1} / {:.1} / {:.1} / {:.1} |",
        rss_start as f64 / 1024.0,
        rss_peak as f64 / 1024.0,
        rss_at_stop as f64 / 1024.0,
        rss_after as f64 / 1024.0
    );
    Ok(())
}

fn main() {
    let args = Args::parse();
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .worker_threads(1)
        .enable_all()
        .build();
    let outcome = match runtime {
        Ok(rt) => rt.block_on(run(args)),
        Err(e) => Err(format!("runtime: {e}")),
    };
    if let Err(e) = outcome {
        eprintln!("soak: {e}");
        std::process::exit(2);
    }
}
