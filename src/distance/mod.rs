//! Squared generalized (Mahalanobis) distances.
//!
//! For a scatter `Σ` (see [`Scatter`]) the squared generalized distance
//! between `x` and `y` is
//!
//! ```text
//! d²(x, y) = (x − y)ᵀ Σ⁻¹ (x − y) = ‖L⁻¹ (x − y)‖²,   Σ = L Lᵀ.
//! ```
//!
//! It is the Euclidean distance after whitening, unchanged by any invertible
//! affine change of units applied to data and scatter alike (Mahalanobis
//! 1936). mvdist computes it through the Cholesky factor, never through an
//! explicit inverse of `Σ`; a diagonal scatter takes a standardized
//! Euclidean fast path.
//!
//! Distances to a fitted centre, with p-values, are on
//! [`DistanceModel`](crate::DistanceModel); this module has the pairwise
//! forms.
//!
//! # Example
//! ```
//! use mvdist::{distance, Scatter};
//! use ndarray::array;
//!
//! let s = Scatter::new(array![[2.0, 1.0], [1.0, 2.0]].view())?;
//! let d2 = distance::squared_distance(&s, &[1.0, 1.0], &[0.0, 0.0])?;
//! assert!((d2 - 2.0 / 3.0).abs() < 1e-15);
//! let a = array![[0.0, 0.0], [1.0, 1.0]];
//! let b = array![[1.0, -1.0]];
//! let m = distance::cross_squared_distances(&s, a.view(), b.view())?;
//! assert!((m[(0, 0)] - 2.0).abs() < 1e-14);
//! # Ok::<(), mvdist::Error>(())
//! ```

use crate::kernels::distance as kernel;

use crate::data::{check_columns, check_finite, check_row_finite};
use crate::error::{Error, Result};
use crate::scatter::Scatter;
use crate::whitening::{Whitener, WhiteningKind};
use ndarray::{Array1, Array2, ArrayView2};
use rayon::prelude::*;

/// Below this many values (`rows × columns`), batch work stays on the
/// calling thread, where splitting it costs more than it saves.
pub const SEQUENTIAL_THRESHOLD: usize = kernel::SEQUENTIAL_BELOW;

/// `(x − y)ᵀ Σ⁻¹ (x − y)` for two points.
///
/// # Errors
/// [`Error::ShapeMismatch`] if a length differs from `scatter.dim()`;
/// [`Error::NonFinite`] (row 0 for `x`, row 1 for `y`).
pub fn squared_distance(scatter: &Scatter, x: &[f64], y: &[f64]) -> Result<f64> {
    let p = scatter.dim();
    for v in [x, y] {
        if v.len() != p {
            return Err(Error::ShapeMismatch {
                what: "point length (number of columns)",
                expected: p,
                found: v.len(),
            });
        }
    }
    check_row_finite(x, 0)?;
    check_row_finite(y, 1)?;
    let d2 = kernel::squared_distance_row(scatter.whitening_factor(), y, x, None);
    if d2.is_finite() {
        Ok(d2)
    } else {
        Err(Error::Overflow { row: 0 })
    }
}

/// Squared distances of every row of `rows` to `location`.
///
/// # Errors
/// [`Error::ShapeMismatch`] for mismatched dimensions; [`Error::NonFinite`]
/// or [`Error::Overflow`] naming the first offending row.
pub fn squared_distances_to(
    location: &[f64],
    scatter: &Scatter,
    rows: ArrayView2<'_, f64>,
) -> Result<Array1<f64>> {
    let p = scatter.dim();
    if location.len() != p {
        return Err(Error::ShapeMismatch {
            what: "location length",
            expected: p,
            found: location.len(),
        });
    }
    check_columns(rows, p)?;
    check_row_finite(location, 0)?;
    let mut out = vec![0.0; rows.nrows()];
    kernel::batch_squared_distances(scatter.whitening_factor(), location, rows, &mut out)?;
    Ok(Array1::from(out))
}

/// The matrix of squared distances between every row of `a` and every row
/// of `b`: entry `(i, j)` is `d²(a_i, b_j)`.
///
/// Both sets are whitened once (`O((n_a + n_b) p²)`) and the distances
/// formed from differences of whitened rows (`O(n_a n_b p)`), which keeps
/// full relative precision for nearby points; besides the output, memory is
/// one whitened copy of each set.
///
/// # Errors
/// [`Error::ShapeMismatch`] for mismatched columns; [`Error::NonFinite`]
/// naming the row of `a` (or of `b`) with a non-finite value.
pub fn cross_squared_distances(
    scatter: &Scatter,
    a: ArrayView2<'_, f64>,
    b: ArrayView2<'_, f64>,
) -> Result<Array2<f64>> {
    let p = scatter.dim();
    check_columns(a, p)?;
    check_columns(b, p)?;
    check_finite(a)?;
    check_finite(b)?;
    let w = Whitener::new(&vec![0.0; p], scatter, WhiteningKind::Cholesky)?;
    let za = w.whiten(a)?;
    let zb = w.whiten(b)?;
    let (na, nb) = (a.nrows(), b.nrows());
    let mut out = vec![0.0; na * nb];
    if nb > 0 {
        out.par_chunks_mut(nb).enumerate().for_each(|(i, row)| {
            let zi = za.row(i);
            for (j, o) in row.iter_mut().enumerate() {
                let zj = zb.row(j);
                *o = zi
                    .iter()
                    .zip(zj.iter())
                    .map(|(u, v)| (u - v) * (u - v))
                    .sum();
            }
        });
    }
    if let Some(k) = out.iter().position(|v| !v.is_finite()) {
        return Err(Error::Overflow { row: k / nb.max(1) });
    }
    Array2::from_shape_vec((na, nb), out).map_err(|_| Error::ShapeMismatch {
        what: "output",
        expected: na * nb,
        found: 0,
    })
}
