r"""Copper-foil fatigue life from the bend strain (Engelmaier), vectorized over candidates.

Engelmaier's copper-foil fatigue equation, as used with IPC-TM-650 2.4.2.1 ("Flexural Fatigue and
Ductility, Foil"), relates the total cyclic strain range to cycles to failure:

.. math::

    N_f^{-0.6} D_f^{0.75} + 0.9 \frac{S_u}{E}
    \left[\frac{e^{D_f}}{0.36}\right]^{0.1785 \log_{10}(10^5 / N_f)} - \Delta\varepsilon = 0

with ``Delta eps`` the total strain range (fraction, peak to peak), ``N_f`` cycles, ``D_f`` the
fatigue ductility (fraction), ``S_u`` the ultimate tensile strength and ``E`` the modulus (same
units). It is Manson's universal-slopes equation refitted to foils.

Validity: calibrated on free foils in low-cycle flex tests; results beyond 10^6 cycles are an
extrapolation (flagged), and a peak strain above the copper yield strain sigma_y/E means plastic
cycling (flagged). Copper laminated in polymer usually outlives a free foil, so the equation is
conservative in that sense.

References
----------
.. [1] W. Engelmaier, "A Method for the Determination of Ductility for Thin Metallic Materials",
   ASTM STP 736, 1981, DOI 10.1520/STP28400S.
.. [2] IPC-TM-650 2.4.2.1, *Flexural Fatigue and Ductility, Foil*, IPC (printed form of the equation
   from memory; not checked against the method text).
.. [3] S. S. Manson, "Fatigue: a complex subject - some simple approximations", Experimental
   Mechanics 5 (1965) 193-226 (universal slopes).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

Motion = Literal["flat-to-bent", "reversed"]
MOTIONS: tuple[str, ...] = get_args(Motion)

#: Above this many cycles Engelmaier's low-cycle-calibrated equation is extrapolated.
EXTRAPOLATION_CYCLES: float = 1e6

_LN10 = np.log(10.0)

__all__ = [
    "MOTIONS",
    "EXTRAPOLATION_CYCLES",
    "FatigueLife",
    "engelmaier_cycles",
    "engelmaier_strain_range",
    "strain_range",
    "fatigue_life",
]


def _terms(x, d, s_over_e):
    """Plastic and elastic terms of Engelmaier's equation at log10 N = x, and the elastic slope."""
    slope = 0.1785 * (d / _LN10 - np.log10(0.36))          # 0.1785 log10(e^D / 0.36)
    plastic = d**0.75 * 10.0 ** (-0.6 * x)
    elastic = 0.9 * s_over_e * 10.0 ** (slope * (5.0 - x))
    return plastic, elastic, slope


def engelmaier_strain_range(cycles, fatigue_ductility, tensile_strength_pa, modulus_pa) -> np.ndarray:
    """Total strain range Engelmaier's equation allows for a target life (explicit form).

    .. math::

        \\Delta\\varepsilon = N_f^{-0.6} D_f^{0.75} + 0.9 \\frac{S_u}{E}
        \\left[\\frac{e^{D_f}}{0.36}\\right]^{0.1785 \\log_{10}(10^5/N_f)}

    Parameters
    ----------
    cycles : array_like
        Cycles to failure N_f (> 0).
    fatigue_ductility : array_like
        D_f as a fraction (0.65 = 65 %).
    tensile_strength_pa, modulus_pa : array_like
        Ultimate tensile strength S_u and Young's modulus E, Pa.

    Returns
    -------
    ndarray
        Strain range (fraction), broadcast shape.

    References
    ----------
    Engelmaier, ASTM STP 736 (1981); IPC-TM-650 2.4.2.1 (form from memory).
    """
    n = np.asarray(cycles, dtype=float)
    d = np.asarray(fatigue_ductility, dtype=float)
    se = np.asarray(tensile_strength_pa, dtype=float) / np.asarray(modulus_pa, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        p, e, _ = _terms(np.log10(n), d, se)
    return p + e


def engelmaier_cycles(strain_range, fatigue_ductility, tensile_strength_pa, modulus_pa,
                      max_iterations: int = 60) -> np.ndarray:
    """Cycles to failure from the total strain range by Engelmaier's equation.

    Solves the equation for ``x = log10 N_f``. With ``h(x) = ln(plastic(x) + elastic(x)) - ln(Delta
    eps)`` -- a log-sum-exp of two linear functions of x, hence convex and strictly decreasing --
    Newton's method started at the larger of the two single-term roots (which lies left of the root)
    increases monotonically to the root. All rows are solved at once.

    Parameters
    ----------
    strain_range : array_like
        Total strain range Delta eps (fraction, peak to peak; see :func:`strain_range`).
    fatigue_ductility : array_like
        D_f, fraction (> 0).
    tensile_strength_pa, modulus_pa : array_like
        S_u and E, Pa.
    max_iterations : int
        Newton iteration cap (convergence to 1e-12 in log10 N takes about 5-8).

    Returns
    -------
    ndarray
        N_f, broadcast shape; ``inf`` for a zero strain range, ``nan`` for invalid inputs
        (negative range, non-positive D_f, S_u or E).
        Above 10^6 the value is an extrapolation (see :func:`fatigue_life`).

    References
    ----------
    Engelmaier, ASTM STP 736 (1981); IPC-TM-650 2.4.2.1 (form from memory).
    """
    de, d, su, em = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in
                                         (strain_range, fatigue_ductility, tensile_strength_pa, modulus_pa)))
    valid = (de > 0) & (d > 0) & (su > 0) & (em > 0) & np.isfinite(de)
    de_ = np.where(valid, de, 1e-2)
    d_ = np.where(valid, d, 0.5)
    se = np.where(valid, su / np.where(em > 0, em, 1.0), 1e-3)
    slope = 0.1785 * (d_ / _LN10 - np.log10(0.36))
    x_plastic = np.log10(d_**0.75 / de_) / 0.6
    x_elastic = 5.0 + np.log10(0.9 * se / de_) / slope
    x = np.maximum(x_plastic, x_elastic)
    target = np.log(de_)
    for _ in range(max_iterations):
        p, e, _s = _terms(x, d_, se)
        tot = p + e
        h = np.log(tot) - target
        dh = -_LN10 * (0.6 * p + slope * e) / tot
        step = h / dh
        x = x - step
        if np.all(np.abs(step) < 1e-13):
            break
    n = 10.0**x
    return np.where(valid, n, np.where((de == 0) & (d > 0) & (su > 0) & (em > 0), np.inf, np.nan))


def strain_range(peak_strain, motion: str) -> np.ndarray:
    """Total strain range of a bend cycle from the peak strain.

    ``flat-to-bent`` (flat -> bent -> flat, e.g. a hinge or an install fold): range = |peak|.
    ``reversed`` (+R -> -R): range = 2 |peak|. Neither form carries a mean-strain correction.

    Parameters
    ----------
    peak_strain : array_like
        Peak strain (fraction, signed).
    motion : {"flat-to-bent", "reversed"}

    Returns
    -------
    ndarray
    """
    if motion not in MOTIONS:
        raise ValueError(f"motion {motion!r} is not one of {list(MOTIONS)}")
    factor = 1.0 if motion == "flat-to-bent" else 2.0
    return factor * np.abs(np.asarray(peak_strain, dtype=float))


@dataclass(frozen=True)
class FatigueLife:
    """Engelmaier life of a batch of copper faces (all fields share one shape).

    Fields
    ------
    cycles : cycles to failure (inf for zero strain).
    strain_range : total strain range used (fraction).
    extrapolated : True beyond 10^6 cycles (outside the low-cycle calibration).
    plastic : True when the peak strain magnitude exceeds the yield strain sigma_y / E.
    """

    cycles: np.ndarray
    strain_range: np.ndarray
    extrapolated: np.ndarray
    plastic: np.ndarray


def fatigue_life(peak_strain, motion: str, fatigue_ductility, tensile_strength_pa, yield_strength_pa,
                 modulus_pa) -> FatigueLife:
    """Engelmaier cycles to failure with the motion stated and the validity flags.

    Parameters
    ----------
    peak_strain : array_like
        Peak copper strain (fraction, signed).
    motion : {"flat-to-bent", "reversed"}
    fatigue_ductility : array_like
        D_f, fraction.
    tensile_strength_pa, yield_strength_pa, modulus_pa : array_like
        S_u, sigma_y and E of the copper, Pa.

    Returns
    -------
    FatigueLife
    """
    rng = strain_range(peak_strain, motion)
    n = engelmaier_cycles(rng, fatigue_ductility, tensile_strength_pa, modulus_pa)
    ey = np.asarray(yield_strength_pa, dtype=float) / np.asarray(modulus_pa, dtype=float)
    return FatigueLife(
        cycles=n,
        strain_range=rng,
        extrapolated=np.asarray(n > EXTRAPOLATION_CYCLES),
        plastic=np.asarray(np.abs(np.asarray(peak_strain, dtype=float)) > ey),
    )
