"""The controlled-impedance part of a handoff sheet: the line as designed, its tolerances, the etch
tolerance of the trace, the loss at its frequency, the test coupon and the field-solver check."""
from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from strainline.optimizer.outputs.formatting import fmt, is_num, study_value
from strainline.optimizer.outputs.sheetlookup import (
    dk_frequency_ghz,
    impedance_tolerance,
    min_feature_um,
    weight_of,
    width_tolerance,
)
from strainline.optimizer.outputs.linesview import insertion_loss, line_name, lines_of, study_line, yield_of
from strainline.optimizer.outputs.sheetrows import Sheet, derived

#: The test method named on every sheet for the impedance coupon.
COUPON_METHOD = "time-domain reflectometry (TDR), IPC-TM-650 2.5.5.7"


def impedance_rows(sheet: Sheet, cand: Mapping[str, Any], front: Mapping[str, Any], catalog: Any | None,
                   sig: int | None, refs: list[int]) -> None:
    """Add the impedance, etch, loss, coupon and field-check rows of one candidate to ``sheet``."""
    layers = cand["layers"]
    line = cand.get("line") or {}
    if not line:
        return
    pair = "coupled" in str(line.get("type", ""))
    if line.get("layer_name"):
        sheet.add("impedance", "line", "signal layer", line["layer_name"], "", "line.layer_name")
    else:
        sheet.add("impedance", "line", "signal layer", line.get("layer"), "", "line.layer")
    sheet.add("impedance", "line", "line type", line.get("type"), "", "line.type")
    sheet.add("impedance", "line", "trace width as designed", line.get("width_um"), "um", "line.width_um")
    solid = line.get("solid_plane") if isinstance(line.get("solid_plane"), Mapping) else None
    if solid is not None:          # decided over a hatched plane: the solid-plane row stays for reference
        sheet.add("impedance", "line", "width the same line would need over a solid plane", solid.get("width_um"),
                  "um", "line.solid_plane.width_um", "not the width to build: the reference plane is hatched "
                  "(line.hatch); the field-solver check below is of this solid-plane row")
    if line.get("gap_um") is not None:
        sheet.add("impedance", "line", "pair gap (edge to edge) as designed" if pair else "gap as designed",
                  line.get("gap_um"), "um", "line.gap_um")
    target = line.get("target_ohm")
    tkey = "line.target_ohm"
    if target is None:
        target, tkey = study_line(front, 0, line.get("name")).get("target_ohm"), ""
    sheet.add("impedance", "line", "target differential impedance" if pair else "target impedance",
              target, "ohm", tkey, "" if tkey else "from the study (line.target_ohm)")
    entry = study_line(front, 0, line.get("name"))
    where = "lines[0]" if isinstance(study_value(front, "lines"), list) else "line"
    tol, tolkey, tolnote = impedance_tolerance(front, line, catalog, entry, where)
    tolkey = tolkey.replace(f"{where}.", "line.")      # a figure of front.json: candidate.line is lines[0]
    sheet.add("impedance", "line", "impedance tolerance (+/-)", tol, "%", tolkey, tolnote)
    ref_names = ", ".join(str(layers[i].get("name")) for i in refs if i != sig) or \
        ("coplanar grounds on the signal layer" if refs == [sig] else "-")
    sheet.add("impedance", "line", "reference planes", ref_names, "")
    # the figures of the model that decided (front.json line.impedance_model), then the closed form beside
    field = line.get("impedance_model") == "field"
    src = "2-D field solution" if field else "closed form"
    if solid is not None:
        src = "over the hatched plane: 2-D field solution x 3-D hatch factor"
    cf = line.get("closed_form")
    cf_note = ""
    if field and solid is None and isinstance(cf, Mapping) and is_num(cf.get("z_ohm_at_width")) \
            and is_num(cf.get("width_um")):
        cf_note = (f"closed form at this width {cf['z_ohm_at_width']:.2f} ohm; its width for the target "
                   f"{cf['width_um']:.2f} um (the field solution decided)")
    if pair:
        sheet.add("impedance", "line", f"differential impedance ({src})", line.get("z_diff_ohm"), "ohm",
                  "line.z_diff_ohm", cf_note)
    if line.get("z0_ohm") is not None:
        sheet.add("impedance", "line", f"single-line impedance ({src})" if pair else
                  f"impedance ({src})", line.get("z0_ohm"), "ohm", "line.z0_ohm", "" if pair else cf_note)
    if line.get("eps_eff") is not None:
        sheet.add("impedance", "line", "effective permittivity", line.get("eps_eff"), "", "line.eps_eff")
    geom = line.get("geometry") or {}
    labels = {"height_um": ("dielectric below the trace", "um"), "height_top_um": ("dielectric above the trace", "um"),
              "thickness_um": ("trace copper thickness", "um"), "er": ("Dk below (composite)", ""),
              "er_top": ("Dk above", ""), "cover_um": ("cover over the trace", "um"), "cover_er": ("cover Dk", "")}
    dk_note = _dk_note(layers, catalog)
    no_cover = not geom.get("cover_um")
    for gk, (lab, unit) in labels.items():
        if gk in ("cover_um", "cover_er") and no_cover:
            continue
        if geom.get(gk) is not None:
            sheet.add("impedance", "geometry", lab, geom[gk], unit, f"line.geometry.{gk}",
                      dk_note if gk in ("er", "er_top", "cover_er") else "")
    sheet.add("impedance", "geometry", "equation used", geom.get("method") or line.get("method"), "",
              "line.geometry.method" if geom.get("method") else "line.method" if line.get("method") else "")
    fc = line.get("field_check")
    if isinstance(fc, Mapping):
        at = "at the solid-plane width" if solid is not None else "at the designed width"
        fl = {"z0_ohm": (f"field-solved impedance {at}", "ohm"),
              "z_diff_ohm": (f"field-solved differential impedance {at}", "ohm"),
              "z_odd_ohm": ("field-solved odd-mode impedance", "ohm"),
              "z_even_ohm": ("field-solved even-mode impedance", "ohm"),
              "z_common_ohm": ("field-solved common-mode impedance", "ohm"),
              "eps_eff": ("field-solved effective permittivity", ""),
              "eps_eff_even": ("field-solved even-mode effective permittivity", ""),
              "closed_form_error_pct": ("search's impedance against this field solution" if field else
                                        "closed-form error against the field solution", "%"),
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


    _etch_and_loss(sheet, line, layers, front, catalog, sig, lines_of(cand))


def _dk_note(layers: list[Mapping[str, Any]], catalog: Any | None) -> str:
    """Where the Dk values hold: the catalog frequencies of the candidate's dielectrics."""
    freqs = sorted({f for f in (dk_frequency_ghz(lay.get("material"), catalog) for lay in layers
                                if lay.get("kind") == "dielectric") if f is not None})
    if not freqs:
        return "Dk as given in front.json; its frequency is not in the catalog"
    return "from catalog Dk values given at " + " / ".join(fmt(f) for f in freqs) + " GHz"


def _etch_and_loss(sheet: Sheet, line: Mapping[str, Any], layers: list[Mapping[str, Any]],
                   front: Mapping[str, Any], catalog: Any | None, sig: int | None,
                   cand_lines: list[Mapping[str, Any]] = ()) -> None:
    """Etched-width tolerance, the fabricator's minimum features, loss at its frequency, the coupon."""
    weight = line.get("copper_weight")
    if not weight and sig is not None:
        weight = weight_of(layers[sig], catalog)[0]
    rel, src = width_tolerance(weight, catalog)
    w = line.get("width_um")
    sheet.add("impedance", "etch", "trace width tolerance after etch (+/-)",
              derived(rel * w, "um") if rel is not None and is_num(w) else None, "um", "",
              f"{fmt(100 * rel)} % of the width for {weight} copper (catalog fabrication.width_tolerance)"
              if rel is not None else src)
    tr, sp = min_feature_um(weight, catalog)
    if tr is not None:
        sheet.add("impedance", "etch", f"fabricator minimum trace / space ({weight} copper)",
                  f"{fmt(tr)} / {fmt(sp)}", "um", "", "catalog fabrication.min_feature")
    f = line.get("frequency_ghz")
    if not is_num(f):
        f = study_line(front, 0, line.get("name")).get("frequency_ghz")
    at = f" at {fmt(f)} GHz" if is_num(f) else " (frequency not stated)"
    if is_num(line.get("loss_db_per_m")):
        split = [f"{lab} {fmt(line[k])} dB/m" for k, lab in (("conductor_loss_db_per_m", "conductor"),
                                                              ("dielectric_loss_db_per_m", "dielectric"))
                 if is_num(line.get(k))]
        sheet.add("impedance", "loss", "line loss" + at + " (estimate)", line["loss_db_per_m"], "dB/m",
                  "line.loss_db_per_m", " + ".join(split))
    _line_figures(sheet, "impedance", "loss", line, "line", "", front, 0)
    names = [line_name(ln, k) for k, ln in enumerate(cand_lines)]
    what = (f"one per panel for each of the {len(names)} controlled lines ({', '.join(names)}): each line on its "
            "own layer, width, gap and reference planes" if len(names) > 1 else
            "one per panel: this line on the same layer, width, gap and reference planes")
    sheet.add("impedance", "coupon", "impedance test coupon", what + ", in the same material build", "", "",
              "IPC-6013 acceptance by coupon; details agreed with the fabricator")
    sheet.add("impedance", "coupon", "coupon test method", COUPON_METHOD, "", "",
              "IPC-TM-650 2.5.5.7, characteristic impedance of lines on printed boards by TDR")


def _line_figures(sheet: Sheet, section: str, item: str, line: Mapping[str, Any], key: str, pre: str,
                  front: Mapping[str, Any], k: int) -> None:
    """Length, insertion loss and impedance yield with its dominant tolerance: rows every line block carries."""
    if is_num(line.get("length_mm")):
        sheet.add(section, item, f"{pre}routed length", line["length_mm"], "mm", f"{key}.length_mm")
    il, il_derived = insertion_loss(line)
    if il is not None:
        f = line.get("frequency_ghz")
        if not is_num(f):
            f = study_line(front, k, line.get("name")).get("frequency_ghz")
        at = f" at {fmt(f)} GHz" if is_num(f) else ""
        sheet.add(section, item, f"{pre}insertion loss over the routed length{at} (estimate)", il, "dB",
                  "" if il_derived else f"{key}.insertion_loss_db",
                  "loss per metre x routed length" if il_derived else "")
    y = yield_of(line)
    if y is not None:
        sheet.add(section, item, f"{pre}share of boards inside the impedance tolerance (estimate)", y["yield_pct"], "%",
                  f"{key}.impedance_yield.yield_pct",
                  "quasi-Monte Carlo over the catalog's fabrication tolerances" +
                  (f"; +/- {fmt(y['stderr_pct'], 2)} % sampling uncertainty" if y["stderr_pct"] is not None else "") +
                  (f"; largest share of the variance: {y['dominant']}" if y["dominant"] else ""))
        if y["dominant"] is not None:
            sheet.add(section, item, f"{pre}tolerance that dominates the yield", y["dominant"], "",
                      f"{key}.impedance_yield.dominant" if line["impedance_yield"].get("dominant") else "",
                      f"{fmt(y['dominant_share_pct'], 3)} % of the impedance variance" if y["dominant_share_pct"]
                      is not None else "largest share of the impedance variance")


def other_lines(sheet: Sheet, cand: Mapping[str, Any], front: Mapping[str, Any] | None = None,
                catalog: Any | None = None) -> None:
    """An impedance block (section ``lines``, item = the line's name) for every line after the first when
    the candidate carries several (``lines`` in front.json): layer, type, width and gap, target and
    tolerance, the impedance of the model that decided, loss at its frequency, insertion loss, yield."""
    front = front or {}
    lines = [ln for ln in cand.get("lines") or [] if isinstance(ln, Mapping)]
    if len(lines) < 2:
        return
    for k, ln in enumerate(lines[1:], 1):
        name = line_name(ln, k)
        key = f"lines[{k}]"

        def add(q: str, v: Any, unit: str = "", field: str = "", note: str = "") -> None:
            sheet.add("lines", name, q, v, unit, f"{key}.{field}" if field else "", note)

        pair = "coupled" in str(ln.get("type", ""))
        add("signal layer", *((ln["layer_name"], "", "layer_name") if ln.get("layer_name") else (ln.get("layer"), "", "layer")))
        add("line type", ln.get("type"), "", "type")
        add("trace width as designed", ln.get("width_um"), "um", "width_um")
        if ln.get("gap_um") is not None:
            add("pair gap (edge to edge) as designed" if pair else "gap as designed", ln.get("gap_um"), "um", "gap_um")
        entry = study_line(front, k, ln.get("name"))
        target, tfield = ln.get("target_ohm"), "target_ohm"
        if target is None:
            target, tfield = entry.get("target_ohm"), ""
        add("target differential impedance" if pair else "target impedance", target, "ohm", tfield,
            "" if tfield else f"from the study ({key}.target_ohm)")
        tol, tolkey, tolnote = impedance_tolerance(front, ln, catalog, entry, key)
        sheet.add("lines", name, "impedance tolerance (+/-)", tol, "%", tolkey, tolnote)
        src = "2-D field solution" if ln.get("impedance_model") == "field" else "closed form"
        if pair and ln.get("z_diff_ohm") is not None:
            add(f"differential impedance ({src})", ln.get("z_diff_ohm"), "ohm", "z_diff_ohm")
        elif ln.get("z0_ohm") is not None:
            add(f"impedance ({src})", ln.get("z0_ohm"), "ohm", "z0_ohm")
        if is_num(ln.get("loss_db_per_m")):
            f = ln.get("frequency_ghz") if is_num(ln.get("frequency_ghz")) else entry.get("frequency_ghz")
            add("line loss" + (f" at {fmt(f)} GHz" if is_num(f) else " (frequency not stated)") + " (estimate)",
                ln["loss_db_per_m"], "dB/m", "loss_db_per_m")
        _line_figures(sheet, "lines", name, ln, key, "", front, k)
        fc = ln.get("field_check")
        if isinstance(fc, Mapping):         # the field-solver check of this line (strainline --verify)
            field = ln.get("impedance_model") == "field"
            for fk, lab, unit in (("z_diff_ohm" if pair else "z0_ohm", "field-solved impedance at the designed width", "ohm"),
                                  ("closed_form_error_pct", "search's impedance against this field solution" if field
                                   else "closed-form error against the field solution", "%"),
                                  ("width_um", "field-refined width for the target", "um"),
                                  ("refined_ok", "refined width meets the impedance tolerance", ""),
                                  ("error", "field check not possible", "")):
                if fc.get(fk) is not None:
                    add(lab, fc[fk], unit, f"field_check.{fk}")
        rel, src_w = width_tolerance(ln.get("copper_weight"), catalog)
        w = ln.get("width_um")
        if rel is not None and is_num(w):
            add("trace width tolerance after etch (+/-)", derived(rel * w, "um"), "um", "",
                f"{fmt(100 * rel)} % of the width for {ln.get('copper_weight')} copper (catalog fabrication.width_tolerance)")


__all__ = ["impedance_rows", "other_lines", "COUPON_METHOD"]
