//! Criterion benchmarks for the charts for small sustained shifts.
//!
//! `small_shift_charts` times, on 1 000 000 × 20 correlated rows (fixed
//! seed) and their fitted mean and covariance, the MEWMA statistics
//! (λ = 0.1, exact covariance) and the MCUSUM statistics (k = 0.5) into a
//! caller-owned buffer, and the MEWMA `monitor` with one point per row.
//! `run_length` times a simulated in-control ARL (p = 2, λ = 0.1,
//! h = 8.64, 10 000 runs).

use criterion::{black_box, criterion_group, criterion_main, Criterion, Throughput};

mod support;
use mvdist::control_chart::run_length::{average_run_length, RunLengthOptions};
use mvdist::control_chart::{
    EwmaCovariance, InControlEstimate, McusumChart, McusumOptions, MewmaChart, MewmaOptions,
};
use mvdist::DistanceModel;
use std::time::Duration;
use support::correlated_rows;

fn bench_charts(c: &mut Criterion) {
    let (n, p) = (1_000_000, 20);
    let x = correlated_rows(n, p, 17);
    let estimate = InControlEstimate::from_model(&DistanceModel::fit(x.view()).expect("fit"));
    let mewma = MewmaChart::new(estimate.clone(), &MewmaOptions::default(), 30.0).expect("chart");
    let cusum = McusumChart::new(estimate, &McusumOptions::default(), 10.0).expect("chart");
    let mut out = vec![0.0; n];
    let mut g = c.benchmark_group("small_shift_charts");
    g.sample_size(20).measurement_time(Duration::from_secs(8));
    g.throughput(Throughput::Elements(n as u64));
    g.bench_function("mewma_statistics_1m_x20", |b| {
        b.iter(|| {
            mewma
                .statistics_into(&mut mewma.initial_state(), x.view(), &mut out)
                .expect("chart")
        })
    });
    g.bench_function("mcusum_statistics_1m_x20", |b| {
        b.iter(|| {
            cusum
                .statistics_into(&mut cusum.initial_state(), x.view(), &mut out)
                .expect("chart")
        })
    });
    g.bench_function("mewma_monitor_points_1m_x20", |b| {
        b.iter(|| black_box(mewma.monitor(x.view()).expect("chart")).len())
    });
    g.finish();
}

fn bench_run_length(c: &mut Criterion) {
    let scheme = mvdist::control_chart::ChartScheme::Mewma(
        MewmaOptions::default()
            .with_smoothing(0.1)
            .with_covariance(EwmaCovariance::Asymptotic),
    );
    let options = RunLengthOptions::default().with_runs(10_000);
    let mut g = c.benchmark_group("small_shift_run_length");
    g.sample_size(10).measurement_time(Duration::from_secs(8));
    g.bench_function("in_control_arl_p2_10k_runs", |b| {
        b.iter(|| average_run_length(&scheme, 2, 8.64, 0.0, &options).expect("arl"))
    });
    g.finish();
}

criterion_group!(benches, bench_charts, bench_run_length);
criterion_main!(benches);
