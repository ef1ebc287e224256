"""Transmission-line loss: skin depth, conductor loss with surface roughness, dielectric loss.

SI arrays broadcastable to ``(n,)``; a row is a candidate. Loss in Np/m inside, dB/m and
dB/inch in the result.

Conductor loss uses Wheeler's incremental-inductance rule on the closed-form *air* impedance of
the same line type (lines.md section 8: the physically grounded choice; the Rs/(Z0 w) and
Hammerstad forms differ from it by up to 2x on flex geometry). The derivative with respect to
the recession of every metal wall is taken numerically (central difference), vectorized.

References
----------
.. [W42] H. A. Wheeler, "Formulas for the skin effect", Proc. IRE 30(9), Sept. 1942, pp. 412-424.
.. [HB75] E. Hammerstad, F. Bekkadal, *Microstrip Handbook*, ELAB report STF44 A74169,
   University of Trondheim, 1975 (roughness factor; reproduced in Hammerstad & Jensen 1980).
.. [G96] S. Groiss, I. Bardi, O. Biro, K. Preis, K. R. Richter, "Parameters of lossy cavity
   resonators calculated by the finite element method", IEEE Trans. Magnetics 32(3), 1996,
   pp. 894-897 (roughness factor; from memory).
.. [P] D. M. Pozar, *Microwave Engineering*, section 3.8 (dielectric loss of a partly filled
   line; the filling-factor form), from memory of the section number.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from strainline.models.lines.coplanar import coplanar
from strainline.models.lines.coupled import coupled_microstrip, coupled_stripline
from strainline.models.lines.evaluate import check_kind, evaluate_line
from strainline.models.lines.geometry import LineGeometry, LineResult
from strainline.models.lines.microstrip import microstrip
from strainline.models.lines.stripline import stripline
from strainline.models.units import C0, ETA0, INCH, MU0, NP_TO_DB

RoughnessModel = Literal["hammerstad-bekkadal", "groisse", "none"]
ROUGHNESS_MODELS: tuple[str, ...] = get_args(RoughnessModel)


@dataclass(frozen=True)
class LineLoss:
    """Attenuation per row.

    Attributes
    ----------
    conductor_db_per_m, dielectric_db_per_m, total_db_per_m : ndarray
        Loss in dB/m (pairs: the odd / differential mode).
    skin_depth_m : ndarray
        Skin depth, m.
    roughness_factor : ndarray
        Multiplier applied to the smooth conductor loss (>= 1).
    thin_conductor : ndarray of bool
        True where the copper is thinner than 3 skin depths (skin-effect formula not valid;
        the loss is then the larger of the skin-effect and DC-resistance values).
    wheeler_failed : ndarray of bool
        True where the closed-form impedance does not rise as the metal walls recede (outside the
        equations' range), so Wheeler's rule would give a zero or negative loss; the
        parallel-plate estimate R_s/(Z_0 w) is used there instead. Loss is never negative.
    """

    conductor_db_per_m: np.ndarray
    dielectric_db_per_m: np.ndarray
    total_db_per_m: np.ndarray
    skin_depth_m: np.ndarray
    roughness_factor: np.ndarray
    thin_conductor: np.ndarray
    wheeler_failed: np.ndarray | None = None

    @property
    def conductor_db_per_inch(self) -> np.ndarray:
        return self.conductor_db_per_m * INCH

    @property
    def dielectric_db_per_inch(self) -> np.ndarray:
        return self.dielectric_db_per_m * INCH

    @property
    def total_db_per_inch(self) -> np.ndarray:
        return self.total_db_per_m * INCH


def skin_depth(freq_hz, conductivity_s_per_m, mu_r=1.0) -> np.ndarray:
    """Skin depth delta = 1/sqrt(pi f mu0 mu_r sigma), m (classical good-conductor result)."""
    return 1.0 / np.sqrt(np.pi * np.asarray(freq_hz, dtype=float) * MU0 * mu_r
                         * np.asarray(conductivity_s_per_m, dtype=float))


def surface_resistance(freq_hz, conductivity_s_per_m) -> np.ndarray:
    """Surface resistance Rs = sqrt(pi f mu0 / sigma) = 1/(sigma delta), ohm."""
    return np.sqrt(np.pi * np.asarray(freq_hz, dtype=float) * MU0
                   / np.asarray(conductivity_s_per_m, dtype=float))


def roughness_factor(roughness_rq_m, skin_depth_m, model: str = "hammerstad-bekkadal") -> np.ndarray:
    """Conductor-loss multiplier for RMS surface roughness Rq.

    * ``"hammerstad-bekkadal"`` [HB75]: K = 1 + (2/pi) arctan(1.4 (Rq/delta)^2)
    * ``"groisse"`` [G96]: K = 1 + exp(-(delta/(2 Rq))^1.6)
    * ``"none"``: K = 1

    Both published forms saturate at 2 (they underestimate very rough foils at high frequency).

    Parameters
    ----------
    roughness_rq_m : array_like
        RMS roughness, m (0 = smooth).
    skin_depth_m : array_like
        Skin depth, m.
    model : str
        One of :data:`ROUGHNESS_MODELS`.
    """
    rq = np.asarray(roughness_rq_m, dtype=float)
    d = np.asarray(skin_depth_m, dtype=float)
    if model == "hammerstad-bekkadal":
        return 1.0 + 2.0 / np.pi * np.arctan(1.4 * (rq / d) ** 2)
    if model == "groisse":
        pos = rq > 0
        return np.where(pos, 1.0 + np.exp(-((d / (2.0 * np.where(pos, rq, 1.0))) ** 1.6)), 1.0)
    if model == "none":
        return np.ones(np.broadcast_shapes(rq.shape, d.shape))
    raise ValueError(f"roughness model {model!r} is not one of {ROUGHNESS_MODELS}")


def _air_impedances(kind: str, g: LineGeometry, dn) -> tuple[np.ndarray, np.ndarray]:
    """(Z_air single/odd, Z_air even) with every metal wall receded by ``dn`` (m, may be < 0)."""
    w = g.width_m - 2.0 * dn
    t = np.maximum(g.thickness_m - 2.0 * dn, 0.0)
    h = g.height_m + 2.0 * dn
    h2, _ = g.resolved_top()
    h2 = h2 + 2.0 * dn
    s = g.gap_m + 2.0 * dn
    one = np.ones_like(np.asarray(g.er, dtype=float))
    if kind == "microstrip":
        z, _ = microstrip(w, h, t, one)
        return z, z
    if kind == "stripline":
        z, _ = stripline(w, h, h2, t, one, one)
        return z, z
    if kind == "coupled-microstrip":
        ze, zo, _, _ = coupled_microstrip(w, s, h, t, one)
        return zo, ze
    if kind == "coupled-stripline":
        ze, zo, _, _ = coupled_stripline(w, s, h, h2, t, one, one)
        return zo, ze
    # coplanar: the substrate height matters only to the bottom ground
    hc = np.where(g.bottom_ground, h, g.height_m)
    z, _ = coplanar(w, s, hc, t, one, g.bottom_ground)
    return z, z


def _eps_energy_fractions(kind: str, g: LineGeometry, freq_hz) -> dict[str, np.ndarray]:
    """Electric-energy fraction of each dielectric region (substrate, top, cover) of the line's
    (odd) mode: p_i = (er_i / eps_eff) d eps_eff / d er_i, by forward differences."""
    base = evaluate_line(kind, g, freq_hz).eps_eff
    h2, er2 = g.resolved_top()
    out = {}
    step = 1e-6
    if kind in ("stripline", "coupled-stripline"):
        bumped_sub = g.with_(er=g.er * (1 + step), er_top=er2)
        bumped_top = g.with_(er_top=er2 * (1 + step))
        out["substrate"] = (evaluate_line(kind, bumped_sub, freq_hz).eps_eff - base) / (step * base)
        out["top"] = (evaluate_line(kind, bumped_top, freq_hz).eps_eff - base) / (step * base)
    else:
        bumped = g.with_(er=g.er * (1 + step))
        out["substrate"] = (evaluate_line(kind, bumped, freq_hz).eps_eff - base) / (step * base)
        bumped_c = g.with_(cover_er=g.cover_er * (1 + step))
        out["cover"] = np.where(g.cover_m > 0,
                                (evaluate_line(kind, bumped_c, freq_hz).eps_eff - base) / (step * base), 0.0)
    return out


def line_loss(kind: str, geom: LineGeometry, result: LineResult, freq_hz, df, roughness_rq_m,
              conductivity_s_per_m, df_top=None, df_cover=None,
              roughness_model: str = "hammerstad-bekkadal") -> LineLoss:
    """Conductor and dielectric loss of a batch of lines at one frequency per row.

    Conductor loss, Wheeler's incremental-inductance rule [W42]:

    .. math:: \\alpha_c = \\frac{R_s}{2 Z_0 \\eta_0}\\frac{\\partial Z_{0,air}}{\\partial n}\\,K_{rough}

    with every metal wall receded by dn (strip width -2dn, thickness -2dn, dielectric heights
    +2dn, gaps +2dn), the derivative by a central difference on the same closed form evaluated
    in air, Z0 the loaded impedance of the mode, and K_rough from :func:`roughness_factor`
    applied to strip and planes alike (one Rq). Where the copper is thinner than 3 skin depths
    the result is the larger of this and the strip's DC resistance R_dc/(2 Z0),
    R_dc = 1/(sigma w t) (a stated floor, not a published blend). Pairs: the odd mode
    (differential signal).

    Dielectric loss, filling-factor form [P] generalised by energy fractions:

    .. math:: \\alpha_d = \\frac{\\pi\\sqrt{\\varepsilon_{eff}}}{\\lambda_0}\\sum_i p_i\\tan\\delta_i,
              \\quad p_i = \\frac{\\varepsilon_{r,i}}{\\varepsilon_{eff}}
              \\frac{\\partial\\varepsilon_{eff}}{\\partial\\varepsilon_{r,i}}

    p_i is the share of electric energy in region i (perturbation theory), taken from the same
    closed form by a forward difference in each region's Dk. For a single dielectric this is the
    textbook pi er (eps_eff - 1) tan d / (lambda0 sqrt(eps_eff) (er - 1)); for homogeneous
    stripline pi sqrt(er) tan d / lambda0.

    Parameters
    ----------
    kind : str
        Line type.
    geom : LineGeometry
        Cross-sections, m.
    result : LineResult
        ``evaluate_line(kind, geom, freq_hz)`` for the same rows.
    freq_hz : array_like
        Frequency, Hz (> 0).
    df : array_like
        Loss tangent below the trace (substrate; use a thickness-weighted value for stacks).
    roughness_rq_m : array_like
        RMS roughness of the copper, m.
    conductivity_s_per_m : array_like
        Copper conductivity, S/m.
    df_top, df_cover : array_like, optional
        Loss tangent above a stripline / of the cover; default ``df``.
    roughness_model : {"hammerstad-bekkadal", "groisse", "none"}

    Returns
    -------
    LineLoss
    """
    check_kind(kind)
    if roughness_model not in ROUGHNESS_MODELS:
        raise ValueError(f"roughness model {roughness_model!r} is not one of {ROUGHNESS_MODELS}")
    g = geom
    f = np.asarray(freq_hz, dtype=float)
    sigma = np.asarray(conductivity_s_per_m, dtype=float)
    df = np.asarray(df, dtype=float)
    df_top = df if df_top is None else np.asarray(df_top, dtype=float)
    df_cover = df if df_cover is None else np.asarray(df_cover, dtype=float)
    pair = kind in ("coupled-microstrip", "coupled-stripline")
    z_mode = result.z_odd_ohm if pair else result.z0_ohm
    eps = result.eps_eff
    with np.errstate(all="ignore"):
        delta = skin_depth(f, sigma)
        rs = surface_resistance(f, sigma)
        sizes = [g.width_m, g.height_m]
        if kind in ("coupled-microstrip", "coupled-stripline", "coplanar"):
            sizes.append(g.gap_m)
        dn = 1e-4 * np.minimum.reduce([np.broadcast_to(s, np.broadcast_shapes(*(np.shape(x) for x in sizes)))
                                       for s in sizes])
        dn = np.where(g.thickness_m > 0, np.minimum(dn, 1e-3 * np.where(g.thickness_m > 0, g.thickness_m, 1.0)), dn)
        zp, _ = _air_impedances(kind, g, dn)
        zm, _ = _air_impedances(kind, g, -dn)
        dz_dn = (zp - zm) / (2.0 * dn)
        k_r = roughness_factor(roughness_rq_m, delta, roughness_model)
        alpha_c = rs / (2.0 * z_mode * ETA0) * dz_dn * k_r
        # the impedance of a line rises as its walls recede (more inductance, Wheeler [W42]); where the
        # closed form does not, fall back to the parallel-plate strip loss R_s/(Z0 w) [P], never < 0
        failed = ~(dz_dn > 0) & np.isfinite(z_mode) & (z_mode > 0)
        alpha_c = np.where(failed, rs * k_r / (z_mode * g.width_m), alpha_c)
        thin = g.thickness_m < 3.0 * delta
        alpha_dc = 1.0 / (sigma * g.width_m * np.where(g.thickness_m > 0, g.thickness_m, np.nan)) / (2.0 * z_mode)
        alpha_c = np.where(thin & np.isfinite(alpha_dc), np.maximum(alpha_c, alpha_dc), alpha_c)

        p = _eps_energy_fractions(kind, g, None)
        if kind in ("stripline", "coupled-stripline"):
            tan_eff = p["substrate"] * df + p["top"] * df_top
        else:
            tan_eff = p["substrate"] * df + p["cover"] * df_cover
        lam0 = C0 / f
        alpha_d = np.pi * np.sqrt(eps) * tan_eff / lam0
        alpha_d = np.where(alpha_d < 0, 0.0, alpha_d)      # energy fractions are >= 0: no negative loss
    cond = NP_TO_DB * alpha_c
    diel = NP_TO_DB * alpha_d
    return LineLoss(conductor_db_per_m=cond, dielectric_db_per_m=diel, total_db_per_m=cond + diel,
                    skin_depth_m=delta, roughness_factor=k_r, thin_conductor=np.asarray(thin),
                    wheeler_failed=np.asarray(failed))


def delay_ps_per_mm(eps_eff) -> np.ndarray:
    """Propagation delay sqrt(eps_eff)/c0, in ps per mm."""
    return np.sqrt(np.asarray(eps_eff, dtype=float)) / C0 * 1e12 * 1e-3
