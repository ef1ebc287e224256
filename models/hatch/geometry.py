"""Hatch geometry: the copper pattern of a hatched (cross-hatched, meshed) reference plane.

A hatch is a square grid of copper lines of width ``w`` at centre-to-centre pitch ``p`` (both
measured perpendicular to the lines), laid at 90 degrees (lines parallel and perpendicular to the
signal trace) or 45 degrees (both families diagonal to the trace). All SI.

Copper fill of a square grid: each pitch-by-pitch cell has one square opening of side ``p - w``,

.. math:: f = 1 - \\left(1 - \\frac{w}{p}\\right)^2,

the same at either angle (a rotation keeps areas). This is plain geometry; it is the copper
fraction the mechanics use for a hatched layer.

Period along the trace: ``p`` at 90 degrees; at 45 degrees the lattice vectors are
``(p/sqrt 2)(1, +-1)``, whose shortest translation along the trace is ``p sqrt 2``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Hatch angles the solver meshes (degrees between the hatch lines and the trace).
HATCH_ANGLES: tuple[float, ...] = (45.0, 90.0)
#: Where the trace's centre line sits over a 90-degree hatch.
HATCH_POSITIONS: tuple[str, ...] = ("line", "opening")


def hatch_fill(pitch_m: np.ndarray, line_width_m: np.ndarray) -> np.ndarray:
    """Copper fill fraction of a square hatch grid, ``1 - (1 - w/p)^2`` (vectorised).

    Parameters
    ----------
    pitch_m : array_like
        Centre-to-centre pitch of the hatch lines, m (> 0).
    line_width_m : array_like
        Copper width of each hatch line, m (0 < w <= p; w >= p gives 1, a solid plane).

    Returns
    -------
    numpy.ndarray
        Fill fraction in (0, 1].
    """
    p = np.asarray(pitch_m, dtype=float)
    w = np.asarray(line_width_m, dtype=float)
    r = np.clip(1.0 - w / p, 0.0, 1.0)
    return 1.0 - r * r


def hatch_width_for_fill(pitch_m: np.ndarray, fill: np.ndarray) -> np.ndarray:
    """Hatch line width giving a copper fill at a pitch: ``w = p (1 - sqrt(1 - f))`` (inverse)."""
    p = np.asarray(pitch_m, dtype=float)
    f = np.clip(np.asarray(fill, dtype=float), 0.0, 1.0)
    return p * (1.0 - np.sqrt(1.0 - f))


@dataclass(frozen=True)
class Hatch:
    """A hatched reference plane.

    Parameters
    ----------
    pitch_m : float
        Centre-to-centre pitch of the hatch lines, measured perpendicular to them, m.
    line_width_m : float
        Copper width of each hatch line, measured perpendicular to it, m (``>= pitch_m`` means a
        solid plane).
    angle_deg : float
        45 or 90 (degrees between the hatch lines and the trace).
    thickness_m : float
        Copper thickness of the plane, m (0: a sheet).
    over : {"line", "opening"}
        90 degrees only: the trace's centre line runs over a hatch line or over the middle of a
        row of openings. At 45 degrees the trace is centred over a column of crossings (every
        mirror-symmetric position is equivalent for a trace that is uniform along its length).
    """

    pitch_m: float
    line_width_m: float
    angle_deg: float = 45.0
    thickness_m: float = 0.0
    over: str = "line"

    def __post_init__(self) -> None:
        bad = []
        if not (math.isfinite(self.pitch_m) and self.pitch_m > 0):
            bad.append(f"pitch_m {self.pitch_m!r} (must be > 0)")
        if not (math.isfinite(self.line_width_m) and self.line_width_m > 0):
            bad.append(f"line_width_m {self.line_width_m!r} (must be > 0)")
        if float(self.angle_deg) not in HATCH_ANGLES:
            bad.append(f"angle_deg {self.angle_deg!r} (allowed: 45, 90)")
        if not (math.isfinite(self.thickness_m) and self.thickness_m >= 0):
            bad.append(f"thickness_m {self.thickness_m!r} (must be >= 0)")
        if self.over not in HATCH_POSITIONS:
            bad.append(f"over {self.over!r} (allowed: line, opening)")
        if bad:
            raise ValueError("hatch: " + "; ".join(bad))

    @property
    def fill(self) -> float:
        """Copper fill fraction, ``1 - (1 - w/p)^2``."""
        return float(hatch_fill(self.pitch_m, self.line_width_m))

    @property
    def solid(self) -> bool:
        """True when the lines close the openings (``line_width_m >= pitch_m``)."""
        return self.line_width_m >= self.pitch_m

    @property
    def period_m(self) -> float:
        """Period of the pattern along the trace, m: ``p`` (90 degrees) or ``p sqrt 2`` (45)."""
        return self.pitch_m * (math.sqrt(2.0) if self.angle_deg == 45.0 else 1.0)

    @property
    def lateral_period_m(self) -> float:
        """Period of the pattern across the trace, m (``p`` or ``p sqrt 2``)."""
        return self.period_m

    @property
    def offset_m(self) -> float:
        """Lateral position of the hatch relative to the trace's centre line, m."""
        return 0.5 * self.pitch_m if (self.over == "opening" and self.angle_deg == 90.0) else 0.0

    def copper(self, x: np.ndarray, z: np.ndarray) -> np.ndarray:
        """True where ``(x, z)`` (across, along the trace; m; broadcast) is hatch copper.

        A crossing of two hatch lines sits at ``(offset_m, 0)``; points on a line's edge count
        as copper.
        """
        x = np.asarray(x, dtype=float) - self.offset_m
        z = np.asarray(z, dtype=float)
        p, half = self.pitch_m, 0.5 * self.line_width_m + 1e-9 * self.pitch_m
        if self.solid:
            return np.ones(np.broadcast_shapes(x.shape, z.shape), bool)
        if self.angle_deg == 45.0:
            a = (x + z) / math.sqrt(2.0)
            b = (x - z) / math.sqrt(2.0)
        else:
            a, b = x, z

        def near(u: np.ndarray) -> np.ndarray:
            return np.abs(u - p * np.round(u / p)) <= half

        return near(a) | near(b)
