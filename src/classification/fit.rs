//! Fitting a distance-to-centroid classifier: per-group centroids, the
//! scatter each group is measured with, and prior probabilities.

use crate::calibration::Reference;
use crate::error::{Error, Result};
use crate::moments::{Divisor, GroupMoments};
use crate::scatter::Scatter;
use ndarray::ArrayView2;
use std::collections::HashMap;
use std::hash::Hash;

/// Which scatter measures the distance from a row to each group's centroid.
///
/// With centroids `x̄_g` and scatter `S_g`, the score of group `g` for a row
/// `x` is the log of its prior times its normal density, up to a constant
/// shared by all groups:
///
/// ```text
/// linear:     s_g = ln π_g − ½ (x − x̄_g)ᵀ S⁻¹ (x − x̄_g)
/// quadratic:  s_g = ln π_g − ½ (x − x̄_g)ᵀ S_g⁻¹ (x − x̄_g) − ½ ln det S_g
/// ```
///
/// The linear rule uses one pooled within-group scatter
/// `S = Σ_g M_g / (n − G)` (`M_g` the co-moment matrix of group `g`; see
/// [`GroupMoments::pooled_scatter`]); group boundaries are hyperplanes
/// (Fisher 1936). The quadratic rule gives each group its own scatter
/// `S_g = M_g / (n_g − 1)`; boundaries are quadrics, and each group needs
/// more rows than variables. Reference: K. V. Mardia, J. T. Kent and
/// J. M. Bibby, *Multivariate Analysis* (1979), §11.2–11.3.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Rule {
    /// One pooled within-group scatter for every group.
    Linear,
    /// Each group measured with its own scatter.
    Quadratic,
}

/// The prior probability of each group.
///
/// # Example
/// ```
/// use mvdist::classification::Priors;
/// let given = Priors::Given(vec![("ok", 0.9), ("faulty", 0.1)]);
/// assert!(matches!(given, Priors::Given(_)));
/// let equal: Priors<&str> = Priors::Equal;
/// assert_eq!(equal, Priors::Equal);
/// ```
#[derive(Clone, Debug, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Priors<L> {
    /// `π_g = 1/G` for `G` groups.
    Equal,
    /// `π_g = n_g / n`: the groups' shares of the training rows.
    Proportional,
    /// One positive weight per group label, normalized to sum to 1.
    Given(Vec<(L, f64)>),
}

/// The choices a classifier is fitted with. Setters cannot fail and state
/// their default; [`Classifier::fit`] checks the values (priors against
/// the labels) once.
///
/// Group scatters are the classical estimates (sample centroids and
/// co-moment matrices); leave-one-out error estimates rely on the
/// closed-form downdates that hold for them.
///
/// # Example
/// ```
/// use mvdist::classification::{ClassifierOptions, Priors, Rule};
/// let options = ClassifierOptions::new(Rule::Quadratic).with_priors(Priors::<String>::Equal);
/// assert_eq!(options.rule(), Rule::Quadratic);
/// ```
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct ClassifierOptions<L> {
    rule: Rule,
    priors: Priors<L>,
    divisor: Divisor,
}

impl<L> ClassifierOptions<L> {
    /// Options for `rule` (linear: pooled scatter; quadratic: one scatter
    /// per group), with proportional priors and the unbiased divisor.
    pub fn new(rule: Rule) -> Self {
        ClassifierOptions {
            rule,
            priors: Priors::Proportional,
            divisor: Divisor::Unbiased,
        }
    }

    /// The divisor of the scatters (default: unbiased, `n − G` pooled and
    /// `n_g − 1` per group; maximum likelihood divides by `n` and `n_g`).
    pub fn with_divisor(mut self, divisor: Divisor) -> Self {
        self.divisor = divisor;
        self
    }

    /// Prior probabilities of the groups (default:
    /// [`Priors::Proportional`]).
    pub fn with_priors(mut self, priors: Priors<L>) -> Self {
        self.priors = priors;
        self
    }

    /// The rule.
    pub fn rule(&self) -> Rule {
        self.rule
    }

    /// The priors.
    pub fn priors(&self) -> &Priors<L> {
        &self.priors
    }

    /// The divisor.
    pub fn divisor(&self) -> Divisor {
        self.divisor
    }
}

/// How the priors were set, kept for leave-one-out (proportional priors
/// change when a row is left out).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum PriorKind {
    Equal,
    Proportional,
    Given,
}

/// A fitted distance-to-centroid classifier.
///
/// Each group is summarized by its centroid, its row count, a prior and
/// the scatter the [`Rule`] measures it with. A row is assigned to the
/// group with the largest posterior probability under the normal model,
/// which is the group with the largest score `s_g` (see [`Rule`]);
/// posteriors are `exp(s_g) / Σ_h exp(s_h)`, computed by subtracting the
/// largest score first (log-sum-exp), so they neither overflow nor lose
/// the small ones to rounding.
///
/// Groups are numbered in order of the first appearance of their label in
/// the training rows; [`labels`](Self::labels) maps numbers to labels.
///
/// **Caution.** Posteriors and typicality values assume that every group is
/// multivariate normal with the modelled scatter (a common one for the
/// linear rule) and that the priors are right. They are evidence for a
/// decision, not the decision.
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
/// let classifier = Classifier::fit(rows.view(), &labels, &ClassifierOptions::new(Rule::Linear))?;
/// assert_eq!(classifier.labels(), &["a", "b"]);
/// let p = classifier.predict_row(&[1.4, 2.5])?;
/// assert_eq!(classifier.labels()[p.group], "a");
/// assert!(p.posteriors[0] > 0.99);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Classifier<L> {
    /// What the classifier was fitted from, kept so that it can be saved
    /// and rebuilt (see `file.rs`).
    pub(crate) moments: GroupMoments<L>,
    pub(crate) prior_spec: Priors<L>,
    pub(crate) labels: Vec<L>,
    pub(crate) index: HashMap<L, usize>,
    pub(crate) counts: Vec<usize>,
    pub(crate) dim: usize,
    pub(crate) rule: Rule,
    pub(crate) divisor: Divisor,
    pub(crate) prior_kind: PriorKind,
    pub(crate) priors: Vec<f64>,
    /// `G × p`, row-major.
    pub(crate) centroids: Vec<f64>,
    /// The count-weighted grand mean: rows are centred on it before
    /// whitening with the pooled scatter.
    pub(crate) centre: Vec<f64>,
    /// The pooled within-group scatter; always present for the linear rule,
    /// and for the quadratic rule when it can be estimated.
    pub(crate) pooled: Option<Scatter>,
    /// Each group's own scatter (quadratic rule only).
    pub(crate) group_scatters: Vec<Scatter>,
    /// `x̄_g − centre`, `G × p`.
    pub(crate) centroid_offsets: Vec<f64>,
    /// Linear rule: `L⁻¹ (x̄_g − centre)`, `G × p`.
    pub(crate) whitened_centroids: Vec<f64>,
    /// `ln π_g` (linear) or `ln π_g − ½ ln det S_g` (quadratic).
    pub(crate) score_offsets: Vec<f64>,
    pub(crate) references: Vec<Reference>,
}

impl<L: Eq + Hash + Clone> Classifier<L> {
    /// Fits a classifier to `rows` (observations × variables), with
    /// `labels[i]` the group of row `i`.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] unless there is one label per row;
    /// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
    /// [`Error::TooFewGroups`] for a single label; [`Error::InvalidParameter`]
    /// for given priors that are not positive and finite, omit a group or
    /// name a label that has no rows. Linear rule: [`Error::TooFewRows`]
    /// unless `n ≥ G + p`; [`Error::ZeroVariance`] for a variable constant
    /// within every group; [`Error::Collinear`]. Quadratic rule:
    /// [`Error::SmallGroup`] for a group with `n_g ≤ p`; [`Error::InGroup`]
    /// wrapping the reason a group's own scatter is singular.
    pub fn fit(
        rows: ArrayView2<'_, f64>,
        labels: &[L],
        options: &ClassifierOptions<L>,
    ) -> Result<Self> {
        let moments = GroupMoments::from_rows(rows, labels)?;
        Self::from_group_moments(&moments, options)
    }

    /// Fits a classifier from accumulated group moments (for example,
    /// merged from several machines).
    ///
    /// # Errors
    /// As [`fit`](Self::fit), except the shape and finiteness checks that
    /// [`GroupMoments::from_rows`] made.
    pub fn from_group_moments(
        moments: &GroupMoments<L>,
        options: &ClassifierOptions<L>,
    ) -> Result<Self> {
        let labels = moments.labels().to_vec();
        let groups = moments.groups();
        let g_count = labels.len();
        if g_count < 2 {
            return Err(Error::TooFewGroups { found: g_count });
        }
        let p = groups[0].dim();
        let counts: Vec<usize> = groups.iter().map(|a| a.count() as usize).collect();
        let n = counts
            .iter()
            .try_fold(0usize, |t, &c| t.checked_add(c))
            .ok_or_else(|| Error::invalid("group moments", "the row counts overflow"))?;
        if let Some(g) = groups.iter().position(|a| a.dim() != p) {
            return Err(Error::in_group(g)(Error::ShapeMismatch {
                what: "number of columns (the first group's)",
                expected: p,
                found: groups[g].dim(),
            }));
        }
        let index: HashMap<L, usize> = labels
            .iter()
            .enumerate()
            .map(|(g, l)| (l.clone(), g))
            .collect();
        let (priors, prior_kind) = resolve_priors(&options.priors, &index, &counts)?;
        let mut centroids = Vec::with_capacity(g_count * p);
        for a in groups {
            centroids.extend_from_slice(a.mean());
        }
        let mut centre = vec![0.0; p];
        for (g, &ng) in counts.iter().enumerate() {
            let w = ng as f64 / n as f64;
            for (c, &m) in centre.iter_mut().zip(&centroids[g * p..(g + 1) * p]) {
                *c += w * m;
            }
        }
        let centroid_offsets: Vec<f64> = centroids
            .chunks(p)
            .flat_map(|mu| mu.iter().zip(&centre).map(|(m, c)| m - c))
            .collect();
        let (pooled, group_scatters) = match options.rule {
            Rule::Linear => (Some(moments.pooled_scatter(options.divisor)?), Vec::new()),
            Rule::Quadratic => {
                let mut scatters = Vec::with_capacity(g_count);
                for (g, a) in groups.iter().enumerate() {
                    if counts[g] <= p {
                        return Err(Error::SmallGroup {
                            group: g,
                            rows: counts[g],
                            needed: p + 1,
                        });
                    }
                    let s = a.scatter(options.divisor).map_err(|cause| Error::InGroup {
                        group: g,
                        cause: Box::new(cause),
                    })?;
                    scatters.push(s);
                }
                (moments.pooled_scatter(options.divisor).ok(), scatters)
            }
        };
        let mut whitened_centroids = Vec::new();
        let mut score_offsets: Vec<f64> = priors.iter().map(|q| q.ln()).collect();
        let mut references = Vec::with_capacity(g_count);
        match options.rule {
            Rule::Linear => {
                let s = pooled
                    .as_ref()
                    .ok_or_else(|| Error::invalid("rule", "no pooled scatter"))?;
                let w = s.inverse_factor_slice();
                whitened_centroids = vec![0.0; g_count * p];
                for g in 0..g_count {
                    let mu = &centroids[g * p..(g + 1) * p];
                    let out = &mut whitened_centroids[g * p..(g + 1) * p];
                    for i in 0..p {
                        out[i] = (0..=i).map(|j| w[i * p + j] * (mu[j] - centre[j])).sum();
                    }
                }
                for &ng in &counts {
                    references.push(
                        Reference::pooled_group(ng, n, g_count, p)?.with_divisor(options.divisor),
                    );
                }
            }
            Rule::Quadratic => {
                for (g, s) in group_scatters.iter().enumerate() {
                    score_offsets[g] -= 0.5 * s.log_determinant();
                    references
                        .push(Reference::new_row(counts[g], p)?.with_divisor(options.divisor));
                }
            }
        }
        if whitened_centroids.iter().any(|v| !v.is_finite())
            || score_offsets.iter().any(|v| !v.is_finite())
        {
            return Err(Error::Overflow { row: 0 });
        }
        Ok(Classifier {
            moments: moments.clone(),
            prior_spec: options.priors.clone(),
            labels,
            index,
            counts,
            dim: p,
            rule: options.rule,
            divisor: options.divisor,
            prior_kind,
            priors,
            centroids,
            centroid_offsets,
            centre,
            pooled,
            group_scatters,
            whitened_centroids,
            score_offsets,
            references,
        })
    }

    /// The group number of `label`, if it is one of the fitted groups.
    pub fn group_of(&self, label: &L) -> Option<usize> {
        self.index.get(label).copied()
    }

    /// Group numbers of `labels`.
    ///
    /// # Errors
    /// [`Error::UnknownGroup`] naming the first row whose label is not a
    /// fitted group.
    pub fn groups_of(&self, labels: &[L]) -> Result<Vec<usize>> {
        labels
            .iter()
            .enumerate()
            .map(|(row, l)| self.group_of(l).ok_or(Error::UnknownGroup { row }))
            .collect()
    }
}

impl<L> Classifier<L> {
    /// The group labels, in order of first appearance in the training rows.
    pub fn labels(&self) -> &[L] {
        &self.labels
    }

    /// Number of groups `G`.
    pub fn group_count(&self) -> usize {
        self.labels.len()
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// Training rows in each group.
    pub fn counts(&self) -> &[usize] {
        &self.counts
    }

    /// The rule the classifier was fitted with.
    pub fn rule(&self) -> Rule {
        self.rule
    }

    /// The divisor of the scatters.
    pub fn divisor(&self) -> Divisor {
        self.divisor
    }

    /// The prior probability of each group (they sum to 1).
    pub fn priors(&self) -> &[f64] {
        &self.priors
    }

    /// The group centroids, one row per group.
    pub fn centroids(&self) -> ArrayView2<'_, f64> {
        crate::data::matrix_view(&self.centroids, self.labels.len(), self.dim)
    }

    /// The scatter group `g` is measured with: the pooled scatter for the
    /// linear rule, the group's own for the quadratic rule. `None` if `g`
    /// is not a group number.
    pub fn scatter(&self, g: usize) -> Option<&Scatter> {
        match self.rule {
            Rule::Linear => self.pooled.as_ref().filter(|_| g < self.labels.len()),
            Rule::Quadratic => self.group_scatters.get(g),
        }
    }

    /// The pooled within-group scatter (`n − G` divisor): always present for
    /// the linear rule; for the quadratic rule when it could be estimated.
    pub fn pooled_scatter(&self) -> Option<&Scatter> {
        self.pooled.as_ref()
    }

    /// The law of a new row's squared distance to group `g`'s centroid,
    /// under the scatter the rule measures that group with: for the
    /// quadratic rule the group's own scatter ([`Reference::new_row`] with
    /// its rows), for the linear rule the pooled one
    /// ([`Reference::pooled_group`]), adjusted to the classifier's divisor.
    /// Its p-value is the row's typicality. `None` if `g` is not a group
    /// number.
    pub fn typicality_reference(&self, g: usize) -> Option<Reference> {
        self.references.get(g).copied()
    }
}

/// The divisor of a scatter from `rows` rows in `groups` groups.
pub(crate) fn divisor_of(divisor: Divisor, rows: usize, groups: usize) -> f64 {
    match divisor {
        Divisor::Unbiased => (rows - groups) as f64,
        Divisor::MaximumLikelihood => rows as f64,
    }
}

fn resolve_priors<L: Eq + Hash>(
    priors: &Priors<L>,
    index: &HashMap<L, usize>,
    counts: &[usize],
) -> Result<(Vec<f64>, PriorKind)> {
    let g_count = counts.len();
    match priors {
        Priors::Equal => Ok((vec![1.0 / g_count as f64; g_count], PriorKind::Equal)),
        Priors::Proportional => {
            let n: usize = counts.iter().sum();
            Ok((
                counts.iter().map(|&c| c as f64 / n as f64).collect(),
                PriorKind::Proportional,
            ))
        }
        Priors::Given(list) => {
            let mut out = vec![f64::NAN; g_count];
            for (k, (label, w)) in list.iter().enumerate() {
                let g = *index.get(label).ok_or_else(|| {
                    Error::invalid(
                        "priors",
                        format!("entry {k} names a label that has no training rows"),
                    )
                })?;
                if !(w.is_finite() && *w > 0.0) {
                    return Err(Error::invalid(
                        "priors",
                        format!("entry {k} is {w}; priors must be positive and finite"),
                    ));
                }
                if !out[g].is_nan() {
                    return Err(Error::invalid(
                        "priors",
                        format!("entry {k} repeats the label of group {g}"),
                    ));
                }
                out[g] = *w;
            }
            if let Some(g) = out.iter().position(|v| v.is_nan()) {
                return Err(Error::invalid(
                    "priors",
                    format!("group {g} has no prior; give one for every group"),
                ));
            }
            let total: f64 = out.iter().sum();
            if !total.is_finite() {
                return Err(Error::invalid("priors", "their sum is not finite"));
            }
            Ok((out.iter().map(|w| w / total).collect(), PriorKind::Given))
        }
    }
}
