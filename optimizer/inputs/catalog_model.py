"""The three catalog files as pydantic models, and their conversion to SI records.

Each file (``materials.yaml``, ``copper.yaml``, ``fabrication.yaml``) is a model below: its sections,
entry fields, types and ranges. Rules that join fields or files (a coverlay names films of the same
file, yield <= tensile strength, every foil weight has a fabrication row, bands ascend) are checked
after the model, in the parse functions. Every problem is one :class:`CatalogError` line naming the
file and the field path, e.g.
``materials.yaml: dielectrics.acrylic-adhesive.modulus_gpa: must be > 0, got -1``.
"""
from __future__ import annotations

import math
from types import MappingProxyType
from typing import Annotated, Any

from pydantic import Field, ValidationError
from strainline.models.materials import (
    COPPER_TYPES,
    DIELECTRIC_FAMILIES,
    CopperFoil,
    Coverlay,
    Dielectric,
    FoilWeight,
)
from strainline.models.units import GHZ, GPA, MPA, UM
from strainline.optimizer.errors import CatalogError, not_one_of
from strainline.optimizer.inputs.catalog_records import (
    IACS_S_PER_M,
    IMPEDANCE_CLASSES,
    TOLERANCE_KEYS,
    Fabrication,
    TotalThicknessRule,
)
from strainline.optimizer.inputs.modelkit import (
    Base,
    Bounds,
    Kit,
    Leaf,
    Style,
    fail,
    first_error,
)

_NAME = r"[a-z0-9][a-z0-9-]*"
_WEIGHT_NAME = r"\d+(/\d+)?oz"


def fmt(value: Any) -> str:
    """A value as a catalog error shows it (YAML's empty value reads "nothing")."""
    return "nothing" if value is None else repr(value)


class CatalogStyle(Style):
    """The catalog's wording: ``must be > 0, got -1``."""

    def not_number(self, value: Any, integer: bool, b: Bounds) -> str:
        return f"must be a {'whole ' if integer else ''}number, got {fmt(value)}"

    def not_finite(self, value: Any, b: Bounds) -> str:
        return f"must be a finite number, got {fmt(value)}"

    def out_of_range(self, value: Any, b: Bounds) -> str:
        lo, hi, lo_open, hi_open = b
        try:
            below = lo is not None and float(value) <= lo
        except OverflowError:
            below = value < 0
        if below:
            return f"must be {'>' if lo_open else '>='} {lo:g}, got {fmt(value)}"
        return f"must be {'<' if hi_open else '<='} {hi:g}, got {fmt(value)}"

    def rng(self, b: Bounds) -> str:
        return ""

    def not_bool(self, value: Any) -> str:
        return f"must be true or false, got {fmt(value)}"

    def not_text(self, value: Any) -> str:
        return f"must be non-empty text, got {fmt(value)}"

    def not_mapping(self, value: Any, keys: Any) -> str:
        return f"must be a mapping, got {fmt(value)}"

    def not_list(self, value: Any, what: str) -> str:
        return f"must be a non-empty list of {what}, got {fmt(value)}"

    def unknown_key(self, path: str, key: Any, allowed: Any, model: Any = None) -> tuple[str, str]:
        return path, not_one_of(None, key, allowed).message

    def missing(self, path: str) -> tuple[str, str]:
        return path, "required field is missing"


K = Kit(CatalogStyle())
Text = K.text(nonempty=True, squash=True)


def _name_key(pattern: str, rule: str) -> Any:
    import re

    rx = re.compile(pattern)

    def check(key: Any) -> str:
        if not isinstance(key, str):
            raise fail(f"keys must be text, got {key!r}")
        if not rx.fullmatch(key):
            raise fail(f"name {key!r} must be {rule}")
        return key
    return Annotated[str, Leaf(check, {"type": "string", "pattern": f"^{pattern}$"})]


Name = _name_key(_NAME, "lower-case letters, digits and hyphens")
WeightName = _name_key(_WEIGHT_NAME, "like '1/2oz' or '1oz'")


def _builds(value: Any) -> tuple[tuple[float, float], ...]:
    if not isinstance(value, list) or not value:
        raise fail(f"must be a non-empty list of [film_um, adhesive_um] pairs, got {fmt(value)}")
    out = []
    for i, pair in enumerate(value):
        if not isinstance(pair, list) or len(pair) != 2:
            raise fail(f"must be a [film_um, adhesive_um] pair, got {fmt(pair)}", f"[{i}]")
        b = (0.0, 10000.0, True, False)
        out.append((K.check_number(pair[0], b, sub=f"[{i}][0]"), K.check_number(pair[1], b, sub=f"[{i}][1]")))
    return tuple(out)


class DielectricEntry(Base):
    family: K.choice(DIELECTRIC_FAMILIES)
    description: Text
    modulus_gpa: K.num(0, 1000, lo_open=True)
    poisson: K.num(0, 0.5, hi_open=True)
    dk: K.num(1, 100)
    df: K.num(0, 1, hi_open=True)
    dk_freq_ghz: K.num(0, 1000, lo_open=True)
    elongation_pct: K.num(0, 1000)
    glass_reinforced: K.boolean()
    thicknesses_um: K.num_list(0, 10000, single=False, unique=False)
    thickness_tolerance_pct: K.num(0, 100, hi_open=True)
    source: Text
    min_bend_radius_mm: K.num(0, 10000, lo_open=True) | None = None
    #: +/- relative Dk tolerance, pct (absent: fabrication.yaml ``dk_tolerance.default_pct``).
    dk_tolerance_pct: K.num(0, 50) | None = None


class CoverlayEntry(Base):
    film: Text
    adhesive: Text
    description: Text
    builds_um: Annotated[tuple, Leaf(_builds, {"type": "array"})]
    source: Text


class MaterialsFile(Base):
    dielectrics: dict[Name, DielectricEntry]
    coverlays: dict[Name, CoverlayEntry] = Field(default_factory=dict)
    about: Any = None


class FoilEntry(Base):
    copper_type: K.choice(COPPER_TYPES)
    ipc4562_grade: K.num(1, 8, integer=True)
    description: Text
    modulus_gpa: K.num(0, 1000, lo_open=True)
    poisson: K.num(0, 0.5, hi_open=True)
    tensile_strength_mpa: K.num(0, 5000, lo_open=True)
    yield_strength_mpa: K.num(0, 5000, lo_open=True)
    fatigue_ductility_pct: K.num(0, 500, lo_open=True)
    roughness_rq_um: K.num(0, 50)
    conductivity_pct_iacs: K.num(0, 120, lo_open=True)
    source: Text


class WeightEntry(Base):
    weight_oz: K.num(0, 20, lo_open=True)
    thickness_um: K.num(0, 1000, lo_open=True)
    source: Text


class CopperFile(Base):
    foils: dict[Name, FoilEntry]
    weights: dict[WeightName, WeightEntry]
    about: Any = None


Pct = K.num(0, 100, lo_open=True, hi_open=True)


class MinFeatureRow(Base):
    trace_um: K.num(0, 10000, lo_open=True)
    space_um: K.num(0, 10000, lo_open=True)


class MinFeature(Base):
    source: Text
    by_weight: dict[str, MinFeatureRow]


class WidthTolerance(Base):
    source: Text
    by_weight_pct: dict[str, Pct]


class ImpedanceTolerance(Base):
    source: Text
    classes_pct: dict[Name, Pct]


class Band(Base):
    up_to_um: K.num(0, 100000, lo_open=True)
    plus_minus_um: K.num(0, 100000, lo_open=True)


class TotalRule(Base):
    source: Text
    bands: list[Band]
    above_pct: Pct


class ThicknessTolerance(Base):
    source: Text
    material_pct: dict[str, K.num(0, 100, hi_open=True)]
    stiffener_um: K.num(0, 10000)
    total: TotalRule


class DkTolerance(Base):
    source: Text
    default_pct: K.num(0, 50)


class FabricationFile(Base):
    min_feature: MinFeature
    width_tolerance: WidthTolerance
    impedance_tolerance: ImpedanceTolerance
    thickness_tolerance: ThicknessTolerance
    dk_tolerance: DkTolerance | None = None
    about: Any = None


# ------------------------------------------------------------------------------------------------
class _File:
    """Errors of one catalog file: ``<label>: <field path>: <message>``."""

    def __init__(self, label: str) -> None:
        self.label = label

    def where(self, path: str) -> str:
        return f"{self.label}: {path}" if path else self.label

    def err(self, path: str, message: str) -> CatalogError:
        return CatalogError(message, self.where(path))

    def validate(self, model: type[Base], doc: Any) -> Any:
        if not isinstance(doc, dict):
            raise self.err("", K.style.not_mapping(doc, ()))
        try:
            return model.model_validate(doc)
        except ValidationError as exc:
            raise first_error(exc, model, K.style, self.where, CatalogError) from None

    def build(self, path: str, factory: Any, **kwargs: Any) -> Any:
        """Construct a validating record; its own ValueError becomes a CatalogError at ``path``."""
        try:
            return factory(**kwargs)
        except ValueError as exc:
            raise self.err(path, str(exc)) from None


def parse_materials(doc: Any, f: _File
                    ) -> tuple[dict[str, Dielectric], dict[str, Coverlay], dict[str, float]]:
    """Dielectrics, coverlays and the Dk tolerances the dielectrics give themselves (fractions)."""
    m = f.validate(MaterialsFile, doc)
    dielectrics: dict[str, Dielectric] = {}
    dk_tol = {key: e.dk_tolerance_pct / 100 for key, e in m.dielectrics.items() if e.dk_tolerance_pct is not None}
    for key, e in m.dielectrics.items():
        dielectrics[key] = f.build(
            f"dielectrics.{key}", Dielectric, name=key, family=e.family, description=e.description,
            modulus_pa=e.modulus_gpa * GPA, poisson=e.poisson, dk=e.dk, df=e.df, dk_frequency_hz=e.dk_freq_ghz * GHZ,
            elongation=e.elongation_pct / 100, glass_reinforced=e.glass_reinforced,
            thicknesses_m=tuple(t * UM for t in e.thicknesses_um),
            thickness_tolerance=e.thickness_tolerance_pct / 100, source=e.source,
            min_bend_radius_m=None if e.min_bend_radius_mm is None else e.min_bend_radius_mm * 1e-3)
    if not dielectrics:
        raise f.err("dielectrics", "must list at least one dielectric")
    coverlays: dict[str, Coverlay] = {}
    for key, e in m.coverlays.items():
        p = f"coverlays.{key}"
        parts = {}
        for role in ("film", "adhesive"):
            part = getattr(e, role)
            if part not in dielectrics:
                raise not_one_of(f.where(f"{p}.{role}"), part, tuple(dielectrics), CatalogError)
            if dielectrics[part].family != role:
                raise f.err(f"{p}.{role}", f"{part!r} has family {dielectrics[part].family!r}, a {role} needs {role!r}")
            parts[role] = part
        builds = []
        for i, pair in enumerate(e.builds_um):
            for j, role in enumerate(("film", "adhesive")):
                sold = dielectrics[parts[role]].thicknesses_m
                if not any(math.isclose(pair[j] * UM, s, rel_tol=1e-9) for s in sold):
                    listed = ", ".join(f"{s / UM:g}" for s in sold)
                    raise f.err(f"{p}.builds_um[{i}][{j}]",
                                f"{pair[j]:g} um is not a listed thickness of {parts[role]!r} [{listed}]")
            builds.append((pair[0] * UM, pair[1] * UM))
        coverlays[key] = f.build(p, Coverlay, name=key, film=parts["film"], adhesive=parts["adhesive"],
                                 builds_m=tuple(builds), description=e.description, source=e.source)
    return dielectrics, coverlays, dk_tol


def parse_copper(doc: Any, f: _File) -> tuple[dict[str, CopperFoil], dict[str, FoilWeight]]:
    m = f.validate(CopperFile, doc)
    foils: dict[str, CopperFoil] = {}
    for key, e in m.foils.items():
        p = f"foils.{key}"
        if e.yield_strength_mpa > e.tensile_strength_mpa:
            raw = doc["foils"][key]
            raise f.err(f"{p}.yield_strength_mpa",
                        K.style.out_of_range(raw["yield_strength_mpa"], (0, raw["tensile_strength_mpa"], True, False)))
        foils[key] = f.build(
            p, CopperFoil, name=key, copper_type=e.copper_type, ipc4562_grade=e.ipc4562_grade,
            description=e.description, modulus_pa=e.modulus_gpa * GPA, poisson=e.poisson,
            tensile_strength_pa=e.tensile_strength_mpa * MPA, yield_strength_pa=e.yield_strength_mpa * MPA,
            fatigue_ductility=e.fatigue_ductility_pct / 100, roughness_rq_m=e.roughness_rq_um * UM,
            conductivity_s_per_m=e.conductivity_pct_iacs / 100 * IACS_S_PER_M, source=e.source)
    if not foils:
        raise f.err("foils", "must list at least one foil")
    weights = {key: f.build(f"weights.{key}", FoilWeight, name=key, weight_oz=e.weight_oz,
                            thickness_m=e.thickness_um * UM, source=e.source)
               for key, e in m.weights.items()}
    if not weights:
        raise f.err("weights", "must list at least one foil weight")
    return foils, weights


def parse_fabrication(doc: Any, f: _File, weight_keys: tuple[str, ...]) -> Fabrication:
    m = f.validate(FabricationFile, doc)

    def by_weight(table: dict[str, Any], path: str) -> None:
        for w in table:
            if w not in weight_keys:
                raise not_one_of(f.where(path), w, weight_keys, CatalogError)
        for w in weight_keys:
            if w not in table:
                raise f.err(f"{path}.{w}", "required entry is missing (every foil weight needs one)")

    by_weight(m.min_feature.by_weight, "min_feature.by_weight")
    by_weight(m.width_tolerance.by_weight_pct, "width_tolerance.by_weight_pct")
    imp = m.impedance_tolerance.classes_pct
    for c in IMPEDANCE_CLASSES:
        if c not in imp:
            raise f.err(f"impedance_tolerance.classes_pct.{c}", "required class is missing")
    tt = m.thickness_tolerance
    mat = tt.material_pct
    for k in mat:
        if k not in TOLERANCE_KEYS:
            raise not_one_of(f.where("thickness_tolerance.material_pct"), k, TOLERANCE_KEYS, CatalogError)
    for k in TOLERANCE_KEYS:
        if k not in mat:
            raise f.err(f"thickness_tolerance.material_pct.{k}", "required field is missing")
    if not tt.total.bands:
        raise f.err("thickness_tolerance.total.bands", "must be a non-empty list of bands, got []")
    bands: list[tuple[float, float]] = []
    for i, b in enumerate(tt.total.bands):
        lower = bands[-1][0] / UM if bands else 0.0
        if b.up_to_um <= lower:
            raw = doc["thickness_tolerance"]["total"]["bands"]
            raise f.err(f"thickness_tolerance.total.bands[{i}].up_to_um",
                        K.style.out_of_range(raw[i]["up_to_um"], (raw[i - 1]["up_to_um"], 100000, True, False)))
        bands.append((b.up_to_um * UM, b.plus_minus_um * UM))
    rule = TotalThicknessRule(bands_m=tuple(bands), above_relative=tt.total.above_pct / 100, source=tt.total.source)
    sources = {"min_feature": m.min_feature.source, "width_tolerance": m.width_tolerance.source,
               "impedance_tolerance": m.impedance_tolerance.source, "thickness_tolerance": tt.source,
               "thickness_tolerance.total": rule.source}
    if m.dk_tolerance is not None:
        sources["dk_tolerance"] = m.dk_tolerance.source
    return Fabrication(
        min_trace_m=MappingProxyType({w: r.trace_um * UM for w, r in m.min_feature.by_weight.items()}),
        min_space_m=MappingProxyType({w: r.space_um * UM for w, r in m.min_feature.by_weight.items()}),
        impedance_tolerance=MappingProxyType({c: v / 100 for c, v in imp.items()}),
        width_tolerance=MappingProxyType({w: v / 100 for w, v in m.width_tolerance.by_weight_pct.items()}),
        total_thickness_tolerance=rule,
        material_thickness_tolerance=MappingProxyType({k: mat[k] / 100 for k in TOLERANCE_KEYS}),
        stiffener_thickness_tolerance_m=tt.stiffener_um * UM,
        sources=MappingProxyType(sources),
        source=" | ".join(f"{k}: {v}" for k, v in sources.items()),
        dk_tolerance_default=None if m.dk_tolerance is None else m.dk_tolerance.default_pct / 100,
    )
