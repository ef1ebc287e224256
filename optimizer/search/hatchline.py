"""Lines over hatched reference planes: cached 3-D solves and ``strainline line --hatch-pitch-um``.

:func:`cached_hatch_solve` wraps :func:`strainline.models.hatch.hatch_solve` with the disk cache of
the field solutions (:class:`~strainline.optimizer.search.fieldcache.FieldCache`, its own keys:
cross-section, hatch, mesh settings and the hatch solver's version), so a repeated solve is
instant. :func:`hatch_for_line` builds the ``hatch`` object of ``strainline line``; the method's
limits (quasi-static, inductance from the air capacitance, below a frequency set by the pitch)
travel with every result as findings.

Estimates for concept work: verify with the fabricator's impedance modelling and test coupons
(IPC-TM-650); defer to IPC-2223 / IPC-6013.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass, fields
from typing import Any

import numpy as np
from strainline.models.hatch import (
    SOLVER_VERSION,
    Hatch,
    HatchResult,
    hatch_solve,
    hatch_solve_width,
)
from strainline.models.hatch.section import section_from_geometry
from strainline.models.units import GHZ, UM
from strainline.optimizer.errors import InputError

METHOD = ("3-D quasi-static field solution over one hatch period (finite differences, algebraic "
          "multigrid); inductance from the air capacitance")
LIMITS = ("quasi-TEM: the inductance is taken from the air capacitance, L = 1/(c0^2 C_a); over a hatch "
          "the return current detours around the openings, so the true inductance is higher and the "
          "impedance shown is a lower estimate; valid only well below the quasi-static limit")


def cached_hatch_solve(kind: str, geom: Any, hatch: Hatch, cache: Any = None, **kw: Any) -> HatchResult:
    """:func:`hatch_solve` through the disk cache (``cache``: a FieldCache, or None for none)."""
    if cache is None or not cache.enabled:
        return hatch_solve(kind, geom, hatch, **kw)
    from strainline.optimizer.search.fieldcache import point_key

    sec = section_from_geometry(kind, geom, kw.get("layers_below"), kw.get("layers_under", ()),
                                kw.get("opening_er"))
    mesh = {k: v for k, v in kw.items() if k not in ("layers_below", "layers_under", "opening_er")}
    key = point_key({"hatch_solver": SOLVER_VERSION, "section": asdict(sec), "hatch": asdict(hatch),
                     "mesh": mesh})
    got = cache.get_many([key]).get(key)
    if got is not None:
        try:
            return HatchResult(**{f.name: got[f.name] for f in fields(HatchResult)})
        except (KeyError, TypeError):
            pass
    res = hatch_solve(kind, geom, hatch, **kw)
    cache.put_many({key: asdict(res)})
    return res


def _r(x: float, digits: int = 6) -> float | None:
    return float(f"{x:.{digits}g}") if x is not None and math.isfinite(x) else None


def hatch_from_args(pitch_um: float | None, width_um: float | None, angle_deg: float | None,
                    thickness_m: float) -> Hatch | None:
    """The hatch of ``strainline line`` options (None when no hatch option is given)."""
    if pitch_um is None and width_um is None and angle_deg is None:
        return None
    if pitch_um is None or width_um is None:
        opt = "--hatch-pitch-um" if pitch_um is None else "--hatch-width-um"
        raise InputError("a hatched plane needs both --hatch-pitch-um and --hatch-width-um", opt)
    for opt, val, lo, hi in (("--hatch-pitch-um", pitch_um, 10.0, 20000.0),
                             ("--hatch-width-um", width_um, 5.0, 20000.0)):
        if not (math.isfinite(val) and lo <= val <= hi):
            raise InputError(f"{val:g} is outside {lo:g} .. {hi:g} um", opt)
    if not width_um < pitch_um:   # as the study's stack.ground_hatch
        raise InputError(f"{width_um:g} must be below --hatch-pitch-um {pitch_um:g} um (equal = a solid plane)",
                         "--hatch-width-um")
    angle = 45.0 if angle_deg is None else float(angle_deg)
    if angle not in (45.0, 90.0):
        raise InputError(f"{angle_deg:g} is not one of [45, 90] degrees", "--hatch-angle-deg")
    return Hatch(pitch_um * UM, min(width_um, pitch_um) * UM, angle, thickness_m)


def hatch_for_line(kind: str, geom: Any, hatch: Hatch, target_ohm: float | None,
                   freq_hz: float | None = None, cache: Any = None) -> dict[str, Any]:
    """The ``hatch`` object of ``strainline line --hatch-pitch-um P --hatch-width-um W``.

    At the line's width (the closed-form width for a target): the impedance over the hatch beside
    the solid-plane value of the same solver, the hatch factor, fill, frequency limits; with a
    target, also the width over the hatch that meets it.
    """
    if kind == "coplanar":
        raise InputError("coplanar lines over a hatched plane are not modelled; use microstrip, stripline "
                         "or a pair", "--hatch-pitch-um")
    res = cached_hatch_solve(kind, geom, hatch, cache)
    out: dict[str, Any] = {
        "pitch_um": _r(hatch.pitch_m / UM), "line_width_um": _r(hatch.line_width_m / UM),
        "angle_deg": hatch.angle_deg, "fill": _r(res.fill, 4), "period_along_line_um": _r(hatch.period_m / UM),
        "width_um": _r(float(geom.width_m) / UM), "z_ohm": _r(res.z0_ohm), "eps_eff": _r(res.eps_eff),
        "z_solid_ohm": _r(res.z_solid_ohm), "hatch_factor": _r(res.ratio, 5),
        "method": METHOD, "limits": LIMITS, "findings": [],
    }
    if target_ohm is not None:
        sol = hatch_solve_width(kind, target_ohm, geom, hatch, float(geom.width_m), tol_pct=0.2)
        out["width_for_target_um"] = _r(sol.width_m / UM) if sol.ok else None
        out["z_at_width_for_target_ohm"] = _r(sol.result.z0_ohm)
        if not sol.ok:
            out["findings"].append(f"no width over the hatch met {target_ohm:g} ohm within 0.2 % in "
                                   f"{sol.solves} solves")
        res = sol.result
    # the limits of the line as it would be built (at the width for the target when there is one)
    f_qs = res.f_quasi_static_hz
    out["quasi_static_limit_ghz"] = _r(f_qs / GHZ, 4)
    out["bragg_frequency_ghz"] = _r(res.f_bragg_hz / GHZ, 4)
    if freq_hz is not None and freq_hz > f_qs:
        out["findings"].append(
            f"{freq_hz / GHZ:g} GHz is above the quasi-static limit {f_qs / GHZ:.2f} GHz of this hatch "
            f"(period {hatch.period_m / UM:.0f} um along the line is more than a tenth of the guided "
            f"wavelength; first stop band near {res.f_bragg_hz / GHZ:.1f} GHz): the impedance varies along "
            "the line and the hatch may resonate; use a full-wave solution or a measured coupon")
    return out


def hatch_text(d: dict[str, Any]) -> str:
    """Text lines of the ``hatch`` object (after the solid-plane text)."""
    lines = [(f"over a hatched plane ({d['angle_deg']:g} deg, pitch {d['pitch_um']:g} um, lines "
             f"{d['line_width_um']:g} um, copper fill {100 * d['fill']:.1f} %):"),
             (f"  at {d['width_um']:.2f} um: Z {d['z_ohm']:.2f} ohm (solid plane, same solver: "
             f"{d['z_solid_ohm']:.2f} ohm; hatch factor {d['hatch_factor']:.4f}), eps_eff {d['eps_eff']:.3f}")]
    if "width_for_target_um" in d:
        w = d["width_for_target_um"]
        lines.append(f"  width over the hatch for the target: {w:.2f} um" if w is not None
                     else "  width over the hatch for the target: not found")
    lines.append(f"  quasi-static limit {d['quasi_static_limit_ghz']:.2f} GHz (period < a tenth of the guided "
                 f"wavelength); first stop band {d['bragg_frequency_ghz']:.1f} GHz")
    lines.append(f"  method: {d['method']}")
    lines.append(f"  limits: {d['limits']}")
    lines += [f"  finding: {x}" for x in d["findings"]]
    return "\n".join(lines)


__all__ = ["HatchRow", "cached_hatch_solve", "candidate_hatch", "hatch_for_line", "hatch_from_args", "hatch_row",
           "hatch_text", "prefetch_hatch", "solve_over_hatch"]


def _finding(code: str, severity: str, message: str, source: str) -> dict[str, str]:
    return {"code": code, "severity": severity, "message": message, "source": source}


def candidate_geometry(study: Any, tb: Any, row: int, pitch_um: float, width_um: float, angle_deg: float,
                       flip: bool) -> tuple[Any, Hatch, list[tuple[float, float]]]:
    """Scalar geometry, hatch and layered dielectric (plane up to the trace) of table row ``row``
    over a hatch; ``flip``: a stripline whose hatched plane is the one above (its mirror image)."""
    from strainline.models.lines import LineGeometry

    kind = study.line.type
    strip = kind in ("stripline", "coupled-stripline")
    t_cu = float(np.broadcast_to(tb.thickness_m, (tb.n_rows,))[row])
    hatch = Hatch(pitch_um * UM, width_um * UM, angle_deg, t_cu)
    sec = tb.section(row)
    below = [(a, e) for a, e, _ in sec["below"]]
    h_top, er_top = float(tb.height_top_m[row]), float(tb.er_top[row])
    if flip:
        below = [(a, e) for a, e, _ in sec["above"]]
        h_top, er_top = float(tb.height_m[row]), float(tb.er[row])
    geom = LineGeometry(width_m=float(tb.width_m[row]), height_m=sum(a for a, _ in below),
                        thickness_m=t_cu, er=below[-1][1], gap_m=float(tb.gap_m[row]),
                        height_top_m=h_top if strip else math.nan, er_top=er_top if strip else math.nan,
                        cover_m=0.0 if strip else float(tb.cover_m[row]),
                        cover_er=1.0 if strip else float(tb.cover_er[row]))
    return geom, hatch, below


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
    todo: dict[str, HatchRow] = {}
    for ctx in rows:
        sec = section_from_geometry(ctx.kind, ctx.geom, ctx.below, (), None)
        key = point_key({"hatch_solver": SOLVER_VERSION, "section": asdict(sec), "hatch": asdict(ctx.hatch),
                         "mesh": {}})
        todo.setdefault(key + repr((ctx.target_ohm, ctx.corr, ctx.width_lo_m, ctx.width_hi_m, ctx.calibrated)),
                        ctx)
    have = cache.get_many([k[:64] for k in todo])
    miss = [ctx for k, ctx in todo.items() if have.get(k[:64]) is None]
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
