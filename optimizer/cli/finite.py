"""No NaN or null where a number belongs: the last check on a front before it is written.

:func:`strainline.optimizer.search.front.build_front` writes a non-finite value as ``null``. Some
fields are null by design (a single line has no ``z_diff_ohm``, a microstrip no ``gap_um``), but
the figures a candidate is chosen by must be numbers. A candidate holding a non-finite one there
came from a line geometry outside the closed forms' range that the constraints let through; it is
taken off the front and counted in ``search.dropped_non_finite`` with a one-line reason.
"""
from __future__ import annotations

import math
from typing import Any

#: Line fields every candidate needs, and the extra ones of pairs and of lines with a gap.
LINE_FIELDS = ("width_um", "z0_ohm", "eps_eff", "impedance_error_pct", "loss_db_per_m",
               "conductor_loss_db_per_m", "dielectric_loss_db_per_m")
PAIR_FIELDS = ("z_diff_ohm",)
GAP_FIELDS = ("gap_um",)
GEOMETRY_FIELDS = ("height_um", "thickness_um", "er")
BEND_FIELDS = ("total_thickness_um", "peak_copper_strain_pct", "signal_copper_strain_pct")


def _bad(v: Any) -> bool:
    return v is None or (isinstance(v, float) and not math.isfinite(v))


def non_finite_fields(candidate: dict[str, Any], kind: str) -> list[str]:
    """The required numeric fields of ``candidate`` that are null or not finite."""
    line = candidate.get("line", {})
    need = list(LINE_FIELDS)
    if kind in ("coupled-microstrip", "coupled-stripline"):
        need += PAIR_FIELDS
    if kind in ("coupled-microstrip", "coupled-stripline", "coplanar"):
        need += GAP_FIELDS
    bad = [f"line.{k}" for k in need if k in line and _bad(line[k])]
    geom = line.get("geometry", {})
    bad += [f"line.geometry.{k}" for k in GEOMETRY_FIELDS if k in geom and _bad(geom[k])]
    bend = candidate.get("bend", {})
    bad += [f"bend.{k}" for k in BEND_FIELDS if k in bend and _bad(bend[k])]
    bad += [f"objectives.{k}" for k, v in candidate.get("objectives", {}).items() if _bad(v)]
    return bad


def drop_non_finite(front: dict[str, Any]) -> list[str]:
    """Take candidates with a non-finite required figure off ``front`` (in place); return notes."""
    study_kind = front.get("study", {}).get("line", {}).get("type", "")
    keep, notes = [], []
    for c in front.get("candidates", []):
        bad = non_finite_fields(c, c.get("line", {}).get("type") or study_kind)
        if bad:
            notes.append(f"{c.get('id')}: {', '.join(bad)} not finite")
        else:
            keep.append(c)
    if notes:
        front["candidates"] = keep
        front.setdefault("search", {})["dropped_non_finite"] = {
            "count": len(notes), "candidates": notes,
            "message": f"{len(notes)} candidate(s) taken off the front: a line figure is not finite "
                       "(a geometry outside the closed-form equations' range)"}
    return notes
