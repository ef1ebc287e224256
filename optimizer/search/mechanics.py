"""Layer arrays of a batch of candidates: the full decode and the fast mechanical decode.

:func:`decode` builds every (n, L) field of a batch column by column from the material records
(the reference); :func:`mechanics` builds only what the bend model needs (thickness, effective
modulus, leaf ids) from per-option column blocks (:func:`blocks`) and must equal it (a test checks).

Fill rule (follows lamination; README.md, bend mechanics): a patterned copper layer is filled by
what flows into its gaps during lamination -- the adjacent bond or coverlay adhesive, or a
photoimageable cover (the nearest non-empty layer above first, then below); a film, a core or an
air gap does not flow, so with no flowing neighbour the fill is air (modulus 0). A side that holds
a cover (an outer copper, or a leaf face bordering air in an unbonded region) decides alone: the
copper is filled by its cover's flowing layer, else air, because the adhesive on its core side was
cured before the copper was etched. The copper layer
then takes the Voigt modulus ``f E_Cu + (1 - f) E_fill`` (R. M. Jones, *Mechanics of Composite
Materials*, iso-strain bound).
"""
from __future__ import annotations

from typing import Any

import numpy as np

from strainline.optimizer.search.leaves import leaf_state
from strainline.optimizer.search.columns import Decoded, cover_cols


def _plan(sp: Any, s: dict[str, np.ndarray]):
    """Thickness and material code of every column (n, L), the air mask, and the leaf state."""
    a = sp.arr
    n = s["signal"].shape[0]
    N, L = sp.n_cu, sp.n_layers
    t = np.zeros((n, L))
    mat = np.full((n, L), -3, np.int64)   # -3 = empty position
    for (cf, ca), c in (((0, 1), s["cover_top"]), ((L - 1, L - 2), s["cover_bot"])):
        t[:, cf], mat[:, cf] = a["cover_tf"][c], a["cover_mf"][c]
        t[:, ca], mat[:, ca] = a["cover_ta"][c], a["cover_ma"][c]
    for i in range(N):
        t[:, sp.cu_col(i)] = a["cu_t"][s["cu"][:, i]]
        mat[:, sp.cu_col(i)] = -1
    boundary, film_up, ok = leaf_state(sp, s)
    is_air = np.zeros((n, L), bool)
    for g in range(N - 1):
        ca, cf, cb = sp.gap_cols(g)
        ta = a["adh_t"][s["adh"][:, g]]
        ma = a["adh_m"][s["adh"][:, g]]
        p = s["place"][:, g]
        t[:, cf] = a["film_t"][s["film"][:, g]]
        mat[:, cf] = a["film_m"][s["film"][:, g]]
        t[:, ca] = np.where(p >= 1, ta, 0.0)
        t[:, cb] = np.where(p != 1, ta, 0.0)
        mat[:, ca] = ma
        mat[:, cb] = ma
        if sp.unbonded:
            b, up = boundary[:, g], film_up[:, g]
            is_air[:, cb] = b & up              # film stays above: the lower adhesive is left out
            is_air[:, ca] = b & ~up             # film stays below: the upper adhesive is left out
            a_ad, a_f, b_f, b_ad = cover_cols(g)
            under = b & ~up                     # the upper leaf's bottom face borders air
            over = b & up                       # the lower leaf's top face borders air
            cb_, ct_ = s["cover_bot"], s["cover_top"]
            t[:, a_ad] = np.where(under, a["cover_ta"][cb_], 0.0)
            t[:, a_f] = np.where(under, a["cover_tf"][cb_], 0.0)
            t[:, b_f] = np.where(over, a["cover_tf"][ct_], 0.0)
            t[:, b_ad] = np.where(over, a["cover_ta"][ct_], 0.0)
            mat[:, a_ad], mat[:, a_f] = a["cover_ma"][cb_], a["cover_mf"][cb_]
            mat[:, b_f], mat[:, b_ad] = a["cover_mf"][ct_], a["cover_ma"][ct_]
    mat = np.where((t > 0) | (mat == -1), mat, -3)
    mat = np.where(is_air & (t > 0), -2, mat)
    return t, mat, is_air, ok


def _leaf_ids(is_air: np.ndarray) -> np.ndarray:
    """Leaf id of every column: a run of air columns gets its own id between two leaves."""
    n, L = is_air.shape
    leaf = np.zeros((n, L), np.int64)
    k = np.zeros(n, np.int64)
    prev = np.zeros(n, bool)
    for c in range(L):
        air = is_air[:, c]
        k = k + (air & ~prev) + (~air & prev)
        leaf[:, c] = k
        prev = air
    return leaf


def decode(sp: Any, x: np.ndarray) -> Decoded:
    """Decode variable vectors (n, n_var) into (n, L) layer arrays, column by column."""
    s = sp.slots(x)
    n = s["signal"].shape[0]
    N, L = sp.n_cu, sp.n_layers
    a = sp.arr
    t, mat, is_air, ok = _plan(sp, s)
    if sp.unbonded:
        boundary, film_up, _ = leaf_state(sp, s)
    m_safe = np.where(mat >= 0, mat, 0)
    E = np.where(mat >= 0, a["mat_E"][m_safe], 0.0)
    nu = np.where(mat >= 0, a["mat_nu"][m_safe], 0.0)
    dk = np.where(mat >= 0, a["mat_dk"][m_safe], np.nan)
    df = np.where(mat >= 0, a["mat_df"][m_safe], np.nan)
    flows = a["mat_flows"][m_safe] & (mat >= 0)
    coverage = np.ones((n, L))
    fill = np.full((n, L), np.nan)
    fill_nu = np.zeros((n, L))
    fill_mat = np.full((n, L), -3, np.int64)
    rows = np.arange(n)
    cu_cols = [sp.cu_col(i) for i in range(N)]
    for i, c in enumerate(cu_cols):
        E[:, c] = a["cu_E"][s["cu"][:, i]]
        nu[:, c] = a["cu_nu"][s["cu"][:, i]]
        coverage[:, c] = s["cov_val"][:, i]
        # nearest non-empty column above and below within the neighbouring cover or gap
        lo = cu_cols[i - 1] + 1 if i > 0 else 0
        hi = cu_cols[i + 1] if i < N - 1 else L
        near = []
        for cols in (range(c - 1, lo - 1, -1), range(c + 1, hi)):
            first = np.full(n, -1, np.int64)
            for k in cols:
                first = np.where((first < 0) & (t[:, k] > 0), k, first)
            near.append(first)
        (up, dn) = near
        u_fl = (up >= 0) & flows[rows, np.maximum(up, 0)]
        d_fl = (dn >= 0) & flows[rows, np.maximum(dn, 0)]
        # a side that holds a cover (outer copper, or a leaf face bordering air) decides alone
        above_cov = np.full(n, i == 0)
        below_cov = np.full(n, i == N - 1)
        if sp.unbonded:
            if i > 0:
                above_cov = above_cov | (boundary[:, i - 1] & film_up[:, i - 1])
            if i < N - 1:
                below_cov = below_cov | (boundary[:, i] & ~film_up[:, i])
        pick = np.where(above_cov, up, np.where(below_cov, dn, np.where(u_fl, up, dn)))
        has = np.where(above_cov, u_fl, np.where(below_cov, d_fl, u_fl | d_fl))
        fill[:, c] = np.where(has, E[rows, pick], 0.0)
        fill_nu[:, c] = np.where(has, nu[rows, pick], 0.0)
        fill_mat[:, c] = np.where(has, mat[rows, pick], -2)
    raw_E = E.copy()
    if sp.study.bend.plane_strain:
        E = E / (1.0 - nu**2)
        fill_eff = fill / (1.0 - fill_nu**2)
    else:
        fill_eff = fill
    cu_mask = sp.is_copper_col
    E_eff = np.where(cu_mask, coverage * E + (1.0 - coverage) * np.nan_to_num(fill_eff), E)
    E_eff = np.where(is_air, 0.0, E_eff)
    leaf = _leaf_ids(is_air)
    return Decoded(
        thickness_m=t, modulus_pa=E_eff, raw_modulus_pa=raw_E, poisson=nu, dk=dk, df=df,
        material=mat, coverage=coverage, fill_modulus_pa=np.where(cu_mask, fill, np.nan),
        leaf=leaf, is_air=is_air, fill_material=fill_mat, buildable=ok, signal=s["signal"], cu_opt=s["cu"],
        film_opt=s["film"], adh_opt=s["adh"], place=s["place"], cover_top=s["cover_top"],
        cover_bot=s["cover_bot"], gap_opt=s["gap_opt"], cov_val=s["cov_val"],
    )


def mechanics(sp: Any, x: np.ndarray, slots: dict[str, np.ndarray] | None = None):
    """Fast decode of what the bend model needs: thickness (n, L), effective modulus (n, L), leaf.

    Equal to ``decode(x).thickness_m``, ``.modulus_pa`` and ``.leaf`` (a test checks), built from
    per-option column blocks gathered once per slot instead of per material field.

    Returns
    -------
    thickness_m, modulus_pa : ndarray, (n, L)
    leaf : ndarray of int (n, L), or None for a bonded bend region
    slots : dict
        The per-slot option indices (:meth:`Space.slots`).
    """
    s = sp.slots(x) if slots is None else slots
    b = sp.blocks
    N, L = sp.n_cu, sp.n_layers
    n = s["signal"].shape[0]
    tT = np.empty((L, n))
    eT = np.empty((L, n))
    ct, cb = s["cover_top"], s["cover_bot"]
    take = np.take
    tT[0:2] = take(b["cov_tT"], ct, axis=1)
    eT[0:2] = take(b["cov_ET"], ct, axis=1)
    tT[L - 2:] = take(b["cov_tT_rev"], cb, axis=1)
    eT[L - 2:] = take(b["cov_ET_rev"], cb, axis=1)
    n_adh = len(sp.adh_opts)
    gcode = [(s["film"][:, g] * n_adh + s["adh"][:, g]) * 3 + s["place"][:, g] for g in range(N - 1)]
    if sp.unbonded:
        boundary, film_up, _ = leaf_state(sp, s)
    for g in range(N - 1):
        c = sp.gap_cols(g)[0]
        tT[c:c + 3] = take(b["gap_tT"], gcode[g], axis=1)
        eT[c:c + 3] = take(b["gap_ET"], gcode[g], axis=1)
        if sp.unbonded:
            bd, up = boundary[:, g], film_up[:, g]
            a_ad, a_f, b_f, b_ad = cover_cols(g)
            under, over = bd & ~up, bd & up
            tT[a_ad:a_f + 1] = np.where(under, take(b["cov_tT_rev"], cb, axis=1), 0.0)
            eT[a_ad:a_f + 1] = np.where(under, take(b["cov_ET_rev"], cb, axis=1), 0.0)
            tT[b_f:b_ad + 1] = np.where(over, take(b["cov_tT"], ct, axis=1), 0.0)
            eT[b_f:b_ad + 1] = np.where(over, take(b["cov_ET"], ct, axis=1), 0.0)
            eT[c] = np.where(under, 0.0, eT[c])          # the left-out bond adhesive is air
            eT[c + 2] = np.where(over, 0.0, eT[c + 2])
    # copper: Voigt mix with the fill picked by the neighbours (one table gather per layer)
    n_cov = len(sp.cover_opts)
    fill_flat = b["fill"].ravel()
    n_col = b["fill"].shape[1]
    for i in range(N):
        c = sp.cu_col(i)
        up = ct if i == 0 else n_cov + gcode[i - 1]
        dn = cb if i == N - 1 else n_cov + gcode[i]
        if sp.unbonded:
            if i > 0:       # the copper under a boundary whose film went up faces the top cover build
                up = np.where(boundary[:, i - 1] & film_up[:, i - 1], ct, up)
            if i < N - 1:   # the copper over a boundary whose film went down faces the bottom cover build
                dn = np.where(boundary[:, i] & ~film_up[:, i], cb, dn)
        fill = take(fill_flat, up * n_col + dn)
        cov = s["cov_val"][:, i]
        k = s["cu"][:, i]
        tT[c] = take(b["cu_t"], k)
        eT[c] = cov * (take(b["cu_E"], k) - fill) + fill
    t, e = tT.T, eT.T
    leaf = None
    if sp.unbonded:
        is_air = np.zeros((n, L), bool)
        for g in range(N - 1):
            ca, _, cb_ = sp.gap_cols(g)
            is_air[:, cb_] = boundary[:, g] & film_up[:, g]
            is_air[:, ca] = boundary[:, g] & ~film_up[:, g]
        leaf = _leaf_ids(is_air)
    return t, e, leaf, s


def blocks(sp: Any) -> dict[str, np.ndarray]:
    """Per-option column blocks for :func:`mechanics` (plane-strain moduli if asked)."""
    a = sp.arr
    ps = sp.study.bend.plane_strain

    def E_of(m: np.ndarray) -> np.ndarray:
        ms = np.where(m >= 0, m, 0)
        e = a["mat_E"][ms] / ((1.0 - a["mat_nu"][ms] ** 2) if ps else 1.0)
        return np.where(m >= 0, e, 0.0)

    def flows(m: np.ndarray) -> np.ndarray:
        return (m >= 0) & a["mat_flows"][np.where(m >= 0, m, 0)]

    # covers: columns (film, adhesive) as seen from the top; the copper side is the adhesive
    tf, ta, mf, ma = a["cover_tf"], a["cover_ta"], a["cover_mf"], a["cover_ma"]
    cov_t = np.stack([tf, ta], axis=1)
    cov_E = np.stack([E_of(mf), E_of(ma)], axis=1)
    near_adh = ta > 0
    cov_fE = np.where(near_adh, E_of(ma), np.where(tf > 0, E_of(mf), 0.0))
    cov_fl = np.where(near_adh, flows(ma), flows(mf) & (tf > 0))
    # gaps: combined code (film * n_adh + adh) * 3 + placement -> columns (adh above, film, adh below)
    nf, na = len(sp.film_opts), len(sp.adh_opts)
    f_i, a_i, p_i = np.meshgrid(np.arange(nf), np.arange(na), np.arange(3), indexing="ij")
    f_i, a_i, p_i = f_i.ravel(), a_i.ravel(), p_i.ravel()
    gtf, gmf = a["film_t"][f_i], a["film_m"][f_i]
    gta, gma = a["adh_t"][a_i], a["adh_m"][a_i]
    gta = np.where(gma >= 0, gta, 0.0)
    t_up = np.where(p_i >= 1, gta, 0.0)
    t_dn = np.where(p_i != 1, gta, 0.0)
    gap_t = np.stack([t_up, gtf, t_dn], axis=1)
    Ea, Ef = E_of(gma), E_of(gmf)
    gap_E = np.stack([np.where(t_up > 0, Ea, 0.0), Ef, np.where(t_dn > 0, Ea, 0.0)], axis=1)
    # fill of a copper layer from its two neighbours: rows = neighbour above (cover options, then gap
    # codes seen from below), columns = neighbour below (cover options, then gap codes seen from
    # above). The rule of the module docstring: a flowing neighbour above, else below, else air (0).
    ue = np.concatenate([cov_fE, np.where(t_dn > 0, Ea, Ef)])
    ua = np.concatenate([cov_fl, np.where(t_dn > 0, flows(gma), flows(gmf))])
    de = np.concatenate([cov_fE, np.where(t_up > 0, Ea, Ef)])
    da = np.concatenate([cov_fl, np.where(t_up > 0, flows(gma), flows(gmf))])
    fill = np.where(ua[:, None], ue[:, None], np.where(da[None, :], de[None, :], 0.0))
    # a cover side decides alone: an outer (or leaf-face) copper is filled by its cover's flowing
    # layer, else air -- the adhesive on its core side was cured before the copper was etched
    n_c = len(cov_fE)
    row_cov = np.arange(len(ue)) < n_c
    col_cov = np.arange(len(de)) < n_c
    fill = np.where(row_cov[:, None], np.where(ua, ue, 0.0)[:, None],
                    np.where(col_cov[None, :], np.where(da, de, 0.0)[None, :], fill))

    def inv_elong(m: np.ndarray, t: np.ndarray) -> np.ndarray:
        ms = np.where(m >= 0, m, 0)
        return np.where((m >= 0) & (t > 0), 1.0 / a["mat_elong"][ms], 0.0)

    def glass(m: np.ndarray, t: np.ndarray) -> np.ndarray:
        return (m >= 0) & (t > 0) & a["mat_glass"][np.where(m >= 0, m, 0)]

    return {
        "cov_inv": np.stack([inv_elong(mf, tf), inv_elong(ma, ta)], axis=1),
        "gap_inv": np.stack([inv_elong(gma, t_up), inv_elong(gmf, gtf), inv_elong(gma, t_dn)], axis=1),
        "cov_glass": glass(mf, tf) | glass(ma, ta),
        "gap_glass": glass(gmf, gtf) | glass(gma, gta),
        "cov_bare": (tf <= 0) & (ta <= 0),
        "fill": np.ascontiguousarray(np.broadcast_to(fill, (len(ue), len(de)))),
        "cov_t_rev": cov_t[:, ::-1].copy(), "cov_E_rev": cov_E[:, ::-1].copy(),
        "cov_tT": np.ascontiguousarray(cov_t.T), "cov_ET": np.ascontiguousarray(cov_E.T),
        "cov_tT_rev": np.ascontiguousarray(cov_t[:, ::-1].T), "cov_ET_rev": np.ascontiguousarray(cov_E[:, ::-1].T),
        "gap_tT": np.ascontiguousarray(gap_t.T), "gap_ET": np.ascontiguousarray(gap_E.T),
        "cov_t": cov_t, "cov_E": cov_E,
        "cu_t": a["cu_t"], "cu_E": a["cu_E"] / ((1.0 - a["cu_nu"] ** 2) if ps else 1.0),
        "gap_t": gap_t, "gap_E": gap_E,
    }
