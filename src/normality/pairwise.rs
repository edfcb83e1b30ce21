//! The pairwise Gaussian kernel sum `Σ_{i<j} exp(−h ‖z_i − z_j‖²)` without
//! an `n × n` matrix.
//!
//! The whitened rows are held transposed (`p × n`, each coordinate's
//! values contiguous). Pairs are visited in tiles — a task of [`TASK_ROWS`] rows `i`
//! against tiles of [`TILE`] rows `j > i` — so that a tile's coordinates
//! stay in cache while every row of the task meets them. Each term's
//! squared distance is formed directly from the coordinate differences (no
//! cancellation for close pairs) and exponentiated by a branch-free
//! exponential (below) in loops the compiler vectorizes. Tasks run on the caller's rayon pool;
//! memory is the `O(n·p)` transposed copy.
//!
//! The exponential is the shared branch-free one of `kernels/exp.rs`.

use crate::kernels::exp::exp_nonpositive;
use crate::kernels::lanes::{fmadd, lane_sum};
use rayon::prelude::*;

/// Lanes per vector step.
const LANES: usize = 8;
/// Rows `i` per parallel task.
const TASK_ROWS: usize = 64;
/// Rows `j` per cache tile.
const TILE: usize = 512;

/// Whitened rows, transposed and padded, ready for pairwise sums.
pub(crate) struct TransposedRows {
    data: Vec<f64>,
    rows: usize,
    stride: usize,
    dim: usize,
}

impl TransposedRows {
    /// Transposes a row-major `n × p` slice.
    pub(crate) fn new(rows_major: &[f64], rows: usize, dim: usize) -> Self {
        let stride = rows;
        let mut data = vec![0.0; dim * stride];
        for (i, row) in rows_major.chunks_exact(dim).enumerate() {
            for (k, &v) in row.iter().enumerate() {
                data[k * stride + i] = v;
            }
        }
        TransposedRows {
            data,
            rows,
            stride,
            dim,
        }
    }
}

/// `Σ_j exp(−h‖z_i − z_j‖²)` over `j` in `from..to` (at most [`TILE`]
/// rows), with `d` as scratch. Each step is a plain loop over contiguous
/// memory, so the compiler vectorizes it: squared distances, then their
/// exponentials in place, then an eight-lane sum.
#[inline(always)]
fn row_sum<const FMA: bool>(
    z: &TransposedRows,
    zi: &[f64],
    h: f64,
    from: usize,
    to: usize,
    d: &mut [f64],
) -> f64 {
    let d = &mut d[..to - from];
    d.fill(0.0);
    for (k, &c) in zi.iter().enumerate() {
        let col = &z.data[k * z.stride + from..k * z.stride + to];
        for (dj, &v) in d.iter_mut().zip(col) {
            let diff = v - c;
            *dj = fmadd::<FMA>(diff, diff, *dj);
        }
    }
    for dj in d.iter_mut() {
        *dj = exp_nonpositive::<FMA>(-h * *dj);
    }
    let (chunks, rest) = d.as_chunks::<LANES>();
    let mut acc = [0.0f64; LANES];
    for c in chunks {
        for l in 0..LANES {
            acc[l] += c[l];
        }
    }
    lane_sum(&acc) + rest.iter().sum::<f64>()
}

/// The sum over the pairs of one task: rows `lo..hi` against every later row.
#[inline(always)]
fn task_body<const FMA: bool>(z: &TransposedRows, h: f64, lo: usize, hi: usize) -> f64 {
    let p = z.dim;
    let mut zi = vec![0.0; p];
    let mut d = vec![0.0; TILE];
    let mut total = 0.0;
    let mut tile = (lo + 1) / TILE * TILE;
    while tile < z.rows {
        let tile_end = (tile + TILE).min(z.rows);
        let mut tile_sum = 0.0;
        for i in lo..hi {
            let from = (i + 1).max(tile);
            if from >= tile_end {
                continue;
            }
            for (k, v) in zi.iter_mut().enumerate() {
                *v = z.data[k * z.stride + i];
            }
            tile_sum += row_sum::<FMA>(z, &zi, h, from, tile_end, &mut d);
        }
        total += tile_sum;
        tile += TILE;
    }
    total
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn task_avx2(z: &TransposedRows, h: f64, lo: usize, hi: usize) -> f64 {
    task_body::<true>(z, h, lo, hi)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn task_avx512(z: &TransposedRows, h: f64, lo: usize, hi: usize) -> f64 {
    task_body::<true>(z, h, lo, hi)
}

fn task(z: &TransposedRows, h: f64, lo: usize, hi: usize) -> f64 {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: the CPU supports AVX-512F (checked at run time).
            return unsafe { task_avx512(z, h, lo, hi) };
        }
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: the CPU supports AVX2 and FMA (checked at run time).
            return unsafe { task_avx2(z, h, lo, hi) };
        }
    }
    task_body::<false>(z, h, lo, hi)
}

/// `Σ_{i<j} exp(−h ‖z_i − z_j‖²)` over all pairs of rows, in parallel.
pub(crate) fn gaussian_pair_sum(z: &TransposedRows, h: f64) -> f64 {
    let n = z.rows;
    let tasks = n.div_ceil(TASK_ROWS);
    let run = |t: usize| {
        let lo = t * TASK_ROWS;
        task(z, h, lo, (lo + TASK_ROWS).min(n))
    };
    if n * n * z.dim < 1 << 22 {
        (0..tasks).map(run).sum()
    } else {
        // Early tasks have the most pairs: hand them out first.
        (0..tasks).into_par_iter().with_min_len(1).map(run).sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pair_sum_matches_the_double_loop() {
        for (n, p) in [(1, 1), (2, 1), (7, 3), (9, 2), (70, 3), (600, 2), (1100, 5)] {
            let data: Vec<f64> = (0..n * p)
                .map(|k| ((k * 7919 % 1013) as f64 / 1013.0 - 0.5) * 3.0)
                .collect();
            let h = 0.37;
            let mut want = 0.0;
            for i in 0..n {
                for j in (i + 1)..n {
                    let d: f64 = (0..p)
                        .map(|k| (data[i * p + k] - data[j * p + k]).powi(2))
                        .sum();
                    want += (-h * d).exp();
                }
            }
            let got = gaussian_pair_sum(&TransposedRows::new(&data, n, p), h);
            assert!(
                (got - want).abs() <= 1e-12 * want.max(1.0),
                "n={n} p={p}: {got} vs {want}"
            );
        }
    }
}
