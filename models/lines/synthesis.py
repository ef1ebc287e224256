"""Width and gap synthesis for a target impedance, for a whole batch at once.

Method: a vectorized, safeguarded secant iteration on f(x) = ln Z(e^x) - ln Z_target with
x = ln(width) (or ln(gap)). Impedance is monotonic in width and in gap for every line type
here, so each row keeps a bracket inside [x_min, x_max]; a secant step that leaves the bracket
is replaced by the bound itself (once) or by bisection. A row whose target lies outside the
impedances reachable in the range ends with ``ok`` False and ``nan`` width: never an exception.

Starting point: for microstrip (static) the Hammerstad synthesis formula as given in Pozar,
*Microwave Engineering* (from Hammerstad 1975), with its own slope for the first step; for the
other types, the impedances at both ends of the range and a log-log interpolation.

Work is done in chunks of rows so that the arrays stay in cache; the iteration count is small
(typically 4-6 evaluations per row) and converged rows drop out of the active set.
"""
from __future__ import annotations

from collections.abc import Callable

import numpy as np

from strainline.models.lines.coplanar import coplanar
from strainline.models.lines.coupled import coupled_microstrip, coupled_stripline
from strainline.models.lines.evaluate import check_kind
from strainline.models.lines.geometry import GAP_KINDS, LineGeometry
from strainline.models.lines.microstrip import MicrostripKernel, hj_eps, hj_width_corrections, microstrip
from strainline.models.lines.stripline import stripline
from strainline.models.units import ETA0

#: Convergence: |ln Z - ln Z_target| below this (relative impedance error) at a verified point;
#: the returned width takes one more secant step from there, so the error is usually round-off.
FTOL = 1e-8
#: A solved row is accepted when its final relative impedance error is below this.
ACCEPT = 1e-8
_CHUNK = 16384
_ETA_2PI = (ETA0 / (2.0 * np.pi)) ** 2


def target_impedance(kind: str, geom: LineGeometry, freq_hz=None) -> np.ndarray:
    """The impedance a target refers to (Z0 for single lines, Z_diff for pairs), ohm.

    A lean path (no range flags) used by the solver; equal to
    ``evaluate_line(kind, geom, freq_hz).target_ohm`` on valid rows.
    """
    g = geom
    h2, er2 = g.resolved_top()
    with np.errstate(all="ignore"):
        if kind == "microstrip":
            return microstrip(g.width_m, g.height_m, g.thickness_m, g.er, g.cover_m, g.cover_er, freq_hz)[0]
        if kind == "stripline":
            return stripline(g.width_m, g.height_m, h2, g.thickness_m, g.er, er2)[0]
        if kind == "coupled-microstrip":
            return 2.0 * coupled_microstrip(g.width_m, g.gap_m, g.height_m, g.thickness_m, g.er,
                                            g.cover_m, g.cover_er)[1]
        if kind == "coupled-stripline":
            return 2.0 * coupled_stripline(g.width_m, g.gap_m, g.height_m, h2, g.thickness_m, g.er, er2)[1]
        return coplanar(g.width_m, g.gap_m, g.height_m, g.thickness_m, g.er, g.bottom_ground,
                        g.cover_m, g.cover_er)[0]


def hammerstad_synthesis_u(z0_ohm, er) -> np.ndarray:
    """Closed-form microstrip w/h for a target Z0 (zero thickness), Hammerstad 1975 as given in
    Pozar, *Microwave Engineering*, section 3.8 (about 1 % in Z0; used only as a starting point).

    A = Z0/60 sqrt((er+1)/2) + (er-1)/(er+1) (0.23 + 0.11/er); w/h = 8 e^A / (e^2A - 2) when
    that is below 2, else w/h = 2/pi [B - 1 - ln(2B - 1) + (er-1)/(2er) (ln(B-1) + 0.39 - 0.61/er)]
    with B = 377 pi / (2 Z0 sqrt(er)).
    """
    z = np.asarray(z0_ohm, dtype=float)
    er = np.asarray(er, dtype=float)
    with np.errstate(all="ignore"):
        a = z / 60.0 * np.sqrt((er + 1.0) / 2.0) + (er - 1.0) / (er + 1.0) * (0.23 + 0.11 / er)
        ua = 8.0 * np.exp(a) / (np.exp(2.0 * a) - 2.0)
        b = 377.0 * np.pi / (2.0 * z * np.sqrt(er))
        ub = 2.0 / np.pi * (b - 1.0 - np.log(2.0 * b - 1.0)
                            + (er - 1.0) / (2.0 * er) * (np.log(b - 1.0) + 0.39 - 0.61 / er))
        narrow = (ua > 0) & (ua < 2.0)
        return np.where(narrow, ua, ub)


def _microstrip_start(target, g: LineGeometry, kern: MicrostripKernel) -> tuple[np.ndarray, np.ndarray]:
    """Starting ln(width) and d ln Z / d ln w for the microstrip solve.

    Hammerstad's synthesis (zero thickness, bare) corrected to first order for the cover
    (target scaled by sqrt(eps_emb/eps_bare) at the first guess) and for the thickness
    (the H&J widening of the dielectric line subtracted).
    """
    er = g.er
    u_s = hammerstad_synthesis_u(target, er)
    eps = hj_eps(np.maximum(u_s, 1e-3), er)
    t_bare = target * np.sqrt(kern.c_a + kern.c_b / eps)
    u_b = hammerstad_synthesis_u(t_bare, er)
    u_b2 = hammerstad_synthesis_u(t_bare * 1.01, er)
    _, dur = hj_width_corrections(np.maximum(u_b, 1e-3), g.thickness_m / g.height_m, er)
    u0 = np.maximum(u_b - dur, 0.3 * u_b)
    slope = np.log(1.01) / np.log(u_b2 / u_b)
    slope = np.where(np.isfinite(slope) & (slope < 0), slope, -0.7)
    return np.log(u0 * g.height_m), slope


def _fast_secant(fun: Callable[[np.ndarray], np.ndarray], lo: np.ndarray, hi: np.ndarray, x0: np.ndarray,
                 slope0: np.ndarray, steps: int = 3) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """A fixed number of plain secant steps on every row (no bookkeeping), clipped to [lo, hi].

    Evaluates at ``x0``, takes one slope step, then ``steps`` secant steps (``steps + 1``
    evaluations in all). Returns (x, ok, x_last, slope_last): ``ok`` where
    the last verified residual is within FTOL (x is then that point plus one unverified secant
    step, see :data:`FTOL`); ``x_last``/``slope_last`` warm-start the safeguarded solver for the
    other rows.
    """
    x = np.clip(x0, lo, hi)
    f = fun(x)
    xn = np.clip(x - f / slope0, lo, hi)
    fn = f
    for _ in range(steps):
        fn = fun(xn)
        d = fn - f
        step = np.where(d != 0.0, fn * (xn - x) / np.where(d != 0.0, d, 1.0), 0.0)
        slope = np.where(d != 0.0, d / np.where(xn != x, xn - x, 1.0), slope0)
        x, f = xn, fn
        xn = np.clip(x - step, lo, hi)
    ok = np.abs(f) <= FTOL
    out = np.where(ok & np.isfinite(xn), xn, x)
    slope = np.where(np.isfinite(slope) & (slope < 0), slope, slope0)
    return out, ok, x, slope


class _Rows:
    """f(x) for the active rows of a solve; ``keep(mask)`` drops finished rows (compaction keeps
    every per-row array contiguous, so an iteration does no gathers)."""

    def __init__(self, arrays: dict[str, np.ndarray], fn: Callable[..., np.ndarray]) -> None:
        self.a = arrays
        self.fn = fn

    def __call__(self, x: np.ndarray) -> np.ndarray:
        return self.fn(x, **self.a)

    def keep(self, mask: np.ndarray) -> None:
        self.a = {k: v[mask] for k, v in self.a.items()}


def _secant(fun: _Rows, lo: np.ndarray, hi: np.ndarray, x0: np.ndarray, slope0: np.ndarray,
            sign: float, active: np.ndarray, ends_known: bool = False,
            max_iter: int = 80) -> tuple[np.ndarray, np.ndarray]:
    """Safeguarded secant on rows ``active`` (bool): returns (x, ok) for all rows.

    ``fun`` evaluates f on the active rows (all rows of the chunk at the start; ``active`` rows
    only are kept before the first evaluation); ``sign`` is +1 when f increases with x and -1 when
    it decreases; ``slope0`` is df/dx for the first step; ``ends_known`` says f was already
    evaluated at both range ends (no need to try them).

    Safeguards: a step that leaves the bracket goes to the untried range end once, else bisects;
    a flat f or an |f| that did not halve (secant stagnating on one side) bisects.
    """
    m = lo.size
    x_out = np.full(m, np.nan)
    f_out = np.full(m, np.nan)
    ok_out = np.zeros(m, dtype=bool)
    start = active & np.isfinite(lo) & np.isfinite(hi) & (lo <= hi)
    rows = np.flatnonzero(start)
    if rows.size < m:
        fun.keep(start)
    l0, h0 = lo[rows], hi[rows]
    lo_, hi_ = l0.copy(), h0.copy()
    x = np.clip(np.where(np.isfinite(x0[rows]), x0[rows], 0.5 * (l0 + h0)), l0, h0)
    inv_slope = 1.0 / slope0[rows]
    xp = fp = None
    t_lo = np.full(rows.size, ends_known)
    t_hi = np.full(rows.size, ends_known)
    for _ in range(max_iter):
        if rows.size == 0:
            break
        f = fun(x)
        right = sign * f < 0.0                         # the root lies at larger x
        lo_ = np.where(right, x, lo_)
        hi_ = np.where(right, hi_, x)
        at_lo = x <= l0
        at_hi = x >= h0
        conv = np.abs(f) <= FTOL
        stop = conv | (at_lo & ~right) | (at_hi & right) | ((hi_ - lo_) <= 1e-13) | ~np.isfinite(f)
        t_lo |= at_lo
        t_hi |= at_hi
        if xp is None:
            xn = x - f * inv_slope
            bisect = np.zeros(x.size, dtype=bool)
        else:
            with np.errstate(divide="ignore", invalid="ignore"):
                xn = x - f * (x - xp) / (f - fp)
            bisect = ~(np.abs(f) <= 0.5 * np.abs(fp))     # |f| did not halve (or nan)
        below = ~(xn > lo_)
        above = ~(xn < hi_)
        go_lo = below & ~t_lo
        go_hi = above & ~t_hi
        bisect = (bisect | below | above) & ~go_lo & ~go_hi
        xn = np.where(bisect, 0.5 * (lo_ + hi_), xn)
        xn = np.where(go_lo, l0, np.where(go_hi, h0, xn))
        if stop.any():
            r = rows[stop]
            # converged rows get one more (unverified) secant step from their verified point:
            # |step| <= ~1e-8, and it takes the error from ~1e-8 to round-off in the usual case
            polish = np.where(conv & ~bisect & (xp is not None) & (xn > lo_) & (xn < hi_), xn, x)
            x_out[r] = polish[stop]
            f_out[r] = f[stop]
            ok_out[r] = (conv[stop] | ((hi_ - lo_)[stop] <= 1e-13)) & np.isfinite(f[stop])
            keep = ~stop
            rows = rows[keep]
            fun.keep(keep)
            x, xn, f = x[keep], xn[keep], f[keep]
            l0, h0, lo_, hi_, t_lo, t_hi = l0[keep], h0[keep], lo_[keep], hi_[keep], t_lo[keep], t_hi[keep]
        xp, fp, x = x, f, xn
    ok = ok_out & (np.abs(f_out) <= ACCEPT)
    return x_out, ok


def _ms_residual(x, inv_h, ln_t, k_t, c_t, f_r, ab_b, e_hi, e_lo, c_a, c_b) -> np.ndarray:
    """ln Z0(w = e^x) - ln Z_target for the static microstrip (same algebra as
    :meth:`MicrostripKernel.ln_z0`, on compacted row constants)."""
    u = np.exp(x) * inv_h
    d1 = k_t * np.log1p(c_t * np.tanh(np.sqrt(6.517 * u)) ** 2)
    z1 = MicrostripKernel._z01(u + d1)
    ur = u + d1 * f_r
    zr = MicrostripKernel._z01(ur)
    u2 = ur * ur
    u4 = u2 * u2
    y = ur * (1.0 / 18.1)
    a = (1.0 + np.log((u4 + u2 * (1.0 / 2704.0)) / (u4 + 0.432)) * (1.0 / 49.0)
         + np.log1p(y * y * y) * (1.0 / 18.7))
    e = e_hi + e_lo * np.exp(a * ab_b * np.log1p(10.0 / ur))
    ratio = z1 / zr
    emb = e * ratio * ratio * c_a + c_b
    return np.log(_ETA_2PI * z1 * z1 / emb) * 0.5 - ln_t


def _broadcast_all(geom: LineGeometry, *arrays) -> tuple[LineGeometry, list[np.ndarray]]:
    from dataclasses import fields
    shapes = [np.shape(getattr(geom, f.name)) for f in fields(geom)] + [np.shape(a) for a in arrays]
    shape = np.broadcast_shapes(*shapes)
    n = int(np.prod(shape)) if shape else 1
    g = geom.broadcast(n)
    return g, [np.array(np.broadcast_to(np.asarray(a, dtype=float), (n,))) for a in arrays]


def _solve(kind: str, variable: str, target_ohm, geom: LineGeometry, vmin, vmax, freq_hz,
           chunk: int) -> tuple[np.ndarray, np.ndarray]:
    check_kind(kind)
    g, (target, vmin, vmax) = _broadcast_all(geom, target_ohm, vmin, vmax)
    n = target.size
    f_arr = None if freq_hz is None else np.array(np.broadcast_to(np.asarray(freq_hz, dtype=float), (n,)))
    static_ms = kind == "microstrip" and variable == "width_m" and (f_arr is None or not np.any(f_arr > 0))
    value = np.full(n, np.nan)
    ok = np.zeros(n, dtype=bool)
    with np.errstate(all="ignore"):
        ln_t_all = np.log(target)
        lo_all = np.log(vmin)
        hi_all = np.log(vmax)
        for start in range(0, n, chunk):
            sl = slice(start, min(start + chunk, n))
            gc = g.take(sl)
            ln_t = ln_t_all[sl]
            lo = lo_all[sl]
            hi = hi_all[sl]
            fc = None if f_arr is None else f_arr[sl]
            valid = np.isfinite(ln_t) & (lo <= hi)
            if static_ms:
                kern = MicrostripKernel(gc.height_m, gc.thickness_m, gc.er, gc.cover_m, gc.cover_er)
                consts = dict(inv_h=1.0 / gc.height_m, ln_t=ln_t, k_t=kern.k_t, c_t=kern.c_t, f_r=kern.f_r,
                              ab_b=kern.ab_b, e_hi=kern.e_hi, e_lo=kern.e_lo, c_a=kern.c_a, c_b=kern.c_b)
                x0, slope = _microstrip_start(np.exp(ln_t), gc, kern)
                x, okc, x_last, slope_last = _fast_secant(lambda xx: _ms_residual(xx, **consts), lo, hi, x0, slope)
                # rows the fixed fast pass did not settle: the safeguarded solver, warm-started
                rest = valid & ~okc
                if rest.any():
                    idx = np.flatnonzero(rest)
                    fun = _Rows({k: v[idx] for k, v in consts.items()}, _ms_residual)
                    xr, okr = _secant(fun, lo[idx], hi[idx], x_last[idx], slope_last[idx], -1.0,
                                      np.ones(idx.size, dtype=bool))
                    x[idx] = xr
                    okc[idx] = okr
                okc &= valid
            else:
                def resid(x, rows, gc=gc, ln_t=ln_t, fc=fc):
                    sub = gc.take(rows).with_(**{variable: np.exp(x)})
                    return np.log(target_impedance(kind, sub, None if fc is None else fc[rows])) - ln_t[rows]

                rows = np.arange(ln_t.size)
                fun = _Rows(dict(rows=rows), resid)
                f_lo = resid(lo, rows)
                f_hi = resid(hi, rows)
                sign = -1.0 if variable == "width_m" else 1.0
                bracket = valid & np.isfinite(f_lo) & np.isfinite(f_hi) & (f_lo * f_hi <= 0.0)
                slope = (f_hi - f_lo) / np.where(hi > lo, hi - lo, 1.0)
                x0 = np.where(f_hi != f_lo, lo - f_lo / np.where(slope != 0, slope, 1.0), lo)
                slope = np.where(np.isfinite(slope) & (slope != 0), slope, sign)
                x, okc = _secant(fun, lo, hi, x0, slope, sign, bracket, ends_known=True)
            value[sl] = np.where(okc, np.exp(x), np.nan)
            ok[sl] = okc
    return value, ok


def solve_width(kind: str, target_ohm, geom: LineGeometry, width_min_m, width_max_m, *,
                freq_hz=None, chunk: int = _CHUNK) -> tuple[np.ndarray, np.ndarray]:
    """Trace width that gives a target impedance, for every row at once.

    Parameters
    ----------
    kind : str
        One of ``LINE_KINDS``.
    target_ohm : array_like
        Z0 for single lines, differential impedance for pairs, ohm.
    geom : LineGeometry
        Cross-sections; ``width_m`` is ignored (pairs: ``gap_m`` held fixed).
    width_min_m, width_max_m : array_like
        Search range, m (the answer is inside it or the row is not ok).
    freq_hz : array_like, optional
        Frequency for dispersive models (microstrip), Hz; None = quasi-static.
    chunk : int
        Rows per block (memory/caching only; does not change results).

    Returns
    -------
    width_m : ndarray, shape (n,)
        Solved width, m; ``nan`` where not ok.
    ok : ndarray of bool, shape (n,)
        True where the target was reached to a relative error below 1e-9. Unreachable targets,
        invalid geometry and non-converged rows are False; nothing raises for one bad row.
    """
    return _solve(kind, "width_m", target_ohm, geom, width_min_m, width_max_m, freq_hz, chunk)


def solve_gap(kind: str, target_ohm, geom: LineGeometry, gap_min_m, gap_max_m, *,
              freq_hz=None, chunk: int = _CHUNK) -> tuple[np.ndarray, np.ndarray]:
    """Gap (pairs: edge-to-edge; coplanar: slot) that gives a target impedance at the given width.

    Same contract as :func:`solve_width` (``gap_m`` of ``geom`` is ignored). Only for
    ``coupled-microstrip``, ``coupled-stripline`` and ``coplanar``.
    """
    if kind not in GAP_KINDS:
        raise ValueError(f"solve_gap needs a line with a gap, one of {GAP_KINDS}; got {kind!r}")
    return _solve(kind, "gap_m", target_ohm, geom, gap_min_m, gap_max_m, freq_hz, chunk)
