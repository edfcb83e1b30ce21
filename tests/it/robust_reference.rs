//! Shrinkage and MCD against scikit-learn 1.9.1 on open datasets
//! (fixtures from `tests/reference/make_robust_fixtures.py`), and
//! hand-checkable cases of the papers' formulas.

use crate::common;
use crate::common::{matrix, matrix_rel, rel, vector};
use mvdist::robust::{consistency_factor, minimum_covariance_determinant, McdOptions};
use mvdist::shrinkage::{ledoit_wolf, oas, shrink, OasFormula, ShrinkageTarget};
use mvdist::{DistanceModel, FitMethod, Reference, RowOrigin};
use ndarray::{array, Array2};
use serde_json::Value;

const SHRINKAGE_DATASETS: [&str; 5] = [
    "breast_cancer",
    "wine",
    "diabetes",
    "iris",
    "breast_cancer_first_20_rows",
];

fn datasets() -> Value {
    common::fixture("robust_reference.json")["datasets"].clone()
}

fn check_fit(
    name: &str,
    what: &str,
    fit: &mvdist::shrinkage::ShrinkageFit,
    d: &Value,
    expected: &Value,
) {
    let want_cov = matrix(&expected["covariance"]);
    let got = fit.scatter().matrix().to_owned();
    let cov_err = matrix_rel(&got, &want_cov);
    let rho = expected["shrinkage"].as_f64().unwrap();
    let rho_err = rel(fit.intensity(), rho);
    // Mean error in units of each column's standard deviation (diabetes
    // columns have means of order 1e-17).
    let mean = vector(&d["mean"]);
    let mean_err = fit
        .location()
        .iter()
        .zip(&mean)
        .enumerate()
        .map(|(j, (a, b))| (a - b).abs() / want_cov[(j, j)].sqrt())
        .fold(0.0f64, f64::max);
    eprintln!("{name} {what}: covariance {cov_err:.1e}, intensity {rho_err:.1e}");
    assert!(
        cov_err < 1e-10 && rho_err < 1e-10 && mean_err < 1e-12,
        "{name} {what}: covariance {cov_err:e}, intensity {rho_err:e} ({} vs {rho}), mean {mean_err:e}",
        fit.intensity()
    );
}

/// Ledoit–Wolf and OAS (scikit-learn's formula) match
/// `sklearn.covariance.ledoit_wolf` / `oas` 1.9.1 to 1e-10 relative on
/// breast cancer, wine, diabetes, iris and a 20-row (p = 30 > n) slice of
/// breast cancer; OAS with the published formula matches Eq. 23 of Chen et
/// al. (2010) evaluated in numpy; a fixed intensity matches
/// `ShrunkCovariance(shrinkage=0.3)`.
#[test]
fn shrinkage_matches_scikit_learn() {
    let all = datasets();
    for name in SHRINKAGE_DATASETS {
        let d = &all[name];
        let x = matrix(&d["data"]);
        check_fit(
            name,
            "ledoit_wolf",
            &ledoit_wolf(x.view()).unwrap(),
            d,
            &d["ledoit_wolf"],
        );
        check_fit(
            name,
            "oas (sklearn)",
            &oas(x.view(), OasFormula::WithoutTwoOverP).unwrap(),
            d,
            &d["oas_sklearn"],
        );
        check_fit(
            name,
            "oas (Eq. 23)",
            &oas(x.view(), OasFormula::Published).unwrap(),
            d,
            &d["oas_published"],
        );
        check_fit(
            name,
            "shrunk 0.3",
            &shrink(x.view(), 0.3, ShrinkageTarget::ScaledIdentity).unwrap(),
            d,
            &d["shrunk_identity_0_3"],
        );
    }
}

#[test]
fn shrinkage_with_more_variables_than_rows_is_positive_definite_and_scores() {
    let d = &datasets()["breast_cancer_first_20_rows"];
    let x = matrix(&d["data"]);
    assert!(DistanceModel::fit(x.view()).is_err());
    for model in [
        DistanceModel::fit_ledoit_wolf(x.view()).unwrap(),
        DistanceModel::fit_oas(x.view(), OasFormula::Published).unwrap(),
        DistanceModel::fit_shrunk(x.view(), 0.5, ShrinkageTarget::Diagonal).unwrap(),
    ] {
        assert!(model.scatter().log_determinant().is_finite());
        // F and Beta need n > p; χ² is still available.
        assert!(model.reference(RowOrigin::New).is_err());
        let s = model.score(x.view(), RowOrigin::KnownParameters).unwrap();
        assert!(s.p_values().iter().all(|p| (0.0..=1.0).contains(p)));
        let json = serde_json::to_string(&model).unwrap();
        assert_eq!(serde_json::from_str::<DistanceModel>(&json).unwrap(), model);
    }
}

/// Hand-checkable cases of the formulas (arithmetic in the comments).
#[test]
fn shrinkage_formulas_by_hand() {
    // Rows (±1, 0), (0, ±1): mean 0, S = I/2 = μI, so d² = 0 and every
    // intensity is moot; Ledoit–Wolf reports 0.
    let x = array![[1.0, 0.0], [0.0, 1.0], [-1.0, 0.0], [0.0, -1.0]];
    let lw = ledoit_wolf(x.view()).unwrap();
    assert_eq!(lw.intensity(), 0.0);
    // OAS (Eq. 23) there: tr S = 1, tr S² = 1/2, p = 2, n = 4:
    // num = (1 − 1)·1/2 + 1 = 1, den = (4 + 1 − 1)(1/2 − 1/2) = 0 → ρ = 1.
    assert_eq!(
        oas(x.view(), OasFormula::Published).unwrap().intensity(),
        1.0
    );

    // Rows (0,0), (2,0), (0,2), (2,2), (1,1)·… : take x = (0,0), (2,2), (2,0), (0,2)
    // plus (1,1) → mean (1,1); deviations (−1,−1), (1,1), (1,−1), (−1,1), (0,0).
    // S = (1/5)·[[4, 0], [0, 4]] = 0.8 I: again d² = 0.
    let y = array![[0.0, 0.0], [2.0, 2.0], [2.0, 0.0], [0.0, 2.0], [1.0, 1.0]];
    assert_eq!(ledoit_wolf(y.view()).unwrap().intensity(), 0.0);

    // A correlated case: rows (0,0), (1,1), (2,2), (3,1), (4,4); n = 5, p = 2.
    // mean (2, 1.6); deviations y_k: (−2,−1.6), (−1,−0.6), (0,0.4), (1,−0.6), (2,2.4).
    // Σ dx² = 10, Σ dx·dy = 3.2 + 0.6 + 0 − 0.6 + 4.8 = 8, Σ dy² = 9.2, so
    // S = [[2, 1.6], [1.6, 1.84]].
    // μ = (2 + 1.84)/2 = 1.92; d² = ‖S − μI‖²/p = (0.08² + 0.08² + 2·1.6²)/2 = 2.5664.
    // ‖y_k‖⁴: 6.56² = 43.0336, 1.36² = 1.8496, 0.16² = 0.0256, 1.36² = 1.8496,
    // 9.76² = 95.2576; Σ = 142.016. ‖S‖²_F = 4 + 2·2.56 + 3.3856 = 12.5056.
    // b̄² = (142.016/5 − 12.5056)/(5·2) = (28.4032 − 12.5056)/10 = 1.58976.
    // ρ = 1.58976 / 2.5664 = 0.619451… (scikit-learn 1.9.1: 0.6194513715710727).
    let z = array![[0.0, 0.0], [1.0, 1.0], [2.0, 2.0], [3.0, 1.0], [4.0, 4.0]];
    let lw = ledoit_wolf(z.view()).unwrap();
    let rho = 1.58976 / 2.5664;
    assert!((lw.intensity() - rho).abs() < 1e-13, "{}", lw.intensity());
    let s = lw.scatter().matrix();
    assert!((s[(0, 1)] - (1.0 - rho) * 1.6).abs() < 1e-13);
    assert!((s[(0, 0)] - ((1.0 - rho) * 2.0 + rho * 1.92)).abs() < 1e-13);
    // OAS Eq. 23 with tr S = 3.84, tr² S = 14.7456, tr S² = 12.5056, p = 2:
    // num = (1 − 1)·12.5056 + 14.7456 = 14.7456;
    // den = (5 + 1 − 1)(12.5056 − 14.7456/2) = 5·5.1328 = 25.664 → ρ = 0.574563…
    let o = oas(z.view(), OasFormula::Published).unwrap();
    assert!((o.intensity() - 14.7456 / 25.664).abs() < 1e-13);
    // Without the 2/p terms: num = 12.5056 + 14.7456 = 27.2512; den = 6·5.1328.
    let o2 = oas(z.view(), OasFormula::WithoutTwoOverP).unwrap();
    assert!((o2.intensity() - 27.2512 / (6.0 * 5.1328)).abs() < 1e-13);
    // Toward the diagonal with ρ = 0.25: off-diagonal 0.75·1.6, diagonal kept.
    let d = shrink(z.view(), 0.25, ShrinkageTarget::Diagonal).unwrap();
    assert!((d.scatter().matrix()[(0, 1)] - 1.2).abs() < 1e-14);
    assert!((d.scatter().matrix()[(1, 1)] - 1.84).abs() < 1e-14);
}

#[test]
fn shrinkage_errors_are_typed() {
    use mvdist::Error;
    let one = array![[1.0, 2.0]];
    assert!(matches!(
        ledoit_wolf(one.view()),
        Err(Error::TooFewRows { .. })
    ));
    let constant = array![[1.0, 2.0], [1.0, 3.0], [1.0, 5.0]];
    assert!(matches!(
        oas(constant.view(), OasFormula::Published),
        Err(Error::ZeroVariance { column: 0 })
    ));
    let bad = array![[1.0, 2.0], [f64::NAN, 3.0], [2.0, 5.0]];
    assert!(matches!(
        ledoit_wolf(bad.view()),
        Err(Error::NonFinite {
            row: 1,
            column: 0,
            ..
        })
    ));
    let x = array![[1.0, 2.0], [2.0, 3.0], [4.0, 1.0]];
    for bad in [-0.1, 1.1, f64::NAN] {
        assert!(shrink(x.view(), bad, ShrinkageTarget::Diagonal).is_err());
    }
    // Two rows: S has rank 1 and Ledoit–Wolf's intensity is 0 (every
    // y_k y_kᵀ equals S), so the result is singular: a typed error.
    let two = array![[1.0, 2.0, 0.0], [2.0, 1.0, 1.0]];
    assert!(ledoit_wolf(two.view()).is_err());
    // …while a fixed positive intensity toward μI is positive definite.
    assert!(shrink(two.view(), 0.1, ShrinkageTarget::ScaledIdentity).is_ok());
}

/// The consistency factor against scipy 1.17.1:
/// `c = a / chi2.cdf(chi2.ppf(a, p), p + 2)`.
#[test]
fn consistency_factor_matches_scipy() {
    // Values printed by scipy 1.17.1 for this test.
    for (p, a, want) in [
        (1usize, 0.5f64, 7.010074539703252f64),
        (4, 0.975, 1.06446585827907),
        (13, 96.0 / 178.0, 1.4011316172870467),
    ] {
        let got = consistency_factor(p, a).unwrap();
        assert!(rel(got, want) < 1e-10, "p = {p}, a = {a}: {got} vs {want}");
    }
}

fn mcd_settings(d: &Value, seed: u64) -> McdOptions {
    McdOptions::default()
        .with_support_fraction(d["mcd"]["support_fraction"].as_f64().unwrap())
        .with_seed(seed)
        .with_small_sample_replications(0)
}

/// The raw MCD objective (ln det of the h-subset's ML covariance) is never
/// worse than scikit-learn 1.9.1's `MinCovDet` (best of five seeds, same h)
/// on four open datasets; in fact it is strictly lower on all four (ln det
/// −193.41 vs −193.01 on breast cancer, −7.96 vs −7.49 on wine, −70.6586 vs
/// −70.6578 on diabetes, −9.86 vs −9.55 on iris). Where both find the same
/// subset the estimates agree to 1e-10: see
/// `stack_loss_matches_scikit_learn_at_its_subset_size`.
#[test]
fn mcd_objective_is_no_worse_than_scikit_learn() {
    let all = datasets();
    for name in ["breast_cancer", "wine", "diabetes", "iris"] {
        let d = &all[name];
        let x = matrix(&d["data"]);
        let m = &d["mcd"];
        let reference = m["raw_log_det"].as_f64().unwrap();
        for seed in [0u64, 1, 2] {
            let fit = minimum_covariance_determinant(x.view(), &mcd_settings(d, seed)).unwrap();
            assert_eq!(
                fit.subset_size(),
                m["subset_size"].as_u64().unwrap() as usize
            );
            let ours = fit.raw_log_determinant();
            assert!(
                ours <= reference + 1e-9 * reference.abs(),
                "{name} seed {seed}: ours {ours} vs scikit-learn {reference}"
            );
            // Measured: on all four datasets and seeds our subset is
            // strictly better, so the subsets differ and the estimates
            // cannot be compared entry by entry here; the stack loss
            // tests below compare them where the subsets coincide.
            assert!(
                ours < reference,
                "{name} seed {seed}: {ours} vs {reference}"
            );
        }
    }
}

#[test]
fn mcd_models_record_the_estimator_and_pick_the_reference() {
    let d = &datasets()["wine"];
    let x = matrix(&d["data"]);
    let fit = minimum_covariance_determinant(x.view(), &mcd_settings(d, 3)).unwrap();
    let model = fit.model().unwrap();
    match model.fit_method() {
        FitMethod::Mcd {
            stage,
            subset_size,
            seed,
            support_fraction,
            ..
        } => {
            assert_eq!(*stage, mvdist::robust::McdStage::Reweighted);
            assert_eq!(*subset_size, 96);
            assert_eq!(*seed, 3);
            assert!(support_fraction.is_some());
        }
        other => panic!("{other:?}"),
    }
    assert_eq!(
        model.reference(RowOrigin::New).unwrap(),
        Reference::chi_square(13).unwrap()
    );
    let raw = fit.raw_model().unwrap();
    assert_eq!(
        raw.reference(RowOrigin::InSample).unwrap(),
        Reference::raw_mcd(178, 13, 96).unwrap()
    );
    assert_eq!(
        raw.reference(RowOrigin::KnownParameters).unwrap(),
        Reference::chi_square(13).unwrap()
    );
    // The model file round trip keeps the estimator.
    let json = serde_json::to_string(&raw).unwrap();
    assert!(
        json.contains("\"kind\":\"mcd\"") && json.contains("\"stage\":\"raw\""),
        "{json}"
    );
    assert_eq!(serde_json::from_str::<DistanceModel>(&json).unwrap(), raw);
    // Same seed, same fit; the default seed is deterministic too.
    let again = minimum_covariance_determinant(x.view(), &mcd_settings(d, 3)).unwrap();
    assert_eq!(again, fit);
}

#[test]
fn mcd_errors_are_typed() {
    use mvdist::Error;
    let s = McdOptions::default().with_small_sample_replications(0);
    let few = Array2::from_shape_fn((3, 4), |(i, j)| (i * 4 + j) as f64);
    assert!(matches!(
        minimum_covariance_determinant(few.view(), &s),
        Err(Error::TooFewRows { .. })
    ));
    let constant = Array2::from_shape_fn((20, 3), |(i, j)| {
        if j == 1 {
            4.0
        } else {
            (i * (j + 3)) as f64 % 7.0
        }
    });
    assert!(matches!(
        minimum_covariance_determinant(constant.view(), &s),
        Err(Error::ZeroVariance { column: 1 })
    ));
    let x = Array2::from_shape_fn((20, 2), |(i, j)| ((i * (j + 2)) as f64 * 0.91).sin());
    // h = ⌊0.3·20⌋ = 6 < ⌊23/2⌋ = 11: out of range.
    let low = McdOptions::default().with_support_fraction(0.3);
    assert!(matches!(
        minimum_covariance_determinant(x.view(), &low),
        Err(Error::InvalidParameter { .. })
    ));
    // Options are checked where a fit uses them.
    for bad in [
        McdOptions::default().with_support_fraction(0.0),
        McdOptions::default().with_support_fraction(f64::NAN),
        McdOptions::default().with_starts(0),
    ] {
        assert!(matches!(
            minimum_covariance_determinant(x.view(), &bad),
            Err(Error::InvalidParameter { .. })
        ));
    }
    let mut nan = x.clone();
    nan[(5, 1)] = f64::INFINITY;
    assert!(matches!(
        minimum_covariance_determinant(nan.view(), &s),
        Err(Error::NonFinite {
            row: 5,
            column: 1,
            ..
        })
    ));
}

#[test]
fn exact_fit_reports_the_hyperplane() {
    use mvdist::Error;
    // 3 variables; 35 of 50 rows satisfy x₂ = x₀ − 2x₁ + 3.
    let x = Array2::from_shape_fn((50, 3), |(i, j)| {
        let t = i as f64;
        match j {
            0 => (t * 0.71).sin() * 5.0,
            1 => (t * 1.37).cos() * 3.0,
            _ if i < 35 => (t * 0.71).sin() * 5.0 - 2.0 * (t * 1.37).cos() * 3.0 + 3.0,
            _ => (t * 2.3).sin() * 40.0,
        }
    });
    let s = McdOptions::default().with_small_sample_replications(0);
    match minimum_covariance_determinant(x.view(), &s) {
        Err(Error::ExactFit { hyperplane }) => {
            assert!(hyperplane.rows().len() >= 35, "{:?}", hyperplane.rows());
            assert!((0..35).all(|i| hyperplane.rows().contains(&i)));
            let a = hyperplane.coefficients();
            // Proportional to (1, −2, −1) / √6.
            let k = 1.0 / 6f64.sqrt();
            let sign = a[0].signum();
            for (got, want) in a.iter().zip([k, -2.0 * k, -k]) {
                assert!((got - sign * want).abs() < 1e-9, "{a:?}");
            }
            assert!(hyperplane.residual(x.row(3).as_slice().unwrap()).abs() < 1e-9);
            let msg = Error::ExactFit { hyperplane }.to_string();
            assert!(msg.contains("exact fit"), "{msg}");
        }
        other => panic!("expected an exact fit, got {other:?}"),
    }
    // DistanceModel::fit_mcd reports the same error.
    assert!(matches!(
        DistanceModel::fit_mcd(x.view(), &s),
        Err(Error::ExactFit { .. })
    ));
}

/// Open data with an exact fit: in the diabetes data (scikit-learn's
/// `load_diabetes`) the sex column takes the value −0.04464… in 235 of 442
/// rows, more than h = 222 for (age, sex); the MCD determinant is 0 and the
/// fit reports that hyperplane and exactly those rows.
#[test]
fn exact_fit_on_open_data() {
    use mvdist::Error;
    let d = &datasets()["diabetes_age_sex"];
    let x = matrix(&d["data"]);
    let value = d["sex_values"][0].as_f64().unwrap();
    for seed in [0u64, 5] {
        let s = McdOptions::default().with_seed(seed);
        match minimum_covariance_determinant(x.view(), &s) {
            Err(Error::ExactFit { hyperplane }) => {
                assert_eq!(hyperplane.rows().len(), 235);
                assert!(hyperplane.rows().iter().all(|&i| x[(i, 1)] == value));
                let a = hyperplane.coefficients();
                assert!(a[0].abs() < 1e-9 && (a[1] - 1.0).abs() < 1e-12, "{a:?}");
                assert!((hyperplane.offset() - value).abs() < 1e-15);
            }
            other => panic!("seed {seed}: expected an exact fit, got {other:?}"),
        }
    }
}

fn one_based(v: &Value) -> Vec<usize> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|r| r.as_u64().unwrap() as usize - 1)
        .collect()
}

/// Stack loss (Brownlee 1965, 21 rows of air flow, water temperature and
/// acid concentration, as shipped by statsmodels; fixture from
/// `tests/reference/make_stackloss_fixture.py`). At scikit-learn's default
/// subset size h = 13 and without the small-sample correction (which
/// scikit-learn does not have), our fit keeps the same 16 rows as
/// scikit-learn 1.9.1's `MinCovDet` (all five of its seeds agree), its
/// reweighted location and covariance agree to 1e-10, its raw objective is
/// no worse, and the rows beyond χ²(3) at 0.975 are the same five:
/// 1, 2, 3, 17 and 21 (1-based).
#[test]
fn stack_loss_matches_scikit_learn_at_its_subset_size() {
    let d = common::fixture("stackloss.json");
    let x = matrix(&d["data"]);
    let sk = &d["sklearn"];
    let h = sk["subset_size"].as_u64().unwrap() as usize;
    assert_eq!(h, 13);
    let runs = sk["runs"].as_array().unwrap();
    let best_raw = runs
        .iter()
        .map(|r| r["raw_log_determinant"].as_f64().unwrap())
        .fold(f64::INFINITY, f64::min);
    for seed in [0u64, 1, 2] {
        let settings = McdOptions::default()
            .with_support_fraction(h as f64 / 21.0)
            .with_seed(seed)
            .with_small_sample_replications(0);
        let fit = minimum_covariance_determinant(x.view(), &settings).unwrap();
        assert_eq!(fit.subset_size(), 13);
        assert!(
            fit.raw_log_determinant() <= best_raw + 1e-9 * best_raw.abs(),
            "seed {seed}: {} vs {best_raw}",
            fit.raw_log_determinant()
        );
        for run in runs {
            assert_eq!(fit.reweighted_rows(), one_based(&run["reweighted_rows"]));
            let want = vector(&run["location"]);
            for (a, b) in fit.location().iter().zip(&want) {
                assert!(rel(*a, *b) < 1e-10, "{a} vs {b}");
            }
            assert!(
                matrix_rel(
                    &fit.scatter().matrix().to_owned(),
                    &matrix(&run["covariance"])
                ) < 1e-10
            );
        }
        let model = fit.model().unwrap();
        assert_eq!(fit.reweighted_wishart_dof(), None);
        let cutoff = model.cutoff(0.025, RowOrigin::InSample).unwrap();
        let chi = Reference::chi_square(3).unwrap().cutoff(0.025).unwrap();
        assert_eq!(cutoff, chi);
        let d2 = model.squared_distances(x.view()).unwrap();
        let flagged: Vec<usize> = (0..21).filter(|&i| d2[i] > cutoff).collect();
        for run in runs {
            assert_eq!(flagged, one_based(&run["flagged_rows"]), "seed {seed}");
        }
    }
}

/// Stack loss with our defaults: h = ⌊(n + p + 1)/2⌋ = 12 and the simulated
/// small-sample factors and reweighted F reference. The 12-row subset
/// leaves out the rows at air flow 50 as well as the four rows with the
/// highest air flow, and χ²(3) flags nine rows (1, 2, 3, 15–19, 21). The
/// reweighted F reference (m ≈ 6.2 simulated for n = 21, p = 3) flags rows
/// 1, 2 and 3 at 2.5% and row 21 at 5%: the four rows that robust analyses
/// of these data single out (recalled from the robust-statistics
/// literature, not checked against a source here).
#[test]
fn stack_loss_with_the_default_subset_size() {
    let d = common::fixture("stackloss.json");
    let x = matrix(&d["data"]);
    let fit = minimum_covariance_determinant(x.view(), &McdOptions::default()).unwrap();
    assert_eq!(fit.subset_size(), 12);
    let m = fit.reweighted_wishart_dof().expect("simulated at n = 21");
    let model = fit.model().unwrap();
    let reference = model.reference(RowOrigin::InSample).unwrap();
    assert_eq!(reference, Reference::reweighted_mcd(3, m).unwrap());
    let d2 = model.squared_distances(x.view()).unwrap();
    let cutoff = reference.cutoff(0.025).unwrap();
    let chi = Reference::chi_square(3).unwrap().cutoff(0.025).unwrap();
    assert!(cutoff > chi);
    let flagged: Vec<usize> = (0..21).filter(|&i| d2[i] > cutoff).collect();
    let flagged_chi: Vec<usize> = (0..21).filter(|&i| d2[i] > chi).collect();
    assert_eq!(flagged, [0, 1, 2], "m = {m}, cutoff = {cutoff}");
    // Row 21 is the borderline one: flagged at 5%, not at 2.5%
    // (measured p ≈ 0.036).
    let p21 = reference.p_value(d2[20]);
    assert!((0.025..0.05).contains(&p21), "row 21: p = {p21}");
    assert_eq!(flagged_chi, [0, 1, 2, 14, 15, 16, 17, 18, 20]);
}

/// The simulated `m` travels with the model: a JSON round trip keeps the
/// reference; a file written before the field existed loads with χ²(p);
/// an invalid `m` is refused when the model is read, not when it scores.
#[test]
fn reweighted_reference_survives_serialization() {
    let d = common::fixture("stackloss.json");
    let x = matrix(&d["data"]);
    let fit = minimum_covariance_determinant(x.view(), &McdOptions::default()).unwrap();
    let model = fit.model().unwrap();
    let json = serde_json::to_value(&model).unwrap();
    let back: DistanceModel = serde_json::from_value(json.clone()).unwrap();
    assert_eq!(
        back.reference(RowOrigin::New).unwrap(),
        model.reference(RowOrigin::New).unwrap()
    );
    let text = json.to_string();
    assert!(text.contains("\"wishart_dof\""), "{text}");
    let mut old = json.clone();
    remove_key(&mut old, "wishart_dof");
    let old: DistanceModel = serde_json::from_value(old).unwrap();
    assert_eq!(
        old.reference(RowOrigin::New).unwrap(),
        Reference::chi_square(3).unwrap()
    );
    let mut bad = json;
    set_key(&mut bad, "wishart_dof", serde_json::json!(3.5));
    let err = serde_json::from_value::<DistanceModel>(bad).unwrap_err();
    assert!(err.to_string().contains("wishart_dof"), "{err}");
}

fn remove_key(v: &mut Value, key: &str) {
    match v {
        Value::Object(map) => {
            map.remove(key);
            map.values_mut().for_each(|c| remove_key(c, key));
        }
        Value::Array(items) => items.iter_mut().for_each(|c| remove_key(c, key)),
        _ => {}
    }
}

fn set_key(v: &mut Value, key: &str, to: Value) {
    match v {
        Value::Object(map) => {
            if let Some(slot) = map.get_mut(key) {
                *slot = to.clone();
            }
            map.values_mut().for_each(|c| set_key(c, key, to.clone()));
        }
        Value::Array(items) => items.iter_mut().for_each(|c| set_key(c, key, to.clone())),
        _ => {}
    }
}
