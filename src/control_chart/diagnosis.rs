//! What raised an alarm: decomposition terms judged against their own
//! limits, and per-variable contributions.

use super::decomposition::{conditional_terms, terms_along, DecompositionTerm};
use super::{ControlLimit, FalseAlarmRate};
use crate::error::Result;
use crate::explain::{contributions, ContributionOrder, Contributions};
use crate::scatter::Scatter;
use serde::{Deserialize, Serialize};

/// A decomposition term with its in-control cutoff and p-value.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RatedTerm {
    /// The variable `j`.
    pub variable: usize,
    /// The conditioning variables `J` (empty: unconditional term).
    pub given: Vec<usize>,
    /// `T²_{j·J}`.
    pub value: f64,
    /// The term's upper limit at the chart's false-alarm rate, from
    /// [`ControlLimit::term_distribution`] with `k = |J|` and the point's
    /// `T²_J`.
    pub cutoff: f64,
    /// Probability that an in-control term exceeds `value`.
    pub p_value: f64,
}

impl RatedTerm {
    /// Whether the term is above its cutoff.
    pub fn exceeds(&self) -> bool {
        self.value > self.cutoff
    }

    /// The term's label with the given variable names: `name` for an
    /// unconditional term, `name | a, b` for a conditional one.
    ///
    /// # Example
    /// ```
    /// use mvdist::control_chart::RatedTerm;
    /// let t = RatedTerm { variable: 1, given: vec![0], value: 9.0, cutoff: 7.0, p_value: 0.004 };
    /// let names = ["temperature".to_string(), "pressure".to_string()];
    /// assert_eq!(t.label(&names), "pressure | temperature");
    /// assert!(t.exceeds());
    /// ```
    pub fn label(&self, names: &[String]) -> String {
        let name = |j: usize| names.get(j).cloned().unwrap_or_else(|| format!("#{j}"));
        if self.given.is_empty() {
            name(self.variable)
        } else {
            format!(
                "{} | {}",
                name(self.variable),
                self.given
                    .iter()
                    .map(|&g| name(g))
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        }
    }
}

/// The diagnosis of one charted point.
///
/// `terms` holds every Mason–Tracy–Young term `T²_{j·J}` with at most
/// `depth` conditioning variables, ranked from the most to the least
/// surprising (ascending p-value; ties by value over cutoff). Read it
/// top-down: an unconditional term above its cutoff names a variable out of
/// its usual range; a conditional term above its cutoff while the
/// variable's unconditional term is not names a broken relationship.
/// `contributions` is the greedy sequential split of T² from
/// [`crate::explain`] (the terms along the greedy ordering), which sums to
/// T².
///
/// A diagnosis describes the model's view of the point; it prompts an
/// investigation, it does not establish a cause.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SignalDiagnosis {
    /// The point's T².
    pub t_squared: f64,
    /// The chart's upper control limit for the point.
    pub upper_limit: f64,
    /// The largest conditioning depth included.
    pub depth: usize,
    /// Ranked decomposition terms.
    pub terms: Vec<RatedTerm>,
    /// Per-variable contributions (greedy order) from [`crate::explain`].
    pub contributions: Contributions,
}

impl SignalDiagnosis {
    /// The terms above their cutoffs, most surprising first.
    pub fn exceeding(&self) -> impl Iterator<Item = &RatedTerm> {
        self.terms.iter().filter(|t| t.exceeds())
    }

    /// Unconditional terms above their cutoffs: variables out of their
    /// usual range on their own, most surprising first.
    pub fn out_of_range(&self) -> Vec<&RatedTerm> {
        self.exceeding().filter(|t| t.given.is_empty()).collect()
    }

    /// Conditional terms above their cutoffs that involve no variable
    /// already out of range (neither as `j` nor in `J`): relationships
    /// broken among variables that are each within range, most surprising
    /// first. This is the reading order of Mason, Tracy and Young (1997):
    /// first the unconditional terms, then the conditional terms of the
    /// remaining variables.
    ///
    /// # Example
    /// ```
    /// use mvdist::control_chart::{ControlChart, PhaseOneOptions};
    /// use ndarray::Array2;
    ///
    /// // Two strongly correlated variables.
    /// let rows = Array2::from_shape_fn((40, 2), |(i, j)| {
    ///     let x = (i as f64 * 0.37).sin() * 3.0;
    ///     if j == 0 { x } else { x + 0.3 * (i as f64 * 1.7).cos() }
    /// });
    /// let chart = ControlChart::individuals(rows.view(), &PhaseOneOptions::default())?;
    /// // Each value in range, but the pair disagrees.
    /// let points = chart.monitor(ndarray::array![[2.0, -2.0]].view())?;
    /// let d = points[0].diagnosis.as_ref().ok_or("the point should signal")?;
    /// assert!(d.out_of_range().is_empty());
    /// assert!(!d.broken_relationships().is_empty());
    /// # Ok::<(), Box<dyn std::error::Error>>(())
    /// ```
    pub fn broken_relationships(&self) -> Vec<&RatedTerm> {
        let out: Vec<usize> = self.out_of_range().iter().map(|t| t.variable).collect();
        self.exceeding()
            .filter(|t| {
                !t.given.is_empty()
                    && !out.contains(&t.variable)
                    && t.given.iter().all(|g| !out.contains(g))
            })
            .collect()
    }
}

/// Rates raw terms against the limit's term laws.
pub(crate) fn rate_terms(
    terms: Vec<DecompositionTerm>,
    limit: &ControlLimit,
    rate: FalseAlarmRate,
) -> Result<Vec<RatedTerm>> {
    // The cutoff of each depth's zero-leverage law, computed once: a
    // term's own law differs only in its scale, and cutoffs scale with it.
    let mut cutoffs: Vec<(f64, f64)> = Vec::new();
    terms
        .into_iter()
        .map(|t| {
            let k = t.given.len();
            while cutoffs.len() <= k {
                let base = limit.term_distribution(cutoffs.len(), 0.0)?;
                cutoffs.push((base.scale(), base.cutoff(rate.alpha())?));
            }
            let (base_scale, base_cutoff) = cutoffs[k];
            let dist = limit.term_distribution(k, t.given_t_squared)?;
            Ok(RatedTerm {
                p_value: dist.p_value(t.value),
                variable: t.variable,
                given: t.given,
                value: t.value,
                cutoff: base_cutoff * (dist.scale() / base_scale),
            })
        })
        .collect()
}

/// The full diagnosis of a centred point.
pub(crate) fn diagnose_centred(
    scatter: &Scatter,
    centred: &[f64],
    limit: &ControlLimit,
    rate: FalseAlarmRate,
    depth: usize,
) -> Result<SignalDiagnosis> {
    let t_squared = scatter.squared_norm(centred)?;
    let mut terms = rate_terms(conditional_terms(scatter, centred, depth)?, limit, rate)?;
    terms.sort_by(|a, b| {
        a.p_value
            .total_cmp(&b.p_value)
            .then_with(|| (b.value / b.cutoff).total_cmp(&(a.value / a.cutoff)))
    });
    Ok(SignalDiagnosis {
        t_squared,
        upper_limit: limit.upper(rate)?,
        depth: depth.min(scatter.dim().saturating_sub(1)),
        terms,
        contributions: contributions(scatter, centred, &ContributionOrder::LargestFirst)?,
    })
}

/// The rated terms of a centred point along `order`.
pub(crate) fn rated_terms_along(
    scatter: &Scatter,
    centred: &[f64],
    order: &[usize],
    limit: &ControlLimit,
    rate: FalseAlarmRate,
) -> Result<Vec<RatedTerm>> {
    rate_terms(terms_along(scatter, centred, order)?, limit, rate)
}
