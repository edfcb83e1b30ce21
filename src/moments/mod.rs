//! Location and scatter estimation: means and covariance matrices.
//!
//! * [`mean_and_covariance`] and [`weighted_mean_and_covariance`] for a
//!   batch of rows, computed in parallel row blocks on the caller's rayon
//!   pool (sequentially below 32 768 values, where threads cost more than
//!   they save; wrap the call in `ThreadPool::install` to bound the
//!   threads).
//! * [`MomentAccumulator`] for rows that arrive one at a time or in pieces
//!   on different threads or machines: it merges exactly and serializes.
//! * [`ExponentialMoments`] for drifting streams, with a forgetting factor.
//! * [`GroupMoments`] for labelled rows and the pooled within-group
//!   covariance.
//!
//! No function here forms a raw sum of squares: each row block is centred
//! on its own mean (two passes over data that sits in cache) and blocks are
//! combined by the pairwise update of Chan, Golub and LeVeque (1979), so the
//! results keep their precision when means are large relative to spreads.

mod accumulator;
mod batch;
mod exponential;
mod pooled;

pub use accumulator::MomentAccumulator;
pub use exponential::ExponentialMoments;
pub use pooled::GroupMoments;

use crate::error::{Error, Result};
use ndarray::{Array1, Array2, ArrayView2};
use serde::{Deserialize, Serialize};

/// The denominator of a covariance estimate.
///
/// For `n` unweighted rows the co-moment matrix `M = Σ (x_i − x̄)(x_i − x̄)ᵀ`
/// is divided by `n − 1` ([`Unbiased`](Divisor::Unbiased)) or `n`
/// ([`MaximumLikelihood`](Divisor::MaximumLikelihood)). With weights `w_i`
/// (read as reliability weights), the unbiased denominator is
/// `W − Σw²/W` with `W = Σ w_i`, and the maximum-likelihood one is `W`.
///
/// The F and Beta laws of [`crate::calibration`] are stated for the
/// unbiased divisor; a model fitted with the other one has its distances
/// rescaled by its reference ([`crate::Reference::with_divisor`]).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Divisor {
    /// `n − 1` (or `W − Σw²/W` with weights): the unbiased estimate.
    #[default]
    Unbiased,
    /// `n` (or `W`): the maximum-likelihood estimate under normality.
    MaximumLikelihood,
}

/// Mean vector and covariance matrix of the rows of `rows`.
///
/// # Errors
/// [`Error::Empty`] for no rows or columns; [`Error::NonFinite`] naming the
/// first NaN or infinite value; [`Error::TooFewRows`] for a single row with
/// [`Divisor::Unbiased`].
///
/// # Example
/// ```
/// use mvdist::moments::{mean_and_covariance, Divisor};
/// use ndarray::array;
///
/// let rows = array![[1.0, 2.0], [3.0, 6.0], [5.0, 7.0]];
/// let (mean, cov) = mean_and_covariance(rows.view(), Divisor::Unbiased)?;
/// assert_eq!(mean.to_vec(), vec![3.0, 5.0]);
/// assert!((cov[(0, 1)] - 5.0).abs() < 1e-14);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn mean_and_covariance(
    rows: ArrayView2<'_, f64>,
    divisor: Divisor,
) -> Result<(Array1<f64>, Array2<f64>)> {
    if rows.nrows() == 0 {
        return Err(Error::Empty { what: "rows" });
    }
    let acc = MomentAccumulator::from_rows(rows)?;
    Ok((acc.mean_array()?, acc.covariance(divisor)?))
}

/// Weighted mean vector and covariance matrix (see [`Divisor`] for the
/// denominator with weights).
///
/// # Errors
/// As [`mean_and_covariance`]; [`Error::ShapeMismatch`] unless there is one
/// weight per row; [`Error::InvalidParameter`] for a negative or non-finite
/// weight; [`Error::Empty`] if all weights are zero.
pub fn weighted_mean_and_covariance(
    rows: ArrayView2<'_, f64>,
    weights: &[f64],
    divisor: Divisor,
) -> Result<(Array1<f64>, Array2<f64>)> {
    if rows.nrows() == 0 {
        return Err(Error::Empty { what: "rows" });
    }
    let acc = MomentAccumulator::from_weighted_rows(rows, weights)?;
    Ok((acc.mean_array()?, acc.covariance(divisor)?))
}
