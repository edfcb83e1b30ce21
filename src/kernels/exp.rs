//! One vectorizable exponential for the kernels that need many: the
//! classification posteriors and the Henze–Zirkler pairwise sum.
//!
//! `exp_nonpositive` splits `x = n·ln 2 + r` with `|r| ≤ ln 2 / 2`
//! (Cody–Waite reduction with a two-part `ln 2`), evaluates the degree-13
//! Taylor polynomial of `eʳ`, and scales by `2ⁿ` built in the exponent
//! bits, without branches, so loops over it vectorize. Method: common
//! practice in vector math libraries (J.-M. Muller, *Elementary Functions:
//! Algorithms and Implementation*, 3rd ed., 2016, ch. 11).

use crate::kernels::lanes::fmadd;

/// `1.5 · 2⁵²`: adding it rounds a double of magnitude below 2⁵¹ to an
/// integer (round to nearest even), which then sits in the low mantissa bits.
const ROUNDING_SHIFT: f64 = 6_755_399_441_055_744.0;
/// `ln 2` split so that `n · LN2_HI` is exact for `|n| < 2²¹` (the fdlibm
/// constants `0x3fe62e42fee00000` and `0x3dea39ef35793c76`).
const LN2_HI: f64 = f64::from_bits(0x3fe6_2e42_fee0_0000);
const LN2_LO: f64 = f64::from_bits(0x3dea_39ef_3579_3c76);

/// `2^k` for an integer-valued `k` in `[−1022, 1023]`, by building the
/// exponent field directly.
#[inline(always)]
fn two_to_the(k: f64) -> f64 {
    f64::from_bits((k + (ROUNDING_SHIFT + 1023.0)).to_bits() << 52)
}

/// `eˣ` for `x ≤ 0`, branch-free: `x = n·ln 2 + r` with `|r| ≤ ln 2 / 2`
/// (Cody–Waite reduction), `eʳ` by its Taylor polynomial of degree 13
/// (truncation error below 5e-18), and `2ⁿ` applied as two normal factors
/// so that subnormal results come out right. Results below about 2⁻¹⁰⁷⁵
/// are 0. Accurate to a few units in the last place.
#[inline(always)]
pub(crate) fn exp_nonpositive<const FMA: bool>(x: f64) -> f64 {
    let x = x.max(-746.0);
    let n = fmadd::<FMA>(x, std::f64::consts::LOG2_E, ROUNDING_SHIFT) - ROUNDING_SHIFT;
    let r = fmadd::<FMA>(n, -LN2_HI, x);
    let r = fmadd::<FMA>(n, -LN2_LO, r);
    // 1/k! for k = 13 down to 0.
    const C: [f64; 14] = [
        1.0 / 6_227_020_800.0,
        1.0 / 479_001_600.0,
        1.0 / 39_916_800.0,
        1.0 / 3_628_800.0,
        1.0 / 362_880.0,
        1.0 / 40_320.0,
        1.0 / 5_040.0,
        1.0 / 720.0,
        1.0 / 120.0,
        1.0 / 24.0,
        1.0 / 6.0,
        0.5,
        1.0,
        1.0,
    ];
    let mut q = C[0];
    for &c in &C[1..] {
        q = fmadd::<FMA>(q, r, c);
    }
    let n1 = n.max(-1000.0);
    q * two_to_the(n1) * two_to_the(n - n1)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ulps(a: f64, b: f64) -> f64 {
        if a == b {
            return 0.0;
        }
        (a - b).abs() / (b.abs() * f64::EPSILON)
    }

    #[test]
    fn polynomial_exponential_matches_the_library_exponential() {
        // Reference: Rust's `f64::exp` (the platform libm, correctly rounded
        // or within 1 ulp in common practice).
        let mut worst: f64 = 0.0;
        let mut x = 0.0f64;
        while x > -708.0 {
            for v in [x, x - 0.123_456_789, x - 0.5 * std::f64::consts::LN_2] {
                let (fast, slow) = (exp_nonpositive::<false>(v), v.exp());
                let fma = exp_nonpositive::<true>(v);
                worst = worst.max(ulps(fast, slow)).max(ulps(fma, slow));
            }
            x -= 0.0137;
        }
        assert!(worst <= 4.0, "worst error {worst} ulp");
        assert_eq!(exp_nonpositive::<false>(0.0), 1.0);
        assert_eq!(exp_nonpositive::<false>(-800.0), 0.0);
        assert_eq!(exp_nonpositive::<false>(f64::NEG_INFINITY), 0.0);
        assert_eq!(exp_nonpositive::<false>(-1e300), 0.0);
        // Subnormal results: absolute error far below the smallest normal.
        for v in [-710.0, -720.5, -740.0, -745.0] {
            let (fast, slow) = (exp_nonpositive::<true>(v), v.exp());
            assert!((fast - slow).abs() <= 4.0 * 5e-324, "{v}: {fast} {slow}");
        }
    }
}
