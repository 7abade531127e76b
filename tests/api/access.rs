//! Access control, CORS, rate limits and the response cache, end to end.

use crate::helpers::{
    TestApp, expect_problem, parse_flags, sample_design, start_app, start_app_with,
};
use reqwest::Method;
use serde_json::{Value, json};
use std::time::Duration;

/// Invented test keys (64 hex characters, the shape `openssl rand -hex 32` makes).
const KEY_ENV: &str = "5f0c1d9e8a7b6c5d4e3f2a1b0c9d8e7f6a5b4c3d2e1f0a9b8c7d6e5f4a3b2c1d";
const KEY_FILE: &str = "d5f78e4847233eb8114828b7edb1bbf00021132e29a9397ee58fca73ae180737";

/// Writes `text` to a fresh file in the system's temporary directory and returns its path.
fn temp_file(name: &str, text: &str) -> std::path::PathBuf {
    static NEXT: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);
    let n = NEXT.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    let path =
        std::env::temp_dir().join(format!("ringdrag-test-{}-{n}-{name}", std::process::id()));
    std::fs::write(&path, text).expect("temporary file written");
    path
}

async fn send(app: &TestApp, method: Method, path: &str, auth: Option<&str>) -> reqwest::Response {
    let mut req = app
        .client
        .request(method.clone(), format!("{}{path}", app.base));
    if let Some(value) = auth {
        req = req.header("authorization", value);
    }
    if method == Method::POST {
        req = req.json(&json!({ "design": sample_design(), "speeds_m_per_s": [0.1] }));
    }
    req.send().await.expect("request sent")
}

fn header(response: &reqwest::Response, name: &str) -> Option<String> {
    response
        .headers()
        .get(name)
        .and_then(|v| v.to_str().ok())
        .map(str::to_string)
}

async fn keyed_app(extra_args: &[&str]) -> TestApp {
    let path = temp_file("keys", &format!("# invented test key\n\n{KEY_FILE}\n"));
    let file = path.to_str().expect("utf-8 path").to_string();
    let mut args = vec!["--api-keys", KEY_ENV, "--api-keys-file", file.as_str()];
    args.extend_from_slice(extra_args);
    let app = start_app_with(&args).await;
    // The server read its keys at start.
    let _ = std::fs::remove_file(&path);
    app
}

#[tokio::test]
async fn api_keys_guard_the_v1_routes_only() {
    let app = keyed_app(&[]).await;
    let bearer_env = format!("Bearer {KEY_ENV}");
    let bearer_file = format!("bearer {KEY_FILE}");

    // No key: 401 with a bare challenge (source: RFC 6750, section 3, no error code when the
    // request carried no credentials).
    let r = send(&app, Method::GET, "/v1/materials", None).await;
    assert_eq!(
        header(&r, "www-authenticate").as_deref(),
        Some(r#"Bearer realm="ringdrag""#)
    );
    let problem = expect_problem(r, 401).await;
    assert_eq!(problem["type"], "urn:ringdrag:problem:unauthorized");

    // A wrong key, a key that is a prefix of a real one, and another scheme.
    let prefix = format!("Bearer {}", &KEY_ENV[..40]);
    for auth in ["Bearer not-a-key-but-long-enough", prefix.as_str()] {
        let r = send(&app, Method::POST, "/v1/force-curve", Some(auth)).await;
        let challenge = header(&r, "www-authenticate").unwrap_or_default();
        assert!(
            challenge.contains(r#"error="invalid_token""#),
            "{challenge}"
        );
        expect_problem(r, 401).await;
    }
    let r = send(
        &app,
        Method::GET,
        "/v1/materials",
        Some(&format!("Basic {KEY_ENV}")),
    )
    .await;
    expect_problem(r, 401).await;

    // Either key works, from the variable or from the file, whatever the scheme's case.
    for auth in [&bearer_env, &bearer_file] {
        let r = send(&app, Method::GET, "/v1/materials", Some(auth)).await;
        assert_eq!(r.status().as_u16(), 200);
        let r = send(&app, Method::POST, "/v1/force-curve", Some(auth)).await;
        assert_eq!(r.status().as_u16(), 200);
    }

    // Unknown routes under /v1 need a key before they are found missing.
    expect_problem(send(&app, Method::GET, "/v1/nothing", None).await, 401).await;
    expect_problem(
        send(&app, Method::GET, "/v1/nothing", Some(&bearer_env)).await,
        404,
    )
    .await;

    // Probes, metrics and the document stay open.
    for path in ["/healthz", "/readyz", "/openapi.json", "/metrics"] {
        let r = send(&app, Method::GET, path, None).await;
        assert_eq!(r.status().as_u16(), 200, "{path}");
    }
    let metrics = app.get("/metrics").await.text().await.expect("metrics");
    assert!(
        metrics.contains(r#"route="/v1/materials",status="401"}"#),
        "refusals are counted:\n{metrics}"
    );
}

#[tokio::test]
async fn metrics_can_be_put_behind_the_keys() {
    let app = keyed_app(&["--protect-metrics"]).await;
    expect_problem(app.get("/metrics").await, 401).await;
    let r = send(
        &app,
        Method::GET,
        "/metrics",
        Some(&format!("Bearer {KEY_ENV}")),
    )
    .await;
    assert_eq!(r.status().as_u16(), 200);
    app.assert_healthy().await;
    // The environment variable works as the flag does.
    let app = keyed_app(&["--protect-metrics"]).await;
    expect_problem(app.get("/metrics").await, 401).await;
}

/// Runs the binary with `env` and returns (exit success, standard error) once it exits; it
/// must exit within 10 s.
fn start_and_expect_exit(env: &[(&str, &str)]) -> (bool, String) {
    let mut cmd = std::process::Command::new(env!("CARGO_BIN_EXE_ringdrag"));
    for (key, _) in std::env::vars() {
        if key.starts_with("RINGDRAG_") {
            cmd.env_remove(key);
        }
    }
    let mut child = cmd
        .args(["--listen", "127.0.0.1:0"])
        .envs(env.iter().copied())
        .stdin(std::process::Stdio::null())
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("binary starts");
    for _ in 0..100 {
        if let Ok(Some(status)) = child.try_wait() {
            let mut err = String::new();
            if let Some(mut stderr) = child.stderr.take() {
                use std::io::Read;
                let _ = stderr.read_to_string(&mut err);
            }
            return (status.success(), err);
        }
        std::thread::sleep(Duration::from_millis(100));
    }
    let _ = child.kill();
    panic!("the server kept running with a bad key configuration");
}

/// The parser's refusal of `args` (the message the binary prints before it exits).
fn refusal(args: &[&str]) -> String {
    match parse_flags(args) {
        Ok(_) => panic!("{args:?} accepted"),
        Err(message) => message,
    }
}

#[test]
fn bad_key_configurations_refuse_to_start() {
    // The binary: a weak key in the environment stops it at start, with the reason on
    // standard error and without echoing the key.
    let (ok, err) = start_and_expect_exit(&[("RINGDRAG_API_KEYS", "passwordpassword")]);
    assert!(!ok && err.contains("too easy to guess"), "{err}");
    assert!(
        !err.contains("passwordpassword"),
        "the refused key is echoed: {err}"
    );
    // The same parser, in process, for the other bad configurations.
    let path = temp_file("no-keys", "# no key here\n\n");
    let empty = path.to_str().expect("utf-8 path");
    let err = refusal(&["--api-keys-file", empty]);
    let _ = std::fs::remove_file(&path);
    assert!(err.contains("holds no key"), "{err}");
    let err = refusal(&["--api-keys-file", "no-such-ringdrag-key-file"]);
    assert!(err.contains("cannot read the API key file"), "{err}");
    let err = refusal(&["--api-keys", "short"]);
    assert!(err.contains("at least 16"), "{err}");
    // Long enough but obvious keys are refused too, without echoing them.
    for weak in ["abcdefghijklmnop", "passwordpassword", "1111111111111111"] {
        let err = refusal(&["--api-keys", weak]);
        assert!(err.contains("too easy to guess"), "{weak}: {err}");
        assert!(!err.contains(weak), "the refused key is echoed: {err}");
    }
    let err = refusal(&["--cors-origins", "*"]);
    assert!(err.contains("CORS origin"), "{err}");
}

#[tokio::test]
async fn cors_allows_exactly_the_listed_origins() {
    let allowed = "https://shop.example.com";
    let app = keyed_app(&["--cors-origins", allowed]).await;
    let preflight = |origin: &str| {
        app.client
            .request(Method::OPTIONS, format!("{}/v1/force-curve", app.base))
            .header("origin", origin)
            .header("access-control-request-method", "POST")
            .header(
                "access-control-request-headers",
                "authorization, content-type",
            )
            .send()
    };
    // A preflight carries no key and must not be refused for it (source: Fetch standard,
    // CORS-preflight request: credentials and custom headers are excluded).
    let r = preflight(allowed).await.expect("sent");
    assert_eq!(r.status().as_u16(), 200);
    assert_eq!(
        header(&r, "access-control-allow-origin").as_deref(),
        Some(allowed)
    );
    let allow_headers = header(&r, "access-control-allow-headers").unwrap_or_default();
    assert!(allow_headers.contains("authorization"), "{allow_headers}");
    assert!(header(&r, "access-control-max-age").is_some());
    // Another origin gets no permission.
    let r = preflight("https://elsewhere.example.org")
        .await
        .expect("sent");
    assert_eq!(header(&r, "access-control-allow-origin"), None);

    // Real requests from the allowed origin are marked, refusals included, so the page can
    // read a 401; the request id is readable.
    let r = app
        .client
        .post(format!("{}/v1/force-curve", app.base))
        .header("origin", allowed)
        .json(&json!({ "design": sample_design() }))
        .send()
        .await
        .expect("sent");
    assert_eq!(
        header(&r, "access-control-allow-origin").as_deref(),
        Some(allowed)
    );
    let exposed = header(&r, "access-control-expose-headers").unwrap_or_default();
    assert!(exposed.contains("x-request-id"), "{exposed}");
    expect_problem(r, 401).await;

    // Without the setting, no CORS headers at all.
    let plain = start_app().await;
    let r = plain
        .client
        .get(format!("{}/v1/materials", plain.base))
        .header("origin", allowed)
        .send()
        .await
        .expect("sent");
    assert_eq!(r.status().as_u16(), 200);
    assert_eq!(header(&r, "access-control-allow-origin"), None);
}

#[tokio::test]
async fn rate_limits_apply_per_key() {
    // Two a minute, in a burst of two: one token every 30 s.
    let app = keyed_app(&["--rate-limit-per-minute", "2"]).await;
    let a = format!("Bearer {KEY_ENV}");
    let b = format!("Bearer {KEY_FILE}");
    for _ in 0..2 {
        let r = send(&app, Method::GET, "/v1/materials", Some(&a)).await;
        assert_eq!(r.status().as_u16(), 200);
    }
    let r = send(&app, Method::GET, "/v1/materials", Some(&a)).await;
    let retry: u64 = header(&r, "retry-after")
        .and_then(|v| v.parse().ok())
        .expect("Retry-After in whole seconds");
    assert!((1..=30).contains(&retry), "retry after {retry} s");
    let problem = expect_problem(r, 429).await;
    assert_eq!(problem["type"], "urn:ringdrag:problem:rate-limited");
    // The other key has its own allowance; probes have none to use up.
    let r = send(&app, Method::GET, "/v1/materials", Some(&b)).await;
    assert_eq!(r.status().as_u16(), 200);
    for _ in 0..5 {
        app.assert_healthy().await;
    }
    // A request without a key is refused before it can use up anyone's allowance.
    expect_problem(send(&app, Method::GET, "/v1/materials", None).await, 401).await;
}

#[tokio::test]
async fn rate_limits_apply_per_address_without_keys() {
    let app = start_app_with(&[
        "--rate-limit-per-minute",
        "1",
        "--client-ip-header",
        "x-forwarded-for",
    ])
    .await;
    let from = |address: &'static str| {
        app.client
            .get(format!("{}/v1/materials", app.base))
            .header("x-forwarded-for", address)
            .send()
    };
    // Documentation addresses (source: RFC 5737, TEST-NET-2 and TEST-NET-3).
    assert_eq!(
        from("203.0.113.7").await.expect("sent").status().as_u16(),
        200
    );
    expect_problem(from("203.0.113.7").await.expect("sent"), 429).await;
    // The last entry is the client: a forged first entry does not buy a new allowance.
    expect_problem(from("198.51.100.1, 203.0.113.7").await.expect("sent"), 429).await;
    assert_eq!(
        from("198.51.100.1").await.expect("sent").status().as_u16(),
        200
    );

    // Without the header setting, the connection's address counts (all loopback here).
    let app = start_app_with(&["--rate-limit-per-minute", "1"]).await;
    assert_eq!(app.get("/v1/materials").await.status().as_u16(), 200);
    expect_problem(app.get("/v1/materials").await, 429).await;
}

#[tokio::test]
async fn wrong_keys_are_throttled_per_address() {
    // Three wrong keys a minute per address; addresses from the forwarded header.
    let app = keyed_app(&[
        "--auth-failures-per-minute",
        "3",
        "--client-ip-header",
        "x-forwarded-for",
    ])
    .await;
    let attempt = |address: &'static str, key: &str| {
        app.client
            .get(format!("{}/v1/materials", app.base))
            .header("x-forwarded-for", address)
            .header("authorization", format!("Bearer {key}"))
            .send()
    };
    let wrong = "f3a9c27e5d1b80466e2d9a7c1b5f3e08";
    // Documentation addresses (source: RFC 5737, TEST-NET-3 and TEST-NET-2).
    for _ in 0..3 {
        expect_problem(attempt("203.0.113.9", wrong).await.expect("sent"), 401).await;
    }
    // The allowance is used up: every attempt from that address is refused, the right key
    // included, until it refills (one a minute here).
    let r = attempt("203.0.113.9", wrong).await.expect("sent");
    let retry: u64 = header(&r, "retry-after")
        .and_then(|v| v.parse().ok())
        .expect("Retry-After in whole seconds");
    assert!((1..=60).contains(&retry), "{retry}");
    let problem = expect_problem(r, 429).await;
    assert_eq!(problem["type"], "urn:ringdrag:problem:rate-limited");
    expect_problem(attempt("203.0.113.9", KEY_ENV).await.expect("sent"), 429).await;
    // Another address is not affected.
    let r = attempt("198.51.100.4", KEY_ENV).await.expect("sent");
    assert_eq!(r.status().as_u16(), 200);
    let metrics = app.get("/metrics").await.text().await.expect("metrics");
    assert!(
        metrics.contains("ringdrag_auth_throttled_total"),
        "{metrics}"
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn strangers_cannot_fill_the_rate_limit_table() {
    // One request a minute per forwarded address, a table of 256 clients.
    let app = start_app_with(&[
        "--rate-limit-per-minute",
        "1",
        "--client-ip-header",
        "x-forwarded-for",
        "--rate-limit-max-clients",
        "256",
    ])
    .await;
    let from = |address: String| {
        app.client
            .get(format!("{}/v1/materials", app.base))
            .header("x-forwarded-for", address)
            .send()
    };
    // 1,000 distinct strangers (four times the table), each using up its allowance.
    let mut sent = 0;
    for i in 0..1000u32 {
        let o = i.to_be_bytes();
        let address = format!("10.{}.{}.{}", o[1], o[2], o[3]);
        let r = from(address).await.expect("sent");
        assert_eq!(r.status().as_u16(), 200, "stranger {i} was refused");
        sent += 1;
    }
    assert_eq!(sent, 1000);
    // A new client is served on its first request, and limited on its second as usual.
    let newcomer = || from("203.0.113.50".to_string());
    assert_eq!(newcomer().await.expect("sent").status().as_u16(), 200);
    expect_problem(newcomer().await.expect("sent"), 429).await;
}

#[tokio::test]
async fn a_body_with_a_repeated_key_is_refused_cold_and_warm() {
    let app = start_app().await;
    let design = sample_design().to_string();
    // The same field twice; the endpoint's parser refuses it (serde: duplicate field).
    let repeated =
        format!(r#"{{"design": {design}, "speeds_m_per_s": [0.1], "speeds_m_per_s": [0.2]}}"#);
    let post = |body: String| {
        app.post_raw(
            "/v1/force-curve",
            body.into_bytes(),
            Some("application/json"),
        )
    };
    let cold = expect_problem(post(repeated.clone()).await, 422).await;
    // Warm the cache with the body that holds only the last value.
    let last_only = format!(r#"{{"design": {design}, "speeds_m_per_s": [0.2]}}"#);
    let r = post(last_only.clone()).await;
    assert_eq!(r.status().as_u16(), 200);
    let r = post(last_only).await;
    assert_eq!(header(&r, "x-cache").as_deref(), Some("hit"));
    // The repeated-key body is refused again, with the same problem, not answered from memory.
    let warm = expect_problem(post(repeated).await, 422).await;
    assert_eq!(cold["type"], warm["type"]);
    assert_eq!(cold["errors"], warm["errors"]);
    assert_eq!(cold["type"], "urn:ringdrag:problem:invalid-input");
}

fn jobs_ok(metrics: &str) -> u64 {
    metrics
        .lines()
        .find(|l| l.starts_with(r#"ringdrag_jobs_total{job="force_curve",outcome="ok"}"#))
        .and_then(|l| l.rsplit(' ').next())
        .and_then(|v| v.parse().ok())
        .unwrap_or(0)
}

#[tokio::test]
async fn identical_requests_are_answered_from_the_cache() {
    let app = start_app().await;
    let body = json!({ "design": sample_design(), "speeds_m_per_s": [0.05, 0.5] });
    let first = app.post_json("/v1/force-curve", &body).await;
    assert_eq!(header(&first, "x-cache").as_deref(), Some("miss"));
    let first: Value = first.json().await.expect("json");
    // The same request written differently: keys reordered, whitespace, 5e-2 for 0.05.
    let text = serde_json::to_string(&sample_design()).expect("design serialises");
    let reordered = format!(r#"{{ "speeds_m_per_s" : [5e-2, 0.5], "design" : {text} }}"#);
    let second = app
        .post_raw(
            "/v1/force-curve",
            reordered.into_bytes(),
            Some("application/json"),
        )
        .await;
    assert_eq!(second.status().as_u16(), 200);
    assert_eq!(header(&second, "x-cache").as_deref(), Some("hit"));
    assert!(header(&second, "x-request-id").is_some());
    let second: Value = second.json().await.expect("json");
    assert_eq!(first, second);
    let metrics = app.get("/metrics").await.text().await.expect("metrics");
    assert_eq!(jobs_ok(&metrics), 1, "the second answer computed nothing");
    assert!(
        metrics.contains(r#"ringdrag_cache_lookups_total{route="/v1/force-curve",result="hit"} 1"#)
    );

    // Errors are never stored: a bad request computes (and fails) every time.
    let mut bad = sample_design();
    bad["tube"]["material"] = json!("mild-steel");
    for _ in 0..2 {
        let r = app
            .post_json("/v1/force-curve", &json!({ "design": bad }))
            .await;
        assert_eq!(header(&r, "x-cache").as_deref(), Some("miss"));
        expect_problem(r, 422).await;
    }
    // A different request is a different entry.
    let other = json!({ "design": sample_design(), "speeds_m_per_s": [0.05, 0.6] });
    let r = app.post_json("/v1/force-curve", &other).await;
    assert_eq!(header(&r, "x-cache").as_deref(), Some("miss"));
}

#[tokio::test]
async fn the_cache_can_be_turned_off() {
    let app = start_app_with(&["--cache-entries", "0"]).await;
    let body = json!({ "design": sample_design(), "speeds_m_per_s": [0.05] });
    for _ in 0..2 {
        let r = app.post_json("/v1/force-curve", &body).await;
        assert_eq!(r.status().as_u16(), 200);
        assert_eq!(header(&r, "x-cache"), None);
    }
    let metrics = app.get("/metrics").await.text().await.expect("metrics");
    assert_eq!(jobs_ok(&metrics), 2);
}
