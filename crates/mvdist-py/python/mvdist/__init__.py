"""Distance-based multivariate statistics.

Fit a location and scatter to reference rows (classical, Ledoit-Wolf, OAS or
the robust minimum covariance determinant), measure each row's squared
generalized (Mahalanobis) distance, turn it into a p-value with the reference
law that fits the row's origin (F for new rows, Beta for rows of the fit,
chi-square when the estimates are taken as known), explain which variables
drove a large distance, check the normality assumption, classify by nearest
centroid, test means (Hotelling T²) and chart a process.

Caution: every p-value, cutoff and flag assumes that the reference rows come
from one multivariate normal population and that the model fits them. A flag
is evidence that a row deserves a closer look, not a verdict; decisions such
as releasing a batch or raising an alarm belong to your local quality
procedures and to qualified people.

Example:
    >>> import numpy as np, mvdist
    >>> rows = np.random.default_rng(0).normal(size=(500, 4))
    >>> model = mvdist.DistanceModel.fit(rows, "ledoit_wolf")
    >>> new = np.array([[0.1, 0.2, -0.1, 0.0], [4.0, -4.0, 4.0, -4.0]])
    >>> model.score(new).flags(0.01).tolist()
    [False, True]
"""

from . import classification, control_chart, mean_tests, normality
from ._native import (
    CAUTION,
    ChartPoints,
    Classifier,
    Contributions,
    ControlChart,
    DistanceModel,
    MeanComparison,
    MvdistError,
    NormalityReport,
    Predictions,
    ScatterEquality,
    Scorer,
    Scores,
    __version__,
    leave_one_out,
    normality_report,
    thread_count,
)

__all__ = [
    "CAUTION",
    "ChartPoints",
    "Classifier",
    "Contributions",
    "ControlChart",
    "DistanceModel",
    "MeanComparison",
    "MvdistError",
    "NormalityReport",
    "Predictions",
    "ScatterEquality",
    "Scorer",
    "Scores",
    "__version__",
    "classification",
    "control_chart",
    "leave_one_out",
    "mean_tests",
    "normality",
    "normality_report",
    "thread_count",
]
