//! Hotelling T² tests of means and Box's M test of equal scatter.

use crate::convert::to_python;
use crate::input::{matrix, vector};
use crate::model::reference_dict;
use crate::{check, invalid};
use mvdist::calibration::TestStatistic;
use mvdist::mean_tests::{self, MeanComparison, MeanTestKind, ScatterEquality};
use numpy::PyArray1;
use pyo3::prelude::*;

/// The result of a Hotelling T² test of means: the statistic, its F
/// transform and p-value, and simultaneous and Bonferroni intervals.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rows = np.random.default_rng(10).normal(size=(30, 2)) + [0.0, 1.0]
///     >>> t = mvdist.mean_tests.one_sample(rows, [0.0, 0.0])
///     >>> t.rejects(0.01), t.kind
///     (True, 'one_sample')
#[pyclass(name = "MeanComparison", module = "mvdist", frozen)]
pub(crate) struct PyMeanComparison {
    inner: MeanComparison,
}

#[pymethods]
impl PyMeanComparison {
    /// "one_sample", "paired", "two_sample_pooled" or
    /// "two_sample_unequal_scatter".
    #[getter]
    fn kind(&self) -> &'static str {
        match self.inner.kind() {
            MeanTestKind::OneSample => "one_sample",
            MeanTestKind::Paired => "paired",
            MeanTestKind::TwoSamplePooled => "two_sample_pooled",
            MeanTestKind::TwoSampleUnequalScatter => "two_sample_unequal_scatter",
            #[allow(unreachable_patterns)]
            _ => "other",
        }
    }

    /// Hotelling's T².
    #[getter]
    fn t_squared(&self) -> f64 {
        self.inner.t_squared()
    }

    /// The F statistic, ``t_squared / t_squared_per_f``.
    #[getter]
    fn f_statistic(&self) -> f64 {
        self.inner.f_statistic()
    }

    /// Numerator degrees of freedom of the F reference.
    #[getter]
    fn numerator_dof(&self) -> f64 {
        self.inner.numerator_dof()
    }

    /// Denominator degrees of freedom of the F reference.
    #[getter]
    fn denominator_dof(&self) -> f64 {
        self.inner.denominator_dof()
    }

    /// The p-value.
    #[getter]
    fn p_value(&self) -> f64 {
        self.inner.p_value()
    }

    /// The estimated mean (or mean difference), a float64 array.
    #[getter]
    fn estimate<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, self.inner.estimate())
    }

    /// The hypothesized value, a float64 array.
    #[getter]
    fn hypothesized<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, self.inner.hypothesized())
    }

    /// Standard errors of the estimate, per variable.
    #[getter]
    fn standard_errors<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, self.inner.standard_errors())
    }

    /// The sample sizes.
    #[getter]
    fn sample_sizes(&self) -> Vec<usize> {
        self.inner.sample_sizes().to_vec()
    }

    /// Whether the test rejects equal means at level ``alpha``.
    fn rejects(&self, alpha: f64) -> PyResult<bool> {
        check(self.inner.rejects(alpha))
    }

    /// The T² above which the test rejects at level ``alpha``.
    fn critical_t_squared(&self, alpha: f64) -> PyResult<f64> {
        check(self.inner.critical_t_squared(alpha))
    }

    /// One dict per variable: ``variable``, ``estimate``,
    /// ``standard_error``, ``simultaneous`` and ``bonferroni`` intervals
    /// (dicts with ``lower`` and ``upper``) at confidence ``1 - alpha``.
    fn intervals(&self, py: Python<'_>, alpha: f64) -> PyResult<Py<PyAny>> {
        to_python(py, &check(self.inner.intervals(alpha))?)
    }

    /// The result as a dict.
    fn to_dict(&self, py: Python<'_>) -> PyResult<Py<PyAny>> {
        to_python(py, &self.inner)
    }

    fn __repr__(&self) -> String {
        format!(
            "MeanComparison(kind='{}', t_squared={:.6}, f_statistic={:.6}, dof=({}, {}), p_value={:.6})",
            self.kind(),
            self.inner.t_squared(),
            self.inner.f_statistic(),
            self.inner.numerator_dof(),
            self.inner.denominator_dof(),
            self.inner.p_value()
        )
    }
}

/// Hotelling's one-sample T² test that the mean of ``rows`` equals
/// ``target``.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rows = np.random.default_rng(5).normal(size=(40, 3))
///     >>> t = mvdist.mean_tests.one_sample(rows, [0.0, 0.0, 0.0])
///     >>> t.numerator_dof, t.denominator_dof
///     (3.0, 37.0)
#[pyfunction]
pub(crate) fn one_sample(
    py: Python<'_>,
    rows: &Bound<'_, PyAny>,
    target: &Bound<'_, PyAny>,
) -> PyResult<PyMeanComparison> {
    let m = matrix(rows, "rows")?;
    let target = vector(target, "target")?;
    let x = m.f64_view();
    let v = x.view();
    let inner = check(py.detach(|| mean_tests::one_sample(v, &target)))?;
    Ok(PyMeanComparison { inner })
}

/// Hotelling's two-sample T² test of equal means, with a pooled scatter
/// (``equal_scatter=True``) or without assuming equal scatter
/// (Krishnamoorthy and Yu's modified Nel–Van der Merwe test).
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rng = np.random.default_rng(11)
///     >>> a, b = rng.normal(size=(25, 3)), rng.normal(size=(30, 3))
///     >>> t = mvdist.mean_tests.two_sample(a, b)
///     >>> t.numerator_dof, t.denominator_dof
///     (3.0, 51.0)
#[pyfunction]
#[pyo3(signature = (first, second, equal_scatter=true))]
pub(crate) fn two_sample(
    py: Python<'_>,
    first: &Bound<'_, PyAny>,
    second: &Bound<'_, PyAny>,
    equal_scatter: bool,
) -> PyResult<PyMeanComparison> {
    let a = matrix(first, "first")?;
    let b = matrix(second, "second")?;
    let (a, b) = (a.f64_view(), b.f64_view());
    let (va, vb) = (a.view(), b.view());
    let inner = check(py.detach(|| {
        if equal_scatter {
            mean_tests::two_sample(va, vb)
        } else {
            mean_tests::two_sample_unequal_scatter(va, vb)
        }
    }))?;
    Ok(PyMeanComparison { inner })
}

/// The paired T² test: row i of ``first`` and of ``second`` are two
/// measurements of the same unit.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rng = np.random.default_rng(12)
///     >>> before = rng.normal(size=(15, 2))
///     >>> after = before + 0.5 + rng.normal(scale=0.3, size=(15, 2))
///     >>> t = mvdist.mean_tests.paired(before, after)
///     >>> t.kind
///     'paired'
#[pyfunction]
pub(crate) fn paired(
    py: Python<'_>,
    first: &Bound<'_, PyAny>,
    second: &Bound<'_, PyAny>,
) -> PyResult<PyMeanComparison> {
    let a = matrix(first, "first")?;
    let b = matrix(second, "second")?;
    let (a, b) = (a.f64_view(), b.f64_view());
    let (va, vb) = (a.view(), b.view());
    let inner = check(py.detach(|| mean_tests::paired(va, vb)))?;
    Ok(PyMeanComparison { inner })
}

/// Box's M test that several groups share one scatter matrix.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rng = np.random.default_rng(13)
///     >>> m = mvdist.mean_tests.scatter_equality([rng.normal(size=(40, 2)), 3 * rng.normal(size=(40, 2))])
///     >>> m.p_value < 0.001
///     True
#[pyclass(name = "ScatterEquality", module = "mvdist", frozen)]
pub(crate) struct PyScatterEquality {
    inner: ScatterEquality,
}

fn statistic_dict(py: Python<'_>, s: &TestStatistic) -> PyResult<Py<PyAny>> {
    let d = pyo3::types::PyDict::new(py);
    d.set_item("value", s.value())?;
    d.set_item("p_value", s.p_value())?;
    d.set_item("reference", reference_dict(py, &s.reference())?)?;
    Ok(d.into_any().unbind())
}

#[pymethods]
impl PyScatterEquality {
    /// Box's M statistic.
    #[getter]
    fn statistic(&self) -> f64 {
        self.inner.statistic()
    }

    /// The p-value (from the F approximation where it applies, else the
    /// chi-square one).
    #[getter]
    fn p_value(&self) -> f64 {
        self.inner.p_value()
    }

    /// The group sizes.
    #[getter]
    fn group_sizes(&self) -> Vec<usize> {
        self.inner.group_sizes().to_vec()
    }

    /// The chi-square approximation: dict with ``value``, ``p_value``,
    /// ``reference``.
    fn chi_square(&self, py: Python<'_>) -> PyResult<Py<PyAny>> {
        statistic_dict(py, &self.inner.chi_square())
    }

    /// The F approximation as a dict, or None where it does not apply.
    fn f(&self, py: Python<'_>) -> PyResult<Option<Py<PyAny>>> {
        self.inner.f().map(|s| statistic_dict(py, &s)).transpose()
    }

    fn __repr__(&self) -> String {
        format!(
            "ScatterEquality(statistic={:.6}, p_value={:.6}, group_sizes={:?})",
            self.inner.statistic(),
            self.inner.p_value(),
            self.inner.group_sizes()
        )
    }
}

/// Box's M test on a list of at least two arrays (one per group, the same
/// columns). Sensitive to non-normality as well as to unequal scatter.
#[pyfunction]
pub(crate) fn scatter_equality(
    py: Python<'_>,
    groups: Vec<Bound<'_, PyAny>>,
) -> PyResult<PyScatterEquality> {
    if groups.is_empty() {
        return Err(invalid(
            "groups: Box's M compares at least two groups; none given",
        ));
    }
    let mut arrays = Vec::with_capacity(groups.len());
    for (g, obj) in groups.iter().enumerate() {
        arrays.push(matrix(obj, &format!("group {g}"))?);
    }
    let owned: Vec<_> = arrays.iter().map(|m| m.f64_view()).collect();
    let views: Vec<_> = owned.iter().map(|c| c.view()).collect();
    let inner = check(py.detach(|| mean_tests::scatter_equality(&views)))?;
    Ok(PyScatterEquality { inner })
}
