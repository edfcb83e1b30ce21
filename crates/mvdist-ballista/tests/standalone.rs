//! mvdist's SQL functions on Ballista in standalone mode: a scheduler and an
//! executor in this process, talking gRPC and Arrow Flight over loopback.
//!
//! The plan travels to the scheduler and the executor as protobuf, so the
//! functions must be registered in the session state that both are built
//! from; the test checks that the distributed fit (over eight CSV files, one
//! task each) equals the library's in-memory fit to 1e-12 relative, and that
//! scoring through Ballista equals the library's scoring.
//!
//! Data: the first eight columns of the Wisconsin breast-cancer data (open
//! dataset bundled with scikit-learn), from the main crate's fixtures.

use ballista::prelude::{SessionConfigExt, SessionContextExt};
use datafusion::arrow::array::{Array, Float64Array, StringArray};
use datafusion::execution::SessionStateBuilder;
use datafusion::prelude::{CsvReadOptions, SessionConfig, SessionContext};
use mvdist::model_file::ModelFile;
use mvdist::{DistanceModel, Divisor};
use ndarray::Array2;
use std::path::Path;

const P: usize = 8;
const FILES: usize = 8;

fn breast_cancer() -> Array2<f64> {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../tests/fixtures/breast_cancer_distances.json"
    );
    let text = std::fs::read_to_string(path).expect("fixture");
    let v: serde_json::Value = serde_json::from_str(&text).expect("json");
    let rows: Vec<Vec<f64>> = v["data"]
        .as_array()
        .expect("rows")
        .iter()
        .map(|r| {
            r.as_array().expect("row")[..P]
                .iter()
                .map(|x| x.as_f64().expect("number"))
                .collect()
        })
        .collect();
    let n = rows.len();
    Array2::from_shape_vec((n, P), rows.concat()).expect("rectangular")
}

/// Writes the rows as `FILES` CSV files (Rust's shortest round-trip float
/// text, so the engine parses back the same values).
fn write_csv(dir: &Path, x: &Array2<f64>) {
    let n = x.nrows();
    for k in 0..FILES {
        let (lo, hi) = (k * n / FILES, (k + 1) * n / FILES);
        let mut text = (0..P)
            .map(|j| format!("c{j}"))
            .collect::<Vec<_>>()
            .join(",");
        text.push('\n');
        for i in lo..hi {
            let row: Vec<String> = (0..P).map(|j| format!("{:?}", x[(i, j)])).collect();
            text += &row.join(",");
            text.push('\n');
        }
        std::fs::write(dir.join(format!("part{k}.csv")), text).expect("write");
    }
}

/// A standalone cluster started from a state with (or without) our
/// functions, a client context that knows them, and the data as table `t`
/// (one CSV file per partition). The directory must outlive the context.
async fn cluster_with_table(functions_in_cluster: bool, dir: &Path) -> SessionContext {
    write_csv(dir, &breast_cancer());
    let config = SessionConfig::new_with_ballista().with_target_partitions(FILES);
    let mut state = SessionStateBuilder::new()
        .with_config(config)
        .with_default_features()
        .build();
    if functions_in_cluster {
        mvdist_datafusion::register_with(&mut state).expect("register");
    }
    let ctx = SessionContext::standalone_with_state(state)
        .await
        .expect("standalone Ballista");
    // The client context that plans the query is built afresh by Ballista;
    // it needs the functions too.
    mvdist_datafusion::register(&ctx);
    ctx.register_csv(
        "t",
        dir.to_str().expect("utf-8 path"),
        CsvReadOptions::new(),
    )
    .await
    .expect("register csv");
    ctx
}

fn args() -> String {
    (0..P)
        .map(|j| format!("c{j}"))
        .collect::<Vec<_>>()
        .join(", ")
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn fit_on_ballista_equals_the_in_memory_fit() {
    let x = breast_cancer();
    let dir = tempfile::tempdir().expect("tempdir");
    let ctx = cluster_with_table(true, dir.path()).await;

    let plan = ctx
        .sql(&format!("SELECT mvdist_fit({}) AS model FROM t", args()))
        .await
        .expect("plan");
    let batches = plan.collect().await.expect("run on Ballista");
    let text = batches[0]
        .column(0)
        .as_any()
        .downcast_ref::<StringArray>()
        .expect("text")
        .value(0)
        .to_owned();
    let file = ModelFile::from_json(&text).expect("a model file");
    let want = DistanceModel::fit_with_divisor(x.view(), Divisor::Unbiased).expect("fit");
    assert_eq!(file.model().sample_size(), want.sample_size());
    let worst_mean = file
        .model()
        .location()
        .iter()
        .zip(want.location().iter())
        .map(|(a, b)| (a - b).abs() / b.abs())
        .fold(0.0, f64::max);
    // Each entry relative to its own scale, sqrt(Σ_ii Σ_jj).
    let (g, w) = (file.model().scatter().matrix(), want.scatter().matrix());
    let worst_scatter = w
        .indexed_iter()
        .map(|((i, j), b)| (g[(i, j)] - b).abs() / (w[(i, i)] * w[(j, j)]).sqrt())
        .fold(0.0, f64::max);
    assert!(worst_mean < 1e-12, "mean differs by {worst_mean:e}");
    assert!(
        worst_scatter < 1e-12,
        "scatter differs by {worst_scatter:e}"
    );

    // Scoring through Ballista equals the library's scoring.
    let scored = ctx
        .sql(&format!(
            "SELECT {a}, mvdist_d2(m.model, {a}) AS d2 FROM t CROSS JOIN \
             (SELECT mvdist_fit({a}) AS model FROM t) m",
            a = args()
        ))
        .await
        .expect("plan")
        .collect()
        .await
        .expect("score on Ballista");
    let mut rows = 0;
    for batch in &scored {
        let cols: Vec<&Float64Array> = (0..=P)
            .map(|j| {
                batch
                    .column(j)
                    .as_any()
                    .downcast_ref::<Float64Array>()
                    .expect("double")
            })
            .collect();
        for i in 0..batch.num_rows() {
            let row: Vec<f64> = cols[..P].iter().map(|c| c.value(i)).collect();
            let d2 = want.squared_distance(&row).expect("score");
            let got = cols[P].value(i);
            assert!(!cols[P].is_null(i));
            assert!(
                (got - d2).abs() <= 1e-9 * d2.max(1.0),
                "row {row:?}: {got} vs {d2}"
            );
            rows += 1;
        }
    }
    assert_eq!(rows, x.nrows());
}

/// The plan really runs on the scheduler and executor: when the functions
/// are registered on the client only, and not in the state the cluster was
/// started from, the job fails there.
#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_cluster_needs_the_functions_in_its_state() {
    let dir = tempfile::tempdir().expect("tempdir");
    let ctx = cluster_with_table(false, dir.path()).await;
    let result = ctx
        .sql(&format!("SELECT mvdist_fit({}) AS model FROM t", args()))
        .await
        .expect("the client plans it")
        .collect()
        .await;
    let message = result
        .expect_err("the cluster cannot decode the plan")
        .to_string();
    assert!(message.contains("mvdist_fit"), "{message}");
}
