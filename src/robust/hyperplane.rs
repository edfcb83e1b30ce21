//! Exact fit: a hyperplane that holds at least `h` rows.
//!
//! When the covariance of an `h`-subset is singular, its rows lie on a
//! hyperplane `aᵀx = b`, whose unit normal `a` is the eigenvector of the
//! smallest eigenvalue of that covariance and `b = aᵀx̄` (Rousseeuw and Van
//! Driessen 1999, §2: the exact-fit property). If at least `h` of all rows
//! lie on it, the minimum covariance determinant is 0 and the robust
//! scatter singular: that is reported as [`crate::Error::ExactFit`].
//!
//! A row counts as on the plane when `|aᵀx − b| ≤ 1e-9 · (Σ_j |a_j x_j| + |b|)`
//! plus a tiny absolute floor, which accepts rounding of an exact relation
//! and nothing much wider.

use crate::linalg;
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};
use std::fmt;

/// A hyperplane `aᵀx = b` (with `‖a‖ = 1`) and the rows that lie on it.
///
/// # Example
/// ```
/// use mvdist::{robust::{minimum_covariance_determinant, McdSettings}, Error};
/// use ndarray::Array2;
/// // 30 of 40 rows satisfy x₁ = 2·x₀ + 1; the rest are scattered.
/// let rows = Array2::from_shape_fn((40, 2), |(i, j)| {
///     let t = i as f64;
///     match (i < 30, j) {
///         (_, 0) => t,
///         (true, _) => 2.0 * t + 1.0,
///         (false, _) => (t * 1.7).sin() * 50.0,
///     }
/// });
/// match minimum_covariance_determinant(rows.view(), &McdSettings::default()) {
///     Err(Error::ExactFit { hyperplane }) => {
///         assert!(hyperplane.rows().len() >= 30);
///         assert!(hyperplane.residual(&[3.0, 7.0]).abs() < 1e-12);
///     }
///     other => return Err(format!("expected an exact fit, got {other:?}").into()),
/// }
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Hyperplane {
    coefficients: Vec<f64>,
    offset: f64,
    rows: Vec<usize>,
    subset_size: usize,
}

impl Hyperplane {
    /// The unit normal `a` (its largest entry in magnitude is positive).
    pub fn coefficients(&self) -> &[f64] {
        &self.coefficients
    }

    /// The offset `b` in `aᵀx = b`.
    pub fn offset(&self) -> f64 {
        self.offset
    }

    /// The rows (0-based, ascending) that lie on the hyperplane.
    pub fn rows(&self) -> &[usize] {
        &self.rows
    }

    /// The subset size `h` that the number of rows on the plane reached.
    pub fn subset_size(&self) -> usize {
        self.subset_size
    }

    /// `aᵀx − b`: the signed distance of `x` from the hyperplane (0 on it).
    /// Entries beyond the hyperplane's dimension are ignored.
    pub fn residual(&self, x: &[f64]) -> f64 {
        self.coefficients
            .iter()
            .zip(x)
            .map(|(a, v)| a * v)
            .sum::<f64>()
            - self.offset
    }
}

impl fmt::Display for Hyperplane {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut first = true;
        for (j, a) in self.coefficients.iter().enumerate() {
            if a.abs() < 1e-12 {
                continue;
            }
            if first {
                write!(f, "{a:.6}·x{j}")?;
            } else if *a < 0.0 {
                write!(f, " − {:.6}·x{j}", -a)?;
            } else {
                write!(f, " + {a:.6}·x{j}")?;
            }
            first = false;
        }
        write!(f, " = {:.6} (columns numbered from 0)", self.offset)
    }
}

/// The hyperplane through a singular subset (mean `mean`, covariance `cov`
/// row-major) and every row of `x` on it; `Some` only when at least
/// `subset_size` rows are on it.
pub(crate) fn exact_fit(
    x: ArrayView2<'_, f64>,
    mean: &[f64],
    cov: &[f64],
    subset_size: usize,
) -> Option<Hyperplane> {
    let p = mean.len();
    let (_, vectors) = linalg::symmetric_eigen(cov, p)?;
    // Eigenvalues ascend: the first column is the normal.
    let mut a: Vec<f64> = (0..p).map(|i| vectors[i * p]).collect();
    let norm = a.iter().map(|v| v * v).sum::<f64>().sqrt();
    if !(norm > 0.0) {
        return None;
    }
    let big = a
        .iter()
        .copied()
        .fold(0.0f64, |m, v| if v.abs() > m.abs() { v } else { m });
    let sign = if big < 0.0 { -1.0 } else { 1.0 };
    for v in a.iter_mut() {
        *v *= sign / norm;
    }
    let b: f64 = a.iter().zip(mean).map(|(a, m)| a * m).sum();
    let spread = (0..p).map(|j| cov[j * p + j]).sum::<f64>().max(0.0).sqrt();
    let floor = 1e-12 * spread + f64::MIN_POSITIVE;
    let rows: Vec<usize> = x
        .outer_iter()
        .enumerate()
        .filter(|(_, r)| {
            let (mut dot, mut mag) = (0.0, 0.0);
            for (aj, v) in a.iter().zip(r.iter()) {
                dot += aj * v;
                mag += (aj * v).abs();
            }
            (dot - b).abs() <= 1e-9 * (mag + b.abs()) + floor
        })
        .map(|(i, _)| i)
        .collect();
    if rows.len() >= subset_size {
        Some(Hyperplane {
            coefficients: a,
            offset: b,
            rows,
            subset_size,
        })
    } else {
        None
    }
}

/// The hyperplane `x_0 = value` of a one-variable exact fit.
pub(crate) fn univariate(x: ArrayView2<'_, f64>, value: f64, subset_size: usize) -> Hyperplane {
    let rows = x
        .outer_iter()
        .enumerate()
        .filter(|(_, r)| r[0] == value)
        .map(|(i, _)| i)
        .collect();
    Hyperplane {
        coefficients: vec![1.0],
        offset: value,
        rows,
        subset_size,
    }
}
