//! Leave-one-out error estimates without refitting.
//!
//! Leaving row `x` out of its group `g` (`n_g` rows, centroid `x̄_g`,
//! co-moment matrix `M_g`) changes the group's summaries by rank-one terms.
//! With `r = x − x̄_g` and `k = n_g / (n_g − 1)`:
//!
//! ```text
//! x̄_g⁻ = x̄_g − r / (n_g − 1),      x − x̄_g⁻ = k r,
//! M_g⁻ = M_g − k r rᵀ.
//! ```
//!
//! The inverse of the downdated matrix follows from the Sherman–Morrison
//! formula, `(M − k r rᵀ)⁻¹ = M⁻¹ + k M⁻¹ r rᵀ M⁻¹ / (1 − k a)` with
//! `a = rᵀ M⁻¹ r`, and its determinant from `det(M − k r rᵀ) = det M ·
//! (1 − k a)`. Every left-out distance is therefore a closed form in the
//! full-data distances (Lachenbruch and Mickey 1968; McLachlan,
//! *Discriminant Analysis and Statistical Pattern Recognition*, 1992,
//! §10.2):
//!
//! * **quadratic rule** (`S_g = M_g / (n_g − 1)`, full-data distance
//!   `d²_g`, so `a = d²_g / (n_g − 1)`): the row's distance to its own
//!   downdated group is `(n_g − 2) k² a / (1 − k a)`, and
//!   `ln det S_g⁻ = ln det S_g + ln(1 − k a) + p ln((n_g − 1)/(n_g − 2))`;
//!   other groups do not change.
//! * **linear rule** (pooled `S = W / ν`, `W = Σ_h M_h`, `ν = n − G`,
//!   `a = d²_g / ν`): with `c_h = (x − x̄_h)ᵀ S⁻¹ (x − x̄_g)`, obtained from
//!   the distances by polarization as `½ (d²_h + d²_g − D²_hg)` where
//!   `D²_hg` is the squared distance between the two centroids, the
//!   left-out distances are
//!   `(ν−1)/ν · (d²_h + k c_h² / (ν (1 − k a)))` for `h ≠ g` and
//!   `(ν−1)/ν · k² d²_g / (1 − k a)` for the row's own group.
//!
//! With the maximum-likelihood divisor, `n_g − 1`, `n_g − 2`, `ν` and
//! `ν − 1` become `n_g`, `n_g − 1`, `n` and `n − 1`. Proportional priors
//! are recomputed without the row. The cost is that of
//! one prediction pass plus `O(G²)` per row, instead of `n` refits.

use super::confusion::ConfusionMatrix;
use super::fit::{divisor_of, Classifier, ClassifierOptions, PriorKind, Rule};
use super::predict::{PredictOptions, Predictions};
use crate::error::{Error, Result};
use ndarray::ArrayView2;
use rayon::prelude::*;
use std::hash::Hash;

/// Rows per parallel task.
const TASK_ROWS: usize = 2048;

/// The leave-one-out assessment of a classifier: each training row
/// predicted by the classifier fitted to all the other rows.
///
/// # Example
/// ```
/// use mvdist::classification::{ClassifierOptions, LeaveOneOut, Rule};
/// use ndarray::array;
///
/// let rows = array![
///     [1.0, 2.0], [2.0, 2.9], [1.5, 2.2], [2.2, 3.4], [0.8, 1.9],
///     [5.0, 1.0], [6.1, 1.8], [5.5, 0.7], [6.0, 1.1], [5.2, 1.6],
/// ];
/// let labels = ["a", "a", "a", "a", "a", "b", "b", "b", "b", "b"];
/// let loo = LeaveOneOut::estimate(rows.view(), &labels, &ClassifierOptions::new(Rule::Linear))?;
/// assert_eq!(loo.confusion().total(), 10);
/// assert_eq!(loo.error_rate(), 0.0);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct LeaveOneOut {
    groups: usize,
    actual: Vec<usize>,
    assigned: Vec<usize>,
    squared_distances: Vec<f64>,
    posteriors: Vec<f64>,
    confusion: ConfusionMatrix,
}

impl LeaveOneOut {
    /// Fits a classifier to `rows` and `labels` and predicts every row as
    /// if it had been left out of the fit.
    ///
    /// # Errors
    /// The errors of [`Classifier::fit`]; [`Error::SmallGroup`] for a group
    /// that leaving one row out would leave too small (linear rule: fewer
    /// than 2 rows; quadratic: fewer than `p + 2`); [`Error::TooFewRows`]
    /// when the pooled scatter would lose its last spare degree of freedom
    /// (`n − 1 − G < p`); [`Error::InvalidParameter`] naming a row whose
    /// removal would make a scatter singular.
    pub fn estimate<L: Eq + Hash + Clone>(
        rows: ArrayView2<'_, f64>,
        labels: &[L],
        options: &ClassifierOptions<L>,
    ) -> Result<Self> {
        let c = Classifier::fit(rows, labels, options)?;
        let actual = c.groups_of(labels)?;
        let (n, p, g_count) = (rows.nrows(), c.dim, c.group_count());
        let needed = match c.rule {
            Rule::Linear => 2,
            Rule::Quadratic => p + 2,
        };
        if let Some(g) = c.counts.iter().position(|&m| m < needed) {
            return Err(Error::SmallGroup {
                group: g,
                rows: c.counts[g],
                needed,
            });
        }
        if c.rule == Rule::Linear && n - 1 - g_count < p {
            return Err(Error::TooFewRows {
                rows: n,
                needed: g_count + p + 1,
                columns: p,
            });
        }
        let mut full = Predictions::new();
        c.predict_into(
            rows,
            &PredictOptions::default().with_typicality(false),
            &mut full,
        )?;
        let full_d2 = full.squared_distances();
        let full_d2 = full_d2
            .as_slice()
            .ok_or_else(|| Error::invalid("rows", "internal layout"))?;

        // Squared distances between whitened centroids (linear rule).
        let mut between = vec![0.0; g_count * g_count];
        if c.rule == Rule::Linear {
            let wc = &c.whitened_centroids;
            for h in 0..g_count {
                for g in 0..g_count {
                    between[h * g_count + g] = wc[h * p..(h + 1) * p]
                        .iter()
                        .zip(&wc[g * p..(g + 1) * p])
                        .map(|(a, b)| (a - b) * (a - b))
                        .sum();
                }
            }
        }
        let log_dets: Vec<f64> = c
            .group_scatters
            .iter()
            .map(|s| s.log_determinant())
            .collect();
        let ln_priors: Vec<f64> = c.priors.iter().map(|q| q.ln()).collect();

        let (rule, counts, prior_kind, divisor) =
            (c.rule, c.counts.as_slice(), c.prior_kind, c.divisor);
        // Pooled divisors with and without one row.
        let nu = divisor_of(divisor, n, g_count);
        let nu_left_out = divisor_of(divisor, n - 1, g_count);
        let ln_prior = |h: usize, g: usize| match prior_kind {
            PriorKind::Proportional => {
                let nh = counts[h] - usize::from(h == g);
                (nh as f64 / (n - 1) as f64).ln()
            }
            PriorKind::Equal | PriorKind::Given => ln_priors[h],
        };
        let mut assigned = vec![0usize; n];
        let mut squared_distances = vec![0.0; n * g_count];
        let mut posteriors = vec![0.0; n * g_count];
        let result: Result<()> = squared_distances
            .par_chunks_mut(TASK_ROWS * g_count)
            .zip(posteriors.par_chunks_mut(TASK_ROWS * g_count))
            .zip(assigned.par_chunks_mut(TASK_ROWS))
            .enumerate()
            .try_for_each(|(task, ((d_out, p_out), a_out))| {
                for (r, a) in a_out.iter_mut().enumerate() {
                    let i = task * TASK_ROWS + r;
                    let g = actual[i];
                    let d_full = &full_d2[i * g_count..(i + 1) * g_count];
                    let d = &mut d_out[r * g_count..(r + 1) * g_count];
                    let post = &mut p_out[r * g_count..(r + 1) * g_count];
                    let ng = counts[g] as f64;
                    let k = ng / (ng - 1.0);
                    // Scores go to `post` first.
                    match rule {
                        Rule::Linear => {
                            let a_g = d_full[g] / nu;
                            let denom = 1.0 - k * a_g;
                            if !(denom > 0.0) {
                                return Err(singular_without(i));
                            }
                            let ratio = nu_left_out / nu;
                            for h in 0..g_count {
                                d[h] = if h == g {
                                    ratio * k * k * d_full[g] / denom
                                } else {
                                    let ch =
                                        0.5 * (d_full[h] + d_full[g] - between[h * g_count + g]);
                                    ratio * (d_full[h] + k * ch * ch / (nu * denom))
                                };
                                post[h] = ln_prior(h, g) - 0.5 * d[h];
                            }
                        }
                        Rule::Quadratic => {
                            let dv = divisor_of(divisor, counts[g], 1);
                            let dv_left_out = divisor_of(divisor, counts[g] - 1, 1);
                            let a_g = d_full[g] / dv;
                            let denom = 1.0 - k * a_g;
                            if !(denom > 0.0) {
                                return Err(singular_without(i));
                            }
                            for h in 0..g_count {
                                let (dh, log_det) = if h == g {
                                    (
                                        dv_left_out * k * k * a_g / denom,
                                        log_dets[g]
                                            + denom.ln()
                                            + p as f64 * (dv / dv_left_out).ln(),
                                    )
                                } else {
                                    (d_full[h], log_dets[h])
                                };
                                d[h] = dh;
                                post[h] = ln_prior(h, g) - 0.5 * (dh + log_det);
                            }
                        }
                    }
                    if d.iter().any(|v| !v.is_finite()) {
                        return Err(Error::Overflow { row: i });
                    }
                    *a = normalize_scores(post);
                }
                Ok(())
            });
        result?;
        let confusion = ConfusionMatrix::from_groups(&actual, &assigned, g_count)?;
        Ok(LeaveOneOut {
            groups: g_count,
            actual,
            assigned,
            squared_distances,
            posteriors,
            confusion,
        })
    }

    /// The actual group of each training row.
    pub fn actual(&self) -> &[usize] {
        &self.actual
    }

    /// The group each row is assigned to when left out.
    pub fn assigned(&self) -> &[usize] {
        &self.assigned
    }

    /// Each left-out row's squared distances to the centroids of the
    /// classifier fitted without it (rows × groups).
    pub fn squared_distances(&self) -> ArrayView2<'_, f64> {
        crate::data::matrix_view(&self.squared_distances, self.actual.len(), self.groups)
    }

    /// Each left-out row's posterior probabilities (rows × groups).
    pub fn posteriors(&self) -> ArrayView2<'_, f64> {
        crate::data::matrix_view(&self.posteriors, self.actual.len(), self.groups)
    }

    /// The leave-one-out confusion matrix.
    pub fn confusion(&self) -> &ConfusionMatrix {
        &self.confusion
    }

    /// The leave-one-out error rate.
    pub fn error_rate(&self) -> f64 {
        self.confusion.error_rate()
    }
}

fn singular_without(row: usize) -> Error {
    Error::invalid(
        "rows",
        format!("leaving out row {row} makes a scatter singular; that row alone spans a direction of its group's spread"),
    )
}

/// Turns scores into posteriors in place (log-sum-exp) and returns the
/// group with the largest score.
pub(crate) fn normalize_scores(scores: &mut [f64]) -> usize {
    let mut best = 0;
    for (h, &s) in scores.iter().enumerate() {
        if s > scores[best] {
            best = h;
        }
    }
    let top = scores[best];
    let mut total = 0.0;
    for s in scores.iter_mut() {
        *s = (*s - top).exp();
        total += *s;
    }
    for s in scores.iter_mut() {
        *s /= total;
    }
    best
}
