//! The middleware stack around every route, outermost first:
//!
//! 1. request id: keeps a client's `x-request-id` or makes a UUID, and returns it;
//! 2. tracing: one span per request carrying the id, method and path; a log line per response;
//! 3. HTTP metrics: counts and latency histograms by method, route template and status;
//! 4. CORS, when origins are configured ([`crate::access`]): answers preflights, and marks
//!    every answer (refusals included, so a browser can read a 401 or 429) for allowed origins;
//! 5. request timeout: a backstop deadline answered as a problem document; it sits outside
//!    every layer that reads the body (the cache), so a slow body is cut off on every route;
//! 6. draining: once shutdown has begun, `/v1/*` is answered 503 `shutting-down`;
//! 7. API keys, when configured ([`crate::access`]): 401 on `/v1/*` without a valid key,
//!    429 for an address that sent too many wrong keys;
//! 8. rate limits, when configured ([`crate::ratelimit`]): 429 on `/v1/*` past a client's
//!    allowance;
//! 9. response cache, unless turned off ([`crate::cache`]): repeated identical computing
//!    requests answered from memory;
//! 10. panic safety net: a panicking handler answers a problem 500 instead of dropping the
//!     connection.
//!
//! Metrics and tracing sit outside everything that can refuse a request, so that refusals
//! (401, 413, 415, 422, 429, 503) are counted and logged like any answer. Keys come before the
//! rate limit, so that an unauthenticated flood cannot use up a real client's allowance, and
//! both before the cache, so that a cached answer is never served to a caller who could not
//! have asked for it.

use crate::access::{AccessPolicy, GUARDED_PREFIX, cors_layer, require_key};
use crate::cache::{ResponseCache, serve_cached};
use crate::config::Config;
use crate::problem::ApiError;
use crate::ratelimit::{RateLimiter, limit_rate};
use crate::state::AppState;
use axum::Router;
use axum::extract::{MatchedPath, Request, State};
use axum::http::{HeaderName, Method};
use axum::middleware::{self as axum_mw, Next};
use axum::response::{IntoResponse, Response};
use std::any::Any;
use std::time::{Duration, Instant};
use tower::ServiceBuilder;
use tower_http::catch_panic::CatchPanicLayer;
use tower_http::request_id::{MakeRequestUuid, PropagateRequestIdLayer, SetRequestIdLayer};
use tower_http::trace::{DefaultOnResponse, TraceLayer};
use tracing::Level;

/// Header carrying the request id.
pub const REQUEST_ID: HeaderName = HeaderName::from_static("x-request-id");

/// Extra time the backstop timeout gives beyond the job deadline, so that the job runner's
/// own, more specific answer wins when both would fire.
const BACKSTOP_MARGIN: Duration = Duration::from_secs(2);

/// Wraps `routes` in the middleware stack described in the module documentation; `state`'s
/// readiness flag turns new `/v1` work away once shutdown begins.
pub fn apply(routes: Router, config: &Config, state: &AppState) -> Router {
    let timeout = config.request_timeout() + BACKSTOP_MARGIN;
    // Each `layer` call below wraps the previous ones: the last applied is the outermost.
    let mut routes = routes.layer(CatchPanicLayer::custom(panic_response));
    if let Some(cache) = ResponseCache::new(
        config.cache_entries,
        config.cache_max_bytes,
        config.max_body_bytes,
    ) {
        routes = routes.layer(axum_mw::from_fn_with_state(cache, serve_cached));
    }
    if config.rate_limit_per_minute > 0 {
        let limiter = RateLimiter::with_capacity(
            config.rate_limit_per_minute,
            config
                .rate_limit_burst
                .unwrap_or(config.rate_limit_per_minute),
            config.client_ip_header.clone(),
            config.rate_limit_max_clients,
        );
        routes = routes.layer(axum_mw::from_fn_with_state(limiter, limit_rate));
    }
    let keys = config.all_api_keys();
    if !keys.is_empty() {
        let policy = AccessPolicy::new(
            keys,
            config.protect_metrics,
            config.auth_failures_per_minute,
            config.client_ip_header.clone(),
        );
        routes = routes.layer(axum_mw::from_fn_with_state(policy, require_key));
    }
    routes = routes
        .layer(axum_mw::from_fn_with_state(
            state.clone(),
            refuse_when_draining,
        ))
        .layer(axum_mw::from_fn_with_state(timeout, enforce_timeout));
    if let Some(cors) = cors_layer(&config.cors_origins) {
        routes = routes.layer(cors);
    }
    let outer = ServiceBuilder::new()
        .layer(SetRequestIdLayer::new(REQUEST_ID, MakeRequestUuid))
        .layer(PropagateRequestIdLayer::new(REQUEST_ID))
        .layer(
            TraceLayer::new_for_http()
                .make_span_with(request_span)
                .on_response(DefaultOnResponse::new().level(Level::INFO)),
        )
        .layer(axum_mw::from_fn(track_http_metrics));
    routes.layer(outer)
}

/// Middleware: once shutdown has begun, answers every `/v1` request 503 `shutting-down`, so
/// that no new work starts while the instance drains (probes and metrics still answer).
async fn refuse_when_draining(State(state): State<AppState>, req: Request, next: Next) -> Response {
    if !state.is_ready() && req.uri().path().starts_with(GUARDED_PREFIX) {
        return ApiError::ShuttingDown.into_response();
    }
    next.run(req).await
}

fn request_span(req: &Request) -> tracing::Span {
    let id = req
        .headers()
        .get(&REQUEST_ID)
        .and_then(|v| v.to_str().ok())
        .unwrap_or_default();
    let route = req
        .extensions()
        .get::<MatchedPath>()
        .map_or("unmatched", MatchedPath::as_str);
    tracing::info_span!(
        "request",
        request_id = %id,
        method = %req.method(),
        path = %req.uri().path(),
        route = %route,
    )
}

/// A bounded label for the method (a client can send any token).
fn method_label(method: &Method) -> &'static str {
    match *method {
        Method::GET => "GET",
        Method::POST => "POST",
        Method::HEAD => "HEAD",
        Method::PUT => "PUT",
        Method::DELETE => "DELETE",
        Method::PATCH => "PATCH",
        Method::OPTIONS => "OPTIONS",
        _ => "other",
    }
}

async fn track_http_metrics(req: Request, next: Next) -> Response {
    // The route template, not the raw path, keeps the label set bounded.
    let route = req
        .extensions()
        .get::<MatchedPath>()
        .map_or_else(|| "unmatched".to_string(), |p| p.as_str().to_string());
    let method = method_label(req.method());
    let started = Instant::now();
    let response = next.run(req).await;
    let status = response.status().as_u16().to_string();
    let labels = [
        ("method", method.to_string()),
        ("route", route),
        ("status", status),
    ];
    metrics::counter!("ringdrag_http_requests_total", &labels).increment(1);
    metrics::histogram!("ringdrag_http_request_duration_seconds", &labels)
        .record(started.elapsed().as_secs_f64());
    response
}

async fn enforce_timeout(State(timeout): State<Duration>, req: Request, next: Next) -> Response {
    match tokio::time::timeout(timeout, next.run(req)).await {
        Ok(response) => response,
        Err(_elapsed) => ApiError::Timeout {
            timeout_s: timeout.as_secs(),
            retry_after_s: 1,
        }
        .into_response(),
    }
}

fn panic_response(payload: Box<dyn Any + Send + 'static>) -> Response {
    let what = payload
        .downcast_ref::<&str>()
        .map(|s| (*s).to_string())
        .or_else(|| payload.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "unknown panic payload".to_string());
    ApiError::Internal(format!("handler panicked: {what}")).into_response()
}

#[cfg(test)]
mod tests {
    use super::*;
    use axum::body::Body;
    use axum::http::{Request as HttpRequest, StatusCode, header};
    use axum::routing::get;
    use tower::ServiceExt;

    async fn boom() -> &'static str {
        panic!("deliberate test panic")
    }

    #[tokio::test]
    async fn a_panicking_handler_answers_a_problem_500() {
        let config = Config::defaults();
        let state = AppState::new(
            &config,
            metrics_exporter_prometheus::PrometheusBuilder::new()
                .build_recorder()
                .handle(),
        );
        let app = apply(Router::new().route("/boom", get(boom)), &config, &state);
        let request = HttpRequest::get("/boom")
            .header("x-request-id", "panic-probe")
            .body(Body::empty());
        let Ok(request) = request else {
            panic!("request builds")
        };
        // The router's error type is Infallible.
        let Ok(response) = app.oneshot(request).await;
        assert_eq!(response.status(), StatusCode::INTERNAL_SERVER_ERROR);
        assert_eq!(
            response
                .headers()
                .get(header::CONTENT_TYPE)
                .map(|v| v.as_bytes()),
            Some(crate::problem::PROBLEM_JSON.as_bytes())
        );
        assert_eq!(
            response.headers().get(&REQUEST_ID).map(|v| v.as_bytes()),
            Some(&b"panic-probe"[..])
        );
    }
}
