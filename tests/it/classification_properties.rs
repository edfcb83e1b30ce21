//! Properties of distance-to-centroid classification on random groups
//! (invented data from a fixed-seed generator, for these checks only).

use crate::common::{rel, Rng};
use mvdist::classification::{Classifier, ClassifierOptions, LeaveOneOut, Priors, Rule};
use mvdist::Divisor;
use ndarray::{Array2, Axis};
use proptest::prelude::*;

/// `groups` groups of `per_group` rows in `p` variables: each group has its
/// own centre and a random linear mixing of standard normal noise.
fn groups(seed: u64, groups: usize, per_group: usize, p: usize) -> (Array2<f64>, Vec<usize>) {
    let mut rng = Rng(seed);
    let mut x = Array2::<f64>::zeros((groups * per_group, p));
    let mut labels = Vec::with_capacity(groups * per_group);
    for g in 0..groups {
        let centre: Vec<f64> = (0..p).map(|_| 3.0 * rng.normal()).collect();
        let mix: Vec<f64> = (0..p * p)
            .map(|k| {
                if k % (p + 1) == 0 {
                    1.0 + rng.uniform()
                } else {
                    0.4 * rng.normal()
                }
            })
            .collect();
        for r in 0..per_group {
            let z: Vec<f64> = (0..p).map(|_| rng.normal()).collect();
            for i in 0..p {
                x[(g * per_group + r, i)] =
                    centre[i] + (0..p).map(|j| mix[i * p + j] * z[j]).sum::<f64>();
            }
            labels.push(g);
        }
    }
    (x, labels)
}

fn rule_of(quadratic: bool) -> Rule {
    if quadratic {
        Rule::Quadratic
    } else {
        Rule::Linear
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn posteriors_are_probabilities_summing_to_one(seed in any::<u64>(), g in 2usize..6, p in 1usize..6, quadratic in any::<bool>(), spread in 0.1f64..100.0) {
        let (x, labels) = groups(seed, g, 3 * p + 4, p);
        let mut rng = Rng(seed ^ 1);
        let given: Vec<(usize, f64)> = (0..g).map(|h| (h, 0.05 + rng.uniform())).collect();
        let options = ClassifierOptions::new(rule_of(quadratic)).with_priors(Priors::Given(given));
        let c = Classifier::fit(x.view(), &labels, &options).unwrap();
        let test = x.mapv(|v| v * spread);
        let out = c.predict(test.view()).unwrap();
        for (i, row) in out.posteriors().outer_iter().enumerate() {
            let total: f64 = row.sum();
            prop_assert!((total - 1.0).abs() < 1e-12, "row {} sums to {}", i, total);
            prop_assert!(row.iter().all(|&q| (0.0..=1.0).contains(&q)));
            let best = out.assigned()[i];
            prop_assert!(row.iter().all(|&q| q <= row[best]));
            let t = out.typicality()[i];
            prop_assert!((0.0..=1.0).contains(&t));
        }
    }

    #[test]
    fn two_groups_equal_priors_linear_rule_is_fishers_discriminant(seed in any::<u64>(), p in 1usize..7) {
        // Fisher (1936): assign to group 1 iff wᵀx − c > 0 with
        // w = S⁻¹(μ₁ − μ₂), c = wᵀ(μ₁ + μ₂)/2, S the pooled covariance.
        let (x, labels) = groups(seed, 2, 2 * p + 5, p);
        let c = Classifier::fit(x.view(), &labels, &ClassifierOptions::new(Rule::Linear).with_priors(Priors::Equal)).unwrap();
        let mu = c.centroids();
        let diff: Vec<f64> = (0..p).map(|j| mu[(0, j)] - mu[(1, j)]).collect();
        let w = c.pooled_scatter().unwrap().solve(&diff).unwrap();
        let cut: f64 = (0..p).map(|j| w[j] * 0.5 * (mu[(0, j)] + mu[(1, j)])).sum();
        let mut rng = Rng(seed ^ 7);
        let test = Array2::from_shape_fn((200, p), |(_, j)| 0.5 * (mu[(0, j)] + mu[(1, j)]) + 4.0 * rng.normal());
        let out = c.predict(test.view()).unwrap();
        for (i, row) in test.outer_iter().enumerate() {
            let score: f64 = row.iter().zip(&w).map(|(a, b)| a * b).sum::<f64>() - cut;
            let scale: f64 = row.iter().zip(&w).map(|(a, b)| (a * b).abs()).sum::<f64>() + cut.abs();
            if score.abs() > 1e-9 * scale {
                prop_assert_eq!(out.assigned()[i], if score > 0.0 { 0 } else { 1 });
            }
        }
    }

    #[test]
    fn predictions_are_unchanged_by_an_affine_change_of_variables(seed in any::<u64>(), g in 2usize..5, p in 1usize..6, quadratic in any::<bool>()) {
        let (x, labels) = groups(seed, g, 2 * p + 6, p);
        let mut rng = Rng(seed ^ 3);
        let a: Vec<f64> = (0..p * p).map(|k| if k % (p + 1) == 0 { 2.0 + rng.uniform() } else { 0.5 * rng.normal() }).collect();
        let b: Vec<f64> = (0..p).map(|_| 100.0 * rng.normal()).collect();
        let transform = |m: &Array2<f64>| Array2::from_shape_fn(m.dim(), |(i, r)| b[r] + (0..p).map(|j| a[r * p + j] * m[(i, j)]).sum::<f64>());
        let options = ClassifierOptions::new(rule_of(quadratic));
        let c = Classifier::fit(x.view(), &labels, &options).unwrap();
        let ct = Classifier::fit(transform(&x).view(), &labels, &options).unwrap();
        let test = x.mapv(|v| 1.5 * v + 0.3);
        let out = c.predict(test.view()).unwrap();
        let out_t = ct.predict(transform(&test).view()).unwrap();
        for i in 0..test.nrows() {
            for h in 0..g {
                let (d, dt) = (out.squared_distances()[(i, h)], out_t.squared_distances()[(i, h)]);
                prop_assert!(rel(dt, d) < 1e-8 || (dt - d).abs() < 1e-10, "{} {}", d, dt);
                prop_assert!((out.posteriors()[(i, h)] - out_t.posteriors()[(i, h)]).abs() < 1e-8);
            }
            let (p0, p1) = (out.posteriors(), out_t.posteriors());
            let margin = {
                let mut v: Vec<f64> = p0.row(i).to_vec();
                v.sort_by(|x, y| y.total_cmp(x));
                v[0] - v[1]
            };
            if margin > 1e-6 {
                prop_assert_eq!(out.assigned()[i], out_t.assigned()[i], "{:?} {:?}", p0.row(i), p1.row(i));
            }
            prop_assert!((out.typicality()[i] - out_t.typicality()[i]).abs() < 1e-8);
        }
    }

    #[test]
    fn relabelling_groups_permutes_the_output(seed in any::<u64>(), g in 2usize..6, p in 1usize..5, quadratic in any::<bool>()) {
        let (x, labels) = groups(seed, g, 2 * p + 6, p);
        // Rename group h to (h·k + s) mod g with k coprime to g, and reverse
        // the row order so that groups appear in another order.
        let k = (1..g + 1).find(|k| gcd(*k, g) == 1 && *k > 1).unwrap_or(1);
        let s = (seed % g as u64) as usize;
        let rename = |h: usize| (h * k + s) % g;
        let order: Vec<usize> = (0..x.nrows()).rev().collect();
        let xr = x.select(Axis(0), &order);
        let lr: Vec<String> = order.iter().map(|&i| format!("g{}", rename(labels[i]))).collect();
        let l0: Vec<String> = labels.iter().map(|&h| format!("g{h}")).collect();
        let options = ClassifierOptions::new(rule_of(quadratic)).with_priors(Priors::Equal);
        let c0 = Classifier::fit(x.view(), &l0, &options).unwrap();
        let c1 = Classifier::fit(xr.view(), &lr, &options).unwrap();
        let out0 = c0.predict(x.view()).unwrap();
        let out1 = c1.predict(x.view()).unwrap();
        for h in 0..g {
            let a = c0.group_of(&format!("g{h}")).unwrap();
            let b = c1.group_of(&format!("g{}", rename(h))).unwrap();
            for i in 0..x.nrows() {
                prop_assert!(rel(out1.squared_distances()[(i, b)], out0.squared_distances()[(i, a)]) < 1e-9);
                prop_assert!((out1.posteriors()[(i, b)] - out0.posteriors()[(i, a)]).abs() < 1e-9);
            }
        }
        for i in 0..x.nrows() {
            let a = &c0.labels()[out0.assigned()[i]];
            let b = &c1.labels()[out1.assigned()[i]];
            let ha: usize = a[1..].parse().unwrap();
            prop_assert_eq!(b, &format!("g{}", rename(ha)));
        }
    }

    #[test]
    fn leave_one_out_equals_refitting_on_random_groups(seed in any::<u64>(), g in 2usize..4, p in 1usize..4, quadratic in any::<bool>(), ml in any::<bool>(), proportional in any::<bool>()) {
        let (x, mut labels) = groups(seed, g, p + 4, p);
        // Unequal group sizes: move two rows of the last group to group 0.
        let n = labels.len();
        labels[n - 1] = 0;
        labels[n - 2] = 0;
        let options = ClassifierOptions::new(rule_of(quadratic))
            .with_priors(if proportional { Priors::Proportional } else { Priors::Equal })
            .with_divisor(if ml { Divisor::MaximumLikelihood } else { Divisor::Unbiased });
        let loo = match LeaveOneOut::estimate(x.view(), &labels, &options) {
            Ok(l) => l,
            Err(_) => return Ok(()), // a group too small for the quadratic rule
        };
        for i in 0..n {
            let keep: Vec<usize> = (0..n).filter(|&j| j != i).collect();
            let c = Classifier::fit(x.select(Axis(0), &keep).view(), &keep.iter().map(|&j| labels[j]).collect::<Vec<_>>(), &options).unwrap();
            let pred = c.predict_row(x.row(i).as_slice().unwrap()).unwrap();
            for (h, l) in c.labels().iter().enumerate() {
                let (d_loo, d_ref) = (loo.squared_distances()[(i, *l)], pred.squared_distances[h]);
                // Small groups under the quadratic rule are ill-conditioned: the two
                // computations agree to about κ·ε, not to the last digit.
                prop_assert!(rel(d_loo, d_ref) < 1e-7 || (d_loo - d_ref).abs() < 1e-12, "row {} group {}: {} {}", i, l, d_loo, d_ref);
                prop_assert!((loo.posteriors()[(i, *l)] - pred.posteriors[h]).abs() < 1e-9);
            }
        }
    }
}

fn gcd(a: usize, b: usize) -> usize {
    if b == 0 {
        a
    } else {
        gcd(b, a % b)
    }
}
