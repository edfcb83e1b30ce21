//! The result of a T² comparison of means, with its confidence intervals.

use crate::calibration::check_probability;
use crate::distributions::FDistribution;
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// Which T² test produced a [`MeanComparison`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum MeanTestKind {
    /// One sample against a target mean ([`one_sample`](super::one_sample)).
    OneSample,
    /// Paired samples: one-sample test of the row differences
    /// ([`paired`](super::paired)).
    Paired,
    /// Two independent samples with a pooled scatter
    /// ([`two_sample`](super::two_sample)).
    TwoSamplePooled,
    /// Two independent samples with unequal scatters, Krishnamoorthy–Yu
    /// approximation ([`two_sample_unequal_scatter`](super::two_sample_unequal_scatter)).
    TwoSampleUnequalScatter,
}

/// A closed interval `[lower, upper]`.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct Interval {
    /// Lower end.
    pub lower: f64,
    /// Upper end.
    pub upper: f64,
}

impl Interval {
    /// Whether `value` lies in the interval.
    ///
    /// # Example
    /// ```
    /// let iv = mvdist::mean_tests::Interval { lower: -1.0, upper: 2.0 };
    /// assert!(iv.contains(0.0) && !iv.contains(3.0));
    /// ```
    pub fn contains(&self, value: f64) -> bool {
        self.lower <= value && value <= self.upper
    }
}

/// Confidence intervals for one variable's mean (or mean difference).
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct MeanInterval {
    /// The variable (0-based column).
    pub variable: usize,
    /// The estimate: the mean, or the mean difference.
    pub estimate: f64,
    /// Its standard error.
    pub standard_error: f64,
    /// Simultaneous T² interval: `estimate ± √(T²_crit) · standard_error`,
    /// where `T²_crit` is the test's critical T² at level `alpha`. All `p`
    /// intervals (indeed every linear combination) cover together with
    /// probability at least `1 − alpha`.
    pub simultaneous: Interval,
    /// Bonferroni interval: `estimate ± t(alpha/(2p); ν) · standard_error`.
    pub bonferroni: Interval,
}

/// The outcome of a Hotelling T² test on mean vectors.
///
/// The F transform is `F = T² / c` with the test's scale `c` (see the
/// [module documentation](super)), referred to `F(numerator_dof,
/// denominator_dof)`.
///
/// # Example
/// ```
/// use mvdist::mean_tests;
/// use ndarray::array;
///
/// let rows = array![[2.1, 0.9], [1.8, 1.2], [2.4, 1.1], [1.9, 0.8], [2.2, 1.0], [2.0, 1.3]];
/// let test = mean_tests::one_sample(rows.view(), &[2.0, 1.0])?;
/// assert_eq!(test.numerator_dof(), 2.0);
/// assert_eq!(test.denominator_dof(), 4.0);
/// assert!(test.p_value() > 0.5);
/// let c = test.critical_t_squared(0.05)?;
/// assert!(test.t_squared() < c);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ComparisonData")]
pub struct MeanComparison {
    kind: MeanTestKind,
    estimate: Vec<f64>,
    hypothesized: Vec<f64>,
    standard_errors: Vec<f64>,
    sample_sizes: Vec<usize>,
    t_squared: f64,
    f_statistic: f64,
    t_squared_per_f: f64,
    numerator_dof: f64,
    denominator_dof: f64,
    p_value: f64,
    per_variable_dof: Vec<f64>,
}

/// The serialized form of a [`MeanComparison`]: checked on the way in (one
/// estimate, hypothesized value, standard error and degrees of freedom per
/// variable), with F and p recomputed from the rest.
#[derive(Deserialize)]
struct ComparisonData {
    kind: MeanTestKind,
    estimate: Vec<f64>,
    hypothesized: Vec<f64>,
    standard_errors: Vec<f64>,
    sample_sizes: Vec<usize>,
    t_squared: f64,
    t_squared_per_f: f64,
    numerator_dof: f64,
    denominator_dof: f64,
    per_variable_dof: Vec<f64>,
}

impl TryFrom<ComparisonData> for MeanComparison {
    type Error = Error;
    fn try_from(d: ComparisonData) -> Result<Self> {
        let p = d.estimate.len();
        for (what, len) in [
            ("hypothesized values", d.hypothesized.len()),
            ("standard errors", d.standard_errors.len()),
            ("per-variable degrees of freedom", d.per_variable_dof.len()),
        ] {
            if len != p {
                return Err(Error::Format {
                    reason: format!("{len} {what} for {p} estimated means"),
                });
            }
        }
        if p == 0 {
            return Err(Error::Format {
                reason: "a mean comparison needs at least one column".into(),
            });
        }
        Self::from_parts(ComparisonParts {
            kind: d.kind,
            estimate: d.estimate,
            hypothesized: d.hypothesized,
            standard_errors: d.standard_errors,
            sample_sizes: d.sample_sizes,
            t_squared: d.t_squared,
            t_squared_per_f: d.t_squared_per_f,
            numerator_dof: d.numerator_dof,
            denominator_dof: d.denominator_dof,
            per_variable_dof: d.per_variable_dof,
        })
    }
}

/// What a test computes; [`MeanComparison::from_parts`] adds F and p.
pub(crate) struct ComparisonParts {
    pub kind: MeanTestKind,
    pub estimate: Vec<f64>,
    pub hypothesized: Vec<f64>,
    pub standard_errors: Vec<f64>,
    pub sample_sizes: Vec<usize>,
    pub t_squared: f64,
    pub t_squared_per_f: f64,
    pub numerator_dof: f64,
    pub denominator_dof: f64,
    pub per_variable_dof: Vec<f64>,
}

impl MeanComparison {
    pub(crate) fn from_parts(parts: ComparisonParts) -> Result<Self> {
        let f_statistic = parts.t_squared / parts.t_squared_per_f;
        let dist = FDistribution::new(parts.numerator_dof, parts.denominator_dof)?;
        let p_value = dist.sf(f_statistic);
        if !parts.t_squared.is_finite()
            || !f_statistic.is_finite()
            || !p_value.is_finite()
            || parts.standard_errors.iter().any(|v| !v.is_finite())
        {
            return Err(Error::Overflow { row: 0 });
        }
        Ok(MeanComparison {
            kind: parts.kind,
            estimate: parts.estimate,
            hypothesized: parts.hypothesized,
            standard_errors: parts.standard_errors,
            sample_sizes: parts.sample_sizes,
            t_squared: parts.t_squared,
            f_statistic,
            t_squared_per_f: parts.t_squared_per_f,
            numerator_dof: parts.numerator_dof,
            denominator_dof: parts.denominator_dof,
            p_value,
            per_variable_dof: parts.per_variable_dof,
        })
    }

    /// Which test this is.
    pub fn kind(&self) -> MeanTestKind {
        self.kind
    }

    /// The estimated mean vector (one sample), mean difference vector
    /// (paired: first minus second), or difference of means `x̄₁ − x̄₂`
    /// (two samples).
    pub fn estimate(&self) -> &[f64] {
        &self.estimate
    }

    /// The value of [`estimate`](Self::estimate) under the null hypothesis:
    /// the target for one sample, zeros otherwise.
    pub fn hypothesized(&self) -> &[f64] {
        &self.hypothesized
    }

    /// The standard error of each entry of [`estimate`](Self::estimate).
    pub fn standard_errors(&self) -> &[f64] {
        &self.standard_errors
    }

    /// Rows in each sample (pairs for the paired test).
    pub fn sample_sizes(&self) -> &[usize] {
        &self.sample_sizes
    }

    /// Hotelling's T².
    pub fn t_squared(&self) -> f64 {
        self.t_squared
    }

    /// The F transform of T².
    pub fn f_statistic(&self) -> f64 {
        self.f_statistic
    }

    /// The scale `c` with `T² = c · F`.
    pub fn t_squared_per_f(&self) -> f64 {
        self.t_squared_per_f
    }

    /// Numerator degrees of freedom of the F reference (`p`).
    pub fn numerator_dof(&self) -> f64 {
        self.numerator_dof
    }

    /// Denominator degrees of freedom of the F reference (not an integer
    /// for the unequal-scatter test).
    pub fn denominator_dof(&self) -> f64 {
        self.denominator_dof
    }

    /// Upper-tail p-value of the F transform.
    pub fn p_value(&self) -> f64 {
        self.p_value
    }

    /// Degrees of freedom of the Student-t quantile used for each variable's
    /// Bonferroni interval.
    pub fn per_variable_dof(&self) -> &[f64] {
        &self.per_variable_dof
    }

    /// Whether the test rejects equality at level `alpha` (`p ≤ alpha`).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn rejects(&self, alpha: f64) -> Result<bool> {
        check_probability(alpha)?;
        Ok(self.p_value <= alpha)
    }

    /// The critical value of T² at level `alpha`: `c · F(alpha; df₁, df₂)`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn critical_t_squared(&self, alpha: f64) -> Result<f64> {
        let f = FDistribution::new(self.numerator_dof, self.denominator_dof)?.isf(alpha)?;
        Ok(self.t_squared_per_f * f)
    }

    /// Simultaneous T² and Bonferroni confidence intervals at level
    /// `1 − alpha`, one per variable.
    ///
    /// The Bonferroni interval of variable `j` uses the upper `alpha/(2p)`
    /// quantile of Student's t with `ν_j` degrees of freedom
    /// ([`per_variable_dof`](Self::per_variable_dof)), obtained from the F
    /// distribution: if `T ~ t(ν)` then `T² ~ F(1, ν)`, so
    /// `t(alpha/(2p); ν) = √F(alpha/p; 1, ν)`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn intervals(&self, alpha: f64) -> Result<Vec<MeanInterval>> {
        check_probability(alpha)?;
        let half_simultaneous = self.critical_t_squared(alpha)?.sqrt();
        let p = self.estimate.len() as f64;
        let mut out = Vec::with_capacity(self.estimate.len());
        for (j, (&est, &se)) in self.estimate.iter().zip(&self.standard_errors).enumerate() {
            let t = FDistribution::new(1.0, self.per_variable_dof[j])?
                .isf(alpha / p)?
                .sqrt();
            out.push(MeanInterval {
                variable: j,
                estimate: est,
                standard_error: se,
                simultaneous: Interval {
                    lower: est - half_simultaneous * se,
                    upper: est + half_simultaneous * se,
                },
                bonferroni: Interval {
                    lower: est - t * se,
                    upper: est + t * se,
                },
            });
        }
        Ok(out)
    }
}
