//! Data conventions: rows are observations, columns are variables.
//!
//! Batch entry points take [`Rows`]: an `ndarray` view of any layout or
//! strides, or a row-major slice with an explicit column count, of `f64`
//! or `f32` values. `ArrayView2<f64>`, `ArrayView2<f32>` and references to
//! owned arrays convert into it, so `model.squared_distances(x.view())`
//! and `model.squared_distances(Rows::from_slice(&data, p)?)` are the same
//! call. Nothing here copies data.

use crate::error::{Error, Result};
use ndarray::{Array2, ArrayView2};

/// A batch of rows (observations × variables) in double or single
/// precision, borrowed without copying.
///
/// Single-precision rows are widened to `f64` block by block as they are
/// used (centring and every sum run in `f64`); fits that need the whole
/// matrix widen it once.
///
/// # Example
/// ```
/// use mvdist::{data::Rows, DistanceModel};
/// use ndarray::array;
///
/// let x = array![[1.0, 2.0], [2.0, 2.9], [3.0, 4.2], [4.0, 4.8], [5.0, 6.1]];
/// let model = DistanceModel::fit(x.view())?;
/// let flat = [3.0, 4.0, 1.0, 2.0];
/// let from_slice = model.squared_distances(Rows::from_slice(&flat, 2)?)?;
/// let narrow = [3.0f32, 4.0, 1.0, 2.0];
/// let from_f32 = model.squared_distances(Rows::from_slice_f32(&narrow, 2)?)?;
/// assert_eq!(from_slice, from_f32); // the values are exact in f32
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug)]
pub enum Rows<'a> {
    /// Double-precision rows.
    F64(ArrayView2<'a, f64>),
    /// Single-precision rows.
    F32(ArrayView2<'a, f32>),
}

impl<'a> Rows<'a> {
    /// A row-major `f64` slice with `columns` columns.
    ///
    /// # Errors
    /// As [`rows_from_slice`].
    pub fn from_slice(data: &'a [f64], columns: usize) -> Result<Self> {
        rows_from_slice(data, columns).map(Rows::F64)
    }

    /// A row-major `f32` slice with `columns` columns.
    ///
    /// # Errors
    /// As [`rows_from_slice`].
    pub fn from_slice_f32(data: &'a [f32], columns: usize) -> Result<Self> {
        slice_shape(data.len(), columns)?;
        Ok(Rows::F32(matrix_view(data, data.len() / columns, columns)))
    }

    /// Number of rows.
    pub fn nrows(&self) -> usize {
        match self {
            Rows::F64(x) => x.nrows(),
            Rows::F32(x) => x.nrows(),
        }
    }

    /// Number of columns.
    pub fn ncols(&self) -> usize {
        match self {
            Rows::F64(x) => x.ncols(),
            Rows::F32(x) => x.ncols(),
        }
    }

    /// Runs `f` on the rows as `f64`: the view itself, or a widened copy of
    /// single-precision rows.
    pub(crate) fn with_f64<R>(self, f: impl FnOnce(ArrayView2<'_, f64>) -> R) -> R {
        match self {
            Rows::F64(x) => f(x),
            Rows::F32(x) => {
                let wide: Array2<f64> = x.mapv(f64::from);
                f(wide.view())
            }
        }
    }
}

impl<'a> From<ArrayView2<'a, f64>> for Rows<'a> {
    fn from(x: ArrayView2<'a, f64>) -> Self {
        Rows::F64(x)
    }
}

impl<'a> From<ArrayView2<'a, f32>> for Rows<'a> {
    fn from(x: ArrayView2<'a, f32>) -> Self {
        Rows::F32(x)
    }
}

impl<'a> From<&'a Array2<f64>> for Rows<'a> {
    fn from(x: &'a Array2<f64>) -> Self {
        Rows::F64(x.view())
    }
}

impl<'a> From<&'a Array2<f32>> for Rows<'a> {
    fn from(x: &'a Array2<f32>) -> Self {
        Rows::F32(x.view())
    }
}

fn slice_shape(len: usize, columns: usize) -> Result<()> {
    if columns == 0 {
        return Err(Error::Empty { what: "columns" });
    }
    if !len.is_multiple_of(columns) {
        return Err(Error::ShapeMismatch {
            what: "slice length (a multiple of the column count)",
            expected: len.div_ceil(columns) * columns,
            found: len,
        });
    }
    Ok(())
}

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
    slice_shape(data.len(), columns)?;
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
    check_length(values, p)?;
    check_row_finite(values, row)
}

/// The error for a row whose every cell is empty (NaN), where empty cells
/// are read as missing.
pub(crate) fn no_observed_value(row: usize) -> Error {
    Error::invalid(
        "row",
        format!("row {row} has no observed value (every cell is empty); drop it"),
    )
}

/// A row must have `p` values.
pub(crate) fn check_length(values: &[f64], p: usize) -> Result<()> {
    if values.len() != p {
        return Err(Error::ShapeMismatch {
            what: "row length (number of columns)",
            expected: p,
            found: values.len(),
        });
    }
    Ok(())
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
            what: "number of columns",
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
