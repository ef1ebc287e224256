"""Cross-section record, result record and frequency limits of a line over a hatched plane.

See :mod:`strainline.models.hatch.solver` for the method and its limits. All SI.
"""
from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from strainline.models.units import C0

#: Line kinds over a hatched plane.
HATCH_KINDS: tuple[str, ...] = ("microstrip", "stripline", "coupled-microstrip", "coupled-stripline")
_PAIRS = ("coupled-microstrip", "coupled-stripline")
_STRIPS = ("stripline", "coupled-stripline")


@dataclass(frozen=True)
class HatchSection:
    """A scalar cross-section over a hatched plane (all SI), hashable for caching.

    ``layers`` are (thickness, Dk) from the hatched plane's top face up to the trace's bottom face;
    ``layers_under`` from the plane's bottom face downwards (then air). Stripline kinds have a
    solid plane ``h_top`` above the trace's top face (Dk ``er_top`` between). Microstrip kinds may
    have a cover ``cover`` (Dk ``cover_er``) over the trace that also fills beside it.
    """

    kind: str
    w: float
    s: float
    t: float
    layers: tuple[tuple[float, float], ...]
    h_top: float = math.nan
    er_top: float = math.nan
    cover: float = 0.0
    cover_er: float = 1.0
    layers_under: tuple[tuple[float, float], ...] = ()
    opening_er: float = math.nan


def section_from_geometry(kind: str, geom: Any,
                          layers_below: Sequence[tuple[float, float]] | None = None,
                          layers_under: Sequence[tuple[float, float]] = (),
                          opening_er: float | None = None) -> HatchSection:
    """A :class:`HatchSection` from a scalar :class:`~strainline.models.lines.LineGeometry`.

    Same conventions as :func:`strainline.models.fields.field_solve`; ``layers_below`` replaces
    ``height_m`` / ``er`` by the layered dielectric. ``opening_er`` defaults to the Dk of the first
    layer under the plane, else 1 (air).
    """
    if kind not in HATCH_KINDS:
        raise ValueError(f"kind {kind!r} is not one of {list(HATCH_KINDS)}")

    def sc(name: str, default: float = math.nan) -> float:
        a = np.asarray(getattr(geom, name, default), dtype=float)
        if a.size != 1:
            raise ValueError(f"hatch solver takes one cross-section: {name} has {a.size} values")
        return float(a.reshape(-1)[0])

    if layers_below is not None:
        layers = tuple((float(a), float(b)) for a, b in layers_below if float(a) > 0)
    else:
        layers = ((sc("height_m"), sc("er")),)
    under = tuple((float(a), float(b)) for a, b in layers_under if float(a) > 0)
    h_top, er_top = sc("height_top_m"), sc("er_top")
    if kind in _STRIPS:
        h_top = sum(a for a, _ in layers) if math.isnan(h_top) else h_top
        er_top = layers[-1][1] if math.isnan(er_top) else er_top
    cover = 0.0 if kind in _STRIPS else (0.0 if math.isnan(sc("cover_m", 0.0)) else sc("cover_m", 0.0))
    oer = opening_er if opening_er is not None else (under[0][1] if under else 1.0)
    sec = HatchSection(kind, sc("width_m"), sc("gap_m"), sc("thickness_m"), layers, h_top, er_top,
                       cover, sc("cover_er", 1.0), under, float(oer))
    bad = [n for n, ok in (("width_m", sec.w > 0), ("thickness_m", sec.t >= 0),
                           ("height_m", sum(a for a, _ in layers) > 0),
                           ("er", all(e >= 1 for _, e in layers + under) and sec.opening_er >= 1),
                           ("gap_m", kind not in _PAIRS or sec.s > 0),
                           ("height_top_m", kind not in _STRIPS or sec.h_top > 0),
                           ("cover_m", sec.cover >= 0)) if not ok]
    if bad:
        raise ValueError(f"{kind} over a hatch has invalid {', '.join(bad)}")
    return sec


@dataclass(frozen=True)
class HatchResult:
    """Field solution of a line over a hatched plane (SI; pairs: odd mode, per line).

    Attributes
    ----------
    z0_ohm : float
        Impedance over the hatch, ohm (pairs: the differential impedance 2 Z_odd): the 3-D
        solution with its cross-section mesh error removed (see ``z_solid_ohm``).
    eps_eff : float
        Effective permittivity over the hatch.
    c_per_m, c_air_per_m : float
        Capacitance per unit length with the dielectrics and in air, F/m (same correction).
    z_solid_ohm : float
        The same cross-section over a solid plane, Richardson-extrapolated over the 3-D mesh's
        cross-section bisected once and twice, ohm. The 3-D capacitances are scaled by the ratio
        of this converged solid-plane value to the solid plane on the base mesh.
    z_raw_ohm : float
        The 3-D solution on its own mesh (no correction), ohm.
    z_solid_mesh_ohm : float
        The solid plane on the base mesh, ohm.
    ratio : float
        ``z_raw_ohm / z_solid_mesh_ohm``: the hatch factor (``z0_ohm / z_solid_ohm``), to apply to
        any converged solid-plane impedance of the same cross-section.
    solid_estimate_pct : float
        Grid convergence index of the solid-plane extrapolation (Roache 1994), percent.
    fill : float
        Copper fill of the hatch.
    f_bragg_hz, f_quasi_static_hz : float
        First stop band ``c0 / (2 P sqrt(eps_eff))`` and the quasi-static limit ``f_bragg / 5``.
    unknowns : int
        Free nodes of the 3-D mesh.
    seconds : float
        Wall time of the solve.
    """

    z0_ohm: float
    eps_eff: float
    c_per_m: float
    c_air_per_m: float
    z_solid_ohm: float
    z_raw_ohm: float
    z_solid_mesh_ohm: float
    ratio: float
    solid_estimate_pct: float
    fill: float
    f_bragg_hz: float
    f_quasi_static_hz: float
    unknowns: int
    seconds: float


def bragg_frequency_hz(period_m: float, eps_eff: float) -> float:
    """First stop band of a line with period ``P``: ``c0 / (2 P sqrt(eps_eff))`` (beta P = pi)."""
    return C0 / (2.0 * period_m * math.sqrt(eps_eff))


def quasi_static_limit_hz(period_m: float, eps_eff: float) -> float:
    """Frequency below which the period is under a tenth of the guided wavelength, Hz.

    ``c0 / (10 P sqrt(eps_eff))``; the tenth is common practice, no source.
    """
    return C0 / (10.0 * period_m * math.sqrt(eps_eff))
