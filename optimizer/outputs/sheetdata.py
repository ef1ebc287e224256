"""What a fabricator handoff sheet holds, collected from one front candidate (no HTML, no I/O).

:func:`build_sheet` returns a :class:`Sheet`: the stackup rows top to bottom (with Dk/Df and the
frequency they hold at), the overall thickness with its tolerance combined from the layers (worst
case and root-sum-square, both stated) beside the fabricator's capability rule, the
controlled-impedance table (:mod:`sheetline`; with several lines one more block per further line, section
``lines``), the bend requirements (with several zones one block per zone, section ``zone``) and the drawing
fields (:mod:`sheetbend`), the notes with their sources (:mod:`sheetnotes`) and the cautions. Every number
taken from ``front.json`` keeps its exact value and names its field in ``Row.key``; derived numbers
have an empty key and are rounded (:data:`sheetrows.DECIMALS`).
"""
from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from strainline.optimizer.outputs.formatting import cautions, figure, findings_of, fmt, study_name, study_value
from strainline.optimizer.outputs.sheetbend import bend_rows, drawing_rows, zone_rows
from strainline.optimizer.outputs.linesview import layer_roles, line_name, lines_of
from strainline.optimizer.outputs.sheetline import impedance_rows, other_lines
from strainline.optimizer.outputs.sheetlookup import (
    bonded_build,
    dk_frequency_ghz,
    foil_of,
    leaf_of_layers,
    rel_tolerance,
    total_tolerance_um,
    weight_of,
)
from strainline.optimizer.outputs.sheetnotes import ALWAYS, construction_notes
from strainline.optimizer.outputs.sheetrows import Row, Sheet, derived
from strainline.optimizer.outputs.stack import family_of, reference_indices, signal_index

#: The notes every sheet carries whatever the candidate (the rest depend on it, see :mod:`sheetnotes`).
CONSTRUCTION_NOTES = ALWAYS

#: How the overall thickness tolerance is combined from the layers, as the sheet states it.
TOLERANCE_METHOD = ("worst case: the sum of the layer tolerances; root-sum-square (RSS): the square root of the "
                    "sum of their squares, for independent layers")


def _stackup(sheet: Sheet, cand: Mapping[str, Any], catalog: Any | None, sig: int | None,
             refs: list[int]) -> tuple[list[float], list[tuple[str, Any]]]:
    """Stackup rows; returns the layer tolerances (um) and (name, foil record) of each copper layer."""
    layers = cand["layers"]
    unbonded = sheet.unbonded
    leaves = leaf_of_layers(layers) if unbonded else [None] * len(layers)
    fills = bonded_build(cand) if unbonded else {}
    tols: list[float] = []
    foils: list[tuple[str, Any]] = []
    for j, lay in enumerate(layers):
        k = f"layers[{j}]"
        name = str(lay.get("name") or f"layer {j + 1}")
        kind = lay.get("kind")
        if kind == "copper":
            role = "signal" if j == sig else ("reference plane" if j in refs else str(lay.get("role") or "copper"))
            if len(lines_of(cand)) > 1:           # several lines: every line's layer and reference planes
                carries, all_refs = layer_roles(cand)
                role = (f"signal ({', '.join(carries[j])})" if j in carries else
                        "reference plane" if j in all_refs else str(lay.get("role") or "copper"))
        elif kind == "air-gap":
            role = "air gap in the bend only"
        else:
            role = str(kind)
        if leaves[j] is not None:
            role += f" (leaf {leaves[j]})"
        mat = str(lay.get("material") or "")
        rec = getattr(catalog, "dielectrics", {}).get(mat) if catalog is not None else None
        spec = rec.description if rec is not None else ""
        weight, weight_src = (None, "")
        foil = None
        if kind == "copper":
            weight, weight_src = weight_of(lay, catalog)
            foil = foil_of(lay, catalog)[1]
            spec = foil.description if foil is not None else "copper foil"
            foils.append((name, foil))
        rel, rel_src = rel_tolerance(lay, catalog) if kind != "air-gap" else (None, "air gap: no material")
        t = lay.get("thickness_um")
        row: dict[str, Row] = {
            "layer": Row("stackup", name, "layer", name, "", f"{k}.name"),
            "function": Row("stackup", name, "function", role, ""),
            "specification": Row("stackup", name, "material", mat, "", f"{k}.material", spec),
            "thickness_um": Row("stackup", name, "thickness", t, "um", f"{k}.thickness_um"),
            "tolerance_um": Row("stackup", name, "thickness tolerance (+/-)",
                                None if rel is None else derived(float(t) * rel, "um"), "um", "", rel_src),
            "tolerance_pct": Row("stackup", name, "thickness tolerance (+/-)",
                                 None if rel is None else derived(100.0 * rel, "%"), "%", "", rel_src),
        }
        if rel is not None:
            tols.append(float(t) * rel)
        if kind == "dielectric":
            f = dk_frequency_ghz(mat, catalog)
            at = f"at {fmt(f)} GHz (catalog)" if f is not None else "frequency not in the catalog"
            row["dk"] = Row("stackup", name, "Dk", lay.get("dk"), "", f"{k}.dk" if "dk" in lay else "", at)
            row["df"] = Row("stackup", name, "Df", lay.get("df"), "", f"{k}.df" if "df" in lay else "", at)
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
        if unbonded:
            sheet.bonded_build.append({"layer": name, "build": f"{fills[j]}" if j in fills else f"{mat} {fmt(t)} um",
                                       "gap": j in fills})
    for j, text in fills.items():
        sheet.add("stackup", str(layers[j].get("name") or f"layer {j + 1}"), "bonded outside the bend with", text)
    return tols, foils


def _totals(sheet: Sheet, cand: Mapping[str, Any], catalog: Any | None, tols: list[float]) -> None:
    """Overall thickness, its tolerance combined from the layers (both ways) and the capability rule."""
    total, total_key = figure(cand, "total_thickness_um")
    sheet.add("total", "overall", "total thickness", total, "um", total_key)
    tot_tol, tot_src = total_tolerance_um(float(total), catalog)
    sheet.add("total", "overall", "total thickness tolerance (+/-)", None if tot_tol is None else derived(tot_tol, "um"),
              "um", "", "fabricator capability rule for the overall thickness: " + tot_src)
    if tols:
        sheet.add("total", "overall", "total thickness tolerance, worst case (+/-)", derived(sum(tols), "um"), "um",
                  "", "sum of the layer tolerances above (" + TOLERANCE_METHOD + ")")
        sheet.add("total", "overall", "total thickness tolerance, root-sum-square (+/-)",
                  derived(math.sqrt(sum(t * t for t in tols)), "um"), "um", "",
                  "RSS of the layer tolerances above, for independent layers")


def build_sheet(cand: Mapping[str, Any], front: Mapping[str, Any], catalog: Any | None = None) -> Sheet:
    """Collect the sheet of one candidate (no I/O beyond the catalog already loaded)."""
    from strainline.optimizer import __version__

    sheet = Sheet(str(cand["id"]), study_name(front), str(front.get("version") or __version__))
    bend = cand.get("bend") or {}
    sheet.unbonded = bend.get("region") == "unbonded" or any(
        lay.get("kind") == "air-gap" for lay in cand["layers"])
    sig = signal_index(cand)
    refs = reference_indices(cand)
    tols, foils = _stackup(sheet, cand, catalog, sig, refs)
    _totals(sheet, cand, catalog, tols)
    impedance_rows(sheet, cand, front, catalog, sig, refs)
    other_lines(sheet, cand, front, catalog)
    if len([ln for ln in cand.get("lines") or [] if isinstance(ln, Mapping)]) > 1:
        sheet.first_line = line_name(cand["lines"][0], 0)
    if len([b for b in cand.get("bends") or [] if isinstance(b, Mapping)]) > 1:
        sheet.bend_zone = str(bend.get("name") or "")
    bend_rows(sheet, cand, front)
    zone_rows(sheet, cand)
    drawing_rows(sheet, cand, front)

    for f in findings_of(cand):
        src = f["source"] or "rule finding (no source given)"
        sheet.notes.append((f["severity"], f["message"], src))
    families = [family_of(lay, catalog) for lay in cand["layers"]]
    use = bend.get("use") or study_value(front, "bend", "use")
    for text, src in construction_notes(cand, foils, families, use):
        sheet.notes.append(("construction", text, src))
    for sev, text, src in sheet.notes:
        sheet.add("note", sev, "note", text, "", "", src)
    sheet.cautions = cautions(front)
    for c in sheet.cautions:
        sheet.add("caution", "caution", "caution", c)
    return sheet


__all__ = ["Row", "Sheet", "build_sheet", "CONSTRUCTION_NOTES", "TOLERANCE_METHOD"]
