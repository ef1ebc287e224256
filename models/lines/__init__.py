"""Closed-form transmission-line models, vectorized over candidates (a row is a candidate).

Public interface (SI units inside; arrays broadcastable to ``(n,)``):

* :data:`LINE_KINDS`, :class:`LineGeometry`, :class:`LineResult`
* :func:`evaluate_line` (impedance, eps_eff, validity per row), :func:`range_flags`,
  :func:`range_findings`, :func:`method_findings`, :func:`methods_used`
* :func:`solve_width`, :func:`solve_gap` (batch synthesis with a per-row success flag)
* :func:`composite_er` (stacked dielectrics between a trace and its plane: series capacitance)

Sources, validity ranges and measured accuracy are in each model module's docstrings.
"""
from strainline.models.lines.evaluate import (
    METHODS,
    check_kind,
    evaluate_line,
    method_findings,
    methods_used,
    range_findings,
    range_flags,
)
from strainline.models.lines.geometry import (
    GAP_KINDS,
    LINE_KINDS,
    PAIR_KINDS,
    LineGeometry,
    LineResult,
    composite_er,
)
from strainline.models.lines.synthesis import solve_gap, solve_width, target_impedance

__all__ = [
    "LINE_KINDS", "PAIR_KINDS", "GAP_KINDS", "LineGeometry", "LineResult", "composite_er",
    "evaluate_line", "range_flags", "range_findings", "method_findings", "methods_used", "METHODS",
    "check_kind", "solve_width", "solve_gap", "target_impedance",
]
