//! The Henze–Zirkler test of multivariate normality.
//!
//! With `z_i` the rows whitened by the maximum-likelihood (divisor `n`) mean
//! and covariance, `D_ij = ‖z_i − z_j‖²` and `D_i = ‖z_i‖²`, Henze and
//! Zirkler (1990) measure the weighted `L²` distance between the empirical
//! characteristic function of the `z_i` and the standard normal one:
//!
//! ```text
//! T_β = n⁻¹ Σ_{i,j} exp(−β²/2 · D_ij)
//!       − 2 (1+β²)^(−p/2) Σ_i exp(−β²/(2(1+β²)) · D_i)
//!       + n (1+2β²)^(−p/2)
//! ```
//!
//! with the smoothing parameter `β = 2^(−1/2) · (n(2p+1)/4)^(1/(p+4))`
//! (their recommended choice). `T_β ≥ 0`; large values speak against
//! normality. The p-value refers `T_β` to a lognormal distribution with the
//! statistic's null mean
//! `μ = 1 − a^(−p/2) (1 + pβ²/a + p(p+2)β⁴/(2a²))` and variance
//! `σ² = 2(1+4β²)^(−p/2) + 2a^(−p)(1 + 2pβ⁴/a² + 3p(p+2)β⁸/(4a⁴))
//!  − 4w^(−p/2)(1 + 3pβ⁴/(2w) + p(p+2)β⁸/(2w²))`,
//! where `a = 1 + 2β²` and `w = (1+β²)(1+3β²)`.
//!
//! The double sum is formed pair by pair in cache tiles and in parallel,
//! without an `n × n` matrix: memory is `O(n·p)`, time `O(n²·p)`.
//!
//! # Reference
//! N. Henze and B. Zirkler (1990). A class of invariant consistent tests
//! for multivariate normality. *Communications in Statistics – Theory and
//! Methods* 19, 3595–3617.

use super::blocks::fit_ml;
use super::pairwise::{gaussian_pair_sum, TransposedRows};
use crate::distributions::normal;
use crate::error::{Error, Result};
use crate::whitening::WhiteningKind;
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// Allowed range of the smoothing parameter β: outside it the null mean
/// and variance lose their precision to cancellation (below) or the
/// statistic carries no information (above). The recommended β is between
/// about 0.7 and 2 for any practical `n` and `p`.
const SMOOTHING_RANGE: (f64, f64) = (0.1, 100.0);

/// The Henze–Zirkler statistic and its lognormal p-value; see the
/// [module documentation](self).
///
/// # Example
/// ```
/// use mvdist::normality::HenzeZirkler;
/// use ndarray::array;
///
/// let rows = array![
///     [5.1, 3.5, 1.4], [4.9, 3.0, 1.4], [4.7, 3.2, 1.3], [4.6, 3.1, 1.5],
///     [5.0, 3.6, 1.4], [5.4, 3.9, 1.7], [4.6, 3.4, 1.4], [5.0, 3.4, 1.5],
///     [4.4, 2.9, 1.4], [4.9, 3.1, 1.5], [5.4, 3.7, 1.5], [4.8, 3.4, 1.6],
/// ];
/// let hz = HenzeZirkler::compute(rows.view())?;
/// assert!(hz.statistic() >= 0.0);
/// assert!((0.0..=1.0).contains(&hz.p_value()));
/// // β = 2^(−1/2) (n(2p+1)/4)^(1/(p+4)) with n = 12, p = 3.
/// assert!((hz.smoothing() - (21.0f64).powf(1.0 / 7.0) / 2f64.sqrt()).abs() < 1e-15);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct HenzeZirkler {
    rows: usize,
    dim: usize,
    smoothing: f64,
    statistic: f64,
}

impl HenzeZirkler {
    /// The recommended smoothing `β = 2^(−1/2) · (n(2p+1)/4)^(1/(p+4))`.
    pub fn default_smoothing(rows: usize, dim: usize) -> f64 {
        let (n, p) = (rows as f64, dim as f64);
        (n * (2.0 * p + 1.0) / 4.0).powf(1.0 / (p + 4.0)) / std::f64::consts::SQRT_2
    }

    /// The test with the recommended smoothing.
    ///
    /// # Errors
    /// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
    /// [`Error::TooFewRows`] unless `n > p`; [`Error::ZeroVariance`] or
    /// [`Error::Collinear`] naming the column.
    pub fn compute(rows: ArrayView2<'_, f64>) -> Result<Self> {
        let (n, p) = rows.dim();
        Self::compute_with_smoothing(rows, Self::default_smoothing(n, p))
    }

    /// The test with a chosen smoothing parameter `β` (larger `β` weights
    /// the comparison toward fine detail, smaller toward the centre).
    ///
    /// # Errors
    /// As [`compute`](Self::compute); [`Error::InvalidParameter`] unless
    /// `0.1 ≤ β ≤ 100`.
    pub fn compute_with_smoothing(rows: ArrayView2<'_, f64>, smoothing: f64) -> Result<Self> {
        if !(smoothing >= SMOOTHING_RANGE.0 && smoothing <= SMOOTHING_RANGE.1) {
            return Err(Error::invalid(
                "smoothing",
                format!("β = {smoothing} is outside [0.1, 100]"),
            ));
        }
        let (n, p) = rows.dim();
        let model = fit_ml(rows)?;
        let z = model.whitener(WhiteningKind::Cholesky)?.whiten(rows)?;
        let flat: Vec<f64> = z.iter().copied().collect();
        drop(z);
        let b2 = smoothing * smoothing;
        let single: f64 = flat
            .chunks_exact(p)
            .map(|r| {
                let d: f64 = r.iter().map(|v| v * v).sum();
                (-b2 / (2.0 * (1.0 + b2)) * d).exp()
            })
            .sum();
        let pairs = gaussian_pair_sum(&TransposedRows::new(&flat, n, p), 0.5 * b2);
        let (nf, pf) = (n as f64, p as f64);
        let double = nf + 2.0 * pairs;
        let statistic = double / nf - 2.0 * (1.0 + b2).powf(-pf / 2.0) * single
            + nf * (1.0 + 2.0 * b2).powf(-pf / 2.0);
        Ok(HenzeZirkler {
            rows: n,
            dim: p,
            smoothing,
            statistic,
        })
    }

    /// Number of rows `n`.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// The smoothing parameter `β` used.
    pub fn smoothing(&self) -> f64 {
        self.smoothing
    }

    /// The statistic `T_β`.
    pub fn statistic(&self) -> f64 {
        self.statistic
    }

    /// Null mean `μ` of `T_β` (see the module documentation).
    pub fn null_mean(&self) -> f64 {
        let p = self.dim as f64;
        let b2 = self.smoothing * self.smoothing;
        let a = 1.0 + 2.0 * b2;
        1.0 - a.powf(-p / 2.0) * (1.0 + p * b2 / a + p * (p + 2.0) * b2 * b2 / (2.0 * a * a))
    }

    /// Null variance `σ²` of `T_β` (see the module documentation).
    pub fn null_variance(&self) -> f64 {
        let p = self.dim as f64;
        let b2 = self.smoothing * self.smoothing;
        let b4 = b2 * b2;
        let b8 = b4 * b4;
        let a = 1.0 + 2.0 * b2;
        let w = (1.0 + b2) * (1.0 + 3.0 * b2);
        2.0 * (1.0 + 4.0 * b2).powf(-p / 2.0)
            + 2.0
                * a.powf(-p)
                * (1.0 + 2.0 * p * b4 / (a * a) + 3.0 * p * (p + 2.0) * b8 / (4.0 * a.powi(4)))
            - 4.0
                * w.powf(-p / 2.0)
                * (1.0 + 3.0 * p * b4 / (2.0 * w) + p * (p + 2.0) * b8 / (2.0 * w * w))
    }

    /// Upper tail of `T_β` under the lognormal law with the null mean and
    /// variance: `Q((ln T − m)/s)` with `s² = ln(1 + σ²/μ²)` and
    /// `m = ln μ − s²/2`. A statistic of 0 has p-value 1.
    pub fn p_value(&self) -> f64 {
        if !(self.statistic > 0.0) {
            return 1.0;
        }
        let (m, s) = self.lognormal_parameters();
        normal::upper_tail((self.statistic.ln() - m) / s)
    }

    /// `(m, s)`: the mean and standard deviation of `ln T_β` under the
    /// lognormal law with the null mean and variance.
    fn lognormal_parameters(&self) -> (f64, f64) {
        let mu = self.null_mean();
        let s2 = (self.null_variance() / (mu * mu)).ln_1p();
        (mu.ln() - 0.5 * s2, s2.sqrt())
    }

    /// The lognormal law the statistic is referred to
    /// ([`p_value`](Self::p_value) is its upper tail).
    ///
    /// # Errors
    /// [`crate::Error::InvalidParameter`] if the null moments give no
    /// proper lognormal law (not expected for a computed test).
    pub fn reference(&self) -> Result<crate::calibration::Reference> {
        let (m, s) = self.lognormal_parameters();
        crate::calibration::Reference::lognormal(m, s)
    }
}
