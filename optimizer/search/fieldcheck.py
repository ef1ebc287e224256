"""One candidate's field check (runs in a worker): its own layered stack, field-solved.

:func:`check_candidate` is what :func:`strainline.optimizer.search.verify.verify_front` runs per
candidate; :func:`layered_section` reads the candidate's real cross-section from its stack in
``front.json`` (independently of the line table); :func:`study_nominal_pct` the nominal window.
"""
from __future__ import annotations

import math
import time
from collections.abc import Mapping
from typing import Any

from strainline.models.units import UM

#: Line kinds whose target is the differential impedance.
PAIR_KINDS = ("coupled-microstrip", "coupled-stripline")
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


def _study_line(study: Mapping[str, Any], name: str | None = None) -> Mapping[str, Any]:
    """The study's block of the line named ``name`` (``lines:`` entry), else its ``line:`` (or the
    first ``lines:`` entry)."""
    if not isinstance(study, Mapping):
        return {}
    many = study.get("lines")
    if isinstance(many, list) and many:
        for blk in many:
            if isinstance(blk, Mapping) and name is not None and blk.get("name") == name:
                return blk
        return many[0] if isinstance(many[0], Mapping) else {}
    line = study.get("line")
    return line if isinstance(line, Mapping) else {}


def layered_section(cand: Mapping[str, Any], kind: str,
                    line: Mapping[str, Any] | None = None) -> dict[str, Any] | None:
    """The real layered cross-section of a candidate, from its own stack (``candidate["layers"]``).

    Independent of the line table: read from the stack as written to ``front.json`` (top to
    bottom). ``below``: [thickness_um, Dk, Df] from the reference plane up to the signal copper;
    ``above``: from the signal copper outwards (outer lines: the cover; striplines: up to the
    second plane); ``fill``: [Dk, Df] beside the trace (outer lines: the cover layer on the
    copper, air when bare; striplines: the copper layer's fill material). ``None`` when the stack
    is missing or has no plane for the line.
    """
    layers = cand.get("layers") or []
    line = line if line is not None else (cand.get("line") or {})
    cu = [i for i, lay in enumerate(layers) if lay.get("kind") == "copper"]
    layer_no = _num(line.get("layer"), 0.0)
    sig_no = int(layer_no) if math.isfinite(layer_no) else 0
    if not cu or not 1 <= sig_no <= len(cu):
        return None
    sig = cu[sig_no - 1]

    def band(lay: Mapping[str, Any]) -> list[float]:
        dk = _num(lay.get("dk"), 1.0)
        return [_num(lay.get("thickness_um"), 0.0), dk if math.isfinite(dk) else 1.0, _num(lay.get("df"), 0.0)]

    def between(a: int, b: int) -> list[list[float]]:     # layers strictly between, top to bottom
        return [band(lay) for lay in layers[a + 1:b] if lay.get("kind") != "copper"
                and _num(lay.get("thickness_um"), 0.0) > 0]

    k = cu.index(sig)
    up = cu[k - 1] if k > 0 else None
    dn = cu[k + 1] if k + 1 < len(cu) else None
    if kind in ("stripline", "coupled-stripline"):
        if up is None or dn is None:
            return None
        below, above = between(sig, dn)[::-1], between(up, sig)[::-1]
        names = {lay.get("material"): band(lay) for lay in layers if lay.get("kind") != "copper"}
        fill_name = layers[sig].get("fill")
        fill = names.get(fill_name, above[0] if above else [0, 1.0, 0.0])[1:]
    else:
        if dn is not None:       # plane below, cover above the signal copper
            below, above = between(sig, dn)[::-1], between(-1, sig)[::-1]
        elif up is not None:
            below, above = between(up, sig), between(sig, len(layers))
        else:
            return None
        fill = above[0][1:] if above else [1.0, 0.0]
    return {"below": below, "above": above, "fill": fill,
            "thickness_um": _num(layers[sig].get("thickness_um"))}


def study_nominal_pct(front: Mapping[str, Any], name: str | None = None) -> float:
    """The study's nominal impedance window, percent: ``line.nominal_error_pct``, else half the
    tolerance (a percent, or a catalog tolerance class looked up in the default catalog); of the
    line named ``name`` in a study with several lines. The window the search recorded
    (``search.nominal_window_pct``, after the default guard) comes first."""
    searched = (front.get("search") or {}).get("nominal_window_pct") if isinstance(front, Mapping) else None
    if isinstance(searched, Mapping) and searched:     # the window the search used (after the guard)
        v = _num(searched.get(name) if name in searched else next(iter(searched.values())))
        if math.isfinite(v):
            return v
    line = _study_line(front.get("study", {}), name)
    v = _num(line.get("nominal_error_pct"))
    if math.isfinite(v):
        return v
    tol = line.get("tolerance")
    t = _num(str(tol).rstrip("%")) if tol is not None else math.nan
    if not math.isfinite(t) and tol is not None:
        try:
            from strainline.optimizer.inputs.catalog import load_catalog
            from strainline.optimizer.inputs.study_model import tolerance_of
            t = 100.0 * tolerance_of(tol, load_catalog())[0]
        except Exception:  # noqa: BLE001 - an unknown class: fall back to the common 10 %
            t = math.nan
    return 0.5 * (t if math.isfinite(t) else 10.0)


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
    out: dict[str, Any] = {"index": task["index"], "line_index": task.get("line_index", 0), key: None, "eps_eff": None, "width_um": None,
                           "closed_form_error_pct": None, "error_estimate_pct": None,
                           "z_refined_ohm": None, "refined_ok": False,
                           "refined_width_in_range": False, "target_ohm": _round(task["target_ohm"]),
                           "error": None}
    sec = task.get("section")
    lay: dict[str, Any] = {}
    if sec:
        def m(bands: list) -> list[tuple[float, float, float]]:
            return [(b[0] * UM, b[1], b[2]) for b in bands]
        lay = {"layers_below": m(sec["below"]), "layers_above": m(sec["above"]), "fill": tuple(sec["fill"])}
    out["cross_section"] = "layered stack" if sec else "composite Dk"
    try:
        geom = _geometry(task)
        if sec:
            geom = geom.with_(height_m=sum(b[0] for b in sec["below"]) * UM,
                              thickness_m=sec["thickness_um"] * UM)
        cpf = task["cells_per_feature"]
        res = field_solve(kind, geom, cells_per_feature=cpf, isolated_line=False,
                          max_estimate_pct=MAX_ESTIMATE_PCT, **lay)
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
        out["impedance_error_pct"] = _round(100.0 * (z_field / target - 1.0), 4)
        ws = field_solve_width(kind, target, geom, geom_width(task), start=res,
                               cells_per_feature=cpf, tol_pct=task["tol_pct"], **lay,
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
    reasons = []
    if out["error"]:
        reasons.append(f"not field-solved: {out['error']}")
    else:
        nom = task.get("nominal_error_pct", math.inf)
        err = out.get("impedance_error_pct")
        if err is None or abs(err) > nom:
            reasons.append(f"field impedance {out[key]} ohm at the reported width is "
                           + ("not known" if err is None else f"{err:+.2f} % from the target")
                           + f", outside the nominal window of +/-{nom:g} %")
        if not out["refined_ok"]:
            reasons.append("no width reaches the target with the field solver")
        elif not out["refined_width_in_range"]:
            reasons.append(f"the field-refined width {out['width_um']:.1f} um is outside the width range")
    out["passed"] = not reasons
    out["reasons"] = reasons
    out["seconds"] = round(time.perf_counter() - t0, 3)
    return out


def geom_width(task: Mapping[str, Any]) -> float:
    """Start width of the refinement, m (the candidate's closed-form width)."""
    return task["width_um"] * UM
