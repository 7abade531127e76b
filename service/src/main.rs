//! `ringdrag`: starts the HTTP service.
//!
//! Sets up logging and metrics, parses the configuration (flags with environment fallbacks,
//! see `ringdrag --help`), binds, prints `ringdrag listening on http://ADDR` once bound, serves,
//! and on SIGTERM or Ctrl+C turns `/readyz` to 503 and refuses new `/v1` work, keeps serving
//! for `--shutdown-delay-s`, stops accepting, closes idle connections, finishes in-flight
//! requests (up to the request timeout plus a margin, see [`connections`]) and exits.

use anyhow::Context;
use clap::Parser;
use ringdrag_service::{AppState, Config, connections, router, telemetry};
use std::io::Write;
use std::time::Duration;

/// How often the metrics recorder's histograms are compacted.
const METRICS_UPKEEP: Duration = Duration::from_secs(5);
/// Time left to blocking computations after the server stopped.
const BLOCKING_GRACE: Duration = Duration::from_secs(5);

fn main() -> anyhow::Result<()> {
    let config = Config::parse();
    if config.print_openapi {
        print!("{}", ringdrag_service::openapi_json());
        return Ok(());
    }
    telemetry::init_tracing(config.log_format)?;
    ringdrag_service::priority::init_compute_pool()
        .context("cannot start the compute thread pool")?;
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .context("cannot start the async runtime")?;
    let result = runtime.block_on(serve(config));
    runtime.shutdown_timeout(BLOCKING_GRACE);
    result
}

async fn serve(config: Config) -> anyhow::Result<()> {
    let metrics = telemetry::install_metrics()?;
    let upkeep = metrics.clone();
    tokio::spawn(async move {
        let mut tick = tokio::time::interval(METRICS_UPKEEP);
        loop {
            tick.tick().await;
            upkeep.run_upkeep();
        }
    });
    let state = AppState::new(&config, metrics);
    let app = router(state.clone(), &config);
    let listener = tokio::net::TcpListener::bind(config.listen)
        .await
        .with_context(|| format!("cannot listen on {}", config.listen))?;
    let address = listener.local_addr()?;
    let file_limit = connections::raise_file_limit();
    let max_connections = connections::fit_to_file_limit(
        usize::try_from(config.max_connections).unwrap_or(usize::MAX),
        file_limit,
    );
    if max_connections < config.max_connections as usize {
        tracing::warn!(
            wanted = config.max_connections,
            max_connections,
            open_file_limit = file_limit,
            "connection cap lowered to fit the open-file limit"
        );
    }
    let limits = connections::ConnectionLimits {
        max_connections,
        header_read_timeout: config.header_read_timeout(),
        idle_timeout: config.idle_timeout(),
        request_timeout: config.request_timeout(),
    };
    {
        let mut out = std::io::stdout().lock();
        writeln!(out, "ringdrag listening on http://{address}")?;
        out.flush()?;
    }
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
        max_connections,
        header_read_timeout_s = config.header_read_timeout_s,
        idle_timeout_s = config.idle_timeout_s,
        "serving"
    );

    let (stop_tx, stop_rx) = tokio::sync::watch::channel(false);
    let draining = state.clone();
    let delay = Duration::from_secs(config.shutdown_delay_s);
    tokio::spawn(async move {
        shutdown_signal().await;
        draining.begin_shutdown();
        tracing::info!(
            delay_s = delay.as_secs(),
            "shutdown requested; readiness is off and new /v1 work is refused"
        );
        tokio::time::sleep(delay).await;
        let _ = stop_tx.send(true);
    });
    connections::serve(listener, app, limits, stop_rx).await;
    tracing::info!("stopped");
    Ok(())
}

/// Completes on SIGTERM or SIGINT (Ctrl+C).
async fn shutdown_signal() {
    let interrupt = async {
        if let Err(e) = tokio::signal::ctrl_c().await {
            tracing::error!(error = %e, "cannot listen for Ctrl+C");
            std::future::pending::<()>().await;
        }
    };
    #[cfg(unix)]
    let terminate = async {
        match tokio::signal::unix::signal(tokio::signal::unix::SignalKind::terminate()) {
            Ok(mut signal) => {
                signal.recv().await;
            }
            Err(e) => {
                tracing::error!(error = %e, "cannot listen for SIGTERM");
                std::future::pending::<()>().await;
            }
        }
    };
    #[cfg(not(unix))]
    let terminate = std::future::pending::<()>();
    tokio::select! {
        () = interrupt => {}
        () = terminate => {}
    }
}
