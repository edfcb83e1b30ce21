//! The co-moment kernel: `M += Cᵀ C` for a block of centred rows `C`,
//! lower triangle only (the caller mirrors it).
//!
//! For up to 64 variables the block is held transposed (`p × len`, each
//! variable's centred values contiguous) and every entry of the lower
//! triangle is a dot product over the block's rows, computed four entries
//! at a time with eight lanes each. The body is compiled for the baseline
//! instruction set, for AVX2+FMA and for AVX-512, chosen at run time. For
//! more variables faer's triangular matrix product does the work.

use crate::kernels::lanes::{fmadd, lane_sum, LANES};

/// `acc[i][j] += Σ_r t[i][r]·t[j][r]` for `j ≤ i`; `t` is `p × len`
/// row-major with `len` a multiple of 8.
#[inline(always)]
fn gram_body<const FMA: bool>(t: &[f64], p: usize, len: usize, acc: &mut [f64]) {
    let row = |j: usize| -> &[[f64; LANES]] { t[j * len..(j + 1) * len].as_chunks::<LANES>().0 };
    let mut i = 0;
    while i + 4 <= p {
        let (r0, r1, r2, r3) = (row(i), row(i + 1), row(i + 2), row(i + 3));
        for j in 0..i + 4 {
            let rj = row(j);
            let mut z = [[0.0f64; LANES]; 4];
            for ((((c0, c1), c2), c3), cj) in r0.iter().zip(r1).zip(r2).zip(r3).zip(rj) {
                for l in 0..LANES {
                    z[0][l] = fmadd::<FMA>(c0[l], cj[l], z[0][l]);
                    z[1][l] = fmadd::<FMA>(c1[l], cj[l], z[1][l]);
                    z[2][l] = fmadd::<FMA>(c2[l], cj[l], z[2][l]);
                    z[3][l] = fmadd::<FMA>(c3[l], cj[l], z[3][l]);
                }
            }
            for (a, za) in z.iter().enumerate() {
                if j <= i + a {
                    acc[(i + a) * p + j] += lane_sum(za);
                }
            }
        }
        i += 4;
    }
    while i < p {
        let ri = row(i);
        for j in 0..=i {
            let rj = row(j);
            let mut z = [0.0f64; LANES];
            for (ci, cj) in ri.iter().zip(rj) {
                for l in 0..LANES {
                    z[l] = fmadd::<FMA>(ci[l], cj[l], z[l]);
                }
            }
            acc[i * p + j] += lane_sum(&z);
        }
        i += 1;
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn gram_avx2(t: &[f64], p: usize, len: usize, acc: &mut [f64]) {
    gram_body::<true>(t, p, len, acc)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn gram_avx512(t: &[f64], p: usize, len: usize, acc: &mut [f64]) {
    gram_body::<true>(t, p, len, acc)
}

/// Adds the lower triangle of `tᵀ`-Gram of a transposed block (see
/// [`gram_body`]) to `acc`.
pub(crate) fn gram_lower_transposed(t: &[f64], p: usize, len: usize, acc: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: the CPU supports AVX-512F (checked at run time).
            unsafe { gram_avx512(t, p, len, acc) };
            return;
        }
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
            unsafe { gram_avx2(t, p, len, acc) };
            return;
        }
    }
    gram_body::<false>(t, p, len, acc)
}

/// Largest `p` handled by the transposed lane kernel.
pub(crate) const LANE_KERNEL_MAX_DIM: usize = 12;

/// Rounds `n` up to a multiple of the lane count.
pub(crate) fn padded(n: usize) -> usize {
    n.div_ceil(LANES) * LANES
}
