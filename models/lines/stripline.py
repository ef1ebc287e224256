"""Stripline: Cohn 1954 exact zero-thickness, Wheeler 1978 finite thickness, offset stripline
by the parallel-combination rule (different Dk above and below allowed).

SI arrays broadcastable to ``(n,)``; a row is a candidate.

References
----------
.. [C54] S. B. Cohn, "Characteristic impedance of the shielded-strip transmission line",
   IRE Trans. MTT-2(2), July 1954, pp. 52-57.
.. [W78] H. A. Wheeler, "Transmission-line properties of a strip line between parallel
   planes", IEEE Trans. MTT-26(11), Nov. 1978, pp. 866-876 (form as given in Wadell 1991).
"""
from __future__ import annotations

import numpy as np

from strainline.models.lines.geometry import k_ratio_log, log_cosh
from strainline.models.units import C0, ETA0


def cohn_stripline_air(width_m, spacing_m) -> np.ndarray:
    """Exact zero-thickness centred stripline impedance in air, Cohn 1954.

    .. math:: Z_0 = \\frac{\\eta_0}{4}\\frac{K(k)}{K(k')},\\quad k = \\mathrm{sech}\\frac{\\pi w}{2b},
              \\; k' = \\tanh\\frac{\\pi w}{2b}

    Divide by sqrt(er) for a homogeneous dielectric. Exact (conformal mapping) for a strip of
    zero thickness centred between infinite planes; no range limit.

    Parameters
    ----------
    width_m : array_like
        Strip width w, m.
    spacing_m : array_like
        Plane-to-plane spacing b, m.
    """
    x = np.pi * np.asarray(width_m, dtype=float) / (2.0 * np.asarray(spacing_m, dtype=float))
    ln_k2 = -2.0 * log_cosh(x)                      # k**2 = sech**2
    ln_kp2 = 2.0 * np.log(np.tanh(x))               # k'**2 = tanh**2
    return ETA0 / 4.0 * k_ratio_log(ln_k2, ln_kp2)


def wheeler_stripline_air(width_m, spacing_m, thickness_m) -> np.ndarray:
    """Finite-thickness centred stripline impedance in air, Wheeler 1978.

    .. math::
        m = \\frac{2}{1 + \\tfrac23\\frac{x}{1-x}},\\quad
        \\frac{\\Delta w}{b-t} = \\frac{x}{\\pi(1-x)}\\left\\{1 - \\tfrac12\\ln\\left[
        \\left(\\frac{x}{2-x}\\right)^2 + \\left(\\frac{0.0796x}{w/b + 1.1x}\\right)^m\\right]\\right\\}

        A = \\frac{4}{\\pi}\\frac{b-t}{w'},\\quad
        Z_0 = \\frac{\\eta_0}{4\\pi}\\ln\\left\\{1 + A\\left[2A + \\sqrt{(2A)^2 + 6.27}\\right]\\right\\}

    with x = t/b and w' = w + Delta w. Stated accuracy about 0.5 % for w'/(b - t) < 10 [W78]
    (from memory); checked at t = 0 against Cohn 1954: -0.02 to -0.48 % (lines.md).

    Parameters
    ----------
    width_m, spacing_m, thickness_m : array_like
        Strip width, plane spacing b and strip thickness, m.
    """
    w = np.asarray(width_m, dtype=float)
    b = np.asarray(spacing_m, dtype=float)
    t = np.asarray(thickness_m, dtype=float)
    x = t / b
    pos = x > 0
    xs = np.where(pos, x, 0.5)
    m = 2.0 / (1.0 + (2.0 / 3.0) * xs / (1.0 - xs))
    dw = np.where(
        pos,
        xs / (np.pi * (1.0 - xs)) * (1.0 - 0.5 * np.log((xs / (2.0 - xs)) ** 2
                                                        + (0.0796 * xs / (w / b + 1.1 * xs)) ** m)),
        0.0,
    )
    wp = w / (b - t) + dw          # w'/(b - t)
    a = 4.0 / (np.pi * wp)
    return ETA0 / (4.0 * np.pi) * np.log1p(a * (2.0 * a + np.sqrt((2.0 * a) ** 2 + 6.27)))


def stripline_centred_air(width_m, spacing_m, thickness_m) -> np.ndarray:
    """Centred stripline impedance in air: Cohn 1954 exact, scaled by Wheeler's thickness ratio.

    ``Z = Z_Cohn(w, b) * Z_W78(w, b, t) / Z_W78(w, b, 0)``: the thickness effect comes from
    Wheeler 1978 (our stated combination), so the zero-thickness limit is Cohn's exact value and
    the thick-strip value stays within Wheeler's stated 0.5 %.
    """
    z_cohn = cohn_stripline_air(width_m, spacing_m)
    ratio = wheeler_stripline_air(width_m, spacing_m, thickness_m) / wheeler_stripline_air(width_m, spacing_m, 0.0)
    return z_cohn * ratio


def stripline(width_m, height_m, height_top_m, thickness_m, er, er_top) -> tuple[np.ndarray, np.ndarray]:
    """Centred or offset stripline, with the same or different Dk above and below.

    Parallel-combination rule (a standard textbook approximation; attribution uncertain, from
    memory): the offset line is two centred striplines of plane spacings b1 = 2 H + t and
    b2 = 2 H2 + t side by side, each carrying half the capacitance. In capacitance form, with
    each half at its own Dk (our stated rule for different Dk; exact when they are equal):

    .. math:: C = \\tfrac12[\\varepsilon_1 C_a(b_1) + \\varepsilon_2 C_a(b_2)],\\quad
              C_a = \\tfrac12[C_a(b_1) + C_a(b_2)],\\quad
              Z_0 = \\frac{1}{c\\sqrt{C C_a}},\\; \\varepsilon_{eff} = C/C_a

    with C_a(b) = 1/(c Z_air(b)) from :func:`stripline_centred_air`. For equal Dk this is
    Z0 = 2 Z1 Z2 / (Z1 + Z2). Centred with one Dk: exactly the centred value. Measured against a
    field solution for offset flex striplines: +1.2 to +1.4 % (lines.md section 3.5).

    Parameters
    ----------
    width_m, thickness_m : array_like
        Strip width and thickness, m.
    height_m, height_top_m : array_like
        Dielectric between the strip's bottom face and the lower plane (H), and between its top
        face and the upper plane (H2), m; plane spacing H + t + H2.
    er, er_top : array_like
        Relative permittivity below and above the strip.

    Returns
    -------
    z0_ohm, eps_eff : ndarray
    """
    t = np.asarray(thickness_m, dtype=float)
    b1 = 2.0 * np.asarray(height_m, dtype=float) + t
    b2 = 2.0 * np.asarray(height_top_m, dtype=float) + t
    ca1 = 1.0 / (C0 * stripline_centred_air(width_m, b1, t))
    ca2 = 1.0 / (C0 * stripline_centred_air(width_m, b2, t))
    return _combine(ca1, ca2, er, er_top)


def _combine(ca1, ca2, er1, er2) -> tuple[np.ndarray, np.ndarray]:
    """Parallel combination of two half-lines by capacitance (see :func:`stripline`)."""
    c = 0.5 * (np.asarray(er1) * ca1 + np.asarray(er2) * ca2)
    ca = 0.5 * (ca1 + ca2)
    return 1.0 / (C0 * np.sqrt(c * ca)), c / ca


def stripline_range_flags(width_m, height_m, height_top_m, thickness_m) -> dict[str, np.ndarray]:
    """Named out-of-range masks for :func:`stripline` (True = outside).

    Wheeler 1978 stated for w'/(b - t) < 10 (approximated here by w/(b - t)); thickness
    t/b < 0.5 keeps its m and x/(1 - x) terms meaningful (our guard).
    """
    w = np.asarray(width_m, dtype=float)
    t = np.asarray(thickness_m, dtype=float)
    h1 = np.asarray(height_m, dtype=float)
    h2 = np.asarray(height_top_m, dtype=float)
    b = h1 + t + h2
    return {
        "stripline w/(b-t) at or above 10 (Wheeler 1978 stated range)": w / (b - t) >= 10.0,
        "stripline t/b at or above 0.5: thickness correction not meaningful": t / b >= 0.5,
    }
