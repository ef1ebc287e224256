"""Impedance of a line over a hatched reference plane: a 3-D quasi-static field solution.

:func:`hatch_solve` meshes one period of the hatch along the line (reduced by its mirror planes,
see below), solves Laplace's equation for the capacitance per unit length with the layered
dielectric (C) and in air (C_a), and returns

.. math:: Z_0 = \\frac{1}{c_0\\sqrt{C\\,C_a}}, \\qquad \\varepsilon_{eff} = \\frac{C}{C_a}

(quasi-static TEM line theory, e.g. D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley 2012,
ch. 3), with C the energy-based mean over the period (for a periodic structure the static
capacitance of one period divided by its length). :func:`hatch_solve_width` solves the width for
a target. The numerical core (seven-point finite differences, AMG-preconditioned CG) is in
:mod:`strainline.models.hatch.grid3d`; the hatch pattern in :mod:`strainline.models.hatch.geometry`.

Domain
------
The pattern is periodic along the trace (period ``p`` at 90 degrees, ``p sqrt 2`` at 45) and
mirror-symmetric about a crossing of two hatch lines, so the periodic solution of one period has
zero normal field on the planes z = 0 and z = P/2; half a period is meshed between those two
symmetry walls (equivalent to one period with periodic boundaries). A single line or a pair's odd
mode is also symmetric about the trace's (pair's) centre plane, so half the width is meshed
(magnetic wall for a single line, electric wall for the odd mode). Open sides, the top of a
microstrip and the space under the hatched plane end at grounded walls ``open_margin`` times the
largest dimension (cross-section or pitch) away; a stripline's top plane is solid. Everything
between the plane and the trace is the layered dielectric of the cross-section; the hatch openings
hold ``opening_er``; layers under the plane may be given (``layers_under``), then air.

Mesh: graded geometrically (ratio 1.6) away from every trace edge and interface, cells of
``smallest feature / cells_per_feature`` next to them; at 90 degrees every hatch edge is a mesh
line too. A 45-degree hatch cannot follow a rectilinear mesh: its copper is the set of mesh nodes
inside the lines (a staircase) on a uniform in-plane spacing of ``min(line width, opening) /
hatch_cells`` over ``lateral_pitches`` periods either side of the trace; this is the largest
discretisation error at 45 degrees (see the convergence history in the tests).

Limits (stated plainly)
-----------------------
* Quasi-static TEM: the line is treated as a uniform line whose C and L are the period averages.
  The inductance is taken from the air capacitance, ``L = 1 / (c0^2 C_a)``. That is exact for a
  2-D (TEM) line, but over a hatch the return current must flow along the hatch lines around the
  openings, and the magnetostatic L of the 3-D structure is in general larger than 1 / (c0^2 C_a):
  the solver's Z0 is then low and its eps_eff high (the relation is assumed, not computed).
* Periodic-structure limit: a line loaded with period P has its first stop band where the phase
  shift per period reaches pi (the Bragg condition, beta P = pi: L. Brillouin, *Wave Propagation
  in Periodic Structures*, McGraw-Hill 1946; Pozar 2012, sec. 8.1, from memory), i.e. at

  .. math:: f_{Bragg} = \\frac{c_0}{2 P \\sqrt{\\varepsilon_{eff}}}.

  The uniform-line (homogenised) description needs the period well below a tenth of the guided
  wavelength ("lambda / 10", common practice, no source), i.e. below

  .. math:: f_{qs} = \\frac{c_0}{10 P \\sqrt{\\varepsilon_{eff}}} = f_{Bragg} / 5.

  Above ``f_qs`` the impedance varies along the line, the hatch resonates and radiates; a full-wave
  solution or a measured coupon is needed.
* Lossless perfect conductors, isotropic dielectrics, rectangular traces; the trace centred over
  a mirror-symmetric position of the hatch (a 90-degree hatch: over a line or over an opening).
"""
from __future__ import annotations

import math
import time
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np
from strainline.models.fields import richardson
from strainline.models.fields.grid import bisect, graded_points
from strainline.models.hatch.geometry import Hatch
from strainline.models.hatch.grid3d import Mesh3, solve2, solve3
from strainline.models.hatch.section import (
    _PAIRS,
    _STRIPS,
    HatchResult,
    HatchSection,
    bragg_frequency_hz,
    quasi_static_limit_hz,
    section_from_geometry,
)
from strainline.models.units import C0, EPS0

#: Bumped whenever a change alters results (part of every cache key).
SOLVER_VERSION = "hatch-3d-1"
RATIO = 1.6


def _grow(a: float, b: float, h0: float, h_max: float = math.inf) -> np.ndarray:
    """Points from a (excluded) to b (included), cells growing by RATIO from h0 up to h_max."""
    sizes = []
    h, total = h0, 0.0
    while total + h < (b - a) - 0.5 * h:
        sizes.append(h)
        total += h
        h = min(h * RATIO, h_max)
    sizes.append((b - a) - total)
    if len(sizes) > 1 and sizes[-1] < 0.5 * sizes[-2]:
        last = sizes.pop()
        sizes[-1] += last
    return a + np.cumsum(sizes)


def _band(length: float, lo: float, hi: float, fine: float, coarse: float) -> np.ndarray:
    """Points on [0, length]: spacing ``fine`` on [lo, hi], growing to ``coarse`` outside."""
    lo, hi = max(lo, 0.0), min(hi, length)
    n = max(1, math.ceil((hi - lo) / fine - 1e-9))
    mid = np.linspace(lo, hi, n + 1)
    left = (lo - _grow(0.0, lo, fine, coarse)[::-1])[1:] if lo > 0 else np.empty(0)
    right = _grow(hi, length, fine, coarse) if hi < length else np.empty(0)
    return np.concatenate([[0.0] if lo > 0 else [], left, mid, right])


def _axes(sec: HatchSection, hatch: Hatch, cpf: float, hatch_cells: float, margin: float,
          lateral_pitches: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mesh lines x (from the centre plane), y and z (half a period)."""
    pair = sec.kind in _PAIRS
    strip = sec.kind in _STRIPS
    h = sum(a for a, _ in sec.layers)
    t, tp = sec.t, hatch.thickness_m
    x0 = 0.5 * sec.s if pair else 0.0
    x1 = x0 + (sec.w if pair else 0.5 * sec.w)
    feats = [x1 - x0, h] + [a for a, _ in sec.layers] + ([t] if t > 0 else [])
    feats += ([sec.cover] if sec.cover > 0 else []) + ([sec.h_top] if strip else [])
    feats += ([x0] if pair else []) + ([tp] if tp > 0 else [])
    h_min = min(feats) / cpf
    p, wh = hatch.pitch_m, min(hatch.line_width_m, hatch.pitch_m)
    opening = p - wh
    s_h = min(wh, opening) / hatch_cells if opening > 0 else wh / hatch_cells
    lz = 0.5 * hatch.period_m
    x_h = x1 + lateral_pitches * hatch.lateral_period_m
    top_local = h + t + (sec.h_top if strip else sec.cover)
    size = max(x_h, top_local, p)
    x_end = x_h + margin * size
    # x: graded from the trace (and 90-degree hatch edges), then grown to the side wall
    xkeys = [0.0, x0, x1, x_h]
    if hatch.angle_deg == 90.0 and opening > 0:
        c = hatch.offset_m + p * np.arange(-1, math.ceil(x_h / p) + 2)
        edges = np.concatenate([c - wh / 2, c + wh / 2])
        xkeys += [float(e) for e in edges if 0.0 < e < x_h]
        x_in = graded_points(xkeys, h_min, RATIO, max(s_h, h_min) * 4)
    else:
        # 45 degrees: fine (h / (2 cpf)) over the trace and 2 h beside it, s_h beyond
        h_all = h + t
        s_f = min(max(h_min, h_all / (2.0 * cpf)), s_h)
        x_b = x1 + 2.0 * h_all
        x_b = min(x_b, 0.5 * x_h)
        x_in = np.concatenate([graded_points([0.0, x0, x1, x_b], h_min, RATIO, s_f),
                               _grow(x_b, x_h, s_f, s_h)])
    x = np.concatenate([x_in, _grow(x_h, x_end, x_in[-1] - x_in[-2])])
    # z: half a period between the two mirror planes
    if opening <= 0:
        z = np.array([0.0, lz])
    elif hatch.angle_deg == 90.0:
        z = graded_points([0.0, 0.5 * wh, lz], h_min, RATIO, lz)
    else:
        # the hatch edges pass under the trace near z = w / sqrt 2 (+- the trace and 2 h)
        z_e = wh / math.sqrt(2.0)
        z = _band(lz, z_e - x_b, z_e + x_b, s_f, s_h)
    # y: far wall (or solid top plane), interfaces, hatched plane, layers under, far wall
    under = sum(a for a, _ in sec.layers_under)
    y_bot = -tp - under - margin * size
    y_top = top_local if strip else top_local + margin * size
    ykeys = [y_bot, -tp, 0.0, h, h + t, y_top]
    acc = 0.0
    for a, _ in sec.layers:
        acc += a
        ykeys.append(acc)
    acc = -tp
    for a, _ in sec.layers_under:
        acc -= a
        ykeys.append(acc)
    if sec.cover > 0:
        ykeys.append(h + t + sec.cover)
    y = graded_points(ykeys, h_min, RATIO, y_top - y_bot)
    return x, y, z


def _system(sec: HatchSection, hatch: Hatch, x: np.ndarray, y: np.ndarray, z: np.ndarray,
            solid: bool | None) -> tuple[Mesh3, np.ndarray, np.ndarray]:
    """Mesh with permittivity, fixed-node mask and potentials.

    ``solid``: True = a solid plane, False = the hatch, None = no plane at all.
    """
    pair = sec.kind in _PAIRS
    h = sum(a for a, _ in sec.layers)
    t, tp = sec.t, hatch.thickness_m
    x0 = 0.5 * sec.s if pair else 0.0
    x1 = x0 + (sec.w if pair else 0.5 * sec.w)
    mesh = Mesh3(x, y, z, _eps_y(sec, 0.5 * (y[:-1] + y[1:]), tp, h, t))
    nz, ny, nx = mesh.shape
    tol = 1e-9 * (y[-1] - y[0])
    fixed = np.zeros((nz, ny, nx), bool)
    value = np.zeros((nz, ny, nx))
    fixed[:, 0, :] = fixed[:, -1, :] = True
    fixed[:, :, -1] = True
    if pair:
        fixed[:, :, 0] = True       # odd mode: electric wall on the pair's centre plane
    m = ((y >= h - tol) & (y <= h + t + tol))[:, None] & ((x >= x0 - tol) & (x <= x1 + tol))[None, :]
    fixed[:, m] = True
    value[:, m] = 1.0
    plane_y = (y >= -tp - tol) & (y <= tol)
    if solid is None:
        cu = np.zeros((nz, nx), bool)
    else:
        cu = np.ones((nz, nx), bool) if solid else hatch.copper(x[None, :], z[:, None])
    fixed |= plane_y[None, :, None] & cu[:, None, :]
    return mesh, fixed.ravel(), value.ravel()


def _eps_y(sec: HatchSection, yc: np.ndarray, tp: float, h: float, t: float) -> np.ndarray:
    eps = np.ones_like(yc)
    acc = -tp
    for a, e in sec.layers_under:
        eps[(yc < acc) & (yc > acc - a)] = e
        acc -= a
    eps[(yc > -tp) & (yc < 0.0)] = sec.opening_er
    acc = 0.0
    for a, e in sec.layers:
        eps[(yc > acc) & (yc < acc + a)] = e
        acc += a
    if sec.kind in _STRIPS:
        eps[yc > h] = sec.er_top
    elif sec.cover > 0:
        eps[(yc > h) & (yc < h + t + sec.cover)] = sec.cover_er
    return eps


def _z(c: float, ca: float) -> float:
    return 1.0 / (C0 * math.sqrt(c * ca))


def _caps(sec: HatchSection, hatch: Hatch, x: np.ndarray, y: np.ndarray, z: np.ndarray,
          solid: bool) -> tuple[float, float, int]:
    """(C, C_a) per unit length, F/m (whole line; pairs: one line, odd mode) and unknowns."""
    mesh, fixed, value = _system(sec, hatch, x, y, z, solid)
    sol = solve3(mesh, fixed, value)
    k = (1.0 if sec.kind in _PAIRS else 2.0) * EPS0 / (z[-1] - z[0])
    return k * sol.c_rel, k * sol.c_air_rel, sol.unknowns


def _caps2(sec: HatchSection, hatch: Hatch, x: np.ndarray, y: np.ndarray,
           plane: bool | None = True) -> tuple[float, float]:
    """(C, C_a) per unit length, F/m, over a solid plane (2-D, same stencil); no plane if None."""
    mesh, fixed, value = _system(sec, hatch, x, y, np.array([0.0, 1.0]), plane)
    ny, nx = y.size, x.size
    c, ca = solve2(x, y, mesh.eps_y, fixed[: nx * ny], value[: nx * ny])
    k = (1.0 if sec.kind in _PAIRS else 2.0) * EPS0
    return k * c, k * ca


@lru_cache(maxsize=256)
def _solve_cached(sec: HatchSection, hatch: Hatch, cpf: float, hatch_cells: float, margin: float,
                  lateral_pitches: float) -> HatchResult:
    t0 = time.perf_counter()
    x, y, z = _axes(sec, hatch, cpf, hatch_cells, margin, lateral_pitches)
    c, ca, unknowns = _caps(sec, hatch, x, y, z, hatch.solid)
    # the solid plane on the same transverse mesh and on it bisected once and twice: the solution
    # is uniform along the line, two z nodes do; Richardson over the three gives the converged
    # solid-plane capacitances, and their ratio to the base mesh corrects the 3-D ones
    sol = np.array([_caps2(sec, hatch, bisect(x, lev), bisect(y, lev)) for lev in range(3)])
    cs, gs, _ = richardson(sol[:, 0])
    cas, gas, _ = richardson(sol[:, 1])
    c_corr = c * cs / sol[0, 0]
    ca_corr = ca * cas / sol[0, 1]
    m = 2.0 if sec.kind in _PAIRS else 1.0
    z0 = m * _z(c_corr, ca_corr)
    z_raw = m * _z(c, ca)
    zs_mesh = m * _z(sol[0, 0], sol[0, 1])
    e = c_corr / ca_corr
    fill = 1.0 if hatch.solid else hatch.fill
    return HatchResult(z0, e, c_corr, ca_corr, m * _z(cs, cas), z_raw, zs_mesh, z_raw / zs_mesh,
                       50.0 * (gs + gas), fill, bragg_frequency_hz(hatch.period_m, e),
                       quasi_static_limit_hz(hatch.period_m, e), unknowns,
                       time.perf_counter() - t0)


def hatch_solve(kind: str, geom: Any, hatch: Hatch, *, cells_per_feature: float = 3.0,
                hatch_cells: float = 6.0, open_margin: float = 15.0, lateral_pitches: float = 1.0,
                layers_below: Sequence[tuple[float, float]] | None = None,
                layers_under: Sequence[tuple[float, float]] = (),
                opening_er: float | None = None) -> HatchResult:
    """Impedance of a line over a hatched reference plane (3-D quasi-static field solution).

    Parameters
    ----------
    kind : {"microstrip", "stripline", "coupled-microstrip", "coupled-stripline"}
        Line type; the hatched plane is the one below the trace (a stripline's top plane is
        solid). Pairs are solved in the odd mode (the differential impedance).
    geom : LineGeometry
        One cross-section (scalar fields, SI), conventions as in
        :func:`strainline.models.fields.field_solve`.
    hatch : Hatch
        The hatched plane.
    cells_per_feature : float
        Cells across the smallest cross-section feature next to edges and interfaces.
    hatch_cells : float
        45 degrees: cells across the narrower of line width and opening (in-plane staircase).
    open_margin : float
        Far walls at this many times the largest dimension (cross-section or pitch).
    lateral_pitches : float
        Hatch periods resolved either side of the trace.
    layers_below : sequence of (thickness_m, dk), optional
        Layered dielectric between the plane and the trace (replaces ``height_m`` / ``er``).
    layers_under : sequence of (thickness_m, dk)
        Dielectric layers under the hatched plane, then air.
    opening_er : float, optional
        Dk in the hatch openings (default: the first layer under the plane, else 1).

    Returns
    -------
    HatchResult

    Raises
    ------
    ValueError
        Unknown kind or an invalid cross-section.
    """
    sec = section_from_geometry(kind, geom, layers_below, layers_under, opening_er)
    return _solve_cached(sec, hatch, float(cells_per_feature), float(hatch_cells),
                         float(open_margin), float(lateral_pitches))


def no_plane_impedance(kind: str, geom: Any, hatch: Hatch, *, cells_per_feature: float = 3.0,
                       hatch_cells: float = 6.0, open_margin: float = 15.0,
                       lateral_pitches: float = 1.0,
                       layers_below: Sequence[tuple[float, float]] | None = None,
                       layers_under: Sequence[tuple[float, float]] = (),
                       opening_er: float | None = None) -> float:
    """Impedance with the hatched plane removed (the far walls as the only return), ohm.

    Same cross-section mesh as :func:`hatch_solve` with the same arguments (no correction): the
    upper bound of the hatched-plane impedance on that mesh (removing grounded copper can only
    lower the capacitance, Dirichlet principle).
    """
    sec = section_from_geometry(kind, geom, layers_below, layers_under, opening_er)
    x, y, _ = _axes(sec, hatch, cells_per_feature, hatch_cells, open_margin, lateral_pitches)
    c, ca = _caps2(sec, hatch, x, y, None)
    return (2.0 if kind in _PAIRS else 1.0) * _z(c, ca)


@dataclass(frozen=True)
class HatchWidth:
    """Result of :func:`hatch_solve_width`: ``width_m`` (nan if not found), ``ok`` (within
    ``tol_pct`` of the target), the solution at that width and the 3-D solves used."""

    width_m: float
    ok: bool
    result: HatchResult
    solves: int


def hatch_solve_width(kind: str, target_ohm: float, geom: Any, hatch: Hatch, width_start_m: float,
                      *, tol_pct: float = 0.1, max_iter: int = 8, **kw: Any) -> HatchWidth:
    """Trace width for a target impedance over a hatched plane (secant in log Z vs log w).

    Parameters
    ----------
    kind, geom, hatch, **kw
        As in :func:`hatch_solve` (``geom.width_m`` is ignored).
    target_ohm : float
        Target impedance, ohm (pairs: differential).
    width_start_m : float
        Start width, m (e.g. the solid-plane width).
    tol_pct : float
        Acceptable mismatch, percent.
    max_iter : int
        Most 3-D solves.

    Returns
    -------
    HatchWidth
    """
    from dataclasses import replace as _replace

    if not (target_ohm > 0 and width_start_m > 0):
        raise ValueError("hatch_solve_width needs target_ohm > 0 and width_start_m > 0")

    def zf(w: float) -> HatchResult:
        return hatch_solve(kind, _replace(geom, width_m=w), hatch, **kw)

    xa = math.log(width_start_m)
    ra = zf(width_start_m)
    fa = math.log(ra.z0_ohm / target_ohm)
    solves = 1
    # first step: ln Z falls about half as fast as ln w (a first guess only)
    xb = xa + 2.0 * fa
    best = (abs(fa), xa, ra)
    while solves < max_iter:
        rb = zf(math.exp(xb))
        solves += 1
        fb = math.log(rb.z0_ohm / target_ohm)
        if abs(fb) < best[0]:
            best = (abs(fb), xb, rb)
        if abs(fb) * 100 <= tol_pct or fb == fa:
            break
        xa, fa, xb = xb, fb, xb - fb * (xb - xa) / (fb - fa)
    _err, xw, res = best
    ok = abs(res.z0_ohm / target_ohm - 1.0) * 100 <= tol_pct
    return HatchWidth(math.exp(xw) if ok else math.nan, ok, res, solves)
