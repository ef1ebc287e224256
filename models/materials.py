"""Immutable, validating material records (SI units).

These are the records the catalog loader builds and the physics reads. Values carry their
source as free text (a standard, a paper, or "typical, from memory").
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

DielectricFamily = Literal[
    "film", "adhesive", "core", "laminate", "cover", "stiffener"
]
CopperType = Literal["rolled-annealed", "electrodeposited"]

DIELECTRIC_FAMILIES: tuple[str, ...] = get_args(DielectricFamily)
COPPER_TYPES: tuple[str, ...] = get_args(CopperType)


def _require(cond: bool, what: str) -> None:
    if not cond:
        raise ValueError(what)


@dataclass(frozen=True)
class Dielectric:
    """A dielectric, adhesive, cover or stiffener material.

    Parameters
    ----------
    name : str
        Catalog key (generic, lower-case, hyphenated).
    family : {"film", "adhesive", "core", "laminate", "cover", "stiffener"}
        Role in a flex build.
    description : str
        Generic description (never a brand).
    modulus_pa : float
        In-plane Young's modulus at about 23 degC, Pa.
    poisson : float
        Poisson's ratio, dimensionless, in (0, 0.5).
    dk, df : float
        Relative permittivity and loss tangent at ``dk_frequency_hz``.
    dk_frequency_hz : float
        Frequency at which ``dk`` and ``df`` hold, Hz.
    elongation : float
        Tensile elongation at break, as a fraction (0.6 = 60 %).
    glass_reinforced : bool
        True for woven-glass reinforced materials (not for a bend region).
    thicknesses_m : tuple of float
        Standard thicknesses it is sold in, m.
    thickness_tolerance : float
        Relative thickness tolerance (0.1 = +/-10 %).
    source : str
        Where the numbers come from.
    min_bend_radius_m : float or None
        Smallest bend radius the material tolerates, m, where a source gives one (e.g. a
        photoimageable cover); None otherwise.
    """

    name: str
    family: DielectricFamily
    description: str
    modulus_pa: float
    poisson: float
    dk: float
    df: float
    dk_frequency_hz: float
    elongation: float
    glass_reinforced: bool
    thicknesses_m: tuple[float, ...]
    thickness_tolerance: float
    source: str
    min_bend_radius_m: float | None = None

    def __post_init__(self) -> None:
        _require(self.min_bend_radius_m is None or self.min_bend_radius_m > 0,
                 "minimum bend radius must be positive")
        _require(self.family in DIELECTRIC_FAMILIES, f"family must be one of {DIELECTRIC_FAMILIES}")
        _require(self.modulus_pa > 0, "modulus must be positive")
        _require(0.0 <= self.poisson < 0.5, "poisson must be in [0, 0.5)")
        _require(self.dk >= 1.0, "dk must be >= 1")
        _require(0.0 <= self.df < 1.0, "df must be in [0, 1)")
        _require(self.dk_frequency_hz > 0, "dk frequency must be positive")
        _require(self.elongation >= 0, "elongation must be >= 0")
        _require(len(self.thicknesses_m) > 0 and all(t > 0 for t in self.thicknesses_m),
                 "thicknesses must be a non-empty list of positive values")
        _require(0.0 <= self.thickness_tolerance < 1.0, "thickness tolerance must be in [0, 1)")
        _require(bool(self.source.strip()), "source must not be empty")


@dataclass(frozen=True)
class CopperFoil:
    """A copper foil type.

    Parameters
    ----------
    name : str
        Catalog key.
    copper_type : {"rolled-annealed", "electrodeposited"}
    ipc4562_grade : int
        IPC-4562 grade (1..8).
    description : str
    modulus_pa, poisson : float
        Young's modulus along the bend direction (Pa) and Poisson's ratio.
    tensile_strength_pa, yield_strength_pa : float
        Ultimate tensile strength and 0.2 % yield strength after lamination, Pa.
    fatigue_ductility : float
        Fatigue ductility D_f (IPC-TM-650 2.4.2.1) as a fraction (0.65 = 65 %).
    roughness_rq_m : float
        RMS surface roughness of the treated side, m.
    conductivity_s_per_m : float
        Electrical conductivity, S/m.
    source : str
    """

    name: str
    copper_type: CopperType
    ipc4562_grade: int
    description: str
    modulus_pa: float
    poisson: float
    tensile_strength_pa: float
    yield_strength_pa: float
    fatigue_ductility: float
    roughness_rq_m: float
    conductivity_s_per_m: float
    source: str

    def __post_init__(self) -> None:
        _require(self.copper_type in COPPER_TYPES, f"copper type must be one of {COPPER_TYPES}")
        _require(1 <= self.ipc4562_grade <= 8, "IPC-4562 grade must be 1..8")
        _require(self.modulus_pa > 0, "modulus must be positive")
        _require(0.0 <= self.poisson < 0.5, "poisson must be in [0, 0.5)")
        _require(0 < self.yield_strength_pa <= self.tensile_strength_pa,
                 "yield strength must be positive and not above tensile strength")
        _require(self.fatigue_ductility > 0, "fatigue ductility must be positive")
        _require(self.roughness_rq_m >= 0, "roughness must be >= 0")
        _require(self.conductivity_s_per_m > 0, "conductivity must be positive")
        _require(bool(self.source.strip()), "source must not be empty")


@dataclass(frozen=True)
class Coverlay:
    """A film + adhesive cover sold as one product (the adhesive faces the copper).

    Parameters
    ----------
    name : str
    film, adhesive : str
        Catalog keys of the film and the adhesive.
    builds_m : tuple of (film_m, adhesive_m)
        The standard film/adhesive thickness pairs, m.
    source : str
    """

    name: str
    film: str
    adhesive: str
    builds_m: tuple[tuple[float, float], ...]
    description: str
    source: str

    def __post_init__(self) -> None:
        _require(len(self.builds_m) > 0, "a coverlay needs at least one film/adhesive build")
        _require(all(f > 0 and a > 0 for f, a in self.builds_m), "build thicknesses must be positive")


@dataclass(frozen=True)
class FoilWeight:
    """A standard copper foil weight and its nominal thickness."""

    name: str          # e.g. "1/2oz"
    weight_oz: float   # oz/ft^2
    thickness_m: float
    source: str
