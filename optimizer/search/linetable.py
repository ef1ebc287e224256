"""The line table: every distinct line geometry of a study solved once.

Width and loss depend on only a few of a candidate's choices (signal position, signal copper, the
dielectric builds next to the trace, the cover, the pair gap), so each distinct line geometry is
solved **once** (:class:`LineTable`, one :func:`solve_width` batch) and a candidate gathers its row
by index (:meth:`LineTable.index`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from strainline.models.units import GHZ, UM
from strainline.optimizer.search.space import Space

#: Line kinds that sit on an outer copper layer under the cover.
OUTER_KINDS = ("microstrip", "coupled-microstrip", "coplanar")


def composite_df(thickness_m: np.ndarray, er: np.ndarray, df: np.ndarray) -> np.ndarray:
    """Composite loss tangent of dielectrics stacked in series between a trace and its plane.

    The same series-capacitance rule as :func:`strainline.models.lines.composite_er`, applied to the
    complex permittivity :math:`\\varepsilon_i (1 - j \\tan\\delta_i)`:

    .. math:: \\frac{T}{\\varepsilon_c^*} = \\sum_i \\frac{t_i}{\\varepsilon_i^*},\\qquad
              \\tan\\delta_c = -\\operatorname{Im}\\varepsilon_c^* / \\operatorname{Re}\\varepsilon_c^*

    Exact for a parallel-plate field (wide-strip limit).

    Parameters
    ----------
    thickness_m : ndarray, (n, k)
        Layer thicknesses, m (zero-thickness padding allowed).
    er, df : ndarray, (n, k)
        Relative permittivity and loss tangent of each layer.

    Returns
    -------
    ndarray, (n,)
        Composite loss tangent (0 for a row with no thickness).
    """
    t = np.asarray(thickness_m, float)
    eps = np.asarray(er, float) * (1.0 - 1j * np.asarray(df, float))
    el = np.where(t > 0, t / np.where(t > 0, eps, 1.0), 0.0).sum(axis=-1)
    tot = t.sum(axis=-1)
    ec = np.where(tot > 0, tot / np.where(el != 0, el, 1.0), 1.0)
    return np.where(tot > 0, -ec.imag / ec.real, 0.0)


@dataclass
class LineTable:
    """Every distinct line geometry of a study, solved once.

    Row ``offset[s] + sum(digit_k * stride_k)`` holds the line of a candidate whose signal sits on
    copper ``s``; the digits are the option indices listed in ``dims[s]``.
    """

    kind: str
    dims: dict[int, list[tuple[str, int, int]]]     # s -> [(slot, column, size)]
    offset: dict[int, int]
    width_m: np.ndarray
    gap_m: np.ndarray
    z_ohm: np.ndarray            # the impedance the target refers to (z0, or z_diff for pairs)
    z0_ohm: np.ndarray
    z_diff_ohm: np.ndarray
    eps_eff: np.ndarray
    in_range: np.ndarray
    solved: np.ndarray           # the root solve succeeded inside the range
    rel_err: np.ndarray          # |z / target - 1|
    width_lo_m: np.ndarray
    width_hi_m: np.ndarray
    min_space_m: np.ndarray
    loss_db_per_m: np.ndarray
    conductor_db_per_m: np.ndarray
    dielectric_db_per_m: np.ndarray
    height_m: np.ndarray
    height_top_m: np.ndarray
    thickness_m: np.ndarray
    er: np.ndarray
    er_top: np.ndarray
    cover_m: np.ndarray
    cover_er: np.ndarray
    bottom_ground: np.ndarray
    n_rows: int = 0

    def index(self, slots: dict[str, np.ndarray]) -> np.ndarray:
        """Table row of every candidate, from the per-slot option indices (:meth:`Space.slots`)."""
        sig = slots["signal"]
        out = None
        for s, dims in self.dims.items():
            idx = np.full(sig.shape[0], self.offset[s], np.int64)
            stride = 1
            for slot, colno, size in dims:
                d = _digit(slots, slot, colno)
                idx += d * stride if stride != 1 else d
                stride *= size
            out = idx if out is None else np.where(sig == s, idx, out)
        return out if out is not None else np.zeros(sig.shape[0], np.int64)


def _digit(s: dict[str, np.ndarray], slot: str, colno: int) -> np.ndarray:
    """Option index of one table dimension (``slot``, ``colno``) per candidate: copper, film and
    adhesive options by position, ``dbl`` (adhesive on both sides of the gap's film), the cover
    of the line's side, the pair gap."""
    if slot in ("cu", "film", "adh"):
        return s[slot][:, colno]
    if slot == "dbl":
        return (s["place"][:, colno] == 2).astype(np.int64)
    if slot == "cover":
        return s["cover_top"] if colno == 0 else s["cover_bot"]
    return s["gap_opt"]


def _gap_geom(space: Space, film: np.ndarray, adh: np.ndarray, dbl: np.ndarray):
    a = space.arr
    tf, mf = a["film_t"][film], a["film_m"][film]
    ta, ma = a["adh_t"][adh], a["adh_m"][adh]
    ma_s = np.where(ma >= 0, ma, 0)
    t = np.stack([tf, ta, ta * dbl], axis=1)
    er = np.stack([a["mat_dk"][mf], a["mat_dk"][ma_s], a["mat_dk"][ma_s]], axis=1)
    df = np.stack([a["mat_df"][mf], a["mat_df"][ma_s], a["mat_df"][ma_s]], axis=1)
    t = np.where(np.stack([np.ones_like(ma), ma, ma], axis=1) >= 0, t, 0.0)
    return t, er, df


def _cover_geom(space: Space, cover: np.ndarray):
    a = space.arr
    tf, ta = a["cover_tf"][cover], a["cover_ta"][cover]
    mf = np.where(a["cover_mf"][cover] >= 0, a["cover_mf"][cover], 0)
    ma = np.where(a["cover_ma"][cover] >= 0, a["cover_ma"][cover], 0)
    t = np.stack([tf, ta], axis=1)
    er = np.stack([a["mat_dk"][mf], a["mat_dk"][ma]], axis=1)
    df = np.stack([a["mat_df"][mf], a["mat_df"][ma]], axis=1)
    return t, er, df


def build_line_table(space: Space, catalog) -> LineTable:
    """Enumerate and solve every distinct line geometry of the study (one batch per call).

    Parameters
    ----------
    space : Space
    catalog : Catalog
        For the fabricator's minimum trace and space per copper weight.
    """
    from strainline.models.lines import LineGeometry, composite_er, evaluate_line, solve_width
    from strainline.models.loss import line_loss

    study = space.study
    kind = study.line.type
    N = space.n_cu
    n_film, n_adh, n_cov = len(space.film_opts), len(space.adh_opts), len(space.cover_opts)
    dims: dict[int, list[tuple[str, int, int]]] = {}
    offset: dict[int, int] = {}
    total = 0
    mirror_middle = study.stack.symmetric and N % 2 == 1
    for s in space.sig_opts:
        d = [("cu", s, len(space.cu_opts))]
        gaps = ([s - 1] if s > 0 else []) + ([s] if s < N - 1 else [])
        if mirror_middle and s == (N - 1) // 2 and len(gaps) == 2:
            gaps = [s]          # symmetric stack: the gap above the middle copper mirrors the one below
        for g in gaps:
            d += [("film", g, n_film), ("adh", g, n_adh), ("dbl", g, 2)]
        if kind in OUTER_KINDS:
            d.append(("cover", 0 if s == 0 else 1, n_cov))
        d.append(("gap", 0, len(space.gap_opts)))
        dims[s] = d
        offset[s] = total
        total += int(np.prod([x[2] for x in d]))

    # enumerate every row: digits per (s, dims)
    cols = {k: [] for k in ("s", "cu", "fb", "ab", "db", "fa", "aa", "da", "cover", "gap")}
    for s, d in dims.items():
        size = int(np.prod([x[2] for x in d]))
        idx = np.arange(size, dtype=np.int64)
        dig = {}
        for slot, colno, sz in d:
            idx, r = np.divmod(idx, sz)
            dig[(slot, colno)] = r
        z = np.zeros(size, np.int64)
        below, above = s, s - 1   # gap indices
        cols["s"].append(np.full(size, s))
        cols["cu"].append(dig[("cu", s)])
        cols["fb"].append(dig.get(("film", below), z)); cols["ab"].append(dig.get(("adh", below), z))
        cols["db"].append(dig.get(("dbl", below), z))
        mirrored = mirror_middle and s == (N - 1) // 2 and s > 0 and ("film", above) not in dig
        src = below if mirrored else above
        cols["fa"].append(dig.get(("film", src), z)); cols["aa"].append(dig.get(("adh", src), z))
        cols["da"].append(dig.get(("dbl", src), z))
        cols["cover"].append(dig.get(("cover", 0), dig.get(("cover", 1), z)))
        cols["gap"].append(dig[("gap", 0)])
        has_below = ("film", below) in dig
        has_above = ("film", above) in dig or mirrored
        cols.setdefault("hb", []).append(np.full(size, has_below))
        cols.setdefault("ha", []).append(np.full(size, has_above))
    c = {k: np.concatenate(v) for k, v in cols.items()}
    a = space.arr
    cu = c["cu"]
    t_cu = a["cu_t"][cu]
    tb, erb, dfb = _gap_geom(space, c["fb"], c["ab"], c["db"])
    ta_, era, dfa = _gap_geom(space, c["fa"], c["aa"], c["da"])
    hb, ha = tb.sum(1), ta_.sum(1)
    er_b, er_a = composite_er(tb, erb), composite_er(ta_, era)
    df_b, df_a = composite_df(tb, erb, dfb), composite_df(ta_, era, dfa)
    # the plane of an outer line: below for the top copper, above for the bottom copper
    use_above = ~c["hb"] & c["ha"]
    height = np.where(use_above, ha, hb)
    er = np.where(use_above, er_a, er_b)
    df = np.where(use_above, df_a, df_b)
    strip = kind in ("stripline", "coupled-stripline")
    height_top = ha if strip else np.full_like(height, np.nan)
    er_top = er_a if strip else np.full_like(height, np.nan)
    if kind in OUTER_KINDS:
        tc, erc, dfc = _cover_geom(space, c["cover"])
        cover_m = tc.sum(1)
        cover_er = np.where(cover_m > 0, composite_er(tc, erc), 1.0)
        df_cover = composite_df(tc, erc, dfc)
    else:
        cover_m = np.zeros_like(height)
        cover_er = np.ones_like(height)
        df_cover = np.zeros_like(height)
    gap = np.asarray(space.gap_opts)[c["gap"]]
    weights = [w for w, _, _ in space.cu_opts]
    fab = catalog.fabrication
    min_trace = np.array([fab.min_trace_m[w] for w in weights])[cu]
    min_space = np.array([fab.min_space_m[w] for w in weights])[cu]
    wlo = np.maximum(study.line.width_min_um * UM, min_trace)
    whi = np.full_like(wlo, study.line.width_max_um * UM)
    whi_s = np.maximum(whi, wlo * (1 + 1e-9))
    geom = LineGeometry(width_m=wlo, height_m=height, thickness_m=t_cu, er=er, gap_m=gap,
                        height_top_m=height_top, er_top=er_top, cover_m=cover_m, cover_er=cover_er,
                        bottom_ground=np.ones_like(height, bool))
    target = study.line.target_ohm
    w, ok = solve_width(kind, target, geom, wlo, whi_s)
    ok = np.asarray(ok, bool) & (whi >= wlo)
    # no root in range: take the better end of the range (the impedance constraint grades it)
    r_lo = evaluate_line(kind, geom.with_(width_m=wlo))
    r_hi = evaluate_line(kind, geom.with_(width_m=whi_s))
    e_lo = np.abs(r_lo.target_ohm / target - 1)
    e_hi = np.abs(r_hi.target_ohm / target - 1)
    w = np.where(ok, w, np.where(e_lo <= e_hi, wlo, whi_s))
    w = np.where(np.isfinite(w), w, wlo)
    geom = geom.with_(width_m=w)
    res = evaluate_line(kind, geom)
    freq = study.line.frequency_ghz * GHZ
    ls = line_loss(kind, geom, res, freq, df, a["cu_rq"][cu], a["cu_sigma"][cu], df_top=df_a if strip else None,
                   df_cover=df_cover)
    z = res.target_ohm
    return LineTable(
        kind=kind, dims=dims, offset=offset, width_m=w, gap_m=gap, z_ohm=z, z0_ohm=res.z0_ohm,
        z_diff_ohm=res.z_diff_ohm, eps_eff=res.eps_eff, in_range=np.asarray(res.in_range, bool),
        solved=ok, rel_err=np.abs(z / target - 1), width_lo_m=wlo, width_hi_m=whi, min_space_m=min_space,
        loss_db_per_m=np.asarray(ls.total_db_per_m, float),
        conductor_db_per_m=np.asarray(ls.conductor_db_per_m, float),
        dielectric_db_per_m=np.asarray(ls.dielectric_db_per_m, float),
        height_m=height, height_top_m=height_top, thickness_m=t_cu, er=er, er_top=er_top, cover_m=cover_m,
        cover_er=cover_er, bottom_ground=np.ones_like(height, bool), n_rows=total,
    )
