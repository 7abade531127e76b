//! Response cache for identical computing requests.
//!
//! A browser-side configurator tends to send the same few designs again and again (every
//! visitor who opens the default product page asks for the same force curve). Every answer of
//! `POST /v1/force-curve` and `POST /v1/simulate` is a pure function of the request body (and
//! of the service's fixed limits), so a repeated request can be answered from memory without
//! taking a job slot.
//!
//! - The key is the SHA-256 digest of the path (with any query), the `Accept` header and the
//!   canonical body:
//!   the JSON re-serialised with object keys sorted and numbers in serde_json's shortest form,
//!   so `{"a":1.0,"b":2}` and `{ "b": 2, "a": 1 }` share an entry.
//! - Only `200` answers with a JSON body of known size are stored: never errors (a 503 must
//!   not outlive the overload), never streams, never anything else.
//! - The cache is bounded by entries (`RINGDRAG_CACHE_ENTRIES`, 0 turns it off) and by bytes
//!   (`RINGDRAG_CACHE_MAX_BYTES`): each entry weighs at least its share of the byte budget,
//!   so neither bound can be exceeded. An answer larger than an eighth of the budget is not
//!   stored. moka's TinyLFU policy picks what stays: entries asked for often outlive one-offs.
//! - Requests without `Content-Length`, with a body not declared as JSON or above
//!   `--max-body-bytes`, whose body is not JSON, or that repeat a key within an object (which
//!   the endpoints refuse, 422), pass through untouched: the endpoint answers them as always,
//!   so a cached answer is never given to a body the endpoint would refuse.
//! - The body is read inside the request timeout (the timeout layer sits outside the cache).
//!
//! Answers carry `x-cache: hit` or `x-cache: miss`; `ringdrag_cache_lookups_total{route,
//! result}` counts them. The cache is shared by every client: an answer for a design some
//! client asked for recently comes back faster, which tells another client that the design
//! was asked for. Turn the cache off where that matters.

use crate::extract::is_json;
use axum::body::{Body, Bytes, HttpBody as _};
use axum::extract::{Request, State};
use axum::http::{HeaderName, HeaderValue, Method, StatusCode, header};
use axum::middleware::Next;
use axum::response::{IntoResponse, Response};
use serde_json::Value;
use sha2::{Digest, Sha256};

/// Routes whose answers may be cached (pure functions of the body, answered in one piece).
pub const CACHED_ROUTES: [&str; 2] = ["/v1/force-curve", "/v1/simulate"];

/// The header saying whether an answer came from the cache.
pub const X_CACHE: HeaderName = HeaderName::from_static("x-cache");

/// A stored answer: its body and media type.
#[derive(Debug, Clone)]
struct Stored {
    body: Bytes,
    content_type: HeaderValue,
}

/// The bounded response cache. Cheap to clone.
#[derive(Clone)]
pub struct ResponseCache {
    entries: moka::sync::Cache<[u8; 32], Stored>,
    largest_body: usize,
    max_body_bytes: usize,
}

impl std::fmt::Debug for ResponseCache {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("ResponseCache")
            .field("entries", &self.entries.entry_count())
            .field("largest_body", &self.largest_body)
            .finish_non_exhaustive()
    }
}

impl ResponseCache {
    /// A cache of at most `max_entries` answers and `max_bytes` bytes of bodies, reading
    /// request bodies up to `max_body_bytes`; `None` when `max_entries` or `max_bytes` is 0.
    pub fn new(max_entries: u64, max_bytes: u64, max_body_bytes: usize) -> Option<Self> {
        if max_entries == 0 || max_bytes == 0 {
            return None;
        }
        // Each entry weighs at least max_bytes / max_entries, so at most max_entries fit; and
        // at least its body's size, so the bodies fit in max_bytes.
        let floor = u32::try_from((max_bytes / max_entries).max(1)).unwrap_or(u32::MAX);
        let entries = moka::sync::Cache::builder()
            .max_capacity(max_bytes)
            .weigher(move |_key: &[u8; 32], stored: &Stored| {
                u32::try_from(stored.body.len())
                    .unwrap_or(u32::MAX)
                    .max(floor)
            })
            .build();
        Some(Self {
            entries,
            largest_body: usize::try_from(max_bytes / 8).unwrap_or(usize::MAX),
            max_body_bytes,
        })
    }

    /// Entries held now (after pending maintenance).
    pub fn len(&self) -> u64 {
        self.entries.run_pending_tasks();
        self.entries.entry_count()
    }

    /// Whether the cache holds nothing.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    fn get(&self, key: &[u8; 32]) -> Option<Stored> {
        self.entries.get(key)
    }

    fn insert(&self, key: [u8; 32], stored: Stored) {
        if stored.body.len() <= self.largest_body {
            self.entries.insert(key, stored);
        }
    }
}

/// Rewrites `value` with every object's keys in sorted order.
fn canonical(value: Value) -> Value {
    match value {
        Value::Object(map) => {
            let mut items: Vec<(String, Value)> = map.into_iter().collect();
            items.sort_by(|a, b| a.0.cmp(&b.0));
            Value::Object(items.into_iter().map(|(k, v)| (k, canonical(v))).collect())
        }
        Value::Array(items) => Value::Array(items.into_iter().map(canonical).collect()),
        other => other,
    }
}

/// A JSON value parsed strictly: an object with a repeated key is an error, as it is for the
/// endpoints' typed parsers (serde's derived `Deserialize` refuses a duplicate field), whereas
/// `serde_json::Value` would keep the last value silently. Without this, a body with a
/// duplicate key (refused 422 on a cold cache) could share its key with the valid body that
/// holds only the last value, and be answered 200 from a warm cache.
struct StrictValue(Value);

impl<'de> serde::Deserialize<'de> for StrictValue {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_any(StrictVisitor).map(StrictValue)
    }
}

struct StrictVisitor;

impl<'de> serde::de::Visitor<'de> for StrictVisitor {
    type Value = Value;

    fn expecting(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("any JSON value without duplicate object keys")
    }

    fn visit_bool<E>(self, v: bool) -> Result<Value, E> {
        Ok(Value::Bool(v))
    }

    fn visit_i64<E>(self, v: i64) -> Result<Value, E> {
        Ok(Value::from(v))
    }

    fn visit_u64<E>(self, v: u64) -> Result<Value, E> {
        Ok(Value::from(v))
    }

    fn visit_f64<E>(self, v: f64) -> Result<Value, E> {
        Ok(Value::from(v))
    }

    fn visit_str<E>(self, v: &str) -> Result<Value, E> {
        Ok(Value::String(v.to_string()))
    }

    fn visit_string<E>(self, v: String) -> Result<Value, E> {
        Ok(Value::String(v))
    }

    fn visit_unit<E>(self) -> Result<Value, E> {
        Ok(Value::Null)
    }

    fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut seq: A) -> Result<Value, A::Error> {
        let mut items = Vec::new();
        while let Some(StrictValue(item)) = seq.next_element()? {
            items.push(item);
        }
        Ok(Value::Array(items))
    }

    fn visit_map<A: serde::de::MapAccess<'de>>(self, mut map: A) -> Result<Value, A::Error> {
        let mut object = serde_json::Map::new();
        while let Some(key) = map.next_key::<String>()? {
            if object.contains_key(&key) {
                return Err(serde::de::Error::custom(format!("duplicate key `{key}`")));
            }
            let StrictValue(value) = map.next_value()?;
            object.insert(key, value);
        }
        Ok(Value::Object(object))
    }
}

/// The cache key of a request: path and query, `Accept` and canonical body; `None` when the
/// body is not JSON or repeats a key in an object (such requests are never cached, and the
/// endpoint answers them as always).
pub fn cache_key(target: &str, accept: &[u8], body: &[u8]) -> Option<[u8; 32]> {
    let StrictValue(value) = serde_json::from_slice(body).ok()?;
    let text = serde_json::to_vec(&canonical(value)).ok()?;
    let mut hasher = Sha256::new();
    for part in [target.as_bytes(), accept, &text] {
        hasher.update((part.len() as u64).to_le_bytes());
        hasher.update(part);
    }
    Some(hasher.finalize().into())
}

fn count(route: &'static str, result: &'static str) {
    metrics::counter!("ringdrag_cache_lookups_total", "route" => route, "result" => result)
        .increment(1);
}

fn mark(mut response: Response, result: &'static str) -> Response {
    response
        .headers_mut()
        .insert(X_CACHE, HeaderValue::from_static(result));
    response
}

/// Middleware: answers repeated requests of [`CACHED_ROUTES`] from the cache, and stores the
/// `200` JSON answers of the others.
pub async fn serve_cached(
    State(cache): State<ResponseCache>,
    req: Request,
    next: Next,
) -> Response {
    let Some(route) = CACHED_ROUTES
        .iter()
        .copied()
        .find(|r| *r == req.uri().path())
    else {
        return next.run(req).await;
    };
    let declared = req
        .headers()
        .get(header::CONTENT_LENGTH)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.parse::<usize>().ok());
    let json = req
        .headers()
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .is_some_and(is_json);
    let Some(length) = declared else {
        return next.run(req).await;
    };
    if req.method() != Method::POST || !json || length > cache.max_body_bytes {
        return next.run(req).await;
    }
    let target = req
        .uri()
        .path_and_query()
        .map_or(route, |p| p.as_str())
        .to_string();
    let accept = req
        .headers()
        .get(header::ACCEPT)
        .map(|v| v.as_bytes().to_vec())
        .unwrap_or_default();
    let (parts, body) = req.into_parts();
    // The declared length is within the limit and the server enforces it, so this read is
    // bounded; a body that breaks off is answered as the endpoint would (400).
    let bytes = match axum::body::to_bytes(body, cache.max_body_bytes).await {
        Ok(bytes) => bytes,
        Err(e) => {
            return crate::problem::ApiError::MalformedJson(format!("body unreadable: {e}"))
                .into_response();
        }
    };
    let key = cache_key(&target, &accept, &bytes);
    if let Some(key) = &key
        && let Some(stored) = cache.get(key)
    {
        count(route, "hit");
        let mut response = (StatusCode::OK, stored.body).into_response();
        response
            .headers_mut()
            .insert(header::CONTENT_TYPE, stored.content_type);
        return mark(response, "hit");
    }
    let response = next
        .run(Request::from_parts(parts, Body::from(bytes)))
        .await;
    let Some(key) = key else {
        return response;
    };
    count(route, "miss");
    let content_type = response.headers().get(header::CONTENT_TYPE).cloned();
    let storable = response.status() == StatusCode::OK
        && content_type
            .as_ref()
            .and_then(|v| v.to_str().ok())
            .is_some_and(|v| {
                v.split(';')
                    .next()
                    .is_some_and(|e| e.trim() == "application/json")
            })
        && response
            .body()
            .size_hint()
            .exact()
            .is_some_and(|n| n <= cache.largest_body as u64);
    let Some(content_type) = content_type.filter(|_| storable) else {
        return mark(response, "miss");
    };
    let (parts, body) = response.into_parts();
    // The body is already in memory (a serialised JSON value of known size).
    match axum::body::to_bytes(body, cache.largest_body).await {
        Ok(bytes) => {
            cache.insert(
                key,
                Stored {
                    body: bytes.clone(),
                    content_type,
                },
            );
            mark(Response::from_parts(parts, Body::from(bytes)), "miss")
        }
        Err(e) => crate::problem::ApiError::Internal(format!("cannot buffer an answer: {e}"))
            .into_response(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn equal_json_gives_equal_keys() {
        let a = cache_key(
            "/v1/force-curve",
            b"",
            br#"{"a": 1.0, "b": {"y": 2, "x": [1, 2]}}"#,
        );
        let b = cache_key(
            "/v1/force-curve",
            b"",
            br#"{"b":{"x":[1,2],"y":2},"a":1.0}"#,
        );
        assert!(a.is_some());
        assert_eq!(a, b);
        // Different route, Accept, value or array order: different keys.
        let other_route = cache_key(
            "/v1/simulate",
            b"",
            br#"{"a": 1.0, "b": {"y": 2, "x": [1, 2]}}"#,
        );
        assert_ne!(a, other_route);
        let other_accept = cache_key(
            "/v1/force-curve",
            b"image/svg+xml",
            br#"{"a": 1.0, "b": {"y": 2, "x": [1, 2]}}"#,
        );
        assert_ne!(a, other_accept);
        let other_query = cache_key(
            "/v1/force-curve?plot=1",
            b"",
            br#"{"a": 1.0, "b": {"y": 2, "x": [1, 2]}}"#,
        );
        assert_ne!(a, other_query);
        let other_order = cache_key(
            "/v1/force-curve",
            b"",
            br#"{"a": 1.0, "b": {"y": 2, "x": [2, 1]}}"#,
        );
        assert_ne!(a, other_order);
        let other_value = cache_key(
            "/v1/force-curve",
            b"",
            br#"{"a": 1.5, "b": {"y": 2, "x": [1, 2]}}"#,
        );
        assert_ne!(a, other_value);
        assert_eq!(cache_key("/v1/force-curve", b"", b"{not json"), None);
        // A repeated key, at any depth, is never cached.
        assert_eq!(
            cache_key("/v1/force-curve", b"", br#"{"a": 1, "a": 2}"#),
            None
        );
        assert_eq!(
            cache_key(
                "/v1/force-curve",
                b"",
                br#"{"b": [{"x": 1, "y": 2, "x": 1}]}"#
            ),
            None
        );
    }

    #[test]
    fn both_bounds_hold() {
        let Some(cache) = ResponseCache::new(4, 4000, 1 << 20) else {
            panic!("cache on")
        };
        let stored = |n: usize| Stored {
            body: Bytes::from(vec![b' '; n]),
            content_type: HeaderValue::from_static("application/json"),
        };
        // Small answers: the entry bound (4) holds.
        for i in 0u8..20 {
            cache.insert([i; 32], stored(10));
        }
        assert!(cache.len() <= 4, "{}", cache.len());
        // Larger answers: the byte bound holds (900 bytes each, 4000 in all: at most 4).
        for i in 20u8..40 {
            cache.insert([i; 32], stored(900));
        }
        assert!(cache.len() <= 4, "{}", cache.len());
        // An answer above an eighth of the budget is not stored.
        cache.insert([99; 32], stored(501));
        assert!(cache.get(&[99; 32]).is_none());
        assert!(ResponseCache::new(0, 4000, 1).is_none());
    }
}
