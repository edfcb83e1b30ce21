//! The consistency factor of a trimmed covariance at the normal model.
//!
//! The covariance of the fraction `α` of rows closest to the centre of a
//! `N(μ, Σ)` sample underestimates `Σ`: in the limit it is
//! `Σ · P(χ²_{p+2} ≤ q_α) / α` with `q_α = χ²_{p;α}`, the `α`-quantile of
//! χ²(p). Multiplying by
//!
//! ```text
//! c(α) = α / P(χ²_{p+2} ≤ χ²_{p;α})
//! ```
//!
//! makes it consistent (Croux and Haesbroeck 1999, Eq. 4.2; Pison, Van Aelst
//! and Willems 2002, §3). The raw MCD uses `α = h/n`; the one-step reweighted
//! estimate uses the coverage of its cutoff, `α = 0.975`. `c(1) = 1`.
//!
//! # References
//! - C. Croux and G. Haesbroeck (1999). Influence function and efficiency of
//!   the minimum covariance determinant scatter matrix estimator. *J.
//!   Multivariate Analysis* 71, 161–190.
//! - G. Pison, S. Van Aelst and G. Willems (2002). Small sample corrections
//!   for LTS and MCD. *Metrika* 55, 111–123.

use crate::distributions::ChiSquared;
use crate::error::{Error, Result};

/// The consistency factor `c(α) = α / P(χ²_{p+2} ≤ χ²_{p;α})` for `dim`
/// variables and retained fraction `fraction = α`.
///
/// # Errors
/// [`Error::InvalidParameter`] if `dim` is 0 or `fraction` is not in
/// `(0, 1]`.
///
/// # Example
/// ```
/// use mvdist::robust::consistency_factor;
/// // One variable, half the rows: q = χ²₁;₀.₅ = 0.454936…, and
/// // P(χ²₃ ≤ q) = 0.0713259… (scipy 1.17.1 `chi2.cdf`), so c = 7.0100745….
/// let c = consistency_factor(1, 0.5)?;
/// assert!((c - 7.010074539703252).abs() < 1e-11);
/// assert_eq!(consistency_factor(4, 1.0)?, 1.0);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn consistency_factor(dim: usize, fraction: f64) -> Result<f64> {
    if dim == 0 {
        return Err(Error::invalid("dim", "at least one column is needed"));
    }
    if !(fraction > 0.0 && fraction <= 1.0) {
        return Err(Error::invalid(
            "retained fraction",
            format!("{fraction} is not in (0, 1]"),
        ));
    }
    if fraction == 1.0 {
        return Ok(1.0);
    }
    let p = dim as f64;
    let q = ChiSquared::new(p)?.isf(1.0 - fraction)?;
    let inner = ChiSquared::new(p + 2.0)?.cdf(q);
    if !(inner > 0.0) {
        return Err(Error::invalid(
            "retained fraction",
            format!("{fraction} is too small for a finite consistency factor"),
        ));
    }
    Ok(fraction / inner)
}
