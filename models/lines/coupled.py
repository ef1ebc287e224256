"""Edge-coupled pairs: microstrip (Kirschning & Jansen 1984) and stripline (Cohn 1955).

Conventions: differential impedance Z_diff = 2 Z_odd and common-mode impedance
Z_common = Z_even / 2 (exact definitions for a symmetric pair). SI arrays broadcastable to
``(n,)``; a row is a candidate.

References
----------
.. [KJ84] M. Kirschning, R. H. Jansen, "Accurate wide-range design equations for the
   frequency-dependent characteristic of parallel coupled microstrip lines", IEEE Trans.
   MTT-32(1), Jan. 1984, pp. 83-90.
.. [C55] S. B. Cohn, "Shielded coupled-strip transmission line", IRE Trans. MTT-3(5),
   Oct. 1955, pp. 29-38 (also in Matthaei, Young & Jones 1964).
.. [HJ80] Hammerstad & Jensen 1980, see :mod:`strainline.models.lines.microstrip`.
.. [W91] B. C. Wadell, *Transmission Line Design Handbook*, Artech House, 1991.
"""
from __future__ import annotations

import numpy as np

from strainline.models.lines.geometry import k_ratio_log, log_cosh, log_sinh
from strainline.models.lines.microstrip import cover_blend, hj_eps, hj_width_corrections, hj_z01
from strainline.models.lines.stripline import _combine, stripline_centred_air
from strainline.models.units import C0, ETA0


# ------------------------------------------------------------------------------------------
# Coupled microstrip
# ------------------------------------------------------------------------------------------

def kj84_static(u, g, er) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Zero-thickness even/odd impedances and permittivities, Kirschning & Jansen 1984 (static).

    The single-line inputs Z0 and eps_eff are Hammerstad & Jensen 1980 at u (zero thickness).
    Equations as transcribed in lines.md section 5.1 (checked there against a field solution:
    Z_odd -0.17..+0.05 %, Z_even +0.02..+0.25 %).

    Parameters
    ----------
    u : array_like
        w/h.
    g : array_like
        s/h (edge-to-edge gap over height).
    er : array_like
        Substrate relative permittivity.

    Returns
    -------
    z_even, z_odd, eps_even, eps_odd : ndarray

    Notes
    -----
    Stated validity 0.1 <= u <= 10, 0.1 <= g <= 10, 1 <= er <= 18, accuracy about 1 % [KJ84]
    (from memory).
    """
    u = np.asarray(u, dtype=float)
    g = np.asarray(g, dtype=float)
    er = np.asarray(er, dtype=float)
    z0 = hj_z01(u) / np.sqrt(hj_eps(u, er))
    ee = hj_eps(u, er)
    # even mode eps
    v = u * (20.0 + g ** 2) / (10.0 + g ** 2) + g * np.exp(-g)
    eps_e = hj_eps(v, er)
    # odd mode eps
    a0 = 0.7287 * (ee - (er + 1.0) / 2.0) * (1.0 - np.exp(-0.179 * u))
    b0 = 0.747 * er / (0.15 + er)
    c0 = b0 - (b0 - 0.207) * np.exp(-0.414 * u)
    d0 = 0.593 + 0.694 * np.exp(-0.562 * u)
    eps_o = ((er + 1.0) / 2.0 + a0 - ee) * np.exp(-c0 * g ** d0) + ee
    # impedances
    q1 = 0.8695 * u ** 0.194
    q2 = 1.0 + 0.7519 * g + 0.189 * g ** 2.31
    q3 = (0.1975 + (16.6 + (8.4 / g) ** 6) ** (-0.387)
          + np.log(g ** 10 / (1.0 + (g / 3.4) ** 10)) / 241.0)
    q4 = (2.0 * q1 / q2) / (np.exp(-g) * u ** q3 + (2.0 - np.exp(-g)) * u ** (-q3))
    q5 = 1.794 + 1.14 * np.log(1.0 + 0.638 / (g + 0.517 * g ** 2.43))
    q6 = (0.2305 + np.log(g ** 10 / (1.0 + (g / 5.8) ** 10)) / 281.3
          + np.log(1.0 + 0.598 * g ** 1.154) / 5.1)
    q7 = (10.0 + 190.0 * g ** 2) / (1.0 + 82.3 * g ** 3)
    q8 = np.exp(-6.5 - 0.95 * np.log(g) - (g / 0.15) ** 5)
    q9 = np.log(q7) * (q8 + 1.0 / 16.5)
    q10 = q4 - (q5 / q2) * np.exp(q6 * np.log(u) * u ** (-q9))
    root = np.sqrt(ee)
    z_e = z0 * np.sqrt(ee / eps_e) / (1.0 - z0 / ETA0 * root * q4)
    z_o = z0 * np.sqrt(ee / eps_o) / (1.0 - z0 / ETA0 * root * q10)
    return z_e, z_o, eps_e, eps_o


def coupled_microstrip(width_m, gap_m, height_m, thickness_m, er, cover_m=0.0, cover_er=1.0):
    """Edge-coupled microstrip with thickness and cover corrections (static).

    Thickness (our stated combination, after [HJ80]'s single-line treatment): each strip is
    widened by the single-line H&J increments and the gap narrows by the same amount (each
    inner edge moves half of it), separately for the air line (u1 = u + du1, g1 = g - du1) and
    the dielectric line (ur = u + dur, gr = g - dur); then, per mode,

    .. math:: Z_m = Z_m^{KJ}(u_r, g_r),\\quad \\varepsilon_m = \\varepsilon_m^{KJ}(u_r, g_r)
              \\left[\\frac{Z_{m,air}^{KJ}(u_1, g_1)}{Z_{m,air}^{KJ}(u_r, g_r)}\\right]^2

    (the narrowed gap is kept at least half the drawn gap). Cover: the exponential blend of
    :func:`~strainline.models.lines.microstrip.cover_blend` applied to each mode's eps (our
    stated extension; the odd mode's field is more in the gap, so this is rougher than for a
    single line), keeping each mode's air impedance.

    Parameters
    ----------
    width_m, gap_m, height_m, thickness_m : array_like
        Strip width, edge-to-edge gap, substrate height, copper thickness, m.
    er : array_like
        Substrate relative permittivity.
    cover_m, cover_er : array_like
        Cover thickness above the trace top (m) and its relative permittivity.

    Returns
    -------
    z_even, z_odd, eps_even, eps_odd : ndarray
    """
    h = np.asarray(height_m, dtype=float)
    t = np.asarray(thickness_m, dtype=float)
    er = np.asarray(er, dtype=float)
    u = np.asarray(width_m, dtype=float) / h
    g = np.asarray(gap_m, dtype=float) / h
    du1, dur = hj_width_corrections(u, t / h, er)
    u1, g1 = u + du1, np.maximum(g - du1, 0.5 * g)
    ur, gr = u + dur, np.maximum(g - dur, 0.5 * g)
    ze_r, zo_r, ee_r, eo_r = kj84_static(ur, gr, er)
    ze_1, zo_1, _, _ = kj84_static(u1, g1, np.ones_like(er))   # air line: eps = 1
    za_e_r = ze_r * np.sqrt(ee_r)
    za_o_r = zo_r * np.sqrt(eo_r)
    ee = ee_r * (ze_1 / za_e_r) ** 2
    eo = eo_r * (zo_1 / za_o_r) ** 2
    ze = ze_1 / np.sqrt(ee)   # = ze_r * ze_1/za_e_r: air impedance of the air line, loaded by ee
    zo = zo_1 / np.sqrt(eo)
    ee_c = cover_blend(ee, er, cover_m, t, h, cover_er)
    eo_c = cover_blend(eo, er, cover_m, t, h, cover_er)
    return ze * np.sqrt(ee / ee_c), zo * np.sqrt(eo / eo_c), ee_c, eo_c


def coupled_microstrip_range_flags(width_m, gap_m, height_m, thickness_m, er) -> dict[str, np.ndarray]:
    """Named out-of-range masks for :func:`coupled_microstrip` (True = outside).

    [KJ84] stated: 0.1 <= w/h <= 10, 0.1 <= s/h <= 10, 1 <= er <= 18 (from memory); the
    thickness widening is not checked beyond t/h = 1 or t/s = 0.5 (our guard).
    """
    h = np.asarray(height_m, dtype=float)
    u = np.asarray(width_m, dtype=float) / h
    g = np.asarray(gap_m, dtype=float) / h
    er = np.asarray(er, dtype=float)
    t = np.asarray(thickness_m, dtype=float)
    return {
        "coupled microstrip w/h outside 0.1..10 (Kirschning & Jansen 1984)": (u < 0.1) | (u > 10.0),
        "coupled microstrip s/h outside 0.1..10 (Kirschning & Jansen 1984)": (g < 0.1) | (g > 10.0),
        "coupled microstrip er above 18 (Kirschning & Jansen 1984)": er > 18.0,
        "coupled microstrip t/h above 1 or t/s above 0.5: thickness correction not checked": (
            (t / h > 1.0) | (t / np.asarray(gap_m, dtype=float) > 0.5)),
    }


# ------------------------------------------------------------------------------------------
# Coupled stripline
# ------------------------------------------------------------------------------------------

def cohn55_air(width_m, gap_m, spacing_m) -> tuple[np.ndarray, np.ndarray]:
    """Exact zero-thickness even/odd impedances of a centred coupled stripline in air, Cohn 1955.

    .. math:: k_e = \\tanh\\frac{\\pi w}{2b}\\tanh\\frac{\\pi(w+s)}{2b},\\quad
              k_o = \\tanh\\frac{\\pi w}{2b}\\coth\\frac{\\pi(w+s)}{2b},\\quad
              Z_{0e,o} = \\frac{\\eta_0}{4}\\frac{K(k'_{e,o})}{K(k_{e,o})}

    Divide by sqrt(er) for a homogeneous dielectric. 1 - k**2 is evaluated from the
    hyperbolic identities (log form) so that wide strips keep full precision. Exact; no range.

    Parameters
    ----------
    width_m, gap_m, spacing_m : array_like
        Strip width w, edge-to-edge gap s, plane spacing b, m.

    Returns
    -------
    z_even_air, z_odd_air : ndarray
    """
    b = np.asarray(spacing_m, dtype=float)
    a = np.pi * np.asarray(width_m, dtype=float) / (2.0 * b)
    c = np.pi * (np.asarray(width_m, dtype=float) + np.asarray(gap_m, dtype=float)) / (2.0 * b)
    ln_ta = np.log(np.tanh(a))
    ln_tc = np.log(np.tanh(c))
    # ke = tanh a tanh c; 1 - ke^2 = cosh(c-a) cosh(c+a) / (cosh^2 a cosh^2 c)
    ln_me = 2.0 * (ln_ta + ln_tc)
    ln_me1 = log_cosh(c - a) + log_cosh(c + a) - 2.0 * log_cosh(a) - 2.0 * log_cosh(c)
    # ko = tanh a / tanh c; 1 - ko^2 = sinh(c-a) sinh(c+a) / (cosh^2 a sinh^2 c)
    ln_mo = 2.0 * (ln_ta - ln_tc)
    ln_mo1 = log_sinh(c - a) + log_sinh(c + a) - 2.0 * log_cosh(a) - 2.0 * log_sinh(c)
    ze = ETA0 / 4.0 / k_ratio_log(ln_me, ln_me1)
    zo = ETA0 / 4.0 / k_ratio_log(ln_mo, ln_mo1)
    return ze, zo


def cohn_fringe(x) -> np.ndarray:
    """Cohn 1954 fringing capacitance C'_f/eps of one strip edge for thickness ratio x = t/b.

    .. math:: \\frac{C'_f}{\\varepsilon} = \\frac{1}{\\pi}\\left\\{\\frac{2}{1-x}
              \\ln\\left[\\frac{1}{1-x} + 1\\right] - \\left(\\frac{1}{1-x} - 1\\right)
              \\ln\\left[\\frac{1}{(1-x)^2} - 1\\right]\\right\\}

    Equals 2 ln 2 / pi at x = 0.
    """
    x = np.asarray(x, dtype=float)
    pos = x > 0
    xs = np.where(pos, x, 0.5)
    r = 1.0 / (1.0 - xs)
    second = np.where(pos, (r - 1.0) * np.log(r * r - 1.0), 0.0)
    r = np.where(pos, r, 1.0)
    return (2.0 * r * np.log(r + 1.0) - second) / np.pi


def coupled_stripline_centred_air(width_m, gap_m, spacing_m, thickness_m) -> tuple[np.ndarray, np.ndarray]:
    """Centred coupled stripline in air with a thickness correction.

    Zero thickness: :func:`cohn55_air` (exact). Thickness (Cohn 1955's thin-strip correction
    as reproduced in Wadell 1991, from memory): the coupling changes only the inner-edge
    fringing admittance, scaled by the fringing-capacitance ratio C'_f(t)/C'_f(0):

    .. math:: \\frac{1}{Z_{0e}(t)} = \\frac{1}{Z_0(t)} - \\frac{C'_f(t)}{C'_f(0)}
              \\left[\\frac{1}{Z_0(0)} - \\frac{1}{Z_{0e}(0)}\\right],\\quad
              \\frac{1}{Z_{0o}(t)} = \\frac{1}{Z_0(t)} + \\frac{C'_f(t)}{C'_f(0)}
              \\left[\\frac{1}{Z_{0o}(0)} - \\frac{1}{Z_0(0)}\\right]

    with Z_0(t) the single centred stripline (:func:`stripline_centred_air`). Stated for thin
    strips, t/b < 0.1 (from memory). Exact at t = 0; tends to the single line for a large gap.
    """
    t = np.asarray(thickness_m, dtype=float)
    b = np.asarray(spacing_m, dtype=float)
    ze0, zo0 = cohn55_air(width_m, gap_m, b)
    z00 = stripline_centred_air(width_m, b, 0.0)
    z0t = stripline_centred_air(width_m, b, t)
    ratio = cohn_fringe(t / b) / cohn_fringe(0.0)
    ye = 1.0 / z0t - ratio * (1.0 / z00 - 1.0 / ze0)
    yo = 1.0 / z0t + ratio * (1.0 / zo0 - 1.0 / z00)
    return 1.0 / ye, 1.0 / yo


def coupled_stripline(width_m, gap_m, height_m, height_top_m, thickness_m, er, er_top):
    """Edge-coupled stripline, centred or offset, same or different Dk above and below.

    Each mode is built like the single offset stripline (see
    :func:`~strainline.models.lines.stripline.stripline`): two centred coupled striplines of
    plane spacings b1 = 2 H + t and b2 = 2 H2 + t combined by capacitance, each half at its own
    Dk (stated rule; exact for a centred homogeneous pair at t = 0).

    Parameters
    ----------
    width_m, gap_m, thickness_m : array_like
        Strip width, edge-to-edge gap, thickness, m.
    height_m, height_top_m : array_like
        Dielectric below (H) and above (H2) the strips, m.
    er, er_top : array_like
        Relative permittivity below and above.

    Returns
    -------
    z_even, z_odd, eps_even, eps_odd : ndarray
    """
    t = np.asarray(thickness_m, dtype=float)
    b1 = 2.0 * np.asarray(height_m, dtype=float) + t
    b2 = 2.0 * np.asarray(height_top_m, dtype=float) + t
    ze1, zo1 = coupled_stripline_centred_air(width_m, gap_m, b1, t)
    ze2, zo2 = coupled_stripline_centred_air(width_m, gap_m, b2, t)
    ze, ee = _combine(1.0 / (C0 * ze1), 1.0 / (C0 * ze2), er, er_top)
    zo, eo = _combine(1.0 / (C0 * zo1), 1.0 / (C0 * zo2), er, er_top)
    return ze, zo, ee, eo


def coupled_stripline_range_flags(width_m, gap_m, height_m, height_top_m, thickness_m) -> dict[str, np.ndarray]:
    """Named out-of-range masks for :func:`coupled_stripline` (True = outside).

    Cohn 1955's thickness correction is stated for thin strips, t/b < 0.1 (from memory).
    """
    t = np.asarray(thickness_m, dtype=float)
    b = np.asarray(height_m, dtype=float) + t + np.asarray(height_top_m, dtype=float)
    return {
        "coupled stripline t/b at or above 0.1 (Cohn 1955 thin-strip correction)": t / b >= 0.1,
    }
