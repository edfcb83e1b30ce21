//! The normality report.

use crate::convert::to_python;
use crate::input::table;
use crate::{check, threads};
use mvdist::normality::{NormalityOptions, NormalityReport, NormalityTest};
use pyo3::prelude::*;

/// Every multivariate normality test of mvdist on one sample (Mardia's
/// skewness and kurtosis, Henze–Zirkler, Royston's H, Doornik–Hansen),
/// with per-variable skewness, kurtosis and Shapiro–Wilk results.
///
/// A non-significant result does not show that the rows are normal; see
/// ``caution``.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> report = mvdist.normality_report(np.random.default_rng(14).normal(size=(100, 2)))
///     >>> [t["test"] for t in report.tests][:2]
///     ['mardia_skewness', 'mardia_skewness_small_sample']
#[pyclass(name = "NormalityReport", module = "mvdist", frozen)]
pub(crate) struct PyNormalityReport {
    report: NormalityReport,
}

#[pymethods]
impl PyNormalityReport {
    /// Number of rows n.
    #[getter]
    fn rows(&self) -> usize {
        self.report.rows
    }

    /// Number of variables p.
    #[getter]
    fn columns(&self) -> usize {
        self.report.columns
    }

    /// The significance level of ``significant`` and the readings.
    #[getter]
    fn alpha(&self) -> f64 {
        self.report.alpha
    }

    /// One dict per test: ``test``, ``statistic``, ``p_value``,
    /// ``significant``, ``reading``, ``reference``, ``details`` for the
    /// tests computed; ``test`` and ``not_computed`` (the reason) for the
    /// others.
    #[getter]
    fn tests(&self, py: Python<'_>) -> PyResult<Py<PyAny>> {
        to_python(py, &self.report.tests)
    }

    /// One dict per variable: ``name``, ``skewness``, ``kurtosis``,
    /// ``shapiro_wilk_w``, ``shapiro_wilk_p_value``.
    #[getter]
    fn per_variable(&self, py: Python<'_>) -> PyResult<Py<PyAny>> {
        to_python(py, &self.report.per_variable)
    }

    /// How to read (and not read) the results.
    #[getter]
    fn caution(&self) -> String {
        self.report.caution.clone()
    }

    /// The p-value of one test by name (``"mardia_skewness"``,
    /// ``"mardia_skewness_small_sample"``, ``"mardia_kurtosis"``,
    /// ``"henze_zirkler"``, ``"royston_h"``, ``"doornik_hansen"``), or None
    /// if it was not computed for this sample.
    fn p_value(&self, test: &str) -> PyResult<Option<f64>> {
        let t = test_named(test)?;
        Ok(self.report.summary(t).map(|s| s.p_value))
    }

    /// The statistic of one test by name, or None if it was not computed.
    fn statistic(&self, test: &str) -> PyResult<Option<f64>> {
        let t = test_named(test)?;
        Ok(self.report.summary(t).map(|s| s.statistic))
    }

    /// The whole report as nested dicts and lists (the JSON keys).
    fn to_dict(&self, py: Python<'_>) -> PyResult<Py<PyAny>> {
        to_python(py, &self.report)
    }

    /// The whole report as JSON text.
    fn to_json(&self) -> PyResult<String> {
        serde_json::to_string_pretty(&self.report)
            .map_err(|e| crate::invalid(format!("could not write the report: {e}")))
    }

    fn __repr__(&self) -> String {
        let mut lines = vec![format!(
            "NormalityReport(rows={}, columns={}, alpha={})",
            self.report.rows, self.report.columns, self.report.alpha
        )];
        for t in NormalityTest::ALL {
            match self.report.summary(t) {
                Some(s) => lines.push(format!(
                    "  {:<32} statistic {:>12.5}  p {:.4}{}",
                    t.title(),
                    s.statistic,
                    s.p_value,
                    if s.significant { "  significant" } else { "" }
                )),
                None => lines.push(format!("  {:<32} not computed", t.title())),
            }
        }
        lines.join("\n")
    }
}

fn test_named(name: &str) -> PyResult<NormalityTest> {
    NormalityTest::ALL
        .into_iter()
        .find(|t| {
            serde_json::to_value(t)
                .ok()
                .and_then(|v| v.as_str().map(|s| s == name))
                .unwrap_or(false)
        })
        .ok_or_else(|| {
            crate::invalid(format!(
                "test '{name}': use mardia_skewness, mardia_skewness_small_sample, mardia_kurtosis, \
                 henze_zirkler, royston_h or doornik_hansen"
            ))
        })
}

/// Runs every multivariate normality test that applies to ``rows``
/// (observations × variables; numpy array or DataFrame) and returns a
/// NormalityReport. The thresholds elsewhere in mvdist assume multivariate
/// normality; this report is evidence about that assumption, not proof.
/// With ``hold_out`` (a fraction), the report also checks the F cutoffs on
/// that share of the rows, held out from a classical fit (its
/// ``to_dict()["calibration"]``).
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rows = np.random.default_rng(4).normal(size=(150, 3))
///     >>> report = mvdist.normality_report(rows)
///     >>> 0.0 <= report.p_value("henze_zirkler") <= 1.0
///     True
#[pyfunction]
#[pyo3(signature = (rows, alpha=0.05, pairwise_row_limit=50_000, variables=None, threads=None, *, hold_out=None))]
pub(crate) fn normality_report(
    py: Python<'_>,
    rows: &Bound<'_, PyAny>,
    alpha: f64,
    pairwise_row_limit: usize,
    variables: Option<Vec<String>>,
    threads: Option<usize>,
    hold_out: Option<f64>,
) -> PyResult<PyNormalityReport> {
    let t = table(rows, "rows")?;
    let names = variables.or(t.names);
    let mut options = NormalityOptions::default()
        .with_alpha(alpha)
        .with_pairwise_row_limit(pairwise_row_limit);
    if let Some(f) = hold_out {
        options = options.with_calibration_check(f);
    }
    let x = t.matrix.f64_view();
    let v = x.view();
    let report = check(threads::run(py, threads, || {
        NormalityReport::compute(v, &options)
    })?)?;
    let report = match names {
        Some(n) => check(report.with_variable_names(n))?,
        None => report,
    };
    Ok(PyNormalityReport { report })
}
