//! Library values to Python objects: numpy arrays out, and serde values
//! (reports, diagnoses, references) as plain dicts and lists.

use pyo3::prelude::*;
use pyo3::types::{PyDict, PyList};
use serde::Serialize;
use serde_json::Value;

/// A serializable library value as Python dicts, lists, floats, ints,
/// strings, booleans and None. Non-finite floats, which JSON cannot hold,
/// arrive as None.
pub(crate) fn to_python<T: Serialize>(py: Python<'_>, value: &T) -> PyResult<Py<PyAny>> {
    let v = serde_json::to_value(value)
        .map_err(|e| crate::invalid(format!("could not convert a result: {e}")))?;
    json_to_python(py, &v)
}

fn json_to_python(py: Python<'_>, v: &Value) -> PyResult<Py<PyAny>> {
    Ok(match v {
        Value::Null => py.None(),
        Value::Bool(b) => b.into_pyobject(py)?.to_owned().into_any().unbind(),
        Value::Number(n) => {
            if let Some(i) = n.as_u64() {
                i.into_pyobject(py)?.into_any().unbind()
            } else if let Some(i) = n.as_i64() {
                i.into_pyobject(py)?.into_any().unbind()
            } else {
                n.as_f64()
                    .unwrap_or(f64::NAN)
                    .into_pyobject(py)?
                    .into_any()
                    .unbind()
            }
        }
        Value::String(s) => s.into_pyobject(py)?.into_any().unbind(),
        Value::Array(items) => {
            let list = PyList::empty(py);
            for item in items {
                list.append(json_to_python(py, item)?)?;
            }
            list.into_any().unbind()
        }
        Value::Object(map) => {
            let dict = PyDict::new(py);
            for (k, item) in map {
                dict.set_item(k, json_to_python(py, item)?)?;
            }
            dict.into_any().unbind()
        }
    })
}
