"""Checks of the multivariate-normality assumption behind every threshold."""

from ._native import NormalityReport, normality_report

__all__ = ["NormalityReport", "normality_report"]
