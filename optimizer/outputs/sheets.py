"""Fabricator handoff sheets: ``handoff/<candidate id>.html`` and ``.csv`` per front candidate.

A sheet holds what a fabricator needs to quote and build one candidate (collected by
:func:`sheetdata.build_sheet`). The HTML is ``templates/sheet.html`` and ``templates/sheet_index.html``
with ``static/sheet.css``. Every number taken from ``front.json`` is written unchanged: the CSV
names the ``front.json`` field it came from in its ``key`` column, and the HTML cells carry the same
key and value as ``data-key``/``data-value``.

Public API
----------
``build_sheet(candidate, front, catalog=None) -> Sheet``
``sheet_html(sheet) -> str``, ``sheet_csv(sheet) -> str``, ``index_html(front, sheets) -> str``
``build_handoff(front, catalog=None) -> dict[str, str]``   file name -> text (nothing written)
``write_handoff(front, out_dir, catalog=None) -> list[Path]``  into ``out_dir/handoff/``
"""
from __future__ import annotations

import csv
import io
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from strainline.optimizer.outputs.fileio import write_atomic
from strainline.optimizer.outputs.formatting import (
    STRAIN_CONVENTION,
    cautions,
    csv_value,
    figure,
    first_sentence,
    fmt,
    is_num,
    study_name,
)
from strainline.optimizer.outputs.frontcheck import check_front, try_catalog
from strainline.optimizer.outputs.linesview import impedance_of, line_name, lines_of, yield_of
from strainline.optimizer.outputs.sheetbend import TO_FILL
from strainline.optimizer.outputs.sheetdata import CONSTRUCTION_NOTES, TOLERANCE_METHOD, build_sheet  # noqa: F401
from strainline.optimizer.outputs.sheetrows import PRECISION_NOTE, Row, Sheet
from strainline.optimizer.outputs.templating import inline_style, render, static_text

#: CSV columns.
CSV_COLUMNS = ("section", "item", "quantity", "value", "unit", "key", "note")


def sheet_csv(sheet: Sheet) -> str:
    """The sheet as CSV: one quantity a row, columns :data:`CSV_COLUMNS`."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    w.writerow(("meta", "sheet", "candidate id", sheet.candidate_id, "", "id", ""))
    w.writerow(("meta", "sheet", "study", sheet.study, "", "", ""))
    w.writerow(("meta", "sheet", "strainline version", sheet.version, "", "", ""))
    for r in sheet.rows:
        w.writerow((r.section, r.item, r.quantity, csv_value(r.value), r.unit, r.key, r.note))
    return buf.getvalue()


# ----------------------------------------------------------------------------- HTML
def _cell(row: Row | None, digits: int = 4, scale: float = 1.0) -> dict[str, Any]:
    """One table cell for the ``cell`` macro: shown text, data-key/data-value, title, class."""
    if row is None:
        return {"text": "-", "key": "", "value": "", "title": "", "cls": ""}
    v = row.value
    shown = "-" if v is None else fmt(v * scale if is_num(v) else v, digits)
    return {"text": shown, "key": row.key, "value": csv_value(v), "title": row.note,
            "cls": "" if is_num(v) else "t"}


def _spec_cell(row: Row) -> dict[str, Any]:
    return {"text": "" if row.value is None else str(row.value), "key": row.key, "value": csv_value(row.value),
            "title": row.note, "first": first_sentence(row.note)}


def _rows(rows: list[Row]) -> list[dict[str, Any]]:
    return [{"quantity": r.quantity, "cell": _cell(r, 5), "unit": r.unit, "note": r.note} for r in rows]


def _blocks(rows: list[Row]) -> list[dict[str, Any]]:
    """Rows grouped by item (a line's or a bend zone's name), in order: one small table each."""
    names = list(dict.fromkeys(r.item for r in rows))
    return [{"name": n, "rows": _rows([r for r in rows if r.item == n])} for n in names]


#: Rows shown as full-width lines under the tables (long text).
_WIDE = ("equation used", "field-solver check", "impedance test coupon", "coupon test method")


def sheet_html(sheet: Sheet) -> str:
    """The printable sheet (one or two A4 pages)."""
    stack = []
    for i, r in enumerate(sheet.stackup, 1):
        cu = "copper_weight" in r
        stack.append({
            "n": i, "layer": _cell(r["layer"]), "function": _cell(r["function"]),
            "spec": _spec_cell(r["specification"]), "thickness": _cell(r["thickness_um"], 4),
            "tolerance": _cell(r["tolerance_um"], 3),
            "dk": [_cell(r["dk"], 3), _cell(r["df"], 3)] if "dk" in r else None,
            "dk_note": r["dk"].note if "dk" in r else "",
            "dk_at": r["dk"].note.replace(" (catalog)", "") if "dk" in r else "",
            "copper": [_cell(r["copper_weight"]), _cell(r["copper_type"]), _cell(r["ipc4562_grade"]),
                       _cell(r["coverage"], 3, 100.0)] if cu else None})
    at = {r["dk"].note for r in sheet.stackup if "dk" in r}
    dk_head = "Dk / Df " + at.pop().replace(" (catalog)", "") if len(at) == 1 else "Dk / Df"
    if dk_head != "Dk / Df":                  # one frequency for every dielectric: said once, in the heading
        for row in stack:
            row["dk_at"] = ""
    total = {r.quantity: r for r in sheet.section("total")}
    cap = total.get("total thickness tolerance (+/-)")
    worst = total.get("total thickness tolerance, worst case (+/-)")
    rss = total.get("total thickness tolerance, root-sum-square (+/-)")
    wide = [r for r in sheet.section("impedance") + sheet.section("field-check") if r.quantity in _WIDE]
    imp = [r for r in sheet.section("impedance") if r not in wide]
    checks = [r for r in sheet.section("field-check") if r not in wide]
    cells = [{"quantity": r.quantity, "cell": _cell(r, 5), "unit": r.unit} for r in checks]
    return render(
        "sheet.html", sheet=sheet, css=inline_style(static_text("sheet.css")), cautions=sheet.cautions,
        stack=stack, dk_head=dk_head, total=_cell(total.get("total thickness")),
        total_tol=_cell(worst if worst is not None else cap, 3),
        rss=_cell(rss, 3) if rss is not None else None, cap=_cell(cap, 3) if cap is not None else None,
        cap_note=cap.note if cap else "", method=TOLERANCE_METHOD,
        impedance=_rows(imp), bend=_rows(sheet.section("bend") + sheet.section("objectives")),
        first_line=sheet.first_line, line_blocks=_blocks(sheet.section("lines")), zone_blocks=_blocks(sheet.section("zone")),
        drawing=_rows(sheet.section("drawing")),
        wide=[{"quantity": r.quantity, "key": r.key, "value": csv_value(r.value), "text": r.value, "note": r.note}
              for r in wide],
        check_pairs=[cells[i:i + 2] for i in range(0, len(cells), 2)],
        check_note=next((r.note for r in checks if r.note), ""),
        notes=sheet.notes, convention=STRAIN_CONVENTION, precision=PRECISION_NOTE, to_fill=TO_FILL)


def index_html(front: Mapping[str, Any], sheets: list[Sheet]) -> str:
    """``handoff/index.html``: every sheet with its key figures."""
    rows = []
    for sh, c in zip(sheets, front["candidates"]):
        ln, bd = c.get("line") or {}, c.get("bend") or {}
        rows.append({
            "id": sh.candidate_id,
            "thickness": fmt(figure(c, "total_thickness_um")[0]), "strain": fmt(figure(c, "peak_strain_pct")[0]),
            "type": ln.get("type", "-"), "width": fmt(ln.get("width_um")),
            "z": fmt(ln.get("z_diff_ohm") if ln.get("z_diff_ohm") is not None else ln.get("z0_ohm")),
            "radius": fmt(bd.get("inner_radius_mm")), "cycles": fmt(bd.get("cycles_to_failure"), 3),
            "lines": [(line_name(x, k), fmt(impedance_of(x)[0]), fmt((yield_of(x) or {}).get("yield_pct")))
                      for k, x in enumerate(lines_of(c))]})
    many = any(len(r["lines"]) > 1 for r in rows)
    with_yield = any(y != "-" for r in rows for _, _, y in r["lines"])
    return render("sheet_index.html", study=study_name(front), css=inline_style(static_text("sheet.css")),
                  cautions=cautions(front), rows=rows, many=many, with_yield=with_yield)


def build_handoff(front: Mapping[str, Any], catalog: Any | None = None) -> dict[str, str]:
    """All handoff files for a front: ``{file name: text}``; nothing is written."""
    front = check_front(front)
    if catalog is None:
        catalog = try_catalog(front)
    sheets = [build_sheet(c, front, catalog) for c in front["candidates"]]
    files: dict[str, str] = {}
    for sh in sheets:
        files[f"{sh.candidate_id}.html"] = sheet_html(sh)
        files[f"{sh.candidate_id}.csv"] = sheet_csv(sh)
    files["index.html"] = index_html(front, sheets)
    return files


def write_handoff(front: Mapping[str, Any], out_dir: str | Path, catalog: Any | None = None) -> list[Path]:
    """Build every sheet in memory, then write them into ``out_dir/handoff/``; return the paths.

    The folder is taken as given (replacing a previous output set is the caller's transaction).
    """
    files = build_handoff(front, catalog)
    folder = Path(out_dir) / "handoff"
    return [write_atomic(folder / name, text) for name, text in files.items()]


__all__ = ["CSV_COLUMNS", "build_sheet", "sheet_html", "sheet_csv", "index_html", "build_handoff",
           "write_handoff"]
