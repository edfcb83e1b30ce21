//! Command-line tool: every success path and every error case, asserting the
//! exit code, the message, and that no output file is left after an error.

#[path = "../../../tests/common/mod.rs"]
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
        .stderr(predicate::str::contains("150 rows × 4 variables"));
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
    assert!(text.contains("\"format_version\": 2"));
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
        .stderr(predicate::str::contains("scored 150 rows"))
        .stderr(predicate::str::contains("not a verdict"));
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
        &text.replace("\"format_version\": 2", "\"format_version\": 99"),
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

/// One iris species (rows `50k..50k+50` of the scikit-learn data) as CSV.
fn species_csv(dir: &Path, k: usize) -> (PathBuf, ndarray::Array2<f64>) {
    let f = common::fixture("iris_covariance.json");
    let x = common::matrix(&f["data"]);
    let part = x.slice(ndarray::s![50 * k..50 * (k + 1), ..]).to_owned();
    let mut text = String::from("flower,sepal_length,sepal_width,petal_length,petal_width\n");
    for (i, row) in part.outer_iter().enumerate() {
        text += &format!("f{}_{i},{},{},{},{}\n", k, row[0], row[1], row[2], row[3]);
    }
    (write(dir, &format!("species{k}.csv"), &text), part)
}

fn json_of(cmd: &mut Command) -> serde_json::Value {
    let out = cmd.assert().success().get_output().stdout.clone();
    serde_json::from_slice(&out).unwrap()
}

#[test]
fn compare_means_matches_the_library() {
    use mvdist::mean_tests;
    let dir = TempDir::new().unwrap();
    let (a, xa) = species_csv(dir.path(), 1);
    let (b, xb) = species_csv(dir.path(), 2);
    // Table output names the test, T², and carries the caution.
    let lib = mean_tests::two_sample(xa.view(), xb.view()).unwrap();
    mvdist()
        .arg("compare-means")
        .arg(&a)
        .arg(&b)
        .args(["--label", "flower"])
        .assert()
        .success()
        .stdout(predicate::str::contains("pooled scatter"))
        .stdout(predicate::str::contains(format!(
            "T² = {:.6}",
            lib.t_squared()
        )))
        .stdout(predicate::str::contains("Box's M"))
        .stderr(predicate::str::contains("not proof"));
    // JSON for each two-sample kind.
    for (flag, lib) in [
        (None, lib.clone()),
        (
            Some("--unequal-scatter"),
            mean_tests::two_sample_unequal_scatter(xa.view(), xb.view()).unwrap(),
        ),
        (
            Some("--paired"),
            mean_tests::paired(xa.view(), xb.view()).unwrap(),
        ),
    ] {
        let mut cmd = mvdist();
        cmd.arg("compare-means")
            .arg(&a)
            .arg(&b)
            .args(["--label", "flower", "--json", "--alpha", "0.1"]);
        if let Some(f) = flag {
            cmd.arg(f);
        }
        let v = json_of(&mut cmd);
        assert_eq!(v["format"], "mvdist-mean-comparison");
        assert_eq!(v["test"]["t_squared"].as_f64().unwrap(), lib.t_squared());
        assert_eq!(v["test"]["p_value"].as_f64().unwrap(), lib.p_value());
        assert_eq!(v["variables"][3], "petal_width");
        let ivs = lib.intervals(0.1).unwrap();
        assert_eq!(
            v["intervals"][2]["bonferroni"]["upper"].as_f64().unwrap(),
            ivs[2].bonferroni.upper
        );
        assert!(v["caution"].as_str().unwrap().contains("qualified people"));
    }
    // One sample against a target.
    let one = mean_tests::one_sample(xa.view(), &[5.9, 2.8, 4.3, 1.3]).unwrap();
    let v = json_of(mvdist().arg("compare-means").arg(&a).args([
        "--label",
        "flower",
        "--target",
        "5.9,2.8,4.3,1.3",
        "--json",
    ]));
    assert_eq!(v["test"]["kind"], "one_sample");
    assert_eq!(v["test"]["t_squared"].as_f64().unwrap(), one.t_squared());
    assert_eq!(v["rejected_at_alpha"], one.p_value() <= 0.05);
    mvdist()
        .arg("compare-means")
        .arg(&a)
        .args([
            "--label",
            "flower",
            "--target",
            "5.9,2.8,4.3,1.3",
            "--columns",
            "sepal_length,sepal_width,petal_length,petal_width",
        ])
        .assert()
        .success()
        .stdout(predicate::str::contains("one sample against a target mean"));
}

#[test]
fn compare_means_errors_name_the_problem() {
    let dir = TempDir::new().unwrap();
    let (a, _) = species_csv(dir.path(), 0);
    let (b, _) = species_csv(dir.path(), 1);
    let run = |args: &[&str], files: &[&Path], message: &str| {
        let mut cmd = mvdist();
        cmd.arg("compare-means");
        for f in files {
            cmd.arg(f);
        }
        cmd.args(args)
            .assert()
            .code(1)
            .stderr(predicate::str::contains(message));
    };
    run(&["--label", "flower"], &[&a], "needs --target");
    run(
        &["--label", "flower", "--target", "1,2"],
        &[&a],
        "--target has 2 values but there are 4 variables",
    );
    run(
        &["--label", "flower", "--paired"],
        &[&a],
        "give a second CSV file",
    );
    run(
        &["--label", "flower", "--alpha", "2"],
        &[&a, &b],
        "--alpha 2",
    );
    let short = write(
        dir.path(),
        "short.csv",
        "flower,sepal_length,sepal_width,petal_length,petal_width\nx,1,2,3,4\ny,2,1,3,5\n",
    );
    run(
        &["--label", "flower", "--paired"],
        &[&a, &short],
        "one row per pair",
    );
    run(
        &["--label", "flower", "--target", "1,2,3,4"],
        &[&short],
        "too few for 4 variables",
    );
    run(
        &["--label", "flower", "--unequal-scatter"],
        &[&a, &short],
        "short.csv",
    );
    // A column constant in both files makes the pooled scatter singular.
    let c1 = write(dir.path(), "c1.csv", "u,v,w\n1,2,7\n2,1,7\n3,5,7\n4,3,7\n");
    let c2 = write(dir.path(), "c2.csv", "u,v,w\n1,3,7\n2,2,7\n3,4,7\n5,3,7\n");
    run(&[], &[&c1, &c2], "column 'w' is constant");
    let other = write(dir.path(), "other.csv", "u,v\n1,2\n2,3\n3,1\n");
    run(&[], &[&c1, &other], "not columns of this file");
    run(&["--paired", "--skip-incomplete"], &[&c1, &c2], "misalign");
    // Usage errors (exit 2): --paired with --unequal-scatter, --target with two files.
    mvdist()
        .arg("compare-means")
        .arg(&c1)
        .arg(&c2)
        .args(["--paired", "--unequal-scatter"])
        .assert()
        .code(2);
    mvdist()
        .arg("compare-means")
        .arg(&c1)
        .arg(&c2)
        .args(["--target", "1,2,3"])
        .assert()
        .code(2);
}

fn read_points(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let header = r.headers().unwrap().iter().map(String::from).collect();
    (
        header,
        r.records()
            .map(|rec| rec.unwrap().iter().map(String::from).collect())
            .collect(),
    )
}

#[test]
fn chart_writes_points_and_svg_that_match_the_library() {
    use mvdist::control_chart::{ControlChart, FalseAlarmRate, PhaseOneOptions, SignalRemoval};
    let dir = TempDir::new().unwrap();
    let (a, xa) = species_csv(dir.path(), 1);
    let (b, xb) = species_csv(dir.path(), 2);
    let out = dir.path().join("points.csv");
    let svg = dir.path().join("chart.svg");
    mvdist()
        .arg("chart")
        .arg(&a)
        .arg("--new")
        .arg(&b)
        .arg("--out")
        .arg(&out)
        .arg("--svg")
        .arg(&svg)
        .args([
            "--label",
            "flower",
            "--arl",
            "200",
            "--remove-signals",
            "--depth",
            "2",
        ])
        .assert()
        .success()
        .stderr(predicate::str::contains("Phase I: 50 rows × 4 variables"))
        .stderr(predicate::str::contains("Phase II: 50 new points"))
        .stderr(predicate::str::contains("prompt to investigate"));
    let settings = PhaseOneOptions::default()
        .with_false_alarm(FalseAlarmRate::from_average_run_length(200.0).unwrap())
        .with_removal(SignalRemoval::RefitUntilClean { max_rounds: 10 })
        .with_diagnosis_depth(2);
    let chart = ControlChart::individuals(xa.view(), &settings).unwrap();
    let new = chart.monitor(xb.view()).unwrap();
    let (header, rows) = read_points(&out);
    assert_eq!(
        header.join(","),
        "phase,point,first_row,last_row,label,status,t2,ucl,p_value,signal,top_term,top_term_value,top_term_cutoff,terms_over_cutoff,out_of_range,broken_relationships,top_variable,top_share"
    );
    assert_eq!(rows.len(), 100);
    for (r, pt) in rows.iter().zip(chart.phase_one_points().iter().chain(&new)) {
        assert_eq!(r[6].parse::<f64>().unwrap(), pt.t_squared);
        assert_eq!(r[7].parse::<f64>().unwrap(), pt.upper_limit);
        assert_eq!(r[9] == "true", pt.signal);
        assert_eq!(r[10].is_empty(), !pt.signal);
    }
    assert_eq!(rows[50][0], "2");
    assert_eq!(rows[50][4], "f2_0");
    let picture = std::fs::read_to_string(&svg).unwrap();
    assert!(picture.starts_with("<svg") && picture.contains("Phase II") && picture.contains("UCL"));

    // Subgroups of 5 rows; no --new.
    let out2 = dir.path().join("sub.csv");
    mvdist()
        .arg("chart")
        .arg(&a)
        .arg("--out")
        .arg(&out2)
        .args([
            "--label",
            "flower",
            "--subgroup-size",
            "5",
            "--alpha",
            "0.01",
        ])
        .assert()
        .success()
        .stderr(predicate::str::contains("10 subgroups of 5 rows"));
    let (_, rows) = read_points(&out2);
    assert_eq!(rows.len(), 10);
    assert_eq!((rows[1][2].as_str(), rows[1][3].as_str()), ("6", "10"));
}

#[test]
fn chart_errors_leave_no_output() {
    let dir = TempDir::new().unwrap();
    let (a, _) = species_csv(dir.path(), 0);
    let out = dir.path().join("points.csv");
    let other = write(dir.path(), "other.csv", "u,v\n1,2\n2,3\n3,1\n");
    let base = |extra: &[&str]| {
        let mut v: Vec<std::ffi::OsString> = vec![
            "chart".into(),
            a.clone().into(),
            "--out".into(),
            out.clone().into(),
            "--label".into(),
            "flower".into(),
        ];
        v.extend(extra.iter().map(|s| std::ffi::OsString::from(*s)));
        v
    };
    let check = |extra: &[&str], message: &str| {
        let args = base(extra);
        let refs: Vec<&std::ffi::OsStr> = args.iter().map(|s| s.as_os_str()).collect();
        fails(&refs, &out, message);
    };
    check(
        &["--new", other.to_str().unwrap()],
        "other.csv: unknown column 'flower'",
    );
    check(
        &["--subgroup-size", "7"],
        "do not divide into subgroups of 7",
    );
    check(&["--subgroup-size", "1"], "subgroup size");
    check(&["--alpha", "1.5"], "--alpha 1.5");
    check(&["--arl", "0.5"], "--arl 0.5");
    check(
        &["--subgroup-size", "5", "--skip-incomplete"],
        "shift the subgroups",
    );
    let tiny = write(
        dir.path(),
        "tiny.csv",
        "flower,a,b,c\nx,1,2,3\ny,2,1,0\nz,3,3,1\nw,0,1,2\n",
    );
    let args: Vec<std::ffi::OsString> = vec![
        "chart".into(),
        tiny.into(),
        "--out".into(),
        out.clone().into(),
        "--label".into(),
        "flower".into(),
    ];
    let refs: Vec<&std::ffi::OsStr> = args.iter().map(|s| s.as_os_str()).collect();
    fails(
        &refs,
        &out,
        "4 complete rows are too few for 3 variables; at least 5",
    );
    // A start model with other variables is refused.
    let model = dir.path().join("model.json");
    mvdist()
        .arg("fit")
        .arg(&other)
        .arg("--out")
        .arg(&model)
        .assert()
        .success();
    check(
        &["--start-model", model.to_str().unwrap()],
        "start model's variables",
    );
    mvdist().args(["chart"]).assert().code(2);
}

/// Iris with the species name as the label column (for `classify`).
fn iris_species_csv(dir: &Path, name: &str) -> (PathBuf, ndarray::Array2<f64>, Vec<String>) {
    let f = common::fixture("iris_covariance.json");
    let x = common::matrix(&f["data"]);
    let names = ["setosa", "versicolor", "virginica"];
    let labels: Vec<String> = (0..x.nrows())
        .map(|i| names[f["labels"][i].as_u64().unwrap() as usize].to_string())
        .collect();
    let mut text = String::from("sepal_length,sepal_width,petal_length,petal_width,species\n");
    for (row, l) in x.outer_iter().zip(&labels) {
        text += &format!("{},{},{},{},{l}\n", row[0], row[1], row[2], row[3]);
    }
    (write(dir, name, &text), x, labels)
}

#[test]
fn classify_matches_the_library_and_reports_leave_one_out() {
    use mvdist::classification::{Classifier, ClassifierOptions, Priors, Rule};
    let dir = TempDir::new().unwrap();
    let (train, x, labels) = iris_species_csv(dir.path(), "iris.csv");
    for (rule, priors, r, q) in [
        ("linear", "proportional", Rule::Linear, Priors::Proportional),
        ("quadratic", "equal", Rule::Quadratic, Priors::Equal),
    ] {
        let out = dir.path().join(format!("classes_{rule}.csv"));
        mvdist()
            .args(["classify", "--train"])
            .arg(&train)
            .args([
                "--label", "species", "--rule", rule, "--priors", priors, "--loo",
            ])
            .arg(&train)
            .arg("--out")
            .arg(&out)
            .assert()
            .success()
            .stderr(predicate::str::contains("leave-one-out confusion matrix"))
            .stderr(predicate::str::contains("versicolor"))
            .stderr(predicate::str::contains("resubstitution error rate"))
            .stderr(predicate::str::contains("accuracy on the 150 rows"))
            .stderr(predicate::str::contains("not a verdict"));
        let text = std::fs::read_to_string(&out).unwrap();
        assert!(text
            .starts_with("row,group,posterior,typicality,d2_setosa,d2_versicolor,d2_virginica\n"));
        let c =
            Classifier::fit(x.view(), &labels, &ClassifierOptions::new(r).with_priors(q)).unwrap();
        let lib = c.predict(x.view()).unwrap();
        let rows = read_scores(&out);
        assert_eq!(rows.len(), 150);
        for (i, row) in rows.iter().enumerate() {
            assert_eq!(row[0], (i + 1).to_string());
            let g = lib.assigned()[i];
            assert_eq!(row[1], c.labels()[g]);
            assert_eq!(row[2].parse::<f64>().unwrap(), lib.posteriors()[(i, g)]);
            assert_eq!(row[3].parse::<f64>().unwrap(), lib.typicality()[i]);
            for h in 0..3 {
                assert_eq!(
                    row[4 + h].parse::<f64>().unwrap(),
                    lib.squared_distances()[(i, h)]
                );
            }
        }
    }
    // The linear rule's leave-one-out error on iris: 3 of 150.
    mvdist()
        .args(["classify", "--train"])
        .arg(&train)
        .args(["--label", "species", "--loo"])
        .arg(&train)
        .arg("--out")
        .arg(dir.path().join("again.csv"))
        .assert()
        .success()
        .stderr(predicate::str::contains(
            "error rate 0.0200 (3 of 150 rows)",
        ));
}

#[test]
fn classify_flags_no_group_and_unknown_labels() {
    let dir = TempDir::new().unwrap();
    let (train, _, _) = iris_species_csv(dir.path(), "iris.csv");
    // Columns in another order, an unknown label and a far-away row.
    let data = write(
        dir.path(),
        "new.csv",
        "species,petal_width,petal_length,sepal_width,sepal_length\nsetosa,0.2,1.5,3.4,5.0\nvirginica,2.0,5.5,3.0,6.5\nrose,1,1,2,30\n",
    );
    let out = dir.path().join("new_classes.csv");
    mvdist()
        .args(["classify", "--train"])
        .arg(&train)
        .args(["--label", "species", "--no-group-below", "0.001"])
        .arg(&data)
        .arg("--out")
        .arg(&out)
        .assert()
        .success()
        .stderr(predicate::str::contains("1 row(s) atypical of every group"))
        .stderr(predicate::str::contains("accuracy on the 2 rows"))
        .stderr(predicate::str::contains("'rose'"))
        .stderr(predicate::str::contains("first at line 4"));
    let rows = read_scores(&out);
    assert_eq!(rows[0][1], "setosa");
    assert_eq!(rows[1][1], "virginica");
    assert_eq!(rows[2][1], "", "no group");
    let typicality: f64 = rows[2][3].parse().unwrap();
    assert!(typicality < 1e-6);
    assert!(rows[2][3].contains('e'), "tiny values in exponent form");
}

#[test]
fn classify_errors_name_the_group_or_column() {
    let dir = TempDir::new().unwrap();
    let (train, _, _) = iris_species_csv(dir.path(), "iris.csv");
    let out = dir.path().join("classes.csv");
    let classify = |train: &Path, data: &Path, extra: &[&str], message: &str| {
        let mut args: Vec<&std::ffi::OsStr> = vec![
            "classify".as_ref(),
            "--train".as_ref(),
            train.as_os_str(),
            "--label".as_ref(),
            "species".as_ref(),
            data.as_os_str(),
            "--out".as_ref(),
            out.as_os_str(),
        ];
        args.extend(extra.iter().map(std::ffi::OsStr::new));
        fails(&args, &out, message);
    };
    // A single group.
    let one = write(
        dir.path(),
        "one.csv",
        "a,b,species\n1,2,x\n2,1,x\n3,5,x\n4,4,x\n",
    );
    classify(
        &one,
        &one,
        &[],
        "column 'species' names only one group ('x')",
    );
    // A group too small for its own scatter (quadratic rule).
    let small = write(
        dir.path(),
        "small.csv",
        "a,b,species\n1,2,x\n2,1,x\n3,5,x\n4,4,x\n0,0,y\n1,3,y\n",
    );
    classify(
        &small,
        &small,
        &["--rule", "quadratic"],
        "group 'y' has 2 row(s), but the quadratic rule needs at least 3 for 2 variables",
    );
    // A variable constant within one group (quadratic rule).
    let constant = write(
        dir.path(),
        "constant.csv",
        "a,b,species\n1,2,x\n2,1,x\n3,5,x\n4,4,x\n0,7,y\n1,7,y\n5,7,y\n2,7,y\n",
    );
    classify(
        &constant,
        &constant,
        &["--rule", "quadratic"],
        "in group 'y'",
    );
    classify(
        &constant,
        &constant,
        &["--rule", "quadratic"],
        "column 'b' is constant",
    );
    // Data without one of the training variables.
    let narrow = write(
        dir.path(),
        "narrow.csv",
        "sepal_length,sepal_width,petal_length\n1,2,3\n",
    );
    classify(
        &train,
        &narrow,
        &[],
        "'petal_width' are not columns of this file",
    );
    // No such label column, an empty label, a bad level.
    let nolabel = write(dir.path(), "nolabel.csv", "a,b\n1,2\n");
    classify(&nolabel, &nolabel, &[], "unknown column 'species'");
    let empty = write(dir.path(), "empty_label.csv", "a,species\n1,x\n2,\n3,y\n");
    classify(
        &empty,
        &empty,
        &[],
        "line 3: the label column 'species' is empty",
    );
    classify(
        &train,
        &train,
        &["--no-group-below", "1.5"],
        "--no-group-below 1.5 is not between 0 and 1",
    );
    // A non-numeric cell in the data.
    let text = write(
        dir.path(),
        "text.csv",
        "sepal_length,sepal_width,petal_length,petal_width\n1,2,3,x\n",
    );
    classify(
        &train,
        &text,
        &[],
        "line 2, column 'petal_width': 'x' is not a number",
    );
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
            "simulated Wishart F (reweighted MCD)",
        ),
        (
            "mcd",
            vec![],
            "\"stage\": \"reweighted\"",
            "simulated Wishart F (reweighted MCD)",
        ),
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
            .stderr(predicate::str::contains(format!(
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
            .stderr(predicate::str::contains(format!("({reference} reference")));
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

/// `fit --estimator mrcd` with more variables than rows (16 rows of 24
/// generated variables, rows 14 and 15 shifted by 4 on every variable):
/// the classical fit refuses, the MRCD fit writes a model whose record names
/// the estimator, and scoring ranks the shifted rows farthest. Wrong option
/// combinations are refused with a reason.
#[test]
fn fit_mrcd_with_more_variables_than_rows() {
    let dir = TempDir::new().unwrap();
    let (n, p) = (16usize, 24usize);
    let mut text = (0..p)
        .map(|j| format!("v{j}"))
        .collect::<Vec<_>>()
        .join(",");
    text.push('\n');
    for i in 0..n {
        let row: Vec<String> = (0..p)
            .map(|j| {
                let v = ((i * 31 + j * 17) as f64 * 0.731).sin() + 0.3 * ((i + 2 * j) as f64).cos();
                format!("{:.6}", if i >= 14 { v + 4.0 } else { v })
            })
            .collect();
        text.push_str(&row.join(","));
        text.push('\n');
    }
    let data = write(dir.path(), "wide.csv", &text);
    fit_fails(
        &dir,
        Some(&text),
        &[],
        "16 complete rows are too few for 24 variables",
    );
    let model = dir.path().join("mrcd.json");
    mvdist()
        .arg("fit")
        .arg(&data)
        .arg("--out")
        .arg(&model)
        .args(["--estimator", "mrcd"])
        .assert()
        .success()
        .stderr(predicate::str::contains("fitted a mrcd model on 16 rows"))
        .stderr(predicate::str::contains("MRCD: subset of 12 rows"))
        .stderr(predicate::str::contains("not a verdict"));
    let saved = std::fs::read_to_string(&model).unwrap();
    assert!(saved.contains("\"kind\": \"regularized_mcd\""), "{saved}");
    let out = dir.path().join("scores.csv");
    mvdist()
        .arg("score")
        .arg(&model)
        .arg(&data)
        .arg("--out")
        .arg(&out)
        .arg("--in-sample")
        .assert()
        .success()
        .stderr(predicate::str::contains("(chi-square reference"));
    let rows = read_scores(&out);
    let d2: Vec<f64> = rows.iter().map(|r| r[1].parse().unwrap()).collect();
    let clean_max = d2[..14].iter().cloned().fold(0.0, f64::max);
    assert!(d2[14] > clean_max && d2[15] > clean_max, "{d2:?}");
    fit_fails(
        &dir,
        Some(&text),
        &["--estimator", "mrcd", "--support", "0.4"],
        "with --estimator mrcd the support fraction must be in [0.5, 1]",
    );
    fit_fails(
        &dir,
        Some(&text),
        &["--estimator", "mrcd", "--seed", "2"],
        "--seed applies to --estimator mcd only",
    );
}

#[test]
fn normality_prints_a_table_with_readings_and_a_caution() {
    let dir = TempDir::new().unwrap();
    let data = iris_csv(dir.path());
    mvdist()
        .arg("normality")
        .arg(&data)
        .args(["--label", "flower"])
        .assert()
        .success()
        .stdout(
            predicate::str::contains("150 rows × 4 variables")
                .and(predicate::str::contains("Mardia skewness"))
                .and(predicate::str::contains("Henze-Zirkler"))
                .and(predicate::str::contains("Royston H"))
                .and(predicate::str::contains("Doornik-Hansen"))
                .and(predicate::str::contains("petal_width"))
                .and(predicate::str::contains("does not show")),
        );
}

#[test]
fn normality_json_matches_the_library() {
    let dir = TempDir::new().unwrap();
    let data = iris_csv(dir.path());
    let out = mvdist()
        .arg("normality")
        .arg(&data)
        .args([
            "--label",
            "flower",
            "--json",
            "--columns",
            "sepal_length,sepal_width",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let report: mvdist::normality::NormalityReport =
        serde_json::from_slice(&out).expect("the JSON is a report");
    let x = common::matrix(&common::fixture("iris_covariance.json")["data"]);
    let want = mvdist::normality::NormalityReport::compute(
        x.slice(ndarray::s![.., 0..2]).to_owned().view(),
        &mvdist::normality::NormalityOptions::default(),
    )
    .unwrap()
    .with_variable_names(vec!["sepal_length".into(), "sepal_width".into()])
    .unwrap();
    assert_eq!(report, want);
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["tests"][0]["test"], "mardia_skewness");
    assert_eq!(v["per_variable"][1]["name"], "sepal_width");
}

#[test]
fn normality_errors_name_the_column() {
    let dir = TempDir::new().unwrap();
    let constant = write(
        dir.path(),
        "c.csv",
        "a,b,c\n1,5,2\n2,5,3\n4,5,1\n3,5,7\n0,5,2\n",
    );
    mvdist()
        .arg("normality")
        .arg(&constant)
        .assert()
        .code(1)
        .stderr(predicate::str::contains("column 'b' is constant"));
    mvdist()
        .arg("normality")
        .arg(&constant)
        .args(["--exclude", "b", "--alpha", "2"])
        .assert()
        .code(1)
        .stderr(predicate::str::contains("--alpha"));
    let few = write(dir.path(), "f.csv", "a,b,c\n1,2,3\n2,1,5\n");
    mvdist()
        .arg("normality")
        .arg(&few)
        .assert()
        .code(1)
        .stderr(predicate::str::contains("too few for 3 variables"));
}

/// Every subcommand that reads a model file reads both forms `fit` writes
/// (JSON and `--binary`), with the same results; a far row's p-value is
/// printed in short scientific form.
#[test]
fn binary_and_json_model_files_serve_every_reader() {
    let dir = TempDir::new().unwrap();
    let (data, json_model) = fit_iris(&dir);
    let bin_model = dir.path().join("model.bin");
    mvdist()
        .arg("fit")
        .arg(&data)
        .arg("--out")
        .arg(&bin_model)
        .args(["--label", "flower", "--binary"])
        .assert()
        .success();
    assert_ne!(
        std::fs::read(&bin_model).unwrap(),
        std::fs::read(&json_model).unwrap()
    );
    // score: same output from either form.
    let mut outputs = Vec::new();
    for (k, model) in [&json_model, &bin_model].into_iter().enumerate() {
        let out = dir.path().join(format!("scores_{k}.csv"));
        mvdist()
            .arg("score")
            .arg(model)
            .arg(&data)
            .arg("--out")
            .arg(&out)
            .args(["--label", "flower"])
            .assert()
            .success();
        outputs.push(std::fs::read_to_string(&out).unwrap());
    }
    assert_eq!(outputs[0], outputs[1]);
    // chart --start-model: same points from either form.
    let (history, _) = species_csv(dir.path(), 0);
    let mut points = Vec::new();
    for k in 0..2 {
        let out = dir.path().join(format!("points_{k}.csv"));
        // The start model must have the chart's variables: fit one on the
        // history file itself.
        let start = dir.path().join(format!("start_{k}"));
        let mut fit = mvdist();
        fit.arg("fit")
            .arg(&history)
            .arg("--out")
            .arg(&start)
            .args(["--label", "flower"]);
        if k == 1 {
            fit.arg("--binary");
        }
        fit.assert().success();
        mvdist()
            .arg("chart")
            .arg(&history)
            .arg("--out")
            .arg(&out)
            .arg("--start-model")
            .arg(&start)
            .args(["--label", "flower"])
            .assert()
            .success();
        points.push(std::fs::read_to_string(&out).unwrap());
    }
    assert_eq!(points[0], points[1]);
    // A row far from the centre: its p-value is about 1e-200 and prints in
    // the shortest round-trip form, not as a long decimal.
    let far = write(
        dir.path(),
        "far.csv",
        "flower,sepal_length,sepal_width,petal_length,petal_width\nfar,5.8,3.0,40.0,1.2\n",
    );
    let out = dir.path().join("far_scores.csv");
    mvdist()
        .arg("score")
        .arg(&bin_model)
        .arg(&far)
        .arg("--out")
        .arg(&out)
        .args(["--label", "flower"])
        .assert()
        .success();
    let rows = read_scores(&out);
    let p_text = &rows[0][3];
    let p: f64 = p_text.parse().unwrap();
    assert!(p > 0.0 && p < 1e-30, "{p_text}");
    assert!(p_text.contains('e') && p_text.len() <= 24, "{p_text}");
    assert_eq!(format!("{p:e}"), *p_text);
}

/// Stack loss (Brownlee 1965, as shipped by statsmodels; fixture from
/// `tests/reference/make_stackloss_fixture.py`) through the command line, as
/// a new user would run it: `fit --estimator mcd`, then `score --in-sample`
/// at α = 0.025 flags rows 1, 2 and 3, the same rows as the library (see
/// `stack_loss_with_the_default_subset_size` in tests/it/robust_reference.rs),
/// and the model file records the simulated Wishart degrees of freedom.
#[test]
fn robust_fit_and_in_sample_scores_on_stack_loss() {
    let dir = TempDir::new().unwrap();
    let f = common::fixture("stackloss.json");
    let mut text = String::from("AIRFLOW,WATERTEMP,ACIDCONC\n");
    for row in f["data"].as_array().unwrap() {
        let v: Vec<String> = row
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap().to_string())
            .collect();
        text.push_str(&v.join(","));
        text.push('\n');
    }
    let data = write(dir.path(), "stackloss.csv", &text);
    let model = dir.path().join("model.json");
    mvdist()
        .arg("fit")
        .arg(&data)
        .arg("--out")
        .arg(&model)
        .args(["--estimator", "mcd"])
        .assert()
        .success();
    let saved = std::fs::read_to_string(&model).unwrap();
    assert!(saved.contains("\"wishart_dof\""), "{saved}");
    let out = dir.path().join("scores.csv");
    mvdist()
        .arg("score")
        .arg(&model)
        .arg(&data)
        .arg("--out")
        .arg(&out)
        .args(["--in-sample", "--alpha", "0.025"])
        .assert()
        .success()
        .stderr(predicate::str::contains(
            "(simulated Wishart F (reweighted MCD) reference",
        ))
        .stderr(predicate::str::contains("3 flagged"));
    let (header, rows) = read_points(&out);
    let flag = header.iter().position(|h| h == "flag").unwrap();
    let flagged: Vec<usize> = rows
        .iter()
        .enumerate()
        .filter(|(_, r)| r[flag] == "true")
        .map(|(i, _)| i + 1)
        .collect();
    assert_eq!(flagged, [1, 2, 3]);
}

/// `fit --hold-out` keeps calibration rows in the model file, prints the
/// check and writes its chart; `score --p-values held-out` agrees with the
/// library's held-out p-values.
#[test]
fn held_out_calibration_rows_round_trip() {
    let dir = TempDir::new().unwrap();
    let data = iris_csv(dir.path());
    let model = dir.path().join("m.json");
    let chart = dir.path().join("qq.svg");
    mvdist()
        .arg("fit")
        .arg(&data)
        .arg("--out")
        .arg(&model)
        .args([
            "--label",
            "flower",
            "--hold-out",
            "0.3",
            "--hold-out-seed",
            "5",
        ])
        .arg("--calibration-chart")
        .arg(&chart)
        .assert()
        .success()
        .stderr(predicate::str::contains("105 rows × 4 variables"))
        .stderr(predicate::str::contains("held out 45 rows"))
        .stderr(predicate::str::contains(
            "calibration: the fitted F cutoff at 5.0%",
        ));
    assert!(std::fs::read_to_string(&chart).unwrap().contains("<circle"));
    let file = mvdist::model_file::ModelFile::load(&model).unwrap();
    assert_eq!(file.model().calibration().unwrap().len(), 45);
    let out = dir.path().join("s.csv");
    mvdist()
        .arg("score")
        .arg(&model)
        .arg(&data)
        .arg("--out")
        .arg(&out)
        .args([
            "--label",
            "flower",
            "--p-values",
            "held-out",
            "--alpha",
            "0.05",
        ])
        .assert()
        .success()
        .stderr(predicate::str::contains("held-out p-values from 45 rows"));
    let rows = read_scores(&out);
    let f = common::fixture("iris_covariance.json");
    let x = common::matrix(&f["data"]);
    let want = file
        .model()
        .score_held_out(x.view(), mvdist::EmpiricalPValue::Marginal)
        .unwrap();
    for (i, r) in rows.iter().enumerate() {
        let p: f64 = r[3].parse().unwrap();
        assert_eq!(p, want.p_values()[i], "row {i}");
    }
    // The conditional variant, and its refusals.
    mvdist()
        .arg("score")
        .arg(&model)
        .arg(&data)
        .arg("--out")
        .arg(&out)
        .args([
            "--label",
            "flower",
            "--p-values",
            "held-out-conditional",
            "--delta",
            "0.1",
        ])
        .assert()
        .success()
        .stderr(predicate::str::contains("calibration-conditional"));
    let out2 = dir.path().join("s2.csv");
    for (extra, message) in [
        (
            &["--p-values", "held-out-conditional", "--delta", "0.8"][..],
            "--delta",
        ),
        (&["--p-values", "held-out", "--in-sample"][..], "do not mix"),
        (
            &["--p-values", "held-out", "--delta", "0.1"][..],
            "--delta applies",
        ),
        (
            &["--p-values", "held-out", "--observed-only"][..],
            "do not mix",
        ),
    ] {
        let mut args: Vec<&std::ffi::OsStr> = vec![
            "score".as_ref(),
            model.as_os_str(),
            data.as_os_str(),
            "--out".as_ref(),
            out2.as_os_str(),
            "--label".as_ref(),
            "flower".as_ref(),
        ];
        args.extend(extra.iter().map(std::ffi::OsStr::new));
        fails(&args, &out2, message);
    }
    // A model without calibration rows says how to get them.
    let (_, plain) = fit_iris(&dir);
    let args: Vec<&std::ffi::OsStr> = vec![
        "score".as_ref(),
        plain.as_os_str(),
        data.as_os_str(),
        "--out".as_ref(),
        out2.as_os_str(),
        "--label".as_ref(),
        "flower".as_ref(),
        "--p-values".as_ref(),
        "held-out".as_ref(),
    ];
    fails(&args, &out2, "fit --hold-out");
}

/// Rows with gaps: `fit --estimator em` reads them, `score --observed-only`
/// scores them on their observed variables, as the library does.
#[test]
fn rows_with_gaps_fit_by_em_and_score_on_observed_variables() {
    let dir = TempDir::new().unwrap();
    let data = write(
        dir.path(),
        "gaps.csv",
        "a,b,c\n1,2,0.5\n2,,0.9\n3,4.2,\n4,4.8,1.6\n5,6.1,1.9\n2.5,3,0.7\n3.5,,1.2\n1.5,2.2,0.6\n4.5,5.6,1.5\n0.5,1.4,0.1\n",
    );
    let model = dir.path().join("em.json");
    mvdist()
        .arg("fit")
        .arg(&data)
        .arg("--out")
        .arg(&model)
        .args(["--estimator", "em"])
        .assert()
        .success()
        .stderr(predicate::str::contains("EM: 3 empty cell(s) of 30"))
        .stderr(predicate::str::contains("converged"));
    let out = dir.path().join("s.csv");
    mvdist()
        .arg("score")
        .arg(&model)
        .arg(&data)
        .arg("--out")
        .arg(&out)
        .arg("--observed-only")
        .assert()
        .success();
    let rows = read_scores(&out);
    assert_eq!(rows[1][7], "2");
    assert_eq!(rows[0][7], "3");
    let file = mvdist::model_file::ModelFile::load(&model).unwrap();
    let want = file
        .model()
        .score_row_observed(&[2.0, f64::NAN, 0.9], RowOrigin::New, 0.01)
        .unwrap();
    assert_eq!(rows[1][1].parse::<f64>().unwrap(), want.squared_distance);
    assert_eq!(rows[1][2].parse::<f64>().unwrap(), want.p_value);
    // Held-out rows and EM do not mix; EM needs more observed values.
    fit_fails(
        &dir,
        Some("a,b\n1,2\n2,\n3,1\n4,3\n"),
        &["--estimator", "em", "--hold-out", "0.3"],
        "--hold-out needs complete rows",
    );
    fit_fails(
        &dir,
        Some("a,b\n1,2\n2,\n3,\n4,\n5,1\n"),
        &["--estimator", "em"],
        "column 1 is observed in only 2 rows",
    );
}

#[test]
fn normality_report_checks_the_f_cutoffs_on_held_out_rows() {
    let dir = TempDir::new().unwrap();
    let data = iris_csv(dir.path());
    let chart = dir.path().join("n.svg");
    mvdist()
        .arg("normality")
        .arg(&data)
        .args(["--label", "flower", "--hold-out", "0.5"])
        .arg("--calibration-chart")
        .arg(&chart)
        .assert()
        .success()
        .stdout(predicate::str::contains("F cutoffs on 75 held-out rows"));
    assert!(chart.exists());
    let json = json_of(mvdist().arg("normality").arg(&data).args([
        "--label",
        "flower",
        "--hold-out",
        "0.5",
        "--json",
    ]));
    assert_eq!(json["calibration"]["held_out_rows"], 75);
    assert_eq!(json["calibration"]["levels"].as_array().unwrap().len(), 3);
}

/// The breast cancer measurements (open dataset, from the scikit-learn
/// fixture), rows `range`, as CSV with columns v1..v30.
fn breast_cancer_csv(
    dir: &Path,
    name: &str,
    range: std::ops::Range<usize>,
) -> (PathBuf, ndarray::Array2<f64>) {
    let f = common::fixture("component_monitoring.json");
    let x = common::matrix(&f["data"])
        .slice(ndarray::s![range, ..])
        .to_owned();
    let mut text = (1..=30)
        .map(|j| format!("v{j}"))
        .collect::<Vec<_>>()
        .join(",")
        + "\n";
    for row in x.outer_iter() {
        text += &row
            .iter()
            .map(|v| format!("{v}"))
            .collect::<Vec<_>>()
            .join(",");
        text += "\n";
    }
    (write(dir, name, &text), x)
}

#[test]
fn component_chart_writes_both_statistics_that_match_the_library() {
    use mvdist::control_chart::{ComponentChart, ComponentCount, ComponentOptions, FalseAlarmRate};
    let dir = TempDir::new().unwrap();
    let (a, xa) = breast_cancer_csv(dir.path(), "history.csv", 0..400);
    let (b, xb) = breast_cancer_csv(dir.path(), "new.csv", 400..569);
    let out = dir.path().join("points.csv");
    let svg = dir.path().join("chart.svg");
    mvdist()
        .arg("chart")
        .arg(&a)
        .arg("--new")
        .arg(&b)
        .arg("--out")
        .arg(&out)
        .arg("--svg")
        .arg(&svg)
        .args([
            "--kind",
            "components",
            "--components",
            "5",
            "--alpha",
            "0.01",
        ])
        .assert()
        .success()
        .stderr(predicate::str::contains(
            "Phase I: 400 rows × 30 variables; 5 components",
        ))
        .stderr(predicate::str::contains("Phase II: 169 new rows"))
        .stderr(predicate::str::contains("prompt to investigate"));
    let options = ComponentOptions::default()
        .with_components(ComponentCount::Fixed { components: 5 })
        .with_false_alarm(FalseAlarmRate::per_point(0.01).unwrap());
    let chart = ComponentChart::phase_one(xa.view(), &options).unwrap();
    let new = chart.monitor(xb.view()).unwrap();
    let (header, rows) = read_points(&out);
    assert_eq!(
        header.join(","),
        "phase,point,status,t2,t2_limit,t2_p_value,q,q_limit,q_p_value,t2_signal,q_signal,signal,top_t2_variables,top_q_variables"
    );
    assert_eq!(rows.len(), 569);
    for (r, pt) in rows.iter().zip(chart.phase_one_points().iter().chain(&new)) {
        assert_eq!(r[3].parse::<f64>().unwrap(), pt.t_squared);
        assert_eq!(r[6].parse::<f64>().unwrap(), pt.residual);
        assert_eq!(r[7].parse::<f64>().unwrap(), pt.residual_limit.unwrap());
        assert_eq!(r[11] == "true", pt.signal());
        assert_eq!(r[13].is_empty(), !pt.signal());
        if let Some(d) = &pt.diagnosis {
            let top = d.largest_residual(1)[0];
            assert!(r[13].starts_with(&format!("v{} (", top + 1)), "{}", r[13]);
        }
    }
    let picture = std::fs::read_to_string(&svg).unwrap();
    assert!(picture.starts_with("<svg") && picture.contains("Q (squared prediction error)"));
    assert!(picture.contains("T² on 5 components") && picture.contains("Phase II"));

    // Errors name the problem and leave no file.
    let out2 = dir.path().join("bad.csv");
    for (extra, message) in [
        (
            vec!["--kind", "components", "--components", "0"],
            "components",
        ),
        (
            vec!["--kind", "components", "--explained", "1.5"],
            "explained variance fraction",
        ),
        (
            vec!["--kind", "components", "--subgroup-size", "5"],
            "do not apply",
        ),
        (vec!["--components", "3"], "apply to --kind components"),
    ] {
        let mut args: Vec<std::ffi::OsString> = vec![
            "chart".into(),
            a.clone().into(),
            "--out".into(),
            out2.clone().into(),
        ];
        args.extend(extra.iter().map(std::ffi::OsString::from));
        let refs: Vec<&std::ffi::OsStr> = args.iter().map(|s| s.as_os_str()).collect();
        fails(&refs, &out2, message);
    }
}

/// The iris rows `picked` (open dataset, scikit-learn fixture) as CSV with
/// a label column naming the species and the row.
fn iris_rows_csv(dir: &Path, name: &str, picked: &[usize]) -> (PathBuf, ndarray::Array2<f64>) {
    let f = common::fixture("iris_covariance.json");
    let all = common::matrix(&f["data"]);
    let species = ["setosa", "versicolor", "virginica"];
    let x = all.select(ndarray::Axis(0), picked);
    let mut text = String::from("flower,sepal_length,sepal_width,petal_length,petal_width\n");
    for (&i, row) in picked.iter().zip(x.outer_iter()) {
        let label = species[f["labels"][i].as_u64().unwrap() as usize];
        text += &format!("{label}_{i},{},{},{},{}\n", row[0], row[1], row[2], row[3]);
    }
    (write(dir, name, &text), x)
}

/// `chart --kind mewma|mcusum`: the statistics in the points CSV are the
/// library's (same estimate, same limit), the chart stays quiet on held-out
/// setosa rows and signals once the rows switch to versicolor (a shift of
/// many standard deviations in the petal measurements), with a petal
/// variable as the largest term; a designed limit is the library's design.
#[test]
fn shift_charts_match_the_library_and_signal_after_the_switch() {
    use mvdist::control_chart::run_length::{limit_for_average_run_length, RunLengthOptions};
    use mvdist::control_chart::{
        ChartScheme, InControlEstimate, McusumChart, McusumOptions, MewmaChart, MewmaOptions,
    };
    let dir = TempDir::new().unwrap();
    let (history, xh) = iris_rows_csv(dir.path(), "history.csv", &(0..35).collect::<Vec<_>>());
    let (new, xn) = iris_rows_csv(dir.path(), "new.csv", &(35..65).collect::<Vec<_>>());
    let estimate = InControlEstimate::from_rows(xh.view()).unwrap();
    let out = dir.path().join("points.csv");
    let svg = dir.path().join("chart.svg");
    let run = |extra: &[&str]| {
        mvdist()
            .arg("chart")
            .arg(&history)
            .arg("--new")
            .arg(&new)
            .arg("--out")
            .arg(&out)
            .arg("--svg")
            .arg(&svg)
            .args(["--label", "flower", "--runs", "300", "--seed", "4"])
            .args(extra)
            .assert()
            .success()
    };
    for kind in ["mewma", "mcusum"] {
        let h = if kind == "mewma" { 12.0 } else { 8.0 };
        let assert = run(&["--kind", kind, "--limit", &h.to_string(), "--shift", "1"]);
        let stdout = String::from_utf8(assert.get_output().stderr.clone()).unwrap();
        assert!(stdout.contains("ARL at a shift of size δ = 1"), "{stdout}");
        assert!(stdout.contains("not a verdict"), "{stdout}");
        assert!(
            stdout.contains("Phase II (from the zero state): 30 new rows"),
            "{stdout}"
        );
        let (one, two) = if kind == "mewma" {
            let c = MewmaChart::new(estimate.clone(), &MewmaOptions::default(), h).unwrap();
            (c.monitor(xh.view()).unwrap(), c.monitor(xn.view()).unwrap())
        } else {
            let c = McusumChart::new(estimate.clone(), &McusumOptions::default(), h).unwrap();
            (c.monitor(xh.view()).unwrap(), c.monitor(xn.view()).unwrap())
        };
        let (header, rows) = read_points(&out);
        assert_eq!(
            header.join(","),
            "phase,point,label,status,step,statistic,limit,signal,top_variables"
        );
        assert_eq!(rows.len(), 65);
        for (r, pt) in rows.iter().zip(one.iter().chain(&two)) {
            assert_eq!(r[5].parse::<f64>().unwrap(), pt.statistic, "{kind} {r:?}");
            assert_eq!(r[6].parse::<f64>().unwrap(), h);
            assert_eq!(r[7] == "true", pt.signal);
            assert_eq!(r[8].is_empty(), !pt.signal);
        }
        assert_eq!(rows[35][2], "setosa_35");
        assert_eq!(rows[35][4], "1", "Phase II restarts from the zero state");
        // Held-out setosa rows stay near the limit (flower 42, new row 7, is
        // the unusual setosa with sepal width 2.3 — recalled from memory —
        // and may cross it); every versicolor row is far above it, mostly
        // through a petal variable.
        let setosa_max = two[..15].iter().map(|p| p.statistic).fold(0.0, f64::max);
        assert!(setosa_max < 1.2 * h, "{kind}: {setosa_max}");
        for (k, p) in two[15..].iter().enumerate() {
            assert!(
                p.signal && p.statistic > 2.0 * h,
                "{kind}: versicolor row {k}: {}",
                p.statistic
            );
            let top = &rows[50 + k][8];
            assert!(top.starts_with("petal_"), "{kind}: {top}");
        }
        let picture = std::fs::read_to_string(&svg).unwrap();
        assert!(picture.starts_with("<svg") && picture.contains("Phase II"));
        assert!(picture.contains(if kind == "mewma" {
            "MEWMA T²"
        } else {
            "MCUSUM Y"
        }));
    }

    // A designed limit: the library's design with the same runs and seed.
    let assert = run(&["--kind", "mewma", "--arl", "30", "--smoothing", "0.2"]);
    let stdout = String::from_utf8(assert.get_output().stderr.clone()).unwrap();
    assert!(
        stdout.contains("designed for an in-control ARL of 30.0"),
        "{stdout}"
    );
    let design = limit_for_average_run_length(
        &ChartScheme::Mewma(MewmaOptions::default().with_smoothing(0.2)),
        4,
        30.0,
        &RunLengthOptions::default().with_runs(300).with_seed(4),
    )
    .unwrap();
    let (_, rows) = read_points(&out);
    assert_eq!(rows[0][6].parse::<f64>().unwrap(), design.limit);
}

/// `--remove-signals` with a shift chart: a T² Phase I screen removes the
/// three versicolor rows mixed into the setosa history before the estimate,
/// and the points CSV says so; wrong combinations are refused with a
/// reason and leave no file.
#[test]
fn shift_chart_screens_history_and_refuses_wrong_options() {
    let dir = TempDir::new().unwrap();
    let (history, _) = iris_rows_csv(
        dir.path(),
        "history.csv",
        &(0..40).chain(60..63).collect::<Vec<_>>(),
    );
    let out = dir.path().join("points.csv");
    mvdist()
        .arg("chart")
        .arg(&history)
        .arg("--out")
        .arg(&out)
        .args([
            "--kind",
            "mcusum",
            "--limit",
            "6",
            "--runs",
            "200",
            "--remove-signals",
            "--label",
            "flower",
        ])
        .assert()
        .success()
        .stderr(predicate::str::contains("estimated from 40 of 43 rows"));
    let (_, rows) = read_points(&out);
    assert!(rows[..40].iter().all(|r| r[3] == "in_estimate"));
    assert!(
        rows[40..]
            .iter()
            .all(|r| r[3].starts_with("removed_round_")),
        "{:?}",
        &rows[40..]
    );

    let bad = dir.path().join("bad.csv");
    for (extra, message) in [
        (
            vec!["--kind", "mcusum", "--smoothing", "0.2"],
            "apply to --kind mewma",
        ),
        (
            vec!["--kind", "mewma", "--reference-value", "1"],
            "applies to --kind mcusum",
        ),
        (vec!["--kind", "mewma", "--alpha", "0.01"], "give --arl"),
        (
            vec!["--kind", "mewma", "--smoothing", "1.5", "--limit", "9"],
            "invalid smoothing",
        ),
        (vec!["--kind", "mewma", "--limit=-1"], "limit"),
        (
            vec!["--kind", "mcusum", "--subgroup-size", "5"],
            "does not apply",
        ),
        (
            vec!["--smoothing", "0.2"],
            "apply to --kind mewma or mcusum",
        ),
    ] {
        let mut args: Vec<std::ffi::OsString> = vec![
            "chart".into(),
            history.clone().into(),
            "--out".into(),
            bad.clone().into(),
            "--label".into(),
            "flower".into(),
        ];
        args.extend(extra.iter().map(std::ffi::OsString::from));
        let refs: Vec<&std::ffi::OsStr> = args.iter().map(|s| s.as_os_str()).collect();
        fails(&refs, &bad, message);
    }
}

/// `-` reads standard input and writes standard output: `fit - --out -`
/// then `score MODEL - --out -` give byte for byte the files that the
/// path-based commands write; notes go to standard error and `--quiet`
/// silences them; `--status-on-flags` exits with 3 when a row is flagged
/// and 0 when none is.
#[test]
fn standard_streams_quiet_and_flag_status() {
    let dir = TempDir::new().unwrap();
    let (data, model) = fit_iris(&dir);
    let csv = std::fs::read(&data).unwrap();
    let piped_model = mvdist()
        .args(["fit", "-", "--out", "-", "--label", "flower"])
        .write_stdin(csv.clone())
        .assert()
        .success()
        .stderr(predicate::str::contains("150 rows × 4 variables"))
        .get_output()
        .stdout
        .clone();
    assert_eq!(piped_model, std::fs::read(&model).unwrap());
    let scores = dir.path().join("scores.csv");
    mvdist()
        .arg("score")
        .arg(&model)
        .arg(&data)
        .arg("--out")
        .arg(&scores)
        .args(["--label", "flower"])
        .assert()
        .success();
    let piped = mvdist()
        .arg("score")
        .arg(&model)
        .args(["-", "--out", "-", "--label", "flower", "--quiet"])
        .write_stdin(csv.clone())
        .assert()
        .success()
        .stderr("")
        .get_output()
        .stdout
        .clone();
    assert_eq!(piped, std::fs::read(&scores).unwrap());
    // The model itself from standard input.
    let from_stdin_model = mvdist()
        .args(["score", "-"])
        .arg(&data)
        .args(["--out", "-", "--label", "flower", "--quiet"])
        .write_stdin(std::fs::read(&model).unwrap())
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    assert_eq!(from_stdin_model, piped);

    // Exit status 3 only with the option and only when a row is flagged.
    let score = |alpha: &str, status: bool| {
        let mut cmd = mvdist();
        cmd.arg("score").arg(&model).arg(&data).args([
            "--out", "-", "--label", "flower", "--quiet", "--alpha", alpha,
        ]);
        if status {
            cmd.arg("--status-on-flags");
        }
        cmd.assert()
    };
    score("0.05", true).code(3);
    score("0.05", false).code(0);
    score("1e-300", true).code(0);
}

/// Writing to a pipe whose reader has gone ends quietly with status 0:
/// no panic message, no error.
#[test]
fn closed_pipe_ends_quietly() {
    use std::io::Read;
    use std::process::Stdio;
    let dir = TempDir::new().unwrap();
    let (_, model) = fit_iris(&dir);
    // 60 000 rows (generated from a fixed formula): the scores are far more
    // than a pipe buffer holds.
    let mut text = String::from("flower,sepal_length,sepal_width,petal_length,petal_width\n");
    for i in 0..60_000u32 {
        let t = f64::from(i);
        text += &format!(
            "r{i},{:.3},{:.3},{:.3},{:.3}\n",
            5.8 + 0.8 * (0.37 * t).sin(),
            3.0 + 0.4 * (0.53 * t).cos(),
            3.7 + 1.7 * (0.11 * t).sin(),
            1.2 + 0.7 * (0.07 * t).cos()
        );
    }
    let data = write(dir.path(), "many.csv", &text);
    let mut child = std::process::Command::new(assert_cmd::cargo::cargo_bin("mvdist"))
        .arg("score")
        .arg(&model)
        .arg(&data)
        .args(["--out", "-", "--label", "flower"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut stdout = child.stdout.take().unwrap();
    let mut first = [0u8; 64];
    stdout.read_exact(&mut first).unwrap();
    assert!(first.starts_with(b"row,flower,d2"));
    drop(stdout);
    let out = child.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{stderr}");
    assert!(
        !stderr.contains("panicked") && !stderr.contains("error"),
        "{stderr}"
    );
}

/// `--json` prints a summary on standard output whose numbers agree with
/// the files written; it is refused with `--out -`.
#[test]
fn json_summaries_agree_with_the_outputs() {
    let dir = TempDir::new().unwrap();
    let data = iris_csv(dir.path());
    let model = dir.path().join("model.json");
    let fit = json_of(
        mvdist()
            .arg("fit")
            .arg(&data)
            .arg("--out")
            .arg(&model)
            .args(["--label", "flower", "--json", "--quiet"]),
    );
    assert_eq!(fit["command"], "fit");
    assert_eq!(fit["rows"], 150);
    assert_eq!(fit["variables"].as_array().unwrap().len(), 4);
    assert!(fit["caution"].as_str().unwrap().contains("not a verdict"));
    let scores = dir.path().join("scores.csv");
    let score = json_of(
        mvdist()
            .arg("score")
            .arg(&model)
            .arg(&data)
            .arg("--out")
            .arg(&scores)
            .args(["--label", "flower", "--alpha", "0.05", "--json"]),
    );
    let flags = read_scores(&scores)
        .iter()
        .filter(|r| r[4] == "true")
        .count();
    assert_eq!(score["flagged"], flags as u64);
    assert_eq!(score["rows"], 150);
    let (history, _) = iris_rows_csv(dir.path(), "history.csv", &(0..35).collect::<Vec<_>>());
    let (new, _) = iris_rows_csv(dir.path(), "new.csv", &(35..65).collect::<Vec<_>>());
    let points = dir.path().join("points.csv");
    let chart = json_of(
        mvdist()
            .arg("chart")
            .arg(&history)
            .arg("--new")
            .arg(&new)
            .arg("--out")
            .arg(&points)
            .args([
                "--label", "flower", "--kind", "mewma", "--limit", "12", "--runs", "200",
            ])
            .arg("--json"),
    );
    let (_, rows) = read_points(&points);
    let phase_two = rows
        .iter()
        .filter(|r| r[0] == "2" && r[7] == "true")
        .count();
    assert_eq!(chart["kind"], "mewma");
    assert_eq!(chart["phase_two_signals"], phase_two as u64);
    assert_eq!(chart["limit"], 12.0);
    assert_eq!(chart["scheme"]["kind"], "mewma");
    assert!(chart["in_control_run_length"]["average"].as_f64().unwrap() > 1.0);
    mvdist()
        .arg("score")
        .arg(&model)
        .arg(&data)
        .args(["--out", "-", "--label", "flower", "--json"])
        .assert()
        .code(1)
        .stdout("")
        .stderr(predicate::str::contains(
            "--json and --out - both write standard output",
        ));
}

/// The iris data (scikit-learn fixture) with an integer column `lot` (row
/// mod 7) as an Arrow batch, and the same table as CSV text.
fn iris_batch(null_at: Option<usize>) -> (arrow::array::RecordBatch, String) {
    use arrow::array::{ArrayRef, Float64Array, Int32Array, StringArray};
    use std::sync::Arc;
    let f = common::fixture("iris_covariance.json");
    let x = common::matrix(&f["data"]);
    let n = x.nrows();
    let names: Vec<String> = (0..n).map(|i| format!("f{i}")).collect();
    let mut columns: Vec<(&str, ArrayRef)> = vec![(
        "flower",
        Arc::new(StringArray::from(names.clone())) as ArrayRef,
    )];
    let titles = ["sepal_length", "sepal_width", "petal_length", "petal_width"];
    for (j, t) in titles.iter().enumerate() {
        let v: Vec<Option<f64>> = (0..n)
            .map(|i| (null_at != Some(i) || j != 1).then_some(x[[i, j]]))
            .collect();
        columns.push((t, Arc::new(Float64Array::from(v)) as ArrayRef));
    }
    let lot: Vec<i32> = (0..n as i32).map(|i| i % 7).collect();
    columns.push(("lot", Arc::new(Int32Array::from(lot)) as ArrayRef));
    let mut text = String::from("flower,sepal_length,sepal_width,petal_length,petal_width,lot\n");
    for i in 0..n {
        let w = if null_at == Some(i) {
            String::new()
        } else {
            x[[i, 1]].to_string()
        };
        text += &format!(
            "{},{},{w},{},{},{}\n",
            names[i],
            x[[i, 0]],
            x[[i, 2]],
            x[[i, 3]],
            i % 7
        );
    }
    (
        arrow::array::RecordBatch::try_from_iter(columns).unwrap(),
        text,
    )
}

fn write_parquet(path: &Path, batch: &arrow::array::RecordBatch) {
    let file = std::fs::File::create(path).unwrap();
    let props = parquet::file::properties::WriterProperties::builder()
        .set_compression(parquet::basic::Compression::SNAPPY)
        .set_max_row_group_row_count(Some(64))
        .build();
    let mut w = parquet::arrow::ArrowWriter::try_new(file, batch.schema(), Some(props)).unwrap();
    w.write(batch).unwrap();
    w.close().unwrap();
}

/// Parquet (several row groups, snappy) and Arrow IPC input give byte for
/// byte the model and scores of the same table as CSV (integers read as
/// numbers, the label as text); nulls are missing values named by row;
/// a text variable, a truncated file and a CSV file named `.parquet` are
/// refused naming the file or column, leaving no output.
#[test]
fn columnar_input_matches_csv() {
    let dir = TempDir::new().unwrap();
    let (batch, text) = iris_batch(None);
    let csv = write(dir.path(), "iris.csv", &text);
    let pq = dir.path().join("iris.parquet");
    write_parquet(&pq, &batch);
    let ipc = dir.path().join("iris.arrow");
    {
        let file = std::fs::File::create(&ipc).unwrap();
        let mut w = arrow::ipc::writer::FileWriter::try_new(file, &batch.schema()).unwrap();
        w.write(&batch).unwrap();
        w.finish().unwrap();
    }
    let fit = |input: &Path, out: &str| {
        let model = dir.path().join(out);
        mvdist()
            .arg("fit")
            .arg(input)
            .arg("--out")
            .arg(&model)
            .args(["--label", "flower", "--quiet"])
            .assert()
            .success();
        std::fs::read(model).unwrap()
    };
    let reference = fit(&csv, "csv.json");
    assert_eq!(fit(&pq, "pq.json"), reference);
    assert_eq!(fit(&ipc, "ipc.json"), reference);
    let score = |input: &Path| {
        mvdist()
            .arg("score")
            .arg(dir.path().join("csv.json"))
            .arg(input)
            .args(["--out", "-", "--label", "flower", "--quiet"])
            .assert()
            .success()
            .get_output()
            .stdout
            .clone()
    };
    let scored = score(&csv);
    assert!(scored.starts_with(b"row,flower,d2"));
    assert_eq!(score(&pq), scored);
    assert_eq!(score(&ipc), scored);

    // A null is a missing value, named by its data row.
    let (gappy, _) = iris_batch(Some(2));
    let gappy_path = dir.path().join("gappy.parquet");
    write_parquet(&gappy_path, &gappy);
    let out = dir.path().join("m.json");
    fails(
        &[
            "fit".as_ref(),
            gappy_path.as_os_str(),
            "--out".as_ref(),
            out.as_os_str(),
            "--label".as_ref(),
            "flower".as_ref(),
        ],
        &out,
        "gappy.parquet, row 3, column 'sepal_width': the value is missing",
    );
    mvdist()
        .arg("fit")
        .arg(&gappy_path)
        .arg("--out")
        .arg(&out)
        .args(["--label", "flower", "--skip-incomplete"])
        .assert()
        .success()
        .stderr(predicate::str::contains("skipped 1 incomplete row(s)"))
        .stderr(predicate::str::contains("149 rows × 5 variables"));
    std::fs::remove_file(&out).unwrap();

    // Text where numbers are expected; a truncated file; a CSV in disguise.
    for (path, message) in [
        (pq.clone(), "column 'flower' holds Utf8, not numbers"),
        (
            {
                let p = dir.path().join("cut.parquet");
                let bytes = std::fs::read(&pq).unwrap();
                std::fs::write(&p, &bytes[..bytes.len() / 2]).unwrap();
                p
            },
            "cut.parquet: cannot read it as a Parquet file",
        ),
        (
            {
                let p = dir.path().join("text.parquet");
                std::fs::write(&p, &text).unwrap();
                p
            },
            "text.parquet: cannot read it as a Parquet file",
        ),
    ] {
        fails(
            &[
                "fit".as_ref(),
                path.as_os_str(),
                "--out".as_ref(),
                out.as_os_str(),
            ],
            &out,
            message,
        );
    }
}
