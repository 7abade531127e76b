//! Access control: optional API keys (bearer tokens) and the CORS allow-list.
//!
//! Both are off unless configured, so that a service started on a laptop answers anyone on
//! loopback.
//!
//! **API keys.** Keys come from `RINGDRAG_API_KEYS` (comma-separated) and/or
//! `RINGDRAG_API_KEYS_FILE` (one per line; blank lines and lines starting with `#` are
//! skipped), are read once at start-up (restart to rotate them), and are kept only as SHA-256
//! digests. A request presents one as `Authorization: Bearer <key>` (RFC 6750, section 2.1).
//! The presented key is hashed and compared with every stored digest in constant time
//! (`subtle`), without stopping at the first match, so that the answer time tells nothing
//! about how much of a key was right or which key matched. Keys guard the computing routes,
//! every path under `/v1/`; `/healthz`, `/readyz` and `/openapi.json` stay open (probes and
//! tooling send no token), and `/metrics` stays open unless `--protect-metrics` is set. A
//! missing or wrong key is answered 401 with a problem document and a `WWW-Authenticate:
//! Bearer` challenge (RFC 6750, section 3). Wrong keys are throttled per client address
//! (`--auth-failures-per-minute`, see [`require_key`]), and keys that are easy to guess are
//! refused at start-up ([`weakness`]).
//!
//! **CORS.** With `RINGDRAG_CORS_ORIGINS` set, browsers on exactly those origins may call the
//! service (preflight answered, `Authorization` and `Content-Type` allowed, `x-request-id` and
//! `Retry-After` readable); every other origin gets no CORS headers, so the browser withholds
//! the answer. No wildcard is accepted.

use crate::problem::ApiError;
use crate::ratelimit::{RateLimiter, client_address};
use axum::extract::{Request, State};
use axum::http::{HeaderName, HeaderValue, Method, header};
use axum::middleware::Next;
use axum::response::{IntoResponse, Response};
use sha2::{Digest, Sha256};
use std::sync::Arc;
use std::time::{Duration, Instant};
use subtle::{ConditionallySelectable, ConstantTimeEq};
use tower_http::cors::{AllowOrigin, CorsLayer};

/// Fewest characters in an API key: shorter keys are refused at start-up (a guard against
/// placeholders such as `test`; `openssl rand -hex 32` makes 64).
pub const MIN_KEY_CHARS: usize = 16;

/// Most characters in an API key.
pub const MAX_KEY_CHARS: usize = 512;

/// Path prefix of the routes that keys and rate limits guard.
pub const GUARDED_PREFIX: &str = "/v1/";

/// How long a browser may cache a preflight answer.
const PREFLIGHT_MAX_AGE: Duration = Duration::from_secs(600);

/// Accepted API keys, held as SHA-256 digests. Its `Debug` output shows the count only.
#[derive(Clone, Default, PartialEq, Eq)]
pub struct ApiKeys {
    digests: Vec<[u8; 32]>,
}

impl std::fmt::Debug for ApiKeys {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "ApiKeys({} keys)", self.digests.len())
    }
}

fn digest(key: &[u8]) -> [u8; 32] {
    Sha256::digest(key).into()
}

/// Checks one key's characters: RFC 6750's `b64token` (letters, digits, `-._~+/`, then
/// optional `=` padding), so that it can be sent in a header as it is.
fn check_key(key: &str) -> Result<(), String> {
    let chars = key.chars().count();
    if chars < MIN_KEY_CHARS {
        return Err(format!(
            "an API key has {chars} characters; at least {MIN_KEY_CHARS} are required \
             (e.g. `openssl rand -hex 32`)"
        ));
    }
    if chars > MAX_KEY_CHARS {
        return Err(format!(
            "an API key has {chars} characters; at most {MAX_KEY_CHARS} are allowed"
        ));
    }
    let body = key.trim_end_matches('=');
    let allowed = |c: char| c.is_ascii_alphanumeric() || "-._~+/".contains(c);
    if body.is_empty() || !body.chars().all(allowed) {
        return Err(
            "an API key may hold only letters, digits and - . _ ~ + / (then optional = \
             padding), as a bearer token must (RFC 6750)"
                .to_string(),
        );
    }
    if let Some(why) = weakness(body.as_bytes()) {
        return Err(format!(
            "an API key is too easy to guess ({why}); make one with `openssl rand -hex 32`"
        ));
    }
    Ok(())
}

/// Least estimated entropy of an API key, bits: the key's length times the Shannon entropy
/// of its own character frequencies (a rough upper estimate, common practice for spotting
/// weak secrets). 16 random hexadecimal digits score about 50.
pub const MIN_KEY_BITS: f64 = 40.0;

/// Why `key` (ASCII) is easy to guess, or `None`: a short pattern repeated (`abcabcabc...`,
/// `passwordpassword`), mostly runs of neighbouring or equal characters (`abcdefghijklmnop`,
/// `1234567890123456`, `aaaaaaaaaaaaaaaa`), or under [`MIN_KEY_BITS`] of estimated entropy.
pub fn weakness(key: &[u8]) -> Option<String> {
    let n = key.len();
    if n < 2 {
        return Some("too short".to_string());
    }
    if let Some(period) = (1..=n / 2).find(|&p| key.iter().zip(&key[p..]).all(|(a, b)| a == b)) {
        return Some(format!("a pattern of {period} characters repeated"));
    }
    let steps = key.windows(2).filter(|w| w[0].abs_diff(w[1]) <= 1).count();
    if 2 * steps >= n - 1 {
        return Some(format!(
            "{steps} of its {} neighbouring pairs are equal or consecutive characters",
            n - 1
        ));
    }
    let mut counts = [0usize; 256];
    for &b in key {
        counts[usize::from(b)] += 1;
    }
    let bits_per_char: f64 = counts
        .iter()
        .filter(|&&c| c > 0)
        .map(|&c| {
            let p = c as f64 / n as f64;
            -p * p.log2()
        })
        .sum();
    let bits = bits_per_char * n as f64;
    if bits < MIN_KEY_BITS {
        return Some(format!(
            "about {bits:.0} bits of estimated entropy; at least {MIN_KEY_BITS:.0} are required"
        ));
    }
    None
}

impl ApiKeys {
    /// Keys from a comma-separated list (`RINGDRAG_API_KEYS`); empty items are skipped.
    ///
    /// # Errors
    ///
    /// The text of the first key that is too short or too weak to accept.
    pub fn from_list(text: &str) -> Result<Self, String> {
        Self::from_items(text.split(','))
    }

    /// Keys from the text of a key file: one per line, blank lines and `#` comments skipped.
    ///
    /// # Errors
    ///
    /// The text of the first key that is too short or too weak to accept.
    pub fn from_file_text(text: &str) -> Result<Self, String> {
        Self::from_items(text.lines().filter(|l| !l.trim_start().starts_with('#')))
    }

    fn from_items<'a>(items: impl Iterator<Item = &'a str>) -> Result<Self, String> {
        let mut digests = Vec::new();
        for item in items.map(str::trim).filter(|i| !i.is_empty()) {
            check_key(item)?;
            let d = digest(item.as_bytes());
            if !digests.contains(&d) {
                digests.push(d);
            }
        }
        Ok(Self { digests })
    }

    /// Reads a key file. A file that holds no key is an error: whoever named it meant to
    /// protect the service, and it must not start open by accident.
    ///
    /// # Errors
    ///
    /// A message when the file cannot be read, holds no key, or holds a key that is too short
    /// or too weak.
    pub fn from_file(path: &std::path::Path) -> Result<Self, String> {
        let text = std::fs::read_to_string(path)
            .map_err(|e| format!("cannot read the API key file {}: {e}", path.display()))?;
        let keys = Self::from_file_text(&text)
            .map_err(|e| format!("in the API key file {}: {e}", path.display()))?;
        if keys.is_empty() {
            return Err(format!(
                "the API key file {} holds no key (one per line expected)",
                path.display()
            ));
        }
        Ok(keys)
    }

    /// Both sets together.
    pub fn merged(mut self, other: &Self) -> Self {
        for d in &other.digests {
            if !self.digests.contains(d) {
                self.digests.push(*d);
            }
        }
        self
    }

    /// Number of keys.
    pub fn len(&self) -> usize {
        self.digests.len()
    }

    /// Whether no key is configured (access control off).
    pub fn is_empty(&self) -> bool {
        self.digests.is_empty()
    }

    /// The index of the key `presented` matches, if any.
    ///
    /// Constant time in the presented key and the stored keys: the presented key is hashed
    /// (so its length and content no longer steer the comparison), and every stored digest is
    /// compared in full, the match recorded with branch-free selects.
    pub fn find(&self, presented: &[u8]) -> Option<usize> {
        let probe = digest(presented);
        let mut found = subtle::Choice::from(0u8);
        let mut index = 0u64;
        for (i, stored) in self.digests.iter().enumerate() {
            let equal = stored.ct_eq(&probe);
            index = u64::conditional_select(&index, &(i as u64), equal);
            found |= equal;
        }
        if bool::from(found) {
            usize::try_from(index).ok()
        } else {
            None
        }
    }
}

/// Who a guarded request comes from, as far as access control knows: inserted into the
/// request's extensions for the rate limiter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct KeyIndex(pub usize);

/// What the access layer needs at run time.
#[derive(Debug, Clone)]
pub struct AccessPolicy {
    /// Accepted keys (never empty when the layer is installed).
    pub keys: Arc<ApiKeys>,
    /// Whether `/metrics` needs a key too.
    pub protect_metrics: bool,
    /// Wrong keys allowed per client address: a bucket per address, one token per wrong key.
    pub failures: RateLimiter,
    /// Header naming the client address behind a proxy (as for the rate limit).
    pub client_ip_header: Option<HeaderName>,
}

impl AccessPolicy {
    /// The policy for `keys`, allowing `failures_per_minute` wrong keys a minute (in bursts
    /// of as many) per client address.
    pub fn new(
        keys: ApiKeys,
        protect_metrics: bool,
        failures_per_minute: u32,
        client_ip_header: Option<HeaderName>,
    ) -> Self {
        Self {
            keys: Arc::new(keys),
            protect_metrics,
            failures: RateLimiter::new(failures_per_minute, failures_per_minute, None),
            client_ip_header,
        }
    }

    /// Whether `path` needs a key.
    pub fn guards(&self, path: &str) -> bool {
        path.starts_with(GUARDED_PREFIX) || (self.protect_metrics && path == "/metrics")
    }
}

/// The bearer token of an `Authorization` header value, if it uses the Bearer scheme (the
/// scheme name is case-insensitive, RFC 9110 section 11.1).
fn bearer_token(value: &HeaderValue) -> Option<&[u8]> {
    let bytes = value.as_bytes();
    let scheme = b"bearer ";
    if bytes.len() > scheme.len() && bytes[..scheme.len()].eq_ignore_ascii_case(scheme) {
        let token = bytes[scheme.len()..].trim_ascii();
        (!token.is_empty()).then_some(token)
    } else {
        None
    }
}

/// Middleware: refuses guarded requests without a valid key, and tags accepted ones with the
/// key's index. Preflight requests never reach it (the CORS layer sits outside).
///
/// Wrong keys are throttled per client address: each one takes a token from the address's
/// bucket (`--auth-failures-per-minute`), and while that bucket is empty every guarded
/// request from the address is answered 429 with `Retry-After`, before its key is even
/// looked at, so that guessing costs time whatever the guesses.
pub async fn require_key(
    State(policy): State<AccessPolicy>,
    mut req: Request,
    next: Next,
) -> Response {
    if !policy.guards(req.uri().path()) {
        return next.run(req).await;
    }
    let client = client_address(&req, policy.client_ip_header.as_ref());
    let now = Instant::now();
    if let Err(retry_after_s) = policy.failures.check(client, now) {
        metrics::counter!("ringdrag_auth_throttled_total").increment(1);
        return ApiError::RateLimited { retry_after_s }.into_response();
    }
    let token = req.headers().get(header::AUTHORIZATION).map(bearer_token);
    match token {
        None | Some(None) => ApiError::Unauthorized { wrong_key: false }.into_response(),
        Some(Some(token)) => match policy.keys.find(token) {
            Some(index) => {
                req.extensions_mut().insert(KeyIndex(index));
                next.run(req).await
            }
            None => {
                let _ = policy.failures.take(client, now);
                ApiError::Unauthorized { wrong_key: true }.into_response()
            }
        },
    }
}

/// The `WWW-Authenticate` challenge of a 401 (RFC 6750, section 3): a wrong key adds
/// `error="invalid_token"`.
pub fn challenge(wrong_key: bool) -> HeaderValue {
    if wrong_key {
        HeaderValue::from_static(
            "Bearer realm=\"ringdrag\", error=\"invalid_token\", \
             error_description=\"the API key is not valid\"",
        )
    } else {
        HeaderValue::from_static("Bearer realm=\"ringdrag\"")
    }
}

/// Parses one allowed origin: `scheme://host[:port]`, exactly as browsers send it in the
/// `Origin` header (no path, no trailing slash, no wildcard).
///
/// # Errors
///
/// A message when the text is not an http or https origin with a host and an optional port
/// only.
pub fn parse_origin(text: &str) -> Result<HeaderValue, String> {
    let origin = text.trim();
    let Some((scheme, rest)) = origin.split_once("://") else {
        return Err(format!(
            "CORS origin '{origin}' must look like https://host or https://host:port"
        ));
    };
    let scheme_ok = scheme == "http" || scheme == "https";
    let host_ok = !rest.is_empty()
        && rest
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || "-.:[]".contains(c));
    if !scheme_ok || !host_ok {
        return Err(format!(
            "CORS origin '{origin}' must be http:// or https:// and a host with an optional \
             port, with no path, no trailing slash and no wildcard"
        ));
    }
    HeaderValue::from_str(origin).map_err(|e| format!("CORS origin '{origin}': {e}"))
}

/// The CORS allow-list of exact origins; empty: CORS off.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Origins(pub Vec<HeaderValue>);

impl Origins {
    /// Parses the comma-separated allow-list of `RINGDRAG_CORS_ORIGINS`.
    ///
    /// # Errors
    ///
    /// The message of [`parse_origin`] for the first item that is not a plain origin.
    pub fn parse(text: &str) -> Result<Self, String> {
        text.split(',')
            .map(str::trim)
            .filter(|o| !o.is_empty())
            .map(parse_origin)
            .collect::<Result<Vec<_>, _>>()
            .map(Self)
    }
}

/// The CORS layer for an allow-list of exact origins; `None` when the list is empty.
pub fn cors_layer(origins: &Origins) -> Option<CorsLayer> {
    if origins.0.is_empty() {
        return None;
    }
    let layer = CorsLayer::new()
        .allow_origin(AllowOrigin::list(origins.0.iter().cloned()))
        .allow_methods([Method::GET, Method::POST])
        .allow_headers([
            header::AUTHORIZATION,
            header::CONTENT_TYPE,
            header::ACCEPT,
            crate::middleware::REQUEST_ID,
        ])
        .expose_headers([
            crate::middleware::REQUEST_ID,
            header::RETRY_AFTER,
            HeaderName::from_static("x-cache"),
        ])
        .max_age(PREFLIGHT_MAX_AGE);
    Some(layer)
}

/// Name of the bearer security scheme in the OpenAPI document.
pub const SECURITY_SCHEME: &str = "api_key";

/// A problem response with one header, for the OpenAPI document.
fn problem_response(description: &str, header: (&str, &str)) -> utoipa::openapi::Response {
    use utoipa::openapi::schema::{ObjectBuilder, Type};
    use utoipa::openapi::{ContentBuilder, HeaderBuilder, Ref, ResponseBuilder};
    let schema = if header.0 == "Retry-After" {
        ObjectBuilder::new()
            .schema_type(Type::Integer)
            .format(Some(utoipa::openapi::SchemaFormat::KnownFormat(
                utoipa::openapi::KnownFormat::Int64,
            )))
            .minimum(Some(0))
    } else {
        ObjectBuilder::new().schema_type(Type::String)
    };
    ResponseBuilder::new()
        .description(description)
        .header(
            header.0,
            HeaderBuilder::new()
                .schema(Some(schema))
                .description(Some(header.1))
                .build(),
        )
        .content(
            crate::problem::PROBLEM_JSON,
            ContentBuilder::new()
                .schema(Some(Ref::from_schema_name("Problem")))
                .build(),
        )
        .build()
}

/// Adds access control to the OpenAPI document: the bearer scheme, and on every operation
/// under `/v1/` the optional key requirement and the 401 and 429 answers (both given only when
/// the service is configured for them).
pub fn document(doc: &mut utoipa::openapi::OpenApi) {
    use utoipa::openapi::security::{
        HttpAuthScheme, HttpBuilder, SecurityRequirement, SecurityScheme,
    };
    let scheme = SecurityScheme::Http(
        HttpBuilder::new()
            .scheme(HttpAuthScheme::Bearer)
            .description(Some(
                "An API key sent as `Authorization: Bearer <key>`. Needed on `/v1/*` only when \
                 the service is configured with keys (`RINGDRAG_API_KEYS`, \
                 `RINGDRAG_API_KEYS_FILE`); otherwise no key is needed.",
            ))
            .build(),
    );
    doc.components
        .get_or_insert_with(Default::default)
        .add_security_scheme(SECURITY_SCHEME, scheme);
    let unauthorized = problem_response(
        "No valid API key (only when the service is configured with keys).",
        (
            "WWW-Authenticate",
            "The Bearer challenge (RFC 6750); `error=\"invalid_token\"` when a key was sent \
             but is not valid.",
        ),
    );
    let limited = problem_response(
        "This client used up its rate limit (only when the service is configured with one).",
        ("Retry-After", "Seconds until the client may send again."),
    );
    for (path, item) in doc.paths.paths.iter_mut() {
        if !path.starts_with(GUARDED_PREFIX) {
            continue;
        }
        let operations = [
            &mut item.get,
            &mut item.put,
            &mut item.post,
            &mut item.delete,
            &mut item.patch,
        ];
        for operation in operations.into_iter().flatten() {
            let responses = &mut operation.responses.responses;
            responses
                .entry("401".to_string())
                .or_insert_with(|| unauthorized.clone().into());
            responses
                .entry("429".to_string())
                .or_insert_with(|| limited.clone().into());
            operation.security = Some(vec![
                SecurityRequirement::default(),
                SecurityRequirement::new(SECURITY_SCHEME, Vec::<String>::new()),
            ]);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Invented keys (random hexadecimal digits with a readable prefix).
    const KEY_A: &str = "alpha-5e2b9c07d4f1a836";
    const KEY_B: &str = "bravo-c9407e1d3b6a2f85";

    #[test]
    fn keys_are_found_by_index_and_wrong_keys_are_not() {
        let keys = ApiKeys::from_list(&format!(" {KEY_A} ,, {KEY_B},{KEY_A}")).unwrap_or_default();
        assert_eq!(keys.len(), 2, "duplicates and empty items are dropped");
        assert_eq!(keys.find(KEY_A.as_bytes()), Some(0));
        assert_eq!(keys.find(KEY_B.as_bytes()), Some(1));
        assert_eq!(keys.find(b"alpha-5e2b9c07d4f1a83X"), None);
        assert_eq!(
            keys.find(b"alpha-5e2b9c07d4f1a83"),
            None,
            "a prefix is not a key"
        );
        assert_eq!(keys.find(b""), None);
        assert_eq!(ApiKeys::default().find(KEY_A.as_bytes()), None);
    }

    #[test]
    fn key_files_skip_comments_and_blank_lines() {
        let text = format!("# rotated 2026-11\n\n{KEY_A}\r\n  {KEY_B}  \n");
        let keys = ApiKeys::from_file_text(&text).unwrap_or_default();
        assert_eq!(keys.len(), 2);
        assert_eq!(keys.find(KEY_B.as_bytes()), Some(1));
    }

    #[test]
    fn weak_or_unsendable_keys_are_refused() {
        assert!(ApiKeys::from_list("test").is_err());
        assert!(ApiKeys::from_list("5e2b9c07d4f1a836 with space").is_err());
        assert!(ApiKeys::from_list("5e2b9c07d4f1a836\u{e9}").is_err());
        assert!(ApiKeys::from_list("================").is_err());
        assert!(ApiKeys::from_list("5e2b9c07d4f1a8360b3+/==").is_ok());
        // Long enough but obvious: runs, repeats, few distinct characters.
        for weak in [
            "abcdefghijklmnop",
            "0123456789abcdef",
            "1234567890123456",
            "aaaaaaaaaaaaaaaaaaaa",
            "passwordpassword",
            "abcabcabcabcabcabc",
            "zyxwvutsrqponmlk",
            "abababababababab0",
            "a1a1a1a1a1a1a1a1b2",
        ] {
            let Err(why) = ApiKeys::from_list(weak) else {
                panic!("{weak} accepted")
            };
            assert!(why.contains("too easy to guess"), "{weak}: {why}");
        }
        // What `openssl rand -hex 8/-hex 32/-base64 24` make passes.
        for strong in [
            "9f86d081884c7d65",
            "5f0c1d9e8a7b6c5d4e3f2a1b0c9d8e7f6a5b4c3d2e1f0a9b8c7d6e5f4a3b2c1d",
            "q8Vt2mK0zR4xN7bW1yL5cH3jP6sD9fGa",
        ] {
            assert!(ApiKeys::from_list(strong).is_ok(), "{strong}");
        }
        assert!(ApiKeys::from_list("").is_ok_and(|k| k.is_empty()));
    }

    #[test]
    fn debug_output_hides_the_keys() {
        let keys = ApiKeys::from_list(KEY_A).unwrap_or_default();
        let shown = format!("{keys:?}");
        assert_eq!(shown, "ApiKeys(1 keys)");
    }

    #[test]
    fn bearer_tokens_are_read_case_insensitively() {
        let v = HeaderValue::from_static("bearer   abc ");
        assert_eq!(bearer_token(&v), Some(&b"abc"[..]));
        let v = HeaderValue::from_static("Bearer abc");
        assert_eq!(bearer_token(&v), Some(&b"abc"[..]));
        assert_eq!(bearer_token(&HeaderValue::from_static("Basic abc")), None);
        assert_eq!(bearer_token(&HeaderValue::from_static("Bearer ")), None);
        assert_eq!(bearer_token(&HeaderValue::from_static("Bearer")), None);
    }

    #[test]
    fn the_guard_covers_v1_and_optionally_metrics() {
        let mut policy = AccessPolicy::new(ApiKeys::default(), false, 10, None);
        assert!(policy.guards("/v1/force-curve"));
        assert!(policy.guards("/v1/no-such-route"));
        for open in ["/healthz", "/readyz", "/openapi.json", "/metrics", "/v1"] {
            assert!(!policy.guards(open), "{open}");
        }
        policy.protect_metrics = true;
        assert!(policy.guards("/metrics"));
    }

    #[test]
    fn origins_must_be_exact() {
        assert!(parse_origin("https://shop.example.com").is_ok());
        assert!(parse_origin("http://localhost:5173").is_ok());
        assert!(parse_origin("http://[::1]:8080").is_ok());
        for bad in [
            "*",
            "shop.example.com",
            "https://shop.example.com/",
            "https://shop.example.com/app",
            "https://*.example.com",
            "ftp://example.com",
            "https://",
        ] {
            assert!(parse_origin(bad).is_err(), "{bad}");
        }
        let list = Origins::parse("https://a.example, https://b.example:8443,").unwrap_or_default();
        assert_eq!(list.0.len(), 2);
        assert!(Origins::parse("https://a.example,*").is_err());
        assert!(cors_layer(&Origins::default()).is_none());
    }
}
