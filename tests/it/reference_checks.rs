//! Checks against values computed outside this project.
//!
//! Every fixture in `tests/fixtures/` was written by
//! `tests/reference/make_fixtures.py` (numpy 2.4.6, scipy 1.17.1,
//! scikit-learn 1.9.1, mpmath; exact versions in each file's `provenance`).
//! Data come from the open datasets bundled with scikit-learn (Wisconsin
//! breast cancer, 569 × 30; Fisher's iris, 150 × 4).

use crate::common::{fixture, matrix, matrix_rel, rel, vector};
use mvdist::calibration::Reference;
use mvdist::moments::{mean_and_covariance, weighted_mean_and_covariance, Divisor, GroupMoments};
use mvdist::{distance, DistanceModel, Scatter};

#[test]
fn breast_cancer_covariance_and_distances_match_numpy_scipy() {
    // Source: sklearn.datasets.load_breast_cancer; np.cov; scipy.linalg.cho_solve.
    let f = fixture("breast_cancer_distances.json");
    let x = matrix(&f["data"]);
    assert_eq!(x.dim(), (569, 30));
    let (mean, cov) = mean_and_covariance(x.view(), Divisor::Unbiased).unwrap();
    let want_mean = vector(&f["mean"]);
    for (a, b) in mean.iter().zip(&want_mean) {
        assert!(rel(*a, *b) < 1e-13, "{a} vs {b}");
    }
    assert!(matrix_rel(&cov, &matrix(&f["cov_unbiased"])) < 1e-13);
    let (_, cov_ml) = mean_and_covariance(x.view(), Divisor::MaximumLikelihood).unwrap();
    assert!(matrix_rel(&cov_ml, &matrix(&f["cov_ml"])) < 1e-13);

    let model = DistanceModel::fit(x.view()).unwrap();
    let d2 = model.squared_distances(x.view()).unwrap();
    let want = vector(&f["d2_unbiased"]);
    let worst = d2
        .iter()
        .zip(&want)
        .map(|(a, b)| rel(*a, *b))
        .fold(0.0, f64::max);
    assert!(worst < 1e-10, "worst relative difference {worst:e}");
    // Single-row path agrees with the batch path.
    for i in [0, 100, 568] {
        let one = model
            .squared_distance(x.row(i).as_slice().unwrap())
            .unwrap();
        assert!(rel(one, d2[i]) < 1e-12);
    }
    let log_det = f["log_det_unbiased"].as_f64().unwrap();
    assert!((model.scatter().log_determinant() - log_det).abs() < 1e-9 * log_det.abs());
    let cond = f["cond_unbiased"].as_f64().unwrap();
    assert!(rel(model.scatter().condition_number().unwrap(), cond) < 1e-6);

    // Pairwise distances between rows 0..10 and rows 10..20.
    let a = x.slice(ndarray::s![0..10, ..]);
    let b = x.slice(ndarray::s![10..20, ..]);
    let pair = distance::cross_squared_distances(model.scatter(), a, b).unwrap();
    let want_pair = matrix(&f["pair_d2"]);
    let worst = pair
        .iter()
        .zip(want_pair.iter())
        .map(|(a, b)| rel(*a, *b))
        .fold(0.0, f64::max);
    assert!(
        worst < 1e-10,
        "worst pairwise relative difference {worst:e}"
    );
    let d01 = distance::squared_distance(
        model.scatter(),
        x.row(0).as_slice().unwrap(),
        x.row(10).as_slice().unwrap(),
    )
    .unwrap();
    assert!(rel(d01, want_pair[(0, 0)]) < 1e-10);
}

#[test]
fn iris_covariances_match_numpy() {
    // Source: sklearn.datasets.load_iris; np.cov (plain and aweights); pooled
    // within-species covariance from per-species np.cov.
    let f = fixture("iris_covariance.json");
    let x = matrix(&f["data"]);
    let (mean, cov) = mean_and_covariance(x.view(), Divisor::Unbiased).unwrap();
    for (a, b) in mean.iter().zip(&vector(&f["mean"])) {
        assert!(rel(*a, *b) < 1e-14);
    }
    assert!(matrix_rel(&cov, &matrix(&f["cov_unbiased"])) < 1e-13);
    let (_, ml) = mean_and_covariance(x.view(), Divisor::MaximumLikelihood).unwrap();
    assert!(matrix_rel(&ml, &matrix(&f["cov_ml"])) < 1e-13);

    let labels: Vec<i64> = f["labels"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_i64().unwrap())
        .collect();
    let groups = GroupMoments::from_rows(x.view(), &labels).unwrap();
    assert_eq!(groups.labels(), &[0, 1, 2]);
    let pooled = groups.pooled_covariance(Divisor::Unbiased).unwrap();
    assert!(matrix_rel(&pooled, &matrix(&f["pooled_within_unbiased"])) < 1e-13);
    let pooled_ml = groups
        .pooled_covariance(Divisor::MaximumLikelihood)
        .unwrap();
    assert!(matrix_rel(&pooled_ml, &matrix(&f["pooled_within_ml"])) < 1e-13);
    let gm = matrix(&f["group_means"]);
    for (g, acc) in groups.groups().iter().enumerate() {
        for j in 0..4 {
            assert!(rel(acc.mean()[j], gm[(g, j)]) < 1e-14);
        }
    }

    let w = vector(&f["weights"]);
    let (wm, wc) = weighted_mean_and_covariance(x.view(), &w, Divisor::Unbiased).unwrap();
    for (a, b) in wm.iter().zip(&vector(&f["weighted_mean"])) {
        assert!(rel(*a, *b) < 1e-14);
    }
    assert!(matrix_rel(&wc, &matrix(&f["weighted_cov_reliability_ddof1"])) < 1e-13);
    let (_, wc0) = weighted_mean_and_covariance(x.view(), &w, Divisor::MaximumLikelihood).unwrap();
    assert!(matrix_rel(&wc0, &matrix(&f["weighted_cov_ddof0"])) < 1e-13);
}

/// The law as a public [`Reference`] (unit scale for Beta and F).
fn law_of(dist: &str, params: &[f64]) -> Reference {
    match dist {
        "chi2" => Reference::chi_square_statistic(params[0]).unwrap(),
        "beta" => Reference::scaled_beta(1.0, params[0], params[1]).unwrap(),
        "f" => Reference::scaled_f(1.0, params[0], params[1]).unwrap(),
        other => panic!("unknown distribution {other}"),
    }
}

fn tails_of(dist: &str, params: &[f64], x: f64) -> (f64, f64) {
    let law = law_of(dist, params);
    (law.cdf(x), law.p_value(x))
}

fn isf_of(dist: &str, params: &[f64], alpha: f64) -> f64 {
    law_of(dist, params).cutoff(alpha).unwrap()
}

#[test]
fn tail_probabilities_match_scipy_and_mpmath_including_far_tails() {
    // Source: scipy.stats chi2/beta/f sf and cdf, each checked by the fixture
    // script against mpmath at 50 digits; we compare with the mpmath values.
    let f = fixture("tail_probabilities.json");
    let mut worst = (0.0f64, String::new());
    for case in f["cases"].as_array().unwrap() {
        let dist = case["dist"].as_str().unwrap();
        let params = vector(&case["params"]);
        let x = case["x"].as_f64().unwrap();
        let sf = case["mpmath"]["sf"].as_f64().unwrap();
        let cdf = case["mpmath"]["cdf"].as_f64().unwrap();
        let (lo, up) = tails_of(dist, &params, x);
        // Smaller tail to 1e-12 relative; the larger tail is then exact to
        // rounding.
        let e = if sf < cdf { rel(up, sf) } else { rel(lo, cdf) };
        if e > worst.0 {
            worst = (
                e,
                format!("{dist} {params:?} x={x} sf={sf} cdf={cdf} got ({lo}, {up})"),
            );
        }
    }
    assert!(worst.0 < 1e-12, "worst {:e}: {}", worst.0, worst.1);
}

#[test]
fn upper_quantiles_match_mpmath_including_far_tails() {
    // Source: mpmath at 50 digits (scipy's isf is recorded too, but it loses
    // precision for F below 1e-6 and returns inf below 1e-20).
    let f = fixture("tail_probabilities.json");
    let mut worst = (0.0f64, String::new());
    for q in f["quantiles"].as_array().unwrap() {
        let dist = q["dist"].as_str().unwrap();
        let params = vector(&q["params"]);
        let alpha = q["upper_prob"].as_f64().unwrap();
        let want = q["isf_mpmath"].as_f64().unwrap();
        let got = isf_of(dist, &params, alpha);
        let e = rel(got, want);
        if e > worst.0 {
            worst = (
                e,
                format!("{dist} {params:?} alpha={alpha} want={want} got={got}"),
            );
        }
    }
    assert!(worst.0 < 1e-11, "worst {:e}: {}", worst.0, worst.1);
}

#[test]
fn cutoffs_equal_handbook_t2_control_limits() {
    // NIST/SEMATECH e-Handbook of Statistical Methods, §6.5.4.3: Phase II
    // UCL = p(m+1)(m−1)/(m²−mp)·F(α; p, m−p), Phase I UCL =
    // (m−1)²/m·B(α; p/2, (m−p−1)/2); evaluated by the fixture script with
    // scipy f.isf / beta.isf (agreeing with mpmath to 3.5e-14).
    let f = fixture("control_limits.json");
    for case in f["cases"].as_array().unwrap() {
        let m = case["m"].as_u64().unwrap() as usize;
        let p = case["p"].as_u64().unwrap() as usize;
        let alpha = case["alpha"].as_f64().unwrap();
        let phase2 = Reference::new_row(m, p).unwrap().cutoff(alpha).unwrap();
        let want2 = case["phase2_ucl"].as_f64().unwrap();
        assert!(
            rel(phase2, want2) < 1e-12,
            "m={m} p={p} α={alpha}: {phase2} vs {want2}"
        );
        let phase1 = Reference::in_sample(m, p).unwrap().cutoff(alpha).unwrap();
        let want1 = case["phase1_ucl"].as_f64().unwrap();
        assert!(
            rel(phase1, want1) < 1e-12,
            "m={m} p={p} α={alpha}: {phase1} vs {want1}"
        );
    }
}

fn ill_conditioned_case(name: &str) -> (Scatter, Vec<f64>, Vec<Vec<f64>>, Vec<f64>, f64) {
    let f = fixture("ill_conditioned.json");
    let c = &f[name];
    let s = Scatter::new(matrix(&c["scatter"]).view()).unwrap();
    let points = c["points"].as_array().unwrap().iter().map(vector).collect();
    (
        s,
        vector(&c["mean"]),
        points,
        vector(&c["d2_reference"]),
        c["cond"].as_f64().unwrap(),
    )
}

#[test]
fn ill_conditioned_scaled_scatter_keeps_accuracy() {
    // Scatter of breast-cancer columns on very different scales, condition
    // number 1.0e12; references by mpmath at 60 digits from the exact f64
    // inputs (fixture script).
    let (s, mean, points, want, cond) = ill_conditioned_case("scaled");
    assert!(cond > 1e11);
    let model = DistanceModel::from_parts(mean, s, 569, mvdist::FitMethod::Supplied).unwrap();
    for (x, w) in points.iter().zip(&want) {
        let d2 = model.squared_distance(x).unwrap();
        assert!(rel(d2, *w) < 1e-9, "{d2} vs {w}");
        let refined = model.squared_distance_refined(x).unwrap();
        assert!(rel(refined, *w) < 1e-13, "{refined} vs {w}");
    }
}

#[test]
fn ill_conditioned_rotated_scatter_is_accurate_with_refinement() {
    // Q·diag(λ)·Qᵀ with λ from 1 to 1e-12 and Q from a QR of standardized
    // breast-cancer rows; references by mpmath at 60 digits. Plain Cholesky
    // loses about log10(κ·ε) ≈ 4 more digits here, so the refined path is
    // the one that meets 1e-6 (it meets 1e-12).
    let (s, mean, points, want, cond) = ill_conditioned_case("rotated");
    assert!(cond > 1e11);
    let model = DistanceModel::from_parts(mean, s, 1000, mvdist::FitMethod::Supplied).unwrap();
    let mut worst_plain = 0.0f64;
    for (x, w) in points.iter().zip(&want) {
        let refined = model.squared_distance_refined(x).unwrap();
        assert!(rel(refined, *w) < 1e-12, "{refined} vs {w}");
        worst_plain = worst_plain.max(rel(model.squared_distance(x).unwrap(), *w));
    }
    // The fast path is still usable: 1e-4 relative at κ = 1e12.
    assert!(worst_plain < 1e-4, "{worst_plain:e}");
    eprintln!("plain Cholesky worst relative error at κ=1e12: {worst_plain:e}");
}

// The far-tail and far-quantile checks against mpmath at 60 digits
// (fixture far_tails.json) need the complement `1 − x` supplied exactly,
// which only the internal distributions take: they are unit tests in
// `src/distributions/mpmath_checks.rs`.

#[test]
fn in_sample_cutoffs_near_alpha_one_keep_their_digits() {
    // Beta(0.5, 19) is the in-sample law for p = 1, n = 40; its upper
    // quantile at α = 0.999999 is 4.188e-14 (mpmath, 60 digits, fixture
    // far_tails.json). Formed as max·(1 − (1 − x)) it carried a relative
    // error of 2e-3.
    let f = fixture("far_tails.json");
    let q = f["quantiles"]
        .as_array()
        .unwrap()
        .iter()
        .find(|q| q["dist"] == "beta" && vector(&q["params"]) == [0.5, 19.0])
        .unwrap();
    let x = q["isf"].as_f64().unwrap();
    let alpha = q["alpha"].as_f64().unwrap();
    let cutoff = Reference::in_sample(40, 1).unwrap().cutoff(alpha).unwrap();
    let max = 39.0 * 39.0 / 40.0;
    assert!(rel(cutoff, max * x) < 1e-11, "{cutoff} vs {}", max * x);
    // The same law as a Phase I control limit.
    let chart_law = Reference::phase_one_individuals(40, 1).unwrap();
    assert!(rel(chart_law.cutoff(alpha).unwrap(), max * x) < 1e-11);
}

#[test]
fn quantiles_that_do_not_fit_in_a_double_are_typed_errors() {
    // F(3, 0.5): P(X > x) ≈ C·x^(−1/4), so the 1e-100 quantile is about
    // 1e400 (beyond f64); it used to come back as 5.99e307, where d1·x
    // overflowed. Beta(0.25, 0.25) at 1e-300: 1 − x ≈ 1e-1200, which used to
    // come back as a subnormal number. χ²(0.01) at α close to 1: the
    // quantile is far below the smallest normal number.
    use mvdist::Error;
    let f = Reference::scaled_f(1.0, 3.0, 0.5).unwrap();
    assert!(
        matches!(f.cutoff(1e-100), Err(Error::NotRepresentable { .. })),
        "{:?}",
        f.cutoff(1e-100)
    );
    // Its tail is still computed where d1·x overflows, not cut to 0.
    let far = f.p_value(1e308);
    assert!(far > 0.0 && far < 1e-75, "{far}");
    let b = Reference::scaled_beta(1.0, 0.25, 0.25).unwrap();
    assert!(matches!(
        b.cutoff(1e-300),
        Err(Error::NotRepresentable { .. })
    ));
    let c = Reference::chi_square_statistic(0.01).unwrap();
    assert!(
        matches!(c.cutoff(1.0 - 1e-12), Err(Error::NotRepresentable { .. })),
        "{:?}",
        c.cutoff(1.0 - 1e-12)
    );
    // And what does fit still works, far out.
    assert!(f.cutoff(1e-50).unwrap().is_finite());
}
