//! Row blocks under a linear map, for one pass over the data.
//!
//! The statistics of this module are sums over rows of polynomials in
//! transformed coordinates `y = F (x − m)`. Rows are taken in blocks of
//! [`BLOCK`], centred and transposed into a `p × BLOCK` buffer (each
//! coordinate's values contiguous, so that loops over rows vectorize), mapped
//! by `F`, and handed to a fold. Blocks run in parallel tasks on the caller's
//! rayon pool (sequentially for small inputs) and the per-task results are
//! merged. Memory is `O(p · BLOCK)` per task, whatever the number of rows.

use crate::distance::SEQUENTIAL_THRESHOLD;
use crate::error::Result;
use crate::moments::Divisor;
use crate::DistanceModel;
use ndarray::ArrayView2;
use rayon::prelude::*;

/// Rows per block (a multiple of the 8 lanes of the kernels).
pub(crate) const BLOCK: usize = 256;
/// Rows per parallel task.
const TASK_ROWS: usize = 8 * BLOCK;

/// The mean and the maximum-likelihood (divisor `n`) covariance of the rows,
/// validated: the moments every test here is built on.
///
/// # Errors
/// As [`DistanceModel::fit_with_divisor`]: [`crate::Error::Empty`],
/// [`crate::Error::NonFinite`], [`crate::Error::TooFewRows`] unless `n > p`,
/// [`crate::Error::ZeroVariance`] or [`crate::Error::Collinear`] naming the
/// column.
pub(crate) fn fit_ml(rows: ArrayView2<'_, f64>) -> Result<DistanceModel> {
    DistanceModel::fit_with_divisor(rows, Divisor::MaximumLikelihood)
}

/// `y = F (x − m)`: a location and a row-major `p × p` matrix (lower
/// triangular when `lower`, which halves the work).
pub(crate) struct RowMap<'a> {
    pub location: &'a [f64],
    pub matrix: &'a [f64],
    pub lower: bool,
}

/// Transposes, centres and maps rows `start..start + count` of `x` into
/// `out` (`p × BLOCK`; lanes past `count` are zero).
fn map_block(
    x: ArrayView2<'_, f64>,
    start: usize,
    count: usize,
    map: &RowMap<'_>,
    centred: &mut [f64],
    out: &mut [f64],
) {
    let p = map.location.len();
    for r in 0..count {
        let row = x.row(start + r);
        for (j, (&v, &m)) in row.iter().zip(map.location).enumerate() {
            centred[j * BLOCK + r] = v - m;
        }
    }
    for j in 0..p {
        centred[j * BLOCK + count..(j + 1) * BLOCK].fill(0.0);
    }
    for k in 0..p {
        let y = &mut out[k * BLOCK..(k + 1) * BLOCK];
        y.fill(0.0);
        let last = if map.lower { k + 1 } else { p };
        for j in 0..last {
            let f = map.matrix[k * p + j];
            if f == 0.0 {
                continue;
            }
            let c = &centred[j * BLOCK..(j + 1) * BLOCK];
            for (yr, &cr) in y.iter_mut().zip(c) {
                *yr += f * cr;
            }
        }
    }
}

/// Folds `fold(acc, block, count)` over the mapped rows of `x`, block by
/// block, and merges the per-task accumulators with `merge`.
///
/// `block` is `p × BLOCK` row-major: coordinate `k` of row `r` of the
/// block is `block[k * BLOCK + r]`; rows at and past `count` are zero.
pub(crate) fn fold_mapped<A, I, F, M>(
    x: ArrayView2<'_, f64>,
    map: &RowMap<'_>,
    init: I,
    fold: F,
    merge: M,
) -> A
where
    A: Send,
    I: Fn() -> A + Sync + Send,
    F: Fn(&mut A, &[f64], usize) + Sync + Send,
    M: Fn(A, A) -> A + Sync + Send,
{
    let (n, p) = x.dim();
    let task = |t: usize| {
        let lo = t * TASK_ROWS;
        let hi = (lo + TASK_ROWS).min(n);
        let mut centred = vec![0.0; p * BLOCK];
        let mut mapped = vec![0.0; p * BLOCK];
        let mut acc = init();
        let mut start = lo;
        while start < hi {
            let count = BLOCK.min(hi - start);
            map_block(x, start, count, map, &mut centred, &mut mapped);
            fold(&mut acc, &mapped, count);
            start += count;
        }
        acc
    };
    let tasks = n.div_ceil(TASK_ROWS);
    if n * p < SEQUENTIAL_THRESHOLD || tasks <= 1 {
        (0..tasks).map(task).fold(init(), &merge)
    } else {
        (0..tasks).into_par_iter().map(task).reduce(&init, &merge)
    }
}

/// Adds two equally long vectors of sums.
pub(crate) fn add_sums(mut a: Vec<f64>, b: Vec<f64>) -> Vec<f64> {
    for (x, y) in a.iter_mut().zip(&b) {
        *x += y;
    }
    a
}

/// Per-coordinate power sums `Σ y`, `Σ y²`, `Σ y³`, `Σ y⁴` of mapped rows,
/// laid out as `[k * 4 + (power − 1)]`.
pub(crate) fn power_sums(x: ArrayView2<'_, f64>, map: &RowMap<'_>) -> Vec<f64> {
    let p = map.location.len();
    fold_mapped(
        x,
        map,
        || vec![0.0; 4 * p],
        |acc, block, count| {
            for k in 0..p {
                let y = &block[k * BLOCK..k * BLOCK + count];
                let mut s = [[0.0f64; 8]; 4];
                let (chunks, rest) = y.as_chunks::<8>();
                for c in chunks {
                    for l in 0..8 {
                        let v = c[l];
                        let v2 = v * v;
                        s[0][l] += v;
                        s[1][l] += v2;
                        s[2][l] += v2 * v;
                        s[3][l] += v2 * v2;
                    }
                }
                for (q, sq) in s.iter().enumerate() {
                    acc[k * 4 + q] += sq.iter().sum::<f64>();
                }
                for &v in rest {
                    let v2 = v * v;
                    acc[k * 4] += v;
                    acc[k * 4 + 1] += v2;
                    acc[k * 4 + 2] += v2 * v;
                    acc[k * 4 + 3] += v2 * v2;
                }
            }
        },
        add_sums,
    )
}
