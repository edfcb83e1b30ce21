//! Scalar building blocks shared by the eight-lane kernels (batch distances,
//! the Gram product, classification, the normality sums).
//!
//! Each kernel is written once over `[f64; LANES]` arrays and compiled by
//! its caller for several instruction sets (baseline, AVX2 with FMA and,
//! where used, AVX-512), one of which is chosen at run time; these helpers
//! are `#[inline(always)]` so that they take on the caller's instruction set.

/// Rows (or values) processed together by a lane kernel.
pub(crate) const LANES: usize = 8;

/// `a·b + c`, fused when the kernel is compiled for FMA hardware.
#[inline(always)]
pub(crate) fn fmadd<const FMA: bool>(a: f64, b: f64, c: f64) -> f64 {
    if FMA {
        a.mul_add(b, c)
    } else {
        a * b + c
    }
}

/// The sum of eight lanes, in a fixed pairwise order (the order of the sum
/// does not depend on the instruction set, though fused and unfused
/// multiply-adds round differently).
#[inline(always)]
pub(crate) fn lane_sum(z: &[f64; LANES]) -> f64 {
    ((z[0] + z[1]) + (z[2] + z[3])) + ((z[4] + z[5]) + (z[6] + z[7]))
}
