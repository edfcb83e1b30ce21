//! Criterion benchmarks for held-out (conformal) scoring and the EM fit.
//!
//! `held_out_scoring` times, on the same 1 000 000 × 8 rows and model, the
//! squared distances alone, the distances with F p-values, and the
//! distances with held-out p-values from 10 000 calibration rows (a binary
//! search per row), each into caller-owned buffers. `em_fit` times the EM
//! fit of 100 000 × 20 rows with 10% of the cells empty (at random, fixed
//! seed).

use criterion::{black_box, criterion_group, criterion_main, Criterion, Throughput};

mod support;
use mvdist::calibration::EmpiricalPValue;
use mvdist::incomplete::{expectation_maximization, EmOptions};
use mvdist::{DistanceModel, RowOrigin};
use rand::{rngs::StdRng, Rng, SeedableRng};
use std::time::Duration;
use support::correlated_rows;

fn bench_held_out(c: &mut Criterion) {
    let (n, p, m) = (1_000_000, 8, 10_000);
    let x = correlated_rows(n, p, 7);
    let held = correlated_rows(m, p, 8);
    let model = DistanceModel::fit(x.view())
        .and_then(|model| model.with_calibration_rows(held.view()))
        .expect("fit");
    let mut d2 = vec![0.0; n];
    let mut pv = vec![0.0; n];
    let mut g = c.benchmark_group("held_out_scoring");
    g.sample_size(20).measurement_time(Duration::from_secs(6));
    g.throughput(Throughput::Elements(n as u64));
    g.bench_function("distances_only", |b| {
        b.iter(|| {
            model
                .squared_distances_into(x.view(), &mut d2)
                .expect("score")
        })
    });
    g.bench_function("f_p_values", |b| {
        b.iter(|| {
            model
                .score_into(x.view(), RowOrigin::New, &mut d2, &mut pv)
                .expect("score")
        })
    });
    g.bench_function("held_out_p_values", |b| {
        b.iter(|| {
            model
                .score_held_out_into(x.view(), EmpiricalPValue::Marginal, &mut d2, &mut pv)
                .expect("score")
        })
    });
    g.finish();
}

fn bench_em(c: &mut Criterion) {
    let (n, p) = (100_000, 20);
    let mut x = correlated_rows(n, p, 3);
    let mut rng = StdRng::seed_from_u64(4);
    for mut row in x.outer_iter_mut() {
        for v in row.iter_mut() {
            if rng.gen::<f64>() < 0.1 {
                *v = f64::NAN;
            }
        }
        if row.iter().all(|v| v.is_nan()) {
            row[0] = 0.0;
        }
    }
    let fit = expectation_maximization(x.view(), &EmOptions::default()).expect("fit");
    eprintln!(
        "em_fit: {} iterations, converged {}",
        fit.iterations(),
        fit.converged()
    );
    let mut g = c.benchmark_group("em_fit");
    g.sample_size(10).measurement_time(Duration::from_secs(20));
    g.bench_function("100000x20_10pct_missing", |b| {
        b.iter(|| {
            expectation_maximization(black_box(x.view()), &EmOptions::default()).expect("fit")
        })
    });
    g.finish();
}

criterion_group!(benches, bench_held_out, bench_em);
criterion_main!(benches);
