//! Checks that turn a candidate matrix into a validated scatter, and the
//! diagnosis that names the offending variable when it is not positive
//! definite.

use crate::error::{Error, Result};

/// Relative tolerance for symmetry: `|a_ij − a_ji| ≤ tol·√(|a_ii a_jj|)`.
pub(crate) const SYMMETRY_TOLERANCE: f64 = 1e-9;

/// Default collinearity tolerance for `p` variables: a variable whose
/// variance left after regression on the earlier variables is below this
/// fraction of its own variance is reported as collinear.
pub(crate) fn default_collinearity_tolerance(p: usize) -> f64 {
    32.0 * p.max(1) as f64 * f64::EPSILON
}

/// Checks finiteness and symmetry, and returns the symmetrized matrix.
pub(crate) fn symmetrized(a: &[f64], p: usize) -> Result<Vec<f64>> {
    for (k, &v) in a.iter().enumerate() {
        if !v.is_finite() {
            return Err(Error::NonFinite {
                row: k / p,
                column: k % p,
                value: v,
            });
        }
    }
    let mut worst: Option<(usize, usize, f64, f64)> = None;
    for i in 0..p {
        for j in 0..i {
            let d = (a[i * p + j] - a[j * p + i]).abs();
            let scale = (a[i * p + i] * a[j * p + j]).abs().sqrt();
            let excess = d - SYMMETRY_TOLERANCE * scale;
            if excess > 0.0 && worst.is_none_or(|w| excess > w.3) {
                worst = Some((i, j, d, excess));
            }
        }
    }
    if let Some((row, column, difference, _)) = worst {
        return Err(Error::NotSymmetric {
            row,
            column,
            difference,
        });
    }
    let mut s = a.to_vec();
    for i in 0..p {
        for j in 0..i {
            let m = 0.5 * (a[i * p + j] + a[j * p + i]);
            s[i * p + j] = m;
            s[j * p + i] = m;
        }
    }
    Ok(s)
}

/// Names the variable at which a Cholesky factorization of `a` breaks down,
/// by a plain left-looking factorization that stops there.
pub(crate) fn diagnose(a: &[f64], p: usize, tolerance: f64) -> Error {
    let mut l = vec![0.0; p * p];
    for j in 0..p {
        let ajj = a[j * p + j];
        if ajj == 0.0 {
            return Error::ZeroVariance { column: j };
        }
        if ajj < 0.0 {
            return Error::NotPositiveDefinite { column: j };
        }
        let mut residual = ajj;
        for k in 0..j {
            residual -= l[j * p + k] * l[j * p + k];
        }
        let fraction = residual / ajj;
        if fraction < tolerance {
            // Slightly negative residuals are rounding of an exact dependence.
            if fraction < -1e3 * tolerance.max(f64::EPSILON) {
                return Error::NotPositiveDefinite { column: j };
            }
            return Error::Collinear {
                column: j,
                residual_fraction: fraction.max(0.0),
            };
        }
        let ljj = residual.sqrt();
        l[j * p + j] = ljj;
        for i in (j + 1)..p {
            let mut s = a[i * p + j];
            for k in 0..j {
                s -= l[i * p + k] * l[j * p + k];
            }
            l[i * p + j] = s / ljj;
        }
    }
    // The caller's factorization failed although this one did not: report
    // the variable with the smallest unexplained fraction.
    let (column, fraction) = (0..p)
        .map(|j| (j, l[j * p + j] * l[j * p + j] / a[j * p + j]))
        .fold((0, f64::INFINITY), |b, c| if c.1 < b.1 { c } else { b });
    Error::Collinear {
        column,
        residual_fraction: fraction,
    }
}
