//! Python bindings for mvdist (the extension module `mvdist._native`).
//!
//! The Python package `mvdist` (in `python/mvdist`) re-exports these types
//! and functions under the names of the Rust modules, with type stubs. Each
//! binding validates its Python arguments, converts arrays without copying
//! where the layout allows (float64 or float32, any strides), releases the
//! GIL while Rust computes, and maps every [`mvdist::Error`] to
//! `mvdist.MvdistError` (a `ValueError`) carrying the Rust message and the
//! error's stable kind name.
#![deny(missing_docs)]

mod classification;
mod control_chart;
mod convert;
mod input;
mod mean_tests;
mod model;
mod normality;
mod threads;

use pyo3::prelude::*;

pyo3::create_exception!(
    mvdist,
    MvdistError,
    pyo3::exceptions::PyValueError,
    "Raised for every problem mvdist finds in its input or options.\n\n\
     The message says what is wrong (which row, which column) and what to do; \
     `kind` is a stable name to branch on (for example \"non_finite\")."
);

/// Converts a library error into `MvdistError` with its `kind` attribute.
pub(crate) fn error(e: mvdist::Error) -> PyErr {
    let kind = e.kind().name();
    let err = MvdistError::new_err(e.to_string());
    Python::attach(|py| {
        // Setting an attribute on a fresh exception object cannot fail in
        // practice; if it did, the error still carries its message.
        let _ = err.value(py).setattr("kind", kind);
    });
    err
}

/// An `MvdistError` for a problem found in the Python arguments themselves
/// (kind "invalid_parameter").
pub(crate) fn invalid(message: impl Into<String>) -> PyErr {
    let err = MvdistError::new_err(message.into());
    Python::attach(|py| {
        let _ = err.value(py).setattr("kind", "invalid_parameter");
    });
    err
}

/// Maps a library result into a Python one.
pub(crate) fn check<T>(r: mvdist::Result<T>) -> PyResult<T> {
    r.map_err(error)
}

#[pymodule]
fn _native(m: &Bound<'_, PyModule>) -> PyResult<()> {
    let py = m.py();
    m.add("MvdistError", py.get_type::<MvdistError>())?;
    m.add("__version__", env!("CARGO_PKG_VERSION"))?;
    m.add("CAUTION", model::CAUTION)?;
    m.add_class::<model::PyDistanceModel>()?;
    m.add_class::<model::PyScores>()?;
    m.add_class::<model::PyScorer>()?;
    m.add_class::<model::PyContributions>()?;
    m.add_class::<normality::PyNormalityReport>()?;
    m.add_function(wrap_pyfunction!(normality::normality_report, m)?)?;
    m.add_class::<classification::PyClassifier>()?;
    m.add_class::<classification::PyPredictions>()?;
    m.add_function(wrap_pyfunction!(classification::leave_one_out, m)?)?;
    m.add_class::<mean_tests::PyMeanComparison>()?;
    m.add_class::<mean_tests::PyScatterEquality>()?;
    m.add_function(wrap_pyfunction!(mean_tests::one_sample, m)?)?;
    m.add_function(wrap_pyfunction!(mean_tests::two_sample, m)?)?;
    m.add_function(wrap_pyfunction!(mean_tests::paired, m)?)?;
    m.add_function(wrap_pyfunction!(mean_tests::scatter_equality, m)?)?;
    m.add_class::<control_chart::PyControlChart>()?;
    m.add_class::<control_chart::PyChartPoints>()?;
    m.add_function(wrap_pyfunction!(threads::thread_count, m)?)?;
    Ok(())
}
