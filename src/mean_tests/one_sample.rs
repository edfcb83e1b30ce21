//! Hotelling's one-sample T² test of a mean vector against a target.

use super::comparison::{ComparisonParts, MeanComparison, MeanTestKind};
use super::sample_moments;
use crate::data::check_row_finite;
use crate::error::{Error, Result};
use crate::moments::Divisor;
use ndarray::ArrayView2;

/// Tests whether the mean of `rows` equals `target` (Hotelling 1931).
///
/// With `n` rows, `p` variables, mean `x̄` and unbiased covariance `S`:
///
/// ```text
/// T² = n (x̄ − μ₀)ᵀ S⁻¹ (x̄ − μ₀),   (n − p) / (p (n − 1)) · T² ~ F(p, n − p)
/// ```
///
/// under multivariate normality when the mean is `μ₀`. The quadratic form
/// is a Cholesky solve. Simultaneous intervals use `c = p(n−1)/(n−p)`,
/// Bonferroni intervals Student's t with `n − 1` degrees of freedom.
///
/// # Errors
/// [`Error::Empty`]; [`Error::ShapeMismatch`] if `target` does not have one
/// value per column; [`Error::NonFinite`] naming the row and column (or row
/// 0 for the target); [`Error::TooFewRows`] unless `n ≥ p + 1`;
/// [`Error::ZeroVariance`] or [`Error::Collinear`] naming the column when
/// the covariance is singular.
///
/// # Example
/// ```
/// use mvdist::mean_tests::one_sample;
/// use ndarray::array;
///
/// let rows = array![[5.1, 3.5], [4.9, 3.0], [4.7, 3.2], [4.6, 3.1], [5.0, 3.6], [5.4, 3.9]];
/// let test = one_sample(rows.view(), &[6.0, 3.0])?;
/// assert!(test.p_value() < 0.001);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn one_sample(rows: ArrayView2<'_, f64>, target: &[f64]) -> Result<MeanComparison> {
    one_sample_of_kind(rows, target, MeanTestKind::OneSample)
}

pub(crate) fn one_sample_of_kind(
    rows: ArrayView2<'_, f64>,
    target: &[f64],
    kind: MeanTestKind,
) -> Result<MeanComparison> {
    let acc = sample_moments(rows, None)?;
    let (n, p) = rows.dim();
    if target.len() != p {
        return Err(Error::ShapeMismatch {
            what: "target length (one value per column)",
            expected: p,
            found: target.len(),
        });
    }
    check_row_finite(target, 0)?;
    let scatter = acc.scatter(Divisor::Unbiased)?;
    let nf = n as f64;
    let pf = p as f64;
    let d: Vec<f64> = acc.mean().iter().zip(target).map(|(m, t)| m - t).collect();
    let t_squared = nf * scatter.squared_norm(&d)?;
    MeanComparison::from_parts(ComparisonParts {
        kind,
        estimate: acc.mean().to_vec(),
        hypothesized: target.to_vec(),
        standard_errors: scatter
            .variances()
            .iter()
            .map(|v| (v / nf).sqrt())
            .collect(),
        sample_sizes: vec![n],
        t_squared,
        t_squared_per_f: pf * (nf - 1.0) / (nf - pf),
        numerator_dof: pf,
        denominator_dof: nf - pf,
        per_variable_dof: vec![nf - 1.0; p],
    })
}
