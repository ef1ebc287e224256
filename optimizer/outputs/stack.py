"""Where things sit in a candidate's stack: layer heights, material families, signal and reference layers."""
from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

from strainline.optimizer.outputs.formatting import is_num

#: Material families the report colours, with the palette of ``static/report.css`` (the page reads the
#: CSS custom properties ``--family-<name>``; these values are its fallback). Okabe-Ito colour-blind-safe
#: hues, lightened, one per family; copper stays copper-coloured (reason in report.css).
FAMILY_COLOURS: dict[str, str] = {
    "copper": "#b87333",
    "film": "#9fd3f0",
    "adhesive": "#f6ee9a",
    "core": "#7fb3d9",
    "laminate": "#7fcfb9",
    "cover": "#e6b8d3",
    "stiffener": "#b3b3b3",
    "air-gap": "#ffffff",
    "other": "#dddddd",
}


def family_of(layer: Mapping[str, Any], catalog: Any | None = None) -> str:
    """Material family of a layer: copper, air-gap, or the catalog family of its dielectric."""
    kind = layer.get("kind")
    if kind == "copper":
        return "copper"
    if kind == "air-gap":
        return "air-gap"
    mat = str(layer.get("material") or "")
    if catalog is not None:
        rec = getattr(catalog, "dielectrics", {}).get(mat)
        if rec is not None:
            return str(rec.family)
    for fam in ("adhesive", "core", "stiffener", "laminate", "cover", "film"):
        if fam in mat:
            return fam
    return "other"


def layer_heights(layers: Sequence[Mapping[str, Any]]) -> list[tuple[float, float]]:
    """(bottom_um, top_um) of each layer (top to bottom), heights from the bottom face of the stack.

    Uses the layers' own ``y_bottom_um``/``y_top_um`` when every layer gives them, else stacks the
    thicknesses from the bottom face.
    """
    if layers and all(is_num(lay.get("y_bottom_um")) and is_num(lay.get("y_top_um")) for lay in layers):
        return [(float(lay["y_bottom_um"]), float(lay["y_top_um"])) for lay in layers]
    t = [float(lay.get("thickness_um") or 0.0) for lay in layers]
    out: list[tuple[float, float]] = []
    top = sum(t)
    for ti in t:
        out.append((top - ti, top))
        top -= ti
    return out


def signal_index(cand: Mapping[str, Any]) -> int | None:
    """Index (top to bottom) of the copper layer carrying the line, or None."""
    line = cand.get("line") or {}
    layers = cand.get("layers") or []
    ref = line.get("layer")
    copper = [i for i, lay in enumerate(layers) if lay.get("kind") == "copper"]
    if isinstance(ref, str):
        for i, lay in enumerate(layers):
            if lay.get("name") == ref:
                return i
        m = re.fullmatch(r"[Ll](\d+)", ref.strip())
        if m and 1 <= int(m.group(1)) <= len(copper):
            return copper[int(m.group(1)) - 1]
    if isinstance(ref, int) and not isinstance(ref, bool):
        # an integer: the copper-layer number counted from the top (1-based), or 0-based if 0 given
        k = ref - 1 if ref >= 1 else ref
        if 0 <= k < len(copper):
            return copper[k]
    roles = [i for i in copper if str(layers[i].get("role", "")).startswith("signal")]
    return roles[0] if roles else None


def reference_indices(cand: Mapping[str, Any]) -> list[int]:
    """Copper layers the line refers to: the nearest copper above (striplines) and below.

    Given names in ``line.reference_planes`` / ``line.reference_layers`` win; else derived from the
    line type: microstrip and coplanar (conductor-backed) use the nearest copper below (or above when
    the line sits on the bottom face), striplines both neighbours.
    """
    line = cand.get("line") or {}
    layers = cand.get("layers") or []
    names = line.get("reference_planes") or line.get("reference_layers")
    if isinstance(names, list) and names:
        idx = [i for i, lay in enumerate(layers) if lay.get("name") in names]
        if idx:
            return idx
    s = signal_index(cand)
    if s is None:
        return []
    above = next((i for i in range(s - 1, -1, -1) if layers[i].get("kind") == "copper"), None)
    below = next((i for i in range(s + 1, len(layers)) if layers[i].get("kind") == "copper"), None)
    kind = str(line.get("type", ""))
    geom = line.get("geometry") or {}
    if "stripline" in kind:
        return [i for i in (above, below) if i is not None]
    if kind == "coplanar" and geom.get("bottom_ground") is False:
        return [s]
    if below is not None and above is None:
        return [below]
    if above is not None and below is None:
        return [above]
    return [i for i in (below,) if i is not None] or [i for i in (above,) if i is not None]


def fill_family(layer: Mapping[str, Any], catalog: Any | None) -> str | None:
    """Family of the material filling a partly covered copper layer, when the front names it."""
    fill = layer.get("fill") or layer.get("fill_material")
    if layer.get("kind") != "copper" or not isinstance(fill, str):
        return None
    return family_of({"kind": "dielectric", "material": fill}, catalog)


__all__ = ["FAMILY_COLOURS", "family_of", "fill_family", "layer_heights", "signal_index", "reference_indices"]
