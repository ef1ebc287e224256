"""Read a stackup file (YAML) into a :class:`~strainline.models.stackup.Stackup`.

The file format is documented in README.md (bend mechanics); its structure is the pydantic models
of :mod:`~strainline.optimizer.inputs.stackup_model` (imported when a file is read). Every error is
one :class:`StackupError` line naming the file, the field path, the bad value and the allowed
values or range.
"""
from __future__ import annotations

import math
import os
from dataclasses import replace
from pathlib import Path
from typing import Any

from strainline.models.stackup import LAYER_KINDS, Layer, Stackup
from strainline.models.units import GPA, MPA, UM
from strainline.optimizer.errors import StackupError, not_one_of

AIR_FILL = "air"


class _Reader:
    """Errors of one file: ``<file>: <field path>: <message>``."""

    def __init__(self, path: str) -> None:
        self.path = path

    def err(self, field: str, message: str) -> StackupError:
        return StackupError(message, f"{self.path}: {field}")

    def choice(self, field: str, value: Any, allowed: Any) -> str:
        allowed = list(allowed)
        if not isinstance(value, str) or value not in allowed:
            raise not_one_of(f"{self.path}: {field}", value, allowed, StackupError)
        return value

    def layer(self, model: Any, entry: dict, field: str) -> Any:
        from strainline.optimizer.inputs.stackup_model import validate

        return validate(model, entry, lambda p: f"{self.path}: {field}.{p}" if p else f"{self.path}: {field}")


def _kind_of(entry: Any) -> str:
    if isinstance(entry, dict):
        if isinstance(entry.get("kind"), str):
            return entry["kind"]
        if "copper" in entry:
            return "copper"
    return "dielectric"


def load_stackup(path: str | os.PathLike[str], catalog) -> Stackup:
    """Read and validate a stackup file.

    Parameters
    ----------
    path : path-like
        The YAML file (layers top to bottom; format in README.md (bend mechanics)).
    catalog : strainline.optimizer.inputs.catalog.Catalog
        Materials, coverlays, foils and weights the file may name.

    Returns
    -------
    Stackup
        SI units; fills of partially covered copper layers resolved.

    Raises
    ------
    StackupError
        One line naming the file, the field path, the bad value and what is allowed.
    """
    from strainline.optimizer.inputs import stackup_model as M
    from strainline.optimizer.inputs.yamlio import read_yaml

    rd = _Reader(str(path))
    doc = read_yaml(path, StackupError)
    if not isinstance(doc, dict):
        raise rd.err("(top level)", f"expected a mapping with 'layers:', got {type(doc).__name__}")
    top = M.validate(M.StackupFile, doc, lambda p: f"{rd.path}: {p or '(top level)'}")
    if top.layers is None:
        raise rd.err("layers", "missing; list the layers top to bottom")
    raw = top.layers
    if not isinstance(raw, list) or not raw:
        raise rd.err("layers", "must be a non-empty list of layers, top to bottom")
    name = top.name if top.name is not None else Path(path).stem
    feats = top.bend_area_features or ()

    kinds = [_kind_of(e) for e in raw]
    layers: list[Layer] = []
    for i, entry in enumerate(raw):
        field = f"layers[{i}]"
        if not isinstance(entry, dict):
            raise rd.err(field, f"{entry!r} is not a layer; give a mapping such as "
                                "{material: polyimide-film, thickness_um: 25}")
        if entry.get("kind") is not None:
            rd.choice(f"{field}.kind", entry["kind"], LAYER_KINDS)
        kind = kinds[i]
        before = len(layers)
        if kind == "air-gap":
            layers.append(_air_gap(rd.layer(M.AirGapLayer, entry, field), before + 1))
        elif kind == "copper":
            layers.append(_copper(rd, rd.layer(M.CopperLayer, entry, field), field, catalog, before + 1))
        elif isinstance(entry.get("material"), str) and entry["material"] in catalog.coverlays:
            above = kinds[i - 1] if i > 0 else None
            below = kinds[i + 1] if i + 1 < len(kinds) else None
            e = rd.layer(M.CoverlayLayer, entry, field)
            layers.extend(_coverlay(rd, e, field, catalog, above, below, before + 1))
        else:
            layers.append(_dielectric(rd, rd.layer(M.DielectricLayer, entry, field), field, catalog, before + 1))

    seen: dict[str, int] = {}
    for i, entry in enumerate(raw):
        nm = entry.get("name")
        if nm is not None:
            if nm in seen:
                raise rd.err(f"layers[{i}].name", f"{nm!r} is already used by layers[{seen[nm]}]; names must be unique")
            seen[nm] = i

    try:
        return Stackup(tuple(layers), name=name, features=frozenset(feats))
    except ValueError as exc:
        raise rd.err("layers", str(exc)) from None


def _default_name(e: Any, n: int, what: str) -> str:
    return e.name if e.name else f"L{n} {what}"


def _air_gap(e: Any, n: int) -> Layer:
    t = e.thickness_um * UM if e.thickness_um is not None else 0.0
    return Layer(_default_name(e, n, "air gap"), "air-gap", t, 0.0, 0.0, None, None, "inline")


def _thickness_from_material(rd: _Reader, e: Any, field: str, mat) -> float:
    if e.thickness_um is not None:
        return e.thickness_um * UM
    if len(mat.thicknesses_m) == 1:
        return mat.thicknesses_m[0]
    sold = ", ".join(f"{t / UM:g}" for t in mat.thicknesses_m)
    raise rd.err(f"{field}.thickness_um", f"missing; {mat.name!r} is sold in [{sold}] um, give one of them")


def _dielectric(rd: _Reader, e: Any, field: str, catalog, n: int) -> Layer:
    if e.material is not None:
        allowed = list(catalog.dielectrics) + list(catalog.coverlays)
        key = rd.choice(f"{field}.material", e.material, allowed)
        mat = catalog.dielectrics[key]
        t = _thickness_from_material(rd, e, field, mat)
        mod = e.modulus_gpa * GPA if e.modulus_gpa is not None else mat.modulus_pa
        nu = e.poisson if e.poisson is not None else mat.poisson
        dk = e.dk if e.dk is not None else mat.dk
        df = e.df if e.df is not None else mat.df
        glass, family, material = mat.glass_reinforced, mat.family, key
    else:
        for k in ("thickness_um", "modulus_gpa", "poisson"):
            if getattr(e, k) is None:
                raise rd.err(f"{field}.{k}", "missing; an inline dielectric gives thickness_um, modulus_gpa and "
                                             "poisson (or name a catalog material with material:)")
        t, mod, nu, dk, df = e.thickness_um * UM, e.modulus_gpa * GPA, e.poisson, e.dk, e.df
        glass, family, material = False, None, "inline"
    if e.glass_reinforced is not None:
        glass = e.glass_reinforced
    return Layer(_default_name(e, n, material), "dielectric", t, mod, nu, dk, df, material,
                 glass_reinforced=glass, family=family)


def _coverlay(rd: _Reader, e: Any, field: str, catalog, above: str | None, below: str | None,
              n: int) -> list[Layer]:
    cov = catalog.coverlays[e.material]
    builds = cov.builds_m
    listing = ", ".join(f"{f / UM:g}/{a / UM:g}" for f, a in builds)
    film_t = e.film_um * UM if e.film_um is not None else None
    adh_t = e.adhesive_um * UM if e.adhesive_um is not None else None
    if film_t is None or adh_t is None:
        match = [b for b in builds
                 if (film_t is None or math.isclose(b[0], film_t, rel_tol=1e-6))
                 and (adh_t is None or math.isclose(b[1], adh_t, rel_tol=1e-6))]
        if len(match) != 1:
            missing = "film_um" if film_t is None else "adhesive_um"
            raise rd.err(f"{field}.{missing}", f"missing; {cov.name!r} is sold as film/adhesive [{listing}] um, "
                                               "give film_um and adhesive_um")
        film_t, adh_t = match[0]
    if below == "copper" and above != "copper":
        adhesive_below = True
    elif above == "copper" and below != "copper":
        adhesive_below = False
    else:
        raise rd.err(f"{field}.material", f"coverlay {cov.name!r} needs exactly one copper layer next to it "
                                          "(its adhesive faces the copper); list film and adhesive separately otherwise")
    film = catalog.dielectrics[cov.film]
    adh = catalog.dielectrics[cov.adhesive]
    base = e.name

    def make(mat, t: float, k: int, part: str) -> Layer:
        name = f"{base} {part}" if base else f"L{k} {mat.name}"
        return Layer(name, "dielectric", t, mat.modulus_pa, mat.poisson, mat.dk, mat.df, mat.name,
                     glass_reinforced=mat.glass_reinforced, family=mat.family)

    if adhesive_below:
        return [make(film, film_t, n, "film"), make(adh, adh_t, n + 1, "adhesive")]
    return [make(adh, adh_t, n, "adhesive"), make(film, film_t, n + 1, "film")]


def _copper(rd: _Reader, e: Any, field: str, catalog, n: int) -> Layer:
    if e.copper is None:
        raise rd.err(f"{field}.copper", f"missing; name the foil, one of [{', '.join(catalog.foils)}]")
    foil = catalog.foils[rd.choice(f"{field}.copper", e.copper, catalog.foils)]
    if e.weight is not None and e.thickness_um is not None:
        raise rd.err(f"{field}.weight", "give weight or thickness_um, not both")
    if e.weight is not None:
        from strainline.optimizer.inputs.catalog_records import weight_key

        t = catalog.weights[rd.choice(f"{field}.weight", weight_key(e.weight, catalog.weights),
                                      catalog.weights)].thickness_m
    elif e.thickness_um is not None:
        t = e.thickness_um * UM
    else:
        raise rd.err(f"{field}.weight", f"missing; give weight (one of [{', '.join(catalog.weights)}]) or thickness_um")
    over: dict[str, float] = {}
    for key, attr, unit in (("modulus_gpa", "modulus_pa", GPA), ("poisson", "poisson", 1.0),
                            ("tensile_strength_mpa", "tensile_strength_pa", MPA),
                            ("yield_strength_mpa", "yield_strength_pa", MPA),
                            ("fatigue_ductility", "fatigue_ductility", 1.0)):
        if getattr(e, key) is not None:
            over[attr] = getattr(e, key) * unit
    if over:
        if over.get("yield_strength_pa", foil.yield_strength_pa) > over.get("tensile_strength_pa",
                                                                           foil.tensile_strength_pa):
            key = "yield_strength_mpa" if e.yield_strength_mpa is not None else "tensile_strength_mpa"
            raise rd.err(f"{field}.{key}", f"{getattr(e, key):g} makes the yield strength exceed the tensile "
                                           "strength; yield must be <= tensile")
        foil = replace(foil, **over)
    coverage = e.coverage if e.coverage is not None else 1.0
    fill_kw: dict[str, Any] = {}
    if e.fill is not None:
        key = rd.choice(f"{field}.fill", e.fill, [AIR_FILL, *catalog.dielectrics])
        if key == AIR_FILL:
            fill_kw = {"fill_modulus_pa": 0.0, "fill_poisson": 0.0, "fill_material": AIR_FILL}
        else:
            m = catalog.dielectrics[key]
            fill_kw = {"fill_modulus_pa": m.modulus_pa, "fill_poisson": m.poisson, "fill_material": key}
    return Layer(_default_name(e, n, "copper"), "copper", t, foil.modulus_pa, foil.poisson, None, None,
                 foil.name, coverage=coverage, copper=foil, **fill_kw)
