"""Direct field solves of the line-table rows a front uses, and the search loop that needs them.

The field correction (:mod:`strainline.optimizer.search.fieldtable`) guides the search over every
row of the table; its held-out error is a fraction of a percent to about a percent. The rows a
front actually uses are then field-solved **directly**: :func:`refine_rows` solves each row's real
layered cross-section at its width, takes the exact ratio field / closed form there and re-solves
the width for the target with that ratio (the ratio changes little with width, so the impedance at
the new width stays well inside 0.1 % of the field solution; ``passes=2`` solves once more there).
:func:`search_on_direct_rows` repeats the search until every row of the front is a direct solve.
"""
from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
from strainline.optimizer.search.fieldcache import FieldCache
from strainline.optimizer.search.fieldsolve import SolveStats, solve_sections
from strainline.optimizer.search.fieldtable import _ln_ratio, distinct_rows, sections_of

#: Most searches in :func:`search_on_direct_rows`.
MAX_SEARCHES = 6


def refine_rows(tb: Any, rows: np.ndarray, *, workers: int | None = None, dask_address: str | None = None,
                cache: FieldCache | None = None, passes: int = 1, stats: SolveStats | None = None) -> int:
    """Field-solve table rows directly at their own widths and store the exact values.

    Parameters
    ----------
    tb : LineTable
        A table built with the ``"field"`` impedance model (updated in place).
    rows : array of int
        Rows to solve (rows already exact are skipped).
    workers, dask_address, cache, stats
        As in :func:`strainline.optimizer.search.fieldsolve.solve_sections`.
    passes : int
        Solves per row (1: solve at the row's width, re-solve the width with that exact ratio; the
        ratio moves by well under 0.1 % over the small width change, checked by
        tests/test_fieldtable.py against independent solves; 2: solve again at the new width).

    Returns
    -------
    int
        Distinct cross-sections solved.
    """
    from strainline.models.lines import solve_width

    rows = np.unique(np.asarray(rows, np.int64))
    rows = rows[~tb.exact[rows]]
    if rows.size == 0:
        return 0
    stats = stats if stats is not None else SolveStats()
    sub = {k: v[rows] for k, v in tb.bands.items()}
    geom = tb.geometry.take(rows)
    first, inv = distinct_rows(tb.kind, geom, sub)
    lo = tb.width_lo_m[rows]
    hi = np.maximum(tb.width_hi_m[rows], lo * (1 + 1e-9))
    target = tb.target_ohm
    for _ in range(passes):
        w_first = tb.width_m[rows[first]]
        res = solve_sections(sections_of(tb.kind, rows[first], w_first, tb.geometry, tb.bands),
                             workers=workers, dask_address=dask_address, cache=cache, stats=stats)
        cf = tb.closed_form(rows[first], w_first)
        fz = np.array([r["z"] for r in res])
        fe = np.array([r["eps"] for r in res])
        ft = np.array([0.0 if not math.isfinite(r["tan"]) else r["tan"] for r in res])
        r_first = np.stack([_ln_ratio(fz, cf["z"]), _ln_ratio(fe, cf["eps"]), _ln_ratio(ft, cf["tan"])], axis=1)
        good = np.isfinite(r_first).all(axis=1)
        r_rows = np.where(good[inv][:, None], r_first[inv], tb.r_field[rows])
        w, ok = solve_width(tb.kind, target * np.exp(-r_rows[:, 0]), geom, lo, hi)
        ok = np.asarray(ok, bool)
        if not ok.all():
            z_lo = tb.closed_form.z(rows, lo)["z"] * np.exp(r_rows[:, 0])
            z_hi = tb.closed_form.z(rows, hi)["z"] * np.exp(r_rows[:, 0])
            end = np.where(np.abs(z_lo / target - 1) <= np.abs(z_hi / target - 1), lo, hi)
            w = np.where(ok, w, end)
        w = np.where(np.isfinite(w), w, tb.width_m[rows])
        tb.set_rows(rows, w, r_rows, ok)
    tb.exact[rows] = True
    if tb.correction is not None:
        _recorrect(tb, rows[first][good], w_first[good], r_first[good])
    return int(first.size)


def _recorrect(tb: Any, pts: np.ndarray, widths: np.ndarray, r_solved: np.ndarray) -> None:
    """Add direct solves (rows ``pts`` at ``widths``) to the correction and re-solve every row not
    solved directly with it (the correction learns where the search looks)."""
    from strainline.optimizer.search.fieldtable import corrected_widths, features

    if pts.size == 0:
        return
    sub = {k: v[pts] for k, v in tb.bands.items()}
    X = features(tb.kind, widths, tb.geometry.take(pts), sub)
    tb.correction = tb.correction.refit(X, r_solved)
    rest = np.flatnonzero(~tb.exact)
    if rest.size == 0:
        return
    first, inv = distinct_rows(tb.kind, tb.geometry.take(rest), {k: v[rest] for k, v in tb.bands.items()})
    u = rest[first]
    gU = tb.geometry.take(u)
    bU = {k: v[u] for k, v in tb.bands.items()}
    lo = tb.width_lo_m[u]
    hi = np.maximum(tb.width_hi_m[u], lo * (1 + 1e-9))
    w, ok = corrected_widths(tb.kind, tb.correction, gU, bU, tb.target_ohm, lo, hi, tb.width_m[u],
                             lambda ww: tb.closed_form.z(u, ww))
    r = tb.correction(features(tb.kind, w, gU, bU))
    tb.set_rows(rest, w[inv], r[inv], ok[inv])


def _refresh(problem: Any) -> None:
    """Recompute the problem's per-row line figures after table rows changed."""
    refresh = getattr(problem, "refresh_line_table", None)
    if callable(refresh):
        refresh()
        return
    if getattr(problem, "fast", None) is not None:
        import sys

        problem_module = sys.modules[type(problem).__module__]   # the problem's own module (no import cycle)
        problem.fast = problem_module._fast_tables(problem)


def search_on_direct_rows(problem: Any, run_search: Callable[[], Any], *, workers: int | None = None,
                          dask_address: str | None = None, max_searches: int = MAX_SEARCHES) -> Any:
    """Run the search until every row its front uses is a direct field solve.

    Parameters
    ----------
    problem : Problem
        Its ``table`` is updated in place (rows of the front become direct solves).
    run_search : callable
        ``run_search() -> SearchResult`` (``result.archive.X`` the front's decision vectors).
    workers, dask_address
        Where the direct solves run.
    max_searches : int
        Most searches (each after a round of direct solves).

    Returns
    -------
    SearchResult
        The last search; ``problem.table.field_info`` records the rounds, the direct rows and
        whether the front ended on direct solves only.
    """
    # one line problem per line with several lines (each has its own table), else the problem itself
    parts = list(getattr(problem, "lines", None) or [problem])
    tb = problem.table
    result = run_search()
    if getattr(tb, "impedance_model", "closed-form") != "field":
        return result
    cache = FieldCache()
    stats = SolveStats()
    k = 0
    try:
        for k in range(max_searches):
            X = result.archive.X
            ev = problem.evaluate(X) if len(X) else None
            todo_all = []
            for j, part in enumerate(parts):
                if ev is None:
                    rows = np.array([], np.int64)
                else:
                    rows = np.unique(ev.line_rows[:, j] if ev.line_rows is not None else ev.line_row)
                todo_all.append(rows[~part.table.exact[rows]])
            done = all(t.size == 0 for t in todo_all)
            for part in parts:
                if part.table.field_info is not None:
                    part.table.field_info.front_rows_direct = bool(done)
            if done or k == max_searches - 1:
                break
            for part, todo in zip(parts, todo_all):
                if todo.size:
                    refine_rows(part.table, todo, workers=workers, dask_address=dask_address, cache=cache,
                                stats=stats)
                    _refresh(part)
            result = run_search()
    finally:
        cache.close()
    for i, part in enumerate(parts):
        info = part.table.field_info
        if info is not None:
            info.direct_rows = int(part.table.exact.sum())
            if i == 0:       # the solve counts are shared by the lines; recorded once
                info.direct_solves = stats.solved
                info.field_solves += stats.solved
                info.cached += stats.cached
                info.seconds += stats.seconds
            info.searches = k + 1
    return result


def table_summary(tb: Any) -> dict[str, Any]:
    """``front.json`` ``search`` entries: which impedance model decided, and how the table was made.

    ``impedance_model`` is ``"field"`` or ``"closed-form"``; ``line_table`` the rows, distinct
    cross-sections, field solves (new and from the cache), seconds, the correction's held-out
    error and whether every row the front uses was field-solved directly.
    """
    model = getattr(tb, "impedance_model", "closed-form")
    out: dict[str, Any] = {"impedance_model": model}
    info = getattr(tb, "field_info", None)
    table: dict[str, Any] = {"rows": int(tb.n_rows)}
    if model == "field" and info is not None:
        def r(x: float, d: int = 4) -> float | None:
            return None if x is None or not math.isfinite(x) else round(float(x), d)
        table.update({
            "method": info.method,
            "cross_section": "layered: every film, adhesive and cover its own dielectric band",
            "distinct_cross_sections": info.distinct_sections,
            "field_solves": info.field_solves,
            "from_cache": info.cached,
            "correction_points": info.fitted_points,
            "holdout_max_error_pct": r(info.holdout_max_error_pct),
            "holdout_history_pct": [r(x) for x in info.holdout_history_pct],
            "solver_estimate_max_pct": r(info.solver_estimate_max_pct),
            "direct_rows": info.direct_rows,
            "front_rows_direct": info.front_rows_direct,
            "searches": info.searches,
            "seconds": r(info.seconds, 3),
            "backend": info.backend,
            "workers": info.workers,
        })
    else:
        table["method"] = "published closed forms, series-composite Dk"
    out["line_table"] = table
    return out


__all__ = ["MAX_SEARCHES", "refine_rows", "search_on_direct_rows", "table_summary"]
