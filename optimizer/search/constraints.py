"""Every material's limit as a search constraint (columns ``g <= 0``, pymoo convention).

``material_strain``  the strain at each face of every dielectric, adhesive and cover over its
                     tensile elongation derated by ``limits.elongation_fraction`` (default 0.5);
                     the largest over the stack, minus 1. Elongation at break from the catalog;
                     the derating is a stated design margin (common practice, no source).
``cover_radius``     the bend's inner radius against the minimum bend radius the catalog gives for
                     a cover (e.g. a photoimageable cover, about 10 mm: K. Smith, trade-magazine column
                     part II, 2019); measured at the inner radius (every cover sits at or outside it).
``cover``            dynamic bend only, unless ``bend.allow_uncovered``: +1 when a copper layer is
                     bare at a face of its leaf (no dielectric between it and the outside or an air
                     gap), -1 otherwise (common practice, no source: a coverlay on both faces of a
                     dynamic flex).
``glass``            woven-glass laminate in the bend: +1 in a dynamic bend; in an install bend the
                     one-time bend ratio (inner radius >= 10 x thickness, common practice, no source)
                     as ``10 T / R - 1``.
``leaves``           unbonded region: +1 when the candidate's leaf grouping cannot be built
                     (:mod:`.leaves`), -1 otherwise.

The same functions serve the general and the fast evaluation, so both give identical columns.
With several bend zones (``bends:``) the problem evaluates the columns once per zone (the zone is
``problem.zone``) and keeps the worst zone's value, so a column holds only when every zone holds;
``cover`` and the dynamic ``glass`` rule apply in the dynamic zones.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from strainline.models.units import MM
from strainline.optimizer.search.leaves import leaf_state
from strainline.optimizer.search.mechanics import _plan

#: Inner radius over thickness for a one-time bend (common practice, no source); the gentle-radius
#: rule a woven-glass laminate must meet in an install bend.
GLASS_INSTALL_RATIO = 10.0

TEXT = {
    "material_strain": "dielectric, adhesive and cover strain within elongation x limits.elongation_fraction",
    "cover_radius": "bend radius at least the cover's minimum bend radius",
    "cover": "a cover on both faces of every leaf in a dynamic bend",
    "glass": "no woven-glass laminate in a dynamic bend; above 10 x thickness in an install bend",
    "leaves": "a buildable leaf grouping (bond ply between leaves, a core in every leaf, the line's plane "
              "in its leaf)",
}


def elongation_fraction(study: Any) -> float:
    """``limits.elongation_fraction`` (default 0.5)."""
    v = getattr(study.limits, "elongation_fraction", None)
    return 0.5 if v is None else float(v)


def allow_uncovered(study: Any, zone: Any = None) -> bool:
    return bool(getattr(zone if zone is not None else study.bend, "allow_uncovered", False))


def _needs_cover(study: Any, zone: Any) -> bool:
    return zone.use == "dynamic" and not allow_uncovered(study, zone)


def names(space: Any) -> list[str]:
    """The material-limit constraint columns a study gets, in order."""
    study, a = space.study, space.arr
    out = ["material_strain"]
    if _cover_rmin(space).max(initial=0.0) > 0:
        out.append("cover_radius")
    if any(_needs_cover(study, z) for z in getattr(study, "bends", (study.bend,))):
        out.append("cover")
    if bool(a["mat_glass"].any()) and len(space.materials):
        out.append("glass")
    if space.unbonded:
        out.append("leaves")
    return out


def _cover_rmin(space: Any) -> np.ndarray:
    a = space.arr
    r = np.zeros(len(space.cover_opts))
    for key in ("cover_mf", "cover_ma"):
        m = a[key]
        r = np.maximum(r, np.where(m >= 0, a["mat_rmin"][np.where(m >= 0, m, 0)], 0.0))
    return r


def bare_faces(space: Any, t: np.ndarray, is_air: np.ndarray) -> np.ndarray:
    """Copper faces (n,) with nothing but air or the outside between them and the leaf surface."""
    N, L = space.n_cu, space.n_layers
    n = t.shape[0]
    cols = [space.cu_col(i) for i in range(N)]
    count = np.zeros(n, np.int64)
    for i, c in enumerate(cols):
        lo = cols[i - 1] + 1 if i > 0 else 0
        hi = cols[i + 1] if i < N - 1 else L
        for rng in (range(c - 1, lo - 1, -1), range(c + 1, hi)):
            found = np.zeros(n, bool)
            bare = np.ones(n, bool)
            for k in rng:
                hit = ~found & (t[:, k] > 0)
                bare = np.where(hit, is_air[:, k], bare)
                found |= hit
            count += bare
    return count


def strain_ratio(space: Any, slots: dict[str, np.ndarray], strain_top: np.ndarray,
                 strain_bottom: np.ndarray) -> np.ndarray:
    """Largest ``|strain| / elongation at break`` over every dielectric face (n,), from the layer
    strains (n, L) and the decoded materials (the general path)."""
    a = space.arr
    _, mat, _, _ = _plan(space, slots)
    m_safe = np.where(mat >= 0, mat, 0)
    inv = np.where(mat >= 0, 1.0 / a["mat_elong"][m_safe], 0.0)
    worst = np.maximum(np.abs(strain_top), np.abs(strain_bottom))
    return np.max(worst * inv, axis=1)


def material_constraints(problem: Any, slots: dict[str, np.ndarray], total_m: np.ndarray,
                         ratio: np.ndarray) -> dict[str, np.ndarray]:
    """The material-limit columns of a batch (see the module docstring).

    Parameters
    ----------
    problem : Problem
    slots : dict
        Per-slot option indices.
    total_m : ndarray, (n,)
        Total stack thickness, m.
    ratio : ndarray, (n,)
        Largest ``|strain| / elongation at break`` over the dielectric faces (:func:`strain_ratio`,
        or the fast path's group form).
    """
    sp = problem.space
    study, b = sp.study, sp.blocks
    want = [c for c in problem.constraint_names if c in TEXT]
    out: dict[str, np.ndarray] = {}
    if not want:
        return out
    zone = getattr(problem, "zone", None) or study.bend     # the bend zone being evaluated
    r = zone.inner_radius_mm * MM
    ct, cb = slots["cover_top"], slots["cover_bot"]
    # the leaf state does not depend on the zone: once per batch (the batch's own arrays identify it)
    state = None
    if sp.unbonded:
        got = problem.__dict__.get("_leaf_state")
        if got is not None and got[0] is slots["cu"] and got[1] is slots["leaves"]:
            state = got[2]
        else:
            state = leaf_state(sp, slots)
            problem.__dict__["_leaf_state"] = (slots["cu"], slots["leaves"], state)
    if "material_strain" in want:
        out["material_strain"] = ratio / elongation_fraction(study) - 1.0
    if "cover_radius" in want:
        rmin = _cover_rmin(sp)
        out["cover_radius"] = np.maximum(rmin[ct], rmin[cb]) / r - 1.0
    if "cover" in want:
        # gaps always hold a film, so only a face under a missing cover can be bare: the outer faces,
        # and in an unbonded region the leaf faces that border air
        bare = b["cov_bare"][ct] | b["cov_bare"][cb]
        if state is not None:
            bnd, up, _ = state
            bare = bare | ((bnd & up).any(axis=1) & b["cov_bare"][ct]) | ((bnd & ~up).any(axis=1) & b["cov_bare"][cb])
        out["cover"] = np.where(bare, 1.0, -1.0) if _needs_cover(study, zone) else np.full(len(ct), -1.0)
    if "glass" in want:
        n_adh = len(sp.adh_opts)
        has = b["cov_glass"][ct] | b["cov_glass"][cb]
        for g in range(sp.n_cu - 1):
            has = has | b["gap_glass"][(slots["film"][:, g] * n_adh + slots["adh"][:, g]) * 3 + slots["place"][:, g]]
        if zone.use == "dynamic":
            out["glass"] = np.where(has, 1.0, -1.0)
        else:
            out["glass"] = np.where(has, GLASS_INSTALL_RATIO * total_m / r - 1.0, -1.0)
    if "leaves" in want:
        out["leaves"] = np.where(state[2], -1.0, 1.0)
    return out


__all__ = ["material_constraints", "strain_ratio", "names", "bare_faces", "TEXT", "GLASS_INSTALL_RATIO"]


#: Human wording of each constraint for the "nothing feasible" message.
CONSTRAINT_TEXT = {
    "impedance": "nominal impedance within line.nominal_error_pct of the target after the width solve",
    "width_range": "fabricator minimum trace width within the study's width range",
    "gap_space": "gap at least the fabricator's minimum space",
    "equation_range": "impedance equations inside their validity range",
    "total_thickness": "total thickness limit",
    "peak_strain": "peak copper strain limit",
    "signal_strain": "signal copper strain limit",
    "loss": "loss limit",
    "fatigue_life": "required fatigue life",
    "yield": "impedance yield at least limits.min_yield_pct under the fabrication tolerances",
    "hatch_width": "over a hatched reference plane, a width in the range that meets the target impedance",
    **TEXT,
}
