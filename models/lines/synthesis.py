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

#: Convergence: |ln Z - ln Z_target| below this (relative impedance error; the next secant step
#: is not taken, so the error is usually far smaller).
FTOL = 1e-10
#: A solved row is accepted when its final relative impedance error is below this.
ACCEPT = 1e-9
_CHUNK = 16384


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


def _secant(fun: Callable[[np.ndarray, np.ndarray], np.ndarray], lo: np.ndarray, hi: np.ndarray,
            x0: np.ndarray, slope0: np.ndarray, sign: float, active: np.ndarray,
            ends_known: bool = False, max_iter: int = 80) -> tuple[np.ndarray, np.ndarray]:
    """Safeguarded secant on rows ``active`` (bool): returns (x, ok).

    ``fun(rows, x)`` gives f for the integer index ``rows`` (None = all rows); ``sign`` is +1
    when f increases with x and -1 when it decreases. ``slope0`` is df/dx for the first step;
    ``ends_known`` says f was already evaluated at both range ends (no need to try them).
    """
    m = lo.size
    lo0, hi0 = lo.copy(), hi.copy()
    lo, hi = lo.copy(), hi.copy()
    x = np.clip(np.where(np.isfinite(x0), x0, 0.5 * (lo + hi)), lo, hi)
    xp = np.full(m, np.nan)
    fp = np.full(m, np.nan)
    fx = np.full(m, np.nan)
    done = np.zeros(m, dtype=bool)
    tried_lo = np.full(m, ends_known)
    tried_hi = np.full(m, ends_known)
    rows = np.flatnonzero(active & np.isfinite(lo) & np.isfinite(hi) & (lo <= hi))
    for _ in range(max_iter):
        if rows.size == 0:
            break
        # all rows active: plain slices (no gathers); otherwise fancy indexing
        idx = slice(None) if rows.size == m else rows
        xr = x[idx]
        fr = fun(None if rows.size == m else rows, xr)
        fx[idx] = fr
        right = sign * fr < 0.0                       # the root lies at larger x
        lor = np.where(right, xr, lo[idx])
        hir = np.where(right, hi[idx], xr)
        lo[idx] = lor
        hi[idx] = hir
        l0 = lo0[idx]
        h0 = hi0[idx]
        out = ((xr <= l0) & ~right) | ((xr >= h0) & right)      # root beyond a range end
        conv = np.abs(fr) <= FTOL
        tiny = (hir - lor) <= 1e-13 * np.maximum(1.0, np.abs(xr))
        stop = conv | tiny | out | ~np.isfinite(fr)
        xpr = xp[idx]
        dfx = fr - fp[idx]
        first = ~np.isfinite(xpr)
        use_sec = ~first & (dfx != 0.0)
        dxdf = np.where(use_sec, (xr - xpr) / np.where(use_sec, dfx, 1.0), 1.0 / slope0[idx])
        xn = xr - fr * dxdf
        t_lo = tried_lo[idx] | (xr <= l0)
        t_hi = tried_hi[idx] | (xr >= h0)
        tried_lo[idx] = t_lo
        tried_hi[idx] = t_hi
        # safeguards: leaving the bracket -> the untried range end once, else bisect; a flat f or a
        # step that did not halve (secant stagnating on one side) -> bisect
        go_lo = ~(xn > lor) & ~t_lo
        go_hi = ~(xn < hir) & ~t_hi
        slow = ~first & ~(np.abs(xn - xr) <= 0.5 * np.abs(xr - xpr))
        bisect = (~(xn > lor) | ~(xn < hir) | (~first & ~use_sec) | slow) & ~go_lo & ~go_hi
        xn = np.where(go_lo, l0, np.where(go_hi, h0, np.where(bisect, 0.5 * (lor + hir), xn)))
        done[idx] = stop & (conv | tiny) & np.isfinite(fr)
        xp[idx] = xr
        fp[idx] = fr
        keep = ~stop
        rk = rows[keep]
        x[rk] = xn[keep]
        rows = rk
    ok = done & (np.abs(fx) <= ACCEPT)
    return x, ok


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
                inv_h = 1.0 / gc.height_m

                def fun(rows, x, kern=kern, inv_h=inv_h, ln_t=ln_t):
                    if rows is None:
                        return kern.ln_z0(np.exp(x) * inv_h) - ln_t
                    return kern.ln_z0(np.exp(x) * inv_h[rows], rows) - ln_t[rows]

                x0, slope = _microstrip_start(np.exp(ln_t), gc, kern)
                x, okc = _secant(fun, lo, hi, x0, slope, -1.0, valid)
            else:
                def fun(rows, x, gc=gc, ln_t=ln_t, fc=fc):
                    rows = np.arange(ln_t.size) if rows is None else rows
                    sub = gc.take(rows).with_(**{variable: np.exp(x)})
                    return np.log(target_impedance(kind, sub, None if fc is None else fc[rows])) - ln_t[rows]

                rows = np.arange(ln_t.size)
                f_lo = fun(rows, lo)
                f_hi = fun(rows, hi)
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
