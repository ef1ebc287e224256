"""Text and number formatting shared by the report and the handoff sheets.

Everything here is pure (no I/O): the cautions, the strain convention, display and CSV forms of
numbers, the study lookups both outputs use, and the one safe way to put data into a page
(:func:`script_json`).
"""
from __future__ import annotations

import json
import math
import re
from collections.abc import Mapping
from typing import Any

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

#: Readable names of the keys front.json uses (objectives, search summary, line and bend fields).
LABELS: dict[str, str] = {
    "peak_strain_pct": "peak copper strain (%)",
    "total_thickness_um": "total thickness (um)",
    "signal_strain_pct": "signal copper strain (%)",
    "loss_db_per_m": "loss (dB/m)",
    "cycles": "cycles",
    "cycles_to_failure": "cycles to failure",
    "width_um": "trace width (um)",
    "yield_shortfall_pct": "impedance yield shortfall, 100 - yield (%)",
}


#: Readable names of front.json keys that are not plain words joined by underscores.
KEY_NAMES: dict[str, str] = {
    "space_size": "space size", "front_size": "candidates on the front", "dominated_sample":
    "dominated points kept for the background", "reference_point": "reference point", "stopped": "stopped",
    "seconds": "seconds", "hypervolume": "hypervolume (normalized objectives)", "impedance": "impedance",
    "width_range": "width range", "equation_range": "equation validity range", "total_thickness": "total thickness",
    "fatigue_life": "fatigue life", "gap_space": "gap vs minimum space", "peak_strain": "peak copper strain",
    "signal_strain": "signal copper strain", "loss": "loss", "material_strain": "material strain",
    "signal_layer": "signal layer",
}


def readable(key: Any) -> str:
    """A front.json key as words: objective keys with their unit (``LABELS``), others de-underscored."""
    k = str(key)
    return LABELS.get(k) or KEY_NAMES.get(k) or k.replace("_", " ")


_CHOICE = re.compile(r"^(?P<kind>[a-z_]+)\[(?P<i>\d+|top|bottom)\]$")


def readable_choice(key: str, value: Any) -> tuple[str, Any]:
    """A search choice (``choices`` in front.json) with 1-based layer names: ``copper[0]`` -> ``L1 copper``,
    ``film[1]`` -> ``film L2-L3`` (the gap between those copper layers), ``cover[top]`` -> ``top cover``;
    a value ``copper 2`` -> ``L2``."""
    m = _CHOICE.match(str(key))
    if isinstance(value, str):
        value = re.sub(r"\bcopper (\d+)\b", lambda v: f"L{v.group(1)}", value)
        if key == "line_layers":          # "antenna@L4 usb@L1" -> "antenna on L4, usb on L1"
            value = ", ".join(re.sub(r"^(.+)@(L\d+)$", r"\1 on \2", part) for part in value.split())
    if not m:
        named = re.fullmatch(r"([a-z_]+)\[(.+)\]", str(key))      # a choice of one named line: gap[usb]
        if named:
            return f"{named.group(1).replace('_', ' ')} of line {named.group(2)}", value
        return readable(key), value
    kind, i = m.group("kind"), m.group("i")
    if not i.isdigit():
        return f"{i} {kind.replace('_', ' ')}", value
    n = int(i) + 1
    if kind == "copper":
        return f"L{n} copper", value
    if kind in ("film", "adhesive", "placement"):
        what = {"placement": "adhesive side"}.get(kind, kind)
        return f"{what} L{n}-L{n + 1}", value
    if kind == "coverage":
        return f"ground coverage {n}", value
    return f"{kind.replace('_', ' ')} {n}", value


def is_num(value: Any) -> bool:
    """True for an int or float that is not a bool."""
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def clean(value: Any) -> Any:
    """JSON-safe copy: non-finite floats become None (JSON.parse rejects NaN), keys become strings."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, Mapping):
        return {str(k): clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [clean(v) for v in value]
    return value


#: Characters escaped inside an embedded JSON block: nothing in the data can close the script
#: element, open a comment or an entity, or end a JavaScript line.
_SCRIPT_ESCAPES = {"<": "\\u003c", ">": "\\u003e", "&": "\\u0026", "\u2028": "\\u2028", "\u2029": "\\u2029"}


def script_json(data: Any) -> str:
    """``data`` as JSON text safe inside ``<script type="application/json">`` (read with JSON.parse).

    ``<``, ``>``, ``&``, U+2028 and U+2029 are written as ``\\uXXXX`` escapes, which JSON.parse reads
    back to the same characters, so no value can end the element or start markup.
    """
    text = json.dumps(clean(data), separators=(",", ":"), allow_nan=False, ensure_ascii=False)
    return re.sub("[<>&\u2028\u2029]", lambda m: _SCRIPT_ESCAPES[m.group(0)], text)


def fmt(value: Any, digits: int = 4) -> str:
    """Display form of a number or a value.

    Integers are written in full with thousands separators (``269,568``); other numbers to ``digits``
    significant figures in plain notation (``100``, ``0.3301``, ``34,381``), and in scientific
    notation only below 1e-3 or from 1e6 up (``1.23e+07``).
    """
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return f"{value:,}" if abs(value) < 10 ** 15 else f"{value:.{digits - 1}e}"
    if is_num(value):
        v = float(value)
        if not math.isfinite(v):
            return str(v)
        if v != 0 and (abs(v) >= 1e6 or abs(v) < 1e-3):
            return f"{v:.{digits - 1}e}"
        if v == 0:
            return "0"
        decimals = max(0, digits - 1 - math.floor(math.log10(abs(v))))
        text = f"{round(v, decimals):,.{decimals}f}"
        return text.rstrip("0").rstrip(".") if "." in text else text
    return str(value)


def csv_value(v: Any) -> str:
    """A value as written in a CSV cell or a ``data-value`` attribute (floats at full precision)."""
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return repr(v)
    return str(v)


def first_sentence(text: str) -> str:
    """The first sentence (or clause before ';') of ``text``, without the closing mark."""
    m = re.match(r"(.+?[.;])(\s|$)", text.strip())
    return (m.group(1) if m else text).rstrip(";.")


def study_value(front: Mapping[str, Any], *path: str) -> Any:
    """``front['study'][path[0]][path[1]]...`` or None when any step is missing."""
    node: Any = front.get("study")
    for key in path:
        if not isinstance(node, Mapping):
            return None
        node = node.get(key)
    return node


def study_name(front: Mapping[str, Any]) -> str:
    """The study's name as shown in titles."""
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
    if is_num(obj.get(key)):
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


__all__ = ["CAUTION", "STRAIN_CONVENTION", "LABELS", "KEY_NAMES", "readable", "readable_choice", "is_num", "clean", "script_json", "fmt", "csv_value",
           "first_sentence", "study_value", "study_name", "cautions", "figure", "findings_of"]
