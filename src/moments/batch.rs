//! Parallel batch accumulation: centred two-pass moments per row block,
//! merged pairwise.

use super::accumulator::MomentAccumulator;
use crate::error::Result;
use crate::linalg;
use ndarray::{s, ArrayView2};
use rayon::prelude::*;

/// Rows per block, chosen so a centred block stays in the L2 cache.
fn block_rows(p: usize) -> usize {
    (32_768 / p.max(1)).clamp(64, 4096)
}

/// Moments of one block: mean first, then the Gram matrix of the centred
/// (and weight-scaled) rows through faer's matrix product.
fn block_moments(
    x: ArrayView2<'_, f64>,
    weights: Option<&[f64]>,
    buf: &mut Vec<f64>,
) -> Option<MomentAccumulator> {
    let (n, p) = x.dim();
    let mut acc = MomentAccumulator::empty(p);
    acc.count = n as u64;
    let mut sum = vec![0.0; p];
    let mut wsum = 0.0;
    let mut wsq = 0.0;
    for (i, row) in x.outer_iter().enumerate() {
        let w = weights.map_or(1.0, |w| w[i]);
        wsum += w;
        wsq += w * w;
        for (((s, &v), lo), hi) in sum
            .iter_mut()
            .zip(row.iter())
            .zip(acc.min.iter_mut())
            .zip(acc.max.iter_mut())
        {
            *s += w * v;
            *lo = lo.min(v);
            *hi = hi.max(v);
        }
    }
    if sum.iter().any(|v| !v.is_finite()) {
        return None;
    }
    if wsum == 0.0 {
        return Some(acc);
    }
    let mean: Vec<f64> = sum.iter().map(|s| s / wsum).collect();
    buf.clear();
    buf.reserve(n * p);
    for (i, row) in x.outer_iter().enumerate() {
        let sw = weights.map_or(1.0, |w| w[i].sqrt());
        buf.extend(row.iter().zip(&mean).map(|(&v, &m)| sw * (v - m)));
    }
    // The centred rows sum to (almost) zero; correct the mean for the
    // rounding left in that sum (the second-pass correction).
    let mut residual = vec![0.0; p];
    for (i, c) in buf.chunks_exact(p).enumerate() {
        let sw = weights.map_or(1.0, |w| w[i].sqrt());
        for (r, &v) in residual.iter_mut().zip(c) {
            *r += sw * v;
        }
    }
    linalg::gram_add(&mut acc.comoment, buf, n, p);
    for j in 0..p {
        let shift = residual[j] / wsum;
        acc.mean[j] = mean[j] + shift;
    }
    // M = Σ w (x − m̂)(x − m̂)ᵀ − W·δδᵀ with δ = m − m̂ (exact identity).
    for i in 0..p {
        for j in 0..p {
            acc.comoment[i * p + j] -= wsum * (residual[i] / wsum) * (residual[j] / wsum);
        }
    }
    acc.weight_sum = wsum;
    acc.weight_sq_sum = wsq;
    Some(acc)
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
    let result = if n * p < crate::distance::kernel::SEQUENTIAL_BELOW || blocks < 2 {
        let mut buf = Vec::new();
        let mut acc = Some(MomentAccumulator::empty(p));
        for b in 0..blocks {
            acc = match (acc, run(b, &mut buf)) {
                (Some(mut a), Some(m)) => {
                    a.merge_unchecked(&m);
                    Some(a)
                }
                _ => None,
            };
        }
        acc
    } else {
        (0..blocks)
            .into_par_iter()
            .map_init(Vec::new, |buf, b| run(b, buf))
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
