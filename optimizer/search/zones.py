"""Bend zones on the front: one ``bend`` object per zone of a candidate.

A study holds one bend (``bend:``) or several zones (``bends:``). The search evaluates every zone
(:meth:`Problem._evaluate` loops over the zones, vectorized over the candidates); this module
turns one front candidate's figures into the ``bends`` list of front.json (one object per zone,
each with the keys ``bend`` had before zones existed) and picks the zone shown as ``bend``:
the zone named by ``strain_bend``, else the worst zone (largest peak copper strain).
"""
from __future__ import annotations

from typing import Any

import numpy as np
from strainline.optimizer.inputs.study_spec import required_cycles

#: The per-layer keys of a zone's strain profile (from the bend report's layers).
_PROFILE = ("name", "kind", "y_bottom_um", "y_top_um", "strain_top_pct", "strain_bottom_pct")


def _num(v: Any) -> float | None:
    if v is None:
        return None
    v = float(v)
    return v if np.isfinite(v) else None


def zone_objects(study: Any, stackup: Any, ev: Any, j: int, catalog: Any, elongation_fraction: float,
                 allow_uncovered: Any) -> tuple[list[dict[str, Any]], list[dict[str, Any]], int]:
    """The bend report of every zone of front candidate ``j``.

    Parameters
    ----------
    study : Study
    stackup : Stackup
        The candidate's stack (:func:`.front.candidate_stackup`).
    ev : Evaluation
        The front's evaluation (with ``zone_peak``, ``zone_signal``, ``zone_cycles``).
    j : int
        The candidate's row in ``ev``.
    catalog : Catalog
    elongation_fraction : float
    allow_uncovered : callable
        ``allow_uncovered(study, zone)`` (:func:`.constraints.allow_uncovered`).

    Returns
    -------
    bends : list of dict
        One front.json ``bend`` object per zone (with ``name``), in the study's order.
    reports : list of dict
        The :func:`.bend_report.bend_report` object of every zone.
    pick : int
        Index of the zone shown as ``bend``: the one ``strain_bend`` names, else the worst (largest
        peak copper strain).
    """
    from strainline.optimizer.search.bend_report import bend_report

    bends, reports = [], []
    for z, zone in enumerate(study.bends):
        need = required_cycles(study, zone)
        rep = bend_report(stackup, zone.inner_radius_mm, zone.inside, zone.motion, zone.plane_strain, None,
                          zone.use, need if zone.use == "dynamic" else None, elongation_fraction,
                          allow_uncovered(study, zone), catalog)
        cyc = None if ev.zone_cycles is None else _num(ev.zone_cycles[j, z])
        obj = {
            "name": zone.name,
            "inner_radius_mm": zone.inner_radius_mm,
            "inside": zone.inside,
            "use": zone.use,
            "motion": zone.motion,
            "neutral_axis_um": rep["neutral_axis_um"],
            "region": zone.region,
            "cycles_to_failure": cyc,
            "required_cycles": need,
            "radius_to_thickness": _num(rep["radius_to_thickness"]),
            "total_thickness_um": _num(rep["total_thickness_um"]),
            "peak_copper_strain_pct": _num(100 * ev.zone_peak[j, z]),
            "signal_copper_strain_pct": _num(100 * ev.zone_signal[j, z]),
            "peak_copper_layer": rep.get("peak_copper_layer"),
            "plane_strain": zone.plane_strain,
            "strain_convention": rep.get("strain_convention"),
            "min_radius_mm": _num(rep.get("min_radius_mm")),
            "leaves": rep["leaves"],
            "material_limits": rep["material_limits"],
            # the strain profile through the stack (per layer: top and bottom face strain, percent)
            "profile": [{k: lay.get(k) for k in _PROFILE if k in lay} for lay in rep["layers"]],
        }
        if "plastic" in rep:
            p = rep["plastic"]
            obj["plastic"] = {k: p[k] for k in ("neutral_axis_um", "peak_copper_strain_pct", "peak_copper_layer",
                                                "peak_shift_pct", "axis_shift_pct") if k in p}
        bends.append(obj)
        reports.append(rep)
    names = [z.name for z in study.bends]
    if study.strain_bend is not None:
        pick = names.index(study.strain_bend)
    else:
        pick = int(np.argmax(ev.zone_peak[j])) if len(names) > 1 else 0
    return bends, reports, pick


def zone_pick(study: Any, zp: np.ndarray, zs: np.ndarray, zc: np.ndarray | None):
    """The strain and life the objectives read from the per-zone figures (n, Z): the zone named
    by ``strain_bend``, else the worst zone (largest strain; least life over the zones with a
    life limit, or over every zone when none has one).

    Parameters
    ----------
    study : Study
    zp, zs : ndarray, (n, Z)
        Peak and signal copper strain of every zone, fractions.
    zc : ndarray, (n, Z) or None
        Least copper cycles to failure of every zone.

    Returns
    -------
    peak, signal : ndarray, (n,)
    cycles : ndarray, (n,) or None
    """
    names = [z.name for z in study.bends]
    if study.strain_bend is not None:
        k = names.index(study.strain_bend)
        return zp[:, k].copy(), zs[:, k].copy(), None if zc is None else zc[:, k].copy()
    cyc = None
    if zc is not None:
        lim = [k for k, z in enumerate(study.bends) if required_cycles(study, z) is not None]
        cyc = zc[:, lim].min(axis=1) if lim else zc.min(axis=1)
    return zp.max(axis=1), zs.max(axis=1), cyc


def zone_findings(reports: list[dict[str, Any]], names: list[str], pick: int) -> list[dict[str, Any]]:
    """Findings of every zone, the picked zone's first. One zone: its findings as they are; several:
    each message starts with its zone (``bend zone NAME: ...``)."""
    if len(reports) == 1:
        return list(reports[0]["findings"])
    out: list[dict[str, Any]] = []
    seen: set = set()
    for z in [pick] + [k for k in range(len(reports)) if k != pick]:
        for f in reports[z]["findings"]:
            g = dict(f)
            g["message"] = f"bend zone {names[z]}: {f.get('message', '')}"
            if (g.get("code"), g["message"]) not in seen:
                seen.add((g.get("code"), g["message"]))
                out.append(g)
    return out


__all__ = ["zone_findings", "zone_objects", "zone_pick"]
