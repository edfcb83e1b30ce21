//! DataFusion SQL functions: partitioned fits equal the in-memory fit,
//! SQL scoring equals the library's, bad columns give the engine's error
//! with our message. Data: the first eight columns of the Wisconsin
//! breast-cancer data (open dataset bundled with scikit-learn).

#[path = "../../../tests/common/mod.rs"]
mod common;
use datafusion::arrow::array::{ArrayRef, Float64Array, StringArray};
use datafusion::arrow::datatypes::{DataType, Field, Schema};
use datafusion::arrow::record_batch::RecordBatch;
use datafusion::datasource::MemTable;
use datafusion::prelude::{SessionConfig, SessionContext};
use mvdist::model_file::ModelFile;
use mvdist::DistanceModel;
use ndarray::Array2;
use std::sync::Arc;

const P: usize = 8;

fn data() -> Array2<f64> {
    let f = common::fixture("breast_cancer_distances.json");
    common::matrix(&f["data"])
        .slice(ndarray::s![.., ..P])
        .to_owned()
}

fn names() -> Vec<String> {
    (0..P).map(|j| format!("c{j}")).collect()
}

/// The rows as a table of `partitions` partitions (one batch each).
fn context(x: &Array2<f64>, partitions: usize, extra_text: bool) -> SessionContext {
    let mut fields: Vec<Field> = names()
        .iter()
        .map(|n| Field::new(n, DataType::Float64, true))
        .collect();
    if extra_text {
        fields.push(Field::new("label", DataType::Utf8, true));
    }
    let schema = Arc::new(Schema::new(fields));
    let n = x.nrows();
    let mut parts = Vec::new();
    for k in 0..partitions {
        let (lo, hi) = (k * n / partitions, (k + 1) * n / partitions);
        let mut cols: Vec<ArrayRef> = (0..P)
            .map(|j| {
                Arc::new(Float64Array::from(
                    (lo..hi).map(|i| x[(i, j)]).collect::<Vec<_>>(),
                )) as ArrayRef
            })
            .collect();
        if extra_text {
            cols.push(Arc::new(StringArray::from(
                (lo..hi).map(|i| format!("row{i}")).collect::<Vec<_>>(),
            )));
        }
        parts.push(vec![RecordBatch::try_new(schema.clone(), cols).unwrap()]);
    }
    let ctx =
        SessionContext::new_with_config(SessionConfig::new().with_target_partitions(partitions));
    ctx.register_table("t", Arc::new(MemTable::try_new(schema, parts).unwrap()))
        .unwrap();
    mvdist_datafusion::register(&ctx);
    ctx
}

async fn fit_sql(ctx: &SessionContext, args: &str) -> datafusion::common::Result<String> {
    let batches = ctx
        .sql(&format!("SELECT mvdist_fit({args}) AS model FROM t"))
        .await?
        .collect()
        .await?;
    let col = batches[0]
        .column(0)
        .as_any()
        .downcast_ref::<StringArray>()
        .unwrap()
        .value(0)
        .to_string();
    Ok(col)
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// Same row count, location to 1e-12 relative, and each scatter entry to
/// 1e-12 of `sqrt(Σ_ii Σ_jj)` (its own scale, so small variances count).
fn assert_close(got: &DistanceModel, want: &DistanceModel, what: &str) {
    assert_eq!(got.sample_size(), want.sample_size(), "{what}");
    for (a, b) in got.location().iter().zip(want.location()) {
        assert!(rel(*a, *b) < 1e-12, "{what}: {a} vs {b}");
    }
    let (g, w) = (got.scatter().matrix(), want.scatter().matrix());
    for ((i, j), b) in w.indexed_iter() {
        let scale = (w[(i, i)] * w[(j, j)]).sqrt();
        let a = g[(i, j)];
        assert!(
            (a - b).abs() <= 1e-12 * scale,
            "{what}: [{i},{j}] {a} vs {b}"
        );
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn partitioned_fit_equals_in_memory_fit() {
    let x = data();
    let local = DistanceModel::fit(x.view()).unwrap();
    for partitions in [1, 8, 13] {
        let ctx = context(&x, partitions, false);
        let json = fit_sql(&ctx, &names().join(", ")).await.unwrap();
        let file = ModelFile::from_json(&json).unwrap();
        assert_eq!(file.variables(), &names()[..]);
        assert_close(file.model(), &local, &format!("{partitions} partitions"));
    }
}

/// A session built from a hand-made state (as distributed engines do) gets
/// the same functions through `register_with`, and the same fit.
#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn functions_registered_on_a_state_fit_the_same() {
    use datafusion::execution::SessionStateBuilder;
    let x = data();
    let by_context = fit_sql(&context(&x, 4, false), &names().join(", "))
        .await
        .unwrap();
    let mut state = SessionStateBuilder::new()
        .with_config(SessionConfig::new().with_target_partitions(4))
        .with_default_features()
        .build();
    mvdist_datafusion::register_with(&mut state).unwrap();
    let ctx = SessionContext::new_with_state(state);
    let plain = context(&x, 4, false);
    let table = plain.table_provider("t").await.unwrap();
    ctx.register_table("t", table).unwrap();
    let by_state = fit_sql(&ctx, &names().join(", ")).await.unwrap();
    // Partial states may merge in a different order: equal up to rounding.
    let (a, b) = (
        ModelFile::from_json(&by_state).unwrap(),
        ModelFile::from_json(&by_context).unwrap(),
    );
    assert_eq!(a.variables(), b.variables());
    assert_close(a.model(), b.model(), "state vs context");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn sql_scoring_equals_library_scoring() {
    let x = data();
    let ctx = context(&x, 8, true);
    let cols = names().join(", ");
    let sql = format!(
        "SELECT label, mvdist_d2(m.model, {cols}) AS d2, mvdist_p_value(m.model, {cols}) AS p, \
         mvdist_flag(m.model, 0.01, {cols}) AS flag \
         FROM t CROSS JOIN (SELECT mvdist_fit({cols}) AS model FROM t) m ORDER BY label"
    );
    let batches = ctx.sql(&sql).await.unwrap().collect().await.unwrap();
    let local = DistanceModel::fit(x.view()).unwrap();
    let scores = local.score(x.view(), mvdist::RowOrigin::New).unwrap();
    let mut seen = 0;
    for b in &batches {
        let label = b.column(0).as_any().downcast_ref::<StringArray>().unwrap();
        let d2 = b.column(1).as_any().downcast_ref::<Float64Array>().unwrap();
        let p = b.column(2).as_any().downcast_ref::<Float64Array>().unwrap();
        let flag = b
            .column(3)
            .as_any()
            .downcast_ref::<datafusion::arrow::array::BooleanArray>()
            .unwrap();
        for i in 0..b.num_rows() {
            let row: usize = label.value(i)[3..].parse().unwrap();
            assert!(rel(d2.value(i), scores.squared_distances()[row]) < 1e-10);
            assert!((p.value(i) - scores.p_values()[row]).abs() < 1e-12);
            assert_eq!(flag.value(i), scores.p_values()[row] <= 0.01);
            seen += 1;
        }
    }
    assert_eq!(seen, x.nrows());
}

/// Rows joined to different models (one per group) are each scored with
/// their own model; a NULL model scores as NULL.
#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn each_row_is_scored_with_its_own_model() {
    let x = data();
    let ctx = context(&x, 4, true);
    let cols = names().join(", ");
    // Two groups split at c0 = 13.5 (mean radius), one model per group.
    let grouped = "SELECT *, CASE WHEN c0 < 13.5 THEN 0 ELSE 1 END AS g FROM t";
    let sql = format!(
        "SELECT r.label, r.g, mvdist_d2(m.model, {cols}) AS d2 \
         FROM ({grouped}) r JOIN (SELECT g, mvdist_fit({cols}) AS model FROM ({grouped}) GROUP BY g) m \
         ON r.g = m.g"
    );
    let batches = ctx.sql(&sql).await.unwrap().collect().await.unwrap();
    let group_of = |i: usize| usize::from(x[(i, 0)] >= 13.5);
    let models: Vec<DistanceModel> = (0..2)
        .map(|g| {
            let rows: Vec<usize> = (0..x.nrows()).filter(|&i| group_of(i) == g).collect();
            DistanceModel::fit(x.select(ndarray::Axis(0), &rows).view()).unwrap()
        })
        .collect();
    let mut seen = 0;
    for b in &batches {
        let label = b.column(0).as_any().downcast_ref::<StringArray>().unwrap();
        let d2 = b.column(2).as_any().downcast_ref::<Float64Array>().unwrap();
        for i in 0..b.num_rows() {
            let row: usize = label.value(i)[3..].parse().unwrap();
            let want = models[group_of(row)]
                .squared_distance(x.row(row).as_slice().unwrap())
                .unwrap();
            assert!(rel(d2.value(i), want) < 1e-10, "row {row}");
            seen += 1;
        }
    }
    assert_eq!(seen, x.nrows());
    let nulls = ctx
        .sql(&format!(
            "SELECT mvdist_d2(CASE WHEN c0 < 13.5 THEN m.model ELSE NULL END, {cols}) AS d2 \
             FROM t CROSS JOIN (SELECT mvdist_fit({cols}) AS model FROM t) m"
        ))
        .await
        .unwrap()
        .collect()
        .await
        .unwrap();
    let null_count: usize = nulls.iter().map(|b| b.column(0).null_count()).sum();
    assert_eq!(
        null_count,
        (0..x.nrows()).filter(|&i| group_of(i) == 1).count()
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn bad_columns_give_engine_errors_with_our_message() {
    let x = data();
    let ctx = context(&x, 4, true);
    let err = fit_sql(&ctx, "c0, c1, label")
        .await
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("mvdist_fit: argument 3 has type Utf8"),
        "{err}"
    );
    let err = fit_sql(&ctx, "c0, c1, CASE WHEN c2 > 20 THEN NULL ELSE c2 END")
        .await
        .unwrap_err()
        .to_string();
    assert!(err.contains("mvdist_fit") && err.contains("NULL"), "{err}");
    let err = fit_sql(&ctx, "c0, c1, c0 + c1")
        .await
        .unwrap_err()
        .to_string();
    assert!(err.contains("linear combination"), "{err}");
    let err = ctx
        .sql("SELECT mvdist_d2('not a model', c0) FROM t")
        .await
        .unwrap()
        .collect()
        .await
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("mvdist_d2") && err.contains("not a model file"),
        "{err}"
    );
}
