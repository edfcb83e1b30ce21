"""Hotelling T² control charts for individuals and subgroup means."""

from ._native import ChartPoints, ControlChart

__all__ = ["ChartPoints", "ControlChart"]
