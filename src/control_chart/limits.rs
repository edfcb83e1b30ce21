//! Upper control limits of T² charts and of the terms of their
//! decomposition.

use super::FalseAlarmRate;
use crate::calibration::{Law, Reference, RowOrigin};
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// The upper control limit of a T² chart, by chart design and phase.
///
/// `m` is the number of observations (or subgroups) in the estimate, `n`
/// the subgroup size, `p` the number of variables, `f = m(n − 1)`:
///
/// | variant | T² of a point | in-control law of T² | source |
/// |---|---|---|---|
/// | individuals, Phase I | `(x − x̄)ᵀ S⁻¹ (x − x̄)`, `x` in the estimate | `(m−1)²/m · Beta(p/2, (m−p−1)/2)` | Tracy, Young and Mason (1992); NIST §6.5.4.3 |
/// | individuals, Phase II | same, `x` new | `p(m+1)(m−1)/(m(m−p)) · F(p, m−p)` | Tracy, Young and Mason (1992); NIST §6.5.4.3 |
/// | subgroups, Phase I | `n (x̄ⱼ − x̿)ᵀ S_p⁻¹ (x̄ⱼ − x̿)` | `p(m−1)(n−1)/(mn−m−p+1) · F(p, mn−m−p+1)` | Alt (1985); NIST §6.5.4.3 |
/// | subgroups, Phase II | same, subgroup new | `p(m+1)(n−1)/(mn−m−p+1) · F(p, mn−m−p+1)` | Alt (1985); NIST §6.5.4.3 |
///
/// `S_p` is the pooled within-subgroup covariance (the average of the
/// subgroup covariances) and `x̿` the mean of the subgroup means. The
/// individuals limits and the subgroup Phase II limit are exact under
/// normality (the Phase II subgroup law follows from `x̄ − x̿ ~ N(0,
/// (1 + 1/m) Σ/n)` independent of `S_p ~ Wishart(f)/f`); the subgroup
/// Phase I limit is Alt's approximation.
///
/// # Example
/// ```
/// use mvdist::control_chart::{ControlLimit, FalseAlarmRate};
///
/// let limit = ControlLimit::individuals_phase_two(50, 3)?;
/// let ucl = limit.upper(FalseAlarmRate::per_point(0.01)?)?;
/// assert!((limit.p_value(ucl) - 0.01).abs() < 1e-12);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum ControlLimit {
    /// Individual observations in the estimate (Beta limit).
    IndividualsPhaseOne {
        /// Observations in the estimate, `m`.
        observations: usize,
        /// Variables, `p`.
        dim: usize,
    },
    /// New individual observations (F limit).
    IndividualsPhaseTwo {
        /// Observations in the estimate, `m`.
        observations: usize,
        /// Variables, `p`.
        dim: usize,
    },
    /// Subgroup means in the estimate.
    SubgroupsPhaseOne {
        /// Subgroups in the estimate, `m`.
        subgroups: usize,
        /// Rows per subgroup, `n`.
        size: usize,
        /// Variables, `p`.
        dim: usize,
    },
    /// New subgroup means.
    SubgroupsPhaseTwo {
        /// Subgroups in the estimate, `m`.
        subgroups: usize,
        /// Rows per subgroup, `n`.
        size: usize,
        /// Variables, `p`.
        dim: usize,
    },
}

impl ControlLimit {
    /// Phase I limit for individual observations.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] unless `m ≥ p + 2`; [`Error::InvalidParameter`]
    /// if `p = 0`.
    pub fn individuals_phase_one(observations: usize, dim: usize) -> Result<Self> {
        let l = ControlLimit::IndividualsPhaseOne { observations, dim };
        l.distribution()?;
        Ok(l)
    }

    /// Phase II limit for individual observations.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] unless `m ≥ p + 1`; [`Error::InvalidParameter`]
    /// if `p = 0`.
    pub fn individuals_phase_two(observations: usize, dim: usize) -> Result<Self> {
        let l = ControlLimit::IndividualsPhaseTwo { observations, dim };
        l.distribution()?;
        Ok(l)
    }

    /// Phase I limit for subgroup means.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `n ≥ 2`, `m ≥ 2` and `p ≥ 1`;
    /// [`Error::TooFewRows`] unless `m(n − 1) ≥ p`.
    pub fn subgroups_phase_one(subgroups: usize, size: usize, dim: usize) -> Result<Self> {
        let l = ControlLimit::SubgroupsPhaseOne {
            subgroups,
            size,
            dim,
        };
        l.distribution()?;
        Ok(l)
    }

    /// Phase II limit for subgroup means.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `n ≥ 2`, `m ≥ 1` and `p ≥ 1`;
    /// [`Error::TooFewRows`] unless `m(n − 1) ≥ p`.
    pub fn subgroups_phase_two(subgroups: usize, size: usize, dim: usize) -> Result<Self> {
        let l = ControlLimit::SubgroupsPhaseTwo {
            subgroups,
            size,
            dim,
        };
        l.distribution()?;
        Ok(l)
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        match *self {
            ControlLimit::IndividualsPhaseOne { dim, .. }
            | ControlLimit::IndividualsPhaseTwo { dim, .. }
            | ControlLimit::SubgroupsPhaseOne { dim, .. }
            | ControlLimit::SubgroupsPhaseTwo { dim, .. } => dim,
        }
    }

    /// Whether charted points belong to the estimate (Phase I:
    /// [`RowOrigin::InSample`]) or not (Phase II: [`RowOrigin::New`]).
    pub fn origin(&self) -> RowOrigin {
        match self {
            ControlLimit::IndividualsPhaseOne { .. } | ControlLimit::SubgroupsPhaseOne { .. } => {
                RowOrigin::InSample
            }
            _ => RowOrigin::New,
        }
    }

    /// The limit of the same design and estimate for the other kind of
    /// point (Phase I ↔ Phase II).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] for [`RowOrigin::KnownParameters`]: a
    /// chart's limits are those of an estimated location and scatter.
    pub fn for_origin(&self, origin: RowOrigin) -> Result<ControlLimit> {
        use ControlLimit::*;
        let phase_one = match origin {
            RowOrigin::InSample => true,
            RowOrigin::New => false,
            RowOrigin::KnownParameters => {
                return Err(Error::invalid(
                    "row origin",
                    "a T² chart estimates its location and scatter; its points are \
                     Phase I (RowOrigin::InSample) or Phase II (RowOrigin::New)",
                ))
            }
        };
        Ok(match (*self, phase_one) {
            (IndividualsPhaseOne { observations, dim }, false)
            | (IndividualsPhaseTwo { observations, dim }, false) => {
                IndividualsPhaseTwo { observations, dim }
            }
            (IndividualsPhaseOne { observations, dim }, true)
            | (IndividualsPhaseTwo { observations, dim }, true) => {
                IndividualsPhaseOne { observations, dim }
            }
            (
                SubgroupsPhaseOne {
                    subgroups,
                    size,
                    dim,
                }
                | SubgroupsPhaseTwo {
                    subgroups,
                    size,
                    dim,
                },
                false,
            ) => SubgroupsPhaseTwo {
                subgroups,
                size,
                dim,
            },
            (
                SubgroupsPhaseOne {
                    subgroups,
                    size,
                    dim,
                }
                | SubgroupsPhaseTwo {
                    subgroups,
                    size,
                    dim,
                },
                true,
            ) => SubgroupsPhaseOne {
                subgroups,
                size,
                dim,
            },
        })
    }

    /// The in-control law of a point's T² (see the table above).
    ///
    /// # Errors
    /// As the constructors (the fields are public, so a hand-built value is
    /// re-checked here).
    pub fn distribution(&self) -> Result<Reference> {
        match *self {
            ControlLimit::IndividualsPhaseOne { observations, dim } => {
                Reference::phase_one_individuals(observations, dim)
            }
            ControlLimit::IndividualsPhaseTwo { observations, dim } => {
                Reference::phase_two_individuals(observations, dim)
            }
            ControlLimit::SubgroupsPhaseOne {
                subgroups,
                size,
                dim,
            } => Reference::phase_one_subgroups(subgroups, size, dim),
            ControlLimit::SubgroupsPhaseTwo {
                subgroups,
                size,
                dim,
            } => Reference::phase_two_subgroups(subgroups, size, dim),
        }
    }

    /// The in-control law of a decomposition term `T²_{j·J}` with `k = |J|`
    /// conditioning variables, for a point whose T² on the conditioning
    /// variables alone is `t2_given` (`T²_J`, the
    /// [`given_t_squared`](super::decomposition::DecompositionTerm::given_t_squared)
    /// of the term; 0 for an unconditional term). With `f` the degrees of
    /// freedom of the scatter (`m − 1` for individuals, `m(n − 1)` for
    /// subgroups):
    ///
    /// | design and phase | law of `T²_{j·J}` |
    /// |---|---|
    /// | individuals, Phase I | `((m−1)²/m − T²_J) · Beta(1/2, (m−k−2)/2)` |
    /// | individuals, Phase II | `(m−1)/(m−k−1) · (1 + 1/m + T²_J/(m−1)) · F(1, m−k−1)` |
    /// | subgroups, Phase I | `f/(f−k) · (1 − 1/m + T²_J/f) · F(1, f−k)` |
    /// | subgroups, Phase II | `f/(f−k) · (1 + 1/m + T²_J/f) · F(1, f−k)` |
    ///
    /// Each row is exact under normality, conditionally on the conditioning
    /// variables and therefore also unconditionally. The term is the squared
    /// residual of the regression of variable `j` on `J` estimated from the
    /// Phase I points, divided by the residual variance `s²_{j·J}` (divisor
    /// `f`); `f s²_{j·J}/σ²` is χ² with `f − k` degrees of freedom. For a
    /// point independent of the estimate the residual has variance
    /// `σ² (1 + 1/m + h)` with the regression leverage `h = T²_J/f`
    /// (standard prediction-interval algebra of least squares), hence the F
    /// rows; for a Phase I individual it is the internally studentized
    /// residual of a fitting point, with variance `σ² (1 − 1/m − h)`, and
    /// `r²/(m−k−1) ~ Beta(1/2, (m−k−2)/2)`, hence the Beta row. Subgroup
    /// means are independent of the pooled within-subgroup scatter, so their
    /// Phase I row is an F row with `1 − 1/m`.
    ///
    /// At `T²_J = 0` the individuals rows are the laws published by Mason,
    /// Tracy and Young (1995, 1997), and for `k = 0` every row is the chart
    /// law with `p = 1`. Those published laws leave out the leverage term:
    /// in the suite's simulation (m = 30, p = 3, α = 0.01) a term with two
    /// conditioning variables exceeded their cutoff 1.27% of the time; with
    /// the leverage term it is at the nominal rate (see the calibration
    /// test in `tests/it/control_chart.rs`).
    ///
    /// # Errors
    /// As [`distribution`](Self::distribution); [`Error::InvalidParameter`]
    /// unless `k < p` and `t2_given` is finite and non-negative.
    pub fn term_distribution(&self, conditioned: usize, t2_given: f64) -> Result<Reference> {
        self.distribution()?;
        if conditioned >= self.dim() {
            return Err(Error::invalid(
                "conditioning variables",
                format!(
                    "{conditioned} conditioning variables; at most p − 1 = {} exist",
                    self.dim() - 1
                ),
            ));
        }
        if !(t2_given.is_finite() && t2_given >= 0.0) {
            return Err(Error::invalid(
                "T² of the conditioning variables",
                format!("{t2_given} is not a finite non-negative number"),
            ));
        }
        let base = self.zero_leverage_term(conditioned)?;
        self.with_leverage(base, conditioned, t2_given)
    }

    /// Adds the regression leverage of a point with `T²_J = t2_given` to the
    /// zero-leverage term law `base` (see [`term_distribution`](Self::term_distribution)).
    fn with_leverage(&self, base: Law, conditioned: usize, t2_given: f64) -> Result<Reference> {
        let law = if conditioned == 0 || t2_given == 0.0 {
            base
        } else {
            match (*self, base) {
                (ControlLimit::IndividualsPhaseOne { .. }, Law::ScaledBeta { scale, a, b }) => {
                    Law::ScaledBeta {
                        // A fitting point has T²_J ≤ (m−1)²/m; rounding may
                        // put it a hair above, where the term is 0: keep the
                        // law proper.
                        scale: (scale - t2_given).max(scale * f64::EPSILON),
                        a,
                        b,
                    }
                }
                (limit, Law::ScaledF { scale, d1, d2 }) => {
                    let (m, f) = match limit {
                        ControlLimit::IndividualsPhaseOne { observations, .. }
                        | ControlLimit::IndividualsPhaseTwo { observations, .. } => {
                            (observations as f64, observations as f64 - 1.0)
                        }
                        ControlLimit::SubgroupsPhaseOne {
                            subgroups, size, ..
                        }
                        | ControlLimit::SubgroupsPhaseTwo {
                            subgroups, size, ..
                        } => (subgroups as f64, subgroups as f64 * (size as f64 - 1.0)),
                    };
                    let spread = if limit.origin() == RowOrigin::New {
                        1.0 + 1.0 / m
                    } else {
                        1.0 - 1.0 / m
                    };
                    Law::ScaledF {
                        scale: scale * (spread + t2_given / f) / spread,
                        d1,
                        d2,
                    }
                }
                (_, other) => other,
            }
        };
        match law {
            Law::ScaledBeta { scale, a, b } => Reference::scaled_beta(scale, a, b),
            Law::ScaledF { scale, d1, d2 } => Reference::scaled_f(scale, d1, d2),
            _ => Err(Error::invalid(
                "control limit",
                "no term law for this design",
            )),
        }
    }

    /// The law of a term with `k` conditioning variables at zero leverage;
    /// the design was validated by [`distribution`](Self::distribution).
    fn zero_leverage_term(&self, k: usize) -> Result<Law> {
        let kf = k as f64;
        Ok(match *self {
            ControlLimit::IndividualsPhaseOne { observations, .. } => {
                let m = observations as f64;
                Law::ScaledBeta {
                    scale: (m - 1.0) * (m - 1.0) / m,
                    a: 0.5,
                    b: (m - kf - 2.0) / 2.0,
                }
            }
            ControlLimit::IndividualsPhaseTwo { observations, .. } => {
                let m = observations as f64;
                Law::ScaledF {
                    scale: (m + 1.0) * (m - 1.0) / (m * (m - kf - 1.0)),
                    d1: 1.0,
                    d2: m - kf - 1.0,
                }
            }
            ControlLimit::SubgroupsPhaseOne {
                subgroups, size, ..
            }
            | ControlLimit::SubgroupsPhaseTwo {
                subgroups, size, ..
            } => {
                let phase_one = matches!(self, ControlLimit::SubgroupsPhaseOne { .. });
                let m = subgroups as f64;
                let ff = m * (size as f64 - 1.0);
                let factor = if phase_one { m - 1.0 } else { m + 1.0 };
                Law::ScaledF {
                    scale: factor / m * ff / (ff - kf),
                    d1: 1.0,
                    d2: ff - kf,
                }
            }
        })
    }

    /// The upper control limit for the given false-alarm rate.
    ///
    /// # Errors
    /// As [`distribution`](Self::distribution).
    pub fn upper(&self, rate: FalseAlarmRate) -> Result<f64> {
        self.distribution()?.cutoff(rate.alpha())
    }

    /// The probability that an in-control point's T² exceeds `t_squared`.
    /// NaN for NaN input or an invalid hand-built limit.
    pub fn p_value(&self, t_squared: f64) -> f64 {
        match self.distribution() {
            Ok(d) => d.p_value(t_squared),
            Err(_) => f64::NAN,
        }
    }
}
