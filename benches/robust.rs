//! Criterion benchmarks for robust and shrinkage fitting: FastMCD at
//! (n, p) = (10 000, 10) and (50 000, 20), Ledoit–Wolf and OAS at
//! (100 000, 50), on data with 20% shifted outliers.
//!
//! The bench writes each data set to `target/robust_bench/NxP.f64`
//! (little-endian, row-major) and the raw MCD objective it reached to
//! `target/robust_bench/mcd_objective.json`, so that
//! `benches/robust_side_by_side.py` times scikit-learn on the very same
//! rows and compares determinants:
//!
//! ```sh
//! cargo bench --bench robust -- --noplot
//! env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/robust_side_by_side.py
//! ```

use criterion::{black_box, criterion_group, criterion_main, BenchmarkId, Criterion};
use mvdist::robust::{minimum_covariance_determinant, McdOptions};
use mvdist::shrinkage::{ledoit_wolf, oas, OasFormula};
use ndarray::Array2;
use std::io::Write;
use std::time::Duration;

/// SplitMix64, as in the tests.
struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let u = self.uniform();
        let v = self.uniform();
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// Rows of `N(m, Σ)` with `Σ_ij = 0.5^|i−j|·s_i s_j`, `s_j = 1 + (j mod 3)`,
/// `m_j = j`; the first 20% of rows shifted by `+6 s_j` in every variable.
fn contaminated(n: usize, p: usize, seed: u64) -> Array2<f64> {
    let mut rng = Rng(seed);
    let sd: Vec<f64> = (0..p).map(|j| 1.0 + (j % 3) as f64).collect();
    // AR(1) factor: x_0 = z_0, x_j = 0.5 x_{j−1} + √0.75 z_j.
    let bad = n / 5;
    let mut x = Array2::zeros((n, p));
    for i in 0..n {
        let mut prev = 0.0;
        for j in 0..p {
            let z = rng.normal();
            let v = if j == 0 {
                z
            } else {
                0.5 * prev + 0.75f64.sqrt() * z
            };
            prev = v;
            let shift = if i < bad { 6.0 } else { 0.0 };
            x[(i, j)] = j as f64 + sd[j] * (v + shift);
        }
    }
    x
}

fn out_dir() -> std::path::PathBuf {
    let target = std::env::var("CARGO_TARGET_DIR")
        .unwrap_or_else(|_| format!("{}/target", env!("CARGO_MANIFEST_DIR")));
    let dir = std::path::Path::new(&target).join("robust_bench");
    std::fs::create_dir_all(&dir).expect("create target/robust_bench");
    dir
}

fn save(x: &Array2<f64>) {
    let (n, p) = x.dim();
    let path = out_dir().join(format!("{n}x{p}.f64"));
    let mut f = std::io::BufWriter::new(std::fs::File::create(path).expect("data file"));
    for v in x.iter() {
        f.write_all(&v.to_le_bytes()).expect("write");
    }
}

const MCD_SIZES: [(usize, usize); 2] = [(10_000, 10), (50_000, 20)];
const SHRINK_SIZE: (usize, usize) = (100_000, 50);

fn bench_mcd(c: &mut Criterion) {
    let mut g = c.benchmark_group("mcd");
    g.sample_size(10).measurement_time(Duration::from_secs(10));
    let mut objectives = Vec::new();
    for &(n, p) in &MCD_SIZES {
        let x = contaminated(n, p, 20240601 + p as u64);
        save(&x);
        let settings = McdOptions::default().with_seed(1);
        let fit = minimum_covariance_determinant(x.view(), &settings).expect("mcd");
        objectives.push(format!(
            "\"{n}x{p}\": {{\"subset_size\": {}, \"raw_log_det\": {}}}",
            fit.subset_size(),
            fit.raw_log_determinant()
        ));
        g.bench_with_input(
            BenchmarkId::from_parameter(format!("{n}x{p}")),
            &x,
            |b, x| {
                b.iter(|| {
                    minimum_covariance_determinant(black_box(x.view()), &settings).expect("mcd")
                })
            },
        );
    }
    g.finish();
    std::fs::write(
        out_dir().join("mcd_objective.json"),
        format!("{{{}}}\n", objectives.join(", ")),
    )
    .expect("write objectives");
}

fn bench_shrinkage(c: &mut Criterion) {
    let (n, p) = SHRINK_SIZE;
    let x = contaminated(n, p, 20240601 + p as u64);
    save(&x);
    let mut g = c.benchmark_group("shrinkage");
    g.sample_size(20).measurement_time(Duration::from_secs(6));
    g.bench_function(format!("ledoit_wolf/{n}x{p}"), |b| {
        b.iter(|| ledoit_wolf(black_box(x.view())).expect("lw"))
    });
    g.bench_function(format!("oas/{n}x{p}"), |b| {
        b.iter(|| oas(black_box(x.view()), OasFormula::WithoutTwoOverP).expect("oas"))
    });
    g.finish();
}

criterion_group!(benches, bench_mcd, bench_shrinkage);
criterion_main!(benches);
