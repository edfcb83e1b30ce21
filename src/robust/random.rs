//! A small seeded random number generator for reproducible subset draws.
//!
//! SplitMix64 (Steele, Lea and Flood 2014): a 64-bit counter advanced by the
//! golden-ratio increment and passed through a bijective mixer. It is fast,
//! has a full period of 2⁶⁴, and any seed (including 0) is good, which makes
//! it easy to derive an independent stream per start from `(seed, stage,
//! start)`: results do not depend on how rayon schedules the starts.
//!
//! Reference: G. L. Steele, D. Lea and C. H. Flood (2014). Fast splittable
//! pseudorandom number generators. *OOPSLA 2014*, 453–472.

/// SplitMix64 state.
#[derive(Clone, Debug)]
pub(crate) struct SplitMix64(u64);

const GOLDEN: u64 = 0x9E37_79B9_7F4A_7C15;

fn mix(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

impl SplitMix64 {
    /// A generator for stream `(seed, a, b)`: the three numbers are mixed so
    /// that nearby streams are unrelated.
    pub(crate) fn stream(seed: u64, a: u64, b: u64) -> Self {
        let s = mix(seed.wrapping_add(GOLDEN));
        let s = mix(s ^ a.wrapping_mul(GOLDEN).wrapping_add(0x632B_E59B_D9B4_E019));
        SplitMix64(mix(s ^ b.wrapping_mul(0xD6E8_FEB8_6659_FD93)))
    }

    pub(crate) fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(GOLDEN);
        mix(self.0)
    }

    /// Uniform on `0..n` (`n > 0`), without modulo bias (Lemire's
    /// multiply-and-reject method).
    pub(crate) fn below(&mut self, n: usize) -> usize {
        if n <= 1 {
            return 0;
        }
        let n64 = n as u64;
        let threshold = n64.wrapping_neg() % n64;
        loop {
            let m = (self.next_u64() as u128) * (n64 as u128);
            if (m as u64) >= threshold {
                return (m >> 64) as usize;
            }
        }
    }

    /// Uniform on (0, 1).
    pub(crate) fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }

    /// A standard normal variate (Box–Muller, cosine branch).
    pub(crate) fn normal(&mut self) -> f64 {
        let u = self.uniform();
        let v = self.uniform();
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }

    /// `k` distinct indices from `0..n` in random order (`k ≤ n`), by a
    /// partial Fisher–Yates shuffle for large `k` and rejection for small.
    pub(crate) fn distinct(&mut self, k: usize, n: usize) -> Vec<usize> {
        let k = k.min(n);
        if k * 8 <= n && k <= 64 {
            let mut out = Vec::with_capacity(k);
            while out.len() < k {
                let i = self.below(n);
                if !out.contains(&i) {
                    out.push(i);
                }
            }
            out
        } else {
            let mut all: Vec<usize> = (0..n).collect();
            for i in 0..k {
                let j = i + self.below(n - i);
                all.swap(i, j);
            }
            all.truncate(k);
            all
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn known_first_output() {
        // SplitMix64 with state 0: first output 0xE220A8397B1DCDAF (the
        // published reference sequence of the algorithm; common practice).
        let mut g = SplitMix64(0);
        assert_eq!(g.next_u64(), 0xE220_A839_7B1D_CDAF);
    }

    #[test]
    fn below_and_distinct_stay_in_range() {
        let mut g = SplitMix64::stream(7, 1, 2);
        for n in [1usize, 2, 3, 10, 1000] {
            for _ in 0..200 {
                assert!(g.below(n) < n);
            }
        }
        for (k, n) in [(3, 100), (50, 60), (10, 10), (0, 5)] {
            let mut d = g.distinct(k, n);
            assert_eq!(d.len(), k);
            d.sort_unstable();
            d.dedup();
            assert_eq!(d.len(), k);
            assert!(d.iter().all(|&i| i < n));
        }
    }
}
