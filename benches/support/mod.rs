//! Data shared by the benches (fixed seeds; invented, for timing only).
#![allow(dead_code)]

use ndarray::Array2;
use rand::{rngs::StdRng, Rng, SeedableRng};
use rand_distr::StandardNormal;

/// A random lower-triangular `p × p` mixing matrix (row-major): diagonal
/// uniform on [1, 2), entries below it normal with standard deviation
/// `spread`.
pub fn lower_mix<R: Rng>(rng: &mut R, p: usize, spread: f64) -> Vec<f64> {
    (0..p * p)
        .map(|k| {
            let (i, j) = (k / p, k % p);
            if j > i {
                0.0
            } else if i == j {
                1.0 + rng.gen::<f64>()
            } else {
                spread * rng.sample::<f64, _>(StandardNormal)
            }
        })
        .collect()
}

/// Correlated rows: x = A z with a fixed random lower-triangular A.
pub fn correlated_rows(n: usize, p: usize, seed: u64) -> Array2<f64> {
    let mut rng = StdRng::seed_from_u64(seed);
    let a = lower_mix(&mut rng, p, 0.5);
    let mut x = Array2::<f64>::zeros((n, p));
    let mut z = vec![0.0; p];
    for mut row in x.outer_iter_mut() {
        for v in z.iter_mut() {
            *v = rng.sample(StandardNormal);
        }
        for i in 0..p {
            row[i] = 10.0 + (0..=i).map(|j| a[i * p + j] * z[j]).sum::<f64>();
        }
    }
    x
}
