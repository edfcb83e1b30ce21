//! Comparing mean vectors: Hotelling's T² tests and Box's M.
//!
//! A T² test asks whether a mean vector equals a target (one sample), or
//! whether two mean vectors are equal (two samples, paired or independent),
//! using every variable at once and their correlations. Testing each
//! variable on its own either loses power (after a multiplicity correction)
//! or inflates the false-positive rate (without one); T² does neither.
//!
//! | test | function | statistic | reference |
//! |---|---|---|---|
//! | one sample vs target `μ₀` | [`one_sample`] | `T² = n (x̄ − μ₀)ᵀ S⁻¹ (x̄ − μ₀)` | `(n−p)/(p(n−1))·T² ~ F(p, n−p)` |
//! | paired samples | [`paired`] | one-sample T² of the differences vs 0 | as above |
//! | two samples, equal scatter | [`two_sample`] | `T² = n₁n₂/(n₁+n₂) · dᵀ S_pooled⁻¹ d` | `(n₁+n₂−p−1)/(p(n₁+n₂−2))·T² ~ F(p, n₁+n₂−p−1)` |
//! | two samples, unequal scatter | [`two_sample_unequal_scatter`] | `T² = dᵀ (S₁/n₁ + S₂/n₂)⁻¹ d` | `(ν−p+1)/(pν)·T² ≈ F(p, ν−p+1)` |
//!
//! (`d = x̄₁ − x̄₂`, `S` unbiased covariances.) The first three are exact
//! under multivariate normality (Hotelling 1931). The last is the modified
//! Nel–Van der Merwe test of Krishnamoorthy and Yu (2004), an approximation
//! with an estimated denominator degrees of freedom `ν`; see
//! [`two_sample_unequal_scatter`] for the formula.
//!
//! Every test returns a [`MeanComparison`]: T², the exact F transform, its
//! degrees of freedom, the p-value, and per-variable confidence intervals
//! ([`MeanComparison::intervals`]) of two kinds: simultaneous T² intervals
//! (projections of the confidence ellipsoid, valid together for every
//! linear combination) and Bonferroni intervals (narrower when only the `p`
//! variables are of interest).
//!
//! [`scatter_equality`] computes Box's M test of equal scatter matrices
//! across groups (Box 1949), with its χ² and F approximations, and says
//! whether a linear (shared scatter) or quadratic (one scatter per group)
//! classification rule fits the data better.
//!
//! Every quadratic form goes through the Cholesky factor of a validated
//! [`Scatter`](crate::Scatter); no covariance matrix is inverted.
//!
//! **Caution.** The p-values assume independent rows from multivariate
//! normal populations (for [`two_sample`], with a common scatter). A small
//! p-value is evidence of a difference in means, not proof that the
//! difference matters in practice; read the intervals for its size, and let
//! qualified people decide what follows.
//!
//! # Example
//! ```
//! use mvdist::mean_tests;
//! use ndarray::array;
//!
//! let a = array![[5.1, 3.5], [4.9, 3.0], [4.7, 3.2], [4.6, 3.1], [5.0, 3.6], [5.4, 3.9]];
//! let b = array![[7.0, 3.2], [6.4, 3.2], [6.9, 3.1], [5.5, 2.3], [6.5, 2.8], [5.7, 2.8]];
//! let test = mean_tests::two_sample(a.view(), b.view())?;
//! assert!(test.p_value() < 0.01);
//! for iv in test.intervals(0.05)? {
//!     println!("variable {}: {:.2} in [{:.2}, {:.2}]", iv.variable, iv.estimate,
//!              iv.simultaneous.lower, iv.simultaneous.upper);
//! }
//! # Ok::<(), mvdist::Error>(())
//! ```
//!
//! # References
//! - H. Hotelling (1931). The generalization of Student's ratio. *Annals of
//!   Mathematical Statistics* 2, 360–378.
//! - K. Krishnamoorthy and J. Yu (2004). Modified Nel and Van der Merwe test
//!   for the multivariate Behrens–Fisher problem. *Statistics & Probability
//!   Letters* 66, 161–169.
//! - G. E. P. Box (1949). A general distribution theory for a class of
//!   likelihood criteria. *Biometrika* 36, 317–346.
//! - R. A. Johnson and D. W. Wichern (2007). *Applied Multivariate
//!   Statistical Analysis*, 6th ed., Pearson, ch. 5–6 (simultaneous and
//!   Bonferroni intervals).

mod box_m;
mod comparison;
mod one_sample;
mod paired;
mod two_sample;
mod unequal_scatter;

pub use box_m::{scatter_equality, ScatterEquality};
pub use comparison::{Interval, MeanComparison, MeanInterval, MeanTestKind};
pub use one_sample::one_sample;
pub use paired::paired;
pub use two_sample::two_sample;
pub use unequal_scatter::two_sample_unequal_scatter;

use crate::error::{Error, Result};
use crate::moments::MomentAccumulator;
use ndarray::ArrayView2;

/// Moments of one sample, with its errors attributed to `group` when the
/// test takes several samples.
pub(crate) fn sample_moments(
    rows: ArrayView2<'_, f64>,
    group: Option<usize>,
) -> Result<MomentAccumulator> {
    let attribute = |e: Error| match group {
        Some(g) => Error::in_group(g)(e),
        None => e,
    };
    if rows.ncols() == 0 {
        return Err(attribute(Error::Empty { what: "columns" }));
    }
    if rows.nrows() == 0 {
        return Err(attribute(Error::Empty { what: "rows" }));
    }
    MomentAccumulator::from_rows(rows).map_err(attribute)
}

/// Checks that two samples have the same variables.
pub(crate) fn same_columns(a: ArrayView2<'_, f64>, b: ArrayView2<'_, f64>) -> Result<()> {
    if a.ncols() != b.ncols() {
        return Err(Error::ShapeMismatch {
            what: "number of columns of the second sample (the first sample's)",
            expected: a.ncols(),
            found: b.ncols(),
        });
    }
    Ok(())
}
