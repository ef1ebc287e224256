"""One entry point for every line type: :func:`evaluate_line`, validity flags and findings.

A row is a candidate; every field of :class:`LineGeometry` broadcasts to ``(n,)``. Nothing here
raises for an odd row: invalid or out-of-range rows come back flagged (``in_range`` False) and
named by :func:`range_flags` / :func:`range_findings`.
"""
from __future__ import annotations

import numpy as np

from strainline.models.lines.coplanar import coplanar, coplanar_range_flags
from strainline.models.lines.coupled import (
    coupled_microstrip,
    coupled_microstrip_range_flags,
    coupled_stripline,
    coupled_stripline_range_flags,
)
from strainline.models.lines.geometry import GAP_KINDS, LINE_KINDS, PAIR_KINDS, LineGeometry, LineResult
from strainline.models.lines.microstrip import microstrip, microstrip_range_flags
from strainline.models.lines.stripline import stripline, stripline_range_flags

#: Equations used per line type, by author and year (for outputs).
METHODS: dict[str, tuple[str, ...]] = {
    "microstrip": (
        "Hammerstad & Jensen 1980 (static Z0, eps_eff, metal-thickness correction)",
    ),
    "stripline": (
        "Cohn 1954 (exact zero-thickness stripline, complete elliptic integrals)",
        "Wheeler 1978 (finite-thickness correction, applied as a ratio)",
        "parallel-combination rule for offset stripline (textbook approximation)",
    ),
    "coupled-microstrip": (
        "Kirschning & Jansen 1984 (static even/odd modes)",
        "Hammerstad & Jensen 1980 (single line; thickness widening applied per mode)",
    ),
    "coupled-stripline": (
        "Cohn 1955 (exact zero-thickness coupled stripline)",
        "Cohn 1955 thin-strip fringing correction (as in Wadell 1991)",
        "Cohn 1954 / Wheeler 1978 (single stripline)",
        "parallel-combination rule for offset stripline (textbook approximation)",
    ),
    "coplanar": (
        "Ghione & Naldi 1984 (coplanar waveguide, conformal mapping)",
        "Ghione & Naldi 1983 (conductor-backed coplanar waveguide)",
        "Gupta, Garg, Bahl & Bhartia 1996 (thickness correction; backed: effective slot in both partial "
        "capacitances, bounded by the microstrip of the same strip)",
    ),
}
#: Added to METHODS when the row has a cover / a frequency.
COVER_METHOD = "Wadell 1991 exponential blend for a cover dielectric (extended to its own Dk)"
COPLANAR_COVER_METHOD = "Simons 2001 partial-capacitance overlay for a cover dielectric"
DISPERSION_METHODS = (
    "Kirschning & Jansen 1982 (eps_eff dispersion)",
    "Jansen & Kirschning 1983 (Z0 dispersion)",
)

INVALID = "geometry invalid: width, height and gap must be positive, thickness >= 0, er >= 1"


def check_kind(kind: str) -> None:
    """Raise ``ValueError`` for an unknown line type (a programming error inside models/)."""
    if kind not in LINE_KINDS:
        raise ValueError(f"unknown line kind {kind!r}; expected one of {LINE_KINDS}")


def _shape(geom: LineGeometry) -> tuple[int, ...]:
    from dataclasses import fields
    return np.broadcast_shapes(*(np.shape(getattr(geom, f.name)) for f in fields(geom)))


def _invalid(kind: str, g: LineGeometry) -> np.ndarray:
    h2, er2 = g.resolved_top()
    bad = ~((g.width_m > 0) & (g.height_m > 0) & (g.thickness_m >= 0) & (g.er >= 1.0))
    if kind in GAP_KINDS:
        bad = bad | ~(g.gap_m > 0)
    if kind in ("stripline", "coupled-stripline"):
        bad = bad | ~((h2 > 0) & (er2 >= 1.0))
    if kind in ("microstrip", "coupled-microstrip", "coplanar"):
        bad = bad | ~((g.cover_m >= 0) & ((g.cover_m == 0) | (g.cover_er >= 1.0)))
    return bad


def evaluate_line(kind: str, geom: LineGeometry, freq_hz=None) -> LineResult:
    """Impedance and effective permittivity of a batch of lines.

    Parameters
    ----------
    kind : {"microstrip", "stripline", "coupled-microstrip", "coupled-stripline", "coplanar"}
        Line type.
    geom : LineGeometry
        Cross-sections (SI), fields broadcastable to ``(n,)``.
    freq_hz : array_like or None
        Frequency, Hz. Microstrip is dispersed (Kirschning & Jansen 1982, Jansen & Kirschning
        1983); the other types are quasi-static (stripline is TEM; no dispersion model is
        implemented for coupled microstrip or coplanar, and :func:`method_findings` says so).

    Returns
    -------
    LineResult
        Arrays of the broadcast shape. Invalid rows (non-positive width/height/gap, negative
        thickness, er below 1) are ``nan`` with ``in_range`` False.

    Notes
    -----
    Sources, validity ranges and measured accuracy are in each model's docstring
    (:mod:`.microstrip`, :mod:`.stripline`, :mod:`.coupled`, :mod:`.coplanar`).
    """
    check_kind(kind)
    shape = _shape(geom)
    g = geom
    bad = _invalid(kind, g)
    # evaluate with harmless stand-ins on invalid rows, then blank them
    w = np.where(bad, 1.0, g.width_m)
    h = np.where(bad, 1.0, g.height_m)
    t = np.where(bad, 0.0, g.thickness_m)
    er = np.where(bad, 2.0, g.er)
    gap = np.where(bad, 1.0, g.gap_m)
    h2, er2 = g.resolved_top()
    h2 = np.where(bad, 1.0, h2)
    er2 = np.where(bad, 2.0, er2)
    cov = np.where(bad, 0.0, g.cover_m)
    erc = np.where(bad, 2.0, g.cover_er)
    nan = np.full(shape, np.nan)
    ze = zo = ee = eo = nan
    with np.errstate(all="ignore"):
        if kind == "microstrip":
            z0, eps = microstrip(w, h, t, er, cov, erc, freq_hz)
        elif kind == "stripline":
            z0, eps = stripline(w, h, h2, t, er, er2)
        elif kind == "coupled-microstrip":
            z0, _ = microstrip(w, h, t, er, cov, erc)
            ze, zo, ee, eo = coupled_microstrip(w, gap, h, t, er, cov, erc)
            eps = eo
        elif kind == "coupled-stripline":
            z0, _ = stripline(w, h, h2, t, er, er2)
            ze, zo, ee, eo = coupled_stripline(w, gap, h, h2, t, er, er2)
            eps = eo
        else:
            z0, eps = coplanar(w, gap, h, t, er, g.bottom_ground, cov, erc)
    flags = range_flags(kind, geom, freq_hz)
    out_of_range = np.zeros(shape, dtype=bool)
    for mask in flags.values():
        out_of_range = out_of_range | np.broadcast_to(mask, shape)

    def blank(a: np.ndarray) -> np.ndarray:
        return np.where(bad, np.nan, np.broadcast_to(a, shape))

    ze, zo, ee, eo = (blank(a) for a in (ze, zo, ee, eo))
    return LineResult(
        z0_ohm=blank(z0), eps_eff=blank(eps), z_odd_ohm=zo, z_even_ohm=ze,
        z_diff_ohm=2.0 * zo, z_common_ohm=0.5 * ze, eps_eff_odd=eo, eps_eff_even=ee,
        in_range=~out_of_range & np.isfinite(blank(z0)),
    )


def range_flags(kind: str, geom: LineGeometry, freq_hz=None) -> dict[str, np.ndarray]:
    """Named out-of-range masks (True = outside the equation's stated range), one per check.

    The invalid-geometry check is included under :data:`INVALID`. Use it for the solver's
    constraint columns; :func:`range_findings` turns it into text.
    """
    check_kind(kind)
    g = geom
    h2, _ = g.resolved_top()
    with np.errstate(all="ignore"):
        flags: dict[str, np.ndarray] = {INVALID: _invalid(kind, g)}
        if kind == "microstrip":
            flags.update(microstrip_range_flags(g.width_m, g.height_m, g.thickness_m, g.er,
                                                g.cover_m, g.cover_er, freq_hz))
        elif kind == "stripline":
            flags.update(stripline_range_flags(g.width_m, g.height_m, h2, g.thickness_m))
        elif kind == "coupled-microstrip":
            flags.update(coupled_microstrip_range_flags(g.width_m, g.gap_m, g.height_m, g.thickness_m, g.er))
            flags.update(microstrip_range_flags(g.width_m, g.height_m, g.thickness_m, g.er))
        elif kind == "coupled-stripline":
            flags.update(coupled_stripline_range_flags(g.width_m, g.gap_m, g.height_m, h2, g.thickness_m))
            flags.update(stripline_range_flags(g.width_m, g.height_m, h2, g.thickness_m))
        else:
            flags.update(coplanar_range_flags(g.width_m, g.gap_m, g.height_m, g.thickness_m))
    return {k: np.asarray(v, dtype=bool) for k, v in flags.items()}


def range_findings(kind: str, geom: LineGeometry, result: LineResult | None = None,
                   freq_hz=None) -> list[str]:
    """Findings (text) for every range check that any row fails, with the count of rows.

    Parameters
    ----------
    kind : str
        Line type.
    geom : LineGeometry
        The geometry that was evaluated.
    result : LineResult, optional
        Unused except for shape; accepted so callers can pass what they have.
    freq_hz : array_like or None
        The frequency the line was evaluated at.
    """
    out = []
    for name, mask in range_flags(kind, geom, freq_hz).items():
        count = int(np.count_nonzero(mask))
        if count:
            total = int(np.size(mask))
            out.append(name if total == 1 else f"{name} ({count} of {total} rows)")
    return out


def method_findings(kind: str, geom: LineGeometry, freq_hz=None) -> list[str]:
    """Accuracy notes that apply to these rows (not range violations): the known misses of the
    closed forms on flex geometry (lines.md), to be stated in every output."""
    check_kind(kind)
    g = geom
    notes: list[str] = []
    has_cover = bool(np.any(g.cover_m > 0)) and kind in ("microstrip", "coupled-microstrip", "coplanar")
    if has_cover and kind == "microstrip":
        notes.append("covered microstrip: the closed-form cover correction (Wadell 1991 exponential blend) "
                     "put Z0 1.8-3.9 % low against layered field solutions of flex cross-sections (checked "
                     "with strainline's field solver, tests/test_lines_accuracy.py); the search uses the field")
    if has_cover and kind == "coupled-microstrip":
        notes.append("covered pair: the cover correction is applied per mode (stated extension); Zdiff 1.5-2.2 % "
                     "low against layered field solutions, the even mode far more (checked with strainline's "
                     "field solver)")
    if has_cover and kind == "coplanar":
        notes.append("covered coplanar: partial-capacitance overlay (stated extension); within the coplanar "
                     "band below against layered field solutions (checked with strainline's field solver)")
    if kind == "coupled-microstrip" and bool(np.any(g.thickness_m > 0)):
        notes.append("coupled microstrip thickness: H&J width widening applied per mode (stated combination); "
                     "+0.8 to +2.5 % in Zdiff against field solutions with 12-18 um copper (checked with "
                     "strainline's field solver)")
    if kind == "coupled-stripline" and bool(np.any(g.gap_m < g.width_m)):
        notes.append("coupled stripline: Cohn 1955 with the thin-strip correction runs +4.9 to +5.4 % high in "
                     "Zdiff at a narrow gap (s < w) with 12 um copper (checked with strainline's field solver)")
    if kind in ("stripline", "coupled-stripline"):
        h2, er2 = g.resolved_top()
        if bool(np.any(h2 != g.height_m)):
            notes.append("offset stripline: parallel-combination rule, +0.2 to +0.4 % in Z0 against field "
                         "solutions at a moderate offset (up to 2:1), +3.2 to +5.0 % at a strong offset (4-5:1) "
                         "(checked with strainline's field solver)")
        if bool(np.any(er2 != g.er)):
            notes.append("different Dk above and below: each half of the parallel combination at its own Dk "
                         "(stated rule)")
    if kind == "coplanar":
        notes.append("conductor-backed coplanar: conformal mapping with the effective slot, bounded by the "
                     "microstrip of the same strip; -2.8 to +4.0 % in Z0 against field solutions of flex "
                     "cross-sections (checked with strainline's field solver)")
    if freq_hz is not None and kind in ("coupled-microstrip", "coplanar"):
        notes.append(f"{kind}: quasi-static impedance; no dispersion model applied")
    if freq_hz is not None and kind == "microstrip" and has_cover:
        notes.append("dispersion under a cover: Kirschning & Jansen applied to the bare line before the cover "
                     "blend (approximate)")
    return notes


def methods_used(kind: str, geom: LineGeometry, freq_hz=None) -> list[str]:
    """The equations used for these rows, by author and year."""
    check_kind(kind)
    out = list(METHODS[kind])
    if kind == "coplanar":
        bg = np.asarray(geom.bottom_ground)
        if not bool(np.any(bg)):
            out.remove("Ghione & Naldi 1983 (conductor-backed coplanar waveguide)")
        if bool(np.all(bg)):
            out.remove("Ghione & Naldi 1984 (coplanar waveguide, conformal mapping)")
    if kind in ("microstrip", "coupled-microstrip") and bool(np.any(geom.cover_m > 0)):
        out.append(COVER_METHOD)
    if kind == "coplanar" and bool(np.any(geom.cover_m > 0)):
        out.append(COPLANAR_COVER_METHOD)
    if kind == "microstrip" and freq_hz is not None:
        out.extend(DISPERSION_METHODS)
    return out


__all__ = ["evaluate_line", "range_flags", "range_findings", "method_findings", "methods_used",
           "METHODS", "PAIR_KINDS", "check_kind"]
