//! Criterion benchmarks for component-based monitoring: Phase II `T²` and
//! `Q` of 1 000 000 rows × 100 variables with k = 10 components, written
//! into caller-owned buffers, and the fit of the component model.
//!
//! `benches/monitoring_side_by_side.sh` runs this bench and
//! `benches/numpy_monitoring.py` (the same statistics in numpy) in one go.

mod support;

use criterion::{black_box, criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use mvdist::control_chart::{ComponentCount, ComponentModel, VariableScaling};
use std::time::Duration;

fn component_phase_two(c: &mut Criterion) {
    let (n, p, k) = (1_000_000usize, 100usize, 10usize);
    let rows = support::correlated_rows(n, p, 20261204);
    let model = ComponentModel::fit(
        rows.slice(ndarray::s![..20_000, ..]),
        ComponentCount::Fixed { components: k },
        VariableScaling::UnitVariance,
    )
    .expect("fit");
    let mut t2 = vec![0.0; n];
    let mut q = vec![0.0; n];
    let mut group = c.benchmark_group("component_phase_two");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(8));
    group.throughput(Throughput::Elements(n as u64));
    group.bench_function(BenchmarkId::from_parameter(format!("{n}x{p}_k{k}")), |b| {
        b.iter(|| {
            model
                .statistics_into(black_box(rows.view()), &mut t2, &mut q)
                .expect("statistics");
            black_box((&t2, &q));
        })
    });
    group.finish();
    let mut group = c.benchmark_group("component_fit");
    group.sample_size(10);
    let m = 20_000usize;
    let sub = rows.slice(ndarray::s![..m, ..]);
    group.bench_function(BenchmarkId::from_parameter(format!("{m}x{p}")), |b| {
        b.iter(|| {
            ComponentModel::fit(
                black_box(sub),
                ComponentCount::Fixed { components: k },
                VariableScaling::UnitVariance,
            )
            .expect("fit")
        })
    });
    group.finish();
}

criterion_group!(benches, component_phase_two);
criterion_main!(benches);
