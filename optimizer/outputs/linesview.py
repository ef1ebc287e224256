"""Every controlled-impedance line of a candidate, as the CSV, the report and the sheets show it.

``front.json`` gives each candidate ``lines``: one object per study line, in study order, each with
the keys of ``line`` plus ``name``, ``length_mm`` and ``insertion_loss_db``; ``line`` is
``lines[0]``. A front written before studies could hold several lines has ``line`` only: it is shown
as one line named ``line``. Nothing here changes a value; a figure not in ``front.json`` is derived
(and said to be) only where a plain product gives it (insertion loss = loss per metre x length).
"""
from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from strainline.optimizer.outputs.formatting import is_num

#: The columns front.csv gives each line, as ``lines.<name>.<field>`` (yield columns only when present).
CSV_FIELDS = ("layer", "layer_name", "type", "width_um", "gap_um", "z_ohm", "target_ohm", "impedance_error_pct",
              "loss_db_per_m", "frequency_ghz", "length_mm", "insertion_loss_db", "yield_pct", "yield_stderr_pct",
              "yield_dominant")


def lines_of(cand: Mapping[str, Any]) -> list[dict[str, Any]]:
    """The candidate's lines in study order (``lines``; else ``line`` as one line named ``line``)."""
    lines = [dict(ln) for ln in cand.get("lines") or [] if isinstance(ln, Mapping)]
    if lines:
        return lines
    line = cand.get("line")
    if isinstance(line, Mapping) and line:
        return [dict(line, name=line.get("name") or "line")]
    return []


def line_name(line: Mapping[str, Any], k: int) -> str:
    """The line's name, or ``line <k+1>`` when front.json gives none."""
    name = line.get("name")
    return str(name) if name not in (None, "") else f"line {k + 1}"


def unique_names(lines: list[Mapping[str, Any]]) -> list[str]:
    """Names of the lines, a repeated name made unique with ``#<position>`` (column names must differ)."""
    names = [line_name(ln, k) for k, ln in enumerate(lines)]
    return [n if names.count(n) == 1 else f"{n}#{k + 1}" for k, n in enumerate(names)]


def study_line(front: Mapping[str, Any], k: int, name: str | None = None) -> Mapping[str, Any]:
    """The study's entry for line ``k`` (``study.lines`` by name, else by position; ``study.line`` for one)."""
    study = front.get("study") if isinstance(front.get("study"), Mapping) else {}
    given = study.get("lines")
    if isinstance(given, list):
        entries = [e for e in given if isinstance(e, Mapping)]
        for e in entries:
            if name is not None and e.get("name") == name:
                return e
        if 0 <= k < len(entries):
            return entries[k]
        return {}
    one = study.get("line")
    return one if k == 0 and isinstance(one, Mapping) else {}


def impedance_of(line: Mapping[str, Any]) -> tuple[float | None, str]:
    """The line's decided impedance and its label: ``Zdiff`` for a pair, ``Z0`` otherwise."""
    if is_num(line.get("z_diff_ohm")):
        return float(line["z_diff_ohm"]), "Zdiff"
    if is_num(line.get("z0_ohm")):
        return float(line["z0_ohm"]), "Z0"
    return None, ""


def insertion_loss(line: Mapping[str, Any]) -> tuple[float | None, bool]:
    """Insertion loss in dB and whether it is derived here: front.json's ``insertion_loss_db``, else
    ``loss_db_per_m`` x ``length_mm`` / 1000 (dB/m times metres) rounded to 0.0001 dB when both are given."""
    if is_num(line.get("insertion_loss_db")):
        return float(line["insertion_loss_db"]), False
    if is_num(line.get("loss_db_per_m")) and is_num(line.get("length_mm")):
        return round(float(line["loss_db_per_m"]) * float(line["length_mm"]) / 1000.0, 4), True
    return None, False


def yield_of(line: Mapping[str, Any]) -> dict[str, Any] | None:
    """The line's impedance yield and its dominant tolerance (largest variance share), or None."""
    y = line.get("impedance_yield")
    if not isinstance(y, Mapping) or not is_num(y.get("yield_pct")):
        return None
    shares = {str(k): float(v) for k, v in (y.get("variance_share") or {}).items() if is_num(v)}
    dominant = y.get("dominant")
    if not dominant and shares:
        dominant = max(shares, key=lambda n: shares[n])
    share = shares.get(str(dominant)) if dominant is not None else None
    return {"yield_pct": float(y["yield_pct"]),
            "stderr_pct": float(y["stderr_pct"]) if is_num(y.get("stderr_pct")) else None,
            "samples": y.get("samples"), "sigma_pct": y.get("sigma_pct") if is_num(y.get("sigma_pct")) else None,
            "dominant": None if dominant is None else str(dominant),
            "dominant_share_pct": None if share is None else 100.0 * share,
            "shares": shares}


def layer_text(line: Mapping[str, Any]) -> str | None:
    """The copper layer carrying the line as shown: its name, else ``L<n>``."""
    if line.get("layer_name"):
        return str(line["layer_name"])
    lay = line.get("layer")
    return f"L{lay}" if is_num(lay) else (None if lay is None else str(lay))


def line_summary(line: Mapping[str, Any], k: int, front: Mapping[str, Any], catalog: Any | None) -> dict[str, Any]:
    """What the report's line table shows for one line (every figure from front.json, or derived and said so)."""
    from strainline.optimizer.outputs.sheetlookup import impedance_tolerance

    name = line_name(line, k)
    z, zlab = impedance_of(line)
    il, il_derived = insertion_loss(line)
    tol = impedance_tolerance(front, line, catalog, study_line(front, k, line.get("name")))[0]
    target = line.get("target_ohm") if is_num(line.get("target_ohm")) else study_line(front, k, name).get("target_ohm")
    err = line.get("impedance_error_pct")
    if not is_num(err) and is_num(z) and is_num(target) and target:
        err = 100.0 * (z / float(target) - 1.0)
    f = line.get("frequency_ghz") if is_num(line.get("frequency_ghz")) else study_line(front, k, name).get("frequency_ghz")
    return {"name": name, "type": line.get("type"), "layer": layer_text(line), "layer_number": line.get("layer"),
            "width_um": line.get("width_um"), "gap_um": line.get("gap_um"), "z_ohm": z, "z_label": zlab,
            "target_ohm": target if is_num(target) else None, "tolerance_pct": tol,
            "error_pct": err if is_num(err) else None, "model": line.get("impedance_model"),
            "loss_db_per_m": line.get("loss_db_per_m") if is_num(line.get("loss_db_per_m")) else None,
            "frequency_ghz": f if is_num(f) else None,
            "length_mm": line.get("length_mm") if is_num(line.get("length_mm")) else None,
            "insertion_loss_db": il, "insertion_loss_derived": il_derived, "yield": yield_of(line)}


def layer_roles(cand: Mapping[str, Any]) -> tuple[dict[int, list[str]], set[int]]:
    """Which copper layers carry which lines (layer index -> line names) and which are any line's reference
    planes (indices top to bottom), over every line of the candidate."""
    from strainline.optimizer.outputs.stack import reference_indices, signal_index

    layers = cand.get("layers") or []
    carries: dict[int, list[str]] = {}
    refs: set[int] = set()
    for k, ln in enumerate(lines_of(cand)):
        view = {"line": ln, "layers": layers}
        s = signal_index(view)
        if s is not None:
            carries.setdefault(s, []).append(line_name(ln, k))
        refs.update(reference_indices(view))
    return carries, refs


def csv_columns(cand: Mapping[str, Any]) -> dict[str, Any]:
    """front.csv's per-line columns of one candidate: ``lines.<name>.<field>`` (:data:`CSV_FIELDS`)."""
    lines = lines_of(cand)
    out: dict[str, Any] = {}
    for ln, name in zip(lines, unique_names(lines)):
        z = impedance_of(ln)[0]
        y = yield_of(ln)
        vals = {"layer": ln.get("layer"), "layer_name": ln.get("layer_name"), "type": ln.get("type"),
                "width_um": ln.get("width_um"), "gap_um": ln.get("gap_um"), "z_ohm": z,
                "target_ohm": ln.get("target_ohm"), "impedance_error_pct": ln.get("impedance_error_pct"),
                "loss_db_per_m": ln.get("loss_db_per_m"), "frequency_ghz": ln.get("frequency_ghz"),
                "length_mm": ln.get("length_mm"), "insertion_loss_db": insertion_loss(ln)[0]}
        if y is not None:
            vals.update(yield_pct=y["yield_pct"], yield_stderr_pct=y["stderr_pct"], yield_dominant=y["dominant"])
        for field in CSV_FIELDS:
            if field in vals:
                out[f"lines.{name}.{field}"] = vals[field]
    return out


__all__ = ["CSV_FIELDS", "lines_of", "line_name", "unique_names", "study_line", "impedance_of", "insertion_loss",
           "yield_of", "layer_text", "line_summary", "layer_roles", "csv_columns"]
