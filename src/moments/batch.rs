//! Parallel batch accumulation: centred two-pass moments per row block,
//! merged pairwise.

use super::accumulator::MomentAccumulator;
use crate::error::Result;
use crate::kernels::linalg;
use ndarray::{s, ArrayView2};
use rayon::prelude::*;

/// Rows per block, chosen so a centred block stays in the L2 cache.
fn block_rows(p: usize) -> usize {
    if p <= crate::kernels::gram::LANE_KERNEL_MAX_DIM {
        crate::kernels::gram::padded((32_768 / p.max(1)).clamp(256, 4096))
    } else {
        (131_072 / p).clamp(256, 4096)
    }
}

/// A robust shift for a block: each column's median over the block's
/// first few rows (at most 31), so that one wild row cannot make the
/// shifted sums cancel.
fn block_shift(x: ArrayView2<'_, f64>) -> Vec<f64> {
    let k = x.nrows().min(31);
    let mut col = Vec::with_capacity(k);
    (0..x.ncols())
        .map(|j| {
            col.clear();
            col.extend((0..k).map(|i| x[(i, j)]));
            col.sort_by(f64::total_cmp);
            let m = col[k / 2];
            if m.is_finite() {
                m
            } else {
                0.0
            }
        })
        .collect()
}

/// One row: `centred = sw·(v − s)`, `sums += w·(v − s)`, and the running
/// column minima and maxima (NaN is caught later through the sums).
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn shifted_row(
    values: &[f64],
    shift: &[f64],
    w: f64,
    sw: f64,
    centred: &mut [f64],
    sums: &mut [f64],
    min: &mut [f64],
    max: &mut [f64],
) {
    for (((c, s), &v), &m) in centred
        .iter_mut()
        .zip(sums.iter_mut())
        .zip(values)
        .zip(shift)
    {
        let d = v - m;
        *s += w * d;
        *c = sw * d;
    }
    for ((lo, hi), &v) in min.iter_mut().zip(max.iter_mut()).zip(values) {
        *lo = if v < *lo { v } else { *lo };
        *hi = if v > *hi { v } else { *hi };
    }
}

/// Moments of one block in a single pass over memory.
///
/// Rows are shifted by a robust per-block shift `s` (see [`block_shift`]),
/// written (weight-scaled) into a cache-resident buffer, and their co-moment
/// matrix formed by the Gram kernel; with `δ = Σ w (x − s) / W` the exact
/// identities `m = s + δ` and `M = Σ w (x − s)(x − s)ᵀ − W δ δᵀ` give the
/// block's mean and co-moment matrix. Because `s` is within the bulk of the
/// block, `‖δ‖` is a fraction of the spread and the correction does not
/// cancel.
#[inline(always)]
fn block_moments_body(
    x: ArrayView2<'_, f64>,
    weights: Option<&[f64]>,
    buf: &mut Vec<f64>,
) -> Option<MomentAccumulator> {
    let (n, p) = x.dim();
    let mut acc = MomentAccumulator::empty(p);
    acc.count = n as u64;
    let shift = block_shift(x);
    let mut sums = vec![0.0; p];
    let mut wsum = 0.0;
    let mut wsq = 0.0;
    let lane_kernel = p <= crate::kernels::gram::LANE_KERNEL_MAX_DIM;
    let len = if lane_kernel {
        crate::kernels::gram::padded(n)
    } else {
        n
    };
    if buf.len() < p * len {
        buf.resize(p * len, 0.0);
    }
    if lane_kernel {
        for j in 0..p {
            buf[j * len + n..(j + 1) * len].fill(0.0);
        }
    }
    let contiguous = if lane_kernel && weights.is_none() {
        x.as_slice()
    } else {
        None
    };
    if let Some(data) = contiguous {
        // Fast path (row-major block, no weights): transpose eight rows at a
        // time, keeping sums, minima and maxima as eight-lane vectors.
        let mut lane_sum = vec![[0.0f64; 8]; p];
        let mut lane_min = vec![[f64::INFINITY; 8]; p];
        let mut lane_max = vec![[f64::NEG_INFINITY; 8]; p];
        let full = n / 8 * 8;
        for g in (0..full).step_by(8) {
            let rows = &data[g * p..(g + 8) * p];
            for j in 0..p {
                let mut lanes = [0.0f64; 8];
                for (r, l) in lanes.iter_mut().enumerate() {
                    *l = rows[r * p + j];
                }
                let (ls, (lmin, lmax)) = (&mut lane_sum[j], (&mut lane_min[j], &mut lane_max[j]));
                let sj = shift[j];
                for r in 0..8 {
                    let v = lanes[r];
                    lmin[r] = lmin[r].min(v);
                    lmax[r] = lmax[r].max(v);
                    lanes[r] = v - sj;
                    ls[r] += lanes[r];
                }
                buf[j * len + g..j * len + g + 8].copy_from_slice(&lanes);
            }
        }
        for i in full..n {
            let row = &data[i * p..(i + 1) * p];
            for j in 0..p {
                let v = row[j];
                let c = v - shift[j];
                lane_sum[j][0] += c;
                lane_min[j][0] = lane_min[j][0].min(v);
                lane_max[j][0] = lane_max[j][0].max(v);
                buf[j * len + i] = c;
            }
        }
        for j in 0..p {
            sums[j] = lane_sum[j].iter().sum();
            acc.min[j] = lane_min[j].iter().fold(f64::INFINITY, |m, &v| m.min(v));
            acc.max[j] = lane_max[j].iter().fold(f64::NEG_INFINITY, |m, &v| m.max(v));
            if lane_min[j].iter().chain(&lane_max[j]).any(|v| v.is_nan()) {
                sums[j] = f64::NAN;
            }
        }
        wsum = n as f64;
        wsq = n as f64;
    } else {
        let mut panel = vec![[0.0f64; 8]; if lane_kernel { p } else { 0 }];
        let mut scratch = vec![0.0; p];
        let mut centred = vec![0.0; p];
        let mut start = 0;
        while start < n {
            let count = (n - start).min(8);
            for r in 0..count {
                let i = start + r;
                let row = x.row(i);
                let values: &[f64] = match row.as_slice() {
                    Some(v) => v,
                    None => {
                        for (d, v) in scratch.iter_mut().zip(row.iter()) {
                            *d = *v;
                        }
                        &scratch
                    }
                };
                let w = weights.map_or(1.0, |w| w[i]);
                let sw = if weights.is_some() { w.sqrt() } else { 1.0 };
                wsum += w;
                wsq += w * w;
                shifted_row(
                    values,
                    &shift,
                    w,
                    sw,
                    &mut centred,
                    &mut sums,
                    &mut acc.min,
                    &mut acc.max,
                );
                if lane_kernel {
                    for (lanes, &c) in panel.iter_mut().zip(&centred) {
                        lanes[r] = c;
                    }
                } else {
                    buf[i * p..(i + 1) * p].copy_from_slice(&centred);
                }
            }
            if lane_kernel {
                for (j, lanes) in panel.iter().enumerate() {
                    for (d, &v) in buf[j * len + start..j * len + start + count]
                        .iter_mut()
                        .zip(lanes)
                    {
                        *d = v;
                    }
                }
            }
            start += count;
        }
    }
    if sums.iter().any(|v| !v.is_finite()) || acc.min.iter().any(|v| v.is_nan()) {
        return None;
    }
    if wsum == 0.0 {
        return Some(acc);
    }
    if lane_kernel {
        crate::kernels::gram::gram_lower_transposed(buf, p, len, &mut acc.comoment);
    } else {
        linalg::gram_lower_add(&mut acc.comoment, &buf[..n * p], n, p);
    }
    for i in 0..p {
        let di = sums[i] / wsum;
        acc.mean[i] = shift[i] + di;
        for j in 0..=i {
            let v = acc.comoment[i * p + j] - wsum * di * (sums[j] / wsum);
            acc.comoment[i * p + j] = v;
            acc.comoment[j * p + i] = v;
        }
    }
    acc.weight_sum = wsum;
    acc.weight_sq_sum = wsq;
    Some(acc)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn block_moments_avx2(
    x: ArrayView2<'_, f64>,
    weights: Option<&[f64]>,
    buf: &mut Vec<f64>,
) -> Option<MomentAccumulator> {
    block_moments_body(x, weights, buf)
}

fn block_moments(
    x: ArrayView2<'_, f64>,
    weights: Option<&[f64]>,
    buf: &mut Vec<f64>,
) -> Option<MomentAccumulator> {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
            return unsafe { block_moments_avx2(x, weights, buf) };
        }
    }
    block_moments_body(x, weights, buf)
}

/// Accumulates all rows of `x` (with optional weights, already checked).
pub(crate) fn accumulate(
    x: ArrayView2<'_, f64>,
    weights: Option<&[f64]>,
) -> Result<MomentAccumulator> {
    let (n, p) = x.dim();
    let block = block_rows(p);
    let blocks = n.div_ceil(block);
    let run = |b: usize, buf: &mut Vec<f64>| {
        let lo = b * block;
        let hi = (lo + block).min(n);
        block_moments(x.slice(s![lo..hi, ..]), weights.map(|w| &w[lo..hi]), buf)
    };
    // A contiguous range of blocks, one buffer for all of them (allocating a
    // fresh buffer per block would fault in new pages every time).
    let run_range = |range: std::ops::Range<usize>| {
        let mut buf = Vec::new();
        let mut acc = Some(MomentAccumulator::empty(p));
        for b in range {
            acc = match (acc, run(b, &mut buf)) {
                (Some(mut a), Some(m)) => {
                    a.merge_unchecked(&m);
                    Some(a)
                }
                _ => None,
            };
        }
        acc
    };
    let result = if n * p < crate::kernels::distance::SEQUENTIAL_BELOW || blocks < 2 {
        run_range(0..blocks)
    } else {
        let pieces = (4 * rayon::current_num_threads()).min(blocks);
        (0..pieces)
            .into_par_iter()
            .map(|k| run_range(k * blocks / pieces..(k + 1) * blocks / pieces))
            .reduce(
                || Some(MomentAccumulator::empty(p)),
                |a, b| match (a, b) {
                    (Some(mut a), Some(b)) => {
                        a.merge_unchecked(&b);
                        Some(a)
                    }
                    _ => None,
                },
            )
    };
    match result {
        Some(acc) => Ok(acc),
        None => {
            crate::data::check_finite(x)?;
            // Finite values whose sums overflow.
            Err(crate::error::Error::Overflow { row: 0 })
        }
    }
}
