//! `loadgen`: a bounded load generator for the ringdrag service, on loopback only.
//!
//! It starts the `ringdrag` binary (or uses one already running on a loopback address), then
//! runs steps one after another. A step keeps a fixed number of clients busy for a fixed time,
//! each sending one request after the other on its own kept-alive connection (a closed loop:
//! a client waits for its answer, and sends again at once, even after a 503). During each
//! step it also
//! - probes `GET /healthz` every 100 ms and records how long each probe takes, and
//! - samples the server's resident memory (`VmRSS` in `/proc/PID/status`) every 100 ms.
//!
//! It prints one table row per step: requests, throughput, latency percentiles, answers by
//! status (and how many 503 carried `Retry-After`), the probes' latency, and peak memory.
//!
//! ```sh
//! cargo build --release -p ringdrag-service --bin ringdrag --example loadgen
//! target/release/examples/loadgen                        # the standard steps, 10 s each
//! target/release/examples/loadgen --duration-s 5 \
//!     --steps force-curve-same:1,force-curve-same:8 --server-arg=--cache-entries=0
//! ```
//!
//! Every request body is an invented scenario (the files in the repository's `examples/`,
//! compiled in). Bodies:
//! - `force-curve-same`: one force-curve request, always the same (a configurator's default
//!   product page);
//! - `force-curve-vary`: the same design with a different tube conductivity each time (no two
//!   requests alike);
//! - `simulate-same`, `simulate-vary`: likewise for a stroke (a magnet dropped through a copper
//!   tube);
//! - `simulate-heavy`: a heavier stroke (a carriage on an incline), about 0.1 s of computing
//!   each and a slightly different start speed each time, to drive the service past
//!   saturation.
//!
//! Bounds: at most 20 steps, 120 s and 1,000,000 requests per step, 512 clients; targets
//! other than loopback addresses are refused.

#[path = "support/loopback.rs"]
mod loopback;

use clap::Parser;
use loopback::{default_server, memory_kib, start_server};
use serde_json::Value;
use std::net::IpAddr;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::time::{Duration, Instant};

const FORCE_CURVE: &str = include_str!("../../examples/force-curve-copper-drop.json");
const SIMULATE: &str = include_str!("../../examples/simulate-copper-drop.json");
const SIMULATE_HEAVY: &str = include_str!("../../examples/simulate-incline-carriage.json");

const MAX_STEPS: usize = 20;
const MAX_STEP_S: u64 = 120;
const MAX_REQUESTS: u64 = 1_000_000;
const MAX_CLIENTS: usize = 512;
const SAMPLE_EVERY: Duration = Duration::from_millis(100);

/// The standard steps: the configurator pattern, unique requests, and past saturation.
const STANDARD_STEPS: &str = "force-curve-same:1,force-curve-same:2,force-curve-same:8,\
    force-curve-vary:1,force-curve-vary:2,force-curve-vary:8,\
    simulate-same:8,simulate-vary:8,simulate-heavy:2,simulate-heavy:64";

/// Bounded load generator for the ringdrag service (loopback only).
#[derive(Debug, Parser)]
struct Args {
    /// The `ringdrag` binary to start (default: `ringdrag` beside the `examples` directory
    /// this program lives in, i.e. the same build profile).
    #[arg(long)]
    server: Option<PathBuf>,
    /// An argument for the started server, e.g. `--server-arg=--cache-entries=0`; repeatable.
    #[arg(long = "server-arg", allow_hyphen_values = true)]
    server_args: Vec<String>,
    /// Use a server already running at this loopback URL instead of starting one.
    #[arg(long)]
    url: Option<String>,
    /// Process id of the server at `--url`, for its memory figures.
    #[arg(long)]
    pid: Option<u32>,
    /// Seconds per step.
    #[arg(long, default_value_t = 10)]
    duration_s: u64,
    /// Steps as BODY:CLIENTS, comma-separated.
    #[arg(long, default_value = STANDARD_STEPS)]
    steps: String,
}

#[derive(Debug, Clone, Copy)]
enum BodyKind {
    ForceCurveSame,
    ForceCurveVary,
    SimulateSame,
    SimulateVary,
    SimulateHeavy,
}

impl BodyKind {
    fn parse(name: &str) -> Result<Self, String> {
        Ok(match name {
            "force-curve-same" => Self::ForceCurveSame,
            "force-curve-vary" => Self::ForceCurveVary,
            "simulate-same" => Self::SimulateSame,
            "simulate-vary" => Self::SimulateVary,
            "simulate-heavy" => Self::SimulateHeavy,
            other => return Err(format!("unknown body '{other}'")),
        })
    }

    fn path(self) -> &'static str {
        match self {
            Self::ForceCurveSame | Self::ForceCurveVary => "/v1/force-curve",
            _ => "/v1/simulate",
        }
    }

    fn template(self) -> &'static str {
        match self {
            Self::ForceCurveSame | Self::ForceCurveVary => FORCE_CURVE,
            Self::SimulateSame | Self::SimulateVary => SIMULATE,
            Self::SimulateHeavy => SIMULATE_HEAVY,
        }
    }

    /// The body of request number `n` (the same for every `n` unless the kind varies).
    fn body(self, template: &Value, n: u64) -> Vec<u8> {
        let mut body = template.clone();
        let k = (n % 1_000_000) as f64 / 1_000_000.0;
        match self {
            Self::ForceCurveVary | Self::SimulateVary => {
                // Copper-like conductivities from 40 to 60 MS/m, a different one per request.
                body["design"]["tube"]["conductivity_s_per_m"] = Value::from(4.0e7 + 2.0e7 * k);
            }
            Self::SimulateHeavy => {
                // Start speeds from 1.5 to 1.6 m/s: the same work, never the same request.
                body["start"]["speed_m_per_s"] = Value::from(1.5 + 0.1 * k);
            }
            Self::ForceCurveSame | Self::SimulateSame => {}
        }
        serde_json::to_vec(&body).unwrap_or_default()
    }
}

#[derive(Debug, Clone, Copy)]
struct Step {
    body: BodyKind,
    name: &'static str,
    clients: usize,
}

fn parse_steps(text: &str) -> Result<Vec<Step>, String> {
    let steps: Vec<Step> = text
        .split(',')
        .map(str::trim)
        .filter(|s| !s.is_empty())
        .map(|spec| {
            let (name, clients) = spec
                .split_once(':')
                .ok_or_else(|| format!("step '{spec}' is not BODY:CLIENTS"))?;
            let body = BodyKind::parse(name)?;
            let clients: usize = clients
                .parse()
                .map_err(|e| format!("step '{spec}': clients: {e}"))?;
            if clients == 0 || clients > MAX_CLIENTS {
                return Err(format!("step '{spec}': clients must be 1 to {MAX_CLIENTS}"));
            }
            let name = match body {
                BodyKind::ForceCurveSame => "force-curve-same",
                BodyKind::ForceCurveVary => "force-curve-vary",
                BodyKind::SimulateSame => "simulate-same",
                BodyKind::SimulateVary => "simulate-vary",
                BodyKind::SimulateHeavy => "simulate-heavy",
            };
            Ok(Step {
                body,
                name,
                clients,
            })
        })
        .collect::<Result<_, String>>()?;
    if steps.is_empty() || steps.len() > MAX_STEPS {
        return Err(format!("give 1 to {MAX_STEPS} steps"));
    }
    Ok(steps)
}

/// Refuses any target but a loopback address.
fn check_loopback(url: &str) -> Result<(), String> {
    let rest = url
        .strip_prefix("http://")
        .ok_or_else(|| format!("'{url}' must start with http://"))?;
    let authority = rest.split('/').next().unwrap_or_default();
    let host = if let Some(bracketed) = authority.strip_prefix('[') {
        bracketed.split(']').next().unwrap_or_default()
    } else {
        authority.rsplit_once(':').map_or(authority, |(h, _)| h)
    };
    let loopback = host == "localhost" || host.parse::<IpAddr>().is_ok_and(|ip| ip.is_loopback());
    if loopback {
        Ok(())
    } else {
        Err(format!(
            "'{url}' is not a loopback address; loadgen targets loopback only"
        ))
    }
}

/// One answer: latency in microseconds, status, and whether a 503 carried `Retry-After`.
#[derive(Debug, Clone, Copy)]
struct Sample {
    micros: u32,
    status: u16,
    retry_after: bool,
}

#[derive(Debug, Default)]
struct StepResult {
    samples: Vec<Sample>,
    transport_errors: u64,
    probes_ms: Vec<f64>,
    probe_failures: u64,
    rss_start_kib: u64,
    rss_peak_kib: u64,
    elapsed_s: f64,
}

fn percentile(sorted: &[u32], p: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let rank = ((p * sorted.len() as f64).ceil() as usize).clamp(1, sorted.len());
    f64::from(sorted[rank - 1]) / 1000.0
}

async fn run_step(
    client: &reqwest::Client,
    base: &str,
    pid: Option<u32>,
    step: Step,
    duration: Duration,
) -> StepResult {
    let template: Value = serde_json::from_str(step.body.template()).unwrap_or(Value::Null);
    let template = Arc::new(template);
    let url = Arc::new(format!("{base}{}", step.body.path()));
    let stop = Arc::new(AtomicBool::new(false));
    // Numbers continue across steps, so that no varied body of one step repeats one of an
    // earlier step (it would be answered from the cache).
    static NUMBERS: AtomicU64 = AtomicU64::new(0);
    let sent = Arc::new(AtomicU64::new(0));
    let started = Instant::now();
    let deadline = started + duration;
    let mut workers = Vec::new();
    for _ in 0..step.clients {
        let (client, url, template) = (client.clone(), Arc::clone(&url), Arc::clone(&template));
        let (stop, sent) = (Arc::clone(&stop), Arc::clone(&sent));
        let kind = step.body;
        workers.push(tokio::spawn(async move {
            let mut samples = Vec::new();
            let mut errors = 0u64;
            loop {
                let count = sent.fetch_add(1, Ordering::Relaxed);
                if stop.load(Ordering::Relaxed)
                    || Instant::now() >= deadline
                    || count >= MAX_REQUESTS
                {
                    break;
                }
                let n = NUMBERS.fetch_add(1, Ordering::Relaxed);
                let body = kind.body(&template, n);
                let t = Instant::now();
                let sent = client
                    .post(url.as_str())
                    .header("content-type", "application/json")
                    .body(body)
                    .send()
                    .await;
                match sent {
                    Ok(response) => {
                        let status = response.status().as_u16();
                        let retry_after = response.headers().contains_key("retry-after");
                        // Read the whole answer: the latency includes the transfer.
                        let _ = response.bytes().await;
                        samples.push(Sample {
                            micros: u32::try_from(t.elapsed().as_micros()).unwrap_or(u32::MAX),
                            status,
                            retry_after,
                        });
                    }
                    Err(_) => errors += 1,
                }
            }
            (samples, errors)
        }));
    }
    let mut result = StepResult {
        rss_start_kib: pid.and_then(memory_kib).map_or(0, |m| m.0),
        ..StepResult::default()
    };
    let health = format!("{base}/healthz");
    while Instant::now() < deadline {
        let t = Instant::now();
        let probe = client
            .get(&health)
            .timeout(Duration::from_secs(5))
            .send()
            .await;
        match probe {
            Ok(r) if r.status().is_success() => {
                result.probes_ms.push(t.elapsed().as_secs_f64() * 1000.0);
            }
            _ => result.probe_failures += 1,
        }
        if let Some((rss, _)) = pid.and_then(memory_kib) {
            result.rss_peak_kib = result.rss_peak_kib.max(rss);
        }
        tokio::time::sleep(SAMPLE_EVERY).await;
    }
    stop.store(true, Ordering::Relaxed);
    for w in workers {
        if let Ok((samples, errors)) = w.await {
            result.samples.extend(samples);
            result.transport_errors += errors;
        }
    }
    result.elapsed_s = started.elapsed().as_secs_f64();
    if let Some((rss, _)) = pid.and_then(memory_kib) {
        result.rss_peak_kib = result.rss_peak_kib.max(rss);
    }
    result
}

fn print_header() {
    println!(
        "| step | clients | requests | req/s | p50 ms | p99 ms | max ms | 200 | 503 (with Retry-After) | other | healthz p50 / max ms | RSS start / peak MiB |"
    );
    println!("|---|---|---|---|---|---|---|---|---|---|---|---|");
}

fn print_row(step: &Step, r: &StepResult) {
    let mut all: Vec<u32> = r.samples.iter().map(|s| s.micros).collect();
    all.sort_unstable();
    let ok = r.samples.iter().filter(|s| s.status == 200).count();
    let shed = r.samples.iter().filter(|s| s.status == 503).count();
    let shed_retry = r
        .samples
        .iter()
        .filter(|s| s.status == 503 && s.retry_after)
        .count();
    let other = r.samples.len() - ok - shed + r.transport_errors as usize;
    let mut probes: Vec<u32> = r.probes_ms.iter().map(|ms| (ms * 1000.0) as u32).collect();
    probes.sort_unstable();
    let probe_max = probes.last().map_or(f64::NAN, |m| f64::from(*m) / 1000.0);
    let failures = if r.probe_failures > 0 {
        format!(" ({} failed)", r.probe_failures)
    } else {
        String::new()
    };
    println!(
        "| {} | {} | {} | {:.0} | {:.1} | {:.1} | {:.1} | {} | {} ({}) | {} | {:.1} / {:.1}{} | {:.1} / {:.1} |",
        step.name,
        step.clients,
        r.samples.len(),
        r.samples.len() as f64 / r.elapsed_s,
        percentile(&all, 0.50),
        percentile(&all, 0.99),
        all.last().map_or(f64::NAN, |m| f64::from(*m) / 1000.0),
        ok,
        shed,
        shed_retry,
        other,
        percentile(&probes, 0.50),
        probe_max,
        failures,
        r.rss_start_kib as f64 / 1024.0,
        r.rss_peak_kib as f64 / 1024.0,
    );
}

async fn run(args: Args) -> Result<(), String> {
    let steps = parse_steps(&args.steps)?;
    let duration_s = args.duration_s.clamp(1, MAX_STEP_S);
    let duration = Duration::from_secs(duration_s);
    let (_child, base, pid) = match &args.url {
        Some(url) => {
            check_loopback(url)?;
            (None, url.trim_end_matches('/').to_string(), args.pid)
        }
        None => {
            let server = args
                .server
                .clone()
                .or_else(default_server)
                .ok_or("give --server PATH")?;
            let started = start_server(&server, &args.server_args, None).await?;
            check_loopback(&started.url)?;
            let (base, pid) = (started.url.clone(), Some(started.pid));
            (Some(started), base, pid)
        }
    };
    let clients = steps.iter().map(|s| s.clients).max().unwrap_or(1);
    let client = reqwest::Client::builder()
        .pool_max_idle_per_host(clients + 1)
        .timeout(Duration::from_secs(90))
        .build()
        .map_err(|e| format!("client: {e}"))?;
    println!(
        "server {base}, server arguments {:?}, {duration_s} s per step, {} cores",
        args.server_args,
        std::thread::available_parallelism().map_or(1, std::num::NonZeroUsize::get)
    );
    println!();
    print_header();
    for step in &steps {
        let result = run_step(&client, &base, pid, *step, duration).await;
        print_row(step, &result);
    }
    if let Some((rss, hwm)) = pid.and_then(memory_kib) {
        println!();
        println!(
            "server memory at the end: RSS {:.1} MiB, peak RSS (VmHWM) {:.1} MiB",
            rss as f64 / 1024.0,
            hwm as f64 / 1024.0
        );
    }
    Ok(())
}

fn main() {
    let args = Args::parse();
    // One thread for the clients: they share the two cores with the server, and a single
    // thread keeps the generator's own share small and steady.
    let runtime = tokio::runtime::Builder::new_current_thread()
        .enable_all()
        .build();
    let outcome = match runtime {
        Ok(rt) => rt.block_on(run(args)),
        Err(e) => Err(format!("runtime: {e}")),
    };
    if let Err(e) = outcome {
        eprintln!("loadgen: {e}");
        std::process::exit(2);
    }
}
