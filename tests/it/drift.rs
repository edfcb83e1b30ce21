//! Drifting models: the incrementally updated Cholesky factor against a
//! fresh factorization after a million updates. Rows are the first eight
//! columns of the Wisconsin breast-cancer data (open dataset bundled with
//! scikit-learn; tests/fixtures/breast_cancer_distances.json), replayed in
//! a loop.

use crate::common;
use mvdist::drift::{ForgettingModel, SlidingWindowModel};
use mvdist::moments::{Divisor, MomentAccumulator};
use mvdist::{DistanceModel, Scatter};
use ndarray::{s, Array2};

fn replayed_rows(total: usize, p: usize) -> Array2<f64> {
    let f = common::fixture("breast_cancer_distances.json");
    let x = common::matrix(&f["data"]);
    let n = x.nrows();
    // A slow drift on top of the replayed rows, so that old rows matter.
    Array2::from_shape_fn((total, p), |(i, j)| {
        x[(i % n, j)] * (1.0 + 0.2 * (i as f64 / total as f64))
    })
}

fn max_rel(a: &[f64], b: &[f64]) -> f64 {
    let scale = b.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    a.iter()
        .zip(b)
        .fold(0.0f64, |m, (x, y)| m.max((x - y).abs() / scale))
}

fn fresh_factor(cov: &Array2<f64>) -> Vec<f64> {
    Scatter::new(cov.view())
        .unwrap()
        .factor()
        .iter()
        .copied()
        .collect()
}

#[test]
fn forgetting_factor_matches_a_fresh_factorization_after_a_million_updates() {
    let (total, p, lambda) = (1_000_000, 8, 0.999);
    let x = replayed_rows(total, p);
    for refactor_every in [mvdist::drift::DEFAULT_REFACTOR_EVERY, u64::MAX] {
        let mut model = ForgettingModel::new(p, lambda)
            .unwrap()
            .with_refactor_every(refactor_every);
        for row in x.outer_iter() {
            model.update(row.as_slice().unwrap()).unwrap();
        }
        // Direct computation: weights λ^(N−1−i), centred two-pass batch moments.
        let weights: Vec<f64> = (0..total)
            .map(|i| lambda.powi((total - 1 - i) as i32))
            .collect();
        let acc = MomentAccumulator::from_weighted_rows(x.view(), &weights).unwrap();
        let cov = acc.covariance(Divisor::Unbiased).unwrap();
        let e = max_rel(&model.covariance_factor().unwrap(), &fresh_factor(&cov));
        assert!(e < 1e-9, "refactor every {refactor_every}: {e:e}");
        let m = max_rel(model.location(), acc.mean());
        assert!(m < 1e-12, "{m:e}");
        assert!((model.effective_sample_size() - (1.0 + lambda) / (1.0 - lambda)).abs() < 1e-6);
    }
}

#[test]
fn sliding_window_matches_a_fresh_fit_of_its_rows_after_a_million_updates() {
    let (total, p, w) = (1_000_000, 8, 500);
    let x = replayed_rows(total, p);
    let mut model = SlidingWindowModel::new(p, w).unwrap();
    for row in x.outer_iter() {
        model.update(row.as_slice().unwrap()).unwrap();
    }
    let last = x.slice(s![total - w.., ..]);
    let fresh = DistanceModel::fit(last).unwrap();
    let e = max_rel(
        &model.covariance_factor().unwrap(),
        &fresh.scatter().factor().iter().copied().collect::<Vec<_>>(),
    );
    assert!(e < 1e-9, "{e:e}");
    for i in [0, 17, 499] {
        let row = last.row(i).to_vec();
        let a = model.squared_distance(&row).unwrap();
        let b = fresh.squared_distance(&row).unwrap();
        assert!((a - b).abs() < 1e-9 * b, "{a} vs {b}");
    }
    let snap = model.snapshot().unwrap();
    assert_eq!(snap.sample_size(), w);
}

#[test]
fn drifting_models_refuse_to_score_until_ready_and_check_input() {
    let mut f = ForgettingModel::new(3, 0.9).unwrap();
    let mut w = SlidingWindowModel::new(3, 10).unwrap();
    assert!(f.squared_distance(&[0.0, 0.0, 0.0]).is_err());
    assert!(w.squared_distance(&[0.0, 0.0, 0.0]).is_err());
    // A constant column keeps the scatter singular: no panic, no score.
    for k in 0..50 {
        let r = [k as f64, (k * k % 7) as f64, 1.0];
        f.update(&r).unwrap();
        w.update(&r).unwrap();
    }
    assert!(!f.is_ready());
    assert!(f.squared_distance(&[0.0, 0.0, 1.0]).is_err());
    assert!(w.score_row(&[0.0, 0.0, 1.0], 0.01).is_err());
    assert!(f.update(&[f64::NAN, 0.0, 0.0]).is_err());
    assert!(w.update(&[1.0, 2.0]).is_err());
    assert!(ForgettingModel::new(3, 1.5).is_err());
    assert!(SlidingWindowModel::new(3, 4).is_err());
}

#[test]
fn saved_drift_models_resume_where_they_stopped() {
    // Save mid-stream, load, feed both the same further rows: scores agree
    // to rounding (the loaded model refactorizes once; the running one
    // carries its updated factor), and the window's rows and mean agree
    // exactly with a model that saw only the window.
    let x = replayed_rows(3000, 8);
    let mut forgetting = ForgettingModel::new(8, 0.99).unwrap();
    let mut window = SlidingWindowModel::new(8, 300).unwrap();
    for r in x.outer_iter().take(2000) {
        forgetting.update(r.as_slice().unwrap()).unwrap();
        window.update(r.as_slice().unwrap()).unwrap();
    }
    let f_json = serde_json::to_string(&forgetting).unwrap();
    let w_json = serde_json::to_string(&window).unwrap();
    assert!(f_json.contains("\"format\":\"mvdist-drift-model\""));
    let mut f_back: ForgettingModel = serde_json::from_str(&f_json).unwrap();
    let mut w_back: SlidingWindowModel = serde_json::from_str(&w_json).unwrap();
    assert_eq!(w_back.len(), 300);
    for r in x.outer_iter().skip(2000) {
        let r = r.as_slice().unwrap();
        let (a, b) = (
            forgetting.squared_distance(r).unwrap(),
            f_back.squared_distance(r).unwrap(),
        );
        assert!((a - b).abs() <= 1e-9 * a.max(1.0), "{a} {b}");
        let (a, b) = (
            window.squared_distance(r).unwrap(),
            w_back.squared_distance(r).unwrap(),
        );
        assert!((a - b).abs() <= 1e-9 * a.max(1.0), "{a} {b}");
        for m in [&mut forgetting, &mut f_back] {
            m.update(r).unwrap();
        }
        window.update(r).unwrap();
        w_back.update(r).unwrap();
    }
    assert_eq!(forgetting.count(), f_back.count());
}

#[test]
fn loading_a_drift_model_checks_it() {
    let mut m = ForgettingModel::new(2, 0.9).unwrap();
    for k in 0..20 {
        let t = k as f64;
        m.update(&[t.sin(), t.cos() + 0.1 * t]).unwrap();
    }
    let json = serde_json::to_string(&m).unwrap();
    let newer = json.replace("\"format_version\":1", "\"format_version\":7");
    let e = serde_json::from_str::<ForgettingModel>(&newer).unwrap_err();
    assert!(e.to_string().contains("newer than this build"), "{e}");
    let mut value: serde_json::Value = serde_json::from_str(&json).unwrap();
    value["comoment"][1] = serde_json::json!(123.0);
    let e = serde_json::from_value::<ForgettingModel>(value).unwrap_err();
    assert!(e.to_string().contains("not symmetric"), "{e}");
    // Weights that do not follow from λ and the row count make a wrong
    // model (a negative denominator, or a χ²-like reference): refused.
    let mut value: serde_json::Value = serde_json::from_str(&json).unwrap();
    value["weight_sq_sum"] = serde_json::json!(1e6);
    let e = serde_json::from_value::<ForgettingModel>(value).unwrap_err();
    assert!(e.to_string().contains("do not follow"), "{e}");
    let mut value: serde_json::Value = serde_json::from_str(&json).unwrap();
    value["count"] = serde_json::json!(u64::MAX);
    assert!(serde_json::from_value::<ForgettingModel>(value).is_err());
    // A window model is not a forgetting model.
    let w = SlidingWindowModel::new(2, 10).unwrap();
    let wj = serde_json::to_string(&w).unwrap();
    assert!(serde_json::from_str::<ForgettingModel>(&wj).is_err());
    let mut value: serde_json::Value = serde_json::from_str(&wj).unwrap();
    value["rows"] = serde_json::json!([1.0, 2.0, 3.0]);
    assert!(serde_json::from_value::<SlidingWindowModel>(value).is_err());
}
