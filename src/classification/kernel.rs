//! The batch prediction kernel: squared distances to every centroid and
//! posterior probabilities for eight rows at a time.
//!
//! Rows are loaded centred and transposed into `p × 8` lanes (the layout of
//! the distance kernel in `distance::kernel`). The linear rule whitens the
//! lanes once with the pooled factor and measures the distance to each
//! whitened centroid; the quadratic rule runs the distance kernel once per
//! group with the group's own factor. Scores, the largest score, the
//! exponentials and their sum are then formed lane-wise, so the whole block
//! vectorizes; the exponential is a branch-free polynomial (below) rather
//! than a library call. The generic body is compiled for the baseline
//! instruction set and again with AVX2 and FMA, and with AVX-512 (eight
//! lanes are one register), chosen at run time.

use crate::distance::kernel::{centred_lanes, lanes_kernel, whiten_lanes};
use crate::lanes::{fmadd, LANES};
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

/// `1.5 · 2⁵²`: adding it rounds a double of magnitude below 2⁵¹ to an
/// integer (round to nearest even), which then sits in the low mantissa bits.
const ROUNDING_SHIFT: f64 = 6_755_399_441_055_744.0;
/// `ln 2` split so that `n · LN2_HI` is exact for `|n| < 2²¹` (the fdlibm
/// constants `0x3fe62e42fee00000` and `0x3dea39ef35793c76`).
const LN2_HI: f64 = f64::from_bits(0x3fe6_2e42_fee0_0000);
const LN2_LO: f64 = f64::from_bits(0x3dea_39ef_3579_3c76);

/// `2^k` for an integer-valued `k` in `[−1022, 1023]`, by building the
/// exponent field directly.
#[inline(always)]
fn two_to_the(k: f64) -> f64 {
    f64::from_bits((k + (ROUNDING_SHIFT + 1023.0)).to_bits() << 52)
}

/// `eˣ` for `x ≤ 0`, branch-free: `x = n·ln 2 + r` with `|r| ≤ ln 2 / 2`
/// (Cody–Waite reduction), `eʳ` by its Taylor polynomial of degree 13
/// (truncation error below 5e-18), and `2ⁿ` applied as two normal factors
/// so that subnormal results come out right. Results below about 2⁻¹⁰⁷⁵
/// are 0. Accurate to a few units in the last place.
#[inline(always)]
pub(crate) fn exp_nonpositive<const FMA: bool>(x: f64) -> f64 {
    let x = x.max(-746.0);
    let n = fmadd::<FMA>(x, std::f64::consts::LOG2_E, ROUNDING_SHIFT) - ROUNDING_SHIFT;
    let r = fmadd::<FMA>(n, -LN2_HI, x);
    let r = fmadd::<FMA>(n, -LN2_LO, r);
    // 1/k! for k = 13 down to 0.
    const C: [f64; 14] = [
        1.0 / 6_227_020_800.0,
        1.0 / 479_001_600.0,
        1.0 / 39_916_800.0,
        1.0 / 3_628_800.0,
        1.0 / 362_880.0,
        1.0 / 40_320.0,
        1.0 / 5_040.0,
        1.0 / 720.0,
        1.0 / 120.0,
        1.0 / 24.0,
        1.0 / 6.0,
        0.5,
        1.0,
        1.0,
    ];
    let mut q = C[0];
    for &c in &C[1..] {
        q = fmadd::<FMA>(q, r, c);
    }
    let n1 = n.max(-1000.0);
    q * two_to_the(n1) * two_to_the(n - n1)
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
        if std::arch::is_x86_feature_detected!("avx512f") && crate::distance::kernel::has_avx2_fma()
        {
            // SAFETY: the CPU supports AVX-512F, AVX2 and FMA (checked at run time).
            unsafe { block_avx512(rule, x, d2, post, assigned, s) };
            return;
        }
        if crate::distance::kernel::has_avx2_fma() {
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

    fn ulps(a: f64, b: f64) -> f64 {
        if a == b {
            return 0.0;
        }
        (a - b).abs() / (b.abs() * f64::EPSILON)
    }

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

    #[test]
    fn polynomial_exponential_matches_the_library_exponential() {
        // Reference: Rust's `f64::exp` (the platform libm, correctly rounded
        // or within 1 ulp in common practice).
        let mut worst: f64 = 0.0;
        let mut x = 0.0f64;
        while x > -708.0 {
            for v in [x, x - 0.123_456_789, x - 0.5 * std::f64::consts::LN_2] {
                let (fast, slow) = (exp_nonpositive::<false>(v), v.exp());
                let fma = exp_nonpositive::<true>(v);
                worst = worst.max(ulps(fast, slow)).max(ulps(fma, slow));
            }
            x -= 0.0137;
        }
        assert!(worst <= 4.0, "worst error {worst} ulp");
        assert_eq!(exp_nonpositive::<false>(0.0), 1.0);
        assert_eq!(exp_nonpositive::<false>(-800.0), 0.0);
        assert_eq!(exp_nonpositive::<false>(f64::NEG_INFINITY), 0.0);
        // Subnormal results: absolute error far below the smallest normal.
        for v in [-710.0, -720.5, -740.0, -745.0] {
            let (fast, slow) = (exp_nonpositive::<true>(v), v.exp());
            assert!((fast - slow).abs() <= 4.0 * 5e-324, "{v}: {fast} {slow}");
        }
    }
}
