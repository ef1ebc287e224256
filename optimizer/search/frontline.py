"""One line of one front candidate, as ``front.json`` holds it (``candidate.lines[k]``).

:func:`line_record` gathers a candidate's row of a line table into the record a front candidate
carries per line: layer, width, gap, impedance against target, eps_eff, loss (per metre and, with
the line's ``length_mm``, insertion loss in dB), the closed-form geometry and method, what decided
the impedance, its yield when asked, and the line's findings (closed form against the field, range,
off-target nominal, hatched reference).
"""
from __future__ import annotations

import math
from typing import Any

import numpy as np

from strainline.models.units import UM


def _num(x: Any) -> float | None:
    """A JSON-safe float (None for nan/inf); the one every front record uses."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _finding(code: str, severity: str, message: str, source: str) -> dict[str, str]:
    return {"code": code, "severity": severity, "message": message, "source": source}


def _planes(kind: str, sig: int, n_cu: int) -> list[int]:
    """0-based reference planes of a line on copper ``sig``."""
    if kind in ("stripline", "coupled-stripline"):
        return [p for p in (sig - 1, sig + 1) if 0 <= p < n_cu]
    return [sig + 1] if sig == 0 else [sig - 1]


def hatch_task_of(problem: Any, slots: dict[str, np.ndarray], row: int) -> tuple | None:
    """The 3-D hatch solve :func:`line_record` will need for this line of this candidate (or None),
    so a front's solves can run in parallel first (:func:`.hatchline.prefetch_hatch`)."""
    from strainline.optimizer.search.hatchfront import hatch_row

    study = problem.space.study
    if not study.stack.ground_hatch:
        return None
    sig = int(slots["signal"][0])
    cov = slots["cov_val"][0]
    hatched = [p for p in _planes(study.line.type, sig, problem.space.n_cu) if cov[p] < 1.0]
    if not hatched:
        return None
    return hatch_row(study, problem.table, row, hatched, sig, {p: float(cov[p]) for p in hatched})


def line_record(problem: Any, slots: dict[str, np.ndarray], row: int,
                want_yield: bool) -> tuple[dict[str, Any], list[dict[str, str]]]:
    """The ``front.json`` record of one line of one candidate, and its findings.

    Parameters
    ----------
    problem : Problem
        The one-line problem of this line (the study's problem, or one of its ``lines``).
    slots : dict
        The candidate's per-slot option indices as this line sees them (one row).
    row : int
        The candidate's row of this line's table.
    want_yield : bool
        Add the impedance yield (the study asks for it as objective or limit).
    """
    from strainline.models.lines import LineGeometry
    from strainline.models.lines.evaluate import method_findings, methods_used, range_findings
    from strainline.optimizer.search.linetable import closed_form_finding, line_model_record

    sp, tb = problem.space, problem.table
    study = sp.study
    ln = study.line
    kind = ln.type
    sig = int(slots["signal"][0])
    geom = LineGeometry(width_m=tb.width_m[row], height_m=tb.height_m[row], thickness_m=tb.thickness_m[row],
                        er=tb.er[row], gap_m=tb.gap_m[row], height_top_m=tb.height_top_m[row],
                        er_top=tb.er_top[row], cover_m=tb.cover_m[row], cover_er=tb.cover_er[row],
                        bottom_ground=True)
    loss = float(tb.loss_db_per_m[row])
    planes = _planes(kind, sig, sp.n_cu)
    line: dict[str, Any] = {
        "name": ln.name,
        "type": kind,
        "layer": sig + 1,
        "layer_name": f"L{sig + 1} signal",
        "references": [p + 1 for p in planes],
        "copper_weight": sp.cu_opts[int(slots["cu"][0, sig])][0],
        "width_um": _num(tb.width_m[row] / UM),
        "gap_um": _num(tb.gap_m[row] / UM),
        "z0_ohm": _num(tb.z0_ohm[row]),
        "z_diff_ohm": _num(tb.z_diff_ohm[row]),
        "target_ohm": ln.target_ohm,
        "impedance_error_pct": _num(100 * (tb.z_ohm[row] / ln.target_ohm - 1)),
        "eps_eff": _num(tb.eps_eff[row]),
        "loss_db_per_m": _num(loss),
        "conductor_loss_db_per_m": _num(tb.conductor_db_per_m[row]),
        "dielectric_loss_db_per_m": _num(tb.dielectric_db_per_m[row]),
        "frequency_ghz": ln.frequency_ghz,
        "length_mm": ln.length_mm,
        "insertion_loss_db": _num(loss * ln.length_mm / 1000.0) if ln.length_mm is not None else None,
        "geometry": {
            "height_um": _num(tb.height_m[row] / UM),
            "height_top_um": _num(tb.height_top_m[row] / UM),
            "thickness_um": _num(tb.thickness_m[row] / UM),
            "er": _num(tb.er[row]),
            "er_top": _num(tb.er_top[row]),
            "cover_um": _num(tb.cover_m[row] / UM),
            "cover_er": _num(tb.cover_er[row]),
            "bottom_ground": True if kind == "coplanar" else None,
            "er_rule": "series capacitance by thickness (composite_er)",
        },
        "method": "; ".join(methods_used(kind, geom)),
    }
    line.update(line_model_record(tb, row))
    findings: list[dict[str, str]] = []
    who = f"line {ln.name}: " if len(getattr(study, "lines", ())) > 1 or ln.name != "line" else ""
    if want_yield:
        from strainline.optimizer.search.yieldcalc import yield_finding
        yres = problem.row_yield()
        line["impedance_yield"] = {
            "yield_pct": _num(100.0 * yres.yield_frac[row]), "stderr_pct": _num(100.0 * yres.stderr[row]),
            "samples": int(yres.samples), "sigma_pct": _num(100.0 * yres.sigma_rel[row]),
            "variance_share": {n: _num(float(v)) for n, v in zip(yres.names, yres.shares[row])},
            "dominant": yres.names[int(yres.dominant[row])]}
        findings.append(_finding("impedance-yield", "info", who + yield_finding(yres, row),
                                 "quasi-Monte Carlo over the catalog's fabrication tolerances"))
    cf_note = closed_form_finding(tb, row)
    if cf_note:
        findings.append(_finding("line-method", "info", who + cf_note,
                                 "strainline's 2-D field solver on this candidate's layers"))
    for note in ([] if cf_note else method_findings(kind, geom)):
        findings.append(_finding("line-method", "info", who + note,
                                 "closed form against a converged 2-D field solution (strainline line --field-solve)"))
    for note in range_findings(kind, geom):
        findings.append(_finding("line-range", "warning", who + note, "stated validity range of the equation"))
    err = tb.z_ohm[row] / ln.target_ohm - 1
    if abs(err) > 0.01:
        findings.append(_finding(
            "impedance-off-target", "warning",
            who + f"the width is held at the end of its allowed range ({tb.width_m[row] / UM:.1f} um), so the nominal "
            f"impedance is {100 * err:+.1f} % off target, leaving only {100 * (ln.tolerance - abs(err)):.1f} % "
            f"of the {ln.tolerance_label} tolerance for process variation",
            "study tolerance and the fabricator's minimum trace width"))
    cov = slots["cov_val"][0]
    hatched = [p for p in planes if cov[p] < 1.0]
    if hatched and study.stack.ground_hatch:
        # hatched planes given as geometry: a 3-D field solution of this candidate over its hatch
        from strainline.optimizer.search.fieldcache import FieldCache
        from strainline.optimizer.search.hatchfront import candidate_hatch
        hcache = FieldCache()
        try:
            hrec, hnotes = candidate_hatch(study, tb, row, hatched, sig, {p: float(cov[p]) for p in hatched},
                                           hcache)
        finally:
            hcache.close()
        if hrec is not None:
            line["hatch"] = hrec
            w_h = hrec.get("width_for_target_um")
            if w_h is not None:
                # over a hatch the width to build is the one that meets the target there; the
                # solid-plane figures stay beside it (loss and pair spacing keep their solid-plane
                # values, a stated limit)
                pair = kind in ("coupled-microstrip", "coupled-stripline")
                z_solid = line["z_diff_ohm"] if pair else line["z0_ohm"]
                scale = hrec["z_ohm"] / z_solid if z_solid else float("nan")
                line["solid_plane"] = {k: line[k] for k in ("width_um", "z0_ohm", "z_diff_ohm", "impedance_error_pct")}
                line["width_um"] = w_h
                line["z0_ohm"] = _num(line["z0_ohm"] * scale) if line["z0_ohm"] is not None else None
                line["z_diff_ohm"] = _num(line["z_diff_ohm"] * scale) if line["z_diff_ohm"] is not None else None
                line["impedance_error_pct"] = _num(100 * (hrec["z_ohm"] / ln.target_ohm - 1))
                line["decided_over_hatch"] = True
        findings += hnotes
    return line, findings


__all__ = ["hatch_task_of", "line_record"]
