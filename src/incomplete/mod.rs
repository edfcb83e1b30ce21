//! Reference rows with empty cells: the maximum-likelihood fit by the EM
//! algorithm.
//!
//! Real data have gaps. mvdist reads an empty cell as NaN, and:
//!
//! * **scoring** a row with gaps uses its observed variables only
//!   ([`crate::DistanceModel::score_observed`],
//!   [`crate::DistanceModel::score_row_observed`],
//!   [`crate::DistanceModel::explain_observed`]), for a model from any
//!   estimator (the reference laws stay exact for classical fits; see
//!   there);
//! * **fitting** from rows with gaps is done by [`expectation_maximization`]
//!   (the normal-theory maximum-likelihood estimate of the mean and
//!   covariance from every observed cell). It is the only estimator that
//!   accepts gaps: the classical, weighted, shrinkage (Ledoit–Wolf, OAS,
//!   fixed) and MCD fits refuse a NaN with [`crate::Error::NonFinite`]
//!   naming its row and column. To use one of them, drop the incomplete
//!   rows first.
//!
//! # The algorithm
//! For `x ~ N(μ, Σ)` with observed part `o` and missing part `m` of a row,
//! given the current `(μ, Σ)` and with `K = Σ⁻¹`, the conditional law of
//! the missing cells is normal with
//!
//! ```text
//! E[x_m | x_o] = μ_m − K_mm⁻¹ K_mo (x_o − μ_o),   Cov[x_m | x_o] = K_mm⁻¹.
//! ```
//!
//! The E step fills each row with its conditional mean and adds the
//! conditional covariance to its outer product; the M step takes the mean
//! and the (divisor `n`) covariance of the filled rows. Each step does not
//! decrease the observed-data log-likelihood
//!
//! ```text
//! ℓ(μ, Σ) = −½ Σᵢ [ pᵢ ln 2π + ln |Σ_oᵢoᵢ| + (x_oᵢ − μ_oᵢ)ᵀ Σ_oᵢoᵢ⁻¹ (x_oᵢ − μ_oᵢ) ],
//! ```
//!
//! (Dempster, Laird and Rubin 1977), which the fit reports at every
//! iteration. Working with `K` makes the cost per row that of the missing
//! block (`|m|³`) rather than of the observed one. The estimate is valid
//! when cells are missing at random (the chance that a cell is empty may
//! depend on the observed cells of its row, not on its own value); it is
//! biased when large values are the ones that go missing.
//!
//! The start is the observed mean and the diagonal of observed variances;
//! iterations stop when no entry of the mean or covariance moves by more
//! than the tolerance, relative to its standard deviation scale.
//!
//! **Reference laws.** With gaps there is no exact F or Beta law for the
//! distances; a model from this fit uses those of a classical fit on its
//! `n` rows (exact without gaps, approximate with them), and the
//! held-out p-values of [`crate::held_out`] need no law at all.
//!
//! # References
//! A. P. Dempster, N. M. Laird and D. B. Rubin (1977). Maximum likelihood
//! from incomplete data via the EM algorithm. *Journal of the Royal
//! Statistical Society B* 39, 1–38.
//! R. J. A. Little and D. B. Rubin (2002). *Statistical Analysis with
//! Missing Data*, 2nd ed., chapter 11. Wiley.
//! T. W. Anderson (1957). Maximum likelihood estimates for a multivariate
//! normal distribution when some observations are missing. *Journal of the
//! American Statistical Association* 52, 200–203.

mod em;

pub use em::{expectation_maximization, EmFit, EmOptions};
