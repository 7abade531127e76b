//! Connection hygiene: silent, slow and surplus connections are closed or refused, and
//! shutdown is not held by a slow client.
//!
//! The clients here speak raw TCP to 127.0.0.1, so that they can stall exactly where a slow or
//! hostile client would. Every wait is bounded; the assertions are on outcomes and on order,
//! with generous bounds relative to the configured timeouts, never on tight wall-clock times.

use crate::helpers::{
    Logs, expect_problem, spawn_binary_with, spawn_binary_with_file_limit, start_app_with,
};
use reqwest::Client;
use std::time::{Duration, Instant};
use tokio::io::{AsyncReadExt, AsyncWriteExt};
use tokio::net::TcpStream;

/// The `host:port` of a test server's base URL.
fn authority(base: &str) -> &str {
    base.trim_start_matches("http://")
}

/// Opens a raw connection to the server.
async fn connect(base: &str) -> TcpStream {
    TcpStream::connect(authority(base))
        .await
        .expect("connects to the server")
}

/// Reads until the server closes the connection (or `bound` passes): what it sent, and
/// whether it closed.
async fn read_until_closed(stream: &mut TcpStream, bound: Duration) -> (Vec<u8>, bool) {
    let mut got = Vec::new();
    let mut buf = [0u8; 4096];
    let closed = tokio::time::timeout(bound, async {
        loop {
            match stream.read(&mut buf).await {
                Ok(0) | Err(_) => return,
                Ok(n) => got.extend_from_slice(&buf[..n]),
            }
        }
    })
    .await
    .is_ok();
    (got, closed)
}

/// A client that opens a new connection for every request.
fn fresh_client() -> Client {
    Client::builder()
        .pool_max_idle_per_host(0)
        .timeout(Duration::from_secs(30))
        .build()
        .expect("client builds")
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn silent_and_slow_connections_are_closed_and_a_kept_alive_one_is_served() {
    // Header-read timeout 1 s, idle timeout 4 s.
    let app = start_app_with(&["--header-read-timeout-s", "1", "--idle-timeout-s", "4"]).await;
    let started = Instant::now();
    let base = app.base.clone();
    // A connection that never sends anything: closed by the idle timeout.
    let silent = tokio::spawn({
        let base = base.clone();
        async move {
            let mut s = connect(&base).await;
            let (got, closed) = read_until_closed(&mut s, Duration::from_secs(60)).await;
            (got, closed, Instant::now())
        }
    });
    // A connection that sends half a request head and stops: closed by the header timeout.
    let partial = tokio::spawn({
        let base = base.clone();
        async move {
            let mut s = connect(&base).await;
            s.write_all(b"GET /healthz HTTP/1.1\r\nHost: x\r\n")
                .await
                .expect("written");
            let (got, closed) = read_until_closed(&mut s, Duration::from_secs(60)).await;
            (got, closed, Instant::now())
        }
    });
    // A connection that sends a head one byte every 300 ms, for ever: still cut by the
    // header timeout (bounded here to 60 s of trickling).
    let trickle = tokio::spawn({
        let base = base.clone();
        async move {
            let mut s = connect(&base).await;
            let head = b"GET /healthz HTTP/1.1\r\nX-Padding: aaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaa";
            let mut closed_at = None;
            for byte in head.iter() {
                if s.write_all(&[*byte]).await.is_err() {
                    closed_at = Some(Instant::now());
                    break;
                }
                tokio::time::sleep(Duration::from_millis(300)).await;
            }
            // A write into a closed connection may still succeed once; a read tells for sure.
            if closed_at.is_none() {
                let (_, closed) = read_until_closed(&mut s, Duration::from_secs(5)).await;
                if closed {
                    closed_at = Some(Instant::now());
                }
            }
            closed_at
        }
    });
    // Meanwhile a kept-alive client is served twice on one connection, with a pause shorter
    // than the idle timeout between its requests.
    let mut kept = connect(&base).await;
    for _ in 0..2 {
        kept.write_all(b"GET /healthz HTTP/1.1\r\nHost: x\r\n\r\n")
            .await
            .expect("written");
        let mut buf = [0u8; 1024];
        let n = tokio::time::timeout(Duration::from_secs(30), kept.read(&mut buf))
            .await
            .expect("answered")
            .expect("readable");
        assert!(buf[..n].starts_with(b"HTTP/1.1 200"), "{:?}", &buf[..n]);
        tokio::time::sleep(Duration::from_millis(500)).await;
    }

    let (got, closed, silent_at) = silent.await.expect("task");
    assert!(closed, "a silent connection stayed open for 60 s");
    assert!(got.is_empty(), "the server sent to a silent connection");
    let (_, closed, partial_at) = partial.await.expect("task");
    assert!(
        closed,
        "a partial request head kept its connection for 60 s"
    );
    let trickle_at = trickle.await.expect("task");
    let Some(trickle_at) = trickle_at else {
        panic!("a head sent one byte every 300 ms was never cut off")
    };
    // Order: the partial head (1 s) goes before the silent connection (4 s); the silent one
    // is not closed before its idle timeout; the trickle is cut well before it finishes its
    // 200 bytes (60 s).
    assert!(
        partial_at < silent_at,
        "the header timeout did not come first"
    );
    assert!(
        silent_at.duration_since(started) >= Duration::from_secs(4),
        "the silent connection was closed before the idle timeout"
    );
    assert!(trickle_at.duration_since(started) < Duration::from_secs(40));
    app.assert_healthy().await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_slow_body_is_cut_within_the_request_timeout_on_every_route() {
    // Request timeout 1 s (the backstop answers at 1 s plus its 2 s margin).
    let app = start_app_with(&["--request-timeout-s", "1", "--idle-timeout-s", "120"]).await;
    // A cached route (the cache reads the body) and an uncached one (the endpoint does).
    for path in ["/v1/force-curve", "/v1/sweep"] {
        let mut s = connect(&app.base).await;
        let head = format!(
            "POST {path} HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n\
             Content-Length: 5000\r\n\r\n{{\"design\": "
        );
        s.write_all(head.as_bytes()).await.expect("written");
        let (got, closed) = read_until_closed(&mut s, Duration::from_secs(60)).await;
        let text = String::from_utf8_lossy(&got);
        assert!(
            closed,
            "{path}: a stalled body held its connection for 60 s"
        );
        assert!(text.starts_with("HTTP/1.1 503"), "{path}: {text}");
        assert!(
            text.contains("urn:ringdrag:problem:timeout"),
            "{path}: {text}"
        );
    }
    app.assert_healthy().await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_connection_cap_refuses_early_and_frees_up() {
    let app = start_app_with(&["--max-connections", "4"]).await;
    // Four connections, each proven served (so the server holds them), then kept open.
    let mut held = Vec::new();
    for _ in 0..4 {
        let mut s = connect(&app.base).await;
        s.write_all(b"GET /healthz HTTP/1.1\r\nHost: x\r\n\r\n")
            .await
            .expect("written");
        let mut buf = [0u8; 1024];
        let n = tokio::time::timeout(Duration::from_secs(30), s.read(&mut buf))
            .await
            .expect("answered")
            .expect("readable");
        assert!(buf[..n].starts_with(b"HTTP/1.1 200"));
        held.push(s);
    }
    // A fifth client is answered at once with a problem 503 and Retry-After.
    let client = fresh_client();
    let r = client
        .get(format!("{}/healthz", app.base))
        .send()
        .await
        .expect("the refusal is an answer, not a reset");
    assert!(r.headers().get("retry-after").is_some());
    let problem = expect_problem(r, 503).await;
    assert_eq!(problem["type"], "urn:ringdrag:problem:overloaded");
    assert!(
        problem["detail"]
            .as_str()
            .is_some_and(|d| d.contains("connections"))
    );
    // Below the cap again, a fresh connection is served.
    held.truncate(2);
    let mut served = false;
    for _ in 0..100 {
        let r = client
            .get(format!("{}/healthz", app.base))
            .send()
            .await
            .expect("sent");
        if r.status().as_u16() == 200 {
            served = true;
            break;
        }
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
    assert!(served, "/healthz never answered after connections closed");
    drop(held);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_partial_head_does_not_hold_shutdown() {
    // Long header-read and idle timeouts (120 s) and the default 60 s request timeout: the
    // old drain (request timeout + 5 s) would have waited 65 s for the partial head.
    let mut app = spawn_binary_with(
        &["--header-read-timeout-s", "120", "--idle-timeout-s", "120"],
        &[],
        Logs::Quiet,
    )
    .await;
    let mut s = connect(&app.base).await;
    s.write_all(b"GET /healthz HTTP/1.1\r\nHost: x\r\n")
        .await
        .expect("written");
    // An idle kept-alive connection too.
    let mut idle = connect(&app.base).await;
    idle.write_all(b"GET /healthz HTTP/1.1\r\nHost: x\r\n\r\n")
        .await
        .expect("written");
    let mut buf = [0u8; 1024];
    let n = tokio::time::timeout(Duration::from_secs(30), idle.read(&mut buf))
        .await
        .expect("answered")
        .expect("readable");
    assert!(buf[..n].starts_with(b"HTTP/1.1 200"));
    let signalled = Instant::now();
    app.terminate();
    let status = tokio::time::timeout(Duration::from_secs(30), app.child().wait())
        .await
        .expect("exits well before the header and request timeouts")
        .expect("wait");
    assert!(status.success(), "exit status {status}");
    // Generous: the drain closes idle and partial connections at once; 20 s is far below
    // every timeout that could have closed them otherwise (60 s and more).
    assert!(
        signalled.elapsed() < Duration::from_secs(20),
        "exit took {:?}",
        signalled.elapsed()
    );
    let (_, closed) = read_until_closed(&mut s, Duration::from_secs(5)).await;
    assert!(closed);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_low_file_limit_lowers_the_cap_instead_of_exhausting_descriptors() {
    // 200 files: the cap (1024 asked) is lowered to 200 - 64 reserved - 32 refusal slots.
    let app = spawn_binary_with_file_limit(200, &["--idle-timeout-s", "120"]).await;
    let cap = 200 - 64 - 32;
    // 300 connections, each one kept-alive request, all held open: more than the process
    // could hold if the server accepted them all.
    let mut held = Vec::new();
    let (mut ok, mut refused, mut closed) = (0, 0, 0);
    for _ in 0..300 {
        let Ok(mut s) = TcpStream::connect(authority(&app.base)).await else {
            closed += 1;
            continue;
        };
        let mut buf = [0u8; 2048];
        let answered = async {
            s.write_all(b"GET /healthz HTTP/1.1\r\nHost: x\r\n\r\n")
                .await?;
            s.read(&mut buf).await
        };
        match tokio::time::timeout(Duration::from_secs(30), answered).await {
            Ok(Ok(n)) if buf[..n].starts_with(b"HTTP/1.1 200") => ok += 1,
            Ok(Ok(n)) if buf[..n].starts_with(b"HTTP/1.1 503") => refused += 1,
            _ => closed += 1,
        }
        held.push(s);
    }
    assert_eq!(ok, cap, "served {ok}, refused {refused}, closed {closed}");
    assert_eq!(ok + refused + closed, 300);
    assert!(refused > 0, "no early 503 refusal");
    // Once connections close, a fresh client is served again.
    drop(held);
    let client = fresh_client();
    let mut served = false;
    for _ in 0..100 {
        if let Ok(r) = client.get(format!("{}/healthz", app.base)).send().await
            && r.status().as_u16() == 200
        {
            served = true;
            break;
        }
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
    assert!(served, "/healthz never answered after connections closed");
}
