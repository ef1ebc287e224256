"""Line geometry and result records, the composite-Dk rule and elliptic-integral helpers.

All quantities are SI (metres) and arrays broadcastable to ``(n,)``: a row is a candidate.
"""
from __future__ import annotations

from dataclasses import dataclass, fields, replace
from typing import Literal

import numpy as np
from scipy.special import ellipkm1

LineKind = Literal["microstrip", "stripline", "coupled-microstrip", "coupled-stripline", "coplanar"]
#: The line types, in the order the command line lists them.
LINE_KINDS: tuple[str, ...] = (
    "microstrip", "stripline", "coupled-microstrip", "coupled-stripline", "coplanar",
)
#: Line types that are a pair of strips (target impedance = differential impedance).
PAIR_KINDS: tuple[str, ...] = ("coupled-microstrip", "coupled-stripline")
#: Line types that need ``gap_m``.
GAP_KINDS: tuple[str, ...] = ("coupled-microstrip", "coupled-stripline", "coplanar")


def _arr(x: object) -> np.ndarray:
    return np.asarray(x, dtype=float)


@dataclass(frozen=True)
class LineGeometry:
    """Cross-section of one line per row (all SI, arrays broadcastable to ``(n,)``).

    Parameters
    ----------
    width_m : array_like
        Trace width, m (ignored by :func:`solve_width`).
    gap_m : array_like
        Edge-to-edge gap of a pair, or the slot between a coplanar trace and its side
        grounds, m; ``nan`` when unused.
    height_m : array_like
        Dielectric between the trace's bottom face and the plane below, m (coplanar:
        substrate thickness).
    height_top_m : array_like
        Stripline only: dielectric between the trace's top face and the plane above, m;
        ``nan`` otherwise (a stripline with ``nan`` here is centred: ``height_top_m = height_m``).
    thickness_m : array_like
        Copper thickness, m (>= 0).
    er : array_like
        Relative permittivity below the trace (use :func:`composite_er` for stacked
        dielectrics), >= 1.
    er_top : array_like
        Stripline only: relative permittivity above the trace; ``nan`` = same as ``er``.
    cover_m : array_like
        Cover dielectric thickness above the trace's top face, m (0 = bare). The cover fills
        beside the trace down to the substrate. Microstrip, coupled microstrip and coplanar.
    cover_er : array_like
        Relative permittivity of the cover (ignored when ``cover_m`` is 0).
    bottom_ground : array_like of bool
        Coplanar only: True = conductor-backed (a plane ``height_m`` below the trace).
    """

    width_m: np.ndarray
    height_m: np.ndarray
    thickness_m: np.ndarray
    er: np.ndarray
    gap_m: np.ndarray = np.nan  # type: ignore[assignment]
    height_top_m: np.ndarray = np.nan  # type: ignore[assignment]
    er_top: np.ndarray = np.nan  # type: ignore[assignment]
    cover_m: np.ndarray = 0.0  # type: ignore[assignment]
    cover_er: np.ndarray = 1.0  # type: ignore[assignment]
    bottom_ground: np.ndarray = True  # type: ignore[assignment]

    def __post_init__(self) -> None:
        for f in fields(self):
            val = getattr(self, f.name)
            if f.name == "bottom_ground":
                object.__setattr__(self, f.name, np.asarray(val, dtype=bool))
            else:
                object.__setattr__(self, f.name, _arr(val))

    @property
    def n(self) -> int:
        """Number of rows after broadcasting all fields."""
        shape = np.broadcast_shapes(*(np.shape(getattr(self, f.name)) for f in fields(self)))
        return int(np.prod(shape)) if shape else 1

    def broadcast(self, n: int | None = None) -> "LineGeometry":
        """All fields broadcast to one common 1-D shape ``(n,)`` (copies, writable)."""
        shapes = [np.shape(getattr(self, f.name)) for f in fields(self)]
        shape = np.broadcast_shapes(*shapes)
        if n is not None:
            shape = np.broadcast_shapes(shape, (n,))
        if len(shape) == 0:
            shape = (1,)
        if len(shape) != 1:
            raise ValueError(f"LineGeometry fields must broadcast to one dimension, got {shape}")
        return LineGeometry(**{f.name: np.array(np.broadcast_to(getattr(self, f.name), shape))
                               for f in fields(self)})

    def take(self, index: np.ndarray) -> "LineGeometry":
        """Rows ``index`` (fields that are scalars stay scalars; 1-D fields are indexed)."""
        def pick(a: np.ndarray) -> np.ndarray:
            return a if a.ndim == 0 else a[index]
        return LineGeometry(**{f.name: pick(getattr(self, f.name)) for f in fields(self)})

    def with_(self, **changes: object) -> "LineGeometry":
        """A copy with some fields replaced (``dataclasses.replace``)."""
        return replace(self, **changes)

    def resolved_top(self) -> tuple[np.ndarray, np.ndarray]:
        """``(height_top_m, er_top)`` with ``nan`` replaced by ``height_m`` / ``er``."""
        h2 = np.where(np.isnan(self.height_top_m), self.height_m, self.height_top_m)
        er2 = np.where(np.isnan(self.er_top), self.er, self.er_top)
        return h2, er2


@dataclass(frozen=True)
class LineResult:
    """Quasi-static (or dispersive, when a frequency was given) line parameters per row.

    Attributes
    ----------
    z0_ohm : ndarray
        Characteristic impedance of a single line, ohm (for pairs: one line of the pair alone).
    eps_eff : ndarray
        Effective relative permittivity (pairs: the odd mode's).
    z_odd_ohm, z_even_ohm : ndarray
        Odd- and even-mode impedances of a pair, ohm (``nan`` for single lines).
    z_diff_ohm, z_common_ohm : ndarray
        Differential (2 Z_odd) and common-mode (Z_even / 2) impedance, ohm (``nan`` for single lines).
    eps_eff_odd, eps_eff_even : ndarray
        Mode effective permittivities (``nan`` for single lines).
    in_range : ndarray of bool
        True where every equation used was inside its stated validity range.
    """

    z0_ohm: np.ndarray
    eps_eff: np.ndarray
    z_odd_ohm: np.ndarray
    z_even_ohm: np.ndarray
    z_diff_ohm: np.ndarray
    z_common_ohm: np.ndarray
    eps_eff_odd: np.ndarray
    eps_eff_even: np.ndarray
    in_range: np.ndarray

    @property
    def target_ohm(self) -> np.ndarray:
        """The impedance a target refers to: ``z_diff_ohm`` where defined, else ``z0_ohm``."""
        return np.where(np.isnan(self.z_diff_ohm), self.z0_ohm, self.z_diff_ohm)


def composite_er(thickness_m: np.ndarray, er: np.ndarray) -> np.ndarray:
    """Composite relative permittivity of dielectrics stacked between a trace and its plane.

    Series capacitance by thickness (the layers are capacitors in series across the field
    under a wide strip):

    .. math:: \\varepsilon_{r,c} = \\frac{\\sum_i t_i}{\\sum_i t_i/\\varepsilon_{r,i}}

    Exact for a parallel-plate field (the wide-strip limit); for narrow strips the fringing
    field sees the layer next to the trace more, so a field solution differs by up to a few
    percent in eps_eff when the Dk differ strongly. This is the one place the rule lives; every
    line type receives its result as ``er``.

    Parameters
    ----------
    thickness_m : array_like, shape (n, k)
        Thickness of each stacked dielectric, m (zero-thickness padding columns allowed).
    er : array_like, shape (n, k)
        Relative permittivity of each, >= 1.

    Returns
    -------
    ndarray, shape (n,)
        The composite relative permittivity (``nan`` for a row whose total thickness is 0).
    """
    t = np.atleast_2d(_arr(thickness_m))
    e = np.atleast_2d(_arr(er))
    t, e = np.broadcast_arrays(t, e)
    total = t.sum(axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        elastance = np.where(t > 0, t / np.where(t > 0, e, 1.0), 0.0).sum(axis=-1)
        return np.where(total > 0, total / np.where(elastance > 0, elastance, 1.0), np.nan)


# --------------------------------------------------------------------------------------------
# Complete elliptic integrals (scipy uses the parameter m = k**2).
# --------------------------------------------------------------------------------------------

def k_ratio(m: np.ndarray, m1: np.ndarray) -> np.ndarray:
    """K(k)/K(k') from m = k**2 and m1 = 1 - k**2 given separately (both accurate).

    ``scipy.special.ellipkm1(p)`` is K at parameter 1 - p, so K(k) = ellipkm1(m1) and
    K(k') = ellipkm1(m); passing both complements exactly keeps full precision for k -> 0
    and k -> 1.
    """
    return ellipkm1(m1) / ellipkm1(m)


def _k_of_log(ln_p: np.ndarray) -> np.ndarray:
    """K at parameter 1 - p, from ln p: ``ellipkm1(p)``, or its asymptote ln 4 - ln(p)/2 when
    p < 1e-16 (error below 1e-16 relative there; avoids underflow of p to 0)."""
    ln_p = np.asarray(ln_p, dtype=float)
    tiny = ln_p < -36.8
    return np.where(tiny, np.log(4.0) - 0.5 * ln_p, ellipkm1(np.exp(np.where(tiny, 0.0, ln_p))))


def k_ratio_log(ln_m: np.ndarray, ln_m1: np.ndarray) -> np.ndarray:
    """K(k)/K(k') from ln(k**2) and ln(1 - k**2): full precision even when either underflows."""
    return _k_of_log(ln_m1) / _k_of_log(ln_m)


def log_cosh(x: np.ndarray) -> np.ndarray:
    """ln(cosh x) without overflow."""
    ax = np.abs(x)
    return ax + np.log1p(np.exp(-2.0 * ax)) - np.log(2.0)


def log_sinh(x: np.ndarray) -> np.ndarray:
    """ln(sinh x) for x > 0 without overflow (and accurate for small x)."""
    x = np.asarray(x, dtype=float)
    small = x < 1e-3
    xs = np.where(small, x, 1.0)
    xl = np.where(small, 1.0, x)
    return np.where(small, np.log(xs) + xs * xs / 6.0, xl + np.log(-np.expm1(-2.0 * xl)) - np.log(2.0))
