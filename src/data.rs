//! Data conventions: rows are observations, columns are variables.
//!
//! Entry points take `ndarray` views of any layout or strides, or row-major
//! `&[f64]` slices with an explicit column count (see [`rows_from_slice`]).
//! Nothing here copies data.

use crate::error::{Error, Result};
use ndarray::ArrayView2;

/// Views a row-major slice as a matrix with `columns` columns, without
/// copying.
///
/// # Errors
/// [`Error::Empty`] if `columns` is 0; [`Error::ShapeMismatch`] if the length
/// is not a multiple of `columns`.
///
/// # Example
/// ```
/// let data = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
/// let rows = mvdist::data::rows_from_slice(&data, 3)?;
/// assert_eq!(rows.dim(), (2, 3));
/// assert_eq!(rows[(1, 0)], 4.0);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn rows_from_slice(data: &[f64], columns: usize) -> Result<ArrayView2<'_, f64>> {
    if columns == 0 {
        return Err(Error::Empty { what: "columns" });
    }
    if !data.len().is_multiple_of(columns) {
        return Err(Error::ShapeMismatch {
            what: "slice length (a multiple of the column count)",
            expected: data.len().div_ceil(columns) * columns,
            found: data.len(),
        });
    }
    ArrayView2::from_shape((data.len() / columns, columns), data).map_err(|_| {
        Error::ShapeMismatch {
            what: "slice length",
            expected: columns,
            found: data.len(),
        }
    })
}

/// A single row of `p` finite values: [`Error::ShapeMismatch`] for a wrong
/// length, [`Error::NonFinite`] (naming `row` and the column) otherwise.
pub(crate) fn check_row(values: &[f64], p: usize, row: usize) -> Result<()> {
    if values.len() != p {
        return Err(Error::ShapeMismatch {
            what: "row length (number of variables)",
            expected: p,
            found: values.len(),
        });
    }
    check_row_finite(values, row)
}

/// The first non-finite value of a row, as an error naming `row`.
pub(crate) fn check_row_finite(values: &[f64], row: usize) -> Result<()> {
    match values.iter().position(|v| !v.is_finite()) {
        Some(column) => Err(Error::NonFinite {
            row,
            column,
            value: values[column],
        }),
        None => Ok(()),
    }
}

/// The first non-finite value of a matrix in row order, as an error.
pub(crate) fn check_finite(x: ArrayView2<'_, f64>) -> Result<()> {
    for (row, r) in x.outer_iter().enumerate() {
        if let Some(column) = r.iter().position(|v| !v.is_finite()) {
            return Err(Error::NonFinite {
                row,
                column,
                value: r[column],
            });
        }
    }
    Ok(())
}

/// Checks that `x` has at least one row and exactly `p` columns.
pub(crate) fn check_columns(x: ArrayView2<'_, f64>, p: usize) -> Result<()> {
    if x.ncols() != p {
        return Err(Error::ShapeMismatch {
            what: "number of columns (variables)",
            expected: p,
            found: x.ncols(),
        });
    }
    Ok(())
}

/// A square view of a `p × p` row-major buffer.
pub(crate) fn square_view(data: &[f64], p: usize) -> ArrayView2<'_, f64> {
    matrix_view(data, p, p)
}

/// A `rows × cols` view of a row-major buffer.
///
/// Every owning type builds its buffer with exactly `rows · cols` values, so
/// the view always has that shape; should that ever not hold, the view is
/// empty (`0 × 0`) rather than a panic in the caller's service.
pub(crate) fn matrix_view<T>(data: &[T], rows: usize, cols: usize) -> ArrayView2<'_, T> {
    ArrayView2::from_shape((rows, cols), data).unwrap_or_else(|_| ndarray::aview2::<T, 0>(&[]))
}
