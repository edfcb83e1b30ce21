//! Times repeated fits of one large matrix (a profiling aid).
use mvdist::DistanceModel;
fn main() {
    let n: usize = std::env::args()
        .nth(1)
        .and_then(|s| s.parse().ok())
        .unwrap_or(1_000_000);
    let p: usize = std::env::args()
        .nth(2)
        .and_then(|s| s.parse().ok())
        .unwrap_or(32);
    let mut state = 1u64;
    let data: Vec<f64> = (0..n * p)
        .map(|_| {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64
        })
        .collect();
    for _ in 0..3 {
        let t = std::time::Instant::now();
        let m = DistanceModel::fit_slice(&data, p).map(|m| m.location()[0]);
        println!("fit {:?} in {:?}", m.is_ok(), t.elapsed());
    }
}
