"""A front candidate's line over its hatched reference plane: the width to build there.

The search screens hatched candidates with a width-independent factor (:mod:`.hatchsearch`); a
front candidate over a hatch is then solved in 3-D at its own cross-section and widened until the
impedance over the hatch meets the target, with the factor re-solved at the widened width
(:func:`solve_over_hatch`). :func:`candidate_hatch` gives its ``line.hatch`` record and findings;
:func:`prefetch_hatch` runs a whole front's solves on every core into the field cache first.

Estimates for concept work: verify with the fabricator's impedance modelling and test coupons
(IPC-TM-650); defer to IPC-2223 / IPC-6013.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from strainline.models.hatch import SOLVER_VERSION, Hatch, HatchResult
from strainline.models.hatch.section import section_from_geometry
from strainline.models.units import GHZ, UM
from strainline.optimizer.search.hatchline import LIMITS, METHOD, _finding, _r, cached_hatch_solve, candidate_geometry


@dataclass(frozen=True)
class HatchRow:
    """What the 3-D solves of one front candidate's line over its hatch need (picklable): the
    table row's closed form inputs (one-row ``row_geom``, its field correction ``corr``, the width
    range), the target, and the 3-D cross-section (``geom``, ``hatch``, ``below``)."""

    kind: str
    target_ohm: float
    corr: float
    row_geom: Any
    width_lo_m: float
    width_hi_m: float
    geom: Any
    hatch: Hatch
    below: list
    calibrated: float | None
    f_start: float | None = None      # first guess of the factor (the search's interpolated one)


def hatch_row(study: Any, tb: Any, row: int, hatched: list[int], sig: int,
              fills: dict[int, float], f_start: float | None = None) -> HatchRow | None:
    """The :class:`HatchRow` of one front candidate's line over its first hatched plane, or None
    (no hatch geometry, coplanar, or a fill without geometry)."""
    hatches = getattr(study.stack, "ground_hatch", ())
    if not hatches or not hatched or study.line.type == "coplanar":
        return None
    by_fill = {round(1.0 - (1.0 - w / p) ** 2, 9): (p, w, a) for p, w, a in hatches}
    p_lay = hatched[0]
    geo = by_fill.get(round(fills[p_lay], 9))
    if geo is None:
        return None
    kind = study.line.type
    geom, hatch, below = candidate_geometry(study, tb, row, *geo,
                                            kind in ("stripline", "coupled-stripline") and p_lay > sig)
    corr = float(np.exp(tb.r_field[row, 0])) if tb.r_field is not None else 1.0
    cal = study.line.hatch_correction
    return HatchRow(kind, float(study.line.target_ohm), corr, tb.geometry.take(np.array([row])),
                    float(tb.width_lo_m[row]), float(tb.width_hi_m[row]), geom, hatch, below,
                    None if cal is None else float(cal),
                    None if f_start is None or not math.isfinite(f_start) else float(f_start))


def _width_for(ctx: HatchRow, factor: float) -> float | None:
    """Width whose (field-corrected) impedance times ``factor`` meets the target, m (None: none in
    the study's width range)."""
    from strainline.models.lines import solve_width

    w, ok = solve_width(ctx.kind, ctx.target_ohm / (factor * ctx.corr), ctx.row_geom,
                        np.array([ctx.width_lo_m]), np.array([max(ctx.width_hi_m, ctx.width_lo_m * (1 + 1e-9))]))
    w0 = float(np.asarray(w).reshape(-1)[0])
    return w0 if bool(np.asarray(ok).reshape(-1)[0]) and math.isfinite(w0) else None


#: Most 3-D solves of the width iteration over a hatch, and its stop (relative width change): the
#: hatch solver's factor scatters by up to about 0.5 % as its mesh follows the width, which moves
#: the width for the target by up to about 1 % either way; two steps within 2 % (about 1 % in
#: impedance) is as close as the iteration can usefully get.
HATCH_ITERATIONS = 4
HATCH_WIDTH_TOL = 2e-2


def solve_over_hatch(ctx: HatchRow, cache: Any = None) -> dict[str, Any]:
    """The width over the hatch that meets the target, with the hatch factor solved in 3-D **at
    that width** (fixed point: factor at w -> width for target / factor -> ...), not at the
    solid-plane width.

    The first width comes from ``ctx.f_start`` (the search's factor for the row), else from a 3-D
    solve at the solid-plane width. The iteration stops when the width moves less than
    :data:`HATCH_WIDTH_TOL` (the factor solved at a width that close is used). Returns ``width_m``
    (None when no width in the range meets the target), ``factor`` and ``result`` (3-D, at the last
    solved width), ``solves`` and ``converged``. With a coupon-calibrated factor the width follows
    from it alone (one solve for the frequency limits).
    """
    from dataclasses import replace as _replace

    def at(w: float) -> HatchResult:
        return cached_hatch_solve(ctx.kind, _replace(ctx.geom, width_m=w), ctx.hatch, cache, layers_below=ctx.below)

    if ctx.calibrated is not None:
        w = _width_for(ctx, ctx.calibrated)
        res = at(w if w is not None else float(ctx.geom.width_m))
        return {"width_m": w, "factor": ctx.calibrated, "result": res, "solves": 1, "converged": w is not None}
    solves = 0
    res = None
    pts: list[tuple[float, float]] = []          # (ln w, ln factor) of the 3-D solves
    if ctx.f_start is None:
        res = at(float(ctx.geom.width_m))
        solves = 1
        pts.append((math.log(float(ctx.geom.width_m)), math.log(res.ratio)))

    def model(w: float) -> float:
        """The factor at w: the last 3-D solve's. A plain fixed point: the width for the target moves
        little with the factor's own width dependence, so it settles in a step or two, whereas a
        secant through two solves would amplify the solver's scatter of a few tenths of a percent."""
        return math.exp(pts[-1][1]) if pts else float(ctx.f_start)

    def next_width(w: float | None) -> float | None:
        return None if w is None else _width_for(ctx, model(w))

    w = next_width(float(ctx.geom.width_m))
    converged = False
    factor = model(w) if w is not None else (pts[-1][1] if pts else float(ctx.f_start or 1.0))
    while w is not None and solves < HATCH_ITERATIONS:
        res = at(w)
        solves += 1
        pts.append((math.log(w), math.log(res.ratio)))
        w_new = next_width(w)
        if w_new is None:
            w = None
            break
        step = abs(w_new / w - 1.0)
        w = w_new
        factor = model(w)
        if step < HATCH_WIDTH_TOL:
            converged = True
            break
    if res is None:
        res = at(float(ctx.geom.width_m))
        solves += 1
    return {"width_m": w, "factor": factor, "result": res, "solves": solves, "converged": converged}


def candidate_hatch(study: Any, tb: Any, row: int, hatched: list[int], sig: int, fills: dict[int, float],
                    cache: Any = None, f_start: float | None = None) -> tuple[dict[str, Any] | None, list[dict[str, str]]]:
    """The hatched-reference record and findings of one front candidate, when the study gives its
    hatched planes as geometry (``stack.ground_hatch``); ``(None, [])`` otherwise.

    The candidate's cross-section (layered dielectric below, composite cover or second gap above)
    is solved over the hatch whose fill equals the plane's copper fill. The impedance over the
    hatch is the table's field-accurate solid-plane impedance times the hatch factor (or
    ``line.hatch_correction``); the trace is widened until that meets the target, with the factor
    re-solved in 3-D at the new width (:func:`solve_over_hatch`). ``width_for_target_um`` is the
    width to build over the hatch.
    """
    hatches = getattr(study.stack, "ground_hatch", ())
    if not hatches or not hatched:
        return None, []
    by_fill = {round(1.0 - (1.0 - w / p) ** 2, 9): (p, w, a) for p, w, a in hatches}
    kind = study.line.type
    p_lay = hatched[0]
    geo = by_fill.get(round(fills[p_lay], 9))
    if geo is None:
        return None, []
    pitch, width, angle = geo
    hatch = Hatch(pitch * UM, width * UM, angle, float(np.broadcast_to(tb.thickness_m, (tb.n_rows,))[row]))
    out: dict[str, Any] = {"layer": p_lay + 1, "pitch_um": pitch, "line_width_um": width, "angle_deg": angle,
                           "fill": _r(hatch.fill, 4)}
    findings = []
    if kind == "coplanar":
        findings.append(_finding("hatched-reference", "warning",
                                 f"reference plane L{p_lay + 1} is hatched; coplanar lines over a hatch are not "
                                 "modelled: the impedance shown is the solid-plane value",
                                 "strainline's 3-D hatched-plane solver covers microstrip, stripline and pairs"))
        return out, findings
    ctx = hatch_row(study, tb, row, hatched, sig, fills, f_start)
    sol = solve_over_hatch(ctx, cache)
    res = sol["result"]
    calibrated = study.line.hatch_correction
    f0 = float(calibrated) if calibrated is not None else float(sol["factor"])
    z0 = float(tb.z_ohm[row]) * f0                     # over the hatch at the solid-plane width (estimate)
    w_h = sol["width_m"]
    factor = float(sol["factor"])
    if w_h is not None:
        from strainline.models.lines import target_impedance
        z_cf = float(np.asarray(target_impedance(kind, ctx.row_geom.with_(width_m=np.array([w_h])))).reshape(-1)[0])
        z_h = z_cf * ctx.corr * factor
    else:
        z_h = math.nan
    err0 = z0 / study.line.target_ohm - 1.0
    err = z_h / study.line.target_ohm - 1.0 if w_h is not None else err0
    f_hz = study.line.frequency_ghz * GHZ
    out.update({"width_for_target_um": _r(w_h / UM) if w_h is not None else None,
                "width_over_hatch_um": _r(w_h / UM) if w_h is not None else None,
                "solid_plane_width_um": _r(float(tb.width_m[row]) / UM),
                "hatch_factor": _r(factor, 5),
                "factor_source": "line.hatch_correction (coupon-calibrated)" if calibrated is not None
                else "3-D field solution at the width over the hatch",
                "solver_factor": _r(res.ratio, 5), "z_ohm": _r(z_h) if w_h is not None else _r(z0),
                "error_pct": _r(100.0 * err, 4),
                "solves": int(sol["solves"]), "converged": bool(sol["converged"]),
                "quasi_static_limit_ghz": _r(res.f_quasi_static_hz / GHZ, 4),
                "bragg_frequency_ghz": _r(res.f_bragg_hz / GHZ, 4), "method": METHOD, "limits": LIMITS})
    both = len(hatched) > 1
    tail = ("; the other plane is hatched too and is taken as solid, so this is a lower estimate" if both else "")
    if w_h is not None:
        sev = "warning" if (abs(err) > study.line.nominal_error or not sol["converged"]) else "info"
        msg = (f"reference plane L{p_lay + 1} is hatched ({angle:g} deg, pitch {pitch:g} um, lines {width:g} um, "
               f"{100 * hatch.fill:.0f} % copper): the trace is widened from {float(tb.width_m[row]) / UM:.1f} um "
               f"(solid plane; about {z0:.1f} ohm over this hatch) to {w_h / UM:.1f} um, where the impedance over the hatch "
               f"is {z_h:.2f} ohm ({100 * err:+.2f} % from the target; factor {factor:.3f} "
               + ("from line.hatch_correction" if calibrated is not None else
                  f"from a 3-D field solution at that width, {sol['solves']} solves"
                  + ("" if sol["converged"] else ", not converged"))
               + f"){tail}; build this width")
    else:
        sev = "warning"
        msg = (f"reference plane L{p_lay + 1} is hatched ({angle:g} deg, pitch {pitch:g} um, lines {width:g} um, "
               f"{100 * hatch.fill:.0f} % copper): impedance over the hatch {z0:.2f} ohm at the solid-plane width "
               f"({100 * err0:+.1f} % from the target; factor {f0:.3f}){tail}; no width in the study's range "
               "meets the target over this hatch")
    findings.append(_finding("hatched-reference", sev, msg,
                             "strainline's 3-D hatched-plane field solver (quasi-static; inductance from the air "
                             "capacitance)"))
    if f_hz > res.f_quasi_static_hz:
        findings.append(_finding(
            "hatch-frequency", "warning",
            f"{study.line.frequency_ghz:g} GHz is above the quasi-static limit {res.f_quasi_static_hz / GHZ:.2f} GHz "
            f"of the hatch on L{p_lay + 1} (period {hatch.period_m / UM:.0f} um along the line is more than a tenth "
            f"of the guided wavelength; first stop band near {res.f_bragg_hz / GHZ:.1f} GHz): the line is no longer "
            "uniform; use a full-wave solution or a measured coupon",
            "Bragg condition beta P = pi (Brillouin 1946); lambda/10 rule (common practice, no source)"))
    return out, findings


def _prefetch_one(args: tuple) -> None:
    ctx, folder = args
    from strainline.optimizer.search.fieldcache import FieldCache

    cache = FieldCache(folder)
    try:
        solve_over_hatch(ctx, cache)
    finally:
        cache.close()


def prefetch_hatch(rows: list[HatchRow], cache: Any, workers: int | None = None) -> int:
    """Run the hatch solves of many front candidates (:func:`solve_over_hatch`) on ``workers``
    local processes (default: every core) into the disk cache, so the candidates read them from
    there afterwards (the same numbers as solving in place). Candidates whose first solve is
    cached already are skipped. Returns how many candidates were solved."""
    import os

    from strainline.optimizer.search.fieldcache import point_key

    if cache is None or not cache.enabled or not rows:
        return 0
    todo: dict[tuple, HatchRow] = {}      # distinct candidates: first-solve key and the row's target data
    for ctx in rows:
        sec = section_from_geometry(ctx.kind, ctx.geom, ctx.below, (), None)
        key = point_key({"hatch_solver": SOLVER_VERSION, "section": asdict(sec), "hatch": asdict(ctx.hatch),
                         "mesh": {}})
        todo.setdefault((key, ctx.target_ohm, ctx.corr, ctx.width_lo_m, ctx.width_hi_m, ctx.calibrated), ctx)
    have = cache.get_many([k[0] for k in todo])
    miss = [ctx for k, ctx in todo.items() if have.get(k[0]) is None]
    if not miss:
        return 0
    n = max(1, min(len(miss), workers or os.cpu_count() or 1))
    if n == 1:
        for ctx in miss:
            solve_over_hatch(ctx, cache)
        return len(miss)
    import multiprocessing as mp
    from concurrent.futures import ProcessPoolExecutor

    folder = cache.path.parent
    with ProcessPoolExecutor(n, mp_context=mp.get_context("spawn")) as ex:
        list(ex.map(_prefetch_one, [(ctx, folder) for ctx in miss]))
    return len(miss)


__all__ = ["HatchRow", "candidate_hatch", "hatch_row", "prefetch_hatch", "solve_over_hatch"]
