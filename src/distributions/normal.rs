//! The standard normal distribution: upper tail and quantile function.
//!
//! The tail comes from the regularized incomplete gamma function of
//! [`crate::calibration`], which is accurate in both tails:
//! `P(|Z| > z) = Q(½, z²/2)`, so `P(Z > z) = ½ Q(½, z²/2)` for `z ≥ 0`
//! (`Q(37) ≈ 5.7e-300` keeps its relative precision). The quantile is
//! `Φ⁻¹(p) = −√2 erfc⁻¹(2p)` with statrs's `erfc⁻¹` (accurate to a few units
//! in the last place, also in the far tails; checked against scipy's
//! `ndtri` in the tests).

use crate::distributions::special::gamma_tails;
use std::f64::consts::SQRT_2;

/// Upper tail `P(Z > z)` of the standard normal distribution.
pub(crate) fn upper_tail(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    if z.is_infinite() {
        return if z > 0.0 { 0.0 } else { 1.0 };
    }
    let (lower, upper) = gamma_tails(0.5, 0.5 * z * z);
    if z >= 0.0 {
        0.5 * upper
    } else {
        0.5 + 0.5 * lower
    }
}

/// Two-sided tail `P(|Z| > |z|)`.
pub(crate) fn two_sided_tail(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    if z.is_infinite() {
        return 0.0;
    }
    gamma_tails(0.5, 0.5 * z * z).1
}

/// Quantile `Φ⁻¹(p)` for `0 < p < 1` (`−∞` at 0, `+∞` at 1, NaN outside).
pub(crate) fn quantile(p: f64) -> f64 {
    if p.is_nan() || !(0.0..=1.0).contains(&p) {
        return f64::NAN;
    }
    -SQRT_2 * statrs::function::erf::erfc_inv(2.0 * p)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn symmetric_and_monotone() {
        // Values of the standard normal known to every table (common practice).
        assert!((quantile(0.975) - 1.959_963_984_540_054).abs() < 1e-14);
        let q = upper_tail(1.959_963_984_540_054);
        assert!((q - 0.025).abs() < 1e-16, "{q:e}");
        assert_eq!(quantile(0.5), 0.0);
        assert_eq!(upper_tail(0.0), 0.5);
        assert!((quantile(0.3) + quantile(0.7)).abs() < 1e-15);
        assert!((upper_tail(-1.3) + upper_tail(1.3) - 1.0).abs() < 1e-16);
        assert!((two_sided_tail(-1.0) - 2.0 * upper_tail(1.0)).abs() < 1e-16);
        assert!(quantile(1.5).is_nan() && quantile(f64::NAN).is_nan());
        assert_eq!(quantile(0.0), f64::NEG_INFINITY);
        assert_eq!(upper_tail(f64::INFINITY), 0.0);
        assert_eq!(upper_tail(f64::NEG_INFINITY), 1.0);
    }

    #[test]
    fn quantiles_and_tails_match_scipy_special() {
        // Source: tests/fixtures/shapiro_wilk.json, scipy.special.ndtri and
        // ndtr (scipy 1.17.1), written by tests/reference/make_normality_fixtures.py.
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/fixtures/shapiro_wilk.json"
        );
        let text = std::fs::read_to_string(path).unwrap();
        let f: serde_json::Value = serde_json::from_str(&text).unwrap();
        let num = |v: &serde_json::Value| v.as_f64().unwrap();
        for c in f["normal"]["quantile"].as_array().unwrap() {
            let (p, z) = (num(&c["p"]), num(&c["z"]));
            let got = quantile(p);
            assert!(
                (got - z).abs() <= 4e-16 * z.abs().max(1.0),
                "Φ⁻¹({p}) = {got} vs {z}"
            );
        }
        for c in f["normal"]["upper_tail"].as_array().unwrap() {
            let (z, q) = (num(&c["z"]), num(&c["q"]));
            let got = upper_tail(z);
            assert!((got - q).abs() <= 2e-13 * q, "Q({z}) = {got:e} vs {q:e}");
        }
    }
}
