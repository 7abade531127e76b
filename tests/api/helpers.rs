//! The test servers, and a small client for them.
//!
//! [`start_app`] and [`start_app_with`] serve the real application in this test process: the
//! flags are parsed as `ringdrag` parses them (the test process's own `RINGDRAG_*` variables
//! are ignored, so the settings are exactly the flags given), a listener is bound on
//! `127.0.0.1:0`, and [`ringdrag_service::serve`] (the function `main` calls: the router, the
//! connection handling, the drain) runs on a runtime of its own, with a metrics recorder of
//! its own (set on each of that runtime's threads) so that servers running side by side count
//! apart. The server stops when the returned [`TestApp`] is dropped.
//!
//! [`spawn_binary_with`] instead runs the binary Cargo built for this test
//! (`CARGO_BIN_EXE_ringdrag`) and reads its `ringdrag listening on http://ADDR` line; it is
//! kept for what needs a process of its own (the start-up line, signals and the drain, the
//! environment fallbacks, the JSON logs, the open-file limit, refusals at start-up), and the
//! process is killed when the [`TestApp`] is dropped.
//!
//! Set `RINGDRAG_TEST_LOG=1` to see the servers' logs.

use clap::{CommandFactory, FromArgMatches};
use reqwest::{Client, Response, StatusCode};
use ringdrag_service::{Config, priority, telemetry};
use serde_json::{Value, json};
use std::process::Stdio;
use std::sync::Once;
use std::time::Duration;
use tokio::io::{AsyncBufReadExt, BufReader};
use tokio::process::{Child, Command};

/// Media type of problem documents (RFC 9457).
pub(crate) const PROBLEM_JSON: &str = "application/problem+json";

/// A running server and a client for it.
pub(crate) struct TestApp {
    /// `http://127.0.0.1:PORT`.
    pub(crate) base: String,
    /// HTTP client.
    pub(crate) client: Client,
    /// The server (stopped on drop).
    server: Server,
}

/// Where a test server runs.
enum Server {
    /// In this process, on its own runtime (shut down on drop).
    InProcess(Option<tokio::runtime::Runtime>),
    /// A child process (killed on drop).
    Binary(Child),
}

impl Drop for Server {
    fn drop(&mut self) {
        if let Self::InProcess(runtime) = self
            && let Some(runtime) = runtime.take()
        {
            // Drops the accept loop and every connection task; computations still running
            // on the blocking pool end at their deadline.
            runtime.shutdown_background();
        }
    }
}

/// Where a binary server's standard error goes.
pub(crate) enum Logs {
    /// Dropped (or shown when `RINGDRAG_TEST_LOG` is set).
    Quiet,
    /// Written to this file.
    File(std::fs::File),
}

/// Set-up that is global to the process and done once for all in-process servers, as `main`
/// does it once: the computing thread pool, and (with `RINGDRAG_TEST_LOG`) a log subscriber.
fn init_process() {
    static INIT: Once = Once::new();
    INIT.call_once(|| {
        // rayon's pool of lowered-priority computing threads, as `priority::init_compute_pool`
        // builds it for the binary, but with as many threads as the servers of two test
        // threads would have in processes of their own: sharing one pool of two, one test's
        // sweep would queue behind another's. An error means the pool already exists.
        let threads = 2 * std::thread::available_parallelism().map_or(2, usize::from);
        let _ = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .thread_name(|i| format!("ringdrag-compute-{i}"))
            .start_handler(|_| priority::lower_current_thread())
            .build_global();
        if std::env::var_os("RINGDRAG_TEST_LOG").is_some() {
            let _ = telemetry::init_tracing(ringdrag_service::config::LogFormat::Text);
        }
    });
}

/// The configuration `ringdrag ARGS` would have with no `RINGDRAG_*` variable set.
///
/// # Errors
/// The parser's message, as the binary would print it.
pub(crate) fn parse_flags(args: &[&str]) -> Result<Config, String> {
    let command = Config::command().mut_args(|arg| arg.env(None::<&str>));
    let matches = command
        .try_get_matches_from(std::iter::once("ringdrag").chain(args.iter().copied()))
        .map_err(|e| e.to_string())?;
    Config::from_arg_matches(&matches).map_err(|e| e.to_string())
}

/// Starts the application in process with default settings.
pub(crate) async fn start_app() -> TestApp {
    start_app_with(&[]).await
}

/// Starts the application in process with the flags `args` (as `ringdrag` takes them).
pub(crate) async fn start_app_with(args: &[&str]) -> TestApp {
    init_process();
    let config = parse_flags(args).unwrap_or_else(|e| panic!("bad test flags {args:?}: {e}"));
    let recorder = telemetry::metrics_recorder().expect("metrics recorder builds");
    let metrics = recorder.handle();
    // Leaked: the recorder must outlive every thread of the runtime that records into it
    // (a few kilobytes per test server).
    let recorder: &'static _ = Box::leak(Box::new(recorder));
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .worker_threads(2)
        .thread_name("test-server")
        .enable_all()
        .on_thread_start(move || {
            // Kept for the thread's life: this thread records into this server's recorder.
            std::mem::forget(metrics::set_default_local_recorder(recorder));
        })
        .build()
        .expect("server runtime starts");
    let listener = std::net::TcpListener::bind("127.0.0.1:0").expect("ephemeral port bound");
    let address = listener.local_addr().expect("bound address");
    listener
        .set_nonblocking(true)
        .expect("non-blocking listener");
    runtime.spawn(async move {
        telemetry::describe_metrics();
        let listener = tokio::net::TcpListener::from_std(listener).expect("listener registered");
        // Served until the runtime is shut down (when the TestApp is dropped).
        let served = ringdrag_service::serve(listener, &config, metrics, std::future::pending());
        if let Err(e) = served.await {
            panic!("the test server failed: {e:#}");
        }
    });
    TestApp {
        base: format!("http://{address}"),
        client: client(),
        server: Server::InProcess(Some(runtime)),
    }
}

fn client() -> Client {
    Client::builder()
        .timeout(Duration::from_secs(120))
        .build()
        .expect("client builds")
}

/// Starts the binary with extra arguments and environment variables (every `RINGDRAG_*`
/// variable of the test's own environment removed).
pub(crate) async fn spawn_binary_with(args: &[&str], env: &[(&str, &str)], logs: Logs) -> TestApp {
    spawn(
        Command::new(env!("CARGO_BIN_EXE_ringdrag")),
        args,
        env,
        logs,
    )
    .await
}

/// Starts the binary through `sh` under an open-file limit of `files` (soft and hard), as a
/// host with a low limit would run it.
pub(crate) async fn spawn_binary_with_file_limit(files: u64, args: &[&str]) -> TestApp {
    let mut cmd = Command::new("sh");
    cmd.arg("-c")
        .arg(format!("ulimit -n {files} && exec \"$0\" \"$@\""))
        .arg(env!("CARGO_BIN_EXE_ringdrag"));
    spawn(cmd, args, &[], Logs::Quiet).await
}

async fn spawn(mut cmd: Command, args: &[&str], env: &[(&str, &str)], logs: Logs) -> TestApp {
    for (key, _) in std::env::vars() {
        if key.starts_with("RINGDRAG_") {
            cmd.env_remove(key);
        }
    }
    cmd.args(["--listen", "127.0.0.1:0"])
        .args(args)
        .envs(env.iter().copied())
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .kill_on_drop(true);
    match logs {
        Logs::File(f) => cmd.stderr(Stdio::from(f)),
        Logs::Quiet if std::env::var_os("RINGDRAG_TEST_LOG").is_some() => {
            cmd.stderr(Stdio::inherit())
        }
        Logs::Quiet => cmd.stderr(Stdio::null()),
    };
    let mut child = cmd.spawn().expect("the ringdrag binary starts");
    let stdout = child.stdout.take().expect("stdout is piped");
    let mut lines = BufReader::new(stdout).lines();
    let prefix = "ringdrag listening on http://";
    let address = tokio::time::timeout(Duration::from_secs(30), async {
        while let Some(line) = lines.next_line().await.expect("stdout readable") {
            if let Some(addr) = line.strip_prefix(prefix) {
                return addr.trim().to_string();
            }
        }
        panic!("the server exited before printing its address")
    })
    .await
    .expect("the server prints its address within 30 s");
    // Keep draining standard output so that the server never blocks on a full pipe.
    tokio::spawn(async move { while let Ok(Some(_)) = lines.next_line().await {} });
    TestApp {
        base: format!("http://{address}"),
        client: client(),
        server: Server::Binary(child),
    }
}

impl TestApp {
    /// `GET path`.
    pub(crate) async fn get(&self, path: &str) -> Response {
        self.client
            .get(format!("{}{path}", self.base))
            .send()
            .await
            .expect("request sent")
    }

    /// `POST path` with a JSON body.
    pub(crate) async fn post_json(&self, path: &str, body: &Value) -> Response {
        self.client
            .post(format!("{}{path}", self.base))
            .json(body)
            .send()
            .await
            .expect("request sent")
    }

    /// `POST path` with raw bytes and a content type (None: no Content-Type header).
    pub(crate) async fn post_raw(
        &self,
        path: &str,
        body: Vec<u8>,
        content_type: Option<&str>,
    ) -> Response {
        let mut req = self.client.post(format!("{}{path}", self.base)).body(body);
        if let Some(ct) = content_type {
            req = req.header("content-type", ct);
        }
        req.send().await.expect("request sent")
    }

    /// `POST path` expecting 200, returning the JSON body.
    pub(crate) async fn post_ok(&self, path: &str, body: &Value) -> Value {
        let response = self.post_json(path, body).await;
        let status = response.status();
        let text = response.text().await.expect("body readable");
        assert_eq!(
            status,
            StatusCode::OK,
            "POST {path} answered {status}: {text}"
        );
        serde_json::from_str(&text).expect("JSON body")
    }

    /// Asserts that the server still answers `/healthz` with 200.
    pub(crate) async fn assert_healthy(&self) {
        let r = self.get("/healthz").await;
        assert_eq!(r.status(), StatusCode::OK, "server unhealthy");
    }

    /// The server process of a binary server.
    pub(crate) fn child(&mut self) -> &mut Child {
        match &mut self.server {
            Server::Binary(child) => child,
            Server::InProcess(_) => panic!("an in-process server has no process"),
        }
    }

    /// Sends SIGTERM to a binary server.
    pub(crate) fn terminate(&mut self) {
        let pid = self.child().id().expect("server running");
        let status = std::process::Command::new("kill")
            .args(["-TERM", &pid.to_string()])
            .status()
            .expect("kill runs");
        assert!(status.success(), "kill -TERM failed");
    }
}

/// `POST path` with a JSON body, asking for `accept` (content negotiation: CSV, SVG, PNG...).
pub(crate) async fn post_accepting(
    app: &TestApp,
    path: &str,
    accept: &str,
    body: &Value,
) -> Response {
    app.client
        .post(format!("{}{path}", app.base))
        .header("accept", accept)
        .json(body)
        .send()
        .await
        .expect("request sent")
}

/// Asserts that `response` is 200 with a content type starting with `media`, and returns its
/// content type and body text.
pub(crate) async fn expect_ok_as(response: Response, media: &str) -> (String, String) {
    let status = response.status().as_u16();
    let content_type = response
        .headers()
        .get("content-type")
        .and_then(|v| v.to_str().ok())
        .unwrap_or_default()
        .to_string();
    let text = response.text().await.expect("body");
    assert_eq!(status, 200, "{text}");
    assert!(content_type.starts_with(media), "{content_type}");
    (content_type, text)
}

/// Asserts that `response` is a problem document with `status`, and returns it.
pub(crate) async fn expect_problem(response: Response, status: u16) -> Value {
    let got = response.status().as_u16();
    let content_type = response
        .headers()
        .get("content-type")
        .and_then(|v| v.to_str().ok())
        .unwrap_or_default()
        .to_string();
    let text = response.text().await.expect("body readable");
    assert_eq!(got, status, "expected {status}, got {got}: {text}");
    assert_eq!(content_type, PROBLEM_JSON, "problem media type: {text}");
    let problem: Value = serde_json::from_str(&text).expect("problem body is JSON");
    assert_eq!(problem["status"], json!(status), "{problem}");
    for field in ["type", "title", "detail"] {
        assert!(
            problem[field].as_str().is_some_and(|s| !s.is_empty()),
            "problem lacks {field}: {problem}"
        );
    }
    problem
}

/// The paths named in a problem's `errors`.
pub(crate) fn error_paths(problem: &Value) -> Vec<String> {
    problem["errors"]
        .as_array()
        .map(|errs| {
            errs.iter()
                .filter_map(|e| e["path"].as_str().map(str::to_string))
                .collect()
        })
        .unwrap_or_default()
}

/// An invented design: a 12 mm N42 cylinder, 20 mm long, falling through a copper C12200 tube
/// of 13 mm bore, 1.5 mm wall, 0.3 m long.
pub(crate) fn sample_design() -> Value {
    json!({
        "magnets": {
            "grade": "N42",
            "outer_diameter_m": 0.012,
            "inner_diameter_m": 0.0,
            "length_m": 0.020,
            "count": 1
        },
        "tube": {
            "material": "copper-c12200",
            "inner_diameter_m": 0.013,
            "wall_thickness_m": 0.0015,
            "length_m": 0.30
        },
        "load": { "incline_deg": 90 }
    })
}

/// A request body `{"design": ...}` holding [`sample_design`] changed by `edit` (for the
/// tests of one bad field at a time).
pub(crate) fn request_with_design(edit: impl FnOnce(&mut Value)) -> Value {
    let mut design = sample_design();
    edit(&mut design);
    json!({ "design": design })
}

/// A deliberately heavy force-curve request, used to keep a job slot busy for a while: the
/// sample design made an invented stack of eight alternating magnets in a 10 mm wall, at the
/// largest radial resolution and `speeds` speeds.
pub(crate) fn heavy_force_curve(speeds: usize) -> Value {
    let speeds: Vec<f64> = (1..=speeds).map(|i| 0.01 * i as f64).collect();
    let mut request = request_with_design(|d| {
        d["magnets"]["count"] = json!(8);
        d["magnets"]["polarity"] = json!("alternating");
        d["tube"]["wall_thickness_m"] = json!(0.01);
    });
    request["speeds_m_per_s"] = json!(speeds);
    request["resolution"] = json!({ "radial_layers": 32 });
    request
}

/// Relative difference |a/b - 1|.
pub(crate) fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

/// Vacuum permeability, H/m (source: the classical defined value 4 pi 1e-7, BIPM SI brochure
/// before 2019).
pub(crate) const MU0: f64 = 4.0e-7 * std::f64::consts::PI;

/// Standard gravity, m/s^2 (source: CGPM 1901, conventional value).
pub(crate) const G0: f64 = 9.80665;
