//! Mardia's multivariate skewness and kurtosis.
//!
//! With the rows whitened by the maximum-likelihood (divisor `n`) mean and
//! covariance, `z_i = L⁻¹ (x_i − x̄)` where `S = L Lᵀ`, Mardia (1970)
//! defines
//!
//! * skewness `b₁,ₚ = n⁻² Σ_{i,j} (z_iᵀ z_j)³`, and
//! * kurtosis `b₂,ₚ = n⁻¹ Σ_i ‖z_i‖⁴` (the mean fourth power of the
//!   generalized distances).
//!
//! Under multivariate normality `n·b₁,ₚ/6` is asymptotically χ² with
//! `p(p+1)(p+2)/6` degrees of freedom. Mardia (1974) gives the small-sample
//! correction `n·k·b₁,ₚ/6` with `k = (p+1)(n+1)(n+3) / (n((n+1)(p+1) − 6))`,
//! and the exact null mean `p(p+2)(n−1)/(n+1)` and variance
//! `8p(p+2)(n−3)(n−p−1)(n−p+1) / ((n+1)²(n+3)(n+5))` of `b₂,ₚ`, which
//! standardize it to an approximately standard normal `z` (two-sided test).
//!
//! # Computing the skewness without an `n × n` matrix
//!
//! Expanding the cube, `Σ_{i,j} (z_iᵀ z_j)³ = Σ_{a,b,c} T_abc²` with the
//! third-moment tensor `T_abc = Σ_i z_ia z_ib z_ic` (the squared Frobenius
//! norm of `T`). `T` is symmetric, so only the `p(p+1)(p+2)/6` entries with
//! `a ≤ b ≤ c` are formed, each counted with its number of distinct
//! permutations (1, 3 or 6). That is `O(n·p³/6)` time and `O(p³)` memory
//! in one pass over the rows, against `O(n²·p)` for the double sum.
//!
//! # References
//! - K. V. Mardia (1970). Measures of multivariate skewness and kurtosis
//!   with applications. *Biometrika* 57, 519–530.
//! - K. V. Mardia (1974). Applications of some measures of multivariate
//!   skewness and kurtosis in testing normality and robustness studies.
//!   *Sankhyā B* 36, 115–128.

use super::blocks::{fit_ml, fold_mapped, RowMap, BLOCK};
use crate::distributions::normal;
use crate::distributions::ChiSquared;
use crate::error::{Error, Result};
use crate::kernels::lanes::{fmadd, lane_sum};
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// Mardia's skewness `b₁,ₚ` and kurtosis `b₂,ₚ` of a sample, with their
/// tests of multivariate normality; see the [module documentation](self).
///
/// # Example
/// ```
/// use mvdist::normality::Mardia;
/// use ndarray::array;
///
/// let rows = array![
///     [5.1, 3.5, 1.4], [4.9, 3.0, 1.4], [4.7, 3.2, 1.3], [4.6, 3.1, 1.5],
///     [5.0, 3.6, 1.4], [5.4, 3.9, 1.7], [4.6, 3.4, 1.4], [5.0, 3.4, 1.5],
///     [4.4, 2.9, 1.4], [4.9, 3.1, 1.5], [5.4, 3.7, 1.5], [4.8, 3.4, 1.6],
/// ];
/// let m = Mardia::compute(rows.view())?;
/// assert_eq!(m.skewness_degrees_of_freedom(), 10.0);
/// assert!(m.skewness() >= 0.0 && m.kurtosis() > 0.0);
/// assert!((0.0..=1.0).contains(&m.skewness_p_value()));
/// assert!((0.0..=1.0).contains(&m.kurtosis_p_value()));
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Mardia {
    rows: usize,
    dim: usize,
    skewness: f64,
    kurtosis: f64,
}

impl Mardia {
    /// Computes `b₁,ₚ` (by the tensor identity) and `b₂,ₚ` in one parallel
    /// pass over the rows.
    ///
    /// # Errors
    /// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
    /// [`Error::TooFewRows`] unless `n ≥ max(p + 2, 4)` (the exact
    /// variance of `b₂,ₚ` needs it); [`Error::ZeroVariance`] or
    /// [`Error::Collinear`] naming the column.
    pub fn compute(rows: ArrayView2<'_, f64>) -> Result<Self> {
        let (n, p) = rows.dim();
        let model = fit_ml(rows)?;
        let needed = (p + 2).max(4);
        if n < needed {
            return Err(Error::TooFewRows {
                rows: n,
                needed,
                columns: p,
            });
        }
        let map = RowMap {
            location: model.location(),
            matrix: model.scatter().inverse_factor_slice(),
            lower: true,
        };
        let entries = tensor_len(p);
        let sums = fold_mapped(
            rows,
            &map,
            || vec![0.0; entries + 1],
            |acc, block, _| tensor_block(block, p, acc),
            super::blocks::add_sums,
        );
        let skew_sum: f64 = tensor_multiplicities(p)
            .zip(&sums[..entries])
            .map(|(m, t)| m * t * t)
            .sum();
        let nf = n as f64;
        Ok(Mardia {
            rows: n,
            dim: p,
            skewness: skew_sum / (nf * nf),
            kurtosis: sums[entries] / nf,
        })
    }

    /// Number of rows `n`.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// Multivariate skewness `b₁,ₚ` (0 for a perfectly symmetric sample).
    pub fn skewness(&self) -> f64 {
        self.skewness
    }

    /// Multivariate kurtosis `b₂,ₚ` (about `p(p+2)` for normal data).
    pub fn kurtosis(&self) -> f64 {
        self.kurtosis
    }

    /// Degrees of freedom of the skewness tests, `p(p+1)(p+2)/6`.
    pub fn skewness_degrees_of_freedom(&self) -> f64 {
        let p = self.dim as f64;
        p * (p + 1.0) * (p + 2.0) / 6.0
    }

    /// Mardia's skewness statistic `n·b₁,ₚ/6`, asymptotically χ² under
    /// normality.
    pub fn skewness_statistic(&self) -> f64 {
        self.rows as f64 * self.skewness / 6.0
    }

    /// Upper χ² tail of [`skewness_statistic`](Self::skewness_statistic).
    pub fn skewness_p_value(&self) -> f64 {
        self.chi_square_tail(self.skewness_statistic())
    }

    /// Mardia's (1974) small-sample factor
    /// `k = (p+1)(n+1)(n+3) / (n((n+1)(p+1) − 6))`.
    pub fn small_sample_factor(&self) -> f64 {
        let (n, p) = (self.rows as f64, self.dim as f64);
        (p + 1.0) * (n + 1.0) * (n + 3.0) / (n * ((n + 1.0) * (p + 1.0) - 6.0))
    }

    /// The small-sample corrected skewness statistic `n·k·b₁,ₚ/6`.
    pub fn corrected_skewness_statistic(&self) -> f64 {
        self.small_sample_factor() * self.skewness_statistic()
    }

    /// Upper χ² tail of
    /// [`corrected_skewness_statistic`](Self::corrected_skewness_statistic).
    pub fn corrected_skewness_p_value(&self) -> f64 {
        self.chi_square_tail(self.corrected_skewness_statistic())
    }

    /// Exact null mean of `b₂,ₚ`, `p(p+2)(n−1)/(n+1)` (Mardia 1974).
    pub fn kurtosis_null_mean(&self) -> f64 {
        let (n, p) = (self.rows as f64, self.dim as f64);
        p * (p + 2.0) * (n - 1.0) / (n + 1.0)
    }

    /// Exact null variance of `b₂,ₚ`,
    /// `8p(p+2)(n−3)(n−p−1)(n−p+1) / ((n+1)²(n+3)(n+5))` (Mardia 1974).
    pub fn kurtosis_null_variance(&self) -> f64 {
        let (n, p) = (self.rows as f64, self.dim as f64);
        8.0 * p * (p + 2.0) * (n - 3.0) * (n - p - 1.0) * (n - p + 1.0)
            / ((n + 1.0) * (n + 1.0) * (n + 3.0) * (n + 5.0))
    }

    /// The standardized kurtosis `z = (b₂,ₚ − mean) / √variance`: positive
    /// for heavier tails than normal, negative for lighter ones.
    pub fn kurtosis_statistic(&self) -> f64 {
        (self.kurtosis - self.kurtosis_null_mean()) / self.kurtosis_null_variance().sqrt()
    }

    /// Two-sided standard normal p-value of
    /// [`kurtosis_statistic`](Self::kurtosis_statistic).
    pub fn kurtosis_p_value(&self) -> f64 {
        normal::two_sided_tail(self.kurtosis_statistic())
    }

    fn chi_square_tail(&self, x: f64) -> f64 {
        // The degrees of freedom are positive for p ≥ 1 (checked in compute).
        ChiSquared::new(self.skewness_degrees_of_freedom()).map_or(f64::NAN, |c| c.sf(x))
    }
}

/// Number of tensor entries with `a ≤ b ≤ c`.
fn tensor_len(p: usize) -> usize {
    p * (p + 1) * (p + 2) / 6
}

/// The number of distinct permutations of each `(a ≤ b ≤ c)`, in the order
/// the kernel stores the entries.
fn tensor_multiplicities(p: usize) -> impl Iterator<Item = f64> {
    (0..p).flat_map(move |a| {
        (a..p).flat_map(move |b| {
            (b..p).map(move |c| match (a == b, b == c) {
                (true, true) => 1.0,
                (false, false) => 6.0,
                _ => 3.0,
            })
        })
    })
}

/// `acc[idx(a,b,c)] += Σ_r z_a z_b z_c` over a block and
/// `acc[last] += Σ_r ‖z_r‖⁴`; `z` is `p × BLOCK` (zero-padded).
#[inline(always)]
fn tensor_body<const FMA: bool>(z: &[f64], p: usize, acc: &mut [f64]) {
    let col = |k: usize| -> &[[f64; 8]] { z[k * BLOCK..(k + 1) * BLOCK].as_chunks::<8>().0 };
    let mut w = [[0.0f64; 8]; BLOCK / 8];
    let mut idx = 0;
    for a in 0..p {
        let za = col(a);
        for b in a..p {
            let zb = col(b);
            for ((wr, xa), xb) in w.iter_mut().zip(za).zip(zb) {
                for l in 0..8 {
                    wr[l] = xa[l] * xb[l];
                }
            }
            let mut c = b;
            while c + 4 <= p {
                let (z0, z1, z2, z3) = (col(c), col(c + 1), col(c + 2), col(c + 3));
                let mut s = [[0.0f64; 8]; 4];
                for r in 0..BLOCK / 8 {
                    for l in 0..8 {
                        s[0][l] = fmadd::<FMA>(w[r][l], z0[r][l], s[0][l]);
                        s[1][l] = fmadd::<FMA>(w[r][l], z1[r][l], s[1][l]);
                        s[2][l] = fmadd::<FMA>(w[r][l], z2[r][l], s[2][l]);
                        s[3][l] = fmadd::<FMA>(w[r][l], z3[r][l], s[3][l]);
                    }
                }
                for (q, sq) in s.iter().enumerate() {
                    acc[idx + q] += lane_sum(sq);
                }
                idx += 4;
                c += 4;
            }
            while c < p {
                let zc = col(c);
                let mut s = [0.0f64; 8];
                for r in 0..BLOCK / 8 {
                    for l in 0..8 {
                        s[l] = fmadd::<FMA>(w[r][l], zc[r][l], s[l]);
                    }
                }
                acc[idx] += lane_sum(&s);
                idx += 1;
                c += 1;
            }
        }
    }
    // Kurtosis: Σ (‖z_r‖²)².
    let mut d = [[0.0f64; 8]; BLOCK / 8];
    for k in 0..p {
        for (dr, zr) in d.iter_mut().zip(col(k)) {
            for l in 0..8 {
                dr[l] = fmadd::<FMA>(zr[l], zr[l], dr[l]);
            }
        }
    }
    let mut s = [0.0f64; 8];
    for dr in &d {
        for l in 0..8 {
            s[l] = fmadd::<FMA>(dr[l], dr[l], s[l]);
        }
    }
    acc[idx] += lane_sum(&s);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn tensor_avx2(z: &[f64], p: usize, acc: &mut [f64]) {
    tensor_body::<true>(z, p, acc)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn tensor_avx512(z: &[f64], p: usize, acc: &mut [f64]) {
    tensor_body::<true>(z, p, acc)
}

/// Adds one block's tensor entries and fourth powers to `acc`, with the
/// widest vector instructions the CPU has.
fn tensor_block(z: &[f64], p: usize, acc: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: the CPU supports AVX-512F (checked at run time).
            unsafe { tensor_avx512(z, p, acc) };
            return;
        }
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
            unsafe { tensor_avx2(z, p, acc) };
            return;
        }
    }
    tensor_body::<false>(z, p, acc)
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    #[test]
    fn multiplicities_count_every_ordered_triple() {
        for p in 1..7 {
            let total: f64 = tensor_multiplicities(p).sum();
            assert_eq!(total, (p * p * p) as f64);
            assert_eq!(tensor_multiplicities(p).count(), tensor_len(p));
        }
    }

    #[test]
    fn symmetric_sample_has_zero_skewness() {
        // Rows and their mirror images about the mean: every odd moment vanishes.
        let half = [[1.0, 0.3], [0.2, -1.1], [-0.7, 0.4], [2.0, 1.5], [0.1, 0.9]];
        let mut x = Array2::zeros((10, 2));
        for (i, r) in half.iter().enumerate() {
            x[(i, 0)] = r[0];
            x[(i, 1)] = r[1];
            x[(i + 5, 0)] = -r[0];
            x[(i + 5, 1)] = -r[1];
        }
        let m = Mardia::compute(x.view()).unwrap();
        assert!(m.skewness() < 1e-28, "{}", m.skewness());
    }
}
