//! A regularized scatter `K(ρ) = ρ I + (1 − ρ) M` held in spectral form.
//!
//! `M = Σ_k λ_k u_k u_kᵀ` has rank `r ≤ p` (orthonormal `u_k`, `λ_k ≥ 0`);
//! on the complement of the `u_k` it is zero. Then `K(ρ)` has the
//! eigenvalues `ρ + (1 − ρ) λ_k` on the `u_k` and `ρ` on the complement, so
//! its condition number, determinant and quadratic form need no `p × p`
//! factorization:
//!
//! ```text
//! ln det K(ρ) = Σ_k ln(ρ + (1 − ρ) λ_k) + (p − r) ln ρ
//! cᵀ K(ρ)⁻¹ c = Σ_k (u_kᵀc)² / (ρ + (1 − ρ) λ_k) + (‖c‖² − Σ_k (u_kᵀc)²) / ρ
//! ```
//!
//! When `M` is the covariance of `h` rows, its eigenvectors come from the
//! smaller of the `p × p` cross-product and the `h × h` Gram matrix (for
//! `p > h`, `u_k = Yᵀ v_k / σ_k` from the Gram eigenpairs `(σ_k², v_k)` of
//! the centred rows `Y`), so a concentration step costs `O(n p r)` rather
//! than `O(p³)` when `p` is large.

use crate::error::{Error, Result};
use crate::kernels::linalg;
use ndarray::ArrayView2;

/// Eigenvalues of a cross-product below this fraction of the largest are
/// treated as zero (their eigenvectors would be dominated by rounding).
const NEGLIGIBLE: f64 = 1e-10;

/// A location and the spectral form of `M`; see the [module docs](self).
#[derive(Clone, Debug)]
pub(crate) struct Spectrum {
    dim: usize,
    /// The location (length `p`).
    pub(crate) mean: Vec<f64>,
    /// `λ_k ≥ 0`, any order.
    values: Vec<f64>,
    /// `u_k` as the rows of an `r × p` row-major matrix.
    vectors: Vec<f64>,
}

fn eigen_failure() -> Error {
    Error::invalid("scatter", "the eigenvalue iteration did not converge")
}

fn symmetrize(g: &mut [f64], m: usize) {
    for i in 0..m {
        for j in 0..i {
            let v = 0.5 * (g[i * m + j] + g[j * m + i]);
            g[i * m + j] = v;
            g[j * m + i] = v;
        }
    }
}

/// The principal axes of `AᵀA` for the row-major `m × p` matrix `a`: its
/// eigenvalues above [`NEGLIGIBLE`] times the largest, in decreasing order,
/// and their orthonormal eigenvectors as the rows of an `r × p` matrix.
pub(crate) fn axes(a: &[f64], m: usize, p: usize) -> Result<(Vec<f64>, Vec<f64>)> {
    if m == 0 || p == 0 {
        return Ok((Vec::new(), Vec::new()));
    }
    let small = p.min(m);
    let mut g = vec![0.0; small * small];
    if p <= m {
        linalg::transposed_product(&mut g, a, a, m, p, p);
    } else {
        linalg::product_transposed(&mut g, a, a, m, p, m);
    }
    symmetrize(&mut g, small);
    let (vals, vecs) = linalg::symmetric_eigen(&g, small).ok_or_else(eigen_failure)?;
    let top = vals.last().copied().unwrap_or(0.0);
    if !(top > 0.0) {
        return Ok((Vec::new(), Vec::new()));
    }
    let kept: Vec<usize> = (0..small)
        .rev()
        .filter(|&k| vals[k] > NEGLIGIBLE * top)
        .collect();
    let r = kept.len();
    let values: Vec<f64> = kept.iter().map(|&k| vals[k]).collect();
    let mut vectors = vec![0.0; r * p];
    if p <= m {
        for (row, &k) in kept.iter().enumerate() {
            for i in 0..p {
                vectors[row * p + i] = vecs[i * p + k];
            }
        }
    } else {
        // u_k = Aᵀ v_k / σ_k: the kept Gram eigenvectors as an m × r matrix.
        let mut v = vec![0.0; m * r];
        for i in 0..m {
            for (col, &k) in kept.iter().enumerate() {
                v[i * r + col] = vecs[i * m + k];
            }
        }
        let mut t = vec![0.0; p * r];
        linalg::transposed_product(&mut t, a, &v, m, p, r);
        for (col, &value) in values.iter().enumerate() {
            let inv = 1.0 / value.sqrt();
            for j in 0..p {
                vectors[col * p + j] = t[j * r + col] * inv;
            }
        }
    }
    Ok((values, vectors))
}

impl Spectrum {
    /// A spectrum from its parts (`vectors` orthonormal, `values.len()`
    /// rows of length `mean.len()`).
    pub(crate) fn from_parts(mean: Vec<f64>, values: Vec<f64>, vectors: Vec<f64>) -> Self {
        Spectrum {
            dim: mean.len(),
            mean,
            values,
            vectors,
        }
    }

    /// Mean and `factor ·` covariance (divisor `h − 1`) of the rows `idx`
    /// (at least two) of the standard-layout `w`.
    pub(crate) fn of_rows(w: ArrayView2<'_, f64>, idx: &[usize], factor: f64) -> Result<Self> {
        let p = w.ncols();
        let h = idx.len();
        let all = w
            .as_slice()
            .ok_or_else(|| Error::invalid("rows", "internal layout error"))?;
        let mut mean = vec![0.0; p];
        for &i in idx {
            for (m, v) in mean.iter_mut().zip(&all[i * p..(i + 1) * p]) {
                *m += v;
            }
        }
        let inv_h = 1.0 / h as f64;
        mean.iter_mut().for_each(|m| *m *= inv_h);
        let mut y = Vec::with_capacity(h * p);
        for &i in idx {
            y.extend(
                all[i * p..(i + 1) * p]
                    .iter()
                    .zip(&mean)
                    .map(|(v, m)| v - m),
            );
        }
        let (mut values, vectors) = axes(&y, h, p)?;
        let scale = factor / (h.saturating_sub(1).max(1)) as f64;
        values.iter_mut().for_each(|v| *v *= scale);
        Ok(Spectrum {
            dim: p,
            mean,
            values,
            vectors,
        })
    }

    /// The rank `r` of `M`.
    pub(crate) fn rank(&self) -> usize {
        self.values.len()
    }

    fn largest(&self) -> f64 {
        self.values.iter().copied().fold(0.0, f64::max)
    }

    /// The smallest eigenvalue of `M` (0 when `r < p`).
    fn smallest(&self) -> f64 {
        if self.rank() < self.dim {
            0.0
        } else {
            self.values
                .iter()
                .copied()
                .fold(f64::INFINITY, f64::min)
                .max(0.0)
        }
    }

    /// The smallest `ρ ∈ [0, 1]` for which the condition number of `K(ρ)`
    /// is at most `kappa > 1`: 0 if `M` already satisfies it, otherwise the
    /// root of `(ρ + (1 − ρ) a) = κ (ρ + (1 − ρ) b)` for the extreme
    /// eigenvalues `a ≥ b` of `M`, `ρ = (a − κ b)/(a − κ b + κ − 1)`; 1 if
    /// `M = 0`.
    pub(crate) fn regularization_for(&self, kappa: f64) -> f64 {
        let a = self.largest();
        let b = self.smallest();
        if !(a > 0.0) {
            return 1.0;
        }
        if a <= kappa * b {
            return 0.0;
        }
        let excess = a - kappa * b;
        (excess / (excess + kappa - 1.0)).clamp(0.0, 1.0)
    }

    /// The condition number of `K(ρ)`.
    pub(crate) fn condition(&self, rho: f64) -> f64 {
        let e = |l: f64| rho + (1.0 - rho) * l;
        e(self.largest()) / e(self.smallest())
    }

    /// Whether `K(ρ)` is singular or too ill-conditioned to measure
    /// distances with (only possible at `ρ = 0`).
    pub(crate) fn singular_at(&self, rho: f64) -> bool {
        rho <= 0.0
            && (self.rank() < self.dim
                || !(self.smallest() > 1e3 * f64::EPSILON * self.largest() * self.dim as f64))
    }

    /// `ln det K(ρ)`; −∞ where [`singular_at`](Self::singular_at).
    pub(crate) fn log_det(&self, rho: f64) -> f64 {
        if self.singular_at(rho) {
            return f64::NEG_INFINITY;
        }
        let on_axes: f64 = self
            .values
            .iter()
            .map(|&l| (rho + (1.0 - rho) * l).ln())
            .sum();
        let rest = (self.dim - self.rank()) as f64;
        if rest > 0.0 {
            on_axes + rest * rho.ln()
        } else {
            on_axes
        }
    }

    /// `(w_i − m)ᵀ K(ρ)⁻¹ (w_i − m)` for every row of the standard-layout
    /// `w`, into `out`.
    pub(crate) fn squared_distances(
        &self,
        w: ArrayView2<'_, f64>,
        rho: f64,
        out: &mut [f64],
    ) -> Result<()> {
        let (n, p) = w.dim();
        if self.singular_at(rho) {
            return Err(Error::invalid(
                "regularization",
                "internal: distances asked of a singular scatter",
            ));
        }
        let all = w
            .as_slice()
            .ok_or_else(|| Error::invalid("rows", "internal layout error"))?;
        let mut c = Vec::with_capacity(n * p);
        for i in 0..n {
            c.extend(
                all[i * p..(i + 1) * p]
                    .iter()
                    .zip(&self.mean)
                    .map(|(v, m)| v - m),
            );
        }
        let r = self.rank();
        let mut proj = vec![0.0; n * r];
        if r > 0 {
            linalg::product_transposed(&mut proj, &c, &self.vectors, n, p, r);
        }
        let weights: Vec<f64> = self
            .values
            .iter()
            .map(|&l| 1.0 / (rho + (1.0 - rho) * l))
            .collect();
        for i in 0..n {
            let pr = &proj[i * r..(i + 1) * r];
            let on_axes: f64 = pr.iter().zip(&weights).map(|(x, w)| x * x * w).sum();
            out[i] = if r < p {
                let norm: f64 = c[i * p..(i + 1) * p].iter().map(|v| v * v).sum();
                let along: f64 = pr.iter().map(|x| x * x).sum();
                on_axes + (norm - along).max(0.0) / rho
            } else {
                on_axes
            };
        }
        Ok(())
    }

    /// The `p × p` matrix `K(ρ)`, row-major and exactly symmetric.
    pub(crate) fn regularized_matrix(&self, rho: f64) -> Vec<f64> {
        let p = self.dim;
        let r = self.rank();
        let mut k = vec![0.0; p * p];
        if r > 0 {
            let mut scaled = self.vectors.clone();
            for (row, &l) in self.values.iter().enumerate() {
                let f = (1.0 - rho) * l;
                scaled[row * p..(row + 1) * p]
                    .iter_mut()
                    .for_each(|v| *v *= f);
            }
            linalg::transposed_product(&mut k, &self.vectors, &scaled, r, p, p);
        }
        symmetrize(&mut k, p);
        for j in 0..p {
            k[j * p + j] += rho;
        }
        k
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    /// Both routes (p ≤ h and p > h) give the matrix and distances of the
    /// plain formulas on a small case.
    #[test]
    fn spectral_forms_match_the_dense_matrix() {
        for (h, p) in [(7usize, 3usize), (4, 6)] {
            let w = Array2::from_shape_fn((9, p), |(i, j)| {
                ((i * 7 + j * 3) as f64 * 0.61).sin() + 0.1 * j as f64
            });
            let idx: Vec<usize> = (0..h).collect();
            let s = Spectrum::of_rows(w.view(), &idx, 1.3).unwrap();
            // Dense covariance with divisor h − 1, times 1.3.
            let mean: Vec<f64> = (0..p)
                .map(|j| idx.iter().map(|&i| w[(i, j)]).sum::<f64>() / h as f64)
                .collect();
            let rho = 0.3;
            let mut dense = vec![0.0; p * p];
            for a in 0..p {
                for b in 0..p {
                    let cov: f64 = idx
                        .iter()
                        .map(|&i| (w[(i, a)] - mean[a]) * (w[(i, b)] - mean[b]))
                        .sum::<f64>()
                        / (h - 1) as f64;
                    dense[a * p + b] = (1.0 - rho) * 1.3 * cov + if a == b { rho } else { 0.0 };
                }
            }
            let k = s.regularized_matrix(rho);
            for (x, y) in k.iter().zip(&dense) {
                assert!((x - y).abs() < 1e-12, "{x} vs {y}");
            }
            let sc = crate::Scatter::from_row_major(&dense, p).unwrap();
            assert!((sc.log_determinant() - s.log_det(rho)).abs() < 1e-10);
            let mut d2 = vec![0.0; 9];
            s.squared_distances(w.view(), rho, &mut d2).unwrap();
            for i in 0..9 {
                let c: Vec<f64> = (0..p).map(|j| w[(i, j)] - mean[j]).collect();
                let want = sc.squared_norm(&c).unwrap();
                assert!(
                    (d2[i] - want).abs() < 1e-9 * want.max(1.0),
                    "{} vs {want}",
                    d2[i]
                );
            }
            let kappa = 7.0;
            let r = s.regularization_for(kappa);
            assert!((s.condition(r) - kappa).abs() < 1e-9 * kappa || r == 0.0);
        }
    }
}
