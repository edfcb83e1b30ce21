//! Shared helpers for the integration tests: fixture loading and tolerant
//! comparisons.
#![allow(dead_code)]

use ndarray::Array2;
use serde_json::Value;

/// Loads `tests/fixtures/<name>` of the library crate (also from the
/// workspace's other crates, two folders below it).
pub fn fixture(name: &str) -> Value {
    let here = env!("CARGO_MANIFEST_DIR");
    let mut path = format!("{here}/tests/fixtures/{name}");
    if !std::path::Path::new(&path).exists() {
        path = format!("{here}/../../tests/fixtures/{name}");
    }
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

pub fn vector(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

pub fn matrix(v: &Value) -> Array2<f64> {
    let rows: Vec<Vec<f64>> = v.as_array().expect("array").iter().map(vector).collect();
    let n = rows.len();
    let p = rows.first().map_or(0, |r| r.len());
    Array2::from_shape_vec((n, p), rows.concat()).expect("rectangular")
}

/// Relative difference, with an absolute floor for values near zero.
pub fn rel(a: f64, b: f64) -> f64 {
    if a == b {
        return 0.0;
    }
    (a - b).abs() / b.abs().max(f64::MIN_POSITIVE)
}

/// Largest entry-wise difference relative to the largest magnitude of `b`.
pub fn matrix_rel(a: &Array2<f64>, b: &Array2<f64>) -> f64 {
    assert_eq!(a.dim(), b.dim());
    let scale = b.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    a.iter()
        .zip(b.iter())
        .fold(0.0f64, |m, (x, y)| m.max((x - y).abs() / scale))
}

/// A deterministic generator for property and demo data (SplitMix64).
pub struct Rng(pub u64);

impl Rng {
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    pub fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    pub fn normal(&mut self) -> f64 {
        let u = self.uniform();
        let v = self.uniform();
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}
