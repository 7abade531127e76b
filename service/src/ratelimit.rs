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
//! Memory stays bounded: at most [`MAX_TRACKED`] buckets are kept; when the table is full,
//! buckets that have refilled completely (indistinguishable from new ones) are dropped, at most
//! once a second, and clients that still find no room share one overflow bucket.

use crate::access::{GUARDED_PREFIX, KeyIndex};
use crate::problem::ApiError;
use axum::extract::{ConnectInfo, Request, State};
use axum::http::HeaderName;
use axum::middleware::Next;
use axum::response::{IntoResponse, Response};
use std::collections::HashMap;
use std::net::{IpAddr, SocketAddr};
use std::sync::{Arc, Mutex, PoisonError};
use std::time::{Duration, Instant};

/// Most clients tracked at once (about 64 bytes each).
pub const MAX_TRACKED: usize = 65_536;

/// Shortest time between two prunings of a full table.
const PRUNE_INTERVAL: Duration = Duration::from_secs(1);

/// Who a request counts against.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ClientId {
    /// The API key with this index.
    Key(usize),
    /// A client address.
    Address(IpAddr),
    /// No address known, or no room left in the table: one shared bucket.
    Shared,
}

/// One client's bucket.
#[derive(Debug, Clone, Copy)]
struct Bucket {
    tokens: f64,
    updated: Instant,
}

/// Token buckets of every client. Cheap to clone.
#[derive(Debug, Clone)]
pub struct RateLimiter {
    inner: Arc<Mutex<Table>>,
    per_s: f64,
    burst: f64,
    client_ip_header: Option<HeaderName>,
}

#[derive(Debug)]
struct Table {
    buckets: HashMap<ClientId, Bucket>,
    last_prune: Option<Instant>,
}

impl RateLimiter {
    /// A limiter allowing `per_minute` requests a minute per client, in bursts of at most
    /// `burst` (both at least 1), keying address-based clients by `client_ip_header` when set.
    pub fn new(per_minute: u32, burst: u32, client_ip_header: Option<HeaderName>) -> Self {
        Self {
            inner: Arc::new(Mutex::new(Table {
                buckets: HashMap::new(),
                last_prune: None,
            })),
            per_s: f64::from(per_minute.max(1)) / 60.0,
            burst: f64::from(burst.max(1)),
            client_ip_header,
        }
    }

    /// Takes a token for `client` at time `now`: `Ok` with the tokens left, or `Err` with the
    /// seconds until the next token (at least 1).
    pub fn take(&self, client: ClientId, now: Instant) -> Result<u32, u64> {
        let mut table = self.inner.lock().unwrap_or_else(PoisonError::into_inner);
        let client = self.admit(&mut table, client, now);
        let full = Bucket {
            tokens: self.burst,
            updated: now,
        };
        let bucket = table.buckets.entry(client).or_insert(full);
        let elapsed = now.saturating_duration_since(bucket.updated).as_secs_f64();
        bucket.tokens = (bucket.tokens + elapsed * self.per_s).min(self.burst);
        bucket.updated = now;
        if bucket.tokens >= 1.0 {
            bucket.tokens -= 1.0;
            Ok(bucket.tokens as u32)
        } else {
            let wait_s = (1.0 - bucket.tokens) / self.per_s;
            Err((wait_s.ceil() as u64).max(1))
        }
    }

    /// The identity `client` is tracked under: itself, or [`ClientId::Shared`] when the table
    /// is full and pruning found no room.
    fn admit(&self, table: &mut Table, client: ClientId, now: Instant) -> ClientId {
        if table.buckets.len() < MAX_TRACKED || table.buckets.contains_key(&client) {
            return client;
        }
        let due = table
            .last_prune
            .is_none_or(|t| now.saturating_duration_since(t) >= PRUNE_INTERVAL);
        if due {
            table.last_prune = Some(now);
            let (per_s, burst) = (self.per_s, self.burst);
            table.buckets.retain(|id, b| {
                let refilled =
                    b.tokens + now.saturating_duration_since(b.updated).as_secs_f64() * per_s;
                *id == ClientId::Shared || refilled < burst
            });
        }
        if table.buckets.len() < MAX_TRACKED {
            client
        } else {
            ClientId::Shared
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
        if let Some(name) = &self.client_ip_header {
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

    #[test]
    fn the_table_stays_bounded() {
        let limiter = RateLimiter::new(60, 2, None);
        let t0 = Instant::now();
        for i in 0..MAX_TRACKED {
            let octets = (i as u32).to_be_bytes();
            let id = ClientId::Address(IpAddr::from([10, octets[1], octets[2], octets[3]]));
            assert!(limiter.take(id, t0).is_ok());
        }
        assert_eq!(limiter.tracked(), MAX_TRACKED);
        // Full and nothing refilled yet: a newcomer goes to the shared bucket.
        let newcomer = ip("198.51.100.1");
        assert!(limiter.take(newcomer, t0).is_ok());
        assert!(limiter.tracked() <= MAX_TRACKED + 1);
        // Two seconds later every bucket has refilled: pruning makes room again.
        let later = t0 + Duration::from_secs(2);
        assert!(limiter.take(ip("198.51.100.2"), later).is_ok());
        assert!(limiter.tracked() <= 3, "{}", limiter.tracked());
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
