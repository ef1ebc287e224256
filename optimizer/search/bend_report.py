"""Turn a Stackup and bend settings into the ``strainline bend --json`` object.

The solver reuses :func:`bend_report` for the per-layer block of ``front.json``; the report reads the
same fields. Units at this edge: micrometres, millimetres, GPa, MPa, percent.
"""
from __future__ import annotations

import math
from typing import Any

import numpy as np

from strainline.models import bending, fatigue, rules
from strainline.models.stackup import Stackup
from strainline.models.units import GPA, MM, UM
from strainline.optimizer.errors import InputError, not_one_of

INSIDES: tuple[str, ...] = ("bottom", "top")
MOTIONS: tuple[str, ...] = fatigue.MOTIONS
USES: tuple[str, ...] = rules.USES

#: Default target life for the dynamic strain limit, cycles.
DYNAMIC_DEFAULT_CYCLES: float = 1e6
#: The elastic-perfectly-plastic result earns a warning when it moves the peak copper strain by more
#: than this share of the elastic peak, or a leaf's neutral axis by more than this share of the
#: leaf's thickness (a stated reporting threshold).
PLASTIC_SHIFT: float = 0.05

CAUTION = ("Estimates for concept work only. Verify with the fabricator's impedance modelling and coupons and "
           "with flex testing (IPC-TM-650 methods); defer to IPC-2223/IPC-6013 and licensed engineering practice.")

STRAIN_CONVENTION = ("engineering strain in percent, tension positive; exact form (y - y_na)/(R + y_na) with R the "
                     "inner (mandrel) radius and heights y from the bottom face when the bottom face is inside, "
                     "(y_na - y)/(R + T - y_na) when the top face is inside; each bonded leaf about its own axis")


def _num(x: float) -> float | None:
    """A JSON-safe float (None for inf/nan)."""
    x = float(x)
    return x if math.isfinite(x) else None


def _check_choice(field: str, value: str, allowed: tuple[str, ...]) -> None:
    if value not in allowed:
        raise not_one_of(field, value, allowed, InputError)


def _peak(names: list[str], top: np.ndarray, bot: np.ndarray) -> tuple[np.ndarray, float | None, str | None]:
    """Worst face per copper layer and the overall peak (signed) with its layer name."""
    worst = np.where(np.abs(top) >= np.abs(bot), top, bot)
    if not names:
        return worst, None, None
    k = int(np.argmax(np.abs(worst)))
    return worst, float(worst[k]), names[k]


def _axes(stackup: Stackup, y_na: np.ndarray, leaf_r: np.ndarray, top: np.ndarray | None = None,
          bot: np.ndarray | None = None) -> tuple[Any, list[dict[str, Any]]]:
    """neutral_axis_um (float when bonded, list per leaf top to bottom otherwise) and the leaves block
    (each leaf's layers, thickness, axis, nested inner radius and peak strains)."""
    ids = stackup.leaf_ids()
    leaves = []
    for k in sorted(set(ids)):
        members = [i for i, j in enumerate(ids) if j == k]
        if stackup.layers[members[0]].kind == "air-gap":
            continue
        leaf: dict[str, Any] = {
            "layers": [stackup.layers[i].name for i in members],
            "thickness_um": sum(stackup.layers[i].thickness_m for i in members) / UM,
            "neutral_axis_um": float(y_na[members[0]]) / UM,
            "inner_radius_mm": float(leaf_r[members[0]]) / MM,
        }
        if top is not None:
            w = np.maximum(np.abs(top[members]), np.abs(bot[members]))
            cu = [m for m in members if stackup.layers[m].kind == "copper"]
            leaf["peak_strain_pct"] = _num(100 * float(w.max()))
            leaf["peak_copper_strain_pct"] = (None if not cu else
                                              _num(100 * float(np.maximum(np.abs(top[cu]), np.abs(bot[cu])).max())))
        leaves.append(leaf)
    axis = leaves[0]["neutral_axis_um"] if len(leaves) == 1 else [x["neutral_axis_um"] for x in leaves]
    return axis, leaves


def bend_report(stackup: Stackup, inner_radius_mm: float, inside: str = "bottom", motion: str = "flat-to-bent",
                plane_strain: bool = False, plastic: bool | None = None, use: str = "install",
                cycles: float | None = None, elongation_fraction: float = rules.ELONGATION_FRACTION,
                allow_uncovered: bool = False, catalog: Any = None) -> dict[str, Any]:
    """The ``strainline bend --json`` object for one stackup.

    Parameters
    ----------
    stackup : Stackup
    inner_radius_mm : float
        Inner (mandrel) radius of the bend, mm, > 0.
    inside : {"bottom", "top"}
        Which face of the stack is the inside of the bend.
    motion : {"flat-to-bent", "reversed"}
        Bend cycle for the fatigue estimate (range = peak, or 2 x peak).
    plane_strain : bool
        Use E / (1 - nu^2) for every layer (wide strip).
    plastic : bool or None
        Add a ``plastic`` block: neutral axis and strains with elastic-perfectly-plastic copper.
        None (default): whenever a copper layer passes its yield strain.
    use : {"install", "dynamic"}
        One-time install bend or dynamic flexing (selects the strain limit and the ratio rules).
    cycles : float, optional
        Target life for the dynamic strain limit (default 1e6).
    elongation_fraction : float
        Share of each dielectric's elongation at break allowed (``limits`` block).
    allow_uncovered : bool
        Waive the rule that every leaf face of a dynamic bend carries a cover.
    catalog : Catalog, optional
        Where the layers' elongation and minimum bend radius are looked up (default: the built-in one).

    Returns
    -------
    dict
        JSON-ready (no inf/nan): see README.md (bend mechanics) for every field.

    Raises
    ------
    InputError
        Radius not a positive finite number, or an unknown ``inside``/``motion``/``use``.
    """
    try:
        r_mm = float(inner_radius_mm)
    except (TypeError, ValueError):
        raise InputError(f"{inner_radius_mm!r} is not a number; give a radius > 0 mm", "inner_radius_mm") from None
    if not (math.isfinite(r_mm) and r_mm > 0):
        raise InputError(f"{inner_radius_mm!r} is out of range; the inner radius must be > 0 mm", "inner_radius_mm")
    _check_choice("inside", inside, INSIDES)
    _check_choice("motion", motion, MOTIONS)
    _check_choice("use", use, USES)
    if cycles is not None and not (math.isfinite(float(cycles)) and float(cycles) >= 1):
        raise InputError(f"{cycles!r} is out of range; target cycles must be >= 1", "cycles")

    if not (math.isfinite(float(elongation_fraction)) and 0 < float(elongation_fraction) <= 1):
        raise InputError(f"{elongation_fraction!r} is out of range; allowed (0, 1]", "elongation_fraction")
    r = r_mm * MM
    ib = inside == "bottom"
    stackup = with_catalog_limits(stackup, catalog)
    a = stackup.arrays(plane_strain)
    leaf = None if a.bonded else a.leaf
    s = bending.bend_strains(a.thickness_m, a.modulus_pa, r, ib, leaf)
    layers = stackup.layers
    cu = list(stackup.copper_layers)
    cu_names = [layers[i].name for i in cu]
    total = stackup.total_thickness_m
    yb, yt = bending.layer_heights(a.thickness_m)

    # fatigue per copper layer (worst face of each)
    worst, peak, peak_name = _peak(cu_names, s.strain_top[0, cu], s.strain_bottom[0, cu])
    foils = [layers[i].copper for i in cu]
    cu_e = np.array([layers[i].modulus_pa for i in cu])
    su = np.array([f.tensile_strength_pa for f in foils])
    sy = np.array([f.yield_strength_pa for f in foils])
    df = np.array([f.fatigue_ductility for f in foils])
    life = fatigue.fatigue_life(worst, motion, df, su, sy, cu_e)

    # strain limit for min_radius_mm
    if use == "install":
        limit = np.full(len(cu), rules.INSTALL_STRAIN_LIMIT)
        basis = {"strain_limit_pct": 100 * rules.INSTALL_STRAIN_LIMIT,
                 "basis": "about 2 % copper strain for a one-time install bend",
                 "source": rules.COMMON_PRACTICE}
    else:
        target = DYNAMIC_DEFAULT_CYCLES if cycles is None else float(cycles)
        rng = fatigue.engelmaier_strain_range(target, df, su, cu_e)
        limit = rng / (1.0 if motion == "flat-to-bent" else 2.0)
        basis = {"strain_limit_pct": _num(100 * float(limit.min())) if len(cu) else None,
                 "basis": f"Engelmaier strain range for {target:.3g} cycles ({motion}), per copper layer",
                 "source": rules.SOURCE_ENGELMAIER,
                 "target_cycles": target,
                 "strain_limit_per_layer_pct": {n: _num(100 * x) for n, x in zip(cu_names, limit)}}
    lim_row = np.full((1, len(layers)), np.inf)
    lim_row[0, cu] = limit
    r_min = float(bending.min_inner_radius(a.thickness_m, a.modulus_pa, a.is_copper, lim_row, ib, leaf)[0])

    axis, leaves = _axes(stackup, s.y_na_m[0], s.leaf_inner_radius_m[0], s.strain_top[0], s.strain_bottom[0])
    out_layers = []
    for i, x in enumerate(layers):
        gap = x.kind == "air-gap"
        row: dict[str, Any] = {
            "name": x.name,
            "kind": x.kind,
            "material": x.material,
            "thickness_um": x.thickness_m / UM,
            "y_bottom_um": float(yb[0, i]) / UM,
            "y_top_um": float(yt[0, i]) / UM,
            "modulus_gpa": x.modulus_pa / GPA,
            "poisson": x.poisson,
            "effective_modulus_gpa": float(a.modulus_pa[0, i]) / GPA,
            "coverage": x.coverage,
            "dk": x.dk,
            "df": x.df,
            "strain_top_pct": None if gap else _num(100 * s.strain_top[0, i]),
            "strain_bottom_pct": None if gap else _num(100 * s.strain_bottom[0, i]),
        }
        if x.kind == "copper":
            k = cu.index(i)
            row.update({
                "copper": x.copper.name,
                "fill": x.fill_material if x.coverage < 1 else None,
                "yield_strain_pct": 100 * x.copper.yield_strength_pa / x.modulus_pa,
                "cycles_to_failure": _num(life.cycles[k]),
            })
        out_layers.append(row)

    findings = list(rules.bend_findings(stackup, r, use, ib, plane_strain))
    findings += rules.material_findings(stackup, r, use, ib, plane_strain, elongation_fraction, allow_uncovered)
    findings += rules.fatigue_findings(cu_names, life.cycles, life.extrapolated, life.plastic, motion)
    limits = material_limits(stackup, r, use, s.strain_top[0], s.strain_bottom[0], elongation_fraction,
                             allow_uncovered)

    result: dict[str, Any] = {
        "stackup": stackup.name,
        "inner_radius_mm": r_mm,
        "inside": inside,
        "motion": motion,
        "use": use,
        "plane_strain": plane_strain,
        "bonded": stackup.bonded,
        "total_thickness_um": total / UM,
        "radius_to_thickness": r / total,
        "neutral_axis_um": axis,
        "leaves": leaves,
        "strain_convention": STRAIN_CONVENTION,
        "layers": out_layers,
        "peak_copper_strain_pct": None if peak is None else 100 * peak,
        "peak_copper_layer": peak_name,
        "cycles_to_failure": {n: _num(c) for n, c in zip(cu_names, life.cycles)},
        "fatigue": [{
            "layer": n,
            "strain_range_pct": 100 * float(rg),
            "cycles": _num(c),
            "extrapolated": bool(e),
            "plastic": bool(p),
        } for n, rg, c, e, p in zip(cu_names, life.strain_range, life.cycles, life.extrapolated, life.plastic)],
        "fatigue_method": "Engelmaier copper-foil equation (IPC-TM-650 2.4.2.1), free-foil calibration",
        "min_radius_mm": r_min / MM,
        "min_radius_basis": basis,
        "material_limits": limits,
        "findings": [f.to_dict() for f in findings],
        "caution": CAUTION,
    }

    yielded = bool(len(cu)) and bool(np.any(np.abs(worst) > a.yield_strain[0, cu]))
    if plastic is None:
        plastic = yielded
    if plastic:
        p = bending.epp_bend_strains(a.thickness_m, a.modulus_pa, a.yielding_modulus_pa, a.yield_strain,
                                     r, ib, leaf)
        p_axis, _ = _axes(stackup, p.y_na_m[0], p.leaf_inner_radius_m[0])
        p_worst, p_peak, p_name = _peak(cu_names, p.strain_top[0, cu], p.strain_bottom[0, cu])
        p_life = fatigue.fatigue_life(p_worst, motion, df, su, sy, cu_e)
        result["plastic"] = {
            "model": "elastic-perfectly-plastic copper (stress capped at the yield strength), other layers "
                     "elastic; neutral axis from axial-force balance",
            "neutral_axis_um": p_axis,
            "layers": [{
                "name": x.name,
                "strain_top_pct": None if x.kind == "air-gap" else _num(100 * p.strain_top[0, i]),
                "strain_bottom_pct": None if x.kind == "air-gap" else _num(100 * p.strain_bottom[0, i]),
            } for i, x in enumerate(layers)],
            "peak_copper_strain_pct": None if p_peak is None else 100 * p_peak,
            "peak_copper_layer": p_name,
            "cycles_to_failure": {n: _num(c) for n, c in zip(cu_names, p_life.cycles)},
        }
        shift = _plastic_shift(leaves, p.y_na_m[0], stackup, peak, p_peak)
        result["plastic"].update(shift)
        if shift["peak_shift_pct"] > 100 * PLASTIC_SHIFT or shift["axis_shift_pct"] > 100 * PLASTIC_SHIFT:
            result["findings"].append(rules.Finding(
                "plastic-shift", "warning",
                f"copper passes yield and the elastic-perfectly-plastic result moves the peak copper strain by "
                f"{shift['peak_shift_pct']:.1f} % and a neutral axis by {shift['axis_shift_pct']:.1f} % of its leaf "
                f"thickness (more than {100 * PLASTIC_SHIFT:g} %): use the plastic figures",
                rules.SOURCE_EPP).to_dict())
    return result


def _plastic_shift(leaves: list[dict[str, Any]], p_na: np.ndarray, stackup: Stackup, peak: float | None,
                   p_peak: float | None) -> dict[str, float]:
    """How far the plastic result moves the peak copper strain (% of the elastic peak) and the axes
    (% of each leaf's thickness, the largest)."""
    ids = stackup.leaf_ids()
    axis = 0.0
    for k, leaf in zip([j for j in sorted(set(ids)) if stackup.layers[ids.index(j)].kind != "air-gap"], leaves):
        first = ids.index(k)
        axis = max(axis, abs(float(p_na[first]) / UM - leaf["neutral_axis_um"]) / leaf["thickness_um"])
    pk = 0.0 if not peak or p_peak is None else abs(abs(p_peak) - abs(peak)) / abs(peak)
    return {"peak_shift_pct": 100 * pk, "axis_shift_pct": 100 * axis}


def with_catalog_limits(stackup: Stackup, cat: Any = None) -> Stackup:
    """The stackup with each catalog dielectric's elongation and minimum bend radius filled in
    (layers that already carry them, and inline materials, are left as they are)."""
    from dataclasses import replace

    if cat is None:
        from strainline.optimizer.inputs.catalog import load_catalog

        cat = load_catalog()
    out = []
    for x in stackup.layers:
        d = cat.dielectrics.get(x.material) if x.kind == "dielectric" else None
        if d is not None and x.elongation is None:
            x = replace(x, elongation=d.elongation, min_bend_radius_m=getattr(d, "min_bend_radius_m", None))
        out.append(x)
    return replace(stackup, layers=tuple(out))


def material_limits(stackup: Stackup, r: float, use: str, top: np.ndarray, bot: np.ndarray,
                    fraction: float, allow_uncovered: bool) -> list[dict[str, Any]]:
    """One line per material limit: each dielectric's peak strain against its derated elongation,
    each cover's minimum radius, the cover rule of a dynamic bend."""
    out: list[dict[str, Any]] = []
    for i, x in enumerate(stackup.layers):
        if x.kind != "dielectric" or x.thickness_m == 0:
            continue
        if x.elongation is not None:
            worst = float(max(abs(top[i]), abs(bot[i])))
            lim = x.elongation * fraction
            out.append({"layer": x.name, "check": "strain", "value_pct": _num(100 * worst),
                        "limit_pct": _num(100 * lim), "ok": bool(worst <= lim),
                        "basis": f"{fraction:g} x elongation at break {100 * x.elongation:g} %"})
        if x.min_bend_radius_m is not None:
            out.append({"layer": x.name, "check": "min_radius", "value_mm": r / MM,
                        "limit_mm": x.min_bend_radius_m / MM, "ok": bool(r >= x.min_bend_radius_m),
                        "basis": rules.SOURCE_PIC})
        if x.glass_reinforced:
            out.append({"layer": x.name, "check": "glass", "ok": use == "install",
                        "basis": "no woven glass in a dynamic bend; install above about 10x thickness"})
    if use == "dynamic":
        bare = rules.bare_copper(stackup)
        out.append({"layer": ", ".join(bare) or "-", "check": "cover", "ok": not bare or allow_uncovered,
                    "basis": "a cover on both faces of every leaf in a dynamic bend"
                             + (" (waived)" if allow_uncovered else "")})
    return out
