//! `ringdrag`: starts the HTTP service.
//!
//! Sets up logging and metrics, parses the configuration (flags with environment fallbacks,
//! see `ringdrag --help`), binds, prints `ringdrag listening on http://ADDR` once bound, serves,
//! and on SIGTERM or Ctrl+C turns `/readyz` to 503 and refuses new `/v1` work, keeps serving
//! for `--shutdown-delay-s`, stops accepting, closes idle connections, finishes in-flight
//! requests (up to the request timeout plus a margin) and exits: see [`ringdrag_service::serve`].

use anyhow::Context;
use clap::Parser;
use ringdrag_service::{Config, priority, serve, telemetry};
use std::io::Write;
use std::time::Duration;

/// Time left to blocking computations after the server stopped.
const BLOCKING_GRACE: Duration = Duration::from_secs(5);

fn main() -> anyhow::Result<()> {
    let config = Config::parse();
    if config.print_openapi {
        print!("{}", ringdrag_service::openapi_json());
        return Ok(());
    }
    telemetry::init_tracing(config.log_format)?;
    priority::init_compute_pool().context("cannot start the compute thread pool")?;
    let metrics = telemetry::install_metrics()?;
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .context("cannot start the async runtime")?;
    let result = runtime.block_on(async {
        let listener = tokio::net::TcpListener::bind(config.listen)
            .await
            .with_context(|| format!("cannot listen on {}", config.listen))?;
        let address = listener.local_addr()?;
        {
            let mut out = std::io::stdout().lock();
            writeln!(out, "ringdrag listening on http://{address}")?;
            out.flush()?;
        }
        serve(listener, &config, metrics, shutdown_signal()).await
    });
    runtime.shutdown_timeout(BLOCKING_GRACE);
    result
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
