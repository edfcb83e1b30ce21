//! Private numeric kernels, the lowest layer of the crate: SIMD lane
//! helpers, thin wrappers over faer, the whitened-distance and Gram kernels,
//! and one vectorized exponential. They work on slices and views only and
//! import nothing from the rest of the crate except the error type, so every
//! layer above (estimation, the model, the analyses) can use them.

pub(crate) mod components;
pub(crate) mod distance;
pub(crate) mod exp;
pub(crate) mod gram;
pub(crate) mod lanes;
pub(crate) mod linalg;
