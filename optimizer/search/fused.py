"""The fused range kernel (numba): candidate indices -> digits -> slots -> line rows -> bend
mechanics -> every constraint column, reduced on the fly for the exhaustive enumeration.

One compiled loop walks index ranges with a mixed-radix odometer (no digit arrays) and updates only
the slot codes of the variables that changed (symmetry, placement and coverage rules as
:meth:`Space.slots`); it gathers each line's table row (:meth:`LineTable.index`) and reads the
row's line columns. A candidate whose line holds (or whose failing line may still make it one of
the nearest infeasible) is queued; a full queue is bent in every bend zone by the batch kernels of
:mod:`.kernel` and its bend-model columns are evaluated (:mod:`.fusedblock`). Nothing per
candidate is written back except the few candidates Python must see:

* every candidate that may be feasible (every column ``<= EPS``) -- Python evaluates those with
  :meth:`Problem.evaluate` itself, so the front's objectives and the feasibility decision are
  exactly the general path's;
* every candidate with a column within ``EPS`` of its limit (its violation count is decided in
  Python);
* every infeasible candidate that may be among the ``k`` nearest: its total violation below the
  ``k``-th smallest seen so far (kept here; the values are the general path's to the last bit, and
  of equal violations the archive keeps the lower index, which came first). A candidate whose line
  fails is bent only when its line violation alone passes that test, as the pruning evaluation and
  the archive's refinement do.

All other candidates are counted here per violated column, with the pruning rule of
:meth:`Problem.evaluate`: a candidate whose line fails (the table's ``line_ok``) has only its line
columns; its bend columns count as 0 (with one line, per table row: ``hist``). The archive
therefore ends exactly as the general path leaves it (:mod:`.fusedplan` drives it;
tests/test_fused.py compares both on every study family).
"""
from __future__ import annotations

import numpy as np

from strainline.optimizer.search.fusedblock import (  # noqa: F401 - the column kinds, re-exported
    COVER, CRAD, EPS, FAT, GLASS, HATCH, LEAVES, LINE, MAT, PEAK, ROW, SIG, THICK, _block, _decide)

try:
    from numba import njit
except ImportError:                    # pragma: no cover - numba is a dependency
    njit = None


def _range(starts, stops, pos, sizes, svar, sconst, slut, lut, vdep, vptr, vline, sigvar, lsigtab, lgapvar, covmode,
           covsel, lcovtab, cov_tab, scov, rdim, rpos, rlut, rstride, roff, rnd, place_lut, rowbase,
           line_ok, RT, lcols, ramb, rcv, HW, hfill, strip, kind, unbonded, tabs, n_adh, n_cov, stiff,
           zrad, zbot, zfac, zallow, zhas, zcover, zdyn, thick_den, peak_lim, sig_lim, ef, rmin, cov_bare, cov_glass,
           gap_glass, glass_ratio, adh_m, adh_t, topk, emit, counts, hist, state, limit):
    """Enumerate ``[starts[p], stops[p])`` from ``pos = (piece, index)``; see the module docstring.
    Returns the number of candidates processed; ``state`` gets the next ``(piece, index)`` and the
    number emitted (the call stops when ``emit`` may overflow or after ``limit`` candidates: the
    caller resumes from ``state``). Candidates whose bend model is needed queue in blocks of ``B``
    for the batch kernels."""
    B = 520                                  # not a multiple of 512: rows of the block arrays on distinct cache sets
    nv = sizes.shape[0]
    N = covsel.shape[1]
    G = N - 1
    K = lsigtab.shape[1]
    C = kind.shape[0]
    NS = svar.shape[0]
    x = np.zeros(nv, np.int64)
    s = np.zeros(NS, np.int64)
    lsig = np.zeros(K, np.int64)
    lgap = np.zeros(K, np.int64)
    rows = np.zeros(K, np.int64)
    o = 0
    sl = np.zeros((max(N + 3 * G, 1), B), np.int64)
    bct = np.zeros(B, np.int64)
    bcb = np.zeros(B, np.int64)
    blv = np.zeros(B, np.int64)
    bcov = np.zeros((N, B))
    bsig = np.zeros((K, B), np.int64)
    brow = np.zeros((K, B), np.int64)
    bidx = np.zeros(B, np.int64)
    bok = np.zeros(B, np.bool_)
    g = np.zeros((C, B))
    total = np.zeros(B)
    peak = np.zeros((N, B))
    ratio = np.zeros(B)
    acc = np.zeros((4, B))
    g1 = np.zeros(C)
    nk = topk.shape[0]
    cap = emit.shape[0] - B - 1
    n_emit = 0
    nb = 0
    done = 0
    piece = pos[0]
    idx = pos[1]
    for p in range(NS):
        if svar[p] < 0:
            s[p] = sconst[p]
    while piece < starts.shape[0]:
        if idx < starts[piece]:
            idx = starts[piece]
        stop = stops[piece]
        q = idx
        for v in range(nv):                    # digits of the first index (first variable fastest)
            x[v] = q % sizes[v]
            q //= sizes[v]
        top = nv - 1                           # variables 0..top changed since the last candidate
        while idx < stop:
            if n_emit >= cap or done == limit:
                break
            # ---- slots of the changed variables
            line_dirty = False
            for v in range(top + 1):
                line_dirty = line_dirty or vline[v]
                for e in range(vptr[v], vptr[v + 1]):
                    p = vdep[e]
                    s[p] = lut[slut[p] + x[v]] if slut[p] >= 0 else x[v]
            if line_dirty or top == nv - 1:
                o = x[sigvar] if sigvar >= 0 else 0
                for k in range(K):
                    lsig[k] = lsigtab[o, k]
                    lgap[k] = x[lgapvar[k]] if lgapvar[k] >= 0 else 0
            ok = True
            for k in range(K):                     # each line's table row (LineTable.index)
                d = rdim[k, lsig[k]]
                r = roff[k, d] + rowbase[k]
                for jj in range(rnd[k, d]):
                    p = rpos[k, d, jj]
                    if p == -1:
                        v = lgap[k]
                    else:
                        v = s[p]
                        if rlut[k, d, jj]:
                            v = place_lut[v]
                    r += v * rstride[k, d, jj]
                rows[k] = r
                ok = ok and line_ok[r]
            # ---- line columns (the worst line's; one line: per-row figures)
            if K == 1:
                r0 = rows[0]
                amb = ramb[r0]
                cvlb = rcv[r0]
            else:
                cvlb = 0.0
                amb = False
                for e in range(lcols.shape[0]):
                    c = lcols[e]
                    w = -np.inf
                    for k in range(K):
                        t = RT[c, rows[k]]
                        w = t if t > w else w
                    g1[c] = w
                    if kind[c] == LINE:
                        if abs(w) <= EPS:
                            amb = True
                        if w > 0.0:
                            cvlb += w
            full = ok or (not amb and nk > 0 and cvlb < topk[nk - 1])
            if full:                               # queue for the bend model
                for p in range(NS - 3):
                    sl[p, nb] = s[p]
                bct[nb] = s[NS - 3]
                bcb[nb] = s[NS - 2]
                blv[nb] = s[NS - 1]
                for i in range(N):                 # copper coverages (Space.slots)
                    if covmode == 1:
                        bcov[i, nb] = lcovtab[o, i]
                    else:
                        v = covsel[lsig[0], i]
                        bcov[i, nb] = scov if v == -2 else cov_tab[x[v] if v >= 0 else 0]
                for k in range(K):
                    bsig[k, nb] = lsig[k]
                    brow[k, nb] = rows[k]
                for e in range(lcols.shape[0]):
                    c = lcols[e]
                    g[c, nb] = RT[c, rows[0]] if K == 1 else g1[c]
                bidx[nb] = idx
                bok[nb] = ok
                nb += 1
            elif amb:
                emit[n_emit] = idx
                n_emit += 1
            elif K == 1:                           # a failing line: its line columns count (per row)
                hist[rows[0]] += 1
            else:
                for e in range(lcols.shape[0]):
                    c = lcols[e]
                    if kind[c] == LINE and g1[c] > 0.0:
                        counts[c] += 1
            if nb == B:
                _block(nb, sl, bct, bcb, bcov, blv, bsig, brow, K, N, C, kind, HW, hfill, strip, unbonded,
                       tabs, n_adh, n_cov, stiff, zrad, zbot, zfac, zallow, zhas, zcover, zdyn, thick_den,
                       peak_lim, sig_lim, ef, rmin, cov_bare, cov_glass, gap_glass, glass_ratio, adh_m, adh_t,
                       g, total, peak, ratio, acc)
                n_emit = _decide(nb, g, C, kind, bok, bidx, topk, emit, n_emit, counts)
                nb = 0
            done += 1
            idx += 1
            v = 0                                  # odometer step
            while v < nv:
                x[v] += 1
                if x[v] < sizes[v]:
                    break
                x[v] = 0
                v += 1
            top = v if v < nv else nv - 1
        if n_emit >= cap or done == limit:
            break
        piece += 1
        if piece < starts.shape[0]:
            idx = starts[piece]
    if nb:
        _block(nb, sl, bct, bcb, bcov, blv, bsig, brow, K, N, C, kind, HW, hfill, strip, unbonded,
               tabs, n_adh, n_cov, stiff, zrad, zbot, zfac, zallow, zhas, zcover, zdyn, thick_den,
               peak_lim, sig_lim, ef, rmin, cov_bare, cov_glass, gap_glass, glass_ratio, adh_m, adh_t,
               g, total, peak, ratio, acc)
        n_emit = _decide(nb, g, C, kind, bok, bidx, topk, emit, n_emit, counts)
    state[0] = piece
    state[1] = idx
    state[2] = n_emit
    return done


if njit is not None:
    run_range = njit(cache=True, nogil=True)(_range)
else:                                    # pragma: no cover - numba is a dependency
    run_range = None

__all__ = ["run_range", "EPS", "LINE", "ROW", "THICK", "PEAK", "SIG", "FAT", "MAT", "CRAD", "COVER", "GLASS",
           "LEAVES", "HATCH"]
