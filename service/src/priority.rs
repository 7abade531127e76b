//! Scheduling priority of computing threads.
//!
//! The solvers are CPU-bound; on a small machine (two cores) two heavy jobs would otherwise
//! compete on equal terms with the async workers that answer `/healthz`, accept connections and
//! enforce timeouts. Every thread that computes (the blocking pool while it runs a job, and the
//! rayon pool that sweeps and selections fan out on) lowers its own nice value to
//! [`COMPUTE_NICE`], so the scheduler favours the async workers (CFS weights: nice 0 against
//! nice 10 is about 10 : 1). Lowering one's own priority needs no privilege; raising it back
//! would, so the blocking pool's threads stay lowered once they have run a job (only jobs run
//! there).
//!
//! On Linux `setpriority(PRIO_PROCESS, tid)` applies to the one thread; elsewhere this is a
//! no-op. Failure is logged and ignored: priority is an optimisation, not a correctness need.

/// Nice value of computing threads (0 is the default; 19 the lowest priority).
pub const COMPUTE_NICE: i32 = 10;

/// Lowers the calling thread's priority to [`COMPUTE_NICE`] (best effort).
pub fn lower_current_thread() {
    #[cfg(target_os = "linux")]
    {
        let tid = rustix::thread::gettid();
        if let Err(error) = rustix::process::setpriority_process(Some(tid), COMPUTE_NICE) {
            tracing::debug!(%error, "cannot lower the priority of a computing thread");
        }
    }
}

/// Starts rayon's global pool with threads of lowered priority. Call once, before any job.
///
/// # Errors
/// When the global pool was already built.
pub fn init_compute_pool() -> Result<(), rayon::ThreadPoolBuildError> {
    rayon::ThreadPoolBuilder::new()
        .thread_name(|i| format!("ringdrag-compute-{i}"))
        .start_handler(|_| lower_current_thread())
        .build_global()
}

#[cfg(all(test, target_os = "linux"))]
mod tests {
    use super::*;

    #[test]
    fn lowers_only_the_calling_thread() {
        let before = rustix::process::getpriority_process(None).unwrap_or(0);
        let lowered = std::thread::spawn(|| {
            lower_current_thread();
            rustix::process::getpriority_process(Some(rustix::thread::gettid()))
        })
        .join()
        .expect("the thread ends");
        assert_eq!(lowered.ok(), Some(COMPUTE_NICE.max(before)));
        let after = rustix::process::getpriority_process(Some(rustix::thread::gettid()));
        assert_eq!(
            after.ok(),
            Some(before),
            "the calling thread keeps its priority"
        );
    }
}
