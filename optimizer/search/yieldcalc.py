"""Impedance yield of every line-table row under the fabricator's tolerances.

Each row of a :class:`~strainline.optimizer.search.linetable.LineTable` is a built line whose
trace width, copper thickness, dielectric thicknesses and Dk scatter inside the fabricator's
tolerances; :func:`table_yield` gives every row the share of builds whose impedance lands inside
the study's impedance tolerance band, its sampling uncertainty and which tolerance dominates
(method: :mod:`strainline.models.tolerance`).

The five varied dimensions (:data:`TOLERANCE_NAMES`) and their +/- limits:

* **trace width (etch)** -- the catalog's ``width_tolerance`` for the row's copper weight. The
  artwork pitch is fixed, so a pair's gap and a coplanar slot change by the opposite amount
  (each etched edge moves both the trace and the gap edge);
* **copper thickness** -- ``thickness_tolerance.material_pct.copper-foil``;
* **dielectric below** / **dielectric above** (a stripline's second gap, a microstrip's cover) --
  each band's family tolerance from ``thickness_tolerance.material_pct`` (films ``film``,
  adhesives ``adhesive``, a cover's film ``cover``), the bands independent and combined by root
  sum of squares into a tolerance of their sum (exact for independent normal spreads: the
  variances add);
* **Dk** -- each dielectric's own Dk tolerance from the catalog (``dk_tolerance_pct`` of its
  materials.yaml entry, else fabrication.yaml ``dk_tolerance.default_pct``; a dielectric with
  neither is held exactly). One deviate ``u`` moves every dielectric of the build together, each by
  its own tolerance (``Dk_i (1 + tol_i u)``: one lot per build, and the same materials usually
  sit above and below the trace; fully correlated is the cautious choice, as the deviations add
  instead of partly cancelling). The composite Dk of each region (below the trace, above it or
  its cover) follows exactly from the series rule of
  :func:`strainline.models.lines.composite_er`. The column's limit is the largest first-order
  relative change of a region's composite Dk, ``sum_i w_i tol_i`` with the series weights
  ``w_i = (t_i / Dk_i) / sum_j (t_j / Dk_j)``.

Impedance at each sample: the closed forms at the perturbed composite geometry times the row's
own field correction (the table's ``r_field``, the ratio of the field solution to the closed form
at the nominal geometry) -- field-accurate at the nominal point, with the closed form carrying
the sensitivity to small deviations. Any other impedance function can be passed (``z_fn``).
"""
from __future__ import annotations

from dataclasses import dataclass
from types import SimpleNamespace
from typing import Any

import numpy as np
from strainline.models.tolerance import ImpedanceFn, YieldResult, impedance_yield

TOLERANCE_NAMES: tuple[str, ...] = (
    "trace width (etch)", "copper thickness", "dielectric below", "dielectric above", "Dk",
)
_STRIP = ("stripline", "coupled-stripline")
_GAPPED = ("coupled-microstrip", "coupled-stripline", "coplanar")


def _rss(t: np.ndarray, tol: np.ndarray) -> np.ndarray:
    """Relative tolerance of a sum of independent layers: sqrt(sum (t_i tol_i)^2) / sum t_i."""
    tot = t.sum(axis=1)
    return np.where(tot > 0, np.sqrt(((t * tol) ** 2).sum(axis=1)) / np.where(tot > 0, tot, 1.0), 0.0)


@dataclass(frozen=True)
class DkBands:
    """How the Dk deviate moves each row's composite Dk (see the module notes).

    ``limit`` (rows,) is the Dk column's relative limit; per region (``below``: plane up to the
    trace; ``above``: the gap up to the second plane, or the cover) ``*_w`` (rows, bands) are the
    series weights ``(t_i / Dk_i) / sum_j (t_j / Dk_j)`` (all 0 for an empty region) and ``*_k``
    (rows, bands) each band's Dk tolerance over ``limit`` (0 where ``limit`` is 0).
    """

    limit: np.ndarray
    below_w: np.ndarray
    below_k: np.ndarray
    above_w: np.ndarray
    above_k: np.ndarray

    def ratio(self, region: str, idx: np.ndarray, d: np.ndarray) -> np.ndarray:
        """Composite Dk over its nominal for rows ``idx`` (k,) at Dk column deviations ``d`` (k, m)."""
        w = getattr(self, region + "_w")[idx][:, None, :]
        k = getattr(self, region + "_k")[idx][:, None, :]
        inv = (w / (1.0 + k * d[..., None])).sum(axis=-1)
        return np.where(w.sum(axis=-1) > 0, 1.0 / np.where(inv > 0, inv, 1.0), 1.0)


def _band_materials(tb: Any, space: Any) -> tuple[np.ndarray, np.ndarray]:
    """Material index (into ``space.materials``) of every band below and above each row's trace.

    The table's own band builder (:func:`.tablegeometry._bands`) run with each material's index in
    place of its Dk, so the bands are the table's by construction.
    """
    from strainline.optimizer.search.tablegeometry import _bands, _enumerate

    _, _, total, c, _ = _enumerate(space, tb.kind)
    if total != tb.n_rows:
        raise ValueError(f"line table has {tb.n_rows} rows, the space enumerates {total}")
    arr = dict(space.arr)
    arr["mat_dk"] = np.arange(len(space.materials), dtype=float) + 2.0   # air fill stays 1.0
    b = _bands(SimpleNamespace(arr=arr), tb.kind, c)
    return (np.rint(b["below_dk"]).astype(np.int64) - 2, np.rint(b["above_dk"]).astype(np.int64) - 2)


def dk_bands(tb: Any, space: Any, catalog: Any, dk_tolerance: float | None = None) -> DkBands:
    """Per-row Dk model from the catalog's Dk tolerance of each dielectric in the cross-section.

    Parameters
    ----------
    dk_tolerance : float, optional
        One relative +/- Dk limit for every dielectric instead of the catalog's (a what-if).
    """
    names = [m.name for m in space.materials]
    if dk_tolerance is None:
        mat_tol = np.array([catalog.dk_tolerance_of(n) or 0.0 for n in names] or [0.0])
    else:
        mat_tol = np.full(max(len(names), 1), float(dk_tolerance))
    mb, ma = _band_materials(tb, space)
    b = tb.bands
    out = {}
    for region, mats in (("below", mb), ("above", ma)):
        t, dk = b[region + "_t"], b[region + "_dk"]
        a = np.where(t > 0, t / np.maximum(dk, 1.0), 0.0)
        tot = a.sum(axis=1, keepdims=True)
        out[region + "_w"] = np.where(tot > 0, a / np.where(tot > 0, tot, 1.0), 0.0)
        out[region + "_tol"] = np.where(t > 0, mat_tol[np.clip(mats, 0, None)], 0.0)
    lim = np.maximum((out["below_w"] * out["below_tol"]).sum(1), (out["above_w"] * out["above_tol"]).sum(1))
    safe = np.where(lim > 0, lim, 1.0)[:, None]
    return DkBands(lim, out["below_w"], np.where(lim[:, None] > 0, out["below_tol"] / safe, 0.0),
                   out["above_w"], np.where(lim[:, None] > 0, out["above_tol"] / safe, 0.0))


def row_tolerances(tb: Any, space: Any, catalog: Any, dk_tolerance: float | None = None,
                   dk: DkBands | None = None) -> np.ndarray:
    """Relative +/- limits (rows, 5) of the :data:`TOLERANCE_NAMES` for every table row (the Dk
    column: :attr:`DkBands.limit`)."""
    fab = catalog.fabrication
    mat = fab.material_thickness_tolerance
    n = tb.n_rows
    t_cu = np.broadcast_to(np.asarray(tb.thickness_m, float), (n,))
    cu_t = np.array([c[2] for c in space.cu_opts])
    cu_w = np.array([fab.width_tolerance[c[0]] for c in space.cu_opts])
    pick = np.argmin(np.abs(t_cu[:, None] - cu_t[None, :]), axis=1)
    width = cu_w[pick]
    copper = np.full(n, mat["copper-foil"])
    b = tb.bands
    gap_tol = np.array([mat["adhesive"], mat["film"], mat["adhesive"]])
    below = _rss(b["below_t"], gap_tol[None, : b["below_t"].shape[1]])
    if tb.kind in _STRIP:
        above = _rss(b["above_t"], gap_tol[None, : b["above_t"].shape[1]])
    else:
        cov_tol = np.array([mat["adhesive"], mat["cover"]])
        above = _rss(b["above_t"], cov_tol[None, : b["above_t"].shape[1]])
    dk = dk or dk_bands(tb, space, catalog, dk_tolerance)
    return np.stack([width, copper, below, above, dk.limit], axis=1)


def table_z_fn(tb: Any, dk: DkBands | None = None) -> ImpedanceFn:
    """Impedance of table rows at relative deviations of the five dimensions (closed form at the
    perturbed geometry times the row's field correction).

    ``dk`` (from :func:`dk_bands`) moves each band's Dk by its own tolerance; without it every
    composite Dk moves by the Dk column's deviation itself.
    """
    from strainline.models.lines import LineGeometry, evaluate_line

    g = tb.geometry
    n = tb.n_rows
    col = {name: np.broadcast_to(np.asarray(getattr(g, name)), (n,))
           for name in ("width_m", "height_m", "thickness_m", "er", "gap_m", "height_top_m", "er_top",
                        "cover_m", "cover_er", "bottom_ground")}
    corr = np.exp(tb.r_field[:, 0]) if tb.r_field is not None else np.ones(n)
    strip = tb.kind in _STRIP
    gapped = tb.kind in _GAPPED

    def z_fn(idx: np.ndarray, delta: np.ndarray) -> np.ndarray:
        k, m, _ = delta.shape

        def c(name: str) -> np.ndarray:
            return col[name][idx][:, None]

        w = c("width_m") * (1.0 + delta[..., 0])
        if dk is None:
            f_below = f_above = 1.0 + delta[..., 4]
        else:
            f_below, f_above = dk.ratio("below", idx, delta[..., 4]), dk.ratio("above", idx, delta[..., 4])
        geo = {
            "width_m": w,
            "thickness_m": c("thickness_m") * (1.0 + delta[..., 1]),
            "height_m": c("height_m") * (1.0 + delta[..., 2]),
            "er": np.maximum(c("er") * f_below, 1.0),
            "gap_m": c("gap_m") - (w - c("width_m")) if gapped else c("gap_m"),
            "height_top_m": c("height_top_m") * (1.0 + delta[..., 3]) if strip else c("height_top_m"),
            "er_top": np.maximum(c("er_top") * f_above, 1.0),
            "cover_m": c("cover_m") if strip else c("cover_m") * (1.0 + delta[..., 3]),
            "cover_er": np.maximum(c("cover_er") * f_above, 1.0),
            "bottom_ground": c("bottom_ground"),
        }
        flat = {key: np.broadcast_to(v, (k, m)).ravel() for key, v in geo.items()}
        res = evaluate_line(tb.kind, LineGeometry(**flat))
        return np.asarray(res.target_ohm, float).reshape(k, m) * corr[idx][:, None]

    return z_fn


def table_yield(tb: Any, space: Any, catalog: Any, *, band_rel: float | None = None,
                dk_tolerance: float | None = None, n: int = 512, replicates: int = 4,
                seed: int = 0, distribution: str = "normal", z_fn: ImpedanceFn | None = None,
                surrogate: bool = True) -> YieldResult:
    """Impedance yield of every row of a line table.

    Parameters
    ----------
    tb : LineTable
        The study's line table (after the field correction, when the field model decided).
    space : Space
        For the copper options (weight key of each row's copper).
    catalog : Catalog
        Fabrication tolerances and each dielectric's Dk tolerance (:meth:`Catalog.dk_tolerance_of`).
    band_rel : float, optional
        Relative +/- impedance band (default: the study's ``line.tolerance``).
    dk_tolerance : float, optional
        One relative +/- Dk limit for every dielectric instead of the catalog's.
    n, replicates, seed, distribution, surrogate
        As in :func:`strainline.models.tolerance.impedance_yield`.
    z_fn : callable, optional
        Impedance function (default :func:`table_z_fn`).

    Returns
    -------
    YieldResult
        Per row; ``names`` are :data:`TOLERANCE_NAMES`.
    """
    band = float(space.study.line.tolerance if band_rel is None else band_rel)
    dk = dk_bands(tb, space, catalog, dk_tolerance)
    tol = row_tolerances(tb, space, catalog, dk=dk)
    return impedance_yield(z_fn or table_z_fn(tb, dk), tol, tb.target_ohm, band, TOLERANCE_NAMES,
                           n=n, replicates=replicates, seed=seed, distribution=distribution,
                           surrogate=surrogate)


def yield_finding(res: YieldResult, row: int) -> str:
    """One sentence for a report: the yield, its uncertainty and the dominant tolerance."""
    i = int(res.dominant[row])
    return (f"impedance yield {100 * res.yield_frac[row]:.1f} % +/- {100 * res.stderr[row]:.1f} % "
            f"({res.samples} quasi-Monte Carlo builds); the spread is dominated by "
            f"{res.names[i]} ({100 * res.shares[row, i]:.0f} % of the variance)")
