"""Numbers given on the command line: finite and inside a stated sane range, or a one-line error.

The ranges are what a flex or rigid-flex cross-section can physically be, wide enough for any
real design and narrow enough that the closed-form equations never see an absurd value
(``--width-um 1e300``, ``--er 1e300``): an option outside its range is refused naming the
option, the value and the range, before anything is computed.
"""
from __future__ import annotations

import argparse
import math
from typing import NamedTuple


class Range(NamedTuple):
    """An allowed interval: ``low`` and ``high`` with whether each end is allowed."""

    low: float
    high: float
    low_ok: bool = True
    high_ok: bool = True
    what: str = "the value"

    def holds(self, value: float) -> bool:
        if not math.isfinite(value):
            return False
        above = value >= self.low if self.low_ok else value > self.low
        below = value <= self.high if self.high_ok else value < self.high
        return above and below

    def text(self) -> str:
        return (f"{'>=' if self.low_ok else '>'} {self.low:g} and "
                f"{'<=' if self.high_ok else '<'} {self.high:g}")

    def message(self, value: float) -> str:
        return f"{value:g} is out of range; {self.what} must be {self.text()}"


#: Sane ranges of the geometry options (um, GHz, ohm): 100 mm is wider than any flex trace or
#: build, a relative permittivity of 100 covers ceramics, 1 THz any closed-form use.
RANGES: dict[str, Range] = {
    "--width-um": Range(0.0, 1e5, False, True, "the trace width in um"),
    "--gap-um": Range(0.0, 1e5, False, True, "the gap in um"),
    "--height-um": Range(0.0, 1e5, False, True, "the dielectric height in um"),
    "--height-top-um": Range(0.0, 1e5, False, True, "the dielectric height above in um"),
    "--thickness-um": Range(0.0, 1e3, True, True, "the copper thickness in um"),
    "--er": Range(1.0, 100.0, True, True, "the relative permittivity"),
    "--er-top": Range(1.0, 100.0, True, True, "the relative permittivity above"),
    "--cover-um": Range(0.0, 1e5, True, True, "the cover thickness in um"),
    "--cover-er": Range(1.0, 100.0, True, True, "the cover relative permittivity"),
    "--freq-ghz": Range(0.0, 1e3, False, True, "the frequency in GHz"),
    "--df": Range(0.0, 1.0, True, False, "the loss tangent"),
    "--roughness-um": Range(0.0, 100.0, True, True, "the RMS roughness in um"),
    "--target-ohm": Range(0.0, 1e3, False, True, "the target impedance in ohm"),
    "--inner-radius-mm": Range(0.0, 1e5, False, True, "the inner radius in mm"),
    "--cycles": Range(1.0, 1e15, True, True, "the target life in cycles"),
}


def check(value: float | None, option: str, rng: Range | None = None) -> None:
    """Raise :class:`~strainline.optimizer.errors.InputError` naming ``option`` when ``value`` is
    not finite or outside its range (``RANGES[option]`` unless ``rng`` is given)."""
    from strainline.optimizer.errors import InputError

    r = rng or RANGES[option]
    if value is not None and not r.holds(value):
        raise InputError(r.message(value), option)


def number(option: str, rng: Range | None = None):
    """An argparse ``type`` for ``option``: a finite number inside its range, else our own words."""
    r = rng or RANGES[option]

    def convert(text: str) -> float:
        try:
            value = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a number; {r.what} must be {r.text()}") from None
        if not r.holds(value):
            raise argparse.ArgumentTypeError(r.message(value))
        return value

    convert.__name__ = option.lstrip("-").replace("-", "_")
    return convert
