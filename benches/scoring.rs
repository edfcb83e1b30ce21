//! Criterion benchmarks for batch scoring, fitting and single-row scoring.
//!
//! Run `benches/side_by_side.sh` to time numpy on the same sizes in the same
//! run and print the ratio table that the README reports. Besides the
//! criterion groups, this bench measures the machine's limits (parallel
//! memory read bandwidth and double-precision FMA peak) and writes them to
//! `target/machine_limits.json`, so that each figure can be stated as a
//! fraction of what the hardware allows.

use criterion::{black_box, criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};

mod support;
use mvdist::{DistanceModel, RowOrigin, Scorer};
use rayon::prelude::*;
use std::time::{Duration, Instant};
use support::correlated_rows;

const SIZES: [(usize, usize); 3] = [(1_000_000, 8), (1_000_000, 32), (200_000, 128)];

fn bench_batch(c: &mut Criterion) {
    let mut score = c.benchmark_group("score_batch");
    score
        .sample_size(20)
        .measurement_time(Duration::from_secs(6));
    for &(n, p) in &SIZES {
        let x = correlated_rows(n, p, 7);
        let model = DistanceModel::fit(x.view()).expect("fit");
        let mut out = vec![0.0; n];
        score.throughput(Throughput::Bytes((n * p * 8) as u64));
        score.bench_with_input(
            BenchmarkId::from_parameter(format!("{n}x{p}")),
            &x,
            |b, x| {
                b.iter(|| {
                    model
                        .squared_distances_into(x.view(), &mut out)
                        .expect("score")
                })
            },
        );
    }
    score.finish();

    // Rows per second from f64 and from f32 input (half the bytes), same
    // rows and model, into the same caller-owned buffer.
    let mut single = c.benchmark_group("score_batch_f32");
    single
        .sample_size(20)
        .measurement_time(Duration::from_secs(6));
    let (n, p) = SIZES[0];
    let x = correlated_rows(n, p, 7);
    let x32 = x.mapv(|v| v as f32);
    let model = DistanceModel::fit(x.view()).expect("fit");
    let mut out = vec![0.0; n];
    single.throughput(Throughput::Elements(n as u64));
    single.bench_function(format!("f64/{n}x{p}"), |b| {
        b.iter(|| {
            model
                .squared_distances_into(x.view(), &mut out)
                .expect("score")
        })
    });
    single.bench_function(format!("f32/{n}x{p}"), |b| {
        b.iter(|| {
            model
                .squared_distances_into(x32.view(), &mut out)
                .expect("score")
        })
    });
    single.finish();

    let mut pv = c.benchmark_group("score_with_p_values");
    pv.sample_size(10).measurement_time(Duration::from_secs(8));
    let (n, p) = SIZES[0];
    let x = correlated_rows(n, p, 7);
    let model = DistanceModel::fit(x.view()).expect("fit");
    pv.throughput(Throughput::Elements(n as u64));
    pv.bench_function(format!("{n}x{p}"), |b| {
        b.iter(|| model.score(x.view(), RowOrigin::New).expect("score"))
    });
    pv.finish();

    let mut fit = c.benchmark_group("fit_batch");
    fit.sample_size(20).measurement_time(Duration::from_secs(6));
    for &(n, p) in &SIZES {
        let x = correlated_rows(n, p, 11);
        fit.throughput(Throughput::Bytes((n * p * 8) as u64));
        fit.bench_with_input(
            BenchmarkId::from_parameter(format!("{n}x{p}")),
            &x,
            |b, x| b.iter(|| DistanceModel::fit(black_box(x.view())).expect("fit")),
        );
    }
    fit.finish();
}

fn bench_single(c: &mut Criterion) {
    let mut one = c.benchmark_group("score_one");
    for p in [4usize, 16, 64] {
        let x = correlated_rows(2_000, p, 3);
        let model = DistanceModel::fit(x.view()).expect("fit");
        let rows: Vec<Vec<f64>> = (0..64).map(|i| x.row(i).to_vec()).collect();
        let mut k = 0;
        one.bench_function(BenchmarkId::from_parameter(p), |b| {
            b.iter(|| {
                k = (k + 1) & 63;
                model.squared_distance(black_box(&rows[k])).expect("score")
            })
        });
    }
    one.finish();

    // A flag at a fixed level: the model's score_row (reference chosen and
    // p-value evaluated per row) against the prepared scorer's comparison
    // with a precomputed cutoff, and the scorer with its p-value.
    let mut flag = c.benchmark_group("flag_one");
    let p = 16;
    let x = correlated_rows(2_000, p, 3);
    let model = DistanceModel::fit(x.view()).expect("fit");
    let scorer = Scorer::new(model.clone(), RowOrigin::New, 0.01).expect("scorer");
    let rows: Vec<Vec<f64>> = (0..64).map(|i| x.row(i).to_vec()).collect();
    let mut k = 0;
    flag.bench_function("model_score_row", |b| {
        b.iter(|| {
            k = (k + 1) & 63;
            model
                .score_row(black_box(&rows[k]), RowOrigin::New, 0.01)
                .expect("score")
                .flagged
        })
    });
    flag.bench_function("scorer_flag_row", |b| {
        b.iter(|| {
            k = (k + 1) & 63;
            scorer.flag_row(black_box(&rows[k])).expect("flag")
        })
    });
    flag.bench_function("scorer_score_row", |b| {
        b.iter(|| {
            k = (k + 1) & 63;
            scorer
                .score_row(black_box(&rows[k]))
                .expect("score")
                .flagged
        })
    });
    flag.finish();

    // Throughput of one shared model scored from one and from two threads.
    let mut shared = c.benchmark_group("score_one_shared");
    let p = 16;
    let x = correlated_rows(100_000, p, 5);
    let model = DistanceModel::fit(x.view()).expect("fit");
    shared.throughput(Throughput::Elements(x.nrows() as u64));
    for threads in [1usize, 2] {
        shared.bench_function(BenchmarkId::new("threads", threads), |b| {
            b.iter(|| {
                let chunk = x.nrows() / threads;
                std::thread::scope(|s| {
                    for t in 0..threads {
                        let (model, x) = (&model, &x);
                        s.spawn(move || {
                            let mut acc = 0.0;
                            for row in x.outer_iter().skip(t * chunk).take(chunk) {
                                let r = model
                                    .score_row(
                                        row.as_slice().expect("row-major"),
                                        RowOrigin::New,
                                        0.01,
                                    )
                                    .expect("score");
                                acc += r.p_value;
                            }
                            black_box(acc)
                        });
                    }
                });
            })
        });
    }
    shared.finish();
}

/// Parallel read bandwidth (bytes/s) over a 1 GiB buffer, best of 5.
fn read_bandwidth() -> f64 {
    let data = vec![1.0f64; 1 << 27];
    let mut best = f64::INFINITY;
    for _ in 0..5 {
        let t = Instant::now();
        let s: f64 = data
            .par_chunks(1 << 16)
            .map(|c| c.iter().sum::<f64>())
            .sum();
        black_box(s);
        best = best.min(t.elapsed().as_secs_f64());
    }
    (data.len() * 8) as f64 / best
}

#[inline(always)]
fn fma_chains<const FMA: bool>(iters: usize) -> f64 {
    let mut acc = [[0.0f64; 8]; 12];
    let a = black_box(0.999_999_9);
    let b = black_box(1e-9);
    for _ in 0..iters {
        for chain in acc.iter_mut() {
            for v in chain.iter_mut() {
                *v = if FMA { v.mul_add(a, b) } else { *v * a + b };
            }
        }
    }
    acc.iter().flatten().sum()
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn fma_avx512(iters: usize) -> f64 {
    fma_chains::<true>(iters)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn fma_avx2(iters: usize) -> f64 {
    fma_chains::<true>(iters)
}

/// Double-precision peak (flop/s) on all threads, with the widest FMA
/// instructions this CPU has.
fn fma_peak() -> (f64, &'static str) {
    let iters = 20_000_000;
    let run = |f: fn(usize) -> f64| {
        let threads = rayon::current_num_threads();
        let t = Instant::now();
        let s: f64 = (0..threads).into_par_iter().map(|_| f(iters)).sum();
        black_box(s);
        (threads * iters * 96 * 2) as f64 / t.elapsed().as_secs_f64()
    };
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: feature checked at run time.
            return (run(|i| unsafe { fma_avx512(i) }), "avx512f");
        }
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: features checked at run time.
            return (run(|i| unsafe { fma_avx2(i) }), "avx2+fma");
        }
    }
    (run(fma_chains::<false>), "baseline")
}

fn machine_limits(_: &mut Criterion) {
    let bw = read_bandwidth();
    let (peak, isa) = fma_peak();
    let json = format!(
        "{{\"read_bandwidth_bytes_per_s\": {bw:.6e}, \"fma_peak_flops\": {peak:.6e}, \"isa\": \"{isa}\", \"threads\": {}}}\n",
        rayon::current_num_threads()
    );
    let dir = std::env::var("CARGO_TARGET_DIR").unwrap_or_else(|_| "target".into());
    let _ = std::fs::create_dir_all(&dir);
    let _ = std::fs::write(format!("{dir}/machine_limits.json"), &json);
    eprintln!("machine limits: {json}");
}

criterion_group!(benches, machine_limits, bench_batch, bench_single);
criterion_main!(benches);
