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
from dataclasses import asdict, fields
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


__all__ = ["cached_hatch_solve", "candidate_geometry", "hatch_for_line", "hatch_from_args", "hatch_text"]


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
