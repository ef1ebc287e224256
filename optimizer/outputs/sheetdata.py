"""What a fabricator handoff sheet holds, collected from one front candidate (no HTML, no I/O).

:func:`build_sheet` returns a :class:`Sheet`: the stackup rows top to bottom, the overall figures,
the controlled-impedance table, the bend requirements, the notes with their sources and the
cautions. Every number taken from ``front.json`` keeps its exact value and names its field in
``Row.key``; derived numbers have an empty key.
"""
from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from strainline.optimizer.outputs.formatting import (
    cautions,
    figure,
    findings_of,
    fmt,
    study_name,
    study_value,
)
from strainline.optimizer.outputs.stack import reference_indices, signal_index

#: Standard construction notes for a bend region: (text, source).
CONSTRUCTION_NOTES: tuple[tuple[str, str], ...] = (
    ("Use rolled-annealed (annealed wrought) copper in the bend, with the foil grain (rolling direction) "
     "running along the conductors through the bend; state the grain direction on the drawing.",
     "annealed wrought foil for severe or high-cycle flexing: IPC-TR-484 (1986) copper-foil ductility round "
     "robin; grain direction on drawings: K. Smith, 'Decreasing Bend Radius and Improving Reliability, "
     "Part I', trade-magazine column (2019)"),
    ("No plated-through holes, vias or panel plating in the bend region; plate pads only (button plating) "
     "so the bend conductors stay at base-foil thickness.",
     "button plating preferred: K. Smith, 'Decreasing Bend Radius and Improving Reliability, Part I' (2019); "
     "holes kept out of the bend: "
     "common practice, no source"),
    ("Route conductors perpendicular to the bend line and stagger them between adjacent layers "
     "(no conductors stacked directly over each other).",
     "common practice, no source"),
    ("No glass-reinforced material in the bend region (stiffeners and rigid sections end outside it).",
     "common practice, no source"),
    ("Coverlay adhesive must fill between the conductors (about 1 mil of adhesive per ounce of copper); "
     "voids let the copper bend on its own.",
     "K. Smith, 'Decreasing Bend Radius and Improving Reliability, Part II', trade-magazine column (2019)"),
    ("Strain and life figures assume an elastic, perfectly bonded stack (transformed-section neutral axis); "
     "above the copper yield strain the worst-face strain is underestimated.",
     "composite-beam model (transformed section), e.g. Gere and Timoshenko, Mechanics of Materials; "
     "yield caveat derived in the project's bend reference notes"),
)

_USE_TEXT = {
    "install": "flex to install (bent once or a few times at assembly)",
    "dynamic": "dynamic flexing (repeated flexing in service)",
}


@dataclass
class Row:
    """One quantity of a sheet: ``value`` exact, ``key`` the front.json field it came from ('' if derived)."""

    section: str
    item: str
    quantity: str
    value: Any
    unit: str = ""
    key: str = ""
    note: str = ""


@dataclass
class Sheet:
    """Everything one handoff sheet shows, as rows grouped by section."""

    candidate_id: str
    study: str
    version: str
    rows: list[Row] = field(default_factory=list)
    stackup: list[dict[str, Row]] = field(default_factory=list)
    notes: list[tuple[str, str, str]] = field(default_factory=list)   # (severity, text, source)
    cautions: list[str] = field(default_factory=list)

    def add(self, *args: Any, **kwargs: Any) -> Row:
        row = Row(*args, **kwargs)
        self.rows.append(row)
        return row

    def section(self, name: str) -> list[Row]:
        return [r for r in self.rows if r.section == name]


def _isnum(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


# ----------------------------------------------------------------------------- resolving from the catalog
def _weight_of(layer: Mapping[str, Any], catalog: Any | None) -> tuple[str | None, str]:
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


def _foil_of(layer: Mapping[str, Any], catalog: Any | None) -> tuple[str | None, Any]:
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


def _rel_tolerance(layer: Mapping[str, Any], catalog: Any | None) -> tuple[float | None, str]:
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


def _total_tolerance_um(total_um: float, catalog: Any | None) -> tuple[float | None, str]:
    fab = getattr(catalog, "fabrication", None) if catalog is not None else None
    rule = getattr(fab, "total_thickness_tolerance", None)
    try:
        tol_m = float(rule.tolerance_m(total_um * 1e-6))
        return tol_m * 1e6, str(getattr(rule, "source", "catalog fabrication rule"))
    except Exception:  # noqa: BLE001 - a missing or different rule: say so on the sheet
        return None, "catalog rule not available: agree with the fabricator"


def _impedance_tolerance(front: Mapping[str, Any], line: Mapping[str, Any], catalog: Any | None
                         ) -> tuple[float | None, str, str]:
    """(tolerance in percent, key, note)."""
    for k in ("tolerance_pct", "impedance_tolerance_pct"):
        if isinstance(line.get(k), (int, float)):
            return float(line[k]), f"line.{k}", ""
    study = front.get("study") if isinstance(front.get("study"), Mapping) else {}
    tol = (study.get("line") or {}).get("tolerance") if isinstance(study.get("line"), Mapping) else None
    if isinstance(tol, (int, float)) and not isinstance(tol, bool):
        return float(tol), "", "from the study (line.tolerance)"
    if isinstance(tol, str):
        m = re.fullmatch(r"\s*([0-9.]+)\s*%?\s*", tol)
        if m:
            return float(m.group(1)), "", "from the study (line.tolerance)"
        classes = getattr(getattr(catalog, "fabrication", None), "impedance_tolerance", {}) if catalog else {}
        if tol in classes:
            return 100.0 * float(classes[tol]), "", f"catalog class '{tol}'"
    if catalog is not None:
        classes = getattr(getattr(catalog, "fabrication", None), "impedance_tolerance", {})
        if "standard" in classes:
            return 100.0 * float(classes["standard"]), "", "catalog class 'standard' (the study gives none)"
    return None, "", "not stated"


# ----------------------------------------------------------------------------- building a sheet
def build_sheet(cand: Mapping[str, Any], front: Mapping[str, Any], catalog: Any | None = None) -> Sheet:
    """Collect the sheet of one candidate (no I/O beyond the catalog already loaded)."""
    from strainline.optimizer import __version__

    sheet = Sheet(str(cand["id"]), study_name(front), str(front.get("version") or __version__))
    layers = cand["layers"]
    sig = signal_index(cand)
    refs = reference_indices(cand)
    line = cand.get("line") or {}
    bend = cand.get("bend") or {}
    obj = cand["objectives"]

    # stackup
    tol_sum_sq = 0.0
    for j, lay in enumerate(layers):
        k = f"layers[{j}]"
        name = str(lay.get("name") or f"layer {j + 1}")
        kind = lay.get("kind")
        if kind == "copper":
            role = "signal" if j == sig else ("reference plane" if j in refs else str(lay.get("role") or "copper"))
        elif kind == "air-gap":
            role = "air gap (unbonded bend region)"
        else:
            role = str(kind)
        mat = str(lay.get("material") or "")
        rec = getattr(catalog, "dielectrics", {}).get(mat) if catalog is not None else None
        spec = rec.description if rec is not None else ""
        weight, weight_src = (None, "")
        foil_name, foil = (None, None)
        if kind == "copper":
            weight, weight_src = _weight_of(lay, catalog)
            foil_name, foil = _foil_of(lay, catalog)
            spec = foil.description if foil is not None else "copper foil"
        rel, rel_src = _rel_tolerance(lay, catalog)
        t = lay.get("thickness_um")
        row: dict[str, Row] = {
            "layer": Row("stackup", name, "layer", name, "", f"{k}.name"),
            "function": Row("stackup", name, "function", role, ""),
            "specification": Row("stackup", name, "material", mat, "", f"{k}.material", spec),
            "thickness_um": Row("stackup", name, "thickness", t, "um", f"{k}.thickness_um"),
            "tolerance_um": Row("stackup", name, "thickness tolerance (+/-)",
                                None if rel is None else float(t) * rel, "um", "", rel_src),
            "tolerance_pct": Row("stackup", name, "thickness tolerance (+/-)",
                                 None if rel is None else 100.0 * rel, "%", "", rel_src),
        }
        if rel is not None:
            tol_sum_sq += (float(t) * rel) ** 2
        if kind == "copper":
            row["copper_weight"] = Row("stackup", name, "copper weight", weight, "",
                                       f"{k}.weight" if weight_src == "front.json" else "", weight_src)
            ctype = lay.get("copper_type") or (foil.copper_type if foil is not None else None)
            row["copper_type"] = Row("stackup", name, "copper type", ctype, "",
                                     f"{k}.copper_type" if lay.get("copper_type") else "",
                                     "" if lay.get("copper_type") else "catalog foil")
            grade = lay.get("ipc4562_grade") or (foil.ipc4562_grade if foil is not None else None)
            row["ipc4562_grade"] = Row("stackup", name, "IPC-4562 grade", grade, "",
                                       f"{k}.ipc4562_grade" if lay.get("ipc4562_grade") else "",
                                       "" if lay.get("ipc4562_grade") else "catalog foil")
            row["coverage"] = Row("stackup", name, "copper coverage", lay.get("coverage", 1.0), "fraction",
                                  f"{k}.coverage" if "coverage" in lay else "", "copper fraction of the layer in the bend")
        sheet.stackup.append(row)
        sheet.rows.extend(row.values())

    total, total_key = figure(cand, "total_thickness_um")
    sheet.add("total", "overall", "total thickness", total, "um", total_key)
    tot_tol, tot_src = _total_tolerance_um(float(total), catalog)
    sheet.add("total", "overall", "total thickness tolerance (+/-)", tot_tol, "um", "", tot_src)
    if tol_sum_sq > 0:
        sheet.add("total", "overall", "root-sum-square of the layer tolerances (+/-)", tol_sum_sq ** 0.5, "um", "",
                  "derived from the layer tolerances above, for information")

    # controlled impedance
    if line:
        pair = "coupled" in str(line.get("type", ""))
        if line.get("layer_name"):
            sheet.add("impedance", "line", "signal layer", line["layer_name"], "", "line.layer_name")
        else:
            sheet.add("impedance", "line", "signal layer", line.get("layer"), "", "line.layer")
        sheet.add("impedance", "line", "line type", line.get("type"), "", "line.type")
        sheet.add("impedance", "line", "trace width as designed", line.get("width_um"), "um", "line.width_um")
        if line.get("gap_um") is not None:
            sheet.add("impedance", "line", "pair gap (edge to edge) as designed" if pair else "gap as designed",
                      line.get("gap_um"), "um", "line.gap_um")
        target = line.get("target_ohm")
        tkey = "line.target_ohm"
        if target is None:
            target, tkey = study_value(front, "line", "target_ohm"), ""
        sheet.add("impedance", "line", "target differential impedance" if pair else "target impedance",
                  target, "ohm", tkey, "" if tkey else "from the study (line.target_ohm)")
        tol, tolkey, tolnote = _impedance_tolerance(front, line, catalog)
        sheet.add("impedance", "line", "impedance tolerance (+/-)", tol, "%", tolkey, tolnote)
        ref_names = ", ".join(str(layers[i].get("name")) for i in refs if i != sig) or \
            ("coplanar grounds on the signal layer" if refs == [sig] else "-")
        sheet.add("impedance", "line", "reference planes", ref_names, "")
        if pair:
            sheet.add("impedance", "line", "differential impedance (closed form)", line.get("z_diff_ohm"), "ohm",
                      "line.z_diff_ohm")
        if line.get("z0_ohm") is not None:
            sheet.add("impedance", "line", "single-line impedance (closed form)" if pair else
                      "impedance (closed form)", line.get("z0_ohm"), "ohm", "line.z0_ohm")
        if line.get("eps_eff") is not None:
            sheet.add("impedance", "line", "effective permittivity", line.get("eps_eff"), "", "line.eps_eff")
        geom = line.get("geometry") or {}
        labels = {"height_um": ("dielectric below the trace", "um"), "height_top_um": ("dielectric above the trace", "um"),
                  "thickness_um": ("trace copper thickness", "um"), "er": ("Dk below (composite)", ""),
                  "er_top": ("Dk above", ""), "cover_um": ("cover over the trace", "um"), "cover_er": ("cover Dk", "")}
        for gk, (lab, unit) in labels.items():
            if geom.get(gk) is not None:
                sheet.add("impedance", "geometry", lab, geom[gk], unit, f"line.geometry.{gk}")
        sheet.add("impedance", "geometry", "equation used", geom.get("method") or line.get("method"), "",
                  "line.geometry.method" if geom.get("method") else "line.method" if line.get("method") else "")
        fc = line.get("field_check")
        if isinstance(fc, Mapping):
            fl = {"z0_ohm": ("field-solved impedance at the designed width", "ohm"),
                  "z_diff_ohm": ("field-solved differential impedance at the designed width", "ohm"),
                  "z_odd_ohm": ("field-solved odd-mode impedance", "ohm"),
                  "z_even_ohm": ("field-solved even-mode impedance", "ohm"),
                  "z_common_ohm": ("field-solved common-mode impedance", "ohm"),
                  "eps_eff": ("field-solved effective permittivity", ""),
                  "eps_eff_even": ("field-solved even-mode effective permittivity", ""),
                  "closed_form_error_pct": ("closed-form error against the field solution", "%"),
                  "error_estimate_pct": ("field-solver error estimate (grid convergence)", "%"),
                  "width_um": ("field-refined width for the target", "um"),
                  "z_refined_ohm": ("field-solved impedance at the refined width", "ohm"),
                  "refined_ok": ("refined width meets the impedance tolerance", ""),
                  "refined_width_in_range": ("refined width inside the study's width range", ""),
                  "error": ("field check not possible", "")}
            for fk, v in fc.items():
                if fk in ("index", "seconds", "target_ohm") or (fk == "error" and v is None):
                    continue
                lab, unit = fl.get(fk, (fk.replace("_", " "), ""))
                sheet.add("field-check", "field solver", lab, v, unit, f"line.field_check.{fk}",
                          "2-D quasi-static field solution of the idealised cross-section (strainline --verify)"
                          if fk in ("z0_ohm", "z_diff_ohm") else "")
        else:
            sheet.add("field-check", "field solver", "field-solver check", "not run",
                      "", "", "run `strainline solve STUDY --verify` to add one")

    # bend requirements
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
    if _isnum(obj.get("signal_strain_pct")):
        sheet.add("bend", "bend", "signal copper strain (estimate)", obj["signal_strain_pct"], "%",
                  "objectives.signal_strain_pct")
    elif _isnum(bend.get("signal_copper_strain_pct")):
        sheet.add("bend", "bend", "signal copper strain (estimate)", bend["signal_copper_strain_pct"], "%",
                  "bend.signal_copper_strain_pct")
    if bend.get("cycles_to_failure") is not None:
        sheet.add("bend", "bend", "copper cycles to failure (Engelmaier estimate)", bend.get("cycles_to_failure"),
                  "cycles", "bend.cycles_to_failure",
                  "Engelmaier's foil fatigue equation (IPC-TM-650 2.4.2.1); order of magnitude only")
    named = {"loss_db_per_m": ("line loss, conductor + dielectric (estimate)", "dB/m"),
             "cycles": ("copper cycles to failure (objective)", "cycles")}
    for ok, ov in obj.items():
        if ok not in ("peak_strain_pct", "total_thickness_um", "signal_strain_pct", "cycles_to_failure"):
            lab, unit = named.get(ok, (ok.replace("_", " "), ""))
            sheet.add("objectives", "objective", lab, ov, unit, f"objectives.{ok}")

    # notes and cautions
    for f in findings_of(cand):
        src = f["source"] or "rule finding (no source given)"
        sheet.notes.append((f["severity"], f["message"], src))
    for text, src in CONSTRUCTION_NOTES:
        sheet.notes.append(("construction", text, src))
    for sev, text, src in sheet.notes:
        sheet.add("note", sev, "note", text, "", "", src)
    sheet.cautions = cautions(front)
    for c in sheet.cautions:
        sheet.add("caution", "caution", "caution", c)
    return sheet


__all__ = ["Row", "Sheet", "build_sheet", "CONSTRUCTION_NOTES"]
