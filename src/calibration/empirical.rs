//! [`EmpiricalReference`]: p-values from held-out reference rows, valid
//! without any assumption on the distribution of the rows.

use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// Which empirical p-value [`EmpiricalReference::p_value_of`] gives.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum EmpiricalPValue {
    /// `(1 + #{cᵢ ≥ d²}) / (m + 1)`: super-uniform on average over
    /// calibration sets (the default).
    #[default]
    Marginal,
    /// The DKWM-adjusted p-value: super-uniform given the calibration rows,
    /// except with probability at most `delta` (`0 < delta ≤ 0.5`).
    CalibrationConditional {
        /// The probability that the calibration rows are unlucky.
        delta: f64,
    },
}

impl EmpiricalPValue {
    /// `Ok` for a usable kind: `0 < delta ≤ 0.5` for the conditional one.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] otherwise.
    pub fn check(self) -> Result<()> {
        match self {
            EmpiricalPValue::Marginal => Ok(()),
            EmpiricalPValue::CalibrationConditional { delta } => {
                if delta > 0.0 && delta <= 0.5 {
                    Ok(())
                } else {
                    Err(Error::invalid(
                        "delta",
                        format!(
                            "{delta} is not in (0, 0.5]; the DKWM bound needs delta ≤ 0.5 \
                             (0.05 or 0.1 are usual)"
                        ),
                    ))
                }
            }
        }
    }
}

/// The squared distances of held-out reference rows, sorted: an empirical
/// law for the squared distance of a new row from the same population.
///
/// **Split conformal p-values** (Vovk, Gammerman and Shafer 2005; Bates,
/// Candès, Lei, Romano and Sesia 2023). Fit the location and scatter on one
/// part of the reference rows, and keep the squared distances
/// `c₁, …, c_m` of the other `m` rows (the *calibration rows*, never used
/// in the fit). A new row with squared distance `d²` gets
///
/// ```text
/// p = (1 + #{i : cᵢ ≥ d²}) / (m + 1).
/// ```
///
/// If the new row and the calibration rows are exchangeable (for example
/// independent draws from one population, whatever its shape), then
/// `P(p ≤ α) ≤ α` for every `α`: the p-value is *super-uniform* in finite
/// samples. Benjamini–Hochberg on such p-values of many new rows controls
/// the false discovery rate (Bates et al. 2023, Theorem 2). The smallest
/// p-value this can give is `1/(m + 1)`: with 99 calibration rows no row
/// can be flagged at `α < 0.01`.
///
/// **Calibration-conditional p-values.** The guarantee above is an average
/// over calibration sets; a particular set can be unlucky. The
/// [`EmpiricalPValue::CalibrationConditional`] variant adds the one-sided
/// Dvoretzky–Kiefer–Wolfowitz margin with Massart's constant,
///
/// ```text
/// p = min(1, #{i : cᵢ ≥ d²}/m + √(ln(1/δ) / (2m))),
/// ```
///
/// which is at least the true tail probability of `d²` for every `d²` at
/// once, except on calibration sets of probability at most `δ` (Massart
/// 1990 holds for `δ ≤ ½`; the inequality is for independent, identically
/// distributed calibration rows, a little more than exchangeability). So,
/// with probability at least `1 − δ` over the calibration rows, `P(p ≤ α | calibration rows) ≤ α` for every `α`. This
/// is the DKWM form of the adjustment of Bates et al. (2023, Section 3);
/// it costs power (the margin is 0.0865 for `m = 200`, `δ = 0.05`).
///
/// **Caution.** Exchangeability is the whole assumption: calibration rows
/// from another period, batch or instrument than the rows scored do not
/// give valid p-values. A flag is evidence that a row is unusual, not a
/// verdict; local procedures and qualified people decide what follows.
///
/// # References
/// V. Vovk, A. Gammerman and G. Shafer (2005). *Algorithmic Learning in a
/// Random World.* Springer.
/// S. Bates, E. Candès, L. Lei, Y. Romano and M. Sesia (2023). Testing for
/// outliers with conformal p-values. *Annals of Statistics* 51, 149–178.
/// P. Massart (1990). The tight constant in the Dvoretzky–Kiefer–Wolfowitz
/// inequality. *Annals of Probability* 18, 1269–1283.
///
/// Built by [`from_squared_distances`](Self::from_squared_distances)
/// (usually through [`crate::DistanceModel::with_calibration_rows`]);
/// serialized as the sorted values, and checked again when read.
///
/// # Example
/// ```
/// use mvdist::calibration::{EmpiricalPValue, EmpiricalReference};
///
/// // Squared distances of 9 held-out rows.
/// let held_out = EmpiricalReference::from_squared_distances(
///     vec![0.4, 2.0, 1.1, 3.5, 0.9, 5.2, 1.7, 2.6, 0.2],
/// )?;
/// // 2 of the 9 are at least 3.0: p = (1 + 2) / 10.
/// assert_eq!(held_out.p_value(3.0), 0.3);
/// // Beyond every calibration value: the smallest p-value, 1/10.
/// assert_eq!(held_out.p_value(9.0), held_out.smallest_p_value());
/// // Cutoffs below 1/(m + 1) cannot be reached, and say so.
/// assert!(held_out.cutoff(0.05, EmpiricalPValue::Marginal).is_err());
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, Serialize, Deserialize)]
#[serde(try_from = "EmpiricalData", into = "EmpiricalData")]
pub struct EmpiricalReference {
    sorted: Vec<f64>,
    /// The lookup structure of `count_at_least`, derived from `sorted` and
    /// not serialized.
    lookup: Lookup,
}

impl PartialEq for EmpiricalReference {
    fn eq(&self, other: &Self) -> bool {
        self.sorted == other.sorted
    }
}

/// A bucket index over the bit patterns of the positive values. For
/// positive floats the bit pattern, read as an integer, increases with the
/// value, so `key(d) = (bits(d) − bits(smallest)) >> shift` is exactly
/// monotone; `index[k]` is the number of values whose key is below `k`.
/// A lookup starts there and counts the few values of its bucket that
/// are below it without branching on them (a crowded bucket is bisected); `padded` is `sorted` followed by two
/// `+∞` so the comparisons need no bounds checks.
#[derive(Clone, Debug, Default)]
struct Lookup {
    index: Vec<u32>,
    padded: Vec<f64>,
    /// `bits` of the smallest positive value (the lowest key).
    base: u64,
    /// The smallest and largest positive values: outside them a lookup
    /// bisects (zeros, values below every positive one, or above all).
    smallest: f64,
    largest: f64,
    shift: u32,
}

/// Buckets per calibration value, at most (most buckets then hold zero or
/// one value).
const BUCKETS_PER_VALUE: usize = 8;

impl Lookup {
    fn new(sorted: &[f64]) -> Lookup {
        let mut padded = Vec::with_capacity(sorted.len() + 2);
        padded.extend_from_slice(sorted);
        padded.extend([f64::INFINITY; 2]);
        let first_positive = sorted.partition_point(|&c| c <= 0.0);
        let Some(&smallest) = sorted.get(first_positive) else {
            return Lookup {
                padded,
                smallest: f64::INFINITY,
                largest: f64::NEG_INFINITY,
                ..Lookup::default()
            };
        };
        let largest = sorted[sorted.len() - 1];
        let base = smallest.to_bits();
        let range = largest.to_bits() - base;
        let target = (BUCKETS_PER_VALUE * sorted.len()).clamp(64, 1 << 24) as u64;
        let mut shift = 0u32;
        while (range >> shift) >= target {
            shift += 1;
        }
        let buckets = (range >> shift) as usize + 1;
        let mut index = vec![0u32; buckets + 1];
        let mut i = first_positive;
        for (k, slot) in index.iter_mut().enumerate() {
            while i < sorted.len() && (((sorted[i].to_bits() - base) >> shift) as usize) < k {
                i += 1;
            }
            *slot = i as u32;
        }
        Lookup {
            index,
            padded,
            base,
            smallest,
            largest,
            shift,
        }
    }

    /// The first position whose value is at least `d` (`d` finite, in
    /// `[smallest, largest]`).
    #[inline]
    fn first_at_least(&self, d: f64) -> usize {
        let k = ((d.to_bits() - self.base) >> self.shift) as usize;
        let (lo, hi) = (self.index[k] as usize, self.index[k + 1] as usize);
        if hi - lo > 2 {
            // A crowded bucket: bisect it.
            return lo + self.padded[lo..hi].partition_point(|&c| c < d);
        }
        // At most two values in the bucket; the values after it are above
        // `d`, so both comparisons may look past its end (the two loads are
        // independent, and there is no branch on the data).
        lo + usize::from(self.padded[lo] < d) + usize::from(self.padded[lo + 1] < d)
    }
}

#[derive(Serialize, Deserialize)]
struct EmpiricalData {
    squared_distances: Vec<f64>,
}

impl TryFrom<EmpiricalData> for EmpiricalReference {
    type Error = Error;
    fn try_from(d: EmpiricalData) -> Result<Self> {
        EmpiricalReference::from_squared_distances(d.squared_distances)
    }
}

impl From<EmpiricalReference> for EmpiricalData {
    fn from(r: EmpiricalReference) -> Self {
        EmpiricalData {
            squared_distances: r.sorted,
        }
    }
}

impl EmpiricalReference {
    /// An empirical reference from the squared distances of calibration
    /// rows (any order; sorted here).
    ///
    /// # Errors
    /// [`Error::Empty`] for no values; [`Error::NonFinite`] (row = position)
    /// for a NaN or infinite value; [`Error::InvalidParameter`] for a
    /// negative one.
    pub fn from_squared_distances(mut squared_distances: Vec<f64>) -> Result<Self> {
        if squared_distances.is_empty() {
            return Err(Error::Empty {
                what: "calibration rows",
            });
        }
        for (row, &d) in squared_distances.iter().enumerate() {
            if !d.is_finite() {
                return Err(Error::NonFinite {
                    row,
                    column: 0,
                    value: d,
                });
            }
            if d < 0.0 {
                return Err(Error::invalid(
                    "squared distance",
                    format!("calibration value {row} is negative ({d})"),
                ));
            }
        }
        squared_distances.sort_by(f64::total_cmp);
        if squared_distances.len() >= u32::MAX as usize {
            return Err(Error::invalid(
                "calibration rows",
                format!(
                    "{} values; at most {} are supported",
                    squared_distances.len(),
                    u32::MAX - 1
                ),
            ));
        }
        let lookup = Lookup::new(&squared_distances);
        Ok(EmpiricalReference {
            sorted: squared_distances,
            lookup,
        })
    }

    /// The number `m` of calibration rows.
    pub fn len(&self) -> usize {
        self.sorted.len()
    }

    /// Always `false`: an empirical reference has at least one row.
    pub fn is_empty(&self) -> bool {
        self.sorted.is_empty()
    }

    /// The calibration squared distances, in increasing order.
    pub fn squared_distances(&self) -> &[f64] {
        &self.sorted
    }

    /// `#{i : cᵢ ≥ d2}`. A NaN `d2` counts no row.
    ///
    /// A bucket index over the values' bit patterns (exactly monotone for
    /// positive values) gives a start next to the answer, and comparisons
    /// with the sorted values themselves give the exact count; a crowded
    /// bucket is searched by bisection.
    pub fn count_at_least(&self, d2: f64) -> usize {
        let m = self.sorted.len();
        if d2 >= self.lookup.smallest && d2 <= self.lookup.largest {
            return m - self.lookup.first_at_least(d2);
        }
        // First index whose value is ≥ d2 (NaN: none is).
        m - self.sorted.partition_point(|&c| c < d2 || d2.is_nan())
    }

    /// The marginal conformal p-value `(1 + #{cᵢ ≥ d2}) / (m + 1)`; NaN
    /// for a NaN `d2` (as the reference laws give).
    pub fn p_value(&self, d2: f64) -> f64 {
        if d2.is_nan() {
            return f64::NAN;
        }
        self.p_value_from_count(self.count_at_least(d2), EmpiricalPValue::Marginal)
    }

    /// The p-value of the given kind for `count` calibration values at or
    /// above the squared distance.
    fn p_value_from_count(&self, count: usize, kind: EmpiricalPValue) -> f64 {
        match kind {
            EmpiricalPValue::Marginal => (1 + count) as f64 / (self.sorted.len() + 1) as f64,
            EmpiricalPValue::CalibrationConditional { delta } => {
                (count as f64 / self.sorted.len() as f64 + self.margin(delta)).min(1.0)
            }
        }
    }

    /// The p-value of the given kind; NaN for a NaN `d2` or an invalid
    /// `delta` (check it first with [`EmpiricalPValue::check`]).
    pub fn p_value_of(&self, d2: f64, kind: EmpiricalPValue) -> f64 {
        if kind.check().is_err() || d2.is_nan() {
            return f64::NAN;
        }
        self.p_value_from_count(self.count_at_least(d2), kind)
    }

    /// The DKWM margin `√(ln(1/δ) / (2m))`.
    fn margin(&self, delta: f64) -> f64 {
        ((1.0 / delta).ln() / (2.0 * self.sorted.len() as f64)).sqrt()
    }

    /// The smallest p-value of the given kind: `1/(m + 1)` (marginal) or
    /// the DKWM margin (conditional; NaN for an invalid `delta`).
    pub fn smallest_p_value_of(&self, kind: EmpiricalPValue) -> f64 {
        match kind {
            EmpiricalPValue::Marginal => self.smallest_p_value(),
            EmpiricalPValue::CalibrationConditional { .. } if kind.check().is_err() => f64::NAN,
            EmpiricalPValue::CalibrationConditional { delta } => self.margin(delta).min(1.0),
        }
    }

    /// The smallest marginal p-value, `1/(m + 1)`.
    pub fn smallest_p_value(&self) -> f64 {
        1.0 / (self.sorted.len() + 1) as f64
    }

    /// The cutoff at level `alpha`: the smallest calibration value `c` such
    /// that every `d2 > c` has a p-value at most `alpha`. (A `d2` equal to a
    /// calibration value counts that value; flags are `d2 > cutoff`.)
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`, for an invalid
    /// kind, or when `alpha` is below the smallest attainable p-value (the
    /// message says how many calibration rows the level needs).
    pub fn cutoff(&self, alpha: f64, kind: EmpiricalPValue) -> Result<f64> {
        crate::distributions::check_probability(alpha)?;
        kind.check()?;
        let m = self.sorted.len();
        let smallest = self.smallest_p_value_of(kind);
        if alpha < smallest {
            let needed = match kind {
                EmpiricalPValue::Marginal => (1.0 / alpha - 1.0).ceil(),
                EmpiricalPValue::CalibrationConditional { delta } => {
                    ((1.0 / delta).ln() / (2.0 * alpha * alpha)).ceil()
                }
            };
            return Err(Error::invalid(
                "alpha",
                format!(
                    "{alpha} is below the smallest p-value that {m} calibration rows can give \
                     ({smallest:.4}); hold out at least {needed} rows for this level, or use a \
                     larger alpha"
                ),
            ));
        }
        // A row strictly above sorted[m − a − 1] has at most `a` values at
        // or above it. Find the largest count `a` whose p-value is at most
        // alpha, by the exact expression of the p-value (the p-value grows
        // with the count, so start from the rounded estimate and step).
        let mf = m as f64;
        let estimate = match kind {
            EmpiricalPValue::Marginal => alpha * (mf + 1.0) - 1.0,
            EmpiricalPValue::CalibrationConditional { delta } => mf * (alpha - self.margin(delta)),
        };
        let mut allowed = estimate.floor().clamp(0.0, mf) as usize;
        while allowed > 0 && self.p_value_from_count(allowed, kind) > alpha {
            allowed -= 1;
        }
        while allowed < m && self.p_value_from_count(allowed + 1, kind) <= alpha {
            allowed += 1;
        }
        if allowed >= m {
            return Ok(0.0);
        }
        Ok(self.sorted[m - allowed - 1])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bucket_lookup_equals_bisection() {
        // Spread, tied and extreme values; every probe agrees with a plain
        // count.
        let mut values: Vec<f64> = (0..997)
            .map(|i| ((i * 7919) % 1000) as f64 / 37.0)
            .collect();
        values.extend([
            0.0, -0.0, 0.0, 1e-300, 5e-324, 2.0e-310, 5.0, 5.0, 5.0, 1e300, 3.0e10,
        ]);
        values.extend(std::iter::repeat_n(2.5, 50));
        let r = EmpiricalReference::from_squared_distances(values.clone()).unwrap();
        let mut probes: Vec<f64> = values.clone();
        probes.extend([
            -1.0,
            0.0,
            1e-310,
            2.5,
            2.5000000000000004,
            1e308,
            f64::INFINITY,
            f64::NAN,
        ]);
        probes.extend((0..5000).map(|i| i as f64 * 0.0071));
        for d in probes {
            let want = values.iter().filter(|&&c| c >= d).count();
            assert_eq!(r.count_at_least(d), want, "{d}");
        }
        // Every value zero; a single value.
        let zeros = EmpiricalReference::from_squared_distances(vec![0.0; 7]).unwrap();
        assert_eq!(zeros.count_at_least(0.0), 7);
        assert_eq!(zeros.count_at_least(1e-300), 0);
        let one = EmpiricalReference::from_squared_distances(vec![2.0]).unwrap();
        assert_eq!(
            (one.count_at_least(2.0), one.count_at_least(2.0000001)),
            (1, 0)
        );
    }

    #[test]
    fn cutoff_at_attainable_levels_exactly() {
        // α = k/(m + 1) is attained exactly; just below it, one count less.
        let values: Vec<f64> = (1..=99).map(f64::from).collect();
        let r = EmpiricalReference::from_squared_distances(values).unwrap();
        for k in [5usize, 10, 37] {
            let alpha = k as f64 / 100.0;
            for a in [alpha, alpha - 1e-12, alpha + 1e-12] {
                let c = r.cutoff(a, EmpiricalPValue::Marginal).unwrap();
                assert!(r.p_value(c + 1e-9) <= a, "{a}");
                assert!(r.p_value(c) > a, "{a}");
            }
        }
    }

    #[test]
    fn counts_ties_and_extremes() {
        let r = EmpiricalReference::from_squared_distances(vec![3.0, 1.0, 2.0, 2.0]).unwrap();
        assert_eq!(r.count_at_least(2.0), 3);
        assert_eq!(r.count_at_least(0.0), 4);
        assert_eq!(r.count_at_least(3.5), 0);
        assert_eq!(r.p_value(0.0), 1.0);
        assert!(r.p_value(f64::NAN).is_nan());
        assert_eq!(r.count_at_least(f64::NAN), 0);
    }

    #[test]
    fn cutoff_inverts_p_value() {
        let values: Vec<f64> = (0..199)
            .map(|i| (i as f64 * 0.37).sin().abs() * 10.0)
            .collect();
        let r = EmpiricalReference::from_squared_distances(values).unwrap();
        for kind in [
            EmpiricalPValue::Marginal,
            EmpiricalPValue::CalibrationConditional { delta: 0.1 },
        ] {
            for alpha in [0.2, 0.25, 0.3, 0.5] {
                let c = r.cutoff(alpha, kind).unwrap();
                // Just above the cutoff: flagged; at the cutoff: not.
                assert!(r.p_value_of(c + 1e-12, kind) <= alpha, "{kind:?} {alpha}");
                assert!(r.p_value_of(c, kind) > alpha, "{kind:?} {alpha}");
            }
        }
        assert!(r.cutoff(0.001, EmpiricalPValue::Marginal).is_err());
        assert!(r.cutoff(0.01, EmpiricalPValue::Marginal).is_ok());
    }

    #[test]
    fn refuses_bad_values() {
        assert!(EmpiricalReference::from_squared_distances(vec![]).is_err());
        assert!(EmpiricalReference::from_squared_distances(vec![1.0, f64::NAN]).is_err());
        assert!(EmpiricalReference::from_squared_distances(vec![-1.0]).is_err());
        let json = r#"{"squared_distances":[1.0,-2.0]}"#;
        assert!(serde_json::from_str::<EmpiricalReference>(json).is_err());
        assert!(EmpiricalPValue::CalibrationConditional { delta: 0.7 }
            .check()
            .is_err());
    }
}
