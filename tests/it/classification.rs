//! Classification checked against values computed outside this project, and
//! leave-one-out checked against brute-force refitting.
//!
//! Fixtures: `tests/fixtures/classification_{iris,wine}.json`, written by
//! `tests/reference/make_classification_fixtures.py` (numpy 2.4.6, scipy
//! 1.17.1, scikit-learn 1.9.1) from the iris and wine datasets bundled with
//! scikit-learn.

use crate::common;
use crate::common::{fixture, matrix, rel};
use mvdist::classification::{
    Classifier, ClassifierOptions, LeaveOneOut, PredictOptions, Priors, Rule,
};
use mvdist::{Divisor, Error};
use ndarray::{Array2, Axis};
use serde_json::Value;

struct Dataset {
    name: &'static str,
    f: Value,
    x: Array2<f64>,
    labels: Vec<usize>,
}

fn dataset(name: &'static str) -> Dataset {
    let f = fixture(&format!("classification_{name}.json"));
    let x = matrix(&f["data"]);
    let labels = f["labels"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_u64().unwrap() as usize)
        .collect();
    Dataset { name, f, x, labels }
}

fn priors(key: &str, given: &Value) -> Priors<usize> {
    match key {
        "equal" => Priors::Equal,
        "proportional" => Priors::Proportional,
        _ => Priors::Given(
            common::vector(given)
                .into_iter()
                .enumerate()
                .collect::<Vec<_>>(),
        ),
    }
}

const PRIOR_KEYS: [&str; 3] = ["equal", "proportional", "given"];

#[test]
fn posteriors_match_scikit_learn_discriminant_analysis() {
    // Source: sklearn 1.9.1 LinearDiscriminantAnalysis(solver="svd") and
    // QuadraticDiscriminantAnalysis(reg_param=0), predict_proba and predict
    // on every training row. Both normalize covariances by n (pooled) and
    // n_g (per class), i.e. Divisor::MaximumLikelihood.
    for name in ["iris", "wine"] {
        let d = dataset(name);
        for key in PRIOR_KEYS {
            let sk = &d.f["sklearn"][key];
            for (rule, tag) in [(Rule::Linear, "lda"), (Rule::Quadratic, "qda")] {
                let options = ClassifierOptions::new(rule)
                    .with_priors(priors(key, &sk["priors"]))
                    .with_divisor(Divisor::MaximumLikelihood);
                let c = Classifier::fit(d.x.view(), &d.labels, &options).unwrap();
                let out = c.predict(d.x.view()).unwrap();
                let want = matrix(&sk[format!("{tag}_posteriors")]);
                let worst = out
                    .posteriors()
                    .iter()
                    .zip(want.iter())
                    .map(|(a, b)| (a - b).abs())
                    .fold(0.0, f64::max);
                assert!(worst < 1e-12, "{} {key} {tag}: worst {worst:e}", d.name);
                let predicted: Vec<usize> = sk[format!("{tag}_predict")]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(|v| v.as_u64().unwrap() as usize)
                    .collect();
                assert_eq!(
                    out.assigned(),
                    predicted.as_slice(),
                    "{} {key} {tag}",
                    d.name
                );
                eprintln!(
                    "{} {key} {tag}: max |posterior difference| {worst:.2e}",
                    d.name
                );
            }
        }
    }
}

#[test]
fn default_divisor_matches_numpy_scipy_distances_posteriors_and_typicality() {
    // Source: scipy.linalg.cho_solve on the unbiased pooled / per-group
    // covariances, scipy.special.logsumexp, scipy.stats.f.sf of the
    // documented typicality statistics (see the generator script).
    for name in ["iris", "wine"] {
        let d = dataset(name);
        for key in PRIOR_KEYS {
            let reference = &d.f["unbiased"][key];
            for (rule, tag) in [(Rule::Linear, "linear"), (Rule::Quadratic, "quadratic")] {
                let options = ClassifierOptions::new(rule)
                    .with_priors(priors(key, &d.f["sklearn"][key]["priors"]));
                let c = Classifier::fit(d.x.view(), &d.labels, &options).unwrap();
                let out = c.predict(d.x.view()).unwrap();
                let want_d2 = matrix(&reference[format!("{tag}_d2")]);
                let want_post = matrix(&reference[format!("{tag}_posteriors")]);
                let want_typ = matrix(&reference[format!("{tag}_typicality")]);
                let mut worst = [0.0f64; 3];
                for i in 0..d.x.nrows() {
                    for g in 0..3 {
                        let d2 = out.squared_distances()[(i, g)];
                        worst[0] = worst[0].max(rel(d2, want_d2[(i, g)]));
                        worst[1] =
                            worst[1].max((out.posteriors()[(i, g)] - want_post[(i, g)]).abs());
                        let t = c.typicality_reference(g).unwrap().p_value(d2);
                        worst[2] = worst[2].max(rel(t, want_typ[(i, g)]));
                    }
                    let g = out.assigned()[i];
                    assert_eq!(
                        out.typicality()[i],
                        c.typicality_reference(g)
                            .unwrap()
                            .p_value(out.squared_distances()[(i, g)])
                    );
                }
                assert!(
                    worst[0] < 1e-10,
                    "{} {key} {tag}: d2 {:e}",
                    d.name,
                    worst[0]
                );
                assert!(
                    worst[1] < 1e-12,
                    "{} {key} {tag}: posteriors {:e}",
                    d.name,
                    worst[1]
                );
                assert!(
                    worst[2] < 1e-9,
                    "{} {key} {tag}: typicality {:e}",
                    d.name,
                    worst[2]
                );
            }
        }
    }
}

#[test]
fn discriminant_directions_match_scikit_learn() {
    // Source: sklearn 1.9.1 LinearDiscriminantAnalysis(solver="svd"),
    // explained_variance_ratio_ and scalings_ (unit ML pooled within
    // variance, so compared with Divisor::MaximumLikelihood; signs are
    // arbitrary in both).
    for name in ["iris", "wine"] {
        let d = dataset(name);
        let options = ClassifierOptions::new(Rule::Linear).with_divisor(Divisor::MaximumLikelihood);
        let c = Classifier::fit(d.x.view(), &d.labels, &options).unwrap();
        let dirs = c.discriminant_directions().unwrap();
        let shares = common::vector(&d.f["lda_explained_variance_ratio"]);
        assert_eq!(dirs.shares().len(), 2);
        for (a, b) in dirs.shares().iter().zip(&shares) {
            assert!((a - b).abs() < 1e-10, "{name}: shares {a} {b}");
        }
        let want = matrix(&d.f["lda_scalings"]);
        for k in 0..2 {
            let ours = dirs.directions().column(k).to_owned();
            let theirs = want.column(k).to_owned();
            let sign = if ours.dot(&theirs) < 0.0 { -1.0 } else { 1.0 };
            let scale = theirs.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            for (a, b) in ours.iter().zip(theirs.iter()) {
                assert!(
                    (sign * a - b).abs() < 1e-9 * scale,
                    "{name} direction {k}: {a} {b}"
                );
            }
        }
        // The default divisor gives the same directions scaled by
        // sqrt((n − G)/n) and the same shares.
        let unbiased =
            Classifier::fit(d.x.view(), &d.labels, &ClassifierOptions::new(Rule::Linear))
                .unwrap()
                .discriminant_directions()
                .unwrap();
        let n = d.x.nrows() as f64;
        let f = ((n - 3.0) / n).sqrt();
        for (a, b) in unbiased.directions().iter().zip(dirs.directions().iter()) {
            assert!((a - f * b).abs() < 1e-10 * b.abs().max(1e-3));
        }
        // Projected rows have unit pooled within-group variance.
        let z = unbiased.project(d.x.view()).unwrap();
        let u =
            Classifier::fit(z.view(), &d.labels, &ClassifierOptions::new(Rule::Linear)).unwrap();
        let s = u.pooled_scatter().unwrap().matrix();
        assert!((s[(0, 0)] - 1.0).abs() < 1e-10 && (s[(1, 1)] - 1.0).abs() < 1e-10);
    }
}

/// The classifier fitted without row `i`, predicting row `i`.
fn brute_force(
    x: &Array2<f64>,
    labels: &[usize],
    options: &ClassifierOptions<usize>,
    i: usize,
) -> (Vec<f64>, Vec<f64>) {
    let keep: Vec<usize> = (0..x.nrows()).filter(|&j| j != i).collect();
    let xs = x.select(Axis(0), &keep);
    let ls: Vec<usize> = keep.iter().map(|&j| labels[j]).collect();
    let c = Classifier::fit(xs.view(), &ls, options).unwrap();
    let p = c.predict_row(x.row(i).as_slice().unwrap()).unwrap();
    // The refit keeps the group order as long as no group's first row is
    // the one left out; map by label to be safe.
    let mut d2 = vec![0.0; 3];
    let mut post = vec![0.0; 3];
    for (g, l) in c.labels().iter().enumerate() {
        d2[*l] = p.squared_distances[g];
        post[*l] = p.posteriors[g];
    }
    (d2, post)
}

#[test]
fn leave_one_out_equals_brute_force_refitting() {
    for name in ["iris", "wine"] {
        let d = dataset(name);
        for rule in [Rule::Linear, Rule::Quadratic] {
            for divisor in [Divisor::Unbiased, Divisor::MaximumLikelihood] {
                for key in ["equal", "proportional"] {
                    let options = ClassifierOptions::new(rule)
                        .with_priors(priors(key, &Value::Null))
                        .with_divisor(divisor);
                    let loo = LeaveOneOut::estimate(d.x.view(), &d.labels, &options).unwrap();
                    let mut worst: f64 = 0.0;
                    let mut errors = 0;
                    for i in 0..d.x.nrows() {
                        let (d2, post) = brute_force(&d.x, &d.labels, &options, i);
                        for g in 0..3 {
                            worst = worst.max(rel(loo.squared_distances()[(i, g)], d2[g]));
                            worst = worst.max((loo.posteriors()[(i, g)] - post[g]).abs());
                        }
                        let best = (0..3).fold(0, |b, g| if post[g] > post[b] { g } else { b });
                        assert_eq!(loo.assigned()[i], best);
                        errors += usize::from(best != d.labels[i]);
                    }
                    assert!(worst < 1e-9, "{name} {rule:?} {divisor:?} {key}: {worst:e}");
                    assert_eq!(loo.confusion().total(), d.x.nrows() as u64);
                    let rate = errors as f64 / d.x.nrows() as f64;
                    assert_eq!(loo.error_rate(), rate);
                    eprintln!("{name} {rule:?} {divisor:?} {key}: LOO error {rate:.4}, max difference from refits {worst:.1e}");
                }
            }
        }
    }
}

#[test]
fn resubstitution_and_leave_one_out_on_iris() {
    // Fisher's iris with the linear rule: 3 of 150 rows misclassified both
    // by resubstitution and leave-one-out (a frequently quoted result for
    // this dataset, recalled from memory; the brute-force test above checks
    // our leave-one-out independently).
    let d = dataset("iris");
    let options = ClassifierOptions::new(Rule::Linear);
    let c = Classifier::fit(d.x.view(), &d.labels, &options).unwrap();
    let resub = c.confusion_matrix(d.x.view(), &d.labels).unwrap();
    let loo = LeaveOneOut::estimate(d.x.view(), &d.labels, &options).unwrap();
    assert_eq!(resub.total(), 150);
    assert_eq!(resub.total() - resub.correct(), 3);
    assert_eq!(loo.confusion().total() - loo.confusion().correct(), 3);
    assert!(loo.error_rate() >= resub.error_rate());
}

#[test]
fn no_group_flags_rows_far_from_every_group() {
    let d = dataset("iris");
    let c = Classifier::fit(
        d.x.view(),
        &d.labels,
        &ClassifierOptions::new(Rule::Quadratic),
    )
    .unwrap();
    let far = ndarray::array![[5.0, 3.4, 1.5, 0.2], [30.0, -4.0, 12.0, 9.0]];
    let mut out = mvdist::classification::Predictions::new();
    c.predict_into(
        far.view(),
        &PredictOptions::default().with_no_group_below(0.001),
        &mut out,
    )
    .unwrap();
    assert_eq!(out.no_group(), &[false, true]);
    // Consistent with the typicality of each group.
    for i in 0..2 {
        let best = (0..3)
            .map(|g| {
                c.typicality_reference(g)
                    .unwrap()
                    .p_value(out.squared_distances()[(i, g)])
            })
            .fold(0.0, f64::max);
        assert_eq!(out.no_group()[i], best < 0.001);
    }
    // Posteriors alone would be confident about the far row.
    assert!(out.posteriors().row(1).iter().any(|&p| p > 0.99));
}

#[test]
fn typed_errors_name_the_group_row_or_column() {
    let d = dataset("iris");
    let one_group = vec![7usize; d.x.nrows()];
    assert_eq!(
        Classifier::fit(
            d.x.view(),
            &one_group,
            &ClassifierOptions::new(Rule::Linear)
        )
        .unwrap_err(),
        Error::TooFewGroups { found: 1 }
    );
    // A group with 4 rows for 4 variables: too small for its own scatter.
    let mut small = d.labels.clone();
    for l in small.iter_mut().take(4) {
        *l = 9;
    }
    assert_eq!(
        Classifier::fit(d.x.view(), &small, &ClassifierOptions::new(Rule::Quadratic)).unwrap_err(),
        Error::SmallGroup {
            group: 0,
            rows: 4,
            needed: 5
        }
    );
    // The linear rule copes with it; leave-one-out too.
    let c = Classifier::fit(d.x.view(), &small, &ClassifierOptions::new(Rule::Linear)).unwrap();
    assert_eq!(c.counts()[0], 4);
    // A variable constant within one group: that group's scatter is singular.
    let mut x = d.x.clone();
    for i in 50..100 {
        x[(i, 2)] = 4.0;
    }
    match Classifier::fit(
        x.view(),
        &d.labels,
        &ClassifierOptions::new(Rule::Quadratic),
    ) {
        Err(Error::InGroup { group: 1, cause }) => {
            assert_eq!(*cause, Error::ZeroVariance { column: 2 })
        }
        other => panic!("unexpected {other:?}"),
    }
    // Unknown label when assessing accuracy.
    let c = Classifier::fit(d.x.view(), &d.labels, &ClassifierOptions::new(Rule::Linear)).unwrap();
    let mut wrong = d.labels.clone();
    wrong[17] = 5;
    assert_eq!(
        c.confusion_matrix(d.x.view(), &wrong).unwrap_err(),
        Error::UnknownGroup { row: 17 }
    );
    // Mismatched columns.
    let narrow = d.x.slice(ndarray::s![.., ..3]);
    assert!(matches!(
        c.predict(narrow).unwrap_err(),
        Error::ShapeMismatch {
            expected: 4,
            found: 3,
            ..
        }
    ));
    assert!(matches!(
        c.predict_row(&[1.0, 2.0]).unwrap_err(),
        Error::ShapeMismatch { .. }
    ));
    // Non-finite values name the row and column.
    let mut bad = d.x.clone();
    bad[(3, 1)] = f64::NAN;
    assert!(matches!(
        c.predict(bad.view()).unwrap_err(),
        Error::NonFinite {
            row: 3,
            column: 1,
            ..
        }
    ));
    // Priors must cover every group.
    let partial =
        ClassifierOptions::new(Rule::Linear).with_priors(Priors::Given(vec![(0, 0.5), (1, 0.5)]));
    assert!(matches!(
        Classifier::fit(d.x.view(), &d.labels, &partial).unwrap_err(),
        Error::InvalidParameter { name: "priors", .. }
    ));
    // Messages name the group.
    let msg = Error::SmallGroup {
        group: 2,
        rows: 3,
        needed: 5,
    }
    .to_string();
    assert!(msg.contains("group 2") && msg.contains("3 row"));
}
