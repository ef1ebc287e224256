"""The loaded catalog as SI records, and the names and constants of the catalog format.

Plain frozen dataclasses (no pydantic): :mod:`~strainline.optimizer.inputs.catalog` loads them,
:mod:`~strainline.optimizer.inputs.catalog_model` validates the files that fill them.
"""
from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from strainline.models.materials import (
    DIELECTRIC_FAMILIES,
    CopperFoil,
    Coverlay,
    Dielectric,
    FoilWeight,
)
from strainline.models.units import GHZ, GPA, MPA, UM
from strainline.optimizer.errors import CatalogError, not_one_of

#: The files a catalog folder must hold.
CATALOG_FILES: tuple[str, ...] = ("materials.yaml", "copper.yaml", "fabrication.yaml")
#: The sections of a catalog, in listing order.
SECTIONS: tuple[str, ...] = ("dielectrics", "coverlays", "foils", "weights", "fabrication")
#: 100 % IACS (International Annealed Copper Standard, IEC 60028): 58.0 MS/m.
IACS_S_PER_M: float = 58.0e6
#: Keys of ``thickness_tolerance.material_pct``: the dielectric families plus the copper foil.
TOLERANCE_KEYS: tuple[str, ...] = (*DIELECTRIC_FAMILIES, "copper-foil")
#: Impedance tolerance classes every catalog must define.
IMPEDANCE_CLASSES: tuple[str, ...] = ("standard", "tight", "special")
#: The one-line note that goes with every listing of the catalog.
CAUTION: str = (
    "Catalog values are typical figures for concept work, mostly from memory: replace them with "
    "the fabricator's material set; verify with the fabricator's impedance modelling and coupons "
    "and with flex testing (IPC-TM-650 methods); defer to IPC-2223/IPC-6013."
)



# --------------------------------------------------------------------------------------------
# records
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class TotalThicknessRule:
    """Tolerance on the total finished thickness of a flex build.

    Parameters
    ----------
    bands_m : tuple of (up_to_m, plus_minus_m)
        Absolute bands in ascending order: a total thickness up to ``up_to_m`` (m) has a
        tolerance of +/- ``plus_minus_m`` (m).
    above_relative : float
        Above the last band the tolerance is ``above_relative * total`` (fraction), never less than
        the last band's absolute value.
    source : str
    """

    bands_m: tuple[tuple[float, float], ...]
    above_relative: float
    source: str

    def tolerance_m(self, total_m: ArrayLike) -> np.ndarray:
        """+/- tolerance (m) of a total thickness ``total_m`` (m, any shape; a row per candidate)."""
        t = np.asarray(total_m, dtype=float)
        out = np.maximum(self.above_relative * t, self.bands_m[-1][1])
        for up_to, pm in reversed(self.bands_m):  # a few bands, not a loop over candidates
            out = np.where(t <= up_to, pm, out)
        return out


@dataclass(frozen=True)
class Fabrication:
    """Fabrication capability (SI; tolerances as fractions).

    Parameters
    ----------
    min_trace_m, min_space_m : Mapping[str, float]
        Minimum etched trace width and space by foil weight key (``"1/2oz"``), m.
    impedance_tolerance : Mapping[str, float]
        Relative +/- impedance tolerance by class (``standard``, ``tight``, ``special``, ...).
    width_tolerance : Mapping[str, float]
        Relative +/- etched-width tolerance by foil weight key.
    total_thickness_tolerance : TotalThicknessRule
        The total-thickness rule.
    material_thickness_tolerance : Mapping[str, float]
        Relative +/- thickness tolerance as supplied, by dielectric family and ``copper-foil``.
    stiffener_thickness_tolerance_m : float
        Absolute +/- thickness tolerance of a stiffener, m.
    sources : Mapping[str, str]
        Source of each section.
    source : str
        All section sources in one text.
    dk_tolerance_default : float or None
        Relative +/- Dk tolerance of a dielectric that gives none of its own
        (``fabrication.yaml: dk_tolerance.default_pct``); None when the file has no such section.
    """

    min_trace_m: Mapping[str, float]
    min_space_m: Mapping[str, float]
    impedance_tolerance: Mapping[str, float]
    width_tolerance: Mapping[str, float]
    total_thickness_tolerance: TotalThicknessRule
    material_thickness_tolerance: Mapping[str, float]
    stiffener_thickness_tolerance_m: float
    sources: Mapping[str, str]
    source: str
    dk_tolerance_default: float | None = None


@dataclass(frozen=True)
class Catalog:
    """The loaded catalog: SI records keyed by their catalog names.

    Build it with :func:`load_catalog`. The accessors raise :class:`CatalogError` for an unknown
    name with the allowed names and the closest match.
    """

    dielectrics: Mapping[str, Dielectric]
    coverlays: Mapping[str, Coverlay]
    foils: Mapping[str, CopperFoil]
    weights: Mapping[str, FoilWeight]
    fabrication: Fabrication
    folder: str = field(default="<package data>", compare=False)
    #: Where each file's entries came from: "built-in", "replaced" (the user file alone) or
    #: "added" (the user file's entries added to the built-in ones; same names replace them).
    origin: Mapping[str, str] = field(default_factory=dict, compare=False)
    #: Relative +/- Dk tolerance of each dielectric: its own ``dk_tolerance_pct``, else the
    #: fabrication default; a dielectric with neither is absent (see :meth:`dk_tolerance_of`).
    dk_tolerance: Mapping[str, float] = field(default_factory=dict)

    def dk_tolerance_of(self, name: str) -> float | None:
        """Relative +/- Dk tolerance of the dielectric ``name`` (None: the catalog gives none)."""
        return self.dk_tolerance.get(name)

    def dielectric(self, name: str, field: str | None = None) -> Dielectric:
        """The dielectric ``name``; ``field`` is the caller's field path for the error."""
        return _pick(self.dielectrics, name, field)

    def foil(self, name: str, field: str | None = None) -> CopperFoil:
        """The copper foil type ``name``."""
        return _pick(self.foils, name, field)

    def weight(self, name: str, field: str | None = None) -> FoilWeight:
        """The foil weight ``name`` (``"1/4oz"``, ``"1/3oz"``, ``"1/2oz"``, ``"1oz"``, ``"2oz"``; also
        ``"0.5oz"``, ``"0.5 oz"`` or ``"1/2 oz"``, see :func:`weight_key`)."""
        return _pick(self.weights, weight_key(name, self.weights) if isinstance(name, str) else name, field)

    def coverlay(self, name: str, field: str | None = None) -> Coverlay:
        """The coverlay ``name``."""
        return _pick(self.coverlays, name, field)

    def to_dict(self) -> dict[str, Any]:
        """The catalog in edge units (the YAML field names), JSON-serialisable."""
        fab = self.fabrication
        rule = fab.total_thickness_tolerance
        return {
            "dielectrics": {
                k: {
                    "family": d.family,
                    "description": d.description,
                    "modulus_gpa": _r(d.modulus_pa / GPA),
                    "poisson": _r(d.poisson),
                    "dk": _r(d.dk),
                    "df": _r(d.df),
                    "dk_freq_ghz": _r(d.dk_frequency_hz / GHZ),
                    "elongation_pct": _r(d.elongation * 100),
                    "glass_reinforced": d.glass_reinforced,
                    "thicknesses_um": [_r(t / UM) for t in d.thicknesses_m],
                    "thickness_tolerance_pct": _r(d.thickness_tolerance * 100),
                    "source": d.source,
                    **({} if d.min_bend_radius_m is None else {"min_bend_radius_mm": _r(d.min_bend_radius_m * 1e3)}),
                    **({} if k not in self.dk_tolerance else {"dk_tolerance_pct": _r(self.dk_tolerance[k] * 100)}),
                }
                for k, d in self.dielectrics.items()
            },
            "coverlays": {
                k: {
                    "film": c.film,
                    "adhesive": c.adhesive,
                    "description": c.description,
                    "builds_um": [[_r(f / UM), _r(a / UM)] for f, a in c.builds_m],
                    "source": c.source,
                }
                for k, c in self.coverlays.items()
            },
            "foils": {
                k: {
                    "copper_type": f.copper_type,
                    "ipc4562_grade": f.ipc4562_grade,
                    "description": f.description,
                    "modulus_gpa": _r(f.modulus_pa / GPA),
                    "poisson": _r(f.poisson),
                    "tensile_strength_mpa": _r(f.tensile_strength_pa / MPA),
                    "yield_strength_mpa": _r(f.yield_strength_pa / MPA),
                    "fatigue_ductility_pct": _r(f.fatigue_ductility * 100),
                    "roughness_rq_um": _r(f.roughness_rq_m / UM),
                    "conductivity_pct_iacs": _r(f.conductivity_s_per_m / IACS_S_PER_M * 100),
                    "conductivity_ms_per_m": _r(f.conductivity_s_per_m / 1e6),
                    "source": f.source,
                }
                for k, f in self.foils.items()
            },
            "weights": {
                k: {"weight_oz": _r(w.weight_oz), "thickness_um": _r(w.thickness_m / UM), "source": w.source}
                for k, w in self.weights.items()
            },
            "fabrication": {
                "min_feature": {
                    "source": fab.sources["min_feature"],
                    "by_weight": {
                        k: {"trace_um": _r(fab.min_trace_m[k] / UM), "space_um": _r(fab.min_space_m[k] / UM)}
                        for k in fab.min_trace_m
                    },
                },
                "width_tolerance": {
                    "source": fab.sources["width_tolerance"],
                    "by_weight_pct": {k: _r(v * 100) for k, v in fab.width_tolerance.items()},
                },
                "impedance_tolerance": {
                    "source": fab.sources["impedance_tolerance"],
                    "classes_pct": {k: _r(v * 100) for k, v in fab.impedance_tolerance.items()},
                },
                "thickness_tolerance": {
                    "source": fab.sources["thickness_tolerance"],
                    "material_pct": {k: _r(v * 100) for k, v in fab.material_thickness_tolerance.items()},
                    "stiffener_um": _r(fab.stiffener_thickness_tolerance_m / UM),
                    "total": {
                        "source": rule.source,
                        "bands": [
                            {"up_to_um": _r(u / UM), "plus_minus_um": _r(p / UM)} for u, p in rule.bands_m
                        ],
                        "above_pct": _r(rule.above_relative * 100),
                    },
                },
                **({} if fab.dk_tolerance_default is None else {"dk_tolerance": {
                    "source": fab.sources["dk_tolerance"], "default_pct": _r(fab.dk_tolerance_default * 100)}}),
            },
        }


def _r(x: float) -> float:
    """Round away the binary noise of a unit round trip (12 significant digits)."""
    return float(f"{float(x):.12g}")


def _pick(table: Mapping[str, Any], name: str, field: str | None) -> Any:
    try:
        return table[name]
    except (KeyError, TypeError):
        raise not_one_of(field, name, table.keys(), CatalogError) from None


_OZ = re.compile(r"\s*(\d+(?:\.\d*)?|\.\d+|\d+\s*/\s*\d+)\s*oz\s*", re.IGNORECASE)


def weight_key(text: str, weights: Mapping[str, FoilWeight]) -> str:
    """The catalog key of a foil weight as engineers write it.

    ``"0.5oz"``, ``"0.5 oz"``, ``"1/2oz"`` and ``"1/2 oz"`` all name the catalog's ``"1/2oz"``: the
    number of ounces is matched against each weight's ``weight_oz`` to 2 %. Text that names no
    catalog weight comes back unchanged (the caller's error then lists the allowed keys).
    """
    if text in weights:
        return text
    m = _OZ.fullmatch(text)
    if not m:
        return text
    num = m.group(1).replace(" ", "")
    try:
        oz = float(Fraction(num))
    except (ValueError, ZeroDivisionError):
        return text
    for key, w in weights.items():
        if abs(w.weight_oz - oz) <= 0.02 * w.weight_oz:
            return key
    return text
