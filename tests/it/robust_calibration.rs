//! Simulation checks of the MCD calibration (long: `#[ignore]`, run with
//! `cargo test --release -- --ignored`). Data from our own seeded generator.

use crate::common::Rng;
use mvdist::calibration::{Reference, ReferenceKind};
use mvdist::robust::{minimum_covariance_determinant, McdOptions};
use mvdist::RowOrigin;
use ndarray::Array2;

fn normal(rng: &mut Rng, n: usize, p: usize) -> Array2<f64> {
    Array2::from_shape_fn((n, p), |_| rng.normal())
}

/// Hardin and Rocke (2005) model `m·Σ̂` (raw MCD with consistency factor) as
/// Wishart with `m` degrees of freedom, so a diagonal entry has variance
/// `2/m` at `Σ = I`. With n = 200, p = 5 (h = 103), over 200 samples the
/// observed `2/Var` is within 25% of the `m` we compute (≈ 38.0). (A run
/// of scikit-learn 1.9.1's `MinCovDet` in the same setting gave 36.7.)
/// Also: new normal rows are beyond the Hardin–Rocke 5% cutoff of the raw
/// model at a rate between 3% and 8%, where the χ²(5) cutoff gives more.
#[test]
#[ignore]
fn hardin_rocke_degrees_of_freedom_match_simulation() {
    let (n, p, reps) = (200, 5, 200);
    let settings = |s: u64| {
        McdOptions::default()
            .with_seed(s)
            .with_small_sample_replications(0)
    };
    let mut diag = Vec::new();
    let (mut beyond_hr, mut beyond_chi2, mut total) = (0usize, 0usize, 0usize);
    let chi2 = Reference::chi_square(p).unwrap().cutoff(0.05).unwrap();
    for r in 0..reps {
        let mut rng = Rng(77 + r as u64);
        let x = normal(&mut rng, n, p);
        let fit = minimum_covariance_determinant(x.view(), &settings(r as u64)).unwrap();
        let s = fit.raw_scatter().matrix();
        diag.extend((0..p).map(|j| s[(j, j)]));
        let raw = fit.raw_model().unwrap();
        let cutoff = raw.cutoff(0.05, RowOrigin::New).unwrap();
        let fresh = normal(&mut rng, 200, p);
        for d2 in raw.squared_distances(fresh.view()).unwrap() {
            total += 1;
            beyond_hr += (d2 > cutoff) as usize;
            beyond_chi2 += (d2 > chi2) as usize;
        }
    }
    let mean = diag.iter().sum::<f64>() / diag.len() as f64;
    let var = diag.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (diag.len() - 1) as f64;
    let m = Reference::raw_mcd(n, p, 103)
        .unwrap()
        .wishart_dof()
        .unwrap();
    let observed = 2.0 / var;
    assert!(
        (observed / m - 1.0).abs() < 0.25,
        "2/Var = {observed}, m = {m}"
    );
    let rate = beyond_hr as f64 / total as f64;
    let rate_chi2 = beyond_chi2 as f64 / total as f64;
    assert!((0.03..0.08).contains(&rate), "Hardin–Rocke rate {rate}");
    assert!(rate_chi2 > rate, "χ² rate {rate_chi2} vs {rate}");
}

/// The simulated small-sample factors (Pison et al. 2002, by their
/// definition) move toward 1 as n grows; at n = 1000, p = 5 they are within
/// 2% of 1, which is why they are not simulated above 1000 rows.
#[test]
#[ignore]
fn small_sample_factors_shrink_toward_one() {
    let p = 5;
    let mut previous = f64::INFINITY;
    for n in [30usize, 100, 1000] {
        let mut rng = Rng(5 + n as u64);
        let x = normal(&mut rng, n, p);
        let fit = minimum_covariance_determinant(x.view(), &McdOptions::default()).unwrap();
        let f = fit.raw_small_sample_factor();
        let g = fit.reweighted_small_sample_factor();
        eprintln!("n = {n}: raw factor {f:.4}, reweighted factor {g:.4}");
        assert!(f.is_finite() && f > 0.9 && g > 0.9);
        assert!((f - 1.0).abs() <= previous + 0.01);
        previous = (f - 1.0).abs();
        if n == 1000 {
            assert!((f - 1.0).abs() < 0.02 && (g - 1.0).abs() < 0.02, "{f} {g}");
        }
    }
}

/// Size of the reweighted MCD model's p-values on clean `N(0, I)` data: at
/// α = 0.025 the simulated Wishart F reference flags fitting rows and new
/// rows at rates within [α/2, 1.6α] (measured: about 2–3.4%), where χ²(p)
/// — the common practice for the reweighted MCD — flags more than 10% (see
/// `src/robust/small_sample.rs`); at α = 0.001 new rows are flagged at
/// most 3α. The window is ours: it holds what the approximation achieves
/// (the residual excess at n = 30, p = 6 is documented), with room for the
/// simulation's own noise (≈ 0.1–0.2 percentage points here).
#[test]
#[ignore]
fn reweighted_reference_has_close_to_nominal_size() {
    for (n, p, reps) in [(21usize, 3usize, 200usize), (30, 6, 150)] {
        let chi2 = Reference::chi_square(p).unwrap().cutoff(0.025).unwrap();
        let (mut inside, mut fresh, mut fresh_far, mut inside_chi2) = (0, 0, 0, 0);
        let mut fresh_chi2 = 0;
        for r in 0..reps {
            let mut rng = Rng(31 + 1000 * n as u64 + r as u64);
            let x = normal(&mut rng, n, p);
            let fit = minimum_covariance_determinant(
                x.view(),
                &McdOptions::default().with_seed(r as u64),
            )
            .unwrap();
            let model = fit.model().unwrap();
            assert_eq!(
                model.reference(RowOrigin::New).unwrap().kind(),
                ReferenceKind::ReweightedMcdF
            );
            let c_in = model.cutoff(0.025, RowOrigin::InSample).unwrap();
            let c_new = model.cutoff(0.025, RowOrigin::New).unwrap();
            let c_far = model.cutoff(0.001, RowOrigin::New).unwrap();
            for d2 in model.squared_distances(x.view()).unwrap() {
                inside += (d2 > c_in) as usize;
                inside_chi2 += (d2 > chi2) as usize;
            }
            let y = normal(&mut rng, 200, p);
            for d2 in model.squared_distances(y.view()).unwrap() {
                fresh += (d2 > c_new) as usize;
                fresh_far += (d2 > c_far) as usize;
                fresh_chi2 += (d2 > chi2) as usize;
            }
        }
        let rate_in = inside as f64 / (reps * n) as f64;
        let rate_new = fresh as f64 / (reps * 200) as f64;
        let rate_far = fresh_far as f64 / (reps * 200) as f64;
        let rate_chi2 = inside_chi2 as f64 / (reps * n) as f64;
        let rate_chi2_new = fresh_chi2 as f64 / (reps * 200) as f64;
        eprintln!(
            "n = {n}, p = {p}: fitting rows {rate_in:.4}, new rows {rate_new:.4}, \
             new at 0.001 {rate_far:.5}, χ² on fitting rows {rate_chi2:.4}, \
             χ² on new rows {rate_chi2_new:.4}"
        );
        for rate in [rate_in, rate_new] {
            assert!((0.0125..=0.04).contains(&rate), "n = {n}, p = {p}: {rate}");
        }
        assert!(rate_far <= 0.003, "n = {n}, p = {p}: {rate_far}");
        assert!(rate_chi2 > 0.1, "n = {n}, p = {p}: χ² {rate_chi2}");
    }
}
