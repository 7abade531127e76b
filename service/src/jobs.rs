//! Running computations: off the async runtime, a bounded number at a time, within a deadline.
//!
//! Every computing endpoint hands its work to [`JobRunner::run`] (or, for answers that stream
//! while the work computes, to [`JobRunner::start`]). The runner
//! 1. waits at most the queue wait for one of a fixed number of slots (a semaphore), and answers
//!    503 with `Retry-After` when none frees up: under load the service sheds work instead of
//!    queueing without bound;
//! 2. runs the work with `spawn_blocking`, so CPU-bound solvers never stall the async workers and
//!    `/healthz` keeps answering;
//! 3. hands the work a [`CancelToken`] with the request deadline, raises it when the deadline
//!    passes or the request is dropped (the client went away), and answers 503 at the
//!    deadline. The model's long loops check the token and stop with `ModelError::Cancelled`,
//!    so abandoned work frees its slot within one check interval (measured: README, "Bounded
//!    work"). The slot stays taken until the work really returns, so work that does not check
//!    the token still counts against the bound and cannot pile up.
//!
//! Metrics: `ringdrag_jobs_in_flight` and `ringdrag_jobs_waiting` (gauges),
//! `ringdrag_jobs_total{job, outcome}` (counter) and `ringdrag_job_duration_seconds{job}`
//! (histogram of computing time).

use crate::problem::ApiError;
use ringdrag_model::CancelToken;
use std::sync::Arc;
use std::time::Duration;
use tokio::sync::{OwnedSemaphorePermit, Semaphore};
use tokio::time::Instant;

/// Bounded, deadline-aware runner of blocking computations. Cheap to clone.
#[derive(Debug, Clone)]
pub struct JobRunner {
    slots: Arc<Semaphore>,
    capacity: usize,
    queue_wait: Duration,
    timeout: Duration,
}

/// Keeps a gauge raised while alive.
struct GaugeGuard {
    name: &'static str,
    job: &'static str,
}

impl GaugeGuard {
    fn raise(name: &'static str, job: &'static str) -> Self {
        metrics::gauge!(name, "job" => job).increment(1.0);
        Self { name, job }
    }
}

impl Drop for GaugeGuard {
    fn drop(&mut self) {
        metrics::gauge!(self.name, "job" => self.job).decrement(1.0);
    }
}

/// Raises the token when dropped: a request future dropped before its job ended (the client
/// went away) stops the job.
struct CancelOnDrop(CancelToken);

impl Drop for CancelOnDrop {
    fn drop(&mut self) {
        self.0.cancel();
    }
}

fn count(job: &'static str, outcome: &'static str) {
    metrics::counter!("ringdrag_jobs_total", "job" => job, "outcome" => outcome).increment(1);
}

impl JobRunner {
    /// A runner with `capacity` slots (at least one), waiting at most `queue_wait` for a slot,
    /// and giving each request `timeout` in all (waiting included).
    pub fn new(capacity: usize, queue_wait: Duration, timeout: Duration) -> Self {
        let capacity = capacity.max(1);
        Self {
            slots: Arc::new(Semaphore::new(capacity)),
            capacity,
            queue_wait,
            timeout,
        }
    }

    /// Number of slots.
    pub fn capacity(&self) -> usize {
        self.capacity
    }

    /// Slots free right now.
    pub fn available(&self) -> usize {
        self.slots.available_permits()
    }

    /// Longest time one request may take, waiting for a slot included.
    pub fn timeout(&self) -> Duration {
        self.timeout
    }

    /// Suggested wait before a retry, whole seconds (at least 1).
    fn retry_after_s(&self) -> u64 {
        self.queue_wait.as_secs_f64().ceil().max(1.0) as u64
    }

    /// Waits at most the queue wait (and never longer than the request timeout) for a slot.
    async fn acquire(&self, job: &'static str) -> Result<OwnedSemaphorePermit, ApiError> {
        let _waiting = GaugeGuard::raise("ringdrag_jobs_waiting", job);
        let wait = self.queue_wait.min(self.timeout);
        match tokio::time::timeout(wait, Arc::clone(&self.slots).acquire_owned()).await {
            Ok(Ok(permit)) => Ok(permit),
            Ok(Err(_closed)) => {
                count(job, "internal");
                Err(ApiError::Internal("job slots closed".to_string()))
            }
            Err(_elapsed) => {
                count(job, "overloaded");
                Err(ApiError::Overloaded {
                    retry_after_s: self.retry_after_s(),
                })
            }
        }
    }

    /// Starts `work` on the blocking pool under the slot bound and returns as soon as it has a
    /// slot, for answers that stream while the work computes (sweeps as NDJSON).
    ///
    /// Waiting for a slot is as in [`run`](Self::run): 503 when none frees up within the queue
    /// wait. The slot stays taken until `work` returns, whether or not anyone still reads its
    /// results. `work` gets a [`CancelToken`] that fires at the request deadline (see
    /// [`timeout`](Self::timeout)); it should also raise it when its reader goes away, so that
    /// the model stops computing points nobody will read. It returns its outcome label for `ringdrag_jobs_total`
    /// (`ok`, `timeout`, `client_gone`...). A panic in `work` is logged and counted as
    /// `internal`.
    ///
    /// # Errors
    ///
    /// A 503 problem when no job slot frees up within the queue wait, or the job's deadline
    /// passes.
    pub async fn start<F>(&self, job: &'static str, work: F) -> Result<(), ApiError>
    where
        F: FnOnce(CancelToken) -> &'static str + Send + 'static,
    {
        let token = CancelToken::with_deadline((Instant::now() + self.timeout).into_std());
        let permit = self.acquire(job).await?;
        let span = tracing::Span::current();
        let handle = tokio::task::spawn_blocking(move || {
            let _entered = span.enter();
            crate::priority::lower_current_thread();
            let _permit = permit;
            let _in_flight = GaugeGuard::raise("ringdrag_jobs_in_flight", job);
            let started = std::time::Instant::now();
            let outcome = work(token);
            let elapsed = started.elapsed();
            metrics::histogram!("ringdrag_job_duration_seconds", "job" => job)
                .record(elapsed.as_secs_f64());
            tracing::debug!(
                job,
                outcome,
                elapsed_ms = elapsed.as_millis() as u64,
                "job finished"
            );
            outcome
        });
        tokio::spawn(async move {
            match handle.await {
                Ok(outcome) => count(job, outcome),
                Err(join_error) => {
                    count(job, "internal");
                    tracing::error!(
                        job,
                        panicked = join_error.is_panic(),
                        "streaming job failed"
                    );
                }
            }
        });
        Ok(())
    }

    /// Runs `work` on the blocking pool under the slot bound and the request deadline.
    ///
    /// `job` labels the metrics (`force_curve`, `simulate`...). The deadline counts from the
    /// call, so time spent waiting for a slot is part of the request timeout. `work` gets the
    /// job's [`CancelToken`] (pass it to the model in `Limits::cancel`); it fires at the
    /// deadline and when this future is dropped before the work ends.
    ///
    /// # Errors
    ///
    /// A 503 problem when no slot frees up within the queue wait or the deadline passes (the
    /// job is cancelled), the model's error mapped to its problem, or a 500 when the job
    /// panicked.
    pub async fn run<T, F>(&self, job: &'static str, work: F) -> Result<T, ApiError>
    where
        F: FnOnce(CancelToken) -> Result<T, ApiError> + Send + 'static,
        T: Send + 'static,
    {
        let deadline = Instant::now() + self.timeout;
        let token = CancelToken::with_deadline(deadline.into_std());
        let cancel_on_drop = CancelOnDrop(token.clone());
        let permit = self.acquire(job).await?;
        let work_token = token.clone();
        let span = tracing::Span::current();
        let handle = tokio::task::spawn_blocking(move || {
            let _entered = span.enter();
            crate::priority::lower_current_thread();
            // The permit moves into the computation: its slot frees only when the work returns
            // (at the latest one cancellation check after the token fires).
            let _permit = permit;
            let _in_flight = GaugeGuard::raise("ringdrag_jobs_in_flight", job);
            let started = std::time::Instant::now();
            let result = work(work_token);
            let elapsed = started.elapsed();
            metrics::histogram!("ringdrag_job_duration_seconds", "job" => job)
                .record(elapsed.as_secs_f64());
            tracing::debug!(job, elapsed_ms = elapsed.as_millis() as u64, "job finished");
            result
        });
        let outcome = tokio::time::timeout_at(deadline, handle).await;
        let cancelled = token.is_cancelled();
        // Past this point the work has ended or is abandoned: stop it either way.
        drop(cancel_on_drop);
        match outcome {
            Ok(Ok(Err(_))) if cancelled => {
                // The work noticed the deadline before the timer did.
                count(job, "timeout");
                Err(ApiError::Timeout {
                    timeout_s: self.timeout.as_secs(),
                    retry_after_s: self.retry_after_s(),
                })
            }
            Ok(Ok(result)) => {
                count(job, if result.is_ok() { "ok" } else { "rejected" });
                result
            }
            Ok(Err(join_error)) => {
                count(job, "internal");
                let what = if join_error.is_panic() {
                    "the computation panicked"
                } else {
                    "the computation was cancelled"
                };
                Err(ApiError::Internal(what.to_string()))
            }
            Err(_elapsed) => {
                count(job, "timeout");
                tracing::warn!(
                    job,
                    "job outlived the request timeout; cancelled, its slot frees at its next check"
                );
                Err(ApiError::Timeout {
                    timeout_s: self.timeout.as_secs(),
                    retry_after_s: self.retry_after_s(),
                })
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sleeper(ms: u64) -> impl FnOnce(CancelToken) -> Result<u64, ApiError> + Send + 'static {
        move |_| {
            std::thread::sleep(Duration::from_millis(ms));
            Ok(ms)
        }
    }

    /// Work that checks its token every millisecond, like the model's loops, for up to `ms`.
    fn cancellable(ms: u64) -> impl FnOnce(CancelToken) -> Result<u64, ApiError> + Send + 'static {
        move |token| {
            for _ in 0..ms {
                if token.is_cancelled() {
                    return Err(ringdrag_model::ModelError::Cancelled.into());
                }
                std::thread::sleep(Duration::from_millis(1));
            }
            Ok(ms)
        }
    }

    #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
    async fn runs_and_returns() {
        let r = JobRunner::new(2, Duration::from_millis(100), Duration::from_secs(5));
        assert_eq!(r.run("test", sleeper(1)).await, Ok(1));
        assert_eq!(r.available(), 2);
    }

    #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
    async fn sheds_load_when_slots_stay_busy() {
        let r = JobRunner::new(1, Duration::from_millis(50), Duration::from_secs(5));
        let busy = {
            let r = r.clone();
            tokio::spawn(async move { r.run("test", sleeper(400)).await })
        };
        tokio::time::sleep(Duration::from_millis(100)).await;
        let shed = r.run("test", sleeper(1)).await;
        assert_eq!(shed, Err(ApiError::Overloaded { retry_after_s: 1 }));
        assert_eq!(busy.await.ok(), Some(Ok(400)));
    }

    #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
    async fn a_timed_out_cancellable_job_frees_its_slot() {
        let r = JobRunner::new(1, Duration::from_millis(50), Duration::from_millis(100));
        let result = r.run("test", cancellable(60_000)).await;
        assert!(
            matches!(result, Err(ApiError::Timeout { .. })),
            "{result:?}"
        );
        // The work stops at its next check: the next request gets the slot (it waits at most
        // the queue wait for it) instead of a 503.
        let next = r.run("test", sleeper(1)).await;
        assert_eq!(next, Ok(1));
    }

    #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
    async fn a_refusal_is_not_a_timeout() {
        let r = JobRunner::new(1, Duration::from_millis(50), Duration::from_secs(5));
        let result: Result<(), ApiError> = r
            .run("test", |_| {
                Err(ApiError::from(ringdrag_model::ModelError::TooLarge {
                    path: "design.magnets.count".into(),
                    message: "test".into(),
                }))
            })
            .await;
        assert!(
            matches!(result, Err(ApiError::JobTooLarge(_))),
            "{result:?}"
        );
    }

    #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
    async fn a_dropped_request_cancels_its_job() {
        let r = JobRunner::new(1, Duration::from_millis(500), Duration::from_secs(60));
        let abandoned = {
            let r = r.clone();
            tokio::spawn(async move { r.run("test", cancellable(60_000)).await })
        };
        tokio::time::sleep(Duration::from_millis(50)).await;
        abandoned.abort();
        // The client is gone: the slot frees well within the queue wait.
        assert_eq!(r.run("test", sleeper(1)).await, Ok(1));
    }

    #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
    async fn timeout_keeps_the_slot_until_uncancellable_work_ends() {
        let r = JobRunner::new(1, Duration::from_millis(50), Duration::from_millis(100));
        let result = r.run("test", sleeper(600)).await;
        assert!(
            matches!(result, Err(ApiError::Timeout { .. })),
            "{result:?}"
        );
        assert_eq!(
            r.available(),
            0,
            "work that ignores its token must hold its slot"
        );
        tokio::time::sleep(Duration::from_millis(800)).await;
        assert_eq!(r.available(), 1);
    }

    #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
    async fn a_started_job_holds_its_slot_until_it_ends() {
        let r = JobRunner::new(1, Duration::from_millis(50), Duration::from_secs(5));
        let started = std::time::Instant::now();
        let result = r
            .start("test", |_| {
                std::thread::sleep(Duration::from_millis(300));
                "ok"
            })
            .await;
        assert_eq!(result, Ok(()));
        assert!(
            started.elapsed() < Duration::from_millis(200),
            "start returns once the work runs"
        );
        assert_eq!(r.available(), 0);
        let shed = r.start("test", |_| "ok").await;
        assert_eq!(shed, Err(ApiError::Overloaded { retry_after_s: 1 }));
        tokio::time::sleep(Duration::from_millis(500)).await;
        assert_eq!(r.available(), 1);
    }

    #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
    async fn a_panicking_job_is_an_internal_error() {
        let r = JobRunner::new(1, Duration::from_millis(50), Duration::from_secs(5));
        let result: Result<(), ApiError> = r
            .run("test", |_| -> Result<(), ApiError> {
                panic!("deliberate test panic")
            })
            .await;
        assert!(matches!(result, Err(ApiError::Internal(_))), "{result:?}");
        assert_eq!(r.available(), 1);
    }
}
