//! Confusion matrices and error rates.

use super::fit::Classifier;
use crate::error::{Error, Result};
use ndarray::{Array2, ArrayView2};
use std::hash::Hash;

/// Counts of rows by actual group (rows of the matrix) and assigned group
/// (columns), with the error rates they imply.
///
/// The error rate is the share of rows off the diagonal. Measured on the
/// rows a classifier was fitted on (resubstitution) it is optimistic;
/// [`LeaveOneOut`](super::LeaveOneOut) gives an honest estimate.
///
/// # Example
/// ```
/// use mvdist::classification::ConfusionMatrix;
/// let m = ConfusionMatrix::from_groups(&[0, 0, 1, 1], &[0, 1, 1, 1], 2)?;
/// assert_eq!(m.count(0, 1), 1);
/// assert_eq!(m.error_rate(), 0.25);
/// assert_eq!(m.group_error_rates(), vec![0.5, 0.0]);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ConfusionMatrix {
    groups: usize,
    /// `groups × groups`, row-major: `counts[actual * groups + assigned]`.
    counts: Vec<u64>,
}

impl ConfusionMatrix {
    /// Tallies actual against assigned group numbers (both below `groups`).
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] if the slices differ in length;
    /// [`Error::UnknownGroup`] naming the first row with a group number of
    /// `groups` or more.
    pub fn from_groups(actual: &[usize], assigned: &[usize], groups: usize) -> Result<Self> {
        if actual.len() != assigned.len() {
            return Err(Error::ShapeMismatch {
                what: "assigned groups (one per actual group)",
                expected: actual.len(),
                found: assigned.len(),
            });
        }
        let mut counts = vec![0u64; groups * groups];
        for (row, (&a, &b)) in actual.iter().zip(assigned).enumerate() {
            if a >= groups || b >= groups {
                return Err(Error::UnknownGroup { row });
            }
            counts[a * groups + b] += 1;
        }
        Ok(ConfusionMatrix { groups, counts })
    }

    /// Number of groups.
    pub fn group_count(&self) -> usize {
        self.groups
    }

    /// Rows of group `actual` assigned to group `assigned` (0 out of range).
    pub fn count(&self, actual: usize, assigned: usize) -> u64 {
        if actual < self.groups && assigned < self.groups {
            self.counts[actual * self.groups + assigned]
        } else {
            0
        }
    }

    /// The matrix: row = actual group, column = assigned group.
    pub fn counts(&self) -> Array2<u64> {
        crate::data::matrix_view(&self.counts, self.groups, self.groups).to_owned()
    }

    /// Total number of rows.
    pub fn total(&self) -> u64 {
        self.counts.iter().sum()
    }

    /// Rows assigned to their actual group.
    pub fn correct(&self) -> u64 {
        (0..self.groups).map(|g| self.count(g, g)).sum()
    }

    /// Share of rows assigned to another group than their own (NaN for no
    /// rows).
    pub fn error_rate(&self) -> f64 {
        let total = self.total();
        if total == 0 {
            return f64::NAN;
        }
        (total - self.correct()) as f64 / total as f64
    }

    /// For each actual group, the share of its rows assigned elsewhere
    /// (NaN for a group with no rows).
    pub fn group_error_rates(&self) -> Vec<f64> {
        (0..self.groups)
            .map(|g| {
                let row = &self.counts[g * self.groups..(g + 1) * self.groups];
                let n: u64 = row.iter().sum();
                if n == 0 {
                    f64::NAN
                } else {
                    (n - row[g]) as f64 / n as f64
                }
            })
            .collect()
    }
}

impl<L: Eq + Hash + Clone> Classifier<L> {
    /// The confusion matrix of the classifier's predictions for `rows`
    /// against their actual `labels`. On the training rows this is the
    /// resubstitution estimate, which is optimistic.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] unless there is one label per row;
    /// [`Error::UnknownGroup`] naming the first row whose label is not a
    /// fitted group; the errors of [`predict`](Self::predict).
    ///
    /// # Example
    /// ```
    /// use mvdist::classification::{Classifier, ClassifierOptions, Rule};
    /// use ndarray::array;
    ///
    /// let rows = array![
    ///     [1.0, 2.0], [2.0, 2.9], [1.5, 2.2], [2.2, 3.4], [0.8, 1.9],
    ///     [5.0, 1.0], [6.1, 1.8], [5.5, 0.7], [6.0, 1.1], [5.2, 1.6],
    /// ];
    /// let labels = ["a", "a", "a", "a", "a", "b", "b", "b", "b", "b"];
    /// let c = Classifier::fit(rows.view(), &labels, &ClassifierOptions::new(Rule::Linear))?;
    /// let m = c.confusion_matrix(rows.view(), &labels)?;
    /// assert_eq!(m.error_rate(), 0.0);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn confusion_matrix(
        &self,
        rows: ArrayView2<'_, f64>,
        labels: &[L],
    ) -> Result<ConfusionMatrix> {
        if labels.len() != rows.nrows() {
            return Err(Error::ShapeMismatch {
                what: "number of labels (one per row)",
                expected: rows.nrows(),
                found: labels.len(),
            });
        }
        let actual = self.groups_of(labels)?;
        let mut out = super::Predictions::new();
        self.predict_into(
            rows,
            &super::PredictOptions::default().with_typicality(false),
            &mut out,
        )?;
        ConfusionMatrix::from_groups(&actual, out.assigned(), self.group_count())
    }
}
