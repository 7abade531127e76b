//! Serving the application on a bound listener until asked to stop: the part of start-up that
//! the binary and the in-process end-to-end tests share.
//!
//! `main` parses the configuration, sets up logging and the metrics recorder, binds, prints
//! its `listening` line and calls [`serve`] with a future that completes on SIGTERM or Ctrl+C;
//! the tests call [`serve`] with a listener on an ephemeral port, a recorder of their own and
//! a future that completes when the test's server handle is dropped.

use crate::{AppState, Config, connections, router};
use metrics_exporter_prometheus::PrometheusHandle;
use std::future::Future;
use std::time::Duration;
use tokio::net::TcpListener;

/// How often the metrics recorder's histograms are compacted.
const METRICS_UPKEEP: Duration = Duration::from_secs(5);

/// Serves the application for `config` on `listener` (reporting metrics through `metrics`,
/// the handle of the recorder in force) until `shutdown` completes; then turns `/readyz` to
/// 503 and refuses new `/v1` work, keeps serving for `config.shutdown_delay_s`, stops
/// accepting, closes idle connections and finishes in-flight requests (up to the request
/// timeout plus a margin, see [`connections`]).
///
/// The open-file limit is raised to its hard limit first, and the connection cap lowered to
/// fit it ([`connections::fit_to_file_limit`]).
///
/// # Errors
/// When the listener's address cannot be read.
pub async fn serve(
    listener: TcpListener,
    config: &Config,
    metrics: PrometheusHandle,
    shutdown: impl Future<Output = ()> + Send + 'static,
) -> anyhow::Result<()> {
    let address = listener.local_addr()?;
    let upkeep = metrics.clone();
    let upkeep = tokio::spawn(async move {
        let mut tick = tokio::time::interval(METRICS_UPKEEP);
        loop {
            tick.tick().await;
            upkeep.run_upkeep();
        }
    });
    let state = AppState::new(config, metrics);
    let app = router(state.clone(), config);
    let limits = connection_limits(config);
    tracing::info!(
        %address,
        job_slots = state.jobs.capacity(),
        request_timeout_s = config.request_timeout_s,
        max_body_bytes = config.max_body_bytes,
        api_keys = config.all_api_keys().len(),
        protect_metrics = config.protect_metrics,
        cors_origins = config.cors_origins.0.len(),
        rate_limit_per_minute = config.rate_limit_per_minute,
        cache_entries = config.cache_entries,
        max_connections = limits.max_connections,
        header_read_timeout_s = config.header_read_timeout_s,
        idle_timeout_s = config.idle_timeout_s,
        "serving"
    );

    let (stop_tx, stop_rx) = tokio::sync::watch::channel(false);
    let delay = Duration::from_secs(config.shutdown_delay_s);
    let draining = tokio::spawn(async move {
        shutdown.await;
        state.begin_shutdown();
        tracing::info!(
            delay_s = delay.as_secs(),
            "shutdown requested; readiness is off and new /v1 work is refused"
        );
        tokio::time::sleep(delay).await;
        let _ = stop_tx.send(true);
    });
    connections::serve(listener, app, limits, stop_rx).await;
    draining.abort();
    upkeep.abort();
    tracing::info!("stopped");
    Ok(())
}

/// The connection settings of `config`, the cap lowered to fit the open-file limit (raised
/// to its hard limit here).
fn connection_limits(config: &Config) -> connections::ConnectionLimits {
    let file_limit = connections::raise_file_limit();
    let wanted = usize::try_from(config.max_connections).unwrap_or(usize::MAX);
    let max_connections = connections::fit_to_file_limit(wanted, file_limit);
    if max_connections < wanted {
        tracing::warn!(
            wanted = config.max_connections,
            max_connections,
            open_file_limit = file_limit,
            "connection cap lowered to fit the open-file limit"
        );
    }
    connections::ConnectionLimits {
        max_connections,
        header_read_timeout: config.header_read_timeout(),
        idle_timeout: config.idle_timeout(),
        request_timeout: config.request_timeout(),
    }
}
