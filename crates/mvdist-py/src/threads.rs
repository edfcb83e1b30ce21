//! Bounding the threads a call uses: a `threads` argument, else the
//! environment variable `MVDIST_THREADS`, else rayon's default (one per
//! core). Pools are built once per size and kept.

use crate::invalid;
use pyo3::prelude::*;
use rayon::{ThreadPool, ThreadPoolBuilder};
use std::sync::{Arc, Mutex};

/// The environment variable that bounds the threads of every call.
pub(crate) const THREADS_VARIABLE: &str = "MVDIST_THREADS";

static POOLS: Mutex<Vec<(usize, Arc<ThreadPool>)>> = Mutex::new(Vec::new());

/// The thread count a call with `threads` would use; `None` means rayon's
/// default pool.
fn requested(threads: Option<usize>) -> PyResult<Option<usize>> {
    if let Some(t) = threads {
        if t == 0 {
            return Err(invalid(
                "threads = 0: use at least 1, or None for the default (MVDIST_THREADS, else one per core)",
            ));
        }
        return Ok(Some(t));
    }
    match std::env::var(THREADS_VARIABLE) {
        Ok(text) => match text.trim().parse::<usize>() {
            Ok(t) if t > 0 => Ok(Some(t)),
            _ => Err(invalid(format!(
                "{THREADS_VARIABLE}='{text}': set it to a whole number of threads of at least 1, or unset it"
            ))),
        },
        Err(_) => Ok(None),
    }
}

fn pool(threads: usize) -> PyResult<Arc<ThreadPool>> {
    let mut pools = POOLS
        .lock()
        .unwrap_or_else(|poisoned| poisoned.into_inner());
    if let Some((_, p)) = pools.iter().find(|(t, _)| *t == threads) {
        return Ok(Arc::clone(p));
    }
    let built = ThreadPoolBuilder::new()
        .num_threads(threads)
        .thread_name(|i| format!("mvdist-{i}"))
        .build()
        .map_err(|e| invalid(format!("could not start {threads} threads: {e}")))?;
    let built = Arc::new(built);
    pools.push((threads, Arc::clone(&built)));
    Ok(built)
}

/// Runs `f` without the GIL, on a pool of `threads` threads (see the
/// module documentation for the default).
pub(crate) fn run<T: Send>(
    py: Python<'_>,
    threads: Option<usize>,
    f: impl FnOnce() -> T + Send,
) -> PyResult<T> {
    match requested(threads)? {
        None => Ok(py.detach(f)),
        Some(t) => {
            let p = pool(t)?;
            Ok(py.detach(|| p.install(f)))
        }
    }
}

/// The number of threads a call with this `threads` argument uses: the
/// argument, else the environment variable MVDIST_THREADS, else one per
/// core.
///
/// Example:
///     >>> import mvdist
///     >>> mvdist.thread_count(1)
///     1
#[pyfunction]
#[pyo3(signature = (threads=None))]
pub(crate) fn thread_count(threads: Option<usize>) -> PyResult<usize> {
    Ok(requested(threads)?.unwrap_or_else(rayon::current_num_threads))
}
