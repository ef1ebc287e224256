"""Geometry of the line table's rows: the enumeration of distinct lines, their real layered
cross-sections (every film, adhesive and cover its own band) and their closed forms.

Used by :mod:`strainline.optimizer.search.linetable`; the layered bands feed the field solves, the
series-composite Dk the closed forms.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from strainline.optimizer.search.space import Space

#: Line kinds that sit on an outer copper layer under the cover.
OUTER_KINDS = ("microstrip", "coupled-microstrip", "coplanar")
STRIP_KINDS = ("stripline", "coupled-stripline")


def _gap_bands(space: Space, film: np.ndarray, adh: np.ndarray, place: np.ndarray):
    """A gap's bands top to bottom ``[adhesive above, film, adhesive below]``: (t, Dk, Df) (n, 3)."""
    a = space.arr
    tf, mf = a["film_t"][film], a["film_m"][film]
    ta, ma = a["adh_t"][adh], a["adh_m"][adh]
    ma_s = np.where(ma >= 0, ma, 0)
    has = ma >= 0
    t = np.stack([np.where(has & (place >= 1), ta, 0.0), tf, np.where(has & (place != 1), ta, 0.0)], axis=1)
    er = np.stack([a["mat_dk"][ma_s], a["mat_dk"][mf], a["mat_dk"][ma_s]], axis=1)
    df = np.stack([a["mat_df"][ma_s], a["mat_df"][mf], a["mat_df"][ma_s]], axis=1)
    return t, er, df


def _cover_bands(space: Space, cover: np.ndarray):
    """A cover's bands from the copper outwards ``[adhesive, film]``: (t, Dk, Df) (n, 2)."""
    a = space.arr
    tf, ta = a["cover_tf"][cover], a["cover_ta"][cover]
    mf = np.where(a["cover_mf"][cover] >= 0, a["cover_mf"][cover], 0)
    ma = np.where(a["cover_ma"][cover] >= 0, a["cover_ma"][cover], 0)
    t = np.stack([ta, tf], axis=1)
    er = np.stack([a["mat_dk"][ma], a["mat_dk"][mf]], axis=1)
    df = np.stack([a["mat_df"][ma], a["mat_df"][mf]], axis=1)
    return t, er, df


@dataclass
class ClosedForm:
    """The closed forms of a table's rows (composite Dk), evaluated at any widths (picklable)."""

    kind: str
    geom: Any                  # LineGeometry of every row (width ignored)
    df: np.ndarray
    top_df: np.ndarray
    rq: np.ndarray
    sigma: np.ndarray
    freq_hz: float

    def z(self, rows: np.ndarray, width_m: np.ndarray) -> dict[str, np.ndarray]:
        """``{"z": ...}``: only the target impedance (the lean path of the width solves)."""
        from strainline.models.lines import target_impedance

        return {"z": np.asarray(target_impedance(self.kind, self.geom.take(rows).with_(width_m=width_m)), float)}

    def __call__(self, rows: np.ndarray, width_m: np.ndarray) -> dict[str, Any]:
        """``z`` (target impedance), ``eps``, ``tan`` (loss tangent implied by the closed-form
        dielectric loss), ``res`` (LineResult), ``loss`` (LineLoss) of rows at widths."""
        from strainline.models.lines import evaluate_line
        from strainline.models.loss import line_loss

        strip = self.kind in STRIP_KINDS
        g = self.geom.take(rows).with_(width_m=width_m)
        res = evaluate_line(self.kind, g)
        ls = line_loss(self.kind, g, res, self.freq_hz, self.df[rows], self.rq[rows], self.sigma[rows],
                       df_top=self.top_df[rows] if strip else None, df_cover=self.top_df[rows])
        lam0 = 299792458.0 / self.freq_hz
        eps = np.asarray(res.eps_eff, float)
        tan = np.asarray(ls.dielectric_db_per_m, float) / 8.685889638065035 * lam0 / (np.pi * np.sqrt(eps))
        return {"z": np.asarray(res.target_ohm, float), "eps": eps, "tan": tan, "res": res, "loss": ls}


def _first_band(t: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Value of the first non-empty band of each row (the one next to the trace); nan if none."""
    pos = t > 0
    idx = np.argmax(pos, axis=1)
    return np.where(pos.any(1), v[np.arange(t.shape[0]), idx], np.nan)


def table_rows(space: Space) -> int:
    """The table's row count from the option counts alone (nothing allocated; checked before building);
    with several lines, the rows of every line's table."""
    if getattr(space, "multi", False):
        from strainline.optimizer.search.linelayers import line_view
        return sum(table_rows(line_view(space, k)) for k in range(len(space.study.lines)))
    return _enumerate(space, space.study.line.type, count_only=True)[2]


def _enumerate(space: Space, kind: str, count_only: bool = False) -> tuple[dict, dict, int, dict, np.ndarray]:
    """Table dimensions per signal copper, offsets, row count, digit columns per row, place LUT."""
    study = space.study
    N = space.n_cu
    n_film, n_adh, n_cov = len(space.film_opts), len(space.adh_opts), len(space.cover_opts)
    place_opts = tuple(space.place_opts)
    n_place = len(place_opts)
    lut = np.zeros(3, np.int64)
    for i, p in enumerate(place_opts):
        lut[p] = i
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
            d += [("film", g, n_film), ("adh", g, n_adh), ("place", g, n_place)]
        if kind in OUTER_KINDS:
            d.append(("cover", 0 if s == 0 else 1, n_cov))
        d.append(("gap", 0, len(space.gap_opts)))
        dims[s] = d
        offset[s] = total
        total += math.prod(x[2] for x in d)
    if count_only:
        return dims, offset, total, {}, lut
    popts = np.asarray(place_opts, np.int64)
    cols: dict[str, list] = {k: [] for k in ("s", "cu", "fb", "ab", "pb", "fa", "aa", "pa", "cover", "gap",
                                             "hb", "ha")}
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
        cols["fb"].append(dig.get(("film", below), z))
        cols["ab"].append(dig.get(("adh", below), z))
        cols["pb"].append(popts[dig.get(("place", below), z)])
        mirrored = mirror_middle and s == (N - 1) // 2 and s > 0 and ("film", above) not in dig
        src = below if mirrored else above
        cols["fa"].append(dig.get(("film", src), z))
        cols["aa"].append(dig.get(("adh", src), z))
        p_src = popts[dig.get(("place", src), z)]
        # a mirrored gap has its adhesive on the mirrored side (space.py: 1 - p unless both)
        cols["pa"].append(np.where(p_src == 2, 2, 1 - p_src) if mirrored else p_src)
        cols["cover"].append(dig.get(("cover", 0), dig.get(("cover", 1), z)))
        cols["gap"].append(dig[("gap", 0)])
        cols["hb"].append(np.full(size, ("film", below) in dig))
        cols["ha"].append(np.full(size, ("film", above) in dig or mirrored))
    return dims, offset, total, {k: np.concatenate(v) for k, v in cols.items()}, lut


def _bands(space: Space, kind: str, c: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """The real layered cross-section of every row: bands below (plane up to the trace), above
    (trace up: the cover, or the gap up to the second plane) and the fill beside the trace.

    Fill: an outer line is embedded in the layer of its cover next to the copper (air when bare);
    an inner line in the adjacent adhesive above, else the one below, else air (the rule the
    mechanics uses for the copper layer's fill, :mod:`.mechanics`).
    """
    gb_t, gb_e, gb_d = _gap_bands(space, c["fb"], c["ab"], c["pb"])   # gap below the trace, top->bottom
    ga_t, ga_e, ga_d = _gap_bands(space, c["fa"], c["aa"], c["pa"])   # gap above the trace, top->bottom
    use_above = ~c["hb"] & c["ha"]            # an outer line on the bottom copper: its plane is above
    ua = use_above[:, None]
    below_t = np.where(ua, ga_t, gb_t[:, ::-1])
    below_e = np.where(ua, ga_e, gb_e[:, ::-1])
    below_d = np.where(ua, ga_d, gb_d[:, ::-1])
    if kind in STRIP_KINDS:
        above_t, above_e, above_d = ga_t[:, ::-1], ga_e[:, ::-1], ga_d[:, ::-1]
        adh_up = ga_t[:, 2] > 0                # adhesive of the gap above, next to the trace
        adh_dn = gb_t[:, 0] > 0                # adhesive of the gap below, next to the trace
        fill_e = np.where(adh_up, ga_e[:, 2], np.where(adh_dn, gb_e[:, 0], 1.0))   # else air
        fill_d = np.where(adh_up, ga_d[:, 2], np.where(adh_dn, gb_d[:, 0], 0.0))
    else:
        above_t, above_e, above_d = _cover_bands(space, c["cover"])
        fe, fd = _first_band(above_t, above_e), _first_band(above_t, above_d)
        fill_e = np.where(np.isfinite(fe), fe, 1.0)
        fill_d = np.where(np.isfinite(fd), fd, 0.0)
    return {"below_t": below_t, "below_dk": below_e, "below_df": below_d, "above_t": above_t,
            "above_dk": above_e, "above_df": above_d, "fill_dk": fill_e, "fill_df": fill_d}
