"""Read a stackup file (YAML) into a :class:`~strainline.models.stackup.Stackup`.

The file format is documented in README.md (bend mechanics). Every error is one :class:`StackupError` line naming
the file, the field path, the bad value and the allowed values or range.
"""
from __future__ import annotations

import math
import os
from dataclasses import replace
from pathlib import Path
from typing import Any

from strainline.models.stackup import BEND_AREA_FEATURES, LAYER_KINDS, Layer, Stackup
from strainline.models.units import GPA, MPA, UM
from strainline.optimizer.errors import StackupError, not_one_of
from strainline.optimizer.inputs.yamlio import read_yaml

TOP_KEYS: tuple[str, ...] = ("name", "description", "layers", "bend_area_features")
DIELECTRIC_KEYS: tuple[str, ...] = ("name", "kind", "material", "thickness_um", "modulus_gpa", "poisson", "dk", "df",
                                    "glass_reinforced")
COVERLAY_KEYS: tuple[str, ...] = ("name", "kind", "material", "film_um", "adhesive_um")
COPPER_KEYS: tuple[str, ...] = ("name", "kind", "copper", "weight", "thickness_um", "coverage", "fill", "modulus_gpa",
                                "poisson", "tensile_strength_mpa", "yield_strength_mpa", "fatigue_ductility")
AIR_GAP_KEYS: tuple[str, ...] = ("name", "kind", "thickness_um")
AIR_FILL = "air"


def _fmt(v: Any) -> str:
    return repr(v) if isinstance(v, str) else str(v)


class _Reader:
    """Helpers that turn bad values into one StackupError line with the field path."""

    def __init__(self, path: str) -> None:
        self.path = path

    def err(self, field: str, message: str) -> StackupError:
        return StackupError(message, f"{self.path}: {field}")

    def choice(self, field: str, value: Any, allowed) -> str:
        allowed = list(allowed)
        if not isinstance(value, str) or value not in allowed:
            raise not_one_of(f"{self.path}: {field}", value, allowed, StackupError)
        return value

    def keys(self, entry: dict, field: str, allowed: tuple[str, ...], what: str) -> None:
        for k in entry:
            if k not in allowed:
                hint = _close(str(k), allowed)
                raise self.err(f"{field}.{k}", f"{k!r} is not a field of {what}; allowed: [{', '.join(allowed)}]"
                               + (f"; did you mean {hint!r}?" if hint else ""))

    def number(self, entry: dict, key: str, field: str, lo: float | None = None, hi: float | None = None,
               lo_open: bool = False, hi_open: bool = False) -> float:
        v = entry[key]
        where = f"{field}.{key}"
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise self.err(where, f"{_fmt(v)} is not a number; {self._range(lo, hi, lo_open, hi_open)}")
        v = float(v)
        ok = math.isfinite(v)
        if ok and lo is not None:
            ok = v > lo if lo_open else v >= lo
        if ok and hi is not None:
            ok = v < hi if hi_open else v <= hi
        if not ok:
            raise self.err(where, f"{_fmt(entry[key])} is out of range; {self._range(lo, hi, lo_open, hi_open)}")
        return v

    @staticmethod
    def _range(lo, hi, lo_open, hi_open) -> str:
        if lo is not None and hi is not None:
            return f"must be in {'(' if lo_open else '['}{lo:g}, {hi:g}{')' if hi_open else ']'}"
        if lo is not None:
            return f"must be {'>' if lo_open else '>='} {lo:g}"
        if hi is not None:
            return f"must be {'<' if hi_open else '<='} {hi:g}"
        return "must be a finite number"


def _close(value: str, allowed) -> str | None:
    from strainline.optimizer.errors import closest
    return closest(value, allowed)


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
    rd = _Reader(str(path))
    doc = read_yaml(path, StackupError)
    if not isinstance(doc, dict):
        raise rd.err("(top level)", f"expected a mapping with 'layers:', got {type(doc).__name__}")
    for k in doc:
        if k not in TOP_KEYS:
            hint = _close(str(k), TOP_KEYS)
            raise rd.err(str(k), f"{k!r} is not a top-level field; allowed: [{', '.join(TOP_KEYS)}]"
                         + (f"; did you mean {hint!r}?" if hint else ""))
    if "layers" not in doc:
        raise rd.err("layers", "missing; list the layers top to bottom")
    raw = doc["layers"]
    if not isinstance(raw, list) or not raw:
        raise rd.err("layers", "must be a non-empty list of layers, top to bottom")
    name = doc.get("name", Path(path).stem)
    if not isinstance(name, str):
        raise rd.err("name", f"{_fmt(name)} is not text")

    feats = doc.get("bend_area_features", [])
    if feats is None:
        feats = []
    if not isinstance(feats, list):
        raise rd.err("bend_area_features", f"must be a list drawn from [{', '.join(BEND_AREA_FEATURES)}]")
    for j, f in enumerate(feats):
        rd.choice(f"bend_area_features[{j}]", f, BEND_AREA_FEATURES)

    kinds = [_kind_of(e) for e in raw]
    layers: list[Layer] = []
    for i, entry in enumerate(raw):
        field = f"layers[{i}]"
        if not isinstance(entry, dict):
            raise rd.err(field, f"{_fmt(entry)} is not a layer; give a mapping such as "
                                "{material: polyimide-film, thickness_um: 25}")
        if "kind" in entry:
            rd.choice(f"{field}.kind", entry["kind"], LAYER_KINDS)
        kind = kinds[i]
        before = len(layers)
        if kind == "air-gap":
            layers.append(_air_gap(rd, entry, field, before + 1))
        elif kind == "copper":
            layers.append(_copper(rd, entry, field, catalog, before + 1))
        elif entry.get("material") in catalog.coverlays:
            above = kinds[i - 1] if i > 0 else None
            below = kinds[i + 1] if i + 1 < len(kinds) else None
            layers.extend(_coverlay(rd, entry, field, catalog, above, below, before + 1))
        else:
            layers.append(_dielectric(rd, entry, field, catalog, before + 1))

    seen: dict[str, int] = {}
    for i, entry in enumerate(raw):
        if isinstance(entry, dict) and "name" in entry:
            nm = entry["name"]
            if not isinstance(nm, str) or not nm.strip():
                raise rd.err(f"layers[{i}].name", f"{_fmt(nm)} is not a name; give non-empty text")
            if nm in seen:
                raise rd.err(f"layers[{i}].name", f"{nm!r} is already used by layers[{seen[nm]}]; names must be unique")
            seen[nm] = i

    try:
        return Stackup(tuple(layers), name=name, features=frozenset(feats))
    except ValueError as exc:
        raise rd.err("layers", str(exc)) from None


def _default_name(entry: dict, n: int, what: str) -> str:
    return entry["name"] if isinstance(entry.get("name"), str) and entry["name"].strip() else f"L{n} {what}"


def _air_gap(rd: _Reader, entry: dict, field: str, n: int) -> Layer:
    rd.keys(entry, field, AIR_GAP_KEYS, "an air-gap layer")
    t = rd.number(entry, "thickness_um", field, lo=0.0) * UM if "thickness_um" in entry else 0.0
    return Layer(_default_name(entry, n, "air gap"), "air-gap", t, 0.0, 0.0, None, None, "inline")


def _thickness_from_material(rd: _Reader, entry: dict, field: str, mat) -> float:
    if "thickness_um" in entry:
        return rd.number(entry, "thickness_um", field, lo=0.0, lo_open=True) * UM
    if len(mat.thicknesses_m) == 1:
        return mat.thicknesses_m[0]
    sold = ", ".join(f"{t / UM:g}" for t in mat.thicknesses_m)
    raise rd.err(f"{field}.thickness_um", f"missing; {mat.name!r} is sold in [{sold}] um, give one of them")


def _dielectric(rd: _Reader, entry: dict, field: str, catalog, n: int) -> Layer:
    rd.keys(entry, field, DIELECTRIC_KEYS, "a dielectric layer")
    if "material" in entry:
        allowed = list(catalog.dielectrics) + list(catalog.coverlays)
        key = rd.choice(f"{field}.material", entry["material"], allowed)
        mat = catalog.dielectrics[key]
        t = _thickness_from_material(rd, entry, field, mat)
        e = rd.number(entry, "modulus_gpa", field, lo=0.0, lo_open=True) * GPA if "modulus_gpa" in entry else mat.modulus_pa
        nu = rd.number(entry, "poisson", field, lo=0.0, hi=0.5, hi_open=True) if "poisson" in entry else mat.poisson
        dk = rd.number(entry, "dk", field, lo=1.0) if "dk" in entry else mat.dk
        df = rd.number(entry, "df", field, lo=0.0, hi=1.0, hi_open=True) if "df" in entry else mat.df
        glass = mat.glass_reinforced
        family = mat.family
        material = key
    else:
        for k in ("thickness_um", "modulus_gpa", "poisson"):
            if k not in entry:
                raise rd.err(f"{field}.{k}", "missing; an inline dielectric gives thickness_um, modulus_gpa and "
                                             "poisson (or name a catalog material with material:)")
        t = rd.number(entry, "thickness_um", field, lo=0.0, lo_open=True) * UM
        e = rd.number(entry, "modulus_gpa", field, lo=0.0, lo_open=True) * GPA
        nu = rd.number(entry, "poisson", field, lo=0.0, hi=0.5, hi_open=True)
        dk = rd.number(entry, "dk", field, lo=1.0) if "dk" in entry else None
        df = rd.number(entry, "df", field, lo=0.0, hi=1.0, hi_open=True) if "df" in entry else None
        glass, family, material = False, None, "inline"
    if "glass_reinforced" in entry:
        if not isinstance(entry["glass_reinforced"], bool):
            raise rd.err(f"{field}.glass_reinforced", f"{_fmt(entry['glass_reinforced'])} is not one of [true, false]")
        glass = entry["glass_reinforced"]
    return Layer(_default_name(entry, n, material), "dielectric", t, e, nu, dk, df, material,
                 glass_reinforced=glass, family=family)


def _coverlay(rd: _Reader, entry: dict, field: str, catalog, above: str | None, below: str | None,
              n: int) -> list[Layer]:
    rd.keys(entry, field, COVERLAY_KEYS, "a coverlay layer")
    cov = catalog.coverlays[entry["material"]]
    builds = cov.builds_m
    listing = ", ".join(f"{f / UM:g}/{a / UM:g}" for f, a in builds)
    film_t = rd.number(entry, "film_um", field, lo=0.0, lo_open=True) * UM if "film_um" in entry else None
    adh_t = rd.number(entry, "adhesive_um", field, lo=0.0, lo_open=True) * UM if "adhesive_um" in entry else None
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
    base = entry["name"] if isinstance(entry.get("name"), str) and entry["name"].strip() else None
    first, second = (n, n + 1)

    def make(mat, t: float, k: int, part: str) -> Layer:
        name = f"{base} {part}" if base else f"L{k} {mat.name}"
        return Layer(name, "dielectric", t, mat.modulus_pa, mat.poisson, mat.dk, mat.df, mat.name,
                     glass_reinforced=mat.glass_reinforced, family=mat.family)

    if adhesive_below:
        return [make(film, film_t, first, "film"), make(adh, adh_t, second, "adhesive")]
    return [make(adh, adh_t, first, "adhesive"), make(film, film_t, second, "film")]


def _copper(rd: _Reader, entry: dict, field: str, catalog, n: int) -> Layer:
    rd.keys(entry, field, COPPER_KEYS, "a copper layer")
    if "copper" not in entry:
        raise rd.err(f"{field}.copper", f"missing; name the foil, one of [{', '.join(catalog.foils)}]")
    foil = catalog.foils[rd.choice(f"{field}.copper", entry["copper"], catalog.foils)]
    if "weight" in entry and "thickness_um" in entry:
        raise rd.err(f"{field}.weight", "give weight or thickness_um, not both")
    if "weight" in entry:
        t = catalog.weights[rd.choice(f"{field}.weight", entry["weight"], catalog.weights)].thickness_m
    elif "thickness_um" in entry:
        t = rd.number(entry, "thickness_um", field, lo=0.0, lo_open=True) * UM
    else:
        raise rd.err(f"{field}.weight", f"missing; give weight (one of [{', '.join(catalog.weights)}]) or thickness_um")
    over: dict[str, float] = {}
    if "modulus_gpa" in entry:
        over["modulus_pa"] = rd.number(entry, "modulus_gpa", field, lo=0.0, lo_open=True) * GPA
    if "poisson" in entry:
        over["poisson"] = rd.number(entry, "poisson", field, lo=0.0, hi=0.5, hi_open=True)
    if "tensile_strength_mpa" in entry:
        over["tensile_strength_pa"] = rd.number(entry, "tensile_strength_mpa", field, lo=0.0, lo_open=True) * MPA
    if "yield_strength_mpa" in entry:
        over["yield_strength_pa"] = rd.number(entry, "yield_strength_mpa", field, lo=0.0, lo_open=True) * MPA
    if "fatigue_ductility" in entry:
        over["fatigue_ductility"] = rd.number(entry, "fatigue_ductility", field, lo=0.0, lo_open=True)
    if over:
        if over.get("yield_strength_pa", foil.yield_strength_pa) > over.get("tensile_strength_pa",
                                                                           foil.tensile_strength_pa):
            key = "yield_strength_mpa" if "yield_strength_mpa" in entry else "tensile_strength_mpa"
            raise rd.err(f"{field}.{key}", f"{_fmt(entry[key])} makes the yield strength exceed the tensile "
                                           "strength; yield must be <= tensile")
        foil = replace(foil, **over)
    coverage = rd.number(entry, "coverage", field, lo=0.0, hi=1.0, lo_open=True) if "coverage" in entry else 1.0
    fill_kw: dict[str, Any] = {}
    if "fill" in entry:
        allowed = [AIR_FILL, *catalog.dielectrics]
        key = rd.choice(f"{field}.fill", entry["fill"], allowed)
        if key == AIR_FILL:
            fill_kw = {"fill_modulus_pa": 0.0, "fill_poisson": 0.0, "fill_material": AIR_FILL}
        else:
            m = catalog.dielectrics[key]
            fill_kw = {"fill_modulus_pa": m.modulus_pa, "fill_poisson": m.poisson, "fill_material": key}
    return Layer(_default_name(entry, n, "copper"), "copper", t, foil.modulus_pa, foil.poisson, None, None,
                 foil.name, coverage=coverage, copper=foil, **fill_kw)
