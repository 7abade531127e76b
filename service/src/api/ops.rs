//! `GET /metrics` (Prometheus text exposition) and `GET /openapi.json` (the OpenAPI document
//! of this service, the same bytes as `openapi/openapi.json`).

use crate::state::AppState;
use axum::extract::State;
use axum::http::{HeaderValue, header};
use axum::response::{IntoResponse, Response};

/// Media type of the Prometheus text exposition format, version 0.0.4.
const PROMETHEUS_TEXT: &str = "text/plain; version=0.0.4; charset=utf-8";

fn with_type(body: String, content_type: &'static str) -> Response {
    let mut response = body.into_response();
    response
        .headers_mut()
        .insert(header::CONTENT_TYPE, HeaderValue::from_static(content_type));
    response
}

/// Request counts and latencies by route and status, job gauges and durations.
#[utoipa::path(
    get,
    path = "/metrics",
    tag = "operations",
    operation_id = "export_metrics",
    responses((status = 200, description = "Metrics in the Prometheus text format 0.0.4: \
        `ringdrag_http_requests_total` and `ringdrag_http_request_duration_seconds` by method, \
        route and status; `ringdrag_jobs_in_flight`, `ringdrag_jobs_waiting`, \
        `ringdrag_job_slots_free`, `ringdrag_jobs_total` and `ringdrag_job_duration_seconds`.",
        body = String, content_type = "text/plain"))
)]
pub async fn metrics(State(state): State<AppState>) -> Response {
    metrics::gauge!("ringdrag_job_slots_free").set(state.jobs.available() as f64);
    with_type(state.metrics.render(), PROMETHEUS_TEXT)
}

/// The OpenAPI 3.1 document of this service.
#[utoipa::path(
    get,
    path = "/openapi.json",
    tag = "operations",
    operation_id = "get_openapi",
    responses((status = 200, description = "This OpenAPI 3.1 document.", body = Object,
        content_type = "application/json"))
)]
pub async fn openapi_document(State(state): State<AppState>) -> Response {
    with_type(state.openapi_json.as_ref().clone(), "application/json")
}
