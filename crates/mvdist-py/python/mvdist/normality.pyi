"""Checks of the multivariate-normality assumption behind every threshold."""

from __future__ import annotations

from ._native import NormalityReport, normality_report

__all__ = ["NormalityReport", "normality_report"]
