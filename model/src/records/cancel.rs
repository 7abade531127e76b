//! Cooperative cancellation of a job: a deadline plus a flag that another thread can raise.
//!
//! Long loops of the solvers (wavenumber nodes, quadrature intervals, time steps, sweep points,
//! sizing evaluations, tolerance corners) call [`CancelToken::check`] every so often; once the
//! deadline has passed or the flag is raised it answers [`ModelError::Cancelled`], so a job
//! whose caller has given up stops within one check interval and frees its resources. A check
//! costs one atomic load and, when a deadline is set, one monotonic clock read (tens of
//! nanoseconds), so loops check every few hundred cheap iterations or every expensive one.

use crate::records::error::ModelError;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Instant;

#[derive(Debug)]
struct Inner {
    cancelled: AtomicBool,
    deadline: Option<Instant>,
}

/// A cheap, cloneable cancellation token; clones share one flag. The default never cancels.
#[derive(Debug, Clone, Default)]
pub struct CancelToken {
    inner: Option<Arc<Inner>>,
}

impl CancelToken {
    /// A token that never cancels (the convenient default of the public entry points).
    pub fn never() -> Self {
        Self { inner: None }
    }

    /// A token without a deadline, cancelled only by [`cancel`](Self::cancel).
    pub fn new() -> Self {
        Self::build(None)
    }

    /// A token that cancels itself at `deadline` (or earlier by [`cancel`](Self::cancel)).
    pub fn with_deadline(deadline: Instant) -> Self {
        Self::build(Some(deadline))
    }

    fn build(deadline: Option<Instant>) -> Self {
        Self {
            inner: Some(Arc::new(Inner {
                cancelled: AtomicBool::new(false),
                deadline,
            })),
        }
    }

    /// Raises the flag: every holder of a clone sees the job as cancelled from now on.
    pub fn cancel(&self) {
        if let Some(inner) = &self.inner {
            inner.cancelled.store(true, Ordering::Release);
        }
    }

    /// The deadline, if any.
    pub fn deadline(&self) -> Option<Instant> {
        self.inner.as_ref().and_then(|i| i.deadline)
    }

    /// True once the flag is raised or the deadline has passed.
    pub fn is_cancelled(&self) -> bool {
        let Some(inner) = &self.inner else {
            return false;
        };
        if inner.cancelled.load(Ordering::Acquire) {
            return true;
        }
        match inner.deadline {
            Some(d) if Instant::now() >= d => {
                inner.cancelled.store(true, Ordering::Release);
                true
            }
            _ => false,
        }
    }

    /// `Err(ModelError::Cancelled)` once cancelled, for `?` in solver loops.
    ///
    /// # Errors
    ///
    /// [`ModelError::Cancelled`] once the token has been tripped (deadline passed or client
    /// gone).
    pub fn check(&self) -> Result<(), ModelError> {
        if self.is_cancelled() {
            Err(ModelError::Cancelled)
        } else {
            Ok(())
        }
    }
}

/// Tokens compare equal when both never cancel or both share one flag (so that [`Limits`]
/// keeps its equality).
///
/// [`Limits`]: crate::records::limits::Limits
impl PartialEq for CancelToken {
    fn eq(&self, other: &Self) -> bool {
        match (&self.inner, &other.inner) {
            (None, None) => true,
            (Some(a), Some(b)) => Arc::ptr_eq(a, b),
            _ => false,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::Duration;

    #[test]
    fn never_cancels_unless_told() {
        assert!(!CancelToken::never().is_cancelled());
        CancelToken::never().cancel();
        let t = CancelToken::new();
        let clone = t.clone();
        assert_eq!(clone.check(), Ok(()));
        t.cancel();
        assert_eq!(clone.check(), Err(ModelError::Cancelled));
    }

    #[test]
    fn a_past_deadline_cancels() {
        let past = Instant::now();
        let t = CancelToken::with_deadline(past);
        assert!(t.is_cancelled());
        let future = CancelToken::with_deadline(Instant::now() + Duration::from_secs(3600));
        assert!(!future.is_cancelled());
    }
}
