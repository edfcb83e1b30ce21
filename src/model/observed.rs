//! Rows with empty cells, scored on their observed coordinates (see
//! [`DistanceModel::score_observed`]).

use super::DistanceModel;
use crate::calibration::{check_probability, Reference, RowOrigin};
use crate::data::Rows;
use crate::error::{Error, Result};
use crate::explain::{contributions, ContributionOrder, Contributions};
use crate::scatter::Scatter;
use ndarray::ArrayView2;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::collections::HashMap;

/// Squared distances and p-values of rows that may have empty cells.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ObservedScores {
    /// The squared distance of each row on its observed variables.
    pub squared_distances: Vec<f64>,
    /// The p-value of each row under the model's law with as many
    /// variables as the row had observed.
    pub p_values: Vec<f64>,
    /// How many variables of each row were observed.
    pub observed: Vec<usize>,
    /// The number of distinct patterns of empty cells in the batch.
    pub patterns: usize,
}

/// The score of one row that may have empty cells.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct ObservedRowScore {
    /// Squared distance on the observed variables.
    pub squared_distance: f64,
    /// p-value under the law with `observed` variables.
    pub p_value: f64,
    /// Whether `p_value ≤ alpha`.
    pub flagged: bool,
    /// How many variables were observed.
    pub observed: usize,
}

/// Per-variable terms of a row with empty cells, on its observed variables.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ObservedContributionsData")]
pub struct ObservedContributions {
    observed: Vec<usize>,
    contributions: Contributions,
}

/// The serialized form, checked on the way in: one observed column per term.
#[derive(Deserialize)]
struct ObservedContributionsData {
    observed: Vec<usize>,
    contributions: Contributions,
}

impl TryFrom<ObservedContributionsData> for ObservedContributions {
    type Error = Error;
    fn try_from(d: ObservedContributionsData) -> Result<Self> {
        if d.observed.len() != d.contributions.terms().len() {
            return Err(Error::Format {
                reason: format!(
                    "{} observed columns but {} terms",
                    d.observed.len(),
                    d.contributions.terms().len()
                ),
            });
        }
        Ok(ObservedContributions {
            observed: d.observed,
            contributions: d.contributions,
        })
    }
}

impl ObservedContributions {
    /// The observed variables (model columns), in increasing order.
    pub fn observed(&self) -> &[usize] {
        &self.observed
    }

    /// The terms over the observed variables; its indices are positions in
    /// [`observed`](Self::observed): use [`in_order`](Self::in_order) for
    /// model columns.
    pub fn contributions(&self) -> &Contributions {
        &self.contributions
    }

    /// `(model column, term)` pairs in conditioning order.
    pub fn in_order(&self) -> Vec<(usize, f64)> {
        self.contributions
            .in_order()
            .into_iter()
            .map(|(k, t)| (self.observed[k], t))
            .collect()
    }

    /// The model column with the largest term.
    pub fn top_variable(&self) -> usize {
        self.observed[self.contributions.top_variable()]
    }

    /// The sum of the terms: the squared distance on the observed variables.
    pub fn total(&self) -> f64 {
        self.contributions.total()
    }
}

/// One pattern of observed variables: their columns, the sub-location, the
/// sub-scatter and the reference with `|o|` variables.
struct Pattern {
    columns: Vec<usize>,
    location: Vec<f64>,
    scatter: Scatter,
    reference: Reference,
}

impl Pattern {
    /// The observed cells of `x`, centred at the sub-location.
    fn centred(&self, x: impl Fn(usize) -> f64) -> Vec<f64> {
        let mut c = Vec::with_capacity(self.columns.len());
        self.centred_into(x, &mut c);
        c
    }

    /// As [`centred`](Self::centred), into a reused buffer.
    fn centred_into(&self, x: impl Fn(usize) -> f64, c: &mut Vec<f64>) {
        c.clear();
        c.extend(
            self.columns
                .iter()
                .zip(&self.location)
                .map(|(&j, &m)| x(j) - m),
        );
    }
}

/// The observed columns of a row (NaN = empty); an infinite value is an
/// error, a row with nothing observed too.
fn observed_columns(x: &[f64], row: usize) -> Result<Vec<usize>> {
    let mut columns = Vec::with_capacity(x.len());
    for (j, &v) in x.iter().enumerate() {
        if v.is_nan() {
            continue;
        }
        if !v.is_finite() {
            return Err(Error::NonFinite {
                row,
                column: j,
                value: v,
            });
        }
        columns.push(j);
    }
    if columns.is_empty() {
        return Err(crate::data::no_observed_value(row));
    }
    Ok(columns)
}

impl DistanceModel {
    fn pattern(&self, columns: Vec<usize>, origin: RowOrigin) -> Result<Pattern> {
        let p = self.dim();
        let k = columns.len();
        let reference = self.reference_in(origin, k)?;
        if k == p {
            return Ok(Pattern {
                columns,
                location: self.location.clone(),
                scatter: self.scatter.clone(),
                reference,
            });
        }
        let full = self.scatter.matrix_slice();
        let mut sub = Vec::with_capacity(k * k);
        for &a in &columns {
            for &b in &columns {
                sub.push(full[a * p + b]);
            }
        }
        // A principal sub-matrix of a positive definite matrix is positive
        // definite; the check can only fail by rounding on a scatter at the
        // edge of collinearity.
        // Errors name the column of the model, not of the sub-matrix.
        let scatter = Scatter::from_row_major(&sub, k).map_err(|e| match e {
            Error::Collinear {
                column,
                residual_fraction,
            } => Error::Collinear {
                column: columns[column.min(k - 1)],
                residual_fraction,
            },
            Error::NotPositiveDefinite { column } => Error::NotPositiveDefinite {
                column: columns[column.min(k - 1)],
            },
            Error::ZeroVariance { column } => Error::ZeroVariance {
                column: columns[column.min(k - 1)],
            },
            other => other,
        })?;
        let location = columns.iter().map(|&j| self.location[j]).collect();
        Ok(Pattern {
            columns,
            location,
            scatter,
            reference,
        })
    }

    /// Scores one row whose empty cells are NaN, on its observed variables
    /// (see [`score_observed`](Self::score_observed)). A complete row scores as in
    /// [`score_row`](Self::score_row).
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a row of the wrong length;
    /// [`Error::NonFinite`] for an infinite value; [`Error::InvalidParameter`]
    /// for a row with every cell empty or an `alpha` outside (0, 1); the
    /// errors of [`reference`](Self::reference).
    ///
    /// # Example
    /// ```
    /// use mvdist::{DistanceModel, RowOrigin};
    /// use ndarray::array;
    /// let rows = array![[1.0, 2.0, 0.5], [2.0, 2.9, 1.1], [3.0, 4.2, 0.7], [4.0, 4.8, 1.6],
    ///                   [5.0, 6.1, 1.2], [2.5, 3.0, 0.9], [3.5, 4.4, 1.4]];
    /// let model = DistanceModel::fit(rows.view())?;
    /// let scored = model.score_row_observed(&[3.0, f64::NAN, 1.0], RowOrigin::New, 0.01)?;
    /// assert_eq!(scored.observed, 2);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn score_row_observed(
        &self,
        x: &[f64],
        origin: RowOrigin,
        alpha: f64,
    ) -> Result<ObservedRowScore> {
        check_probability(alpha)?;
        crate::data::check_length(x, self.dim())?;
        let pattern = self.pattern(observed_columns(x, 0)?, origin)?;
        let d2 = pattern.scatter.squared_norm(&pattern.centred(|j| x[j]))?;
        let p_value = pattern.reference.p_value(d2);
        Ok(ObservedRowScore {
            squared_distance: d2,
            p_value,
            flagged: p_value <= alpha,
            observed: pattern.columns.len(),
        })
    }

    /// Squared distances and p-values of a batch whose empty cells are NaN,
    /// each row on its observed variables; one factorization per pattern of
    /// empty cells.
    ///
    /// If `x ~ N(μ, Σ)`, the sub-vector `x_o` of any set `o` of its variables
    /// is `N(μ_o, Σ_oo)`: the marginal of a multivariate normal is normal, with
    /// the matching sub-vector and principal sub-matrix. So a row with empty
    /// cells (NaN) gets the squared distance
    ///
    /// ```text
    /// d²_o = (x_o − μ_o)ᵀ Σ_oo⁻¹ (x_o − μ_o),
    /// ```
    ///
    /// referred to the model's law with `p_o = |o|` variables (χ²(p_o), or the
    /// F or Beta law with `p_o` and the same `n`). The laws stay exact for a
    /// classical fit on complete rows (either divisor): the sample covariance
    /// of the observed variables is the principal sub-matrix of the sample
    /// covariance, so the exact results hold for the sub-vector as they do for
    /// the whole. For the other estimators the sub-vector's law is as
    /// approximate as the full one, and a little more: a shrinkage target
    /// computed from all `p` variables, an MCD subset size or simulated Wishart
    /// degrees of freedom chosen for `p`, and an EM fit (approximate already)
    /// are reused for `p_o` variables. A batch factors `Σ_oo` once per pattern
    /// of empty cells.
    ///
    /// A distance on fewer variables has less power: a row whose unusual value
    /// sits in an empty cell cannot be flagged for it. The output says how many
    /// variables each row had; read flags of rows with few observed variables
    /// with that in mind.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`]; [`Error::NonFinite`] naming the row and
    /// column of an infinite value; [`Error::InvalidParameter`] naming a row
    /// with every cell empty; the errors of [`reference`](Self::reference)
    /// for the patterns' dimensions.
    pub fn score_observed<'a>(
        &self,
        rows: impl Into<Rows<'a>>,
        origin: RowOrigin,
    ) -> Result<ObservedScores> {
        let rows = rows.into();
        if rows.ncols() != self.dim() {
            return Err(Error::ShapeMismatch {
                what: "number of columns",
                expected: self.dim(),
                found: rows.ncols(),
            });
        }
        rows.with_f64(|x| self.score_observed_f64(x, origin))
    }

    fn score_observed_f64(
        &self,
        x: ArrayView2<'_, f64>,
        origin: RowOrigin,
    ) -> Result<ObservedScores> {
        let n = x.nrows();
        let p = self.dim();
        let words = p.div_ceil(64);
        // Pass 1: the pattern of each row (bit j set = column j observed).
        // Pass 1: the pattern of each row (bit j set = column j observed),
        // `words` per row in one flat buffer.
        let mut masks = vec![0u64; n * words];
        masks
            .par_chunks_mut(words)
            .enumerate()
            .try_for_each(|(i, mask)| -> Result<()> {
                let mut any = false;
                for (j, &v) in x.row(i).iter().enumerate() {
                    if v.is_nan() {
                        continue;
                    }
                    if !v.is_finite() {
                        return Err(Error::NonFinite {
                            row: i,
                            column: j,
                            value: v,
                        });
                    }
                    mask[j / 64] |= 1 << (j % 64);
                    any = true;
                }
                if any {
                    Ok(())
                } else {
                    Err(crate::data::no_observed_value(i))
                }
            })?;
        // One factorization per pattern.
        let mut index: HashMap<&[u64], usize> = HashMap::new();
        let mut distinct: Vec<&[u64]> = Vec::new();
        let of_row: Vec<usize> = masks
            .chunks_exact(words)
            .map(|m| {
                *index.entry(m).or_insert_with(|| {
                    distinct.push(m);
                    distinct.len() - 1
                })
            })
            .collect();
        let patterns: Vec<Pattern> = distinct
            .par_iter()
            .map(|m| {
                let columns = (0..p).filter(|&j| m[j / 64] >> (j % 64) & 1 == 1).collect();
                self.pattern(columns, origin)
            })
            .collect::<Result<_>>()?;
        let mut squared_distances = vec![0.0; n];
        let mut p_values = vec![0.0; n];
        let mut observed = vec![0usize; n];
        squared_distances
            .par_iter_mut()
            .zip(p_values.par_iter_mut())
            .zip(observed.par_iter_mut())
            .enumerate()
            .try_for_each_init(Vec::new, |c, (i, ((d, pv), o))| -> Result<()> {
                let pattern = &patterns[of_row[i]];
                let row = x.row(i);
                pattern.centred_into(|j| row[j], c);
                *d = pattern
                    .scatter
                    .squared_norm(c)
                    .map_err(|_| Error::Overflow { row: i })?;
                *pv = pattern.reference.p_value(*d);
                *o = pattern.columns.len();
                Ok(())
            })?;
        Ok(ObservedScores {
            squared_distances,
            p_values,
            observed,
            patterns: patterns.len(),
        })
    }

    /// Per-variable terms of a row with empty cells (NaN), on its observed
    /// variables; see [`crate::explain`]. A [`ContributionOrder::Given`]
    /// order lists positions among the observed variables.
    ///
    /// # Errors
    /// As [`score_row_observed`](Self::score_row_observed); an invalid
    /// order.
    pub fn explain_observed(
        &self,
        x: &[f64],
        order: ContributionOrder,
    ) -> Result<ObservedContributions> {
        crate::data::check_length(x, self.dim())?;
        let pattern = self.pattern(observed_columns(x, 0)?, RowOrigin::KnownParameters)?;
        let c = pattern.centred(|j| x[j]);
        let contributions = contributions(&pattern.scatter, &c, &order)?;
        Ok(ObservedContributions {
            observed: pattern.columns,
            contributions,
        })
    }
}
