"""Compiled bend mechanics of a batch (numba): per bend zone the total thickness, the peak strain of
every copper layer and the worst dielectric strain over elongation.

The same model as the general layer path -- :meth:`Space.mechanics` (layer thickness and effective
modulus from the per-option column blocks, fill by the lamination rule, Voigt copper modulus,
plane-strain moduli when asked), :func:`strainline.models.bending.bend_strains` (transformed
section, each bonded leaf about its own neutral axis, exact strain with the bend radius, either
face inside; J. M. Gere and S. P. Timoshenko, *Mechanics of Materials*, composite beams) and
:func:`.constraints.strain_ratio` (largest ``|strain| / elongation at break`` over every
dielectric face) -- written as one scalar loop over the candidates: per candidate the layer
columns are filled from the option tables into a small scratch buffer, then one bottom-up pass
gives the face heights, one pass per leaf its axis, and one pass the face strains. No (n, L)
temporaries; tests/test_kernel.py checks it against the layer path to 1e-12.

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

#: Candidates per task of the parallel variant (each task fills its own scratch buffers).
CHUNK = 4096


def enabled() -> bool:
    """True when the compiled kernel is to be used: numba imports and ``STRAINLINE_KERNEL`` is not
    ``0`` (set ``STRAINLINE_KERNEL=0`` to force the numpy path)."""
    return numba is not None and os.environ.get("STRAINLINE_KERNEL", "1").strip() != "0"


def _rows(lo, hi, cu, film, adh, place, ct_, cb_, cov, leaves,
          cu_t, cu_E, cov_t, cov_E, cov_inv, gap_t, gap_E, gap_inv, fill, leaf_mask,
          n_adh, n_cov, unbonded, radius, inside_bottom, total_out, peak_out, ratio_out):
    """Candidates ``lo:hi`` (scalar loop; see the module docstring). Slot arrays are slot-major:
    ``cu``, ``cov`` (N, n); ``film``, ``adh``, ``place`` (N-1, n); outputs ``peak_out`` (N, n)."""
    N = cu.shape[0]
    G = N - 1
    W = 7 if unbonded else 3
    L = 4 + N + W * G
    t = np.zeros(L)
    E = np.zeros(L)
    inv = np.zeros(L)
    yb = np.zeros(L)
    air = np.zeros(L, np.bool_)
    cu_of = np.full(L, -1, np.int64)           # copper index of a column, -1 for a dielectric
    for i in range(N):
        cu_of[2 + (W + 1) * i] = i
    gcode = np.zeros(max(G, 1), np.int64)
    bnd = np.zeros(max(G, 1), np.bool_)
    up = np.zeros(max(G, 1), np.bool_)
    for r in range(lo, hi):
        a = ct_[r]
        b = cb_[r]
        # covers: top (film, adhesive), bottom (adhesive, film), top to bottom
        t[0] = cov_t[a, 0]
        t[1] = cov_t[a, 1]
        E[0] = cov_E[a, 0]
        E[1] = cov_E[a, 1]
        inv[0] = cov_inv[a, 0]
        inv[1] = cov_inv[a, 1]
        t[L - 2] = cov_t[b, 1]
        t[L - 1] = cov_t[b, 0]
        E[L - 2] = cov_E[b, 1]
        E[L - 1] = cov_E[b, 0]
        inv[L - 2] = cov_inv[b, 1]
        inv[L - 1] = cov_inv[b, 0]
        # gaps [adhesive above, film, adhesive below]
        for g in range(G):
            gc = (film[g, r] * n_adh + adh[g, r]) * 3 + place[g, r]
            gcode[g] = gc
            c = 2 + (W + 1) * g + (3 if unbonded else 1)
            for j in range(3):
                t[c + j] = gap_t[gc, j]
                E[c + j] = gap_E[gc, j]
                inv[c + j] = gap_inv[gc, j]
                air[c + j] = False
        if unbonded:
            # leaf boundaries and the film side of each (leaves.leaf_state)
            lm = leaves[r]
            for g in range(G):
                bnd[g] = leaf_mask[lm, g]
            for g in range(G):
                p = place[g, r]
                alone = bnd[g - 1] if g > 0 else True
                up[g] = (p == 0) or (p == 2 and alone)
            for g in range(G):
                c0 = 2 + 8 * g + 1                  # [cover adh, cover film, adh, film, adh, cover film, cover adh]
                under = bnd[g] and not up[g]        # the upper leaf's bottom face takes the bottom cover build
                over = bnd[g] and up[g]             # the lower leaf's top face takes the top cover build
                if under:
                    t[c0] = cov_t[b, 1]
                    t[c0 + 1] = cov_t[b, 0]
                    E[c0] = cov_E[b, 1]
                    E[c0 + 1] = cov_E[b, 0]
                    inv[c0] = cov_inv[b, 1]
                    inv[c0 + 1] = cov_inv[b, 0]
                    E[c0 + 2] = 0.0                 # the left-out bond adhesive above the film is air
                    inv[c0 + 2] = 0.0
                    air[c0 + 2] = True
                else:
                    t[c0] = 0.0
                    t[c0 + 1] = 0.0
                    E[c0] = 0.0
                    E[c0 + 1] = 0.0
                    inv[c0] = 0.0
                    inv[c0 + 1] = 0.0
                if over:
                    t[c0 + 5] = cov_t[a, 0]
                    t[c0 + 6] = cov_t[a, 1]
                    E[c0 + 5] = cov_E[a, 0]
                    E[c0 + 6] = cov_E[a, 1]
                    inv[c0 + 5] = cov_inv[a, 0]
                    inv[c0 + 6] = cov_inv[a, 1]
                    E[c0 + 4] = 0.0                 # ... or the one below it
                    inv[c0 + 4] = 0.0
                    air[c0 + 4] = True
                else:
                    t[c0 + 5] = 0.0
                    t[c0 + 6] = 0.0
                    E[c0 + 5] = 0.0
                    E[c0 + 6] = 0.0
                    inv[c0 + 5] = 0.0
                    inv[c0 + 6] = 0.0
        # copper: Voigt modulus with the fill its two neighbours give (mechanics.blocks "fill")
        for i in range(N):
            c = 2 + (W + 1) * i
            k = cu[i, r]
            u = a if i == 0 else n_cov + gcode[i - 1]
            d = b if i == N - 1 else n_cov + gcode[i]
            if unbonded:
                if i > 0 and bnd[i - 1] and up[i - 1]:
                    u = a
                if i < N - 1 and bnd[i] and not up[i]:
                    d = b
            f = fill[u, d]
            t[c] = cu_t[k]
            E[c] = cov[i, r] * (cu_E[k] - f) + f
        # face heights from the bottom
        y = 0.0
        for j in range(L - 1, -1, -1):
            yb[j] = y
            y += t[j]
        total = y
        total_out[r] = total
        worst = 0.0
        # each run of non-air columns is a bonded leaf bending about its own axis
        j = 0
        while j < L:
            if air[j]:
                j += 1
                continue
            j2 = j
            S = 0.0
            M = 0.0
            while j2 < L and not air[j2]:
                et = E[j2] * t[j2]
                S += et
                M += et * (yb[j2] + yb[j2] + t[j2])
                j2 += 1
            if S > 0.0:
                na = 0.5 * M / S
            else:                                   # no stiffness: the leaf's mid-height
                na = 0.5 * (yb[j2 - 1] + yb[j] + t[j])
            den = (radius + na) if inside_bottom else (radius + total - na)
            absk = abs(1.0 / den)
            for q in range(j, j2):
                dt = abs(yb[q] + t[q] - na)
                db = abs(yb[q] - na)
                m = (dt if dt > db else db) * absk
                i = cu_of[q]
                if i >= 0:
                    peak_out[i, r] = m
                elif inv[q] > 0.0:
                    v = m * inv[q]
                    if v > worst:
                        worst = v
            j = j2
        ratio_out[r] = worst


def _rows_bonded(lo, hi, cu, film, adh, place, ct_, cb_, cov,
                 cu_t, cu_E, fill, gT, gS, gM, gyb, gyt, ginv,
                 n_adh, n_cov, stiff, radius, inside_bottom, total_out, peak_out, ratio_out):
    """Bonded candidates ``lo:hi`` from per-option group sums (:func:`.faststrain.fast_tables`):
    a cover or gap contributes its thickness ``T``, stiffness ``S = sum E t`` and first moment
    ``M`` about its own bottom face; rows of ``gT``... are the bottom covers (``n_cov``), the top
    covers (``n_cov``), then the gap codes; ``gyb``, ``gyt``, ``ginv`` (rows, 3) give every column's
    bottom and top height in its group and its inverse elongation (0 for an empty column, and for
    the third column of a two-column cover)."""
    N = cu.shape[0]
    G = N - 1
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


if numba is not None:
    _rows_jit = njit(cache=True, nogil=True)(_rows)
    _bonded_jit = njit(cache=True, nogil=True)(_rows_bonded)

    @njit(cache=True, nogil=True)
    def _serial_bonded(*args):  # pragma: no cover - compiled
        n = args[0].shape[1]
        _bonded_jit(0, n, *args)

    @njit(cache=True, nogil=True, parallel=True)
    def _parallel_bonded(*args):  # pragma: no cover - compiled
        n = args[0].shape[1]
        for k in prange((n + CHUNK - 1) // CHUNK):
            _bonded_jit(k * CHUNK, min(n, (k + 1) * CHUNK), *args)

    @njit(cache=True, nogil=True)
    def _serial(*args):  # pragma: no cover - compiled
        n = args[0].shape[1]
        _rows_jit(0, n, *args)

    @njit(cache=True, nogil=True, parallel=True)
    def _parallel(*args):  # pragma: no cover - compiled
        n = args[0].shape[1]
        for k in prange((n + CHUNK - 1) // CHUNK):
            _rows_jit(k * CHUNK, min(n, (k + 1) * CHUNK), *args)


def _tables(problem: Any) -> dict:
    """The option tables the kernels read, cached on the problem: contiguous copies of
    ``space.blocks`` (layer path) and the group sums of :func:`.faststrain.fast_tables` stacked as
    bottom covers, top covers, gaps (bonded path)."""
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

    def cols3(key: str) -> np.ndarray:          # (rows, 3): cover tables padded with an empty column
        out = []
        for part in ("cb", "ct", "gap"):
            v = np.asarray(ft[part + "_" + key]).T
            out.append(np.pad(v, ((0, 0), (0, 3 - v.shape[1]))))
        return f64(np.concatenate(out))

    group = tuple(f64(np.concatenate([ft[p + "_" + k] for p in ("cb", "ct", "gap")])) for k in "TSM")
    tabs = {
        "layers": (f64(b["cu_t"]), f64(b["cu_E"]), f64(b["cov_t"]), f64(b["cov_E"]), f64(b["cov_inv"]),
                   f64(b["gap_t"]), f64(b["gap_E"]), f64(b["gap_inv"]), f64(b["fill"]), mask),
        "groups": (f64(b["cu_t"]), f64(b["cu_E"]), f64(b["fill"])) + group
                  + (cols3("yb"), cols3("yt"), cols3("inv")),
        "stiff": bool(ft["stiff"]),
    }
    problem._kernel_tables = (sp.blocks, tabs)
    return tabs


def _slot_major(v: np.ndarray, dtype) -> np.ndarray:
    """A slot array (n, k) as a contiguous (k, n) array (a free view for the (n, k) Fortran-order
    arrays :meth:`Space.slots` returns)."""
    return np.ascontiguousarray(np.asarray(v, dtype).T)


def zone_mechanics(problem: Any, slots: dict[str, np.ndarray], zone: Any = None, parallel: bool = False):
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
    if sp.unbonded:
        run = _parallel if parallel else _serial
        run(cu, film, adh, place, ct, cb, cov, np.ascontiguousarray(slots["leaves"], i64), *tabs["layers"],
            n_adh, n_cov, True, radius, bottom, total, peak, ratio)
    else:
        run = _parallel_bonded if parallel else _serial_bonded
        run(cu, film, adh, place, ct, cb, cov, *tabs["groups"], n_adh, n_cov, tabs["stiff"], radius, bottom,
            total, peak, ratio)
    return total, peak.T, ratio


__all__ = ["enabled", "zone_mechanics", "CHUNK"]
