//! Criterion benchmarks for distance-to-centroid classification.
//!
//! Run `bash benches/classification_side_by_side.sh` to time numpy on the
//! same problem in the same run and print the ratio table that the README
//! reports.
//!
//! * `classify_predict/{linear,quadratic}`: 1 000 000 rows, p = 16, 10
//!   groups; the most probable group, squared distances to every centroid
//!   and posteriors, into a reused buffer.
//! * `classify_predict_typicality/{linear,quadratic}`: the same plus the
//!   typicality of each row under its group.
//! * `classify_leave_one_out/{linear,quadratic}`: leave-one-out on 100 000
//!   training rows (fit included).

mod support;

use criterion::{criterion_group, criterion_main, Criterion};
use mvdist::classification::{
    Classifier, ClassifierOptions, LeaveOneOut, PredictOptions, Predictions, Rule,
};
use ndarray::Array2;
use rand::{rngs::StdRng, Rng, SeedableRng};
use rand_distr::StandardNormal;
use std::time::Duration;

const P: usize = 16;
const GROUPS: usize = 10;

/// `n` rows cycling through `GROUPS` groups, each with its own centre and
/// its own random lower-triangular mixing of standard normal noise.
fn labelled_rows(n: usize, seed: u64) -> (Array2<f64>, Vec<u32>) {
    let mut rng = StdRng::seed_from_u64(seed);
    let mut mixes = Vec::new();
    let mut centres = Vec::new();
    for _ in 0..GROUPS {
        centres.push(
            (0..P)
                .map(|_| 3.0 * rng.sample::<f64, _>(StandardNormal))
                .collect::<Vec<_>>(),
        );
        mixes.push(support::lower_mix(&mut rng, P, 0.3));
    }
    let mut x = Array2::<f64>::zeros((n, P));
    let mut labels = Vec::with_capacity(n);
    let mut z = [0.0; P];
    for (r, mut row) in x.outer_iter_mut().enumerate() {
        let g = r % GROUPS;
        for v in z.iter_mut() {
            *v = rng.sample(StandardNormal);
        }
        for i in 0..P {
            row[i] = centres[g][i] + (0..=i).map(|j| mixes[g][i * P + j] * z[j]).sum::<f64>();
        }
        labels.push(g as u32);
    }
    (x, labels)
}

fn rules() -> [(Rule, &'static str); 2] {
    [(Rule::Linear, "linear"), (Rule::Quadratic, "quadratic")]
}

fn bench_predict(c: &mut Criterion) {
    let (train, labels) = labelled_rows(20_000, 1);
    let (x, _) = labelled_rows(1_000_000, 2);
    for (group, options) in [
        (
            "classify_predict",
            PredictOptions::default().with_typicality(false),
        ),
        ("classify_predict_typicality", PredictOptions::default()),
    ] {
        let mut g = c.benchmark_group(group);
        g.sample_size(10).measurement_time(Duration::from_secs(8));
        for (rule, name) in rules() {
            let classifier =
                Classifier::fit(train.view(), &labels, &ClassifierOptions::new(rule)).expect("fit");
            let mut out = Predictions::new();
            classifier
                .predict_into(x.view(), &options, &mut out)
                .expect("warm");
            g.bench_function(name, |b| {
                b.iter(|| {
                    classifier
                        .predict_into(x.view(), &options, &mut out)
                        .expect("predict")
                })
            });
        }
        g.finish();
    }
}

fn bench_leave_one_out(c: &mut Criterion) {
    let (train, labels) = labelled_rows(100_000, 3);
    let mut g = c.benchmark_group("classify_leave_one_out");
    g.sample_size(10).measurement_time(Duration::from_secs(8));
    for (rule, name) in rules() {
        let options = ClassifierOptions::new(rule);
        g.bench_function(name, |b| {
            b.iter(|| LeaveOneOut::estimate(train.view(), &labels, &options).expect("loo"))
        });
    }
    g.finish();
}

criterion_group!(benches, bench_predict, bench_leave_one_out);
criterion_main!(benches);
