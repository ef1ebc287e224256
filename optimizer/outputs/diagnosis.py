"""Why a study found nothing: the report's diagnosis panel, built from ``front.json``'s
``search.infeasible`` block (violation counts over every evaluated candidate, and the nearest
candidate's misses with limit and reached value).

Every key is read defensively: a missing key leaves its part of the panel out.
"""
from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from strainline.optimizer.outputs.formatting import fmt, is_num, readable, readable_choice, study_value
from strainline.optimizer.outputs.stack import signal_index

#: What else a designer can change when a constraint rules candidates out (study keys in brackets).
HINTS: dict[str, str] = {
    "total_thickness": "raise the thickness limit (limits.total_thickness_um), or allow thinner films, adhesives, "
                       "coverlays or copper",
    "fatigue_life": "lower the required cycles (bend.cycles, or the zone's in bends:), open the bend "
                    "(bend.inner_radius_mm), or allow thinner or rolled-annealed copper",
    "impedance": "widen the trace-width range (line.width_range_um, or each entry's in lines:) or the impedance "
                 "tolerance, or allow more dielectric thicknesses",
    "width_range": "widen the trace-width range (line.width_range_um, or each entry's in lines:)",
    "equation_range": "allow dielectric thicknesses that keep the trace inside the equations' validity range",
    "gap_space": "allow a larger pair gap or a copper weight with a smaller minimum space",
    "peak_strain": "raise the strain limit (limits.peak_strain_pct) or open the bend",
    "signal_strain": "raise the signal strain limit (limits.signal_strain_pct) or open the bend",
    "loss": "raise the loss limit (limits.loss_db_per_m) or allow lower-loss dielectrics",
    "cover": "allow coverlays on both faces, or set bend.allow_uncovered if the product allows it",
}

#: Where the study states each constraint's limit: (path in the study, unit, bound).
_STUDY_LIMIT: dict[str, tuple[tuple[str, ...], str, str]] = {
    "total_thickness": (("limits", "total_thickness_um"), "um", "at most"),
    "peak_strain": (("limits", "peak_strain_pct"), "%", "at most"),
    "signal_strain": (("limits", "signal_strain_pct"), "%", "at most"),
    "loss": (("limits", "loss_db_per_m"), "dB/m", "at most"),
    "fatigue_life": (("bend", "cycles"), "cycles", "at least"),
}


def _amount(value: Any, unit: str) -> str:
    if not is_num(value):
        return "-"
    text = fmt(round(float(value)) if unit == "cycles" else value, 4)
    return f"{text} {unit}".strip()


def diagnosis(front: Mapping[str, Any]) -> dict[str, Any] | None:
    """The diagnosis panel of a run with no feasible candidate, or None when the front has candidates.

    Returns
    -------
    dict or None
        ``headline``; ``rows`` (one per constraint: name, count, share of the evaluated candidates in
        percent, limit, what the nearest candidate reached, by how much it misses); ``relax`` (sentences,
        most useful first); ``nearest`` (the nearest candidate's choices with 1-based layer names);
        ``candidates`` (up to five nearest candidates, :func:`nearest_candidates`).
    """
    if front.get("candidates"):
        return None
    search = front.get("search") if isinstance(front.get("search"), Mapping) else {}
    inf = search.get("infeasible")
    if not isinstance(inf, Mapping):
        inf = {"message": str(inf or "no feasible stackup")}
    evaluated = search.get("evaluated")
    counts = inf.get("violations") if isinstance(inf.get("violations"), Mapping) else {}
    near = {str(n.get("constraint")): n for n in inf.get("nearest") or [] if isinstance(n, Mapping)}
    names = list(dict.fromkeys([*counts, *near]))
    rows = []
    for name in names:
        n = near.get(name, {})
        path, unit, bound = _STUDY_LIMIT.get(name, ((), str(n.get("unit") or ""), str(n.get("bound") or "")))
        limit = n.get("limit") if is_num(n.get("limit")) else (study_value(front, *path) if path else None)
        count = counts.get(name)
        rows.append({
            "name": str(n.get("text") or readable(name)), "key": name,
            "count": fmt(count) if is_num(count) else "-",
            "share": fmt(100.0 * count / evaluated, 3) if is_num(count) and is_num(evaluated) and evaluated else "-",
            "limit": f"{bound} {_amount(limit, unit)}".strip() if is_num(limit) else "-",
            "reached": _amount(n.get("achieved"), unit) if name in near else "met",
            "over": (f"{fmt(100.0 * n['excess'], 3)} %" if name != "equation_range" else "outside its range")
            if is_num(n.get("excess")) else "-",
            "missed": name in near,
            "blocking": is_num(count) and count > 0,
        })
    rows.sort(key=lambda r: (not r["missed"], -(counts.get(r["key"]) or 0)))
    relax = []
    missed = sorted((r for r in rows if r["missed"]), key=lambda r: near[r["key"]].get("excess") or 0.0)
    if len(missed) == 1:
        r = missed[0]
        relax.append(f"Relax the {r['name']} first: the nearest candidate misses only this one ({r['reached']} "
                     f"reached, {r['limit']}); a limit of {r['reached']} lets it through.")
    elif missed:
        relax.append("The nearest candidate misses " + str(len(missed)) + " constraints; the smallest miss is the "
                     f"{missed[0]['name']} ({missed[0]['over']} over), so relax that one first.")
    most = max((r for r in rows if r["blocking"]), key=lambda r: counts.get(r["key"]) or 0, default=None)
    if most is not None:
        relax.append(f"The {most['name']} rules out the most candidates: {most['count']} of "
                     f"{fmt(evaluated) if is_num(evaluated) else '-'} evaluated ({most['share']} %).")
    for r in (missed[:1] + ([most] if most is not None and most not in missed[:1] else [])):
        if HINTS.get(r["key"]):
            relax.append(f"For the {r['name']}: {HINTS[r['key']]}.")
    choices = inf.get("nearest_choices") if isinstance(inf.get("nearest_choices"), Mapping) else {}
    nearest = nearest_candidates(front)
    return {
        "headline": "No stackup met every constraint" + (
            f" ({fmt(evaluated)} candidates evaluated)." if is_num(evaluated) else "."),
        "message": str(inf.get("message") or ""),
        "rows": rows,
        "relax": relax,
        "nearest": [readable_choice(k, v) for k, v in choices.items()],
        "candidates": nearest,
    }


def _miss(m: Mapping[str, Any]) -> dict[str, Any]:
    """One constraint a nearest candidate misses, as the panel shows it (limit, reached, by how much)."""
    name = str(m.get("constraint") or "")
    unit = str(m.get("unit") or "")
    bound = str(m.get("bound") or "")
    return {"key": name, "name": str(m.get("text") or readable(name)),
            "limit": f"{bound} {_amount(m.get('limit'), unit)}".strip() if is_num(m.get("limit")) else "-",
            "reached": _amount(m.get("achieved"), unit),
            "over": ("outside its range" if name == "equation_range" else f"{fmt(100.0 * m['excess'], 3)} %")
            if is_num(m.get("excess")) else "-"}


def _signal_layers(choices: Mapping[str, Any], layers: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """The layers carrying lines, from a candidate's choices: ``line_layers`` (``antenna@L4 usb@L1``, several
    lines) or ``signal_layer`` (``copper 4``, one line); each {name, signal: layer index top to bottom}."""
    pairs = re.findall(r"(\S+)@L(\d+)", str(choices.get("line_layers") or ""))
    if not pairs:
        m = re.search(r"(\d+)", str(choices.get("signal_layer") or ""))     # "copper 4": the 4th copper layer
        pairs = [("signal layer", m.group(1))] if m else []
    out = []
    for name, n in pairs:
        idx = signal_index({"layers": layers, "line": {"layer": int(n)}})
        if idx is not None:
            out.append({"name": name, "signal": idx})
    return out


def nearest_candidates(front: Mapping[str, Any]) -> list[dict[str, Any]]:
    """The nearest candidates of a run with no feasible one (``search.infeasible.nearest_candidates``), best
    first: rank, total violation, choices with 1-based names, layers (top to bottom), total thickness and
    the constraints each misses. An empty list when front.json has none (or has feasible candidates)."""
    if front.get("candidates"):
        return []
    search = front.get("search") if isinstance(front.get("search"), Mapping) else {}
    inf = search.get("infeasible") if isinstance(search.get("infeasible"), Mapping) else {}
    out = []
    for k, n in enumerate(c for c in inf.get("nearest_candidates") or [] if isinstance(c, Mapping)):
        layers = [dict(lay) for lay in n.get("layers") or [] if isinstance(lay, Mapping)]
        total = n.get("total_thickness_um")
        if not is_num(total):
            total = sum(float(lay.get("thickness_um") or 0.0) for lay in layers if is_num(lay.get("thickness_um")))
        choices = n.get("choices") if isinstance(n.get("choices"), Mapping) else {}
        rank = n.get("rank") if is_num(n.get("rank")) else k + 1
        signals = _signal_layers(choices, layers)
        out.append({"rank": rank, "id": f"nearest {fmt(rank)}",
                    "total_violation": fmt(n["total_violation"], 3) if is_num(n.get("total_violation")) else "-",
                    "choices": [readable_choice(str(c), v) for c, v in choices.items()],
                    "layers": layers, "total_thickness_um": total, "signals": signals,
                    "misses": [_miss(m) for m in n.get("misses") or [] if isinstance(m, Mapping)]})
    return out


__all__ = ["diagnosis", "nearest_candidates", "HINTS"]
