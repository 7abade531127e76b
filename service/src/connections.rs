//! Connection handling: the accept loop, the connection cap, per-connection timeouts and the
//! bounded shutdown drain.
//!
//! axum's own `serve` keeps every connection for as long as the client likes; this loop bounds
//! each of them:
//! - **Cap.** At most `--max-connections` connections are served at once (lowered at start-up
//!   so that it fits the open-file limit, see [`fit_to_file_limit`]). A connection above the
//!   cap is answered at once, before any routing, with 503, a problem document and
//!   `Retry-After: 1`, then closed; at most [`REFUSAL_SLOTS`] such answers are written at a
//!   time, and connections beyond those are closed unanswered. File descriptors therefore stay
//!   below `cap + REFUSAL_SLOTS + RESERVED_FILES`, and the accept loop never meets `EMFILE`.
//! - **Header-read timeout.** Once a client has sent the first byte of a request, the request
//!   line and headers must be complete within `--header-read-timeout-s`, or the connection is
//!   closed (a client sending one byte every few seconds is cut off).
//! - **Idle timeout.** A connection with no request in flight that sends nothing for
//!   `--idle-timeout-s` is closed (a kept-alive connection between requests, or one that never
//!   sends anything).
//! - **Request lifetime.** A request's body is read inside the request timeout (by the
//!   middleware, [`crate::middleware`]); as a backstop, a connection whose request (including
//!   the writing of its answer) is still going [`LIFETIME_MARGIN`] after the request timeout
//!   is closed, so a client that stops reading its answer cannot hold the connection.
//! - **Drain.** When shutdown begins the listener is closed; connections without a request in
//!   flight are closed at once (a slow partial-header client included), and requests in flight
//!   get until their own deadline. [`serve`] returns when the last connection is gone, and at
//!   the latest [`LIFETIME_MARGIN`] after the request timeout.
//!
//! The timeouts are enforced by one timer per connection that wakes only at the earliest time
//! one of them could expire, and reads the connection's activity from a few atomics kept by
//! the byte counter on its socket ([`CountingStream`]) and by the request guard
//! ([`RequestGuard`]).

use crate::problem::ApiError;
use axum::Router;
use axum::body::Body;
use axum::extract::ConnectInfo;
use axum::response::IntoResponse;
use hyper::body::{Frame, Incoming, SizeHint};
use hyper_util::rt::{TokioExecutor, TokioIo};
use hyper_util::server::conn::auto;
use std::convert::Infallible;
use std::net::SocketAddr;
use std::pin::Pin;
use std::sync::Arc;
use std::sync::atomic::{AtomicU64, AtomicUsize, Ordering};
use std::task::{Context, Poll};
use std::time::{Duration, Instant};
use tokio::io::{AsyncRead, AsyncReadExt, AsyncWrite, AsyncWriteExt, ReadBuf};
use tokio::net::{TcpListener, TcpStream};
use tokio::sync::{OwnedSemaphorePermit, Semaphore, watch};
use tower::ServiceExt;

/// Connections above the cap answered 503 at the same time; further ones are closed at once.
pub const REFUSAL_SLOTS: usize = 32;

/// File descriptors kept free for everything besides client connections (the listener,
/// standard streams, the runtime's own, files read at start).
pub const RESERVED_FILES: u64 = 64;

/// How long a request (with the writing of its answer) may outlive the request timeout before
/// its connection is closed; also the longest shutdown drain beyond the request timeout.
pub const LIFETIME_MARGIN: Duration = Duration::from_secs(5);

/// Longest time spent answering one refused connection.
const REFUSAL_TIME: Duration = Duration::from_millis(500);

/// Pause after a failed `accept` (e.g. the system ran out of memory for sockets).
const ACCEPT_BACKOFF: Duration = Duration::from_millis(50);

/// Settings of the connection handling.
#[derive(Debug, Clone, Copy)]
pub struct ConnectionLimits {
    /// Most connections served at once.
    pub max_connections: usize,
    /// Longest time for a request's line and headers after its first byte.
    pub header_read_timeout: Duration,
    /// Longest time without a request in flight and without bytes from the client.
    pub idle_timeout: Duration,
    /// The request timeout (a request may take this long, plus the margin).
    pub request_timeout: Duration,
}

/// Raises the soft open-file limit to the hard limit (no unsafe code: rustix's safe wrapper)
/// and returns the soft limit in force afterwards; `None` when unknown or unlimited.
pub fn raise_file_limit() -> Option<u64> {
    #[cfg(unix)]
    {
        use rustix::process::{Resource, Rlimit, getrlimit, setrlimit};
        let limit = getrlimit(Resource::Nofile);
        if limit.current != limit.maximum {
            let raised = Rlimit {
                current: limit.maximum,
                maximum: limit.maximum,
            };
            if let Err(e) = setrlimit(Resource::Nofile, raised) {
                tracing::warn!(error = %e, "cannot raise the open-file limit");
            }
        }
        getrlimit(Resource::Nofile).current
    }
    #[cfg(not(unix))]
    {
        None
    }
}

/// The connection cap that fits `file_limit` (the soft open-file limit): at most
/// `file_limit - RESERVED_FILES - REFUSAL_SLOTS`, and at least 1.
pub fn fit_to_file_limit(wanted: usize, file_limit: Option<u64>) -> usize {
    let Some(limit) = file_limit else {
        return wanted.max(1);
    };
    let room = limit.saturating_sub(RESERVED_FILES + REFUSAL_SLOTS as u64);
    wanted
        .min(usize::try_from(room).unwrap_or(usize::MAX))
        .max(1)
}

/// Milliseconds since `base`, saturating.
fn millis_since(base: Instant, now: Instant) -> u64 {
    u64::try_from(now.saturating_duration_since(base).as_millis()).unwrap_or(u64::MAX)
}

/// No time recorded.
const NEVER: u64 = u64::MAX;

/// What one connection has been doing, shared by its socket wrapper, its requests and its
/// timer.
#[derive(Debug)]
struct Activity {
    /// When the connection was accepted; the other times count from it.
    opened: Instant,
    /// Requests in flight (from the head being read to the end of the answer's body).
    active: AtomicUsize,
    /// When `active` last changed between zero and non-zero, ms after `opened`.
    since_ms: AtomicU64,
    /// When the first byte arrived while no request was in flight (the start of the next
    /// request's head), ms after `opened`; [`NEVER`] when none has.
    first_byte_ms: AtomicU64,
}

/// What the timer of a connection decides.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Verdict {
    /// Nothing expired; look again at this time.
    WakeAt(Instant),
    /// Close the connection, for this reason.
    Close(&'static str),
}

impl Activity {
    fn new(opened: Instant) -> Self {
        Self {
            opened,
            active: AtomicUsize::new(0),
            since_ms: AtomicU64::new(0),
            first_byte_ms: AtomicU64::new(NEVER),
        }
    }

    fn at(&self, ms: u64) -> Instant {
        self.opened + Duration::from_millis(ms)
    }

    fn begin_request(&self) {
        if self.active.fetch_add(1, Ordering::AcqRel) == 0 {
            self.since_ms
                .store(millis_since(self.opened, Instant::now()), Ordering::Release);
        }
    }

    fn end_request(&self) {
        if self.active.fetch_sub(1, Ordering::AcqRel) == 1 {
            self.first_byte_ms.store(NEVER, Ordering::Release);
            self.since_ms
                .store(millis_since(self.opened, Instant::now()), Ordering::Release);
        }
    }

    /// Records bytes read from the client at `now`.
    fn bytes_read(&self, now: Instant) {
        if self.is_idle() {
            let _ = self.first_byte_ms.compare_exchange(
                NEVER,
                millis_since(self.opened, now),
                Ordering::AcqRel,
                Ordering::Acquire,
            );
        }
    }

    fn is_idle(&self) -> bool {
        self.active.load(Ordering::Acquire) == 0
    }

    /// Whether a timeout of `limits` has expired at `now`, or when to look again.
    fn verdict(&self, limits: &ConnectionLimits, now: Instant) -> Verdict {
        let since = self.at(self.since_ms.load(Ordering::Acquire));
        if !self.is_idle() {
            let deadline = since + limits.request_timeout + LIFETIME_MARGIN;
            return if now >= deadline {
                Verdict::Close("request outlived the request timeout")
            } else {
                Verdict::WakeAt(deadline)
            };
        }
        let first_byte = self.first_byte_ms.load(Ordering::Acquire);
        if first_byte != NEVER {
            let deadline = self.at(first_byte) + limits.header_read_timeout;
            return if now >= deadline {
                Verdict::Close("request head not complete within the header-read timeout")
            } else {
                Verdict::WakeAt(deadline)
            };
        }
        let deadline = since + limits.idle_timeout;
        if now >= deadline {
            return Verdict::Close("idle timeout");
        }
        // A byte arriving after now starts a head that may take the header-read timeout.
        Verdict::WakeAt(deadline.min(now + limits.header_read_timeout))
    }
}

/// A client socket that counts the bytes read from it into its connection's [`Activity`].
struct CountingStream {
    inner: TcpStream,
    activity: Arc<Activity>,
}

impl AsyncRead for CountingStream {
    fn poll_read(
        mut self: Pin<&mut Self>,
        cx: &mut Context<'_>,
        buf: &mut ReadBuf<'_>,
    ) -> Poll<std::io::Result<()>> {
        let before = buf.filled().len();
        let polled = Pin::new(&mut self.inner).poll_read(cx, buf);
        let read = buf.filled().len().saturating_sub(before);
        if read > 0 {
            self.activity.bytes_read(Instant::now());
        }
        polled
    }
}

impl AsyncWrite for CountingStream {
    fn poll_write(
        mut self: Pin<&mut Self>,
        cx: &mut Context<'_>,
        buf: &[u8],
    ) -> Poll<std::io::Result<usize>> {
        Pin::new(&mut self.inner).poll_write(cx, buf)
    }

    fn poll_flush(mut self: Pin<&mut Self>, cx: &mut Context<'_>) -> Poll<std::io::Result<()>> {
        Pin::new(&mut self.inner).poll_flush(cx)
    }

    fn poll_shutdown(mut self: Pin<&mut Self>, cx: &mut Context<'_>) -> Poll<std::io::Result<()>> {
        Pin::new(&mut self.inner).poll_shutdown(cx)
    }

    fn poll_write_vectored(
        mut self: Pin<&mut Self>,
        cx: &mut Context<'_>,
        bufs: &[std::io::IoSlice<'_>],
    ) -> Poll<std::io::Result<usize>> {
        Pin::new(&mut self.inner).poll_write_vectored(cx, bufs)
    }

    fn is_write_vectored(&self) -> bool {
        self.inner.is_write_vectored()
    }
}

/// Marks a request in flight on its connection from creation until dropped (with the end of
/// the answer's body).
struct RequestGuard(Arc<Activity>);

impl RequestGuard {
    fn new(activity: &Arc<Activity>) -> Self {
        activity.begin_request();
        Self(Arc::clone(activity))
    }
}

impl Drop for RequestGuard {
    fn drop(&mut self) {
        self.0.end_request();
    }
}

/// An answer's body that holds its request's [`RequestGuard`] until it ends.
struct GuardedBody {
    inner: Body,
    _guard: RequestGuard,
}

impl hyper::body::Body for GuardedBody {
    type Data = axum::body::Bytes;
    type Error = axum::Error;

    fn poll_frame(
        mut self: Pin<&mut Self>,
        cx: &mut Context<'_>,
    ) -> Poll<Option<Result<Frame<Self::Data>, Self::Error>>> {
        Pin::new(&mut self.inner).poll_frame(cx)
    }

    fn is_end_stream(&self) -> bool {
        self.inner.is_end_stream()
    }

    fn size_hint(&self) -> SizeHint {
        self.inner.size_hint()
    }
}

/// Serves `app` on `listener` until `stop` turns true, then drains (see the module
/// documentation) and returns.
pub async fn serve(
    listener: TcpListener,
    app: Router,
    limits: ConnectionLimits,
    mut stop: watch::Receiver<bool>,
) {
    let cap = limits.max_connections.max(1);
    let slots = Arc::new(Semaphore::new(cap));
    let refusals = Arc::new(Semaphore::new(REFUSAL_SLOTS));
    let (drain_tx, drain_rx) = watch::channel(false);
    let refusal = Arc::new(refusal_bytes(cap).await);
    loop {
        tokio::select! {
            biased;
            // The borrow `wait_for` returns is dropped inside, so that the loop's future stays
            // `Send` across the back-off below (the in-process tests spawn it).
            () = async { let _ = stop.wait_for(|stopped| *stopped).await; } => break,
            accepted = listener.accept() => match accepted {
                Ok((stream, peer)) => {
                    if let Ok(permit) = Arc::clone(&slots).try_acquire_owned() {
                        let app = app.clone();
                        let drain = drain_rx.clone();
                        tokio::spawn(serve_connection(stream, peer, app, limits, drain, permit));
                    } else if let Ok(permit) = Arc::clone(&refusals).try_acquire_owned() {
                        metrics::counter!("ringdrag_connections_refused_total", "answer" => "503")
                            .increment(1);
                        tokio::spawn(refuse(stream, Arc::clone(&refusal), permit));
                    } else {
                        metrics::counter!("ringdrag_connections_refused_total", "answer" => "closed")
                            .increment(1);
                        drop(stream);
                    }
                }
                Err(e) => {
                    tracing::warn!(error = %e, "accept failed");
                    tokio::time::sleep(ACCEPT_BACKOFF).await;
                }
            },
        }
    }
    drop(listener);
    let open = cap - slots.available_permits();
    tracing::info!(
        open_connections = open,
        "listener closed; closing idle connections, finishing requests in flight"
    );
    let _ = drain_tx.send(true);
    let all = u32::try_from(cap).unwrap_or(u32::MAX);
    let deadline = limits.request_timeout + LIFETIME_MARGIN;
    if tokio::time::timeout(deadline, slots.acquire_many(all))
        .await
        .is_err()
    {
        tracing::warn!("drain deadline passed; exiting with connections open");
    }
}

/// Serves one connection under its timeouts until it ends, times out, or the drain closes it.
async fn serve_connection(
    stream: TcpStream,
    peer: SocketAddr,
    app: Router,
    limits: ConnectionLimits,
    mut drain: watch::Receiver<bool>,
    permit: OwnedSemaphorePermit,
) {
    let _permit = permit;
    metrics::gauge!("ringdrag_connections_open").increment(1.0);
    let activity = Arc::new(Activity::new(Instant::now()));
    let io = TokioIo::new(CountingStream {
        inner: stream,
        activity: Arc::clone(&activity),
    });
    let requests = Arc::clone(&activity);
    let service = hyper::service::service_fn(move |mut req: hyper::Request<Incoming>| {
        let guard = RequestGuard::new(&requests);
        req.extensions_mut().insert(ConnectInfo(peer));
        let app = app.clone();
        async move {
            let Ok(response) = app.oneshot(req).await;
            Ok::<_, Infallible>(response.map(|inner| GuardedBody {
                inner,
                _guard: guard,
            }))
        }
    });
    let builder = auto::Builder::new(TokioExecutor::new());
    let connection = builder.serve_connection(io, service);
    tokio::pin!(connection);
    let mut draining = false;
    let timer = tokio::time::sleep(Duration::ZERO);
    tokio::pin!(timer);
    loop {
        tokio::select! {
            served = connection.as_mut() => {
                if let Err(e) = served {
                    tracing::debug!(%peer, error = %e, "connection ended with an error");
                }
                break;
            }
            _ = drain.wait_for(|d| *d), if !draining => {
                draining = true;
                connection.as_mut().graceful_shutdown();
                if activity.is_idle() {
                    break;
                }
                timer
                    .as_mut()
                    .reset(tokio::time::Instant::now() + Duration::from_millis(100));
            }
            () = &mut timer => {
                if draining && activity.is_idle() {
                    break;
                }
                match activity.verdict(&limits, Instant::now()) {
                    Verdict::Close(reason) => {
                        tracing::debug!(%peer, reason, "closing connection");
                        metrics::counter!("ringdrag_connections_timed_out_total").increment(1);
                        break;
                    }
                    Verdict::WakeAt(at) => {
                        // While draining, look often enough to close right after the last
                        // request ends.
                        let at = if draining {
                            at.min(Instant::now() + Duration::from_millis(100))
                        } else {
                            at
                        };
                        timer.as_mut().reset(tokio::time::Instant::from_std(at));
                    }
                }
            }
        }
    }
    metrics::gauge!("ringdrag_connections_open").decrement(1.0);
}

/// The bytes of the refusal answered above the cap: a complete HTTP/1.1 503 with a problem
/// document, `Retry-After` and `Connection: close`.
async fn refusal_bytes(cap: usize) -> Vec<u8> {
    let response = ApiError::TooManyConnections { limit: cap }.into_response();
    let (parts, body) = response.into_parts();
    let body = axum::body::to_bytes(body, 64 * 1024)
        .await
        .unwrap_or_default();
    let mut out = format!(
        "HTTP/1.1 {} {}\r\n",
        parts.status.as_u16(),
        parts
            .status
            .canonical_reason()
            .unwrap_or("Service Unavailable")
    )
    .into_bytes();
    for (name, value) in &parts.headers {
        if name == axum::http::header::CONTENT_LENGTH {
            continue;
        }
        out.extend_from_slice(name.as_str().as_bytes());
        out.extend_from_slice(b": ");
        out.extend_from_slice(value.as_bytes());
        out.extend_from_slice(b"\r\n");
    }
    out.extend_from_slice(format!("content-length: {}\r\n", body.len()).as_bytes());
    out.extend_from_slice(b"connection: close\r\n\r\n");
    out.extend_from_slice(&body);
    out
}

/// Answers a connection above the cap: reads what the client sends first (briefly, so that
/// closing does not reset the connection before the client reads the answer), writes the
/// refusal and closes.
async fn refuse(mut stream: TcpStream, answer: Arc<Vec<u8>>, permit: OwnedSemaphorePermit) {
    let _permit = permit;
    let _ = tokio::time::timeout(REFUSAL_TIME, async {
        let mut head = [0u8; 4096];
        let mut seen = Vec::new();
        while let Ok(n) = stream.read(&mut head).await {
            if n == 0 {
                break;
            }
            seen.extend_from_slice(&head[..n.min(head.len())]);
            if seen.windows(4).any(|w| w == b"\r\n\r\n") || seen.len() > 16 * 1024 {
                break;
            }
        }
        let _ = stream.write_all(&answer).await;
        let _ = stream.shutdown().await;
        // Drain what the client still sends until it closes (bounded by the timeout).
        while let Ok(n) = stream.read(&mut head).await {
            if n == 0 {
                break;
            }
        }
    })
    .await;
}

#[cfg(test)]
mod tests {
    use super::*;

    fn limits() -> ConnectionLimits {
        ConnectionLimits {
            max_connections: 8,
            header_read_timeout: Duration::from_secs(2),
            idle_timeout: Duration::from_secs(10),
            request_timeout: Duration::from_secs(60),
        }
    }

    #[test]
    fn a_silent_connection_closes_at_the_idle_timeout() {
        let t0 = Instant::now();
        let a = Activity::new(t0);
        let l = limits();
        // Nothing sent: the header bound does not apply, the idle bound does; the timer
        // looks again within a header timeout, in case a head starts meanwhile.
        assert_eq!(
            a.verdict(&l, t0 + Duration::from_secs(1)),
            Verdict::WakeAt(t0 + Duration::from_secs(3))
        );
        assert_eq!(
            a.verdict(&l, t0 + Duration::from_secs(9)),
            Verdict::WakeAt(t0 + Duration::from_secs(10))
        );
        assert!(matches!(
            a.verdict(&l, t0 + Duration::from_secs(10)),
            Verdict::Close(_)
        ));
    }

    #[test]
    fn a_partial_head_closes_at_the_header_timeout() {
        let t0 = Instant::now();
        let a = Activity::new(t0);
        // The first byte of a head arrives after 5 s of silence: 2 s from then, not from
        // the start, it must be complete.
        a.bytes_read(t0 + Duration::from_secs(5));
        assert_eq!(
            a.verdict(&limits(), t0 + Duration::from_secs(6)),
            Verdict::WakeAt(t0 + Duration::from_secs(7))
        );
        assert!(matches!(
            a.verdict(&limits(), t0 + Duration::from_secs(7)),
            Verdict::Close(_)
        ));
    }

    #[test]
    fn a_request_in_flight_keeps_its_connection_until_its_deadline() {
        let t0 = Instant::now();
        let a = Arc::new(Activity::new(t0));
        let guard = RequestGuard::new(&a);
        let l = limits();
        let since = t0 + Duration::from_millis(a.since_ms.load(Ordering::Acquire));
        assert_eq!(
            a.verdict(&l, since + Duration::from_secs(30)),
            Verdict::WakeAt(since + l.request_timeout + LIFETIME_MARGIN)
        );
        assert!(matches!(
            a.verdict(&l, since + l.request_timeout + LIFETIME_MARGIN),
            Verdict::Close(_)
        ));
        drop(guard);
        assert!(a.is_idle());
    }

    #[test]
    fn the_cap_fits_the_file_limit() {
        assert_eq!(fit_to_file_limit(1024, None), 1024);
        assert_eq!(fit_to_file_limit(1024, Some(1_048_576)), 1024);
        assert_eq!(
            fit_to_file_limit(1024, Some(1024)),
            1024 - RESERVED_FILES as usize - REFUSAL_SLOTS
        );
        assert_eq!(fit_to_file_limit(1024, Some(10)), 1);
    }
}
