//! The prepared scorer and the regular batch entry points: every input
//! shape (view of any layout, row-major slice, f64 or f32) gives the same
//! numbers, flags agree with p-values, and the flag rate on clean new rows
//! matches the level (a size simulation that does not share our reading of
//! the F law: it only counts).

use crate::common::Rng;
use mvdist::data::Rows;
use mvdist::{DistanceModel, Error, ErrorKind, RowOrigin, Scorer};
use ndarray::{Array2, ShapeBuilder};

fn normal_rows(rng: &mut Rng, n: usize, p: usize) -> Array2<f64> {
    // Correlated columns: x_j = z_j + 0.5 z_{j−1}.
    let z = Array2::from_shape_fn((n, p), |_| rng.normal());
    Array2::from_shape_fn((n, p), |(i, j)| {
        z[(i, j)] + if j > 0 { 0.5 * z[(i, j - 1)] } else { 0.0 }
    })
}

#[test]
fn flags_agree_with_p_values_and_the_model_cutoff() {
    let mut rng = Rng(3);
    let x = normal_rows(&mut rng, 40, 5);
    let model = DistanceModel::fit(x.view()).unwrap();
    let new = normal_rows(&mut rng, 3000, 5) * 1.4;
    for origin in [RowOrigin::New, RowOrigin::KnownParameters] {
        let alpha = 0.02;
        let scorer = Scorer::new(model.clone(), origin, alpha).unwrap();
        assert_eq!(scorer.cutoff(), model.cutoff(alpha, origin).unwrap());
        let (mut d2, mut p, mut flags) = (vec![0.0; 3000], vec![0.0; 3000], vec![false; 3000]);
        let flagged = scorer
            .score_into(new.view(), &mut d2, Some(&mut p), &mut flags)
            .unwrap();
        let scores = model.score(new.view(), origin).unwrap();
        assert_eq!(d2, scores.squared_distances());
        assert_eq!(p, scores.p_values());
        assert_eq!(flagged, flags.iter().filter(|&&f| f).count());
        assert!(flagged > 0);
        for i in 0..3000 {
            // Away from the cutoff itself, d² > c exactly when p < α.
            if (d2[i] / scorer.cutoff() - 1.0).abs() > 1e-9 {
                assert_eq!(flags[i], p[i] < alpha, "row {i}");
            }
            let one = scorer.score_row(new.row(i).as_slice().unwrap()).unwrap();
            assert_eq!(one.flagged, flags[i]);
            assert_eq!(one.squared_distance, d2[i]);
        }
    }
}

#[test]
fn every_input_shape_gives_the_same_distances() {
    let mut rng = Rng(5);
    let x = normal_rows(&mut rng, 60, 6);
    let model = DistanceModel::fit(&x).unwrap();
    // Values exact in f32, so the f32 path must agree to the last digit.
    let rows = normal_rows(&mut rng, 5000, 6).mapv(|v| f64::from(v as f32));
    let want = model.squared_distances(rows.view()).unwrap();
    let flat: Vec<f64> = rows.iter().copied().collect();
    assert_eq!(
        model
            .squared_distances(Rows::from_slice(&flat, 6).unwrap())
            .unwrap(),
        want
    );
    let narrow = rows.mapv(|v| v as f32);
    assert_eq!(model.squared_distances(narrow.view()).unwrap(), want);
    let flat32: Vec<f32> = narrow.iter().copied().collect();
    assert_eq!(
        model
            .squared_distances(Rows::from_slice_f32(&flat32, 6).unwrap())
            .unwrap(),
        want
    );
    // A row count that leaves a partial group of eight in the last task.
    let odd = narrow.slice(ndarray::s![..4997, ..]);
    assert_eq!(model.squared_distances(odd).unwrap(), want[..4997]);
    let mut column_major = Array2::<f32>::zeros((5000, 6).f());
    column_major.assign(&narrow);
    assert_eq!(model.squared_distances(column_major.view()).unwrap(), want);
    // Fits take the same inputs.
    let narrow_fit =
        DistanceModel::fit(x.mapv(|v| f64::from(v as f32)).mapv(|v| v as f32).view()).unwrap();
    let wide_fit = DistanceModel::fit(x.mapv(|v| f64::from(v as f32)).view()).unwrap();
    assert_eq!(narrow_fit, wide_fit);
}

#[test]
fn bad_batches_are_typed_errors() {
    let mut rng = Rng(9);
    let x = normal_rows(&mut rng, 30, 3);
    let model = DistanceModel::fit(x.view()).unwrap();
    let scorer = Scorer::new(model.clone(), RowOrigin::New, 0.01).unwrap();
    let mut rows = normal_rows(&mut rng, 10, 3).mapv(|v| v as f32);
    rows[(7, 2)] = f32::NAN;
    let (mut d2, mut flags) = (vec![0.0; 10], vec![false; 10]);
    let e = scorer
        .score_into(rows.view(), &mut d2, None, &mut flags)
        .unwrap_err();
    assert!(
        matches!(
            e,
            Error::NonFinite {
                row: 7,
                column: 2,
                ..
            }
        ),
        "{e}"
    );
    let mut short = vec![false; 9];
    assert!(matches!(
        scorer.score_into(rows.view(), &mut d2, None, &mut short),
        Err(Error::ShapeMismatch { .. })
    ));
    let mut short_p = vec![0.0; 3];
    assert!(matches!(
        scorer.score_into(rows.view(), &mut d2, Some(&mut short_p), &mut flags),
        Err(Error::ShapeMismatch { .. })
    ));
    assert!(matches!(
        model.squared_distances(Rows::from_slice(&[1.0, 2.0, 3.0, 4.0], 2).unwrap()),
        Err(Error::ShapeMismatch { .. })
    ));
    assert!(matches!(
        Rows::from_slice_f32(&[1.0; 5], 2),
        Err(Error::ShapeMismatch { .. })
    ));
    assert!(matches!(
        Rows::from_slice_f32(&[1.0; 4], 0),
        Err(Error::Empty { .. })
    ));
    for alpha in [0.0, 1.0, f64::NAN] {
        assert_eq!(
            Scorer::new(model.clone(), RowOrigin::New, alpha)
                .unwrap_err()
                .kind(),
            ErrorKind::InvalidParameter
        );
    }
}

#[test]
fn flag_rate_on_clean_new_rows_matches_the_level() {
    // Size simulation: 400 fits of n = 25 rows, p = 4, each scoring 100 new
    // rows from the same normal population at α = 0.05. The F reference is
    // exact, so the rate is 0.05 up to simulation error; the pooled rate
    // over 40 000 rows (correlated within a fit) has a standard error of
    // about 0.002. χ²(p) on the same rows is far too liberal (common
    // practice; measured here as a contrast).
    let mut rng = Rng(17);
    let (mut f_flags, mut chi_flags, mut total) = (0usize, 0usize, 0usize);
    for _ in 0..400 {
        let x = normal_rows(&mut rng, 25, 4);
        let model = DistanceModel::fit(x.view()).unwrap();
        let new = normal_rows(&mut rng, 100, 4);
        let (mut d2, mut flags) = (vec![0.0; 100], vec![false; 100]);
        let f = Scorer::new(model.clone(), RowOrigin::New, 0.05).unwrap();
        f_flags += f.score_into(new.view(), &mut d2, None, &mut flags).unwrap();
        let chi = Scorer::new(model, RowOrigin::KnownParameters, 0.05).unwrap();
        chi_flags += chi
            .score_into(new.view(), &mut d2, None, &mut flags)
            .unwrap();
        total += 100;
    }
    let f_rate = f_flags as f64 / total as f64;
    let chi_rate = chi_flags as f64 / total as f64;
    eprintln!("flag rate at 5%: F {f_rate:.4}, chi-square {chi_rate:.4}");
    assert!((f_rate - 0.05).abs() < 0.01, "{f_rate}");
    assert!(chi_rate > 0.07, "{chi_rate}");
}
