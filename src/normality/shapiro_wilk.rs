//! The Shapiro–Wilk W test of univariate normality, by Royston's
//! approximation (Applied Statistics algorithm AS R94) for `3 ≤ n ≤ 5000`.
//!
//! For the ordered sample `x₍₁₎ ≤ … ≤ x₍ₙ₎`,
//! `W = (Σ aᵢ x₍ᵢ₎)² / Σ (xᵢ − x̄)²`, the squared correlation between the
//! ordered sample and the coefficients `a`. Royston (1992, 1995) computes
//! the coefficients from the normal scores
//! `mᵢ = Φ⁻¹((i − 3/8)/(n + 1/4))`: with `u = n^(−1/2)` and
//! `c = m / ‖m‖`,
//!
//! * `aₙ = cₙ + 0.221157u − 0.147981u² − 2.071190u³ + 4.434685u⁴ − 2.706056u⁵`,
//! * for `n > 5` also
//!   `aₙ₋₁ = cₙ₋₁ + 0.042981u − 0.293762u² − 1.752461u³ + 5.682633u⁴ − 3.582633u⁵`,
//! * the other coefficients `mᵢ/√φ`, with `φ` chosen so that `Σ aᵢ² = 1`,
//!   and `a₁ = −aₙ`, `a₂ = −aₙ₋₁` (for `n = 3`, `a = (−√½, 0, √½)`).
//!
//! The p-value normalizes `W`:
//!
//! * `n = 3`: exact, `P = (6/π)(asin √W − asin √¾)`, evaluated as
//!   `1 − (6/π) asin √(1 − W)`;
//! * `4 ≤ n ≤ 11`: `y = −ln(γ − ln(1 − W))` with `γ = −2.273 + 0.459n`,
//!   mean `0.5440 − 0.39978n + 0.025054n² − 0.0006714n³` and standard
//!   deviation `exp(1.3822 − 0.77857n + 0.062767n² − 0.0020322n³)`;
//! * `12 ≤ n ≤ 5000`: `y = ln(1 − W)` with, for `L = ln n`, mean
//!   `−1.5861 − 0.31082L − 0.083751L² + 0.0038915L³` and standard
//!   deviation `exp(−0.4803 − 0.082676L + 0.0030302L²)`;
//!
//! and `P` is the upper standard normal tail of the standardized `y`.
//! `1 − W` is computed as `(√(s_a s_x) − s_ax)(√(s_a s_x) + s_ax)/(s_a s_x)`
//! from centred sums of squares and products, so that `W` close to 1 keeps
//! its precision.
//!
//! # References
//! - S. S. Shapiro and M. B. Wilk (1965). An analysis of variance test for
//!   normality (complete samples). *Biometrika* 52, 591–611.
//! - J. P. Royston (1992). Approximating the Shapiro–Wilk W-test for
//!   non-normality. *Statistics and Computing* 2, 117–119.
//! - P. Royston (1995). Remark AS R94: A remark on algorithm AS 181: the
//!   W-test for normality. *Applied Statistics* 44, 547–551.

use crate::distributions::normal;
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// Smallest sample the approximation covers.
pub const MIN_ROWS: usize = 3;
/// Largest sample the approximation covers.
pub const MAX_ROWS: usize = 5000;

const SKEW_COEFF_LAST: [f64; 6] = [0.0, 0.221157, -0.147981, -2.071190, 4.434685, -2.706056];
const SKEW_COEFF_SECOND: [f64; 6] = [0.0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633];
const SMALL_GAMMA: [f64; 2] = [-2.273, 0.459];
const SMALL_MEAN: [f64; 4] = [0.5440, -0.39978, 0.025054, -0.0006714];
const SMALL_LOG_SD: [f64; 4] = [1.3822, -0.77857, 0.062767, -0.0020322];
const LARGE_MEAN: [f64; 4] = [-1.5861, -0.31082, -0.083751, 0.0038915];
const LARGE_LOG_SD: [f64; 3] = [-0.4803, -0.082676, 0.0030302];

fn poly(c: &[f64], x: f64) -> f64 {
    c.iter().rev().fold(0.0, |acc, &ci| acc * x + ci)
}

/// Checks that `n` is in the range the approximation covers.
fn check_size(n: usize) -> Result<()> {
    if n < MIN_ROWS {
        return Err(Error::TooFewRows {
            rows: n,
            needed: MIN_ROWS,
            columns: 1,
        });
    }
    if n > MAX_ROWS {
        return Err(Error::invalid(
            "rows",
            format!(
                "{n} rows: the Shapiro–Wilk approximation covers 3 to {MAX_ROWS} rows; \
                 use a test that scales (Mardia, Doornik–Hansen) or a subsample"
            ),
        ));
    }
    Ok(())
}

/// The Shapiro–Wilk coefficients for samples of one size, reusable across
/// variables.
///
/// # Example
/// ```
/// use mvdist::normality::ShapiroWilkCoefficients;
/// let c = ShapiroWilkCoefficients::new(3)?;
/// let a = c.coefficients();
/// assert!((a[2] - 0.5f64.sqrt()).abs() < 1e-15 && a[1] == 0.0 && a[0] == -a[2]);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct ShapiroWilkCoefficients {
    rows: usize,
    /// `aₙ, aₙ₋₁, …` (the positive half), length `⌊n/2⌋`.
    upper: Vec<f64>,
}

impl ShapiroWilkCoefficients {
    /// Coefficients for samples of `rows` values.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] for fewer than 3 rows;
    /// [`Error::InvalidParameter`] for more than 5000.
    pub fn new(rows: usize) -> Result<Self> {
        check_size(rows)?;
        let half = rows / 2;
        if rows == 3 {
            return Ok(ShapiroWilkCoefficients {
                rows,
                upper: vec![std::f64::consts::FRAC_1_SQRT_2],
            });
        }
        let nf = rows as f64;
        // Lower-half normal scores m₁ < m₂ < … < 0.
        let m: Vec<f64> = (1..=half)
            .map(|i| normal::quantile((i as f64 - 0.375) / (nf + 0.25)))
            .collect();
        let sum_sq = 2.0 * m.iter().map(|v| v * v).sum::<f64>();
        let norm = sum_sq.sqrt();
        let u = 1.0 / nf.sqrt();
        let last = -m[0] / norm + poly(&SKEW_COEFF_LAST, u);
        let mut upper = vec![0.0; half];
        upper[0] = last;
        let (first_rest, phi) = if rows > 5 {
            let second = -m[1] / norm + poly(&SKEW_COEFF_SECOND, u);
            upper[1] = second;
            (
                2,
                (sum_sq - 2.0 * m[0] * m[0] - 2.0 * m[1] * m[1])
                    / (1.0 - 2.0 * last * last - 2.0 * second * second),
            )
        } else {
            (1, (sum_sq - 2.0 * m[0] * m[0]) / (1.0 - 2.0 * last * last))
        };
        let scale = phi.sqrt();
        for i in first_rest..half {
            upper[i] = -m[i] / scale;
        }
        Ok(ShapiroWilkCoefficients { rows, upper })
    }

    /// The sample size these coefficients are for.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// All `n` coefficients `a₁ … aₙ` for the ascending order statistics
    /// (antisymmetric, sum of squares 1).
    pub fn coefficients(&self) -> Vec<f64> {
        let n = self.rows;
        let mut a = vec![0.0; n];
        for (k, &v) in self.upper.iter().enumerate() {
            a[n - 1 - k] = v;
            a[k] = -v;
        }
        a
    }
}

/// The Shapiro–Wilk statistic `W` and its p-value for one variable; see
/// the [module documentation](self).
///
/// # Example
/// ```
/// use mvdist::normality::ShapiroWilk;
/// // Setosa sepal lengths, the first 12 rows of Fisher's iris data.
/// let x = [5.1, 4.9, 4.7, 4.6, 5.0, 5.4, 4.6, 5.0, 4.4, 4.9, 5.4, 4.8];
/// let sw = ShapiroWilk::compute(&x)?;
/// assert!(sw.statistic() > 0.9 && sw.statistic() <= 1.0);
/// assert!(sw.p_value() > 0.05);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct ShapiroWilk {
    rows: usize,
    statistic: f64,
    p_value: f64,
}

impl ShapiroWilk {
    /// The test on `values` (any order).
    ///
    /// # Errors
    /// [`Error::TooFewRows`] for fewer than 3 values;
    /// [`Error::InvalidParameter`] for more than 5000; [`Error::NonFinite`]
    /// naming the position (as the row, column 0); [`Error::ZeroVariance`]
    /// if all values are equal.
    pub fn compute(values: &[f64]) -> Result<Self> {
        let coefficients = ShapiroWilkCoefficients::new(values.len())?;
        Self::compute_with(&coefficients, values)
    }

    /// As [`compute`](Self::compute), with coefficients computed once for
    /// several variables of the same length.
    ///
    /// # Errors
    /// As [`compute`](Self::compute); [`Error::ShapeMismatch`] if the
    /// coefficients are for another sample size.
    pub fn compute_with(coefficients: &ShapiroWilkCoefficients, values: &[f64]) -> Result<Self> {
        Self::for_column(coefficients, values, 0)
    }

    /// As [`compute_with`](Self::compute_with), naming `column` in errors.
    pub(crate) fn for_column(
        coefficients: &ShapiroWilkCoefficients,
        values: &[f64],
        column: usize,
    ) -> Result<Self> {
        let n = values.len();
        if n != coefficients.rows {
            return Err(Error::ShapeMismatch {
                what: "number of values (the coefficients' sample size)",
                expected: coefficients.rows,
                found: n,
            });
        }
        if let Some(row) = values.iter().position(|v| !v.is_finite()) {
            return Err(Error::NonFinite {
                row,
                column,
                value: values[row],
            });
        }
        let mut x = values.to_vec();
        x.sort_unstable_by(f64::total_cmp);
        let (lo, hi) = (x[0], x[n - 1]);
        if lo == hi {
            return Err(Error::ZeroVariance { column });
        }
        // Scale into [−1, 1] so that no sum of squares overflows.
        let scale = lo.abs().max(hi.abs());
        for v in x.iter_mut() {
            *v /= scale;
        }
        let mean = x.iter().sum::<f64>() / n as f64;
        let a = coefficients.coefficients();
        let a_mean = a.iter().sum::<f64>() / n as f64;
        let (mut ssa, mut ssx, mut sax) = (0.0, 0.0, 0.0);
        for (&ai, &xi) in a.iter().zip(&x) {
            let (da, dx) = (ai - a_mean, xi - mean);
            ssa += da * da;
            ssx += dx * dx;
            sax += da * dx;
        }
        if !(ssx > 0.0) {
            return Err(Error::ZeroVariance { column });
        }
        let root = (ssa * ssx).sqrt();
        let one_minus_w = ((root - sax) * (root + sax) / (ssa * ssx)).max(0.0);
        let statistic = 1.0 - one_minus_w;
        Ok(ShapiroWilk {
            rows: n,
            statistic,
            p_value: p_value(n, one_minus_w),
        })
    }

    /// Number of values `n`.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// The statistic `W` (at most 1; small values speak against normality).
    pub fn statistic(&self) -> f64 {
        self.statistic
    }

    /// The p-value (Royston's normalization; exact for `n = 3`).
    pub fn p_value(&self) -> f64 {
        self.p_value
    }
}

/// Royston's p-value for `W`, from `1 − W`.
fn p_value(n: usize, one_minus_w: f64) -> f64 {
    let nf = n as f64;
    if n == 3 {
        // (6/π)(asin √W − π/3) = 1 − (6/π) asin √(1 − W), the form that keeps
        // its precision when W is close to 1.
        let p = 1.0 - 6.0 / std::f64::consts::PI * one_minus_w.sqrt().asin();
        return p.clamp(0.0, 1.0);
    }
    let y = one_minus_w.ln();
    let (y, mean, sd) = if n <= 11 {
        let gamma = poly(&SMALL_GAMMA, nf);
        if y >= gamma {
            // Far outside the range of the normalization: W is tiny.
            return 0.0;
        }
        (
            -(gamma - y).ln(),
            poly(&SMALL_MEAN, nf),
            poly(&SMALL_LOG_SD, nf).exp(),
        )
    } else {
        let l = nf.ln();
        (y, poly(&LARGE_MEAN, l), poly(&LARGE_LOG_SD, l).exp())
    };
    normal::upper_tail((y - mean) / sd)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn coefficients_are_unit_and_antisymmetric() {
        for n in [3, 4, 5, 6, 7, 11, 12, 50, 51, 5000] {
            let a = ShapiroWilkCoefficients::new(n).unwrap().coefficients();
            let ss: f64 = a.iter().map(|v| v * v).sum();
            assert!((ss - 1.0).abs() < 1e-13, "n = {n}: {ss}");
            for i in 0..n {
                assert_eq!(a[i], -a[n - 1 - i]);
            }
            assert!(a.windows(2).all(|w| w[0] <= w[1]));
        }
    }

    #[test]
    fn sizes_outside_the_range_are_errors() {
        assert!(matches!(
            ShapiroWilk::compute(&[1.0, 2.0]),
            Err(Error::TooFewRows { needed: 3, .. })
        ));
        let big: Vec<f64> = (0..5001).map(|i| i as f64).collect();
        assert!(matches!(
            ShapiroWilk::compute(&big),
            Err(Error::InvalidParameter { .. })
        ));
        assert!(matches!(
            ShapiroWilk::compute(&[2.0; 10]),
            Err(Error::ZeroVariance { column: 0 })
        ));
        assert!(matches!(
            ShapiroWilk::compute(&[1.0, f64::NAN, 2.0]),
            Err(Error::NonFinite { row: 1, .. })
        ));
        let huge = [1e308, -1e308, 3e307, 5e307];
        let sw = ShapiroWilk::compute(&huge).unwrap();
        assert!(sw.statistic().is_finite() && sw.p_value().is_finite());
    }
}
