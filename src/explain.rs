//! Which variables drove a large distance.
//!
//! The squared distance splits exactly into one term per variable by
//! conditioning in sequence. For an order of the variables `π(1), …, π(p)`,
//! the term of variable `π(k)` is its squared standardized residual given
//! the variables before it:
//!
//! ```text
//! t_π(k) = (x_π(k) − E[x_π(k) | x_π(1..k−1)])² / Var(x_π(k) | x_π(1..k−1)),
//! d² = Σ_k t_π(k)   (exactly),
//! ```
//!
//! the squares of the Cholesky-whitened coordinates of the reordered
//! variables. The first term is the variable's own standardized square; a
//! later term is large when the variable is unusual *given* the ones before
//! it, that is, when a relationship between variables is broken.
//!
//! [`ContributionOrder::LargestFirst`] builds the order greedily: at each
//! step the variable with the largest conditional term given the variables
//! already chosen comes next. It answers "which single variable explains
//! most, which next, …". [`ContributionOrder::Given`] lets the caller fix
//! an order, for example process order (upstream measurements first).
//!
//! **Reading the terms.** Under the model each term is χ²(1)-distributed
//! for a typical row, so a term above about 6.6 (the 0.99 quantile) stands
//! out; the terms depend on the order, so compare rows under the same
//! order. They describe the model's view of the row; they do not establish
//! a cause. Decisions belong to qualified people.
//!
//! # Example
//! ```
//! use mvdist::{ContributionOrder, DistanceModel};
//! use ndarray::array;
//!
//! let rows = array![[1.0, 1.1], [2.0, 1.9], [3.0, 3.2], [4.0, 3.9], [5.0, 5.1], [6.0, 5.8]];
//! let model = DistanceModel::fit(rows.view())?;
//! // Both values are ordinary on their own, but they break the correlation.
//! let x = [2.0, 5.0];
//! let c = model.explain(&x, ContributionOrder::LargestFirst)?;
//! let d2 = model.squared_distance(&x)?;
//! assert!((c.terms().iter().sum::<f64>() - d2).abs() < 1e-9 * d2);
//! assert_eq!(c.order()[0], 1); // the second variable is more unusual alone
//! # Ok::<(), mvdist::Error>(())
//! ```

use crate::error::{Error, Result};
use crate::scatter::Scatter;
use serde::{Deserialize, Serialize};

/// The order in which variables are conditioned.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub enum ContributionOrder {
    /// Greedy: the largest conditional term first.
    LargestFirst,
    /// A caller-chosen permutation of `0..p`.
    Given(Vec<usize>),
}

/// Per-variable terms that add up to the squared distance.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ContributionsData")]
pub struct Contributions {
    order: Vec<usize>,
    terms: Vec<f64>,
}

/// The serialized form, checked on the way in: the order is a permutation
/// of the variables.
#[derive(Deserialize)]
struct ContributionsData {
    order: Vec<usize>,
    terms: Vec<f64>,
}

impl TryFrom<ContributionsData> for Contributions {
    type Error = Error;
    fn try_from(d: ContributionsData) -> Result<Self> {
        check_permutation(&d.order, d.terms.len())?;
        Ok(Contributions {
            order: d.order,
            terms: d.terms,
        })
    }
}

/// `Ok` if `perm` is a permutation of `0..p`.
pub(crate) fn check_permutation(perm: &[usize], p: usize) -> Result<()> {
    if perm.len() != p {
        return Err(Error::ShapeMismatch {
            what: "order length (number of columns)",
            expected: p,
            found: perm.len(),
        });
    }
    let mut seen = vec![false; p];
    for &j in perm {
        if j >= p || seen[j] {
            return Err(Error::invalid(
                "order",
                format!("{perm:?} is not a permutation of 0..{p}"),
            ));
        }
        seen[j] = true;
    }
    Ok(())
}

impl Contributions {
    /// The order in which variables were conditioned.
    pub fn order(&self) -> &[usize] {
        &self.order
    }

    /// The term of each variable, indexed by variable (not by order).
    pub fn terms(&self) -> &[f64] {
        &self.terms
    }

    /// `(variable, term)` pairs in conditioning order.
    pub fn in_order(&self) -> Vec<(usize, f64)> {
        self.order.iter().map(|&j| (j, self.terms[j])).collect()
    }

    /// The variable with the largest term.
    pub fn top_variable(&self) -> usize {
        (0..self.terms.len())
            .max_by(|&a, &b| self.terms[a].total_cmp(&self.terms[b]))
            .unwrap_or(0)
    }

    /// The sum of the terms: the squared distance.
    pub fn total(&self) -> f64 {
        self.terms.iter().sum()
    }
}

/// Sequential contributions of the centred vector `c` under `scatter`.
pub(crate) fn contributions(
    scatter: &Scatter,
    c: &[f64],
    order: &ContributionOrder,
) -> Result<Contributions> {
    let p = scatter.dim();
    if let ContributionOrder::Given(perm) = order {
        check_permutation(perm, p)?;
    }
    let mut s = scatter.matrix_slice().to_vec();
    let mut r = c.to_vec();
    let mut remaining: Vec<usize> = (0..p).collect();
    let mut chosen = Vec::with_capacity(p);
    let mut terms = vec![0.0; p];
    for step in 0..p {
        let pick = match order {
            ContributionOrder::Given(perm) => perm[step],
            ContributionOrder::LargestFirst => {
                let mut best = remaining[0];
                let mut best_t = f64::NEG_INFINITY;
                for &j in &remaining {
                    let sjj = s[j * p + j];
                    let t = if sjj > 0.0 { r[j] * r[j] / sjj } else { 0.0 };
                    if t > best_t {
                        best_t = t;
                        best = j;
                    }
                }
                best
            }
        };
        let sjj = s[pick * p + pick];
        terms[pick] = if sjj > 0.0 {
            r[pick] * r[pick] / sjj
        } else {
            0.0
        };
        remaining.retain(|&j| j != pick);
        chosen.push(pick);
        if sjj > 0.0 {
            for &i in &remaining {
                let f = s[i * p + pick] / sjj;
                r[i] -= f * r[pick];
                for &k in &remaining {
                    s[i * p + k] -= f * s[pick * p + k];
                }
            }
        }
    }
    if terms.iter().any(|t| !t.is_finite()) {
        return Err(Error::Overflow { row: 0 });
    }
    Ok(Contributions {
        order: chosen,
        terms,
    })
}
