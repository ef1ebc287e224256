"""The front's files: front.json, front.csv, the pandas view and the terminal table."""
from __future__ import annotations

import csv
import io
import json
from pathlib import Path
from typing import Any

from strainline.optimizer.outputs.fileio import write_atomic
from strainline.optimizer.outputs.linesview import csv_columns
from strainline.optimizer.search.front import CAUTION


def _flatten(prefix: str, value: Any, out: dict[str, Any]) -> None:
    if isinstance(value, dict):
        for k, v in value.items():
            _flatten(f"{prefix}.{k}" if prefix else str(k), v, out)
    elif isinstance(value, list):
        if value and all(isinstance(v, dict) for v in value):
            for i, v in enumerate(value):
                _flatten(f"{prefix}.{i + 1}", v, out)
        else:
            out[prefix] = ";".join(str(v) for v in value)
    else:
        out[prefix] = value


def flat_rows(front: dict[str, Any]) -> list[dict[str, Any]]:
    """One flat dict per candidate (dotted column names; layers and bend zones numbered top to bottom from 1,
    ``bends.<n>.*``; each controlled line by name, ``lines.<name>.<field>``, see :func:`linesview.csv_columns`)."""
    rows = []
    for c in front["candidates"]:
        r: dict[str, Any] = {}
        c2 = dict(c)
        c2["findings"] = [f["code"] for f in c.get("findings", [])]
        # a zone's strain profile is per layer (front.json has it); the rows keep each zone's figures
        for key in ("bend", "bends"):
            v = c2.get(key)
            if isinstance(v, dict):
                c2[key] = {k: x for k, x in v.items() if k != "profile"}
            elif isinstance(v, list):
                c2[key] = [{k: x for k, x in b.items() if k != "profile"} if isinstance(b, dict) else b for b in v]
        # every line gets one compact set of columns by name (lines.<name>.<field>); line.* keeps lines[0] in full
        c2.pop("lines", None)
        _flatten("", c2, r)
        r.update(csv_columns(c))
        rows.append(r)
    return rows


def front_dataframe(front: dict[str, Any]):
    """The front as a pandas DataFrame, one flat row per candidate (same columns as front.csv)."""
    import pandas as pd

    return pd.DataFrame(flat_rows(front))


def front_csv(front: dict[str, Any]) -> str:
    """``front.csv`` text: one flat row per candidate, header from the union of columns, and a last
    ``caution`` column so a spreadsheet opened on its own still carries the caution."""
    rows = flat_rows(front)
    cols: list[str] = []
    for r in rows:
        for k in r:
            if k not in cols:
                cols.append(k)
    if rows:
        cols.append("caution")
    caution = front.get("caution", CAUTION)
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=cols or ["id"], lineterminator="\n")
    w.writeheader()
    for r in rows:
        w.writerow({**{k: ("" if r.get(k) is None else r.get(k)) for k in cols}, "caution": caution})
    return buf.getvalue()


def write_outputs(front: dict[str, Any], out_dir: Path) -> list[Path]:
    """Write ``front.json`` and ``front.csv`` into ``out_dir`` atomically; return the paths.

    The report and handoff writers extend this function (one place for every output file).
    """
    out_dir = Path(out_dir)
    paths = [
        write_atomic(out_dir / "front.json", json.dumps(front, indent=1, allow_nan=False) + "\n"),
        write_atomic(out_dir / "front.csv", front_csv(front)),
    ]
    from strainline.optimizer.outputs.report import write_all   # report.html + handoff/ (built in memory first)

    paths += write_all(front, out_dir)
    return paths


def format_table(front: dict[str, Any], limit: int = 25) -> str:
    """The short text table ``strainline solve`` prints."""
    s = front["search"]
    lines = [f"study {front['study'].get('name', '')}: {s['method']} search, {s['evaluated']:,} evaluated of "
             f"{s['space_size']:,}, {s['feasible']:,} feasible, {len(front['candidates'])} on the front"
             + (f", hypervolume {s['hypervolume']:.4f}" if s.get("hypervolume") else "")
             + f" ({s['seconds']:.1f} s)"]
    cands = front["candidates"]
    if not cands:
        inf = s.get("infeasible") or {}
        lines.append(inf.get("message", "no feasible stackup"))
        counts = inf.get("violations") or {}
        if counts:      # how many evaluated candidates each constraint ruled out, most first
            lines.append("candidates breaking each constraint: " + ", ".join(
                f"{k.replace('_', ' ')} {v:,}" for k, v in sorted(counts.items(), key=lambda kv: -kv[1]) if v))
        return "\n".join(lines)
    okeys = list(cands[0]["objectives"])
    names = [ln.get("name") or f"line {k + 1}" for k, ln in enumerate(cands[0].get("lines") or [])]
    many = len(names) > 1          # several lines: one column per line, "layer width/gap impedance"
    head = ["id"] + okeys + ([str(n) for n in names] if many else ["layer", "width_um", "gap_um", "z_ohm"]) + [
        "thick_um", "peak_%", "cycles"]
    table = [head]
    for c in cands[:limit]:
        ln = c["line"]
        z = ln["z_diff_ohm"] if ln["z_diff_ohm"] is not None else ln["z0_ohm"]
        cyc = c["bend"]["cycles_to_failure"]
        if many:
            cells = [f"L{x['layer']} {_fmt(x['width_um'])}" + (f"/{_fmt(x['gap_um'])}" if x.get("gap_um") is not None
                                                              else "") + f" {_fmt(_z(x))}" for x in c["lines"]]
        else:
            cells = [f"L{ln['layer']}", _fmt(ln["width_um"]), _fmt(ln["gap_um"]), _fmt(z)]
        row = [c["id"]] + [_fmt(c["objectives"][k]) for k in okeys] + cells + [
            _fmt(c["bend"]["total_thickness_um"]), _fmt(c["bend"]["peak_copper_strain_pct"]),
            "-" if cyc is None else _sig3(cyc)]
        table.append(row)
    widths = [max(len(r[i]) for r in table) for i in range(len(head))]
    for r in table:
        lines.append("  ".join(v.rjust(w) for v, w in zip(r, widths)))
    if many:
        lines.append("each line: copper layer, width[/gap] um, impedance ohm (Z0, or Zdiff for a pair)")
    if len(cands) > limit:
        lines.append(f"... {len(cands) - limit} more in front.json / front.csv")
    return "\n".join(lines)


def _z(line: dict[str, Any]) -> Any:
    return line["z_diff_ohm"] if line.get("z_diff_ohm") is not None else line.get("z0_ohm")


def _sig3(v: float) -> str:
    """Three significant figures written out with thousands separators (``59,700``), scientific from 1e9."""
    return f"{v:.3g}" if abs(v) >= 1e9 else f"{float(f'{v:.3g}'):,.0f}"


def _fmt(v: Any) -> str:
    if v is None:
        return "-"
    if isinstance(v, float):
        a = abs(v)
        if a >= 1e5:
            return _sig3(v)
        if a >= 100:
            return f"{v:.1f}"
        return f"{v:.3f}" if a < 10 else f"{v:.2f}"
    return str(v)


__all__ = ["write_outputs", "front_dataframe", "front_csv", "flat_rows", "format_table"]
