//! Prediction: the most probable group, squared distances to every
//! centroid, posterior probabilities and typicality, for one row or a batch.

use super::fit::{Classifier, Rule};
use super::kernel::{predict_block, RuleView, Scratch};
use crate::calibration::check_probability;
use crate::data::check_columns;
use crate::error::{Error, Result};
use crate::kernels::distance::{non_finite_cause, SEQUENTIAL_BELOW};
use ndarray::ArrayView2;
use rayon::prelude::*;

/// Rows per parallel task.
const TASK_ROWS: usize = 1024;

/// What to compute besides groups, distances and posteriors. Setters
/// cannot fail; prediction checks the values once.
///
/// # Example
/// ```
/// use mvdist::classification::PredictOptions;
/// let options = PredictOptions::default().with_no_group_below(0.001);
/// assert!(options.typicality());
/// assert_eq!(options.no_group_below(), Some(0.001));
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub struct PredictOptions {
    typicality: bool,
    no_group_below: Option<f64>,
}

impl Default for PredictOptions {
    fn default() -> Self {
        PredictOptions {
            typicality: true,
            no_group_below: None,
        }
    }
}

impl PredictOptions {
    /// Marks a row as "no group" when it is atypical of every group: its
    /// squared distance to each centroid is beyond that group's cutoff at
    /// `level`, i.e. its best typicality is below `level` (default: never;
    /// prediction rejects a level outside (0, 1)).
    pub fn with_no_group_below(mut self, level: f64) -> Self {
        self.no_group_below = Some(level);
        self
    }

    /// Whether to compute the typicality of each row under its assigned
    /// group (one incomplete beta function per row; default `true`; without
    /// it the values are NaN).
    pub fn with_typicality(mut self, typicality: bool) -> Self {
        self.typicality = typicality;
        self
    }

    /// Whether typicality values are computed.
    pub fn typicality(&self) -> bool {
        self.typicality
    }

    /// The "no group" level, if any.
    pub fn no_group_below(&self) -> Option<f64> {
        self.no_group_below
    }
}

/// The prediction for one row.
#[derive(Clone, Debug, PartialEq)]
pub struct Prediction {
    /// The most probable group (largest posterior).
    pub group: usize,
    /// Squared distance to each group's centroid, under the scatter the
    /// rule measures that group with.
    pub squared_distances: Vec<f64>,
    /// Posterior probability of each group; they sum to 1.
    pub posteriors: Vec<f64>,
    /// Typicality of the row under its assigned group (NaN if not
    /// requested).
    pub typicality: f64,
    /// `true` when the row is atypical of every group at the requested
    /// level: a flag for review, not a verdict. `group` is still the most
    /// probable group.
    pub no_group: bool,
}

/// Predictions for a batch of rows, stored column by column so that a
/// buffer can be reused without reallocation
/// ([`Classifier::predict_into`]).
///
/// # Example
/// ```
/// use mvdist::classification::Predictions;
/// let empty = Predictions::new();
/// assert_eq!(empty.len(), 0);
/// assert!(empty.is_empty());
/// ```
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Predictions {
    rows: usize,
    groups: usize,
    assigned: Vec<usize>,
    squared_distances: Vec<f64>,
    posteriors: Vec<f64>,
    typicality: Vec<f64>,
    no_group: Vec<bool>,
}

impl Predictions {
    /// An empty buffer.
    pub fn new() -> Self {
        Self::default()
    }

    fn resize(&mut self, rows: usize, groups: usize) {
        self.rows = rows;
        self.groups = groups;
        self.assigned.resize(rows, 0);
        self.squared_distances.resize(rows * groups, 0.0);
        self.posteriors.resize(rows * groups, 0.0);
        self.typicality.resize(rows, f64::NAN);
        self.no_group.resize(rows, false);
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.rows
    }

    /// Whether there are no rows.
    pub fn is_empty(&self) -> bool {
        self.rows == 0
    }

    /// Number of groups.
    pub fn group_count(&self) -> usize {
        self.groups
    }

    /// The most probable group of each row.
    pub fn assigned(&self) -> &[usize] {
        &self.assigned
    }

    /// Squared distances, one row per input row and one column per group.
    pub fn squared_distances(&self) -> ArrayView2<'_, f64> {
        crate::data::matrix_view(&self.squared_distances, self.rows, self.groups)
    }

    /// Posterior probabilities, one row per input row and one column per
    /// group.
    pub fn posteriors(&self) -> ArrayView2<'_, f64> {
        crate::data::matrix_view(&self.posteriors, self.rows, self.groups)
    }

    /// The posterior probability of each row's assigned group.
    pub fn assigned_posteriors(&self) -> Vec<f64> {
        self.assigned
            .iter()
            .enumerate()
            .map(|(i, &g)| self.posteriors[i * self.groups + g])
            .collect()
    }

    /// Typicality of each row under its assigned group (NaN where not
    /// requested).
    pub fn typicality(&self) -> &[f64] {
        &self.typicality
    }

    /// Rows atypical of every group at the requested level.
    pub fn no_group(&self) -> &[bool] {
        &self.no_group
    }

    /// The prediction for row `i`, or `None` past the end.
    pub fn row(&self, i: usize) -> Option<Prediction> {
        if i >= self.rows {
            return None;
        }
        let g = self.groups;
        Some(Prediction {
            group: self.assigned[i],
            squared_distances: self.squared_distances[i * g..(i + 1) * g].to_vec(),
            posteriors: self.posteriors[i * g..(i + 1) * g].to_vec(),
            typicality: self.typicality[i],
            no_group: self.no_group[i],
        })
    }
}

impl<L> Classifier<L> {
    pub(crate) fn rule_view(&self) -> RuleView<'_> {
        let pooled = match self.rule {
            Rule::Linear => self.pooled.as_ref().map(|s| {
                (
                    self.centre.as_slice(),
                    s.inverse_factor_slice(),
                    self.whitened_centroids.as_slice(),
                )
            }),
            Rule::Quadratic => None,
        };
        RuleView {
            p: self.dim,
            groups: self.labels.len(),
            pooled,
            group_factors: self
                .group_scatters
                .iter()
                .map(|s| s.inverse_factor_slice())
                .collect(),
            centre: &self.centre,
            centroid_offsets: &self.centroid_offsets,
            offsets: &self.score_offsets,
        }
    }

    /// Predicts one row.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] unless `x` has one value per variable;
    /// [`Error::NonFinite`]; [`Error::Overflow`].
    pub fn predict_row(&self, x: &[f64]) -> Result<Prediction> {
        self.predict_row_with(x, &PredictOptions::default())
    }

    /// Predicts one row with the given options.
    ///
    /// # Errors
    /// As [`predict_row`](Self::predict_row); [`Error::InvalidParameter`]
    /// for a level not strictly between 0 and 1.
    pub fn predict_row_with(&self, x: &[f64], options: &PredictOptions) -> Result<Prediction> {
        let view = ArrayView2::from_shape((1, x.len()), x).map_err(|_| Error::ShapeMismatch {
            what: "row length (number of columns)",
            expected: self.dim,
            found: x.len(),
        })?;
        let mut out = Predictions::new();
        self.predict_into(view, options, &mut out)?;
        out.row(0).ok_or(Error::Empty { what: "rows" })
    }

    /// Predicts every row of `rows` (typicality included, no "no group").
    ///
    /// # Errors
    /// As [`predict_into`](Self::predict_into).
    pub fn predict(&self, rows: ArrayView2<'_, f64>) -> Result<Predictions> {
        let mut out = Predictions::new();
        self.predict_into(rows, &PredictOptions::default(), &mut out)?;
        Ok(out)
    }

    /// Predicts every row of `rows` into `out`, reusing its storage: no heap
    /// allocation per row, and none at all once `out` has held as many rows.
    /// Large batches run in parallel on the caller's rayon pool.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] unless `rows` has one column per variable;
    /// [`Error::NonFinite`] or [`Error::Overflow`] naming the first
    /// offending row; [`Error::InvalidParameter`] for a "no group" level
    /// not strictly between 0 and 1.
    ///
    /// # Example
    /// ```
    /// use mvdist::classification::{Classifier, ClassifierOptions, PredictOptions, Predictions, Rule};
    /// use ndarray::array;
    ///
    /// let rows = array![
    ///     [1.0, 2.0], [2.0, 2.9], [1.5, 2.2], [2.2, 3.4], [0.8, 1.9],
    ///     [5.0, 1.0], [6.1, 1.8], [5.5, 0.7], [6.0, 1.1], [5.2, 1.6],
    /// ];
    /// let labels = [0, 0, 0, 0, 0, 1, 1, 1, 1, 1];
    /// let c = Classifier::fit(rows.view(), &labels, &ClassifierOptions::new(Rule::Linear))?;
    /// let new_rows = array![[5.6, 1.2], [40.0, -30.0]];
    /// let mut out = Predictions::new();
    /// c.predict_into(new_rows.view(), &PredictOptions::default().with_no_group_below(0.001), &mut out)?;
    /// assert_eq!(out.assigned()[0], 1);
    /// assert_eq!(out.no_group(), &[false, true]);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn predict_into(
        &self,
        rows: ArrayView2<'_, f64>,
        options: &PredictOptions,
        out: &mut Predictions,
    ) -> Result<()> {
        check_columns(rows, self.dim)?;
        let cutoffs = match options.no_group_below {
            Some(level) => {
                check_probability(level).map_err(|_| {
                    Error::invalid(
                        "no-group level",
                        format!("{level} is not a probability strictly between 0 and 1"),
                    )
                })?;
                self.references
                    .iter()
                    .map(|r| r.cutoff(level))
                    .collect::<Result<Vec<_>>>()?
            }
            None => Vec::new(),
        };
        let (n, g_count, p) = (rows.nrows(), self.labels.len(), self.dim);
        out.resize(n, g_count);
        let view = self.rule_view();
        let references = &self.references;
        let finish = |d2: &[f64], assigned: &[usize], typ: &mut [f64], none: &mut [bool]| {
            for (i, (t, flag)) in typ.iter_mut().zip(none.iter_mut()).enumerate() {
                let d = &d2[i * g_count..(i + 1) * g_count];
                *t = if options.typicality {
                    references[assigned[i]].p_value(d[assigned[i]])
                } else {
                    f64::NAN
                };
                *flag = !cutoffs.is_empty() && d.iter().zip(&cutoffs).all(|(v, c)| v > c);
            }
        };
        if n * p.max(g_count) < SEQUENTIAL_BELOW {
            let mut scratch = Scratch::new(p, g_count);
            predict_block(
                &view,
                rows,
                &mut out.squared_distances,
                &mut out.posteriors,
                &mut out.assigned,
                &mut scratch,
            );
            finish(
                &out.squared_distances,
                &out.assigned,
                &mut out.typicality,
                &mut out.no_group,
            );
        } else {
            out.squared_distances
                .par_chunks_mut(TASK_ROWS * g_count)
                .zip(out.posteriors.par_chunks_mut(TASK_ROWS * g_count))
                .zip(out.assigned.par_chunks_mut(TASK_ROWS))
                .zip(out.typicality.par_chunks_mut(TASK_ROWS))
                .zip(out.no_group.par_chunks_mut(TASK_ROWS))
                .enumerate()
                .for_each_init(
                    || Scratch::new(p, g_count),
                    |scratch, (task, ((((d2, post), assigned), typ), none))| {
                        let start = task * TASK_ROWS;
                        let x = rows.slice(ndarray::s![start..start + assigned.len(), ..]);
                        predict_block(&view, x, d2, post, assigned, scratch);
                        finish(d2, assigned, typ, none);
                    },
                );
        }
        if let Some(k) = out.squared_distances.iter().position(|v| !v.is_finite()) {
            return Err(non_finite_cause(rows, k / g_count.max(1)));
        }
        Ok(())
    }
}
