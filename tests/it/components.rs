//! Component-based monitoring: `T²` on principal components and the
//! squared prediction error `Q`.

use crate::common::{fixture, matrix, rel, vector, Rng};
use mvdist::control_chart::{
    ComponentChart, ComponentCount, ComponentModel, ComponentOptions, FalseAlarmRate, PointStatus,
    ResidualLaw, ResidualLimitMethod, SignalRemoval, VariableScaling,
};
use mvdist::{DistanceModel, ErrorKind};
use ndarray::{s, Array2};

fn fixed(k: usize) -> ComponentCount {
    ComponentCount::Fixed { components: k }
}

#[test]
fn limits_and_statistics_match_the_closed_forms_on_breast_cancer_data() {
    // Source: tests/reference/make_component_fixture.py — numpy.linalg.eigh
    // of the Phase I correlation matrix (sklearn's breast cancer data, rows
    // 0..400), the Jackson–Mudholkar (1979) and Box (1954) formulas with
    // scipy.stats.norm / chi2 quantiles, the T² F and Beta limits with
    // scipy.stats.f / beta, and T², Q by explicit projection.
    let f = fixture("component_monitoring.json");
    let x = matrix(&f["data"]);
    let m = f["phase_one_rows"].as_u64().unwrap() as usize;
    let (reference, new) = (x.slice(s![..m, ..]), x.slice(s![m.., ..]));
    let eigen = vector(&f["eigenvalues"]);
    for case in f["cases"].as_array().unwrap() {
        let k = case["components"].as_u64().unwrap() as usize;
        let alpha = case["alpha"].as_f64().unwrap();
        let model =
            ComponentModel::fit(reference, fixed(k), VariableScaling::UnitVariance).unwrap();
        for (a, b) in model.eigenvalues().iter().zip(&eigen) {
            assert!((a - b).abs() < 1e-12 * eigen[0], "eigenvalue {a} vs {b}");
        }
        let jm = model
            .residual_law(ResidualLimitMethod::JacksonMudholkar)
            .unwrap()
            .unwrap();
        let theta = vector(&case["theta"]);
        for (a, b) in jm.power_sums().iter().zip(&theta) {
            assert!(rel(*a, *b) < 1e-10, "θ {a} vs {b}");
        }
        assert!(rel(jm.exponent(), case["h0"].as_f64().unwrap()) < 1e-9);
        let want = case["jackson_mudholkar_limit"].as_f64().unwrap();
        assert!(
            rel(jm.upper(alpha).unwrap(), want) < 1e-9,
            "k = {k}: JM limit"
        );
        let bx = model
            .residual_law(ResidualLimitMethod::ScaledChiSquare)
            .unwrap()
            .unwrap();
        let (g, h) = bx.scaled_chi_square();
        assert!(rel(g, case["box_g"].as_f64().unwrap()) < 1e-10);
        assert!(rel(h, case["box_h"].as_f64().unwrap()) < 1e-10);
        let want = case["box_limit"].as_f64().unwrap();
        assert!(
            rel(bx.upper(alpha).unwrap(), want) < 1e-9,
            "k = {k}: Box limit"
        );
        for (law, key) in [(jm, "jackson_mudholkar_p_first10"), (bx, "box_p_first10")] {
            let p_want = vector(&case[key]);
            let n = new.nrows();
            let mut t2 = vec![0.0; n];
            let mut q = vec![0.0; n];
            model.statistics_into(new, &mut t2, &mut q).unwrap();
            for (i, pw) in p_want.iter().enumerate() {
                let pv = law.p_value(q[i]);
                assert!(
                    rel(pv, *pw) < 1e-7 || (pv - pw).abs() < 1e-14,
                    "{key} row {i}: {pv} vs {pw}"
                );
            }
        }
        // The chart's limits.
        let options = ComponentOptions::default()
            .with_components(fixed(k))
            .with_false_alarm(FalseAlarmRate::per_point(alpha).unwrap());
        let chart = ComponentChart::phase_one(reference, &options).unwrap();
        let t2_two = case["t_squared_phase_two_limit"].as_f64().unwrap();
        let t2_one = case["t_squared_phase_one_limit"].as_f64().unwrap();
        assert!(rel(chart.t_squared_limit(false).unwrap(), t2_two) < 1e-9);
        assert!(rel(chart.t_squared_limit(true).unwrap(), t2_one) < 1e-9);
        // Statistics of the new rows, batch and single-row paths.
        let want_t2 = vector(&case["new_t_squared"]);
        let want_q = vector(&case["new_residual"]);
        let points = chart.monitor(new).unwrap();
        for (i, point) in points.iter().enumerate() {
            assert!(rel(point.t_squared, want_t2[i]) < 1e-9, "row {i} T²");
            assert!(rel(point.residual, want_q[i]) < 1e-8, "row {i} Q");
            let one = model.statistics(&new.row(i).to_vec()).unwrap();
            assert!(rel(one.t_squared, want_t2[i]) < 1e-9);
            assert!(rel(one.residual, want_q[i]) < 1e-8);
        }
    }
}

#[test]
fn t_squared_on_every_component_is_the_full_hotelling_t_squared() {
    // An identity the method must satisfy: with k = p the component
    // subspace is everything, T² = (x − x̄)ᵀ S⁻¹ (x − x̄) whatever the
    // scaling, and Q = 0. Checked against the distance model's own
    // (Cholesky) path on the breast cancer data.
    let f = fixture("component_monitoring.json");
    let x = matrix(&f["data"]);
    let (reference, new) = (x.slice(s![..400, ..]), x.slice(s![400.., ..]));
    let full = DistanceModel::fit(reference).unwrap();
    let d2 = full.squared_distances(new).unwrap();
    for scaling in [VariableScaling::UnitVariance, VariableScaling::Centred] {
        let model = ComponentModel::fit(reference, fixed(30), scaling).unwrap();
        assert!(model
            .residual_law(ResidualLimitMethod::default())
            .unwrap()
            .is_none());
        for (i, (row, &d2i)) in new.outer_iter().zip(d2.iter()).enumerate() {
            let st = model.statistics(&row.to_vec()).unwrap();
            assert!(
                rel(st.t_squared, d2i) < 1e-8,
                "{scaling:?} row {i}: {} vs {}",
                st.t_squared,
                d2i
            );
            assert!(st.residual < 1e-9 * d2i.max(1.0), "Q = {}", st.residual);
        }
    }
}

#[test]
fn contributions_add_up_to_both_statistics() {
    let f = fixture("component_monitoring.json");
    let x = matrix(&f["data"]);
    let model = ComponentModel::fit(
        x.slice(s![..400, ..]),
        fixed(6),
        VariableScaling::UnitVariance,
    )
    .unwrap();
    for i in [400usize, 450, 500, 568] {
        let row = x.row(i).to_vec();
        let why = model.contributions(&row).unwrap();
        let st = model.statistics(&row).unwrap();
        let t: f64 = why.t_squared.iter().sum();
        let q: f64 = why.residual.iter().sum();
        assert!(rel(t, st.t_squared) < 1e-12 && rel(q, st.residual) < 1e-12);
        // The scores reproduce T² = Σ t_a²/λ_a.
        let from_scores: f64 = why
            .scores
            .iter()
            .zip(model.eigenvalues())
            .map(|(t, l)| t * t / l)
            .sum();
        assert!(rel(from_scores, st.t_squared) < 1e-12);
        assert!(why.residual.iter().all(|r| *r >= 0.0));
    }
}

#[test]
fn statistics_are_invariant_to_units_and_rotations() {
    // Invariances of the method: with unit-variance scaling, changing the
    // unit of any variable (x_j → a_j x_j + b_j) changes nothing; with
    // centring only, an orthogonal rotation of the variables changes
    // nothing (eigenvectors rotate with the data).
    let mut rng = Rng(17);
    let (n, p) = (80, 5);
    let base = Array2::from_shape_fn((n, p), |_| rng.normal());
    let mut x = base.clone();
    for i in 0..n {
        // correlated structure
        x[[i, 1]] += 0.8 * x[[i, 0]];
        x[[i, 2]] += 0.5 * x[[i, 1]] - 0.3 * x[[i, 0]];
    }
    let units = [3.0, 0.01, 250.0, 1.0, 7.5];
    let shifted = Array2::from_shape_fn((n, p), |(i, j)| units[j] * x[[i, j]] + j as f64 * 100.0);
    let a = ComponentModel::fit(x.view(), fixed(2), VariableScaling::UnitVariance).unwrap();
    let b = ComponentModel::fit(shifted.view(), fixed(2), VariableScaling::UnitVariance).unwrap();
    for i in 0..n {
        let sa = a.statistics(&x.row(i).to_vec()).unwrap();
        let sb = b.statistics(&shifted.row(i).to_vec()).unwrap();
        assert!(rel(sb.t_squared, sa.t_squared) < 1e-9 && rel(sb.residual, sa.residual) < 1e-8);
    }
    // A rotation in the (0, 3) plane and a swap of columns 1 and 4.
    let (c, s_) = (0.6f64, 0.8f64);
    let rotated = Array2::from_shape_fn((n, p), |(i, j)| match j {
        0 => c * x[[i, 0]] - s_ * x[[i, 3]],
        3 => s_ * x[[i, 0]] + c * x[[i, 3]],
        1 => x[[i, 4]],
        4 => x[[i, 1]],
        _ => x[[i, j]],
    });
    let a = ComponentModel::fit(x.view(), fixed(3), VariableScaling::Centred).unwrap();
    let b = ComponentModel::fit(rotated.view(), fixed(3), VariableScaling::Centred).unwrap();
    for i in 0..n {
        let sa = a.statistics(&x.row(i).to_vec()).unwrap();
        let sb = b.statistics(&rotated.row(i).to_vec()).unwrap();
        assert!(rel(sb.t_squared, sa.t_squared) < 1e-9 && rel(sb.residual, sa.residual) < 1e-8);
    }
}

#[test]
fn residual_limits_hold_their_rate_for_a_known_weighted_chi_square() {
    // A size check that does not share our reading of the formulas: draw
    // Q = Σ λ_j z_j² with independent standard normal z_j (the exact law
    // of Q for normal rows with known eigenvalues) and count how often it
    // exceeds each limit. For comparison, numpy with 4 000 000 draws of the
    // second set gave 4.86% / 0.920% above the Jackson–Mudholkar 5% / 1%
    // limits and 5.04% / 1.12% above Box's (measured for this test).
    let draws = 200_000;
    let mut rng = Rng(2024);
    let cases: [(&[f64], f64); 3] = [
        // Equal eigenvalues: Q/λ is exactly χ²₆, so Box's limit is exact.
        (&[0.3; 6], 0.0),
        // Left-out eigenvalues of a typical residual space (h₀ = 0.25).
        (&[0.5, 0.4, 0.35, 0.3, 0.25, 0.2, 0.15, 0.1], 0.12),
        // A skewed set (h₀ = 0.16): both approximations drift.
        (&[2.0, 1.2, 0.8, 0.5, 0.3, 0.2, 0.1], 0.30),
    ];
    for (lambdas, slack) in cases {
        let q: Vec<f64> = (0..draws)
            .map(|_| {
                lambdas
                    .iter()
                    .map(|l| {
                        let z = rng.normal();
                        l * z * z
                    })
                    .sum()
            })
            .collect();
        for method in [
            ResidualLimitMethod::JacksonMudholkar,
            ResidualLimitMethod::ScaledChiSquare,
        ] {
            let law = ResidualLaw::new(lambdas, method).unwrap();
            for alpha in [0.05, 0.01] {
                let limit = law.upper(alpha).unwrap();
                let rate = q.iter().filter(|v| **v > limit).count() as f64 / draws as f64;
                let se = (alpha * (1.0 - alpha) / draws as f64).sqrt();
                // Exact law: 4 standard errors. Approximations: plus the
                // slack measured above (relative to α).
                let exact = method == ResidualLimitMethod::ScaledChiSquare && slack == 0.0;
                let allowed = 4.0 * se + if exact { 0.0 } else { slack.max(0.12) * alpha };
                assert!(
                    (rate - alpha).abs() < allowed,
                    "{lambdas:?} {method:?} α = {alpha}: {rate}"
                );
                assert!(rel(law.p_value(limit), alpha) < 1e-8);
            }
        }
    }
    // Jackson–Mudholkar needs h₀ > 0: one eigenvalue of 1 among a hundred
    // of 0.01 gives θ = (2, 1.01, 1.0001) and h₀ = 1 − 2θ₁θ₃/(3θ₂²) ≈ −0.31;
    // the law falls back to Box's and says so.
    let mut lambdas = vec![0.01; 100];
    lambdas.push(1.0);
    let skewed = ResidualLaw::new(&lambdas, ResidualLimitMethod::JacksonMudholkar).unwrap();
    assert!(
        (skewed.exponent() + 0.307).abs() < 0.01,
        "{}",
        skewed.exponent()
    );
    assert_eq!(skewed.method(), ResidualLimitMethod::ScaledChiSquare);
    assert!(skewed.upper(0.01).is_ok());
}

fn two_factor_rows(n: usize, seed: u64) -> Array2<f64> {
    // Ten sensors driven by two latent factors plus small noise: the
    // in-control structure of the demos.
    let mut rng = Rng(seed);
    let mut x = Array2::zeros((n, 10));
    for i in 0..n {
        let (a, b) = (rng.normal(), rng.normal());
        for j in 0..10 {
            let w = if j < 5 { (a, 0.2 * b) } else { (0.3 * a, b) };
            x[[i, j]] = (1.0 + j as f64 * 0.1) * (w.0 + w.1) + 0.1 * rng.normal() + 50.0;
        }
    }
    x
}

#[test]
fn phase_one_removes_gross_rows_and_phase_two_sees_a_broken_relationship() {
    let mut history = two_factor_rows(200, 5);
    // Three gross rows, far along the first factor.
    for i in [20, 90, 150] {
        for j in 0..10 {
            history[[i, j]] += 8.0;
        }
    }
    let options = ComponentOptions::default()
        .with_components(fixed(2))
        .with_false_alarm(FalseAlarmRate::per_point(0.001).unwrap())
        .with_removal(SignalRemoval::RefitUntilClean { max_rounds: 5 });
    let chart = ComponentChart::phase_one(history.view(), &options).unwrap();
    for i in [20, 90, 150] {
        assert!(
            matches!(
                chart.phase_one_points()[i].status,
                PointStatus::Removed { .. }
            ),
            "row {i}"
        );
    }
    assert!(chart.rounds().len() >= 2);
    assert!(chart.model().observations() <= 197);
    // New rows: ordinary ones, a shift along the factors (T²), and one
    // sensor that stops following the others (Q).
    let mut new = two_factor_rows(50, 99);
    for j in 0..10 {
        new[[10, j]] += 4.0 * (1.0 + j as f64 * 0.1);
    }
    new[[30, 7]] += 1.5;
    let points = chart.monitor(new.view()).unwrap();
    let signals: Vec<usize> = points
        .iter()
        .filter(|p| p.signal())
        .map(|p| p.index)
        .collect();
    assert!(
        signals.contains(&10) && signals.contains(&30),
        "{signals:?}"
    );
    assert!(
        signals.len() <= 4,
        "too many signals among ordinary rows: {signals:?}"
    );
    assert!(points[10].t_squared_signal);
    assert!(points[30].residual_signal && !points[30].t_squared_signal);
    let why = points[30].diagnosis.as_ref().unwrap();
    assert_eq!(why.largest_residual(1), vec![7]);
    assert!(points[0].diagnosis.is_none() || points[0].signal());
}

#[test]
fn component_count_from_explained_variance() {
    let x = two_factor_rows(150, 3);
    let model = ComponentModel::fit(
        x.view(),
        ComponentCount::ExplainedVariance { fraction: 0.9 },
        VariableScaling::UnitVariance,
    )
    .unwrap();
    let fr = model.explained_fractions();
    let total: f64 = fr.iter().sum();
    assert!(total >= 0.9);
    let without_last: f64 = fr[..fr.len() - 1].iter().sum();
    assert!(without_last < 0.9);
    assert_eq!(model.components(), 2, "two latent factors: {fr:?}");
}

#[test]
fn more_variables_than_rows_works_with_few_components() {
    // p > m: the covariance is singular, yet k components below its rank
    // give a model, limits and statistics.
    let mut rng = Rng(8);
    let (m, p) = (25, 60);
    let x = Array2::from_shape_fn((m, p), |(i, j)| {
        ((i * 3 + j) % 7) as f64 * 0.1 + rng.normal()
    });
    let options = ComponentOptions::default().with_components(fixed(3));
    let chart = ComponentChart::phase_one(x.view(), &options).unwrap();
    assert!(chart.residual_limit().unwrap().unwrap() > 0.0);
    // Asking for more components than the rank is refused with a reason.
    let err = ComponentModel::fit(x.view(), fixed(30), VariableScaling::UnitVariance).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::InvalidParameter);
    assert!(err.to_string().contains("keep fewer components"), "{err}");
}

#[test]
fn bad_input_gets_typed_errors() {
    let x = two_factor_rows(40, 1);
    let mut with_nan = x.clone();
    with_nan[[7, 3]] = f64::NAN;
    let err =
        ComponentModel::fit(with_nan.view(), fixed(2), VariableScaling::UnitVariance).unwrap_err();
    assert!(
        matches!(
            err,
            mvdist::Error::NonFinite {
                row: 7,
                column: 3,
                ..
            }
        ),
        "{err:?}"
    );
    let mut constant = x.clone();
    constant.column_mut(4).fill(1.0);
    let err =
        ComponentModel::fit(constant.view(), fixed(2), VariableScaling::UnitVariance).unwrap_err();
    assert!(
        matches!(err, mvdist::Error::ZeroVariance { column: 4 }),
        "{err:?}"
    );
    assert_eq!(
        ComponentModel::fit(x.view(), fixed(0), VariableScaling::Centred)
            .unwrap_err()
            .kind(),
        ErrorKind::InvalidParameter
    );
    assert_eq!(
        ComponentModel::fit(
            x.view(),
            ComponentCount::ExplainedVariance { fraction: 1.5 },
            VariableScaling::Centred
        )
        .unwrap_err()
        .kind(),
        ErrorKind::InvalidParameter
    );
    assert_eq!(
        ComponentModel::fit(x.slice(s![..1, ..]), fixed(1), VariableScaling::Centred)
            .unwrap_err()
            .kind(),
        ErrorKind::TooFewRows
    );
    let chart = ComponentChart::phase_one(
        x.view(),
        &ComponentOptions::default().with_components(fixed(2)),
    )
    .unwrap();
    assert_eq!(
        chart.monitor(x.slice(s![.., ..5])).unwrap_err().kind(),
        ErrorKind::ShapeMismatch
    );
    let mut bad_new = x.slice(s![..5, ..]).to_owned();
    bad_new[[3, 9]] = f64::INFINITY;
    let err = chart.monitor(bad_new.view()).unwrap_err();
    assert!(
        matches!(
            err,
            mvdist::Error::NonFinite {
                row: 3,
                column: 9,
                ..
            }
        ),
        "{err:?}"
    );
    let mut t2 = vec![0.0; 4];
    let mut q = vec![0.0; 5];
    assert_eq!(
        chart
            .model()
            .statistics_into(x.slice(s![..5, ..]), &mut t2, &mut q)
            .unwrap_err()
            .kind(),
        ErrorKind::ShapeMismatch
    );
    assert!(ResidualLaw::new(&[0.0, 0.0], ResidualLimitMethod::ScaledChiSquare).is_err());
    assert!(ResidualLaw::new(&[1.0, f64::NAN], ResidualLimitMethod::ScaledChiSquare).is_err());
}

#[test]
fn charts_round_trip_through_json_and_refuse_damaged_files() {
    let x = two_factor_rows(60, 2);
    let chart = ComponentChart::phase_one(
        x.view(),
        &ComponentOptions::default().with_components(fixed(2)),
    )
    .unwrap();
    let json = serde_json::to_string(&chart).unwrap();
    let back: ComponentChart = serde_json::from_str(&json).unwrap();
    assert_eq!(back, chart);
    let damaged = json.replacen(
        "\"components\":2,\"observations\"",
        "\"components\":11,\"observations\"",
        1,
    );
    assert_ne!(damaged, json);
    assert!(serde_json::from_str::<ComponentChart>(&damaged).is_err());
}

#[test]
fn batch_statistics_agree_with_single_rows_across_blocks() {
    // More rows than one parallel block (2048) and not a multiple of the
    // four rows the kernel scores together.
    let n = 5003;
    let x = two_factor_rows(n, 12);
    let model = ComponentModel::fit(x.view(), fixed(3), VariableScaling::UnitVariance).unwrap();
    // A column-major copy exercises the copying path of the kernel.
    let fortran = x.t().as_standard_layout().into_owned().reversed_axes();
    for layout in [x.view(), fortran.view()] {
        let mut t2 = vec![0.0; n];
        let mut q = vec![0.0; n];
        model.statistics_into(layout, &mut t2, &mut q).unwrap();
        for i in (0..n).step_by(37).chain([n - 3, n - 2, n - 1]) {
            let one = model.statistics(&x.row(i).to_vec()).unwrap();
            assert!(
                rel(t2[i], one.t_squared) < 1e-11 && rel(q[i], one.residual) < 1e-9,
                "row {i}: {} {} vs {:?}",
                t2[i],
                q[i],
                one
            );
        }
    }
}

#[test]
fn tiny_residuals_keep_their_relative_accuracy() {
    // Rows in the span of the retained components plus a residual 1e-6
    // times their length: `‖c‖² − ‖t‖²` would cancel to about 1e-4
    // relative accuracy, so the batch kernel must form the residual
    // explicitly. The single-row path always does (an independent
    // computation of the same `Q`). Rows with large residuals in the same
    // batch take the shortcut.
    let reference = two_factor_rows(2000, 31);
    let model = ComponentModel::fit(reference.view(), fixed(2), VariableScaling::Centred).unwrap();
    let p = model.dim();
    let loadings = model.loadings();
    let mut rows = Array2::<f64>::zeros((64, p));
    for (i, mut row) in rows.outer_iter_mut().enumerate() {
        let (s0, s1) = (1.0 + i as f64 * 0.1, -2.0 + i as f64 * 0.05);
        let off = if i % 2 == 0 { 1e-6 } else { 0.5 };
        for j in 0..p {
            let along = s0 * loadings[[j, 0]] + s1 * loadings[[j, 1]];
            let across = off * if (i + j) % 3 == 0 { 1.0 } else { -0.5 };
            row[j] = model.location()[j] + along + across;
        }
    }
    let mut t2 = vec![0.0; 64];
    let mut q = vec![0.0; 64];
    model.statistics_into(rows.view(), &mut t2, &mut q).unwrap();
    for (i, (row, &qi)) in rows.outer_iter().zip(q.iter()).enumerate() {
        let one = model.statistics(&row.to_vec()).unwrap();
        assert!(one.residual > 0.0);
        assert!(
            rel(qi, one.residual) < 1e-6,
            "row {i}: Q {qi} vs {}",
            one.residual
        );
    }
}
