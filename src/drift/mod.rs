//! Models that follow a drifting process row by row.
//!
//! A service that scores telemetry for months cannot refit from scratch on
//! every row, and the process it watches moves. Two models keep location
//! and scatter current in `O(p²)` per row, updating the Cholesky factor of
//! the co-moment matrix by a rank-one update (and, for the window, a
//! rank-one downdate) instead of refactorizing:
//!
//! * [`ForgettingModel`]: exponential forgetting; a row seen `k` rows ago
//!   has weight `λᵏ`.
//! * [`SlidingWindowModel`]: the last `w` rows, equally weighted.
//!
//! With co-moment `M = L Lᵀ`, a new row `x` with `δ = x − μ` changes
//! `M ← λM + c·δδᵀ`, so `L ← chol(λ L Lᵀ + c δδᵀ)`: a scaling and a
//! rank-one update (faer's rank-update kernel). Rounding in repeated
//! updates is bounded by refactorizing from `M` every
//! `refactor_every` rows (default 4096); the window model also recomputes
//! `μ` and `M` exactly from its rows once per window.
//!
//! **Caution.** A drifting model adapts to slow changes by design: a fault
//! that develops slowly is absorbed into the model and stops being flagged.
//! Compare against a fixed reference model as well when that matters.
//!
//! # Example
//! ```
//! use mvdist::drift::ForgettingModel;
//!
//! let mut model = ForgettingModel::new(2, 0.99)?;
//! for k in 0..500 {
//!     let t = k as f64 * 0.1;
//!     model.update(&[t.sin(), t.cos() + 0.5 * t.sin()])?;
//! }
//! let d2 = model.squared_distance(&[0.0, 3.0])?;
//! assert!(d2 > 4.0);
//! # Ok::<(), mvdist::Error>(())
//! ```

mod factor;
mod forgetting;
mod window;

/// `len` zeros, or an error (not an abort) when `len` overflowed or the
/// memory cannot be had.
fn zeroed(len: Option<usize>, what: &'static str) -> crate::Result<Vec<f64>> {
    let too_large = || crate::Error::invalid(what, "too large to allocate on this machine");
    let len = len.ok_or_else(too_large)?;
    let mut v = Vec::new();
    v.try_reserve_exact(len).map_err(|_| too_large())?;
    v.resize(len, 0.0);
    Ok(v)
}

/// The `format` field of a serialized drift model.
const FORMAT_NAME: &str = "mvdist-drift-model";

/// The newest drift-model format version this build reads and writes.
pub const DRIFT_FORMAT_VERSION: u32 = 1;

fn check_drift_format(found_name: Option<&str>, found_version: Option<u32>) -> crate::Result<()> {
    crate::model_file::check_format(
        "drift model",
        FORMAT_NAME,
        DRIFT_FORMAT_VERSION,
        found_name,
        found_version,
    )
}

pub use forgetting::ForgettingModel;
pub use window::SlidingWindowModel;

/// Default number of rank-one changes between refactorizations.
pub const DEFAULT_REFACTOR_EVERY: u64 = 4096;
