"""Which copper layer carries which line, when a study holds several lines.

Every line needs its reference planes: a microstrip or coplanar line on an outer copper layer uses
the adjacent copper as its plane; a stripline on an inner layer uses the copper above and below.
A reference plane carries no line, and two lines share a copper layer only where the study allows
it (``lines[i].share_with``). :func:`layer_options` lists every assignment of lines to layers that
obeys these rules, each with the copper coverage of every layer (a layer carrying a line has the
study's ``signal_coverage``; every other layer is a ground plane with one of the
``ground_coverage`` options, mirrored in a symmetric study), so one decision variable
(``line_layers``) runs over them without duplicates.

A line's own table (:class:`~.linetable.LineTable`) is built on a *view* of the space
(:func:`line_view`): the same option tables with that line's layers and pair gaps; a batch's per-slot
option indices are turned into that line's view by :func:`view_slots`.
"""
from __future__ import annotations

import dataclasses
from itertools import product
from typing import Any

import numpy as np

from strainline.optimizer.errors import StudyError
from strainline.optimizer.inputs.study_lines import allowed_layers, may_share
from strainline.optimizer.inputs.study_spec import INNER_KINDS
from strainline.models.units import UM


def references(kind: str, s: int, n_cu: int) -> tuple[int, ...]:
    """0-based copper layers a line of ``kind`` on copper ``s`` uses as its reference planes."""
    if kind in INNER_KINDS:
        return (s - 1, s + 1)
    return (1,) if s == 0 else (n_cu - 2,)


def assignments(study: Any, n_cu: int) -> list[tuple[int, ...]]:
    """Every valid assignment (0-based copper layer per line, in study order).

    Raises
    ------
    StudyError
        No assignment gives every line its planes (too few copper layers, or sharing not allowed).
    """
    lines = study.lines
    choices = []
    for ln in lines:
        opts = allowed_layers(ln.type, n_cu)
        choices.append([ln.layer - 1] if ln.layer is not None else [o - 1 for o in opts])
    out = []
    for combo in product(*choices):
        ok = True
        for a in range(len(lines)):
            refs = references(lines[a].type, combo[a], n_cu)
            for b in range(len(lines)):
                if b == a:
                    continue
                if combo[b] in refs or (combo[b] == combo[a] and not may_share(lines[a], lines[b])):
                    ok = False
                    break
            if not ok:
                break
        if ok:
            out.append(tuple(combo))
    if not out:
        where = f"{study.source}: lines" if getattr(study, "source", "") else "lines"
        raise StudyError(
            f"no assignment of the {len(lines)} lines to the {n_cu} copper layers gives every line its reference "
            "plane(s) without a line on another line's plane; add copper layers, free a fixed lines[i].layer or "
            "let lines share a layer (lines[i].share_with)", where)
    return out


def layer_options(study: Any, n_cu: int, cov_opts: tuple[float, ...]) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """The options of the ``line_layers`` variable.

    Returns
    -------
    sig : ndarray of int, (M, K)
        0-based copper layer of each line.
    cov : ndarray of float, (M, N)
        Copper coverage of every copper layer.
    labels : list of str
        One label per option.
    """
    scov = study.stack.signal_coverage
    sym = study.stack.symmetric
    sig_rows, cov_rows, labels, seen = [], [], [], set()
    for combo in assignments(study, n_cu):
        used = set(combo)
        grounds = [i for i in range(n_cu) if i not in used]
        classes = sorted({min(i, n_cu - 1 - i) if sym else i for i in grounds})
        for vals in product(cov_opts, repeat=len(classes)):
            pick = dict(zip(classes, vals))
            cov = tuple(scov if i in used else pick[min(i, n_cu - 1 - i) if sym else i] for i in range(n_cu))
            key = (combo, cov)
            if key in seen:
                continue
            seen.add(key)
            sig_rows.append(combo)
            cov_rows.append(cov)
            lab = " ".join(f"{ln.name}@L{s + 1}" for ln, s in zip(study.lines, combo))
            if len(cov_opts) > 1:
                lab += " ground " + ",".join(f"L{i + 1}:{cov[i]:g}" for i in grounds)
            labels.append(lab)
    return np.asarray(sig_rows, np.int64), np.asarray(cov_rows, float), labels


def line_view(space: Any, k: int) -> Any:
    """The space as line ``k`` sees it: its layers (``sig_opts``) and pair gaps (``gap_opts``), the
    study with ``line`` = that line; every option table shared (no copy)."""
    study = space.study
    ln = study.lines[k]
    sub = dataclasses.replace(study, line=ln, lines=(ln,))
    if space.line_sig is None:
        sig_opts = tuple(space.sig_opts)
    else:
        sig_opts = tuple(sorted({int(s) for s in space.line_sig[:, k]}))
    gaps = tuple(g * UM for g in ln.gap_um) if ln.gap_um else (float("nan"),)
    # the view is a one-line space: its slots come from the study's space (:func:`view_slots`)
    return dataclasses.replace(space, study=sub, sig_opts=sig_opts, gap_opts=gaps, line_sig=None, line_cov=None)


def view_slots(slots: dict[str, np.ndarray], k: int) -> dict[str, np.ndarray]:
    """Per-slot option indices as line ``k``'s view reads them (its layer, its pair gap)."""
    if "signals" not in slots:
        return slots
    out = dict(slots)
    out["signal"] = slots["signals"][:, k]
    out["gap_opt"] = slots["gap_opts"][:, k]
    return out


__all__ = ["assignments", "layer_options", "line_view", "references", "view_slots"]
