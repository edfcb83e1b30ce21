//! The shape of each variable on its own: sample skewness, kurtosis and
//! the Shapiro–Wilk test.
//!
//! For variable `j` with central moments `m_k = n⁻¹ Σᵢ (xᵢⱼ − x̄ⱼ)^k`:
//! skewness `√b₁ = m₃ / m₂^(3/2)` (0 for a symmetric sample) and kurtosis
//! `b₂ = m₄ / m₂²` (3 for a normal population; larger means heavier
//! tails). These are the moment ratios of Pearson (1895), the univariate
//! cases of Mardia's measures. Variables are standardized before the powers
//! are taken, so that large values cannot overflow.
//!
//! A multivariate test that rejects says that something departs; these
//! per-variable measures often say what.

use super::blocks::{power_sums, RowMap};
use super::doornik_hansen::central_moments;
use super::royston::shapiro_wilk_columns;
use super::shapiro_wilk::{ShapiroWilk, MAX_ROWS, MIN_ROWS};
use crate::error::{Error, Result};
use crate::moments::{Divisor, MomentAccumulator};
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// Skewness, kurtosis and (for `3 ≤ n ≤ 5000`) the Shapiro–Wilk test of
/// one variable.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct VariableShape {
    /// Sample skewness `√b₁ = m₃ / m₂^(3/2)`.
    pub skewness: f64,
    /// Sample kurtosis `b₂ = m₄ / m₂²` (3 for a normal population).
    pub kurtosis: f64,
    /// The Shapiro–Wilk test, or `None` outside `3 ≤ n ≤ 5000` rows.
    pub shapiro_wilk: Option<ShapiroWilk>,
}

impl VariableShape {
    /// The shape of every column of `rows`.
    ///
    /// # Errors
    /// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
    /// [`Error::TooFewRows`] for a single row; [`Error::ZeroVariance`]
    /// naming a constant column; [`Error::Overflow`] if a variance
    /// overflows.
    ///
    /// # Example
    /// ```
    /// use mvdist::normality::VariableShape;
    /// use ndarray::array;
    ///
    /// let rows = array![[1.0, 10.0], [2.0, 11.0], [3.0, 10.5], [4.0, 30.0]];
    /// let shapes = VariableShape::of_columns(rows.view())?;
    /// assert!(shapes[0].skewness.abs() < 1e-12); // evenly spaced: symmetric
    /// assert!(shapes[1].skewness > 1.0);          // one far value: skewed right
    /// let w = shapes[1].shapiro_wilk.ok_or("computed for n ≥ 3")?;
    /// assert!(w.p_value() < 0.05);
    /// # Ok::<(), Box<dyn std::error::Error>>(())
    /// ```
    pub fn of_columns(rows: ArrayView2<'_, f64>) -> Result<Vec<VariableShape>> {
        let (n, p) = rows.dim();
        if p == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        if n == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        if n < 2 {
            return Err(Error::TooFewRows {
                rows: n,
                needed: 2,
                columns: p,
            });
        }
        let acc = MomentAccumulator::from_rows(rows)?;
        if let Some(column) = (0..p).find(|&j| acc.column_min()[j] == acc.column_max()[j]) {
            return Err(Error::ZeroVariance { column });
        }
        let cov = acc.covariance(Divisor::MaximumLikelihood)?;
        let mut scale = vec![0.0; p * p];
        for j in 0..p {
            let v = cov[(j, j)];
            if !(v > 0.0) {
                return Err(Error::ZeroVariance { column: j });
            }
            scale[j * p + j] = 1.0 / v.sqrt();
        }
        let sums = power_sums(
            rows,
            &RowMap {
                location: acc.mean(),
                matrix: &scale,
                lower: true,
            },
        );
        let tests = if (MIN_ROWS..=MAX_ROWS).contains(&n) {
            Some(shapiro_wilk_columns(rows)?)
        } else {
            None
        };
        let mut out = Vec::with_capacity(p);
        for (j, s) in sums.chunks_exact(4).enumerate() {
            let (m2, m3, m4) = central_moments(s, n as f64);
            let shape = VariableShape {
                skewness: m3 / m2.powf(1.5),
                kurtosis: m4 / (m2 * m2),
                shapiro_wilk: tests.as_ref().map(|t| t[j]),
            };
            if !(shape.skewness.is_finite() && shape.kurtosis.is_finite()) {
                return Err(Error::ZeroVariance { column: j });
            }
            out.push(shape);
        }
        Ok(out)
    }
}
