//! Command-line tool: every success path and every error case, asserting the
//! exit code, the message, and that no output file is left after an error.
#![cfg(feature = "cli")]

mod common;
use assert_cmd::Command;
use mvdist::{DistanceModel, RowOrigin};
use predicates::prelude::*;
use std::path::{Path, PathBuf};
use tempfile::TempDir;

fn mvdist() -> Command {
    Command::cargo_bin("mvdist").unwrap()
}

/// Fisher's iris measurements (open dataset, from the scikit-learn fixture)
/// as CSV with a species label column.
fn iris_csv(dir: &Path) -> PathBuf {
    let f = common::fixture("iris_covariance.json");
    let x = common::matrix(&f["data"]);
    let names = ["setosa", "versicolor", "virginica"];
    let mut text = String::from("flower,sepal_length,sepal_width,petal_length,petal_width\n");
    for (i, row) in x.outer_iter().enumerate() {
        let label = names[f["labels"][i].as_u64().unwrap() as usize];
        text += &format!("{label}_{i},{},{},{},{}\n", row[0], row[1], row[2], row[3]);
    }
    let path = dir.join("iris.csv");
    std::fs::write(&path, text).unwrap();
    path
}

fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

fn fit_iris(dir: &TempDir) -> (PathBuf, PathBuf) {
    let data = iris_csv(dir.path());
    let model = dir.path().join("model.json");
    mvdist()
        .args(["fit"])
        .arg(&data)
        .arg("--out")
        .arg(&model)
        .args(["--label", "flower"])
        .assert()
        .success()
        .stdout(predicate::str::contains("150 rows × 4 variables"));
    (data, model)
}

fn read_scores(path: &Path) -> Vec<Vec<String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    r.records()
        .map(|rec| rec.unwrap().iter().map(String::from).collect())
        .collect()
}

#[test]
fn fit_then_score_round_trip_matches_the_library() {
    let dir = TempDir::new().unwrap();
    let (data, model) = fit_iris(&dir);
    let text = std::fs::read_to_string(&model).unwrap();
    assert!(text.contains("\"format_version\": 1"));
    assert!(text.contains("\"variables\""));
    let out = dir.path().join("scores.csv");
    mvdist()
        .arg("score")
        .arg(&model)
        .arg(&data)
        .arg("--out")
        .arg(&out)
        .args(["--label", "flower", "--alpha", "0.05"])
        .assert()
        .success()
        .stdout(predicate::str::contains("scored 150 rows"))
        .stdout(predicate::str::contains("not a verdict"));
    let header = std::fs::read_to_string(&out).unwrap();
    assert!(header.starts_with("row,flower,d2,p_value,flag,top_variable,top_share,status\n"));
    let rows = read_scores(&out);
    assert_eq!(rows.len(), 150);
    // Same distances and p-values as the library.
    let f = common::fixture("iris_covariance.json");
    let x = common::matrix(&f["data"]);
    let lib = DistanceModel::fit(x.view()).unwrap();
    let scores = lib.score(x.view(), RowOrigin::New).unwrap();
    for (i, r) in rows.iter().enumerate() {
        assert_eq!(r[0], (i + 1).to_string());
        let d2: f64 = r[2].parse().unwrap();
        let p: f64 = r[3].parse().unwrap();
        assert!((d2 - scores.squared_distances()[i]).abs() <= 1e-12 * d2.max(1.0));
        assert!((p - scores.p_values()[i]).abs() <= 1e-12);
        assert_eq!(r[4] == "true", p <= 0.05);
        assert!(
            ["sepal_length", "sepal_width", "petal_length", "petal_width"].contains(&r[5].as_str())
        );
        assert_eq!(r[7], "ok");
    }
}

#[test]
fn in_sample_and_adjusted_scoring() {
    let dir = TempDir::new().unwrap();
    let (data, model) = fit_iris(&dir);
    let f = common::fixture("iris_covariance.json");
    let x = common::matrix(&f["data"]);
    let lib = DistanceModel::fit(x.view()).unwrap();
    let scores = lib.score(x.view(), RowOrigin::InSample).unwrap();
    for (adjust, kind) in [
        ("none", mvdist::Adjustment::None),
        ("bonferroni", mvdist::Adjustment::Bonferroni),
        ("bh", mvdist::Adjustment::BenjaminiHochberg),
    ] {
        let out = dir.path().join(format!("s_{adjust}.csv"));
        mvdist()
            .arg("score")
            .arg(&model)
            .arg(&data)
            .arg("--out")
            .arg(&out)
            .args(["--in-sample", "--alpha", "0.2", "--adjust", adjust])
            .assert()
            .success();
        let rows = read_scores(&out);
        let flags = scores.flags(0.2, kind).unwrap();
        for (r, (flag, p)) in rows.iter().zip(flags.iter().zip(scores.p_values())) {
            let got: f64 = r[2].parse().unwrap();
            assert!((got - p).abs() <= 1e-12, "{adjust}");
            assert_eq!(r[3] == "true", *flag, "{adjust}");
        }
    }
}

#[test]
fn skip_incomplete_rows() {
    let dir = TempDir::new().unwrap();
    let data = write(
        dir.path(),
        "d.csv",
        "a,b\n1,2\n2,2.5\nNA,3\n3,3.9\n4,5.2\n,1\n5,5.8\n",
    );
    let model = dir.path().join("m.json");
    mvdist()
        .arg("fit")
        .arg(&data)
        .arg("--out")
        .arg(&model)
        .arg("--skip-incomplete")
        .assert()
        .success()
        .stderr(predicate::str::contains("skipped 2 incomplete row(s)"));
    let out = dir.path().join("s.csv");
    mvdist()
        .arg("score")
        .arg(&model)
        .arg(&data)
        .arg("--out")
        .arg(&out)
        .arg("--skip-incomplete")
        .assert()
        .success()
        .stderr(predicate::str::contains("skipped 2 incomplete"));
    let rows = read_scores(&out);
    assert_eq!(rows.len(), 7);
    assert_eq!(rows[2][6], "incomplete");
    assert_eq!(rows[5][6], "incomplete");
    assert_eq!(rows[0][6], "ok");
}

/// Runs `args`, expects exit code 1 with `message` on stderr, and checks
/// that `out` does not exist afterwards.
fn fails(args: &[&std::ffi::OsStr], out: &Path, message: &str) {
    mvdist()
        .args(args)
        .assert()
        .code(1)
        .stderr(predicate::str::contains(message));
    assert!(!out.exists(), "{} was left behind", out.display());
    let leftovers: Vec<_> = std::fs::read_dir(out.parent().unwrap())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().contains(".partial-"))
        .collect();
    assert!(leftovers.is_empty(), "temporary file left behind");
}

fn fit_fails(dir: &TempDir, csv_text: Option<&str>, extra: &[&str], message: &str) {
    let data = match csv_text {
        Some(t) => write(dir.path(), "bad.csv", t),
        None => dir.path().join("does_not_exist.csv"),
    };
    let out = dir.path().join("out.json");
    let mut args: Vec<&std::ffi::OsStr> = vec![
        "fit".as_ref(),
        data.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
    ];
    args.extend(extra.iter().map(std::ffi::OsStr::new));
    fails(&args, &out, message);
}

#[test]
fn fit_errors_name_file_line_and_column() {
    let dir = TempDir::new().unwrap();
    fit_fails(&dir, None, &[], "does_not_exist.csv: cannot open");
    fit_fails(&dir, Some(""), &[], "the file is empty");
    fit_fails(&dir, Some("a,b,c\n"), &[], "header row but no data rows");
    fit_fails(
        &dir,
        Some("a,b\n1,2\n3,4,5\n"),
        &[],
        "bad.csv, line 3: the row has 3 fields but the header has 2",
    );
    fit_fails(
        &dir,
        Some("a,b\n1,2\n3,x7\n5,1\n"),
        &[],
        "bad.csv, line 3, column 'b': 'x7' is not a number",
    );
    fit_fails(
        &dir,
        Some("a,b\n1,2\n3,\n5,1\n2,2\n"),
        &[],
        "bad.csv, line 3, column 'b': the value is missing",
    );
    fit_fails(
        &dir,
        Some("a,b\n1,2\nNA,4\n5,1\n2,2\n"),
        &[],
        "line 3, column 'a': the value is missing",
    );
    fit_fails(
        &dir,
        Some("a,b\n1,2\n2,inf\n5,1\n2,2\n"),
        &[],
        "line 3, column 'b': the value 'inf' is not finite",
    );
    fit_fails(
        &dir,
        Some("a,b,c\n1,2,3\n2,1,4\n3,5,5\n"),
        &[],
        "3 complete rows are too few for 3 variables; at least 4 are needed",
    );
    fit_fails(
        &dir,
        Some("a,b,c\n1,7,3\n2,7,1\n3,7,5\n4,7,2\n6,7,2\n"),
        &[],
        "column 'b' is constant",
    );
    fit_fails(
        &dir,
        Some("a,b,c\n1,2,3\n2,1,3\n3,5,8\n4,2,6\n6,1,7\n"),
        &[],
        "column 'c' is a linear combination of the columns before it ('a', 'b')",
    );
    fit_fails(
        &dir,
        Some("a,b\n1,2\n2,1\n3,5\n"),
        &["--columns", "a,zz"],
        "unknown column 'zz'",
    );
    fit_fails(
        &dir,
        Some("a,b\n1,2\n2,1\n3,5\n"),
        &["--label", "zz"],
        "unknown column 'zz'",
    );
}

#[test]
fn score_errors_name_the_problem() {
    let dir = TempDir::new().unwrap();
    let (data, model) = fit_iris(&dir);
    let out = dir.path().join("scores.csv");
    let score = |model: &Path, data: &Path, extra: &[&str], message: &str| {
        let mut args: Vec<&std::ffi::OsStr> = vec![
            "score".as_ref(),
            model.as_os_str(),
            data.as_os_str(),
            "--out".as_ref(),
            out.as_os_str(),
        ];
        args.extend(extra.iter().map(std::ffi::OsStr::new));
        fails(&args, &out, message);
    };
    // Model/data column mismatch.
    let other = write(
        dir.path(),
        "other.csv",
        "sepal_length,sepal_width,petal_length\n1,2,3\n",
    );
    score(
        &model,
        &other,
        &[],
        "the model's variables 'petal_width' are not columns of this file",
    );
    // Corrupt, truncated and future model files.
    let garbage = write(dir.path(), "garbage.json", "this is not json");
    score(
        &garbage,
        &data,
        &[],
        "garbage.json: malformed model data: not a model file",
    );
    let text = std::fs::read_to_string(&model).unwrap();
    let truncated = write(dir.path(), "truncated.json", &text[..text.len() / 2]);
    score(
        &truncated,
        &data,
        &[],
        "truncated.json: malformed model data",
    );
    let future = write(
        dir.path(),
        "future.json",
        &text.replace("\"format_version\": 1", "\"format_version\": 99"),
    );
    score(
        &future,
        &data,
        &[],
        "format version 99 is newer than this build reads",
    );
    let indefinite = write(
        dir.path(),
        "indefinite.json",
        &text.replacen("[\n    [\n      ", "[\n    [\n      -", 1),
    );
    score(
        &indefinite,
        &data,
        &[],
        "indefinite.json: malformed model data",
    );
    score(
        &dir.path().join("missing.json"),
        &data,
        &[],
        "cannot read the model file",
    );
    // Bad data rows while scoring.
    let ragged = write(
        dir.path(),
        "ragged.csv",
        "flower,sepal_length,sepal_width,petal_length,petal_width\nx,1,2,3,4\ny,1,2,3\n",
    );
    score(
        &model,
        &ragged,
        &[],
        "ragged.csv, line 3: the row has 4 fields but the header has 5",
    );
    let text_cell = write(
        dir.path(),
        "text.csv",
        "sepal_length,sepal_width,petal_length,petal_width\n1,2,3,4\n1,2,three,4\n",
    );
    score(
        &model,
        &text_cell,
        &[],
        "text.csv, line 3, column 'petal_length': 'three' is not a number",
    );
    let missing = write(
        dir.path(),
        "missing.csv",
        "sepal_length,sepal_width,petal_length,petal_width\n1,2,,4\n",
    );
    score(
        &model,
        &missing,
        &[],
        "missing.csv, line 2, column 'petal_length': the value is missing",
    );
    let header_only = write(
        dir.path(),
        "header.csv",
        "sepal_length,sepal_width,petal_length,petal_width\n",
    );
    score(&model, &header_only, &[], "header row but no data rows");
    score(
        &model,
        &data,
        &["--alpha", "1.5"],
        "--alpha 1.5 is not between 0 and 1",
    );
    score(&model, &data, &["--label", "nope"], "unknown column 'nope'");
    // Usage errors come from the argument parser with exit code 2.
    mvdist().args(["score"]).assert().code(2);
}

#[test]
fn demo_runs_and_writes_its_charts() {
    let dir = TempDir::new().unwrap();
    let out = dir.path().join("charts");
    // `cargo test` builds the examples next to the test binaries' folder.
    let exe = std::env::current_exe().unwrap();
    let demo = exe
        .parent()
        .unwrap()
        .parent()
        .unwrap()
        .join("examples")
        .join("demo");
    let status = std::process::Command::new(&demo)
        .arg(&out)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&status.stdout);
    assert!(
        status.status.success(),
        "{stdout}\n{}",
        String::from_utf8_lossy(&status.stderr)
    );
    assert!(stdout.contains("flagged"), "{stdout}");
    assert!(stdout.contains("Caution"), "{stdout}");
    for chart in ["new_batches.svg", "reference_qq.svg"] {
        let svg = std::fs::read_to_string(out.join(chart)).unwrap();
        assert!(svg.starts_with("<svg") && svg.contains("</svg>"), "{chart}");
    }
}

/// `fit --estimator E` for every estimator: the model file records the
/// estimator (tagged by `kind`) and its settings, and `score` uses the
/// reference that goes with it.
#[test]
fn fit_with_each_estimator_then_score() {
    let dir = TempDir::new().unwrap();
    let data = iris_csv(dir.path());
    for (estimator, extra, kind, reference) in [
        ("classical", vec![], "\"kind\": \"classical\"", "new-row F"),
        (
            "ledoit-wolf",
            vec![],
            "\"kind\": \"ledoit_wolf\"",
            "new-row F",
        ),
        ("oas", vec![], "\"kind\": \"oas\"", "new-row F"),
        (
            "mcd",
            vec!["--support", "0.75", "--seed", "11"],
            "\"kind\": \"mcd\"",
            "chi-square",
        ),
        ("mcd", vec![], "\"stage\": \"reweighted\"", "chi-square"),
    ] {
        let model = dir.path().join(format!("model_{estimator}.json"));
        mvdist()
            .arg("fit")
            .arg(&data)
            .arg("--out")
            .arg(&model)
            .args(["--label", "flower", "--estimator", estimator])
            .args(&extra)
            .assert()
            .success()
            .stdout(predicate::str::contains(format!(
                "fitted a {estimator} model on 150 rows"
            )));
        let text = std::fs::read_to_string(&model).unwrap();
        assert!(text.contains(kind), "{estimator}: {text}");
        if !extra.is_empty() {
            assert!(
                text.contains("\"seed\": 11") && text.contains("\"support_fraction\": 0.75"),
                "{text}"
            );
            assert!(text.contains("\"subset_size\": 112"), "{text}");
        }
        let out = dir.path().join(format!("scores_{estimator}.csv"));
        mvdist()
            .arg("score")
            .arg(&model)
            .arg(&data)
            .arg("--out")
            .arg(&out)
            .args(["--label", "flower"])
            .assert()
            .success()
            .stdout(predicate::str::contains(format!("({reference} reference")));
        let rows = read_scores(&out);
        assert_eq!(rows.len(), 150);
        // Scores equal the library's for the model as saved.
        let file = mvdist::model_file::ModelFile::from_json(&text).unwrap();
        let f = common::fixture("iris_covariance.json");
        let x = common::matrix(&f["data"]);
        let lib = file.model().score(x.view(), RowOrigin::New).unwrap();
        for (i, r) in rows.iter().enumerate() {
            let d2: f64 = r[2].parse().unwrap();
            assert!((d2 - lib.squared_distances()[i]).abs() <= 1e-12 * d2.max(1.0));
        }
    }
}

#[test]
fn robust_fit_errors() {
    let dir = TempDir::new().unwrap();
    let ok = "a,b\n1,2\n2,1\n3,5\n4,4\n5,2\n6,7\n7,3\n8,8\n";
    fit_fails(
        &dir,
        Some(ok),
        &["--estimator", "mcd", "--support", "0.2"],
        "outside [5, 8]",
    );
    fit_fails(
        &dir,
        Some(ok),
        &["--estimator", "mcd", "--support", "1.5"],
        "--support 1.5",
    );
    fit_fails(
        &dir,
        Some(ok),
        &["--seed", "3"],
        "--support and --seed apply to --estimator mcd only",
    );
    // Six of eight rows on b = 2a + 1: an exact fit, named with the columns.
    fit_fails(
        &dir,
        Some("a,b\n1,3\n2,5\n3,7\n4,9\n5,11\n6,13\n7,1\n8,20\n"),
        &["--estimator", "mcd"],
        "exact fit: 6 of 8 rows satisfy",
    );
    // Fewer rows than variables: shrinkage works, MCD says why not.
    let wide = "a,b,c,d\n1,2,3,4\n2,1,0,3\n3,5,1,1\n";
    let model = dir.path().join("wide.json");
    mvdist()
        .arg("fit")
        .arg(write(dir.path(), "wide.csv", wide))
        .arg("--out")
        .arg(&model)
        .args(["--estimator", "ledoit-wolf"])
        .assert()
        .success();
    fit_fails(
        &dir,
        Some(wide),
        &["--estimator", "mcd"],
        "3 complete rows are too few for 4 variables",
    );
}
