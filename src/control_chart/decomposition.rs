//! The Mason–Tracy–Young decomposition of T² into unconditional and
//! conditional terms.
//!
//! For a centred point `c = x − x̄` and scatter `S`, the term of variable
//! `j` given a set `J` of other variables is its squared standardized
//! residual from the regression on `J`:
//!
//! ```text
//! T²_{j·J} = (c_j − s_jJ S_JJ⁻¹ c_J)² / (s_jj − s_jJ S_JJ⁻¹ s_Jj),
//! ```
//!
//! and `T²_j = c_j² / s_jj` when `J` is empty (the unconditional term).
//! Along any ordering `π` of the variables the terms
//! `T²_{π1}, T²_{π2·π1}, …, T²_{πp·π1…π(p−1)}` add up to `T²` exactly
//! (Mason, Tracy and Young 1995). There are `p!` orderings but only
//! `p·2^(p−1)` distinct terms; [`conditional_terms`] lists every term with
//! at most a given number of conditioning variables, [`terms_along`] the
//! `p` terms of one ordering.
//!
//! A large unconditional term says a variable is out of range on its own; a
//! large conditional term with small unconditional terms says the
//! relationship between variables is broken. Each term has its own
//! in-control law ([`ControlLimit::term_distribution`](super::ControlLimit::term_distribution)).
//!
//! Terms are computed through Cholesky factors of the sub-matrices `S_JJ`,
//! built one variable at a time while walking the subsets in lexicographic
//! order; nothing is inverted.
//!
//! # Reference
//! R. L. Mason, N. D. Tracy and J. C. Young (1995). Decomposition of T² for
//! multivariate control chart interpretation. *J. Quality Technology* 27,
//! 99–108.

use crate::error::{Error, Result};
use crate::explain::{contributions, ContributionOrder};
use crate::scatter::Scatter;
use serde::{Deserialize, Serialize};

/// The most terms [`conditional_terms`] will produce.
pub const MAX_TERMS: usize = 1_000_000;

/// One term `T²_{j·J}` of the decomposition.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct DecompositionTerm {
    /// The variable `j`.
    pub variable: usize,
    /// The conditioning variables `J` (empty for an unconditional term).
    pub given: Vec<usize>,
    /// The value of the term.
    pub value: f64,
    /// `T²_J`: the point's T² on the conditioning variables alone (0 for
    /// an unconditional term). The exact law of a conditional term depends
    /// on it through the leverage of the estimated regression; see
    /// [`ControlLimit::term_distribution`](super::ControlLimit::term_distribution).
    #[serde(default)]
    pub given_t_squared: f64,
}

/// The number of terms with at most `depth` conditioning variables:
/// `p · Σ_{k ≤ depth} C(p−1, k)`, or `None` on overflow.
///
/// # Example
/// ```
/// use mvdist::control_chart::decomposition::term_count;
/// assert_eq!(term_count(4, 0), Some(4));
/// assert_eq!(term_count(4, 1), Some(4 + 4 * 3));
/// assert_eq!(term_count(4, 3), Some(4 * 8)); // p·2^(p−1)
/// ```
pub fn term_count(p: usize, depth: usize) -> Option<usize> {
    if p == 0 {
        return Some(0);
    }
    // C(p−1, k) = C(p−1, k−1) · (p − k) / k, exact at every step.
    let mut binomial: usize = 1;
    let mut total: usize = 1;
    for k in 1..=depth.min(p - 1) {
        binomial = binomial.checked_mul(p - k)?.checked_div(k)?;
        total = total.checked_add(binomial)?;
    }
    total.checked_mul(p)
}

fn check_point(scatter: &Scatter, centred: &[f64]) -> Result<()> {
    if centred.len() != scatter.dim() {
        return Err(Error::ShapeMismatch {
            what: "point length (number of columns)",
            expected: scatter.dim(),
            found: centred.len(),
        });
    }
    crate::data::check_row_finite(centred, 0)
}

/// Every term `T²_{j·J}` with `|J| ≤ depth`, for the centred point
/// `centred` under `scatter`: unconditional terms first, then terms with
/// one conditioning variable, and so on (within a depth, by `J` in
/// lexicographic order, then by `j`). A `depth` of `p − 1` or more gives
/// all `p·2^(p−1)` terms.
///
/// # Errors
/// [`Error::ShapeMismatch`] or [`Error::NonFinite`] for a bad point;
/// [`Error::InvalidParameter`] if more than [`MAX_TERMS`] terms would be
/// produced; [`Error::Collinear`] if a conditional variance is not positive
/// in floating point; [`Error::Overflow`] for a non-finite term.
///
/// # Example
/// ```
/// use mvdist::control_chart::decomposition::conditional_terms;
/// use mvdist::Scatter;
/// use ndarray::array;
///
/// let s = Scatter::new(array![[1.0, 0.8], [0.8, 1.0]].view())?;
/// let terms = conditional_terms(&s, &[1.0, -1.0], 1)?;
/// assert_eq!(terms.len(), 4);
/// // Unconditional: 1 each. Given the other: (−1 − 0.8)² / 0.36 = 9.
/// assert!((terms[0].value - 1.0).abs() < 1e-12);
/// assert!((terms[3].value - 9.0).abs() < 1e-12);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn conditional_terms(
    scatter: &Scatter,
    centred: &[f64],
    depth: usize,
) -> Result<Vec<DecompositionTerm>> {
    check_point(scatter, centred)?;
    let p = scatter.dim();
    let depth = depth.min(p - 1);
    let count = term_count(p, depth).filter(|&c| c <= MAX_TERMS).ok_or_else(|| {
        Error::invalid(
            "conditioning depth",
            format!("depth {depth} with {p} columns gives more than {MAX_TERMS} terms; choose a smaller depth"),
        )
    })?;
    let mut walk = SubsetWalk {
        s: scatter.matrix_slice(),
        p,
        c: centred,
        set: Vec::with_capacity(depth),
        rows: Vec::with_capacity(depth),
        z: Vec::with_capacity(depth),
        by_depth: vec![Vec::new(); depth + 1],
    };
    walk.visit(depth)?;
    let mut out = Vec::with_capacity(count);
    for level in walk.by_depth {
        out.extend(level);
    }
    Ok(out)
}

/// The `p` terms along `order`: `T²_{π1}, T²_{π2·π1}, …`. They add up to
/// the point's T² exactly (up to rounding).
///
/// # Errors
/// [`Error::ShapeMismatch`] or [`Error::NonFinite`] for a bad point;
/// [`Error::ShapeMismatch`] or [`Error::InvalidParameter`] unless `order`
/// is a permutation of `0..p`.
///
/// # Example
/// ```
/// use mvdist::control_chart::decomposition::terms_along;
/// use mvdist::Scatter;
/// use ndarray::array;
///
/// let s = Scatter::new(array![[1.0, 0.8], [0.8, 1.0]].view())?;
/// let terms = terms_along(&s, &[1.0, -1.0], &[1, 0])?;
/// let total: f64 = terms.iter().map(|t| t.value).sum();
/// assert!((total - s.squared_norm(&[1.0, -1.0])?).abs() < 1e-12);
/// assert_eq!(terms[1].given, vec![1]);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn terms_along(
    scatter: &Scatter,
    centred: &[f64],
    order: &[usize],
) -> Result<Vec<DecompositionTerm>> {
    check_point(scatter, centred)?;
    let c = contributions(scatter, centred, &ContributionOrder::Given(order.to_vec()))?;
    let mut given_t_squared = 0.0;
    Ok(order
        .iter()
        .enumerate()
        .map(|(k, &j)| {
            let term = DecompositionTerm {
                variable: j,
                given: order[..k].to_vec(),
                value: c.terms()[j],
                given_t_squared,
            };
            given_t_squared += term.value;
            term
        })
        .collect())
}

/// Depth-first walk over conditioning sets `J` (sorted), carrying the
/// Cholesky rows of `S_JJ` and the whitened `c_J`.
struct SubsetWalk<'a> {
    s: &'a [f64],
    p: usize,
    c: &'a [f64],
    set: Vec<usize>,
    /// Row `a` holds `L[a][0..=a]` of the Cholesky factor of `S_JJ`.
    rows: Vec<Vec<f64>>,
    /// `z = L⁻¹ c_J`.
    z: Vec<f64>,
    by_depth: Vec<Vec<DecompositionTerm>>,
}

impl SubsetWalk<'_> {
    /// `(l, v, r)` for variable `i` given the current set: `l = L⁻¹ s_Ji`,
    /// the conditional variance `v = s_ii − ‖l‖²` and the conditional
    /// residual `r = c_i − lᵀ z`.
    fn extend(&self, i: usize) -> Result<(Vec<f64>, f64, f64)> {
        let p = self.p;
        let k = self.set.len();
        let mut l = vec![0.0; k];
        for a in 0..k {
            let mut acc = self.s[self.set[a] * p + i];
            for b in 0..a {
                acc -= self.rows[a][b] * l[b];
            }
            l[a] = acc / self.rows[a][a];
        }
        let sii = self.s[i * p + i];
        let v = sii - l.iter().map(|x| x * x).sum::<f64>();
        let r = self.c[i] - l.iter().zip(&self.z).map(|(a, b)| a * b).sum::<f64>();
        if !(v > 0.0) {
            return Err(Error::Collinear {
                column: i,
                residual_fraction: (v / sii).max(0.0),
            });
        }
        Ok((l, v, r))
    }

    fn visit(&mut self, depth: usize) -> Result<()> {
        let level = self.set.len();
        for i in 0..self.p {
            if self.set.contains(&i) {
                continue;
            }
            let (_, v, r) = self.extend(i)?;
            let value = r * r / v;
            if !value.is_finite() {
                return Err(Error::Overflow { row: 0 });
            }
            self.by_depth[level].push(DecompositionTerm {
                variable: i,
                given: self.set.clone(),
                value,
                given_t_squared: self.z.iter().map(|z| z * z).sum(),
            });
        }
        if level < depth {
            let start = self.set.last().map_or(0, |&m| m + 1);
            for j in start..self.p {
                let (mut row, v, r) = self.extend(j)?;
                let root = v.sqrt();
                row.push(root);
                self.set.push(j);
                self.rows.push(row);
                self.z.push(r / root);
                let result = self.visit(depth);
                self.set.pop();
                self.rows.pop();
                self.z.pop();
                result?;
            }
        }
        Ok(())
    }
}
