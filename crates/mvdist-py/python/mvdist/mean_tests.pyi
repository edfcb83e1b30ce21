"""Hotelling T² tests of means and Box's M test of equal scatter."""

from __future__ import annotations

from ._native import (
    MeanComparison,
    ScatterEquality,
    one_sample,
    paired,
    scatter_equality,
    two_sample,
)

__all__ = ["MeanComparison", "ScatterEquality", "one_sample", "paired", "scatter_equality", "two_sample"]
