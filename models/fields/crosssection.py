"""Field-solved impedance of one transmission-line cross-section, with a mesh-convergence estimate.

The public entry points take the same geometry record the closed forms use
(:class:`strainline.models.lines.LineGeometry`, scalar fields) and a line kind:

* :func:`field_solve` -- Z0 and eps_eff (pairs: odd, even, differential and common-mode figures)
  from a quasi-static 2-D finite-element solution, Richardson-extrapolated over three nested
  meshes, with an error estimate;
* :func:`field_solve_width` -- the width for a target impedance with the field solver (secant in
  log-width, starting from a closed-form width).

Quasi-static TEM theory: with C the capacitance per unit length with the dielectrics and C_a the
same in air,

.. math:: Z_0 = \\frac{1}{c_0\\sqrt{C\\,C_a}}, \\qquad \\varepsilon_{eff} = \\frac{C}{C_a}

(e.g. D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley 2012, ch. 3). Pairs use even- and odd-
mode symmetry: a magnetic wall on the symmetry plane for the even mode (and for a single line), an
electric wall for the odd mode; Z_diff = 2 Z_odd and Z_common = Z_even / 2 (exact for a symmetric
pair).

Cross-section conventions (all SI)
----------------------------------
* ``height_m`` of dielectric (Dk ``er``, or the layers given in ``layers_below``) between the
  plane at y = 0 and the trace's bottom face; the trace is a ``width_m`` x ``thickness_m``
  rectangle (zero thickness allowed).
* Microstrip, coupled microstrip and coplanar: a cover of ``cover_m`` (Dk ``cover_er``) over the
  trace's top face that also fills beside the trace down to the substrate; air above. The open top
  is a grounded box ``open_margin`` times the largest cross-section dimension away.
* Stripline kinds: a second plane ``height_top_m`` above the trace's top face (``nan`` = centred,
  ``height_top_m = height_m``); the dielectric above has Dk ``er_top`` (``nan`` = ``er``) and fills
  beside the trace; ``cover_m`` is ignored (as in the closed forms).
* Coplanar: side grounds of the trace's thickness at ``gap_m`` from each trace edge, reaching the
  side walls (effectively infinite) or ``ground_width_m`` wide; ``bottom_ground`` adds the plane at
  y = 0, otherwise the substrate has air below.
* Laterally the domain is closed by grounded walls ``open_margin`` times the largest dimension
  away (stripline: 10 plane spacings, where the field has decayed by exp(-10 pi)).
* Real layered sections (``layers_below``, ``layers_above``, ``fill``): each film, adhesive and
  cover its own band of (thickness, Dk[, loss tangent]) from the plane up to the trace, from the
  trace's top face up (a cover with air above it, or a stripline's gap up to its second plane),
  and the band of the copper's own thickness beside the trace (default: the first band above, air
  when there is none). With loss tangents the result carries ``tan_eff``, the electric-energy-
  weighted loss tangent, for the dielectric loss.

Convergence control
-------------------
A base mesh graded geometrically (ratio 1.6) from every conductor edge and interface, with cells
``smallest feature / cells_per_feature`` next to them, is bisected once and twice. The
capacitances of the three nested meshes give the observed order p of convergence and a
Richardson extrapolation (L. F. Richardson, Phil. Trans. R. Soc. A 210, 1911, pp. 307-357).
``error_estimate_pct`` is P. J. Roache's grid convergence index of the finest mesh
(J. Fluids Eng. 116, 1994, pp. 405-413; safety factor 1.25 with three meshes, 3 when the observed
order is unreliable), carried to Z0 (worst mode for pairs). It bounds the finest mesh's error; the
extrapolated figure returned is normally several times closer than that.
"""
from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from strainline.models.fields.grid import Box, Problem, bisect, graded_points, solve
from strainline.models.units import C0, EPS0

#: Line kinds the solver understands (same names as the closed forms).
FIELD_KINDS: tuple[str, ...] = (
    "microstrip", "stripline", "coupled-microstrip", "coupled-stripline", "coplanar",
)
PAIR_KINDS: tuple[str, ...] = ("coupled-microstrip", "coupled-stripline")
_STRIP_KINDS = ("stripline", "coupled-stripline")

#: Geometric growth ratio of the base mesh.
GRADING_RATIO = 1.6
#: Safety factors of the grid convergence index (Roache 1994): three meshes / unreliable order.
GCI_SAFETY = 1.25
GCI_SAFETY_UNRELIABLE = 3.0


@dataclass(frozen=True)
class FieldResult:
    """Field-solved line parameters of one cross-section (floats, SI; ``nan`` where unused).

    Attributes
    ----------
    z0_ohm : float
        Single line: characteristic impedance, ohm. Pairs: one line of the pair alone (``nan``
        when ``isolated_line=False`` was asked).
    eps_eff : float
        Single line: effective permittivity; pairs: the odd mode's.
    z_odd_ohm, z_even_ohm, z_diff_ohm, z_common_ohm : float
        Pair impedances, ohm (Z_diff = 2 Z_odd, Z_common = Z_even / 2); ``nan`` for single lines.
    eps_eff_odd, eps_eff_even : float
        Mode effective permittivities; ``nan`` for single lines.
    error_estimate_pct : float
        Grid convergence index of the impedance, percent (worst mode for pairs).
    order : float
        Observed order of convergence of the capacitance (worst mode), for diagnostics.
    nodes : int
        Unknowns of the finest mesh (per mode solve).
    cells_per_feature : float
        Base-mesh density used (after any refinement for ``max_estimate_pct``).
    tan_eff : float
        Electric-energy-weighted loss tangent of the (odd) mode on the finest mesh, for the
        dielectric loss alpha_d = pi sqrt(eps_eff) tan_eff / lambda0; ``nan`` when no layer
        carries a loss tangent.
    """

    z0_ohm: float
    eps_eff: float
    z_odd_ohm: float
    z_even_ohm: float
    z_diff_ohm: float
    z_common_ohm: float
    eps_eff_odd: float
    eps_eff_even: float
    error_estimate_pct: float
    order: float
    nodes: int
    cells_per_feature: float = math.nan
    tan_eff: float = math.nan

    @property
    def target_ohm(self) -> float:
        """The impedance a target refers to: ``z_diff_ohm`` for pairs, else ``z0_ohm``."""
        return self.z_diff_ohm if not math.isnan(self.z_diff_ohm) else self.z0_ohm


@dataclass(frozen=True)
class _Section:
    """A scalar cross-section resolved from a geometry record (SI).

    ``below``: (thickness, Dk, Df) from the bottom plane up to the trace's bottom face;
    ``above``: (thickness, Dk, Df) from the trace's top face up (stripline: to the top plane;
    outer lines: the cover bands, air above them); ``fill``: (Dk, Df) of the band beside the
    trace (the trace's own thickness).
    """

    kind: str
    w: float
    s: float
    t: float
    below: tuple[tuple[float, float, float], ...]
    above: tuple[tuple[float, float, float], ...]
    fill: tuple[float, float]
    bottom_ground: bool
    ground_width: float

    @property
    def layers(self) -> tuple[tuple[float, float], ...]:
        """(thickness, Dk) below the trace (older name)."""
        return tuple((a, e) for a, e, _ in self.below)

    @property
    def lossy(self) -> bool:
        return any(d > 0 for *_, d in self.below + self.above) or self.fill[1] > 0


def _scalar(geom: Any, name: str, default: float = math.nan) -> float:
    val = getattr(geom, name, default)
    arr = np.asarray(val, dtype=float)
    if arr.size != 1:
        raise ValueError(f"field solver takes one cross-section: {name} has {arr.size} values")
    return float(arr.reshape(-1)[0])


def _bands(layers: Sequence[Sequence[float]]) -> tuple[tuple[float, float, float], ...]:
    """(thickness, Dk[, Df]) entries as (thickness, Dk, Df), zero-thickness entries dropped."""
    out = []
    for lay in layers:
        a, e = float(lay[0]), float(lay[1])
        d = float(lay[2]) if len(lay) > 2 else 0.0
        if a > 0:
            out.append((a, e, d))
    return tuple(out)


def _section(kind: str, geom: Any, layers_below: Sequence[Sequence[float]] | None,
             ground_width_m: float | None,
             layers_above: Sequence[Sequence[float]] | None = None,
             fill: Sequence[float] | None = None) -> _Section:
    if kind not in FIELD_KINDS:
        raise ValueError(f"kind {kind!r} is not one of {list(FIELD_KINDS)}")
    w = _scalar(geom, "width_m")
    s = _scalar(geom, "gap_m")
    h = _scalar(geom, "height_m")
    t = _scalar(geom, "thickness_m")
    er = _scalar(geom, "er")
    h_top = _scalar(geom, "height_top_m")
    er_top = _scalar(geom, "er_top")
    cover = _scalar(geom, "cover_m", 0.0)
    cover_er = _scalar(geom, "cover_er", 1.0)
    bg = bool(np.asarray(getattr(geom, "bottom_ground", True)).reshape(-1)[0])
    below = _bands(layers_below) if layers_below is not None else ((h, er, 0.0),)
    checks = {"width_m": w > 0, "height_m": sum(a for a, *_ in below) > 0, "thickness_m": t >= 0,
              "er": all(e >= 1 for _, e, _ in below)}
    if kind in _STRIP_KINDS:
        if layers_above is not None:
            above = _bands(layers_above)
        else:
            h_top = sum(a for a, *_ in below) if math.isnan(h_top) else h_top
            er_top = below[-1][1] if math.isnan(er_top) else er_top
            above = ((h_top, er_top, 0.0),) if h_top > 0 else ()
            checks["height_top_m"] = h_top > 0
        checks["er_top"] = bool(above) and all(e >= 1 for _, e, _ in above)
    else:
        if layers_above is not None:
            above = _bands(layers_above)
        else:
            cover = 0.0 if math.isnan(cover) else cover
            checks.update(cover_m=cover >= 0, cover_er=(cover == 0) or cover_er >= 1)
            above = ((cover, cover_er, 0.0),) if cover > 0 else ()
        checks["cover_er"] = all(e >= 1 for _, e, _ in above)
    if fill is None:
        fill_t = (above[0][1], above[0][2]) if above else (1.0, 0.0)
    else:
        fill_t = (float(fill[0]), float(fill[1]) if len(fill) > 1 else 0.0)
    checks["fill"] = fill_t[0] >= 1
    if kind in PAIR_KINDS or kind == "coplanar":
        checks["gap_m"] = s > 0
    bad = [k for k, ok in checks.items() if not ok]
    if bad:
        raise ValueError(f"{kind} cross-section has invalid {', '.join(bad)}")
    gw = math.inf if ground_width_m is None else float(ground_width_m)
    return _Section(kind, w, s, t, below, above, fill_t, bg, gw)


def _problems(sec: _Section, mode: str, cells_per_feature: float, open_margin: float
              ) -> tuple[list[float], list[float], tuple[Box, ...], tuple[Box, ...], dict, float,
                         tuple[float, ...]]:
    """Key lines, dielectrics, conductors and walls of a half cross-section (x >= 0).

    ``mode`` is "single" (magnetic symmetry wall), "even" or "odd" (electric wall).
    Returns (x keys, y keys, dielectrics, conductors, walls, h_min, loss tangents).
    """
    kind = sec.kind
    h = sum(a for a, *_ in sec.below)
    t = sec.t
    pair = kind in PAIR_KINDS and mode != "single"
    x0 = sec.s / 2 if pair else 0.0
    x1 = x0 + (sec.w if pair else sec.w / 2)
    y_tr0, y_tr1 = h, h + t
    strip = kind in _STRIP_KINDS
    above_t = sum(a for a, *_ in sec.above)
    feats = [sec.w / 2 if not pair else sec.w, h] + [a for a, *_ in sec.below + sec.above]
    if pair:
        feats.append(sec.s / 2)
    if t > 0:
        feats.append(t)
    if kind == "coplanar":
        feats.append(sec.s)
    h_min = min(feats) / cells_per_feature

    conductors = [Box(x0, x1, y_tr0, y_tr1, 1.0)]
    xkeys = [0.0, x0, x1]
    ykeys = [0.0, y_tr0, y_tr1]
    y = 0.0
    for a, *_ in sec.below:
        y += a
        ykeys.append(y)
    y = y_tr1
    for a, *_ in sec.above:
        y += a
        ykeys.append(y)
    struct_w = x1 + (sec.s + (0 if math.isinf(sec.ground_width) else sec.ground_width)
                     if kind == "coplanar" else 0.0)
    if strip:
        top = h + t + above_t
        x_end = x1 + 10.0 * top
        ybot = 0.0
    else:
        size = max(struct_w, h + t + above_t, sec.s if kind == "coplanar" else 0.0)
        x_end = struct_w + open_margin * size
        top = h + t + above_t + open_margin * size
        ybot = 0.0 if (kind != "coplanar" or sec.bottom_ground) else -open_margin * size
        ykeys += [top, ybot]
    xkeys.append(x_end)
    if kind == "coplanar":
        g0 = x1 + sec.s
        g1 = x_end if math.isinf(sec.ground_width) else g0 + sec.ground_width
        conductors.append(Box(g0, g1, y_tr0, y_tr1, 0.0))
        xkeys += [g0, g1]

    diel: list[Box] = []
    tans: list[float] = []
    y = 0.0
    for a, e, d in sec.below:
        diel.append(Box(-1.0, x_end + 1.0, y, y + a, e))
        tans.append(d)
        y += a
    if t > 0 and (sec.fill[0] != 1.0 or sec.fill[1] > 0):
        diel.append(Box(-1.0, x_end + 1.0, y_tr0, y_tr1, sec.fill[0]))
        tans.append(sec.fill[1])
    y = y_tr1
    for a, e, d in sec.above:
        diel.append(Box(-1.0, x_end + 1.0, y, y + a, e))
        tans.append(d)
        y += a
    walls = {
        "left": "electric" if mode == "odd" else "magnetic",
        "right": "electric",
        "bottom": "electric",
        "top": "electric",
    }
    if ybot < 0:
        ykeys.append(ybot)
    return xkeys, ykeys, tuple(diel), tuple(conductors), walls, h_min, tuple(tans)


def _mode_capacitances(sec: _Section, mode: str, cells_per_feature: float, open_margin: float,
                       levels: int) -> tuple[np.ndarray, np.ndarray, int, float]:
    """Relative capacitance (with dielectric, in air) of one mode on ``levels`` nested meshes.

    Returns arrays of shape (levels,) in F/m, for the whole line (a centred single line is
    doubled from its half), the unknowns of the finest mesh and the energy-weighted loss
    tangent on the finest mesh (``nan`` for a lossless section).
    """
    xk, yk, diel, cond, walls, h_min, tans = _problems(sec, mode, cells_per_feature, open_margin)
    span = max(xk) - min(xk)
    xb = graded_points(xk, h_min, GRADING_RATIO, span)
    yb = graded_points(yk, h_min, GRADING_RATIO, max(yk) - min(yk))
    factor = 2.0 if mode == "single" else 1.0
    c = np.empty(levels)
    ca = np.empty(levels)
    nodes = 0
    tan = math.nan
    for lev in range(levels):
        last = lev == levels - 1
        sol = solve(Problem(bisect(xb, lev), bisect(yb, lev), diel, cond, walls,
                            tans if (last and sec.lossy) else ()))
        c[lev] = factor * EPS0 * sol.c_rel
        ca[lev] = factor * EPS0 * sol.c_air_rel
        nodes = sol.nodes
        tan = sol.tan_eff
    return c, ca, nodes, tan


def richardson(values: np.ndarray) -> tuple[float, float, float]:
    """Richardson extrapolation of a quantity computed on nested meshes halved each time.

    Parameters
    ----------
    values : array_like, shape (k,), k = 1, 2 or 3
        The quantity on meshes with cell size h, h/2 (and h/4); with one mesh the value is
        returned as it is with a ``nan`` estimate.

    Returns
    -------
    (value, gci_rel, order)
        The extrapolated value, the grid convergence index of the finest value relative to the
        extrapolated one (Roache 1994: Fs |f_fine - f_medium| / (2^p - 1) / |f|), and the order
        p used. With three meshes p is observed, log2 of the ratio of successive differences,
        accepted in [0.5, 4] (safety 1.25); otherwise p = 1 with safety 3.
    """
    v = np.asarray(values, dtype=float)
    if v.size == 1:
        return float(v[0]), math.nan, math.nan
    d2 = v[-2] - v[-1]
    p, fs = 1.0, GCI_SAFETY_UNRELIABLE
    if v.size >= 3:
        d1 = v[-3] - v[-2]
        if d1 * d2 > 0 and abs(d2) < abs(d1):
            p_obs = math.log2(d1 / d2)
            if 0.5 <= p_obs <= 4.0:
                p, fs = p_obs, GCI_SAFETY
    corr = d2 / (2.0 ** p - 1.0)
    ext = v[-1] - corr
    gci = fs * abs(corr) / abs(ext) if ext != 0 else math.inf
    return float(ext), float(gci), float(p)


def _mode_result(sec: _Section, mode: str, cells_per_feature: float, open_margin: float,
                 levels: int) -> tuple[float, float, float, float, int, float]:
    """(Z, eps_eff, gci of Z, order, nodes, tan_eff) of one mode."""
    c, ca, nodes, tan = _mode_capacitances(sec, mode, cells_per_feature, open_margin, levels)
    c_ext, gc, pc = richardson(c)
    ca_ext, ga, pa = richardson(ca)
    z = 1.0 / (C0 * math.sqrt(c_ext * ca_ext))
    return z, c_ext / ca_ext, 0.5 * (gc + ga), min(pc, pa), nodes, tan


def field_solve(kind: str, geom: Any, *, cells_per_feature: float = 3.0, levels: int = 3,
                open_margin: float = 60.0, isolated_line: bool = True, even_mode: bool = True,
                layers_below: Sequence[Sequence[float]] | None = None,
                ground_width_m: float | None = None,
                max_estimate_pct: float | None = None,
                layers_above: Sequence[Sequence[float]] | None = None,
                fill: Sequence[float] | None = None) -> FieldResult:
    """Field-solve one cross-section.

    Parameters
    ----------
    kind : {"microstrip", "stripline", "coupled-microstrip", "coupled-stripline", "coplanar"}
        Line type.
    geom : LineGeometry
        One cross-section (scalar fields, SI): ``width_m``, ``gap_m`` (pairs: edge-to-edge gap;
        coplanar: slot), ``height_m``, ``height_top_m``, ``thickness_m``, ``er``, ``er_top``,
        ``cover_m``, ``cover_er``, ``bottom_ground``. See the module notes for conventions.
    cells_per_feature : float
        Base-mesh cells across the smallest feature (the finest mesh has four times as many).
        3 (the default) reaches an error estimate of about 0.1 % on typical flex lines
        with finite copper thickness (a few tenths of a percent for zero thickness).
    levels : int
        Nested meshes (3: observed order and GCI with safety 1.25; 2: order 1 assumed, safety 3).
    open_margin : float
        Distance of the grounded box walls of open structures, in multiples of the largest
        cross-section dimension (the box perturbs Z0 by roughly its inverse square).
    isolated_line : bool
        Pairs: also solve one line of the pair alone for ``z0_ohm`` (otherwise ``nan``).
    even_mode : bool
        Pairs: also solve the even mode (otherwise ``z_even_ohm``, ``z_common_ohm`` and
        ``eps_eff_even`` are ``nan``; Z_diff needs the odd mode only).
    layers_below : sequence of (thickness_m, dk[, df]), optional
        Dielectric layers from the plane (y = 0) up to the trace's bottom face, overriding
        ``height_m`` and ``er`` (each layer its own Dk and, optionally, loss tangent).
    ground_width_m : float, optional
        Coplanar: width of each side ground, m (default: to the side walls).
    layers_above : sequence of (thickness_m, dk[, df]), optional
        Layers from the trace's top face up, overriding ``height_top_m``/``er_top`` (stripline
        kinds: up to the top plane) or ``cover_m``/``cover_er`` (other kinds: the cover bands,
        air above). Each is its own dielectric band: a real cover of adhesive and film, or the
        adhesive, film and adhesive of a laminate gap.
    fill : (dk[, df]), optional
        Dielectric beside the trace (the band of the copper's own thickness); default the first
        layer above (the adhesive or cover that flows around the trace), air when there is none.
    max_estimate_pct : float, optional
        Refine the base mesh (x1.6 cells per feature, at most twice) while the error estimate is
        above this, percent. Thin-copper-free (zero-thickness) strips need it most: their edge
        singularity makes the estimate conservative but large.

    Returns
    -------
    FieldResult

    Raises
    ------
    ValueError
        Unknown kind, or a non-physical cross-section (non-positive width/height/gap, Dk < 1),
        or non-scalar fields.

    Notes
    -----
    Validity: quasi-static TEM (or quasi-TEM) propagation -- cross-section small against the
    wavelength, lossless perfect conductors, isotropic dielectrics. Rectangular conductors (no
    etch trapezoid), perfectly smooth.
    """
    sec = _section(kind, geom, layers_below, ground_width_m, layers_above, fill)
    res = _field_solve(sec, kind, cells_per_feature, open_margin, levels, isolated_line, even_mode)
    refinements = 0
    while (max_estimate_pct is not None and res.error_estimate_pct > max_estimate_pct
           and refinements < 2):
        refinements += 1
        cells_per_feature *= 1.6
        res = _field_solve(sec, kind, cells_per_feature, open_margin, levels, isolated_line,
                           even_mode)
    return res


def _field_solve(sec: _Section, kind: str, cells_per_feature: float, open_margin: float,
                 levels: int, isolated_line: bool, even_mode: bool) -> FieldResult:
    nan = math.nan
    args = (cells_per_feature, open_margin, levels)
    if kind in PAIR_KINDS:
        zo, eo, go, po, n1, to = _mode_result(sec, "odd", *args)
        ze = ee = nan
        ge, pe = 0.0, math.inf
        if even_mode:
            ze, ee, ge, pe, _, _ = _mode_result(sec, "even", *args)
        z0 = nan
        g0, p0 = 0.0, math.inf
        if isolated_line:
            z0, _, g0, p0, _, _ = _mode_result(sec, "single", *args)
        return FieldResult(z0, eo, zo, ze, 2 * zo, ze / 2, eo, ee,
                           100 * max(go, ge, g0), min(po, pe, p0), n1, cells_per_feature, to)
    z, e, g, p, n, tn = _mode_result(sec, "single", *args)
    return FieldResult(z, e, nan, nan, nan, nan, nan, nan, 100 * g, p, n, cells_per_feature, tn)


def _with_width(geom: Any, width_m: float) -> Any:
    from dataclasses import replace
    return replace(geom, width_m=width_m)


@dataclass(frozen=True)
class WidthSolution:
    """Result of :func:`field_solve_width`.

    Attributes
    ----------
    width_m : float
        Field-solved width for the target, m (``nan`` when not found).
    ok : bool
        True when the full solve at ``width_m`` is within ``tol_pct`` of the target and inside
        [width_min_m, width_max_m].
    result : FieldResult
        Full field solution at ``width_m`` (or at the last width tried when not ok); for pairs the
        odd mode only (the target Z_diff = 2 Z_odd needs nothing else).
    solves : int
        Field solves used (cheap and full).
    """

    width_m: float
    ok: bool
    result: FieldResult
    solves: int


def field_solve_width(kind: str, target_ohm: float, geom: Any, width_start_m: float, *,
                      width_min_m: float = 0.0, width_max_m: float = math.inf,
                      tol_pct: float = 0.05, max_iter: int = 12, max_rounds: int = 4,
                      cells_per_feature: float = 3.0, open_margin: float = 60.0,
                      layers_below: Sequence[Sequence[float]] | None = None,
                      ground_width_m: float | None = None,
                      start: FieldResult | None = None,
                      layers_above: Sequence[Sequence[float]] | None = None,
                      fill: Sequence[float] | None = None) -> WidthSolution:
    """Width for a target impedance with the field solver (secant in log-width).

    The target is Z0 for single lines and Z_diff for pairs. A full three-mesh solve at the start
    width fixes the ratio of the extrapolated to the medium-mesh impedance; the secant then runs
    on cheap medium-mesh solves scaled by that ratio, and a full solve at the result confirms it
    (repeating with the updated ratio if it misses by more than ``tol_pct``).

    Parameters
    ----------
    kind : str
        Line type (see :func:`field_solve`).
    target_ohm : float
        Target impedance, ohm.
    geom : LineGeometry
        Scalar cross-section; ``width_m`` is ignored.
    width_start_m : float
        Start width, m (normally the closed-form width).
    width_min_m, width_max_m : float
        Range the secant may explore, m; a result outside it is returned with ``ok`` False.
    tol_pct : float
        Acceptable impedance mismatch of the full solve, percent.
    max_iter : int
        Most cheap secant steps in total.
    max_rounds : int
        Most confirming full solves after the start (each may re-scale the cheap model).
    cells_per_feature, open_margin, layers_below, ground_width_m, layers_above, fill
        As in :func:`field_solve`.
    start : FieldResult, optional
        A full solve already made at ``width_start_m`` (saves one solve).

    Returns
    -------
    WidthSolution
    """
    if not (target_ohm > 0 and width_start_m > 0):
        raise ValueError("field_solve_width needs target_ohm > 0 and width_start_m > 0")
    kw = dict(cells_per_feature=cells_per_feature, open_margin=open_margin,
              layers_below=layers_below, ground_width_m=ground_width_m,
              layers_above=layers_above, fill=fill)
    solves = 0

    def full(w: float) -> FieldResult:
        nonlocal solves
        solves += 1
        return field_solve(kind, _with_width(geom, w), isolated_line=False, even_mode=False, **kw)

    def cheap(w: float) -> float:
        nonlocal solves
        solves += 1
        r = field_solve(kind, _with_width(geom, w), isolated_line=False, even_mode=False, levels=1,
                        cells_per_feature=cells_per_feature * 2.0, open_margin=open_margin,
                        layers_below=layers_below, ground_width_m=ground_width_m,
                        layers_above=layers_above, fill=fill)
        return r.target_ohm

    w0 = float(width_start_m)
    res = start if start is not None else full(w0)
    lo = max(width_min_m, 1e-3 * w0) if width_min_m > 0 else 1e-3 * w0
    hi = min(width_max_m, 1e3 * w0) if math.isfinite(width_max_m) else 1e3 * w0
    lo_log, hi_log = math.log(lo / 3.0), math.log(hi * 3.0)
    steps = 0
    rounds = 0
    w_full = w0
    while True:
        z_full = res.target_ohm
        if (abs(z_full / target_ohm - 1.0) * 100 <= tol_pct or steps >= max_iter
                or rounds >= max_rounds):
            break
        rounds += 1
        # scale the cheap model to the full solution at the current full-solve width
        ratio = z_full / cheap(w_full)
        xa, fa = math.log(w_full), z_full - target_ohm
        # second point: impedance falls with width, d ln Z / d ln w ~ -0.5 as a first guess
        xb = xa + 2.0 * math.log(z_full / target_ohm)
        xb = min(max(xb, lo_log), hi_log)
        fb = ratio * cheap(math.exp(xb)) - target_ohm
        steps += 1
        while abs(fb / target_ohm) * 100 > tol_pct / 4 and steps < max_iter:
            if fb == fa:
                break
            xn = xb - fb * (xb - xa) / (fb - fa)
            xn = min(max(xn, lo_log), hi_log)
            xa, fa = xb, fb
            xb = xn
            fb = ratio * cheap(math.exp(xb)) - target_ohm
            steps += 1
        w_full = math.exp(xb)
        res = full(w_full)
    ok = (abs(res.target_ohm / target_ohm - 1.0) * 100 <= tol_pct
          and width_min_m <= w_full <= width_max_m)
    return WidthSolution(w_full, bool(ok), res, solves)
