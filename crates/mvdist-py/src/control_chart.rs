//! Hotelling T² control charts (individuals and subgroup means).

use crate::convert::to_python;
use crate::input::{matrix, row};
use crate::model::{origin, PyDistanceModel};
use crate::{check, invalid};
use mvdist::control_chart::{
    ChartDesign, ChartPoint, ControlChart, FalseAlarmRate, PhaseOneOptions, PhaseOneStart,
    SignalRemoval,
};
use numpy::{PyArray1, PyArrayMethods};
use pyo3::prelude::*;

#[allow(clippy::too_many_arguments)]
fn phase_one_options(
    alpha: Option<f64>,
    average_run_length: Option<f64>,
    refit_until_clean: bool,
    max_rounds: usize,
    diagnosis_depth: usize,
    screen_with: Option<&PyDistanceModel>,
    screen_origin: &str,
) -> PyResult<PhaseOneOptions> {
    let rate =
        match (alpha, average_run_length) {
            (Some(_), Some(_)) => return Err(invalid(
                "give alpha or average_run_length, not both (one fixes the other: ARL = 1 / alpha)",
            )),
            (Some(a), None) => check(FalseAlarmRate::per_point(a))?,
            (None, Some(arl)) => check(FalseAlarmRate::from_average_run_length(arl))?,
            (None, None) => FalseAlarmRate::default(),
        };
    let mut o = PhaseOneOptions::default()
        .with_false_alarm(rate)
        .with_diagnosis_depth(diagnosis_depth);
    if refit_until_clean {
        o = o.with_removal(SignalRemoval::RefitUntilClean { max_rounds });
    }
    if let Some(m) = screen_with {
        o = o.with_start(PhaseOneStart::ScreenWith {
            model: m.model.clone(),
            origin: origin(screen_origin)?,
        });
    }
    Ok(o)
}

/// A Hotelling T² control chart: Phase I (establishing the in-control
/// location and scatter from historical rows, optionally removing signals
/// and refitting) and Phase II (monitoring new rows against fixed limits),
/// with a diagnosis of which variables drove each signal.
///
/// A signal is evidence that the process may have changed, not a verdict;
/// the limits assume independent, multivariate normal rows.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> history = np.random.default_rng(6).normal(size=(100, 3))
///     >>> chart = mvdist.ControlChart.individuals(history, alpha=0.005)
///     >>> points = chart.monitor(np.array([[0.1, 0.0, -0.2], [5.0, 5.0, 5.0]]))
///     >>> points.signal.tolist()
///     [False, True]
#[pyclass(name = "ControlChart", module = "mvdist", frozen)]
pub(crate) struct PyControlChart {
    inner: ControlChart,
}

#[pymethods]
impl PyControlChart {
    /// A chart of individual observations from the Phase I ``rows``.
    /// The false-alarm rate per point is ``alpha`` or
    /// ``1 / average_run_length`` (default 0.0027). With
    /// ``refit_until_clean``, signalling rows are removed and the estimate
    /// refitted, at most ``max_rounds`` times. ``screen_with`` (a
    /// DistanceModel, for example a robust MCD fit) screens the rows
    /// first.
    #[staticmethod]
    #[pyo3(signature = (rows, alpha=None, average_run_length=None, refit_until_clean=false,
        max_rounds=10, diagnosis_depth=1, screen_with=None, screen_origin="new"))]
    #[allow(clippy::too_many_arguments)]
    fn individuals(
        py: Python<'_>,
        rows: &Bound<'_, PyAny>,
        alpha: Option<f64>,
        average_run_length: Option<f64>,
        refit_until_clean: bool,
        max_rounds: usize,
        diagnosis_depth: usize,
        screen_with: Option<PyRef<'_, PyDistanceModel>>,
        screen_origin: &str,
    ) -> PyResult<Self> {
        let o = phase_one_options(
            alpha,
            average_run_length,
            refit_until_clean,
            max_rounds,
            diagnosis_depth,
            screen_with.as_deref(),
            screen_origin,
        )?;
        let m = matrix(rows, "rows")?;
        let x = m.f64_view();
        let v = x.view();
        let inner = check(py.detach(|| ControlChart::individuals(v, &o)))?;
        Ok(PyControlChart { inner })
    }

    /// A chart of subgroup means: consecutive blocks of ``size`` rows form
    /// the subgroups (the row count must be a multiple of ``size``).
    #[staticmethod]
    #[pyo3(signature = (rows, size, alpha=None, average_run_length=None, refit_until_clean=false,
        max_rounds=10, diagnosis_depth=1))]
    #[allow(clippy::too_many_arguments)]
    fn subgroups(
        py: Python<'_>,
        rows: &Bound<'_, PyAny>,
        size: usize,
        alpha: Option<f64>,
        average_run_length: Option<f64>,
        refit_until_clean: bool,
        max_rounds: usize,
        diagnosis_depth: usize,
    ) -> PyResult<Self> {
        let o = phase_one_options(
            alpha,
            average_run_length,
            refit_until_clean,
            max_rounds,
            diagnosis_depth,
            None,
            "new",
        )?;
        let m = matrix(rows, "rows")?;
        let x = m.f64_view();
        let v = x.view();
        let inner = check(py.detach(|| ControlChart::subgroups(v, size, &o)))?;
        Ok(PyControlChart { inner })
    }

    /// "individuals" or "subgroups".
    #[getter]
    fn design(&self) -> &'static str {
        match self.inner.design() {
            ChartDesign::Individuals => "individuals",
            ChartDesign::Subgroups { .. } => "subgroups",
        }
    }

    /// Number of variables.
    #[getter]
    fn dim(&self) -> usize {
        self.inner.dim()
    }

    /// The in-control location, a float64 array.
    #[getter]
    fn location<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, self.inner.location())
    }

    /// Points (rows or subgroups) in the final Phase I estimate.
    #[getter]
    fn in_estimate(&self) -> usize {
        self.inner.in_estimate()
    }

    /// The false-alarm probability per point.
    #[getter]
    fn alpha(&self) -> f64 {
        self.inner.false_alarm().alpha()
    }

    /// The upper control limit of T² for Phase II (``"new"``) or Phase I
    /// (``"in_sample"``) points.
    #[pyo3(signature = (origin="new"))]
    fn upper_limit(&self, origin: &str) -> PyResult<f64> {
        check(self.inner.upper_limit(crate::model::origin(origin)?))
    }

    /// The Phase I points, as ChartPoints.
    #[getter]
    fn phase_one_points(&self) -> PyChartPoints {
        PyChartPoints {
            points: self.inner.phase_one_points().to_vec(),
        }
    }

    /// The Phase I rounds (removal and refit), as dicts.
    #[getter]
    fn rounds(&self, py: Python<'_>) -> PyResult<Py<PyAny>> {
        to_python(py, &self.inner.rounds())
    }

    /// Phase II: charts new rows (for a subgroup chart, whole subgroups of
    /// rows) against the Phase I limits.
    fn monitor(&self, py: Python<'_>, rows: &Bound<'_, PyAny>) -> PyResult<PyChartPoints> {
        let m = matrix(rows, "rows")?;
        let x = m.f64_view();
        let v = x.view();
        let points = check(py.detach(|| self.inner.monitor(v)))?;
        Ok(PyChartPoints { points })
    }

    /// Which variables (and, with ``depth`` ≥ 1, which relationships
    /// between them) drove one point's T², as a dict of rated terms.
    #[pyo3(signature = (point, origin="new", depth=1))]
    fn diagnose(
        &self,
        py: Python<'_>,
        point: &Bound<'_, PyAny>,
        origin: &str,
        depth: usize,
    ) -> PyResult<Py<PyAny>> {
        let x = row(point, "point")?.to_f64();
        let d = check(
            self.inner
                .diagnose(&x, crate::model::origin(origin)?, depth),
        )?;
        to_python(py, &d)
    }

    /// The chart as JSON text (its estimate, limits and Phase I record).
    fn to_json(&self) -> PyResult<String> {
        serde_json::to_string(&self.inner)
            .map_err(|e| invalid(format!("could not write the chart: {e}")))
    }

    /// A chart from ``to_json``'s text; the contents are checked.
    #[staticmethod]
    fn from_json(text: &str) -> PyResult<Self> {
        let inner: ControlChart =
            serde_json::from_str(text).map_err(|e| invalid(format!("chart JSON: {e}")))?;
        Ok(PyControlChart { inner })
    }

    fn __reduce__<'py>(slf: &Bound<'py, Self>) -> PyResult<(Bound<'py, PyAny>, (String,))> {
        let f = slf.get_type().getattr("from_json")?;
        Ok((f, (slf.get().to_json()?,)))
    }

    fn __repr__(&self) -> String {
        format!(
            "ControlChart(design='{}', dim={}, in_estimate={}, alpha={})",
            self.design(),
            self.inner.dim(),
            self.inner.in_estimate(),
            self.inner.false_alarm().alpha()
        )
    }
}

/// Charted points: arrays of T², limits, p-values and signals, and the
/// full records (status, diagnosis) as dicts.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> chart = mvdist.ControlChart.individuals(np.random.default_rng(8).normal(size=(60, 2)))
///     >>> points = chart.monitor([[0.0, 0.0], [9.0, -9.0]])
///     >>> len(points), points.signal.tolist()
///     (2, [False, True])
#[pyclass(name = "ChartPoints", module = "mvdist", frozen)]
pub(crate) struct PyChartPoints {
    points: Vec<ChartPoint>,
}

impl PyChartPoints {
    fn column<'py>(
        &self,
        py: Python<'py>,
        f: impl Fn(&ChartPoint) -> f64,
    ) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_iter(py, self.points.iter().map(f))
    }
}

#[pymethods]
impl PyChartPoints {
    /// Index of each point (row or subgroup).
    #[getter]
    fn index<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<usize>> {
        PyArray1::from_iter(py, self.points.iter().map(|p| p.index))
    }

    /// T² of each point.
    #[getter]
    fn t_squared<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.column(py, |p| p.t_squared)
    }

    /// The upper control limit each point was compared with.
    #[getter]
    fn upper_limit<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.column(py, |p| p.upper_limit)
    }

    /// p-value of each point's T².
    #[getter]
    fn p_value<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.column(py, |p| p.p_value)
    }

    /// Whether each point signals (T² above its limit).
    #[getter]
    fn signal<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<bool>> {
        PyArray1::from_iter(py, self.points.iter().map(|p| p.signal))
    }

    /// Every point as a dict (``index``, ``t_squared``, ``upper_limit``,
    /// ``p_value``, ``signal``, ``status``, ``diagnosis``).
    fn to_list(&self, py: Python<'_>) -> PyResult<Py<PyAny>> {
        to_python(py, &self.points)
    }

    fn __len__(&self) -> usize {
        self.points.len()
    }

    fn __repr__(&self, py: Python<'_>) -> String {
        let signals = self
            .signal(py)
            .readonly()
            .as_array()
            .iter()
            .filter(|&&s| s)
            .count();
        format!(
            "ChartPoints(points={}, signals={})",
            self.points.len(),
            signals
        )
    }
}
