//! Typicality: how usual a row is for one group, as a p-value.
//!
//! The posterior probabilities of a classifier say which group a row most
//! likely belongs to *if it belongs to one of them*; they stay near 1 for a
//! row far from every group. Typicality answers the other question: would a
//! new row from this group lie this far from its centroid? It is the upper
//! tail probability of the row's squared distance to the group's centroid,
//! under multivariate normality of the group.
//!
//! The statistics and their references are on [`TypicalityReference`].
//!
//! **Caution.** Typicality assumes that each group is multivariate normal
//! with the modelled scatter; a low value is evidence for a closer look,
//! not a verdict.

use crate::calibration::{FDistribution, Reference};
use crate::error::{Error, Result};

/// The distribution of a new row's squared distance to its group's
/// centroid, under the scatter the classification rule uses for that group.
///
/// | rule | scatter of group `g` | statistic | distribution |
/// |---|---|---|---|
/// | quadratic | its own, `n_g − 1` divisor | `n_g(n_g−p)·d² / (p(n_g+1)(n_g−1))` | F(p, n_g − p) |
/// | linear | pooled, `ν = n − G` divisor | `(ν−p+1)·n_g·d² / (ν·p·(n_g+1))` | F(p, ν − p + 1) |
///
/// The quadratic case is the new-row reference of
/// [`Reference::new_row`](crate::calibration::Reference::new_row) with the
/// group's `n_g` rows. The linear case follows from the same argument with
/// the pooled scatter: for a new row `x` of group `g`,
/// `x − x̄_g ~ N(0, (1 + 1/n_g) Σ)` independently of the pooled scatter
/// `S`, and `ν S` is Wishart with `ν` degrees of freedom, so
/// `T² = n_g/(n_g+1) · d²` is Hotelling's T² with `ν` degrees of freedom and
/// `(ν−p+1)/(ν p) · T² ~ F(p, ν−p+1)` (T. W. Anderson, *An Introduction to
/// Multivariate Statistical Analysis*, 3rd ed., 2003, §5.2). With one group
/// (`ν = n − 1`) it reduces to the new-row reference.
///
/// The formulas are stated for the unbiased divisors; a classifier fitted with
/// [`Divisor::MaximumLikelihood`](crate::Divisor::MaximumLikelihood)
/// returns references adjusted to its (larger) distances.
///
/// # Example
/// ```
/// use mvdist::classification::TypicalityReference;
/// use mvdist::calibration::Reference;
///
/// // One group of 30 rows and pooled degrees of freedom 29 is the plain
/// // new-row reference.
/// let pooled = TypicalityReference::pooled_scatter(30, 29, 3)?;
/// let own = TypicalityReference::own_scatter(30, 3)?;
/// let plain = Reference::new_row(30, 3)?;
/// assert!((pooled.p_value(7.0) - plain.p_value(7.0)).abs() < 1e-14);
/// assert!((own.p_value(7.0) - plain.p_value(7.0)).abs() < 1e-14);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TypicalityReference {
    kind: Kind,
    /// The squared distance under the unbiased scatter per unit of the
    /// squared distance the classifier reports.
    to_unbiased: f64,
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    /// The group's own scatter: the new-row reference with its rows.
    Own(Reference),
    /// The pooled scatter: `d² = per_unit · F`, `F ~ F(p, ν − p + 1)`.
    Pooled {
        distribution: FDistribution,
        per_unit: f64,
    },
}

impl TypicalityReference {
    /// The reference for a group of `group_rows` rows with its own scatter
    /// (`n_g − 1` divisor) of `dim` variables.
    ///
    /// # Errors
    /// As [`Reference::new_row`]: [`Error::TooFewRows`] unless
    /// `group_rows > dim`.
    pub fn own_scatter(group_rows: usize, dim: usize) -> Result<Self> {
        Ok(TypicalityReference {
            kind: Kind::Own(Reference::new_row(group_rows, dim)?),
            to_unbiased: 1.0,
        })
    }

    /// The reference for a group of `group_rows` rows measured with a
    /// pooled scatter on `pooled_dof` degrees of freedom (`n − G` for `n`
    /// rows in `G` groups, the divisor of the scatter) of `dim` variables.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if `dim` or `group_rows` is 0;
    /// [`Error::TooFewRows`] unless `pooled_dof ≥ dim`.
    pub fn pooled_scatter(group_rows: usize, pooled_dof: usize, dim: usize) -> Result<Self> {
        if dim == 0 {
            return Err(Error::invalid(
                "dim",
                "the number of variables must be at least 1",
            ));
        }
        if group_rows == 0 {
            return Err(Error::invalid(
                "group rows",
                "a group needs at least one row",
            ));
        }
        if pooled_dof < dim {
            return Err(Error::TooFewRows {
                rows: pooled_dof,
                needed: dim,
                columns: dim,
            });
        }
        let (nu, p, ng) = (pooled_dof as f64, dim as f64, group_rows as f64);
        let distribution = FDistribution::new(p, nu - p + 1.0)?;
        Ok(TypicalityReference {
            kind: Kind::Pooled {
                distribution,
                per_unit: nu * p * (ng + 1.0) / ((nu - p + 1.0) * ng),
            },
            to_unbiased: 1.0,
        })
    }

    /// The same reference for distances measured with a scatter whose
    /// divisor is `1 / factor` times the unbiased one (`d²_unbiased =
    /// factor · d²`).
    pub(crate) fn for_scaled_distances(mut self, factor: f64) -> Self {
        self.to_unbiased = factor;
        self
    }

    /// The typicality of a row with squared distance `d2` to the group's
    /// centroid: `P(D² > d2)` for a new row of the group. NaN for NaN.
    pub fn p_value(&self, d2: f64) -> f64 {
        let d2 = d2 * self.to_unbiased;
        match self.kind {
            Kind::Own(r) => r.p_value(d2),
            Kind::Pooled {
                distribution,
                per_unit,
            } => distribution.sf(d2 / per_unit),
        }
    }

    /// The squared distance whose typicality is `alpha`: rows with a larger
    /// `d²` have typicality below `alpha`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn cutoff(&self, alpha: f64) -> Result<f64> {
        let c = match self.kind {
            Kind::Own(r) => r.cutoff(alpha)?,
            Kind::Pooled {
                distribution,
                per_unit,
            } => distribution.isf(alpha)? * per_unit,
        } / self.to_unbiased;
        if c.is_finite() {
            Ok(c)
        } else {
            Err(Error::invalid(
                "alpha",
                format!("the cutoff for alpha = {alpha} is beyond the largest finite number"),
            ))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pooled_reference_with_one_group_is_the_new_row_reference() {
        for (n, p) in [(10, 2), (50, 7), (1000, 16)] {
            let pooled = TypicalityReference::pooled_scatter(n, n - 1, p).unwrap();
            let plain = Reference::new_row(n, p).unwrap();
            for d2 in [0.5, 3.0, 20.0, 80.0] {
                let (a, b) = (pooled.p_value(d2), plain.p_value(d2));
                assert!(
                    (a - b).abs() <= 1e-13 * b.max(1e-300),
                    "{n} {p} {d2}: {a} {b}"
                );
            }
            let c = pooled.cutoff(0.01).unwrap();
            assert!((c - plain.cutoff(0.01).unwrap()).abs() < 1e-9 * c);
        }
    }

    #[test]
    fn invalid_pooled_parameters() {
        assert!(TypicalityReference::pooled_scatter(5, 2, 3).is_err());
        assert!(TypicalityReference::pooled_scatter(0, 20, 3).is_err());
        assert!(TypicalityReference::pooled_scatter(5, 20, 0).is_err());
        assert!(TypicalityReference::own_scatter(3, 3).is_err());
    }
}
