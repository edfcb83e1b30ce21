//! Royston's H test of multivariate normality.
//!
//! Each variable `j` gets a Shapiro–Wilk p-value `Pⱼ` (Royston's 1992/1995
//! approximation, see [`super::shapiro_wilk`]), turned into a χ²(1) score
//! `Rⱼ = Φ⁻¹(Pⱼ/2)²` (under normality `Pⱼ` is uniform, so `Φ⁻¹(Pⱼ/2)` is
//! minus a half-normal variable). The scores are combined as
//!
//! ```text
//! H = e · Σⱼ Rⱼ / p  ~  χ²(e)
//! ```
//!
//! where the equivalent degrees of freedom `e = p / (1 + (p − 1) c̄)`
//! account for the correlation between the variables: `c̄` is the mean over
//! `i ≠ j` of `cᵢⱼ = |rᵢⱼ|^λ (1 − (μ/ν)(1 − |rᵢⱼ|)^μ)`, with `rᵢⱼ` the sample
//! correlations (their magnitudes: negating a variable changes no
//! Shapiro–Wilk result, so it must not change `H`), `λ = 5`, `μ = 0.715` and
//! `ν = 0.21364 + 0.015124 (ln n)² − 0.0018034 (ln n)³` (Royston 1983). For
//! one variable `e = 1` and `H = R₁`.
//!
//! Because it rests on Shapiro–Wilk, the test covers `3 ≤ n ≤ 5000` rows.
//!
//! # References
//! - J. P. Royston (1983). Some techniques for assessing multivariate
//!   normality based on the Shapiro–Wilk W. *Applied Statistics* 32,
//!   121–133.
//! - J. P. Royston (1992). Approximating the Shapiro–Wilk W-test for
//!   non-normality. *Statistics and Computing* 2, 117–119.

use super::blocks::fit_ml;
use super::shapiro_wilk::{ShapiroWilk, ShapiroWilkCoefficients};
use crate::distributions::normal;
use crate::distributions::ChiSquared;
use crate::error::{Error, Result};
use ndarray::ArrayView2;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

const LAMBDA: i32 = 5;
const MU: f64 = 0.715;

/// Royston's H statistic, its equivalent degrees of freedom and p-value,
/// and the per-variable Shapiro–Wilk results; see the
/// [module documentation](self).
///
/// # Example
/// ```
/// use mvdist::normality::RoystonH;
/// use ndarray::array;
///
/// let rows = array![
///     [5.1, 3.5, 1.4], [4.9, 3.0, 1.4], [4.7, 3.2, 1.3], [4.6, 3.1, 1.5],
///     [5.0, 3.6, 1.4], [5.4, 3.9, 1.7], [4.6, 3.4, 1.4], [5.0, 3.4, 1.5],
///     [4.4, 2.9, 1.4], [4.9, 3.1, 1.5], [5.4, 3.7, 1.5], [4.8, 3.4, 1.6],
/// ];
/// let h = RoystonH::compute(rows.view())?;
/// assert_eq!(h.per_variable().len(), 3);
/// assert!(h.equivalent_degrees_of_freedom() > 0.0);
/// assert!((0.0..=1.0).contains(&h.p_value()));
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RoystonH {
    rows: usize,
    statistic: f64,
    equivalent_dof: f64,
    mean_transformed_correlation: f64,
    per_variable: Vec<ShapiroWilk>,
}

impl RoystonH {
    /// Computes the per-variable Shapiro–Wilk tests (in parallel) and
    /// combines them.
    ///
    /// # Errors
    /// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
    /// [`Error::TooFewRows`] unless `n > p` and `n ≥ 3`;
    /// [`Error::InvalidParameter`] for more than 5000 rows (outside the
    /// Shapiro–Wilk approximation) or if the equivalent degrees of freedom
    /// are not positive (possible only for many strongly correlated
    /// variables); [`Error::ZeroVariance`] or [`Error::Collinear`] naming
    /// the column.
    pub fn compute(rows: ArrayView2<'_, f64>) -> Result<Self> {
        let (n, p) = rows.dim();
        let model = fit_ml(rows)?;
        let per_variable = shapiro_wilk_columns(rows)?;
        let correlation = model.scatter().correlation();
        let ln_n = (n as f64).ln();
        let nu = 0.21364 + 0.015124 * ln_n * ln_n - 0.0018034 * ln_n * ln_n * ln_n;
        let (cbar, e) = if p == 1 {
            (0.0, 1.0)
        } else {
            let mut sum = 0.0;
            for i in 0..p {
                for j in (0..p).filter(|&j| j != i) {
                    // Magnitudes: negating a variable changes no
                    // Shapiro–Wilk result, so it must not change H.
                    let r = correlation[(i, j)].abs().min(1.0);
                    sum += r.powi(LAMBDA) * (1.0 - MU / nu * (1.0 - r).powf(MU));
                }
            }
            let cbar = sum / (p * (p - 1)) as f64;
            (cbar, p as f64 / (1.0 + (p as f64 - 1.0) * cbar))
        };
        if !(e > 0.0 && e.is_finite()) {
            return Err(Error::invalid(
                "correlation",
                format!(
                    "Royston's equivalent degrees of freedom are {e} for these correlations \
                     (mean transformed correlation {cbar}); the test does not apply"
                ),
            ));
        }
        let score_sum: f64 = per_variable
            .iter()
            .map(|sw| {
                let z = normal::quantile(0.5 * sw.p_value().max(f64::MIN_POSITIVE));
                z * z
            })
            .sum();
        Ok(RoystonH {
            rows: n,
            statistic: e * score_sum / p as f64,
            equivalent_dof: e,
            mean_transformed_correlation: cbar,
            per_variable,
        })
    }

    /// Number of rows `n`.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// The statistic `H`.
    pub fn statistic(&self) -> f64 {
        self.statistic
    }

    /// The equivalent degrees of freedom `e` (between 1 and about `p`).
    pub fn equivalent_degrees_of_freedom(&self) -> f64 {
        self.equivalent_dof
    }

    /// `c̄`, the mean transformed correlation.
    pub fn mean_transformed_correlation(&self) -> f64 {
        self.mean_transformed_correlation
    }

    /// Upper χ²(e) tail of `H`.
    pub fn p_value(&self) -> f64 {
        ChiSquared::new(self.equivalent_dof).map_or(f64::NAN, |c| c.sf(self.statistic))
    }

    /// The Shapiro–Wilk result of each variable, in column order.
    pub fn per_variable(&self) -> &[ShapiroWilk] {
        &self.per_variable
    }
}

/// Shapiro–Wilk for every column (coefficients computed once), errors
/// naming the column.
pub(crate) fn shapiro_wilk_columns(rows: ArrayView2<'_, f64>) -> Result<Vec<ShapiroWilk>> {
    let coefficients = ShapiroWilkCoefficients::new(rows.nrows())?;
    (0..rows.ncols())
        .into_par_iter()
        .map(|j| {
            let column: Vec<f64> = rows.column(j).iter().copied().collect();
            ShapiroWilk::for_column(&coefficients, &column, j)
        })
        .collect()
}
