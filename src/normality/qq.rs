//! Chi-square Q–Q coordinates of the squared generalized distances.
//!
//! Under multivariate normality the squared distances
//! `dᵢ² = (xᵢ − x̄)ᵀ S⁻¹ (xᵢ − x̄)` of a large sample are close to χ²(p)
//! (Gnanadesikan and Kettenring 1972). Plotting the ordered `d₍ᵢ₎²` against
//! the χ²(p) quantiles at the plotting positions `(i − ½)/n` gives a
//! straight line through the origin with slope 1 when the data are normal;
//! a bend upward at the right end means heavier tails, isolated points far
//! above the line are candidate outliers. `S` is the maximum-likelihood
//! (divisor `n`) covariance, as in Mardia's kurtosis.
//!
//! Each quantile is a root search (a few microseconds): about a second
//! per 200 000 rows.
//!
//! # Reference
//! R. Gnanadesikan and J. R. Kettenring (1972). Robust estimates,
//! residuals, and outlier detection with multiresponse data. *Biometrics*
//! 28, 81–124.

use super::blocks::fit_ml;
use crate::distributions::ChiSquared;
use crate::error::Result;
use ndarray::ArrayView2;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// Points of a chi-square Q–Q plot, in increasing order.
///
/// # Example
/// ```
/// use mvdist::normality::ChiSquareQq;
/// use ndarray::array;
///
/// let rows = array![[1.0, 2.0], [2.0, 2.9], [3.0, 4.2], [4.0, 4.8], [5.0, 6.1], [2.5, 3.0]];
/// let qq = ChiSquareQq::compute(rows.view())?;
/// assert_eq!(qq.theoretical().len(), 6);
/// assert!(qq.observed().windows(2).all(|w| w[0] <= w[1]));
/// // With divisor n, the squared distances add up to n·p.
/// assert!((qq.observed().iter().sum::<f64>() - 12.0).abs() < 1e-12);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ChiSquareQq {
    theoretical: Vec<f64>,
    observed: Vec<f64>,
}

impl ChiSquareQq {
    /// The Q–Q coordinates of `rows`.
    ///
    /// # Errors
    /// [`crate::Error::Empty`]; [`crate::Error::NonFinite`];
    /// [`crate::Error::TooFewRows`] unless `n > p`;
    /// [`crate::Error::ZeroVariance`] or [`crate::Error::Collinear`].
    pub fn compute(rows: ArrayView2<'_, f64>) -> Result<Self> {
        let (n, p) = rows.dim();
        let model = fit_ml(rows)?;
        let mut observed = model.squared_distances(rows)?.to_vec();
        observed.par_sort_unstable_by(f64::total_cmp);
        let chi = ChiSquared::new(p as f64)?;
        let nf = n as f64;
        let theoretical = (0..n)
            .into_par_iter()
            .map(|i| chi.isf((nf - i as f64 - 0.5) / nf))
            .collect::<Result<Vec<f64>>>()?;
        Ok(ChiSquareQq {
            theoretical,
            observed,
        })
    }

    /// χ²(p) quantiles at `(i − ½)/n`, `i = 1 … n` (the horizontal axis).
    pub fn theoretical(&self) -> &[f64] {
        &self.theoretical
    }

    /// The ordered squared distances (the vertical axis).
    pub fn observed(&self) -> &[f64] {
        &self.observed
    }
}
