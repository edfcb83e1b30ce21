//! Criterion benchmarks for the normality checks (README "Normality checks"
//! speed table): `cargo bench --bench normality`.
//!
//! * Mardia and Doornik–Hansen at (n, p) = (1 000 000, 10), alone and
//!   together;
//! * Royston's H at (5 000, 10);
//! * Mardia's skewness by the tensor identity against the direct `n × n`
//!   double sum `n⁻² Σ_{i,j} (z_iᵀ z_j)³` at (20 000, 10), side by side;
//! * Henze–Zirkler at (10 000, 10) and (50 000, 10).

use criterion::{black_box, criterion_group, criterion_main, BenchmarkId, Criterion};
use mvdist::normality::{DoornikHansen, HenzeZirkler, Mardia, RoystonH};
use mvdist::{DistanceModel, Divisor, WhiteningKind};
use ndarray::linalg::general_mat_mul;
use ndarray::{s, Array2};
use rayon::prelude::*;
use std::time::Duration;

/// Rows `x = 5 + A z` with standard normal `z` (SplitMix64 and Box–Muller,
/// seeded) and a fixed lower-triangular `A` with unit diagonal and
/// off-diagonal 0.4.
fn normal_rows(n: usize, p: usize, seed: u64) -> Array2<f64> {
    let mut state = seed;
    let mut next = move || {
        state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        (((z ^ (z >> 31)) >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    };
    let mut x = Array2::zeros((n, p));
    let mut z = vec![0.0; p];
    for mut row in x.outer_iter_mut() {
        for v in z.iter_mut() {
            let (u, w) = (next(), next());
            *v = (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * w).cos();
        }
        for i in 0..p {
            row[i] = 5.0 + z[i] + 0.4 * z[..i].iter().sum::<f64>();
        }
    }
    x
}

/// Mardia's `b₁,ₚ` the direct way: whiten, then the double sum over all
/// `n²` pairs in cache-sized tiles of 256 × 1024 pairs, in parallel (each
/// tile `G = Z_I Z_Jᵀ` by ndarray's matrix product into a reused buffer,
/// then `Σ G³`), never holding the `n × n` matrix.
fn skewness_double_sum(x: &Array2<f64>) -> f64 {
    let model = DistanceModel::fit_with_divisor(x.view(), Divisor::MaximumLikelihood).expect("fit");
    let z = model
        .whitener(WhiteningKind::Cholesky)
        .expect("whitener")
        .whiten(x.view())
        .expect("whiten");
    let n = z.nrows();
    let (bi, bj) = (256, 1024);
    let total: f64 = (0..n.div_ceil(bi))
        .into_par_iter()
        .map(|b| {
            let zi = z.slice(s![b * bi..((b + 1) * bi).min(n), ..]);
            let mut g = Array2::<f64>::zeros((zi.nrows(), bj));
            let mut sum = 0.0;
            for j0 in (0..n).step_by(bj) {
                let zj = z.slice(s![j0..(j0 + bj).min(n), ..]);
                let mut gv = g.slice_mut(s![.., 0..zj.nrows()]);
                general_mat_mul(1.0, &zi, &zj.t(), 0.0, &mut gv);
                sum += gv.iter().map(|v| v * v * v).sum::<f64>();
            }
            sum
        })
        .sum();
    total / (n as f64 * n as f64)
}

fn bench(c: &mut Criterion) {
    let big = normal_rows(1_000_000, 10, 1);
    let mut g = c.benchmark_group("normality_1000000x10");
    g.sample_size(10).measurement_time(Duration::from_secs(8));
    g.bench_function("mardia", |b| {
        b.iter(|| Mardia::compute(black_box(big.view())).expect("mardia"))
    });
    g.bench_function("doornik_hansen", |b| {
        b.iter(|| DoornikHansen::compute(black_box(big.view())).expect("dh"))
    });
    g.bench_function("mardia_and_doornik_hansen", |b| {
        b.iter(|| {
            (
                Mardia::compute(black_box(big.view())).expect("mardia"),
                DoornikHansen::compute(black_box(big.view())).expect("dh"),
            )
        })
    });
    g.finish();
    drop(big);

    let mid = normal_rows(5_000, 10, 2);
    let mut g = c.benchmark_group("royston_5000x10");
    g.sample_size(30);
    g.bench_function("royston_h", |b| {
        b.iter(|| RoystonH::compute(black_box(mid.view())).expect("royston"))
    });
    g.finish();

    let x = normal_rows(20_000, 10, 3);
    let tensor = Mardia::compute(x.view()).expect("mardia").skewness();
    let direct = skewness_double_sum(&x);
    assert!(
        (tensor - direct).abs() <= 1e-9 * direct,
        "{tensor} vs {direct}"
    );
    let mut g = c.benchmark_group("mardia_skewness_20000x10");
    g.sample_size(10).measurement_time(Duration::from_secs(10));
    g.bench_function("tensor_identity", |b| {
        b.iter(|| {
            Mardia::compute(black_box(x.view()))
                .expect("mardia")
                .skewness()
        })
    });
    g.bench_function("direct_double_sum", |b| {
        b.iter(|| skewness_double_sum(black_box(&x)))
    });
    g.finish();

    let mut g = c.benchmark_group("henze_zirkler");
    g.sample_size(10).measurement_time(Duration::from_secs(20));
    for n in [10_000, 50_000] {
        let x = normal_rows(n, 10, 4);
        g.bench_with_input(
            BenchmarkId::from_parameter(format!("{n}x10")),
            &x,
            |b, x| b.iter(|| HenzeZirkler::compute(black_box(x.view())).expect("hz")),
        );
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
