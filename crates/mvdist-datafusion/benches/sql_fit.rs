//! Fitting through DataFusion's SQL aggregate against the library's own
//! in-memory parallel fit, on the same rows .
//!
//! `cargo bench -p mvdist-datafusion --bench sql_fit -- --noplot`
//!
//! Both sides read data already in memory: the library fit reads one
//! row-major `ndarray` of 10,000,000 × 16 values; the SQL side reads the same
//! values as Arrow `Float64` columns in a `MemTable` with one partition per
//! core, through `SELECT mvdist_fit(x0, …, x15) FROM t`. The bench prints the
//! ratio of the two medians at the end, and checks that both fits agree.

use criterion::{black_box, criterion_group, criterion_main, Criterion};

#[path = "../../../benches/support/mod.rs"]
mod support;
use datafusion::arrow::array::{ArrayRef, Float64Array, StringArray};
use datafusion::arrow::datatypes::{DataType, Field, Schema};
use datafusion::arrow::record_batch::RecordBatch;
use datafusion::datasource::MemTable;
use datafusion::prelude::SessionContext;
use mvdist::model_file::ModelFile;
use mvdist::DistanceModel;
use ndarray::Array2;
use std::sync::Arc;
use std::time::{Duration, Instant};
use support::correlated_rows;

const ROWS: usize = 10_000_000;
const COLUMNS: usize = 16;
const BATCH: usize = 8192;

/// The same rows as Arrow batches, split into `partitions` partitions.
fn mem_table(x: &Array2<f64>, partitions: usize) -> MemTable {
    let (n, p) = x.dim();
    let schema = Arc::new(Schema::new(
        (0..p)
            .map(|j| Field::new(format!("x{j}"), DataType::Float64, false))
            .collect::<Vec<_>>(),
    ));
    let per = n.div_ceil(partitions);
    let mut parts = Vec::with_capacity(partitions);
    for k in 0..partitions {
        let (lo, hi) = (k * per, ((k + 1) * per).min(n));
        let mut batches = Vec::new();
        let mut start = lo;
        while start < hi {
            let end = (start + BATCH).min(hi);
            let columns: Vec<ArrayRef> = (0..p)
                .map(|j| {
                    Arc::new(Float64Array::from_iter_values(
                        (start..end).map(|i| x[[i, j]]),
                    )) as ArrayRef
                })
                .collect();
            batches.push(RecordBatch::try_new(schema.clone(), columns).expect("batch"));
            start = end;
        }
        parts.push(batches);
    }
    MemTable::try_new(schema, parts).expect("table")
}

async fn sql_fit(ctx: &SessionContext, sql: &str) -> ModelFile {
    let batches = ctx
        .sql(sql)
        .await
        .expect("plan")
        .collect()
        .await
        .expect("run");
    let text = batches[0]
        .column(0)
        .as_any()
        .downcast_ref::<StringArray>()
        .expect("text")
        .value(0)
        .to_owned();
    ModelFile::from_json(&text).expect("model file")
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

fn bench_sql_fit(c: &mut Criterion) {
    let x = correlated_rows(ROWS, COLUMNS, 11);
    let partitions = std::thread::available_parallelism().map_or(2, |n| n.get());
    let ctx = SessionContext::new();
    mvdist_datafusion::register(&ctx);
    ctx.register_table("t", Arc::new(mem_table(&x, partitions)))
        .expect("register");
    let sql = format!(
        "SELECT mvdist_fit({}) FROM t",
        (0..COLUMNS)
            .map(|j| format!("x{j}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .expect("runtime");

    // The two fits agree (the test suite checks this to 1e-12 on smaller data).
    let direct = DistanceModel::fit(x.view()).expect("fit");
    let through_sql = runtime.block_on(sql_fit(&ctx, &sql));
    let worst = direct
        .scatter()
        .matrix()
        .iter()
        .zip(through_sql.model().scatter().matrix().iter())
        .map(|(a, b)| (a - b).abs() / a.abs().max(1e-300))
        .fold(0.0, f64::max);
    println!("largest relative difference of the scatter entries: {worst:.2e}");

    let mut group = c.benchmark_group(format!("fit_{ROWS}x{COLUMNS}"));
    group
        .sample_size(10)
        .measurement_time(Duration::from_secs(20));
    group.bench_function("in_memory_parallel", |b| {
        b.iter(|| DistanceModel::fit(black_box(x.view())).expect("fit"))
    });
    group.bench_function("datafusion_sql", |b| {
        b.iter(|| runtime.block_on(sql_fit(&ctx, black_box(&sql))))
    });
    group.finish();

    // Side by side in one run, alternating, for the README ratio.
    let (mut direct_s, mut sql_s) = (Vec::new(), Vec::new());
    for _ in 0..7 {
        let t = Instant::now();
        black_box(DistanceModel::fit(x.view()).expect("fit"));
        direct_s.push(t.elapsed().as_secs_f64());
        let t = Instant::now();
        black_box(runtime.block_on(sql_fit(&ctx, &sql)));
        sql_s.push(t.elapsed().as_secs_f64());
    }
    let (d, s) = (median(direct_s), median(sql_s));
    println!(
        "fit {ROWS} x {COLUMNS}: in-memory parallel {:.0} ms, DataFusion SQL ({partitions} partitions) {:.0} ms, ratio {:.2}",
        d * 1e3,
        s * 1e3,
        s / d
    );
}

criterion_group!(benches, bench_sql_fit);
criterion_main!(benches);
