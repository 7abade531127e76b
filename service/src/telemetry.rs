//! Logs and metrics set-up, done once by `main`.
//!
//! Logs go to standard error (standard output carries the one `listening` line), as text or as
//! one JSON object per line; `RUST_LOG` filters them (default `info`). Metrics go to a
//! Prometheus recorder whose handle renders `GET /metrics`.

use crate::config::LogFormat;
use metrics_exporter_prometheus::{
    Matcher, PrometheusBuilder, PrometheusHandle, PrometheusRecorder,
};
use tracing_subscriber::EnvFilter;

/// Histogram buckets for request and job durations, s (common practice: roughly 1-2.5-5 per
/// decade from 1 ms to one minute).
const DURATION_BUCKETS_S: [f64; 15] = [
    0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0, 30.0, 60.0,
];

/// Installs the global log subscriber.
///
/// # Errors
///
/// When a global log subscriber is already installed.
pub fn init_tracing(format: LogFormat) -> anyhow::Result<()> {
    let filter = EnvFilter::try_from_default_env().unwrap_or_else(|_| EnvFilter::new("info"));
    let builder = tracing_subscriber::fmt()
        .with_env_filter(filter)
        .with_writer(std::io::stderr);
    let installed = match format {
        LogFormat::Text => builder.try_init(),
        LogFormat::Json => builder
            .json()
            .flatten_event(true)
            .with_current_span(true)
            .with_span_list(false)
            .try_init(),
    };
    installed.map_err(|e| anyhow::anyhow!("cannot install the log subscriber: {e}"))
}

/// Installs the global metrics recorder and describes the service's metrics.
///
/// # Errors
///
/// When the Prometheus recorder cannot be built or a global recorder is already installed.
pub fn install_metrics() -> anyhow::Result<PrometheusHandle> {
    let recorder = metrics_recorder()?;
    let handle = recorder.handle();
    metrics::set_global_recorder(recorder)
        .map_err(|e| anyhow::anyhow!("cannot install the metrics recorder: {e}"))?;
    describe_metrics();
    Ok(handle)
}

/// The service's Prometheus recorder (histogram buckets set), not installed: `main` installs
/// it globally; the in-process tests give each test server its own, set per thread, so that
/// servers running side by side count apart. Its handle renders `GET /metrics`.
///
/// # Errors
/// When the histogram buckets are refused.
pub fn metrics_recorder() -> anyhow::Result<PrometheusRecorder> {
    Ok(PrometheusBuilder::new()
        .set_buckets_for_metric(
            Matcher::Suffix("duration_seconds".to_string()),
            &DURATION_BUCKETS_S,
        )?
        .build_recorder())
}

/// Describes the service's metrics (help text and units) to the recorder in force.
pub fn describe_metrics() {
    metrics::describe_counter!(
        "ringdrag_http_requests_total",
        "HTTP requests answered, by method, route and status."
    );
    metrics::describe_histogram!(
        "ringdrag_http_request_duration_seconds",
        metrics::Unit::Seconds,
        "Time to answer an HTTP request, by method, route and status."
    );
    metrics::describe_gauge!(
        "ringdrag_jobs_in_flight",
        "Computations running now, by job."
    );
    metrics::describe_gauge!(
        "ringdrag_jobs_waiting",
        "Requests waiting for a computation slot, by job."
    );
    metrics::describe_gauge!(
        "ringdrag_job_slots_free",
        "Computation slots free at the last scrape."
    );
    metrics::describe_counter!(
        "ringdrag_jobs_total",
        "Computations by job and outcome (ok, rejected, overloaded, timeout, client_gone, internal)."
    );
    metrics::describe_histogram!(
        "ringdrag_job_duration_seconds",
        metrics::Unit::Seconds,
        "Computing time of a job, by job."
    );
}
