//! Reference distributions for squared distances: p-values and cutoffs.
//!
//! A squared distance alone does not say how unusual a row is; its
//! distribution under the model does. If the rows are multivariate normal,
//! three exact results cover the cases that occur in practice
//! (`n` rows fitted, `p` variables, classical mean and covariance with the
//! `n − 1` divisor):
//!
//! | situation | statistic | distribution |
//! |---|---|---|
//! | location and scatter known | `d²` | χ²(p) |
//! | the row was one of the `n` fitting rows | `n·d² / (n−1)²` | Beta(p/2, (n−p−1)/2) |
//! | the row is new, independent of the fit | `n(n−p)·d² / (p(n+1)(n−1))` | F(p, n−p) |
//!
//! The Beta result is due to Gnanadesikan and Kettenring (1972); the F
//! result is the Phase II limit of the T² chart for individual observations
//! (Tracy, Young and Mason 1992; NIST/SEMATECH e-Handbook of Statistical
//! Methods, §6.5.4.3). The χ² result is the large-sample limit of both and is
//! too liberal for small `n`: using it for new rows with `n = 30, p = 6`
//! flags far more rows than the nominal rate.
//!
//! **Caution.** Every p-value and cutoff here assumes that the reference rows
//! are a sample from one multivariate normal population and that the scored
//! rows come from it too. A flag is evidence that a row is unusual, not a
//! verdict that it is defective; the decision to release or reject belongs
//! to your local quality procedure and to qualified people.
//!
//! Tail probabilities are computed from the upper tail directly, so p-values
//! down to about 1e-300 keep their relative precision.
//!
//! # Example
//!
//! ```
//! use mvdist::calibration::Reference;
//!
//! // A model fitted on 50 rows of 3 variables, scoring a new row.
//! let reference = Reference::new_row(50, 3)?;
//! let cutoff = reference.cutoff(0.01)?;
//! assert!((reference.p_value(cutoff) - 0.01).abs() < 1e-12);
//! // Rows beyond the cutoff have p-values below 0.01.
//! assert!(reference.p_value(cutoff * 1.5) < 0.01);
//! # Ok::<(), mvdist::Error>(())
//! ```

mod adjust;
pub(crate) mod hardin_rocke;

pub(crate) use crate::distributions::check_probability;
use crate::distributions::scaled_wishart_f;
pub use crate::distributions::{BetaDistribution, ChiSquared, FDistribution};
pub use adjust::{adjusted_p_values, Adjustment};

use crate::error::{Error, Result};
use crate::moments::Divisor;
use serde::{Deserialize, Serialize};

/// Where a scored row comes from, relative to the model's fitting sample.
///
/// This choice selects the [`Reference`] distribution of its squared
/// distance; see the [module documentation](self).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum RowOrigin {
    /// The row is new: it was not used to fit the model (F reference).
    New,
    /// The row was one of the rows the model was fitted on (Beta reference).
    InSample,
    /// Treat the model's location and scatter as the true parameters
    /// (χ² reference); appropriate only when the fitting sample is very
    /// large.
    KnownParameters,
}

/// The distribution of a squared distance under multivariate normality.
///
/// # Example
///
/// ```
/// use mvdist::calibration::Reference;
///
/// let chi2 = Reference::chi_square(2)?;
/// // For two variables, P(χ² > x) = exp(-x/2).
/// assert!((chi2.p_value(6.0) - (-3.0f64).exp()).abs() < 1e-15);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Reference {
    /// `d² ~ χ²(dim)`: location and scatter known.
    ChiSquare {
        /// Number of variables `p`.
        dim: usize,
    },
    /// `n·d²/(n−1)² ~ Beta(p/2, (n−p−1)/2)`: the row was in the fitting
    /// sample. `d²` is on the scale of the `n − 1` covariance; distances
    /// from a covariance with divisor `n` are rescaled by `(n − 1)/n` first.
    InSampleBeta {
        /// Rows in the fitting sample.
        n: usize,
        /// Number of variables `p`.
        dim: usize,
        /// The divisor of the covariance the distances were measured with
        /// (missing in data written before 0.2: unbiased).
        #[serde(default)]
        divisor: Divisor,
    },
    /// `n(n−p)·d²/(p(n+1)(n−1)) ~ F(p, n−p)`: the row is new. `d²` is on
    /// the scale of the `n − 1` covariance; distances from a covariance
    /// with divisor `n` are rescaled by `(n − 1)/n` first.
    NewRowF {
        /// Rows in the fitting sample.
        n: usize,
        /// Number of variables `p`.
        dim: usize,
        /// The divisor of the covariance the distances were measured with
        /// (missing in data written before 0.2: unbiased).
        #[serde(default)]
        divisor: Divisor,
    },
    /// `(m−p+1)·d²/(p m) ~ F(p, m−p+1)` (Hardin and Rocke 2005): `d²` is
    /// measured with a raw minimum covariance determinant estimate
    /// (consistency factor applied) of subset size `h` from `n` rows, and
    /// the row is independent of it (new, or outside the MCD subset). `m` is
    /// the approximate Wishart degrees of freedom; see
    /// [`Reference::raw_mcd`].
    RawMcdF {
        /// Rows in the fitting sample.
        n: usize,
        /// Number of variables `p`.
        dim: usize,
        /// The MCD subset size `h`.
        subset_size: usize,
    },
    /// `(m−p+1)·d²/(p m) ~ F(p, m−p+1)`: `d²` is measured with a
    /// reweighted minimum covariance determinant estimate whose scatter is
    /// approximated by a scaled Wishart with `m` degrees of freedom, `m`
    /// simulated at the fit's `n`, `p` and subset size; see
    /// [`Reference::reweighted_mcd`].
    ReweightedMcdF {
        /// Number of variables `p`.
        dim: usize,
        /// The Wishart degrees of freedom `m`.
        wishart_dof: f64,
    },
}

impl Reference {
    /// χ² reference with `dim` degrees of freedom.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if `dim` is 0.
    pub fn chi_square(dim: usize) -> Result<Self> {
        if dim == 0 {
            return Err(Error::invalid(
                "dim",
                "the number of variables must be at least 1",
            ));
        }
        Ok(Reference::ChiSquare { dim })
    }

    /// Beta reference for rows that were part of a fitting sample of `n` rows.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] unless `n > dim + 1`; [`Error::InvalidParameter`]
    /// if `dim` is 0.
    pub fn in_sample(n: usize, dim: usize) -> Result<Self> {
        Self::chi_square(dim)?;
        if n < dim.saturating_add(2) {
            return Err(Error::TooFewRows {
                rows: n,
                needed: dim.saturating_add(2),
                columns: dim,
            });
        }
        Ok(Reference::InSampleBeta {
            n,
            dim,
            divisor: Divisor::Unbiased,
        })
    }

    /// F reference for new rows scored against a model fitted on `n` rows.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] unless `n > dim`; [`Error::InvalidParameter`] if
    /// `dim` is 0.
    pub fn new_row(n: usize, dim: usize) -> Result<Self> {
        Self::chi_square(dim)?;
        if n < dim.saturating_add(1) {
            return Err(Error::TooFewRows {
                rows: n,
                needed: dim.saturating_add(1),
                columns: dim,
            });
        }
        Ok(Reference::NewRowF {
            n,
            dim,
            divisor: Divisor::Unbiased,
        })
    }

    /// The same reference for squared distances measured with a covariance
    /// of the given divisor. The Beta and F laws are stated for the
    /// unbiased (`n − 1`) covariance; with divisor `n` every squared
    /// distance is `n/(n − 1)` times larger, and the reference rescales it
    /// before evaluating the law. χ² and raw-MCD references are unchanged.
    ///
    /// # Example
    /// ```
    /// use mvdist::{calibration::Reference, Divisor};
    /// let unbiased = Reference::new_row(30, 6)?;
    /// let ml = unbiased.with_divisor(Divisor::MaximumLikelihood);
    /// // The same row measured with the n divisor has a distance 30/29
    /// // times larger, and the same p-value.
    /// let d2 = 12.0;
    /// assert!((ml.p_value(d2 * 30.0 / 29.0) - unbiased.p_value(d2)).abs() < 1e-15);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn with_divisor(self, divisor: Divisor) -> Self {
        match self {
            Reference::InSampleBeta { n, dim, .. } => Reference::InSampleBeta { n, dim, divisor },
            Reference::NewRowF { n, dim, .. } => Reference::NewRowF { n, dim, divisor },
            other => other,
        }
    }

    /// The factor that takes a squared distance of this reference's scale to
    /// the scale of the unbiased (`n − 1`) covariance its law is stated for.
    fn unbiased_factor(&self) -> f64 {
        match *self {
            Reference::InSampleBeta {
                n,
                divisor: Divisor::MaximumLikelihood,
                ..
            }
            | Reference::NewRowF {
                n,
                divisor: Divisor::MaximumLikelihood,
                ..
            } => (n as f64 - 1.0) / n as f64,
            _ => 1.0,
        }
    }

    /// The Hardin–Rocke F reference for distances from a raw minimum
    /// covariance determinant estimate (consistency factor applied) with
    /// subset size `subset_size` from `n` rows of `dim` variables.
    ///
    /// The degrees of freedom `m` follow Hardin and Rocke (2005): an
    /// asymptotic value from the MCD's influence function (Croux and
    /// Haesbroeck 1999) times their simulated small-sample adjustment
    /// `exp(0.725 − 0.00663 p − 0.0780 ln n)`; [`Reference::degrees_of_freedom`]
    /// reports it. The approximation is for rows independent of the estimate
    /// (new rows, or rows outside the MCD subset): rows inside the subset
    /// are closer to the centre than it says.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if `dim` is 0, `subset_size` is not in
    /// `(dim, n]`, or no usable `m` results.
    ///
    /// # Example
    /// ```
    /// use mvdist::calibration::Reference;
    /// let r = Reference::raw_mcd(200, 5, 103)?;
    /// let m = r.degrees_of_freedom().ok_or("the F reference has an m")?;
    /// assert!(m > 30.0 && m < 45.0);
    /// // The cutoff is well beyond the χ²(5) one at the same level.
    /// let chi2 = Reference::chi_square(5)?;
    /// assert!(r.cutoff(0.025)? > chi2.cutoff(0.025)?);
    /// # Ok::<(), Box<dyn std::error::Error>>(())
    /// ```
    pub fn raw_mcd(n: usize, dim: usize, subset_size: usize) -> Result<Self> {
        hardin_rocke::hardin_rocke_dof(n, dim, subset_size)?;
        Ok(Reference::RawMcdF {
            n,
            dim,
            subset_size,
        })
    }

    /// The F reference for distances from a reweighted minimum covariance
    /// determinant estimate of `dim` variables whose scatter behaves like a
    /// scaled Wishart with `wishart_dof` degrees of freedom `m`:
    /// `d² ≈ p m/(m − p + 1) · F(p, m − p + 1)`.
    ///
    /// [`crate::robust::minimum_covariance_determinant`] simulates `m` for
    /// the fit's own `n`, `p` and subset size (matched to the upper 2.5%
    /// point of simulated new-row distances; see
    /// [`crate::robust::McdFit::reweighted_wishart_dof`]), and
    /// [`crate::DistanceModel::reference`] uses this reference for both new
    /// and in-sample rows of the reweighted model. χ²(p) is its limit as
    /// `m → ∞`; at small `n` χ²(p) flags clean rows several times more often
    /// than nominal.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if `dim` is 0 or `wishart_dof` is not a
    /// finite number above `dim + 1` (the approximation's mean is finite
    /// only there).
    ///
    /// # Example
    /// ```
    /// use mvdist::calibration::Reference;
    /// let r = Reference::reweighted_mcd(3, 20.0)?;
    /// // The scale of F(3, 18) is 3·20/18.
    /// let f = mvdist::calibration::FDistribution::new(3.0, 18.0)?;
    /// assert!((r.p_value(7.0) - f.sf(7.0 * 18.0 / 60.0)).abs() < 1e-15);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn reweighted_mcd(dim: usize, wishart_dof: f64) -> Result<Self> {
        Self::chi_square(dim)?;
        if !(wishart_dof.is_finite() && wishart_dof > dim as f64 + 1.0) {
            return Err(Error::invalid(
                "wishart_dof",
                format!(
                    "{wishart_dof} is not a finite number above p + 1 = {}; \
                     use the χ² reference when no simulated value is available",
                    dim + 1
                ),
            ));
        }
        Ok(Reference::ReweightedMcdF { dim, wishart_dof })
    }

    /// The Wishart degrees of freedom `m` of a [`Reference::RawMcdF`] or
    /// [`Reference::ReweightedMcdF`] reference; `None` for the other kinds
    /// (or an invalid hand-built value).
    pub fn degrees_of_freedom(&self) -> Option<f64> {
        match *self {
            Reference::RawMcdF {
                n,
                dim,
                subset_size,
            } => hardin_rocke::hardin_rocke_dof(n, dim, subset_size).ok(),
            Reference::ReweightedMcdF { dim, wishart_dof } => {
                Self::reweighted_mcd(dim, wishart_dof).ok()?;
                Some(wishart_dof)
            }
            _ => None,
        }
    }

    /// The reference for rows of the given origin, for a model fitted on `n`
    /// rows of `dim` variables.
    ///
    /// # Errors
    /// As [`Reference::chi_square`], [`Reference::in_sample`] and
    /// [`Reference::new_row`].
    pub fn for_origin(origin: RowOrigin, n: usize, dim: usize) -> Result<Self> {
        match origin {
            RowOrigin::New => Self::new_row(n, dim),
            RowOrigin::InSample => Self::in_sample(n, dim),
            RowOrigin::KnownParameters => Self::chi_square(dim),
        }
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        match *self {
            Reference::ChiSquare { dim }
            | Reference::InSampleBeta { dim, .. }
            | Reference::NewRowF { dim, .. }
            | Reference::RawMcdF { dim, .. }
            | Reference::ReweightedMcdF { dim, .. } => dim,
        }
    }

    /// Lower and upper tail probabilities of the squared distance `d2`.
    fn tails(&self, d2: f64) -> (f64, f64) {
        if d2.is_nan() {
            return (f64::NAN, f64::NAN);
        }
        if d2 <= 0.0 && self.dim() > 0 {
            return (0.0, 1.0);
        }
        match *self {
            Reference::ChiSquare { dim } => match chi(dim) {
                Ok(c) => c.tails(d2),
                Err(_) => (f64::NAN, f64::NAN),
            },
            Reference::InSampleBeta { n, dim, .. } => {
                // On the unbiased scale the largest distance is (n−1)²/n.
                let nf = n as f64;
                let max = (nf - 1.0) * (nf - 1.0) / nf;
                let d2 = d2 * self.unbiased_factor();
                match beta(n, dim) {
                    Ok(_) if d2 >= max => (1.0, 0.0),
                    Ok(b) => b.tails_with_complement(d2 / max, (max - d2) / max),
                    Err(_) => (f64::NAN, f64::NAN),
                }
            }
            Reference::NewRowF { n, dim, .. } => match fisher(n, dim) {
                Ok(f) => f.tails(d2 * self.unbiased_factor() / f_scale(n, dim)),
                Err(_) => (f64::NAN, f64::NAN),
            },
            Reference::RawMcdF {
                n,
                dim,
                subset_size,
            } => match raw_mcd_fisher(n, dim, subset_size) {
                Ok((f, scale)) => f.tails(d2 / scale),
                Err(_) => (f64::NAN, f64::NAN),
            },
            Reference::ReweightedMcdF { dim, wishart_dof } => {
                match reweighted_mcd_fisher(dim, wishart_dof) {
                    Ok((f, scale)) => f.tails(d2 / scale),
                    Err(_) => (f64::NAN, f64::NAN),
                }
            }
        }
    }

    /// Upper tail probability `P(D² > d2)`: the p-value of a row with squared
    /// distance `d2`. NaN for NaN input.
    pub fn p_value(&self, d2: f64) -> f64 {
        self.tails(d2).1
    }

    /// Lower tail probability `P(D² ≤ d2)`.
    pub fn cdf(&self, d2: f64) -> f64 {
        self.tails(d2).0
    }

    /// The largest squared distance this reference allows: `(n−1)²/n` for
    /// in-sample rows (`n − 1` with the divisor `n`), infinity otherwise.
    pub fn max_squared_distance(&self) -> f64 {
        match *self {
            Reference::InSampleBeta { n, .. } => {
                let nf = n as f64;
                (nf - 1.0) * (nf - 1.0) / nf / self.unbiased_factor()
            }
            _ => f64::INFINITY,
        }
    }

    /// The squared distance whose upper tail probability is `alpha`: rows
    /// with `d² > cutoff` have p-values below `alpha`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn cutoff(&self, alpha: f64) -> Result<f64> {
        let c = self.cutoff_unchecked(alpha)?;
        if c.is_finite() {
            Ok(c)
        } else {
            Err(Error::NotRepresentable {
                reason: format!("the cutoff for alpha = {alpha} of {self:?}"),
            })
        }
    }

    fn cutoff_unchecked(&self, alpha: f64) -> Result<f64> {
        match *self {
            Reference::ChiSquare { dim } => chi(dim)?.isf(alpha),
            Reference::InSampleBeta { n, dim, .. } => {
                // x itself, not 1 − (1 − x): near α → 1 the quantile is
                // tiny and its complement carries none of its digits.
                let (x, _) = beta(n, dim)?.isf_with_complement(alpha)?;
                Ok(self.max_squared_distance() * x)
            }
            Reference::NewRowF { n, dim, .. } => {
                Ok(fisher(n, dim)?.isf(alpha)? * f_scale(n, dim) / self.unbiased_factor())
            }
            Reference::RawMcdF {
                n,
                dim,
                subset_size,
            } => {
                let (f, scale) = raw_mcd_fisher(n, dim, subset_size)?;
                Ok(f.isf(alpha)? * scale)
            }
            Reference::ReweightedMcdF { dim, wishart_dof } => {
                let (f, scale) = reweighted_mcd_fisher(dim, wishart_dof)?;
                Ok(f.isf(alpha)? * scale)
            }
        }
    }
}

// The variants' fields are public, so a hand-built value may be invalid:
// these re-check (errors become NaN probabilities or `Err` cutoffs).
fn chi(dim: usize) -> Result<ChiSquared> {
    Reference::chi_square(dim)?;
    ChiSquared::new(dim as f64)
}

fn beta(n: usize, dim: usize) -> Result<BetaDistribution> {
    Reference::in_sample(n, dim)?;
    BetaDistribution::new(0.5 * dim as f64, 0.5 * (n as f64 - dim as f64 - 1.0))
}

fn fisher(n: usize, dim: usize) -> Result<FDistribution> {
    Reference::new_row(n, dim)?;
    FDistribution::new(dim as f64, n as f64 - dim as f64)
}

/// The F distribution of the Hardin–Rocke approximation and the scale
/// `p m / (m − p + 1)` with `d² = scale · F`.
fn raw_mcd_fisher(n: usize, dim: usize, subset_size: usize) -> Result<(FDistribution, f64)> {
    scaled_wishart_f(dim, hardin_rocke::hardin_rocke_dof(n, dim, subset_size)?)
}

fn reweighted_mcd_fisher(dim: usize, wishart_dof: f64) -> Result<(FDistribution, f64)> {
    Reference::reweighted_mcd(dim, wishart_dof)?;
    scaled_wishart_f(dim, wishart_dof)
}

/// `d² = scale · F` for new rows: `scale = p(n+1)(n−1) / (n(n−p))`.
fn f_scale(n: usize, dim: usize) -> f64 {
    let (nf, p) = (n as f64, dim as f64);
    p * (nf + 1.0) * (nf - 1.0) / (nf * (nf - p))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chi_square_two_dof_is_exponential() {
        // χ²(2) upper tail = exp(-x/2) (textbook identity), far tail included.
        let r = Reference::chi_square(2).unwrap();
        for &x in &[0.5, 2.0, 40.0, 1000.0, 1300.0] {
            let exact = (-0.5f64 * x).exp();
            assert!((r.p_value(x) - exact).abs() <= 1e-13 * exact, "x = {x}");
        }
        assert!((r.cutoff(1e-200).unwrap() - 2.0 * 200.0 * 10f64.ln()).abs() < 1e-10);
    }

    #[test]
    fn cutoffs_invert_p_values() {
        let refs = [
            Reference::chi_square(7).unwrap(),
            Reference::in_sample(40, 5).unwrap(),
            Reference::new_row(40, 5).unwrap(),
            Reference::new_row(1_000_000, 8).unwrap(),
        ];
        for r in refs {
            for &alpha in &[0.5, 0.05, 1e-3, 1e-9, 1e-30] {
                let c = r.cutoff(alpha).unwrap();
                let back = r.p_value(c);
                assert!((back - alpha).abs() <= 1e-9 * alpha, "{r:?} {alpha} {back}");
            }
        }
    }

    #[test]
    fn invalid_parameters_are_errors() {
        assert!(Reference::chi_square(0).is_err());
        assert!(Reference::in_sample(4, 3).is_err());
        assert!(Reference::new_row(3, 3).is_err());
        let r = Reference::chi_square(3).unwrap();
        for bad in [0.0, 1.0, -0.1, f64::NAN, 2.0] {
            assert!(r.cutoff(bad).is_err());
        }
    }
}
