//! The three reference distributions, with tails accurate to the last few
//! digits and upper quantiles found by a safeguarded root search.

#[cfg(test)]
mod mpmath_checks;
pub(crate) mod normal;
pub(crate) mod special;

use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};
use special::{beta_tails, beta_upper_whole, gamma_tails, gamma_upper_whole, solve_decreasing};

/// `Ok` for a finite positive `v`, else an error naming the parameter.
pub(crate) fn positive(name: &'static str, v: f64) -> Result<()> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(Error::invalid(
            name,
            format!("{v} is not a finite positive number"),
        ))
    }
}

fn check_alpha(alpha: f64) -> Result<()> {
    check_probability(alpha)
}

/// The χ² distribution with `dof` degrees of freedom.
///
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ChiSquaredData")]
pub struct ChiSquared {
    dof: f64,
}

impl ChiSquared {
    /// # Errors
    /// [`Error::InvalidParameter`] unless `dof` is finite and positive.
    pub fn new(dof: f64) -> Result<Self> {
        positive("degrees of freedom", dof)?;
        Ok(ChiSquared { dof })
    }

    /// `(P(X ≤ x), P(X > x))`.
    pub fn tails(&self, x: f64) -> (f64, f64) {
        if x.is_nan() {
            return (f64::NAN, f64::NAN);
        }
        gamma_tails(0.5 * self.dof, 0.5 * x.max(0.0))
    }

    /// Upper tail `P(X > x)`: a finite sum for even degrees of freedom up
    /// to 128, else the upper half of [`tails`](Self::tails).
    pub fn sf(&self, x: f64) -> f64 {
        if x > 0.0 {
            if let Some(q) = gamma_upper_whole(0.5 * self.dof, 0.5 * x) {
                return q;
            }
        }
        self.tails(x).1
    }

    /// Lower tail `P(X ≤ x)`.
    pub fn cdf(&self, x: f64) -> f64 {
        self.tails(x).0
    }

    /// Upper quantile: the `x` with `P(X > x) = alpha`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn isf(&self, alpha: f64) -> Result<f64> {
        check_alpha(alpha)?;
        upper_quantile_positive(alpha, |x| self.tails(x))
            .ok_or_else(|| not_representable("χ²", &[self.dof], alpha))
    }
}

/// The Beta distribution with shapes `a` and `b` on `[0, 1]`.
///
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "BetaDistributionData")]
pub struct BetaDistribution {
    a: f64,
    b: f64,
}

impl BetaDistribution {
    /// # Errors
    /// [`Error::InvalidParameter`] unless both shapes are finite and positive.
    pub fn new(a: f64, b: f64) -> Result<Self> {
        positive("first shape", a)?;
        positive("second shape", b)?;
        Ok(BetaDistribution { a, b })
    }

    /// `(P(X ≤ x), P(X > x))`.
    #[cfg(test)]
    pub fn tails(&self, x: f64) -> (f64, f64) {
        self.tails_with_complement(x, 1.0 - x)
    }

    /// As [`tails`](Self::tails) with `1 − x` supplied separately, for
    /// full precision when `x` is close to 1.
    pub fn tails_with_complement(&self, x: f64, one_minus_x: f64) -> (f64, f64) {
        if x.is_nan() || one_minus_x.is_nan() {
            return (f64::NAN, f64::NAN);
        }
        if x <= 0.0 {
            return (0.0, 1.0);
        }
        if one_minus_x <= 0.0 {
            return (1.0, 0.0);
        }
        beta_tails(self.a, self.b, x, one_minus_x)
    }

    /// Upper tail `P(X > x)` with `1 − x` supplied separately: a finite
    /// sum for a whole-number first shape up to 64, else the upper half of
    /// [`tails_with_complement`](Self::tails_with_complement).
    pub fn sf_with_complement(&self, x: f64, one_minus_x: f64) -> f64 {
        if x > 0.0 && one_minus_x > 0.0 {
            if let Some(q) = beta_upper_whole(self.a, self.b, x, one_minus_x) {
                return q;
            }
        }
        self.tails_with_complement(x, one_minus_x).1
    }

    /// Upper tail `P(X > x)`.
    #[cfg(test)]
    pub fn sf(&self, x: f64) -> f64 {
        self.tails(x).1
    }

    /// Upper quantile: the `x` with `P(X > x) = alpha`.
    #[cfg(test)]
    pub fn isf(&self, alpha: f64) -> Result<f64> {
        Ok(self.isf_with_complement(alpha)?.0)
    }

    /// Upper quantile `x` and its complement `1 − x`, each to full relative
    /// precision.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn isf_with_complement(&self, alpha: f64) -> Result<(f64, f64)> {
        check_alpha(alpha)?;
        let ln_alpha = alpha.ln();
        let (lo_tail_target, use_lower) = (1.0 - alpha, alpha > 0.5);
        // Logit parametrization: x = 1/(1+e^{-t}), 1 − x = 1/(1+e^{t}).
        let split = |t: f64| (1.0 / (1.0 + (-t).exp()), 1.0 / (1.0 + t.exp()));
        // |t| ≤ 708: both x and 1 − x stay normal numbers (≥ e^{-708}).
        let bound = 708.0;
        let t = solve_decreasing(-bound, bound, |t| {
            let (x, y) = split(t);
            let (lo, up) = self.tails_with_complement(x, y);
            if use_lower {
                // Solve via the lower tail when it is the smaller one.
                lo_tail_target.ln() - lo.ln()
            } else {
                up.ln() - ln_alpha
            }
        });
        if t.abs() >= bound {
            // The quantile is closer to 0 or 1 than e^{-708}: one of x and
            // 1 − x would be subnormal or 0.
            return Err(not_representable("Beta", &[self.a, self.b], alpha));
        }
        Ok(split(t))
    }
}

/// Fisher's F distribution with `d1` and `d2` degrees of freedom.
///
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "FDistributionData")]
pub struct FDistribution {
    d1: f64,
    d2: f64,
}

impl FDistribution {
    /// # Errors
    /// [`Error::InvalidParameter`] unless both degrees of freedom are finite
    /// and positive.
    pub fn new(d1: f64, d2: f64) -> Result<Self> {
        positive("numerator degrees of freedom", d1)?;
        positive("denominator degrees of freedom", d2)?;
        Ok(FDistribution { d1, d2 })
    }

    /// `(P(X ≤ x), P(X > x))`, through the incomplete beta function with
    /// both `d1·x/(d1·x + d2)` and its complement formed directly.
    pub fn tails(&self, x: f64) -> (f64, f64) {
        match self.beta_arguments(x) {
            Ok((lower_arg, upper_arg)) => {
                beta_tails(0.5 * self.d1, 0.5 * self.d2, lower_arg, upper_arg)
            }
            Err(tails) => tails,
        }
    }

    /// The incomplete-beta argument `d1·x/(d1·x + d2)` and its complement,
    /// or the tails themselves at the edges (NaN, `x ≤ 0`, infinity).
    fn beta_arguments(&self, x: f64) -> std::result::Result<(f64, f64), (f64, f64)> {
        if x.is_nan() {
            return Err((f64::NAN, f64::NAN));
        }
        if x <= 0.0 {
            return Err((0.0, 1.0));
        }
        if x == f64::INFINITY {
            return Err((1.0, 0.0));
        }
        // With r = d2/(d1·x): d1·x/(d1·x + d2) = 1/(1 + r) and
        // d2/(d1·x + d2) = r/(1 + r). Formed from r, neither overflows
        // when d1·x would.
        let r = self.d2 / self.d1 / x;
        if r == f64::INFINITY {
            return Err((0.0, 1.0));
        }
        Ok(if r > 1.0 {
            let g = 1.0 / r;
            (g / (1.0 + g), 1.0 / (1.0 + g))
        } else {
            (1.0 / (1.0 + r), r / (1.0 + r))
        })
    }

    /// Upper tail `P(X > x)`: a finite sum for even numerator degrees of
    /// freedom up to 128, else the upper half of [`tails`](Self::tails).
    pub fn sf(&self, x: f64) -> f64 {
        match self.beta_arguments(x) {
            Ok((lower_arg, upper_arg)) => {
                beta_upper_whole(0.5 * self.d1, 0.5 * self.d2, lower_arg, upper_arg).unwrap_or_else(
                    || beta_tails(0.5 * self.d1, 0.5 * self.d2, lower_arg, upper_arg).1,
                )
            }
            Err((_, upper)) => upper,
        }
    }

    #[cfg(test)]
    /// Lower tail `P(X ≤ x)`.
    pub fn cdf(&self, x: f64) -> f64 {
        self.tails(x).0
    }

    /// Upper quantile: the `x` with `P(X > x) = alpha`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn isf(&self, alpha: f64) -> Result<f64> {
        check_alpha(alpha)?;
        upper_quantile_positive(alpha, |x| self.tails(x))
            .ok_or_else(|| not_representable("F", &[self.d1, self.d2], alpha))
    }
}

fn not_representable(law: &str, parameters: &[f64], alpha: f64) -> Error {
    let parameters: Vec<String> = parameters.iter().map(|v| v.to_string()).collect();
    Error::NotRepresentable {
        reason: format!(
            "the upper {alpha} quantile of {law}({})",
            parameters.join(", ")
        ),
    }
}

/// Upper quantile of a distribution on `(0, ∞)`, solved in `t = ln x`
/// against whichever tail is the smaller; `None` when it lies beyond the
/// largest finite number or below the smallest normal one.
fn upper_quantile_positive(alpha: f64, tails: impl Fn(f64) -> (f64, f64)) -> Option<f64> {
    let ln_alpha = alpha.ln();
    let ln_lower_target = (1.0 - alpha).ln();
    let use_lower = alpha > 0.5;
    let (lo, hi) = (f64::MIN_POSITIVE.ln(), f64::MAX.ln());
    let t = solve_decreasing(lo, hi, |t| {
        let (lower, upper) = tails(t.exp());
        if use_lower {
            ln_lower_target - lower.ln()
        } else {
            upper.ln() - ln_alpha
        }
    });
    let x = t.exp();
    if t <= lo || t >= hi || !x.is_finite() || x < f64::MIN_POSITIVE {
        return None;
    }
    Some(x)
}

/// The scaled-Wishart approximation of squared distances from a scatter
/// with `m` degrees of freedom: `d² ≈ scale · F(p, m − p + 1)` with
/// `scale = p m/(m − p + 1)`; returns the F law and the scale.
///
/// # Errors
/// [`Error::InvalidParameter`] unless `m − p + 1` is finite and positive.
pub(crate) fn scaled_wishart_f(dim: usize, m: f64) -> Result<(FDistribution, f64)> {
    let p = dim as f64;
    let d2 = m - p + 1.0;
    Ok((FDistribution::new(p, d2)?, p * m / d2))
}

/// The serialized form of [`ChiSquared`], validated by its constructor.
#[derive(Deserialize)]
struct ChiSquaredData {
    dof: f64,
}

impl TryFrom<ChiSquaredData> for ChiSquared {
    type Error = Error;
    fn try_from(d: ChiSquaredData) -> Result<Self> {
        ChiSquared::new(d.dof)
    }
}

/// The serialized form of [`BetaDistribution`], validated by its constructor.
#[derive(Deserialize)]
struct BetaDistributionData {
    a: f64,
    b: f64,
}

impl TryFrom<BetaDistributionData> for BetaDistribution {
    type Error = Error;
    fn try_from(d: BetaDistributionData) -> Result<Self> {
        BetaDistribution::new(d.a, d.b)
    }
}

/// The serialized form of [`FDistribution`], validated by its constructor.
#[derive(Deserialize)]
struct FDistributionData {
    d1: f64,
    d2: f64,
}

impl TryFrom<FDistributionData> for FDistribution {
    type Error = Error;
    fn try_from(d: FDistributionData) -> Result<Self> {
        FDistribution::new(d.d1, d.d2)
    }
}

pub(crate) fn check_probability(alpha: f64) -> Result<()> {
    if alpha > 0.0 && alpha < 1.0 {
        Ok(())
    } else {
        Err(Error::invalid(
            "alpha",
            format!("{alpha} is not a probability strictly between 0 and 1"),
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_forms() {
        // χ²(2): P(X > x) = exp(−x/2), upper 5% point 5.991464547107979
        // (textbook identity; the quantile is 2 ln 20).
        let c = ChiSquared::new(2.0).unwrap();
        assert!((c.sf(2.0) - (-1.0f64).exp()).abs() < 1e-15);
        assert!((c.isf(0.05).unwrap() - 5.991464547107979).abs() < 1e-13);
        // Beta(1, 3): P(X > x) = (1 − x)³.
        let b = BetaDistribution::new(1.0, 3.0).unwrap();
        assert!((b.sf(0.5) - 0.125).abs() < 1e-15);
        assert!((b.isf(0.125).unwrap() - 0.5).abs() < 1e-15);
        // F(2, 2): P(X > x) = 1/(1 + x).
        let f = FDistribution::new(2.0, 2.0).unwrap();
        assert!((f.sf(3.0) - 0.25).abs() < 1e-15);
        assert!((f.isf(0.25).unwrap() - 3.0).abs() < 1e-13);
        assert!((f.cdf(3.0) - 0.75).abs() < 1e-15);
    }
}
