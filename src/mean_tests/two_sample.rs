//! Hotelling's two-sample T² test with a pooled scatter.

use super::comparison::{ComparisonParts, MeanComparison, MeanTestKind};
use super::{same_columns, sample_moments};
use crate::error::Result;
use crate::moments::{Divisor, GroupMoments};
use ndarray::ArrayView2;

/// Tests whether two independent samples have equal means, assuming a
/// common scatter (Hotelling 1931).
///
/// With `n₁`, `n₂` rows, `d = x̄₁ − x̄₂` and the pooled unbiased covariance
/// `S = ((n₁−1)S₁ + (n₂−1)S₂) / (n₁+n₂−2)`:
///
/// ```text
/// T² = n₁n₂/(n₁+n₂) · dᵀ S⁻¹ d,   (n₁+n₂−p−1) / (p(n₁+n₂−2)) · T² ~ F(p, n₁+n₂−p−1).
/// ```
///
/// Simultaneous intervals for `μ₁ − μ₂` use `c = p(n₁+n₂−2)/(n₁+n₂−p−1)`
/// and standard errors `√((1/n₁ + 1/n₂) s_jj)`; Bonferroni intervals use
/// Student's t with `n₁+n₂−2` degrees of freedom. When the scatters may
/// differ (check with [`scatter_equality`](super::scatter_equality)), use
/// [`two_sample_unequal_scatter`](super::two_sample_unequal_scatter).
///
/// # Errors
/// [`Error::ShapeMismatch`](crate::Error::ShapeMismatch) if the samples have
/// different columns; [`Error::InGroup`](crate::Error::InGroup) wrapping
/// [`Error::Empty`](crate::Error::Empty) or
/// [`Error::NonFinite`](crate::Error::NonFinite) for the sample concerned
/// (group 0 or 1); [`Error::TooFewRows`](crate::Error::TooFewRows) unless
/// `n₁ + n₂ ≥ p + 2`; [`Error::ZeroVariance`](crate::Error::ZeroVariance)
/// or [`Error::Collinear`](crate::Error::Collinear) when the pooled scatter
/// is singular.
///
/// # Example
/// ```
/// use mvdist::mean_tests::two_sample;
/// use ndarray::array;
///
/// let a = array![[1.0, 2.0], [1.5, 2.4], [0.8, 1.9], [1.2, 2.6], [1.1, 2.1]];
/// let b = array![[1.1, 2.2], [1.4, 2.0], [0.9, 2.5], [1.3, 2.3], [1.0, 1.8]];
/// let test = two_sample(a.view(), b.view())?;
/// assert_eq!(test.denominator_dof(), 7.0);
/// assert!(test.p_value() > 0.5);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn two_sample(
    first: ArrayView2<'_, f64>,
    second: ArrayView2<'_, f64>,
) -> Result<MeanComparison> {
    same_columns(first, second)?;
    let a = sample_moments(first, Some(0))?;
    let b = sample_moments(second, Some(1))?;
    let (n1, n2, p) = (first.nrows(), second.nrows(), first.ncols());
    let d: Vec<f64> = a.mean().iter().zip(b.mean()).map(|(x, y)| x - y).collect();
    let scatter = GroupMoments::from_accumulators(vec![0usize, 1], vec![a, b])
        .pooled_scatter(Divisor::Unbiased)?;
    let (n1f, n2f, pf) = (n1 as f64, n2 as f64, p as f64);
    let total = n1f + n2f;
    let t_squared = n1f * n2f / total * scatter.squared_norm(&d)?;
    let factor = 1.0 / n1f + 1.0 / n2f;
    MeanComparison::from_parts(ComparisonParts {
        kind: MeanTestKind::TwoSamplePooled,
        estimate: d,
        hypothesized: vec![0.0; p],
        standard_errors: scatter
            .variances()
            .iter()
            .map(|v| (factor * v).sqrt())
            .collect(),
        sample_sizes: vec![n1, n2],
        t_squared,
        t_squared_per_f: pf * (total - 2.0) / (total - pf - 1.0),
        numerator_dof: pf,
        denominator_dof: total - pf - 1.0,
        per_variable_dof: vec![total - 2.0; p],
    })
}
