"""Hotelling T² control charts for individuals and subgroup means."""

from __future__ import annotations

from ._native import ChartPoints, ControlChart

__all__ = ["ChartPoints", "ControlChart"]
