//! `DistanceModel`, `Scores`, `Scorer` and `Contributions`.

use crate::convert::to_python;
use crate::input::{check_names, table, Matrix};
use crate::{check, error, invalid, threads};
use mvdist::calibration::EmpiricalPValue;
use mvdist::explain::ContributionOrder;
use mvdist::held_out::{fit_holding_out, HoldOutOptions};
use mvdist::incomplete::EmOptions;
use mvdist::model_file::ModelFile;
use mvdist::moments::Divisor;
use mvdist::ndarray::ArrayView2;
use mvdist::robust::McdStage;
use mvdist::robust::{minimum_covariance_determinant, McdOptions};
use mvdist::shrinkage::OasFormula;
use mvdist::{Adjustment, DistanceModel, Reference, RowOrigin, Scorer};
use numpy::{IntoPyArray, PyArray1, PyArray2, PyArrayMethods, PyReadonlyArray1};
use pyo3::prelude::*;
use pyo3::types::PyBytes;
use std::path::PathBuf;

/// How to read the thresholds and flags of this package.
pub(crate) const CAUTION: &str = "Every p-value, cutoff and flag assumes that the reference rows \
come from one multivariate normal population and that the model fits them (check with \
mvdist.normality_report). A flag is evidence that a row deserves a closer look, not a verdict; \
decisions such as releasing a batch or raising an alarm belong to your local quality procedures \
and to qualified people.";

/// Parses an origin name.
pub(crate) fn origin(name: &str) -> PyResult<RowOrigin> {
    match name {
        "new" => Ok(RowOrigin::New),
        "in_sample" => Ok(RowOrigin::InSample),
        "known" | "known_parameters" => Ok(RowOrigin::KnownParameters),
        other => Err(invalid(format!(
            "origin '{other}': use 'new' (rows not used in the fit; F reference), \
             'in_sample' (rows of the fit; Beta reference) or 'known' (treat the estimates as the \
             true parameters; chi-square reference)"
        ))),
    }
}

fn origin_name(o: RowOrigin) -> &'static str {
    match o {
        RowOrigin::New => "new",
        RowOrigin::InSample => "in_sample",
        RowOrigin::KnownParameters => "known",
    }
}

fn adjustment(name: &str) -> PyResult<Adjustment> {
    match name {
        "none" => Ok(Adjustment::None),
        "bonferroni" => Ok(Adjustment::Bonferroni),
        "benjamini_hochberg" => Ok(Adjustment::BenjaminiHochberg),
        other => Err(invalid(format!(
            "adjustment '{other}': use 'none', 'bonferroni' (family-wise error) or \
             'benjamini_hochberg' (false discovery rate)"
        ))),
    }
}

pub(crate) fn divisor(name: &str) -> PyResult<Divisor> {
    match name {
        "unbiased" => Ok(Divisor::Unbiased),
        "maximum_likelihood" => Ok(Divisor::MaximumLikelihood),
        other => Err(invalid(format!(
            "divisor '{other}': use 'unbiased' (n - 1, the default) or 'maximum_likelihood' (n)"
        ))),
    }
}

fn check_alpha(alpha: f64) -> PyResult<()> {
    if alpha > 0.0 && alpha < 1.0 {
        Ok(())
    } else {
        Err(invalid(format!(
            "alpha = {alpha}: a significance level must lie strictly between 0 and 1"
        )))
    }
}

/// The names `column_0`, `column_1`, … given to unnamed variables.
pub(crate) fn default_names(dim: usize) -> Vec<String> {
    (0..dim).map(|j| format!("column_{j}")).collect()
}

/// MCD settings gathered from keyword arguments.
#[derive(Default)]
struct McdArguments {
    support_fraction: Option<f64>,
    seed: Option<u64>,
    starts: Option<usize>,
    stage: Option<String>,
}

impl McdArguments {
    fn given(&self) -> Option<&'static str> {
        if self.support_fraction.is_some() {
            Some("support_fraction")
        } else if self.seed.is_some() {
            Some("seed")
        } else if self.starts.is_some() {
            Some("starts")
        } else if self.stage.is_some() {
            Some("stage")
        } else {
            None
        }
    }

    fn options(&self) -> McdOptions {
        let mut o = McdOptions::default();
        if let Some(f) = self.support_fraction {
            o = o.with_support_fraction(f);
        }
        if let Some(s) = self.seed {
            o = o.with_seed(s);
        }
        if let Some(s) = self.starts {
            o = o.with_starts(s);
        }
        o
    }

    fn stage(&self) -> PyResult<McdStage> {
        match self.stage.as_deref() {
            None | Some("reweighted") => Ok(McdStage::Reweighted),
            Some("raw") => Ok(McdStage::Raw),
            Some(other) => Err(invalid(format!(
                "stage '{other}': use 'reweighted' (the default) or 'raw'"
            ))),
        }
    }
}

/// A fitted location and scatter: squared generalized (Mahalanobis)
/// distances with calibrated p-values, cutoffs and explanations.
///
/// Build one with ``DistanceModel.fit`` (or ``load`` / ``from_bytes``).
/// Models are immutable and may be shared between threads.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rng = np.random.default_rng(7)
///     >>> rows = rng.normal(size=(200, 3))
///     >>> model = mvdist.DistanceModel.fit(rows)
///     >>> model.dim, model.sample_size
///     (3, 200)
///     >>> scores = model.score(rows[:5], origin="in_sample")
///     >>> scores.p_values.shape
///     (5,)
#[pyclass(name = "DistanceModel", module = "mvdist", frozen)]
pub(crate) struct PyDistanceModel {
    pub(crate) model: DistanceModel,
    variables: Vec<String>,
    /// Whether `variables` are real names (checked against DataFrames) or
    /// the defaults.
    named: bool,
}

impl PyDistanceModel {
    pub(crate) fn new(model: DistanceModel, names: Option<Vec<String>>) -> Self {
        let named = names.is_some();
        let variables = names.unwrap_or_else(|| default_names(model.dim()));
        PyDistanceModel {
            model,
            variables,
            named,
        }
    }

    fn from_file(file: ModelFile) -> Self {
        let variables = file.variables().to_vec();
        let named = variables != default_names(variables.len());
        PyDistanceModel {
            model: file.model().clone(),
            variables,
            named,
        }
    }

    fn file(&self) -> PyResult<ModelFile> {
        check(ModelFile::new(self.variables.clone(), self.model.clone()))
    }

    fn names(&self) -> Option<&[String]> {
        self.named.then_some(self.variables.as_slice())
    }

    /// Reads rows for scoring, checking DataFrame names against the model.
    fn rows_of<'py>(&self, rows: &Bound<'py, PyAny>) -> PyResult<Matrix<'py>> {
        let t = table(rows, "rows")?;
        check_names(self.names(), t.names.as_deref())?;
        Ok(t.matrix)
    }
}

#[pymethods]
impl PyDistanceModel {
    /// Fits a model to ``rows`` (observations × variables; float64 or
    /// float32 numpy array of any layout, or a pandas DataFrame whose
    /// column names become the variables).
    ///
    /// ``estimator``: ``"classical"`` (mean and covariance; ``divisor``
    /// ``"unbiased"`` or ``"maximum_likelihood"``), ``"ledoit_wolf"``,
    /// ``"oas"`` (``oas_formula`` ``"published"`` or
    /// ``"without_two_over_p"``, the variant scikit-learn computes) or
    /// ``"mcd"`` (minimum covariance determinant, robust to outliers;
    /// ``support_fraction``, ``seed``, ``starts`` and ``stage``
    /// ``"reweighted"`` or ``"raw"``). ``variables`` names the columns of a
    /// plain array. ``threads`` bounds the threads used (default: the
    /// environment variable MVDIST_THREADS, else one per core).
    ///
    /// Raises MvdistError for NaN or infinite values (naming the row and
    /// column), too few rows, constant or collinear columns.
    ///
    /// Example:
    ///     >>> import numpy as np, mvdist
    ///     >>> rows = np.random.default_rng(1).normal(size=(100, 4))
    ///     >>> robust = mvdist.DistanceModel.fit(rows, "mcd", seed=3)
    ///     >>> robust.fit_method["kind"]
    ///     'mcd'
    #[staticmethod]
    #[pyo3(signature = (rows, estimator="classical", *, divisor=None, oas_formula=None,
        support_fraction=None, seed=None, starts=None, stage=None, variables=None,
        hold_out=None, hold_out_seed=0, threads=None))]
    #[allow(clippy::too_many_arguments)]
    fn fit(
        py: Python<'_>,
        rows: &Bound<'_, PyAny>,
        estimator: &str,
        divisor: Option<&str>,
        oas_formula: Option<&str>,
        support_fraction: Option<f64>,
        seed: Option<u64>,
        starts: Option<usize>,
        stage: Option<String>,
        variables: Option<Vec<String>>,
        hold_out: Option<f64>,
        hold_out_seed: u64,
        threads: Option<usize>,
    ) -> PyResult<Self> {
        let t = table(rows, "rows")?;
        let names = match (variables, t.names) {
            (Some(v), _) => Some(v),
            (None, frame) => frame,
        };
        let mcd = McdArguments {
            support_fraction,
            seed,
            starts,
            stage,
        };
        let refuse = |option: &str| {
            Err(invalid(format!(
                "{option} applies to another estimator, not '{estimator}'"
            )))
        };
        if estimator != "mcd" {
            if let Some(option) = mcd.given() {
                return refuse(option);
            }
        }
        if estimator != "classical" && divisor.is_some() {
            return refuse("divisor");
        }
        if estimator != "oas" && oas_formula.is_some() {
            return refuse("oas_formula");
        }
        if estimator == "em" && hold_out.is_some() {
            return Err(invalid(
                "hold_out needs complete rows (held-out p-values compare distances on every \
                 variable); fit with another estimator on complete rows",
            ));
        }
        let d = crate::model::divisor(divisor.unwrap_or("unbiased"))?;
        let formula = match oas_formula.unwrap_or("published") {
            "published" => OasFormula::Published,
            "without_two_over_p" => OasFormula::WithoutTwoOverP,
            other => {
                return Err(invalid(format!(
                    "oas_formula '{other}': use 'published' (Chen et al. 2010, eq. 23) or \
                     'without_two_over_p' (the variant scikit-learn computes)"
                )))
            }
        };
        let stage = mcd.stage()?;
        let options = mcd.options();
        let choice = match estimator {
            "classical" | "ledoit_wolf" | "oas" | "mcd" | "em" => estimator,
            other => {
                return Err(invalid(format!(
                    "estimator '{other}': use 'classical', 'ledoit_wolf', 'oas', 'mcd' or 'em' \
                     (rows with empty cells as NaN)"
                )))
            }
        };
        let fit_view = |v: ArrayView2<'_, f64>| match choice {
            "classical" => DistanceModel::fit_with_divisor(v, d),
            "ledoit_wolf" => DistanceModel::fit_ledoit_wolf(v),
            "oas" => DistanceModel::fit_oas(v, formula),
            "em" => DistanceModel::fit_incomplete(v, &EmOptions::default()),
            _ => minimum_covariance_determinant(v, &options).and_then(|fit| match stage {
                McdStage::Reweighted => fit.model(),
                McdStage::Raw => fit.raw_model(),
            }),
        };
        let view = t.matrix.f64_view();
        let v = view.view();
        let model = threads::run(py, threads, || match hold_out {
            None => fit_view(v),
            Some(fraction) => {
                let split = HoldOutOptions::default()
                    .with_fraction(fraction)
                    .with_seed(hold_out_seed);
                fit_holding_out(v, &split, fit_view)
            }
        })?;
        let model = check(model)?;
        if let Some(n) = &names {
            if n.len() != model.dim() {
                return Err(invalid(format!(
                    "variables: {} names for {} columns",
                    n.len(),
                    model.dim()
                )));
            }
        }
        let out = PyDistanceModel::new(model, names);
        // Names must be unique and non-empty, as in model files.
        out.file()?;
        Ok(out)
    }

    /// A model from a known location (length p) and covariance (p × p,
    /// symmetric positive definite), estimated from ``sample_size`` rows.
    ///
    /// Example:
    ///     >>> import mvdist
    ///     >>> m = mvdist.DistanceModel.from_parts([0.0, 0.0], [[1.0, 0.0], [0.0, 4.0]], 1000)
    ///     >>> m.squared_distance([1.0, 2.0])
    ///     2.0
    #[staticmethod]
    #[pyo3(signature = (location, covariance, sample_size, variables=None))]
    fn from_parts(
        location: &Bound<'_, PyAny>,
        covariance: &Bound<'_, PyAny>,
        sample_size: usize,
        variables: Option<Vec<String>>,
    ) -> PyResult<Self> {
        let location = crate::input::vector(location, "location")?;
        let c = crate::input::matrix(covariance, "covariance")?;
        let scatter = check(mvdist::Scatter::new(c.f64_view().view()))?;
        let model = check(DistanceModel::from_parts(
            location,
            scatter,
            sample_size,
            mvdist::FitMethod::Supplied,
        ))?;
        let out = PyDistanceModel::new(model, variables);
        out.file()?;
        Ok(out)
    }

    /// Number of variables p.
    #[getter]
    fn dim(&self) -> usize {
        self.model.dim()
    }

    /// Number of rows n the model was estimated from.
    #[getter]
    fn sample_size(&self) -> usize {
        self.model.sample_size()
    }

    /// The variable names (``column_0``, ``column_1``, … unless given).
    #[getter]
    fn variables(&self) -> Vec<String> {
        self.variables.clone()
    }

    /// The location (mean or robust centre), a float64 array of length p.
    #[getter]
    fn location<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, self.model.location())
    }

    /// The scatter (covariance) matrix, a p × p float64 array.
    #[getter]
    fn covariance<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray2<f64>> {
        self.model.scatter().matrix().to_owned().into_pyarray(py)
    }

    /// How the model was fitted, as a dict with a ``kind`` key and the
    /// method's parameters (shrinkage intensity, MCD subset size, …).
    #[getter]
    fn fit_method(&self, py: Python<'_>) -> PyResult<Py<PyAny>> {
        to_python(py, self.model.fit_method())
    }

    /// The squared distance of one row (a 1-D array or a list of p
    /// numbers).
    fn squared_distance(&self, row: &Bound<'_, PyAny>) -> PyResult<f64> {
        let r = crate::input::row(row, "row")?;
        check(r.with(
            |x| self.model.squared_distance(x),
            |x| self.model.squared_distance_f32(x),
        ))
    }

    /// Squared distances of every row, a float64 array of length n.
    ///
    /// Example:
    ///     >>> import numpy as np, mvdist
    ///     >>> m = mvdist.DistanceModel.from_parts([0.0, 0.0], np.eye(2), 50)
    ///     >>> m.squared_distances(np.array([[3.0, 4.0], [0.0, 1.0]]))
    ///     array([25.,  1.])
    #[pyo3(signature = (rows, threads=None))]
    fn squared_distances<'py>(
        &self,
        py: Python<'py>,
        rows: &Bound<'py, PyAny>,
        threads: Option<usize>,
    ) -> PyResult<Bound<'py, PyArray1<f64>>> {
        let m = self.rows_of(rows)?;
        let x = m.rows();
        let d = threads::run(py, threads, || self.model.squared_distances(x))?;
        Ok(check(d)?.into_pyarray(py))
    }

    /// Squared distances and upper-tail p-values of every row, as a Scores
    /// object. ``origin`` selects the reference law: ``"new"`` for rows not
    /// used in the fit (F), ``"in_sample"`` for rows of the fit (Beta),
    /// ``"known"`` to treat the estimates as the true parameters
    /// (chi-square; only for very large fitting samples).
    ///
    /// Example:
    ///     >>> import numpy as np, mvdist
    ///     >>> rows = np.random.default_rng(2).normal(size=(80, 2))
    ///     >>> m = mvdist.DistanceModel.fit(rows)
    ///     >>> s = m.score(rows, origin="in_sample")
    ///     >>> bool(s.flags(0.01, "bonferroni").sum() <= 1)
    ///     True
    #[pyo3(signature = (rows, origin="new", threads=None, *, p_values="law", delta=0.05))]
    fn score(
        &self,
        py: Python<'_>,
        rows: &Bound<'_, PyAny>,
        origin: &str,
        threads: Option<usize>,
        p_values: &str,
        delta: f64,
    ) -> PyResult<PyScores> {
        let o = crate::model::origin(origin)?;
        let kind = empirical_kind(p_values, delta)?;
        if kind.is_some() && o != RowOrigin::New {
            return Err(invalid(
                "held-out p-values are for new rows; use origin='new' with them",
            ));
        }
        let m = self.rows_of(rows)?;
        let n = m.nrows();
        let x = m.rows();
        let (d2, p, reference) = threads::run(py, threads, || {
            let mut d2 = vec![0.0; n];
            let mut p = vec![0.0; n];
            match kind {
                None => self
                    .model
                    .score_into(x, o, &mut d2, &mut p)
                    .map(|r| (d2, p, Some(r))),
                Some(k) => self
                    .model
                    .score_held_out_into(x, k, &mut d2, &mut p)
                    .map(|_| (d2, p, None)),
            }
        })?
        .map_err(error)?;
        Ok(PyScores {
            squared_distances: d2.into_pyarray(py).unbind(),
            p_values: p.into_pyarray(py).unbind(),
            reference,
            basis: p_values_name(kind),
            origin: o,
        })
    }

    /// Scores rows whose empty cells are NaN on their observed variables
    /// (the model's marginal law on them), as a dict of numpy arrays:
    /// ``squared_distances``, ``p_values``, ``observed`` (the number of
    /// variables each row had), and ``patterns`` (distinct patterns of
    /// empty cells).
    ///
    /// Example:
    ///     >>> import numpy as np, mvdist
    ///     >>> rows = np.random.default_rng(4).normal(size=(50, 3))
    ///     >>> m = mvdist.DistanceModel.fit(rows)
    ///     >>> s = m.score_observed([[0.1, np.nan, 0.2], [0.0, 0.5, -0.1]])
    ///     >>> s["observed"].tolist()
    ///     [2, 3]
    #[pyo3(signature = (rows, origin="new", threads=None))]
    fn score_observed(
        &self,
        py: Python<'_>,
        rows: &Bound<'_, PyAny>,
        origin: &str,
        threads: Option<usize>,
    ) -> PyResult<Py<PyAny>> {
        let o = crate::model::origin(origin)?;
        let m = self.rows_of(rows)?;
        let x = m.rows();
        let s = check(threads::run(py, threads, || {
            self.model.score_observed(x, o)
        })?)?;
        let d = pyo3::types::PyDict::new(py);
        d.set_item("squared_distances", s.squared_distances.into_pyarray(py))?;
        d.set_item("p_values", s.p_values.into_pyarray(py))?;
        let observed: Vec<i64> = s.observed.iter().map(|&k| k as i64).collect();
        d.set_item("observed", observed.into_pyarray(py))?;
        d.set_item("patterns", s.patterns)?;
        Ok(d.into_any().unbind())
    }

    /// The number of held-out calibration rows the model carries (fitted
    /// with ``hold_out=``), or None.
    #[getter]
    fn calibration_size(&self) -> Option<usize> {
        self.model.calibration().map(|c| c.len())
    }

    /// The held-out calibration rows' squared distances, increasing, or
    /// None.
    #[getter]
    fn calibration_squared_distances<'py>(
        &self,
        py: Python<'py>,
    ) -> Option<Bound<'py, PyArray1<f64>>> {
        self.model
            .calibration()
            .map(|c| c.squared_distances().to_vec().into_pyarray(py))
    }

    /// The squared distance above which held-out p-values are at most
    /// ``alpha`` (``p_values`` ``"held_out"`` or
    /// ``"held_out_conditional"`` with ``delta``). Raises MvdistError below
    /// the smallest attainable p-value, 1/(m + 1), saying how many rows to
    /// hold out.
    #[pyo3(signature = (alpha, p_values="held_out", delta=0.05))]
    fn held_out_cutoff(&self, alpha: f64, p_values: &str, delta: f64) -> PyResult<f64> {
        let kind = empirical_kind(p_values, delta)?
            .ok_or_else(|| invalid("p_values: use 'held_out' or 'held_out_conditional'"))?;
        check(self.model.held_out_cutoff(alpha, kind))
    }

    /// How the F cutoffs fare on the held-out calibration rows, as a dict:
    /// ``held_out_rows``, ``reference``, ``levels`` (each with ``alpha``,
    /// ``cutoff``, ``exceedances``, ``rate``, ``interval``, ``verdict``,
    /// ``reading``), ``theoretical`` and ``observed`` (Q–Q coordinates)
    /// and ``caution``.
    ///
    /// Example:
    ///     >>> import numpy as np, mvdist
    ///     >>> rows = np.random.default_rng(5).standard_t(3, size=(4000, 3))
    ///     >>> m = mvdist.DistanceModel.fit(rows, hold_out=0.5, hold_out_seed=1)
    ///     >>> check = m.calibration_check()
    ///     >>> check["levels"][1]["verdict"]
    ///     'too_many_flags'
    fn calibration_check(&self, py: Python<'_>) -> PyResult<Py<PyAny>> {
        let c = check(mvdist::held_out::CalibrationCheck::of_model(&self.model))?;
        crate::convert::to_python(py, &c)
    }

    /// The Q–Q chart of the held-out rows against the F law, as SVG text.
    #[pyo3(signature = (title="held-out reference rows"))]
    fn calibration_chart(&self, title: &str) -> PyResult<String> {
        let c = check(mvdist::held_out::CalibrationCheck::of_model(&self.model))?;
        Ok(c.to_svg(title))
    }

    /// The squared distance above which a row's p-value is below
    /// ``alpha``, under the reference law of ``origin``.
    ///
    /// Example:
    ///     >>> import mvdist
    ///     >>> m = mvdist.DistanceModel.from_parts([0.0, 0.0], [[1.0, 0.0], [0.0, 1.0]], 10**9)
    ///     >>> round(m.cutoff(0.05, "known"), 4)  # chi-square(2) 95% point
    ///     5.9915
    #[pyo3(signature = (alpha, origin="new"))]
    fn cutoff(&self, alpha: f64, origin: &str) -> PyResult<f64> {
        check(self.model.cutoff(alpha, crate::model::origin(origin)?))
    }

    /// The reference law of a row's squared distance for ``origin``, as a
    /// dict (its kind and parameters).
    #[pyo3(signature = (origin="new"))]
    fn reference(&self, py: Python<'_>, origin: &str) -> PyResult<Py<PyAny>> {
        let r = check(self.model.reference(crate::model::origin(origin)?))?;
        reference_dict(py, &r)
    }

    /// Splits one row's squared distance into per-variable terms that add
    /// up to it: by default the variable with the largest conditional
    /// contribution first, then the largest given the first, and so on; or
    /// along ``order`` (a permutation of the column indices).
    ///
    /// Example:
    ///     >>> import numpy as np, mvdist
    ///     >>> m = mvdist.DistanceModel.from_parts([0.0, 0.0], np.eye(2), 50, ["a", "b"])
    ///     >>> e = m.explain([1.0, 3.0])
    ///     >>> e.top_variable, e.total
    ///     ('b', 10.0)
    #[pyo3(signature = (row, order=None))]
    fn explain(
        &self,
        row: &Bound<'_, PyAny>,
        order: Option<Vec<usize>>,
    ) -> PyResult<PyContributions> {
        let x = crate::input::row(row, "row")?.to_f64();
        let order = match order {
            None => ContributionOrder::LargestFirst,
            Some(o) => ContributionOrder::Given(o),
        };
        let c = check(self.model.explain(&x, order))?;
        Ok(PyContributions {
            order: c.order().to_vec(),
            terms: c.terms().to_vec(),
            total: c.total(),
            variables: self.variables.clone(),
        })
    }

    /// A Scorer: this model with its cutoff at ``alpha`` computed once, for
    /// fast flags of single rows and batches.
    #[pyo3(signature = (alpha, origin="new"))]
    fn scorer(&self, alpha: f64, origin: &str) -> PyResult<PyScorer> {
        let o = crate::model::origin(origin)?;
        let scorer = check(Scorer::new(self.model.clone(), o, alpha))?;
        Ok(PyScorer {
            scorer,
            variables: self.names().map(<[String]>::to_vec),
        })
    }

    /// Writes the model file (JSON, or the compact checksummed binary form)
    /// with its variable names. The file is written whole or not at all.
    #[pyo3(signature = (path, binary=false))]
    fn save(&self, py: Python<'_>, path: PathBuf, binary: bool) -> PyResult<()> {
        let file = self.file()?;
        check(py.detach(|| file.save(&path, binary)))
    }

    /// Reads a model file written by ``save`` (either form).
    #[staticmethod]
    fn load(py: Python<'_>, path: PathBuf) -> PyResult<Self> {
        let file = check(py.detach(|| ModelFile::load(&path)))?;
        Ok(Self::from_file(file))
    }

    /// The model file in its compact binary form, as bytes.
    fn to_bytes<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyBytes>> {
        Ok(PyBytes::new(py, &self.file()?.to_bytes()))
    }

    /// Reads a model file from bytes (binary or JSON).
    #[staticmethod]
    fn from_bytes(data: &[u8]) -> PyResult<Self> {
        Ok(Self::from_file(check(ModelFile::from_any(data))?))
    }

    /// The model file as pretty-printed JSON text.
    fn to_json(&self) -> PyResult<String> {
        Ok(self.file()?.to_json())
    }

    fn __reduce__<'py>(
        slf: &Bound<'py, Self>,
    ) -> PyResult<(Bound<'py, PyAny>, (Bound<'py, PyBytes>,))> {
        let py = slf.py();
        let load = slf.get_type().getattr("from_bytes")?;
        Ok((load, (slf.get().to_bytes(py)?,)))
    }

    fn __repr__(&self) -> String {
        let kind = match serde_json::to_value(self.model.fit_method()) {
            Ok(v) => v
                .get("kind")
                .and_then(|k| k.as_str().map(str::to_string))
                .unwrap_or_default(),
            Err(_) => String::new(),
        };
        format!(
            "DistanceModel(dim={}, sample_size={}, fit_method='{}', variables={:?})",
            self.model.dim(),
            self.model.sample_size(),
            kind,
            self.variables
        )
    }
}

/// A reference law as a dict: ``kind``, ``law`` and ``degrees_of_freedom``.
pub(crate) fn reference_dict(py: Python<'_>, r: &Reference) -> PyResult<Py<PyAny>> {
    let d = pyo3::types::PyDict::new(py);
    d.set_item("kind", r.kind().name())?;
    d.set_item("law", to_python(py, &r.law())?)?;
    d.set_item("degrees_of_freedom", r.degrees_of_freedom())?;
    Ok(d.into_any().unbind())
}

/// Squared distances and p-values of a batch of rows.
///
/// ``squared_distances`` and ``p_values`` are float64 arrays (one value per
/// row); ``flags(alpha, adjustment)`` marks the rows whose (adjusted)
/// p-value is at most ``alpha``. A flag is evidence, not a verdict.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> m = mvdist.DistanceModel.from_parts([0.0, 0.0], np.eye(2), 10**6)
///     >>> s = m.score([[1.0, 1.0], [4.0, 4.0]], origin="known")
///     >>> s.p_values.round(4).tolist(), s.flags(0.01).tolist()
///     ([0.3679, 0.0], [False, True])
#[pyclass(name = "Scores", module = "mvdist", frozen)]
pub(crate) struct PyScores {
    squared_distances: Py<PyArray1<f64>>,
    p_values: Py<PyArray1<f64>>,
    reference: Option<Reference>,
    basis: &'static str,
    origin: RowOrigin,
}

#[pymethods]
impl PyScores {
    /// Squared distances, one per row.
    #[getter]
    fn squared_distances(&self, py: Python<'_>) -> Py<PyArray1<f64>> {
        self.squared_distances.clone_ref(py)
    }

    /// Upper-tail p-values under the reference law, one per row.
    #[getter]
    fn p_values(&self, py: Python<'_>) -> Py<PyArray1<f64>> {
        self.p_values.clone_ref(py)
    }

    /// The origin the rows were scored as ("new", "in_sample", "known").
    #[getter]
    fn origin(&self) -> &'static str {
        origin_name(self.origin)
    }

    /// The reference law used, as a dict (None for held-out p-values).
    #[getter]
    fn reference(&self, py: Python<'_>) -> PyResult<Option<Py<PyAny>>> {
        self.reference
            .as_ref()
            .map(|r| reference_dict(py, r))
            .transpose()
    }

    /// Where the p-values come from: ``"law"``, ``"held_out"`` or
    /// ``"held_out_conditional"``.
    #[getter]
    fn basis(&self) -> &'static str {
        self.basis
    }

    /// p-values adjusted for testing many rows: ``"none"``,
    /// ``"bonferroni"`` or ``"benjamini_hochberg"``.
    #[pyo3(signature = (adjustment="none"))]
    fn adjusted_p_values<'py>(
        &self,
        py: Python<'py>,
        adjustment: &str,
    ) -> PyResult<Bound<'py, PyArray1<f64>>> {
        let a = crate::model::adjustment(adjustment)?;
        let p: PyReadonlyArray1<'_, f64> = self.p_values.bind(py).readonly();
        let v = p.as_array().to_vec();
        Ok(check(mvdist::calibration::adjusted_p_values(&v, a))?.into_pyarray(py))
    }

    /// A boolean array: True where the (adjusted) p-value is at most
    /// ``alpha``. A flag is evidence that a row deserves a closer look.
    #[pyo3(signature = (alpha, adjustment="none"))]
    fn flags<'py>(
        &self,
        py: Python<'py>,
        alpha: f64,
        adjustment: &str,
    ) -> PyResult<Bound<'py, PyArray1<bool>>> {
        check_alpha(alpha)?;
        let q = self.adjusted_p_values(py, adjustment)?;
        let q = q.readonly();
        let flags: Vec<bool> = q.as_array().iter().map(|&v| v <= alpha).collect();
        Ok(flags.into_pyarray(py))
    }

    fn __len__(&self, py: Python<'_>) -> usize {
        self.squared_distances.bind(py).len().unwrap_or(0)
    }

    fn __repr__(&self, py: Python<'_>) -> String {
        format!(
            "Scores(rows={}, origin='{}', p-values from '{}')",
            self.squared_distances.bind(py).len().unwrap_or(0),
            origin_name(self.origin),
            self.reference.map_or("held-out rows", |r| r.kind().name())
        )
    }
}

/// A model with its cutoff at one significance level computed once:
/// ``flag_row`` answers in well under a microsecond of Rust time.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> m = mvdist.DistanceModel.from_parts([0.0, 0.0], np.eye(2), 500)
///     >>> s = m.scorer(0.001)
///     >>> s.flag_row([0.5, -0.2]), s.flag_row([6.0, 6.0])
///     (False, True)
#[pyclass(name = "Scorer", module = "mvdist", frozen)]
pub(crate) struct PyScorer {
    scorer: Scorer,
    variables: Option<Vec<String>>,
}

#[pymethods]
impl PyScorer {
    /// The squared distance above which a row is flagged.
    #[getter]
    fn cutoff(&self) -> f64 {
        self.scorer.cutoff()
    }

    /// The significance level.
    #[getter]
    fn alpha(&self) -> f64 {
        self.scorer.alpha()
    }

    /// The origin of the scored rows.
    #[getter]
    fn origin(&self) -> &'static str {
        origin_name(self.scorer.origin())
    }

    /// Whether one row's squared distance exceeds the cutoff.
    fn flag_row(&self, row: &Bound<'_, PyAny>) -> PyResult<bool> {
        let r = crate::input::row(row, "row")?;
        check(r.with(|x| self.scorer.flag_row(x), |x| self.scorer.flag_row_f32(x)))
    }

    /// One row's ``(squared_distance, p_value, flagged)``.
    fn score_row(&self, row: &Bound<'_, PyAny>) -> PyResult<(f64, f64, bool)> {
        let r = crate::input::row(row, "row")?;
        let s = check(r.with(
            |x| self.scorer.score_row(x),
            |x| self.scorer.score_row_f32(x),
        ))?;
        Ok((s.squared_distance, s.p_value, s.flagged))
    }

    /// Flags of every row (squared distance above the cutoff), a boolean
    /// array; no p-values are computed.
    #[pyo3(signature = (rows, threads=None))]
    fn flag_rows<'py>(
        &self,
        py: Python<'py>,
        rows: &Bound<'py, PyAny>,
        threads: Option<usize>,
    ) -> PyResult<Bound<'py, PyArray1<bool>>> {
        let t = table(rows, "rows")?;
        check_names(self.variables.as_deref(), t.names.as_deref())?;
        let n = t.matrix.nrows();
        let x = t.matrix.rows();
        let flags = threads::run(py, threads, || {
            let mut d2 = vec![0.0; n];
            let mut flags = vec![false; n];
            self.scorer
                .score_into(x, &mut d2, None, &mut flags)
                .map(|_| flags)
        })?;
        Ok(check(flags)?.into_pyarray(py))
    }

    fn __repr__(&self) -> String {
        format!(
            "Scorer(alpha={}, origin='{}', cutoff={})",
            self.scorer.alpha(),
            origin_name(self.scorer.origin()),
            self.scorer.cutoff()
        )
    }
}

/// Per-variable terms of one row's squared distance; they add up to it.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> m = mvdist.DistanceModel.from_parts([0.0, 0.0], [[1.0, 0.0], [0.0, 4.0]], 100, ["a", "b"])
///     >>> m.explain([2.0, 2.0]).in_order()
///     [('a', 4.0), ('b', 1.0)]
#[pyclass(name = "Contributions", module = "mvdist", frozen)]
pub(crate) struct PyContributions {
    order: Vec<usize>,
    terms: Vec<f64>,
    total: f64,
    variables: Vec<String>,
}

#[pymethods]
impl PyContributions {
    /// Column indices in the order the terms were taken.
    #[getter]
    fn order(&self) -> Vec<usize> {
        self.order.clone()
    }

    /// The term of each variable, in column order (float64 array).
    #[getter]
    fn terms<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, &self.terms)
    }

    /// ``(variable name, term)`` pairs in the order taken.
    fn in_order(&self) -> Vec<(String, f64)> {
        self.order
            .iter()
            .map(|&j| (self.variables[j].clone(), self.terms[j]))
            .collect()
    }

    /// The name of the variable taken first.
    #[getter]
    fn top_variable(&self) -> String {
        self.order
            .first()
            .map(|&j| self.variables[j].clone())
            .unwrap_or_default()
    }

    /// The squared distance (the sum of the terms).
    #[getter]
    fn total(&self) -> f64 {
        self.total
    }

    fn __repr__(&self) -> String {
        let parts: Vec<String> = self
            .in_order()
            .iter()
            .map(|(n, t)| format!("{n}: {t:.4}"))
            .collect();
        format!(
            "Contributions(total={:.4}; {})",
            self.total,
            parts.join(", ")
        )
    }
}

/// The held-out p-value kind for a ``p_values`` argument (None for the law).
fn empirical_kind(p_values: &str, delta: f64) -> PyResult<Option<EmpiricalPValue>> {
    let kind = match p_values {
        "law" => return Ok(None),
        "held_out" => EmpiricalPValue::Marginal,
        "held_out_conditional" => EmpiricalPValue::CalibrationConditional { delta },
        other => {
            return Err(invalid(format!(
                "p_values '{other}': use 'law', 'held_out' or 'held_out_conditional'"
            )))
        }
    };
    check(kind.check())?;
    Ok(Some(kind))
}

fn p_values_name(kind: Option<EmpiricalPValue>) -> &'static str {
    match kind {
        None => "law",
        Some(EmpiricalPValue::Marginal) => "held_out",
        Some(_) => "held_out_conditional",
    }
}
