//! Box's M test of equal scatter matrices across groups.

use super::sample_moments;
use crate::calibration::{check_probability, Reference, TestStatistic};
use crate::classification::Rule;
use crate::error::{Error, Result};
use crate::moments::{Divisor, GroupMoments};
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// The result of Box's M test; see [`scatter_equality`].
///
/// # Example
/// ```
/// use mvdist::{classification::Rule, mean_tests::scatter_equality};
/// use ndarray::array;
///
/// let a = array![[1.0, 2.0], [2.0, 2.5], [3.0, 4.5], [4.0, 4.0], [2.5, 3.0], [3.5, 3.2]];
/// let b = array![[10.0, 1.0], [30.0, -9.0], [-5.0, 12.0], [22.0, 0.0], [0.0, 20.0], [15.0, 5.0]];
/// let m = scatter_equality(&[a.view(), b.view()])?;
/// assert_eq!(m.suggested_rule(0.05)?, Rule::Quadratic);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ScatterEquality {
    statistic: f64,
    group_sizes: Vec<usize>,
    dim: usize,
    chi_square: TestStatistic,
    f: Option<TestStatistic>,
}

impl ScatterEquality {
    /// Box's `M = (N − g) ln|S_pooled| − Σᵢ (nᵢ − 1) ln|Sᵢ|`.
    pub fn statistic(&self) -> f64 {
        self.statistic
    }

    /// Rows in each group.
    pub fn group_sizes(&self) -> &[usize] {
        &self.group_sizes
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// Box's χ² approximation: `(1 − c₁) M` referred to χ² with
    /// `p(p+1)(g−1)/2` degrees of freedom ([`Reference::box_m_chi_square`]).
    pub fn chi_square(&self) -> TestStatistic {
        self.chi_square
    }

    /// Box's F approximation: the F statistic referred to
    /// [`Reference::box_m_f`]; `None` where it is undefined (the two moment
    /// constants coincide, or `M` exceeds the approximation's range).
    pub fn f(&self) -> Option<TestStatistic> {
        self.f
    }

    /// The p-value used for decisions: the F approximation's when defined
    /// (the more accurate of the two for small groups), else the χ² one.
    pub fn p_value(&self) -> f64 {
        self.f.map_or(self.chi_square.p_value(), |f| f.p_value())
    }

    /// [`Rule::Quadratic`] when equality is rejected at level
    /// `alpha` ([`p_value`](Self::p_value) ≤ `alpha`), else
    /// [`Rule::Linear`].
    ///
    /// Box's M is very sensitive to non-normality (heavy tails inflate it)
    /// and, with large groups, rejects for differences too small to matter;
    /// a small `alpha` such as 0.001 is common practice. Compare the two
    /// rules' error rates on held-out rows before settling.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn suggested_rule(&self, alpha: f64) -> Result<Rule> {
        check_probability(alpha)?;
        Ok(if self.p_value() <= alpha {
            Rule::Quadratic
        } else {
            Rule::Linear
        })
    }
}

/// Box's M test that `g ≥ 2` groups share one scatter matrix (Box 1949).
///
/// With `nᵢ` rows and unbiased covariance `Sᵢ` in group `i`, `N = Σ nᵢ`,
/// the pooled `S = Σ (nᵢ−1) Sᵢ / (N − g)` and `p` variables:
///
/// ```text
/// M  = (N − g) ln|S| − Σ (nᵢ − 1) ln|Sᵢ|
/// c₁ = [Σ 1/(nᵢ−1) − 1/(N−g)] (2p² + 3p − 1) / (6(p+1)(g−1))
/// c₂ = [Σ 1/(nᵢ−1)² − 1/(N−g)²] (p−1)(p+2) / (6(g−1))
/// ν₁ = p(p+1)(g−1)/2
/// χ²:  (1 − c₁) M ~ χ²(ν₁)
/// F:   ν₂ = (ν₁ + 2) / |c₂ − c₁²|;
///      c₂ > c₁²:  F = M / b,  b = ν₁ / (1 − c₁ − ν₁/ν₂)
///      c₂ < c₁²:  F = ν₂ M / (ν₁ (b − M)),  b = ν₂ / (1 − c₁ + 2/ν₂)
///      F ~ F(ν₁, ν₂)
/// ```
///
/// (Box 1949; in this form in A. C. Rencher, *Methods of Multivariate
/// Analysis*, 2nd ed., Wiley 2002, §7.3.2.) Log-determinants come from the
/// Cholesky factors.
///
/// # Errors
/// [`Error::InvalidParameter`] for fewer than two groups;
/// [`Error::InGroup`] wrapping the group's [`Error::ShapeMismatch`] (columns
/// differ from the first group's), [`Error::Empty`], [`Error::NonFinite`],
/// [`Error::TooFewRows`] (each group needs `p + 1` rows) or a singular
/// scatter ([`Error::ZeroVariance`], [`Error::Collinear`]).
///
/// # Example
/// ```
/// use mvdist::mean_tests::scatter_equality;
/// use ndarray::array;
///
/// let a = array![[1.0, 2.0], [2.0, 2.5], [3.0, 4.5], [4.0, 4.0], [2.5, 3.0]];
/// let b = array![[1.2, 2.2], [2.1, 2.0], [3.3, 4.0], [3.8, 4.4], [2.4, 3.5]];
/// let m = scatter_equality(&[a.view(), b.view()])?;
/// assert!(m.statistic() >= 0.0);
/// use mvdist::calibration::Law;
/// assert_eq!(m.chi_square().reference().law(), Law::ChiSquare { dof: 3.0 });
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn scatter_equality(groups: &[ArrayView2<'_, f64>]) -> Result<ScatterEquality> {
    let g = groups.len();
    if g < 2 {
        return Err(Error::invalid(
            "groups",
            format!("Box's M compares at least two groups; {g} given"),
        ));
    }
    let p = groups[0].ncols();
    let mut accs = Vec::with_capacity(g);
    let mut weighted_log_dets = 0.0;
    let mut sum_inv = 0.0;
    let mut sum_inv_sq = 0.0;
    for (i, x) in groups.iter().enumerate() {
        if x.ncols() != p {
            return Err(Error::in_group(i)(Error::ShapeMismatch {
                what: "number of columns (the first group's)",
                expected: p,
                found: x.ncols(),
            }));
        }
        let acc = sample_moments(*x, Some(i))?;
        let s = acc.scatter(Divisor::Unbiased).map_err(Error::in_group(i))?;
        let nu = acc.count() as f64 - 1.0;
        weighted_log_dets += nu * s.log_determinant();
        sum_inv += 1.0 / nu;
        sum_inv_sq += 1.0 / (nu * nu);
        accs.push(acc);
    }
    let sizes: Vec<usize> = accs.iter().map(|a| a.count() as usize).collect();
    let pooled = GroupMoments::from_accumulators((0..g).collect(), accs)
        .pooled_scatter(Divisor::Unbiased)?;
    let nu_total = sizes.iter().sum::<usize>() as f64 - g as f64;
    let statistic = nu_total * pooled.log_determinant() - weighted_log_dets;
    let (pf, gf) = (p as f64, g as f64);
    let c1 = (sum_inv - 1.0 / nu_total) * (2.0 * pf * pf + 3.0 * pf - 1.0)
        / (6.0 * (pf + 1.0) * (gf - 1.0));
    let c2 =
        (sum_inv_sq - 1.0 / (nu_total * nu_total)) * (pf - 1.0) * (pf + 2.0) / (6.0 * (gf - 1.0));
    let df1 = pf * (pf + 1.0) * (gf - 1.0) / 2.0;
    let chi_stat = (1.0 - c1) * statistic;
    let chi_square = TestStatistic::new(chi_stat, Reference::box_m_chi_square(g, p)?);
    let gap = c2 - c1 * c1;
    let f = if gap.abs() > 1e-12 * c1.abs().max(c2.abs()) {
        let df2 = (df1 + 2.0) / gap.abs();
        let stat = if gap > 0.0 {
            let b = df1 / (1.0 - c1 - df1 / df2);
            statistic / b
        } else {
            let b = df2 / (1.0 - c1 + 2.0 / df2);
            if b > statistic {
                df2 * statistic / (df1 * (b - statistic))
            } else {
                f64::NAN
            }
        };
        if stat.is_finite() && df2.is_finite() {
            Some(TestStatistic::new(stat, Reference::box_m_f(df1, df2)?))
        } else {
            None
        }
    } else {
        None
    };
    if !statistic.is_finite() || !chi_square.p_value().is_finite() {
        return Err(Error::Overflow { row: 0 });
    }
    Ok(ScatterEquality {
        statistic,
        group_sizes: sizes,
        dim: p,
        chi_square,
        f,
    })
}
