//! A sliding window of the last `w` rows with an updated and downdated
//! Cholesky factor.

use super::factor::TrackedFactor;
use super::{check_drift_format, DEFAULT_REFACTOR_EVERY, DRIFT_FORMAT_VERSION, FORMAT_NAME};
use crate::calibration::{Reference, RowOrigin};
use crate::data::check_row;
use crate::error::{Error, Result};
use crate::estimate::FitMethod;
use crate::model::{DistanceModel, RowScore};
use crate::moments::MomentAccumulator;
use crate::scatter::Scatter;
use serde::{Deserialize, Serialize};

/// Mean and covariance of the last `w` rows, kept current in `O(p²)` per
/// row: the new row is added by a rank-one update and the oldest removed by
/// a rank-one downdate of the Cholesky factor. Once per window the mean and
/// co-moment matrix are recomputed exactly from the stored rows (two-pass)
/// and the factor refactorized, so rounding cannot accumulate.
///
/// # Example
/// ```
/// use mvdist::drift::SlidingWindowModel;
///
/// let mut model = SlidingWindowModel::new(2, 50)?;
/// for k in 0..200 {
///     let t = k as f64;
///     model.update(&[t.sin(), (0.7 * t).cos()])?;
/// }
/// assert_eq!(model.len(), 50);
/// let s = model.score_row(&[0.0, 0.0], 0.01)?;
/// assert!(!s.flagged);
/// # Ok::<(), mvdist::Error>(())
/// ```
///
/// Serializable, versioned (`format`, `format_version`): the saved state is
/// the window's rows, oldest first; loading replays them and recomputes
/// the mean, co-moments and factor exactly.
#[derive(Clone, Debug, Serialize, Deserialize)]
#[serde(try_from = "WindowData", into = "WindowData")]
pub struct SlidingWindowModel {
    p: usize,
    capacity: usize,
    /// Ring buffer of rows, row-major.
    rows: Vec<f64>,
    len: usize,
    oldest: usize,
    mean: Vec<f64>,
    comoment: Vec<f64>,
    factor: TrackedFactor,
    factor_ready: bool,
    since_refactor: u64,
    refactor_every: u64,
    since_refresh: usize,
    delta: Vec<f64>,
}

impl SlidingWindowModel {
    /// A window of `capacity` rows of `dim` variables.
    ///
    /// # Errors
    /// [`Error::Empty`] for `dim = 0`; [`Error::InvalidParameter`] unless
    /// `capacity ≥ dim + 2` (needed for the new-row F reference).
    pub fn new(dim: usize, capacity: usize) -> Result<Self> {
        if dim == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        if capacity < dim.saturating_add(2) {
            return Err(Error::invalid(
                "window size",
                format!(
                    "{capacity} rows is too small for {dim} columns; use at least {}",
                    dim.saturating_add(2)
                ),
            ));
        }
        let rows = super::zeroed(capacity.checked_mul(dim), "window size")?;
        let comoment = super::zeroed(dim.checked_mul(dim), "number of columns")?;
        Ok(SlidingWindowModel {
            p: dim,
            capacity,
            rows,
            len: 0,
            oldest: 0,
            mean: vec![0.0; dim],
            comoment,
            factor: TrackedFactor::zeros(dim),
            factor_ready: false,
            since_refactor: 0,
            refactor_every: DEFAULT_REFACTOR_EVERY,
            since_refresh: 0,
            delta: vec![0.0; dim],
        })
    }

    /// Number of variables.
    pub fn dim(&self) -> usize {
        self.p
    }

    /// Rows currently in the window.
    pub fn len(&self) -> usize {
        self.len
    }

    /// Whether the window holds no rows.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// The window's mean.
    pub fn location(&self) -> &[f64] {
        &self.mean
    }

    /// Adds a row; once the window is full, the oldest row leaves.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] or [`Error::NonFinite`]; the model is
    /// unchanged on error.
    pub fn update(&mut self, x: &[f64]) -> Result<()> {
        let p = self.p;
        check_row(x, p, self.len)?;
        let slot = if self.len == self.capacity {
            let slot = self.oldest;
            self.remove_oldest();
            slot
        } else {
            (self.oldest + self.len) % self.capacity
        };
        self.rows[slot * p..(slot + 1) * p].copy_from_slice(x);
        self.add(x);
        self.since_refresh += 1;
        if self.since_refresh >= self.capacity {
            self.refresh();
        }
        Ok(())
    }

    /// Removes the oldest row: `M ← M − n/(n−1)·(y−μ)(y−μ)ᵀ`.
    fn remove_oldest(&mut self) {
        let p = self.p;
        let n = self.len as f64;
        let start = self.oldest * p;
        for j in 0..p {
            self.delta[j] = self.rows[start + j] - self.mean[j];
        }
        self.oldest = (self.oldest + 1) % self.capacity;
        self.len -= 1;
        if self.len == 0 {
            self.mean.fill(0.0);
            self.comoment.fill(0.0);
            self.factor_ready = false;
            return;
        }
        let g = n / (n - 1.0);
        for j in 0..p {
            self.mean[j] -= self.delta[j] / (n - 1.0);
        }
        for i in 0..p {
            for j in 0..p {
                self.comoment[i * p + j] -= g * self.delta[i] * self.delta[j];
            }
        }
        self.rank_one(-g);
    }

    /// Adds a row: `M ← M + n/(n+1)·(x−μ)(x−μ)ᵀ`.
    fn add(&mut self, x: &[f64]) {
        let p = self.p;
        let n = self.len as f64;
        for j in 0..p {
            self.delta[j] = x[j] - self.mean[j];
            self.mean[j] += self.delta[j] / (n + 1.0);
        }
        let g = n / (n + 1.0);
        for i in 0..p {
            for j in 0..p {
                self.comoment[i * p + j] += g * self.delta[i] * self.delta[j];
            }
        }
        self.len += 1;
        self.rank_one(g);
    }

    fn rank_one(&mut self, a: f64) {
        self.since_refactor += 1;
        if self.factor_ready {
            let ok =
                self.factor.scale_and_update(1.0, &self.delta, a).is_ok() && self.factor.is_valid();
            if !ok || self.since_refactor >= self.refactor_every {
                self.refactor();
            }
        } else if self.len > self.p
            && (self.since_refactor >= self.p as u64 || self.len == self.p + 1)
        {
            self.refactor();
        }
    }

    fn refactor(&mut self) {
        self.since_refactor = 0;
        self.factor_ready = self.factor.refactor(&self.comoment).is_ok() && self.factor.is_valid();
    }

    /// Recomputes mean and co-moment exactly from the stored rows.
    fn refresh(&mut self) {
        self.since_refresh = 0;
        let p = self.p;
        let mut acc = MomentAccumulator::empty(p);
        for k in 0..self.len {
            let slot = (self.oldest + k) % self.capacity;
            acc.push_unchecked(&self.rows[slot * p..(slot + 1) * p], 1.0);
        }
        self.mean.copy_from_slice(&acc.mean);
        self.comoment.copy_from_slice(&acc.comoment);
        if self.len > self.p {
            self.refactor();
        }
    }

    fn ready(&self) -> Result<()> {
        if self.factor_ready {
            Ok(())
        } else {
            Err(Error::TooFewRows {
                rows: self.len,
                needed: self.p + 1,
                columns: self.p,
            })
        }
    }

    /// Squared distance of `x` to the window's mean under its covariance
    /// (`n − 1` divisor); no allocation for `p ≤ 32`.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] before the scatter is available; shape and
    /// finiteness errors.
    pub fn squared_distance(&self, x: &[f64]) -> Result<f64> {
        self.ready()?;
        self.factor
            .squared_distance(x, &self.mean, self.len as f64 - 1.0)
    }

    /// The new-row F reference for the current window.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] while the window holds at most `p` rows.
    pub fn reference(&self) -> Result<Reference> {
        Reference::for_origin(RowOrigin::New, self.len, self.p)
    }

    /// Scores a row against the window: squared distance, p-value, flag.
    ///
    /// # Errors
    /// As [`squared_distance`](Self::squared_distance) and
    /// [`reference`](Self::reference); `alpha` outside (0, 1).
    pub fn score_row(&self, x: &[f64], alpha: f64) -> Result<RowScore> {
        crate::calibration::check_probability(alpha)?;
        let d2 = self.squared_distance(x)?;
        let p_value = self.reference()?.p_value(d2);
        Ok(RowScore {
            squared_distance: d2,
            p_value,
            flagged: p_value <= alpha,
        })
    }

    /// The current lower Cholesky factor of the covariance, row-major.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] before the scatter is available.
    pub fn covariance_factor(&self) -> Result<Vec<f64>> {
        self.ready()?;
        let s = (self.len as f64 - 1.0).sqrt();
        Ok(self.factor.row_major().into_iter().map(|v| v / s).collect())
    }

    /// A frozen [`DistanceModel`] of the current window.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] before the scatter is available; the errors of
    /// [`Scatter::from_row_major`].
    pub fn snapshot(&self) -> Result<DistanceModel> {
        self.ready()?;
        let d = self.len as f64 - 1.0;
        let cov: Vec<f64> = self.comoment.iter().map(|m| m / d).collect();
        DistanceModel::from_parts(
            self.mean.clone(),
            Scatter::from_row_major(&cov, self.p)?,
            self.len,
            FitMethod::SlidingWindow {
                capacity: self.capacity,
            },
        )
    }
}

/// The serialized form of [`SlidingWindowModel`].
#[derive(Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct WindowData {
    format: Option<String>,
    format_version: Option<u32>,
    kind: String,
    dim: usize,
    capacity: usize,
    refactor_every: u64,
    /// Row-major, oldest row first.
    rows: Vec<f64>,
}

const KIND: &str = "sliding_window";

impl From<SlidingWindowModel> for WindowData {
    fn from(m: SlidingWindowModel) -> Self {
        let p = m.p;
        let mut rows = Vec::with_capacity(m.len * p);
        for k in 0..m.len {
            let slot = (m.oldest + k) % m.capacity;
            rows.extend_from_slice(&m.rows[slot * p..(slot + 1) * p]);
        }
        WindowData {
            format: Some(FORMAT_NAME.into()),
            format_version: Some(DRIFT_FORMAT_VERSION),
            kind: KIND.into(),
            dim: p,
            capacity: m.capacity,
            refactor_every: m.refactor_every,
            rows,
        }
    }
}

impl TryFrom<WindowData> for SlidingWindowModel {
    type Error = Error;
    fn try_from(d: WindowData) -> Result<Self> {
        check_drift_format(d.format.as_deref(), d.format_version)?;
        let bad = |reason: String| Error::Format { reason };
        if d.kind != KIND {
            return Err(bad(format!(
                "drift model kind \"{}\" is not \"{KIND}\"",
                d.kind
            )));
        }
        // A file must not make the reader reserve more than 2²⁷ values
        // (1 GiB) for the ring buffer it names.
        if d.capacity.saturating_mul(d.dim) > 1 << 27 {
            return Err(bad(format!(
                "a window of {} rows of {} columns is larger than a saved window may be (2^27 values)",
                d.capacity, d.dim
            )));
        }
        let mut m = SlidingWindowModel::new(d.dim, d.capacity).map_err(|e| bad(e.to_string()))?;
        m.refactor_every = d.refactor_every.max(1);
        let p = d.dim;
        if !d.rows.len().is_multiple_of(p) || d.rows.len() / p > d.capacity {
            return Err(bad(format!(
                "{} stored values are not at most {} rows of {p} columns",
                d.rows.len(),
                d.capacity
            )));
        }
        for (i, row) in d.rows.chunks(p).enumerate() {
            m.update(row)
                .map_err(|e| bad(format!("stored row {i}: {e}")))?;
        }
        m.refresh();
        Ok(m)
    }
}
