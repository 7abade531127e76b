//! Shared state of the handlers: the job runner, the work limits, the metrics handle, the
//! OpenAPI document and the readiness flag. Cheap to clone (everything behind `Arc`).

use crate::config::Config;
use crate::jobs::JobRunner;
use metrics_exporter_prometheus::PrometheusHandle;
use ringdrag_model::Limits;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};

/// State shared by every handler.
#[derive(Clone)]
pub struct AppState {
    /// Runs computations off the async runtime under the slot bound and the deadline.
    pub jobs: JobRunner,
    /// Work limits handed to the model and checked at the edge.
    pub limits: Arc<Limits>,
    /// Largest accepted request body, bytes.
    pub max_body_bytes: usize,
    /// Renders the Prometheus text exposition.
    pub metrics: PrometheusHandle,
    /// The OpenAPI document, serialised once (the bytes of `openapi/openapi.json`).
    pub openapi_json: Arc<String>,
    /// Cleared when shutdown begins, so that `/readyz` turns traffic away first.
    pub ready: Arc<AtomicBool>,
}

impl AppState {
    /// State for `config`, reporting metrics through `metrics` (the handle of the installed
    /// recorder; a handle of an uninstalled recorder renders nothing).
    pub fn new(config: &Config, metrics: PrometheusHandle) -> Self {
        Self {
            jobs: JobRunner::new(
                config.job_slots(),
                config.queue_wait(),
                config.request_timeout(),
            ),
            limits: Arc::new(config.limits()),
            max_body_bytes: config.max_body_bytes,
            metrics,
            openapi_json: Arc::new(crate::openapi_json()),
            ready: Arc::new(AtomicBool::new(true)),
        }
    }

    /// Whether the service accepts traffic.
    pub fn is_ready(&self) -> bool {
        self.ready.load(Ordering::Relaxed)
    }

    /// Marks the service as draining: `/readyz` answers 503 from now on.
    pub fn begin_shutdown(&self) {
        self.ready.store(false, Ordering::Relaxed);
    }
}

impl std::fmt::Debug for AppState {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("AppState")
            .field("jobs", &self.jobs)
            .field("limits", &self.limits)
            .field("max_body_bytes", &self.max_body_bytes)
            .field("ready", &self.is_ready())
            .finish_non_exhaustive()
    }
}
