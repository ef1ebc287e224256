"""Why a study found nothing: which constraints ruled out the nearest candidates, and by how much.

``front.json`` ``search.infeasible`` (the report's diagnosis panel reads it):

* ``violations``: per constraint, how many evaluated candidates violate it;
* ``nearest``, ``nearest_choices``, ``message``: the constraints the nearest candidate misses;
* ``nearest_candidates``: the archive's nearest distinct candidates (up to
  :data:`~strainline.optimizer.search.archive.NEAR_K`), best first, each with its total violation
  (the sum of the positive normalized constraint values, the ranking measure), its choices, its
  cross-section and what it misses.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from strainline.models.units import UM
from strainline.optimizer.search.archive import total_violation
from strainline.optimizer.search.candidate import candidate_stackup
from strainline.optimizer.search.frontline import _num
from strainline.optimizer.search.problem import CONSTRAINT_TEXT, Problem


def _misses(problem: Problem, ev: Any, i: int) -> tuple[list[dict[str, Any]], list[str]]:
    """The constraints row ``i`` of the full evaluation ``ev`` violates: records and message parts."""
    names = problem.constraint_names
    G, lim, row = ev.G[i], problem.space.study.limits, int(ev.line_row[i])
    # the strain and life limits hold in every bend zone: report the worst zone's figure
    from strainline.optimizer.inputs.study_spec import required_cycles
    zones = problem.space.study.bends
    need = [required_cycles(problem.space.study, z) for z in zones]
    life = [(ev.zone_cycles[i, k] / c, ev.zone_cycles[i, k], c) for k, c in enumerate(need)
            if c is not None and ev.zone_cycles is not None]
    life_got, life_need = (min(life)[1:] if life else (None, lim.min_cycles))
    reached = {"total_thickness": (lim.total_thickness_um, ev.total_thickness_m[i] / UM, "um", "at most"),
               "peak_strain": (lim.peak_strain_pct, 100 * ev.zone_peak[i].max(), "%", "at most"),
               "signal_strain": (lim.signal_strain_pct, 100 * ev.zone_signal[i].max(), "%", "at most"),
               "loss": (lim.loss_db_per_m, problem.table.loss_db_per_m[row], "dB/m", "at most"),
               "fatigue_life": (life_need, life_got, "cycles", "at least")}
    out, parts = [], []
    for n, g in zip(names, G):
        if g > 0:
            over = "equation outside its range" if n == "equation_range" else f"{100 * g:.1f} % over the limit"
            limit, got, unit, bound = reached.get(n, (None, None, "", ""))
            if _num(limit) is not None and _num(got) is not None:
                over = (f"{got:,.0f} {unit} reached, {bound} {limit:,.0f} {unit}" if unit == "cycles" else
                        f"{got:.4g} {unit} reached, {bound} {limit:.4g} {unit}") + \
                    (" required" if bound == "at least" else " allowed") + f"; {over}"
            out.append({"constraint": n, "text": CONSTRAINT_TEXT.get(n, n), "excess": _num(g),
                        "limit": _num(limit), "achieved": _num(got), "unit": unit, "bound": bound})
            parts.append(f"{CONSTRAINT_TEXT.get(n, n)} ({over})")
    return out, parts


def _layers(problem: Problem, x: np.ndarray) -> tuple[list[dict[str, Any]], float]:
    """The candidate's cross-section, top to bottom (heights from the bottom face), and its total."""
    st = candidate_stackup(problem.space, x)
    t = [lay.thickness_m for lay in st.layers]
    below = [sum(t[i + 1:]) for i in range(len(t))]          # heights from the bottom face
    out = []
    for lay, yb in zip(st.layers, below):
        rec: dict[str, Any] = {"name": lay.name, "kind": lay.kind, "material": lay.material,
                               "thickness_um": lay.thickness_m / UM,
                               "y_bottom_um": yb / UM, "y_top_um": (yb + lay.thickness_m) / UM}
        if lay.kind == "copper":
            rec.update(copper=lay.copper.name if lay.copper is not None else None, coverage=lay.coverage,
                       fill=lay.fill_material if lay.coverage < 1 else None)
        elif lay.kind == "dielectric":
            rec.update(dk=_num(lay.dk), df=_num(lay.df))
        out.append(rec)
    return out, sum(t) / UM


def nearest_candidates(problem: Problem, arch) -> tuple[list[dict[str, Any]], list[list[str]]]:
    """The archive's nearest infeasible candidates, best first, re-evaluated in full (no pruning).

    Returns the records of ``search.infeasible.nearest_candidates`` and each one's message parts.
    """
    X = getattr(arch, "nearest_X", None)
    if X is None or not len(X):
        X = np.empty((0, problem.space.sizes.size), np.int64) if arch.near_X is None else arch.near_X.reshape(1, -1)
    if not len(X):
        return [], []
    ev = problem.evaluate(np.asarray(X, np.int64), want_cycles=True)      # full evaluation (no pruning)
    cv = total_violation(ev.G)
    out, parts = [], []
    for i, x in enumerate(X):
        misses, p = _misses(problem, ev, i)
        layers, total_um = _layers(problem, x)
        out.append({"rank": i + 1, "total_violation": _num(cv[i]), "choices": problem.space.describe(x),
                    "layers": layers, "total_thickness_um": total_um, "misses": misses})
        parts.append(p)
    return out, parts


def explain_infeasible(problem: Problem, arch) -> dict[str, Any]:
    """Which constraints ruled out the nearest candidates, and by how much."""
    names = problem.constraint_names
    out: dict[str, Any] = {"violations": {}, "nearest": [], "message": ""}
    if arch.violated is not None:
        out["violations"] = {n: int(v) for n, v in zip(names, arch.violated)}
    if arch.near_G is not None:
        cands, parts = nearest_candidates(problem, arch)
        out["nearest"] = cands[0]["misses"]
        out["nearest_choices"] = cands[0]["choices"]
        out["nearest_candidates"] = cands
        out["message"] = "no feasible stackup; the nearest candidate misses: " + "; ".join(parts[0])
    else:
        out["message"] = "no candidate was evaluated"
    return out


__all__ = ["explain_infeasible", "nearest_candidates"]
