//! Rate limits: a token bucket per API key, or per client address when keys are off.
//!
//! Off unless `RINGDRAG_RATE_LIMIT_PER_MINUTE` is set. Each client owns a bucket holding at
//! most `burst` tokens (default: the per-minute rate), refilled continuously at the per-minute
//! rate; a guarded request (a path under `/v1/`) takes one token, and a request that finds
//! the bucket empty is answered 429 with `Retry-After` (the whole seconds until a token is
//! back). This bounds what one client may ask for; it does not protect the cores: the job
//! slots and the queue wait do that, for all clients together ([`crate::jobs`]).
//!
//! The client is the API key it presented (tagged by [`crate::access`]) when keys are on.
//! Otherwise it is the peer address of the connection, or, behind a proxy that sets it
//! (`--client-ip-header x-forwarded-for`), the last address in that header: the one the
//! nearest proxy appended, which a client cannot forge (earlier entries it can). Use the
//! header only behind such a proxy.
//!
//! Memory stays bounded: at most [`MAX_TRACKED`] buckets are kept, and when the table is full
//! the least recently used bucket makes room for the newcomer. Strangers cannot fill the table
//! against anyone: a flood of new addresses only evicts buckets that were idle longest, and an
//! evicted client starts again with a full bucket (the limiter errs towards allowing), so a new
//! client is never refused because of what others sent.

use crate::access::{GUARDED_PREFIX, KeyIndex};
use crate::problem::ApiError;
use axum::extract::{ConnectInfo, Request, State};
use axum::http::HeaderName;
use axum::middleware::Next;
use axum::response::{IntoResponse, Response};
use std::collections::{BTreeMap, HashMap};
use std::net::{IpAddr, SocketAddr};
use std::sync::{Arc, Mutex, PoisonError};
use std::time::Instant;

/// Most clients tracked at once (about 100 bytes each).
pub const MAX_TRACKED: usize = 65_536;

/// Who a request counts against.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ClientId {
    /// The API key with this index.
    Key(usize),
    /// A client address.
    Address(IpAddr),
    /// No address known: one shared bucket.
    Shared,
}

/// One client's bucket.
#[derive(Debug, Clone, Copy)]
struct Bucket {
    tokens: f64,
    updated: Instant,
    /// Position in the use order (larger: used more recently).
    used: u64,
}

/// Token buckets of every client. Cheap to clone.
#[derive(Debug, Clone)]
pub struct RateLimiter {
    inner: Arc<Mutex<Table>>,
    per_s: f64,
    burst: f64,
    capacity: usize,
    client_ip_header: Option<HeaderName>,
}

/// The buckets, and their order of use for least-recently-used eviction.
#[derive(Debug, Default)]
struct Table {
    buckets: HashMap<ClientId, Bucket>,
    by_use: BTreeMap<u64, ClientId>,
    next_use: u64,
}

impl Table {
    /// The bucket of `client`, marked as just used; a new one starts full (`full` tokens at
    /// `now`), evicting the least recently used bucket when `capacity` is reached.
    fn touch(&mut self, client: ClientId, full: f64, now: Instant, capacity: usize) -> &mut Bucket {
        let used = self.next_use;
        self.next_use += 1;
        if let Some(old) = self.buckets.get(&client).map(|b| b.used) {
            self.by_use.remove(&old);
        } else {
            while self.buckets.len() >= capacity.max(1) {
                let Some((_, oldest)) = self.by_use.pop_first() else {
                    break;
                };
                self.buckets.remove(&oldest);
            }
        }
        self.by_use.insert(used, client);
        let bucket = self.buckets.entry(client).or_insert(Bucket {
            tokens: full,
            updated: now,
            used,
        });
        bucket.used = used;
        bucket
    }
}

impl RateLimiter {
    /// A limiter allowing `per_minute` requests a minute per client, in bursts of at most
    /// `burst` (both at least 1), keying address-based clients by `client_ip_header` when set.
    pub fn new(per_minute: u32, burst: u32, client_ip_header: Option<HeaderName>) -> Self {
        Self::with_capacity(per_minute, burst, client_ip_header, MAX_TRACKED)
    }

    /// Like [`RateLimiter::new`], tracking at most `capacity` clients.
    pub fn with_capacity(
        per_minute: u32,
        burst: u32,
        client_ip_header: Option<HeaderName>,
        capacity: usize,
    ) -> Self {
        Self {
            inner: Arc::new(Mutex::new(Table::default())),
            per_s: f64::from(per_minute.max(1)) / 60.0,
            burst: f64::from(burst.max(1)),
            capacity: capacity.max(1),
            client_ip_header,
        }
    }

    /// Tokens of a bucket last seen with `tokens` at `updated`, refilled up to `now`.
    fn refilled(&self, tokens: f64, updated: Instant, now: Instant) -> f64 {
        let elapsed = now.saturating_duration_since(updated).as_secs_f64();
        (tokens + elapsed * self.per_s).min(self.burst)
    }

    /// Seconds until a bucket holding `tokens` (< 1) has one token (at least 1).
    fn wait_s(&self, tokens: f64) -> u64 {
        (((1.0 - tokens) / self.per_s).ceil() as u64).max(1)
    }

    /// Takes a token for `client` at time `now`: `Ok` with the tokens left, or `Err` with the
    /// seconds until the next token (at least 1).
    ///
    /// # Errors
    ///
    /// The seconds until the client's next token (at least 1) when its bucket is empty.
    pub fn take(&self, client: ClientId, now: Instant) -> Result<u32, u64> {
        let mut table = self.inner.lock().unwrap_or_else(PoisonError::into_inner);
        let (burst, capacity) = (self.burst, self.capacity);
        let bucket = table.touch(client, burst, now, capacity);
        let tokens = self.refilled(bucket.tokens, bucket.updated, now);
        bucket.updated = now;
        if tokens >= 1.0 {
            bucket.tokens = tokens - 1.0;
            Ok(bucket.tokens as u32)
        } else {
            bucket.tokens = tokens;
            Err(self.wait_s(tokens))
        }
    }

    /// Whether `client` has a token at `now`, without taking it (and without tracking a
    /// client not seen before): `Err` with the seconds until it has one.
    ///
    /// # Errors
    ///
    /// The seconds until the client has a token (at least 1) when its bucket is empty.
    pub fn check(&self, client: ClientId, now: Instant) -> Result<(), u64> {
        let table = self.inner.lock().unwrap_or_else(PoisonError::into_inner);
        match table.buckets.get(&client) {
            Some(b) => {
                let tokens = self.refilled(b.tokens, b.updated, now);
                if tokens >= 1.0 {
                    Ok(())
                } else {
                    Err(self.wait_s(tokens))
                }
            }
            None => Ok(()),
        }
    }

    /// Number of buckets held.
    pub fn tracked(&self) -> usize {
        self.inner
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
            .buckets
            .len()
    }

    /// The client a request counts against.
    fn client_of(&self, req: &Request) -> ClientId {
        if let Some(KeyIndex(i)) = req.extensions().get::<KeyIndex>() {
            return ClientId::Key(*i);
        }
        client_address(req, self.client_ip_header.as_ref())
    }
}

/// The client address of a request: the last address in `client_ip_header` when that is set
/// and present, otherwise the connection's peer address; [`ClientId::Shared`] when neither is
/// known.
pub fn client_address(req: &Request, client_ip_header: Option<&HeaderName>) -> ClientId {
    if let Some(name) = client_ip_header {
        let forwarded = req
            .headers()
            .get_all(name)
            .iter()
            .filter_map(|v| v.to_str().ok())
            .flat_map(|v| v.split(','))
            .filter_map(|item| parse_address(item.trim()))
            .next_back();
        if let Some(address) = forwarded {
            return ClientId::Address(address);
        }
    }
    req.extensions()
        .get::<ConnectInfo<SocketAddr>>()
        .map_or(ClientId::Shared, |ConnectInfo(peer)| {
            ClientId::Address(peer.ip())
        })
}

/// An address as proxies write it: `203.0.113.7`, `2001:db8::1`, `[2001:db8::1]:443` or
/// `203.0.113.7:5000`.
fn parse_address(text: &str) -> Option<IpAddr> {
    text.parse::<IpAddr>()
        .ok()
        .or_else(|| text.parse::<SocketAddr>().ok().map(|s| s.ip()))
}

/// Middleware: takes a token for every guarded request, answering 429 when none is left.
pub async fn limit_rate(State(limiter): State<RateLimiter>, req: Request, next: Next) -> Response {
    if !req.uri().path().starts_with(GUARDED_PREFIX) {
        return next.run(req).await;
    }
    let client = limiter.client_of(&req);
    match limiter.take(client, Instant::now()) {
        Ok(_) => next.run(req).await,
        Err(retry_after_s) => {
            metrics::counter!("ringdrag_rate_limited_total").increment(1);
            ApiError::RateLimited { retry_after_s }.into_response()
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::Duration;

    fn ip(text: &str) -> ClientId {
        ClientId::Address(text.parse().unwrap_or(IpAddr::from([0, 0, 0, 0])))
    }

    #[test]
    fn a_bucket_allows_its_burst_then_refills_at_the_rate() {
        // Expected counts follow the token-bucket algorithm (common practice: a bucket of
        // `burst` tokens refilled at the rate). 60 a minute is one a second; a burst of 3.
        let limiter = RateLimiter::new(60, 3, None);
        let t0 = Instant::now();
        let a = ip("192.0.2.1");
        assert_eq!(limiter.take(a, t0), Ok(2));
        assert_eq!(limiter.take(a, t0), Ok(1));
        assert_eq!(limiter.take(a, t0), Ok(0));
        assert_eq!(limiter.take(a, t0), Err(1));
        // Another client is not affected.
        assert_eq!(limiter.take(ip("192.0.2.2"), t0), Ok(2));
        // Half a token after 0.5 s is not enough; a whole one after 1 s is.
        assert_eq!(limiter.take(a, t0 + Duration::from_millis(500)), Err(1));
        assert_eq!(limiter.take(a, t0 + Duration::from_millis(1000)), Ok(0));
        // A long pause refills to the burst, not beyond.
        let later = t0 + Duration::from_secs(3600);
        assert_eq!(limiter.take(a, later), Ok(2));
    }

    #[test]
    fn retry_after_is_the_time_to_the_next_token() {
        // 6 a minute: one token every 10 s.
        let limiter = RateLimiter::new(6, 1, None);
        let t0 = Instant::now();
        assert_eq!(limiter.take(ClientId::Key(0), t0), Ok(0));
        assert_eq!(limiter.take(ClientId::Key(0), t0), Err(10));
        assert_eq!(
            limiter.take(ClientId::Key(0), t0 + Duration::from_millis(7500)),
            Err(3)
        );
    }

    fn address(i: u32) -> ClientId {
        let o = i.to_be_bytes();
        ClientId::Address(IpAddr::from([10, o[1], o[2], o[3]]))
    }

    #[test]
    fn strangers_cannot_fill_the_table_against_a_newcomer() {
        // A small table (the eviction does not depend on its size). One request a minute,
        // burst 1: every stranger empties its own bucket with its first request.
        let capacity = 64;
        let limiter = RateLimiter::with_capacity(1, 1, None, capacity);
        let t0 = Instant::now();
        let regular = ip("192.0.2.10");
        assert_eq!(limiter.take(regular, t0), Ok(0));
        assert_eq!(limiter.take(regular, t0), Err(60));
        // Twice the table's size of distinct addresses, all at the same instant.
        for i in 0..(2 * capacity as u32) {
            assert!(limiter.take(address(i), t0).is_ok(), "stranger {i}");
        }
        assert_eq!(limiter.tracked(), capacity);
        // A new client still gets its first request, at that same instant.
        assert_eq!(limiter.take(ip("198.51.100.1"), t0), Ok(0));
        assert_eq!(limiter.tracked(), capacity);
        // The regular client was idle longest and was evicted: it starts again full, which
        // errs towards allowing, never towards refusing.
        assert_eq!(limiter.take(regular, t0), Ok(0));
    }

    #[test]
    fn the_recently_used_stay_and_the_idle_go() {
        let limiter = RateLimiter::with_capacity(60, 2, None, 3);
        let t0 = Instant::now();
        let (a, b, c, d) = (address(1), address(2), address(3), address(4));
        for id in [a, b, c] {
            assert_eq!(limiter.take(id, t0), Ok(1));
        }
        // `a` is used again, so `b` is now the least recently used and makes room for `d`.
        assert_eq!(limiter.take(a, t0), Ok(0));
        assert_eq!(limiter.take(d, t0), Ok(1));
        assert_eq!(limiter.tracked(), 3);
        assert_eq!(limiter.take(a, t0), Err(1), "a kept its emptied bucket");
        assert_eq!(limiter.take(b, t0), Ok(1), "b was evicted and starts full");
    }

    #[test]
    fn check_does_not_take_or_track() {
        let limiter = RateLimiter::new(60, 1, None);
        let t0 = Instant::now();
        let a = ip("192.0.2.1");
        assert_eq!(limiter.check(a, t0), Ok(()));
        assert_eq!(limiter.tracked(), 0);
        assert_eq!(limiter.take(a, t0), Ok(0));
        assert_eq!(limiter.check(a, t0), Err(1));
        assert_eq!(
            limiter.check(a, t0 + std::time::Duration::from_secs(1)),
            Ok(())
        );
    }

    #[test]
    fn forwarded_addresses_use_the_last_entry() {
        let limiter = RateLimiter::new(60, 1, Some(HeaderName::from_static("x-forwarded-for")));
        let req = Request::builder()
            .uri("/v1/force-curve")
            .header("x-forwarded-for", "198.51.100.9, 203.0.113.7")
            .body(axum::body::Body::empty());
        let Ok(req) = req else {
            panic!("request builds")
        };
        assert_eq!(limiter.client_of(&req), ip("203.0.113.7"));
        assert_eq!(
            parse_address("[2001:db8::1]:443"),
            "2001:db8::1".parse().ok()
        );
        assert_eq!(
            parse_address("203.0.113.7:5000"),
            "203.0.113.7".parse().ok()
        );
        assert_eq!(parse_address("unknown"), None);
        let bare = Request::builder()
            .uri("/v1/force-curve")
            .body(axum::body::Body::empty());
        let Ok(bare) = bare else {
            panic!("request builds")
        };
        assert_eq!(limiter.client_of(&bare), ClientId::Shared);
    }
}
