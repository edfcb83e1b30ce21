//! Arbitrary matrices (NaN, ±∞, huge, subnormal, duplicated and constant
//! columns, 0 rows, 0 columns) through every public entry point: each call
//! returns `Err` or a finite result, never panics.

use mvdist::calibration::{
    adjusted_p_values, Adjustment, BetaDistribution, ChiSquared, FDistribution, Reference,
};
use mvdist::moments::{
    mean_and_covariance, weighted_mean_and_covariance, Divisor, ExponentialMoments, GroupMoments,
    MomentAccumulator,
};
use mvdist::{
    distance, ContributionOrder, DistanceModel, RowOrigin, Scatter, Whitener, WhiteningKind,
};
use ndarray::{Array2, ArrayView2};
use proptest::prelude::*;

fn special() -> impl Strategy<Value = f64> {
    prop_oneof![
        3 => -10.0..10.0f64,
        1 => Just(f64::NAN),
        1 => Just(f64::INFINITY),
        1 => Just(f64::NEG_INFINITY),
        1 => Just(1e308),
        1 => Just(-1e308),
        1 => Just(5e-324),
        1 => Just(0.0),
        1 => Just(-0.0),
        1 => Just(1e-300),
        1 => Just(1e154),
    ]
}

/// A matrix with up to 7 rows and 4 columns; some columns duplicated or
/// constant.
fn matrix() -> impl Strategy<Value = Array2<f64>> {
    (0usize..8, 0usize..5, 0u8..4).prop_flat_map(|(n, p, mode)| {
        proptest::collection::vec(special(), n * p).prop_map(move |v| {
            let mut m = Array2::from_shape_vec((n, p), v).unwrap_or_else(|_| Array2::zeros((0, 0)));
            if p >= 2 && n > 0 {
                match mode {
                    1 => {
                        let c = m.column(0).to_owned();
                        m.column_mut(1).assign(&c);
                    }
                    2 => m.column_mut(1).fill(3.0),
                    _ => {}
                }
            }
            m
        })
    })
}

#[track_caller]
fn ok_finite(r: mvdist::Result<f64>) {
    if let Ok(v) = r {
        assert!(
            v.is_finite(),
            "Ok({v}) is not finite at {}",
            std::panic::Location::caller()
        );
    }
}

#[track_caller]
fn ok_finite_all<'a, E>(r: Result<impl IntoIterator<Item = &'a f64>, E>) {
    if let Ok(v) = r {
        for x in v {
            assert!(x.is_finite(), "Ok contains {x}");
        }
    }
}

fn exercise_model(model: &DistanceModel, x: ArrayView2<'_, f64>, values: &[f64]) {
    let p = model.dim();
    ok_finite_all(model.squared_distances(x).as_ref().map(|a| a.iter()));
    for origin in [
        RowOrigin::New,
        RowOrigin::InSample,
        RowOrigin::KnownParameters,
    ] {
        if let Ok(s) = model.score(x, origin) {
            assert!(s
                .squared_distances()
                .iter()
                .chain(s.p_values())
                .all(|v| v.is_finite()));
            let _ = s.flags(0.05, Adjustment::BenjaminiHochberg);
        }
        for alpha in [0.05, 0.0, 1.0, f64::NAN, 1e-300] {
            ok_finite(model.cutoff(alpha, origin));
        }
    }
    let row: Vec<f64> = values.iter().copied().cycle().take(p).collect();
    ok_finite(model.squared_distance(&row));
    ok_finite(model.squared_distance(values));
    ok_finite(model.squared_distance_refined(&row));
    let mut scratch = vec![0.0; 2];
    ok_finite(model.squared_distance_with_scratch(&row, &mut scratch));
    if let Ok(s) = model.score_row(&row, RowOrigin::New, 0.01) {
        assert!(s.squared_distance.is_finite() && s.p_value.is_finite());
    }
    for order in [
        ContributionOrder::LargestFirst,
        ContributionOrder::Given((0..p).rev().collect()),
        ContributionOrder::Given(vec![0; p]),
    ] {
        if let Ok(c) = model.explain(&row, order) {
            assert!(c.terms().iter().all(|t| t.is_finite()));
        }
    }
    for kind in [
        WhiteningKind::Cholesky,
        WhiteningKind::Symmetric,
        WhiteningKind::Principal,
    ] {
        if let Ok(w) = model.whitener(kind) {
            ok_finite_all(w.whiten(x).as_ref().map(|a| a.iter()));
            ok_finite_all(w.unwhiten(x).as_ref().map(|a| a.iter()));
        }
    }
    ok_finite_all(
        distance::cross_squared_distances(model.scatter(), x, x)
            .as_ref()
            .map(|a| a.iter()),
    );
    ok_finite(distance::squared_distance(model.scatter(), &row, values));
    ok_finite_all(
        distance::squared_distances_to(model.location(), model.scatter(), x)
            .as_ref()
            .map(|a| a.iter()),
    );
    ok_finite(model.scatter().squared_norm(&row));
    ok_finite_all(model.scatter().solve(&row).as_ref().map(|v| v.iter()));
    let _ = model.scatter().condition_number();
    let _ = model.scatter().correlation();
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, max_shrink_iters: 200, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn no_public_entry_point_panics(x in matrix(), weights in proptest::collection::vec(special(), 0..8), labels in proptest::collection::vec(0u8..3, 0..8)) {
        let (n, p) = x.dim();
        let flat: Vec<f64> = x.iter().copied().collect();
        let values: Vec<f64> = flat.iter().copied().chain([1.0, 2.0]).collect();

        for divisor in [Divisor::Unbiased, Divisor::MaximumLikelihood] {
            if let Ok((m, c)) = mean_and_covariance(x.view(), divisor) {
                assert!(m.iter().chain(c.iter()).all(|v| v.is_finite()));
            }
            if let Ok((m, c)) = weighted_mean_and_covariance(x.view(), &weights, divisor) {
                assert!(m.iter().chain(c.iter()).all(|v| v.is_finite()));
            }
            let _ = DistanceModel::fit_with_divisor(x.view(), divisor);
            let _ = DistanceModel::fit_weighted(x.view(), &weights, divisor);
        }
        let _ = DistanceModel::fit_slice(&flat, p);
        let _ = DistanceModel::fit_slice(&flat, p + 1);
        let _ = mvdist::data::rows_from_slice(&flat, 0);

        if let Ok(model) = DistanceModel::fit(x.view()) {
            exercise_model(&model, x.view(), &values);
        }
        // A model from an arbitrary scatter candidate.
        if p > 0 {
            let square: Vec<f64> = values.iter().copied().cycle().take(p * p).collect();
            if let Ok(s) = Scatter::from_row_major(&square, p) {
                let loc: Vec<f64> = values.iter().copied().take(p).collect();
                if let Ok(model) = DistanceModel::from_parts(loc, s, n.max(1), mvdist::Estimator::Supplied) {
                    exercise_model(&model, x.view(), &values);
                }
            }
            let diag: Vec<f64> = values.iter().copied().take(p).collect();
            if let Ok(s) = Scatter::diagonal(&diag) {
                let _ = Whitener::new(&diag, &s, WhiteningKind::Principal);
                ok_finite(s.squared_norm(&diag));
            }
        }
        // Shrinkage and robust fits.
        use mvdist::robust::{consistency_factor, minimum_covariance_determinant, McdSettings};
        use mvdist::shrinkage::{ledoit_wolf, oas, shrink, OasFormula, ShrinkageTarget};
        let mut fitted = Vec::new();
        fitted.push(ledoit_wolf(x.view()).map(|f| f.into_model()));
        for formula in [OasFormula::Published, OasFormula::WithoutTwoOverP] {
            fitted.push(oas(x.view(), formula).map(|f| f.into_model()));
        }
        for &v in values.iter().take(3).chain([0.0, 0.5, 1.0].iter()) {
            for target in [ShrinkageTarget::ScaledIdentity, ShrinkageTarget::Diagonal] {
                fitted.push(shrink(x.view(), v, target).map(|f| f.into_model()));
            }
        }
        for model in fitted.into_iter().flatten().flatten() {
            assert!(model.scatter().log_determinant().is_finite());
            exercise_model(&model, x.view(), &values);
        }
        let quick = McdSettings::default().with_starts(20).unwrap().with_small_sample_replications(0);
        let mut settings = vec![quick.clone(), McdSettings::default().with_small_sample_replications(3)];
        for &v in values.iter().take(2).chain([0.75, 1.0].iter()) {
            if let Ok(s) = quick.clone().with_support_fraction(v) {
                settings.push(s);
            }
        }
        for s in &settings {
            if let Ok(fit) = minimum_covariance_determinant(x.view(), s) {
                assert!(fit.raw_log_determinant().is_finite());
                for model in [fit.model(), fit.raw_model()].into_iter().flatten() {
                    exercise_model(&model, x.view(), &values);
                }
            }
            let _ = DistanceModel::fit_mcd(x.view(), s);
        }
        for &v in values.iter().take(4) {
            ok_finite(consistency_factor(p, v));
            ok_finite(consistency_factor(n, v.abs().fract()));
        }

        let _ = Scatter::new(x.view());
        let _ = Scatter::with_collinearity_tolerance(&flat, p, 0.5);
        let _ = Scatter::with_collinearity_tolerance(&flat, p, f64::NAN);

        // Accumulators.
        if let Ok(mut acc) = MomentAccumulator::new(p) {
            for row in x.outer_iter() {
                let _ = acc.push(&row.to_vec());
                let _ = acc.push_weighted(&row.to_vec(), weights.first().copied().unwrap_or(1.0));
            }
            let _ = acc.push(&values);
            let _ = acc.push_rows(x.view());
            let _ = acc.push_weighted_rows(x.view(), &weights);
            let other = acc.clone();
            let _ = acc.merge(&other);
            if let Ok(different) = MomentAccumulator::new(p + 1) {
                assert!(acc.merge(&different).is_err());
            }
            ok_finite_all(acc.covariance(Divisor::Unbiased).as_ref().map(|c| c.iter()));
            let _ = acc.scatter(Divisor::Unbiased);
            let _ = DistanceModel::from_accumulator(&acc, Divisor::Unbiased);
            let json = serde_json::to_string(&acc).unwrap_or_default();
            let _ = serde_json::from_str::<MomentAccumulator>(&json);
        }
        let _ = MomentAccumulator::from_rows(x.view());
        let _ = MomentAccumulator::from_weighted_rows(x.view(), &weights);
        for lambda in [0.9, 1.0, 0.0, -1.0, f64::NAN, 1e-300] {
            if let Ok(mut e) = ExponentialMoments::new(p, lambda) {
                let _ = e.push_rows(x.view());
                let _ = e.push(&values);
                ok_finite_all(e.covariance(Divisor::Unbiased).as_ref().map(|c| c.iter()));
                let _ = e.scatter(Divisor::MaximumLikelihood);
            }
        }
        if let Ok(g) = GroupMoments::from_rows(x.view(), &labels) {
            ok_finite_all(g.pooled_covariance(Divisor::Unbiased).as_ref().map(|c| c.iter()));
            let _ = g.pooled_scatter(Divisor::Unbiased);
        }

        // Calibration with arbitrary parameters.
        for &v in values.iter().take(6) {
            for r in [Reference::chi_square(p), Reference::new_row(n, p), Reference::in_sample(n, p),
                      Reference::raw_mcd(n, p, (n + p).div_ceil(2)), Reference::raw_mcd(n.max(p + 2), p, n.max(p + 2)),
                      Ok(Reference::RawMcdF { n, dim: p, subset_size: v.abs().min(1e6) as usize }),
                      Ok(Reference::NewRowF { n, dim: p }), Ok(Reference::InSampleBeta { n, dim: p })].into_iter().flatten() {
                {
                    let pv = r.p_value(v);
                    assert!(pv.is_nan() || (0.0..=1.0).contains(&pv));
                    ok_finite(r.cutoff(v));
                    ok_finite(r.cutoff(0.01));
                }
            }
            if let Ok(c) = ChiSquared::new(v) { let _ = c.sf(v); ok_finite(c.isf(0.01)); }
            if let Ok(b) = BetaDistribution::new(v, v.abs() + 1.0) { let _ = b.sf(0.5); ok_finite(b.isf(0.3)); }
            if let Ok(f) = FDistribution::new(v, 3.0) { let _ = f.sf(v); ok_finite(f.isf(0.2)); }
        }
        let probs: Vec<f64> = values.iter().map(|v| v.abs().fract()).collect();
        for adj in [Adjustment::None, Adjustment::Bonferroni, Adjustment::BenjaminiHochberg] {
            let _ = adjusted_p_values(&values, adj);
            ok_finite_all(adjusted_p_values(&probs, adj).as_ref().map(|v| v.iter()));
        }
    }

    #[test]
    fn arbitrary_bytes_never_crash_the_deserializers(bytes in proptest::collection::vec(any::<u8>(), 0..200)) {
        let text = String::from_utf8_lossy(&bytes);
        let _ = serde_json::from_str::<DistanceModel>(&text);
        let _ = serde_json::from_str::<MomentAccumulator>(&text);
        let _ = serde_json::from_str::<Scatter>(&text);
    }
}

#[test]
fn corrupted_model_json_is_rejected() {
    let x = ndarray::array![[1.0, 2.0], [2.0, 1.0], [4.0, 5.0], [3.0, 3.5], [0.5, 1.0]];
    let model = DistanceModel::fit(x.view()).unwrap();
    let json = serde_json::to_string(&model).unwrap();
    // Make the scatter indefinite.
    let bad = json.replacen("[[", "[[-", 1);
    assert!(serde_json::from_str::<DistanceModel>(&bad).is_err());
    // Truncated.
    assert!(serde_json::from_str::<DistanceModel>(&json[..json.len() / 2]).is_err());
    // Location of the wrong length.
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let mut v2 = v.clone();
    v2["location"] = serde_json::json!([1.0]);
    assert!(serde_json::from_value::<DistanceModel>(v2).is_err());
}
