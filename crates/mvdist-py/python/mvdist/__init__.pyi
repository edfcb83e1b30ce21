"""Distance-based multivariate statistics."""

from __future__ import annotations

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
