r"""Bend mechanics of laminated flex stacks, vectorized over candidates.

Every array is (n, L): a row is a candidate, columns are layers listed **top to bottom**;
zero-thickness padding layers are allowed. Heights ``y`` are measured from the bottom face of the
whole stack. Strain is a fraction, tension positive. ``inner_radius_m`` is the radius of the inner
(concave) face of the bend, the face lying on the mandrel.

Model (Euler-Bernoulli kinematics: plane sections stay plane, perfect bonding inside a leaf, the
strip starts straight). A fibre at height ``y`` bent with the bottom face inside lies at radius
``R + y``; the neutral fibre keeps its length, so the exact engineering strain is

.. math::

    \varepsilon(y) = \frac{y - y_{NA}}{R + y_{NA}} \quad\text{(bottom face inside)},\qquad
    \varepsilon(y) = \frac{y_{NA} - y}{R + T - y_{NA}} \quad\text{(top face inside)}.

Free ends carry no axial force, which puts the neutral axis at the modulus-weighted centroid
(transformed section),

.. math::  y_{NA} = \sum E_i t_i y_{c,i} / \sum E_i t_i .

Unbonded (air-gap) regions: each bonded leaf bends about its own neutral axis; leaves are nested on
the same mandrel, so leaf k's inner radius is R plus everything between it and the mandrel (air gaps
included). With global heights that leaves the strain formulas above unchanged, with ``y_NA`` the
neutral axis of the fibre's own leaf.

Validity: thin-beam kinematics (radius large against the thickness; results for R < T are
approximate), no membrane force (ends free to slide), perfect bonding inside a leaf, no slip between
bonded layers, linear-elastic layers (see :func:`epp_bend_strains` for yielding copper).

References
----------
.. [1] J. M. Gere and S. P. Timoshenko, *Mechanics of Materials*, 4th ed., PWS, 1997, composite beams
   (transformed-section method).
.. [2] S. P. Timoshenko and S. Woinowsky-Krieger, *Theory of Plates and Shells*, 2nd ed.,
   McGraw-Hill, 1959 (plane-strain modulus E / (1 - nu^2) for wide strips).
.. [3] R. M. Jones, *Mechanics of Composite Materials*, 2nd ed., Taylor & Francis, 1999 (Voigt rule
   of mixtures, iso-strain bound).
.. [4] IPC-2223, *Sectional Design Standard for Flexible/Rigid-Flexible Printed Boards*, IPC
   (bend-radius formulas; printed form from memory, see :func:`ipc2223_single_sided_radius`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "BendStrains",
    "layer_heights",
    "effective_modulus",
    "neutral_axis",
    "bend_strains",
    "min_inner_radius",
    "epp_bend_strains",
    "axial_force",
    "ipc2223_single_sided_radius",
    "ipc2223_double_sided_radius",
]


@dataclass(frozen=True)
class BendStrains:
    """Strains of a batch of bent stacks; every field is (n, L), layers top to bottom.

    Fields
    ------
    y_na_m : height of the neutral axis of the leaf each layer belongs to, m, from the bottom face.
    strain_top, strain_bottom : strain at the layer's top and bottom face (fraction, tension +).
    leaf_inner_radius_m : inner radius of the leaf each layer belongs to, m.
    """

    y_na_m: np.ndarray
    strain_top: np.ndarray
    strain_bottom: np.ndarray
    leaf_inner_radius_m: np.ndarray


def _as_2d(x) -> np.ndarray:
    a = np.asarray(x, dtype=float)
    return a.reshape(1, -1) if a.ndim == 1 else a


def _rows(x, n: int, dtype=float) -> np.ndarray:
    """A scalar or (n,) argument as an (n, 1) column."""
    a = np.asarray(x, dtype=dtype)
    return np.broadcast_to(a.reshape(-1), (n,)).reshape(n, 1) if a.ndim <= 1 else a


def layer_heights(thickness_m) -> tuple[np.ndarray, np.ndarray]:
    """Bottom and top face heights of every layer, m, from the bottom face of the stack.

    Parameters
    ----------
    thickness_m : array_like, (n, L)
        Layer thicknesses, m, layers top to bottom.

    Returns
    -------
    y_bottom, y_top : ndarray, (n, L)
    """
    t = _as_2d(thickness_m)
    y_bottom = t.sum(axis=1, keepdims=True) - np.cumsum(t, axis=1)
    y_bottom = np.maximum(y_bottom, 0.0)
    return y_bottom, y_bottom + t


def effective_modulus(modulus_pa, coverage, fill_modulus_pa) -> np.ndarray:
    """Voigt (iso-strain) homogenised modulus of a patterned copper layer, Pa.

    .. math:: E_{eff} = f E_{Cu} + (1 - f) E_{fill}

    Exact under beam assumptions for strips running along the strain (traces crossing the fold at
    90 degrees); an upper bound otherwise (Jones 1999, *Mechanics of Composite Materials*).

    Parameters
    ----------
    modulus_pa : array_like
        Copper modulus, Pa.
    coverage : array_like
        Copper area fraction f, in (0, 1].
    fill_modulus_pa : array_like
        Modulus of the fill between copper features, Pa (0 for air).

    Returns
    -------
    ndarray
        Broadcast shape of the inputs, Pa.
    """
    f = np.asarray(coverage, dtype=float)
    return f * np.asarray(modulus_pa, dtype=float) + (1.0 - f) * np.asarray(fill_modulus_pa, dtype=float)


def neutral_axis(thickness_m, modulus_pa) -> np.ndarray:
    """Neutral-axis height of one bonded stack by the transformed-section method, m.

    .. math:: y_{NA} = \\sum_i E_i t_i y_{c,i} / \\sum_i E_i t_i

    (Gere & Timoshenko, *Mechanics of Materials*, composite beams). Independent of the radius while
    every layer is linear-elastic. A row with no stiffness returns its mid-thickness.

    Parameters
    ----------
    thickness_m : array_like, (n, L)
        Layer thicknesses, m, top to bottom.
    modulus_pa : array_like, (n, L)
        Effective layer moduli, Pa (0 for air gaps).

    Returns
    -------
    ndarray, (n,)
        Height above the bottom face, m.
    """
    t, e = np.broadcast_arrays(_as_2d(thickness_m), _as_2d(modulus_pa))
    yb, yt = layer_heights(t)
    return _na(t, e, yb, yt)


def _na(t, e, yb, yt):
    ea = e * t
    s = ea.sum(axis=1)
    m = (ea * (yb + yt)).sum(axis=1) * 0.5
    return np.where(s > 0, m / np.where(s > 0, s, 1.0), 0.5 * yt[:, 0])


class _Segments:
    """Contiguous runs of equal leaf ids along each row (a leaf is such a run), for segment sums."""

    def __init__(self, leaf, n: int, L: int) -> None:
        lf = np.broadcast_to(np.asarray(leaf), (n, L))
        j = np.arange(L)
        change = np.ones((n, L), dtype=bool)
        change[:, 1:] = lf[:, 1:] != lf[:, :-1]
        is_end = np.ones((n, L), dtype=bool)
        is_end[:, :-1] = change[:, 1:]
        start = np.maximum.accumulate(np.where(change, j, 0), axis=1)
        end = np.minimum.accumulate(np.where(is_end, j, L - 1)[:, ::-1], axis=1)[:, ::-1]
        base = (np.arange(n) * (L + 1))[:, None]
        self.n, self.L = n, L
        self.lo = base + start            # flat index of the cumulative sum before the run
        self.hi = base + end + 1          # flat index of the cumulative sum at the run's end
        flat = (np.arange(n) * L)[:, None]
        self.first = flat + start         # flat (n, L) index of the run's first (top) layer
        self.last = flat + end            # ... and of its last (bottom) layer

    def sum(self, x) -> np.ndarray:
        """Sum of x (n, L) over each layer's run, per layer (n, L)."""
        cs = np.zeros((self.n, self.L + 1))
        np.cumsum(x, axis=1, out=cs[:, 1:])
        flat = cs.ravel()
        return flat[self.hi] - flat[self.lo]


def _leaf_axes(t, e, yb, yt, leaf):
    """Per-layer (leaf NA, leaf bottom, leaf top): (n, 1) arrays without leaves, (n, L) with them."""
    n, L = t.shape
    if leaf is None:
        return _na(t, e, yb, yt)[:, None], np.zeros((n, 1)), yt[:, :1]
    seg = _Segments(leaf, n, L)
    ea = e * t
    s = seg.sum(ea)
    m = seg.sum(ea * (yb + yt)) * 0.5
    bot = yb.ravel()[seg.last]
    top = yt.ravel()[seg.first]
    na = np.where(s > 0, m / np.where(s > 0, s, 1.0), 0.5 * (bot + top))
    return na, bot, top


def _bend_frame(r, ib, total):
    """Per-row constants of the exact strain: eps = sign (y - y_NA) / (base + sign y_NA)."""
    sign = np.where(ib, 1.0, -1.0)
    base = np.where(ib, r, r + total)
    return sign, base


def _face_strains(yb, yt, y_na, sign, base):
    """Exact strains at the top and bottom faces for given NA heights; also the denominator R_NA."""
    den = base + sign * y_na
    with np.errstate(divide="ignore", invalid="ignore"):
        k = sign / den
    return k * (yt - y_na), k * (yb - y_na), den


def bend_strains(thickness_m, modulus_pa, inner_radius_m, inside_bottom=True, leaf=None) -> BendStrains:
    """Exact strain at the top and bottom face of every layer of bent flex stacks.

    .. math::

        \\varepsilon = \\frac{y - y_{NA}}{R + y_{NA}} \\;\\text{(bottom inside)},\\qquad
        \\varepsilon = \\frac{y_{NA} - y}{R + T - y_{NA}} \\;\\text{(top inside)}

    with ``y_NA`` from the transformed section of the layer's own bonded leaf (module docstring;
    Gere & Timoshenko, *Mechanics of Materials*).

    Parameters
    ----------
    thickness_m : array_like, (n, L)
        Layer thicknesses, m, top to bottom (air gaps included with their thickness).
    modulus_pa : array_like, (n, L)
        Effective moduli, Pa (after coverage; plane-strain if wanted; 0 for air gaps).
    inner_radius_m : float or array_like, (n,)
        Radius of the inner face of the bend, m, >= 0.
    inside_bottom : bool or array_like of bool, (n,)
        True when the bottom face is the inside of the bend.
    leaf : array_like of int, (n, L), optional
        Bonded-leaf id of each layer; a leaf is a contiguous run of equal ids along the row. None:
        one bonded stack.
        A leaf without stiffness (an air gap given its own id) gets its geometric mid-height as
        axis; its strains have no physical meaning.

    Returns
    -------
    BendStrains
        Every field (n, L).

    Notes
    -----
    Valid for thin-beam kinematics; at R below the stack thickness the plane-section assumption is
    approximate. Elastic layers only: copper above its yield strain makes the result approximate
    (see :func:`epp_bend_strains`).
    """
    t, e = np.broadcast_arrays(_as_2d(thickness_m), _as_2d(modulus_pa))
    n, _ = t.shape
    r = _rows(inner_radius_m, n)
    ib = _rows(inside_bottom, n, dtype=bool)
    yb, yt = layer_heights(t)
    total = yt[:, :1]
    y_na, lbot, ltop = _leaf_axes(t, e, yb, yt, leaf)
    sign, base = _bend_frame(r, ib, total)
    s_top, s_bot, _ = _face_strains(yb, yt, y_na, sign, base)
    leaf_r = np.where(ib, r + lbot, r + total - ltop)
    return BendStrains(np.broadcast_to(y_na, (n, t.shape[1])).copy(), s_top, s_bot, leaf_r)


def min_inner_radius(thickness_m, modulus_pa, is_copper, strain_limit, inside_bottom=True, leaf=None) -> np.ndarray:
    """Smallest inner bend radius keeping every copper face at or below a strain limit, m.

    Closed-form inverse of the exact strain: a face at distance ``d = |y - y_NA|`` from its leaf's
    axis has ``|eps| = d / (R + y_NA)`` (bottom inside), so

    .. math:: R_{min} = \\max_{\\text{Cu faces}} \\left( d / \\varepsilon_{lim} - y_{NA} \\right)

    and ``d / eps_lim - (T - y_NA)`` with the top face inside; clipped at 0 (any radius is fine).
    Elastic model (the NA does not depend on R).

    Parameters
    ----------
    thickness_m, modulus_pa : array_like, (n, L)
        As for :func:`bend_strains`.
    is_copper : array_like of bool, (n, L)
        Which layers are copper.
    strain_limit : float or array_like, (n,) or (n, L)
        Allowed strain magnitude (fraction, > 0); per layer where it depends on the foil.
    inside_bottom, leaf
        As for :func:`bend_strains`.

    Returns
    -------
    ndarray, (n,)
        Minimum inner radius, m (0 for rows without copper).
    """
    t, e = np.broadcast_arrays(_as_2d(thickness_m), _as_2d(modulus_pa))
    n, L = t.shape
    cu = np.broadcast_to(np.asarray(is_copper, dtype=bool), (n, L))
    lim = np.asarray(strain_limit, dtype=float)
    lim = lim.reshape(-1, 1) if lim.ndim == 1 else lim
    ib = _rows(inside_bottom, n, dtype=bool)
    yb, yt = layer_heights(t)
    total = yt[:, :1]
    y_na, _, _ = _leaf_axes(t, e, yb, yt, leaf)
    d = np.maximum(np.abs(yt - y_na), np.abs(yb - y_na))
    offset = np.where(ib, y_na, total - y_na)
    with np.errstate(divide="ignore", invalid="ignore"):
        need = d / lim - offset
    need = np.where(cu, need, -np.inf)
    return np.maximum(need.max(axis=1), 0.0)


def _clip_antiderivative(eps, cap):
    """Antiderivative of clip(e, -cap, cap) in e, F(0) = 0: 0.5 (a^2 - max(a - cap, 0)^2), a = |e|."""
    a = np.abs(eps)
    over = np.maximum(a - cap, 0.0)
    return 0.5 * (a * a - over * over)


def axial_force(thickness_m, modulus_pa, yielding_modulus_pa, yield_strain, strain_top, strain_bottom) -> np.ndarray:
    """Axial force per unit width carried by each layer for linear strain through it, N/m.

    The elastic part ``(E - E_y)`` carries its mean strain times the thickness; the yielding part
    ``E_y`` carries ``E_y clip(eps, -eps_y, eps_y)`` (elastic-perfectly-plastic), integrated exactly
    over the linear strain profile: ``t (F(eps_top) - F(eps_bottom)) / (eps_top - eps_bottom)`` with F
    the antiderivative of the clipped strain.

    Parameters
    ----------
    thickness_m, modulus_pa, yielding_modulus_pa, yield_strain, strain_top, strain_bottom : (n, L)
        Thickness (m), effective modulus (Pa), the yielding copper part of it (Pa), the copper
        elastic-limit strain, and the face strains.

    Returns
    -------
    ndarray, (n, L)
    """
    t = np.asarray(thickness_m, dtype=float)
    e = np.asarray(modulus_pa, dtype=float)
    ey = np.asarray(yielding_modulus_pa, dtype=float)
    cap = np.asarray(yield_strain, dtype=float)
    et, eb = np.asarray(strain_top, dtype=float), np.asarray(strain_bottom, dtype=float)
    diff = et - eb
    small = np.abs(diff) < 1e-15
    with np.errstate(divide="ignore", invalid="ignore"):
        mean_clip = np.where(small, np.clip(0.5 * (et + eb), -cap, cap),
                             (_clip_antiderivative(et, cap) - _clip_antiderivative(eb, cap))
                             / np.where(small, 1.0, diff))
    return (e - ey) * t * 0.5 * (et + eb) + np.where(ey > 0, ey * t * mean_clip, 0.0)


def epp_bend_strains(thickness_m, modulus_pa, yielding_modulus_pa, yield_strain, inner_radius_m,
                     inside_bottom=True, leaf=None, iterations: int = 48) -> BendStrains:
    """Strains with elastic-perfectly-plastic copper: the neutral axis from axial-force balance.

    The mandrel imposes the curvature, so strain stays the exact kinematic strain of
    :func:`bend_strains`, but copper stress saturates at ``+/- E eps_y``; the neutral axis of each
    leaf is where the axial force (:func:`axial_force`) sums to zero. The force decreases
    monotonically with ``y_NA`` (bottom inside; increases with the top inside), so a vectorized
    bisection between the leaf's bottom and top faces finds it for every row at once.

    Parameters
    ----------
    thickness_m, modulus_pa : array_like, (n, L)
        As for :func:`bend_strains`.
    yielding_modulus_pa : array_like, (n, L)
        The part of ``modulus_pa`` carried by copper that yields (f E_Cu; 0 for dielectrics), Pa.
    yield_strain : array_like, (n, L)
        Copper elastic-limit strain sigma_y / E (any value where ``yielding_modulus_pa`` is 0).
    inner_radius_m, inside_bottom, leaf
        As for :func:`bend_strains`.
    iterations : int
        Bisection steps (48 halve a 1 mm bracket to below 1e-17 m).

    Returns
    -------
    BendStrains

    Notes
    -----
    Monotonic loading, no hardening, no Bauschinger effect; plane sections (Euler-Bernoulli).
    Reduces to :func:`bend_strains` when no copper reaches its yield strain. The elastic-perfectly-
    plastic idealisation is the textbook one (e.g. N. E. Dowling, *Mechanical Behavior of
    Materials*, Prentice Hall); its use for flex copper is derived in strainline's bending note §1.8.

    The per-layer force is evaluated without division: with ``eps = sign (y - y_NA) / den``, a
    layer's yielding part carries ``E_y sign den (F(eps_top) - F(eps_bottom))`` and the elastic parts
    sum in closed form to ``sign (M_e - S_e y_NA) / den``.
    """
    t, e, ey, cap = np.broadcast_arrays(_as_2d(thickness_m), _as_2d(modulus_pa),
                                        _as_2d(yielding_modulus_pa), _as_2d(yield_strain))
    n, L = t.shape
    r = _rows(inner_radius_m, n)
    ib = _rows(inside_bottom, n, dtype=bool)
    yb, yt = layer_heights(t)
    total = yt[:, :1]
    sign, base = _bend_frame(r, ib, total)
    _, lo, hi = _leaf_axes(t, e, yb, yt, leaf)
    lo, hi = np.array(np.broadcast_to(lo, (n, L) if leaf is not None else (n, 1))), np.array(
        np.broadcast_to(hi, (n, L) if leaf is not None else (n, 1)))
    ee = (e - ey) * t                         # elastic E t per layer
    ee_y = ee * 0.5 * (yb + yt)
    cu_cols = np.flatnonzero((ey > 0).any(axis=0))     # columns where any row has yielding copper
    ey_c, cap_c = ey[:, cu_cols], cap[:, cu_cols]
    yb_c, yt_c = yb[:, cu_cols], yt[:, cu_cols]
    if leaf is None:
        s_e = ee.sum(axis=1, keepdims=True)
        m_e = ee_y.sum(axis=1, keepdims=True)
    else:
        seg = _Segments(leaf, n, L)

        def leaf_sum(x, cols=None):
            if cols is not None:
                full = np.zeros((n, L))
                full[:, cols] = x
                x = full
            return seg.sum(x)

        s_e, m_e = leaf_sum(ee), leaf_sum(ee_y)
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        den = base + sign * mid
        mid_c = mid if leaf is None else mid[:, cu_cols]
        den_c = den if leaf is None else den[:, cu_cols]
        k = sign / den_c
        fp = ey_c * (sign * den_c) * (_clip_antiderivative(k * (yt_c - mid_c), cap_c)
                                      - _clip_antiderivative(k * (yb_c - mid_c), cap_c))
        if leaf is None:
            force = sign * (m_e - s_e * mid) / den + fp.sum(axis=1, keepdims=True)
        else:
            force = sign * (m_e - s_e * mid) / den + leaf_sum(fp, cu_cols)
        go_up = np.where(ib, force > 0, force < 0)
        lo = np.where(go_up, mid, lo)
        hi = np.where(go_up, hi, mid)
    y_na = 0.5 * (lo + hi)
    s_top, s_bot, _ = _face_strains(yb, yt, y_na, sign, base)
    _, lbot, ltop = _leaf_axes(t, e, yb, yt, leaf)
    leaf_r = np.where(ib, r + lbot, r + total - ltop)
    return BendStrains(np.broadcast_to(y_na, (n, L)).copy(), s_top, s_bot, leaf_r)


def ipc2223_single_sided_radius(copper_m, cover_m, allowable_strain) -> np.ndarray:
    """IPC-2223 minimum inside bend radius of a single-sided flex, m.

    .. math:: R = \\frac{c}{2}\\,\\frac{100 - E_B}{E_B} - D

    written here with ``allowable_strain = E_B / 100`` as a fraction. It is the exact strain
    evaluated at the outer copper face with the neutral axis at the copper mid-plane (a balanced
    build); see strainline's bending note §2.1.

    Parameters
    ----------
    copper_m : array_like
        Copper thickness c, m.
    cover_m : array_like
        Dielectric D between the copper and the inner face of the bend, m.
    allowable_strain : array_like
        Allowable copper deformation E_B / 100 (fraction, > 0).

    Returns
    -------
    ndarray
        Inside radius, m (may be negative when any radius is allowed).

    References
    ----------
    IPC-2223 (rev. D 2016 / E 2020), bend-radius formula; printed form **from memory**, corroborated
    for the single-sided case by a secondary reproduction (bending note [S 2]); not checked against
    the standard.
    """
    c = np.asarray(copper_m, dtype=float)
    eb = np.asarray(allowable_strain, dtype=float)
    return 0.5 * c * (1.0 - eb) / eb - np.asarray(cover_m, dtype=float)


def ipc2223_double_sided_radius(copper_m, core_m, cover_m, allowable_strain) -> np.ndarray:
    """IPC-2223 minimum inside bend radius of a double-sided flex, m.

    .. math:: R = \\left(\\frac{d}{2} + c\\right)\\frac{100 - E_B}{E_B} - D

    The exact strain at the outer copper face with the neutral axis at the core mid-plane (a
    symmetric build).

    Parameters
    ----------
    copper_m : array_like
        Thickness c of each copper layer, m.
    core_m : array_like
        Dielectric d between the two copper layers, m.
    cover_m : array_like
        Dielectric D between the inner copper and the inner face of the bend, m.
    allowable_strain : array_like
        E_B / 100 (fraction, > 0).

    Returns
    -------
    ndarray
        Inside radius, m.

    References
    ----------
    IPC-2223 (rev. D/E) double-sided bend-radius formula, printed form **from memory**; not checked
    against the standard.
    """
    c = np.asarray(copper_m, dtype=float)
    d = np.asarray(core_m, dtype=float)
    eb = np.asarray(allowable_strain, dtype=float)
    return (0.5 * d + c) * (1.0 - eb) / eb - np.asarray(cover_m, dtype=float)
