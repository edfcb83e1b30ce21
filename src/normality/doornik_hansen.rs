//! The Doornik–Hansen omnibus test of multivariate normality.
//!
//! The centred rows are decorrelated with the symmetric inverse root of
//! the correlation matrix: with `V = diag(S)^(−1/2)`, `C = V S V = H Λ Hᵀ`,
//! `yᵢ = H Λ^(−1/2) Hᵀ V (xᵢ − x̄)`. For each transformed variable the
//! sample skewness `√b₁ = m₃/m₂^(3/2)` and kurtosis `b₂ = m₄/m₂²`
//! (`m_k` the central moments with divisor `n`) are transformed to
//! approximately standard normal scores:
//!
//! * skewness by D'Agostino's (1970) transform: with
//!   `β = 3(n² + 27n − 70)(n+1)(n+3) / ((n−2)(n+5)(n+7)(n+9))`,
//!   `ω² = −1 + √(2(β − 1))`, `δ = 1/√(ln √ω²)` and
//!   `y = √b₁ √((ω² − 1)(n+1)(n+3) / (12(n−2)))`,
//!   `z₁ = δ ln(y + √(y² + 1))`;
//! * kurtosis by the gamma/Wilson–Hilferty transform of Doornik and Hansen:
//!   with `δ = (n−3)(n+1)(n²+15n−4)`,
//!   `a = (n−2)(n+5)(n+7)(n²+27n−70)/(6δ)`,
//!   `c = (n−7)(n+5)(n+7)(n²+2n−5)/(6δ)`,
//!   `k = (n+5)(n+7)(n³+37n²+11n−313)/(12δ)`, `α = a + b₁c` and
//!   `χ = 2k(b₂ − 1 − b₁)`,
//!   `z₂ = ((χ/(2α))^(1/3) − 1 + 1/(9α)) √(9α)`.
//!
//! The omnibus statistic `E = Σⱼ (z₁ⱼ² + z₂ⱼ²)` is χ² with `2p` degrees
//! of freedom under normality. The transforms are used for `n ≥ 8` (as
//! D'Agostino's skewness test; common practice).
//!
//! One parallel pass over the rows after the fit; memory `O(p²)`.
//!
//! # References
//! - J. A. Doornik and H. Hansen (2008). An omnibus test for univariate and
//!   multivariate normality. *Oxford Bulletin of Economics and Statistics*
//!   70, 927–939.
//! - R. B. D'Agostino (1970). Transformation to normality of the null
//!   distribution of g₁. *Biometrika* 57, 679–681.

use super::blocks::{fit_ml, power_sums, RowMap};
use crate::distributions::ChiSquared;
use crate::error::{Error, Result};
use crate::kernels::linalg;
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// Smallest number of rows the transforms are used for.
pub const MIN_ROWS: usize = 8;

/// The Doornik–Hansen statistic with the per-variable skewness and
/// kurtosis scores of the decorrelated variables; see the
/// [module documentation](self).
///
/// # Example
/// ```
/// use mvdist::normality::DoornikHansen;
/// use ndarray::array;
///
/// let rows = array![
///     [5.1, 3.5, 1.4], [4.9, 3.0, 1.4], [4.7, 3.2, 1.3], [4.6, 3.1, 1.5],
///     [5.0, 3.6, 1.4], [5.4, 3.9, 1.7], [4.6, 3.4, 1.4], [5.0, 3.4, 1.5],
///     [4.4, 2.9, 1.4], [4.9, 3.1, 1.5], [5.4, 3.7, 1.5], [4.8, 3.4, 1.6],
/// ];
/// let dh = DoornikHansen::compute(rows.view())?;
/// assert_eq!(dh.degrees_of_freedom(), 6.0);
/// assert!((0.0..=1.0).contains(&dh.p_value()));
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct DoornikHansen {
    rows: usize,
    skewness_scores: Vec<f64>,
    kurtosis_scores: Vec<f64>,
}

impl DoornikHansen {
    /// Computes the test.
    ///
    /// # Errors
    /// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
    /// [`Error::TooFewRows`] unless `n > p` and `n ≥ 8`;
    /// [`Error::ZeroVariance`] or [`Error::Collinear`] naming the column;
    /// [`Error::InvalidParameter`] in the unexpected case that the
    /// eigenvalue iteration does not converge.
    pub fn compute(rows: ArrayView2<'_, f64>) -> Result<Self> {
        let (n, p) = rows.dim();
        let model = fit_ml(rows)?;
        if n < MIN_ROWS {
            return Err(Error::TooFewRows {
                rows: n,
                needed: MIN_ROWS,
                columns: p,
            });
        }
        let map = decorrelating_map(model.scatter().matrix_slice(), p)?;
        let sums = power_sums(
            rows,
            &RowMap {
                location: model.location(),
                matrix: &map,
                lower: false,
            },
        );
        let nf = n as f64;
        let mut skewness_scores = Vec::with_capacity(p);
        let mut kurtosis_scores = Vec::with_capacity(p);
        for s in sums.chunks_exact(4) {
            let (m2, m3, m4) = central_moments(s, nf);
            let root_b1 = m3 / m2.powf(1.5);
            let b2 = m4 / (m2 * m2);
            skewness_scores.push(skewness_score(root_b1, nf));
            kurtosis_scores.push(kurtosis_score(root_b1 * root_b1, b2, nf));
        }
        if skewness_scores
            .iter()
            .chain(&kurtosis_scores)
            .any(|v| !v.is_finite())
        {
            return Err(Error::Overflow { row: 0 });
        }
        Ok(DoornikHansen {
            rows: n,
            skewness_scores,
            kurtosis_scores,
        })
    }

    /// Number of rows `n`.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// The omnibus statistic `E = Σ (z₁² + z₂²)`.
    pub fn statistic(&self) -> f64 {
        self.skewness_scores
            .iter()
            .chain(&self.kurtosis_scores)
            .map(|z| z * z)
            .sum()
    }

    /// Degrees of freedom `2p`.
    pub fn degrees_of_freedom(&self) -> f64 {
        2.0 * self.skewness_scores.len() as f64
    }

    /// Upper χ²(2p) tail of the statistic.
    pub fn p_value(&self) -> f64 {
        ChiSquared::new(self.degrees_of_freedom()).map_or(f64::NAN, |c| c.sf(self.statistic()))
    }

    /// The skewness scores `z₁` of the decorrelated variables.
    pub fn skewness_scores(&self) -> &[f64] {
        &self.skewness_scores
    }

    /// The kurtosis scores `z₂` of the decorrelated variables.
    pub fn kurtosis_scores(&self) -> &[f64] {
        &self.kurtosis_scores
    }
}

/// `m₂, m₃, m₄` about the mean from the power sums `Σy, Σy², Σy³, Σy⁴`.
pub(crate) fn central_moments(s: &[f64], n: f64) -> (f64, f64, f64) {
    let (e1, e2, e3, e4) = (s[0] / n, s[1] / n, s[2] / n, s[3] / n);
    let m2 = e2 - e1 * e1;
    let m3 = e3 - 3.0 * e1 * e2 + 2.0 * e1 * e1 * e1;
    let m4 = e4 - 4.0 * e1 * e3 + 6.0 * e1 * e1 * e2 - 3.0 * e1 * e1 * e1 * e1;
    (m2, m3, m4)
}

/// `C^(−1/2) V` for the scatter `S`: `V = diag(S)^(−1/2)`, `C = V S V`.
fn decorrelating_map(s: &[f64], p: usize) -> Result<Vec<f64>> {
    let v: Vec<f64> = (0..p).map(|j| 1.0 / s[j * p + j].sqrt()).collect();
    let mut c = vec![0.0; p * p];
    for i in 0..p {
        for j in 0..p {
            c[i * p + j] = if i == j {
                1.0
            } else {
                v[i] * s[i * p + j] * v[j]
            };
        }
    }
    let (values, vectors) = linalg::symmetric_eigen(&c, p)
        .ok_or_else(|| Error::invalid("correlation", "eigen-decomposition did not converge"))?;
    if let Some(k) = values.iter().position(|&l| !(l > 0.0)) {
        return Err(Error::NotPositiveDefinite { column: k });
    }
    let inv_root: Vec<f64> = values.iter().map(|l| 1.0 / l.sqrt()).collect();
    let mut map = vec![0.0; p * p];
    for i in 0..p {
        for j in 0..p {
            let mut acc = 0.0;
            for l in 0..p {
                acc += vectors[i * p + l] * inv_root[l] * vectors[j * p + l];
            }
            map[i * p + j] = acc * v[j];
        }
    }
    Ok(map)
}

/// D'Agostino's normal score of the sample skewness `√b₁`.
fn skewness_score(root_b1: f64, n: f64) -> f64 {
    let beta = 3.0 * (n * n + 27.0 * n - 70.0) * (n + 1.0) * (n + 3.0)
        / ((n - 2.0) * (n + 5.0) * (n + 7.0) * (n + 9.0));
    let omega2 = -1.0 + (2.0 * (beta - 1.0)).sqrt();
    let delta = 1.0 / (0.5 * omega2.ln()).sqrt();
    let y = root_b1 * ((omega2 - 1.0) * (n + 1.0) * (n + 3.0) / (12.0 * (n - 2.0))).sqrt();
    delta * y.asinh()
}

/// Doornik and Hansen's normal score of the sample kurtosis `b₂` given
/// `b₁ = (√b₁)²`.
fn kurtosis_score(b1: f64, b2: f64, n: f64) -> f64 {
    let d = (n - 3.0) * (n + 1.0) * (n * n + 15.0 * n - 4.0);
    let a = (n - 2.0) * (n + 5.0) * (n + 7.0) * (n * n + 27.0 * n - 70.0) / (6.0 * d);
    let c = (n - 7.0) * (n + 5.0) * (n + 7.0) * (n * n + 2.0 * n - 5.0) / (6.0 * d);
    let k = (n + 5.0) * (n + 7.0) * (n * n * n + 37.0 * n * n + 11.0 * n - 313.0) / (12.0 * d);
    let alpha = a + b1 * c;
    let chi = (b2 - 1.0 - b1) * 2.0 * k;
    ((chi / (2.0 * alpha)).cbrt() - 1.0 + 1.0 / (9.0 * alpha)) * (9.0 * alpha).sqrt()
}
