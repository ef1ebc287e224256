"""Compiled bend mechanics of a batch (numba): per bend zone the total thickness, the peak strain of
every copper layer and the worst dielectric strain over elongation.

The same model as the general layer path -- :meth:`Space.mechanics` (layer thickness and effective
modulus from the per-option column blocks, fill by the lamination rule, Voigt copper modulus,
plane-strain moduli when asked), :func:`strainline.models.bending.bend_strains` (transformed
section, each bonded leaf about its own neutral axis, exact strain with the bend radius, either
face inside; J. M. Gere and S. P. Timoshenko, *Mechanics of Materials*, composite beams) and
:func:`.constraints.strain_ratio` (largest ``|strain| / elongation at break`` over every
dielectric face) -- written as one scalar loop over the candidates on the group sums of
:mod:`.faststrain` (each cover, gap or leaf part of a gap contributes its thickness, ``sum E t``
and first moment, looked up per option code): one bottom-up pass stacks the groups and the copper
layers (closing a leaf at each boundary and skipping its air gap), then every leaf gets its axis
and only the copper faces and the dielectric columns are evaluated. No (n, L) temporaries;
tests/test_kernel.py checks both kernels (bonded, and the general one with leaves) against the
layer path to 1e-12.

:func:`zone_mechanics` is the Python entry point (one bend zone); :func:`enabled` says whether to
use it (numba importable and ``STRAINLINE_KERNEL`` not ``0``). Compiled code is cached on disk
(``cache=True``), so the first call of a process loads it instead of compiling it again (parallel
worker processes share the cache).
"""
from __future__ import annotations

import os
from typing import Any

import numpy as np

from strainline.models.units import MM

try:                                   # the kernel is optional: without numba the numpy path runs
    import numba
    from numba import njit, prange
except ImportError:                    # pragma: no cover - numba is a dependency
    numba = None

#: Candidates per task of the parallel variant (each task has its own scratch buffers).
CHUNK = 4096


def enabled() -> bool:
    """True when the compiled kernel is to be used: numba imports and ``STRAINLINE_KERNEL`` is not
    ``0`` (set ``STRAINLINE_KERNEL=0`` to force the numpy path)."""
    return numba is not None and os.environ.get("STRAINLINE_KERNEL", "1").strip() != "0"


def _rows_bonded(lo, hi, cu, film, adh, place, ct_, cb_, cov,
                 cu_t, cu_E, fill, gT, gS, gM, gyb, gyt, ginv, ginvmax,
                 n_adh, n_cov, stiff, radius, inside_bottom, ratio_cut, total_out, peak_out, ratio_out):
    """Bonded candidates ``lo:hi`` from per-option group sums (:func:`.faststrain.fast_tables`), the
    same arithmetic as :func:`.faststrain.copper_strains`:
    a cover or gap contributes its thickness ``T``, stiffness ``S = sum E t`` and first moment
    ``M`` about its own bottom face; rows of ``gT``... are the bottom covers (``n_cov``), the top
    covers (``n_cov``), then the gap codes; ``gyb``, ``gyt``, ``ginv`` (rows, 3) give every column's
    bottom and top height in its group and its inverse elongation (0 for an empty column, and for
    the third column of a two-column cover), ``ginvmax`` (rows,) the largest of a group's.

    With ``ratio_cut`` >= 0 a candidate whose dielectric strain bound -- the largest distance of a
    face from the axis times the curvature times the largest inverse elongation of its groups --
    is at most ``ratio_cut`` gets that bound as its ratio instead of the exact value (the fused
    enumeration only needs to know the ratio is under its limit); -1 always gives the exact one."""
    N = cu.shape[0]
    ybot = np.zeros(N)
    tcu = np.zeros(N)
    base = np.zeros(N + 1)                       # bottom height of each dielectric group
    code = np.zeros(N + 1, np.int64)             # its row in the group tables
    for r in range(lo, hi):
        a = ct_[r]
        b = cb_[r]
        y = gT[b]
        S = gS[b]
        M = gM[b]
        base[0] = 0.0
        code[0] = b
        dn = b                                   # fill-table column of the neighbour below copper i
        for i in range(N - 1, -1, -1):           # bottom up: copper i, then the group above it
            if i == 0:
                gc = 0
                above = a
                grow = n_cov + a
            else:
                gc = (film[i - 1, r] * n_adh + adh[i - 1, r]) * 3 + place[i - 1, r]
                above = n_cov + gc
                grow = 2 * n_cov + gc
            k = cu[i, r]
            t = cu_t[k]
            f = fill[above, dn]
            st = cov[i, r] * (cu_E[k] - f) + f      # Voigt effective modulus ...
            st *= t                                 # ... times thickness
            S += st
            M += st * (y + 0.5 * t)
            ybot[i] = y
            tcu[i] = t
            y = y + t
            base[N - i] = y
            code[N - i] = grow
            sg = gS[grow]
            S += sg
            M += sg * y
            M += gM[grow]
            y += gT[grow]
            dn = n_cov + gc
        total_out[r] = y
        if stiff or S > 0.0:
            na = M / S
        else:
            na = 0.5 * y
        den = (radius + na) if inside_bottom else (radius + y - na)
        absk = abs(1.0 / den)
        for i in range(N):
            p = ybot[i] - na
            q = p + tcu[i]
            p = abs(p)
            q = abs(q)
            peak_out[i, r] = (p if p > q else q) * absk
        if ratio_cut >= 0.0:
            im = 0.0
            for g in range(N + 1):
                v = ginvmax[code[g]]
                im = v if v > im else im
            span = abs(na) if abs(na) > abs(y - na) else abs(y - na)
            bound = span * absk * im
            if bound <= ratio_cut:
                ratio_out[r] = bound
                continue
        worst = 0.0
        for g in range(N + 1):
            e = base[g] - na
            row = code[g]
            for c in range(3):
                v = e + gyt[row, c]
                w = -(e + gyb[row, c])
                v = (v if v > w else w) * ginv[row, c]
                worst = v if v > worst else worst
        ratio_out[r] = worst * absk


def _rows_groups(lo, hi, cu, film, adh, place, ct_, cb_, cov, leaves,
                 cu_t, cu_E, fill, gT, gS, gM, gyb, gyt, ginv, gtup, gtdn, leaf_mask,
                 n_adh, n_cov, radius, inside_bottom, total_out, peak_out, ratio_out):
    """Candidates ``lo:hi`` from per-option group sums (:func:`.faststrain.fast_tables`).

    A cover, a gap or the part of a gap a leaf keeps contributes its thickness ``T``, stiffness
    ``S = sum E t`` and first moment ``M`` about its own bottom face. Rows of the group tables: bottom
    covers, top covers (``n_cov`` each), then whole gaps, their upper parts (adhesive above, film)
    and their lower parts (film, adhesive below), one row per gap code each; ``gyb``, ``gyt``,
    ``ginv`` (rows, 3) give every column's bottom and top height in its group and its inverse
    elongation (0 for an empty column). Stacking from the bottom: at a leaf boundary the running
    sums close the lower leaf, the air gap (the left-out bond adhesive, ``gtup``/``gtdn``) is
    skipped and the upper leaf starts; every copper layer and dielectric group bends about its own
    leaf's axis (a leaf without stiffness about its mid-height, as in ``bend_strains``).
    ``leaves`` (n,) is the grouping option of an unbonded region, None for a bonded one (a separate
    compiled specialisation without the leaf branches)."""
    unbonded = leaves is not None
    N = cu.shape[0]
    G = N - 1
    ng = gtup.shape[0]
    GAP = 2 * n_cov
    UP = GAP + ng
    DN = UP + ng
    ybot = np.zeros(N)
    tcu = np.zeros(N)
    cleaf = np.zeros(N, np.int64)               # leaf of each copper layer (0 = the bottom leaf)
    base = np.zeros(2 * N)                      # bottom height, table row and leaf of each group
    code = np.zeros(2 * N, np.int64)
    gleaf = np.zeros(2 * N, np.int64)
    lS = np.zeros(N)
    lM = np.zeros(N)
    lbot = np.zeros(N)
    ltop = np.zeros(N)
    lna = np.zeros(N)
    labsk = np.zeros(N)
    bnd = np.zeros(max(G, 1), np.bool_)
    up = np.zeros(max(G, 1), np.bool_)
    for r in range(lo, hi):
        a = ct_[r]
        b = cb_[r]
        if unbonded:                            # leaf boundaries and film sides (leaves.leaf_state)
            lm = leaves[r]
            for g in range(G):
                bnd[g] = leaf_mask[lm, g]
            for g in range(G):
                p = place[g, r]
                alone = bnd[g - 1] if g > 0 else True
                up[g] = (p == 0) or (p == 2 and alone)
        y = gT[b]
        S = gS[b]
        M = gM[b]
        base[0] = 0.0
        code[0] = b
        gleaf[0] = 0
        n_g = 1
        leaf = 0
        lbot[0] = 0.0
        dn = b                                   # fill-table column of the neighbour below copper i
        for i in range(N - 1, -1, -1):           # bottom up: copper i, then the group(s) above it
            if i == 0:
                gc = 0
                above = a
            else:
                gc = (film[i - 1, r] * n_adh + adh[i - 1, r]) * 3 + place[i - 1, r]
                above = n_cov + gc
                if unbonded and bnd[i - 1] and up[i - 1]:
                    above = a                    # faces the top cover build of its leaf
            k = cu[i, r]
            t = cu_t[k]
            f = fill[above, dn]
            st = cov[i, r] * (cu_E[k] - f) + f      # Voigt effective modulus ...
            st *= t                                 # ... times thickness
            S += st
            M += st * (y + 0.5 * t)
            ybot[i] = y
            tcu[i] = t
            cleaf[i] = leaf
            y = y + t
            if i == 0:
                break
            if unbonded and bnd[i - 1]:
                o = up[i - 1]
                row = n_cov + a if o else DN + gc   # the lower leaf keeps the top cover build or the film
                base[n_g] = y
                code[n_g] = row
                gleaf[n_g] = leaf
                n_g += 1
                sg = gS[row]
                lS[leaf] = S + sg
                lM[leaf] = M + sg * y + gM[row]
                y = y + gT[row]
                ltop[leaf] = y
                y = y + (gtdn[gc] if o else gtup[gc])   # the air gap
                leaf += 1
                lbot[leaf] = y
                row = UP + gc if o else b             # the upper leaf starts with the film or the bottom cover build
                base[n_g] = y
                code[n_g] = row
                gleaf[n_g] = leaf
                n_g += 1
                sg = gS[row]
                S = sg
                M = sg * y + gM[row]
                y += gT[row]
                dn = n_cov + gc if o else b
            else:
                row = GAP + gc
                base[n_g] = y
                code[n_g] = row
                gleaf[n_g] = leaf
                n_g += 1
                sg = gS[row]
                S += sg
                M += sg * y
                M += gM[row]
                y += gT[row]
                dn = n_cov + gc
        row = n_cov + a                          # the top cover
        base[n_g] = y
        code[n_g] = row
        gleaf[n_g] = leaf
        n_g += 1
        sg = gS[row]
        S += sg
        M += sg * y
        M += gM[row]
        y += gT[row]
        lS[leaf] = S
        lM[leaf] = M
        ltop[leaf] = y
        total_out[r] = y
        for q in range(leaf + 1):
            na = lM[q] / lS[q] if lS[q] > 0.0 else 0.5 * (lbot[q] + ltop[q])
            den = (radius + na) if inside_bottom else (radius + y - na)
            lna[q] = na
            labsk[q] = abs(1.0 / den)
        for i in range(N):
            na = lna[cleaf[i]]
            p = ybot[i] - na
            q = p + tcu[i]
            p = abs(p)
            q = abs(q)
            peak_out[i, r] = (p if p > q else q) * labsk[cleaf[i]]
        worst = 0.0
        for g in range(n_g):
            e = base[g] - lna[gleaf[g]]
            row = code[g]
            gw = 0.0
            for c in range(3):
                v = e + gyt[row, c]
                w = -(e + gyb[row, c])
                v = (v if v > w else w) * ginv[row, c]
                gw = v if v > gw else gw
            gw *= labsk[gleaf[g]]
            worst = gw if gw > worst else worst
        ratio_out[r] = worst


if numba is not None:
    _bonded_jit = njit(cache=True, nogil=True)(_rows_bonded)
    _groups_jit = njit(cache=True, nogil=True)(_rows_groups)

    @njit(cache=True, nogil=True)
    def _serial_bonded(*args):  # pragma: no cover - compiled
        _bonded_jit(0, args[0].shape[1], *args)

    @njit(cache=True, nogil=True, parallel=True)
    def _parallel_bonded(*args):  # pragma: no cover - compiled
        n = args[0].shape[1]
        for k in prange((n + CHUNK - 1) // CHUNK):
            _bonded_jit(k * CHUNK, min(n, (k + 1) * CHUNK), *args)

    @njit(cache=True, nogil=True)
    def _serial_groups(*args):  # pragma: no cover - compiled
        _groups_jit(0, args[0].shape[1], *args)

    @njit(cache=True, nogil=True, parallel=True)
    def _parallel_groups(*args):  # pragma: no cover - compiled
        n = args[0].shape[1]
        for k in prange((n + CHUNK - 1) // CHUNK):
            _groups_jit(k * CHUNK, min(n, (k + 1) * CHUNK), *args)


def _tables(problem: Any) -> dict:
    """The option tables the kernels read, cached on the problem: the group sums of
    :func:`.faststrain.fast_tables` and the column frames of every group, stacked as bottom covers,
    top covers, gaps, upper and lower gap parts (see :func:`_rows_groups`)."""
    sp = problem.space
    got = getattr(problem, "_kernel_tables", None)
    if got is not None and got[0] is sp.blocks:
        return got[1]
    from strainline.optimizer.search.faststrain import fast_tables

    b = sp.blocks
    f64 = lambda v: np.ascontiguousarray(v, dtype=np.float64)     # noqa: E731
    G = max(sp.n_cu - 1, 0)
    mask = np.ascontiguousarray(np.asarray(sp.arr["leaf_mask"], np.bool_).reshape(-1, G))
    ft = fast_tables(sp)

    gt, ginv = b["gap_t"], b["gap_inv"]

    def frame(t: np.ndarray, inv: np.ndarray) -> tuple:
        """(yb, yt, inv) of the columns of a block (k, c), heights above the block's bottom."""
        below = t.sum(axis=1)[:, None] - np.cumsum(t, axis=1)
        return below, below + t, np.where(t > 0, inv, 0.0)

    parts = [frame(b["cov_t_rev"], b["cov_inv"][:, ::-1]), frame(b["cov_t"], b["cov_inv"]), frame(gt, ginv),
             frame(gt[:, :2], ginv[:, :2]), frame(gt[:, 1:], ginv[:, 1:])]
    cols = [f64(np.concatenate([np.pad(p[j], ((0, 0), (0, 3 - p[j].shape[1]))) for p in parts])) for j in range(3)]
    group = [f64(np.concatenate([ft[p + "_" + k] for p in ("cb", "ct", "gap", "gapU", "gapD")])) for k in "TSM"]
    tabs = {
        "bonded": (f64(b["cu_t"]), f64(b["cu_E"]), f64(b["fill"]), *group, *cols, f64(cols[2].max(axis=1))),
        "groups": (f64(b["cu_t"]), f64(b["cu_E"]), f64(b["fill"]), *group, *cols,
                   f64(ft["gap_tup"]), f64(ft["gap_tdn"]), mask),
        "stiff": bool(ft["stiff"]),
    }
    problem._kernel_tables = (sp.blocks, tabs)
    return tabs


def _slot_major(v: np.ndarray, dtype) -> np.ndarray:
    """A slot array (n, k) as a contiguous (k, n) array (a free view for the (n, k) Fortran-order
    arrays :meth:`Space.slots` returns)."""
    return np.ascontiguousarray(np.asarray(v, dtype).T)


def zone_mechanics(problem: Any, slots: dict[str, np.ndarray], zone: Any = None, parallel: bool = False,
                   general: bool = False):
    """Total thickness, copper peak strains and dielectric strain ratio of a batch in one bend zone.

    Parameters
    ----------
    problem : Problem
        The study's evaluator (its ``space`` gives the option tables).
    slots : dict
        Per-slot option indices of the batch (:meth:`Space.slots`).
    zone : Bend, optional
        The bend zone (inner radius, inside face); default ``problem.zone`` or ``study.bend``.
    parallel : bool
        Spread the candidates over the threads numba uses (``numba.prange``); default one thread.
    general : bool
        Run a bonded region through the general (leaf) kernel too (for tests; about 20 % slower
        than the bonded kernel).

    Returns
    -------
    total_m : ndarray, (n,)
        Stack thickness, m.
    cu_peak : ndarray, (n, N)
        Largest strain magnitude over the two faces of each copper layer (fraction), top to bottom
        (a Fortran-order view: columns contiguous).
    ratio : ndarray, (n,)
        Largest ``|strain| / elongation at break`` over every dielectric face.
    """
    if numba is None:                   # pragma: no cover - numba is a dependency
        raise RuntimeError("the compiled kernel needs numba; set STRAINLINE_KERNEL=0")
    sp = problem.space
    zone = zone or getattr(problem, "zone", None) or sp.study.bend
    N = sp.n_cu
    n = slots["signal"].shape[0]
    i64 = np.int64
    total, peak, ratio = np.empty(n), np.empty((N, n)), np.empty(n)
    tabs = _tables(problem)
    radius, bottom = float(zone.inner_radius_mm * MM), zone.inside == "bottom"
    cu, film, adh, place = (_slot_major(slots[k], i64) for k in ("cu", "film", "adh", "place"))
    ct, cb = np.ascontiguousarray(slots["cover_top"], i64), np.ascontiguousarray(slots["cover_bot"], i64)
    cov = _slot_major(slots["cov_val"], np.float64)
    n_adh, n_cov = i64(len(sp.adh_opts)), i64(len(sp.cover_opts))
    if sp.unbonded or general:
        leaves = np.ascontiguousarray(slots["leaves"], i64) if sp.unbonded else None
        run = _parallel_groups if parallel else _serial_groups
        run(cu, film, adh, place, ct, cb, cov, leaves, *tabs["groups"], n_adh, n_cov, radius, bottom,
            total, peak, ratio)
    else:
        run = _parallel_bonded if parallel else _serial_bonded
        run(cu, film, adh, place, ct, cb, cov, *tabs["bonded"], n_adh, n_cov, tabs["stiff"], radius, bottom, -1.0,
            total, peak, ratio)
    return total, peak.T, ratio


__all__ = ["enabled", "zone_mechanics", "CHUNK"]
