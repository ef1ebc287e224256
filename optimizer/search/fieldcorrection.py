"""The field correction of a line table: ln(field / closed form) over normalised geometry.

:class:`Correction` (thin-plate-spline radial basis functions with a linear trend,
:class:`scipy.interpolate.RBFInterpolator`, clipped to the range it measured), the dimensionless
:func:`features` of a row, :func:`corrected_widths` (the width for which closed form x correction
hits the target) and :func:`field_impedance` (field-accurate impedance of perturbed rows, for
yield). Used by :mod:`strainline.optimizer.search.fieldtable` and
:mod:`strainline.optimizer.search.fieldrefine`.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

STRIP_KINDS = ("stripline", "coupled-stripline")


@dataclass
class Correction:
    """ln(field / closed form) of (Z, eps_eff, tan_eff) as a function of normalised geometry."""

    lo: np.ndarray
    span: np.ndarray
    keep: np.ndarray
    X: np.ndarray
    Y: np.ndarray
    model: object | None
    feats_range: np.ndarray | None = None     # (2, k) raw feature range the scaling uses

    def __call__(self, feats: np.ndarray) -> np.ndarray:
        """ln-corrections at raw features, clipped to the range seen in the fit (plus 1 %): an
        interpolant far outside its points is never trusted beyond what was measured."""
        Xn = self.scale(feats)
        if self.model is None:
            return np.broadcast_to(self.Y.mean(axis=0), (Xn.shape[0], self.Y.shape[1])).copy()
        lo, hi = self.Y.min(axis=0) - 0.01, self.Y.max(axis=0) + 0.01
        return np.clip(np.asarray(self.model(Xn)), lo, hi)

    def refit(self, X: np.ndarray, Y: np.ndarray) -> Correction:
        """The correction with more points (same feature scaling)."""
        return fit_correction(self.feats_range, np.concatenate([self.X, X]), np.concatenate([self.Y, Y]))

    def scale(self, feats: np.ndarray) -> np.ndarray:
        return (feats[:, self.keep] - self.lo) / self.span


def fit_correction(feats_all: np.ndarray, X: np.ndarray, Y: np.ndarray) -> Correction:
    """Fit the correction on points ``X`` (raw features) with values ``Y`` (n, 3).

    Columns constant over the table are dropped; the others are scaled to [0, 1] over
    ``feats_all``. Thin-plate spline with a linear trend (needs more points than columns + 1;
    fewer points fall back to the mean correction).
    """
    from scipy.interpolate import RBFInterpolator

    lo = feats_all.min(axis=0)
    hi = feats_all.max(axis=0)
    keep = (hi - lo) > 1e-9 * np.maximum(1.0, np.abs(hi))
    rng = np.stack([feats_all.min(axis=0), feats_all.max(axis=0)])
    lo, span = lo[keep], (hi - lo)[keep]
    corr = Correction(lo, span, keep, X, Y, None, rng)
    Xn = corr.scale(X)
    _, first = np.unique(np.round(Xn, 9), axis=0, return_index=True)
    first = np.sort(first)
    Xn, Yu = Xn[first], Y[first]
    if Xn.shape[0] >= Xn.shape[1] + 2:
        try:
            corr.model = RBFInterpolator(Xn, Yu, kernel="thin_plate_spline", degree=1, smoothing=0.0)
        except (np.linalg.LinAlgError, ValueError):
            # degenerate point set (fewer independent points than columns): a linear RBF with a
            # constant trend, which needs no full-rank linear part
            try:
                corr.model = RBFInterpolator(Xn, Yu, kernel="linear", degree=0, smoothing=0.0)
            except (np.linalg.LinAlgError, ValueError):
                corr.model = None
    elif Xn.shape[0] >= 2:
        try:
            corr.model = RBFInterpolator(Xn, Yu, kernel="linear", degree=0, smoothing=0.0)
        except (np.linalg.LinAlgError, ValueError):
            corr.model = None
    return corr


def _near(t: np.ndarray, dk: np.ndarray, last: bool) -> tuple[np.ndarray, np.ndarray]:
    """Thickness and Dk of the band next to the trace (last non-empty below, first above)."""
    n, k = t.shape
    pos = t > 0
    if last:
        idx = np.where(pos.any(1), k - 1 - np.argmax(pos[:, ::-1], axis=1), 0)
    else:
        idx = np.where(pos.any(1), np.argmax(pos, axis=1), 0)
    r = np.arange(n)
    return np.where(pos.any(1), t[r, idx], 0.0), np.where(pos.any(1), dk[r, idx], 1.0)


def features(kind: str, width_m: np.ndarray, g, bands: dict[str, np.ndarray]) -> np.ndarray:
    """Raw normalised-geometry features of every row (n, k) at widths ``width_m``.

    Dimensionless: width, thickness, gap and second height over the height below the trace; the
    logarithms of the composite Dk; the Dk and thickness share of the band next to the trace (how
    far the layered section departs from the composite one); the fill beside the trace.
    """
    h = np.asarray(g.height_m, float)
    cols = [np.log(width_m / h), np.asarray(g.thickness_m, float) / h, np.log(np.asarray(g.er, float))]
    tb, eb = _near(bands["below_t"], bands["below_dk"], last=True)
    cols += [np.log(eb / g.er), tb / h]
    ta, ea = _near(bands["above_t"], bands["above_dk"], last=False)
    top_t = bands["above_t"].sum(axis=1)
    if kind in STRIP_KINDS:
        er_top = np.asarray(g.er_top, float)
        cols += [np.log(top_t / h), np.log(er_top), np.log(ea / er_top), ta / top_t]
    else:
        cer = np.where(top_t > 0, np.asarray(g.cover_er, float), 1.0)
        cols += [top_t / h, np.log(cer), np.log(ea / cer), np.where(top_t > 0, ta / np.maximum(top_t, 1e-30), 0.0)]
    cols.append(np.log(bands["fill_dk"]))
    if kind in ("coupled-microstrip", "coupled-stripline", "coplanar"):
        cols.append(np.log(np.asarray(g.gap_m, float) / h))
    return np.stack([np.broadcast_to(c, width_m.shape) for c in cols], axis=1)


def corrected_widths(kind: str, corr: Correction, g, bands: dict[str, np.ndarray], target: float,
                     lo_w: np.ndarray, hi_w: np.ndarray, w: np.ndarray, closed_z) -> tuple[np.ndarray, np.ndarray]:
    """Widths for which closed form x correction gives the target (fixed point over the
    correction's width dependence, at most three closed-form width solves); rows with no root in
    range take the better end. ``closed_z(width) -> {"z": ...}`` for the same rows."""
    from strainline.models.lines import solve_width

    ok = np.zeros(w.shape, bool)
    for _ in range(3):
        r = corr(features(kind, w, g, bands))
        wn, ok = solve_width(kind, target * np.exp(-r[:, 0]), g, lo_w, hi_w)
        ok = np.asarray(ok, bool)
        if not ok.all():
            ends = []
            for we in (lo_w, hi_w):
                re = corr(features(kind, we, g, bands))
                ends.append(np.abs(closed_z(we)["z"] * np.exp(re[:, 0]) / target - 1))
            wn = np.where(ok, wn, np.where(ends[0] <= ends[1], lo_w, hi_w))
        wn = np.where(np.isfinite(wn), wn, lo_w)
        moved = np.max(np.abs(wn / w - 1)) if w.size else 0.0
        w = wn
        if moved < 1e-6:
            break
    return w, ok


def field_impedance(tb, rows: np.ndarray, **changes: np.ndarray) -> np.ndarray:
    """Field-accurate impedance of table rows with perturbed geometry (for yield and sensitivities).

    Z = Z_closed_form(perturbed composite geometry) x exp(r_row + dr), where r_row is the row's own
    ln-correction (exact for rows solved directly) and dr the change the fitted correction predicts
    between the perturbed and the nominal geometry (0 without a fitted correction). A first-order
    transfer of the field correction to small perturbations.

    Parameters
    ----------
    tb : LineTable
        A table (either impedance model; with ``"closed-form"`` r is 0).
    rows : array of int, shape (n,)
        Table rows (repeat a row for several perturbed samples).
    **changes : array_like, shape (n,)
        Perturbed :class:`~strainline.models.lines.LineGeometry` fields (``width_m``, ``height_m``,
        ``thickness_m``, ``er``, ``cover_m``, ``cover_er``, ``height_top_m``, ``er_top``, ``gap_m``);
        ``band_scale`` (n,) scales every band thickness with ``height_m`` when given.

    Returns
    -------
    ndarray, shape (n,)
        The impedance the target refers to (Z0, pairs Z_diff), ohm.
    """
    from strainline.models.lines import target_impedance

    rows = np.asarray(rows, np.int64)
    nominal = tb.geometry.take(rows)
    geo = {k: v for k, v in changes.items() if k != "band_scale"}
    pert = nominal.with_(**geo) if geo else nominal
    z = target_impedance(tb.kind, pert)
    r = np.asarray(tb.r_field, float)[rows, 0] if tb.r_field is not None else np.zeros(rows.size)
    corr = getattr(tb, "correction", None)
    if corr is not None and geo:
        bands = {k: v[rows] for k, v in tb.bands.items()}
        pb = dict(bands)
        if "band_scale" in changes:
            sc = np.asarray(changes["band_scale"], float)[:, None]
            pb["below_t"] = bands["below_t"] * sc
        f0 = features(tb.kind, np.asarray(nominal.width_m, float) * np.ones(rows.size), nominal, bands)
        f1 = features(tb.kind, np.asarray(pert.width_m, float) * np.ones(rows.size), pert, pb)
        r = r + corr(f1)[:, 0] - corr(f0)[:, 0]
    return z * np.exp(r)
