//! Held-out calibration rows: conformal p-values, their guarantees, the
//! calibration check and model files that carry them.

use crate::common::Rng;
use mvdist::calibration::{EmpiricalPValue, EmpiricalReference, PValueBasis};
use mvdist::held_out::{
    fit_holding_out, split_rows, CalibrationCheck, CalibrationVerdict, HoldOutOptions,
};
use mvdist::model_file::ModelFile;
use mvdist::robust::McdOptions;
use mvdist::{Adjustment, DistanceModel, RowOrigin};
use ndarray::{Array2, ArrayView2};

/// Rows of a heavy-tailed, skewed or mixed population (invented for the
/// tests, fixed seeds), with correlated columns.
#[derive(Clone, Copy, Debug)]
pub enum Population {
    Normal,
    StudentT3,
    Lognormal,
    Mixture,
}

pub fn draw(rng: &mut Rng, population: Population, n: usize, p: usize) -> Array2<f64> {
    let mut out = Array2::zeros((n, p));
    for mut row in out.outer_iter_mut() {
        let z: Vec<f64> = (0..p).map(|_| rng.normal()).collect();
        // Correlate: x_j = z_j + 0.5 z_{j−1}.
        let mut x: Vec<f64> = (0..p)
            .map(|j| z[j] + if j > 0 { 0.5 * z[j - 1] } else { 0.0 })
            .collect();
        match population {
            Population::Normal => {}
            Population::StudentT3 => {
                let chi: f64 = (0..3).map(|_| rng.normal().powi(2)).sum();
                let s = (chi / 3.0).sqrt();
                x.iter_mut().for_each(|v| *v /= s);
            }
            Population::Lognormal => x.iter_mut().for_each(|v| *v = (0.8 * *v).exp()),
            Population::Mixture => {
                if rng.uniform() < 0.2 {
                    x.iter_mut()
                        .enumerate()
                        .for_each(|(j, v)| *v = 3.0 * *v + 2.0 * (j % 2) as f64);
                }
            }
        }
        for (r, v) in row.iter_mut().zip(x) {
            *r = v;
        }
    }
    out
}

/// Rejection rates at `alpha` of one new row per repetition, for the
/// held-out p-value and for the F reference of the same model.
fn rejection_rates(
    population: Population,
    reps: usize,
    n: usize,
    p: usize,
    alphas: &[f64],
    seed: u64,
) -> Vec<(f64, f64)> {
    let mut rng = Rng(seed);
    let mut conformal = vec![0usize; alphas.len()];
    let mut parametric = vec![0usize; alphas.len()];
    let options = HoldOutOptions::default().with_fraction(0.5);
    for rep in 0..reps {
        let rows = draw(&mut rng, population, n + 1, p);
        let (reference, new) = rows.view().split_at(ndarray::Axis(0), n);
        let model = fit_holding_out(reference, &options.clone().with_seed(rep as u64), |r| {
            DistanceModel::fit(r)
        })
        .unwrap();
        let held = model
            .score_held_out(new, EmpiricalPValue::Marginal)
            .unwrap();
        let law = model.score(new, RowOrigin::New).unwrap();
        for (k, &a) in alphas.iter().enumerate() {
            conformal[k] += usize::from(held.p_values()[0] <= a);
            parametric[k] += usize::from(law.p_values()[0] <= a);
        }
    }
    conformal
        .iter()
        .zip(&parametric)
        .map(|(&c, &f)| (c as f64 / reps as f64, f as f64 / reps as f64))
        .collect()
}

fn standard_error(alpha: f64, reps: usize) -> f64 {
    (alpha * (1.0 - alpha) / reps as f64).sqrt()
}

/// Finite-sample validity, short version (the long one is ignored by
/// default): rejection rate at most α + 3 standard errors for a t₃
/// population, where the F reference rejects far too often.
#[test]
fn held_out_p_values_are_valid_for_heavy_tails_short() {
    let reps = 3000;
    let rates = rejection_rates(Population::StudentT3, reps, 199, 3, &[0.05], 1);
    let (c, f) = rates[0];
    let se = standard_error(0.05, reps);
    // With m = 100 calibration rows and continuous scores the rejection
    // rate is exactly ⌊α(m + 1)⌋/(m + 1) (Bates et al. 2023): two-sided.
    let exact = (0.05f64 * 101.0).floor() / 101.0;
    assert!(
        (c - exact).abs() <= 3.0 * se,
        "held-out rate {c} vs {exact}"
    );
    assert!(f > 0.05 + 3.0 * se, "F rate {f} should fail under t3");
}

/// Super-uniform in simulation under t₃, lognormal and a mixture, at
/// α = 0.05 and 0.01 (rejection rate ≤ α + 3 SE), and the F reference
/// measurably fails on the same data. Prints both rates.
#[test]
#[ignore = "long simulation; run in release mode"]
fn held_out_p_values_are_valid_where_the_f_reference_fails() {
    let reps = 40_000;
    let alphas = [0.05, 0.01];
    for (k, population) in [
        Population::StudentT3,
        Population::Lognormal,
        Population::Mixture,
    ]
    .into_iter()
    .enumerate()
    {
        let rates = rejection_rates(population, reps, 399, 4, &alphas, 100 + k as u64);
        for (&a, &(c, f)) in alphas.iter().zip(&rates) {
            let se = standard_error(a, reps);
            println!("{population:?} alpha {a}: held-out {c:.4}, F {f:.4} (SE {se:.4})");
            assert!(c <= a + 3.0 * se, "{population:?} α={a}: held-out rate {c}");
            // Exactly ⌊α(m + 1)⌋/(m + 1) with m = 200 held-out rows.
            let exact = (a * 201.0).floor() / 201.0;
            assert!(
                (c - exact).abs() <= 3.0 * se,
                "{population:?} α={a}: {c} vs {exact}"
            );
            assert!(
                (f - a).abs() > 3.0 * se,
                "{population:?} α={a}: F rate {f} should differ from α"
            );
        }
    }
    // Under normal rows both are valid.
    let rates = rejection_rates(Population::Normal, reps, 399, 4, &alphas, 7);
    for (&a, &(c, f)) in alphas.iter().zip(&rates) {
        let se = standard_error(a, reps);
        println!("Normal alpha {a}: held-out {c:.4}, F {f:.4}");
        assert!(c <= a + 3.0 * se && (f - a).abs() <= 4.0 * se);
    }
}

/// Benjamini–Hochberg on held-out p-values controls the false discovery
/// rate (Bates et al. 2023, Theorem 2): planted outliers among t₃ rows.
#[test]
#[ignore = "long simulation; run in release mode"]
fn benjamini_hochberg_on_held_out_p_values_controls_the_fdr() {
    let reps = 2000;
    let q = 0.1;
    let mut rng = Rng(77);
    let mut fdp_sum = 0.0;
    let mut fdp_sq = 0.0;
    let mut power = 0.0;
    for rep in 0..reps {
        let reference = draw(&mut rng, Population::StudentT3, 1000, 4);
        let model = fit_holding_out(
            reference.view(),
            &HoldOutOptions::default().with_fraction(0.5).with_seed(rep),
            |r| DistanceModel::fit(r),
        )
        .unwrap();
        let mut batch = draw(&mut rng, Population::StudentT3, 200, 4);
        // Outliers that break the correlation: ±8 in alternate columns.
        for i in 0..20 {
            for j in 0..4 {
                batch[(i, j)] += if j % 2 == 0 { 8.0 } else { -8.0 };
            }
        }
        let flags = model
            .score_held_out(batch.view(), EmpiricalPValue::Marginal)
            .unwrap()
            .flags(q, Adjustment::BenjaminiHochberg)
            .unwrap();
        let discoveries = flags.iter().filter(|&&f| f).count();
        let false_ones = flags[20..].iter().filter(|&&f| f).count();
        let fdp = if discoveries == 0 {
            0.0
        } else {
            false_ones as f64 / discoveries as f64
        };
        fdp_sum += fdp;
        fdp_sq += fdp * fdp;
        power += flags[..20].iter().filter(|&&f| f).count() as f64 / 20.0;
    }
    let fdr = fdp_sum / reps as f64;
    let se = ((fdp_sq / reps as f64 - fdr * fdr) / reps as f64).sqrt();
    println!(
        "FDR {fdr:.4} (SE {se:.4}), power {:.3}",
        power / reps as f64
    );
    assert!(fdr <= q + 3.0 * se, "FDR {fdr}");
    assert!(power / reps as f64 > 0.5);
}

/// The calibration-conditional p-value: over many calibration sets, the
/// share of sets whose exact conditional rejection rate exceeds α is at
/// most δ; for the marginal p-value it is far larger. Scores are Exp(1)
/// draws, so the conditional rate at a cutoff t is exactly e^(−t).
#[test]
fn calibration_conditional_p_values_hold_given_the_calibration_set() {
    let (sets, m, alpha, delta) = (2000, 400, 0.1, 0.1);
    let mut rng = Rng(3);
    let mut over_conditional = 0;
    let mut over_marginal = 0;
    let mut mean_marginal = 0.0;
    for _ in 0..sets {
        let values: Vec<f64> = (0..m).map(|_| -(1.0 - rng.uniform()).ln()).collect();
        let r = EmpiricalReference::from_squared_distances(values).unwrap();
        let tc = r
            .cutoff(alpha, EmpiricalPValue::CalibrationConditional { delta })
            .unwrap();
        let tm = r.cutoff(alpha, EmpiricalPValue::Marginal).unwrap();
        over_conditional += usize::from((-tc).exp() > alpha);
        over_marginal += usize::from((-tm).exp() > alpha);
        mean_marginal += (-tm).exp();
    }
    let share_c = over_conditional as f64 / sets as f64;
    let share_m = over_marginal as f64 / sets as f64;
    let se = standard_error(delta, sets);
    assert!(share_c <= delta + 3.0 * se, "conditional: {share_c}");
    assert!(share_m > 0.3, "marginal: {share_m}");
    // The marginal guarantee: the average rate is floor(α(m+1))/(m+1).
    let exact = (alpha * (m as f64 + 1.0)).floor() / (m as f64 + 1.0);
    let mean = mean_marginal / sets as f64;
    assert!(
        (mean - exact).abs() < 3.0 * (0.1 * 0.9 / m as f64 / sets as f64).sqrt() + 1e-3,
        "{mean} vs {exact}"
    );
}

#[test]
fn too_few_calibration_rows_for_the_level_say_so() {
    let mut rng = Rng(9);
    let rows = draw(&mut rng, Population::Normal, 80, 3);
    let model = fit_holding_out(rows.view(), &HoldOutOptions::default(), |r| {
        DistanceModel::fit(r)
    })
    .unwrap();
    assert_eq!(model.calibration().unwrap().len(), 20);
    let e = model
        .held_out_cutoff(0.01, EmpiricalPValue::Marginal)
        .unwrap_err();
    let text = e.to_string();
    assert!(
        text.contains("smallest p-value") && text.contains("hold out at least 99"),
        "{text}"
    );
    assert!(model
        .held_out_cutoff(0.05, EmpiricalPValue::Marginal)
        .is_ok());
    // p-values never go below 1/(m + 1).
    let far = ndarray::array![[50.0, 50.0, 50.0]];
    let s = model
        .score_held_out(far.view(), EmpiricalPValue::Marginal)
        .unwrap();
    assert_eq!(s.p_values()[0], 1.0 / 21.0);
    assert_eq!(
        s.basis(),
        PValueBasis::HeldOut {
            rows: 20,
            kind: EmpiricalPValue::Marginal
        }
    );
    assert!(s.reference().is_none());
    // A model without calibration rows says how to get them.
    let plain = DistanceModel::fit(rows.view()).unwrap();
    let e = plain
        .score_held_out(far.view(), EmpiricalPValue::Marginal)
        .unwrap_err();
    assert!(e.to_string().contains("fit_holding_out"), "{e}");
    // Bad options.
    for fraction in [0.0, 1.0, f64::NAN, 0.001] {
        assert!(fit_holding_out(
            rows.view(),
            &HoldOutOptions::default().with_fraction(fraction),
            |r| DistanceModel::fit(r)
        )
        .is_err());
    }
    assert!(model
        .score_held_out(
            far.view(),
            EmpiricalPValue::CalibrationConditional { delta: 0.9 }
        )
        .is_err());
}

#[test]
fn the_split_is_seeded_and_any_estimator_fits() {
    let (a, b) = split_rows(100, &HoldOutOptions::default().with_seed(4)).unwrap();
    let (c, d) = split_rows(100, &HoldOutOptions::default().with_seed(4)).unwrap();
    assert_eq!((a.clone(), b.clone()), (c, d));
    assert_eq!(b.len(), 25);
    let mut all: Vec<usize> = a.iter().chain(&b).copied().collect();
    all.sort_unstable();
    assert_eq!(all, (0..100).collect::<Vec<_>>());
    let mut rng = Rng(12);
    let rows = draw(&mut rng, Population::Mixture, 300, 3);
    let options = McdOptions::default().with_seed(1);
    let model = fit_holding_out(rows.view(), &HoldOutOptions::default(), |r| {
        DistanceModel::fit_mcd(r, &options)
    })
    .unwrap();
    assert_eq!(model.sample_size(), 225);
    // The calibration values are the model's distances of the held-out rows.
    let (_, held) = split_rows(300, &HoldOutOptions::default()).unwrap();
    let held_rows = rows.select(ndarray::Axis(0), &held);
    let mut want = model.squared_distances(held_rows.view()).unwrap();
    want.sort_by(f64::total_cmp);
    assert_eq!(model.calibration().unwrap().squared_distances(), &want[..]);
    // A non-finite cell is named by its row in the whole input.
    let mut bad = rows.clone();
    bad[(held[3], 1)] = f64::NAN;
    match fit_holding_out(bad.view(), &HoldOutOptions::default(), |r| {
        DistanceModel::fit(r)
    }) {
        Err(mvdist::Error::NonFinite { row, column: 1, .. }) => assert_eq!(row, held[3]),
        other => panic!("{other:?}"),
    }
}

fn check_of(population: Population, n: usize, seed: u64) -> CalibrationCheck {
    let mut rng = Rng(seed);
    let rows = draw(&mut rng, population, n, 4);
    let model = fit_holding_out(
        rows.view(),
        &HoldOutOptions::default().with_fraction(0.5).with_seed(seed),
        |r: ArrayView2<'_, f64>| DistanceModel::fit(r),
    )
    .unwrap();
    CalibrationCheck::of_model(&model).unwrap()
}

#[test]
fn the_calibration_check_reads_the_data() {
    // Heavy tails: the F cutoff at 1% flags several times too many rows.
    let t3 = check_of(Population::StudentT3, 8000, 2);
    let one = &t3.levels()[1];
    assert_eq!(one.alpha, 0.01);
    assert_eq!(
        one.verdict,
        CalibrationVerdict::TooManyFlags,
        "{}",
        one.reading
    );
    assert!(
        one.reading.contains("do not trust it here"),
        "{}",
        one.reading
    );
    assert!(t3.any_too_many());
    assert!(one.interval[0] <= one.rate && one.rate <= one.interval[1]);
    // Normal rows: consistent at the levels it can judge.
    let normal = check_of(Population::Normal, 8000, 3);
    for level in normal.levels() {
        assert_ne!(
            level.verdict,
            CalibrationVerdict::TooManyFlags,
            "{}",
            level.reading
        );
    }
    // Few rows: the smallest level cannot be judged, and says how many rows it needs.
    let small = check_of(Population::Normal, 400, 4);
    assert_eq!(small.levels()[2].verdict, CalibrationVerdict::TooFewRows);
    assert!(small.levels()[2]
        .reading
        .contains("hold out at least 5000 rows"));
    // The Q–Q chart: one point per held-out row (up to the cap), axes and cutoffs.
    let svg = small.to_svg("calibration of the F cutoff");
    assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
    assert_eq!(svg.matches("<circle").count(), 200);
    assert!(svg.contains("cutoff at 1.0%"));
    let big = t3.to_svg("t3");
    assert!(big.matches("<circle").count() <= 2100);
    // Theoretical quantiles increase with the ranks.
    assert!(t3.theoretical.windows(2).all(|w| w[0] < w[1]));
    assert_eq!(t3.held_out_rows, 4000);
    assert!(t3.observed.len() <= 2100 && t3.observed.len() >= 2000);
    assert_eq!(small.observed.len(), 200);
}

#[test]
fn model_files_carry_calibration_rows_and_old_versions_still_read() {
    let mut rng = Rng(21);
    let rows = draw(&mut rng, Population::Lognormal, 200, 2);
    let model = fit_holding_out(rows.view(), &HoldOutOptions::default(), |r| {
        DistanceModel::fit(r)
    })
    .unwrap();
    let file = ModelFile::new(vec!["a".into(), "b".into()], model.clone()).unwrap();
    let json = file.to_json();
    assert!(json.contains("\"format_version\": 2"));
    assert!(json.contains("\"calibration\""));
    let back = ModelFile::from_json(&json).unwrap();
    assert_eq!(back.model(), &model);
    let bytes = file.to_bytes();
    assert_eq!(ModelFile::from_bytes(&bytes).unwrap().model(), &model);
    // A damaged calibration value is refused.
    let tampered = json.replacen(
        "\"squared_distances\": [",
        "\"squared_distances\": [-1.0, ",
        1,
    );
    assert!(ModelFile::from_json(&tampered).is_err());
    // A version 1 JSON file (written by hand, without a checksum).
    let v1 = r#"{"format": "mvdist-model", "format_version": 1, "variables": ["a", "b"],
        "n": 10, "location": [1.0, 2.0], "scatter": [[2.0, 0.5], [0.5, 1.0]],
        "estimator": {"kind": "classical", "divisor": "unbiased"}}"#;
    let old = ModelFile::from_json(v1).unwrap();
    assert!(old.model().calibration().is_none());
    // A version 1 binary file: the version 2 bytes without the calibration
    // count, with the version and the CRC-32 (IEEE, written here) redone.
    let plain = ModelFile::new(vec!["a".into(), "b".into()], old.model().clone()).unwrap();
    let v2 = plain.to_bytes();
    let mut v1 = v2[..v2.len() - 12].to_vec();
    v1[4..6].copy_from_slice(&1u16.to_le_bytes());
    let crc = crc32_ieee(&v1);
    v1.extend_from_slice(&crc.to_le_bytes());
    let read = ModelFile::from_bytes(&v1).unwrap();
    assert_eq!(read.model(), old.model());
    // A truncated calibration section.
    let cut = &bytes[..bytes.len() - 20];
    assert!(ModelFile::from_bytes(cut).is_err());
}

fn crc32_ieee(bytes: &[u8]) -> u32 {
    let mut crc = 0xFFFF_FFFFu32;
    for &b in bytes {
        crc ^= u32::from(b);
        for _ in 0..8 {
            crc = if crc & 1 == 1 {
                (crc >> 1) ^ 0xEDB8_8320
            } else {
                crc >> 1
            };
        }
    }
    !crc
}
