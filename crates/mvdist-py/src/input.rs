//! Reading Python arguments as rows: numpy arrays (float64 or float32,
//! any layout, without copying), other numeric arrays and sequences
//! (converted to float64), and pandas DataFrames (whose column names become
//! the variables).

use crate::invalid;
use mvdist::data::Rows;
use ndarray::{CowArray, Ix2};
use numpy::{PyArray1, PyArray2, PyArrayMethods, PyReadonlyArray1, PyReadonlyArray2};
use numpy::{PyUntypedArray, PyUntypedArrayMethods};
use pyo3::prelude::*;
use pyo3::types::PyString;

/// A borrowed two-dimensional numpy array of rows.
pub(crate) enum Matrix<'py> {
    /// float64 rows.
    F64(PyReadonlyArray2<'py, f64>),
    /// float32 rows, widened by the library per block.
    F32(PyReadonlyArray2<'py, f32>),
}

impl Matrix<'_> {
    /// The rows as the library's batch input (a view, no copy).
    pub(crate) fn rows(&self) -> Rows<'_> {
        match self {
            Matrix::F64(a) => Rows::from(a.as_array()),
            Matrix::F32(a) => Rows::from(a.as_array()),
        }
    }

    /// The rows as float64: a view for float64 input, a widened copy for
    /// float32 (for the analyses that take float64 only).
    pub(crate) fn f64_view(&self) -> CowArray<'_, f64, Ix2> {
        match self {
            Matrix::F64(a) => CowArray::from(a.as_array()),
            Matrix::F32(a) => CowArray::from(a.as_array().mapv(f64::from)),
        }
    }

    /// Number of rows.
    pub(crate) fn nrows(&self) -> usize {
        match self {
            Matrix::F64(a) => a.as_array().nrows(),
            Matrix::F32(a) => a.as_array().nrows(),
        }
    }
}

/// Rows read from a Python argument, with column names if it had them.
pub(crate) struct Table<'py> {
    /// The numbers.
    pub(crate) matrix: Matrix<'py>,
    /// Column names of a DataFrame; `None` for plain arrays.
    pub(crate) names: Option<Vec<String>>,
}

/// Reads `obj` (named `what` in messages) as a two-dimensional table of
/// rows × columns.
pub(crate) fn table<'py>(obj: &Bound<'py, PyAny>, what: &str) -> PyResult<Table<'py>> {
    if !obj.is_instance_of::<PyUntypedArray>() && is_data_frame(obj)? {
        return data_frame(obj, what);
    }
    Ok(Table {
        matrix: matrix(obj, what)?,
        names: None,
    })
}

/// Reads `obj` as a two-dimensional numeric array (no column names).
pub(crate) fn matrix<'py>(obj: &Bound<'py, PyAny>, what: &str) -> PyResult<Matrix<'py>> {
    let py = obj.py();
    let array = if obj.is_instance_of::<PyUntypedArray>() {
        obj.clone()
    } else if is_data_frame(obj)? {
        return data_frame(obj, what).map(|t| t.matrix);
    } else {
        let numpy = py.import("numpy")?;
        numpy.call_method1("asarray", (obj,)).map_err(|e| {
            invalid(format!(
                "{what}: could not be read as an array ({e}); pass a 2-D numpy array of numbers"
            ))
        })?
    };
    let untyped = array.cast::<PyUntypedArray>()?;
    if untyped.ndim() != 2 {
        return Err(invalid(format!(
            "{what}: expected a 2-D array (rows × columns), found {} dimension(s) with shape {:?}; \
             for one row use row.reshape(1, -1) or the single-row methods",
            untyped.ndim(),
            untyped.shape()
        )));
    }
    if let Ok(a) = array.cast::<PyArray2<f64>>() {
        return Ok(Matrix::F64(readonly2(a, what)?));
    }
    if let Ok(a) = array.cast::<PyArray2<f32>>() {
        return Ok(Matrix::F32(readonly2(a, what)?));
    }
    let widened = widen(&array, what)?;
    let a = widened.cast::<PyArray2<f64>>()?;
    Ok(Matrix::F64(readonly2(a, what)?))
}

fn readonly2<'py, T: numpy::Element>(
    a: &Bound<'py, PyArray2<T>>,
    what: &str,
) -> PyResult<PyReadonlyArray2<'py, T>> {
    a.try_readonly()
        .map_err(|e| invalid(format!("{what}: the array cannot be read ({e})")))
}

/// Converts an array of another numeric dtype (integers, booleans, other
/// float widths, byte-swapped floats) to float64; refuses object, string,
/// complex and date arrays with a message naming the dtype.
fn widen<'py>(array: &Bound<'py, PyAny>, what: &str) -> PyResult<Bound<'py, PyAny>> {
    let dtype = array.getattr("dtype")?;
    let kind: String = dtype.getattr("kind")?.extract()?;
    match kind.as_str() {
        "f" | "i" | "u" | "b" => array.call_method1("astype", ("float64",)),
        _ => {
            let name = dtype.str()?.to_string();
            let advice = if kind == "O" {
                "an object array (mixed or non-numeric values); convert it with \
                 np.asarray(x, dtype=float) after checking its contents"
            } else if kind == "c" {
                "complex numbers; pass real measurements"
            } else {
                "not numbers"
            };
            Err(invalid(format!(
                "{what}: dtype {name} is {advice}; mvdist reads float64 or float32 (integers and booleans are converted)"
            )))
        }
    }
}

fn is_data_frame(obj: &Bound<'_, PyAny>) -> PyResult<bool> {
    Ok(obj.hasattr("columns")? && obj.hasattr("dtypes")? && obj.hasattr("to_numpy")?)
}

/// A pandas DataFrame: every column must be numeric; names become the
/// variables; all-float32 frames stay float32.
fn data_frame<'py>(frame: &Bound<'py, PyAny>, what: &str) -> PyResult<Table<'py>> {
    let mut names = Vec::new();
    for c in frame.getattr("columns")?.try_iter()? {
        names.push(c?.str()?.to_string());
    }
    let mut all_f32 = !names.is_empty();
    for (j, dtype) in frame.getattr("dtypes")?.try_iter()?.enumerate() {
        let dtype = dtype?;
        let kind: String = dtype.getattr("kind")?.extract()?;
        if !matches!(kind.as_str(), "f" | "i" | "u" | "b") {
            return Err(invalid(format!(
                "{what}: column {j} ('{}') has dtype {} and is not numeric; select the numeric columns",
                names.get(j).map(String::as_str).unwrap_or("?"),
                dtype.str()?
            )));
        }
        let itemsize: usize = dtype.getattr("itemsize")?.extract()?;
        all_f32 &= kind == "f" && itemsize == 4;
    }
    let py = frame.py();
    let kwargs = pyo3::types::PyDict::new(py);
    kwargs.set_item("dtype", if all_f32 { "float32" } else { "float64" })?;
    // Missing cells of nullable integer columns become NaN, which the
    // library then reports by row and column.
    kwargs.set_item("na_value", f64::NAN)?;
    let array = frame.call_method("to_numpy", (), Some(&kwargs))?;
    Ok(Table {
        matrix: matrix(&array, what)?,
        names: Some(names),
    })
}

/// One row, as float64 or float32 values.
pub(crate) enum Row<'py> {
    /// A contiguous float64 array, borrowed.
    F64(PyReadonlyArray1<'py, f64>),
    /// A contiguous float32 array, borrowed.
    F32(PyReadonlyArray1<'py, f32>),
    /// Anything else, converted.
    Owned(Vec<f64>),
}

impl Row<'_> {
    /// Runs `f64_fn` or `f32_fn` on the row's values.
    pub(crate) fn with<R>(
        &self,
        f64_fn: impl FnOnce(&[f64]) -> R,
        f32_fn: impl FnOnce(&[f32]) -> R,
    ) -> R {
        match self {
            Row::F64(a) => match a.as_slice() {
                Ok(s) => f64_fn(s),
                Err(_) => f64_fn(&a.as_array().to_vec()),
            },
            Row::F32(a) => match a.as_slice() {
                Ok(s) => f32_fn(s),
                Err(_) => f32_fn(&a.as_array().to_vec()),
            },
            Row::Owned(v) => f64_fn(v),
        }
    }

    /// The row as float64 values.
    pub(crate) fn to_f64(&self) -> Vec<f64> {
        self.with(<[f64]>::to_vec, |s| {
            s.iter().map(|&x| f64::from(x)).collect()
        })
    }
}

/// Reads `obj` (named `what`) as one row: a 1-D array or a sequence of
/// numbers.
pub(crate) fn row<'py>(obj: &Bound<'py, PyAny>, what: &str) -> PyResult<Row<'py>> {
    if let Ok(a) = obj.cast::<PyArray1<f64>>() {
        return Ok(Row::F64(readonly1(a, what)?));
    }
    if let Ok(a) = obj.cast::<PyArray1<f32>>() {
        return Ok(Row::F32(readonly1(a, what)?));
    }
    if obj.is_instance_of::<PyString>() {
        return Err(invalid(format!("{what}: a string is not a row of numbers")));
    }
    if obj.is_instance_of::<PyUntypedArray>() {
        let untyped = obj.cast::<PyUntypedArray>()?;
        let single_row = untyped.ndim() == 2 && untyped.shape().first() == Some(&1);
        if untyped.ndim() != 1 && !single_row {
            return Err(invalid(format!(
                "{what}: expected one row (a 1-D array), found shape {:?}; for many rows use the batch methods",
                untyped.shape()
            )));
        }
        let flat = if single_row {
            obj.call_method1("reshape", (-1,))?
        } else {
            obj.clone()
        };
        let widened = match flat.cast::<PyArray1<f32>>() {
            Ok(_) => flat.call_method1("astype", ("float64",))?,
            Err(_) if flat.cast::<PyArray1<f64>>().is_ok() => flat,
            Err(_) => widen(&flat, what)?,
        };
        let a = widened.cast::<PyArray1<f64>>()?;
        return Ok(Row::Owned(readonly1(a, what)?.as_array().to_vec()));
    }
    if let Ok(v) = obj.extract::<Vec<f64>>() {
        return Ok(Row::Owned(v));
    }
    // Anything numpy can read as an array (a pandas Series, a tuple of
    // mixed numbers, an object with __array__), with numpy's dtype rules.
    let array = obj
        .py()
        .import("numpy")?
        .call_method1("asarray", (obj,))
        .map_err(|e| {
            invalid(format!(
                "{what}: could not be read as a row of numbers ({e}); pass a 1-D numpy array or a list of floats"
            ))
        })?;
    if array.cast::<PyUntypedArray>()?.ndim() == 0 {
        return Err(invalid(format!(
            "{what}: a single number is not a row; pass a 1-D array of the model's columns"
        )));
    }
    row(&array, what)
}

fn readonly1<'py, T: numpy::Element>(
    a: &Bound<'py, PyArray1<T>>,
    what: &str,
) -> PyResult<PyReadonlyArray1<'py, T>> {
    a.try_readonly()
        .map_err(|e| invalid(format!("{what}: the array cannot be read ({e})")))
}

/// Reads a 1-D sequence of numbers (a target mean, a location).
pub(crate) fn vector(obj: &Bound<'_, PyAny>, what: &str) -> PyResult<Vec<f64>> {
    row(obj, what).map(|r| r.to_f64())
}

/// Checks a DataFrame's column names against a model's variables.
pub(crate) fn check_names(
    model_variables: Option<&[String]>,
    input: Option<&[String]>,
) -> PyResult<()> {
    let (Some(model), Some(input)) = (model_variables, input) else {
        return Ok(());
    };
    if model.len() != input.len() {
        // The library reports the column-count mismatch with numbers.
        return Ok(());
    }
    if let Some(j) = (0..model.len()).find(|&j| model[j] != input[j]) {
        return Err(invalid(format!(
            "column {j} of the DataFrame is '{}' but the model's variable {j} is '{}'; \
             reorder the columns to the model's variables {:?}, or pass df.to_numpy() to skip the name check",
            input[j], model[j], model
        )));
    }
    Ok(())
}
