"""Catalog look-ups for the handoff sheets: foil weight and type, tolerances, Dk frequency, the bonded
build behind an unbonded bend's air gaps. Every function returns the value and where it came from."""
from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from strainline.optimizer.outputs.formatting import is_num


def weight_of(layer: Mapping[str, Any], catalog: Any | None) -> tuple[str | None, str]:
    copper = layer.get("copper")
    w = layer.get("weight") or layer.get("copper_weight") or (
        copper.get("weight") if isinstance(copper, Mapping) else None)
    if isinstance(w, str) and w:
        return w, "front.json"
    if catalog is not None and layer.get("thickness_um"):
        t = float(layer["thickness_um"])
        for name, rec in getattr(catalog, "weights", {}).items():
            if abs(rec.thickness_m * 1e6 - t) <= 0.03 * t:
                return name, "catalog foil weight by thickness"
    return None, ""


def foil_of(layer: Mapping[str, Any], catalog: Any | None) -> tuple[str | None, Any]:
    copper = layer.get("copper")
    names = [layer.get("foil"), copper.get("name") if isinstance(copper, Mapping) else None,
             copper if isinstance(copper, str) else None, layer.get("material")]
    foils = getattr(catalog, "foils", {}) if catalog is not None else {}
    for n in names:
        if isinstance(n, str) and n in foils:
            return n, foils[n]
    for n in names:
        if isinstance(n, str) and n:
            return n, None
    return None, None


def rel_tolerance(layer: Mapping[str, Any], catalog: Any | None) -> tuple[float | None, str]:
    """Relative thickness tolerance of a layer and where it comes from."""
    if catalog is None:
        return None, "catalog not available: agree with the fabricator"
    fab = getattr(catalog, "fabrication", None)
    if layer.get("kind") == "copper":
        tol = getattr(fab, "material_thickness_tolerance", {}).get("copper-foil")
        return (float(tol), "catalog fabrication: copper foil") if tol is not None else (None, "not in catalog")
    rec = getattr(catalog, "dielectrics", {}).get(layer.get("material"))
    if rec is not None and getattr(rec, "thickness_tolerance", None) is not None:
        return float(rec.thickness_tolerance), f"catalog: {rec.name}"
    return None, "not in catalog: agree with the fabricator"


def total_tolerance_um(total_um: float, catalog: Any | None) -> tuple[float | None, str]:
    fab = getattr(catalog, "fabrication", None) if catalog is not None else None
    rule = getattr(fab, "total_thickness_tolerance", None)
    try:
        tol_m = float(rule.tolerance_m(total_um * 1e-6))
        return tol_m * 1e6, str(getattr(rule, "source", "catalog fabrication rule"))
    except Exception:  # noqa: BLE001 - a missing or different rule: say so on the sheet
        return None, "catalog rule not available: agree with the fabricator"


def impedance_tolerance(front: Mapping[str, Any], line: Mapping[str, Any], catalog: Any | None,
                        entry: Mapping[str, Any] | None = None, where: str = "line"
                        ) -> tuple[float | None, str, str]:
    """(tolerance in percent, key, note).

    ``entry`` is the study's own entry for this line (``study.lines[k]``; default ``study.line``) and
    ``where`` its path as the note names it (``lines[1]``) and the key prefix of front.json's figures.
    """
    for k in ("tolerance_pct", "impedance_tolerance_pct"):
        if isinstance(line.get(k), (int, float)):
            return float(line[k]), f"{where}.{k}", ""
    study = front.get("study") if isinstance(front.get("study"), Mapping) else {}
    if entry is None:
        entry = study.get("line") if isinstance(study.get("line"), Mapping) else {}
    tol = entry.get("tolerance") if isinstance(entry, Mapping) else None
    if isinstance(tol, (int, float)) and not isinstance(tol, bool):
        return float(tol), "", f"from the study ({where}.tolerance)"
    if isinstance(tol, str):
        m = re.fullmatch(r"\s*([0-9.]+)\s*%?\s*", tol)
        if m:
            return float(m.group(1)), "", f"from the study ({where}.tolerance)"
        classes = getattr(getattr(catalog, "fabrication", None), "impedance_tolerance", {}) if catalog else {}
        if tol in classes:
            return 100.0 * float(classes[tol]), "", f"catalog class '{tol}'"
    if catalog is not None:
        classes = getattr(getattr(catalog, "fabrication", None), "impedance_tolerance", {})
        if "standard" in classes:
            return 100.0 * float(classes["standard"]), "", "catalog class 'standard' (the study gives none)"
    return None, "", "not stated"


def width_tolerance(weight: str | None, catalog: Any | None) -> tuple[float | None, str]:
    """Relative etched-width tolerance for a copper weight (fraction) and its source."""
    fab = getattr(catalog, "fabrication", None) if catalog is not None else None
    table = getattr(fab, "width_tolerance", None) or {}
    if weight in table:
        src = (getattr(fab, "sources", {}) or {}).get("width_tolerance") or "catalog fabrication: width_tolerance"
        return float(table[weight]), f"catalog fabrication, {weight} copper: {src}"
    return None, "not in catalog: agree with the fabricator"


def min_feature_um(weight: str | None, catalog: Any | None) -> tuple[float | None, float | None]:
    """The fabricator's minimum etched trace and space for a copper weight, um (None when unknown)."""
    fab = getattr(catalog, "fabrication", None) if catalog is not None else None
    tr = (getattr(fab, "min_trace_m", None) or {}).get(weight)
    sp = (getattr(fab, "min_space_m", None) or {}).get(weight)
    return (None if tr is None else round(float(tr) * 1e6, 3)), (None if sp is None else round(float(sp) * 1e6, 3))


def dk_frequency_ghz(material: Any, catalog: Any | None) -> float | None:
    """The frequency (GHz) at which the catalog gives a dielectric's Dk and Df."""
    rec = getattr(catalog, "dielectrics", {}).get(material) if catalog is not None else None
    f = getattr(rec, "dk_frequency_hz", None)
    return None if f is None else round(float(f) / 1e9, 6)


_GAP_MATERIAL = re.compile(r"^\s*(?P<name>\S+)\s+(?P<t>[0-9.]+)\s*um\s*$")


def bonded_build(cand: Mapping[str, Any]) -> dict[int, str]:
    """For each air-gap layer (by index), what fills it outside the bend, from the candidate's choices.

    An air gap between copper layers L(i) and L(i+1) lies in gap ``i`` of the stack (``film[i-1]`` and
    ``adhesive[i-1]`` in ``choices``, 0-based); the gap's adhesive, film, or both, whichever matches the
    air gap's thickness, bond the leaves outside the bend. Otherwise: "bond material to be agreed".
    """
    layers = cand.get("layers") or []
    choices = cand.get("choices") if isinstance(cand.get("choices"), Mapping) else {}
    out: dict[int, str] = {}
    n_cu = 0
    for j, lay in enumerate(layers):
        if lay.get("kind") == "copper":
            n_cu += 1
            continue
        if lay.get("kind") != "air-gap":
            continue
        g = n_cu - 1
        parts = []
        for key in (f"film[{g}]", f"adhesive[{g}]"):
            m = _GAP_MATERIAL.match(str(choices.get(key) or ""))
            if m:
                parts.append((f"{m.group('name')} {m.group('t')} um", float(m.group("t"))))
        t = lay.get("thickness_um")
        match = [p for p in ([parts[-1]] if parts else []) + [parts[0]] * (len(parts) == 2)
                 if is_num(t) and abs(p[1] - t) < 1e-6]
        if len(parts) == 2 and is_num(t) and abs(parts[0][1] + parts[1][1] - t) < 1e-6:
            text = f"{parts[0][0]} + {parts[1][0]}"
        elif match:
            text = match[0][0]
        else:
            text = "bond material to be agreed"
        out[j] = f"{text} ({t} um)" if is_num(t) else text
    return out


def leaf_of_layers(layers: list[Mapping[str, Any]]) -> list[int | None]:
    """Leaf number (1 = top) of each layer in an unbonded bend; None for air gaps."""
    out: list[int | None] = []
    leaf = 1
    for lay in layers:
        if lay.get("kind") == "air-gap":
            out.append(None)
            if out and len(out) > 1 and out[-2] is not None:
                leaf += 1
            continue
        out.append(leaf)
    return out


__all__ = ["weight_of", "foil_of", "rel_tolerance", "total_tolerance_um", "impedance_tolerance", "width_tolerance",
           "min_feature_um", "dk_frequency_ghz", "bonded_build", "leaf_of_layers"]
