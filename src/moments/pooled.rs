//! Moments of labelled rows: per-group accumulators and the pooled
//! within-group covariance.

use super::{accumulator::MomentAccumulator, Divisor};
use crate::error::{Error, Result};
use crate::scatter::Scatter;
use ndarray::{Array2, ArrayView2, Axis};
use serde::{Deserialize, Serialize};
use std::collections::HashMap;
use std::hash::Hash;

/// Per-group moments of labelled rows, in order of first appearance.
///
/// The pooled within-group covariance is `Σ_g M_g / d`, where `M_g` is
/// group `g`'s co-moment matrix and `d = n − G` ([`Divisor::Unbiased`]) or
/// `d = n` ([`Divisor::MaximumLikelihood`]) for `n` rows in `G` groups.
///
/// # Example
/// ```
/// use mvdist::moments::{Divisor, GroupMoments};
/// use ndarray::array;
///
/// let rows = array![[1.0, 2.0], [3.0, 2.5], [2.0, 4.0], [10.0, 1.0], [12.0, 3.0], [11.0, 0.0]];
/// let labels = ["a", "a", "a", "b", "b", "b"];
/// let groups = GroupMoments::from_rows(rows.view(), &labels)?;
/// assert_eq!(groups.labels(), &["a", "b"]);
/// let pooled = groups.pooled_covariance(Divisor::Unbiased)?;
/// // Each group has variance 1 in the first column.
/// assert!((pooled[(0, 0)] - 1.0).abs() < 1e-14);
/// # Ok::<(), mvdist::Error>(())
/// ```
///
/// Serializable (labels and accumulators); deserializing checks that there
/// is one accumulator per label, the labels are distinct and every group
/// has the same number of columns and at least one row.
#[derive(Clone, Debug, Serialize, Deserialize)]
#[serde(
    try_from = "GroupMomentsData<L>",
    bound(deserialize = "L: Deserialize<'de> + Eq + Hash + Clone")
)]
pub struct GroupMoments<L> {
    labels: Vec<L>,
    groups: Vec<MomentAccumulator>,
}

/// The serialized form of [`GroupMoments`], checked on the way in.
#[derive(Deserialize)]
struct GroupMomentsData<L> {
    labels: Vec<L>,
    groups: Vec<MomentAccumulator>,
}

impl<L: Eq + Hash + Clone> TryFrom<GroupMomentsData<L>> for GroupMoments<L> {
    type Error = Error;
    fn try_from(d: GroupMomentsData<L>) -> Result<Self> {
        let bad = |reason: String| Err(Error::Format { reason });
        if d.labels.len() != d.groups.len() {
            return bad(format!(
                "{} labels for {} groups",
                d.labels.len(),
                d.groups.len()
            ));
        }
        if d.groups.is_empty() {
            return bad("no groups".into());
        }
        let p = d.groups[0].dim();
        if let Some(g) = d.groups.iter().position(|a| a.dim() != p || a.count() == 0) {
            return bad(format!(
                "group {g} has {} columns and {} rows (the first group has {p} columns; every group needs a row)",
                d.groups[g].dim(),
                d.groups[g].count()
            ));
        }
        // Group moments come from unweighted rows: every weight is 1.
        if let Some(g) = d.groups.iter().position(|a| {
            let n = a.count as f64;
            a.weight_sum != n || a.weight_sq_sum != n
        }) {
            return bad(format!(
                "group {g}'s weights do not match its row count (group moments are unweighted)"
            ));
        }
        if d.groups
            .iter()
            .try_fold(0u64, |t, a| t.checked_add(a.count))
            .is_none()
        {
            return bad("the row counts overflow".into());
        }
        let mut seen = std::collections::HashSet::new();
        if let Some(g) = d.labels.iter().position(|l| !seen.insert(l)) {
            return bad(format!("the label of group {g} repeats an earlier one"));
        }
        Ok(GroupMoments {
            labels: d.labels,
            groups: d.groups,
        })
    }
}

impl<L: Eq + Hash + Clone> GroupMoments<L> {
    /// Accumulates `rows`, with `labels[i]` the group of row `i`.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] unless there is one label per row;
    /// [`Error::Empty`] for no rows or no columns; [`Error::NonFinite`]
    /// naming the row.
    pub fn from_rows(rows: ArrayView2<'_, f64>, labels: &[L]) -> Result<Self> {
        let (n, p) = rows.dim();
        if labels.len() != n {
            return Err(Error::ShapeMismatch {
                what: "number of labels (one per row)",
                expected: n,
                found: labels.len(),
            });
        }
        if p == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        if n == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        crate::data::check_finite(rows)?;
        let mut index: HashMap<&L, usize> = HashMap::new();
        let mut members: Vec<Vec<usize>> = Vec::new();
        let mut order: Vec<L> = Vec::new();
        for (i, l) in labels.iter().enumerate() {
            let g = *index.entry(l).or_insert_with(|| {
                order.push(l.clone());
                members.push(Vec::new());
                members.len() - 1
            });
            members[g].push(i);
        }
        let groups = members
            .iter()
            .map(|m| MomentAccumulator::from_rows(rows.select(Axis(0), m).view()))
            .collect::<Result<Vec<_>>>()?;
        Ok(GroupMoments {
            labels: order,
            groups,
        })
    }

    /// Groups already accumulated, with their labels (crate-internal: the
    /// two-sample tests and the subgroup charts build their groups this way).
    pub(crate) fn from_accumulators(labels: Vec<L>, groups: Vec<MomentAccumulator>) -> Self {
        GroupMoments { labels, groups }
    }

    /// The group labels, in order of first appearance.
    pub fn labels(&self) -> &[L] {
        &self.labels
    }

    /// The accumulator of each group, in the order of [`labels`](Self::labels).
    pub fn groups(&self) -> &[MomentAccumulator] {
        &self.groups
    }

    /// Total number of rows.
    pub fn count(&self) -> u64 {
        self.groups
            .iter()
            .fold(0u64, |t, g| t.saturating_add(g.count()))
    }

    /// The pooled within-group covariance.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] if the denominator is not positive (every group
    /// of size one, with [`Divisor::Unbiased`]).
    pub fn pooled_covariance(&self, divisor: Divisor) -> Result<Array2<f64>> {
        let p = self.groups.first().map_or(0, |g| g.dim());
        let n = self.count() as usize;
        let d = match divisor {
            Divisor::Unbiased => n as f64 - self.groups.len() as f64,
            Divisor::MaximumLikelihood => n as f64,
        };
        if !(d > 0.0) {
            return Err(Error::TooFewRows {
                rows: n,
                needed: self.groups.len() + 1,
                columns: p,
            });
        }
        let mut m = Array2::<f64>::zeros((p, p));
        for g in &self.groups {
            for i in 0..p {
                for j in 0..p {
                    m[(i, j)] += g.comoment[i * p + j];
                }
            }
        }
        let m = m / d;
        if m.iter().any(|v| !v.is_finite()) {
            return Err(Error::Overflow { row: 0 });
        }
        Ok(m)
    }

    /// The pooled within-group covariance as a validated [`Scatter`].
    ///
    /// # Errors
    /// As [`pooled_covariance`](Self::pooled_covariance);
    /// [`Error::TooFewRows`] unless `n − G ≥ p`; a variable constant within
    /// every group is [`Error::ZeroVariance`]; the errors of [`Scatter::new`].
    pub fn pooled_scatter(&self, divisor: Divisor) -> Result<Scatter> {
        let p = self.groups.first().map_or(0, |g| g.dim());
        let n = self.count() as usize;
        let g = self.groups.len();
        if n < g + p {
            return Err(Error::TooFewRows {
                rows: n,
                needed: g + p,
                columns: p,
            });
        }
        for j in 0..p {
            if self.groups.iter().all(|a| a.min[j] == a.max[j]) {
                return Err(Error::ZeroVariance { column: j });
            }
        }
        Scatter::new(self.pooled_covariance(divisor)?.view())
    }
}
