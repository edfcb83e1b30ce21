//! Cholesky solves and an iteratively refined quadratic form.
//!
//! The refined form computes the residual `c − Σ y` with error-free
//! transformations (TwoSum and an FMA-based TwoProduct; Ogita, Rump and
//! Oishi, "Accurate sum and dot product", SIAM J. Sci. Comput. 26, 2005), so
//! that each refinement step gains about −log10(κ·ε) digits until the result
//! is accurate to working precision (mixed-precision iterative refinement;
//! Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed., ch. 12).

use super::Scatter;

/// Solves `Σ y = b` in place: `L w = b`, then `Lᵀ y = w`.
pub(crate) fn cholesky_solve_in_place(s: &Scatter, y: &mut [f64]) {
    let p = s.dim();
    let l = s.factor_slice();
    for i in 0..p {
        let mut acc = y[i];
        for k in 0..i {
            acc -= l[i * p + k] * y[k];
        }
        y[i] = acc / l[i * p + i];
    }
    for i in (0..p).rev() {
        let mut acc = y[i];
        for k in (i + 1)..p {
            acc -= l[k * p + i] * y[k];
        }
        y[i] = acc / l[i * p + i];
    }
}

#[inline]
fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    (s, (a - (s - bb)) + (b - bb))
}

#[inline]
fn two_product(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    (p, a.mul_add(b, -p))
}

/// Dot product in about twice the working precision, plus an initial value.
fn compensated_dot(init: f64, a: &[f64], b: &[f64], sign: f64) -> f64 {
    let mut s = init;
    let mut comp = 0.0;
    for (&x, &y) in a.iter().zip(b) {
        let (p, ep) = two_product(sign * x, y);
        let (t, es) = two_sum(s, p);
        s = t;
        comp += ep + es;
    }
    s + comp
}

/// `cᵀ Σ⁻¹ c` by iterative refinement of `y = Σ⁻¹ c`.
pub(crate) fn refined_quadratic_form(s: &Scatter, c: &[f64]) -> f64 {
    let p = s.dim();
    let a = s.matrix_slice();
    let mut y = c.to_vec();
    cholesky_solve_in_place(s, &mut y);
    let mut r = vec![0.0; p];
    let mut previous = f64::INFINITY;
    for _ in 0..6 {
        for i in 0..p {
            r[i] = compensated_dot(c[i], &a[i * p..(i + 1) * p], &y, -1.0);
        }
        cholesky_solve_in_place(s, &mut r);
        let size: f64 = r.iter().map(|v| v.abs()).sum::<f64>();
        for (yi, ri) in y.iter_mut().zip(&r) {
            *yi += ri;
        }
        let scale: f64 = y.iter().map(|v| v.abs()).sum::<f64>();
        if size <= f64::EPSILON * scale || size >= previous {
            break;
        }
        previous = size;
    }
    compensated_dot(0.0, c, &y, 1.0)
}
