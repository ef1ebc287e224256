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

from strainline.models.units import UM
from strainline.optimizer.errors import InputError

#: Line kinds whose target is the differential impedance.
PAIR_KINDS = ("coupled-microstrip", "coupled-stripline")
GAP_KINDS = ("coupled-microstrip", "coupled-stripline", "coplanar")

CAUTION = (
    "Field-solved figures are quasi-static estimates of an idealised rectangular cross-section for "
    "concept work: verify with the fabricator's impedance modelling and test coupons, and with flex "
    "testing (IPC-TM-650 methods); defer to IPC-2223/IPC-6013 and licensed engineering practice."
)

Progress = Callable[[int, int], None]

#: The base mesh is refined (at most twice) while the solver's error estimate exceeds this, percent.
MAX_ESTIMATE_PCT = 0.5


def _num(value: Any, default: float = math.nan) -> float:
    if value is None:
        return default
    try:
        return float(value)
    except (TypeError, ValueError):
        return default


def _round(x: float, digits: int = 6) -> float | None:
    if x is None or not math.isfinite(x):
        return None
    return float(f"{x:.{digits}g}")


def _study_line(study: Mapping[str, Any]) -> Mapping[str, Any]:
    line = study.get("line") if isinstance(study, Mapping) else None
    return line if isinstance(line, Mapping) else {}


def study_target(front: Mapping[str, Any]) -> tuple[float, float, float]:
    """(target_ohm, width_min_um, width_max_um) from ``front["study"]``.

    Accepts the study's ``line`` block as the study file states it (``target_ohm``,
    ``width_range_um: [min, max]``) or with ``width_min_um`` / ``width_max_um``. Missing values are
    ``nan`` (then the candidate's ``line.target_ohm``, or failing that its closed-form impedance,
    is the target, and the range is open).
    """
    line = _study_line(front.get("study", {}))
    target = _num(line.get("target_ohm"))
    wr = line.get("width_range_um")
    if isinstance(wr, (list, tuple)) and len(wr) == 2:
        wmin, wmax = _num(wr[0]), _num(wr[1])
    else:
        wmin, wmax = _num(line.get("width_min_um")), _num(line.get("width_max_um"))
    return target, wmin, wmax


def build_tasks(front: Mapping[str, Any], target_ohm: float | None = None,
                width_range_um: tuple[float, float] | None = None,
                cells_per_feature: float = 3.0, tol_pct: float = 0.05) -> list[dict[str, Any]]:
    """One plain-dict task per candidate (picklable; what the workers receive)."""
    s_target, s_wmin, s_wmax = study_target(front)
    if target_ohm is not None:
        s_target = float(target_ohm)
    if width_range_um is not None:
        s_wmin, s_wmax = float(width_range_um[0]), float(width_range_um[1])
    tasks = []
    for i, cand in enumerate(front.get("candidates", [])):
        line = cand.get("line", {}) or {}
        geo = line.get("geometry", {}) or {}
        kind = str(line.get("type", ""))
        pair = kind in PAIR_KINDS
        z_cf = _num(line.get("z_diff_ohm") if pair else line.get("z0_ohm"))
        target = s_target
        if not math.isfinite(target):
            target = _num(line.get("target_ohm"), z_cf)
        tasks.append({
            "index": i,
            "kind": kind,
            "width_um": _num(line.get("width_um")),
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
        })
    return tasks


def _geometry(task: Mapping[str, Any]) -> Any:
    try:
        from strainline.models.lines import LineGeometry
    except ImportError:  # pragma: no cover - the closed forms ship with the package
        from strainline.models.lines.geometry import LineGeometry
    return LineGeometry(
        width_m=task["width_um"] * UM,
        gap_m=task["gap_um"] * UM,
        height_m=task["height_um"] * UM,
        height_top_m=task["height_top_um"] * UM,
        thickness_m=task["thickness_um"] * UM,
        er=task["er"],
        er_top=task["er_top"],
        cover_m=task["cover_um"] * UM,
        cover_er=task["cover_er"],
        bottom_ground=task["bottom_ground"],
    )


def check_candidate(task: Mapping[str, Any]) -> dict[str, Any]:
    """Field-check one candidate (runs in a worker). Never raises for a bad cross-section.

    Parameters
    ----------
    task : dict
        One entry of :func:`build_tasks` (lengths in um, impedances in ohm).

    Returns
    -------
    dict
        The ``field_check`` record described in the module notes, plus ``index`` and ``seconds``.
    """
    from strainline.models.fields import field_solve, field_solve_width

    t0 = time.perf_counter()
    kind = task["kind"]
    pair = kind in PAIR_KINDS
    key = "z_diff_ohm" if pair else "z0_ohm"
    out: dict[str, Any] = {"index": task["index"], key: None, "eps_eff": None, "width_um": None,
                           "closed_form_error_pct": None, "error_estimate_pct": None,
                           "z_refined_ohm": None, "refined_ok": False,
                           "refined_width_in_range": False, "target_ohm": _round(task["target_ohm"]),
                           "error": None}
    try:
        geom = _geometry(task)
        cpf = task["cells_per_feature"]
        res = field_solve(kind, geom, cells_per_feature=cpf, isolated_line=False,
                          max_estimate_pct=MAX_ESTIMATE_PCT)
        cpf = res.cells_per_feature
        z_field = res.target_ohm
        out[key] = _round(z_field)
        out["eps_eff"] = _round(res.eps_eff)
        if pair:
            out["z_odd_ohm"] = _round(res.z_odd_ohm)
            out["z_even_ohm"] = _round(res.z_even_ohm)
            out["z_common_ohm"] = _round(res.z_common_ohm)
            out["eps_eff_even"] = _round(res.eps_eff_even)
        z_cf = task["z_closed_form_ohm"]
        out["closed_form_error_pct"] = _round(100.0 * (z_cf - z_field) / z_field, 4)
        target = task["target_ohm"]
        wmin, wmax = task["width_min_um"], task["width_max_um"]
        if not (math.isfinite(target) and target > 0):
            raise ValueError("no target impedance for the width refinement")
        ws = field_solve_width(kind, target, geom, geom_width(task), start=res,
                               cells_per_feature=cpf, tol_pct=task["tol_pct"],
                               width_min_m=(wmin * UM / 4 if math.isfinite(wmin) else 0.0),
                               width_max_m=(wmax * UM * 4 if math.isfinite(wmax) else math.inf))
        out["width_um"] = _round(ws.width_m / UM)
        out["z_refined_ohm"] = _round(ws.result.target_ohm)
        z_err = abs(ws.result.target_ohm / target - 1.0) * 100.0
        out["refined_ok"] = bool(math.isfinite(ws.width_m) and z_err <= task["tol_pct"])
        w_um = ws.width_m / UM
        lo = wmin if math.isfinite(wmin) else -math.inf
        hi = wmax if math.isfinite(wmax) else math.inf
        out["refined_width_in_range"] = bool(out["refined_ok"] and lo <= w_um <= hi)
        out["error_estimate_pct"] = _round(max(res.error_estimate_pct,
                                               ws.result.error_estimate_pct), 3)
    except ValueError as exc:  # a non-physical or unsupported cross-section: note it, go on
        out["error"] = str(exc)
    out["seconds"] = round(time.perf_counter() - t0, 3)
    return out


def geom_width(task: Mapping[str, Any]) -> float:
    """Start width of the refinement, m (the candidate's closed-form width)."""
    return task["width_um"] * UM


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
    try:
        from dask.distributed import Client
        from dask.distributed import as_completed as dask_as_completed
    except ImportError as exc:
        raise InputError("a Dask cluster needs the optional extra: pip install 'strainline[cluster]'",
                         "--dask") from exc
    try:
        client = Client(address, timeout=f"{timeout_s}s")
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"cannot reach the Dask scheduler at {address!r} ({exc})", "--dask") from exc
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
                 dask_timeout_s: float = 10.0) -> dict:
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

    Returns
    -------
    dict
        A copy of ``front`` with ``line.field_check`` in every candidate and a top-level
        ``field_verification`` summary (backend, workers, seconds, counts, caution).

    Raises
    ------
    InputError
        ``workers`` below 1; Dask not installed or its scheduler unreachable.
    """
    if not isinstance(workers, int) or workers < 1:
        raise InputError(f"{workers!r} is not a worker count (an integer >= 1)", "--workers")
    out = copy.deepcopy(front)
    tasks = build_tasks(out, target_ohm, width_range_um, cells_per_feature, tol_pct)
    # candidates that share a line cross-section (same line in different stacks) are solved once
    unique: dict[tuple, dict] = {}
    members: dict[int, list[int]] = {}
    for task in tasks:
        key = tuple((k, repr(v)) for k, v in sorted(task.items()) if k != "index")
        first = unique.setdefault(key, task)
        members.setdefault(first["index"], []).append(task["index"])
    tasks = list(unique.values())
    t0 = time.perf_counter()
    if dask_address:
        backend = "dask"
        results = _run_dask(tasks, dask_address, progress, dask_timeout_s)
    else:
        backend = "processes" if workers > 1 and len(tasks) > 1 else "serial"
        results = _run_local(tasks, workers, progress)
    checks: dict[int, dict] = {}
    for r in results:
        first = r.pop("index")
        for i in members[first]:
            checks[i] = copy.deepcopy(r)
    seconds = time.perf_counter() - t0
    for i, cand in enumerate(out.get("candidates", [])):
        cand.setdefault("line", {})["field_check"] = checks[i]
    fc = [c for c in checks.values()]
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
        "caution": CAUTION,
    }
    return out


# --------------------------------------------------------------------------------------------
# `strainline line --field-solve`
# --------------------------------------------------------------------------------------------

def field_for_line(kind: str, geom: Any, target_ohm: float | None,
                   closed_form_ohm: float | None = None,
                   width_range_um: tuple[float, float] = (10.0, 2000.0)) -> dict[str, Any]:
    """The ``field`` object of ``strainline line --field-solve --json``.

    Parameters
    ----------
    kind : str
        Line type.
    geom : LineGeometry
        One cross-section (SI) with the closed-form width in ``width_m``.
    target_ohm : float, optional
        When given, the width is re-solved with the field solver (secant in log-width from the
        closed-form width) and the figures refer to that width.
    closed_form_ohm : float, optional
        The closed-form impedance at the closed-form width (Z0; pairs: Z_diff), ohm, for
        ``closed_form_error_pct``.
    width_range_um : (float, float)
        Widths the field width solve may return, um.

    Returns
    -------
    dict
        ``z0_ohm``, ``eps_eff``, pairs also ``z_odd_ohm``, ``z_even_ohm``, ``z_diff_ohm``,
        ``z_common_ohm``, ``eps_eff_even``; ``error_estimate_pct``; ``width_um`` the figures refer
        to and ``width_solved``; ``closed_form_error_pct`` at the closed-form width; ``method``.

    Raises
    ------
    InputError
        The field width solve found no width in ``width_range_um`` for the target.
    """
    from dataclasses import replace

    from strainline.models.fields import field_solve, field_solve_width

    pair = kind in PAIR_KINDS
    try:
        at_cf = field_solve(kind, geom, max_estimate_pct=MAX_ESTIMATE_PCT)
    except ValueError as exc:
        raise InputError(f"the field solver cannot take this cross-section: {exc}", kind) from exc
    cpf = at_cf.cells_per_feature
    res, width_m, estimate = at_cf, float(geom.width_m), at_cf.error_estimate_pct
    if target_ohm is not None:
        ws = field_solve_width(kind, float(target_ohm), geom, width_m, start=at_cf,
                               cells_per_feature=cpf, width_min_m=width_range_um[0] * UM,
                               width_max_m=width_range_um[1] * UM)
        if not ws.ok:
            raise InputError(f"{target_ohm:g} ohm cannot be reached by the field solver with widths "
                             f"{width_range_um[0]:g} to {width_range_um[1]:g} um", "--target-ohm")
        width_m = ws.width_m
        res = field_solve(kind, replace(geom, width_m=width_m), cells_per_feature=cpf)
        estimate = max(estimate, res.error_estimate_pct)
    out: dict[str, Any] = {"z0_ohm": _round(res.z0_ohm), "eps_eff": _round(res.eps_eff)}
    if pair:
        out.update({"z_odd_ohm": _round(res.z_odd_ohm), "z_even_ohm": _round(res.z_even_ohm),
                    "z_diff_ohm": _round(res.z_diff_ohm), "z_common_ohm": _round(res.z_common_ohm),
                    "eps_eff_even": _round(res.eps_eff_even)})
    out["error_estimate_pct"] = _round(estimate, 3)
    out["width_um"] = _round(width_m / UM)
    out["width_solved"] = target_ohm is not None
    cf = None
    if closed_form_ohm is not None and math.isfinite(closed_form_ohm):
        z = at_cf.target_ohm
        cf = _round(100.0 * (closed_form_ohm - z) / z, 4)
    out["closed_form_error_pct"] = cf
    out["method"] = ("2-D quasi-static finite elements on graded nested meshes, Richardson-"
                     "extrapolated; error estimate = grid convergence index (Roache 1994)")
    return out


def field_text(field: Mapping[str, Any]) -> str:
    """Readable lines for the ``field`` object (non-JSON output)."""
    def f(v: Any, fmt: str = ".2f") -> str:
        return "-" if v is None else format(v, fmt)

    head = (f"  field solver: width {f(field['width_um'])} um"
            + (" (field-solved for the target)" if field.get("width_solved") else ""))
    if "z_diff_ohm" in field:
        body = (f"  field: Zdiff {f(field['z_diff_ohm'])} ohm, Zcommon {f(field['z_common_ohm'])} ohm, "
                f"Zodd {f(field['z_odd_ohm'])} ohm, Zeven {f(field['z_even_ohm'])} ohm, "
                f"eps_eff {f(field['eps_eff'], '.4f')} (odd)")
    else:
        body = f"  field: Z0 {f(field['z0_ohm'])} ohm, eps_eff {f(field['eps_eff'], '.4f')}"
    tail = (f"  field: error estimate {f(field['error_estimate_pct'], '.3f')} %; closed form differs by "
            f"{f(field['closed_form_error_pct'], '+.2f')} % at its own width")
    return "\n".join([head, body, tail])
