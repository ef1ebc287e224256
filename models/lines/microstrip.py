"""Microstrip: Hammerstad & Jensen 1980 static model with the metal-thickness correction,
Kirschning & Jansen 1982 / Jansen & Kirschning 1983 dispersion, and a covered-microstrip
correction (exponential blend as given in Wadell 1991).

Every function takes SI arrays broadcastable to ``(n,)``; a row is a candidate. No function
raises for an odd row: out-of-range rows are reported by :func:`microstrip_range_flags`.

References
----------
.. [HJ80] E. Hammerstad, O. Jensen, "Accurate models for microstrip computer-aided design",
   IEEE MTT-S International Microwave Symposium Digest, 1980, pp. 407-409.
.. [KJ82] M. Kirschning, R. H. Jansen, "Accurate model for effective dielectric constant of
   microstrip with validity up to millimetre-wave frequencies", Electronics Letters 18(6),
   1982, pp. 272-273.
.. [JK83] R. H. Jansen, M. Kirschning, "Arguments and an accurate model for the power-current
   formulation of microstrip characteristic impedance", AEU 37, 1983, pp. 108-112.
.. [W91] B. C. Wadell, *Transmission Line Design Handbook*, Artech House, 1991
   (embedded-microstrip section).
"""
from __future__ import annotations

import numpy as np

from strainline.models.units import C0, ETA0

_E = np.e


def hj_z01(u: np.ndarray) -> np.ndarray:
    """Zero-thickness microstrip impedance in air, Hammerstad & Jensen 1980.

    .. math:: Z_{01}(u) = \\frac{\\eta_0}{2\\pi}\\ln\\left[\\frac{f(u)}{u} + \\sqrt{1 + (2/u)^2}\\right],
              \\quad f(u) = 6 + (2\\pi - 6)\\exp[-(30.666/u)^{0.7528}]

    Parameters
    ----------
    u : array_like
        Normalised width w/h (dimensionless, > 0).

    Notes
    -----
    Stated accuracy better than 0.01 % for u <= 1 and 0.03 % for u <= 1000 [HJ80] (from memory
    of the paper, as quoted in lines.md).
    """
    u = np.asarray(u, dtype=float)
    f = 6.0 + (2.0 * np.pi - 6.0) * np.exp(-((30.666 / u) ** 0.7528))
    return ETA0 / (2.0 * np.pi) * np.log(f / u + np.sqrt(1.0 + (2.0 / u) ** 2))


def hj_eps(u: np.ndarray, er: np.ndarray) -> np.ndarray:
    """Zero-thickness effective permittivity, Hammerstad & Jensen 1980.

    .. math:: \\varepsilon_e = \\frac{\\varepsilon_r+1}{2} + \\frac{\\varepsilon_r-1}{2}
              (1 + 10/u)^{-a(u) b(\\varepsilon_r)}

    Parameters
    ----------
    u : array_like
        Normalised width w/h.
    er : array_like
        Substrate relative permittivity (>= 1).

    Notes
    -----
    Stated accuracy better than 0.2 % for er <= 128 and 0.01 <= u <= 100 [HJ80].
    """
    u = np.asarray(u, dtype=float)
    er = np.asarray(er, dtype=float)
    a = (1.0 + np.log((u ** 4 + (u / 52.0) ** 2) / (u ** 4 + 0.432)) / 49.0
         + np.log(1.0 + (u / 18.1) ** 3) / 18.7)
    b = 0.564 * ((er - 0.9) / (er + 3.0)) ** 0.053
    return (er + 1.0) / 2.0 + (er - 1.0) / 2.0 * (1.0 + 10.0 / u) ** (-a * b)


def hj_width_corrections(u: np.ndarray, tn: np.ndarray, er: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Thickness widening (du1 for the air line, dur for the dielectric line), HJ80.

    .. math:: \\Delta u_1 = \\frac{\\bar t}{\\pi}\\ln\\left[1 + \\frac{4e}{\\bar t\\,\\coth^2\\sqrt{6.517u}}\\right],
              \\quad \\Delta u_r = \\tfrac12\\Delta u_1\\,[1 + \\mathrm{sech}\\sqrt{\\varepsilon_r - 1}]

    ``tn`` is the thickness normalised to the height, t/h (the convention trap noted in
    lines.md: the un-normalised t inside the logarithm is a misprint). ``tn = 0`` gives 0.
    """
    u = np.asarray(u, dtype=float)
    tn = np.asarray(tn, dtype=float)
    er = np.asarray(er, dtype=float)
    pos = tn > 0
    ts = np.where(pos, tn, 1.0)
    du1 = np.where(pos, ts / np.pi * np.log1p(4.0 * _E / ts * np.tanh(np.sqrt(6.517 * u)) ** 2), 0.0)
    dur = 0.5 * du1 * (1.0 + 1.0 / np.cosh(np.sqrt(np.maximum(er - 1.0, 0.0))))
    return du1, dur


def microstrip_static(width_m, height_m, thickness_m, er) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Static microstrip impedance and effective permittivity, Hammerstad & Jensen 1980.

    .. math:: Z_0 = \\frac{Z_{01}(u_r)}{\\sqrt{\\varepsilon_e(u_r)}},\\quad
              \\varepsilon_{eff} = \\varepsilon_e(u_r)\\left[\\frac{Z_{01}(u_1)}{Z_{01}(u_r)}\\right]^2

    Parameters
    ----------
    width_m, height_m, thickness_m : array_like
        Trace width, dielectric height (trace bottom to plane) and copper thickness, m.
    er : array_like
        Substrate relative permittivity.

    Returns
    -------
    z0_ohm, eps_eff, ur : ndarray
        Impedance (ohm), effective permittivity, and the dielectric-line effective width w_r/h
        (used by the dispersion model).

    Notes
    -----
    Validity as stated by [HJ80] (from memory): eps_e within 0.2 % for 0.01 <= u <= 100 and
    er <= 128; Z01 within 0.03 % for u <= 1000. Against a converged field solution (lines.md):
    within 0.1 % at t = 0, 0.05-0.36 % low for t/h = 0.2-0.5 and 0.6 % low at t/h = 1.
    """
    w = np.asarray(width_m, dtype=float)
    h = np.asarray(height_m, dtype=float)
    t = np.asarray(thickness_m, dtype=float)
    er = np.asarray(er, dtype=float)
    u = w / h
    du1, dur = hj_width_corrections(u, t / h, er)
    u1 = u + du1
    ur = u + dur
    z1 = hj_z01(u1)
    zr = hj_z01(ur)
    e = hj_eps(ur, er)
    return zr / np.sqrt(e), e * (z1 / zr) ** 2, ur


def kj_eps_dispersion(ur, fn_ghz_mm, er, eps0) -> np.ndarray:
    """Frequency-dependent effective permittivity, Kirschning & Jansen 1982.

    .. math:: \\varepsilon_{eff}(f) = \\varepsilon_r - \\frac{\\varepsilon_r - \\varepsilon_{eff}(0)}{1 + P(f)}

    Parameters
    ----------
    ur : array_like
        Normalised (thickness-widened) width.
    fn_ghz_mm : array_like
        Frequency times height in GHz*mm.
    er, eps0 : array_like
        Substrate permittivity and static effective permittivity.

    Notes
    -----
    Stated accuracy 0.6 % for 0.1 <= u <= 100, 1 <= er <= 20 and h/lambda0 <= 0.13 [KJ82]
    (from memory, as quoted in lines.md).
    """
    u = np.asarray(ur, dtype=float)
    fn = np.asarray(fn_ghz_mm, dtype=float)
    er = np.asarray(er, dtype=float)
    p1 = (0.27488 + (0.6315 + 0.525 / (1.0 + 0.0157 * fn) ** 20) * u
          - 0.065683 * np.exp(-8.7513 * u))
    p2 = 0.33622 * (1.0 - np.exp(-0.03442 * er))
    p3 = 0.0363 * np.exp(-4.6 * u) * (1.0 - np.exp(-((fn / 38.7) ** 4.97)))
    p4 = 1.0 + 2.751 * (1.0 - np.exp(-((er / 15.916) ** 8)))
    p = p1 * p2 * ((0.1844 + p3 * p4) * fn) ** 1.5763
    return er - (er - eps0) / (1.0 + p)


def jk_z_dispersion(ur, fn_ghz_mm, er, eps0, epsf, z0) -> np.ndarray:
    """Frequency-dependent impedance (power-current), Jansen & Kirschning 1983.

    ``Z(f) = Z0(0) * (R13/R14)**R17`` with the R1..R17 set of [JK83] (fn in GHz*mm).

    Parameters
    ----------
    ur : array_like
        Normalised (thickness-widened) width.
    fn_ghz_mm : array_like
        Frequency times height, GHz*mm.
    er, eps0, epsf : array_like
        Substrate permittivity, static and dispersive effective permittivity.
    z0 : array_like
        Static impedance, ohm.

    Notes
    -----
    Range as for [KJ82] (0.1 <= u <= 100, 1 <= er <= 20, h/lambda0 <= 0.13), from memory.
    """
    u = np.asarray(ur, dtype=float)
    fn = np.asarray(fn_ghz_mm, dtype=float)
    er = np.asarray(er, dtype=float)
    r1 = np.minimum(0.03891 * er ** 1.4, 20.0)
    r2 = np.minimum(0.2671 * u ** 7, 20.0)
    r3 = 4.766 * np.exp(-3.228 * u ** 0.641)
    r4 = 0.016 + (0.0514 * er) ** 4.524
    r5 = (fn / 28.843) ** 12
    r6 = np.minimum(22.2 * u ** 1.92, 20.0)
    r7 = 1.206 - 0.3144 * np.exp(-r1) * (1.0 - np.exp(-r2))
    r8 = 1.0 + 1.275 * (1.0 - np.exp(-0.004625 * r3 * er ** 1.674 * (fn / 18.365) ** 2.745))
    r9 = (5.086 * r4 * r5 / (0.3838 + 0.386 * r4) * np.exp(-r6) / (1.0 + 1.2992 * r5)
          * (er - 1.0) ** 6 / (1.0 + 10.0 * (er - 1.0) ** 6))
    r10 = 0.00044 * er ** 2.136 + 0.0184
    x = (fn / 19.47) ** 6
    r11 = x / (1.0 + 0.0962 * x)
    r12 = 1.0 / (1.0 + 0.00245 * u ** 2)
    r13 = 0.9408 * np.asarray(epsf) ** r8 - 0.9603
    r14 = (0.9408 - r9) * np.asarray(eps0) ** r8 - 0.9603
    r15 = 0.707 * r10 * (fn / 12.3) ** 1.097
    r16 = 1.0 + 0.0503 * er ** 2 * r11 * (1.0 - np.exp(-((u / 15.0) ** 6)))
    r17 = r7 * (1.0 - 1.1241 * r12 / r16 * np.exp(-0.026 * fn ** 1.15656 - r15))
    return np.asarray(z0) * (r13 / r14) ** r17


def cover_blend(eps_ms, er, cover_m, thickness_m, height_m, cover_er) -> np.ndarray:
    """Effective permittivity of a microstrip under a cover dielectric.

    The exponential blend given in Wadell 1991 (embedded microstrip), for a cover of the
    substrate's own Dk:

    .. math:: \\varepsilon_{eff,emb} = \\varepsilon_{eff,ms}\\,e^{-2d/h}
              + \\varepsilon_{full}\\,(1 - e^{-2d/h})

    where d is the cover thickness measured from the substrate surface (here
    ``cover_m + thickness_m``: the cover fills beside the trace). Wadell's form has
    eps_full = er. **Our extension** to a cover with its own Dk (not from a publication):
    eps_full is the filling-factor value for a cover of infinite thickness,
    ``eps_full = er_c + q (er - er_c)`` with q = (eps_ms - 1)/(er - 1) the microstrip filling
    factor; it equals er when er_c = er (Wadell's case) and eps_ms when er_c = 1.

    Parameters
    ----------
    eps_ms : array_like
        Effective permittivity of the bare microstrip.
    er : array_like
        Substrate relative permittivity.
    cover_m, thickness_m, height_m : array_like
        Cover thickness above the trace top, copper thickness and substrate height, m.
    cover_er : array_like
        Cover relative permittivity.

    Notes
    -----
    Accuracy measured against a converged field solution (lines.md section 2): the blend
    overstates the drop, Z0 comes out 2.7-3.9 % low for flex covers; only meaningful when
    cover Dk is close to substrate Dk (Wadell's case). Treat as an estimate to be refined by
    the field solver. Reduces exactly to the bare microstrip when ``cover_m`` = 0 (d = t still
    gives a small blend, so the zero-cover case is returned unchanged explicitly).
    """
    eps_ms = np.asarray(eps_ms, dtype=float)
    er = np.asarray(er, dtype=float)
    erc = np.asarray(cover_er, dtype=float)
    cov = np.asarray(cover_m, dtype=float)
    d = cov + np.asarray(thickness_m, dtype=float)
    blend = np.exp(-2.0 * d / np.asarray(height_m, dtype=float))
    denom = er - 1.0
    q = np.where(denom > 1e-12, (eps_ms - 1.0) / np.where(denom > 1e-12, denom, 1.0), 1.0)
    eps_full = erc + q * (er - erc)
    emb = eps_ms * blend + eps_full * (1.0 - blend)
    return np.where(cov > 0, emb, eps_ms)


def microstrip(width_m, height_m, thickness_m, er, cover_m=0.0, cover_er=1.0,
               freq_hz=None) -> tuple[np.ndarray, np.ndarray]:
    """Microstrip impedance and effective permittivity, bare or covered, static or dispersive.

    Static values by [HJ80]; with ``freq_hz`` the bare line is dispersed by [KJ82] (eps_eff)
    and [JK83] (Z0) evaluated at the thickness-widened width (as scikit-rf's default mode);
    a cover is then applied to the (dispersed) bare values by :func:`cover_blend`, keeping the
    air impedance: ``Z = Z_ms * sqrt(eps_ms / eps_emb)`` (dispersion under a cover is therefore
    approximate).

    Parameters
    ----------
    width_m, height_m, thickness_m : array_like
        Trace width, substrate height, copper thickness, m.
    er : array_like
        Substrate relative permittivity.
    cover_m, cover_er : array_like
        Cover thickness above the trace top (m, 0 = bare) and its relative permittivity.
    freq_hz : array_like or None
        Frequency, Hz; None or 0 = quasi-static.

    Returns
    -------
    z0_ohm, eps_eff : ndarray
    """
    z0, e0, ur = microstrip_static(width_m, height_m, thickness_m, er)
    if freq_hz is not None:
        f = np.asarray(freq_hz, dtype=float)
        fn = f * np.asarray(height_m, dtype=float) * 1e-6  # Hz*m -> GHz*mm
        ef = kj_eps_dispersion(ur, fn, er, e0)
        zf = jk_z_dispersion(ur, fn, er, e0, ef, z0)
        disp = f > 0
        z0 = np.where(disp, zf, z0)
        e0 = np.where(disp, ef, e0)
    emb = cover_blend(e0, er, cover_m, thickness_m, height_m, cover_er)
    return z0 * np.sqrt(e0 / emb), emb


def microstrip_range_flags(width_m, height_m, thickness_m, er, cover_m=0.0, cover_er=1.0,
                           freq_hz=None) -> dict[str, np.ndarray]:
    """Named out-of-range masks (True = outside) for :func:`microstrip`.

    Ranges: [HJ80] 0.01 <= w/h <= 100, er <= 128; thickness correction compared with field
    solutions for t/h <= 1 (lines.md, not a range stated by the authors); [KJ82]/[JK83]
    0.1 <= w/h <= 100, er <= 20, h/lambda0 <= 0.13 when a frequency is given.
    """
    u = np.asarray(width_m, dtype=float) / np.asarray(height_m, dtype=float)
    tn = np.asarray(thickness_m, dtype=float) / np.asarray(height_m, dtype=float)
    er = np.asarray(er, dtype=float)
    flags = {
        "microstrip w/h outside 0.01..100 (Hammerstad & Jensen 1980)": (u < 0.01) | (u > 100.0),
        "microstrip er above 128 (Hammerstad & Jensen 1980)": er > 128.0,
        "microstrip t/h above 1: thickness correction not checked beyond (field-solver check)": tn > 1.0,
    }
    if freq_hz is not None:
        f = np.asarray(freq_hz, dtype=float)
        hl = f * np.asarray(height_m, dtype=float) / C0
        flags["dispersion outside 0.1 <= w/h <= 100, er <= 20, h/lambda0 <= 0.13 "
              "(Kirschning & Jansen 1982)"] = (f > 0) & ((u < 0.1) | (u > 100.0) | (er > 20.0) | (hl > 0.13))
    return flags


class MicrostripKernel:
    """Width-only static microstrip evaluator with the row constants precomputed.

    The same equations as :func:`microstrip` without a frequency (Hammerstad & Jensen 1980,
    thickness correction, cover blend), rearranged so that only the terms that depend on the
    width are recomputed: the hot path of the width solver. Agrees with :func:`microstrip` to
    round-off (a test checks).

    Parameters
    ----------
    height_m, thickness_m, er, cover_m, cover_er : ndarray, shape (n,)
        As for :func:`microstrip`.
    """

    def __init__(self, height_m, thickness_m, er, cover_m, cover_er) -> None:
        h = np.asarray(height_m, dtype=float)
        t = np.asarray(thickness_m, dtype=float)
        er = np.asarray(er, dtype=float)
        cov = np.asarray(cover_m, dtype=float)
        erc = np.asarray(cover_er, dtype=float)
        tn = t / h
        self.k_t = tn / np.pi
        self.c_t = 4.0 * _E / np.where(tn > 0, tn, 1.0)
        self.f_r = 0.5 * (1.0 + 1.0 / np.cosh(np.sqrt(np.maximum(er - 1.0, 0.0))))
        self.ab_b = -0.564 * ((er - 0.9) / (er + 3.0)) ** 0.053
        self.e_hi = (er + 1.0) / 2.0
        self.e_lo = (er - 1.0) / 2.0
        blend = np.where(cov > 0, np.exp(-2.0 * (cov + t) / h), 1.0)
        denom = er - 1.0
        big = denom > 1e-12
        kappa = (1.0 - blend) * (er - erc) / np.where(big, denom, 1.0)
        self.c_a = np.where(big, blend + kappa, blend)
        self.c_b = np.where(big, (1.0 - blend) * erc - kappa, (1.0 - blend) * er)

    @staticmethod
    def _z01(u: np.ndarray) -> np.ndarray:
        inv = 1.0 / u
        f = 6.0 + (2.0 * np.pi - 6.0) * np.exp(-np.exp(0.7528 * np.log(30.666 * inv)))
        return np.log(f * inv + np.sqrt(1.0 + 4.0 * inv * inv))   # times eta0/(2 pi)

    def ln_z0(self, u: np.ndarray, rows=None) -> np.ndarray:
        """ln of the static impedance (ohm) at normalised width ``u`` for ``rows`` (index or None)."""
        def g(a: np.ndarray) -> np.ndarray:
            return a if rows is None else a[rows]
        d1 = g(self.k_t) * np.log1p(g(self.c_t) * np.tanh(np.sqrt(6.517 * u)) ** 2)
        u1 = u + d1
        ur = u + d1 * g(self.f_r)
        z1 = self._z01(u1)
        zr = self._z01(ur)
        u2 = ur * ur
        u4 = u2 * u2
        a = (1.0 + np.log((u4 + u2 * (1.0 / 2704.0)) / (u4 + 0.432)) * (1.0 / 49.0)
             + np.log1p((ur * (1.0 / 18.1)) ** 3) * (1.0 / 18.7))
        e = g(self.e_hi) + g(self.e_lo) * np.exp(a * g(self.ab_b) * np.log1p(10.0 / ur))
        ratio = z1 / zr
        eps = e * ratio * ratio
        emb = eps * g(self.c_a) + g(self.c_b)
        # Z = eta0/(2 pi) zr / sqrt(e) * sqrt(eps/emb) = eta0/(2 pi) * z1 / sqrt(emb)
        return np.log(ETA0 / (2.0 * np.pi) * z1) - 0.5 * np.log(emb)
