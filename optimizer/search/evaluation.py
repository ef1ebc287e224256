"""The result of evaluating a batch of candidates, and the objective grid.

:class:`Evaluation` is what :meth:`strainline.optimizer.search.problem.Problem.evaluate` returns;
:func:`quantize` rounds objectives to their resolution so equal designs merge on the front.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def quantize(F: np.ndarray, resolution: float | np.ndarray) -> np.ndarray:
    """Round objectives to a grid of ``resolution`` (per column, broadcast), so that designs
    equal to within the resolution (and the same design reached through different codings or
    summed in a different order) get identical objectives instead of counting as separate front
    points. Non-finite values pass through."""
    F = np.asarray(F, float)
    res = np.asarray(resolution, float)
    return np.where(np.isfinite(F), np.round(F / res) * res, F)


@dataclass
class Evaluation:
    """Objectives and constraints of a batch, plus the figures the front reports."""

    F: np.ndarray                 # (n, n_obj), minimized, edge units (life as -log10 cycles);
    #                               feasible rows rounded to the objective resolution (:func:`quantize`)
    G: np.ndarray                 # (n, n_con), feasible where all <= 0
    peak_strain: np.ndarray       # (n,) fraction, max |strain| over copper faces
    signal_strain: np.ndarray     # (n,) fraction
    total_thickness_m: np.ndarray
    line_row: np.ndarray          # (n,) LineTable row
    cycles: np.ndarray | None = None
    #: Per bend zone (n, Z), in the order of ``study.bends``: peak and signal copper strain
    #: (fractions) and the least copper cycles to failure (only when cycles were asked for).
    zone_peak: np.ndarray | None = None
    zone_signal: np.ndarray | None = None
    zone_cycles: np.ndarray | None = None
    #: Several lines: the row of every line's table, (n, K) (``line_row`` is the first line's).
    line_rows: np.ndarray | None = None

    @property
    def feasible(self) -> np.ndarray:
        return np.all(self.G <= 0, axis=1)


__all__ = ["Evaluation", "quantize"]
