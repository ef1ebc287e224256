"""The interactive report: one self-contained ``report.html`` per solved study.

The page embeds the whole front as JSON and draws it with plotly.js (inlined, so it works offline
and makes no network request): the Pareto front coloured by a chosen quantity, the cross-section
and strain profile of the selected candidate, a per-layer table, a parallel-coordinates view of the
decision variables and a sortable table of all candidates, under the study's inputs, the search
summary and the cautions.

Public API
----------
``load_front(folder_or_file) -> dict``      read and check ``front.json`` (InputError on bad input)
``build_report_html(front) -> str``        the page as text (nothing written)
``write_report(front, out_dir) -> Path``   ``out_dir/report.html``, written atomically
``write_all(front, out_dir) -> list[Path]`` report and handoff sheets (the solver's hook)
"""
from __future__ import annotations

import html
import json
import math
import os
import re
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from strainline.optimizer.errors import InputError
from strainline.optimizer.outputs.fileio import write_atomic

#: The caution every output a person could trust for a bending product carries.
CAUTION = (
    "Estimates for concept work only. Verify every candidate with the fabricator's impedance "
    "modelling and test coupons, and with flex testing (IPC-TM-650 methods); defer to IPC-2223 and "
    "IPC-6013, local codes and licensed engineering practice."
)

#: How strain is reported everywhere (DESIGN.md section 3).
STRAIN_CONVENTION = (
    "Strain in percent, tension positive; the inner face of the bend is in compression. A fibre at "
    "height y (from the bottom face) bent with the bottom face inside at inner radius R, neutral axis "
    "at y_na: strain = (y - y_na) / (R + y_na)."
)

_NUM_UNIT = re.compile(r"^\s*(-?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?)\s*([A-Za-z%/]*)\s*$")
_ID_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,79}$")

#: Material families and the colours this report gives them (our own palette).
FAMILY_COLOURS: dict[str, str] = {
    "copper": "#b5652d",
    "film": "#e4c77b",
    "adhesive": "#a9d3bd",
    "core": "#d6a85c",
    "laminate": "#9db3d3",
    "cover": "#c3b1dd",
    "stiffener": "#9a9a9a",
    "air-gap": "#ffffff",
    "other": "#d0d0d0",
}


# ----------------------------------------------------------------------------- reading front.json
def _clean(value: Any) -> Any:
    """JSON-safe copy: non-finite floats become None (JSON.parse rejects NaN)."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, Mapping):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    return value


def _num(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def check_front(front: Any, where: str = "front.json") -> dict:
    """Check the parts of a front the report and the sheets rely on; raise InputError naming the field.

    Parameters
    ----------
    front : object
        The parsed ``front.json``.
    where : str
        File name used in the messages.

    Returns
    -------
    dict
        ``front`` itself (non-finite floats replaced by None).
    """
    if not isinstance(front, Mapping):
        raise InputError(f"expected a JSON object at the top level, got {type(front).__name__}", where)
    cands = front.get("candidates")
    if not isinstance(cands, list):
        raise InputError("missing 'candidates' (a list of front candidates)", f"{where}: candidates")
    seen: set[str] = set()
    for i, c in enumerate(cands):
        field = f"{where}: candidates[{i}]"
        if not isinstance(c, Mapping):
            raise InputError("expected an object", field)
        cid = c.get("id")
        if not isinstance(cid, str) or not _ID_RE.match(cid):
            raise InputError(f"id {cid!r} must be 1-80 letters, digits, '.', '_' or '-'", f"{field}.id")
        if cid in seen:
            raise InputError(f"duplicate id {cid!r}", f"{field}.id")
        seen.add(cid)
        obj = c.get("objectives")
        if not isinstance(obj, Mapping) or not obj:
            raise InputError("missing 'objectives' (a non-empty object)", f"{field}.objectives")
        for key, value in obj.items():
            if value is not None and not _num(value):
                raise InputError(f"{key!r} is not a number: {value!r}", f"{field}.objectives.{key}")
        for key in ("peak_strain_pct", "total_thickness_um"):
            bend = c.get("bend") if isinstance(c.get("bend"), Mapping) else {}
            alt = "peak_copper_strain_pct" if key == "peak_strain_pct" else key
            if not _num(obj.get(key)) and not _num(bend.get(alt)):
                raise InputError(f"missing or non-numeric {key!r} (nor bend.{alt}): {obj.get(key)!r}",
                                 f"{field}.objectives.{key}")
        layers = c.get("layers")
        if not isinstance(layers, list) or not layers:
            raise InputError("missing 'layers' (a non-empty list, top to bottom)", f"{field}.layers")
        for j, lay in enumerate(layers):
            lf = f"{field}.layers[{j}]"
            if not isinstance(lay, Mapping):
                raise InputError("expected an object", lf)
            if not _num(lay.get("thickness_um")) or lay["thickness_um"] < 0:
                raise InputError(f"thickness_um {lay.get('thickness_um')!r} must be a number >= 0", f"{lf}.thickness_um")
            if lay.get("kind") not in ("dielectric", "copper", "air-gap"):
                raise InputError(f"kind {lay.get('kind')!r} is not one of ['dielectric', 'copper', 'air-gap']",
                                 f"{lf}.kind")
        for part in ("line", "bend"):
            if part in c and not isinstance(c[part], Mapping):
                raise InputError("expected an object", f"{field}.{part}")
    return _clean(front)


def load_front(path: str | Path) -> dict:
    """Read ``front.json`` (or ``DIR/front.json``) and check it.

    Raises
    ------
    InputError
        Missing file, invalid JSON or a front missing what the report needs; one line naming the file
        and the field.
    """
    path = Path(path)
    if path.is_dir():
        path = path / "front.json"
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError("file not found (run `strainline solve` first)", str(path)) from None
    except (IsADirectoryError, PermissionError, UnicodeDecodeError, NotADirectoryError) as exc:
        raise InputError(f"cannot read: {exc.__class__.__name__}", str(path)) from None
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"not valid JSON at line {exc.lineno} column {exc.colno}: {exc.msg}", str(path)) from None
    return check_front(data, str(path))


# ----------------------------------------------------------------------------- derived per-candidate data
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
    if layers and all(_num(lay.get("y_bottom_um")) and _num(lay.get("y_top_um")) for lay in layers):
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
            dims.append({"label": str(k), "values": [g[k] for g in given]})
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
        numeric = all(_num(v) or v is None for v in vals)
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


def study_value(front: Mapping[str, Any], *path: str) -> Any:
    node: Any = front.get("study")
    for key in path:
        if not isinstance(node, Mapping):
            return None
        node = node.get(key)
    return node


def strain_limit_pct(front: Mapping[str, Any]) -> float | None:
    """The study's copper strain limit in percent, when it states one."""
    for path in (("limits", "peak_strain_pct"), ("limits", "strain_pct"), ("limits", "max_strain_pct")):
        v = study_value(front, *path)
        if _num(v):
            return float(v)
    v = (front.get("limits") or {}).get("peak_strain_pct") if isinstance(front.get("limits"), Mapping) else None
    return float(v) if _num(v) else None


def strain_limits(front: Mapping[str, Any], catalog: Any | None) -> tuple[list[float | None], str]:
    """Per candidate, the copper strain limit (percent) to mark on its strain profile, and its basis.

    The study's own ``limits.peak_strain_pct`` when it gives one. Else, for dynamic use with a cycle
    count, the peak strain whose Engelmaier strain range (IPC-TM-650 2.4.2.1 form, as in
    :func:`strainline.models.fatigue.engelmaier_strain_range`) gives that many cycles for the weakest
    copper foil of the candidate (range = peak for flat-to-bent motion, 2 x peak when reversed). Else, for
    an install bend, about 2 % (common practice, no source).
    """
    cands = front.get("candidates") or []
    given = strain_limit_pct(front)
    if given is not None:
        return [given] * len(cands), "the study's strain limit (limits.peak_strain_pct)"
    use = study_value(front, "bend", "use")
    cycles = study_value(front, "bend", "cycles") or study_value(front, "limits", "min_cycles")
    motion = study_value(front, "bend", "motion") or "flat-to-bent"
    if cands and isinstance(cands[0].get("bend"), Mapping):
        use = cands[0]["bend"].get("use", use)
        cycles = cands[0]["bend"].get("required_cycles", cycles)
        motion = cands[0]["bend"].get("motion", motion)
    from strainline.models import rules

    if use == "dynamic" and _num(cycles) and catalog is not None:
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


def study_name(front: Mapping[str, Any]) -> str:
    st = front.get("study")
    if isinstance(st, Mapping):
        return str(st.get("name") or st.get("file") or "study")
    return str(st) if st else "study"


def cautions(front: Mapping[str, Any]) -> list[str]:
    """Our caution first, then the front's own caution text(s) when they say something else."""
    out = [CAUTION]
    extra = front.get("caution") or front.get("cautions")
    items = extra if isinstance(extra, list) else [extra] if extra else []
    ours = set(re.findall(r"[a-z0-9-]+", CAUTION.lower()))
    for item in items:
        text = str(item).strip()
        words = re.findall(r"[a-z0-9-]+", text.lower())
        new = [w for w in words if w not in ours]
        if text and text not in out and len(new) > 0.2 * len(words):   # says more than ours
            out.append(text)
    return out


def figure(cand: Mapping[str, Any], key: str) -> tuple[float, str]:
    """Peak copper strain or total thickness of a candidate and the front.json field it comes from.

    The objectives hold them when the study optimises them; else the bend block does
    (``bend.peak_copper_strain_pct``, ``bend.total_thickness_um``).
    """
    obj = cand.get("objectives") or {}
    if _num(obj.get(key)):
        return float(obj[key]), f"objectives.{key}"
    alt = "peak_copper_strain_pct" if key == "peak_strain_pct" else key
    return float(cand["bend"][alt]), f"bend.{alt}"


def findings_of(cand: Mapping[str, Any]) -> list[dict[str, str]]:
    """Findings as dicts {code, severity, message, source}; plain strings are accepted."""
    out = []
    for f in cand.get("findings") or []:
        if isinstance(f, Mapping):
            out.append({"code": str(f.get("code") or ""), "severity": str(f.get("severity") or "note"),
                        "message": str(f.get("message") or f.get("text") or ""),
                        "source": str(f.get("source") or "")})
        else:
            out.append({"code": "", "severity": "note", "message": str(f), "source": ""})
    return out


def _fill_family(layer: Mapping[str, Any], catalog: Any | None) -> str | None:
    """Family of the material filling a partly covered copper layer, when the front names it."""
    fill = layer.get("fill") or layer.get("fill_material")
    if layer.get("kind") != "copper" or not isinstance(fill, str):
        return None
    return family_of({"kind": "dielectric", "material": fill}, catalog)


def _infeasible_message(front: Mapping[str, Any]) -> str:
    search = front.get("search") if isinstance(front.get("search"), Mapping) else {}
    inf = search.get("infeasible")
    if isinstance(inf, Mapping):
        return str(inf.get("message") or "")
    return str(inf or "")


def _page_data(front: Mapping[str, Any], catalog: Any | None) -> dict[str, Any]:
    cands = front["candidates"]
    limits, limit_basis = strain_limits(front, catalog)
    view = []
    for c, lim in zip(cands, limits):
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
                            fill_family=_fill_family(lay, catalog))
                       for lay, (b, t) in zip(layers, hts)],
            "strain_limit_pct": lim,
            "signal": signal_index(c),
            "refs": reference_indices(c),
            "findings": findings_of(c),
        })
    objectives = [k for k in cands[0]["objectives"] if all(_num(c["objectives"].get(k)) for c in cands)] if cands else []
    true_objectives = list(objectives)
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
        "colours": FAMILY_COLOURS,
    }


# ----------------------------------------------------------------------------- HTML
def _e(x: Any) -> str:
    return html.escape("" if x is None else str(x))


def fmt(value: Any, digits: int = 4) -> str:
    """Display form of a number (``digits`` significant figures) or a value."""
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if _num(value):
        v = float(value)
        if v != 0 and (abs(v) >= 1e6 or abs(v) < 1e-3):
            return f"{v:.{digits - 1}e}"
        return f"{v:.{digits}g}"
    return str(value)


def _kv_table(data: Any, depth: int = 0) -> str:
    """A nested mapping as a plain definition table."""
    if isinstance(data, Mapping):
        rows = "".join(f"<tr><th>{_e(k)}</th><td>{_kv_table(v, depth + 1)}</td></tr>" for k, v in data.items())
        return f'<table class="kv">{rows}</table>'
    if isinstance(data, list):
        if all(not isinstance(v, (Mapping, list)) for v in data):
            return _e(", ".join(fmt(v) for v in data))
        return "".join(f"<div>{_kv_table(v, depth + 1)}</div>" for v in data)
    return _e(fmt(data))


def _json_for_script(data: Any) -> str:
    text = json.dumps(_clean(data), separators=(",", ":"), allow_nan=False)
    return text.replace("</", "<\\/").replace("<!--", "<\\!--")


def build_report_html(front: Mapping[str, Any], catalog: Any | None = None, plotly_js: str | None = None) -> str:
    """The report page as one self-contained HTML string.

    Parameters
    ----------
    front : mapping
        A checked front (see :func:`check_front`).
    catalog : Catalog, optional
        Used to name material families; ``load_catalog()`` when None (families are guessed from the
        material names if the catalog cannot be loaded).
    plotly_js : str, optional
        The plotly.js bundle to inline (default: the one shipped with the installed plotly).
    """
    front = check_front(front)
    if catalog is None:
        catalog = _try_catalog()
    if plotly_js is None:
        from plotly.offline import get_plotlyjs

        plotly_js = get_plotlyjs()
    data = _page_data(front, catalog)
    search = front.get("search") if isinstance(front.get("search"), Mapping) else {}
    from strainline.optimizer import __version__

    version = front.get("version") or __version__
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
    for k, v in search.items():
        if k not in ("method", "evaluated", "space_size", "feasible", "hypervolume", "reference_point", "seconds"):
            summary[k] = v
    caution_html = "".join(f"<p>{_e(t)}</p>" for t in cautions(front))
    study = front.get("study")
    study_html = _kv_table(study) if isinstance(study, Mapping) else f"<p>{_e(study)}</p>"
    title = f"strainline report: {study_name(front)}"
    return (_TEMPLATE
            .replace("%%TITLE%%", _e(title))
            .replace("%%CSS%%", _CSS)
            .replace("%%CAUTION%%", caution_html)
            .replace("%%CONVENTION%%", _e(STRAIN_CONVENTION))
            .replace("%%SEARCH%%", _kv_table(summary))
            .replace("%%STUDY%%", study_html)
            .replace("%%PLOTLY%%", plotly_js.replace("</script", "<\\/script"))
            .replace("%%DATA%%", _json_for_script(data))
            .replace("%%APP%%", _APP_JS))


def _try_catalog() -> Any | None:
    try:
        from strainline.optimizer.inputs.catalog import load_catalog

        return load_catalog()
    except Exception:  # noqa: BLE001 - the report still draws without it (families guessed)
        return None


def write_report(front: Mapping[str, Any], out_dir: str | Path, catalog: Any | None = None) -> Path:
    """Write ``out_dir/report.html`` atomically and return its path."""
    text = build_report_html(front, catalog)
    return _write_readable(Path(out_dir) / "report.html", text)


def write_all(front: Mapping[str, Any], out_dir: str | Path, catalog: Any | None = None) -> list[Path]:
    """Write ``report.html`` and ``handoff/`` for ``front`` into ``out_dir``; return the paths written.

    Everything is built in memory first, so a failure leaves the previous files untouched.
    """
    from strainline.optimizer.outputs.sheets import build_handoff, write_handoff_files

    front = check_front(front)
    if catalog is None:
        catalog = _try_catalog()
    report_text = build_report_html(front, catalog)
    files = build_handoff(front, catalog)
    paths = write_handoff_files(files, Path(out_dir) / "handoff")
    paths.append(_write_readable(Path(out_dir) / "report.html", report_text))
    return paths


def _write_readable(path: Path, text: str) -> Path:
    """write_atomic, then the usual 0644 permissions (the temporary file was created private)."""
    written = write_atomic(path, text)
    os.chmod(written, 0o644)
    return written


_CSS = r"""
:root { --ink:#1d2430; --muted:#5c6675; --line:#d9dee6; --accent:#2c6e8f; --warn:#8a5a00; }
* { box-sizing: border-box; }
body { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", sans-serif; color: var(--ink); margin: 0;
       background: #f6f7f9; }
header { background: #23313f; color: #fff; padding: 14px 22px; }
header h1 { margin: 0; font-size: 20px; font-weight: 600; }
header .sub { color: #c9d3de; font-size: 13px; }
main { padding: 14px 22px 40px; max-width: 1500px; margin: 0 auto; }
section.card { background: #fff; border: 1px solid var(--line); border-radius: 6px; padding: 12px 16px;
               margin: 12px 0; }
h2 { font-size: 16px; margin: 2px 0 8px; color: #23313f; }
.caution { border-left: 5px solid #c98a1b; background: #fff8e8; }
.caution p { margin: 4px 0; }
.row { display: flex; gap: 14px; flex-wrap: wrap; }
.row > div { flex: 1 1 460px; min-width: 360px; }
.plot { width: 100%; height: 430px; }
.plot.small { height: 380px; }
.controls { display: flex; gap: 14px; align-items: center; flex-wrap: wrap; margin-bottom: 6px;
            font-size: 13px; }
.controls button { border: 1px solid var(--line); background: #f2f5f8; padding: 3px 9px; border-radius: 4px;
                   cursor: pointer; font: inherit; }
.controls button.on { background: var(--accent); color: #fff; border-color: var(--accent); }
table { border-collapse: collapse; font-size: 12.5px; }
table.grid { width: 100%; }
table.grid th, table.grid td { border-bottom: 1px solid var(--line); padding: 3px 7px; text-align: right;
                               white-space: nowrap; }
table.grid th:first-child, table.grid td:first-child { text-align: left; }
table.grid td.t, table.grid th.t { text-align: left; }
table.grid thead th { background: #eef1f5; position: sticky; top: 0; cursor: pointer; user-select: none; }
table.grid thead th.asc::after { content: " \25B2"; font-size: 9px; }
table.grid thead th.desc::after { content: " \25BC"; font-size: 9px; }
table.grid tbody tr:hover { background: #eef6fb; cursor: pointer; }
table.grid tbody tr.sel { background: #dcecf6; }
table.kv th { text-align: left; vertical-align: top; padding: 1px 10px 1px 0; color: var(--muted);
              font-weight: 500; }
table.kv td { padding: 1px 0; }
.wrap { overflow-x: auto; max-height: 460px; overflow-y: auto; }
.note { color: var(--muted); font-size: 12.5px; }
.find { margin: 2px 0; font-size: 13px; }
.find .sev { font-weight: 600; text-transform: uppercase; font-size: 11px; margin-right: 6px; color: var(--warn); }
.legend span { display: inline-block; margin-right: 12px; font-size: 12px; }
.legend i { display: inline-block; width: 14px; height: 10px; border: 1px solid #777; margin-right: 4px;
            vertical-align: -1px; }
footer { color: var(--muted); font-size: 12px; padding: 10px 22px 24px; text-align: center; }
"""

_TEMPLATE = r"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>%%TITLE%%</title>
<style>%%CSS%%</style>
<script>%%PLOTLY%%</script>
</head>
<body>
<header><h1>%%TITLE%%</h1>
<div class="sub">Pareto front of buildable stackups: copper strain in the bend against thickness and the
other objectives. Click a point or a table row to inspect a candidate.</div></header>
<main>
<section class="card caution" id="cautions"><h2>Caution</h2>%%CAUTION%%</section>

<section class="card" id="front-card"><h2>Pareto front</h2>
<div class="controls">
  <span id="pair-buttons"></span>
  <label>colour by <select id="colour-by"></select></label>
  <span class="note" id="front-note"></span>
</div>
<div id="front" class="plot"></div>
</section>

<section class="card" id="candidate-card"><h2 id="cand-title">Candidate</h2>
<div class="row">
  <div><div id="section" class="plot small"></div><div class="legend" id="legend"></div></div>
  <div><div id="strain" class="plot small"></div></div>
</div>
<p class="note">%%CONVENTION%%</p>
<div id="cand-figures" class="note"></div>
<div class="wrap"><table class="grid" id="layer-table"></table></div>
<div id="cand-findings"></div>
</section>

<section class="card"><h2>Decision variables across the front</h2>
<div id="parcoords" class="plot"></div></section>

<section class="card"><h2>All candidates</h2>
<p class="note">Click a column heading to sort; click a row to inspect the candidate. The sheet link opens
the fabricator handoff sheet.</p>
<div class="wrap"><table class="grid" id="cand-table"></table></div></section>

<div class="row">
<section class="card"><h2>Search</h2>%%SEARCH%%</section>
<section class="card"><h2>Study inputs</h2>%%STUDY%%</section>
</div>
</main>
<footer>Generated by strainline. %%CAUTION%%</footer>
<script type="application/json" id="strainline-data">%%DATA%%</script>
<script>%%APP%%</script>
</body>
</html>
"""

_APP_JS = r"""
(function () {
'use strict';
var D = JSON.parse(document.getElementById('strainline-data').textContent);
var C = D.candidates;
var LABELS = {peak_strain_pct: 'peak copper strain (%)', total_thickness_um: 'total thickness (um)',
  signal_strain_pct: 'signal copper strain (%)', loss_db_per_m: 'loss (dB/m)', cycles: 'cycles',
  cycles_to_failure: 'cycles to failure', width_um: 'trace width (um)'};
function label(k) { return LABELS[k] || k.replace(/_/g, ' '); }
function fmt(v, d) {
  if (v === null || v === undefined) return '-';
  if (Array.isArray(v)) return v.map(function (x) { return fmt(x, d); }).join(' / ');
  if (typeof v !== 'number') return String(v);
  d = d || 4;
  var a = Math.abs(v);
  if (v !== 0 && (a >= 1e6 || a < 1e-3)) return v.toExponential(d - 1);
  return String(Number(v.toPrecision(d)));
}
function esc(s) { return String(s).replace(/[&<>"]/g, function (c) {
  return {'&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;'}[c]; }); }
var TO = D.true_objectives || D.objectives;
var state = {x: 'total_thickness_um', y: 'peak_strain_pct', colour: null, selected: 0};
if (TO.indexOf('peak_strain_pct') < 0 && TO.length >= 2) {
  // peak strain is not optimised in this study: open on a pair of its own objectives
  var strainKey = TO.filter(function (k) { return /strain/.test(k); })[0];
  if (strainKey && TO.indexOf('total_thickness_um') >= 0) { state.y = strainKey; state.x = 'total_thickness_um'; }
  else { state.y = TO[0]; state.x = TO[1]; }
}
window.strainline = {data: D, state: state, select: select, renders: 0};

// ----- colour quantities
var colourOpts = [];
D.objectives.forEach(function (k) { colourOpts.push({key: k, get: function (c) { return c.objectives[k]; }}); });
function addOpt(key, get) {
  if (C.length && C.every(function (c) { var v = get(c); return typeof v === 'number'; }) &&
      !colourOpts.some(function (o) { return o.key === key; })) colourOpts.push({key: key, get: get});
}
addOpt('cycles_to_failure', function (c) { return c.bend.cycles_to_failure; });
addOpt('width_um', function (c) { return c.line.width_um; });
addOpt('signal_strain_pct', function (c) { return c.objectives.signal_strain_pct; });
var sel = document.getElementById('colour-by');
colourOpts.forEach(function (o) {
  var op = document.createElement('option'); op.value = o.key; op.textContent = label(o.key); sel.appendChild(op);
});
var pref = ['loss_db_per_m', 'cycles_to_failure', 'cycles', 'width_um'];
for (var i = 0; i < pref.length; i++) {
  if (colourOpts.some(function (o) { return o.key === pref[i]; })) { state.colour = pref[i]; break; }
}
if (!state.colour && colourOpts.length) state.colour = colourOpts[0].key;
sel.value = state.colour;
sel.addEventListener('change', function () { state.colour = sel.value; drawFront(); if (pcDrawn) drawParcoords(); });
var pcDrawn = false;
function colourValues() {
  var o = colourOpts.filter(function (o) { return o.key === state.colour; })[0];
  if (!o) return {vals: C.map(function () { return 0; }), title: '', log: false};
  var vals = C.map(o.get);
  var log = /cycles/.test(o.key) && vals.every(function (v) { return v > 0; });
  return {vals: log ? vals.map(function (v) { return Math.log10(v); }) : vals,
          title: log ? 'log10 ' + label(o.key) : label(o.key), log: log};
}

// ----- objective pairs
var pairs = [];
var obj = D.objectives;
for (var a = 0; a < obj.length; a++) for (var b = a + 1; b < obj.length; b++) pairs.push([obj[a], obj[b]]);
pairs = pairs.map(function (p) { return (/strain/.test(p[0]) && !/strain/.test(p[1])) || p[0] === 'peak_strain_pct' ? [p[1], p[0]] : p; });
var pb = document.getElementById('pair-buttons');
if (obj.length >= 3) {
  pb.appendChild(document.createTextNode('objectives: '));
  pairs.forEach(function (p) {
    var bt = document.createElement('button');
    bt.textContent = label(p[1]) + ' vs ' + label(p[0]);
    bt.className = 'pair';
    bt.addEventListener('click', function () { state.x = p[0]; state.y = p[1]; drawFront(); });
    bt.dataset.x = p[0]; bt.dataset.y = p[1];
    pb.appendChild(bt);
  });
}
function markPairs() {
  Array.prototype.forEach.call(pb.querySelectorAll('button'), function (bt) {
    bt.classList.toggle('on', bt.dataset.x === state.x && bt.dataset.y === state.y);
  });
  var off = [state.x, state.y].filter(function (k) { return TO.indexOf(k) < 0; });
  document.getElementById('front-note').textContent = (D.dominated.length ?
    'Faint grey: dominated feasible points kept by the run. ' : '') + (off.length ?
    label(off[0]) + ' is not an objective of this study, so some front points look dominated in this view.' : '');
}

function hoverText(c) {
  var o = c.objectives, l = c.line, bd = c.bend;
  var t = '<b>' + esc(c.id) + '</b>';
  Object.keys(o).forEach(function (k) { t += '<br>' + esc(label(k)) + ': ' + fmt(o[k]); });
  if (l.width_um !== undefined) t += '<br>width: ' + fmt(l.width_um) + ' um';
  if (l.gap_um !== null && l.gap_um !== undefined) t += ', gap ' + fmt(l.gap_um) + ' um';
  if (l.z0_ohm !== null && l.z0_ohm !== undefined && !l.z_diff_ohm) t += '<br>Z0: ' + fmt(l.z0_ohm) + ' ohm';
  if (l.z_diff_ohm) t += '<br>Zdiff: ' + fmt(l.z_diff_ohm) + ' ohm';
  if (bd.cycles_to_failure) t += '<br>cycles to failure: ' + fmt(bd.cycles_to_failure, 3);
  if (bd.radius_to_thickness) t += '<br>R / thickness: ' + fmt(bd.radius_to_thickness, 3);
  return t;
}

function drawFront() {
  markPairs();
  var cv = colourValues();
  var traces = [];
  if (D.dominated.length) {
    traces.push({type: 'scatter', mode: 'markers', name: 'dominated', hoverinfo: 'skip',
      x: D.dominated.map(function (d) { return d[state.x]; }), y: D.dominated.map(function (d) { return d[state.y]; }),
      marker: {size: 6, color: 'rgba(120,130,140,0.22)'}});
  }
  var order = C.map(function (c, i) { return i; }).sort(function (i, j) { return C[i].objectives[state.x] - C[j].objectives[state.x]; });
  if (D.objectives.length === 2) traces.push({type: 'scatter', mode: 'lines', name: 'front', hoverinfo: 'skip',
    x: order.map(function (i) { return C[i].objectives[state.x]; }), y: order.map(function (i) { return C[i].objectives[state.y]; }),
    line: {color: 'rgba(44,110,143,0.25)', width: 1, shape: 'hv'}});
  traces.push({type: 'scatter', mode: 'markers', name: 'candidates',
    x: C.map(function (c) { return c.objectives[state.x]; }), y: C.map(function (c) { return c.objectives[state.y]; }),
    text: C.map(hoverText), hovertemplate: '%{text}<extra></extra>', customdata: C.map(function (c, i) { return i; }),
    marker: {size: 11, color: cv.vals, colorscale: 'Viridis', showscale: true, line: {width: 1, color: '#223'},
             colorbar: {title: {text: cv.title, side: 'right'}, thickness: 14}}});
  var s = C[state.selected];
  if (s) traces.push({type: 'scatter', mode: 'markers', name: 'selected', hoverinfo: 'skip',
    x: [s.objectives[state.x]], y: [s.objectives[state.y]],
    marker: {size: 20, color: 'rgba(0,0,0,0)', line: {width: 2.5, color: '#d1343b'}}});
  Plotly.react('front', traces, {
    margin: {l: 64, r: 10, t: 10, b: 48}, showlegend: false, hovermode: 'closest',
    xaxis: {title: {text: label(state.x)}, zeroline: false}, yaxis: {title: {text: label(state.y)}, zeroline: false},
    plot_bgcolor: '#fbfcfd'}, {displaylogo: false, responsive: true});
}

function pattern(cov, base) {
  if (cov >= 0.999) return undefined;
  return {shape: '/', solidity: Math.max(0.05, Math.min(0.95, cov)), fgcolor: D.colours.copper, bgcolor: base,
          fillmode: 'replace', size: 7};
}

function drawSection(c) {
  var L = c.layers, total = L.length ? L[0].top_um : 0;
  var w = c.line.width_um || 0, g = (c.line.gap_um === null || c.line.gap_um === undefined) ? 0 : c.line.gap_um;
  var pair = /coupled/.test(c.line.type || '');
  var cop = c.line.type === 'coplanar';
  var span = Math.max(total * 2.6, 4 * w + 3 * g, 100);
  var x0 = -span / 2, x1 = span / 2;
  var traces = [], anns = [];
  L.forEach(function (l, i) {
    var fam = l.family, col = D.colours[fam] || D.colours.other;
    var isCu = l.kind === 'copper';
    var base = isCu ? (D.colours[familyOfFill(c, i)] || '#eadfc8') : col;
    var tr = {type: 'scatter', mode: 'lines', x: [x0, x1, x1, x0, x0], y: [l.bottom_um, l.bottom_um, l.top_um, l.top_um, l.bottom_um],
      fill: 'toself', fillcolor: isCu && l.coverage < 0.999 ? base : col, line: {color: '#555', width: 0.6},
      name: l.name, hoveron: 'fills', hoverinfo: 'text',
      text: esc(l.name) + ' (' + esc(l.material) + ')<br>' + fmt(l.thickness_um) + ' um' +
        (isCu ? ', coverage ' + fmt(100 * l.coverage, 3) + ' %' : '')};
    if (l.kind === 'air-gap') tr.line = {color: '#888', width: 0.8, dash: 'dot'};
    if (isCu && l.coverage < 0.999 && i !== c.signal) tr.fillpattern = pattern(l.coverage, base);
    if (i === c.signal) tr.fillcolor = base;
    traces.push(tr);
  });
  var s = c.signal;
  if (s !== null && s !== undefined && L[s]) {
    var l = L[s], rects = [];
    if (pair) rects = [[-g / 2 - w, -g / 2], [g / 2, g / 2 + w]];
    else rects = [[-w / 2, w / 2]];
    if (cop) { rects.push([x0, -w / 2 - g]); rects.push([w / 2 + g, x1]); }
    rects.forEach(function (r, k) {
      var isSig = !cop || k === 0;
      traces.push({type: 'scatter', mode: 'lines', x: [r[0], r[1], r[1], r[0], r[0]],
        y: [l.bottom_um, l.bottom_um, l.top_um, l.top_um, l.bottom_um], fill: 'toself',
        fillcolor: isSig ? '#d1343b' : D.colours.copper, line: {color: '#611', width: 0.8},
        hoveron: 'fills', hoverinfo: 'text', name: isSig ? 'signal' : 'coplanar ground',
        text: (isSig ? 'signal trace ' : 'coplanar ground ') + fmt(w) + ' um wide'});
    });
    anns.push({x: rects[0][1], y: l.top_um, xref: 'x', yref: 'y', text: 'signal', showarrow: true, arrowhead: 0,
      ax: 30, ay: -22, font: {size: 11, color: '#a11'}});
  }
  (c.refs || []).forEach(function (r) {
    var l = L[r];
    if (!l || r === s) return;
    anns.push({x: x1, y: (l.top_um + l.bottom_um) / 2, xref: 'x', yref: 'y', text: 'reference: ' + esc(l.name),
      showarrow: true, arrowhead: 2, ax: 40, ay: 0, xanchor: 'left', font: {size: 11, color: '#1d4f91'}});
  });
  var na = c.bend.neutral_axis_um;
  var shapes = [];
  (Array.isArray(na) ? na : [na]).forEach(function (y) {
    if (typeof y !== 'number') return;
    shapes.push({type: 'line', x0: x0, x1: x1, y0: y, y1: y, line: {color: '#111', width: 1.6, dash: 'dash'}});
    anns.push({x: x0, y: y, text: 'neutral axis', showarrow: false, xanchor: 'left', yanchor: 'bottom', font: {size: 11}});
  });
  Plotly.react('section', traces, {
    title: {text: 'Cross-section to scale (' + esc(c.id) + ')', font: {size: 13}},
    margin: {l: 56, r: 170, t: 34, b: 40}, showlegend: false, hovermode: 'closest', shapes: shapes, annotations: anns,
    xaxis: {title: {text: 'width (um)'}, range: [x0, x1], zeroline: false, showgrid: false},
    yaxis: {title: {text: 'height from bottom face (um)'}, range: [-total * 0.04, total * 1.04], zeroline: false,
            scaleanchor: 'x', scaleratio: 1, showgrid: false},
    plot_bgcolor: '#fff'}, {displaylogo: false, responsive: true});
}

function familyOfFill(c, i) {
  var l = c.layers[i];
  if (l.fill_family) return l.fill_family;
  var nb = [c.layers[i + 1], c.layers[i - 1]].filter(function (x) { return x && x.kind === 'dielectric'; });
  var ad = nb.filter(function (x) { return x.family === 'adhesive'; });
  return (ad[0] || nb[0] || {family: 'other'}).family;
}

function drawStrain(c) {
  var L = c.layers, total = L.length ? L[0].top_um : 0;
  var traces = [], shapes = [], anns = [];
  L.forEach(function (l, i) {
    if (l.thickness_um <= 0 || l.kind === 'air-gap' || typeof l.strain_top_pct !== 'number') return;
    var isCu = l.kind === 'copper';
    traces.push({type: 'scatter', mode: isCu ? 'lines+markers' : 'lines', x: [l.strain_bottom_pct, l.strain_top_pct],
      y: [l.bottom_um, l.top_um], line: {color: isCu ? (i === c.signal ? '#d1343b' : D.colours.copper) : '#8896a5',
      width: isCu ? 4 : 1.5}, marker: {size: 7, symbol: 'diamond'}, name: l.name, hoverinfo: 'text',
      text: [esc(l.name) + ' bottom face: ' + fmt(l.strain_bottom_pct) + ' %', esc(l.name) + ' top face: ' + fmt(l.strain_top_pct) + ' %']});
  });
  var lim = c.strain_limit_pct;
  if (typeof lim === 'number') {
    [-lim, lim].forEach(function (x) {
      shapes.push({type: 'line', x0: x, x1: x, y0: 0, y1: total, line: {color: '#c0392b', width: 1.2, dash: 'dot'}});
    });
    anns.push({x: lim, y: total, text: 'strain limit +/-' + fmt(lim, 3) + ' %', showarrow: false, xanchor: 'right',
      yanchor: 'bottom', font: {size: 11, color: '#c0392b'}, hovertext: esc(D.strain_limit_basis)});
  }
  var na = c.bend.neutral_axis_um;
  (Array.isArray(na) ? na : [na]).forEach(function (y) {
    if (typeof y !== 'number') return;
    shapes.push({type: 'line', xref: 'paper', x0: 0, x1: 1, y0: y, y1: y, line: {color: '#111', width: 1.2, dash: 'dash'}});
  });
  shapes.push({type: 'line', x0: 0, x1: 0, y0: 0, y1: total, line: {color: '#bbb', width: 1}});
  Plotly.react('strain', traces, {
    title: {text: 'Strain through the thickness (' + esc(c.id) + ')', font: {size: 13}},
    margin: {l: 56, r: 12, t: 34, b: 40}, showlegend: false, hovermode: 'closest', shapes: shapes, annotations: anns,
    xaxis: {title: {text: 'strain (%), tension positive'}, zeroline: false},
    yaxis: {title: {text: 'height from bottom face (um)'}, range: [-total * 0.04, total * 1.04], zeroline: false},
    plot_bgcolor: '#fbfcfd'}, {displaylogo: false, responsive: true});
}

function drawLayerTable(c) {
  var cols = [['name', 'layer', 't'], ['kind', 'kind', 't'], ['material', 'material', 't'], ['thickness_um', 'thickness (um)'],
    ['modulus_gpa', 'E (GPa)'], ['effective_modulus_gpa', 'E eff. (GPa)'], ['coverage', 'coverage'], ['dk', 'Dk'], ['df', 'Df'],
    ['strain_top_pct', 'strain top (%)'], ['strain_bottom_pct', 'strain bottom (%)']];
  var h = '<thead><tr>' + cols.map(function (k) { return '<th class="' + (k[2] || '') + '">' + k[1] + '</th>'; }).join('') + '</tr></thead><tbody>';
  c.layers.forEach(function (l, i) {
    var tag = i === c.signal ? ' (signal)' : (c.refs.indexOf(i) >= 0 ? ' (reference)' : '');
    h += '<tr>' + cols.map(function (k) {
      var v = l[k[0]];
      if (k[0] === 'name') v = (v || '') + tag;
      return '<td class="' + (k[2] || '') + '">' + esc(fmt(v)) + '</td>';
    }).join('') + '</tr>';
  });
  document.getElementById('layer-table').innerHTML = h + '</tbody>';
  var f = c.findings.map(function (x) {
    return '<div class="find"><span class="sev">' + esc(x.severity) + '</span>' + esc(x.message) +
      (x.source ? ' <span class="note">[' + esc(x.source) + ']</span>' : '') + '</div>';
  }).join('');
  document.getElementById('cand-findings').innerHTML = f ? '<h2>Findings</h2>' + f : '';
  var l = c.line, bd = c.bend, o = c.objectives;
  var parts = [];
  parts.push('line: ' + esc(l.type || '-') + ' on ' + esc(l.layer_name || (l.layer === undefined ? '-' : 'copper layer ' + l.layer)) + ', width ' + fmt(l.width_um) + ' um' +
    (l.gap_um !== null && l.gap_um !== undefined ? ', gap ' + fmt(l.gap_um) + ' um' : ''));
  if (l.z_diff_ohm) parts.push('Zdiff ' + fmt(l.z_diff_ohm) + ' ohm'); else if (l.z0_ohm) parts.push('Z0 ' + fmt(l.z0_ohm) + ' ohm');
  parts.push('bend: inner radius ' + fmt(bd.inner_radius_mm) + ' mm, ' + esc(bd.inside || '-') + ' face inside, ' +
    esc(bd.region || '-') + ', neutral axis ' + fmt(bd.neutral_axis_um) + ' um' +
    (Array.isArray(bd.neutral_axis_um) ? ' (one per bonded leaf, top to bottom)' : ''));
  if (bd.cycles_to_failure) parts.push('cycles to failure ' + fmt(bd.cycles_to_failure, 3));
  if (typeof c.strain_limit_pct === 'number') parts.push('strain limit +/-' + fmt(c.strain_limit_pct, 3) + ' % (' +
    esc(D.strain_limit_basis) + ')');
  var fc = l.field_check;
  if (fc && !fc.error) {
    var zf = fc.z_diff_ohm !== undefined && fc.z_diff_ohm !== null ? fc.z_diff_ohm : fc.z0_ohm;
    parts.push('field check: ' + fmt(zf) + ' ohm at this width (closed form ' +
      (fc.closed_form_error_pct >= 0 ? '+' : '') + fmt(fc.closed_form_error_pct, 3) + ' %), refined width ' +
      fmt(fc.width_um) + ' um' + (fc.refined_width_in_range ? '' : ' (outside the width range)'));
  } else if (fc && fc.error) {
    parts.push('field check not possible: ' + esc(fc.error));
  }
  parts.push('<a href="handoff/' + encodeURIComponent(c.id) + '.html">fabricator sheet</a>');
  document.getElementById('cand-figures').innerHTML = parts.join(' &middot; ');
  document.getElementById('cand-title').textContent = 'Candidate ' + c.id + ': peak copper strain ' +
    fmt(o.peak_strain_pct) + ' %, ' + fmt(o.total_thickness_um) + ' um thick';
  var leg = ['copper', 'film', 'adhesive', 'core', 'laminate', 'cover', 'stiffener', 'air-gap'].filter(function (fm) {
    return c.layers.some(function (x) { return x.family === fm; }); });
  document.getElementById('legend').innerHTML = leg.map(function (fm) {
    return '<span><i style="background:' + D.colours[fm] + '"></i>' + fm + '</span>'; }).join('') +
    '<span><i style="background:#d1343b"></i>signal trace</span><span>hatching: partial copper coverage</span>';
}

function drawParcoords() {
  var cv = colourValues();
  var dims = D.decisions.map(function (d) {
    if (!d.categorical) return {label: d.label, values: d.values};
    var cats = Array.from(new Set(d.values)).sort();
    return {label: d.label, values: d.values.map(function (v) { return cats.indexOf(v); }),
            tickvals: cats.map(function (v, i) { return i; }), ticktext: cats,
            range: [-0.5, Math.max(cats.length - 0.5, 0.5)]};
  });
  if (!dims.length) return;
  Plotly.react('parcoords', [{type: 'parcoords', dimensions: dims, labelangle: -28, labelside: 'top',
    line: {color: cv.vals, colorscale: 'Viridis', showscale: true, colorbar: {title: {text: cv.title}}}}],
    {margin: {l: 70, r: 90, t: 110, b: 30}}, {displaylogo: false, responsive: true});
}

// ----- candidate table (sortable)
var tcols = [{k: 'id', t: 'candidate', get: function (c) { return c.id; }, s: true}];
D.objectives.forEach(function (k) { tcols.push({k: k, t: label(k), get: function (c) { return c.objectives[k]; }}); });
function col(k, t, get) { if (C.some(function (c) { var v = get(c); return v !== null && v !== undefined; })) tcols.push({k: k, t: t, get: get}); }
col('layer', 'signal layer', function (c) { return c.line.layer_name || c.line.layer; });
col('width_um', 'width (um)', function (c) { return c.line.width_um; });
col('gap_um', 'gap (um)', function (c) { return c.line.gap_um; });
col('z0_ohm', 'Z0 (ohm)', function (c) { return c.line.z0_ohm; });
col('z_diff_ohm', 'Zdiff (ohm)', function (c) { return c.line.z_diff_ohm; });
col('eps_eff', 'eps eff', function (c) { return c.line.eps_eff; });
col('field_error_pct', 'closed-form error vs field (%)', function (c) {
  return c.line.field_check ? c.line.field_check.closed_form_error_pct : null; });
col('cycles_to_failure', 'cycles to failure', function (c) { return c.bend.cycles_to_failure; });
col('radius_to_thickness', 'R / thickness', function (c) { return c.bend.radius_to_thickness; });
col('neutral_axis_um', 'neutral axis (um)', function (c) { return c.bend.neutral_axis_um; });
col('findings', 'findings', function (c) { return c.findings.length; });
var sortState = {k: null, dir: 1};
function drawTable() {
  var idx = C.map(function (c, i) { return i; });
  if (sortState.k) {
    var cdef = tcols.filter(function (t) { return t.k === sortState.k; })[0];
    idx.sort(function (i, j) {
      var a = cdef.get(C[i]), b = cdef.get(C[j]);
      if (a === b) return 0;
      if (a === null || a === undefined) return 1;
      if (b === null || b === undefined) return -1;
      if (typeof a === 'number' && typeof b === 'number') return sortState.dir * (a - b);
      return sortState.dir * String(a).localeCompare(String(b), undefined, {numeric: true});
    });
  }
  var h = '<thead><tr>' + tcols.map(function (t) {
    var cls = (t.s ? 't ' : '') + (sortState.k === t.k ? (sortState.dir > 0 ? 'asc' : 'desc') : '');
    return '<th data-k="' + t.k + '" class="' + cls + '">' + esc(t.t) + '</th>'; }).join('') +
    '<th class="t">sheet</th></tr></thead><tbody>';
  idx.forEach(function (i) {
    var c = C[i];
    h += '<tr data-i="' + i + '" class="' + (i === state.selected ? 'sel' : '') + '">' + tcols.map(function (t) {
      var v = t.get(c);
      return '<td class="' + (t.s || typeof v !== 'number' ? 't' : '') + '" data-v="' + esc(v === undefined || v === null ? '' : v) + '">' + esc(fmt(v)) + '</td>';
    }).join('') + '<td class="t"><a href="handoff/' + encodeURIComponent(c.id) + '.html">sheet</a></td></tr>';
  });
  var tb = document.getElementById('cand-table');
  tb.innerHTML = h + '</tbody>';
  Array.prototype.forEach.call(tb.querySelectorAll('thead th[data-k]'), function (th) {
    th.addEventListener('click', function () {
      var k = th.getAttribute('data-k');
      sortState.dir = sortState.k === k ? -sortState.dir : 1; sortState.k = k; drawTable();
    });
  });
  Array.prototype.forEach.call(tb.querySelectorAll('tbody tr'), function (tr) {
    tr.addEventListener('click', function (ev) {
      if (ev.target.tagName === 'A') return;
      select(Number(tr.getAttribute('data-i')));
    });
  });
}

function select(i) {
  if (!(i >= 0 && i < C.length)) return;
  state.selected = i;
  var c = C[i];
  drawSection(c); drawStrain(c); drawLayerTable(c); drawFront(); drawTable();
  window.strainline.renders += 1;
}

// the parallel-coordinates view (WebGL) is drawn when it comes near the screen, so the page is usable at once
(function () {
  var box = document.getElementById('parcoords');
  function go() { if (!pcDrawn) { pcDrawn = true; drawParcoords(); } }
  if (!('IntersectionObserver' in window)) { go(); return; }
  var io = new IntersectionObserver(function (entries) {
    if (entries.some(function (e) { return e.isIntersecting; })) { io.disconnect(); go(); }
  }, {rootMargin: '300px'});
  io.observe(box);
})();
if (C.length) {
  var best = 0;
  C.forEach(function (c, i) { if (c.objectives.peak_strain_pct < C[best].objectives.peak_strain_pct) best = i; });
  select(best);
} else {
  drawFront();
  document.getElementById('cand-title').textContent = 'No feasible candidate in this run' +
    (D.infeasible ? ': ' + D.infeasible : '');
  document.querySelector('#candidate-card .row').style.display = 'none';
  document.getElementById('parcoords').parentNode.style.display = 'none';
}
document.getElementById('front').on('plotly_click', function (ev) {
  var p = ev.points.filter(function (p) { return p.data.name === 'candidates'; })[0];
  if (p) select(p.customdata);
});
})();
"""
