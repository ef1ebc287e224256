"""Copper strain bounds over a node of an unbonded region (leaves bending about their own axes).

Used by :class:`.boundstrain.NodeModel` with the leaf grouping set (``leaves`` is enumerated). The
stack of an unbonded candidate (:func:`.faststrain.copper_strains`, the compiled
``kernel._rows_groups``) is the bonded group list (bottom cover, copper, gap, ..., top cover) in
which every boundary gap ``g`` becomes three groups: the lower leaf's top part (the top cover
build when the film stays up, else the film with its lower adhesive), the air gap (the left-out
bond adhesive: thickness, no stiffness) and the upper leaf's bottom part (the upper adhesive with
the film, else the bottom cover build). The film side follows :func:`.leaves.leaf_state` (up when
``place == 0``, or ``place == 2`` with the upper copper alone); a free placement gives the union
of both sides' intervals. A copper next to a boundary may face a cover build instead of the gap,
so its fill modulus takes the whole fill range.

Each copper ``i`` bends about its own leaf's axis: ``|eps_i| = (|m_i - y_NA,q| + t_i / 2) / D``
with ``y_NA,q = sum S_g c_g / sum S_g`` over the groups ``g`` of its leaf ``q`` (a leaf without
stiffness: its mid-height) and ``D = R + y_NA,q`` (bottom inside) or ``R + T - y_NA,q`` (top
inside), ``T`` the total with the air gaps (:func:`strainline.models.bending.bend_strains`;
J. M. Gere and S. P. Timoshenko, *Mechanics of Materials*, composite beams). Since
``0 <= y_NA,q <= T``, ``D <= R + T_hi``. The distance ``m_i - y_NA,q`` is a weighted mean of
``m_i - c_g`` over the leaf's groups, bounded exactly over the box of weights and values by
:func:`wmin` (Dinkelbach 1967, as in :mod:`.boundstrain`); the groups of other leaves get weight 0.
"""
from __future__ import annotations

from typing import Any

import numpy as np


def wmin(e: np.ndarray, wl: np.ndarray, wh: np.ndarray) -> np.ndarray:
    """Least weighted mean ``sum w e / sum w`` over weights ``wl <= w <= wh`` (rows; exact): the
    optimum puts the upper weight on the smallest values, so it is the least of the G + 1
    threshold vertices over the values sorted. Rows whose weights may all be 0 give -inf."""
    order = np.argsort(e, axis=1)
    es = np.take_along_axis(e, order, axis=1)
    ls = np.take_along_axis(wl, order, axis=1)
    hs = np.take_along_axis(wh, order, axis=1)
    z = np.zeros((e.shape[0], 1))
    hi_num = np.concatenate([z, np.cumsum(hs * es, axis=1)], axis=1)
    hi_den = np.concatenate([z, np.cumsum(hs, axis=1)], axis=1)
    lo_num = np.concatenate([np.cumsum((ls * es)[:, ::-1], axis=1)[:, ::-1], z], axis=1)
    lo_den = np.concatenate([np.cumsum(ls[:, ::-1], axis=1)[:, ::-1], z], axis=1)
    num, den = hi_num + lo_num, hi_den + lo_den
    with np.errstate(divide="ignore", invalid="ignore"):
        mean = np.where(den > 0, num / np.where(den > 0, den, 1.0), np.inf)
    out = mean.min(axis=1)
    out[lo_den[:, 0] <= 0] = -np.inf          # every weight may be 0: no bound
    return out


_Q = ("T", "S", "r", "tr")


def _pick(a: dict, b: dict, up: np.ndarray, both: bool) -> dict:
    """Interval of ``a`` where the film is up, of ``b`` elsewhere; the union of both when ``both``
    (``fmin``/``fmax``: an undefined centroid, nan, gives way to the other side's)."""
    out = {}
    for q in _Q:
        lo, hi = q + "_lo", q + "_hi"
        if both:
            out[lo], out[hi] = np.fmin(a[lo], b[lo]), np.fmax(a[hi], b[hi])
        else:
            out[lo], out[hi] = np.where(up, a[lo], b[lo]), np.where(up, a[hi], b[hi])
    return out


def leaf_groups(model: Any, slots: dict, free: set, mask: tuple[bool, ...],
                groups: list) -> tuple[list, list, list]:
    """The unbonded group list of grouping ``mask`` from the bonded one (``groups``, bottom up), the
    leaf of every group (-1: an air gap) and the list position of every copper (top to bottom);
    boundary parts per the module docstring."""
    N = model.sp.n_cu
    n = slots["signal"].shape[0]
    film, adh, place = slots["film"], slots["adh"], slots["place"]
    ctf, cbf = "cover_top" in free, "cover_bot" in free
    ct = model._cover(model.ct, slots["cover_top"], ctf)
    cb = model._cover(model.cb, slots["cover_bot"], cbf)
    out, leaf, pos = [groups[0]], [0], [0] * N
    q = 0
    for i in range(N - 1, -1, -1):                 # bottom up: copper i, then the group above it
        pos[i] = len(out)
        out.append(groups[1 + 2 * (N - 1 - i)])
        leaf.append(q)
        if i == 0:
            break
        g = i - 1
        gap = groups[2 + 2 * (N - 2 - g)]
        if not mask[g]:
            out.append(gap)
            leaf.append(q)
            continue
        fr = tuple((k, g) in free for k in ("film", "adh", "place"))
        parts = {k: model.part(k, film[:, g], adh[:, g], place[:, g], fr) for k in ("gapU", "gapD", "tup", "tdn")}
        both = fr[2]
        alone = mask[g - 1] if g > 0 else True
        p = place[:, g]
        up = (p == 0) | ((p == 2) & alone)
        for grp in (_pick(ct, parts["gapD"], up, both), _pick(parts["tdn"], parts["tup"], up, both),
                    _pick(parts["gapU"], cb, up, both)):
            out.append(grp)
        leaf += [q, -1, q + 1]
        q += 1
    out.append(groups[-1])
    leaf.append(q)
    for g in out:           # a group that may have no stiffness: its centroid does not matter
        for k in ("r", "tr"):
            bad = ~np.isfinite(g[k + "_lo"]) | ~np.isfinite(g[k + "_hi"])
            if bad.any():
                g[k + "_lo"] = np.where(bad, 0.0, g[k + "_lo"])
                g[k + "_hi"] = np.where(bad, 0.0, g[k + "_hi"])
    for g in out:
        for k in _Q:
            g[k + "_lo"] = np.broadcast_to(g[k + "_lo"], (n,))
            g[k + "_hi"] = np.broadcast_to(g[k + "_hi"], (n,))
    return out, leaf, pos


def leaf_strains(groups: list, leaf: list, pos: list) -> tuple[np.ndarray, np.ndarray]:
    """Upper bound of the total thickness (n,) and a lower bound of ``|m_i - y_NA,q| + t_i / 2`` of
    every copper (n, N), top to bottom, over the leaves of ``groups`` (:func:`leaf_groups`)."""
    G = len(groups)
    Tl = np.stack([g["T_lo"] for g in groups], axis=1)
    Th = np.stack([g["T_hi"] for g in groups], axis=1)
    Sl = np.stack([g["S_lo"] for g in groups], axis=1)
    Sh = np.stack([g["S_hi"] for g in groups], axis=1)
    z = np.zeros((Tl.shape[0], 1))
    Cl, Ch = np.concatenate([z, np.cumsum(Tl, axis=1)], axis=1), np.concatenate([z, np.cumsum(Th, axis=1)], axis=1)
    dist = np.empty((Tl.shape[0], len(pos)))
    for i, k in enumerate(pos):
        half_l, half_h = 0.5 * Tl[:, k], 0.5 * Th[:, k]
        el, eh = np.zeros_like(Tl), np.zeros_like(Tl)
        wl, wh = np.zeros_like(Sl), np.zeros_like(Sh)
        for j in range(G):
            if leaf[j] != leaf[k]:
                continue                  # another leaf (or the air): weight 0
            g = groups[j]
            wl[:, j], wh[:, j] = Sl[:, j], Sh[:, j]
            if j < k:          # m_i - c_j = (T_j - r_j) + groups between + t_i / 2
                el[:, j] = g["tr_lo"] + (Cl[:, k] - Cl[:, j + 1]) + half_l
                eh[:, j] = g["tr_hi"] + (Ch[:, k] - Ch[:, j + 1]) + half_h
            elif j > k:        # m_i - c_j = -(t_i / 2 + groups between + r_j)
                el[:, j] = -(half_h + (Ch[:, j] - Ch[:, k + 1]) + g["r_hi"])
                eh[:, j] = -(half_l + (Cl[:, j] - Cl[:, k + 1]) + g["r_lo"])
        d_lo = wmin(el, wl, wh)
        d_hi = -wmin(-eh, wl, wh)
        gap_ = np.maximum(np.maximum(d_lo, -d_hi), 0.0)
        gap_[~np.isfinite(gap_)] = 0.0
        dist[:, i] = gap_ + half_l
    return Th.sum(axis=1), dist


__all__ = ["leaf_groups", "leaf_strains", "wmin"]
