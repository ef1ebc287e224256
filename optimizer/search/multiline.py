"""Several lines in one evaluation: each line's own table, constraints held by every line.

A study with several lines (``lines:``) gets one *line problem* per line
(:attr:`~.problem.Problem.lines`): a one-line :class:`~.problem.Problem` on the line's view of the
space (:func:`.linelayers.line_view`) with its own :class:`~.linetable.LineTable`, fast per-row
constraint columns, impedance yield and hatch widths. The study's problem gathers, per candidate,
one row of every line's table (:func:`line_rows`) and folds the lines together:

* each line constraint column (``impedance``, ``width_range``, ``gap_space``, ``equation_range``,
  ``yield``, ``hatch_width``, ``loss``) is the worst line's, so it holds only when every line holds;
* the loss objective is the worst line's loss per metre, or the one named by ``loss_line``;
* the yield objective is the worst line's shortfall;
* the signal strain is the largest over the copper layers that carry a line.

Everything is vectorized over the candidates; the loop runs over the few lines.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from strainline.optimizer.search.linelayers import view_slots


def line_problems(space: Any, make: Any) -> list[Any]:
    """One line problem per line of the study: ``make(view)`` on each line's view of the space."""
    from strainline.optimizer.search.linelayers import line_view

    return [make(line_view(space, k)) for k in range(len(space.study.lines))]


def line_rows(pb: Any, slots: dict[str, np.ndarray]) -> np.ndarray:
    """Row of every line's table per candidate, (n, K)."""
    return np.stack([sub.table.index(view_slots(slots, k)) for k, sub in enumerate(pb.lines)], axis=1)


def line_ok(pb: Any, rows: np.ndarray) -> np.ndarray:
    """True where every line meets every line constraint, (n,)."""
    ok = None
    for k, sub in enumerate(pb.lines):
        v = sub.line_ok(rows[:, k])
        ok = v if ok is None else ok & v
    return ok


def line_constraints(pb: Any, rows: np.ndarray, slots: dict[str, np.ndarray] | None = None) -> dict[str, np.ndarray]:
    """Every line constraint column, the worst line's (relative excess, ``<= 0`` holds)."""
    out: dict[str, np.ndarray] = {}
    for k, sub in enumerate(pb.lines):
        r = rows[:, k]
        cols = dict(sub._line_constraints(r))
        if "hatch_width" in pb.constraint_names and slots is not None:
            from strainline.optimizer.search.hatchsearch import hatch_width_constraint
            cols["hatch_width"] = hatch_width_constraint(sub, view_slots(slots, k), r)
        lim = pb.space.study.limits.loss_db_per_m
        if lim is not None:
            cols["loss"] = sub.table.loss_db_per_m[r] / lim - 1.0
        for c, v in cols.items():
            out[c] = v if c not in out else np.maximum(out[c], v)
    return out


def loss_column(pb: Any, rows: np.ndarray, quantized: bool) -> np.ndarray:
    """The loss objective, dB/m: the named line's (``loss_line``) or the worst line's."""
    name = pb.space.study.loss_line
    vals = []
    for k, sub in enumerate(pb.lines):
        if name is not None and sub.space.study.line.name != name:
            continue
        r = rows[:, k]
        vals.append(sub.fast["loss_q"].take(r, mode="clip") if quantized and sub.fast is not None
                    else sub.table.loss_db_per_m[r])
    return np.max(np.stack(vals, axis=1), axis=1)


def yield_shortfall(pb: Any, rows: np.ndarray) -> np.ndarray:
    """The yield objective: percent of builds outside the band, of the worst line."""
    vals = [100.0 * (1.0 - sub.row_yield().yield_frac[rows[:, k]]) for k, sub in enumerate(pb.lines)]
    return np.max(np.stack(vals, axis=1), axis=1)


def signal_peak(cu_peak: np.ndarray, slots: dict[str, np.ndarray]) -> np.ndarray:
    """Largest peak strain over the copper layers that carry a line, (n,)."""
    return np.take_along_axis(cu_peak, slots["signals"], axis=1).max(axis=1)


def names(pbs: list[Any]) -> list[str]:
    """The line constraint columns of several line problems, in the order of the first that has each."""
    out: list[str] = []
    for sub in pbs:
        for c in sub.constraint_names:
            if c not in out:
                out.append(c)
    order = ["impedance", "width_range", "gap_space", "equation_range"]
    return [c for c in order if c in out] + [c for c in out if c not in order]


__all__ = ["line_constraints", "line_ok", "line_problems", "line_rows", "loss_column", "names", "signal_peak", "yield_shortfall"]
