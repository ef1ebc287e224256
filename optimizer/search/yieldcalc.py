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
* **Dk** -- one relative tolerance for every dielectric of the line (:data:`DK_TOLERANCE`; the
  catalog has no Dk tolerance yet). Dk of the films of one build move together (one lot).

Impedance at each sample: the closed forms at the perturbed composite geometry times the row's
own field correction (the table's ``r_field``, the ratio of the field solution to the closed form
at the nominal geometry) -- field-accurate at the nominal point, with the closed form carrying
the sensitivity to small deviations. Any other impedance function can be passed (``z_fn``).
"""
from __future__ import annotations

from typing import Any

import numpy as np
from strainline.models.tolerance import ImpedanceFn, YieldResult, impedance_yield

TOLERANCE_NAMES: tuple[str, ...] = (
    "trace width (etch)", "copper thickness", "dielectric below", "dielectric above", "Dk",
)
#: Relative +/- Dk tolerance of flex dielectrics (typical, from memory: polyimide and adhesive
#: data sheets give Dk to about +/-0.15 around 3.2-3.5, i.e. about 5 %).
DK_TOLERANCE = 0.05
_STRIP = ("stripline", "coupled-stripline")
_GAPPED = ("coupled-microstrip", "coupled-stripline", "coplanar")


def _rss(t: np.ndarray, tol: np.ndarray) -> np.ndarray:
    """Relative tolerance of a sum of independent layers: sqrt(sum (t_i tol_i)^2) / sum t_i."""
    tot = t.sum(axis=1)
    return np.where(tot > 0, np.sqrt(((t * tol) ** 2).sum(axis=1)) / np.where(tot > 0, tot, 1.0), 0.0)


def row_tolerances(tb: Any, space: Any, catalog: Any, dk_tolerance: float = DK_TOLERANCE
                   ) -> np.ndarray:
    """Relative +/- limits (rows, 5) of the :data:`TOLERANCE_NAMES` for every table row."""
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
    dk = np.full(n, float(dk_tolerance))
    return np.stack([width, copper, below, above, dk], axis=1)


def table_z_fn(tb: Any) -> ImpedanceFn:
    """Impedance of table rows at relative deviations of the five dimensions (closed form at the
    perturbed geometry times the row's field correction)."""
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
        f_dk = 1.0 + delta[..., 4]
        geo = {
            "width_m": w,
            "thickness_m": c("thickness_m") * (1.0 + delta[..., 1]),
            "height_m": c("height_m") * (1.0 + delta[..., 2]),
            "er": np.maximum(c("er") * f_dk, 1.0),
            "gap_m": c("gap_m") - (w - c("width_m")) if gapped else c("gap_m"),
            "height_top_m": c("height_top_m") * (1.0 + delta[..., 3]) if strip else c("height_top_m"),
            "er_top": np.maximum(c("er_top") * f_dk, 1.0),
            "cover_m": c("cover_m") if strip else c("cover_m") * (1.0 + delta[..., 3]),
            "cover_er": np.maximum(c("cover_er") * f_dk, 1.0),
            "bottom_ground": c("bottom_ground"),
        }
        flat = {key: np.broadcast_to(v, (k, m)).ravel() for key, v in geo.items()}
        res = evaluate_line(tb.kind, LineGeometry(**flat))
        return np.asarray(res.target_ohm, float).reshape(k, m) * corr[idx][:, None]

    return z_fn


def table_yield(tb: Any, space: Any, catalog: Any, *, band_rel: float | None = None,
                dk_tolerance: float = DK_TOLERANCE, n: int = 512, replicates: int = 4,
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
        Fabrication tolerances.
    band_rel : float, optional
        Relative +/- impedance band (default: the study's ``line.tolerance``).
    dk_tolerance : float
        Relative +/- Dk limit.
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
    tol = row_tolerances(tb, space, catalog, dk_tolerance)
    return impedance_yield(z_fn or table_z_fn(tb), tol, tb.target_ohm, band, TOLERANCE_NAMES,
                           n=n, replicates=replicates, seed=seed, distribution=distribution,
                           surrogate=surrogate)


def yield_finding(res: YieldResult, row: int) -> str:
    """One sentence for a report: the yield, its uncertainty and the dominant tolerance."""
    i = int(res.dominant[row])
    return (f"impedance yield {100 * res.yield_frac[row]:.1f} % +/- {100 * res.stderr[row]:.1f} % "
            f"({res.samples} quasi-Monte Carlo builds); the spread is dominated by "
            f"{res.names[i]} ({100 * res.shares[row, i]:.0f} % of the variance)")
