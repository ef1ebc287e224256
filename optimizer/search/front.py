"""The Pareto front: candidates with every figure needed to recompute them, outputs, hypervolume.

:func:`build_front` turns a search result into the ``front.json`` object (see README.md, strainline solve);
:func:`write_outputs` writes ``front.json`` and ``front.csv`` atomically (the report and handoff
writers hook in there); :func:`front_dataframe` is the flat pandas view; :func:`format_table` the
short text table ``strainline solve`` prints.
"""
from __future__ import annotations

import math
from typing import Any

import numpy as np

from strainline.models.units import UM
from strainline.optimizer.search import multiline as _ml
from strainline.optimizer.search.frontline import _finding, _num, line_record
from strainline.optimizer.search.candidate import candidate_stackup
from strainline.optimizer.search.infeasible import explain_infeasible
from strainline.optimizer.search.linelayers import view_slots
from strainline.optimizer.search.problem import Problem
from strainline.optimizer.search.archive import _dominated_by, hypervolume
from strainline.optimizer.search.engine import SearchResult
from strainline.optimizer.search.constraints import allow_uncovered, elongation_fraction
from strainline.optimizer.search.leaves import label as leaf_label
from strainline.optimizer.search.space import Space

CAUTION = (
    "Estimates for concept work only: verify with the fabricator's impedance modelling and coupons and "
    "with flex testing (IPC-TM-650 methods); defer to IPC-2223/IPC-6013 and licensed engineering practice."
)
#: Reference point of the hypervolume in normalized objective space (ideal = 0, nadir = 1 on every axis).
HV_REFERENCE = 1.1


# one candidate -> Stackup (:mod:`.candidate`, re-exported here)
def copper_weight(space: Space, x: np.ndarray, i: int) -> str:
    """Foil weight key of copper layer ``i`` of one candidate."""
    s = space.slots(np.asarray(x, np.int64).reshape(1, -1))
    return space.cu_opts[int(s["cu"][0, i])][0]


# ------------------------------------------------------------------------------------------------
def build_front(problem: Problem, result: SearchResult, catalog: Any, seed: int,
                study_raw: dict[str, Any] | None = None) -> dict[str, Any]:
    """The ``front.json`` object of a finished search.

    Parameters
    ----------
    problem : Problem
    result : SearchResult
    catalog : Catalog
    seed : int
    study_raw : dict, optional
        The study as given (defaults to the study's own ``raw``).
    """
    from strainline.optimizer import __version__
    from strainline.optimizer.search.zones import zone_findings, zone_objects

    sp = problem.space
    study = sp.study
    arch = result.archive
    X = arch.X
    order = np.lexsort(arch.F.T[::-1]) if len(X) else np.array([], np.int64)
    X, F = X[order], arch.F[order]
    ev = problem.evaluate(X, want_cycles=True) if len(X) else None
    keys = problem.objective_keys()
    tb = problem.table
    if len(X) and study.stack.ground_hatch:
        _prefetch_hatches(problem, X, ev)     # the candidates' 3-D hatch solves, on every core
    candidates = []
    for j in range(len(X)):
        x = X[j]
        cid = f"C{j + 1:03d}"
        st = candidate_stackup(sp, x, name=f"{study.name} {cid}")
        bends, reports, pick = zone_objects(study, st, ev, j, catalog, elongation_fraction(study), allow_uncovered)
        rep = reports[pick]     # the zone shown as ``bend`` (named by strain_bend, else the worst)
        slots = sp.slots(x.reshape(1, -1))
        # the search compares objectives on the resolution grid; the front reports exact values
        want_yield = "yield" in problem.objectives or study.limits.min_yield_pct is not None
        findings = zone_findings(reports, [z.name for z in study.bends], pick)
        lines = []
        if problem.lines:
            rows = ev.line_rows[j:j + 1]
            for k, sub in enumerate(problem.lines):
                rec, notes = line_record(sub, view_slots(slots, k), int(rows[0, k]), want_yield)
                lines.append(rec)
                findings += notes
            loss = float(_ml.loss_column(problem, rows, False)[0])
            yshort = float(_ml.yield_shortfall(problem, rows)[0]) if want_yield else math.nan
        else:
            row = int(ev.line_row[j])
            rec, notes = line_record(problem, slots, row, want_yield)
            lines.append(rec)
            findings += notes
            loss = float(tb.loss_db_per_m[row])
            yshort = 100.0 * (1.0 - problem.row_yield().yield_frac[row]) if want_yield else math.nan
        exact = {"peak_strain": ev.peak_strain[j] * 100.0, "signal_strain": ev.signal_strain[j] * 100.0,
                 "thickness": ev.total_thickness_m[j] / UM, "loss": loss, "life": ev.cycles[j], "yield": yshort}
        objectives = {key: _num(exact[o]) for o, key in zip(problem.objectives, keys)}
        line = lines[0]
        if study.bend.region == "unbonded":
            findings.append(_finding(
                "unbonded-model", "info",
                f"unbonded bend region built as leaves {sp.describe(x).get('leaves', leaf_label(sp.leaf_opts[0]))}"
                " (copper layers per bonded leaf): the bond ply between leaves is left out, every copper keeps "
                "its core and each leaf face bordering air carries the cover; each leaf bends about its own "
                "axis and needs its own length allowance",
                "transformed section per leaf (bending reference notes section 1.7)"))
        layers_out = []
        for lay in rep["layers"]:
            layers_out.append(dict(lay))
        bend = dict(bends[pick])
        candidates.append({
            "id": cid,
            "objectives": objectives,
            "line": line,
            "lines": lines,
            "bend": bend,
            "bends": bends,
            "layers": layers_out,
            "choices": sp.describe(x),
            "findings": findings,
        })
    # hypervolume in normalized space
    search: dict[str, Any] = {
        "method": result.method,
        "evaluated": int(result.evaluated),
        "space_size": int(result.space_size),
        "feasible": int(arch.feasible),
        "front_size": len(candidates),
        "stopped": result.stopped,
        "seconds": round(result.seconds, 3),
        "objectives": keys,
        "constraints": list(problem.constraint_names),
        **{k: v for k, v in getattr(result, "info", {}).items()},   # rate, workers, generations ... (engine)
    }
    if len(F):
        ideal, nadir = F.min(axis=0), F.max(axis=0)
        hv = hypervolume(F, ideal, nadir, HV_REFERENCE)
        ref = nadir + (HV_REFERENCE - 1.0) * np.where(nadir > ideal, nadir - ideal, 1.0)
        search["hypervolume"] = _num(hv)
        search["reference_point"] = {
            k: (_num(10 ** (-r)) if o == "life" else _num(r)) for k, o, r in zip(keys, problem.objectives, ref)}
        search["normalization"] = {
            "ideal": {k: (_num(10 ** (-v)) if o == "life" else _num(v)) for k, o, v in zip(keys, problem.objectives, ideal)},
            "nadir": {k: (_num(10 ** (-v)) if o == "life" else _num(v)) for k, o, v in zip(keys, problem.objectives, nadir)},
            "reference": f"{HV_REFERENCE} on every normalized axis (ideal 0, nadir 1); life as -log10(cycles)",
        }
    else:
        search["hypervolume"] = 0.0
        search["reference_point"] = None
        search["infeasible"] = explain_infeasible(problem, arch)
    # a uniform sample of the feasible points the search saw, less the front: the report draws
    # them faintly behind the front (objectives on the search's resolution grid)
    dominated: list[dict[str, Any]] = []
    sample = getattr(arch, "sample_F", np.empty((0, len(keys))))
    if len(F) and len(sample):
        behind = sample[_dominated_by(sample, F) & ~_on_front(sample, F)]
        for r in behind:
            dominated.append({"objectives": {
                k: (_num(10 ** (-v)) if o == "life" else _num(v)) for k, o, v in zip(keys, problem.objectives, r)}})
    search["dominated_sample"] = len(dominated)
    return {
        "study": study_raw if study_raw is not None else dict(study.raw),
        "version": __version__,
        "seed": seed,
        "search": search,
        "candidates": candidates,
        "dominated": dominated,
        "caution": CAUTION,
    }


def _prefetch_hatches(problem: Problem, X: np.ndarray, ev: Any) -> None:
    """Solve the front's distinct 3-D hatch cross-sections in parallel into the field cache."""
    from strainline.optimizer.search.fieldcache import FieldCache
    from strainline.optimizer.search.frontline import hatch_task_of
    from strainline.optimizer.search.hatchfront import prefetch_hatch

    slots = problem.space.slots(X)
    tasks = []
    for j in range(len(X)):
        one = {k: v[j:j + 1] for k, v in slots.items()}
        parts = ([(sub, view_slots(one, k), int(ev.line_rows[j, k])) for k, sub in enumerate(problem.lines)]
                 if problem.lines else [(problem, one, int(ev.line_row[j]))])
        for pb, sl, row in parts:
            t = hatch_task_of(pb, sl, row)
            if t is not None:
                tasks.append(t)
    cache = FieldCache()
    try:
        prefetch_hatch(tasks, cache)
    finally:
        cache.close()


def _on_front(A: np.ndarray, F: np.ndarray) -> np.ndarray:
    """Rows of A equal to some row of F."""
    return (A[:, None, :] == F[None, :, :]).all(axis=2).any(axis=1)


__all__ = ["build_front", "candidate_stackup", "CAUTION"]
