"""Copper strains of a batch from per-option group sums (the fast path of :class:`.problem.Problem`).

The same transformed-section model and exact strain as
:func:`strainline.models.bending.bend_strains` (Gere & Timoshenko, *Mechanics of Materials*,
composite beams), evaluated on groups instead of layers: a cover, a gap ``[adhesive, film,
adhesive]`` or a copper layer contributes its thickness ``T``, its stiffness ``S = sum E t`` and its
first moment ``M = sum E t y_c`` about its own bottom face, all but the copper looked up per option
code (:func:`fast_tables`). Stacking the groups from the bottom gives
``y_NA = sum (S_g y_g + M_g) / sum S_g``, and only the copper faces are evaluated:
``|eps| = max(|y_b - y_NA|, |y_t - y_NA|) / (R + y_NA)`` with the bottom face inside,
``/ (R + T - y_NA)`` with the top face inside.

Unbonded bend region (:mod:`.leaves`): at a leaf boundary the gap splits into the part that stays
with the lower leaf (the film with its adhesive, or the top cover build), an air gap (the bond
adhesive left out) and the part that starts the upper leaf (the film, or the bottom cover build);
the running sums restart above the air, and every copper layer takes the axis of its own leaf.
"""
from __future__ import annotations

import numpy as np

from strainline.models.units import MM
from strainline.optimizer.search.leaves import leaf_state

#: Rows per block (the temporaries stay in cache; see :data:`.problem.BLOCK`).
BLOCK = 8192


def block_sums(t: np.ndarray, e: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Thickness, ``sum E t`` and first moment ``sum E t y_c`` about the block's bottom face of
    blocks of layers (k, c), columns top to bottom."""
    t = np.asarray(t, float)
    e = np.asarray(e, float)
    T = t.sum(axis=1)
    below = T[:, None] - np.cumsum(t, axis=1)        # height of each column's bottom face in its block
    et = e * t
    return T, et.sum(axis=1), (et * (below + 0.5 * t)).sum(axis=1)


def fast_tables(space) -> dict:
    """Per-option group sums: covers (top, bottom), whole gaps, and the upper (adhesive above,
    film) and lower (film, adhesive below) parts of a gap split at a leaf boundary."""
    b = space.blocks
    out: dict = {}
    for key, (t, e) in {"ct": (b["cov_t"], b["cov_E"]), "cb": (b["cov_t_rev"], b["cov_E_rev"]),
                        "gap": (b["gap_t"], b["gap_E"]), "gapU": (b["gap_t"][:, :2], b["gap_E"][:, :2]),
                        "gapD": (b["gap_t"][:, 1:], b["gap_E"][:, 1:])}.items():
        out[key + "_T"], out[key + "_S"], out[key + "_M"] = block_sums(t, e)
    out["gap_tup"], out["gap_tdn"] = b["gap_t"][:, 0].copy(), b["gap_t"][:, 2].copy()
    # per column of each group: bottom and top height above the group's bottom face, and the inverse
    # elongation at break (0 for empty columns), for the dielectric strain limit
    for key, t, inv in (("ct", b["cov_t"], b["cov_inv"]), ("cb", b["cov_t_rev"], b["cov_inv"][:, ::-1]),
                        ("gap", b["gap_t"], b["gap_inv"])):
        below = t.sum(axis=1)[:, None] - np.cumsum(t, axis=1)
        out[key + "_yb"] = np.ascontiguousarray(below.T)
        out[key + "_yt"] = np.ascontiguousarray((below + t).T)
        out[key + "_inv"] = np.ascontiguousarray(np.where(t > 0, inv, 0.0).T)
    out["stiff"] = bool(np.all(b["cu_t"] > 0) and np.all(b["cu_E"] > 0)
                        and space.study.stack.signal_coverage > 0)
    # unbonded leaves: every leaf holds a copper layer, stiff when every coverage option is > 0
    out["stiff_leaves"] = out["stiff"] and bool(np.all(np.asarray(space.cov_opts) > 0))
    return out


def copper_strains(problem, slots: dict[str, np.ndarray], axis: bool = False, dielectric: bool = False):
    """Total thickness and peak strain of every copper layer, from the slots (bonded or unbonded).

    Parameters
    ----------
    problem : Problem
    slots : dict
        Per-slot option indices (:meth:`Space.slots`).
    axis : bool
        Also return the neutral-axis height of every copper layer's leaf (n, N), m.
    dielectric : bool
        Bonded only: also return the largest ``|strain| / elongation at break`` over every dielectric
        face (n,), from the same axis and per-column tables.

    Returns
    -------
    total_m : ndarray, (n,)
    cu_peak : ndarray, (n, N)
        Largest strain magnitude over the two faces of each copper layer (fraction), top to bottom.
    y_na : ndarray, (n, N), only with ``axis``
    """
    n = slots["signal"].shape[0]
    N = problem.space.n_cu
    if n <= BLOCK:
        out = _strain_rows(problem, slots, dielectric=dielectric)
    else:
        total, peak, yna, diel = np.empty(n), np.empty((N, n)), np.empty((N, n)), np.empty(n)
        for a in range(0, n, BLOCK):            # row blocks whose temporaries stay in cache
            sub = {k: v[a:a + BLOCK] for k, v in slots.items()}
            o = _strain_rows(problem, sub, True, dielectric)
            total[a:a + BLOCK], peak[:, a:a + BLOCK], yna[:, a:a + BLOCK] = o[:3]
            if dielectric:
                diel[a:a + BLOCK] = o[3]
        out = (total, peak.T, yna.T, diel)
    return out[:2] + ((out[2],) if axis else ()) + ((out[3],) if dielectric else ())


def _strain_rows(problem, slots: dict[str, np.ndarray], transposed: bool = False, dielectric: bool = False):
    sp, f = problem.space, problem.fast
    b = sp.blocks
    N = sp.n_cu
    n = slots["signal"].shape[0]

    def take(table: np.ndarray, index: np.ndarray) -> np.ndarray:
        # option codes are in range by construction (x on the grid); "clip" skips numpy's
        # per-element bounds check, which costs as much as the gather itself
        return table.take(index, mode="clip")

    ct, cb = slots["cover_top"], slots["cover_bot"]
    cu, cov, film, adh, place = slots["cu"], slots["cov_val"], slots["film"], slots["adh"], slots["place"]
    n_adh, n_cov = len(sp.adh_opts), len(sp.cover_opts)
    fill_flat = b["fill"].ravel()
    n_col = b["fill"].shape[1]
    gcode = [(film[:, g] * n_adh + adh[:, g]) * 3 + place[:, g] for g in range(N - 1)]
    unbonded = sp.unbonded
    if unbonded:
        bnd, film_up, _ = leaf_state(sp, slots)
        over = [bnd[:, g] & film_up[:, g] for g in range(N - 1)]      # top cover build on the lower leaf
        under = [bnd[:, g] & ~film_up[:, g] for g in range(N - 1)]    # bottom cover build on the upper leaf
        closed: list = [None] * (N - 1)          # (S, M) of the leaf ending below boundary g
    groups = [("cb", cb, 0.0)]                 # (table, option code, bottom height) of every dielectric group
    # bottom up: running height y, stiffness S and first moment M
    y = take(f["cb_T"], cb)
    S = take(f["cb_S"], cb)
    M = take(f["cb_M"], cb)
    ybot, tcu = [None] * N, [None] * N
    for i in range(N - 1, -1, -1):
        k = cu[:, i]
        t = take(b["cu_t"], k)
        up = ct if i == 0 else n_cov + gcode[i - 1]
        dn = cb if i == N - 1 else n_cov + gcode[i]
        if unbonded:
            if i > 0:
                up = np.where(over[i - 1], ct, up)
            if i < N - 1:
                dn = np.where(under[i], cb, dn)
        fill = take(fill_flat, up * n_col + dn)
        st = cov[:, i] * (take(b["cu_E"], k) - fill) + fill     # Voigt effective modulus ...
        st *= t                                                  # ... times thickness
        S += st
        M += st * (y + 0.5 * t)
        ybot[i], tcu[i] = y, t
        y = y + t
        if i == 0:
            continue
        g = gcode[i - 1]
        if unbonded:
            o, u = over[i - 1], under[i - 1]
            # lower part: the top cover build (film up) or the film with its lower adhesive (film down)
            lT = np.where(o, take(f["ct_T"], ct), take(f["gapD_T"], g))
            lS = np.where(o, take(f["ct_S"], ct), take(f["gapD_S"], g))
            lM = np.where(o, take(f["ct_M"], ct), take(f["gapD_M"], g))
            S_low, M_low = S + lS, M + lS * y + lM
            closed[i - 1] = (S_low, M_low)
            air = np.where(o, take(f["gap_tdn"], g), take(f["gap_tup"], g))
            y2 = y + lT + air
            # upper part: the upper adhesive with the film (film up) or the bottom cover build
            uT = np.where(o, take(f["gapU_T"], g), take(f["cb_T"], cb))
            uS = np.where(o, take(f["gapU_S"], g), take(f["cb_S"], cb))
            uM = np.where(o, take(f["gapU_M"], g), take(f["cb_M"], cb))
            sg = take(f["gap_S"], g)
            bd = o | u
            S = np.where(bd, uS, S + sg)
            M = np.where(bd, uS * y2 + uM, M + sg * y + take(f["gap_M"], g))
            y = np.where(bd, y2 + uT, y + take(f["gap_T"], g))
        else:
            groups.append(("gap", g, y.copy()))
            sg = take(f["gap_S"], g)
            S += sg
            M += sg * y
            M += take(f["gap_M"], g)
            y += take(f["gap_T"], g)
    groups.append(("ct", ct, y.copy()))
    sg = take(f["ct_S"], ct)
    S += sg
    M += sg * y
    M += take(f["ct_M"], ct)
    y += take(f["ct_T"], ct)
    total = y
    zone = getattr(problem, "zone", None) or sp.study.bend     # the bend zone being evaluated
    r = zone.inner_radius_mm * MM
    bottom_inside = zone.inside == "bottom"
    if unbonded:
        # top down: copper i shares copper i-1's leaf unless the gap between them is a boundary
        leaf_S, leaf_M = [S], [M]
        for i in range(1, N):
            cs, cm = closed[i - 1]
            bd = bnd[:, i - 1]
            leaf_S.append(np.where(bd, cs, leaf_S[-1]))
            leaf_M.append(np.where(bd, cm, leaf_M[-1]))
        with np.errstate(divide="ignore", invalid="ignore"):
            yna_i = [np.where(s_ > 0, m / np.where(s_ > 0, s_, 1.0), 0.0) for s_, m in zip(leaf_S, leaf_M)]
            absk_i = [np.abs(1.0 / ((r + v) if bottom_inside else (r + total - v))) for v in yna_i]
    else:
        with np.errstate(divide="ignore", invalid="ignore"):
            if f["stiff"]:
                yna = M / S          # every row has stiffness: the signal copper (coverage > 0)
            else:
                yna = np.where(S > 0, M / np.where(S > 0, S, 1.0), 0.5 * total)
            den = (r + yna) if bottom_inside else (r + total - yna)
            absk = np.abs(1.0 / den)
        yna_i, absk_i = [yna] * N, [absk] * N
    out = np.empty((N, n))
    for i in range(N):
        yna, absk = yna_i[i], absk_i[i]
        a = ybot[i] - yna
        c = a + tcu[i]
        np.abs(a, out=a)
        np.abs(c, out=c)
        np.maximum(a, c, out=out[i])
        out[i] *= absk
    axes = np.stack([np.broadcast_to(v, (n,)) for v in yna_i])
    res = (total, (out if transposed else out.T), (axes if transposed else axes.T))
    if not dielectric:
        return res
    if unbonded:
        raise ValueError("the dielectric strain of the fast path is for bonded regions")
    # max over dielectric faces of |y - y_NA| / elongation: per column max(y_t - y_NA, y_NA - y_b) / e_b
    worst = np.zeros(n)
    for key, code, ybot in groups:
        a = ybot - yna_i[0]
        yb, yt, inv = f[key + "_yb"], f[key + "_yt"], f[key + "_inv"]
        for c in range(yb.shape[0]):
            d = np.maximum(a + take(yt[c], code), -(a + take(yb[c], code)))
            np.maximum(worst, d * take(inv[c], code), out=worst)
    return res + (worst * absk_i[0],)
