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

use crate::error::Hyperplane;
use crate::kernels::linalg;
use ndarray::ArrayView2;

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
