"""``strainline line --field-solve``: the field solver's figures for one cross-section.

Estimates for concept work: a quasi-static solution of an idealised rectangular cross-section.
Verify with the fabricator's impedance modelling and test coupons; defer to IPC-2223/IPC-6013.
"""
from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from strainline.models.units import UM
from strainline.optimizer.errors import InputError

PAIR_KINDS = ("coupled-microstrip", "coupled-stripline")
#: The base mesh is refined (at most twice) while the solver's error estimate exceeds this, percent.
MAX_ESTIMATE_PCT = 0.5


def _round(x: float, digits: int = 6) -> float | None:
    if x is None or not math.isfinite(x):
        return None
    return float(f"{x:.{digits}g}")



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
