"""The bend part of a handoff sheet, and the drawing fields the designer fills in (IPC-6013 class,
bend angle and bend-zone length, stiffener, surface finish, hatch geometry of partly covered copper)."""
from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from strainline.optimizer.outputs.formatting import figure, fmt, is_num, study_value
from strainline.optimizer.outputs.sheetrows import Sheet, derived

_USE_TEXT = {
    "install": "flex to install (bent once or a few times at assembly)",
    "dynamic": "dynamic flexing (repeated flexing in service)",
}

#: What a field left for the designer shows.
TO_FILL = "to fill in"


def bend_rows(sheet: Sheet, cand: Mapping[str, Any], front: Mapping[str, Any]) -> None:
    """Add the bend requirements and the objective figures of one candidate to ``sheet``."""
    bend = cand.get("bend") or {}
    obj = cand["objectives"]
    sheet.add("bend", "bend", "inner bend radius", bend.get("inner_radius_mm"), "mm", "bend.inner_radius_mm")
    sheet.add("bend", "bend", "face on the inside of the bend", bend.get("inside"), "", "bend.inside")
    use = bend.get("use")
    ukey = "bend.use"
    if use is None:
        use, ukey = study_value(front, "bend", "use"), ""
    sheet.add("bend", "bend", "use (state the IPC-6013 flex use on the drawing)",
              use, "", ukey, _USE_TEXT.get(str(use), ""))
    ckey = next((f"bend.{k}" for k in ("required_cycles", "cycles_required") if bend.get(k) is not None), "")
    cyc = bend.get(ckey[5:]) if ckey else None
    if cyc is None:
        cyc, ckey = study_value(front, "bend", "cycles"), ""
    if cyc is not None:
        sheet.add("bend", "bend", "flex cycles required", cyc, "cycles", ckey, "" if ckey else "from the study")
    motion = bend.get("motion") or study_value(front, "bend", "motion")
    if motion is not None:
        sheet.add("bend", "bend", "motion", motion, "", "bend.motion" if bend.get("motion") else "")
    sheet.add("bend", "bend", "bend region", bend.get("region"), "", "bend.region",
              "bonded: one laminated stack; unbonded: separate leaves (air gap)")
    na = bend.get("neutral_axis_um")
    if isinstance(na, list):          # unbonded: one neutral axis per leaf, top to bottom
        sheet.add("bend", "bend", "neutral axis of each leaf above the bottom face",
                  "; ".join(fmt(v, 5) for v in na), "um", "", "one per bonded leaf, top to bottom")
    else:
        sheet.add("bend", "bend", "neutral axis above the bottom face", na, "um", "bend.neutral_axis_um")
    sheet.add("bend", "bend", "inner radius / total thickness", bend.get("radius_to_thickness"), "",
              "bend.radius_to_thickness")
    peak, peak_key = figure(cand, "peak_strain_pct")
    sheet.add("bend", "bend", "peak copper strain (estimate)", peak, "%", peak_key,
              "tension positive; convention below")
    if is_num(obj.get("signal_strain_pct")):
        sheet.add("bend", "bend", "signal copper strain (estimate)", obj["signal_strain_pct"], "%",
                  "objectives.signal_strain_pct")
    elif is_num(bend.get("signal_copper_strain_pct")):
        sheet.add("bend", "bend", "signal copper strain (estimate)", bend["signal_copper_strain_pct"], "%",
                  "bend.signal_copper_strain_pct")
    if bend.get("cycles_to_failure") is not None:
        sheet.add("bend", "bend", "copper cycles to failure (Engelmaier estimate)", bend.get("cycles_to_failure"),
                  "cycles", "bend.cycles_to_failure",
                  "Engelmaier's foil fatigue equation (IPC-TM-650 2.4.2.1); order of magnitude only")
    f = (cand.get("line") or {}).get("frequency_ghz") or study_value(front, "line", "frequency_ghz")
    at = f" at {fmt(f)} GHz" if is_num(f) else ""
    if len([ln for ln in cand.get("lines") or [] if isinstance(ln, Mapping)]) > 1:   # the objective reads one line
        loss_line = study_value(front, "loss_line")
        at = f" of line {loss_line}" if loss_line else " of the worst line"
    named = {"loss_db_per_m": ("line loss, conductor + dielectric (estimate)" + at, "dB/m"),
             "cycles": ("copper cycles to failure (objective)", "cycles")}
    for ok, ov in obj.items():
        if ok not in ("peak_strain_pct", "total_thickness_um", "signal_strain_pct", "cycles_to_failure"):
            lab, unit = named.get(ok, (ok.replace("_", " "), ""))
            sheet.add("objectives", "objective", lab, ov, unit, f"objectives.{ok}")



#: A bend zone's rows on the sheet: front.json key, quantity, unit.
ZONE_FIELDS = (("inner_radius_mm", "inner bend radius", "mm"), ("inside", "face on the inside of the bend", ""),
               ("use", "use (state the IPC-6013 flex use on the drawing)", ""),
               ("required_cycles", "flex cycles required", "cycles"), ("motion", "motion", ""),
               ("region", "bend region", ""), ("neutral_axis_um", "neutral axis above the bottom face", "um"),
               ("radius_to_thickness", "inner radius / total thickness", ""),
               ("min_radius_mm", "least inner radius for the strain limits (estimate)", "mm"),
               ("peak_copper_strain_pct", "peak copper strain (estimate)", "%"),
               ("signal_copper_strain_pct", "signal copper strain (estimate)", "%"),
               ("cycles_to_failure", "copper cycles to failure (Engelmaier estimate)", "cycles"))


def zone_rows(sheet: Sheet, cand: Mapping[str, Any]) -> None:
    """A bend block (section ``zone``, item = the zone's name) for every bend zone when the candidate has
    several (``bends`` in front.json): radius, inside face, use, cycles, motion, region, neutral axis, strain
    and life of that zone."""
    bends = [b for b in cand.get("bends") or [] if isinstance(b, Mapping)]
    if len(bends) < 2:
        return
    for z, b in enumerate(bends):
        name = str(b.get("name") or f"zone {z + 1}")
        for k, lab, unit in ZONE_FIELDS:
            v = b.get(k)
            if isinstance(v, list):       # unbonded: one neutral axis per leaf, top to bottom
                sheet.add("zone", name, "neutral axis of each leaf above the bottom face",
                          "; ".join(fmt(x, 5) for x in v), unit, "", "one per bonded leaf, top to bottom")
            elif v is not None:
                sheet.add("zone", name, lab, v, unit, f"bends[{z}].{k}",
                          _USE_TEXT.get(str(v), "") if k == "use" else "")


def drawing_rows(sheet: Sheet, cand: Mapping[str, Any], front: Mapping[str, Any]) -> None:
    """Fields the drawing must state: filled from front.json or the study when they give them, else left
    for the designer (``to fill in``) with what the figures assume."""
    bend = cand.get("bend") or {}
    layers = cand.get("layers") or []

    def given(*names: str) -> Any:
        for n in names:
            for node in (bend, study_value(front, "bend") or {}, study_value(front, "fabrication") or {},
                         front.get("fabrication") if isinstance(front.get("fabrication"), Mapping) else {}):
                if isinstance(node, Mapping) and node.get(n) not in (None, ""):
                    return node[n]
        return None

    cls = given("ipc6013_class", "ipc_6013_class", "class")
    sheet.add("drawing", "drawing", "IPC-6013 performance class", cls if cls is not None else TO_FILL, "", "",
              "class 1, 2 or 3 as the product requires (IPC-6013); sets the acceptance criteria")
    angle = given("angle_deg", "bend_angle_deg")
    sheet.add("drawing", "drawing", "bend angle", angle if angle is not None else TO_FILL, "deg" if angle else "")
    r = bend.get("inner_radius_mm")
    total = figure(cand, "total_thickness_um")[0]
    length = given("bend_length_mm", "length_mm", "zone_length_mm")
    note = ""
    if is_num(r):
        mid = float(r) + total / 2000.0      # radius of the stack's mid-plane, mm
        arcs = [(a, derived(math.radians(a) * mid, "mm")) for a in ((angle,) if is_num(angle) else (90, 180))]
        note = ("at least the mid-plane arc, angle x (R + T/2): "
                + ", ".join(f"{fmt(a)} deg -> {fmt(v)} mm" for a, v in arcs)
                + ", plus the fabricator's allowance at each end")
    sheet.add("drawing", "drawing", "bend-zone length", length if length is not None else TO_FILL,
              "mm" if length is not None else "", "", note)
    for item, names, hint in (
            ("stiffener", ("stiffener",), "material, thickness and location; it ends outside the bend zone"),
            ("surface finish", ("surface_finish", "finish"), "finish of exposed pads")):
        v = given(*names)
        sheet.add("drawing", "drawing", item, v if v is not None else TO_FILL, "", "", hint)
    line_hatch = (cand.get("line") or {}).get("hatch")
    copper = [j for j, lay in enumerate(layers) if lay.get("kind") == "copper"]
    for n, j in enumerate(copper, 1):
        lay = layers[j]
        cov = lay.get("coverage")
        if not is_num(cov) or cov >= 1.0:
            continue
        name = str(lay.get("name") or f"layer {j + 1}")
        given = lay.get("hatch") if isinstance(lay.get("hatch"), Mapping) else None
        key = f"layers[{j}].hatch"
        if given is None and isinstance(line_hatch, Mapping) and line_hatch.get("layer") == n:
            given, key = line_hatch, "line.hatch"
        if given:
            text = ", ".join(f"{lab} {fmt(given[k])}{unit}" for k, lab, unit in (
                ("pitch_um", "pitch", " um"), ("line_width_um", "line width", " um"), ("angle_deg", "angle", " deg"))
                if is_num(given.get(k)))
            sheet.add("drawing", name, f"hatch of {name} ({fmt(100 * cov, 3)} % copper)", text or TO_FILL, "", "",
                      f"from front.json {key}" + (f"; impedance over the hatch {fmt(given['z_ohm'])} ohm"
                                                  if is_num(given.get("z_ohm")) else ""))
            continue
        ratio = derived(1.0 - math.sqrt(1.0 - float(cov)), "")
        sheet.add("drawing", name, f"hatch of {name} ({fmt(100 * cov, 3)} % copper)", TO_FILL, "", "",
                  f"square cross-hatch: line / pitch = 1 - sqrt(1 - coverage) = {fmt(ratio)} gives this coverage "
                  "(exact for a square grid); state pitch, line width and angle")


__all__ = ["bend_rows", "zone_rows", "drawing_rows", "TO_FILL", "ZONE_FIELDS"]
