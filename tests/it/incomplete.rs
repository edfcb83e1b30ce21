//! Rows with empty cells: observed-coordinate scores and the EM fit.

use crate::common::{fixture, matrix, rel, Rng};
use mvdist::incomplete::{expectation_maximization, EmOptions};
use mvdist::{ContributionOrder, DistanceModel, Divisor, Error, FitMethod, RowOrigin};
use ndarray::{array, Array2, Axis};

const NAN: f64 = f64::NAN;

fn cells(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_f64().unwrap_or(NAN))
        .collect()
}

/// numpy's squared distance on the observed sub-matrix and scipy's F
/// p-value with p_o variables (tests/reference/make_observed_fixtures.py,
/// iris from scikit-learn).
#[test]
fn observed_distances_match_numpy_on_the_sub_matrix() {
    let f = fixture("observed_distances.json");
    let data = matrix(&f["data"]);
    let model = DistanceModel::fit(data.view()).unwrap();
    let cases = f["cases"].as_array().unwrap();
    let mut batch = Array2::zeros((cases.len(), 4));
    for (i, case) in cases.iter().enumerate() {
        let x = cells(&case["values"]);
        batch.row_mut(i).assign(&ndarray::Array1::from(x.clone()));
        let want = case["squared_distance"].as_f64().unwrap();
        let got = model.score_row_observed(&x, RowOrigin::New, 0.01).unwrap();
        assert!(rel(got.squared_distance, want) < 1e-12, "{case}: {got:?}");
        let p = case["p_value_new"].as_f64().unwrap();
        assert!(
            rel(got.p_value, p) < 1e-10,
            "{case}: {} vs {p}",
            got.p_value
        );
        let observed = case["observed"].as_array().unwrap().len();
        assert_eq!(got.observed, observed);
    }
    let scores = model.score_observed(batch.view(), RowOrigin::New).unwrap();
    assert_eq!(scores.patterns, cases.len());
    for (i, case) in cases.iter().enumerate() {
        let want = case["squared_distance"].as_f64().unwrap();
        assert!(rel(scores.squared_distances[i], want) < 1e-12);
    }
    // A complete row scores as the ordinary distance.
    let last = cells(&cases[4]["values"]);
    assert!(
        rel(
            scores.squared_distances[4],
            model.squared_distance(&last).unwrap()
        ) < 1e-14
    );
}

/// Checks that do not share our reading of the formula: (1) a classical fit
/// on the observed columns alone has exactly the principal sub-matrix as
/// its covariance, so its distance must agree; (2) the observed-part
/// distance is the minimum of the full distance over the empty cells
/// (the marginal is the profile of the joint quadratic form).
#[test]
fn observed_distance_equals_the_fit_on_observed_columns_and_the_profile_minimum() {
    let f = fixture("observed_distances.json");
    let data = matrix(&f["data"]);
    let model = DistanceModel::fit(data.view()).unwrap();
    let x = [5.9, NAN, 5.1, NAN];
    let got = model.score_row_observed(&x, RowOrigin::New, 0.05).unwrap();
    let sub = data.select(Axis(1), &[0, 2]);
    let sub_model = DistanceModel::fit(sub.view()).unwrap();
    let direct = sub_model
        .score_row(&[5.9, 5.1], RowOrigin::New, 0.05)
        .unwrap();
    assert!(rel(got.squared_distance, direct.squared_distance) < 1e-12);
    assert!(rel(got.p_value, direct.p_value) < 1e-12);
    // Profile minimum over a grid refined around the best point.
    let (mut b1, mut b3) = (3.0, 1.2);
    let mut step = 0.5;
    let mut best = f64::INFINITY;
    for _ in 0..60 {
        let mut improved = (b1, b3);
        for d1 in [-step, 0.0, step] {
            for d3 in [-step, 0.0, step] {
                let v = model
                    .squared_distance(&[5.9, b1 + d1, 5.1, b3 + d3])
                    .unwrap();
                if v < best {
                    best = v;
                    improved = (b1 + d1, b3 + d3);
                }
            }
        }
        if improved == (b1, b3) {
            step /= 2.0;
        }
        (b1, b3) = improved;
    }
    assert!(rel(best, got.squared_distance) < 1e-9, "{best} vs {got:?}");
    // Explanations on the observed variables add up and name model columns.
    let why = model
        .explain_observed(&x, ContributionOrder::LargestFirst)
        .unwrap();
    assert_eq!(why.observed(), &[0, 2]);
    assert!(rel(why.total(), got.squared_distance) < 1e-12);
    assert!([0, 2].contains(&why.top_variable()));
}

#[test]
fn observed_scores_refuse_bad_rows() {
    let rows = array![[1.0, 2.0], [2.0, 2.9], [3.0, 4.2], [4.0, 4.8], [5.0, 6.1]];
    let model = DistanceModel::fit(rows.view()).unwrap();
    let e = model
        .score_row_observed(&[NAN, NAN], RowOrigin::New, 0.05)
        .unwrap_err();
    assert!(e.to_string().contains("no observed value"), "{e}");
    let batch = array![[1.0, NAN], [NAN, NAN]];
    let e = model
        .score_observed(batch.view(), RowOrigin::New)
        .unwrap_err();
    assert!(e.to_string().contains("row 1"), "{e}");
    let batch = array![[1.0, f64::INFINITY]];
    assert!(matches!(
        model.score_observed(batch.view(), RowOrigin::New),
        Err(Error::NonFinite {
            row: 0,
            column: 1,
            ..
        })
    ));
    assert!(matches!(
        model.score_observed(array![[1.0, 2.0, 3.0]].view(), RowOrigin::New),
        Err(Error::ShapeMismatch { .. })
    ));
}

fn correlated_rows(rng: &mut Rng, n: usize, p: usize) -> Array2<f64> {
    Array2::from_shape_fn((n, p), |_| rng.normal()).dot(&Array2::from_shape_fn((p, p), |(i, j)| {
        if j >= i {
            1.0 / (1.0 + (j - i) as f64)
        } else {
            0.0
        }
    })) + 10.0
}

/// Without empty cells the EM estimate is the complete-data maximum
/// likelihood fit (mean, covariance with divisor n) after one step.
#[test]
fn em_without_gaps_is_the_complete_data_fit() {
    let mut rng = Rng(11);
    let rows = correlated_rows(&mut rng, 300, 5);
    let fit = expectation_maximization(rows.view(), &EmOptions::default()).unwrap();
    let classical =
        DistanceModel::fit_with_divisor(rows.view(), Divisor::MaximumLikelihood).unwrap();
    for (a, b) in fit.location().iter().zip(classical.location()) {
        assert!(rel(*a, *b) < 1e-13);
    }
    let d = (&fit.scatter().matrix() - &classical.scatter().matrix())
        .iter()
        .fold(0.0f64, |m, v| m.max(v.abs()));
    assert!(d < 1e-12, "{d}");
    assert!(fit.converged());
    assert!(fit.iterations() <= 2, "{}", fit.iterations());
    assert_eq!(fit.missing_cells(), 0);
}

/// A monotone pattern (the first variable always observed, the second
/// only in the first `n₂` rows) has a closed-form maximum-likelihood
/// estimate (Anderson 1957; Little and Rubin 2002, section 7.2): the
/// first variable's mean and variance from all rows, the regression of the
/// second on the first from the complete rows.
#[test]
fn em_on_a_monotone_pattern_equals_the_closed_form() {
    let mut rng = Rng(5);
    let n = 200;
    let n2 = 120;
    let mut rows = correlated_rows(&mut rng, n, 2);
    for i in n2..n {
        rows[(i, 1)] = NAN;
    }
    let fit =
        expectation_maximization(rows.view(), &EmOptions::default().with_tolerance(1e-13)).unwrap();
    assert!(fit.converged());
    // Closed form.
    let x1: Vec<f64> = rows.column(0).to_vec();
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    let mu1 = mean(&x1);
    let s11 = x1.iter().map(|v| (v - mu1) * (v - mu1)).sum::<f64>() / n as f64;
    let c1: Vec<f64> = x1[..n2].to_vec();
    let c2: Vec<f64> = rows.column(1).iter().take(n2).copied().collect();
    let (m1, m2) = (mean(&c1), mean(&c2));
    let s11c = c1.iter().map(|v| (v - m1) * (v - m1)).sum::<f64>() / n2 as f64;
    let s12c = c1
        .iter()
        .zip(&c2)
        .map(|(a, b)| (a - m1) * (b - m2))
        .sum::<f64>()
        / n2 as f64;
    let s22c = c2.iter().map(|v| (v - m2) * (v - m2)).sum::<f64>() / n2 as f64;
    let beta = s12c / s11c;
    let resid = s22c - beta * s12c;
    let mu2 = m2 + beta * (mu1 - m1);
    let s12 = beta * s11;
    let s22 = resid + beta * beta * s11;
    let got = fit.scatter().matrix();
    assert!(rel(fit.location()[0], mu1) < 1e-12);
    assert!(
        rel(fit.location()[1], mu2) < 1e-9,
        "{} vs {mu2}",
        fit.location()[1]
    );
    assert!(rel(got[(0, 0)], s11) < 1e-9);
    assert!(rel(got[(0, 1)], s12) < 1e-8, "{} vs {s12}", got[(0, 1)]);
    assert!(rel(got[(1, 1)], s22) < 1e-8, "{} vs {s22}", got[(1, 1)]);
}

/// The observed-data log-likelihood never decreases (Dempster, Laird and
/// Rubin 1977, Theorem 1), and the estimate recovers the population
/// parameters under cells missing completely at random.
#[test]
fn em_log_likelihood_rises_and_the_fit_is_near_the_truth() {
    let mut rng = Rng(23);
    let (n, p) = (4000, 6);
    let mut rows = correlated_rows(&mut rng, n, p);
    let complete = rows.clone();
    let mut missing = 0;
    for v in rows.iter_mut() {
        if rng.uniform() < 0.15 {
            *v = NAN;
            missing += 1;
        }
    }
    // No row may be all empty (at 15% and p = 6 the chance is tiny, but
    // the seed decides): restore the first cell of any such row.
    for (i, mut r) in rows.outer_iter_mut().enumerate() {
        if r.iter().all(|v| v.is_nan()) {
            r[0] = complete[(i, 0)];
            missing -= 1;
        }
    }
    let model = DistanceModel::fit_incomplete(rows.view(), &EmOptions::default()).unwrap();
    let fit = expectation_maximization(rows.view(), &EmOptions::default()).unwrap();
    assert_eq!(fit.missing_cells(), missing);
    let ll = fit.log_likelihood();
    for w in ll.windows(2) {
        assert!(w[1] >= w[0] - 1e-9 * w[0].abs(), "{w:?}");
    }
    assert!(matches!(
        model.fit_method(),
        FitMethod::ExpectationMaximization {
            converged: true,
            ..
        }
    ));
    // Near the complete-data fit (both estimate the same parameters).
    let full = DistanceModel::fit(complete.view()).unwrap();
    for j in 0..p {
        let sd = full.scatter().matrix()[(j, j)].sqrt();
        assert!((model.location()[j] - full.location()[j]).abs() < 0.1 * sd);
    }
    // Scored on observed coordinates, the model's rows give p-values.
    let scores = model
        .score_observed(rows.view(), RowOrigin::InSample)
        .unwrap();
    assert!(scores.p_values.iter().all(|p| (0.0..=1.0).contains(p)));
    assert!(scores.patterns > 10);
}

#[test]
fn em_refuses_bad_input_naming_the_problem() {
    let opts = EmOptions::default();
    let rows = array![[1.0, 2.0], [NAN, NAN], [3.0, 1.0], [4.0, 3.0]];
    let e = expectation_maximization(rows.view(), &opts).unwrap_err();
    assert!(e.to_string().contains("row 1"), "{e}");
    let rows = array![[1.0, 2.0], [2.0, NAN], [3.0, NAN], [4.0, NAN], [5.0, 1.0]];
    let e = expectation_maximization(rows.view(), &opts).unwrap_err();
    assert!(
        e.to_string()
            .contains("column 1 is observed in only 2 rows"),
        "{e}"
    );
    let rows = array![[1.0, 2.0], [2.0, f64::NEG_INFINITY], [3.0, 1.0], [4.0, 3.0]];
    assert!(matches!(
        expectation_maximization(rows.view(), &opts),
        Err(Error::NonFinite {
            row: 1,
            column: 1,
            ..
        })
    ));
    let rows = array![[1.0, 2.0], [2.0, 3.0]];
    assert!(matches!(
        expectation_maximization(rows.view(), &opts),
        Err(Error::TooFewRows { .. })
    ));
    let rows = array![[1.0, 2.0], [1.0, 3.0], [1.0, NAN], [1.0, 5.0], [NAN, 1.0]];
    assert!(matches!(
        expectation_maximization(rows.view(), &opts),
        Err(Error::ZeroVariance { column: 0 })
    ));
    // An exact linear relation among the observed cells: collinear.
    let rows = array![[1.0, 2.0], [2.0, 4.0], [3.0, 6.0], [4.0, NAN], [5.0, 10.0]];
    assert!(matches!(
        expectation_maximization(rows.view(), &opts),
        Err(Error::Collinear { column: 1, .. })
    ));
    assert!(matches!(
        expectation_maximization(rows.view(), &opts.clone().with_tolerance(0.0)),
        Err(Error::InvalidParameter {
            name: "tolerance",
            ..
        })
    ));
    // The other estimators refuse gaps with the cell named.
    let rows = array![[1.0, 2.0], [2.0, NAN], [3.0, 1.0], [4.0, 3.0]];
    assert!(matches!(
        DistanceModel::fit(rows.view()),
        Err(Error::NonFinite {
            row: 1,
            column: 1,
            ..
        })
    ));
}

/// The EM estimate is the maximum of the observed-data log-likelihood,
/// found here independently by direct numerical maximization (scipy.optimize
/// BFGS + Nelder-Mead on scipy.stats.multivariate_normal.logpdf of each
/// row's observed sub-vector; tests/reference/make_em_fixture.py) on iris
/// with 60 cells emptied in a pattern that is not monotone.
#[test]
fn em_reaches_the_maximum_found_by_direct_optimization() {
    let f = fixture("em_iris_gaps.json");
    let rows: Vec<Vec<f64>> = f["data"].as_array().unwrap().iter().map(cells).collect();
    let (n, p) = (rows.len(), rows[0].len());
    let x = Array2::from_shape_vec((n, p), rows.concat()).unwrap();
    let fit =
        expectation_maximization(x.view(), &EmOptions::default().with_tolerance(1e-12)).unwrap();
    assert!(fit.converged());
    assert_eq!(fit.missing_cells(), 60);
    let ll_ref = f["log_likelihood"].as_f64().unwrap();
    let ll = *fit.log_likelihood().last().unwrap();
    // EM may only be higher (a better maximum), and by very little.
    assert!(ll >= ll_ref - 1e-9 * ll_ref.abs(), "{ll} vs {ll_ref}");
    assert!(rel(ll, ll_ref) < 1e-9, "{ll} vs {ll_ref}");
    let mean = crate::common::vector(&f["mean"]);
    let cov = matrix(&f["covariance"]);
    for (j, (a, b)) in fit.location().iter().zip(&mean).enumerate() {
        assert!(rel(*a, *b) < 1e-5, "{j}");
    }
    assert!(crate::common::matrix_rel(&fit.scatter().matrix().to_owned(), &cov) < 1e-5);
}
