//! The Hardin–Rocke F approximation for distances from a raw MCD estimate.
//!
//! Let `Σ̂` be the raw minimum covariance determinant scatter of `n` rows of
//! `p` normal variables with subset size `h`, multiplied by its consistency
//! factor (see [`crate::robust::consistency_factor`]). Hardin and Rocke
//! (2005) approximate `m Σ̂` by a Wishart matrix with `m` degrees of
//! freedom; for a row independent of the estimate (a new row, or a row
//! outside the MCD subset — the rows that matter when looking for
//! outliers), the squared distance `d²` then satisfies
//!
//! ```text
//! (m − p + 1) / (p m) · d²  ~  F(p, m − p + 1).
//! ```
//!
//! `m` comes from the asymptotic variance of the MCD scatter (Croux and
//! Haesbroeck 1999) with a small-sample adjustment fitted by simulation
//! (Hardin and Rocke 2005, Appendix and §3): with `a = (n − h)/n`,
//! `q = χ²_{p;1−a}`, `c = (1 − a)/P(χ²_{p+2} ≤ q)`,
//! `c₂ = −P(χ²_{p+2} ≤ q)/2`, `c₃ = −P(χ²_{p+4} ≤ q)/2`, `c₄ = 3c₃`,
//!
//! ```text
//! b₁ = c (c₃ − c₄)/(1 − a)
//! b₂ = 1/2 + c/(1 − a) · (c₃ − (q/p)(c₂ + (1 − a)/2))
//! v₁ = (1 − a) b₁² (a (c q/p − 1)² − 1) − 2 c₃ c² (3 (b₁ − p b₂)² + (p + 2) b₂ (2b₁ − p b₂))
//! v₂ = n (b₁ (b₁ − p b₂)(1 − a))² c²
//! m_asy = 2 v₂ / (c² v₁)
//! m = m_asy · exp(0.725 − 0.00663 p − 0.0780 ln n)
//! ```
//!
//! These formulas and constants are recalled from the paper, not copied
//! from a file; the `tests/it/robust_calibration.rs` simulation checks `m`
//! against the variance of simulated raw MCD variances (`Var ≈ 2/m` for a
//! Wishart) and the rejection rate of the cutoff on new normal rows.
//! With `h = n` the estimate is the classical maximum-likelihood covariance
//! and `m = n − 1`.
//!
//! # References
//! - J. Hardin and D. M. Rocke (2005). The distribution of robust
//!   distances. *J. Computational and Graphical Statistics* 14, 928–946.
//! - C. Croux and G. Haesbroeck (1999). Influence function and efficiency of
//!   the minimum covariance determinant scatter matrix estimator. *J.
//!   Multivariate Analysis* 71, 161–190.

use crate::distributions::ChiSquared;
use crate::error::{Error, Result};

/// The Wishart degrees of freedom `m` of the Hardin–Rocke approximation
/// for `n` rows, `dim` variables and subset size `subset_size`.
pub(crate) fn hardin_rocke_dof(n: usize, dim: usize, subset_size: usize) -> Result<f64> {
    if dim == 0 {
        return Err(Error::invalid("dim", "at least one column is needed"));
    }
    if subset_size <= dim || subset_size > n {
        return Err(Error::invalid(
            "subset size",
            format!("h = {subset_size} is not in ({dim}, {n}]"),
        ));
    }
    let (nf, p) = (n as f64, dim as f64);
    if subset_size == n {
        return Ok(nf - 1.0);
    }
    let a = (n - subset_size) as f64 / nf;
    let q = ChiSquared::new(p)?.isf(a)?;
    let p2 = ChiSquared::new(p + 2.0)?.cdf(q);
    let p4 = ChiSquared::new(p + 4.0)?.cdf(q);
    let c = (1.0 - a) / p2;
    let c2 = -0.5 * p2;
    let c3 = -0.5 * p4;
    let c4 = 3.0 * c3;
    let b1 = c * (c3 - c4) / (1.0 - a);
    let b2 = 0.5 + c / (1.0 - a) * (c3 - (q / p) * (c2 + 0.5 * (1.0 - a)));
    let v1 = (1.0 - a) * b1 * b1 * (a * (c * q / p - 1.0).powi(2) - 1.0)
        - 2.0 * c3 * c * c * (3.0 * (b1 - p * b2).powi(2) + (p + 2.0) * b2 * (2.0 * b1 - p * b2));
    let v2 = nf * (b1 * (b1 - p * b2) * (1.0 - a)).powi(2) * c * c;
    let m_asy = 2.0 * v2 / (c * c * v1);
    let m = m_asy * (0.725 - 0.00663 * p - 0.0780 * nf.ln()).exp();
    if m.is_finite() && m > p - 1.0 {
        Ok(m)
    } else {
        Err(Error::invalid(
            "subset size",
            format!("no usable Hardin–Rocke degrees of freedom for n = {n}, p = {dim}, h = {subset_size} (m = {m})"),
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn classical_limit_and_growth_with_n() {
        assert_eq!(hardin_rocke_dof(50, 3, 50).unwrap(), 49.0);
        let m1 = hardin_rocke_dof(200, 5, 103).unwrap();
        let m2 = hardin_rocke_dof(2000, 5, 1003).unwrap();
        assert!(m1 > 4.0 && m2 > 5.0 * m1, "{m1} {m2}");
        assert!(hardin_rocke_dof(10, 3, 3).is_err());
    }

    #[test]
    fn matches_the_formula_evaluated_in_scipy() {
        // Arithmetic check: the same formula transcribed to Python and
        // evaluated with scipy 1.17.1's chi2 (so it shares our reading of
        // Hardin and Rocke 2005). The independent check is the ignored simulation
        // `hardin_rocke_degrees_of_freedom_match_simulation`
        // (tests/it/robust_calibration.rs), which compares m with 2/Var of the
        // simulated scatter's diagonal.
        for &(n, p, h, want) in &[
            (200usize, 5usize, 103usize, 38.006793397276695f64),
            (2000, 5, 1003, 298.5894005783414),
            (21, 3, 12, 4.367354241496781),
            (178, 13, 96, 59.67922275429679),
        ] {
            let got = hardin_rocke_dof(n, p, h).unwrap();
            assert!(
                (got / want - 1.0).abs() < 1e-10,
                "{n} {p} {h}: {got} vs {want}"
            );
        }
    }
}
