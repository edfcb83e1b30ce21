//! [`Reference`]: a statistic's law under the null hypothesis, built once
//! by a named constructor for each situation and validated there.

use super::hardin_rocke::hardin_rocke_dof;
use crate::distributions::normal;
use crate::distributions::special::gamma_tails;
use crate::distributions::{
    check_probability, positive, scaled_wishart_f, BetaDistribution, ChiSquared, FDistribution,
};
use crate::error::{Error, Result};
use crate::moments::Divisor;
use serde::{Deserialize, Serialize};

/// The law a statistic follows when the null hypothesis holds (for squared
/// distances: when the rows are multivariate normal and the row is not
/// unusual), and with it p-values, cutoffs and the cumulative distribution.
///
/// Every statistic in mvdist is referred to a value of this one type: a
/// squared distance of a new, in-sample or known-parameter row, of a robust
/// (MCD) model, of a row to a group's centroid, a T² chart point, Box's M,
/// or a normality test's statistic. Each situation has a named constructor
/// that checks its parameters once; a value that exists is valid, also
/// after deserialization (which runs the same checks).
///
/// | constructor | situation | law of the statistic |
/// |---|---|---|
/// | [`chi_square`](Self::chi_square) | `d²`, location and scatter known | χ²(p) |
/// | [`in_sample`](Self::in_sample) | `d²` of one of the `n` fitting rows | `(n−1)²/n · Beta(p/2, (n−p−1)/2)` |
/// | [`new_row`](Self::new_row) | `d²` of a new row | `p(n+1)(n−1)/(n(n−p)) · F(p, n−p)` |
/// | [`raw_mcd`](Self::raw_mcd) | `d²` from a raw MCD estimate | `p m/(m−p+1) · F(p, m−p+1)`, Hardin–Rocke `m` |
/// | [`reweighted_mcd`](Self::reweighted_mcd) | `d²` from a reweighted MCD estimate | the same, simulated `m` |
/// | [`pooled_group`](Self::pooled_group) | `d²` of a new row to a group centroid, pooled scatter | `ν p (n_g+1)/((ν−p+1) n_g) · F(p, ν−p+1)` |
/// | [`phase_one_individuals`](Self::phase_one_individuals), [`phase_two_individuals`](Self::phase_two_individuals) | T² of an individual observation | as `in_sample`, `new_row` |
/// | [`phase_one_subgroups`](Self::phase_one_subgroups), [`phase_two_subgroups`](Self::phase_two_subgroups) | T² of a subgroup mean | `p(m∓1)(n−1)/(f−p+1) · F(p, f−p+1)` |
/// | [`box_m_chi_square`](Self::box_m_chi_square), [`box_m_f`](Self::box_m_f) | Box's M, scaled | χ², F |
/// | [`chi_square_statistic`](Self::chi_square_statistic), [`standard_normal_two_sided`](Self::standard_normal_two_sided), [`lognormal`](Self::lognormal) | test statistics | χ²(k), `|Z|`, lognormal |
/// | [`scaled_beta`](Self::scaled_beta), [`scaled_f`](Self::scaled_f) | any other scaled Beta or F law | as named |
///
/// The sources of each law are on the constructors and in the
/// [module documentation](super).
///
/// **Caution.** A p-value or cutoff is only as good as the assumption
/// behind its law (for distances: multivariate normal rows and a model that
/// fits them). A flag is evidence, not a verdict; local procedures and
/// qualified people decide what follows from it.
///
/// # Example
///
/// ```
/// use mvdist::calibration::{Law, Reference};
///
/// // A model fitted on 50 rows of 3 variables, scoring a new row.
/// let reference = Reference::new_row(50, 3)?;
/// let cutoff = reference.cutoff(0.01)?;
/// assert!((reference.p_value(cutoff) - 0.01).abs() < 1e-12);
/// // The law and its degrees of freedom.
/// assert!(matches!(reference.law(), Law::ScaledF { d1: 3.0, d2: 47.0, .. }));
/// assert_eq!(reference.degrees_of_freedom(), [3.0, 47.0]);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "Spec", into = "Spec")]
pub struct Reference {
    spec: Spec,
    law: Law,
}

/// Which situation a [`Reference`] was built for: one variant per named
/// constructor, for code that branches on it (a stable, fieldless kind).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
#[non_exhaustive]
pub enum ReferenceKind {
    /// [`Reference::chi_square`].
    ChiSquare,
    /// [`Reference::in_sample`].
    InSampleBeta,
    /// [`Reference::new_row`].
    NewRowF,
    /// [`Reference::raw_mcd`].
    RawMcdF,
    /// [`Reference::reweighted_mcd`].
    ReweightedMcdF,
    /// [`Reference::pooled_group`].
    PooledGroupF,
    /// [`Reference::phase_one_individuals`].
    PhaseOneIndividuals,
    /// [`Reference::phase_two_individuals`].
    PhaseTwoIndividuals,
    /// [`Reference::phase_one_subgroups`].
    PhaseOneSubgroups,
    /// [`Reference::phase_two_subgroups`].
    PhaseTwoSubgroups,
    /// [`Reference::box_m_chi_square`].
    BoxMChiSquare,
    /// [`Reference::box_m_f`].
    BoxMF,
    /// [`Reference::chi_square_statistic`].
    ChiSquareStatistic,
    /// [`Reference::standard_normal_two_sided`].
    StandardNormalTwoSided,
    /// [`Reference::lognormal`].
    Lognormal,
    /// [`Reference::scaled_beta`].
    ScaledBeta,
    /// [`Reference::scaled_f`].
    ScaledF,
}

impl ReferenceKind {
    /// A short plain-language name, for output and messages.
    pub fn name(self) -> &'static str {
        match self {
            ReferenceKind::ChiSquare => "chi-square",
            ReferenceKind::InSampleBeta => "in-sample Beta",
            ReferenceKind::NewRowF => "new-row F",
            ReferenceKind::RawMcdF => "Hardin-Rocke F (raw MCD)",
            ReferenceKind::ReweightedMcdF => "simulated Wishart F (reweighted MCD)",
            ReferenceKind::PooledGroupF => "pooled-scatter group F",
            ReferenceKind::PhaseOneIndividuals => "Phase I individuals Beta",
            ReferenceKind::PhaseTwoIndividuals => "Phase II individuals F",
            ReferenceKind::PhaseOneSubgroups => "Phase I subgroups F",
            ReferenceKind::PhaseTwoSubgroups => "Phase II subgroups F",
            ReferenceKind::BoxMChiSquare => "Box's chi-square approximation",
            ReferenceKind::BoxMF => "Box's F approximation",
            ReferenceKind::ChiSquareStatistic => "chi-square",
            ReferenceKind::StandardNormalTwoSided => "standard normal, two-sided",
            ReferenceKind::Lognormal => "lognormal",
            ReferenceKind::ScaledBeta => "scaled Beta",
            ReferenceKind::ScaledF => "scaled F",
        }
    }
}

/// The law of a [`Reference`], with its parameters: what p-values and
/// cutoffs are computed from. Read it with [`Reference::law`].
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "law", rename_all = "snake_case")]
#[non_exhaustive]
pub enum Law {
    /// χ² with `dof` degrees of freedom, upper tail.
    ChiSquare {
        /// Degrees of freedom.
        dof: f64,
    },
    /// `scale · Beta(a, b)`, supported on `[0, scale]`, upper tail.
    ScaledBeta {
        /// The multiplier (the largest possible value).
        scale: f64,
        /// First shape.
        a: f64,
        /// Second shape.
        b: f64,
    },
    /// `scale · F(d1, d2)`, upper tail.
    ScaledF {
        /// The multiplier.
        scale: f64,
        /// Numerator degrees of freedom.
        d1: f64,
        /// Denominator degrees of freedom.
        d2: f64,
    },
    /// The statistic is a standard normal `Z`; p-values are two-sided,
    /// `P(|Z| > |z|)`, and the cutoff is the positive `z`.
    StandardNormalTwoSided,
    /// `exp(N(mean_log, sd_log²))`, upper tail.
    Lognormal {
        /// Mean of the logarithm.
        mean_log: f64,
        /// Standard deviation of the logarithm.
        sd_log: f64,
    },
}

/// What a reference was built from: the serialized form, re-validated by
/// the constructors on the way in.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
enum Spec {
    ChiSquare {
        dim: usize,
    },
    InSampleBeta {
        n: usize,
        dim: usize,
        // Missing in data written before 0.2: unbiased.
        #[serde(default)]
        divisor: Divisor,
    },
    NewRowF {
        n: usize,
        dim: usize,
        #[serde(default)]
        divisor: Divisor,
    },
    RawMcdF {
        n: usize,
        dim: usize,
        subset_size: usize,
    },
    ReweightedMcdF {
        dim: usize,
        wishart_dof: f64,
    },
    PooledGroupF {
        group_rows: usize,
        total_rows: usize,
        groups: usize,
        dim: usize,
        divisor: Divisor,
    },
    PhaseOneIndividuals {
        observations: usize,
        dim: usize,
    },
    PhaseTwoIndividuals {
        observations: usize,
        dim: usize,
    },
    PhaseOneSubgroups {
        subgroups: usize,
        size: usize,
        dim: usize,
    },
    PhaseTwoSubgroups {
        subgroups: usize,
        size: usize,
        dim: usize,
    },
    BoxMChiSquare {
        groups: usize,
        dim: usize,
    },
    BoxMF {
        numerator_dof: f64,
        denominator_dof: f64,
    },
    ChiSquareStatistic {
        dof: f64,
    },
    StandardNormalTwoSided,
    Lognormal {
        mean_log: f64,
        sd_log: f64,
    },
    ScaledBeta {
        scale: f64,
        a: f64,
        b: f64,
    },
    ScaledF {
        scale: f64,
        d1: f64,
        d2: f64,
    },
}

impl TryFrom<Spec> for Reference {
    type Error = Error;
    fn try_from(spec: Spec) -> Result<Self> {
        Ok(Reference {
            law: law_of(&spec)?,
            spec,
        })
    }
}

impl From<Reference> for Spec {
    fn from(r: Reference) -> Self {
        r.spec
    }
}

fn at_least_one_variable(dim: usize) -> Result<()> {
    if dim == 0 {
        return Err(Error::invalid("dim", "at least one column is needed"));
    }
    Ok(())
}

fn enough_rows(rows: usize, needed: usize, dim: usize) -> Result<()> {
    if rows < needed {
        return Err(Error::TooFewRows {
            rows,
            needed,
            columns: dim,
        });
    }
    Ok(())
}

/// The factor that takes a squared distance measured with the given
/// divisor (`rows` rows, `lost` degrees of freedom lost to the location)
/// to the scale of the unbiased scatter the laws are stated for.
fn to_unbiased(divisor: Divisor, rows: usize, lost: usize) -> f64 {
    match divisor {
        Divisor::Unbiased => 1.0,
        Divisor::MaximumLikelihood => (rows - lost) as f64 / rows as f64,
    }
}

/// `(n−1)²/n · Beta(p/2, (n−p−1)/2)` on the unbiased scale.
fn in_sample_law(n: usize, dim: usize) -> Result<Law> {
    at_least_one_variable(dim)?;
    enough_rows(n, dim.saturating_add(2), dim)?;
    let (nf, p) = (n as f64, dim as f64);
    Ok(Law::ScaledBeta {
        scale: (nf - 1.0) * (nf - 1.0) / nf,
        a: 0.5 * p,
        b: 0.5 * (nf - p - 1.0),
    })
}

/// `p(n+1)(n−1)/(n(n−p)) · F(p, n−p)` on the unbiased scale.
fn new_row_law(n: usize, dim: usize) -> Result<Law> {
    at_least_one_variable(dim)?;
    enough_rows(n, dim.saturating_add(1), dim)?;
    let (nf, p) = (n as f64, dim as f64);
    Ok(Law::ScaledF {
        scale: p * (nf + 1.0) * (nf - 1.0) / (nf * (nf - p)),
        d1: p,
        d2: nf - p,
    })
}

fn wishart_law(dim: usize, m: f64) -> Result<Law> {
    let (_, scale) = scaled_wishart_f(dim, m)?;
    Ok(Law::ScaledF {
        scale,
        d1: dim as f64,
        d2: m - dim as f64 + 1.0,
    })
}

/// Divides the law's scale by `factor` (distances `1/factor` times the
/// unbiased ones).
fn rescaled(law: Law, factor: f64) -> Law {
    match law {
        Law::ScaledBeta { scale, a, b } => Law::ScaledBeta {
            scale: scale / factor,
            a,
            b,
        },
        Law::ScaledF { scale, d1, d2 } => Law::ScaledF {
            scale: scale / factor,
            d1,
            d2,
        },
        other => other,
    }
}

fn subgroup_law(subgroups: usize, size: usize, dim: usize, phase_one: bool) -> Result<Law> {
    at_least_one_variable(dim)?;
    if size < 2 {
        return Err(Error::invalid(
            "subgroup size",
            format!("{size}; subgroups need at least 2 rows for a within-subgroup scatter"),
        ));
    }
    let min_groups = if phase_one { 2 } else { 1 };
    if subgroups < min_groups {
        return Err(Error::invalid(
            "subgroups",
            format!("{subgroups}; at least {min_groups} are needed"),
        ));
    }
    let f = subgroups.saturating_mul(size - 1);
    if f < dim {
        let groups_needed = dim.div_ceil(size - 1).max(min_groups);
        return Err(Error::TooFewRows {
            rows: subgroups.saturating_mul(size),
            needed: groups_needed.saturating_mul(size),
            columns: dim,
        });
    }
    let (m, n, ff, p) = (subgroups as f64, size as f64, f as f64, dim as f64);
    let factor = if phase_one { m - 1.0 } else { m + 1.0 };
    Ok(Law::ScaledF {
        scale: p * factor * (n - 1.0) / (ff - p + 1.0),
        d1: p,
        d2: ff - p + 1.0,
    })
}

fn law_of(spec: &Spec) -> Result<Law> {
    match *spec {
        Spec::ChiSquare { dim } => {
            at_least_one_variable(dim)?;
            Ok(Law::ChiSquare { dof: dim as f64 })
        }
        Spec::InSampleBeta { n, dim, divisor } => {
            Ok(rescaled(in_sample_law(n, dim)?, to_unbiased(divisor, n, 1)))
        }
        Spec::NewRowF { n, dim, divisor } => {
            Ok(rescaled(new_row_law(n, dim)?, to_unbiased(divisor, n, 1)))
        }
        Spec::RawMcdF {
            n,
            dim,
            subset_size,
        } => wishart_law(dim, hardin_rocke_dof(n, dim, subset_size)?),
        Spec::ReweightedMcdF { dim, wishart_dof } => {
            at_least_one_variable(dim)?;
            if !(wishart_dof.is_finite() && wishart_dof > dim as f64 + 1.0) {
                return Err(Error::invalid(
                    "wishart_dof",
                    format!(
                        "{wishart_dof} is not a finite number above p + 1 = {}; \
                         use the χ² reference when no simulated value is available",
                        dim.saturating_add(1)
                    ),
                ));
            }
            wishart_law(dim, wishart_dof)
        }
        Spec::PooledGroupF {
            group_rows,
            total_rows,
            groups,
            dim,
            divisor,
        } => {
            at_least_one_variable(dim)?;
            if group_rows == 0 || groups == 0 || group_rows > total_rows {
                return Err(Error::invalid(
                    "group rows",
                    format!(
                        "a group of {group_rows} rows among {total_rows} rows in {groups} \
                         groups: each group needs at least one row and at most all of them"
                    ),
                ));
            }
            let nu = total_rows.saturating_sub(groups);
            if nu < dim {
                return Err(Error::TooFewRows {
                    rows: total_rows,
                    needed: dim.saturating_add(groups),
                    columns: dim,
                });
            }
            let (nu, p, ng) = (nu as f64, dim as f64, group_rows as f64);
            let law = Law::ScaledF {
                scale: nu * p * (ng + 1.0) / ((nu - p + 1.0) * ng),
                d1: p,
                d2: nu - p + 1.0,
            };
            Ok(rescaled(law, to_unbiased(divisor, total_rows, groups)))
        }
        Spec::PhaseOneIndividuals { observations, dim } => in_sample_law(observations, dim),
        Spec::PhaseTwoIndividuals { observations, dim } => new_row_law(observations, dim),
        Spec::PhaseOneSubgroups {
            subgroups,
            size,
            dim,
        } => subgroup_law(subgroups, size, dim, true),
        Spec::PhaseTwoSubgroups {
            subgroups,
            size,
            dim,
        } => subgroup_law(subgroups, size, dim, false),
        Spec::BoxMChiSquare { groups, dim } => {
            at_least_one_variable(dim)?;
            if groups < 2 {
                return Err(Error::invalid(
                    "groups",
                    format!("{groups}; Box's M compares at least 2 groups"),
                ));
            }
            let p = dim as f64;
            Ok(Law::ChiSquare {
                dof: p * (p + 1.0) * (groups as f64 - 1.0) / 2.0,
            })
        }
        Spec::BoxMF {
            numerator_dof,
            denominator_dof,
        } => {
            positive("numerator degrees of freedom", numerator_dof)?;
            positive("denominator degrees of freedom", denominator_dof)?;
            Ok(Law::ScaledF {
                scale: 1.0,
                d1: numerator_dof,
                d2: denominator_dof,
            })
        }
        Spec::ChiSquareStatistic { dof } => {
            positive("degrees of freedom", dof)?;
            Ok(Law::ChiSquare { dof })
        }
        Spec::StandardNormalTwoSided => Ok(Law::StandardNormalTwoSided),
        Spec::Lognormal { mean_log, sd_log } => {
            if !mean_log.is_finite() {
                return Err(Error::invalid(
                    "mean of the logarithm",
                    format!("{mean_log} is not a finite number"),
                ));
            }
            positive("standard deviation of the logarithm", sd_log)?;
            Ok(Law::Lognormal { mean_log, sd_log })
        }
        Spec::ScaledBeta { scale, a, b } => {
            positive("scale", scale)?;
            positive("first shape", a)?;
            positive("second shape", b)?;
            Ok(Law::ScaledBeta { scale, a, b })
        }
        Spec::ScaledF { scale, d1, d2 } => {
            positive("scale", scale)?;
            positive("numerator degrees of freedom", d1)?;
            positive("denominator degrees of freedom", d2)?;
            Ok(Law::ScaledF { scale, d1, d2 })
        }
    }
}

impl Reference {
    fn build(spec: Spec) -> Result<Self> {
        Reference::try_from(spec)
    }

    /// χ² with `dim` degrees of freedom: the law of `d²` when the location
    /// and scatter are the true parameters (textbook result; the large-`n`
    /// limit of [`in_sample`](Self::in_sample) and
    /// [`new_row`](Self::new_row)).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if `dim` is 0.
    ///
    /// # Example
    /// ```
    /// use mvdist::calibration::Reference;
    ///
    /// let chi2 = Reference::chi_square(2)?;
    /// // For two variables, P(χ² > x) = exp(-x/2).
    /// assert!((chi2.p_value(6.0) - (-3.0f64).exp()).abs() < 1e-15);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn chi_square(dim: usize) -> Result<Self> {
        Self::build(Spec::ChiSquare { dim })
    }

    /// The Beta law of `d²` for one of the `n` rows a classical model was
    /// fitted on (Gnanadesikan and Kettenring 1972):
    /// `n·d²/(n−1)² ~ Beta(p/2, (n−p−1)/2)`, with `d²` on the scale of the
    /// `n − 1` covariance (see [`with_divisor`](Self::with_divisor)).
    ///
    /// # Errors
    /// [`Error::TooFewRows`] unless `n > dim + 1`; [`Error::InvalidParameter`]
    /// if `dim` is 0.
    pub fn in_sample(n: usize, dim: usize) -> Result<Self> {
        Self::build(Spec::InSampleBeta {
            n,
            dim,
            divisor: Divisor::Unbiased,
        })
    }

    /// The F law of `d²` for a new row, independent of the `n` rows a
    /// classical model was fitted on (Tracy, Young and Mason 1992):
    /// `n(n−p)·d²/(p(n+1)(n−1)) ~ F(p, n−p)`, with `d²` on the scale of the
    /// `n − 1` covariance (see [`with_divisor`](Self::with_divisor)).
    ///
    /// # Errors
    /// [`Error::TooFewRows`] unless `n > dim`; [`Error::InvalidParameter`] if
    /// `dim` is 0.
    pub fn new_row(n: usize, dim: usize) -> Result<Self> {
        Self::build(Spec::NewRowF {
            n,
            dim,
            divisor: Divisor::Unbiased,
        })
    }

    /// The reference for rows of the given origin, for a classical model
    /// fitted on `n` rows of `dim` variables: [`new_row`](Self::new_row),
    /// [`in_sample`](Self::in_sample) or [`chi_square`](Self::chi_square).
    ///
    /// # Errors
    /// As those constructors.
    pub fn for_origin(origin: super::RowOrigin, n: usize, dim: usize) -> Result<Self> {
        match origin {
            super::RowOrigin::New => Self::new_row(n, dim),
            super::RowOrigin::InSample => Self::in_sample(n, dim),
            super::RowOrigin::KnownParameters => Self::chi_square(dim),
        }
    }

    /// The Hardin–Rocke F law of `d²` from a raw minimum covariance
    /// determinant estimate (consistency factor applied) of subset size
    /// `subset_size` from `n` rows, for rows independent of it:
    /// `(m−p+1)·d²/(p m) ~ F(p, m−p+1)`.
    ///
    /// The Wishart degrees of freedom `m` follow Hardin and Rocke (2005): an
    /// asymptotic value from the MCD's influence function (Croux and
    /// Haesbroeck 1999) times their simulated small-sample adjustment
    /// `exp(0.725 − 0.00663 p − 0.0780 ln n)`; [`wishart_dof`](Self::wishart_dof)
    /// reports it. Rows inside the MCD subset are closer to the centre than
    /// the law says.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if `dim` is 0, `subset_size` is not in
    /// `(dim, n]`, or no usable `m` results.
    ///
    /// # Example
    /// ```
    /// use mvdist::calibration::Reference;
    /// let r = Reference::raw_mcd(200, 5, 103)?;
    /// let m = r.wishart_dof().ok_or("the raw MCD reference has an m")?;
    /// assert!(m > 30.0 && m < 45.0);
    /// // The cutoff is well beyond the χ²(5) one at the same level.
    /// let chi2 = Reference::chi_square(5)?;
    /// assert!(r.cutoff(0.025)? > chi2.cutoff(0.025)?);
    /// # Ok::<(), Box<dyn std::error::Error>>(())
    /// ```
    pub fn raw_mcd(n: usize, dim: usize, subset_size: usize) -> Result<Self> {
        Self::build(Spec::RawMcdF {
            n,
            dim,
            subset_size,
        })
    }

    /// The F law of `d²` from a reweighted minimum covariance determinant
    /// estimate whose scatter behaves like a scaled Wishart with
    /// `wishart_dof` degrees of freedom `m`:
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
    /// use mvdist::calibration::{Law, Reference};
    /// let r = Reference::reweighted_mcd(3, 20.0)?;
    /// // 3·20/18 · F(3, 18).
    /// assert_eq!(r.law(), Law::ScaledF { scale: 60.0 / 18.0, d1: 3.0, d2: 18.0 });
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn reweighted_mcd(dim: usize, wishart_dof: f64) -> Result<Self> {
        Self::build(Spec::ReweightedMcdF { dim, wishart_dof })
    }

    /// The F law of a new row's `d²` to the centroid of its group of
    /// `group_rows` rows, measured with the scatter pooled over `groups`
    /// groups of `total_rows` rows in all (`ν = total_rows − groups`
    /// degrees of freedom, unbiased divisor `ν`):
    /// `(ν−p+1)·n_g·d² / (ν·p·(n_g+1)) ~ F(p, ν−p+1)`.
    ///
    /// For a new row `x` of group `g`, `x − x̄_g ~ N(0, (1 + 1/n_g) Σ)`
    /// independently of the pooled scatter `S`, and `ν S` is Wishart with
    /// `ν` degrees of freedom, so `n_g/(n_g+1) · d²` is Hotelling's T² with
    /// `ν` degrees of freedom (T. W. Anderson, *An Introduction to
    /// Multivariate Statistical Analysis*, 3rd ed., 2003, §5.2). With one
    /// group it is [`new_row`](Self::new_row). A group measured with its
    /// own scatter uses [`new_row`](Self::new_row) with its rows.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if `dim`, `groups` or `group_rows` is 0
    /// or `group_rows > total_rows`; [`Error::TooFewRows`] unless
    /// `total_rows − groups ≥ dim`.
    ///
    /// # Example
    /// ```
    /// use mvdist::calibration::Reference;
    /// let pooled = Reference::pooled_group(30, 30, 1, 3)?;
    /// let plain = Reference::new_row(30, 3)?;
    /// assert!((pooled.p_value(7.0) - plain.p_value(7.0)).abs() < 1e-14);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn pooled_group(
        group_rows: usize,
        total_rows: usize,
        groups: usize,
        dim: usize,
    ) -> Result<Self> {
        Self::build(Spec::PooledGroupF {
            group_rows,
            total_rows,
            groups,
            dim,
            divisor: Divisor::Unbiased,
        })
    }

    /// The Phase I law of an individual observation's T² on a chart whose
    /// estimate holds it, from `observations` observations (Tracy, Young
    /// and Mason 1992; NIST/SEMATECH e-Handbook §6.5.4.3): the law of
    /// [`in_sample`](Self::in_sample).
    ///
    /// # Errors
    /// [`Error::TooFewRows`] unless `m ≥ p + 2`; [`Error::InvalidParameter`]
    /// if `p = 0`.
    pub fn phase_one_individuals(observations: usize, dim: usize) -> Result<Self> {
        Self::build(Spec::PhaseOneIndividuals { observations, dim })
    }

    /// The Phase II law of a new individual observation's T² (Tracy, Young
    /// and Mason 1992; NIST/SEMATECH e-Handbook §6.5.4.3): the law of
    /// [`new_row`](Self::new_row).
    ///
    /// # Errors
    /// [`Error::TooFewRows`] unless `m ≥ p + 1`; [`Error::InvalidParameter`]
    /// if `p = 0`.
    pub fn phase_two_individuals(observations: usize, dim: usize) -> Result<Self> {
        Self::build(Spec::PhaseTwoIndividuals { observations, dim })
    }

    /// The Phase I law of a subgroup mean's T² from `subgroups` subgroups
    /// of `size` rows, `f = m(n − 1)` (Alt 1985; NIST/SEMATECH e-Handbook
    /// §6.5.4.3; an approximation): `p(m−1)(n−1)/(f−p+1) · F(p, f−p+1)`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `n ≥ 2`, `m ≥ 2` and `p ≥ 1`;
    /// [`Error::TooFewRows`] unless `m(n − 1) ≥ p`.
    pub fn phase_one_subgroups(subgroups: usize, size: usize, dim: usize) -> Result<Self> {
        Self::build(Spec::PhaseOneSubgroups {
            subgroups,
            size,
            dim,
        })
    }

    /// The Phase II law of a new subgroup mean's T² (Alt 1985; exact under
    /// normality): `p(m+1)(n−1)/(f−p+1) · F(p, f−p+1)`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `n ≥ 2`, `m ≥ 1` and `p ≥ 1`;
    /// [`Error::TooFewRows`] unless `m(n − 1) ≥ p`.
    pub fn phase_two_subgroups(subgroups: usize, size: usize, dim: usize) -> Result<Self> {
        Self::build(Spec::PhaseTwoSubgroups {
            subgroups,
            size,
            dim,
        })
    }

    /// Box's χ² approximation for `(1 − c₁) M` comparing the scatters of
    /// `groups` groups of `dim` variables: χ² with `p(p+1)(g−1)/2` degrees
    /// of freedom (Box 1949).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `groups ≥ 2` and `dim ≥ 1`.
    pub fn box_m_chi_square(groups: usize, dim: usize) -> Result<Self> {
        Self::build(Spec::BoxMChiSquare { groups, dim })
    }

    /// Box's F approximation for his scaled M statistic (Box 1949), with the
    /// degrees of freedom computed from the group sizes by
    /// [`crate::mean_tests::scatter_equality`].
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless both degrees of freedom are finite
    /// and positive.
    pub fn box_m_f(numerator_dof: f64, denominator_dof: f64) -> Result<Self> {
        Self::build(Spec::BoxMF {
            numerator_dof,
            denominator_dof,
        })
    }

    /// χ² with `dof` (not necessarily whole) degrees of freedom, for a test
    /// statistic.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `dof` is finite and positive.
    ///
    /// # Example
    /// ```
    /// use mvdist::calibration::Reference;
    /// let c = Reference::chi_square_statistic(2.0)?;
    /// assert!((c.p_value(2.0) - (-1.0f64).exp()).abs() < 1e-15);
    /// assert!((c.cutoff(0.05)? - 5.991464547107979).abs() < 1e-13);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn chi_square_statistic(dof: f64) -> Result<Self> {
        Self::build(Spec::ChiSquareStatistic { dof })
    }

    /// The standard normal law for a statistic `z`, referred two-sided:
    /// the p-value is `P(|Z| > |z|)` and the cutoff the positive `z` with
    /// that probability.
    pub fn standard_normal_two_sided() -> Self {
        Reference {
            spec: Spec::StandardNormalTwoSided,
            law: Law::StandardNormalTwoSided,
        }
    }

    /// The lognormal law `exp(N(mean_log, sd_log²))`, upper tail.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `mean_log` is finite and `sd_log`
    /// finite and positive.
    pub fn lognormal(mean_log: f64, sd_log: f64) -> Result<Self> {
        Self::build(Spec::Lognormal { mean_log, sd_log })
    }

    /// `scale · Beta(a, b)`, for laws without a named constructor (the
    /// decomposition terms of a T² chart, for instance).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless all three are finite and positive.
    ///
    /// # Example
    /// ```
    /// use mvdist::calibration::Reference;
    /// // Beta(2, 1) has P(X > x) = 1 − x²; scaled by 4: P(4X > 2) = 3/4.
    /// let d = Reference::scaled_beta(4.0, 2.0, 1.0)?;
    /// assert!((d.p_value(2.0) - 0.75).abs() < 1e-15);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn scaled_beta(scale: f64, a: f64, b: f64) -> Result<Self> {
        Self::build(Spec::ScaledBeta { scale, a, b })
    }

    /// `scale · F(d1, d2)`, for laws without a named constructor.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless all three are finite and positive.
    ///
    /// # Example
    /// ```
    /// use mvdist::calibration::Reference;
    /// // F(2, 2) has P(X > x) = 1/(1 + x); scaled by 3: P(3X > 9) = 1/4.
    /// let d = Reference::scaled_f(3.0, 2.0, 2.0)?;
    /// assert!((d.p_value(9.0) - 0.25).abs() < 1e-15);
    /// assert!((d.cutoff(0.25)? - 9.0).abs() < 1e-12);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn scaled_f(scale: f64, d1: f64, d2: f64) -> Result<Self> {
        Self::build(Spec::ScaledF { scale, d1, d2 })
    }

    /// The same reference for squared distances measured with a scatter of
    /// the given divisor. The Beta and F laws of
    /// [`in_sample`](Self::in_sample), [`new_row`](Self::new_row) and
    /// [`pooled_group`](Self::pooled_group) are stated for the unbiased
    /// scatter; with the maximum-likelihood divisor every squared distance
    /// is `n/(n − 1)` (pooled: `n/(n − G)`) times larger, and the law's scale
    /// grows with it. Other references are unchanged.
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
        let spec = match self.spec {
            Spec::InSampleBeta { n, dim, .. } => Spec::InSampleBeta { n, dim, divisor },
            Spec::NewRowF { n, dim, .. } => Spec::NewRowF { n, dim, divisor },
            Spec::PooledGroupF {
                group_rows,
                total_rows,
                groups,
                dim,
                ..
            } => Spec::PooledGroupF {
                group_rows,
                total_rows,
                groups,
                dim,
                divisor,
            },
            _ => return self,
        };
        // The parameters were valid with one divisor, so they are with the
        // other (the divisor changes only the scale).
        Reference::try_from(spec).unwrap_or(self)
    }

    /// Which situation this reference was built for.
    pub fn kind(&self) -> ReferenceKind {
        match self.spec {
            Spec::ChiSquare { .. } => ReferenceKind::ChiSquare,
            Spec::InSampleBeta { .. } => ReferenceKind::InSampleBeta,
            Spec::NewRowF { .. } => ReferenceKind::NewRowF,
            Spec::RawMcdF { .. } => ReferenceKind::RawMcdF,
            Spec::ReweightedMcdF { .. } => ReferenceKind::ReweightedMcdF,
            Spec::PooledGroupF { .. } => ReferenceKind::PooledGroupF,
            Spec::PhaseOneIndividuals { .. } => ReferenceKind::PhaseOneIndividuals,
            Spec::PhaseTwoIndividuals { .. } => ReferenceKind::PhaseTwoIndividuals,
            Spec::PhaseOneSubgroups { .. } => ReferenceKind::PhaseOneSubgroups,
            Spec::PhaseTwoSubgroups { .. } => ReferenceKind::PhaseTwoSubgroups,
            Spec::BoxMChiSquare { .. } => ReferenceKind::BoxMChiSquare,
            Spec::BoxMF { .. } => ReferenceKind::BoxMF,
            Spec::ChiSquareStatistic { .. } => ReferenceKind::ChiSquareStatistic,
            Spec::StandardNormalTwoSided => ReferenceKind::StandardNormalTwoSided,
            Spec::Lognormal { .. } => ReferenceKind::Lognormal,
            Spec::ScaledBeta { .. } => ReferenceKind::ScaledBeta,
            Spec::ScaledF { .. } => ReferenceKind::ScaledF,
        }
    }

    /// The law and its parameters (degrees of freedom, shapes, scale).
    pub fn law(&self) -> Law {
        self.law
    }

    /// The degrees of freedom of the law: `[k]` for χ²(k), `[d1, d2]` for
    /// a scaled F, empty for the Beta (see [`law`](Self::law) for its
    /// shapes), normal and lognormal laws.
    ///
    /// # Example
    /// ```
    /// use mvdist::calibration::Reference;
    /// assert_eq!(Reference::new_row(30, 4)?.degrees_of_freedom(), [4.0, 26.0]);
    /// assert_eq!(Reference::box_m_chi_square(3, 2)?.degrees_of_freedom(), [6.0]);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn degrees_of_freedom(&self) -> Vec<f64> {
        match self.law {
            Law::ChiSquare { dof } => vec![dof],
            Law::ScaledF { d1, d2, .. } => vec![d1, d2],
            _ => Vec::new(),
        }
    }

    /// The multiplier of a scaled Beta or F law; 1 for the other laws.
    pub fn scale(&self) -> f64 {
        match self.law {
            Law::ScaledBeta { scale, .. } | Law::ScaledF { scale, .. } => scale,
            _ => 1.0,
        }
    }

    /// The Wishart degrees of freedom `m` of a raw or reweighted MCD
    /// reference; `None` for the other kinds.
    pub fn wishart_dof(&self) -> Option<f64> {
        match self.spec {
            Spec::RawMcdF {
                n,
                dim,
                subset_size,
            } => hardin_rocke_dof(n, dim, subset_size).ok(),
            Spec::ReweightedMcdF { wishart_dof, .. } => Some(wishart_dof),
            _ => None,
        }
    }

    /// The number of variables `p` of a reference for squared distances or
    /// T² points; `None` for the test-statistic and general kinds.
    pub fn dim(&self) -> Option<usize> {
        match self.spec {
            Spec::ChiSquare { dim }
            | Spec::InSampleBeta { dim, .. }
            | Spec::NewRowF { dim, .. }
            | Spec::RawMcdF { dim, .. }
            | Spec::ReweightedMcdF { dim, .. }
            | Spec::PooledGroupF { dim, .. }
            | Spec::PhaseOneIndividuals { dim, .. }
            | Spec::PhaseTwoIndividuals { dim, .. }
            | Spec::PhaseOneSubgroups { dim, .. }
            | Spec::PhaseTwoSubgroups { dim, .. } => Some(dim),
            _ => None,
        }
    }

    /// Lower and upper tail probabilities of `x`.
    fn tails(&self, x: f64) -> (f64, f64) {
        if x.is_nan() {
            return (f64::NAN, f64::NAN);
        }
        match self.law {
            Law::ChiSquare { dof } => ChiSquared::new(dof).map_or((f64::NAN, f64::NAN), |c| {
                if x <= 0.0 {
                    (0.0, 1.0)
                } else {
                    c.tails(x)
                }
            }),
            Law::ScaledBeta { scale, a, b } => match BetaDistribution::new(a, b) {
                _ if x <= 0.0 => (0.0, 1.0),
                _ if x >= scale => (1.0, 0.0),
                Ok(d) => d.tails_with_complement(x / scale, (scale - x) / scale),
                Err(_) => (f64::NAN, f64::NAN),
            },
            Law::ScaledF { scale, d1, d2 } => {
                FDistribution::new(d1, d2).map_or((f64::NAN, f64::NAN), |f| f.tails(x / scale))
            }
            Law::StandardNormalTwoSided => {
                if x.is_infinite() {
                    (1.0, 0.0)
                } else {
                    gamma_tails(0.5, 0.5 * x * x)
                }
            }
            Law::Lognormal { mean_log, sd_log } => {
                if x <= 0.0 {
                    return (0.0, 1.0);
                }
                let z = (x.ln() - mean_log) / sd_log;
                (normal::upper_tail(-z), normal::upper_tail(z))
            }
        }
    }

    /// Upper tail probability `P(X > x)`: the p-value of a statistic `x`
    /// (for [`standard_normal_two_sided`](Self::standard_normal_two_sided),
    /// `P(|Z| > |x|)`). NaN for NaN input.
    pub fn p_value(&self, x: f64) -> f64 {
        if x.is_nan() {
            return f64::NAN;
        }
        // The upper tails alone, where a finite sum gives them faster than
        // the pair of tails (even degrees of freedom; see the distributions).
        match self.law {
            Law::ChiSquare { dof } => match ChiSquared::new(dof) {
                Ok(c) if x > 0.0 => c.sf(x),
                _ => self.tails(x).1,
            },
            Law::ScaledBeta { scale, a, b } => match BetaDistribution::new(a, b) {
                Ok(d) if x > 0.0 && x < scale => {
                    d.sf_with_complement(x / scale, (scale - x) / scale)
                }
                _ => self.tails(x).1,
            },
            Law::ScaledF { scale, d1, d2 } => {
                FDistribution::new(d1, d2).map_or(f64::NAN, |f| f.sf(x / scale))
            }
            _ => self.tails(x).1,
        }
    }

    /// Lower tail probability `P(X ≤ x)`, `1 − p_value(x)` computed
    /// without cancellation.
    pub fn cdf(&self, x: f64) -> f64 {
        self.tails(x).0
    }

    /// The largest value the statistic can take: the scale of a Beta law
    /// (`(n−1)²/n` for in-sample squared distances on the unbiased scale),
    /// infinity otherwise.
    pub fn upper_bound(&self) -> f64 {
        match self.law {
            Law::ScaledBeta { scale, .. } => scale,
            _ => f64::INFINITY,
        }
    }

    /// The value whose upper tail probability is `alpha`: statistics above
    /// the cutoff have p-values below `alpha`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`;
    /// [`Error::NotRepresentable`] if the cutoff is beyond the largest
    /// finite number.
    pub fn cutoff(&self, alpha: f64) -> Result<f64> {
        check_probability(alpha)?;
        let c = match self.law {
            Law::ChiSquare { dof } => ChiSquared::new(dof)?.isf(alpha)?,
            // x itself, not 1 − (1 − x): near α → 1 the quantile is tiny
            // and its complement carries none of its digits.
            Law::ScaledBeta { scale, a, b } => {
                scale * BetaDistribution::new(a, b)?.isf_with_complement(alpha)?.0
            }
            Law::ScaledF { scale, d1, d2 } => scale * FDistribution::new(d1, d2)?.isf(alpha)?,
            Law::StandardNormalTwoSided => -normal::quantile(0.5 * alpha),
            Law::Lognormal { mean_log, sd_log } => {
                (mean_log - sd_log * normal::quantile(alpha)).exp()
            }
        };
        if c.is_finite() {
            Ok(c)
        } else {
            Err(Error::NotRepresentable {
                reason: format!(
                    "the cutoff for alpha = {alpha} of the {} reference",
                    self.kind().name()
                ),
            })
        }
    }
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
            Reference::pooled_group(12, 40, 3, 4).unwrap(),
            Reference::phase_one_subgroups(20, 5, 3).unwrap(),
            Reference::lognormal(0.3, 0.8).unwrap(),
            Reference::standard_normal_two_sided(),
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
    fn normal_and_lognormal_tails() {
        // Standard normal table values (common practice): P(|Z| > 1.96) ≈
        // 0.0499958, the 5% two-sided point 1.959964.
        let z = Reference::standard_normal_two_sided();
        assert!((z.p_value(1.959_963_984_540_054) - 0.05).abs() < 1e-15);
        assert!((z.p_value(-1.959_963_984_540_054) - 0.05).abs() < 1e-15);
        assert!((z.cutoff(0.05).unwrap() - 1.959_963_984_540_054).abs() < 1e-14);
        // A lognormal exceeds e^{μ} with probability 1/2.
        let l = Reference::lognormal(0.7, 1.3).unwrap();
        assert!((l.p_value(0.7f64.exp()) - 0.5).abs() < 1e-15);
        assert_eq!(l.p_value(0.0), 1.0);
    }

    #[test]
    fn invalid_parameters_are_errors() {
        assert!(Reference::chi_square(0).is_err());
        assert!(Reference::in_sample(4, 3).is_err());
        assert!(Reference::new_row(3, 3).is_err());
        assert!(Reference::pooled_group(5, 5, 3, 3).is_err());
        assert!(Reference::pooled_group(0, 20, 2, 3).is_err());
        assert!(Reference::pooled_group(5, 20, 2, 0).is_err());
        assert!(Reference::box_m_chi_square(1, 3).is_err());
        assert!(Reference::lognormal(0.0, 0.0).is_err());
        assert!(Reference::scaled_f(-1.0, 2.0, 2.0).is_err());
        let r = Reference::chi_square(3).unwrap();
        for bad in [0.0, 1.0, -0.1, f64::NAN, 2.0] {
            assert!(r.cutoff(bad).is_err());
        }
    }

    #[test]
    fn deserialization_validates_and_reads_the_old_form() {
        // The form written before the unified type still reads.
        let old = r#"{"kind":"new_row_f","n":30,"dim":3}"#;
        let r: Reference = serde_json::from_str(old).unwrap();
        assert_eq!(r, Reference::new_row(30, 3).unwrap());
        let bad = r#"{"kind":"new_row_f","n":3,"dim":3}"#;
        assert!(serde_json::from_str::<Reference>(bad).is_err());
        let round = serde_json::to_string(&Reference::pooled_group(9, 30, 3, 2).unwrap()).unwrap();
        let back: Reference = serde_json::from_str(&round).unwrap();
        assert_eq!(back, Reference::pooled_group(9, 30, 3, 2).unwrap());
    }

    #[test]
    fn pooled_group_with_one_group_is_the_new_row_reference() {
        for (n, p) in [(10, 2), (50, 7), (1000, 16)] {
            let pooled = Reference::pooled_group(n, n, 1, p).unwrap();
            let plain = Reference::new_row(n, p).unwrap();
            for d2 in [0.5, 3.0, 20.0, 80.0] {
                let (a, b) = (pooled.p_value(d2), plain.p_value(d2));
                assert!(
                    (a - b).abs() <= 1e-13 * b.max(1e-300),
                    "{n} {p} {d2}: {a} {b}"
                );
            }
        }
    }
}
