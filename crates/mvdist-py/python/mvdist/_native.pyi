"""Type stubs for the extension module ``mvdist._native`` (written by hand
from the Rust bindings in ``crates/mvdist-py/src``; keep them in step)."""

from __future__ import annotations

import os
from typing import Any, Callable, Hashable, Iterable, Literal, Optional, Sequence, TypedDict, Union, final

import numpy as np
from numpy.typing import ArrayLike, NDArray

# In the order the #[pymodule] function registers them.
__all__ = [
    "MvdistError",
    "__version__",
    "CAUTION",
    "DistanceModel",
    "Scores",
    "Scorer",
    "Contributions",
    "NormalityReport",
    "normality_report",
    "Classifier",
    "Predictions",
    "leave_one_out",
    "MeanComparison",
    "ScatterEquality",
    "one_sample",
    "two_sample",
    "paired",
    "scatter_equality",
    "ControlChart",
    "ChartPoints",
    "thread_count",
]

# Rows are a 2-D array-like (observations × variables): a numpy array of
# any numeric dtype and layout, nested sequences, or a pandas DataFrame
# (which implements ``__array__``; its column names become the variables).
_Rows = ArrayLike
# One row: a 1-D array (or a 1 × p array) or a sequence of numbers.
_Row = ArrayLike
_Path = Union[os.PathLike[str], str]

_Origin = Literal["new", "in_sample", "known", "known_parameters"]
_OriginName = Literal["new", "in_sample", "known"]
_Adjustment = Literal["none", "bonferroni", "benjamini_hochberg"]
_Estimator = Literal["classical", "ledoit_wolf", "oas", "mcd", "em"]
_PValues = Literal["law", "held_out", "held_out_conditional"]
_Divisor = Literal["unbiased", "maximum_likelihood"]
_OasFormula = Literal["published", "without_two_over_p"]
_Stage = Literal["reweighted", "raw"]
_Rule = Literal["linear", "quadratic"]
_Priors = Union[Literal["proportional", "equal"], dict[Any, float]]
_NormalityTest = Literal[
    "mardia_skewness",
    "mardia_skewness_small_sample",
    "mardia_kurtosis",
    "henze_zirkler",
    "royston_h",
    "doornik_hansen",
]
_MeanTestKind = Literal["one_sample", "paired", "two_sample_pooled", "two_sample_unequal_scatter"]
_ChartDesign = Literal["individuals", "subgroups"]

class _Reference(TypedDict):
    """A reference law: its kind, the law with its parameters, and its degrees of freedom."""

    kind: str
    law: dict[str, Any]
    degrees_of_freedom: list[float]

class _TestStatistic(TypedDict):
    """A test statistic with its p-value and reference law."""

    value: float
    p_value: float
    reference: _Reference

class _LeaveOneOut(TypedDict):
    """The result of ``leave_one_out``."""

    error_rate: float
    assigned: list[Any]
    confusion: NDArray[np.uint64]
    classes: list[Any]
    posteriors: NDArray[np.float64]

class MvdistError(ValueError):
    """Raised for every problem mvdist finds in its input or options."""

    kind: str
    """A stable name to branch on (for example "non_finite")."""

__version__: str
"""The version of mvdist."""

CAUTION: str
"""How to read the thresholds and flags of this package."""

@final
class DistanceModel:
    """A fitted location and scatter: squared generalized (Mahalanobis) distances with calibrated p-values, cutoffs and explanations."""

    @staticmethod
    def fit(
        rows: _Rows,
        estimator: _Estimator = "classical",
        *,
        divisor: Optional[_Divisor] = None,
        oas_formula: Optional[_OasFormula] = None,
        support_fraction: Optional[float] = None,
        seed: Optional[int] = None,
        starts: Optional[int] = None,
        stage: Optional[_Stage] = None,
        variables: Optional[Sequence[str]] = None,
        hold_out: Optional[float] = None,
        hold_out_seed: int = 0,
        threads: Optional[int] = None,
    ) -> DistanceModel:
        """Fits a model to ``rows`` (observations × variables; numpy array or pandas DataFrame)."""

    @staticmethod
    def from_parts(
        location: ArrayLike,
        covariance: ArrayLike,
        sample_size: int,
        variables: Optional[Sequence[str]] = None,
    ) -> DistanceModel:
        """A model from a known location (length p) and covariance (p × p, symmetric positive definite), estimated from ``sample_size`` rows."""

    @property
    def dim(self) -> int:
        """Number of variables p."""

    @property
    def sample_size(self) -> int:
        """Number of rows n the model was estimated from."""

    @property
    def variables(self) -> list[str]:
        """The variable names (``column_0``, ``column_1``, … unless given)."""

    @property
    def location(self) -> NDArray[np.float64]:
        """The location (mean or robust centre), a float64 array of length p."""

    @property
    def covariance(self) -> NDArray[np.float64]:
        """The scatter (covariance) matrix, a p × p float64 array."""

    @property
    def fit_method(self) -> dict[str, Any]:
        """How the model was fitted, as a dict with a ``kind`` key and the method's parameters."""

    def squared_distance(self, row: _Row) -> float:
        """The squared distance of one row (a 1-D array or a list of p numbers)."""

    def squared_distances(self, rows: _Rows, threads: Optional[int] = None) -> NDArray[np.float64]:
        """Squared distances of every row, a float64 array of length n."""

    def score(
        self,
        rows: _Rows,
        origin: _Origin = "new",
        threads: Optional[int] = None,
        *,
        p_values: _PValues = "law",
        delta: float = 0.05,
    ) -> Scores:
        """Squared distances and upper-tail p-values of every row, as a Scores object."""

    def score_observed(
        self, rows: _Rows, origin: _Origin = "new", threads: Optional[int] = None
    ) -> dict[str, Any]:
        """Scores rows whose empty cells are NaN on their observed variables, as a dict of numpy arrays."""

    @property
    def calibration_size(self) -> Optional[int]:
        """The number of held-out calibration rows the model carries, or None."""

    @property
    def calibration_squared_distances(self) -> Optional[NDArray[np.float64]]:
        """The held-out calibration rows' squared distances, increasing, or None."""

    def held_out_cutoff(self, alpha: float, p_values: _PValues = "held_out", delta: float = 0.05) -> float:
        """The squared distance above which held-out p-values are at most ``alpha``."""

    def calibration_check(self) -> dict[str, Any]:
        """How the F cutoffs fare on the held-out calibration rows, as a dict."""

    def calibration_chart(self, title: str = "held-out reference rows") -> str:
        """The Q–Q chart of the held-out rows against the F law, as SVG text."""

    def cutoff(self, alpha: float, origin: _Origin = "new") -> float:
        """The squared distance above which a row's p-value is below ``alpha``, under the reference law of ``origin``."""

    def reference(self, origin: _Origin = "new") -> _Reference:
        """The reference law of a row's squared distance for ``origin``, as a dict (its kind and parameters)."""

    def explain(self, row: _Row, order: Optional[Sequence[int]] = None) -> Contributions:
        """Splits one row's squared distance into per-variable terms that add up to it."""

    def scorer(self, alpha: float, origin: _Origin = "new") -> Scorer:
        """A Scorer: this model with its cutoff at ``alpha`` computed once, for fast flags of single rows and batches."""

    def save(self, path: _Path, binary: bool = False) -> None:
        """Writes the model file (JSON, or the compact checksummed binary form) with its variable names."""

    @staticmethod
    def load(path: _Path) -> DistanceModel:
        """Reads a model file written by ``save`` (either form)."""

    def to_bytes(self) -> bytes:
        """The model file in its compact binary form, as bytes."""

    @staticmethod
    def from_bytes(data: bytes) -> DistanceModel:
        """Reads a model file from bytes (binary or JSON)."""

    def to_json(self) -> str:
        """The model file as pretty-printed JSON text."""

    def __reduce__(self) -> tuple[Callable[[bytes], DistanceModel], tuple[bytes]]:
        """Pickle support: rebuilt with ``from_bytes`` from ``to_bytes``."""

    def __repr__(self) -> str:
        """``DistanceModel(dim=…, sample_size=…, fit_method='…', variables=[…])``."""

@final
class Scores:
    """Squared distances and p-values of a batch of rows."""

    @property
    def squared_distances(self) -> NDArray[np.float64]:
        """Squared distances, one per row."""

    @property
    def p_values(self) -> NDArray[np.float64]:
        """Upper-tail p-values under the reference law, one per row."""

    @property
    def origin(self) -> _OriginName:
        """The origin the rows were scored as ("new", "in_sample", "known")."""

    @property
    def reference(self) -> Optional[_Reference]:
        """The reference law used, as a dict (None for held-out p-values)."""

    @property
    def basis(self) -> _PValues:
        """Where the p-values come from: ``"law"``, ``"held_out"`` or ``"held_out_conditional"``."""

    def adjusted_p_values(self, adjustment: _Adjustment = "none") -> NDArray[np.float64]:
        """p-values adjusted for testing many rows: ``"none"``, ``"bonferroni"`` or ``"benjamini_hochberg"``."""

    def flags(self, alpha: float, adjustment: _Adjustment = "none") -> NDArray[np.bool_]:
        """A boolean array: True where the (adjusted) p-value is at most ``alpha``."""

    def __len__(self) -> int:
        """The number of rows scored."""

    def __repr__(self) -> str:
        """``Scores(rows=…, origin='…', reference='…')``."""

@final
class Scorer:
    """A model with its cutoff at one significance level computed once."""

    @property
    def cutoff(self) -> float:
        """The squared distance above which a row is flagged."""

    @property
    def alpha(self) -> float:
        """The significance level."""

    @property
    def origin(self) -> _OriginName:
        """The origin of the scored rows."""

    def flag_row(self, row: _Row) -> bool:
        """Whether one row's squared distance exceeds the cutoff."""

    def score_row(self, row: _Row) -> tuple[float, float, bool]:
        """One row's ``(squared_distance, p_value, flagged)``."""

    def flag_rows(self, rows: _Rows, threads: Optional[int] = None) -> NDArray[np.bool_]:
        """Flags of every row (squared distance above the cutoff), a boolean array; no p-values are computed."""

    def __repr__(self) -> str:
        """``Scorer(alpha=…, origin='…', cutoff=…)``."""

@final
class Contributions:
    """Per-variable terms of one row's squared distance; they add up to it."""

    @property
    def order(self) -> list[int]:
        """Column indices in the order the terms were taken."""

    @property
    def terms(self) -> NDArray[np.float64]:
        """The term of each variable, in column order (float64 array)."""

    def in_order(self) -> list[tuple[str, float]]:
        """``(variable name, term)`` pairs in the order taken."""

    @property
    def top_variable(self) -> str:
        """The name of the variable taken first."""

    @property
    def total(self) -> float:
        """The squared distance (the sum of the terms)."""

    def __repr__(self) -> str:
        """``Contributions(total=…; name: term, …)``."""

@final
class NormalityReport:
    """Every multivariate normality test of mvdist on one sample, with per-variable skewness, kurtosis and Shapiro–Wilk results."""

    @property
    def rows(self) -> int:
        """Number of rows n."""

    @property
    def columns(self) -> int:
        """Number of variables p."""

    @property
    def alpha(self) -> float:
        """The significance level of ``significant`` and the readings."""

    @property
    def tests(self) -> list[dict[str, Any]]:
        """One dict per test: the results of the tests computed, the reason (``not_computed``) for the others."""

    @property
    def per_variable(self) -> list[dict[str, Any]]:
        """One dict per variable: ``name``, ``skewness``, ``kurtosis``, ``shapiro_wilk_w``, ``shapiro_wilk_p_value``."""

    @property
    def caution(self) -> str:
        """How to read (and not read) the results."""

    def p_value(self, test: _NormalityTest) -> Optional[float]:
        """The p-value of one test by name, or None if it was not computed for this sample."""

    def statistic(self, test: _NormalityTest) -> Optional[float]:
        """The statistic of one test by name, or None if it was not computed."""

    def to_dict(self) -> dict[str, Any]:
        """The whole report as nested dicts and lists (the JSON keys)."""

    def to_json(self) -> str:
        """The whole report as JSON text."""

    def __repr__(self) -> str:
        """A table of the tests: statistic, p-value and significance, or "not computed"."""

def normality_report(
    rows: _Rows,
    alpha: float = 0.05,
    pairwise_row_limit: int = 50000,
    variables: Optional[Sequence[str]] = None,
    threads: Optional[int] = None,
    *,
    hold_out: Optional[float] = None,
) -> NormalityReport:
    """Runs every multivariate normality test that applies to ``rows`` and returns a NormalityReport."""

@final
class Classifier:
    """Assigns rows to the group with the nearest centroid in squared distance, with posterior probabilities and a typicality p-value."""

    @staticmethod
    def fit(
        rows: _Rows,
        labels: Iterable[Hashable],
        rule: _Rule = "linear",
        priors: Optional[_Priors] = None,
        divisor: _Divisor = "unbiased",
    ) -> Classifier:
        """Fits to ``rows`` with ``labels[i]`` the group of row i (any hashable labels)."""

    @property
    def classes(self) -> list[Any]:
        """The distinct labels, in group order."""

    @property
    def rule(self) -> _Rule:
        """``"linear"`` or ``"quadratic"``."""

    @property
    def dim(self) -> int:
        """Number of variables."""

    @property
    def counts(self) -> list[int]:
        """Rows per group."""

    @property
    def priors(self) -> list[float]:
        """Prior probability of each group."""

    @property
    def centroids(self) -> NDArray[np.float64]:
        """Group centroids, groups × variables."""

    def predict(
        self,
        rows: _Rows,
        typicality: bool = True,
        no_group_below: Optional[float] = None,
        threads: Optional[int] = None,
    ) -> Predictions:
        """Predictions for ``rows``."""

    @staticmethod
    def _from_state(state: str, classes: list[Any]) -> Classifier:
        """Rebuilds a classifier from ``__reduce__``'s state (for pickle)."""

    def __reduce__(self) -> tuple[Callable[[str, list[Any]], Classifier], tuple[str, list[Any]]]:
        """Pickle support: rebuilt with ``_from_state`` from the fitted state and the classes."""

    def __repr__(self) -> str:
        """``Classifier(rule='…', classes=[…], dim=…)``."""

@final
class Predictions:
    """Class predictions for a batch of rows."""

    @property
    def labels(self) -> list[Any]:
        """The assigned label of every row (a list)."""

    @property
    def assigned(self) -> NDArray[np.uintp]:
        """The assigned group index of every row (into ``classes``)."""

    @property
    def squared_distances(self) -> NDArray[np.float64]:
        """Squared distance of every row to every group, rows × groups."""

    @property
    def posteriors(self) -> NDArray[np.float64]:
        """Posterior probability of every group for every row."""

    @property
    def typicality(self) -> NDArray[np.float64]:
        """Typicality p-value of each row under its assigned group (NaN where not requested)."""

    @property
    def no_group(self) -> NDArray[np.bool_]:
        """True for rows atypical of every group at ``no_group_below``."""

    def __len__(self) -> int:
        """The number of rows predicted."""

    def __repr__(self) -> str:
        """``Predictions(rows=…, groups=…)``."""

def leave_one_out(
    rows: _Rows,
    labels: Iterable[Hashable],
    rule: _Rule = "linear",
    priors: Optional[_Priors] = None,
    divisor: _Divisor = "unbiased",
) -> _LeaveOneOut:
    """Leave-one-out estimate of the error rate: each row is classified by the classifier fitted without it."""

@final
class MeanComparison:
    """The result of a Hotelling T² test of means: the statistic, its F transform and p-value, and simultaneous and Bonferroni intervals."""

    @property
    def kind(self) -> _MeanTestKind:
        """``"one_sample"``, ``"paired"``, ``"two_sample_pooled"`` or ``"two_sample_unequal_scatter"``."""

    @property
    def t_squared(self) -> float:
        """Hotelling's T²."""

    @property
    def f_statistic(self) -> float:
        """The F statistic, ``t_squared / t_squared_per_f``."""

    @property
    def numerator_dof(self) -> float:
        """Numerator degrees of freedom of the F reference."""

    @property
    def denominator_dof(self) -> float:
        """Denominator degrees of freedom of the F reference."""

    @property
    def p_value(self) -> float:
        """The p-value."""

    @property
    def estimate(self) -> NDArray[np.float64]:
        """The estimated mean (or mean difference), a float64 array."""

    @property
    def hypothesized(self) -> NDArray[np.float64]:
        """The hypothesized value, a float64 array."""

    @property
    def standard_errors(self) -> NDArray[np.float64]:
        """Standard errors of the estimate, per variable."""

    @property
    def sample_sizes(self) -> list[int]:
        """The sample sizes."""

    def rejects(self, alpha: float) -> bool:
        """Whether the test rejects equal means at level ``alpha``."""

    def critical_t_squared(self, alpha: float) -> float:
        """The T² above which the test rejects at level ``alpha``."""

    def intervals(self, alpha: float) -> list[dict[str, Any]]:
        """One dict per variable with the simultaneous and Bonferroni intervals at confidence ``1 - alpha``."""

    def to_dict(self) -> dict[str, Any]:
        """The result as a dict."""

    def __repr__(self) -> str:
        """``MeanComparison(kind='…', t_squared=…, f_statistic=…, dof=(…, …), p_value=…)``."""

@final
class ScatterEquality:
    """Box's M test that several groups share one scatter matrix."""

    @property
    def statistic(self) -> float:
        """Box's M statistic."""

    @property
    def p_value(self) -> float:
        """The p-value (from the F approximation where it applies, else the chi-square one)."""

    @property
    def group_sizes(self) -> list[int]:
        """The group sizes."""

    def chi_square(self) -> _TestStatistic:
        """The chi-square approximation: dict with ``value``, ``p_value``, ``reference``."""

    def f(self) -> Optional[_TestStatistic]:
        """The F approximation as a dict, or None where it does not apply."""

    def __repr__(self) -> str:
        """``ScatterEquality(statistic=…, p_value=…, group_sizes=[…])``."""

def one_sample(rows: _Rows, target: ArrayLike) -> MeanComparison:
    """Hotelling's one-sample T² test that the mean of ``rows`` equals ``target``."""

def two_sample(first: _Rows, second: _Rows, equal_scatter: bool = True) -> MeanComparison:
    """Hotelling's two-sample T² test of equal means, with a pooled scatter or without assuming equal scatter."""

def paired(first: _Rows, second: _Rows) -> MeanComparison:
    """The paired T² test: row i of ``first`` and of ``second`` are two measurements of the same unit."""

def scatter_equality(groups: Sequence[_Rows]) -> ScatterEquality:
    """Box's M test on a list of at least two arrays (one per group, the same columns)."""

@final
class ControlChart:
    """A Hotelling T² control chart: Phase I (establishing the in-control estimate) and Phase II (monitoring new rows against fixed limits)."""

    @staticmethod
    def individuals(
        rows: _Rows,
        alpha: Optional[float] = None,
        average_run_length: Optional[float] = None,
        refit_until_clean: bool = False,
        max_rounds: int = 10,
        diagnosis_depth: int = 1,
        screen_with: Optional[DistanceModel] = None,
        screen_origin: _Origin = "new",
    ) -> ControlChart:
        """A chart of individual observations from the Phase I ``rows``."""

    @staticmethod
    def subgroups(
        rows: _Rows,
        size: int,
        alpha: Optional[float] = None,
        average_run_length: Optional[float] = None,
        refit_until_clean: bool = False,
        max_rounds: int = 10,
        diagnosis_depth: int = 1,
    ) -> ControlChart:
        """A chart of subgroup means: consecutive blocks of ``size`` rows form the subgroups."""

    @property
    def design(self) -> _ChartDesign:
        """``"individuals"`` or ``"subgroups"``."""

    @property
    def dim(self) -> int:
        """Number of variables."""

    @property
    def location(self) -> NDArray[np.float64]:
        """The in-control location, a float64 array."""

    @property
    def in_estimate(self) -> int:
        """Points (rows or subgroups) in the final Phase I estimate."""

    @property
    def alpha(self) -> float:
        """The false-alarm probability per point."""

    def upper_limit(self, origin: _Origin = "new") -> float:
        """The upper control limit of T² for Phase II (``"new"``) or Phase I (``"in_sample"``) points."""

    @property
    def phase_one_points(self) -> ChartPoints:
        """The Phase I points, as ChartPoints."""

    @property
    def rounds(self) -> list[dict[str, Any]]:
        """The Phase I rounds (removal and refit), as dicts."""

    def monitor(self, rows: _Rows) -> ChartPoints:
        """Phase II: charts new rows (for a subgroup chart, whole subgroups of rows) against the Phase I limits."""

    def diagnose(self, point: _Row, origin: _Origin = "new", depth: int = 1) -> dict[str, Any]:
        """Which variables (and relationships between them) drove one point's T², as a dict of rated terms."""

    def to_json(self) -> str:
        """The chart as JSON text (its estimate, limits and Phase I record)."""

    @staticmethod
    def from_json(text: str) -> ControlChart:
        """A chart from ``to_json``'s text; the contents are checked."""

    def __reduce__(self) -> tuple[Callable[[str], ControlChart], tuple[str]]:
        """Pickle support: rebuilt with ``from_json`` from ``to_json``."""

    def __repr__(self) -> str:
        """``ControlChart(design='…', dim=…, in_estimate=…, alpha=…)``."""

@final
class ChartPoints:
    """Charted points: arrays of T², limits, p-values and signals, and the full records as dicts."""

    @property
    def index(self) -> NDArray[np.uintp]:
        """Index of each point (row or subgroup)."""

    @property
    def t_squared(self) -> NDArray[np.float64]:
        """T² of each point."""

    @property
    def upper_limit(self) -> NDArray[np.float64]:
        """The upper control limit each point was compared with."""

    @property
    def p_value(self) -> NDArray[np.float64]:
        """p-value of each point's T²."""

    @property
    def signal(self) -> NDArray[np.bool_]:
        """Whether each point signals (T² above its limit)."""

    def to_list(self) -> list[dict[str, Any]]:
        """Every point as a dict (``index``, ``t_squared``, ``upper_limit``, ``p_value``, ``signal``, ``status``, ``diagnosis``)."""

    def __len__(self) -> int:
        """The number of points."""

    def __repr__(self) -> str:
        """``ChartPoints(points=…, signals=…)``."""

def thread_count(threads: Optional[int] = None) -> int:
    """The number of threads a call with this ``threads`` argument uses: the argument, else MVDIST_THREADS, else one per core."""
