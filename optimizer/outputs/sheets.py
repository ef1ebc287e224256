"""Fabricator handoff sheets: ``handoff/<candidate id>.html`` and ``.csv`` per front candidate.

A sheet holds what a fabricator needs to quote and build one candidate: the stackup top to bottom
with thickness tolerances from the catalog, copper weight, type and IPC-4562 grade, coverage; the
overall thickness and its tolerance; the controlled-impedance table; the bend requirements; the
notes the rules produced plus standard construction notes, each with its source; and the cautions.
Every number taken from ``front.json`` is written unchanged (the CSV keeps full precision and names
the ``front.json`` field it came from in its ``key`` column; the HTML cells carry the same key and
value as ``data-key``/``data-value``).

Public API
----------
``build_sheet(candidate, front, catalog=None) -> Sheet``
``sheet_html(sheet) -> str``, ``sheet_csv(sheet) -> str``, ``index_html(front, sheets) -> str``
``build_handoff(front, catalog=None) -> dict[str, str]``   file name -> text (nothing written)
``write_handoff_files(files, folder) -> list[Path]``        all or nothing (temporary folder + rename)
``write_handoff(front, out_dir, catalog=None) -> list[Path]``
"""
from __future__ import annotations

import csv
import html
import io
import os
import re
import shutil
import tempfile
import uuid
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from strainline.optimizer.outputs.fileio import write_atomic
from strainline.optimizer.outputs.report import (
    study_value,
    STRAIN_CONVENTION,
    _try_catalog,
    cautions,
    check_front,
    figure,
    findings_of,
    fmt,
    reference_indices,
    signal_index,
    study_name,
)

#: CSV columns.
CSV_COLUMNS = ("section", "item", "quantity", "value", "unit", "key", "note")

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


# ----------------------------------------------------------------------------- rendering
def _e(x: Any) -> str:
    return html.escape("" if x is None else str(x))


def _cell(row: Row | None, digits: int = 4, scale: float = 1.0) -> str:
    if row is None:
        return "<td>-</td>"
    v = row.value
    shown = fmt(v * scale if isinstance(v, (int, float)) and not isinstance(v, bool) and v is not None else v, digits)
    if v is None:
        shown = "-"
    attrs = ""
    if row.key:
        attrs = f' data-key="{_e(row.key)}" data-value="{_e(_csv_value(v))}"'
    title = f' title="{_e(row.note)}"' if row.note else ""
    cls = "" if isinstance(v, (int, float)) and not isinstance(v, bool) else ' class="t"'
    return f"<td{cls}{attrs}{title}>{_e(shown)}</td>"


def _first_sentence(text: str) -> str:
    m = re.match(r"(.+?[.;])(\s|$)", text.strip())
    return (m.group(1) if m else text).rstrip(";.")


def _spec_cell(row: Row) -> str:
    attrs = f' data-key="{_e(row.key)}" data-value="{_e(_csv_value(row.value))}"' if row.key else ""
    return (f'<td class="t spec"{attrs} title="{_e(row.note)}"><b>{_e(row.value)}</b><br>'
            f'<span class="n">{_e(_first_sentence(row.note))}</span></td>')


def _csv_value(v: Any) -> str:
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return repr(v)
    return str(v)


def sheet_csv(sheet: Sheet) -> str:
    """The sheet as CSV: one quantity a row, columns :data:`CSV_COLUMNS`; numbers at full precision."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    w.writerow(("meta", "sheet", "candidate id", sheet.candidate_id, "", "id", ""))
    w.writerow(("meta", "sheet", "study", sheet.study, "", "", ""))
    w.writerow(("meta", "sheet", "strainline version", sheet.version, "", "", ""))
    for r in sheet.rows:
        w.writerow((r.section, r.item, r.quantity, _csv_value(r.value), r.unit, r.key, r.note))
    return buf.getvalue()


def _rows_table(rows: list[Row]) -> str:
    body = "".join(
        f"<tr><th>{_e(r.quantity)}</th>{_cell(r, 5)}<td class='t u'>{_e(r.unit)}</td>"
        f"<td class='t n'>{_e(r.note)}</td></tr>" for r in rows)
    return f'<table class="q">{body}</table>'


def sheet_html(sheet: Sheet) -> str:
    """The printable sheet (one or two A4 pages)."""
    stack_rows = []
    for i, r in enumerate(sheet.stackup, 1):
        cu = "copper_weight" in r
        stack_rows.append(
            "<tr>" + f"<td>{i}</td>" + _cell(r["layer"]) + _cell(r["function"]) + _spec_cell(r["specification"]) +
            _cell(r["thickness_um"], 4) + _cell(r["tolerance_um"], 2) +
            (_cell(r["copper_weight"]) + _cell(r["copper_type"]) + _cell(r["ipc4562_grade"]) +
             _cell(r["coverage"], 3, 100.0) if cu else "<td></td><td></td><td></td><td></td>") + "</tr>")
    total = {r.quantity: r for r in sheet.section("total")}
    tot = total.get("total thickness")
    tot_tol = total.get("total thickness tolerance (+/-)")
    notes = "".join(f"<li><b>{_e(sev)}</b> {_e(text)} <span class='src'>Source: {_e(src)}</span></li>"
                    for sev, text, src in sheet.notes)
    caution = "".join(f"<p>{_e(c)}</p>" for c in sheet.cautions)
    wide = [r for r in sheet.section("impedance") + sheet.section("field-check")
            if r.quantity in ("equation used", "field-solver check")]
    imp = [r for r in sheet.section("impedance") if r not in wide]
    checks = [r for r in sheet.section("field-check") if r not in wide]
    if checks:
        cells = [f"<th>{_e(r.quantity)}</th>{_cell(r, 5)}<td class='t u'>{_e(r.unit)}</td>" for r in checks]
        pairs = ["<tr>" + "".join(cells[i:i + 2]) + "</tr>" for i in range(0, len(cells), 2)]
        wide_note = checks[0].note or next((r.note for r in checks if r.note), "")
        check_html = (f'<h2>Field-solver check</h2><table class="q fc">{"".join(pairs)}</table>'
                      f'<p class="n">{_e(wide_note)}</p>')
    else:
        check_html = ""
    bend = sheet.section("bend") + sheet.section("objectives")
    wide_html = "".join(
        f'<p class="wide"><b>{_e(r.quantity)}:</b> <span'
        + (f' data-key="{_e(r.key)}" data-value="{_e(_csv_value(r.value))}"' if r.key else "")
        + f">{_e(r.value)}</span>" + (f' <span class="n">({_e(r.note)})</span>' if r.note else "") + "</p>"
        for r in wide)
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<title>Fabrication sheet {_e(sheet.candidate_id)} ({_e(sheet.study)})</title>
<style>{_SHEET_CSS}</style></head>
<body>
<header><h1>Flex stackup for quotation: candidate {_e(sheet.candidate_id)}</h1>
<div>Study <b>{_e(sheet.study)}</b> &middot; strainline {_e(sheet.version)} &middot;
<a class="noprint" href="index.html">all sheets</a> &middot; <a class="noprint" href="{_e(sheet.candidate_id)}.csv">CSV</a></div>
</header>
<div class="caution">{caution}</div>
<h2>1. Stackup, top to bottom</h2>
<table class="stack"><thead><tr><th>#</th><th>layer</th><th>function</th><th>material specification</th>
<th>thickness (um)</th><th>tol. +/- (um)</th><th>copper weight</th><th>copper type</th><th>IPC-4562 grade</th>
<th>coverage (%)</th></tr></thead><tbody>{''.join(stack_rows)}</tbody>
<tfoot><tr><th colspan="4">overall thickness</th>{_cell(tot)}{_cell(tot_tol, 2)}
<td colspan="4" class="t n" title="{_e(tot_tol.note if tot_tol else '')}">fabricator capability rule
(catalog); source in the CSV</td></tr></tfoot></table>
<p class="n">Thickness tolerances: catalog material tolerances (relative) applied to each nominal thickness.
Copper coverage is the copper fraction of that layer in the bend region; the rest is filled by the
neighbouring adhesive.</p>
<div class="two">
<div><h2>2. Controlled impedance</h2>{_rows_table(imp)}</div>
<div><h2>3. Bend requirements</h2>{_rows_table(bend)}</div>
</div>
{wide_html}
{check_html}
<h2>4. Notes</h2><ul class="notes">{notes}</ul>
<p class="n">{_e(STRAIN_CONVENTION)}</p>
<footer>{caution}</footer>
</body></html>
"""


def index_html(front: Mapping[str, Any], sheets: list[Sheet]) -> str:
    """``handoff/index.html``: every sheet with its key figures."""
    rows = []
    for sh, c in zip(sheets, front["candidates"]):
        o, ln, bd = c["objectives"], c.get("line") or {}, c.get("bend") or {}
        rows.append(
            f"<tr><td class='t'><a href='{_e(sh.candidate_id)}.html'>{_e(sh.candidate_id)}</a></td>"
            f"<td>{_e(fmt(figure(c, 'total_thickness_um')[0]))}</td><td>{_e(fmt(figure(c, 'peak_strain_pct')[0]))}</td>"
            f"<td class='t'>{_e(ln.get('type', '-'))}</td><td>{_e(fmt(ln.get('width_um')))}</td>"
            f"<td>{_e(fmt(ln.get('z_diff_ohm') if ln.get('z_diff_ohm') is not None else ln.get('z0_ohm')))}</td>"
            f"<td>{_e(fmt(bd.get('inner_radius_mm')))}</td><td>{_e(fmt(bd.get('cycles_to_failure'), 3))}</td>"
            f"<td class='t'><a href='{_e(sh.candidate_id)}.csv'>csv</a></td></tr>")
    caution = "".join(f"<p>{_e(t)}</p>" for t in cautions(front))
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>Fabrication sheets ({_e(study_name(front))})</title>
<style>{_SHEET_CSS}</style></head><body>
<header><h1>Fabrication sheets: {_e(study_name(front))}</h1>
<div><a class="noprint" href="../report.html">interactive report</a></div></header>
<div class="caution">{caution}</div>
<table class="stack"><thead><tr><th>candidate</th><th>total thickness (um)</th><th>peak copper strain (%)</th>
<th>line</th><th>width (um)</th><th>impedance (ohm)</th><th>inner radius (mm)</th><th>cycles to failure</th>
<th>CSV</th></tr></thead><tbody>{''.join(rows)}</tbody></table>
</body></html>
"""


def build_handoff(front: Mapping[str, Any], catalog: Any | None = None) -> dict[str, str]:
    """All handoff files for a front: ``{file name: text}``; nothing is written."""
    front = check_front(front)
    if catalog is None:
        catalog = _try_catalog()
    sheets = [build_sheet(c, front, catalog) for c in front["candidates"]]
    files: dict[str, str] = {}
    for sh in sheets:
        files[f"{sh.candidate_id}.html"] = sheet_html(sh)
        files[f"{sh.candidate_id}.csv"] = sheet_csv(sh)
    files["index.html"] = index_html(front, sheets)
    return files


def write_handoff_files(files: Mapping[str, str], folder: str | Path) -> list[Path]:
    """Write ``files`` as the new content of ``folder``, all or nothing.

    The files go into a fresh temporary folder beside ``folder`` (each written atomically), which then
    replaces ``folder`` by rename; sheets of candidates no longer on the front disappear with the old
    folder. On any failure the previous folder is left as it was.
    """
    folder = Path(folder)
    folder.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{folder.name}.", suffix=".tmp", dir=folder.parent))
    old: Path | None = None
    try:
        os.chmod(tmp, 0o755)
        for name, text in files.items():
            os.chmod(write_atomic(tmp / name, text), 0o644)   # readable like any other output file
        if folder.exists():
            old = folder.with_name(f".{folder.name}.old-{uuid.uuid4().hex[:8]}")
            os.replace(folder, old)
        os.replace(tmp, folder)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        if old is not None and not folder.exists():
            os.replace(old, folder)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
    return [folder / name for name in files]


def write_handoff(front: Mapping[str, Any], out_dir: str | Path, catalog: Any | None = None) -> list[Path]:
    """Build and write ``out_dir/handoff/``; return the paths written."""
    return write_handoff_files(build_handoff(front, catalog), Path(out_dir) / "handoff")


_SHEET_CSS = r"""
body { font: 12.5px/1.4 system-ui, -apple-system, "Segoe UI", sans-serif; color: #1b2230; margin: 18px auto;
       max-width: 1100px; padding: 0 14px; }
header { border-bottom: 2px solid #23313f; padding-bottom: 6px; margin-bottom: 8px; }
h1 { font-size: 18px; margin: 0 0 2px; }
h2 { font-size: 14px; margin: 12px 0 4px; color: #23313f; }
table { border-collapse: collapse; width: 100%; }
th, td { border-bottom: 1px solid #d5dbe3; padding: 2px 6px; text-align: right; vertical-align: top; }
td.t, th { text-align: left; }
table.stack thead th { background: #eef1f5; font-weight: 600; }
table.stack tfoot th, table.stack tfoot td { border-top: 2px solid #23313f; font-weight: 600; }
table.q th { font-weight: 500; color: #3b4656; width: 42%; }
table.q td.u { color: #5c6675; width: 7%; }
table.q td.n, .n { color: #5c6675; font-size: 11px; }
.two { display: flex; gap: 18px; }
.two > div { flex: 1 1 0; min-width: 0; }
.caution { border-left: 5px solid #c98a1b; background: #fff8e8; padding: 4px 10px; margin: 6px 0; }
.caution p { margin: 2px 0; }
ul.notes { padding-left: 18px; margin: 4px 0; }
ul.notes li { margin: 2px 0; }
ul.notes b { text-transform: uppercase; font-size: 10.5px; color: #8a5a00; margin-right: 4px; }
.src { color: #5c6675; font-size: 11px; }
p.wide { margin: 4px 0; }
table.q.fc th { width: 30%; }
footer { margin-top: 12px; border-top: 1px solid #d5dbe3; color: #5c6675; font-size: 11px; }
@media print {
  @page { size: A4; margin: 11mm 10mm; }
  body { margin: 0; max-width: none; font-size: 8.3pt; line-height: 1.3; padding: 0; }
  .noprint, footer { display: none; }
  h1 { font-size: 13pt; }
  h2 { font-size: 10pt; margin: 7px 0 3px; }
  .n, .src, table.q td.n { font-size: 7pt; }
  table.stack td, table.stack th { padding: 0 4px; }
  td.spec .n { font-size: 6.5pt; }
  ul.notes li { font-size: 7.6pt; }
  ul.notes li { margin: 1px 0; }
  h2 { break-after: avoid; }
  table, li, .caution { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
  td, th { padding: 1px 4px; }
}
"""
