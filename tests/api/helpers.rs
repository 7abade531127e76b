//! Starting the real `ringdrag` binary on a free port, and a small client for it.
//!
//! `spawn_app()` runs the binary Cargo built for this test (`CARGO_BIN_EXE_ringdrag`) with
//! `--listen 127.0.0.1:0`, reads its one `ringdrag listening on http://ADDR` line, and kills it
//! when the returned [`TestApp`] is dropped. Every `RINGDRAG_*` variable of the test's own
//! environment is removed, so that the settings are exactly the arguments given. Set
//! `RINGDRAG_TEST_LOG=1` to see the servers' logs.

use reqwest::{Client, Response, StatusCode};
use serde_json::{Value, json};
use std::process::Stdio;
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
    /// The server process (killed on drop).
    pub(crate) child: Child,
}

/// Where the server's standard error goes.
pub(crate) enum Logs {
    /// Dropped (or shown when `RINGDRAG_TEST_LOG` is set).
    Quiet,
    /// Written to this file.
    File(std::fs::File),
}

/// Starts the server with default settings.
pub(crate) async fn spawn_app() -> TestApp {
    spawn_app_with(&[], &[], Logs::Quiet).await
}

/// Starts the server with extra arguments and environment variables.
pub(crate) async fn spawn_app_with(args: &[&str], env: &[(&str, &str)], logs: Logs) -> TestApp {
    spawn(
        Command::new(env!("CARGO_BIN_EXE_ringdrag")),
        args,
        env,
        logs,
    )
    .await
}

/// Starts the server through `sh` under an open-file limit of `files` (soft and hard), as a
/// host with a low limit would run it.
pub(crate) async fn spawn_app_with_file_limit(files: u64, args: &[&str]) -> TestApp {
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
        client: Client::builder()
            .timeout(Duration::from_secs(120))
            .build()
            .expect("client builds"),
        child,
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

    /// Sends SIGTERM to the server.
    pub(crate) fn terminate(&self) {
        let pid = self.child.id().expect("server running");
        let status = std::process::Command::new("kill")
            .args(["-TERM", &pid.to_string()])
            .status()
            .expect("kill runs");
        assert!(status.success(), "kill -TERM failed");
    }
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

/// A deliberately heavy force-curve request (an invented thick-walled stack, the largest
/// radial resolution and `speeds` speeds), used to keep a job slot busy for a while.
pub(crate) fn heavy_force_curve(speeds: usize) -> Value {
    let speeds: Vec<f64> = (1..=speeds).map(|i| 0.01 * i as f64).collect();
    json!({
        "design": {
            "magnets": {
                "grade": "N42",
                "outer_diameter_m": 0.012,
                "length_m": 0.02,
                "count": 8,
                "polarity": "alternating"
            },
            "tube": {
                "material": "copper-c12200",
                "inner_diameter_m": 0.013,
                "wall_thickness_m": 0.01,
                "length_m": 0.3
            }
        },
        "speeds_m_per_s": speeds,
        "resolution": { "radial_layers": 32 }
    })
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
