//! `T²` on `k` principal components and the squared prediction error `Q`,
//! four rows at a time with the variables in SIMD lanes.
//!
//! Each row is centred and scaled once into a zero-padded buffer of
//! eight-value chunks, accumulating `‖c‖²` on the way. The scores
//! `t_a = Σ_j P_ja c_j` are dot products with the transposed loadings,
//! register-blocked four rows by four components (sixteen accumulators, so
//! each chunk of loadings and each chunk of a row is loaded once per
//! sixteen multiply-adds).
//!
//! `Q` is the squared length of the residual `e = c − P t`. Since the
//! columns of `P` are orthonormal, `‖e‖² = ‖c‖² − ‖t‖²`, which costs
//! nothing more once the scores are known; it loses relative accuracy only
//! when `Q` is small against `‖c‖²` (the rounding error is a few units of
//! `ε‖c‖²`). So where `‖c‖² − ‖t‖² < ‖c‖² / 2¹⁰` the residual is formed
//! explicitly, chunk by chunk, and squared: either way the relative error
//! of `Q` stays within about `2¹⁰·few·ε ≈ 10⁻¹²`. Compiled for AVX-512,
//! AVX2/FMA and a baseline, chosen at run time.

use super::lanes::{fmadd, lane_sum, LANES};
use ndarray::ArrayView2;

/// Rows scored together.
const ROWS: usize = 4;
/// Components scored together.
const GROUP: usize = 4;
/// `Q` below `‖c‖²` times this is recomputed from the explicit residual.
const CANCELLATION: f64 = 1.0 / 1024.0;

/// What the kernel needs of a component model.
#[derive(Clone, Copy)]
pub(crate) struct ComponentKernel<'a> {
    /// `k` rows of `⌈p/8⌉` chunks: row `a` holds the loadings of component
    /// `a`, zero past `p`.
    pub(crate) transposed: &'a [[f64; LANES]],
    pub(crate) location: &'a [f64],
    pub(crate) inverse_scale: &'a [f64],
    pub(crate) inverse_eigen: &'a [f64],
}

/// The transposed, zero-padded loadings of a row-major `p × k` matrix.
pub(crate) fn transposed_loadings(loadings: &[f64], p: usize, k: usize) -> Vec<[f64; LANES]> {
    let chunks = p.div_ceil(LANES);
    let mut out = vec![[0.0; LANES]; k * chunks];
    for j in 0..p {
        for a in 0..k {
            out[a * chunks + j / LANES][j % LANES] = loadings[j * k + a];
        }
    }
    out
}

/// Scratch for one task: four padded rows, their scores, and copy buffers
/// for rows that are not contiguous.
pub(crate) struct ComponentScratch {
    centred: Vec<[f64; LANES]>,
    scores: Vec<f64>,
    copy: Vec<f64>,
    chunks: usize,
    k: usize,
    p: usize,
}

impl ComponentScratch {
    pub(crate) fn new(p: usize, k: usize) -> Self {
        let chunks = p.div_ceil(LANES);
        ComponentScratch {
            centred: vec![[0.0; LANES]; ROWS * chunks],
            scores: vec![0.0; ROWS * k],
            copy: vec![0.0; ROWS * p],
            chunks,
            k,
            p,
        }
    }
}

/// Centres and scales `x` into `c` (padding untouched, so zero) and
/// returns `‖c‖²`.
#[inline(always)]
fn centre<const FMA: bool>(m: ComponentKernel<'_>, x: &[f64], c: &mut [[f64; LANES]]) -> f64 {
    let p = m.location.len();
    let full = p / LANES;
    let mut ss = [0.0f64; LANES];
    for (ch, out) in c[..full].iter_mut().enumerate() {
        let r = ch * LANES..(ch + 1) * LANES;
        let (xv, mu, w) = (&x[r.clone()], &m.location[r.clone()], &m.inverse_scale[r]);
        for l in 0..LANES {
            let v = (xv[l] - mu[l]) * w[l];
            out[l] = v;
            ss[l] = fmadd::<FMA>(v, v, ss[l]);
        }
    }
    let mut total = lane_sum(&ss);
    if full * LANES < p {
        let out = &mut c[full];
        for (l, j) in (full * LANES..p).enumerate() {
            let v = (x[j] - m.location[j]) * m.inverse_scale[j];
            out[l] = v;
            total = fmadd::<FMA>(v, v, total);
        }
    }
    total
}

/// The explicit `‖c − P t‖²` of one row.
#[inline(always)]
fn explicit_residual<const FMA: bool>(
    m: ComponentKernel<'_>,
    c: &[[f64; LANES]],
    scores: &[f64],
) -> f64 {
    let chunks = c.len();
    let mut q = [0.0f64; LANES];
    for (ch, cv) in c.iter().enumerate() {
        let mut e = *cv;
        for (a, t) in scores.iter().enumerate() {
            let lv = &m.transposed[a * chunks + ch];
            for l in 0..LANES {
                e[l] = fmadd::<FMA>(-t, lv[l], e[l]);
            }
        }
        for l in 0..LANES {
            q[l] = fmadd::<FMA>(e[l], e[l], q[l]);
        }
    }
    lane_sum(&q)
}

/// `T²` and `Q` of four rows (`ROWS` slices of length `p`).
#[inline(always)]
fn four_rows<const FMA: bool>(
    m: ComponentKernel<'_>,
    x: [&[f64]; ROWS],
    centred: &mut [[f64; LANES]],
    scores: &mut [f64],
    chunks: usize,
    k: usize,
) -> ([f64; ROWS], [f64; ROWS]) {
    let mut squares = [0.0f64; ROWS];
    for (r, xr) in x.iter().enumerate() {
        squares[r] = centre::<FMA>(m, xr, &mut centred[r * chunks..(r + 1) * chunks]);
    }
    let (c0, rest) = centred.split_at(chunks);
    let (c1, rest) = rest.split_at(chunks);
    let (c2, c3) = rest.split_at(chunks);
    let rows = m.transposed;
    let mut a = 0;
    while a + GROUP <= k {
        let l0 = &rows[a * chunks..(a + 1) * chunks];
        let l1 = &rows[(a + 1) * chunks..(a + 2) * chunks];
        let l2 = &rows[(a + 2) * chunks..(a + 3) * chunks];
        let l3 = &rows[(a + 3) * chunks..(a + 4) * chunks];
        let mut acc = [[[0.0f64; LANES]; GROUP]; ROWS];
        for ch in 0..chunks {
            let cs = [&c0[ch], &c1[ch], &c2[ch], &c3[ch]];
            let ls = [&l0[ch], &l1[ch], &l2[ch], &l3[ch]];
            for (accr, cv) in acc.iter_mut().zip(cs) {
                for (z, lv) in accr.iter_mut().zip(ls) {
                    for l in 0..LANES {
                        z[l] = fmadd::<FMA>(lv[l], cv[l], z[l]);
                    }
                }
            }
        }
        for (r, accr) in acc.iter().enumerate() {
            for (g, z) in accr.iter().enumerate() {
                scores[r * k + a + g] = lane_sum(z);
            }
        }
        a += GROUP;
    }
    while a < k {
        let lc = &rows[a * chunks..(a + 1) * chunks];
        let mut acc = [[0.0f64; LANES]; ROWS];
        for (ch, lv) in lc.iter().enumerate() {
            let cs = [&c0[ch], &c1[ch], &c2[ch], &c3[ch]];
            for (z, cv) in acc.iter_mut().zip(cs) {
                for l in 0..LANES {
                    z[l] = fmadd::<FMA>(lv[l], cv[l], z[l]);
                }
            }
        }
        for (r, z) in acc.iter().enumerate() {
            scores[r * k + a] = lane_sum(z);
        }
        a += 1;
    }
    finish::<FMA>(m, squares, centred, scores, chunks, k)
}

/// `T²` and `Q` of four rows from their scores and `‖c‖²`: `Q` by the
/// shortcut `‖c‖² − ‖t‖²`, or from the explicit residual where the
/// shortcut cancels or is not a number (a non-finite row then stays
/// non-finite).
#[inline(always)]
fn finish<const FMA: bool>(
    m: ComponentKernel<'_>,
    squares: [f64; ROWS],
    centred: &[[f64; LANES]],
    scores: &[f64],
    chunks: usize,
    k: usize,
) -> ([f64; ROWS], [f64; ROWS]) {
    let mut t2 = [0.0f64; ROWS];
    let mut q = [0.0f64; ROWS];
    for r in 0..ROWS {
        let t = &scores[r * k..(r + 1) * k];
        let (mut weighted, mut plain) = (0.0, 0.0);
        for (tv, w) in t.iter().zip(m.inverse_eigen) {
            weighted = fmadd::<FMA>(tv * w, *tv, weighted);
            plain = fmadd::<FMA>(*tv, *tv, plain);
        }
        t2[r] = weighted;
        let shortcut = squares[r] - plain;
        q[r] = if shortcut >= CANCELLATION * squares[r] {
            shortcut
        } else {
            explicit_residual::<FMA>(m, &centred[r * chunks..(r + 1) * chunks], t)
        };
    }
    (t2, q)
}

/// The AVX-512 form of [`four_rows`], written with intrinsics: the
/// portable lane loops above are not vectorized reliably at this register
/// blocking (sixteen accumulators).
#[cfg(target_arch = "x86_64")]
mod wide {
    use super::{ComponentKernel, GROUP, LANES, ROWS};
    use std::arch::x86_64::{
        __m512d, _mm512_fmadd_pd, _mm512_loadu_pd, _mm512_maskz_loadu_pd, _mm512_mul_pd,
        _mm512_reduce_add_pd, _mm512_setzero_pd, _mm512_storeu_pd, _mm512_sub_pd,
    };

    /// Loads chunk `i` of `v` (eight values).
    #[inline(always)]
    fn chunk(v: &[[f64; LANES]], i: usize) -> __m512d {
        let c: &[f64; LANES] = &v[i];
        // SAFETY: `c` is eight readable, contiguous `f64`s.
        unsafe { _mm512_loadu_pd(c.as_ptr()) }
    }

    /// Centres and scales `x` into `c`, padding included, and returns
    /// `‖c‖²`.
    #[inline]
    #[target_feature(enable = "avx512f")]
    fn centre(m: ComponentKernel<'_>, x: &[f64], c: &mut [[f64; LANES]]) -> f64 {
        let p = m.location.len();
        let mut ss = _mm512_setzero_pd();
        for (ch, out) in c.iter_mut().enumerate() {
            let from = ch * LANES;
            let v = if from + LANES <= p {
                let (xs, mu, w) = (
                    &x[from..from + LANES],
                    &m.location[from..from + LANES],
                    &m.inverse_scale[from..from + LANES],
                );
                // SAFETY: each slice holds eight contiguous `f64`s.
                unsafe {
                    _mm512_mul_pd(
                        _mm512_sub_pd(_mm512_loadu_pd(xs.as_ptr()), _mm512_loadu_pd(mu.as_ptr())),
                        _mm512_loadu_pd(w.as_ptr()),
                    )
                }
            } else {
                let rest = p - from;
                let mask: u8 = ((1u16 << rest) - 1) as u8;
                let (xs, mu, w) = (&x[from..p], &m.location[from..p], &m.inverse_scale[from..p]);
                // SAFETY: the mask enables only the first `rest` lanes, and
                // each slice holds `rest` readable `f64`s; the other lanes
                // read as zero (so the padding stays zero).
                unsafe {
                    _mm512_mul_pd(
                        _mm512_sub_pd(
                            _mm512_maskz_loadu_pd(mask, xs.as_ptr()),
                            _mm512_maskz_loadu_pd(mask, mu.as_ptr()),
                        ),
                        _mm512_maskz_loadu_pd(mask, w.as_ptr()),
                    )
                }
            };
            // SAFETY: `out` is eight writable, contiguous `f64`s.
            unsafe { _mm512_storeu_pd(out.as_mut_ptr(), v) };
            ss = _mm512_fmadd_pd(v, v, ss);
        }
        _mm512_reduce_add_pd(ss)
    }

    #[inline]
    #[target_feature(enable = "avx512f")]
    pub(super) fn four_rows(
        m: ComponentKernel<'_>,
        x: [&[f64]; ROWS],
        centred: &mut [[f64; LANES]],
        scores: &mut [f64],
        chunks: usize,
        k: usize,
    ) -> ([f64; ROWS], [f64; ROWS]) {
        let mut squares = [0.0f64; ROWS];
        for (r, xr) in x.iter().enumerate() {
            squares[r] = centre(m, xr, &mut centred[r * chunks..(r + 1) * chunks]);
        }
        let (c0, rest) = centred.split_at(chunks);
        let (c1, rest) = rest.split_at(chunks);
        let (c2, c3) = rest.split_at(chunks);
        let rows = m.transposed;
        let mut a = 0;
        while a + GROUP <= k {
            let l0 = &rows[a * chunks..(a + 1) * chunks];
            let l1 = &rows[(a + 1) * chunks..(a + 2) * chunks];
            let l2 = &rows[(a + 2) * chunks..(a + 3) * chunks];
            let l3 = &rows[(a + 3) * chunks..(a + 4) * chunks];
            let mut z = [[_mm512_setzero_pd(); GROUP]; ROWS];
            for ch in 0..chunks {
                let l = [chunk(l0, ch), chunk(l1, ch), chunk(l2, ch), chunk(l3, ch)];
                let c = [chunk(c0, ch), chunk(c1, ch), chunk(c2, ch), chunk(c3, ch)];
                for r in 0..ROWS {
                    for g in 0..GROUP {
                        z[r][g] = _mm512_fmadd_pd(l[g], c[r], z[r][g]);
                    }
                }
            }
            for (r, zr) in z.iter().enumerate() {
                for (g, v) in zr.iter().enumerate() {
                    scores[r * k + a + g] = _mm512_reduce_add_pd(*v);
                }
            }
            a += GROUP;
        }
        while a < k {
            let lc = &rows[a * chunks..(a + 1) * chunks];
            let mut z = [_mm512_setzero_pd(); ROWS];
            for ch in 0..chunks {
                let l = chunk(lc, ch);
                let c = [chunk(c0, ch), chunk(c1, ch), chunk(c2, ch), chunk(c3, ch)];
                for r in 0..ROWS {
                    z[r] = _mm512_fmadd_pd(l, c[r], z[r]);
                }
            }
            for (r, v) in z.iter().enumerate() {
                scores[r * k + a] = _mm512_reduce_add_pd(*v);
            }
            a += 1;
        }
        super::finish::<true>(m, squares, centred, scores, chunks, k)
    }
}

/// [`wide::four_rows`] where it exists; only reached from the AVX-512 block.
#[inline(always)]
fn wide_four_rows(
    m: ComponentKernel<'_>,
    x: [&[f64]; ROWS],
    centred: &mut [[f64; LANES]],
    scores: &mut [f64],
    chunks: usize,
    k: usize,
) -> ([f64; ROWS], [f64; ROWS]) {
    #[cfg(target_arch = "x86_64")]
    {
        // SAFETY: called only from `block_avx512`, on a CPU with AVX-512F.
        unsafe { wide::four_rows(m, x, centred, scores, chunks, k) }
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        four_rows::<true>(m, x, centred, scores, chunks, k)
    }
}

/// `T²` and `Q` of the rows of `x` (a block), into `t2` and `q`.
#[inline(always)]
fn block<const FMA: bool, const WIDE: bool>(
    m: ComponentKernel<'_>,
    x: ArrayView2<'_, f64>,
    t2: &mut [f64],
    q: &mut [f64],
    s: &mut ComponentScratch,
) {
    let (n, p, chunks, k) = (x.nrows(), s.p, s.chunks, s.k);
    let contiguous = x.as_slice();
    let mut start = 0;
    while start < n {
        let take = ROWS.min(n - start);
        // Rows past the end repeat the last row; their results are dropped.
        let mut rows: [&[f64]; ROWS] = [&[]; ROWS];
        match contiguous {
            Some(all) => {
                for (r, slot) in rows.iter_mut().enumerate() {
                    let i = start + r.min(take - 1);
                    *slot = &all[i * p..(i + 1) * p];
                }
            }
            None => {
                for r in 0..take {
                    let buf = &mut s.copy[r * p..(r + 1) * p];
                    for (d, v) in buf.iter_mut().zip(x.row(start + r).iter()) {
                        *d = *v;
                    }
                }
                for (r, slot) in rows.iter_mut().enumerate() {
                    let i = r.min(take - 1);
                    *slot = &s.copy[i * p..(i + 1) * p];
                }
            }
        }
        let (a, b) = if WIDE {
            wide_four_rows(m, rows, &mut s.centred, &mut s.scores, chunks, k)
        } else {
            four_rows::<FMA>(m, rows, &mut s.centred, &mut s.scores, chunks, k)
        };
        t2[start..start + take].copy_from_slice(&a[..take]);
        q[start..start + take].copy_from_slice(&b[..take]);
        start += take;
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn block_avx512(
    m: ComponentKernel<'_>,
    x: ArrayView2<'_, f64>,
    t2: &mut [f64],
    q: &mut [f64],
    s: &mut ComponentScratch,
) {
    block::<true, true>(m, x, t2, q, s)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn block_avx2(
    m: ComponentKernel<'_>,
    x: ArrayView2<'_, f64>,
    t2: &mut [f64],
    q: &mut [f64],
    s: &mut ComponentScratch,
) {
    block::<true, false>(m, x, t2, q, s)
}

/// `T²` and `Q` of a block of rows (`t2`, `q` as long as the block) with
/// the widest vectors the CPU has. The caller has checked the shapes and
/// built `s` for this model's `p` and `k`.
pub(crate) fn component_block(
    m: ComponentKernel<'_>,
    x: ArrayView2<'_, f64>,
    t2: &mut [f64],
    q: &mut [f64],
    s: &mut ComponentScratch,
) {
    #[cfg(target_arch = "x86_64")]
    {
        if super::distance::has_avx512() {
            // SAFETY: the CPU supports AVX-512F and FMA (checked at run time).
            unsafe { block_avx512(m, x, t2, q, s) };
            return;
        }
        if super::distance::has_avx2_fma() {
            // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
            unsafe { block_avx2(m, x, t2, q, s) };
            return;
        }
    }
    block::<false, false>(m, x, t2, q, s)
}
