"""The block step of the fused range kernel (:mod:`.fused`), compiled (numba): the bend model of a
block of queued candidates with the batch kernels of :mod:`.kernel`, their bend-model constraint
columns, and the decision for each candidate -- hand it to Python or count its violations.

Constraint column kinds (``kind``): ``LINE`` a line-table column kept for a failing line, ``ROW`` a
line-table column dropped for a failing line, ``THICK``, ``PEAK``, ``SIG``, ``FAT`` (the study
limits), ``MAT``, ``CRAD``, ``COVER``, ``GLASS``, ``LEAVES`` (:mod:`.constraints`), ``HATCH``
(:func:`.hatchsearch.hatch_width_constraint`).
"""
from __future__ import annotations

import numpy as np

try:
    from numba import njit
except ImportError:                    # pragma: no cover - numba is a dependency
    njit = None
if njit is not None:
    from strainline.optimizer.search.kernel import _bonded_jit, _groups_jit

LINE, ROW, THICK, PEAK, SIG, FAT, MAT, CRAD, COVER, GLASS, LEAVES, HATCH = range(12)
#: A column within this of 0 is decided in Python (a guard: the kernel's arithmetic is the general
#: path's, so feasibility and the violation counts would agree without it).
EPS = 1e-9


def _decide(nb, g, C, kind, bok, bidx, topk, emit, n_emit, counts):
    """For each of the ``nb`` bent candidates (columns of ``g``): emit it to Python or count its
    violated columns (module docstring); return the new number emitted. ``bok`` says whether its
    line holds (else only its line columns count), ``bidx`` its index."""
    nk = topk.shape[0]
    for j in range(nb):
        ok = bok[j]
        send = False
        mx = -np.inf
        cv = 0.0
        for c in range(C):
            t = g[c, j]
            mx = t if t > mx else mx
            if ok and abs(t) <= EPS:
                send = True
            if t > 0.0:
                cv += t
        if ok and mx <= EPS:
            send = True
        if not send and nk > 0 and cv < topk[nk - 1]:
            # one of the k smallest violations seen (the values are exact; of equal violations the
            # archive keeps the lower index, and every kept one came earlier)
            send = True
            i = nk - 1
            while i > 0 and topk[i - 1] > cv:
                topk[i] = topk[i - 1]
                i -= 1
            topk[i] = cv
        if send:
            emit[n_emit] = bidx[j]
            n_emit += 1
            continue
        for c in range(C):
            if (ok or kind[c] == LINE) and g[c, j] > 0.0:
                counts[c] += 1
    return n_emit


def _block(nb, sl, ct, cb, cov, lv, bsig, brow, K, N, C, kind, HW, hfill, strip, unbonded, tabs,
           n_adh, n_cov, stiff, zrad, zbot, zfac, zallow, zhas, zcover, zdyn, thick_den, peak_lim, sig_lim, ef, rmin,
           cov_bare, cov_glass, gap_glass, glass_ratio, adh_m, adh_t, g, total, peak, ratio, acc):
    """The bend-model columns of the ``nb`` queued candidates (slot codes ``sl``, one column each),
    zone by zone with the batch kernels of :mod:`.kernel`, into ``g`` (C, B), column by column.

    Every column is the general path's arithmetic, operation for operation, so the values are the
    same to the last bit (:func:`_decide` compares total violations exactly). ``zfac`` (Z,) is each
    zone's strain-range factor, ``zallow`` (Z, copper options) the strain range its life limit
    allows."""
    Z = zrad.shape[0]
    G = N - 1
    cu_t, cu_E, fill, gT, gS, gM, gyb, gyt, ginv, gtup, gtdn, leaf_mask, ginvmax = tabs
    zp = acc[0]
    zs = acc[1]
    fat = acc[2]
    mat = acc[3]
    for j in range(nb):
        zp[j] = 0.0
        zs[j] = 0.0
        fat[j] = -np.inf
        mat[j] = -np.inf
    for z in range(Z):
        if unbonded:
            _groups_jit(0, nb, sl[0:N], sl[N:N + G], sl[N + G:N + 2 * G], sl[N + 2 * G:N + 3 * G], ct, cb, cov, lv,
                        cu_t, cu_E, fill, gT, gS, gM, gyb, gyt, ginv, gtup, gtdn, leaf_mask, n_adh, n_cov, zrad[z],
                        zbot[z], total, peak, ratio)
        else:
            _bonded_jit(0, nb, sl[0:N], sl[N:N + G], sl[N + G:N + 2 * G], sl[N + 2 * G:N + 3 * G], ct, cb, cov,
                        cu_t, cu_E, fill, gT, gS, gM, gyb, gyt, ginv, ginvmax, n_adh, n_cov, stiff, zrad[z], zbot[z],
                        ef * (1.0 - 10.0 * EPS), total, peak, ratio)
        for j in range(nb):
            m = zp[j]
            for i in range(N):
                m = peak[i, j] if peak[i, j] > m else m
            zp[j] = m
            m = zs[j]
            for k in range(K):
                t = peak[bsig[k, j], j]
                m = t if t > m else m
            zs[j] = m
            if ratio[j] > mat[j]:
                mat[j] = ratio[j]
        if zhas[z]:
            for j in range(nb):
                m = fat[j]
                for i in range(N):
                    t = zfac[z] * abs(peak[i, j])
                    t /= zallow[z, sl[i, j]]
                    m = t if t > m else m
                fat[j] = m
    for c in range(C):
        kc = kind[c]
        if kc == THICK:
            for j in range(nb):
                g[c, j] = total[j] / thick_den - 1.0
        elif kc == PEAK:
            for j in range(nb):
                g[c, j] = zp[j] * 100.0 / peak_lim - 1.0
        elif kc == SIG:
            for j in range(nb):
                g[c, j] = zs[j] * 100.0 / sig_lim - 1.0
        elif kc == FAT:
            for j in range(nb):
                g[c, j] = fat[j] - 1.0
        elif kc == MAT:
            for j in range(nb):
                g[c, j] = mat[j] / ef - 1.0
        elif kc == CRAD:
            for j in range(nb):
                w = -np.inf
                for z in range(Z):
                    t = max(rmin[ct[j]], rmin[cb[j]]) / zrad[z] - 1.0
                    w = t if t > w else w
                g[c, j] = w
        elif kc == COVER:
            for j in range(nb):
                a = ct[j]
                b = cb[j]
                # a leaf face on air takes its side's cover, so only a missing cover leaves one bare
                bare = cov_bare[a] or cov_bare[b]
                w = -1.0
                for z in range(Z):
                    if zcover[z] and bare:
                        w = 1.0
                g[c, j] = w
        elif kc == GLASS:
            for j in range(nb):
                hasg = cov_glass[ct[j]] or cov_glass[cb[j]]
                for gg in range(G):
                    if gap_glass[(sl[N + gg, j] * n_adh + sl[N + G + gg, j]) * 3 + sl[N + 2 * G + gg, j]]:
                        hasg = True
                w = -np.inf
                for z in range(Z):
                    if zdyn[z]:
                        t = 1.0 if hasg else -1.0
                    else:
                        t = glass_ratio * total[j] / zrad[z] - 1.0 if hasg else -1.0
                    w = t if t > w else w
                g[c, j] = w
        elif kc == LEAVES:
            for j in range(nb):
                g[c, j] = -1.0 if _buildable(sl, j, lv[j], bsig, K, N, leaf_mask, adh_m, adh_t) else 1.0
        elif kc == HATCH:
            for j in range(nb):
                w = -np.inf
                for k in range(K):
                    sg = bsig[k, j]
                    lo = sg - 1 if sg > 0 else 0
                    hi = sg + 1 if sg < N - 1 else N - 1
                    if strip[k]:
                        ref = cov[lo, j] if cov[lo, j] < cov[hi, j] else cov[hi, j]
                    else:
                        ref = cov[hi, j] if sg == 0 else cov[lo, j]
                    t = -1.0
                    for f in range(hfill.shape[0]):
                        if abs(ref - hfill[f]) < 1e-6:
                            t = HW[f, brow[k, j]]
                    w = t if t > w else w
                g[c, j] = w


def _buildable(sl, j, lm, bsig, K, N, leaf_mask, adh_m, adh_t):
    """Whether candidate ``j``'s leaf grouping ``lm`` is buildable (:func:`.leaves.leaf_state`): no
    line's plane leaves its leaf, a bond ply exists where a boundary leaves it out, and every
    single-copper leaf receives a film core from a boundary next to it."""
    G = N - 1
    for gg in range(G):
        if leaf_mask[lm, gg]:
            for k in range(K):
                if bsig[k, j] == gg or bsig[k, j] == gg + 1:
                    return False
            ad = sl[N + G + gg, j]
            if not (adh_m[ad] >= 0 and adh_t[ad] > 0):
                return False
    for i in range(N):
        ab = leaf_mask[lm, i - 1] if i > 0 else True
        be = leaf_mask[lm, i] if i < G else True
        if not (ab and be):
            continue
        core = False
        if i > 0 and leaf_mask[lm, i - 1]:           # the film of the boundary above stays below it
            p = sl[N + 2 * G + i - 1, j]
            al = leaf_mask[lm, i - 2] if i > 1 else True
            if not ((p == 0) or (p == 2 and al)):
                core = True
        if i < G and leaf_mask[lm, i]:               # the film of the boundary below goes up
            p = sl[N + 2 * G + i, j]
            al = leaf_mask[lm, i - 1] if i > 0 else True
            if (p == 0) or (p == 2 and al):
                core = True
        if not core:
            return False
    return True


if njit is not None:
    _buildable = njit(cache=True, nogil=True)(_buildable)
    _decide = njit(cache=True, nogil=True)(_decide)
    _block = njit(cache=True, nogil=True)(_block)

__all__ = ["EPS", "LINE", "ROW", "THICK", "PEAK", "SIG", "FAT", "MAT", "CRAD", "COVER", "GLASS", "LEAVES", "HATCH"]
