"""Load and validate the material catalog (``catalogs/*.yaml``) into SI records.

The catalog is three YAML files in one folder:

``materials.yaml``
    ``dielectrics`` (films, adhesives, cores, laminates, covers, stiffeners) and ``coverlays``
    (a film plus an adhesive sold as one product).
``copper.yaml``
    ``foils`` (copper foil types) and ``weights`` (standard foil weights and nominal thicknesses).
``fabrication.yaml``
    Fabrication capability: minimum trace and space and width tolerance per copper weight,
    impedance tolerance classes, material and total thickness tolerances.

The files use edge units with the unit in every field name (``modulus_gpa``, ``thickness_um``);
the loader converts them to the SI records of :mod:`strainline.models.materials`. Every problem in
a file -- an unknown or missing field, a wrong type, a value out of range, a coverlay naming an
unknown film -- raises one :class:`~strainline.optimizer.errors.CatalogError` whose text names the
file and the field path, e.g.
``materials.yaml: dielectrics.acrylic-adhesive.modulus_gpa: must be > 0, got -1``.

The shipped values are typical figures for concept work, mostly from memory (each entry says where
its numbers come from in ``source``); they are to be replaced by the fabricator's material set.
"""
from __future__ import annotations

import functools
import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np
import yaml
from numpy.typing import ArrayLike

from strainline.models.materials import (
    COPPER_TYPES,
    DIELECTRIC_FAMILIES,
    CopperFoil,
    Coverlay,
    Dielectric,
    FoilWeight,
)
from strainline.models.units import GHZ, GPA, MPA, UM
from strainline.optimizer.inputs import yamlio
from strainline.optimizer.errors import CatalogError, not_one_of

__all__ = [
    "CATALOG_FILES",
    "CAUTION",
    "SECTIONS",
    "Catalog",
    "Fabrication",
    "TotalThicknessRule",
    "load_catalog",
]

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

_NAME = re.compile(r"^[a-z0-9][a-z0-9-]*$")
_WEIGHT_NAME = re.compile(r"^\d+(/\d+)?oz$")


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

    def dielectric(self, name: str, field: str | None = None) -> Dielectric:
        """The dielectric ``name``; ``field`` is the caller's field path for the error."""
        return _pick(self.dielectrics, name, field)

    def foil(self, name: str, field: str | None = None) -> CopperFoil:
        """The copper foil type ``name``."""
        return _pick(self.foils, name, field)

    def weight(self, name: str, field: str | None = None) -> FoilWeight:
        """The foil weight ``name`` (``"1/4oz"``, ``"1/3oz"``, ``"1/2oz"``, ``"1oz"``, ``"2oz"``)."""
        return _pick(self.weights, name, field)

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


# --------------------------------------------------------------------------------------------
# validation helpers
# --------------------------------------------------------------------------------------------
def _fmt(value: Any) -> str:
    """A value as the error message shows it (YAML's empty value reads "nothing")."""
    return "nothing" if value is None else repr(value)


class _File:
    """Validation context of one catalog file: builds errors that name the file and field path."""

    def __init__(self, label: str) -> None:
        self.label = label

    def err(self, path: str, message: str) -> CatalogError:
        return CatalogError(message, f"{self.label}: {path}" if path else self.label)

    def mapping(self, value: Any, path: str) -> dict[str, Any]:
        if not isinstance(value, dict):
            raise self.err(path, f"must be a mapping, got {_fmt(value)}")
        for key in value:
            if not isinstance(key, str):
                raise self.err(path, f"keys must be text, got {key!r}")
        return value

    def fields(self, value: Any, path: str, required: tuple[str, ...], optional: tuple[str, ...] = ()) -> dict:
        entry = self.mapping(value, path)
        allowed = required + optional
        for key in entry:
            if key not in allowed:
                raise not_one_of(self.label + (f": {path}" if path else ""), key, allowed, CatalogError)
        for key in required:
            if key not in entry:
                raise self.err(_join(path, key), "required field is missing")
        return entry

    def number(
        self,
        entry: Mapping[str, Any],
        key: str,
        path: str,
        *,
        gt: float | None = None,
        ge: float | None = None,
        lt: float | None = None,
        le: float | None = None,
        integer: bool = False,
    ) -> float:
        return self.check_number(entry[key], _join(path, key), gt=gt, ge=ge, lt=lt, le=le, integer=integer)

    def check_number(
        self,
        value: Any,
        path: str,
        *,
        gt: float | None = None,
        ge: float | None = None,
        lt: float | None = None,
        le: float | None = None,
        integer: bool = False,
    ) -> float:
        if integer:
            if isinstance(value, bool) or not isinstance(value, int):
                raise self.err(path, f"must be a whole number, got {_fmt(value)}")
        elif isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.err(path, f"must be a number, got {_fmt(value)}")
        if not math.isfinite(value):
            raise self.err(path, f"must be a finite number, got {_fmt(value)}")
        for bound, ok, sign in (
            (gt, lambda v, b: v > b, ">"),
            (ge, lambda v, b: v >= b, ">="),
            (lt, lambda v, b: v < b, "<"),
            (le, lambda v, b: v <= b, "<="),
        ):
            if bound is not None and not ok(value, bound):
                raise self.err(path, f"must be {sign} {bound:g}, got {_fmt(value)}")
        return int(value) if integer else float(value)

    def boolean(self, entry: Mapping[str, Any], key: str, path: str) -> bool:
        value = entry[key]
        if not isinstance(value, bool):
            raise self.err(_join(path, key), f"must be true or false, got {_fmt(value)}")
        return value

    def text(self, entry: Mapping[str, Any], key: str, path: str) -> str:
        value = entry[key]
        if not isinstance(value, str) or not value.strip():
            raise self.err(_join(path, key), f"must be non-empty text, got {_fmt(value)}")
        return " ".join(value.split())

    def choice(self, entry: Mapping[str, Any], key: str, path: str, allowed: tuple[str, ...]) -> str:
        value = entry[key]
        if value not in allowed:
            raise not_one_of(f"{self.label}: {_join(path, key)}", value, allowed, CatalogError)
        return value

    def numbers(self, entry: Mapping[str, Any], key: str, path: str, **bounds: float) -> tuple[float, ...]:
        value = entry[key]
        where = _join(path, key)
        if not isinstance(value, list) or not value:
            raise self.err(where, f"must be a non-empty list of numbers, got {_fmt(value)}")
        return tuple(self.check_number(v, f"{where}[{i}]", **bounds) for i, v in enumerate(value))

    def name(self, key: str, path: str, pattern: re.Pattern[str], what: str) -> str:
        if not pattern.match(key):
            raise self.err(_join(path, key), f"name {key!r} must be {what}")
        return key

    def build(self, path: str, factory: Callable[..., Any], **kwargs: Any) -> Any:
        """Construct a validating record; its own ValueError becomes a CatalogError at ``path``."""
        try:
            return factory(**kwargs)
        except ValueError as exc:
            raise self.err(path, str(exc)) from None


def _join(path: str, key: str) -> str:
    return f"{path}.{key}" if path else key


_NAME_RULE = "lower-case letters, digits and hyphens"
_WEIGHT_RULE = "like '1/2oz' or '1oz'"


# --------------------------------------------------------------------------------------------
# the three files
# --------------------------------------------------------------------------------------------
_DIELECTRIC_FIELDS = (
    "family", "description", "modulus_gpa", "poisson", "dk", "df", "dk_freq_ghz", "elongation_pct",
    "glass_reinforced", "thicknesses_um", "thickness_tolerance_pct", "source",
)
_COVERLAY_FIELDS = ("film", "adhesive", "description", "builds_um", "source")
_FOIL_FIELDS = (
    "copper_type", "ipc4562_grade", "description", "modulus_gpa", "poisson", "tensile_strength_mpa",
    "yield_strength_mpa", "fatigue_ductility_pct", "roughness_rq_um", "conductivity_pct_iacs", "source",
)
_WEIGHT_FIELDS = ("weight_oz", "thickness_um", "source")


def _parse_materials(doc: Any, f: _File) -> tuple[dict[str, Dielectric], dict[str, Coverlay]]:
    top = f.fields(doc, "", ("dielectrics", "coverlays"), ("about",))
    dielectrics: dict[str, Dielectric] = {}
    for key, raw in f.mapping(top["dielectrics"], "dielectrics").items():
        p = f"dielectrics.{f.name(key, 'dielectrics', _NAME, _NAME_RULE)}"
        e = f.fields(raw, p, _DIELECTRIC_FIELDS)
        dielectrics[key] = f.build(
            p,
            Dielectric,
            name=key,
            family=f.choice(e, "family", p, DIELECTRIC_FAMILIES),
            description=f.text(e, "description", p),
            modulus_pa=f.number(e, "modulus_gpa", p, gt=0, le=1000) * GPA,
            poisson=f.number(e, "poisson", p, ge=0, lt=0.5),
            dk=f.number(e, "dk", p, ge=1, le=100),
            df=f.number(e, "df", p, ge=0, lt=1),
            dk_frequency_hz=f.number(e, "dk_freq_ghz", p, gt=0, le=1000) * GHZ,
            elongation=f.number(e, "elongation_pct", p, ge=0, le=1000) / 100,
            glass_reinforced=f.boolean(e, "glass_reinforced", p),
            thicknesses_m=tuple(t * UM for t in f.numbers(e, "thicknesses_um", p, gt=0, le=10000)),
            thickness_tolerance=f.number(e, "thickness_tolerance_pct", p, ge=0, lt=100) / 100,
            source=f.text(e, "source", p),
        )
    if not dielectrics:
        raise f.err("dielectrics", "must list at least one dielectric")

    coverlays: dict[str, Coverlay] = {}
    for key, raw in f.mapping(top["coverlays"] or {}, "coverlays").items():
        p = f"coverlays.{f.name(key, 'coverlays', _NAME, _NAME_RULE)}"
        e = f.fields(raw, p, _COVERLAY_FIELDS)
        parts = {}
        for role, family in (("film", "film"), ("adhesive", "adhesive")):
            part = f.choice(e, role, p, tuple(dielectrics))
            if dielectrics[part].family != family:
                raise f.err(
                    _join(p, role), f"{part!r} has family {dielectrics[part].family!r}, a {role} needs {family!r}"
                )
            parts[role] = part
        builds_raw = e["builds_um"]
        where = _join(p, "builds_um")
        if not isinstance(builds_raw, list) or not builds_raw:
            raise f.err(where, f"must be a non-empty list of [film_um, adhesive_um] pairs, got {_fmt(builds_raw)}")
        builds = []
        for i, pair in enumerate(builds_raw):
            if not isinstance(pair, list) or len(pair) != 2:
                raise f.err(f"{where}[{i}]", f"must be a [film_um, adhesive_um] pair, got {_fmt(pair)}")
            pair_m = []
            for j, role in enumerate(("film", "adhesive")):
                t = f.check_number(pair[j], f"{where}[{i}][{j}]", gt=0, le=10000)
                sold = dielectrics[parts[role]].thicknesses_m
                if not any(math.isclose(t * UM, s, rel_tol=1e-9) for s in sold):
                    listed = ", ".join(f"{s / UM:g}" for s in sold)
                    raise f.err(
                        f"{where}[{i}][{j}]",
                        f"{t:g} um is not a listed thickness of {parts[role]!r} [{listed}]",
                    )
                pair_m.append(t * UM)
            builds.append((pair_m[0], pair_m[1]))
        coverlays[key] = f.build(
            p,
            Coverlay,
            name=key,
            film=parts["film"],
            adhesive=parts["adhesive"],
            builds_m=tuple(builds),
            description=f.text(e, "description", p),
            source=f.text(e, "source", p),
        )
    return dielectrics, coverlays


def _parse_copper(doc: Any, f: _File) -> tuple[dict[str, CopperFoil], dict[str, FoilWeight]]:
    top = f.fields(doc, "", ("foils", "weights"), ("about",))
    foils: dict[str, CopperFoil] = {}
    for key, raw in f.mapping(top["foils"], "foils").items():
        p = f"foils.{f.name(key, 'foils', _NAME, _NAME_RULE)}"
        e = f.fields(raw, p, _FOIL_FIELDS)
        uts = f.number(e, "tensile_strength_mpa", p, gt=0, le=5000)
        foils[key] = f.build(
            p,
            CopperFoil,
            name=key,
            copper_type=f.choice(e, "copper_type", p, COPPER_TYPES),
            ipc4562_grade=f.number(e, "ipc4562_grade", p, ge=1, le=8, integer=True),
            description=f.text(e, "description", p),
            modulus_pa=f.number(e, "modulus_gpa", p, gt=0, le=1000) * GPA,
            poisson=f.number(e, "poisson", p, ge=0, lt=0.5),
            tensile_strength_pa=uts * MPA,
            yield_strength_pa=f.number(e, "yield_strength_mpa", p, gt=0, le=uts) * MPA,
            fatigue_ductility=f.number(e, "fatigue_ductility_pct", p, gt=0, le=500) / 100,
            roughness_rq_m=f.number(e, "roughness_rq_um", p, ge=0, le=50) * UM,
            conductivity_s_per_m=f.number(e, "conductivity_pct_iacs", p, gt=0, le=120) / 100 * IACS_S_PER_M,
            source=f.text(e, "source", p),
        )
    if not foils:
        raise f.err("foils", "must list at least one foil")
    weights: dict[str, FoilWeight] = {}
    for key, raw in f.mapping(top["weights"], "weights").items():
        p = f"weights.{f.name(key, 'weights', _WEIGHT_NAME, _WEIGHT_RULE)}"
        e = f.fields(raw, p, _WEIGHT_FIELDS)
        weights[key] = f.build(
            p,
            FoilWeight,
            name=key,
            weight_oz=f.number(e, "weight_oz", p, gt=0, le=20),
            thickness_m=f.number(e, "thickness_um", p, gt=0, le=1000) * UM,
            source=f.text(e, "source", p),
        )
    if not weights:
        raise f.err("weights", "must list at least one foil weight")
    return foils, weights


def _parse_fabrication(doc: Any, f: _File, weight_keys: tuple[str, ...]) -> Fabrication:
    top = f.fields(
        doc, "", ("min_feature", "width_tolerance", "impedance_tolerance", "thickness_tolerance"), ("about",)
    )
    sources: dict[str, str] = {}

    def by_weight(section: Mapping[str, Any], key: str, path: str) -> dict[str, Any]:
        table = f.mapping(section[key], _join(path, key))
        for w in table:
            if w not in weight_keys:
                raise not_one_of(f"{f.label}: {_join(path, key)}", w, weight_keys, CatalogError)
        for w in weight_keys:
            if w not in table:
                raise f.err(_join(_join(path, key), w), "required entry is missing (every foil weight needs one)")
        return table

    p = "min_feature"
    sec = f.fields(top[p], p, ("source", "by_weight"))
    sources[p] = f.text(sec, "source", p)
    min_trace, min_space = {}, {}
    for w, raw in by_weight(sec, "by_weight", p).items():
        wp = f"{p}.by_weight.{w}"
        e = f.fields(raw, wp, ("trace_um", "space_um"))
        min_trace[w] = f.number(e, "trace_um", wp, gt=0, le=10000) * UM
        min_space[w] = f.number(e, "space_um", wp, gt=0, le=10000) * UM

    p = "width_tolerance"
    sec = f.fields(top[p], p, ("source", "by_weight_pct"))
    sources[p] = f.text(sec, "source", p)
    width_tol = {
        w: f.check_number(v, f"{p}.by_weight_pct.{w}", gt=0, lt=100) / 100
        for w, v in by_weight(sec, "by_weight_pct", p).items()
    }

    p = "impedance_tolerance"
    sec = f.fields(top[p], p, ("source", "classes_pct"))
    sources[p] = f.text(sec, "source", p)
    classes = f.mapping(sec["classes_pct"], f"{p}.classes_pct")
    imp_tol = {}
    for c, v in classes.items():
        f.name(c, f"{p}.classes_pct", _NAME, _NAME_RULE)
        imp_tol[c] = f.check_number(v, f"{p}.classes_pct.{c}", gt=0, lt=100) / 100
    for c in IMPEDANCE_CLASSES:
        if c not in imp_tol:
            raise f.err(f"{p}.classes_pct.{c}", "required class is missing")

    p = "thickness_tolerance"
    sec = f.fields(top[p], p, ("source", "material_pct", "stiffener_um", "total"))
    sources[p] = f.text(sec, "source", p)
    mat = f.fields(sec["material_pct"], f"{p}.material_pct", TOLERANCE_KEYS)
    mat_tol = {k: f.number(mat, k, f"{p}.material_pct", ge=0, lt=100) / 100 for k in TOLERANCE_KEYS}
    stiff = f.number(sec, "stiffener_um", p, ge=0, le=10000) * UM
    tp = f"{p}.total"
    tot = f.fields(sec["total"], tp, ("source", "bands", "above_pct"))
    bands_raw = tot["bands"]
    if not isinstance(bands_raw, list) or not bands_raw:
        raise f.err(f"{tp}.bands", f"must be a non-empty list of bands, got {_fmt(bands_raw)}")
    bands: list[tuple[float, float]] = []
    for i, raw in enumerate(bands_raw):
        bp = f"{tp}.bands[{i}]"
        e = f.fields(raw, bp, ("up_to_um", "plus_minus_um"))
        lower = bands[-1][0] / UM if bands else 0.0
        up_to = f.number(e, "up_to_um", bp, gt=lower, le=100000)
        bands.append((up_to * UM, f.number(e, "plus_minus_um", bp, gt=0, le=100000) * UM))
    rule = TotalThicknessRule(
        bands_m=tuple(bands),
        above_relative=f.number(tot, "above_pct", tp, gt=0, lt=100) / 100,
        source=f.text(tot, "source", tp),
    )
    sources["thickness_tolerance.total"] = rule.source

    return Fabrication(
        min_trace_m=MappingProxyType(min_trace),
        min_space_m=MappingProxyType(min_space),
        impedance_tolerance=MappingProxyType(imp_tol),
        width_tolerance=MappingProxyType(width_tol),
        total_thickness_tolerance=rule,
        material_thickness_tolerance=MappingProxyType(mat_tol),
        stiffener_thickness_tolerance_m=stiff,
        sources=MappingProxyType(sources),
        source=" | ".join(f"{k}: {v}" for k, v in sources.items()),
    )


# --------------------------------------------------------------------------------------------
# loading
# --------------------------------------------------------------------------------------------
_COMPOSER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


def _duplicate_key(node: yaml.Node | None) -> tuple[str, int] | None:
    """The first key given twice in one mapping of a composed YAML tree (YAML keeps the last)."""
    stack = [node] if node is not None else []
    while stack:
        n = stack.pop()
        if isinstance(n, yaml.MappingNode):
            seen: set[str] = set()
            for key_node, value_node in n.value:
                if isinstance(key_node, yaml.ScalarNode):
                    if key_node.value in seen:
                        return key_node.value, key_node.start_mark.line + 1
                    seen.add(key_node.value)
                stack.append(value_node)
        elif isinstance(n, yaml.SequenceNode):
            stack.extend(n.value)
    return None


def _read(path: Path, label: str) -> Any:
    """Read one catalog file: missing file and YAML syntax via yamlio, then refuse duplicate keys."""
    doc = yamlio.read_yaml(path, CatalogError)
    dup = _duplicate_key(yaml.compose(path.read_text(encoding="utf-8"), Loader=_COMPOSER))
    if dup is not None:
        raise CatalogError(f"key {dup[0]!r} appears twice (line {dup[1]})", label)
    return doc


def _load_from(folder: Path, labels: Mapping[str, str], shown: str) -> Catalog:
    docs = {name: _read(folder / name, labels[name]) for name in CATALOG_FILES}
    dielectrics, coverlays = _parse_materials(docs["materials.yaml"], _File(labels["materials.yaml"]))
    foils, weights = _parse_copper(docs["copper.yaml"], _File(labels["copper.yaml"]))
    fabrication = _parse_fabrication(docs["fabrication.yaml"], _File(labels["fabrication.yaml"]), tuple(weights))
    return Catalog(
        dielectrics=MappingProxyType(dielectrics),
        coverlays=MappingProxyType(coverlays),
        foils=MappingProxyType(foils),
        weights=MappingProxyType(weights),
        fabrication=fabrication,
        folder=shown,
    )


@functools.lru_cache(maxsize=1)
def _load_default() -> Catalog:
    with resources.as_file(resources.files("strainline.catalogs")) as folder:
        return _load_from(Path(folder), {n: n for n in CATALOG_FILES}, "<package data>")


def load_catalog(folder: str | Path | None = None) -> Catalog:
    """Load and validate a catalog.

    Parameters
    ----------
    folder : str or Path, optional
        A folder holding ``materials.yaml``, ``copper.yaml`` and ``fabrication.yaml``. By default
        the catalog shipped with the package (``strainline.catalogs``), loaded once and cached.

    Returns
    -------
    Catalog
        SI records (metres, pascals, hertz; tolerances, elongation and ductility as fractions).

    Raises
    ------
    CatalogError
        A missing file, invalid YAML, or any invalid entry; the message names the file and the
        field path.
    """
    if folder is None:
        return _load_default()
    path = Path(folder)
    if not path.is_dir():
        raise CatalogError("catalog folder not found", str(path))
    return _load_from(path, {n: str(path / n) for n in CATALOG_FILES}, str(path))
