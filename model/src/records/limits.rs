//! Work limits: caps that keep one job within a bounded time and memory. The service sets
//! them from its configuration; exceeding one is a [`ModelError::TooLarge`] naming the field
//! that drives the size.

use crate::records::cancel::CancelToken;
use std::any::Any;
use std::collections::HashMap;
use std::sync::{Arc, Mutex};

/// Largest number of f64 entries one job's cache holds, 32 MB; when a new value would pass it,
/// the cache starts over.
pub const JOB_CACHE_ENTRIES: usize = 1 << 22;

/// A shared value of the cache.
type Shared = Arc<dyn Any + Send + Sync>;

/// The cache's contents by key (the solvers define keys and values: flux tables per geometry).
#[derive(Default)]
struct TableStore {
    tables: HashMap<Vec<u64>, Shared>,
    entries: usize,
}

impl std::fmt::Debug for TableStore {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("TableStore")
            .field("values", &self.tables.len())
            .field("entries", &self.entries)
            .finish()
    }
}

/// A job's cache of tabulated values (the solvers keep flux tables in it), shared by its
/// clones (see [`Limits::tables`]). It holds any value type; the solver that stores a key
/// reads it back as that type.
#[derive(Debug, Clone, Default)]
pub struct TableCache {
    store: Option<Arc<Mutex<TableStore>>>,
}

impl TableCache {
    /// An empty cache that keeps tables.
    pub fn enabled() -> Self {
        Self {
            store: Some(Arc::new(Mutex::new(TableStore::default()))),
        }
    }

    /// Whether this cache keeps tables.
    pub fn is_enabled(&self) -> bool {
        self.store.is_some()
    }

    /// The value of `key`, if kept and of type `T`.
    pub(crate) fn get<T: Any + Send + Sync>(&self, key: &[u64]) -> Option<Arc<T>> {
        let store = self.store.as_ref()?;
        let guard = store.lock().unwrap_or_else(|p| p.into_inner());
        guard.tables.get(key).cloned()?.downcast::<T>().ok()
    }

    /// Keeps `value` of `entries` f64 entries under `key` (a no-op for a disabled cache).
    pub(crate) fn insert<T: Any + Send + Sync>(
        &self,
        key: Vec<u64>,
        value: Arc<T>,
        entries: usize,
    ) {
        let Some(store) = self.store.as_ref() else {
            return;
        };
        let mut guard = store.lock().unwrap_or_else(|p| p.into_inner());
        let n = entries;
        if n > JOB_CACHE_ENTRIES {
            return;
        }
        if guard.entries + n > JOB_CACHE_ENTRIES {
            guard.tables.clear();
            guard.entries = 0;
        }
        if guard.tables.insert(key, value).is_none() {
            guard.entries += n;
        }
    }
}

/// Caches compare equal when both are disabled or both are the same job's.
impl PartialEq for TableCache {
    fn eq(&self, other: &Self) -> bool {
        match (&self.store, &other.store) {
            (None, None) => true,
            (Some(a), Some(b)) => Arc::ptr_eq(a, b),
            _ => false,
        }
    }
}
use crate::records::error::ModelError;

/// Caps on the size of a job.
#[derive(Debug, Clone, PartialEq)]
pub struct Limits {
    /// Most speeds in one force curve.
    pub max_speeds: usize,
    /// Most ring cells (axial rings x radial layers) in one ring-circuit run.
    pub max_ring_cells: usize,
    /// Most time steps in one stroke.
    pub max_steps: usize,
    /// Longest simulated time, s.
    pub max_time_s: f64,
    /// Most samples in a returned series.
    pub max_samples: usize,
    /// Most radial layers.
    pub max_radial_layers: usize,
    /// Most points in one sweep.
    pub max_sweep_points: usize,
    /// Largest band storage of one factorised ring-circuit window matrix, entries (it also
    /// bounds the work of one time step to about 4x this many multiply-adds).
    pub max_band_entries: usize,
    /// Most entries (radial layers x axial points) in one tabulation of the stack's flux
    /// derivative, and in its drag profile; 8 bytes each.
    pub max_table_entries: usize,
    /// Most evaluations of the loop-mutual kernel (complete elliptic integrals, about 0.1 us
    /// each) to build one flux table.
    pub max_kernel_evaluations: usize,
    /// Most evaluations of the stack factor (Gauss points x magnets) in the spectral solver's
    /// product integration, about 20 ns each.
    pub max_quadrature_terms: usize,
    /// Stops the job cooperatively when its deadline passes or its caller goes away; the
    /// default never cancels.
    pub cancel: CancelToken,
    /// Flux tables shared by the strokes of one job (sweep points, sizing evaluations,
    /// selection candidates, tolerance corners); empty and unused unless the job asks for one
    /// with [`Limits::with_job_cache`], so nothing is kept between jobs.
    pub tables: TableCache,
}

/// Largest band storage of one factorised window matrix of the stroke solver, entries (16 MB
/// of f64; up to four factors are cached per run). It also bounds the work of one step to
/// about 4x this many multiply-adds.
pub const MAX_BAND_ENTRIES: usize = 2 << 20;

impl Default for Limits {
    fn default() -> Self {
        Self {
            max_speeds: 2000,
            max_ring_cells: 20_000,
            max_steps: 2_000_000,
            max_time_s: 3600.0,
            max_samples: 20_000,
            max_radial_layers: 32,
            max_sweep_points: 10_000,
            max_band_entries: MAX_BAND_ENTRIES,
            max_table_entries: 1 << 22,
            max_kernel_evaluations: 20_000_000,
            max_quadrature_terms: 100_000_000,
            cancel: CancelToken::never(),
            tables: TableCache::default(),
        }
    }
}

impl Limits {
    /// These limits with `cancel` as the job's cancellation token.
    pub fn with_cancel(&self, cancel: CancelToken) -> Self {
        Self {
            cancel,
            ..self.clone()
        }
    }

    /// These limits with a fresh table cache for one job (see [`Limits::tables`]).
    pub fn with_job_cache(&self) -> Self {
        Self {
            tables: TableCache::enabled(),
            ..self.clone()
        }
    }

    /// Checks `value <= cap`, naming `path` otherwise.
    ///
    /// # Errors
    ///
    /// [`ModelError::TooLarge`] naming `path` when `value` exceeds `cap`.
    pub fn check(path: &str, what: &str, value: usize, cap: usize) -> Result<(), ModelError> {
        if value > cap {
            Err(ModelError::TooLarge {
                path: path.to_string(),
                message: format!("{what} would be {value}, above the service limit of {cap}"),
            })
        } else {
            Ok(())
        }
    }
}
