"""Why a study found nothing: which constraints ruled out the nearest candidates, and by how much.

``front.json`` ``search.infeasible`` (the report's diagnosis panel reads it).
"""
from __future__ import annotations

import math
from typing import Any

from strainline.models.units import UM
from strainline.optimizer.search.problem import CONSTRAINT_TEXT, Problem


def _num(x: Any) -> float | None:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def explain_infeasible(problem: Problem, arch) -> dict[str, Any]:
    """Which constraints ruled out the nearest candidates, and by how much."""
    names = problem.constraint_names
    out: dict[str, Any] = {"violations": {}, "nearest": [], "message": ""}
    if arch.violated is not None:
        out["violations"] = {n: int(v) for n, v in zip(names, arch.violated)}
    if arch.near_G is not None:
        parts = []
        ev = problem.evaluate(arch.near_X.reshape(1, -1), want_cycles=True)   # full evaluation (no pruning)
        near_G, lim, row = ev.G[0], problem.space.study.limits, int(ev.line_row[0])
        # the strain and life limits hold in every bend zone: report the worst zone's figure
        from strainline.optimizer.inputs.study_spec import required_cycles
        zones = problem.space.study.bends
        need = [required_cycles(problem.space.study, z) for z in zones]
        life = [(ev.zone_cycles[0, k] / c, ev.zone_cycles[0, k], c) for k, c in enumerate(need)
                if c is not None and ev.zone_cycles is not None]
        life_got, life_need = (min(life)[1:] if life else (None, lim.min_cycles))
        reached = {"total_thickness": (lim.total_thickness_um, ev.total_thickness_m[0] / UM, "um", "at most"),
                   "peak_strain": (lim.peak_strain_pct, 100 * ev.zone_peak[0].max(), "%", "at most"),
                   "signal_strain": (lim.signal_strain_pct, 100 * ev.zone_signal[0].max(), "%", "at most"),
                   "loss": (lim.loss_db_per_m, problem.table.loss_db_per_m[row], "dB/m", "at most"),
                   "fatigue_life": (life_need, life_got, "cycles", "at least")}
        for n, g in zip(names, near_G):
            if g > 0:
                over = "equation outside its range" if n == "equation_range" else f"{100 * g:.1f} % over the limit"
                limit, got, unit, bound = reached.get(n, (None, None, "", ""))
                if _num(limit) is not None and _num(got) is not None:
                    over = (f"{got:,.0f} {unit} reached, {bound} {limit:,.0f} {unit}" if unit == "cycles" else
                            f"{got:.4g} {unit} reached, {bound} {limit:.4g} {unit}") + \
                        (" required" if bound == "at least" else " allowed") + f"; {over}"
                out["nearest"].append({"constraint": n, "text": CONSTRAINT_TEXT.get(n, n), "excess": _num(g),
                                       "limit": _num(limit), "achieved": _num(got), "unit": unit, "bound": bound})
                parts.append(f"{CONSTRAINT_TEXT.get(n, n)} ({over})")
        out["nearest_choices"] = problem.space.describe(arch.near_X)
        out["message"] = "no feasible stackup; the nearest candidate misses: " + "; ".join(parts)
    else:
        out["message"] = "no candidate was evaluated"
    return out


__all__ = ["explain_infeasible"]
