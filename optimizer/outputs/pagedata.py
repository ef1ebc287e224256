"""The data a report page draws: one JSON object embedded in the page and read by ``static/report.js``.

``page_data(front, catalog)`` builds it; ``decision_table`` gives the parallel-coordinates dimensions;
``strain_limits`` the copper strain limit each strain profile marks.
"""
from __future__ import annotations

import json
import re
from collections.abc import Mapping, Sequence
from typing import Any

from strainline.optimizer.outputs.formatting import (
    figure,
    readable,
    readable_choice,
    findings_of,
    is_num,
    study_name,
    study_value,
)
from strainline.optimizer.outputs.diagnosis import nearest_candidates
from strainline.optimizer.outputs.linesview import line_name, line_summary, lines_of, study_line
from strainline.optimizer.outputs.stack import (
    FAMILY_COLOURS,
    family_of,
    fill_family,
    layer_heights,
    reference_indices,
    signal_index,
)

_NUM_UNIT = re.compile(r"^\s*(-?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?)\s*([A-Za-z%/]*)\s*$")


def decision_table(cands: Sequence[Mapping[str, Any]]) -> list[dict[str, Any]]:
    """Dimensions for the parallel-coordinates view: numeric or categorical, one value per candidate.

    Uses each candidate's ``variables`` (or ``decision``) mapping when the solver provides one; else
    derives the choices from the layers (thickness, material and copper coverage per layer position,
    the signal layer and the solved width and gap). Only dimensions that vary across the front are kept
    (all of them if none vary).
    """
    if not cands:
        return []
    dims: list[dict[str, Any]] = []
    given = [c.get("variables") or c.get("decision") or c.get("choices") for c in cands]
    if all(isinstance(g, Mapping) and g for g in given):
        keys = [k for k in given[0] if all(k in g for g in given)]
        for k in keys:
            pairs = [readable_choice(k, g[k]) for g in given]
            dims.append({"label": pairs[0][0], "values": [v for _, v in pairs]})
    else:
        n = min(len(c["layers"]) for c in cands)
        for j in range(n):
            lab = str(cands[0]["layers"][j].get("name") or f"layer {j + 1}")
            dims.append({"label": f"{lab} t (um)", "values": [c["layers"][j].get("thickness_um") for c in cands]})
            dims.append({"label": f"{lab} material", "values": [str(c["layers"][j].get("material")) for c in cands]})
            if any(c["layers"][j].get("kind") == "copper" for c in cands):
                dims.append({"label": f"{lab} coverage", "values": [c["layers"][j].get("coverage") for c in cands]})
        dims.append({"label": "signal layer",
                     "values": [str((c.get("line") or {}).get("layer")) for c in cands]})
        dims.append({"label": "width (um)", "values": [(c.get("line") or {}).get("width_um") for c in cands]})
        dims.append({"label": "gap (um)", "values": [(c.get("line") or {}).get("gap_um") for c in cands]})
    out: list[dict[str, Any]] = []
    for d in dims:
        vals = d["values"]
        parsed = [_NUM_UNIT.match(v) if isinstance(v, str) else None for v in vals]
        units = {m.group(2) for m in parsed if m}
        if vals and all(parsed) and len(units) == 1:      # "25um", "12.5um": numbers with one unit
            unit = units.pop()
            vals = d["values"] = [float(m.group(1)) for m in parsed]
            if unit:
                d["label"] = f"{d['label']} ({unit})"
        if all(v is None for v in vals):
            continue
        numeric = all(is_num(v) or v is None for v in vals)
        if numeric:
            d["values"] = [float(v) if v is not None else None for v in vals]
            if any(v is None for v in d["values"]):
                continue  # parcoords needs a value on every line
        else:
            d["values"] = ["-" if v is None else str(v) for v in vals]
        d["categorical"] = not numeric
        out.append(d)
    varying = [d for d in out if len({json.dumps(v) for v in d["values"]}) > 1]
    return varying or out


def strain_limit_pct(front: Mapping[str, Any]) -> float | None:
    """The study's copper strain limit in percent, when it states one."""
    for path in (("limits", "peak_strain_pct"), ("limits", "strain_pct"), ("limits", "max_strain_pct")):
        v = study_value(front, *path)
        if is_num(v):
            return float(v)
    v = (front.get("limits") or {}).get("peak_strain_pct") if isinstance(front.get("limits"), Mapping) else None
    return float(v) if is_num(v) else None


def strain_limits(front: Mapping[str, Any], catalog: Any | None, zone: int | None = None
                  ) -> tuple[list[float | None], str]:
    """Per candidate, the copper strain limit (percent) to mark on its strain profile, and its basis.

    The study's own ``limits.peak_strain_pct`` when it gives one. Else, for dynamic use with a cycle
    count, the peak strain whose Engelmaier strain range (IPC-TM-650 2.4.2.1 form, as in
    :func:`strainline.models.fatigue.engelmaier_strain_range`) gives that many cycles for the weakest
    copper foil of the candidate (range = peak for flat-to-bent motion, 2 x peak when reversed). Else, for
    an install bend, about 2 % (common practice, no source). ``zone`` picks a bend zone (``bends[zone]``:
    its own use, cycles and motion) instead of the zone ``bend`` holds.
    """
    cands = front.get("candidates") or []
    given = strain_limit_pct(front)
    if given is not None:
        return [given] * len(cands), "the study's strain limit (limits.peak_strain_pct)"
    use = study_value(front, "bend", "use")
    cycles = study_value(front, "bend", "cycles") or study_value(front, "limits", "min_cycles")
    motion = study_value(front, "bend", "motion") or "flat-to-bent"
    bend = cands[0].get("bend") if cands else None
    if cands and zone is not None:
        bends = cands[0].get("bends") or []
        bend = bends[zone] if 0 <= zone < len(bends) else None
        if isinstance(bend, Mapping):
            cycles = None            # the zone's own requirement, not the study's first bend
    if isinstance(bend, Mapping):
        use = bend.get("use", use)
        cycles = bend.get("required_cycles", cycles)
        motion = bend.get("motion", motion)
    from strainline.models import rules

    if use == "dynamic" and is_num(cycles) and catalog is not None:
        import numpy as np

        from strainline.models.fatigue import engelmaier_strain_range, strain_range

        owner, df, su, e = [], [], [], []
        for i, c in enumerate(cands):
            for lay in c["layers"]:
                foil = getattr(catalog, "foils", {}).get(lay.get("copper") or lay.get("foil") or lay.get("material"))
                if lay.get("kind") == "copper" and foil is not None:
                    owner.append(i)
                    df.append(foil.fatigue_ductility)
                    su.append(foil.tensile_strength_pa)
                    e.append(float(lay.get("modulus_gpa") or foil.modulus_pa / 1e9) * 1e9)
        if owner:
            rng = engelmaier_strain_range(np.full(len(owner), float(cycles)), np.array(df), np.array(su), np.array(e))
            peak = 100.0 * rng / float(strain_range(1.0, motion))
            out: list[float | None] = [None] * len(cands)
            for i, v in zip(owner, peak):
                out[i] = float(v) if out[i] is None else min(out[i], float(v))
            return out, (f"peak strain for {float(cycles):.3g} cycles ({motion}) by Engelmaier's copper-foil "
                         "equation (IPC-TM-650 2.4.2.1), weakest copper foil of the candidate")
    if use == "install":
        return [100.0 * rules.INSTALL_STRAIN_LIMIT] * len(cands), \
            "about 2 % copper strain for a one-time install bend (common practice, no source)"
    return [None] * len(cands), ""


def _infeasible_message(front: Mapping[str, Any]) -> str:
    search = front.get("search") if isinstance(front.get("search"), Mapping) else {}
    inf = search.get("infeasible")
    if isinstance(inf, Mapping):
        return str(inf.get("message") or "")
    return str(inf or "")


def page_data(front: Mapping[str, Any], catalog: Any | None) -> dict[str, Any]:
    cands = front["candidates"]
    limits, limit_basis = strain_limits(front, catalog)
    nzones = min((len(c.get("bends") or []) for c in cands), default=0)
    zone_limits = [strain_limits(front, catalog, z) for z in range(nzones)] if nzones > 1 else []
    view = []
    for i, (c, lim) in enumerate(zip(cands, limits)):
        layers = c["layers"]
        hts = layer_heights(layers)
        figures = dict(c["objectives"])
        for key in ("peak_strain_pct", "total_thickness_um"):
            figures[key] = figure(c, key)[0]
        view.append({
            "id": c["id"],
            "objectives": figures,
            "line": c.get("line") or {},
            "bend": c.get("bend") or {},
            "layers": [dict(lay, bottom_um=b, top_um=t, family=family_of(lay, catalog),
                            fill_family=fill_family(lay, catalog))
                       for lay, (b, t) in zip(layers, hts)],
            "strain_limit_pct": lim,
            "zone_limits": [{"pct": zl[0][i], "basis": zl[1]} for zl in zone_limits],
            "signal": signal_index(c),
            "refs": reference_indices(c),
            "findings": findings_of(c),
            "field_flag": field_flag(c, front, catalog),
            "bends": [b for b in c.get("bends") or [] if isinstance(b, Mapping)],
            "lines": line_views(c, front, catalog),
        })
    objectives = [k for k in cands[0]["objectives"] if all(is_num(c["objectives"].get(k)) for c in cands)] if cands else []
    search = front.get("search") if isinstance(front.get("search"), Mapping) else {}
    declared = search.get("objectives")
    true_objectives = [str(k) for k in declared] if isinstance(declared, list) and declared else list(objectives)
    objectives += [k for k in ("peak_strain_pct", "total_thickness_um") if k not in objectives]
    dominated = front.get("dominated") or front.get("dominated_points") or []
    dom = []
    for d in dominated if isinstance(dominated, list) else []:
        if isinstance(d, Mapping):
            o = d.get("objectives", d)
            if isinstance(o, Mapping):
                dom.append({k: o.get(k) for k in objectives})
    return {
        "study": study_name(front),
        "candidates": view,
        "objectives": objectives,
        "true_objectives": true_objectives,
        "dominated": dom,
        "decisions": decision_table(cands),
        "strain_limit_pct": strain_limit_pct(front),
        "strain_limit_basis": limit_basis,
        "infeasible": _infeasible_message(front),
        "nearest": [dict(n, layers=[dict(lay, bottom_um=b, top_um=t, family=family_of(lay, catalog),
                                         fill_family=fill_family(lay, catalog))
                                    for lay, (b, t) in zip(n["layers"], layer_heights(n["layers"]))])
                    for n in nearest_candidates(front)],
        "colours": FAMILY_COLOURS,
    }


def line_views(cand: Mapping[str, Any], front: Mapping[str, Any], catalog: Any | None) -> list[dict[str, Any]]:
    """Every line of a candidate as the report shows it (:func:`linesview.line_summary`), with the index of
    the copper layer carrying it and its drawing geometry (type, width, gap)."""
    out = []
    for k, ln in enumerate(lines_of(cand)):
        v = line_summary(ln, k, front, catalog)
        v["signal"] = signal_index({"line": ln, "layers": cand.get("layers") or []})
        v["refs"] = reference_indices({"line": ln, "layers": cand.get("layers") or []})
        v["field"] = _line_flag(ln, ln.get("field_check"), front, catalog, k)
        out.append(v)
    return out





def field_flag(cand: Mapping[str, Any], front: Mapping[str, Any], catalog: Any | None) -> dict[str, Any] | None:
    """The field-solver check of a candidate judged against its impedance tolerance, or None without one.

    ``mismatch`` is true when the field-solved impedance at the designed width lies outside target +/-
    tolerance (the closed-form design would miss on its coupon), or the check says the refined width
    fails; ``error_pct`` is the decided impedance's error (field table or closed form,
    ``line.impedance_model``) against the independent field solution. With several lines every line's
    check is judged (against its own tolerance): the flag is the first mismatching line's (else the first
    line's), its text names the line, and ``lines`` lists the names of every mismatching line.
    """
    lines = lines_of(cand)
    flags = []
    for k, ln in enumerate(lines):
        fc = ln.get("field_check") or (cand.get("field_check") if k == 0 else None)
        f = _line_flag(ln, fc, front, catalog, k)
        if f is not None:
            flags.append((line_name(ln, k), f))
    if not flags:
        return None
    bad = [(n, f) for n, f in flags if f["mismatch"]]
    name, flag = (bad or flags)[0]
    if len(lines) > 1:
        flag = dict(flag, text=f"line {name}: {flag['text']}" + "".join(
            f"; line {n}: {f['text']}" for n, f in bad[1:]))
    return dict(flag, lines=[n for n, _ in bad])


def _line_flag(line: Mapping[str, Any], fc: Any, front: Mapping[str, Any], catalog: Any | None,
               k: int) -> dict[str, Any] | None:
    from strainline.optimizer.outputs.sheetlookup import impedance_tolerance

    if not isinstance(fc, Mapping):
        return None
    if fc.get("error"):
        return {"mismatch": True, "error_pct": None, "tolerance_pct": None, "text": f"field check not possible: {fc['error']}"}
    tol = impedance_tolerance(front, line, catalog, study_line(front, k, line.get("name")))[0]
    z = fc.get("z_diff_ohm") if is_num(fc.get("z_diff_ohm")) else fc.get("z0_ohm")
    target = line.get("target_ohm") if is_num(line.get("target_ohm")) else fc.get("target_ohm")
    off = 100.0 * (z / target - 1.0) if is_num(z) and is_num(target) and target else None
    err = fc.get("closed_form_error_pct") if is_num(fc.get("closed_form_error_pct")) else None
    mismatch = ((off is not None and tol is not None and abs(off) > tol) or fc.get("refined_ok") is False
                or fc.get("passed") is False)
    return {"mismatch": bool(mismatch), "error_pct": err, "tolerance_pct": tol, "off_target_pct": off,
            "text": (f"field-solved impedance {off:+.1f} % off target" if off is not None else "")
            + (f" (tolerance +/-{tol:g} %)" if tol is not None and off is not None else "")
            + ("; " + "; ".join(map(str, fc["reasons"])) if fc.get("passed") is False and fc.get("reasons") else "")}


def kv_tree(data: Any) -> dict[str, Any]:
    """A nested mapping as a tree for the ``kv`` template macro: tables, lists and text leaves."""
    from strainline.optimizer.outputs.formatting import fmt

    if isinstance(data, Mapping):
        return {"kind": "table", "rows": [(str(k), kv_tree(v)) for k, v in data.items()]}
    if isinstance(data, list):
        if all(not isinstance(v, (Mapping, list)) for v in data):
            return {"kind": "text", "text": ", ".join(fmt(v) for v in data)}
        return {"kind": "list", "items": [kv_tree(v) for v in data]}
    return {"kind": "text", "text": fmt(data)}


def search_summary(front: Mapping[str, Any], version: str) -> dict[str, Any]:
    """The search panel's rows: the run's figures first, then anything else the search block holds."""
    search = front.get("search") if isinstance(front.get("search"), Mapping) else {}
    summary = {
        "method": search.get("method"),
        "evaluated": search.get("evaluated"),
        "space size": search.get("space_size"),
        "feasible": search.get("feasible"),
        "hypervolume (normalized objectives)": search.get("hypervolume"),
        "reference point": search.get("reference_point"),
        "seconds": search.get("seconds"),
        "seed": front.get("seed"),
        "candidates on the front": len(front["candidates"]),
        "strainline version": version,
    }
    summary["reference point"] = _readable_keys(summary["reference point"])
    for k, v in search.items():
        if k not in ("method", "evaluated", "space_size", "feasible", "hypervolume", "reference_point", "seconds",
                     "infeasible", "front_size"):
            summary[readable(k)] = _readable_keys(v)
    return summary


def _readable_keys(value: Any) -> Any:
    """Nested mapping keys and lists of front.json keys as words."""
    if isinstance(value, Mapping):
        return {readable(k): _readable_keys(v) for k, v in value.items()}
    if isinstance(value, list) and all(isinstance(v, str) and " " not in v for v in value):
        return [readable(v) for v in value]
    return value


__all__ = ["page_data", "line_views", "decision_table", "strain_limit_pct", "strain_limits", "kv_tree", "search_summary"]
