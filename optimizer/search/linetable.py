"""The line table: every distinct line geometry of a study solved once.

Width and loss depend on only a few of a candidate's choices (signal position, signal copper, the
dielectric builds next to the trace and their order, the cover, the pair gap), so each distinct line
geometry is solved **once** (:class:`LineTable`) and a candidate gathers its row by index
(:meth:`LineTable.index`).

Two impedance models (study ``search.impedance``, ``strainline solve --impedance``):

* ``"field"`` (default): every row's width, impedance, eps_eff and loss at the accuracy of a 2-D
  field solution of its real layered cross-section (:mod:`strainline.optimizer.search.fieldtable`:
  closed form times a field correction with a held-out error check; parallel, cached);
* ``"closed-form"``: the published equations alone, with the series-composite Dk (fast; for
  comparison).

The closed-form width and impedance are kept beside the field values in both cases
(``width_cf_m``, ``z_cf_ohm``).
"""
from __future__ import annotations

import contextlib
import math
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from strainline.models.units import GHZ, UM
from strainline.optimizer.search.space import Space
from strainline.optimizer.search.tablegeometry import (  # noqa: F401 - table_rows re-exported
    OUTER_KINDS,
    STRIP_KINDS,
    ClosedForm,
    _bands,
    _enumerate,
    table_rows,
)

IMPEDANCE_MODELS = ("field", "closed-form")

#: How tables are built in this process (set by ``strainline solve`` options, see :func:`table_options`).
_OPTIONS: dict[str, Any] = {"impedance": None, "workers": None, "dask_address": None, "cache": True}


@contextlib.contextmanager
def table_options(impedance: str | None = None, workers: int | None = None,
                  dask_address: str | None = None, cache: bool = True) -> Iterator[None]:
    """Within the block, line tables use this impedance model (None: the study's), these local
    workers (None: every core) or this Dask scheduler, and the disk cache (or not)."""
    old = dict(_OPTIONS)
    _OPTIONS.update(impedance=impedance, workers=workers, dask_address=dask_address, cache=cache)
    try:
        yield
    finally:
        _OPTIONS.clear()
        _OPTIONS.update(old)


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

    ``width_m``, ``z_ohm``, ``eps_eff`` and the losses come from the model named by
    ``impedance_model``; ``width_cf_m`` and ``z_cf_ohm`` are the closed forms' own width and their
    impedance at ``width_m`` (equal to the others with ``"closed-form"``). The composite-Dk
    geometry (``height_m`` ... ``cover_er``) is what the closed forms see; the layered bands
    (``bands``) are the real cross-section the field solves see.
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
    impedance_model: str = "closed-form"
    width_cf_m: np.ndarray | None = None      # closed-form width for the target
    z_cf_ohm: np.ndarray | None = None        # closed-form impedance at width_m
    bands: dict[str, np.ndarray] = field(default_factory=dict)
    place_lut: np.ndarray = field(default_factory=lambda: np.array([0, 1, 2], np.int64))
    field_info: Any = None                    # fieldtable.FieldInfo when impedance_model == "field"
    correction: Any = None                    # fieldtable.Correction (reusable, see field_impedance)
    geometry: Any = None                      # composite LineGeometry of every row at width_m
    closed_form: Any = None                   # ClosedForm of the rows
    target_ohm: float = math.nan
    r_field: np.ndarray | None = None         # (n, 3) ln(field / closed form) of Z, eps_eff, tan_eff
    exact: np.ndarray | None = None           # rows field-solved directly at their own width
    version: int = 0                          # bumped by every set_rows (caches of derived figures)

    def set_rows(self, rows: np.ndarray, width_m: np.ndarray, r: np.ndarray, ok: np.ndarray) -> None:
        """Store rows' widths and corrections and recompute their impedance, eps_eff and loss."""
        cf = self.closed_form(rows, width_m)
        res, ls = cf["res"], cf["loss"]
        kz, ke = np.exp(r[:, 0]), np.exp(r[:, 1])
        z = cf["z"] * kz
        pair = self.kind in ("coupled-microstrip", "coupled-stripline")
        cond = np.asarray(ls.conductor_db_per_m, float) * np.sqrt(ke)
        diel = np.asarray(ls.dielectric_db_per_m, float) * np.sqrt(ke) * np.exp(r[:, 2])
        self.width_m[rows] = width_m
        self.r_field[rows] = r
        self.z_cf_ohm[rows] = cf["z"]
        self.z_ohm[rows] = z
        self.z0_ohm[rows] = np.asarray(res.z0_ohm, float) if pair else z
        self.z_diff_ohm[rows] = z if pair else np.asarray(res.z_diff_ohm, float)
        self.eps_eff[rows] = cf["eps"] * ke
        closed = self.impedance_model == "closed-form"
        self.solved[rows] = ok & (self.width_hi_m[rows] >= self.width_lo_m[rows])
        # field model: a row is valid when its cross-section solved and the width for the target lies
        # in the range (what --verify checks); the closed forms keep their stated validity ranges
        self.in_range[rows] = np.asarray(res.in_range, bool) if closed else np.isfinite(z) & self.solved[rows]
        self.rel_err[rows] = np.abs(z / self.target_ohm - 1)
        self.conductor_db_per_m[rows] = cond
        self.dielectric_db_per_m[rows] = diel
        self.loss_db_per_m[rows] = cond + diel
        self.geometry = self.geometry.with_(width_m=self.width_m)
        self.version += 1

    def index(self, slots: dict[str, np.ndarray]) -> np.ndarray:
        """Table row of every candidate, from the per-slot option indices (:meth:`Space.slots`)."""
        sig = slots["signal"]
        out = None
        for s, dims in self.dims.items():
            idx = np.full(sig.shape[0], self.offset[s], np.int64)
            stride = 1
            for slot, colno, size in dims:
                d = _digit(slots, slot, colno, self.place_lut)
                idx += d * stride if stride != 1 else d
                stride *= size
            out = idx if out is None else np.where(sig == s, idx, out)
        return out if out is not None else np.zeros(sig.shape[0], np.int64)

    def section(self, row: int) -> dict[str, Any]:
        """The real layered cross-section of one row (SI): ``below``/``above`` lists of
        (thickness, Dk, Df), ``fill`` (Dk, Df), for reports and independent checks."""
        b = self.bands
        def lay(p: str) -> list[tuple[float, float, float]]:
            return [(float(a), float(e), float(d)) for a, e, d in
                    zip(b[p + "_t"][row], b[p + "_dk"][row], b[p + "_df"][row]) if a > 0]
        return {"below": lay("below"), "above": lay("above"),
                "fill": (float(b["fill_dk"][row]), float(b["fill_df"][row]))}


def line_model_record(tb: LineTable, row: int) -> dict[str, Any]:
    """What decided a front candidate's line, for ``front.json`` (``line.impedance_model``,
    ``line.closed_form`` beside the field values, ``line.cross_section`` the layered bands in um)."""
    def num(x: float) -> float | None:
        return float(x) if x is not None and math.isfinite(float(x)) else None

    z, zc = float(tb.z_ohm[row]), float(tb.z_cf_ohm[row])
    out: dict[str, Any] = {
        "impedance_model": tb.impedance_model,
        "closed_form": {"width_um": num(tb.width_cf_m[row] / UM), "z_ohm_at_width": num(zc),
                        "deviation_pct": num(100.0 * (zc / z - 1.0)) if tb.impedance_model == "field" else None},
    }
    if tb.impedance_model == "field":
        sec = tb.section(row)
        out["field"] = {"direct_solve": bool(tb.exact[row]) if tb.exact is not None else False,
                        "cross_section": {"below_um_dk_df": [[a / UM, e, d] for a, e, d in sec["below"]],
                                          "above_um_dk_df": [[a / UM, e, d] for a, e, d in sec["above"]],
                                          "fill_dk_df": list(sec["fill"])}}
    return out


def closed_form_finding(tb: LineTable, row: int) -> str | None:
    """The closed form's measured deviation for this very cross-section (field model only)."""
    if tb.impedance_model != "field":
        return None
    z, zc = float(tb.z_ohm[row]), float(tb.z_cf_ohm[row])
    if not (math.isfinite(z) and math.isfinite(zc)):
        return None
    how = "a direct" if tb.exact is not None and tb.exact[row] else "the corrected"
    return (f"closed form {zc:.2f} ohm vs {how} 2-D field solution {z:.2f} ohm of this layered cross-section "
            f"at {tb.width_m[row] / UM:.1f} um: {100.0 * (zc / z - 1.0):+.2f} % (the field value decided); the "
            f"closed-form width for the target would be {tb.width_cf_m[row] / UM:.1f} um")


def _digit(s: dict[str, np.ndarray], slot: str, colno: int, place_lut: np.ndarray) -> np.ndarray:
    """Option index of one table dimension (``slot``, ``colno``) per candidate: copper, film and
    adhesive options by position, ``place`` (the gap's adhesive below, above or on both sides of
    its film: the order of the layered bands), the cover of the line's side, the pair gap."""
    if slot in ("cu", "film", "adh"):
        return s[slot][:, colno]
    if slot == "place":
        return place_lut[s["place"][:, colno]]
    if slot == "cover":
        return s["cover_top"] if colno == 0 else s["cover_bot"]
    return s["gap_opt"]





def _impedance_model(study) -> str:
    mode = _OPTIONS.get("impedance") or getattr(study.search, "impedance", "field") or "field"
    if mode not in IMPEDANCE_MODELS:
        from strainline.optimizer.errors import InputError
        raise InputError(f"{mode!r} is not one of {list(IMPEDANCE_MODELS)}", "search.impedance")
    return mode


def build_line_table(space: Space, catalog, impedance: str | None = None) -> LineTable:
    """Enumerate and solve every distinct line geometry of the study.

    Parameters
    ----------
    space : Space
    catalog : Catalog
        For the fabricator's minimum trace and space per copper weight.
    impedance : {"field", "closed-form"}, optional
        Impedance model (default: :func:`table_options`, else the study's ``search.impedance``).
    """
    from strainline.models.lines import (
        LineGeometry,
        composite_er,
        solve_width,
    )

    study = space.study
    kind = study.line.type
    mode = impedance or _impedance_model(study)
    dims, offset, total, c, lut = _enumerate(space, kind)
    a = space.arr
    cu = c["cu"]
    t_cu = a["cu_t"][cu]
    bands = _bands(space, kind, c)
    strip = kind in STRIP_KINDS
    height = bands["below_t"].sum(1)
    er = composite_er(bands["below_t"], bands["below_dk"])
    df = composite_df(bands["below_t"], bands["below_dk"], bands["below_df"])
    top_t = bands["above_t"].sum(1)
    top_er = np.where(top_t > 0, composite_er(bands["above_t"], bands["above_dk"]), 1.0)
    top_df = composite_df(bands["above_t"], bands["above_dk"], bands["above_df"])
    nan = np.full_like(height, np.nan)
    height_top = top_t if strip else nan
    er_top = top_er if strip else nan
    cover_m = np.zeros_like(height) if strip else top_t
    cover_er = np.ones_like(height) if strip else top_er
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
    freq = study.line.frequency_ghz * GHZ
    rq, sigma = a["cu_rq"][cu], a["cu_sigma"][cu]

    closed_form = ClosedForm(kind, geom, df, top_df, rq, sigma, freq)

    w, ok = solve_width(kind, target, geom, wlo, whi_s)
    ok = np.asarray(ok, bool) & (whi >= wlo)
    # no root in range: take the better end of the range (the impedance constraint grades it)
    all_rows = np.arange(total)
    e_lo = np.abs(closed_form.z(all_rows, wlo)["z"] / target - 1)
    e_hi = np.abs(closed_form.z(all_rows, whi_s)["z"] / target - 1)
    w = np.where(ok, w, np.where(e_lo <= e_hi, wlo, whi_s))
    w_cf = np.where(np.isfinite(w), w, wlo)
    info = corr = None
    direct = False
    if mode == "field":
        from strainline.optimizer.search.fieldcache import FieldCache
        from strainline.optimizer.search.fieldtable import (
            DIRECT_MAX,
            FieldInfo,
            distinct_rows,
            field_values,
        )

        n_distinct = int(distinct_rows(kind, geom, bands)[0].size)
        direct = n_distinct <= DIRECT_MAX
        cache = FieldCache(enabled=bool(_OPTIONS.get("cache", True)))
        try:
            if direct:      # few cross-sections: every one field-solved directly (below)
                vals = {"width_m": w_cf, "ok": ok, "r": np.zeros((total, 3))}
                info = FieldInfo(method="direct layered 2-D field solves of every distinct cross-section",
                                 rows=total, distinct_sections=n_distinct, holdout_max_error_pct=0.0,
                                 goal_met=True)
            else:
                vals, info, corr = field_values(kind, geom, bands, target, wlo, whi_s, w_cf, closed_form,
                                                workers=_OPTIONS.get("workers"),
                                                dask_address=_OPTIONS.get("dask_address"), cache=cache,
                                                seed=int(getattr(study.search, "seed", 0) or 0))
        finally:
            cache.close()
        w = vals["width_m"]
        ok = vals["ok"] & (whi >= wlo)
        r = vals["r"]
    else:
        w = w_cf
        r = np.zeros((total, 3))
    f = np.full(total, np.nan)
    tb = LineTable(
        kind=kind, dims=dims, offset=offset, width_m=w.copy(), gap_m=gap, z_ohm=f.copy(), z0_ohm=f.copy(),
        z_diff_ohm=f.copy(), eps_eff=f.copy(), in_range=np.zeros(total, bool), solved=np.zeros(total, bool),
        rel_err=f.copy(), width_lo_m=wlo, width_hi_m=whi, min_space_m=min_space, loss_db_per_m=f.copy(),
        conductor_db_per_m=f.copy(), dielectric_db_per_m=f.copy(),
        height_m=height, height_top_m=height_top, thickness_m=t_cu, er=er, er_top=er_top, cover_m=cover_m,
        cover_er=cover_er, bottom_ground=np.ones_like(height, bool), n_rows=total,
        impedance_model=mode, width_cf_m=w_cf, z_cf_ohm=f.copy(), bands=bands, place_lut=lut,
        field_info=info, correction=corr, geometry=geom.with_(width_m=w), closed_form=closed_form,
        target_ohm=float(target), r_field=np.zeros((total, 3)), exact=np.zeros(total, bool),
    )
    tb.set_rows(all_rows, w, r, ok)
    if direct:
        import time

        from strainline.optimizer.search.fieldrefine import refine_rows
        from strainline.optimizer.search.fieldsolve import SolveStats

        t0, stats = time.perf_counter(), SolveStats()
        cache = FieldCache(enabled=bool(_OPTIONS.get("cache", True)))
        try:
            refine_rows(tb, all_rows, workers=_OPTIONS.get("workers"), dask_address=_OPTIONS.get("dask_address"),
                        cache=cache, stats=stats)
        finally:
            cache.close()
        info.field_solves, info.cached, info.direct_rows = stats.solved, stats.cached, total
        info.backend, info.workers, info.seconds = stats.backend, stats.workers, time.perf_counter() - t0
    return tb
