"""Field-solver check of a Pareto front (local processes or a Dask cluster).

:func:`verify_front` takes the ``front.json`` dict that ``strainline solve`` writes, field-solves
every candidate's line cross-section (:mod:`strainline.models.fields`), re-solves its width so the
field-solved impedance hits the study's target, and records the outcome in each candidate's
``line.field_check``:

``z0_ohm`` (single lines) or ``z_diff_ohm`` (pairs, with ``z_odd_ohm``, ``z_even_ohm``,
``z_common_ohm``)
    field-solved impedance at the candidate's closed-form width, ohm;
``eps_eff``
    field-solved effective permittivity there (pairs: odd mode);
``closed_form_error_pct``
    100 (Z_closed_form - Z_field) / Z_field at that width;
``error_estimate_pct``
    the field solver's own error estimate (grid convergence index), percent;
``width_um``
    the refined width for which the field-solved impedance equals the target, um;
``z_refined_ohm``
    the field-solved impedance at the refined width, ohm; ``refined_ok`` True when that is within
    ``tol_pct`` of the target;
``refined_width_in_range``
    True when the refined width lies inside the study's width range;
``error``
    ``None``, or why this one candidate could not be checked (the others still are).

The work runs in local processes (``concurrent.futures.ProcessPoolExecutor``, ``workers``), or on a
Dask cluster when ``dask_address`` names its scheduler (``dask.distributed``, the optional extra
``strainline[cluster]``; imported only then). Every path computes the same numbers.

The figures are estimates for concept work: a quasi-static solution of an idealised rectangular
cross-section. Verify with the fabricator's impedance modelling and test coupons, and with flex
testing (IPC-TM-650 methods); defer to IPC-2223/IPC-6013 and licensed engineering practice.
"""
from __future__ import annotations

import copy
import math
import time
from collections.abc import Callable, Iterable, Mapping
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Any

from strainline.optimizer.errors import InputError
from strainline.optimizer.search.fieldcheck import (  # noqa: F401 - re-exported
    MAX_ESTIMATE_PCT,
    _num,
    _round,
    _study_line,
    check_candidate,
    geom_width,
    layered_section,
    study_nominal_pct,
)

#: Line kinds whose target is the differential impedance.
PAIR_KINDS = ("coupled-microstrip", "coupled-stripline")
GAP_KINDS = ("coupled-microstrip", "coupled-stripline", "coplanar")

CAUTION = (
    "Field-solved figures are quasi-static estimates of an idealised rectangular cross-section for "
    "concept work: verify with the fabricator's impedance modelling and test coupons, and with flex "
    "testing (IPC-TM-650 methods); defer to IPC-2223/IPC-6013 and licensed engineering practice."
)

Progress = Callable[[int, int], None]



def study_target(front: Mapping[str, Any], name: str | None = None) -> tuple[float, float, float]:
    """(target_ohm, width_min_um, width_max_um) from ``front["study"]``.

    Accepts the study's ``line`` block as the study file states it (``target_ohm``,
    ``width_range_um: [min, max]``) or with ``width_min_um`` / ``width_max_um``. Missing values are
    ``nan`` (then the candidate's ``line.target_ohm``, or failing that its closed-form impedance,
    is the target, and the range is open).
    """
    line = _study_line(front.get("study", {}), name)
    target = _num(line.get("target_ohm"))
    wr = line.get("width_range_um")
    if isinstance(wr, (list, tuple)) and len(wr) == 2:
        wmin, wmax = _num(wr[0]), _num(wr[1])
    else:
        wmin, wmax = _num(line.get("width_min_um")), _num(line.get("width_max_um"))
    return target, wmin, wmax


def build_tasks(front: Mapping[str, Any], target_ohm: float | None = None,
                width_range_um: tuple[float, float] | None = None,
                cells_per_feature: float = 3.0, tol_pct: float = 0.05,
                nominal_error_pct: float | None = None) -> list[dict[str, Any]]:
    """One plain-dict task per line of every candidate (picklable; what the workers receive)."""
    tasks = []
    for i, cand in enumerate(front.get("candidates", [])):
        # the first line is the candidate's ``line`` (``lines[0]`` repeats it), the others ``lines[1:]``
        lines = [cand.get("line", {}) or {}] + list((cand.get("lines") or [])[1:])
        for k, line in enumerate(lines):
            name = line.get("name") if isinstance(line, Mapping) else None
            s_target, s_wmin, s_wmax = study_target(front, name)
            nominal = study_nominal_pct(front, name) if nominal_error_pct is None else float(nominal_error_pct)
            if target_ohm is not None:
                s_target = float(target_ohm)
            if width_range_um is not None:
                s_wmin, s_wmax = float(width_range_um[0]), float(width_range_um[1])
            geo = line.get("geometry", {}) or {}
            kind = str(line.get("type", ""))
            pair = kind in PAIR_KINDS
            z_cf = _num((line.get("closed_form") or {}).get("z_ohm"),
                        _num(line.get("z_diff_ohm") if pair else line.get("z0_ohm")))
            target = s_target
            if not math.isfinite(target):
                target = _num(line.get("target_ohm"), z_cf)
            tasks.append({
                "index": i,
                "line_index": k,
                "kind": kind,
                # over a hatch the 2-D check is of the solid-plane row the search decided on (the
                # widening over the hatch is the 3-D solution's, recorded in line.hatch)
                "width_um": _num((line.get("solid_plane") or {}).get("width_um", line.get("width_um"))),
                "gap_um": _num(line.get("gap_um")),
                "height_um": _num(geo.get("height_um")),
                "height_top_um": _num(geo.get("height_top_um")),
                "thickness_um": _num(geo.get("thickness_um")),
                "er": _num(geo.get("er")),
                "er_top": _num(geo.get("er_top")),
                "cover_um": _num(geo.get("cover_um"), 0.0),
                "cover_er": _num(geo.get("cover_er"), 1.0),
                "bottom_ground": geo.get("bottom_ground") is not False,   # None/absent: backed
                "z_closed_form_ohm": z_cf,
                "target_ohm": target,
                "width_min_um": s_wmin,
                "width_max_um": s_wmax,
                "cells_per_feature": float(cells_per_feature),
                "tol_pct": float(tol_pct),
                "nominal_error_pct": nominal,
                "section": layered_section(cand, kind, line),
            })
    return tasks


def _run_local(tasks: list[dict], workers: int, progress: Progress | None) -> Iterable[dict]:
    total = len(tasks)
    if workers <= 1 or total <= 1:
        for n, task in enumerate(tasks, 1):
            r = check_candidate(task)
            if progress:
                progress(n, total)
            yield r
        return
    with ProcessPoolExecutor(max_workers=workers) as pool:
        futures = [pool.submit(check_candidate, t) for t in tasks]
        for n, fut in enumerate(as_completed(futures), 1):
            if progress:
                progress(n, total)
            yield fut.result()


def _run_dask(tasks: list[dict], address: str, progress: Progress | None,
              timeout_s: float) -> Iterable[dict]:
    from strainline.optimizer.search.cluster import connect

    client = connect(address, timeout_s)
    from dask.distributed import as_completed as dask_as_completed
    try:
        futures = client.map(check_candidate, tasks, pure=False)
        total = len(tasks)
        for n, fut in enumerate(dask_as_completed(futures), 1):
            if progress:
                progress(n, total)
            yield fut.result()
    finally:
        client.close()


def verify_front(front: dict, workers: int = 1, dask_address: str | None = None,
                 progress: Progress | None = None, *, target_ohm: float | None = None,
                 width_range_um: tuple[float, float] | None = None,
                 cells_per_feature: float = 3.0, tol_pct: float = 0.05,
                 dask_timeout_s: float = 10.0, keep_unverified: bool = False,
                 nominal_error_pct: float | None = None) -> dict:
    """Field-check every candidate of a front and refine its width to the target.

    Parameters
    ----------
    front : dict
        The ``front.json`` content (``study``, ``candidates`` with ``line`` and ``line.geometry``
        in micrometres). Not modified.
    workers : int
        Local worker processes (1 = in this process). Ignored with ``dask_address``.
    dask_address : str, optional
        Scheduler address of a Dask cluster (``tcp://host:port``).
    progress : callable, optional
        ``progress(done, total)`` after each candidate.
    target_ohm : float, optional
        Target impedance, ohm (default: ``front["study"]["line"]["target_ohm"]``; pairs:
        differential).
    width_range_um : (float, float), optional
        Manufacturable width range, um (default: the study's ``width_range_um``).
    cells_per_feature : float
        Field-solver base mesh density (see :func:`strainline.models.fields.field_solve`).
    tol_pct : float
        How close the refined width's field-solved impedance must come to the target, percent.
    dask_timeout_s : float
        How long to wait for the Dask scheduler, s.
    keep_unverified : bool
        Keep candidates that fail the check on the front (marked); by default they are removed
        and listed in ``field_verification.removed``.
    nominal_error_pct : float, optional
        The nominal impedance window, percent (default: the study's, see :func:`study_nominal_pct`).

    Returns
    -------
    dict
        A copy of ``front`` with ``line.field_check`` in every candidate (``passed``, ``reasons``)
        and a top-level ``field_verification`` summary (backend, workers, seconds, counts,
        ``failed_candidates``, ``removed``, ``message``, caution).

    Notes
    -----
    A candidate fails when its field impedance at the reported width is outside the nominal
    window, when no width reaches the target with the field solver, when the field-refined width
    leaves the study's width range, or when its cross-section cannot be solved. The field solve is
    of the candidate's own layered stack (every film, adhesive and cover its own band).

    Raises
    ------
    InputError
        ``workers`` below 1; Dask not installed or its scheduler unreachable.
    """
    if not isinstance(workers, int) or workers < 1:
        raise InputError(f"{workers!r} is not a worker count (an integer >= 1)", "--workers")
    out = copy.deepcopy(front)
    tasks = build_tasks(out, target_ohm, width_range_um, cells_per_feature, tol_pct, nominal_error_pct)
    # candidates that share a line cross-section (same line in different stacks) are solved once
    unique: dict[tuple, dict] = {}
    members: dict[tuple[int, int], list[tuple[int, int]]] = {}
    for task in tasks:
        key = tuple((k, repr(v)) for k, v in sorted(task.items()) if k not in ("index", "line_index"))
        first = unique.setdefault(key, task)
        members.setdefault((first["index"], first["line_index"]), []).append((task["index"], task["line_index"]))
    tasks = list(unique.values())
    t0 = time.perf_counter()
    if dask_address:
        backend = "dask"
        results = _run_dask(tasks, dask_address, progress, dask_timeout_s)
    else:
        backend = "processes" if workers > 1 and len(tasks) > 1 else "serial"
        results = _run_local(tasks, workers, progress)
    checks: dict[tuple[int, int], dict] = {}
    for r in results:
        first = (r.pop("index"), r.pop("line_index", 0))
        for key in members[first]:
            checks[key] = copy.deepcopy(r)
    seconds = time.perf_counter() - t0
    cands = out.get("candidates", [])
    for i, cand in enumerate(cands):
        cand.setdefault("line", {})["field_check"] = checks[(i, 0)]
        if cand.get("lines"):
            cand["lines"][0] = cand["line"]
            for k in range(1, len(cand["lines"])):
                cand["lines"][k]["field_check"] = checks[(i, k)]
    fc = [c for c in checks.values()]

    def passed(c: Mapping[str, Any]) -> bool:       # a candidate holds when every line holds
        return all(ln["field_check"]["passed"] for ln in [c["line"]] + list((c.get("lines") or [])[1:]))

    def reasons(c: Mapping[str, Any]) -> list[str]:
        many = len(c.get("lines") or []) > 1
        return [(f"line {ln.get('name')}: " if many else "") + r
                for ln in [c["line"]] + list((c.get("lines") or [])[1:]) for r in ln["field_check"]["reasons"]]

    failed = [c for c in cands if not passed(c)]
    removed = []
    if failed and not keep_unverified:
        removed = [{"id": c.get("id"), "reasons": reasons(c)} for c in failed]
        out["candidates"] = [c for c in cands if passed(c)]
    n_all = len(cands)
    if not failed:
        message = f"all {n_all} candidates passed field verification"
    elif removed:
        message = f"{len(failed)} of {n_all} candidates failed field verification and were removed"
    else:
        message = f"{len(failed)} of {n_all} candidates failed field verification (kept, marked: --keep-unverified)"
    out["field_verification"] = {
        "method": "2-D quasi-static finite elements, Richardson-extrapolated over 3 nested meshes",
        "backend": backend,
        "workers": (None if dask_address else workers),
        "seconds": round(seconds, 3),
        "candidates": len(fc),
        "distinct_cross_sections": len(tasks),
        "failed": sum(1 for c in fc if c["error"]),
        "refined_out_of_range": sum(1 for c in fc if not c["error"] and not c["refined_width_in_range"]),
        "tolerance_pct": tol_pct,
        "nominal_window_pct": tasks[0]["nominal_error_pct"] if tasks else nominal_error_pct,
        "cross_section": "each candidate's own layered stack (every film, adhesive and cover its own band)",
        "failed_candidates": len(failed),
        "kept_unverified": bool(failed and keep_unverified),
        "removed": removed,
        "message": message,
        "caution": CAUTION,
    }
    if removed and "search" in out and isinstance(out["search"], dict):
        out["search"]["front_size_before_verification"] = n_all
        out["search"]["front_size"] = len(out["candidates"])
    return out


# `strainline line --field-solve` lives in linefield.py; re-exported for older imports
from strainline.optimizer.search.linefield import field_for_line, field_text  # noqa: F401
