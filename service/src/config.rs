//! Service configuration: every setting is a command-line flag with an environment-variable
//! fallback (`--listen` or `RINGDRAG_LISTEN`), parsed once at start-up.
//!
//! The job caps map onto [`ringdrag_model::Limits`]; their defaults are the model's defaults,
//! so an unconfigured service and the OpenAPI document (which states those defaults) agree.

use crate::access::{ApiKeys, Origins};
use axum::http::HeaderName;
use clap::{Parser, ValueEnum};
use ringdrag_model::Limits;
use std::net::SocketAddr;
use std::num::NonZeroUsize;
use std::time::Duration;

/// How log lines are written (to standard error).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum LogFormat {
    /// Human-readable lines.
    Text,
    /// One JSON object per line, for log collectors.
    Json,
}

/// Settings of the `ringdrag` service.
#[derive(Debug, Clone, Parser)]
#[command(
    name = "ringdrag",
    version,
    about = "HTTP JSON service for eddy-current braking of magnet stacks in conducting tubes"
)]
pub struct Config {
    /// Address to listen on; port 0 picks a free port (the chosen address is printed).
    #[arg(long, env = "RINGDRAG_LISTEN", default_value = "127.0.0.1:8080")]
    pub listen: SocketAddr,

    /// Log line format.
    #[arg(long, env = "RINGDRAG_LOG_FORMAT", value_enum, default_value_t = LogFormat::Text)]
    pub log_format: LogFormat,

    /// Computations running at once (default: the number of available cores).
    #[arg(long, env = "RINGDRAG_MAX_CONCURRENT_JOBS")]
    pub max_concurrent_jobs: Option<NonZeroUsize>,

    /// How long a job waits for a free computation slot before the service answers 503, ms.
    #[arg(long, env = "RINGDRAG_QUEUE_WAIT_MS", default_value_t = 2000)]
    pub queue_wait_ms: u64,

    /// Longest time one request may take, s.
    #[arg(
        long,
        env = "RINGDRAG_REQUEST_TIMEOUT_S",
        default_value_t = 60,
        value_parser = clap::value_parser!(u64).range(1..=86_400)
    )]
    pub request_timeout_s: u64,

    /// Largest accepted request body, bytes.
    #[arg(long, env = "RINGDRAG_MAX_BODY_BYTES", default_value_t = 1 << 20)]
    pub max_body_bytes: usize,

    /// Most speeds in one force curve.
    #[arg(long, env = "RINGDRAG_MAX_SPEEDS", default_value_t = Limits::default().max_speeds)]
    pub max_speeds: usize,

    /// Most ring cells (axial rings x radial layers) in one stroke simulation.
    #[arg(long, env = "RINGDRAG_MAX_RING_CELLS", default_value_t = Limits::default().max_ring_cells)]
    pub max_ring_cells: usize,

    /// Most time steps in one stroke simulation.
    #[arg(long, env = "RINGDRAG_MAX_STEPS", default_value_t = Limits::default().max_steps)]
    pub max_steps: usize,

    /// Longest simulated time of one stroke, s.
    #[arg(
        long,
        env = "RINGDRAG_MAX_SIM_TIME_S",
        default_value_t = Limits::default().max_time_s,
        value_parser = positive_seconds
    )]
    pub max_sim_time_s: f64,

    /// Most samples in a returned time series.
    #[arg(long, env = "RINGDRAG_MAX_SAMPLES", default_value_t = Limits::default().max_samples)]
    pub max_samples: usize,

    /// Most points in one sweep.
    #[arg(
        long,
        env = "RINGDRAG_MAX_SWEEP_POINTS",
        default_value_t = Limits::default().max_sweep_points
    )]
    pub max_sweep_points: usize,

    /// Most client connections open at once; a connection above it is answered 503 with
    /// `Retry-After` and closed (and lowered at start-up to fit the open-file limit).
    #[arg(
        long,
        env = "RINGDRAG_MAX_CONNECTIONS",
        default_value_t = DEFAULT_MAX_CONNECTIONS,
        value_parser = clap::value_parser!(u32).range(1..=1_000_000)
    )]
    pub max_connections: u32,

    /// Longest time a client may take to send a request's line and headers, from the moment
    /// its first byte arrives, s; the connection is closed past it.
    #[arg(
        long,
        env = "RINGDRAG_HEADER_READ_TIMEOUT_S",
        default_value_t = 10,
        value_parser = clap::value_parser!(u64).range(1..=3600)
    )]
    pub header_read_timeout_s: u64,

    /// Longest time a connection may stay open without a request in flight and without
    /// sending anything, s (keep-alive idle time; also bounds a connection that never sends).
    #[arg(
        long,
        env = "RINGDRAG_IDLE_TIMEOUT_S",
        default_value_t = 30,
        value_parser = clap::value_parser!(u64).range(1..=86_400)
    )]
    pub idle_timeout_s: u64,

    /// With API keys configured, wrong keys allowed a minute per client address; past it
    /// every attempt from that address is answered 429 until the allowance refills.
    #[arg(
        long,
        env = "RINGDRAG_AUTH_FAILURES_PER_MINUTE",
        default_value_t = 10,
        value_parser = clap::value_parser!(u32).range(1..)
    )]
    pub auth_failures_per_minute: u32,

    /// After SIGTERM or Ctrl+C, how long the service keeps serving with `/readyz` answering
    /// 503 before it stops accepting connections, s (time for a load balancer to notice).
    #[arg(long, env = "RINGDRAG_SHUTDOWN_DELAY_S", default_value_t = 0)]
    pub shutdown_delay_s: u64,

    /// API keys accepted as `Authorization: Bearer <key>` on `/v1/*`, comma-separated, each
    /// at least 16 characters. Unset (and no key file): no key needed.
    #[arg(long, env = "RINGDRAG_API_KEYS", value_parser = KeyListParser,
        default_value = "", hide_default_value = true, hide_env_values = true)]
    pub api_keys: ApiKeys,

    /// File of API keys, one per line (`#` comments and blank lines skipped); read at start.
    /// Together with `--api-keys`, both sets are accepted.
    #[arg(long, env = "RINGDRAG_API_KEYS_FILE", value_parser = read_key_file)]
    pub api_keys_file: Option<KeyFile>,

    /// With API keys configured, require a key for `/metrics` too.
    #[arg(long, env = "RINGDRAG_PROTECT_METRICS")]
    pub protect_metrics: bool,

    /// Browser origins allowed to call the service (CORS), comma-separated exact origins such
    /// as `https://shop.example.com`. Unset: no cross-origin access.
    #[arg(long, env = "RINGDRAG_CORS_ORIGINS", value_parser = Origins::parse,
        default_value = "", hide_default_value = true)]
    pub cors_origins: Origins,

    /// Requests a minute allowed per API key (per client address when keys are off) on
    /// `/v1/*`; 429 with `Retry-After` above it. Unset or 0: no limit.
    #[arg(long, env = "RINGDRAG_RATE_LIMIT_PER_MINUTE", default_value_t = 0)]
    pub rate_limit_per_minute: u32,

    /// Requests a client may send at once before the rate applies (default: the per-minute
    /// rate).
    #[arg(long, env = "RINGDRAG_RATE_LIMIT_BURST")]
    pub rate_limit_burst: Option<u32>,

    /// Header naming the client address for per-address rate limits behind a proxy (e.g.
    /// `x-forwarded-for`; its last entry is used). Unset: the connection's peer address.
    #[arg(long, env = "RINGDRAG_CLIENT_IP_HEADER")]
    pub client_ip_header: Option<HeaderName>,

    /// Most clients the rate limiter tracks at once; past it the least recently seen client
    /// is forgotten (and starts again with a full allowance).
    #[arg(
        long,
        env = "RINGDRAG_RATE_LIMIT_MAX_CLIENTS",
        default_value_t = crate::ratelimit::MAX_TRACKED
    )]
    pub rate_limit_max_clients: usize,

    /// Most answers kept in the response cache of identical force-curve and stroke requests;
    /// 0 turns the cache off.
    #[arg(long, env = "RINGDRAG_CACHE_ENTRIES", default_value_t = DEFAULT_CACHE_ENTRIES)]
    pub cache_entries: u64,

    /// Most bytes of answers kept in the response cache.
    #[arg(long, env = "RINGDRAG_CACHE_MAX_BYTES", default_value_t = DEFAULT_CACHE_MAX_BYTES)]
    pub cache_max_bytes: u64,

    /// Print the OpenAPI document to standard output and exit (regenerates
    /// `openapi/openapi.json`).
    #[arg(long)]
    pub print_openapi: bool,
}

/// Default cap on open client connections.
pub const DEFAULT_MAX_CONNECTIONS: u32 = 1024;

/// Default number of cached answers.
pub const DEFAULT_CACHE_ENTRIES: u64 = 1024;

/// Default byte budget of the response cache (64 MiB).
pub const DEFAULT_CACHE_MAX_BYTES: u64 = 64 << 20;

/// A key file: its path and the keys read from it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct KeyFile {
    /// Where the keys were read from.
    pub path: std::path::PathBuf,
    /// The keys.
    pub keys: ApiKeys,
}

/// Parses `--api-keys` without ever echoing the value: clap's own error for a bad value
/// quotes it, and the value holds secrets that must not reach the logs.
#[derive(Debug, Clone, Copy)]
struct KeyListParser;

impl clap::builder::TypedValueParser for KeyListParser {
    type Value = ApiKeys;

    fn parse_ref(
        &self,
        cmd: &clap::Command,
        _arg: Option<&clap::Arg>,
        value: &std::ffi::OsStr,
    ) -> Result<ApiKeys, clap::Error> {
        let refuse = |why: String| {
            clap::Error::raw(
                clap::error::ErrorKind::ValueValidation,
                format!("--api-keys (RINGDRAG_API_KEYS): {why}\n"),
            )
            .with_cmd(cmd)
        };
        let text = value
            .to_str()
            .ok_or_else(|| refuse("the keys are not valid UTF-8".to_string()))?;
        ApiKeys::from_list(text).map_err(refuse)
    }
}

fn read_key_file(text: &str) -> Result<KeyFile, String> {
    let path = std::path::PathBuf::from(text);
    let keys = ApiKeys::from_file(&path)?;
    Ok(KeyFile { path, keys })
}

fn positive_seconds(text: &str) -> Result<f64, String> {
    let value: f64 = text.parse().map_err(|e| format!("{e}"))?;
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err("must be a finite number of seconds greater than zero".to_string())
    }
}

impl Config {
    /// The settings with every default, as if no flag and no variable were given.
    pub fn defaults() -> Self {
        Self {
            listen: SocketAddr::from(([127, 0, 0, 1], 8080)),
            log_format: LogFormat::Text,
            max_concurrent_jobs: None,
            queue_wait_ms: 2000,
            request_timeout_s: 60,
            max_body_bytes: 1 << 20,
            max_speeds: Limits::default().max_speeds,
            max_ring_cells: Limits::default().max_ring_cells,
            max_steps: Limits::default().max_steps,
            max_sim_time_s: Limits::default().max_time_s,
            max_samples: Limits::default().max_samples,
            max_sweep_points: Limits::default().max_sweep_points,
            max_connections: DEFAULT_MAX_CONNECTIONS,
            header_read_timeout_s: 10,
            idle_timeout_s: 30,
            auth_failures_per_minute: 10,
            shutdown_delay_s: 0,
            api_keys: ApiKeys::default(),
            api_keys_file: None,
            protect_metrics: false,
            cors_origins: Origins::default(),
            rate_limit_per_minute: 0,
            rate_limit_burst: None,
            client_ip_header: None,
            rate_limit_max_clients: crate::ratelimit::MAX_TRACKED,
            cache_entries: DEFAULT_CACHE_ENTRIES,
            cache_max_bytes: DEFAULT_CACHE_MAX_BYTES,
            print_openapi: false,
        }
    }

    /// The model's work limits from these settings.
    pub fn limits(&self) -> Limits {
        Limits {
            max_speeds: self.max_speeds,
            max_ring_cells: self.max_ring_cells,
            max_steps: self.max_steps,
            max_time_s: self.max_sim_time_s,
            max_samples: self.max_samples,
            max_sweep_points: self.max_sweep_points,
            ..Limits::default()
        }
    }

    /// Computations allowed at once: the setting, or the available cores.
    pub fn job_slots(&self) -> usize {
        self.max_concurrent_jobs.map_or_else(
            || std::thread::available_parallelism().map_or(1, NonZeroUsize::get),
            NonZeroUsize::get,
        )
    }

    /// Longest wait for a computation slot.
    pub fn queue_wait(&self) -> Duration {
        Duration::from_millis(self.queue_wait_ms)
    }

    /// Longest time one request may take.
    pub fn request_timeout(&self) -> Duration {
        Duration::from_secs(self.request_timeout_s)
    }

    /// Longest time for a request's line and headers.
    pub fn header_read_timeout(&self) -> Duration {
        Duration::from_secs(self.header_read_timeout_s)
    }

    /// Longest keep-alive idle time of a connection.
    pub fn idle_timeout(&self) -> Duration {
        Duration::from_secs(self.idle_timeout_s)
    }

    /// Every accepted API key (`--api-keys` and `--api-keys-file` together); empty: keys off.
    pub fn all_api_keys(&self) -> ApiKeys {
        match &self.api_keys_file {
            Some(file) => self.api_keys.clone().merged(&file.keys),
            None => self.api_keys.clone(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_match_the_parser() {
        // The parser with no arguments must give `Config::defaults()` (environment permitting).
        let parsed = Config::try_parse_from(["ringdrag"]);
        if std::env::vars().any(|(k, _)| k.starts_with("RINGDRAG_")) {
            return;
        }
        let Ok(parsed) = parsed else {
            panic!("defaults must parse")
        };
        let d = Config::defaults();
        assert_eq!(parsed.listen, d.listen);
        assert_eq!(parsed.request_timeout_s, d.request_timeout_s);
        assert_eq!(parsed.max_body_bytes, 1_048_576);
        assert_eq!(parsed.limits(), Limits::default());
    }

    #[test]
    fn a_refused_key_is_not_echoed() {
        let secret = "7c1e94b03fa2d5685e0b9a3c4f7d21e6,short-secret";
        let Err(e) = Config::try_parse_from(["ringdrag", "--api-keys", secret]) else {
            panic!("a short key must be refused")
        };
        let text = e.to_string();
        assert!(text.contains("at least 16"), "{text}");
        assert!(!text.contains("short-secret"), "{text}");
        assert!(!text.contains("7c1e94b03fa2d568"), "{text}");
        let Ok(parsed) = Config::try_parse_from(["ringdrag", "--api-keys", &secret[..32]]) else {
            panic!("a good key parses")
        };
        assert_eq!(parsed.all_api_keys().len(), 1);
    }

    #[test]
    fn rejects_non_positive_time_limit() {
        assert!(Config::try_parse_from(["ringdrag", "--max-sim-time-s", "0"]).is_err());
        assert!(Config::try_parse_from(["ringdrag", "--max-sim-time-s", "NaN"]).is_err());
        assert!(Config::try_parse_from(["ringdrag", "--request-timeout-s", "0"]).is_err());
        assert!(Config::try_parse_from(["ringdrag", "--max-sim-time-s", "30"]).is_ok());
    }
}
