//! Nearest-centroid classification (linear and quadratic rules).

use crate::input::matrix;
use crate::model::divisor;
use crate::{check, invalid, threads};
use mvdist::classification::{
    Classifier, ClassifierOptions, LeaveOneOut, PredictOptions, Predictions, Priors, Rule,
};
use ndarray::ArrayView2;
use numpy::{IntoPyArray, PyArray1, PyArray2};
use pyo3::prelude::*;
use pyo3::types::{PyDict, PyList};

/// Python labels mapped to group indices in order of first appearance.
struct Labels<'py> {
    /// The distinct labels.
    distinct: Bound<'py, PyList>,
    /// The group index of every row.
    groups: Vec<usize>,
}

fn labels<'py>(obj: &Bound<'py, PyAny>) -> PyResult<Labels<'py>> {
    let py = obj.py();
    let index = PyDict::new(py);
    let distinct = PyList::empty(py);
    let mut groups = Vec::new();
    let items = obj.call_method0("tolist").unwrap_or_else(|_| obj.clone());
    for (i, item) in items
        .try_iter()
        .map_err(|_| invalid("labels: expected a sequence with one label per row"))?
        .enumerate()
    {
        let item = item?;
        if let Ok(f) = item.extract::<f64>() {
            if f.is_nan() {
                return Err(invalid(format!("labels: row {i} has a NaN label")));
            }
        }
        let g = match index
            .get_item(&item)
            .map_err(|_| invalid(format!("labels: the label of row {i} cannot be hashed")))?
        {
            Some(g) => g.extract::<usize>()?,
            None => {
                let g = distinct.len();
                index.set_item(&item, g)?;
                distinct.append(&item)?;
                g
            }
        };
        groups.push(g);
    }
    Ok(Labels { distinct, groups })
}

fn rule(name: &str) -> PyResult<Rule> {
    match name {
        "linear" => Ok(Rule::Linear),
        "quadratic" => Ok(Rule::Quadratic),
        other => Err(invalid(format!(
            "rule '{other}': use 'linear' (one pooled scatter) or 'quadratic' (a scatter per group)"
        ))),
    }
}

fn options(
    distinct: &Bound<'_, PyList>,
    rule_name: &str,
    priors: &Bound<'_, PyAny>,
    divisor_name: &str,
) -> PyResult<ClassifierOptions<usize>> {
    let mut o = ClassifierOptions::new(rule(rule_name)?).with_divisor(divisor(divisor_name)?);
    if let Ok(name) = priors.extract::<String>() {
        o = o.with_priors(match name.as_str() {
            "proportional" => Priors::Proportional,
            "equal" => Priors::Equal,
            other => {
                return Err(invalid(format!(
                    "priors '{other}': use 'proportional' (group shares of the rows), 'equal', \
                     or a dict from label to prior"
                )))
            }
        });
    } else if let Ok(d) = priors.cast::<PyDict>() {
        let mut given = Vec::new();
        for (label, prior) in d.iter() {
            let g = (0..distinct.len())
                .find(|&g| {
                    distinct
                        .get_item(g)
                        .and_then(|l| l.eq(&label))
                        .unwrap_or(false)
                })
                .ok_or_else(|| invalid(format!("priors: label {label} has no rows")))?;
            let p: f64 = prior
                .extract()
                .map_err(|_| invalid(format!("priors: the prior of {label} is not a number")))?;
            given.push((g, p));
        }
        o = o.with_priors(Priors::Given(given));
    } else {
        return Err(invalid(
            "priors: use 'proportional', 'equal', or a dict from label to prior",
        ));
    }
    Ok(o)
}

/// Reads rows, labels and classifier options, then runs `f` without the
/// GIL on the float64 rows, the group of every row and the options.
fn with_labelled_rows<'py, T: Send>(
    rows: &Bound<'py, PyAny>,
    labels: &Bound<'py, PyAny>,
    rule: &str,
    priors: Option<&Bound<'py, PyAny>>,
    divisor: &str,
    f: impl FnOnce(ArrayView2<'_, f64>, &[usize], &ClassifierOptions<usize>) -> mvdist::Result<T> + Send,
) -> PyResult<(T, Labels<'py>)> {
    let py = rows.py();
    let m = matrix(rows, "rows")?;
    let l = self::labels(labels)?;
    let default = "proportional".into_pyobject(py)?.into_any();
    let o = options(&l.distinct, rule, priors.unwrap_or(&default), divisor)?;
    let x = m.f64_view();
    let v = x.view();
    let groups = &l.groups;
    let out = check(py.detach(|| f(v, groups, &o)))?;
    Ok((out, l))
}

/// Assigns rows to the group with the nearest centroid in squared
/// distance (adjusted by priors and, for the quadratic rule, by each
/// group's scatter), with posterior probabilities and a typicality p-value.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rng = np.random.default_rng(3)
///     >>> rows = np.vstack([rng.normal(0, 1, (30, 2)), rng.normal(4, 1, (30, 2))])
///     >>> labels = ["a"] * 30 + ["b"] * 30
///     >>> c = mvdist.Classifier.fit(rows, labels)
///     >>> c.predict([[4.2, 3.9]]).labels
///     ['b']
#[pyclass(name = "Classifier", module = "mvdist", frozen)]
pub(crate) struct PyClassifier {
    inner: Classifier<usize>,
    distinct: Py<PyList>,
}

#[pymethods]
impl PyClassifier {
    /// Fits to ``rows`` with ``labels[i]`` the group of row i (any hashable
    /// labels). ``rule``: ``"linear"`` (pooled scatter) or
    /// ``"quadratic"``; ``priors``: ``"proportional"``, ``"equal"`` or a
    /// dict from label to prior.
    #[staticmethod]
    #[pyo3(signature = (rows, labels, rule="linear", priors=None, divisor="unbiased"))]
    fn fit(
        rows: &Bound<'_, PyAny>,
        labels: &Bound<'_, PyAny>,
        rule: &str,
        priors: Option<&Bound<'_, PyAny>>,
        divisor: &str,
    ) -> PyResult<Self> {
        let (inner, l) = with_labelled_rows(rows, labels, rule, priors, divisor, |v, g, o| {
            Classifier::fit(v, g, o)
        })?;
        Ok(PyClassifier {
            inner,
            distinct: l.distinct.unbind(),
        })
    }

    /// The distinct labels, in group order.
    #[getter]
    fn classes(&self, py: Python<'_>) -> Py<PyList> {
        self.distinct.clone_ref(py)
    }

    /// "linear" or "quadratic".
    #[getter]
    fn rule(&self) -> &'static str {
        match self.inner.rule() {
            Rule::Linear => "linear",
            Rule::Quadratic => "quadratic",
        }
    }

    /// Number of variables.
    #[getter]
    fn dim(&self) -> usize {
        self.inner.dim()
    }

    /// Rows per group.
    #[getter]
    fn counts(&self) -> Vec<usize> {
        self.inner.counts().to_vec()
    }

    /// Prior probability of each group.
    #[getter]
    fn priors(&self) -> Vec<f64> {
        self.inner.priors().to_vec()
    }

    /// Group centroids, groups × variables.
    #[getter]
    fn centroids<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray2<f64>> {
        self.inner.centroids().to_owned().into_pyarray(py)
    }

    /// Predictions for ``rows``. ``no_group_below``: mark rows whose
    /// typicality p-value is below this level for every group.
    #[pyo3(signature = (rows, typicality=true, no_group_below=None, threads=None))]
    fn predict(
        &self,
        py: Python<'_>,
        rows: &Bound<'_, PyAny>,
        typicality: bool,
        no_group_below: Option<f64>,
        threads: Option<usize>,
    ) -> PyResult<PyPredictions> {
        let m = matrix(rows, "rows")?;
        let mut o = PredictOptions::default().with_typicality(typicality);
        if let Some(level) = no_group_below {
            o = o.with_no_group_below(level);
        }
        let x = m.f64_view();
        let v = x.view();
        let out = threads::run(py, threads, || {
            let mut out = Predictions::new();
            self.inner.predict_into(v, &o, &mut out).map(|_| out)
        })?;
        Ok(PyPredictions {
            inner: check(out)?,
            distinct: self.distinct.clone_ref(py),
        })
    }

    /// Rebuilds a classifier from ``__reduce__``'s state (for pickle).
    #[staticmethod]
    fn _from_state(state: &str, classes: Bound<'_, PyList>) -> PyResult<Self> {
        let inner: Classifier<usize> =
            serde_json::from_str(state).map_err(|e| invalid(format!("classifier state: {e}")))?;
        if classes.len() != inner.group_count() {
            return Err(invalid(format!(
                "classifier state: {} classes for {} groups",
                classes.len(),
                inner.group_count()
            )));
        }
        Ok(PyClassifier {
            inner,
            distinct: classes.unbind(),
        })
    }

    fn __reduce__<'py>(slf: &Bound<'py, Self>) -> PyResult<Reduced<'py>> {
        let py = slf.py();
        let me = slf.get();
        let state = serde_json::to_string(&me.inner)
            .map_err(|e| invalid(format!("could not save the classifier: {e}")))?;
        let f = slf.get_type().getattr("_from_state")?;
        Ok((f, (state, me.distinct.clone_ref(py))))
    }

    fn __repr__(&self, py: Python<'_>) -> String {
        format!(
            "Classifier(rule='{}', classes={}, dim={})",
            self.rule(),
            self.distinct
                .bind(py)
                .repr()
                .map(|r| r.to_string())
                .unwrap_or_default(),
            self.inner.dim()
        )
    }
}

/// What `__reduce__` returns: the rebuilding function and its arguments.
type Reduced<'py> = (Bound<'py, PyAny>, (String, Py<PyList>));

/// Class predictions for a batch of rows.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rows = np.array([[0.0, 0.1], [0.2, -0.1], [-0.1, 0.0], [0.1, 0.2],
///     ...                  [5.0, 5.1], [5.2, 4.9], [4.9, 5.0], [5.1, 5.2]])
///     >>> c = mvdist.Classifier.fit(rows, [0, 0, 0, 0, 1, 1, 1, 1])
///     >>> p = c.predict([[0.0, 0.0], [5.0, 5.0]])
///     >>> p.labels, p.posteriors.shape
///     ([0, 1], (2, 2))
#[pyclass(name = "Predictions", module = "mvdist", frozen)]
pub(crate) struct PyPredictions {
    inner: Predictions,
    distinct: Py<PyList>,
}

#[pymethods]
impl PyPredictions {
    /// The assigned label of every row (a list).
    #[getter]
    fn labels(&self, py: Python<'_>) -> PyResult<Py<PyList>> {
        let d = self.distinct.bind(py);
        let out = PyList::empty(py);
        for &g in self.inner.assigned() {
            out.append(d.get_item(g)?)?;
        }
        Ok(out.unbind())
    }

    /// The assigned group index of every row (into ``classes``).
    #[getter]
    fn assigned<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<usize>> {
        PyArray1::from_slice(py, self.inner.assigned())
    }

    /// Squared distance of every row to every group, rows × groups.
    #[getter]
    fn squared_distances<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray2<f64>> {
        self.inner.squared_distances().to_owned().into_pyarray(py)
    }

    /// Posterior probability of every group for every row.
    #[getter]
    fn posteriors<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray2<f64>> {
        self.inner.posteriors().to_owned().into_pyarray(py)
    }

    /// Typicality p-value of each row under its assigned group (NaN where
    /// not requested).
    #[getter]
    fn typicality<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, self.inner.typicality())
    }

    /// True for rows atypical of every group at ``no_group_below``.
    #[getter]
    fn no_group<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<bool>> {
        PyArray1::from_slice(py, self.inner.no_group())
    }

    fn __len__(&self) -> usize {
        self.inner.len()
    }

    fn __repr__(&self) -> String {
        format!(
            "Predictions(rows={}, groups={})",
            self.inner.len(),
            self.inner.group_count()
        )
    }
}

/// Leave-one-out estimate of the error rate: each row is classified by the
/// classifier fitted without it. Returns a dict with ``error_rate``,
/// ``assigned`` (labels), ``confusion`` (groups × groups counts, rows
/// actual, columns assigned), ``classes``, ``posteriors``.
///
/// Example:
///     >>> import numpy as np, mvdist
///     >>> rng = np.random.default_rng(9)
///     >>> rows = np.vstack([rng.normal(0, 1, (20, 2)), rng.normal(6, 1, (20, 2))])
///     >>> mvdist.leave_one_out(rows, [0] * 20 + [1] * 20)["error_rate"]
///     0.0
#[pyfunction]
#[pyo3(signature = (rows, labels, rule="linear", priors=None, divisor="unbiased"))]
pub(crate) fn leave_one_out<'py>(
    py: Python<'py>,
    rows: &Bound<'py, PyAny>,
    labels: &Bound<'py, PyAny>,
    rule: &str,
    priors: Option<&Bound<'py, PyAny>>,
    divisor: &str,
) -> PyResult<Bound<'py, PyDict>> {
    let (r, l) = with_labelled_rows(rows, labels, rule, priors, divisor, |v, g, o| {
        LeaveOneOut::estimate(v, g, o)
    })?;
    let d = PyDict::new(py);
    d.set_item("error_rate", r.error_rate())?;
    let assigned = PyList::empty(py);
    for &g in r.assigned() {
        assigned.append(l.distinct.get_item(g)?)?;
    }
    d.set_item("assigned", assigned)?;
    d.set_item("confusion", r.confusion().counts().into_pyarray(py))?;
    d.set_item("classes", &l.distinct)?;
    d.set_item("posteriors", r.posteriors().to_owned().into_pyarray(py))?;
    Ok(d)
}
