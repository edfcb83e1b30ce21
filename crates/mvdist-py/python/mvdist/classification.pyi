"""Nearest-centroid classification with posteriors and typicality."""

from __future__ import annotations

from ._native import Classifier, Predictions, leave_one_out

__all__ = ["Classifier", "Predictions", "leave_one_out"]
