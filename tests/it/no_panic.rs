//! Arbitrary matrices (NaN, ±∞, huge, subnormal, duplicated and constant
//! columns, 0 rows, 0 columns) through every public entry point: each call
//! returns `Err` or a finite result, never panics.

use mvdist::calibration::{adjusted_p_values, Adjustment, Reference};
use mvdist::classification::{
    Classifier, ClassifierOptions, ConfusionMatrix, LeaveOneOut, PredictOptions, Predictions,
    Priors, Rule,
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
/// A small count from an arbitrary value.
fn k_of(v: f64) -> usize {
    v.abs().min(1e6) as usize
}

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

fn exercise_classifier(c: &Classifier<u8>, x: ArrayView2<'_, f64>, values: &[f64], labels: &[u8]) {
    let p = c.dim();
    if let Ok(out) = c.predict(x) {
        assert!(out
            .squared_distances()
            .iter()
            .chain(out.posteriors().iter())
            .chain(out.typicality())
            .all(|v| v.is_finite()));
        let _ = out.assigned_posteriors();
        let _ = out.row(0);
        let _ = out.row(usize::MAX);
    }
    let mut buffer = Predictions::new();
    for level in [0.05, 0.0, 1.0, f64::NAN, 1e-300] {
        let options = PredictOptions::default().with_no_group_below(level);
        let _ = c.predict_into(x, &options, &mut buffer);
        let _ = c.predict_into(x, &options.with_typicality(false), &mut buffer);
    }
    let row: Vec<f64> = values.iter().copied().cycle().take(p).collect();
    if let Ok(pred) = c.predict_row(&row) {
        assert!(pred
            .posteriors
            .iter()
            .chain(&pred.squared_distances)
            .all(|v| v.is_finite()));
    }
    let _ = c.predict_row(values);
    let _ = c.confusion_matrix(x, labels);
    if let Ok(d) = c.discriminant_directions() {
        ok_finite_all(d.project(x).as_ref().map(|a| a.iter()));
    }
    for g in 0..c.group_count() + 1 {
        if let Some(r) = c.typicality_reference(g) {
            for &v in values.iter().take(4) {
                let pv = r.p_value(v);
                assert!(pv.is_nan() || (0.0..=1.0).contains(&pv));
                ok_finite(r.cutoff(v));
            }
        }
        let _ = c.scatter(g);
    }
}

/// Every normality entry point: `Err` or finite numbers, never a panic.
fn exercise_normality(x: ArrayView2<'_, f64>, values: &[f64]) {
    use mvdist::normality::{
        ChiSquareQq, DoornikHansen, HenzeZirkler, Mardia, NormalityOptions, NormalityReport,
        RoystonH, ShapiroWilk, ShapiroWilkCoefficients, VariableShape,
    };
    let unit = |v: f64| v.is_nan() || (0.0..=1.0).contains(&v);
    if let Ok(m) = Mardia::compute(x) {
        for v in [
            m.skewness(),
            m.kurtosis(),
            m.skewness_statistic(),
            m.corrected_skewness_statistic(),
            m.kurtosis_statistic(),
        ] {
            assert!(v.is_finite(), "Mardia gave {v}");
        }
        assert!(
            unit(m.skewness_p_value())
                && unit(m.kurtosis_p_value())
                && unit(m.corrected_skewness_p_value())
        );
    }
    for beta in [
        None,
        Some(0.5),
        Some(0.1),
        Some(100.0),
        Some(0.0),
        Some(f64::NAN),
        Some(1e300),
    ] {
        let r = match beta {
            None => HenzeZirkler::compute(x),
            Some(b) => HenzeZirkler::compute_with_smoothing(x, b),
        };
        if let Ok(h) = r {
            assert!(h.statistic().is_finite() && (0.0..=1.0).contains(&h.p_value()));
        }
    }
    if let Ok(r) = RoystonH::compute(x) {
        assert!(r.statistic().is_finite() && (0.0..=1.0).contains(&r.p_value()));
    }
    if let Ok(d) = DoornikHansen::compute(x) {
        assert!(d.statistic().is_finite() && (0.0..=1.0).contains(&d.p_value()));
    }
    ok_finite_all(
        ChiSquareQq::compute(x)
            .as_ref()
            .map(|q| q.theoretical().iter().chain(q.observed())),
    );
    if let Ok(shapes) = VariableShape::of_columns(x) {
        assert!(shapes
            .iter()
            .all(|s| s.skewness.is_finite() && s.kurtosis.is_finite()));
    }
    for v in [values, &values[..values.len().min(3)]] {
        if let Ok(sw) = ShapiroWilk::compute(v) {
            assert!((0.0..=1.0).contains(&sw.statistic()) && (0.0..=1.0).contains(&sw.p_value()));
        }
    }
    let _ = ShapiroWilkCoefficients::new(values.len());
    for alpha in [0.05, 0.0, f64::NAN] {
        {
            let options = NormalityOptions::default().with_alpha(alpha);
            if let Ok(report) = NormalityReport::compute(x, &options) {
                let json = serde_json::to_string(&report).unwrap_or_default();
                assert!(
                    serde_json::from_str::<NormalityReport>(&json).is_ok(),
                    "{json}"
                );
            }
        }
    }
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
        let _ = mvdist::data::Rows::from_slice(&flat, p).and_then(DistanceModel::fit);
        let _ = mvdist::data::Rows::from_slice(&flat, p + 1).and_then(DistanceModel::fit);
        let _ = mvdist::data::rows_from_slice(&flat, 0);

        if let Ok(model) = DistanceModel::fit(x.view()) {
            exercise_model(&model, x.view(), &values);
        }
        exercise_normality(x.view(), &values);
        // A model from an arbitrary scatter candidate.
        if p > 0 {
            let square: Vec<f64> = values.iter().copied().cycle().take(p * p).collect();
            if let Ok(s) = Scatter::from_row_major(&square, p) {
                let loc: Vec<f64> = values.iter().copied().take(p).collect();
                if let Ok(model) = DistanceModel::from_parts(loc, s, n.max(1), mvdist::FitMethod::Supplied) {
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
        use mvdist::robust::{consistency_factor, minimum_covariance_determinant, McdOptions};
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
        let quick = McdOptions::default().with_starts(20).with_small_sample_replications(0);
        let mut settings = vec![quick.clone(), McdOptions::default().with_small_sample_replications(3)];
        for &v in values.iter().take(2).chain([0.75, 1.0].iter()) {
            settings.push(quick.clone().with_support_fraction(v));
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

        // Classification, with the labels and with one label per row.
        let row_labels: Vec<u8> = (0..n).map(|i| labels.get(i).copied().unwrap_or((i % 2) as u8)).collect();
        for labels in [&labels, &row_labels] {
        for rule in [Rule::Linear, Rule::Quadratic] {
            for divisor in [Divisor::Unbiased, Divisor::MaximumLikelihood] {
                let priors = [
                    Priors::Proportional,
                    Priors::Equal,
                    Priors::Given(labels.iter().copied().zip(weights.iter().copied()).collect()),
                    Priors::Given(vec![(0, 1.0), (1, 2.0)]),
                ];
                for prior in priors {
                    let options = ClassifierOptions::new(rule).with_divisor(divisor).with_priors(prior);
                    if let Ok(c) = Classifier::fit(x.view(), labels, &options) {
                        exercise_classifier(&c, x.view(), &values, labels);
                    }
                    if let Ok(loo) = LeaveOneOut::estimate(x.view(), labels, &options) {
                        assert!(loo.squared_distances().iter().chain(loo.posteriors().iter()).all(|v| v.is_finite()));
                    }
                }
            }
        }
        }
        let groups: Vec<usize> = labels.iter().map(|&l| l as usize).collect();
        let _ = ConfusionMatrix::from_groups(&groups, &groups, 2);
        let _ = ConfusionMatrix::from_groups(&groups, &groups[groups.len().min(1)..], 3);
        for &v in values.iter().take(3) {
            let k = v.abs().min(1e6) as usize;
            for r in [Reference::new_row(k, p), Reference::pooled_group(k, n, 2, p), Reference::pooled_group(n, k, 3, p), Reference::pooled_group(k, k, k, p)].into_iter().flatten() {
                let pv = r.p_value(v);
                assert!(pv.is_nan() || (0.0..=1.0).contains(&pv));
                ok_finite(r.cutoff(0.01));
            }
        }

        // Calibration with arbitrary parameters.
        for &v in values.iter().take(6) {
            for r in [Reference::chi_square(p), Reference::new_row(n, p), Reference::in_sample(n, p),
                      Reference::raw_mcd(n, p, (n + p).div_ceil(2)), Reference::raw_mcd(n.max(p + 2), p, n.max(p + 2)),
                      Reference::raw_mcd(n, p, v.abs().min(1e6) as usize),
                      Reference::reweighted_mcd(p, n as f64 + v.abs()), Reference::reweighted_mcd(p, v),
                      Reference::new_row(n, p).map(|r| r.with_divisor(Divisor::MaximumLikelihood)), Reference::in_sample(n, p).map(|r| r.with_divisor(Divisor::MaximumLikelihood)),
                      Reference::chi_square_statistic(v), Reference::scaled_beta(v.abs(), v, v.abs() + 1.0), Reference::scaled_f(v.abs(), v, 3.0),
                      Reference::lognormal(v, v.abs()), Ok(Reference::standard_normal_two_sided()),
                      Reference::phase_one_subgroups(n, k_of(v), p), Reference::phase_two_subgroups(n, k_of(v), p),
                      Reference::box_m_chi_square(k_of(v), p), Reference::box_m_f(v, v.abs())].into_iter().flatten() {
                {
                    let pv = r.p_value(v);
                    assert!(pv.is_nan() || (0.0..=1.0).contains(&pv));
                    ok_finite(r.cutoff(v));
                    ok_finite(r.cutoff(0.01));
                }
            }
        }
        let probs: Vec<f64> = values.iter().map(|v| v.abs().fract()).collect();
        for adj in [Adjustment::None, Adjustment::Bonferroni, Adjustment::BenjaminiHochberg] {
            let _ = adjusted_p_values(&values, adj);
            ok_finite_all(adjusted_p_values(&probs, adj).as_ref().map(|v| v.iter()));
        }
    }

    #[test]
    fn mean_tests_and_charts_never_panic(a in matrix(), b in matrix(), depth in 0usize..4, size in 0usize..4, alpha in special()) {
        use mvdist::control_chart::{
            chart_svg, decomposition, ControlChart, ControlLimit, FalseAlarmRate, PhaseOneOptions,
            PhaseOneStart, SignalRemoval,
        };
        use mvdist::mean_tests;
        let p = a.ncols();
        let target: Vec<f64> = a.iter().copied().chain([0.5; 4]).take(p).collect();
        let tests = [
            mean_tests::one_sample(a.view(), &target),
            mean_tests::one_sample(a.view(), &[1.0]),
            mean_tests::paired(a.view(), b.view()),
            mean_tests::two_sample(a.view(), b.view()),
            mean_tests::two_sample_unequal_scatter(a.view(), b.view()),
        ];
        for t in tests.into_iter().flatten() {
            assert!(t.t_squared().is_finite() && t.f_statistic().is_finite());
            assert!((0.0..=1.0).contains(&t.p_value()));
            for lvl in [0.05, alpha] {
                if let Ok(ivs) = t.intervals(lvl) {
                    for iv in ivs {
                        assert!(!iv.simultaneous.lower.is_nan() && !iv.bonferroni.upper.is_nan());
                    }
                }
                let _ = t.critical_t_squared(lvl);
                let _ = t.rejects(lvl);
            }
        }
        for groups in [vec![a.view(), b.view()], vec![a.view()], vec![a.view(), a.view(), b.view()]] {
            if let Ok(m) = mean_tests::scatter_equality(&groups) {
                assert!(m.statistic().is_finite());
                let _ = m.suggested_rule(alpha);
            }
        }
        let rate = FalseAlarmRate::per_point(alpha.abs().fract()).unwrap_or_default();
        let _ = FalseAlarmRate::from_average_run_length(alpha);
        for removal in [SignalRemoval::Keep, SignalRemoval::RefitUntilClean { max_rounds: 3 }] {
            let settings = PhaseOneOptions::default().with_false_alarm(rate).with_removal(removal).with_start(PhaseOneStart::AllRows).with_diagnosis_depth(depth);
            let charts = [ControlChart::individuals(a.view(), &settings), ControlChart::subgroups(a.view(), size, &settings)];
            for chart in charts.into_iter().flatten() {
                for pt in chart.phase_one_points() {
                    assert!(pt.t_squared.is_finite() && pt.upper_limit.is_finite());
                }
                if let Ok(points) = chart.monitor(b.view()) {
                    assert!(points.iter().all(|pt| pt.t_squared.is_finite()));
                    let _ = chart_svg(&chart, &points, "t");
                }
                let row: Vec<f64> = b.iter().copied().chain([1.0; 4]).take(chart.dim()).collect();
                let _ = chart.diagnose(&row, RowOrigin::New, depth);
                let _ = chart.decompose_along(&row, &(0..chart.dim()).rev().collect::<Vec<_>>(), RowOrigin::InSample);
                let _ = chart.decompose_along(&row, &[0, 0], RowOrigin::New);
                let _ = decomposition::conditional_terms(chart.point_scatter(), &row, depth);
            }
            if let Ok(model) = DistanceModel::fit(b.view()) {
                let screened = settings.clone().with_start(PhaseOneStart::ScreenWith { model, origin: RowOrigin::KnownParameters });
                let _ = ControlChart::individuals(a.view(), &screened);
            }
        }
        let (n, q) = a.dim();
        for limit in [
            ControlLimit::individuals_phase_one(n, q), ControlLimit::individuals_phase_two(n, q),
            ControlLimit::subgroups_phase_one(n, size, q), ControlLimit::subgroups_phase_two(n, size, q),
            Ok(ControlLimit::SubgroupsPhaseOne { subgroups: n, size, dim: q }),
            Ok(ControlLimit::IndividualsPhaseOne { observations: n, dim: q }),
        ].into_iter().flatten() {
            ok_finite(limit.upper(rate));
            let pv = limit.p_value(alpha);
            assert!(pv.is_nan() || (0.0..=1.0).contains(&pv));
            for given in [0.0, alpha.abs(), f64::from(depth as u32) * 7.5, 1e300] {
                if let Ok(d) = limit.term_distribution(depth, given) {
                    ok_finite(d.cutoff(0.01));
                    let pv = d.p_value(given);
                    assert!(pv.is_nan() || (0.0..=1.0).contains(&pv));
                }
            }
        }
    }

    #[test]
    fn normality_checks_never_panic_on_taller_matrices(
        (n, p) in (0usize..40, 0usize..5),
        seed in any::<u64>(),
        wild in proptest::collection::vec((0usize..200, special()), 0..4),
        mode in 0u8..4,
    ) {
        // Mostly ordinary values (so that every test runs), a few special
        // ones at random places, sometimes a copied or constant column.
        let mut state = seed;
        let mut m = Array2::from_shape_fn((n, p), |_| {
            state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            ((state >> 11) as f64 / (1u64 << 53) as f64 - 0.5) * 8.0
        });
        for (k, v) in wild {
            if n * p > 0 {
                m[(k % n, (k / n) % p)] = v;
            }
        }
        if p >= 2 && n > 0 {
            match mode {
                1 => { let c = m.column(0).to_owned(); m.column_mut(1).assign(&c); }
                2 => m.column_mut(1).fill(3.0),
                _ => {}
            }
        }
        let values: Vec<f64> = m.iter().copied().collect();
        exercise_normality(m.view(), &values);
    }

    #[test]
    fn arbitrary_bytes_never_crash_the_deserializers(bytes in proptest::collection::vec(any::<u8>(), 0..200)) {
        let text = String::from_utf8_lossy(&bytes);
        let _ = serde_json::from_str::<DistanceModel>(&text);
        let _ = serde_json::from_str::<MomentAccumulator>(&text);
        let _ = serde_json::from_str::<Scatter>(&text);
        let _ = serde_json::from_str::<mvdist::normality::NormalityReport>(&text);
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

/// Every number of `json` in turn replaced by odd values, and every array
/// shortened by one element: the mutations a hand-edited or corrupted file
/// shows.
fn mutations(json: &str) -> Vec<String> {
    let bytes = json.as_bytes();
    let mut numbers = Vec::new();
    let mut i = 0;
    while i < bytes.len() {
        let c = bytes[i];
        let starts = (c == b'-' || c.is_ascii_digit())
            && (i == 0 || matches!(bytes[i - 1], b':' | b',' | b'[' | b' '));
        if starts {
            let mut j = i + 1;
            while j < bytes.len()
                && matches!(bytes[j], b'0'..=b'9' | b'.' | b'e' | b'E' | b'+' | b'-')
            {
                j += 1;
            }
            numbers.push((i, j));
            i = j;
        } else {
            i += 1;
        }
    }
    let mut out = Vec::new();
    for &(a, b) in numbers.iter().take(60) {
        for replacement in [
            "0",
            "-1",
            "1",
            "2",
            "5",
            "1e308",
            "-1e308",
            "1e-320",
            "0.5",
            "18446744073709551615",
            "null",
            "[]",
        ] {
            out.push(format!("{}{replacement}{}", &json[..a], &json[b..]));
        }
        // Drop the number with its separator (shortens an array).
        if a > 0 && bytes[a - 1] == b',' {
            out.push(format!("{}{}", &json[..a - 1], &json[b..]));
        } else if b < bytes.len() && bytes[b] == b',' {
            out.push(format!("{}{}", &json[..a], &json[b + 1..]));
        }
    }
    out.push(json[..json.len() / 2].to_string());
    out
}

/// Deserializes every mutation of `value`'s JSON as `T` and exercises what
/// deserialized: a malformed value is an `Err`, never a panic later.
fn survives_mutations<T>(value: &T, exercise: impl Fn(&T))
where
    T: serde::Serialize + serde::de::DeserializeOwned,
{
    let json = serde_json::to_string(value).unwrap();
    let back: T = serde_json::from_str(&json).unwrap();
    exercise(&back);
    for text in mutations(&json) {
        if let Ok(v) = serde_json::from_str::<T>(&text) {
            exercise(&v);
        }
    }
}

#[test]
fn mutated_serialized_values_never_panic() {
    use mvdist::control_chart::{chart_svg, decomposition, ControlChart, PhaseOneOptions};
    use mvdist::mean_tests;
    use mvdist::normality::{
        ChiSquareQq, DoornikHansen, HenzeZirkler, Mardia, NormalityOptions, NormalityReport,
        RoystonH, ShapiroWilk,
    };
    let x = ndarray::array![
        [1.0, 2.0, 0.3],
        [2.0, 1.0, 0.1],
        [4.0, 5.0, 0.9],
        [3.0, 3.5, 0.2],
        [0.5, 1.0, 0.4],
        [2.5, 2.0, 0.8],
        [1.5, 2.5, 0.6],
        [3.5, 3.0, 0.7],
        [2.2, 1.4, 0.5],
        [0.9, 1.9, 0.35]
    ];
    let rows = x.view();
    let probe: Vec<f64> = vec![1.0, 2.0, 0.5];
    let model = DistanceModel::fit(rows).unwrap();
    survives_mutations(&model, |m| exercise_model(m, rows, &probe));
    // A model with held-out calibration rows, and rows with gaps.
    let calibrated = DistanceModel::fit(rows)
        .unwrap()
        .with_calibration_rows(rows)
        .unwrap();
    survives_mutations(&calibrated, |m| {
        exercise_model(m, rows, &probe);
        for kind in [
            mvdist::EmpiricalPValue::Marginal,
            mvdist::EmpiricalPValue::CalibrationConditional { delta: 0.1 },
        ] {
            if let Ok(s) = m.score_held_out(rows, kind) {
                assert!(s.p_values().iter().all(|p| (0.0..=1.0).contains(p)));
            }
            let _ = m.held_out_cutoff(0.2, kind);
        }
        let _ = mvdist::held_out::CalibrationCheck::of_model(m).map(|c| c.to_svg("t"));
        let gaps = [probe[0], f64::NAN, probe[2]];
        let _ = m.score_row_observed(&gaps[..m.dim().min(3)], RowOrigin::New, 0.05);
        let _ = m.explain_observed(
            &gaps[..m.dim().min(3)],
            mvdist::ContributionOrder::LargestFirst,
        );
    });
    if let Ok(check) = mvdist::held_out::CalibrationCheck::of_model(&calibrated) {
        survives_mutations(&check, |c| {
            let _ = (c.to_svg("t"), c.any_too_many());
        });
    }
    if let Ok(why) = calibrated.explain_observed(
        &[1.0, f64::NAN, 0.5],
        mvdist::ContributionOrder::LargestFirst,
    ) {
        survives_mutations(&why, |w| {
            let _ = (w.in_order(), w.top_variable(), w.total());
        });
    }
    survives_mutations(model.scatter(), |s| {
        let _ = s.squared_norm(&probe);
        let _ = s.condition_number();
    });
    let whitener = model.whitener(WhiteningKind::Symmetric).unwrap();
    survives_mutations(&whitener, |w| {
        let _ = w.whiten(rows);
        let _ = w.unwhiten(rows);
        let _ = (w.forward_matrix(), w.inverse_matrix());
    });
    // Classifiers and drift models: mutated files are refused or refit.
    let labels: Vec<u32> = (0..rows.nrows()).map(|i| (i % 2) as u32).collect();
    for rule in [Rule::Linear, Rule::Quadratic] {
        let options = ClassifierOptions::new(rule).with_priors(Priors::Equal);
        if let Ok(c) = Classifier::fit(rows, &labels, &options) {
            survives_mutations(&c, |c: &Classifier<u32>| {
                let _ = c.predict_row(&probe);
                let _ = c
                    .predict_row_with(&probe, &PredictOptions::default().with_no_group_below(0.01));
                let _ = c.predict(rows);
            });
        }
    }
    let mut forgetting = mvdist::drift::ForgettingModel::new(3, 0.95).unwrap();
    let mut window = mvdist::drift::SlidingWindowModel::new(3, 6).unwrap();
    for r in rows.outer_iter() {
        forgetting.update(r.as_slice().unwrap()).unwrap();
        window.update(r.as_slice().unwrap()).unwrap();
    }
    survives_mutations(&forgetting, |m| {
        let _ = (m.score_row(&probe, 0.01), m.snapshot(), m.covariance());
    });
    survives_mutations(&window, |m| {
        let _ = (
            m.score_row(&probe, 0.01),
            m.snapshot(),
            m.covariance_factor(),
        );
    });
    let scores = model.score(rows, RowOrigin::InSample).unwrap();
    survives_mutations(&scores, |s| {
        let _ = s.flags(0.05, Adjustment::BenjaminiHochberg);
        let _ = s.flags(0.05, Adjustment::Bonferroni);
    });
    let why = model
        .explain(&probe, ContributionOrder::LargestFirst)
        .unwrap();
    survives_mutations(&why, |c| {
        let _ = (c.in_order(), c.top_variable(), c.total());
    });
    for origin in [
        RowOrigin::New,
        RowOrigin::InSample,
        RowOrigin::KnownParameters,
    ] {
        survives_mutations(&model.reference(origin).unwrap(), |r| {
            let _ = (r.p_value(3.0), r.cdf(3.0), r.cutoff(0.01), r.upper_bound());
        });
    }
    let acc = MomentAccumulator::from_rows(rows).unwrap();
    survives_mutations(&acc, |a| {
        let _ = a.scatter(Divisor::Unbiased);
        let mut b = a.clone();
        let _ = b.merge(&acc);
    });
    let mut ew = ExponentialMoments::new(3, 0.9).unwrap();
    for r in x.outer_iter() {
        ew.push(r.as_slice().unwrap()).unwrap();
    }
    survives_mutations(&ew, |e| {
        let mut e = e.clone();
        let _ = e.push(&probe);
        let _ = e.covariance(Divisor::Unbiased);
    });
    let settings = PhaseOneOptions::default();
    let chart = ControlChart::individuals(rows, &settings).unwrap();
    survives_mutations(&chart, |c| {
        if let Ok(points) = c.monitor(rows) {
            let _ = chart_svg(c, &points, "t");
        }
        let _ = c.diagnose(&probe, RowOrigin::New, 2);
        let _ = c.decompose_along(&probe, &[2, 0, 1], RowOrigin::InSample);
        let _ = c.upper_limit(RowOrigin::New);
    });
    survives_mutations(&chart.false_alarm(), |f| {
        let _ = (f.alpha(), f.average_run_length());
    });
    let limit = chart.limit(RowOrigin::New).unwrap();
    survives_mutations(&limit, |l| {
        let _ = l.upper(chart.false_alarm());
        let _ = l.p_value(4.0);
        let _ = l.term_distribution(1, 2.0).map(|d| d.cutoff(0.01));
    });
    survives_mutations(&limit.distribution().unwrap(), |d: &Reference| {
        let _ = (d.p_value(2.0), d.cutoff(0.01));
    });
    // Every kind of reference survives mutation of its serialized form.
    for r in [
        Reference::chi_square(3).unwrap(),
        Reference::new_row(20, 3).unwrap(),
        Reference::in_sample(20, 3).unwrap(),
        Reference::raw_mcd(40, 3, 22).unwrap(),
        Reference::reweighted_mcd(3, 30.0).unwrap(),
        Reference::pooled_group(9, 30, 3, 2).unwrap(),
        Reference::phase_one_subgroups(10, 4, 2).unwrap(),
        Reference::box_m_f(6.0, 900.0).unwrap(),
        Reference::lognormal(0.1, 0.4).unwrap(),
        Reference::scaled_beta(2.0, 0.5, 3.0).unwrap(),
    ] {
        survives_mutations(&r, |d: &Reference| {
            let _ = (d.p_value(2.0), d.cutoff(0.01), d.cdf(1.0), d.law());
        });
    }
    for bad in [
        r#"{"kind":"new_row_f","n":3,"dim":3}"#,
        r#"{"kind":"chi_square","dim":0}"#,
        r#"{"kind":"scaled_f","scale":-1.0,"d1":2.0,"d2":2.0}"#,
        r#"{"kind":"reweighted_mcd_f","dim":3,"wishart_dof":2.0}"#,
    ] {
        assert!(serde_json::from_str::<Reference>(bad).is_err(), "{bad}");
    }
    let terms = decomposition::conditional_terms(chart.point_scatter(), &probe, 2).unwrap();
    survives_mutations(&terms, |_| {});
    let diagnosis = chart.diagnose(&probe, RowOrigin::New, 2).unwrap();
    survives_mutations(&diagnosis, |d| {
        let _ = (
            d.out_of_range(),
            d.broken_relationships(),
            d.exceeding().count(),
        );
    });
    let comparison = mean_tests::one_sample(rows, &[2.0, 2.0, 0.5]).unwrap();
    survives_mutations(&comparison, |c| {
        let _ = c.intervals(0.05);
        let _ = c.critical_t_squared(0.05);
        let _ = (c.p_value(), c.rejects(0.05));
    });
    let halves = [x.slice(ndarray::s![..5, ..]), x.slice(ndarray::s![5.., ..])];
    if let Ok(eq) = mean_tests::scatter_equality(&halves) {
        survives_mutations(&eq, |e| {
            let _ = (e.statistic(), e.chi_square(), e.dim());
        });
    }
    survives_mutations(&Mardia::compute(rows).unwrap(), |m| {
        let _ = (
            m.skewness_p_value(),
            m.corrected_skewness_p_value(),
            m.kurtosis_null_variance(),
        );
    });
    survives_mutations(&HenzeZirkler::compute(rows).unwrap(), |h| {
        let _ = (h.p_value(), h.null_mean(), h.null_variance());
    });
    survives_mutations(&RoystonH::compute(rows).unwrap(), |r| {
        let _ = (r.p_value(), r.per_variable().len());
    });
    survives_mutations(&DoornikHansen::compute(rows).unwrap(), |d| {
        let _ = (d.p_value(), d.statistic(), d.degrees_of_freedom());
    });
    survives_mutations(
        &ShapiroWilk::compute(&[1.0, 2.5, 2.0, 4.0, 3.1]).unwrap(),
        |s| {
            let _ = s.p_value();
        },
    );
    survives_mutations(&ChiSquareQq::compute(rows).unwrap(), |q| {
        let _ = (q.theoretical().len(), q.observed().len());
    });
    survives_mutations(
        &NormalityReport::compute(rows, &NormalityOptions::default()).unwrap(),
        |_| {},
    );
}
