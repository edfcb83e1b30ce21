//! The law of the squared prediction error `Q` of a component model.

use crate::distributions::ChiSquared;
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// How the upper limit of the squared prediction error `Q` is computed
/// from the eigenvalues `λ_{k+1}, …, λ_p` the model leaves out, through
/// their power sums `θᵢ = Σ_{j>k} λⱼ^i`.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ResidualLimitMethod {
    /// Jackson and Mudholkar (1979): `(Q/θ₁)^{h₀}` is approximately normal
    /// with `h₀ = 1 − 2θ₁θ₃/(3θ₂²)`, giving
    /// `Q_α = θ₁ [z_α √(2θ₂h₀²)/θ₁ + 1 + θ₂h₀(h₀ − 1)/θ₁²]^{1/h₀}`.
    /// The default (the usual choice in process monitoring; common
    /// practice). Needs `h₀ > 0`; for eigenvalues where `h₀ ≤ 0` (a few
    /// left-out eigenvalues much larger than the rest) the law falls back
    /// to [`ScaledChiSquare`](Self::ScaledChiSquare) and
    /// [`ResidualLaw::method`] says so. In the upper tail it errs on the
    /// conservative side: measured by simulation for left-out eigenvalues
    /// 0.5, 0.4, …, 0.1 (`h₀ = 0.25`), 0.92% of in-control rows above the
    /// 1% limit (tests/it/components.rs).
    #[default]
    JacksonMudholkar,
    /// Box (1954): `Q ≈ g·χ²_h` with the first two moments matched,
    /// `g = θ₂/θ₁`, `h = θ₁²/θ₂` (the form Nomikos and MacGregor 1995 use
    /// for batch processes). Always defined.
    ScaledChiSquare,
}

/// The approximate in-control law of `Q` for a fitted component model.
///
/// Under multivariate normality `Q = Σ_{j>k} λⱼ zⱼ²` with independent
/// standard normal `zⱼ`: a weighted sum of `χ²₁` variables, approximated
/// as [`ResidualLimitMethod`] says. Both approximations take the
/// eigenvalues as known; with estimated eigenvalues and in-sample rows they
/// are approximations of the common practice, not exact laws.
///
/// # Example
/// ```
/// use mvdist::control_chart::{ResidualLaw, ResidualLimitMethod};
///
/// // Left-out eigenvalues 0.5, 0.3 and 0.2.
/// let law = ResidualLaw::new(&[0.5, 0.3, 0.2], ResidualLimitMethod::ScaledChiSquare)?;
/// let (g, h) = law.scaled_chi_square();
/// assert!((g - 0.38).abs() < 1e-12 && (h - 1.0 / 0.38).abs() < 1e-12);
/// let limit = law.upper(0.01)?;
/// assert!((law.p_value(limit) - 0.01).abs() < 1e-9);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ResidualLawData")]
pub struct ResidualLaw {
    method: ResidualLimitMethod,
    /// `θ₁, θ₂, θ₃`.
    theta: [f64; 3],
}

/// The serialized form, checked by [`ResidualLaw::from_power_sums`].
#[derive(Deserialize)]
struct ResidualLawData {
    method: ResidualLimitMethod,
    theta: [f64; 3],
}

impl TryFrom<ResidualLawData> for ResidualLaw {
    type Error = Error;
    fn try_from(d: ResidualLawData) -> Result<Self> {
        Self::from_power_sums(d.theta, d.method)
    }
}

impl ResidualLaw {
    /// The law for the left-out eigenvalues `residual_eigenvalues` (negative
    /// values from rounding count as 0).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if every left-out eigenvalue is 0 (no
    /// residual variation: `Q` has no limit), a value is not finite, or
    /// the Jackson–Mudholkar exponent `h₀` is not positive (use
    /// [`ResidualLimitMethod::ScaledChiSquare`] then).
    pub fn new(residual_eigenvalues: &[f64], method: ResidualLimitMethod) -> Result<Self> {
        let mut theta = [0.0f64; 3];
        for &l in residual_eigenvalues {
            if !l.is_finite() {
                return Err(Error::invalid(
                    "residual eigenvalues",
                    format!("{l} is not a finite eigenvalue"),
                ));
            }
            let l = l.max(0.0);
            theta[0] += l;
            theta[1] += l * l;
            theta[2] += l * l * l;
        }
        Self::from_power_sums(theta, method)
    }

    /// The law from the power sums `θ₁, θ₂, θ₃` of the left-out eigenvalues.
    ///
    /// # Errors
    /// As [`new`](Self::new).
    pub fn from_power_sums(theta: [f64; 3], method: ResidualLimitMethod) -> Result<Self> {
        if !theta.iter().all(|t| t.is_finite() && *t > 0.0) {
            return Err(Error::invalid(
                "residual variation",
                format!(
                    "the left-out eigenvalues sum to {} (power sums {theta:?}); with no residual \
                     variation the squared prediction error has no limit: keep fewer components",
                    theta[0]
                ),
            ));
        }
        let mut law = ResidualLaw { method, theta };
        if method == ResidualLimitMethod::JacksonMudholkar && !(law.exponent() > 0.0) {
            law.method = ResidualLimitMethod::ScaledChiSquare;
        }
        Ok(law)
    }

    /// The method in use (the scaled chi-square when Jackson–Mudholkar
    /// was asked for but `h₀ ≤ 0`).
    pub fn method(&self) -> ResidualLimitMethod {
        self.method
    }

    /// `θ₁, θ₂, θ₃`: sums of the first three powers of the left-out
    /// eigenvalues. `θ₁` is the in-control mean of `Q`, `2θ₂` its variance.
    pub fn power_sums(&self) -> [f64; 3] {
        self.theta
    }

    /// The Jackson–Mudholkar exponent `h₀ = 1 − 2θ₁θ₃/(3θ₂²)`.
    pub fn exponent(&self) -> f64 {
        let [t1, t2, t3] = self.theta;
        1.0 - 2.0 * t1 * t3 / (3.0 * t2 * t2)
    }

    /// Box's scale and degrees of freedom `(g, h) = (θ₂/θ₁, θ₁²/θ₂)`.
    pub fn scaled_chi_square(&self) -> (f64, f64) {
        let [t1, t2, _] = self.theta;
        (t2 / t1, t1 * t1 / t2)
    }

    /// The upper limit exceeded by an in-control `Q` with probability
    /// `alpha`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn upper(&self, alpha: f64) -> Result<f64> {
        crate::distributions::check_probability(alpha)?;
        match self.method {
            ResidualLimitMethod::ScaledChiSquare => {
                let (g, h) = self.scaled_chi_square();
                Ok(g * ChiSquared::new(h)?.isf(alpha)?)
            }
            ResidualLimitMethod::JacksonMudholkar => {
                let [t1, t2, _] = self.theta;
                let h0 = self.exponent();
                let z = normal_upper_quantile(alpha)?;
                let base =
                    z * (2.0 * t2 * h0 * h0).sqrt() / t1 + 1.0 + t2 * h0 * (h0 - 1.0) / (t1 * t1);
                if !(base > 0.0) {
                    return Err(Error::invalid(
                        "false-alarm rate",
                        format!(
                            "{alpha} is outside the range of the Jackson–Mudholkar \
                             approximation for these eigenvalues; use the scaled chi-square limit"
                        ),
                    ));
                }
                Ok(t1 * base.powf(1.0 / h0))
            }
        }
    }

    /// The approximate probability that an in-control `Q` exceeds `q`
    /// (1 for `q ≤ 0`, NaN for NaN).
    pub fn p_value(&self, q: f64) -> f64 {
        if q.is_nan() {
            return f64::NAN;
        }
        if q <= 0.0 {
            return 1.0;
        }
        match self.method {
            ResidualLimitMethod::ScaledChiSquare => {
                let (g, h) = self.scaled_chi_square();
                match ChiSquared::new(h) {
                    Ok(c) => c.sf(q / g),
                    Err(_) => f64::NAN,
                }
            }
            ResidualLimitMethod::JacksonMudholkar => {
                let [t1, t2, _] = self.theta;
                let h0 = self.exponent();
                let z = ((q / t1).powf(h0) - 1.0 - t2 * h0 * (h0 - 1.0) / (t1 * t1)) * t1
                    / (2.0 * t2 * h0 * h0).sqrt();
                normal_upper_tail(z)
            }
        }
    }
}

/// `P(Z > z)` for a standard normal `Z`, through `Z² ~ χ²₁` so that both
/// tails keep their relative accuracy.
fn normal_upper_tail(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    let Ok(chi) = ChiSquared::new(1.0) else {
        return f64::NAN;
    };
    let half = 0.5 * chi.sf(z * z);
    if z >= 0.0 {
        half
    } else {
        1.0 - half
    }
}

/// The `z` with `P(Z > z) = alpha`.
fn normal_upper_quantile(alpha: f64) -> Result<f64> {
    let chi = ChiSquared::new(1.0)?;
    if alpha == 0.5 {
        Ok(0.0)
    } else if alpha < 0.5 {
        Ok(chi.isf(2.0 * alpha)?.sqrt())
    } else {
        Ok(-chi.isf(2.0 * (1.0 - alpha))?.sqrt())
    }
}
