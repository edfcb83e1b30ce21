//! The batch prediction kernel: squared distances to every centroid and
//! posterior probabilities for eight rows at a time.
//!
//! Rows are loaded centred and transposed into `p × 8` lanes (the layout of
//! the distance kernel in `kernels/distance.rs`). The linear rule whitens the
//! lanes once with the pooled factor and measures the distance to each
//! whitened centroid; the quadratic rule runs the distance kernel once per
//! group with the group's own factor. Scores, the largest score, the
//! exponentials and their sum are then formed lane-wise, so the whole block
//! vectorizes; the exponential is the branch-free polynomial of
//! `kernels/exp.rs` rather than a library call. The generic body is compiled for the baseline
//! instruction set and again with AVX2 and FMA, and with AVX-512 (eight
//! lanes are one register), chosen at run time.

use crate::kernels::distance::{centred_lanes, lanes_kernel, whiten_lanes};
use crate::kernels::exp::exp_nonpositive;
use crate::kernels::lanes::{fmadd, LANES};
use ndarray::ArrayView2;

/// What the kernel needs from a fitted classifier, borrowed.
pub(crate) struct RuleView<'a> {
    pub p: usize,
    pub groups: usize,
    /// `Some((centre, L⁻¹, whitened centroids))` for the linear rule.
    pub pooled: Option<(&'a [f64], &'a [f64], &'a [f64])>,
    /// Quadratic rule: each group's `L_g⁻¹`.
    pub group_factors: Vec<&'a [f64]>,
    /// Quadratic rule: the grand mean the rows are centred on first, and
    /// each centroid's offset from it (`G × p`).
    pub centre: &'a [f64],
    pub centroid_offsets: &'a [f64],
    /// Score offsets `ln π_g (− ½ ln det S_g)`.
    pub offsets: &'a [f64],
}

/// Per-task scratch lanes.
pub(crate) struct Scratch {
    buf: Vec<[f64; LANES]>,
    z: Vec<[f64; LANES]>,
    d2: Vec<[f64; LANES]>,
    e: Vec<[f64; LANES]>,
}

impl Scratch {
    pub(crate) fn new(p: usize, groups: usize) -> Self {
        Scratch {
            buf: vec![[0.0; LANES]; p],
            z: vec![[0.0; LANES]; p],
            d2: vec![[0.0; LANES]; groups],
            e: vec![[0.0; LANES]; groups],
        }
    }
}

/// Squared distances, posteriors and the most probable group for the rows
/// of `x` (a block of up to a task's rows). `d2` and `post` are
/// `rows × G` row-major.
#[inline(always)]
fn block_body<const FMA: bool>(
    rule: &RuleView<'_>,
    x: ArrayView2<'_, f64>,
    d2: &mut [f64],
    post: &mut [f64],
    assigned: &mut [usize],
    s: &mut Scratch,
) {
    let (p, g_count) = (rule.p, rule.groups);
    let n = x.nrows();
    let mut start = 0;
    while start < n {
        let count = LANES.min(n - start);
        match rule.pooled {
            Some((centre, w, wc)) => {
                centred_lanes(x, start, count, centre, &mut s.buf);
                whiten_lanes::<FMA>(w, p, &s.buf, &mut s.z);
                for (h, dh) in s.d2.iter_mut().enumerate() {
                    let m = &wc[h * p..(h + 1) * p];
                    let mut acc = [0.0f64; LANES];
                    for (zi, &mi) in s.z.iter().zip(m) {
                        for k in 0..LANES {
                            let u = zi[k] - mi;
                            acc[k] = fmadd::<FMA>(u, u, acc[k]);
                        }
                    }
                    *dh = acc;
                }
            }
            None => {
                // Transpose once, centred on the grand mean; then shift the
                // lanes to each centroid.
                centred_lanes(x, start, count, rule.centre, &mut s.z);
                for (h, dh) in s.d2.iter_mut().enumerate() {
                    let offset = &rule.centroid_offsets[h * p..(h + 1) * p];
                    for ((b, zi), &o) in s.buf.iter_mut().zip(&s.z).zip(offset) {
                        for k in 0..LANES {
                            b[k] = zi[k] - o;
                        }
                    }
                    *dh = lanes_kernel::<FMA>(rule.group_factors[h], p, &s.buf);
                }
            }
        }
        // Scores and their maximum (first group wins ties).
        let mut best = [f64::NEG_INFINITY; LANES];
        let mut best_group = [0usize; LANES];
        for (h, (eh, dh)) in s.e.iter_mut().zip(&s.d2).enumerate() {
            let c = rule.offsets[h];
            for k in 0..LANES {
                let score = fmadd::<FMA>(-0.5, dh[k], c);
                eh[k] = score;
                if score > best[k] {
                    best[k] = score;
                    best_group[k] = h;
                }
            }
        }
        let mut total = [0.0f64; LANES];
        for eh in s.e.iter_mut() {
            for k in 0..LANES {
                let v = exp_nonpositive::<FMA>(eh[k] - best[k]);
                eh[k] = v;
                total[k] += v;
            }
        }
        for r in 0..count {
            let row = start + r;
            let d_out = &mut d2[row * g_count..(row + 1) * g_count];
            let p_out = &mut post[row * g_count..(row + 1) * g_count];
            for h in 0..g_count {
                d_out[h] = s.d2[h][r];
                p_out[h] = s.e[h][r] / total[r];
            }
            assigned[row] = best_group[r];
        }
        start += count;
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn block_avx2(
    rule: &RuleView<'_>,
    x: ArrayView2<'_, f64>,
    d2: &mut [f64],
    post: &mut [f64],
    assigned: &mut [usize],
    s: &mut Scratch,
) {
    block_body::<true>(rule, x, d2, post, assigned, s)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx2,fma")]
fn block_avx512(
    rule: &RuleView<'_>,
    x: ArrayView2<'_, f64>,
    d2: &mut [f64],
    post: &mut [f64],
    assigned: &mut [usize],
    s: &mut Scratch,
) {
    block_body::<true>(rule, x, d2, post, assigned, s)
}

/// Squared distances to every centroid, posteriors and the most probable
/// group for every row of `x` (shapes already checked), on this thread.
pub(crate) fn predict_block(
    rule: &RuleView<'_>,
    x: ArrayView2<'_, f64>,
    d2: &mut [f64],
    post: &mut [f64],
    assigned: &mut [usize],
    s: &mut Scratch,
) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f")
            && crate::kernels::distance::has_avx2_fma()
        {
            // SAFETY: the CPU supports AVX-512F, AVX2 and FMA (checked at run time).
            unsafe { block_avx512(rule, x, d2, post, assigned, s) };
            return;
        }
        if crate::kernels::distance::has_avx2_fma() {
            // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
            unsafe { block_avx2(rule, x, d2, post, assigned, s) };
            return;
        }
    }
    block_body::<false>(rule, x, d2, post, assigned, s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn baseline_and_dispatched_kernels_agree() {
        use crate::classification::{Classifier, ClassifierOptions, Rule};
        // Invented rows from a fixed linear congruential sequence.
        let mut state = 12345u64;
        let mut next = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        let (n, p) = (61, 5);
        let x = ndarray::Array2::from_shape_fn((n, p), |(i, j)| {
            next() + (i % 3) as f64 * (j as f64 - 1.0)
        });
        let labels: Vec<usize> = (0..n).map(|i| i % 3).collect();
        for rule in [Rule::Linear, Rule::Quadratic] {
            let c = Classifier::fit(x.view(), &labels, &ClassifierOptions::new(rule)).unwrap();
            let view = c.rule_view();
            let mut a = (vec![0.0; n * 3], vec![0.0; n * 3], vec![0usize; n]);
            let mut b = a.clone();
            let mut s = Scratch::new(p, 3);
            block_body::<false>(&view, x.view(), &mut a.0, &mut a.1, &mut a.2, &mut s);
            predict_block(&view, x.view(), &mut b.0, &mut b.1, &mut b.2, &mut s);
            assert_eq!(a.2, b.2);
            for (u, v) in a.0.iter().zip(&b.0).chain(a.1.iter().zip(&b.1)) {
                assert!((u - v).abs() <= 1e-12 * v.abs().max(1e-3), "{u} {v}");
            }
        }
    }
}
