//! A mergeable accumulator of the first two moments.

use super::{batch, Divisor};
use crate::data::check_row;
use crate::error::{Error, Result};
use crate::scatter::Scatter;
use ndarray::{Array1, Array2, ArrayView2};
use serde::{Deserialize, Serialize};

/// Running weight, mean and co-moment matrix of a stream of rows, which can
/// be merged with another accumulator exactly.
///
/// The state after rows `x_1 … x_n` with weights `w_i` (1 when not given) is
/// the weight sum `W = Σ w_i`, the mean `m = Σ w_i x_i / W`, and the
/// co-moment matrix `M = Σ w_i (x_i − m)(x_i − m)ᵀ`, updated one row at a
/// time by Welford's method and merged by the pairwise formula of Chan,
/// Golub and LeVeque (1979):
///
/// ```text
/// W = W_a + W_b,  δ = m_b − m_a,  m = m_a + δ·W_b/W,
/// M = M_a + M_b + δ δᵀ · W_a W_b / W.
/// ```
///
/// Neither update forms a raw sum of squares, so the result keeps its
/// precision when the mean is large compared with the spread. Batches added
/// with [`push_rows`](Self::push_rows) are processed in row blocks (centred
/// two-pass within each block) in parallel on the caller's rayon pool, and
/// the blocks merged as above; batch, streamed and merged results agree to
/// about 1e-13 relative whatever the order.
///
/// The accumulator serializes with serde, so partial results computed on
/// other threads or machines can be shipped and merged.
///
/// # Example
/// ```
/// use mvdist::moments::{Divisor, MomentAccumulator};
/// use ndarray::array;
///
/// let rows = array![[1.0, 2.0], [2.0, 1.0], [4.0, 5.0], [3.0, 3.0]];
/// // Two machines each see half of the rows…
/// let mut a = MomentAccumulator::new(2)?;
/// a.push_rows(rows.slice(ndarray::s![..2, ..]))?;
/// let mut b = MomentAccumulator::new(2)?;
/// for row in rows.slice(ndarray::s![2.., ..]).outer_iter() {
///     b.push(&row.to_vec())?;
/// }
/// // …and their states are merged.
/// a.merge(&b)?;
/// assert_eq!(a.count(), 4);
/// assert!((a.mean()[0] - 2.5).abs() < 1e-15);
/// let cov = a.covariance(Divisor::Unbiased)?;
/// assert!((cov[(0, 0)] - 5.0 / 3.0).abs() < 1e-14);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "AccumulatorData")]
pub struct MomentAccumulator {
    pub(crate) dim: usize,
    pub(crate) count: u64,
    pub(crate) weight_sum: f64,
    pub(crate) weight_sq_sum: f64,
    pub(crate) mean: Vec<f64>,
    /// Row-major `p × p`, symmetric.
    pub(crate) comoment: Vec<f64>,
    pub(crate) min: Vec<f64>,
    pub(crate) max: Vec<f64>,
}

#[derive(Deserialize)]
struct AccumulatorData {
    dim: usize,
    count: u64,
    weight_sum: f64,
    weight_sq_sum: f64,
    mean: Vec<f64>,
    comoment: Vec<f64>,
    min: Vec<f64>,
    max: Vec<f64>,
}

impl TryFrom<AccumulatorData> for MomentAccumulator {
    type Error = Error;
    fn try_from(d: AccumulatorData) -> Result<Self> {
        let p = d.dim;
        let bad = |reason: String| Err(Error::Format { reason });
        if p == 0 {
            return bad("dimension 0".into());
        }
        if d.mean.len() != p || d.min.len() != p || d.max.len() != p || d.comoment.len() != p * p {
            return bad(format!("vector lengths do not match dimension {p}"));
        }
        let valid = |w: f64| w.is_finite() && w >= 0.0;
        if !(valid(d.weight_sum) && valid(d.weight_sq_sum)) {
            return bad("weight sums must be finite and non-negative".into());
        }
        if d.count > 0 && d.mean.iter().chain(&d.comoment).any(|v| !v.is_finite()) {
            return bad("non-finite mean or co-moment".into());
        }
        Ok(MomentAccumulator {
            dim: p,
            count: d.count,
            weight_sum: d.weight_sum,
            weight_sq_sum: d.weight_sq_sum,
            mean: d.mean,
            comoment: d.comoment,
            min: d.min,
            max: d.max,
        })
    }
}

impl MomentAccumulator {
    /// An empty accumulator for rows of `dim` variables.
    ///
    /// # Errors
    /// [`Error::Empty`] if `dim` is 0.
    pub fn new(dim: usize) -> Result<Self> {
        if dim == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        Ok(Self::empty(dim))
    }

    pub(crate) fn empty(dim: usize) -> Self {
        MomentAccumulator {
            dim,
            count: 0,
            weight_sum: 0.0,
            weight_sq_sum: 0.0,
            mean: vec![0.0; dim],
            comoment: vec![0.0; dim * dim],
            min: vec![f64::INFINITY; dim],
            max: vec![f64::NEG_INFINITY; dim],
        }
    }

    /// An accumulator holding every row of `rows` (parallel for large inputs).
    ///
    /// # Errors
    /// [`Error::Empty`] for zero columns; [`Error::NonFinite`] naming the
    /// first non-finite value.
    pub fn from_rows(rows: ArrayView2<'_, f64>) -> Result<Self> {
        if rows.ncols() == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        batch::accumulate(rows, None)
    }

    /// An accumulator holding every row of `rows` with the given weights.
    ///
    /// # Errors
    /// As [`from_rows`](Self::from_rows); [`Error::ShapeMismatch`] if there is
    /// not one weight per row; [`Error::InvalidParameter`] for a negative or
    /// non-finite weight.
    pub fn from_weighted_rows(rows: ArrayView2<'_, f64>, weights: &[f64]) -> Result<Self> {
        if rows.ncols() == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        check_weights(weights, rows.nrows())?;
        batch::accumulate(rows, Some(weights))
    }

    /// Number of variables.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// Number of rows added.
    pub fn count(&self) -> u64 {
        self.count
    }

    /// Sum of the weights (the row count when no weights were given).
    pub fn weight_sum(&self) -> f64 {
        self.weight_sum
    }

    /// Kish's effective sample size `W² / Σ w²` (the row count for unit
    /// weights).
    pub fn effective_sample_size(&self) -> f64 {
        if self.weight_sq_sum > 0.0 {
            self.weight_sum * self.weight_sum / self.weight_sq_sum
        } else {
            0.0
        }
    }

    /// The weighted mean (zeros while empty).
    pub fn mean(&self) -> &[f64] {
        &self.mean
    }

    /// Smallest value seen in each column (`+∞` while empty).
    pub fn column_min(&self) -> &[f64] {
        &self.min
    }

    /// Largest value seen in each column (`−∞` while empty).
    pub fn column_max(&self) -> &[f64] {
        &self.max
    }

    /// Adds one row with weight 1.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a row of the wrong length;
    /// [`Error::NonFinite`] (row index = rows added so far) for a NaN or
    /// infinite value. The accumulator is unchanged on error.
    pub fn push(&mut self, row: &[f64]) -> Result<()> {
        self.push_weighted(row, 1.0)
    }

    /// Adds one row with weight `weight`.
    ///
    /// # Errors
    /// As [`push`](Self::push); [`Error::InvalidParameter`] for a negative or
    /// non-finite weight.
    pub fn push_weighted(&mut self, row: &[f64], weight: f64) -> Result<()> {
        check_row(row, self.dim, self.count as usize)?;
        check_weights(&[weight], 1)?;
        self.push_unchecked(row, weight);
        Ok(())
    }

    pub(crate) fn push_unchecked(&mut self, row: &[f64], weight: f64) {
        let p = self.dim;
        self.count = self.count.saturating_add(1);
        for ((lo, hi), &v) in self.min.iter_mut().zip(self.max.iter_mut()).zip(row) {
            *lo = lo.min(v);
            *hi = hi.max(v);
        }
        if weight == 0.0 {
            return;
        }
        let w_old = self.weight_sum;
        let w_new = w_old + weight;
        self.weight_sum = w_new;
        self.weight_sq_sum += weight * weight;
        let f = weight / w_new;
        let g = weight * w_old / w_new;
        let mut delta = [0.0f64; 64];
        let mut heap;
        let delta: &mut [f64] = if p <= 64 {
            &mut delta[..p]
        } else {
            heap = vec![0.0; p];
            &mut heap
        };
        for j in 0..p {
            delta[j] = row[j] - self.mean[j];
            self.mean[j] += f * delta[j];
        }
        for i in 0..p {
            let gi = g * delta[i];
            let r = &mut self.comoment[i * p..(i + 1) * p];
            for (m, &d) in r.iter_mut().zip(delta.iter()) {
                *m += gi * d;
            }
        }
    }

    /// Adds a batch of rows (parallel for large batches).
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for the wrong number of columns;
    /// [`Error::NonFinite`] naming the first non-finite value (row index
    /// within `rows`). The accumulator is unchanged on error.
    pub fn push_rows(&mut self, rows: ArrayView2<'_, f64>) -> Result<()> {
        crate::data::check_columns(rows, self.dim)?;
        if rows.nrows() == 0 {
            return Ok(());
        }
        let other = batch::accumulate(rows, None)?;
        self.merge(&other)
    }

    /// Adds a batch of rows with weights.
    ///
    /// # Errors
    /// As [`push_rows`](Self::push_rows) and
    /// [`from_weighted_rows`](Self::from_weighted_rows).
    pub fn push_weighted_rows(&mut self, rows: ArrayView2<'_, f64>, weights: &[f64]) -> Result<()> {
        crate::data::check_columns(rows, self.dim)?;
        check_weights(weights, rows.nrows())?;
        if rows.nrows() == 0 {
            return Ok(());
        }
        let other = batch::accumulate(rows, Some(weights))?;
        self.merge(&other)
    }

    /// Merges the rows summarized by `other` into `self`.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] if the dimensions differ;
    /// [`Error::InvalidParameter`] if the merged row count does not fit in
    /// 64 bits (only possible with hand-edited serialized accumulators).
    pub fn merge(&mut self, other: &MomentAccumulator) -> Result<()> {
        if other.dim != self.dim {
            return Err(Error::ShapeMismatch {
                what: "accumulator dimension",
                expected: self.dim,
                found: other.dim,
            });
        }
        if self.count.checked_add(other.count).is_none() {
            return Err(Error::invalid(
                "accumulator count",
                format!(
                    "{} + {} rows does not fit in 64 bits; check where these accumulators came from",
                    self.count, other.count
                ),
            ));
        }
        self.merge_unchecked(other);
        Ok(())
    }

    pub(crate) fn merge_unchecked(&mut self, other: &MomentAccumulator) {
        let p = self.dim;
        // Row counts from this process cannot overflow (each row was read);
        // `merge` checks counts from elsewhere first.
        self.count = self.count.saturating_add(other.count);
        for j in 0..p {
            self.min[j] = self.min[j].min(other.min[j]);
            self.max[j] = self.max[j].max(other.max[j]);
        }
        if other.weight_sum == 0.0 {
            return;
        }
        if self.weight_sum == 0.0 {
            self.weight_sum = other.weight_sum;
            self.weight_sq_sum = other.weight_sq_sum;
            self.mean.copy_from_slice(&other.mean);
            self.comoment.copy_from_slice(&other.comoment);
            return;
        }
        let wa = self.weight_sum;
        let wb = other.weight_sum;
        let w = wa + wb;
        let f = wb / w;
        let g = wa * wb / w;
        let delta: Vec<f64> = (0..p).map(|j| other.mean[j] - self.mean[j]).collect();
        for j in 0..p {
            self.mean[j] += f * delta[j];
        }
        for i in 0..p {
            for j in 0..p {
                self.comoment[i * p + j] += other.comoment[i * p + j] + g * delta[i] * delta[j];
            }
        }
        self.weight_sum = w;
        self.weight_sq_sum += other.weight_sq_sum;
    }

    /// The denominator that `divisor` implies for the current weights.
    fn denominator(&self, divisor: Divisor) -> f64 {
        match divisor {
            Divisor::MaximumLikelihood => self.weight_sum,
            Divisor::Unbiased => self.weight_sum - self.weight_sq_sum / self.weight_sum,
        }
    }

    /// The mean as an array.
    ///
    /// # Errors
    /// [`Error::Empty`] when no row (or only zero weights) was added.
    pub fn mean_array(&self) -> Result<Array1<f64>> {
        if self.weight_sum <= 0.0 {
            return Err(Error::Empty { what: "rows" });
        }
        if self.mean.iter().any(|v| !v.is_finite()) {
            return Err(Error::Overflow { row: 0 });
        }
        Ok(Array1::from(self.mean.clone()))
    }

    /// The covariance matrix `M / d` with the denominator `d` of `divisor`
    /// (see [`Divisor`]).
    ///
    /// # Errors
    /// [`Error::Empty`] when empty; [`Error::TooFewRows`] when the
    /// denominator is not positive (one row with [`Divisor::Unbiased`]).
    pub fn covariance(&self, divisor: Divisor) -> Result<Array2<f64>> {
        if self.weight_sum <= 0.0 {
            return Err(Error::Empty { what: "rows" });
        }
        let d = self.denominator(divisor);
        if !(d > 0.0) {
            return Err(Error::TooFewRows {
                rows: self.count as usize,
                needed: 2,
                columns: self.dim,
            });
        }
        let p = self.dim;
        let cov = Array2::from_shape_fn((p, p), |(i, j)| self.comoment[i * p + j] / d);
        if cov.iter().any(|v| !v.is_finite()) || self.mean.iter().any(|v| !v.is_finite()) {
            return Err(Error::Overflow { row: 0 });
        }
        Ok(cov)
    }

    /// The covariance as a validated [`Scatter`]; a constant column is
    /// reported as [`Error::ZeroVariance`] (detected exactly, from the
    /// column's range) and a dependent column as [`Error::Collinear`].
    ///
    /// # Errors
    /// As [`covariance`](Self::covariance); [`Error::TooFewRows`] unless more
    /// rows than variables were added; the errors of [`Scatter::new`].
    pub fn scatter(&self, divisor: Divisor) -> Result<Scatter> {
        let p = self.dim;
        if self.count as usize <= p {
            return Err(Error::TooFewRows {
                rows: self.count as usize,
                needed: p + 1,
                columns: p,
            });
        }
        let cov = self.covariance(divisor)?;
        for j in 0..p {
            if self.min[j] == self.max[j] {
                return Err(Error::ZeroVariance { column: j });
            }
        }
        Scatter::new(cov.view())
    }
}

pub(crate) fn check_weights(weights: &[f64], rows: usize) -> Result<()> {
    if weights.len() != rows {
        return Err(Error::ShapeMismatch {
            what: "number of weights (one per row)",
            expected: rows,
            found: weights.len(),
        });
    }
    if let Some(row) = weights.iter().position(|w| !(w.is_finite() && *w >= 0.0)) {
        return Err(Error::invalid(
            "weight",
            format!(
                "row {row} has weight {}; weights must be finite and non-negative",
                weights[row]
            ),
        ));
    }
    Ok(())
}
