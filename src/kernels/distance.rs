//! The squared-distance kernels: `d² = ‖L⁻¹ (x − μ)‖²`.
//!
//! Batch scoring transposes a block of eight centred rows into a `p × 8`
//! buffer and forms four whitened coordinates at a time, each as an update
//! of eight lanes, so that the inner loop is a broadcast and eight fused
//! multiply-adds over contiguous memory. The same generic body is compiled
//! twice: once for the baseline instruction set and once with AVX2 and FMA
//! enabled, chosen at run time (no `target-cpu` flag is needed).

use crate::error::{Error, Result};
use ndarray::ArrayView2;
use rayon::prelude::*;
use std::sync::atomic::{AtomicUsize, Ordering};

use crate::kernels::lanes::{fmadd, LANES};
/// Rows per parallel task.
const TASK_ROWS: usize = 2048;
/// Below this many values (`n·p`), batch work stays on the calling thread:
/// splitting costs more than it saves.
/// The whitening factor of a scatter as the kernels need it: `W = L⁻¹`
/// row-major, its transpose (empty when not kept), the dimension, and
/// whether the scatter is diagonal. `Scatter::factor` builds one.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Factor<'a> {
    pub(crate) w: &'a [f64],
    pub(crate) wt: &'a [f64],
    pub(crate) dim: usize,
    pub(crate) diagonal: bool,
}

pub(crate) const SEQUENTIAL_BELOW: usize = 1 << 15;
/// Largest `p` for which single-row scoring uses stack storage.
pub(crate) const STACK_DIM: usize = 64;

/// Squared norms of eight whitened columns held in `buf` (`p × LANES`).
#[inline(always)]
pub(crate) fn lanes_kernel<const FMA: bool>(
    w: &[f64],
    p: usize,
    buf: &[[f64; LANES]],
) -> [f64; LANES] {
    let mut d2 = [0.0f64; LANES];
    let mut i = 0;
    while i + 4 <= p {
        let len = i + 4;
        let r0 = &w[i * p..i * p + len];
        let r1 = &w[(i + 1) * p..(i + 1) * p + len];
        let r2 = &w[(i + 2) * p..(i + 2) * p + len];
        let r3 = &w[(i + 3) * p..(i + 3) * p + len];
        let mut z0 = [0.0f64; LANES];
        let mut z1 = [0.0f64; LANES];
        let mut z2 = [0.0f64; LANES];
        let mut z3 = [0.0f64; LANES];
        for ((((c, &a0), &a1), &a2), &a3) in buf[..len].iter().zip(r0).zip(r1).zip(r2).zip(r3) {
            for k in 0..LANES {
                z0[k] = fmadd::<FMA>(a0, c[k], z0[k]);
                z1[k] = fmadd::<FMA>(a1, c[k], z1[k]);
                z2[k] = fmadd::<FMA>(a2, c[k], z2[k]);
                z3[k] = fmadd::<FMA>(a3, c[k], z3[k]);
            }
        }
        for k in 0..LANES {
            d2[k] = fmadd::<FMA>(z0[k], z0[k], d2[k]);
            d2[k] = fmadd::<FMA>(z1[k], z1[k], d2[k]);
            d2[k] = fmadd::<FMA>(z2[k], z2[k], d2[k]);
            d2[k] = fmadd::<FMA>(z3[k], z3[k], d2[k]);
        }
        i += 4;
    }
    while i < p {
        let row = &w[i * p..i * p + i + 1];
        let mut z = [0.0f64; LANES];
        for (c, &a) in buf[..=i].iter().zip(row) {
            for k in 0..LANES {
                z[k] = fmadd::<FMA>(a, c[k], z[k]);
            }
        }
        for k in 0..LANES {
            d2[k] = fmadd::<FMA>(z[k], z[k], d2[k]);
        }
        i += 1;
    }
    d2
}

/// Whitened coordinates `z = W c` of the eight centred columns held in
/// `buf` (`p × LANES`), written to `z` (`p × LANES`); `w` is the row-major
/// lower triangular whitening matrix.
#[inline(always)]
pub(crate) fn whiten_lanes<const FMA: bool>(
    w: &[f64],
    p: usize,
    buf: &[[f64; LANES]],
    z: &mut [[f64; LANES]],
) {
    let mut i = 0;
    while i + 4 <= p {
        let len = i + 4;
        let r0 = &w[i * p..i * p + len];
        let r1 = &w[(i + 1) * p..(i + 1) * p + len];
        let r2 = &w[(i + 2) * p..(i + 2) * p + len];
        let r3 = &w[(i + 3) * p..(i + 3) * p + len];
        let mut z0 = [0.0f64; LANES];
        let mut z1 = [0.0f64; LANES];
        let mut z2 = [0.0f64; LANES];
        let mut z3 = [0.0f64; LANES];
        for ((((c, &a0), &a1), &a2), &a3) in buf[..len].iter().zip(r0).zip(r1).zip(r2).zip(r3) {
            for k in 0..LANES {
                z0[k] = fmadd::<FMA>(a0, c[k], z0[k]);
                z1[k] = fmadd::<FMA>(a1, c[k], z1[k]);
                z2[k] = fmadd::<FMA>(a2, c[k], z2[k]);
                z3[k] = fmadd::<FMA>(a3, c[k], z3[k]);
            }
        }
        z[i] = z0;
        z[i + 1] = z1;
        z[i + 2] = z2;
        z[i + 3] = z3;
        i += 4;
    }
    while i < p {
        let row = &w[i * p..i * p + i + 1];
        let mut zi = [0.0f64; LANES];
        for (c, &a) in buf[..=i].iter().zip(row) {
            for k in 0..LANES {
                zi[k] = fmadd::<FMA>(a, c[k], zi[k]);
            }
        }
        z[i] = zi;
        i += 1;
    }
}

/// Loads rows `start..start + count` (`count ≤ LANES`) of `x`, centred on
/// `mu`, into the columns of `buf` (`p × LANES`); unused lanes are zero.
#[inline(always)]
pub(crate) fn centred_lanes(
    x: ArrayView2<'_, f64>,
    start: usize,
    count: usize,
    mu: &[f64],
    buf: &mut [[f64; LANES]],
) {
    for r in 0..count {
        let row = x.row(start + r);
        if let Some(s) = row.as_slice() {
            for ((b, &v), &m) in buf.iter_mut().zip(s).zip(mu) {
                b[r] = v - m;
            }
        } else {
            for ((b, &v), &m) in buf.iter_mut().zip(row.iter()).zip(mu) {
                b[r] = v - m;
            }
        }
    }
    for b in buf.iter_mut() {
        for lane in b.iter_mut().skip(count) {
            *lane = 0.0;
        }
    }
}

/// Squared distances of the rows of `x` (a block), written to `out`.
#[inline(always)]
fn block_body<const FMA: bool>(
    w: &[f64],
    mu: &[f64],
    diagonal: bool,
    x: ArrayView2<'_, f64>,
    out: &mut [f64],
    buf: &mut Vec<[f64; LANES]>,
) {
    let p = mu.len();
    if diagonal {
        for (o, row) in out.iter_mut().zip(x.outer_iter()) {
            let mut acc = 0.0;
            for ((&v, &m), j) in row.iter().zip(mu).zip(0..p) {
                let z = (v - m) * w[j * p + j];
                acc = fmadd::<FMA>(z, z, acc);
            }
            *o = acc;
        }
        return;
    }
    buf.clear();
    buf.resize(p, [0.0; LANES]);
    let n = x.nrows();
    let mut start = 0;
    while start < n {
        let count = LANES.min(n - start);
        centred_lanes(x, start, count, mu, buf);
        let d2 = lanes_kernel::<FMA>(w, p, buf);
        out[start..start + count].copy_from_slice(&d2[..count]);
        start += count;
    }
}

/// [`block_body`] for a dimension known at compile time, on a row-major
/// block: the eight-row groups are read straight from the slice and the
/// triangular product unrolls into straight-line code. The operations and
/// their order are those of [`lanes_kernel`] (its zero terms above the
/// diagonal add exact zeros), so the results are the same bit for bit.
/// Returns `false`, having written nothing, if the block is not row-major.
#[inline(always)]
fn block_fixed<const P: usize, const FMA: bool>(
    w: &[f64],
    mu: &[f64],
    x: ArrayView2<'_, f64>,
    out: &mut [f64],
    buf: &mut Vec<[f64; LANES]>,
) -> bool {
    let Some(data) = x.as_slice() else {
        return false;
    };
    let n = x.nrows();
    let full = fixed_groups::<P, FMA, f64>(w, mu, data, n, out);
    if full < n {
        block_body::<FMA>(
            w,
            mu,
            false,
            x.slice(ndarray::s![full.., ..]),
            &mut out[full..],
            buf,
        );
    }
    true
}

/// The whole groups of [`LANES`] rows of a row-major block `data` (`n`
/// rows of `P` values, `f64` or `f32`, each value converted to `f64` before
/// centring, exactly), written to `out`; returns the number of rows done
/// (`n` rounded down to a multiple of [`LANES`]).
#[inline(always)]
fn fixed_groups<const P: usize, const FMA: bool, T: Copy + Into<f64>>(
    w: &[f64],
    mu: &[f64],
    data: &[T],
    n: usize,
    out: &mut [f64],
) -> usize {
    let mut wm = [[0.0f64; P]; P];
    for (i, row) in wm.iter_mut().enumerate() {
        row[..=i].copy_from_slice(&w[i * P..i * P + i + 1]);
    }
    let mut m = [0.0f64; P];
    m.copy_from_slice(mu);
    let full = n - n % LANES;
    for (group, o) in data[..full * P]
        .chunks_exact(LANES * P)
        .zip(out[..full].chunks_exact_mut(LANES))
    {
        let mut c = [[0.0f64; LANES]; P];
        for (r, row) in group.chunks_exact(P).enumerate() {
            for j in 0..P {
                c[j][r] = row[j].into() - m[j];
            }
        }
        let mut d2 = [0.0f64; LANES];
        for i in 0..P {
            let mut z = [0.0f64; LANES];
            for j in 0..=i {
                for k in 0..LANES {
                    z[k] = fmadd::<FMA>(wm[i][j], c[j][k], z[k]);
                }
            }
            for k in 0..LANES {
                d2[k] = fmadd::<FMA>(z[k], z[k], d2[k]);
            }
        }
        o.copy_from_slice(&d2);
    }
    full
}

/// The whole groups of a row-major `f32` block at `p = 2..8`, read without
/// widening the block first; returns the rows done (0 when `p` is outside
/// that range).
#[inline(always)]
fn fixed_groups_f32<const FMA: bool>(
    w: &[f64],
    mu: &[f64],
    data: &[f32],
    n: usize,
    out: &mut [f64],
) -> usize {
    match mu.len() {
        2 => fixed_groups::<2, FMA, f32>(w, mu, data, n, out),
        3 => fixed_groups::<3, FMA, f32>(w, mu, data, n, out),
        4 => fixed_groups::<4, FMA, f32>(w, mu, data, n, out),
        5 => fixed_groups::<5, FMA, f32>(w, mu, data, n, out),
        6 => fixed_groups::<6, FMA, f32>(w, mu, data, n, out),
        7 => fixed_groups::<7, FMA, f32>(w, mu, data, n, out),
        8 => fixed_groups::<8, FMA, f32>(w, mu, data, n, out),
        _ => 0,
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn fixed_groups_f32_avx512(
    w: &[f64],
    mu: &[f64],
    data: &[f32],
    n: usize,
    out: &mut [f64],
) -> usize {
    fixed_groups_f32::<true>(w, mu, data, n, out)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn fixed_groups_f32_avx2(w: &[f64], mu: &[f64], data: &[f32], n: usize, out: &mut [f64]) -> usize {
    fixed_groups_f32::<true>(w, mu, data, n, out)
}

/// [`fixed_groups_f32`] with the widest vectors the CPU has, as
/// [`block_dispatch`] chooses them for `f64` rows.
fn fixed_groups_f32_dispatch(
    w: &[f64],
    mu: &[f64],
    data: &[f32],
    n: usize,
    out: &mut [f64],
) -> usize {
    #[cfg(target_arch = "x86_64")]
    {
        if has_avx512() {
            // SAFETY: the CPU supports AVX-512F and FMA (checked at run time).
            return unsafe { fixed_groups_f32_avx512(w, mu, data, n, out) };
        }
        if has_avx2_fma() {
            // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
            return unsafe { fixed_groups_f32_avx2(w, mu, data, n, out) };
        }
    }
    fixed_groups_f32::<false>(w, mu, data, n, out)
}

/// The batch block kernel, with the small dimensions specialized.
#[inline(always)]
fn block_sized<const FMA: bool>(
    w: &[f64],
    mu: &[f64],
    diagonal: bool,
    x: ArrayView2<'_, f64>,
    out: &mut [f64],
    buf: &mut Vec<[f64; LANES]>,
) {
    if !diagonal {
        let done = match mu.len() {
            2 => block_fixed::<2, FMA>(w, mu, x, out, buf),
            3 => block_fixed::<3, FMA>(w, mu, x, out, buf),
            4 => block_fixed::<4, FMA>(w, mu, x, out, buf),
            5 => block_fixed::<5, FMA>(w, mu, x, out, buf),
            6 => block_fixed::<6, FMA>(w, mu, x, out, buf),
            7 => block_fixed::<7, FMA>(w, mu, x, out, buf),
            8 => block_fixed::<8, FMA>(w, mu, x, out, buf),
            _ => false,
        };
        if done {
            return;
        }
    }
    block_body::<FMA>(w, mu, diagonal, x, out, buf)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn block_avx512(
    w: &[f64],
    mu: &[f64],
    diagonal: bool,
    x: ArrayView2<'_, f64>,
    out: &mut [f64],
    buf: &mut Vec<[f64; LANES]>,
) {
    block_sized::<true>(w, mu, diagonal, x, out, buf)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn block_avx2(
    w: &[f64],
    mu: &[f64],
    diagonal: bool,
    x: ArrayView2<'_, f64>,
    out: &mut [f64],
    buf: &mut Vec<[f64; LANES]>,
) {
    block_sized::<true>(w, mu, diagonal, x, out, buf)
}

fn block_dispatch(
    w: &[f64],
    mu: &[f64],
    diagonal: bool,
    x: ArrayView2<'_, f64>,
    out: &mut [f64],
    buf: &mut Vec<[f64; LANES]>,
) {
    #[cfg(target_arch = "x86_64")]
    {
        // AVX-512 pays off for the unrolled small dimensions only; for
        // larger ones the generic kernel measured slower with it (p = 32).
        if !diagonal && (2..=8).contains(&mu.len()) && has_avx512() {
            // SAFETY: the CPU supports AVX-512F, which implies FMA
            // (checked at run time).
            unsafe { block_avx512(w, mu, diagonal, x, out, buf) };
            return;
        }
        if has_avx2_fma() {
            // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
            unsafe { block_avx2(w, mu, diagonal, x, out, buf) };
            return;
        }
    }
    block_sized::<false>(w, mu, diagonal, x, out, buf)
}

#[cfg(target_arch = "x86_64")]
#[inline]
pub(crate) fn has_avx512() -> bool {
    std::arch::is_x86_feature_detected!("avx512f") && std::arch::is_x86_feature_detected!("fma")
}

#[cfg(target_arch = "x86_64")]
#[inline]
pub(crate) fn has_avx2_fma() -> bool {
    std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
}

/// Squared distances of every row of `x` to `mu` under `scatter`, into
/// `out`, in parallel on the caller's rayon pool for large inputs.
///
/// The caller has checked the shapes. Non-finite results are reported as
/// errors naming the first offending row.
pub(crate) fn batch_squared_distances(
    factor: Factor<'_>,
    mu: &[f64],
    x: ArrayView2<'_, f64>,
    out: &mut [f64],
) -> Result<()> {
    let (w, diagonal) = (factor.w, factor.diagonal);
    let bad = in_tasks(
        x.nrows() * mu.len(),
        out,
        |start, chunk, buf: &mut Vec<[f64; LANES]>| {
            let rows = x.slice(ndarray::s![start..start + chunk.len(), ..]);
            block_dispatch(w, mu, diagonal, rows, chunk, buf);
        },
    );
    first_non_finite(x, bad)
}

/// As [`batch_squared_distances`], then `then(block_of_out, block_of_second)`
/// on each task's block while it is still in cache (for p-values computed
/// from the distances without a second pass over memory). `second` has one
/// value per row, like `out`.
pub(crate) fn batch_squared_distances_then(
    factor: Factor<'_>,
    mu: &[f64],
    x: ArrayView2<'_, f64>,
    out: &mut [f64],
    second: &mut [f64],
    then: impl Fn(&[f64], &mut [f64]) + Sync,
) -> Result<()> {
    let (w, diagonal) = (factor.w, factor.diagonal);
    let work = x.nrows() * mu.len();
    let block =
        |start: usize, chunk: &mut [f64], extra: &mut [f64], buf: &mut Vec<[f64; LANES]>| {
            let rows = x.slice(ndarray::s![start..start + chunk.len(), ..]);
            block_dispatch(w, mu, diagonal, rows, chunk, buf);
            then(chunk, extra);
            chunk.iter().position(|v| !v.is_finite())
        };
    let bad = if work < SEQUENTIAL_BELOW {
        block(0, out, second, &mut Vec::new())
    } else {
        let first = AtomicUsize::new(usize::MAX);
        out.par_chunks_mut(TASK_ROWS)
            .zip(second.par_chunks_mut(TASK_ROWS))
            .enumerate()
            .for_each_init(Vec::new, |buf, (t, (chunk, extra))| {
                if let Some(i) = block(t * TASK_ROWS, chunk, extra, buf) {
                    first.fetch_min(t * TASK_ROWS + i, Ordering::Relaxed);
                }
            });
        let row = first.into_inner();
        (row != usize::MAX).then_some(row)
    };
    first_non_finite(x, bad)
}

/// As [`batch_squared_distances`] for single-precision rows: each task
/// widens its block of rows to `f64` (a buffer reused across blocks) and
/// runs the same kernel, so results equal those of the widened matrix.
pub(crate) fn batch_squared_distances_f32(
    factor: Factor<'_>,
    mu: &[f64],
    x: ArrayView2<'_, f32>,
    out: &mut [f64],
) -> Result<()> {
    let (w, diagonal, p) = (factor.w, factor.diagonal, mu.len());
    let bad = in_tasks(
        x.nrows() * p,
        out,
        |start, chunk, (buf, wide): &mut (Vec<[f64; LANES]>, Vec<f64>)| {
            let rows = x.slice(ndarray::s![start..start + chunk.len(), ..]);
            // Small dimensions, row-major: convert while loading, in the
            // fixed-dimension kernel (same operations as on widened rows).
            let done = match rows.as_slice() {
                Some(data) if !diagonal => {
                    fixed_groups_f32_dispatch(w, mu, data, chunk.len(), chunk)
                }
                _ => 0,
            };
            let rest = rows.slice(ndarray::s![done.., ..]);
            if rest.nrows() == 0 {
                return;
            }
            wide.clear();
            match rest.as_slice() {
                Some(s) => wide.extend(s.iter().map(|&v| f64::from(v))),
                None => wide.extend(rest.iter().map(|&v| f64::from(v))),
            }
            let view = crate::data::matrix_view(wide, rest.nrows(), p);
            block_dispatch(w, mu, diagonal, view, &mut chunk[done..], buf);
        },
    );
    first_non_finite(x, bad)
}

/// Runs `task(first_row, chunk_of_out, scratch)` over `out` in blocks of
/// [`TASK_ROWS`], on the calling thread below [`SEQUENTIAL_BELOW`] values
/// (`work`) and on the caller's rayon pool above, with per-task scratch.
/// Each task then checks its block while it is still in cache; the result
/// is the first row whose value is not finite, if any.
fn in_tasks<S: Default + Send>(
    work: usize,
    out: &mut [f64],
    task: impl Fn(usize, &mut [f64], &mut S) + Sync,
) -> Option<usize> {
    let first_bad = |chunk: &[f64]| chunk.iter().position(|v| !v.is_finite());
    if work < SEQUENTIAL_BELOW {
        task(0, out, &mut S::default());
        first_bad(out)
    } else {
        let first = AtomicUsize::new(usize::MAX);
        out.par_chunks_mut(TASK_ROWS)
            .enumerate()
            .for_each_init(S::default, |s, (t, chunk)| {
                task(t * TASK_ROWS, chunk, s);
                if let Some(i) = first_bad(chunk) {
                    first.fetch_min(t * TASK_ROWS + i, Ordering::Relaxed);
                }
            });
        let row = first.into_inner();
        (row != usize::MAX).then_some(row)
    }
}

/// `Ok` if every result is finite, else the cause for the first row that
/// is not ([`non_finite_cause`]).
fn first_non_finite<T: Copy + Into<f64>>(x: ArrayView2<'_, T>, row: Option<usize>) -> Result<()> {
    match row {
        Some(row) => Err(non_finite_cause(x, row)),
        None => Ok(()),
    }
}

/// Why row `row` has a non-finite distance: a non-finite input, or overflow.
pub(crate) fn non_finite_cause<T: Copy + Into<f64>>(x: ArrayView2<'_, T>, row: usize) -> Error {
    let r = x.row(row);
    match r.iter().position(|&v| !v.into().is_finite()) {
        Some(column) => Error::NonFinite {
            row,
            column,
            value: r[column].into(),
        },
        None => Error::Overflow { row },
    }
}

#[inline(always)]
fn row_body<const FMA: bool>(w: &[f64], p: usize, c: &[f64]) -> f64 {
    let mut d2 = 0.0;
    for i in 0..p {
        let row = &w[i * p..i * p + i + 1];
        let mut acc = [0.0f64; 4];
        let mut chunks = row.chunks_exact(4).zip(c.chunks_exact(4));
        for (a, b) in &mut chunks {
            for k in 0..4 {
                acc[k] = fmadd::<FMA>(a[k], b[k], acc[k]);
            }
        }
        let done = row.len() / 4 * 4;
        let mut z = (acc[0] + acc[1]) + (acc[2] + acc[3]);
        for (a, b) in row[done..].iter().zip(&c[done..]) {
            z = fmadd::<FMA>(*a, *b, z);
        }
        d2 = fmadd::<FMA>(z, z, d2);
    }
    d2
}

/// `‖L⁻¹ c‖²` for `p ≤ 64` as a sum of columns of `L⁻¹` scaled by `c_j`
/// (independent vector updates, no horizontal sums until the end); `wt` is
/// `(L⁻¹)ᵀ` row-major.
#[inline(always)]
fn column_body<const FMA: bool>(wt: &[f64], p: usize, c: &[f64]) -> f64 {
    let mut z = [0.0f64; STACK_DIM];
    for j in 0..p {
        let cj = c[j];
        let col = &wt[j * p + j..(j + 1) * p];
        for (zi, &w) in z[j..p].iter_mut().zip(col) {
            *zi = fmadd::<FMA>(w, cj, *zi);
        }
    }
    let mut acc = [0.0f64; 4];
    for (k, &v) in z[..p].iter().enumerate() {
        acc[k % 4] = fmadd::<FMA>(v, v, acc[k % 4]);
    }
    (acc[0] + acc[1]) + (acc[2] + acc[3])
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn row_avx2(w: &[f64], p: usize, c: &[f64]) -> f64 {
    row_body::<true>(w, p, c)
}

/// [`column_body`] for a dimension known at compile time: every column is
/// used in full (its zeros above the diagonal included), so the loops unroll
/// into straight-line vector code.
#[inline(always)]
fn column_fixed<const P: usize, const FMA: bool>(wt: &[f64], c: &[f64]) -> f64 {
    let mut z = [0.0f64; P];
    for (col, &cj) in wt.as_chunks::<P>().0.iter().zip(c) {
        for i in 0..P {
            z[i] = fmadd::<FMA>(col[i], cj, z[i]);
        }
    }
    let mut acc = 0.0;
    for v in z {
        acc = fmadd::<FMA>(v, v, acc);
    }
    acc
}

#[inline(always)]
fn column_dispatch<const FMA: bool>(wt: &[f64], p: usize, c: &[f64]) -> f64 {
    match p {
        1 => column_fixed::<1, FMA>(wt, c),
        2 => column_fixed::<2, FMA>(wt, c),
        3 => column_fixed::<3, FMA>(wt, c),
        4 => column_fixed::<4, FMA>(wt, c),
        5 => column_fixed::<5, FMA>(wt, c),
        6 => column_fixed::<6, FMA>(wt, c),
        7 => column_fixed::<7, FMA>(wt, c),
        8 => column_fixed::<8, FMA>(wt, c),
        9 => column_fixed::<9, FMA>(wt, c),
        10 => column_fixed::<10, FMA>(wt, c),
        11 => column_fixed::<11, FMA>(wt, c),
        12 => column_fixed::<12, FMA>(wt, c),
        13 => column_fixed::<13, FMA>(wt, c),
        14 => column_fixed::<14, FMA>(wt, c),
        15 => column_fixed::<15, FMA>(wt, c),
        16 => column_fixed::<16, FMA>(wt, c),
        20 => column_fixed::<20, FMA>(wt, c),
        24 => column_fixed::<24, FMA>(wt, c),
        32 => column_fixed::<32, FMA>(wt, c),
        48 => column_fixed::<48, FMA>(wt, c),
        64 => column_fixed::<64, FMA>(wt, c),
        _ => column_body::<FMA>(wt, p, c),
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn column_avx2(wt: &[f64], p: usize, c: &[f64]) -> f64 {
    column_dispatch::<true>(wt, p, c)
}

/// `‖L⁻¹ c‖²` for a centred vector `c` of length `p`.
#[inline]
fn whitened_norm(w: &[f64], p: usize, c: &[f64]) -> f64 {
    #[cfg(target_arch = "x86_64")]
    {
        if has_avx2_fma() {
            // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
            return unsafe { row_avx2(w, p, c) };
        }
    }
    row_body::<false>(w, p, c)
}

/// `cᵀ Σ⁻¹ c` for a centred vector (length already checked).
pub(crate) fn squared_norm_centred(factor: Factor<'_>, c: &[f64]) -> f64 {
    let p = factor.dim;
    let w = factor.w;
    if factor.diagonal {
        return c
            .iter()
            .enumerate()
            .map(|(j, &v)| {
                let z = v * w[j * p + j];
                z * z
            })
            .sum();
    }
    let wt = factor.wt;
    if p <= STACK_DIM && wt.len() == p * p {
        #[cfg(target_arch = "x86_64")]
        {
            if has_avx2_fma() {
                // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
                return unsafe { column_avx2(wt, p, c) };
            }
        }
        return column_dispatch::<false>(wt, p, c);
    }
    whitened_norm(w, p, c)
}

/// `(x − μ)ᵀ Σ⁻¹ (x − μ)` for one row (lengths already checked), without
/// heap allocation for `p ≤ 64`; `scratch` is used for larger `p` when
/// given, and a temporary buffer otherwise.
pub(crate) fn squared_distance_row(
    factor: Factor<'_>,
    mu: &[f64],
    x: &[f64],
    scratch: Option<&mut [f64]>,
) -> f64 {
    let p = mu.len();
    if p <= STACK_DIM {
        let mut c = [0.0f64; STACK_DIM];
        for ((ci, &xi), &mi) in c.iter_mut().zip(x).zip(mu) {
            *ci = xi - mi;
        }
        return squared_norm_centred(factor, &c[..p]);
    }
    let mut owned;
    let c: &mut [f64] = match scratch {
        Some(s) if s.len() >= p => &mut s[..p],
        _ => {
            owned = vec![0.0; p];
            &mut owned
        }
    };
    for ((ci, &xi), &mi) in c.iter_mut().zip(x).zip(mu) {
        *ci = xi - mi;
    }
    squared_norm_centred(factor, c)
}
