//! `GET /healthz` (liveness) and `GET /readyz` (readiness).
//!
//! Liveness answers from the async runtime without touching the job slots, so it stays fast
//! while every slot computes. Readiness turns 503 once shutdown begins, so that a load
//! balancer stops sending work before the listener closes.

use crate::problem::{ApiError, Problem};
use crate::state::AppState;
use axum::Json;
use axum::extract::State;
use serde::Serialize;
use utoipa::ToSchema;

/// Liveness report.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, ToSchema)]
pub struct Health {
    /// Always `ok` when the process answers.
    pub status: String,
}

/// Readiness report.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, ToSchema)]
pub struct Readiness {
    /// `ready`.
    pub status: String,
    /// Computations the service runs at once.
    pub job_slots: u64,
    /// Slots free right now.
    pub job_slots_free: u64,
}

/// Liveness: the process is up and its runtime answers.
#[utoipa::path(
    get,
    path = "/healthz",
    tag = "operations",
    operation_id = "check_liveness",
    responses((status = 200, description = "The process is alive.", body = Health))
)]
pub async fn healthz() -> Json<Health> {
    Json(Health {
        status: "ok".to_string(),
    })
}

/// Readiness: the service accepts work (503 while shutting down).
#[utoipa::path(
    get,
    path = "/readyz",
    tag = "operations",
    operation_id = "check_readiness",
    responses(
        (status = 200, description = "The service accepts work.", body = Readiness),
        (status = 503, description = "The service is shutting down.", body = Problem,
            content_type = "application/problem+json",
            headers(("Retry-After" = u64, description = "Seconds to wait before retrying."))),
    )
)]
pub(crate) async fn readyz(State(state): State<AppState>) -> Result<Json<Readiness>, ApiError> {
    if !state.is_ready() {
        return Err(ApiError::ShuttingDown);
    }
    Ok(Json(Readiness {
        status: "ready".to_string(),
        job_slots: state.jobs.capacity() as u64,
        job_slots_free: state.jobs.available() as u64,
    }))
}
