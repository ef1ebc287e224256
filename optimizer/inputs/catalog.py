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

import copy
import functools
from collections.abc import Mapping
from importlib import resources
from pathlib import Path
from types import MappingProxyType
from typing import Any

from strainline.optimizer.errors import CatalogError, not_one_of
from strainline.optimizer.inputs import yamlio
from strainline.optimizer.inputs.catalog_records import (  # noqa: F401  (the public API of this module)
    CATALOG_FILES,
    CAUTION,
    IACS_S_PER_M,
    IMPEDANCE_CLASSES,
    SECTIONS,
    TOLERANCE_KEYS,
    Catalog,
    Fabrication,
    TotalThicknessRule,
    weight_key,
)

__all__ = [
    "CATALOG_FILES",
    "CAUTION",
    "SECTIONS",
    "Catalog",
    "Fabrication",
    "TotalThicknessRule",
    "load_catalog",
]


def _read(path: Path, label: str) -> Any:
    """Read one catalog file (bounded; duplicate keys refused, aliases capped; see yamlio)."""
    return yamlio.read_yaml(path, CatalogError, aliases=True, max_bytes=yamlio.MAX_CATALOG_BYTES)


#: ``mode:`` of a user catalog file: its entries replace the built-in file, or are added to it.
MODES: tuple[str, ...] = ("replace", "add")
_ENTRY_SECTIONS = ("dielectrics", "coverlays", "foils", "weights")


def _merge(base: Any, user: Any, deep: bool) -> Any:
    """``user`` added to ``base``: entry sections by entry name (a same-named entry replaces the
    built-in one whole); ``deep`` (fabrication) merges every mapping key by key."""
    if not (isinstance(base, dict) and isinstance(user, dict)):
        return user
    out = dict(base)
    for key, value in user.items():
        if key in out and isinstance(out[key], dict) and isinstance(value, dict) and (deep or key in _ENTRY_SECTIONS):
            out[key] = _merge(out[key], value, deep) if deep else {**out[key], **value}
        else:
            out[key] = value
    return out


def _user_docs(folder: Path, labels: Mapping[str, str]) -> tuple[dict[str, Any], dict[str, str]]:
    """The three documents of a user catalog folder and the origin of each (see :data:`MODES`)."""
    found = {n: _read(folder / n, labels[n]) for n in CATALOG_FILES if (folder / n).exists()}
    modes: dict[str, str] = {}
    for name, doc in found.items():
        mode = doc.pop("mode", "replace") if isinstance(doc, dict) else "replace"
        if mode not in MODES:
            raise not_one_of(f"{labels[name]}: mode", mode, MODES, CatalogError)
        modes[name] = mode
    adding = "add" in modes.values()
    docs, origin = {}, {}
    for name in CATALOG_FILES:
        if name not in found:
            if not adding:   # a replacing catalog is complete; reading the file says what is wrong
                _read(folder / name, labels[name])
            docs[name], origin[name] = copy.deepcopy(_builtin_docs()[name]), "built-in"
        elif modes[name] == "add":
            base = copy.deepcopy(_builtin_docs()[name])
            docs[name], origin[name] = _merge(base, found[name], deep=name == "fabrication.yaml"), "added"
        else:
            docs[name], origin[name] = found[name], "replaced"
    return docs, origin


def _build(docs: Mapping[str, Any], labels: Mapping[str, str], shown: str, origin: Mapping[str, str]) -> Catalog:
    from strainline.optimizer.inputs.catalog_model import (
        _File,
        parse_copper,
        parse_fabrication,
        parse_materials,
    )

    dielectrics, coverlays, own_dk = parse_materials(docs["materials.yaml"], _File(labels["materials.yaml"]))
    foils, weights = parse_copper(docs["copper.yaml"], _File(labels["copper.yaml"]))
    fabrication = parse_fabrication(docs["fabrication.yaml"], _File(labels["fabrication.yaml"]), tuple(weights))
    default = fabrication.dk_tolerance_default
    dk_tol = {k: own_dk.get(k, default) for k in dielectrics if k in own_dk or default is not None}
    return Catalog(
        dielectrics=MappingProxyType(dielectrics),
        coverlays=MappingProxyType(coverlays),
        foils=MappingProxyType(foils),
        weights=MappingProxyType(weights),
        fabrication=fabrication,
        folder=shown,
        origin=MappingProxyType(dict(origin)),
        dk_tolerance=MappingProxyType(dk_tol),
    )


@functools.lru_cache(maxsize=1)
def _builtin_docs() -> dict[str, Any]:
    with resources.as_file(resources.files("strainline.catalogs")) as folder:
        return {n: _read(Path(folder) / n, n) for n in CATALOG_FILES}


@functools.lru_cache(maxsize=1)
def _load_default() -> Catalog:
    docs = copy.deepcopy(_builtin_docs())
    return _build(docs, {n: n for n in CATALOG_FILES}, "<package data>", dict.fromkeys(CATALOG_FILES, "built-in"))


def load_catalog(folder: str | Path | None = None) -> Catalog:
    """Load and validate a catalog.

    Parameters
    ----------
    folder : str or Path, optional
        A folder holding ``materials.yaml``, ``copper.yaml`` and ``fabrication.yaml``. By default
        the catalog shipped with the package (``strainline.catalogs``), loaded once and cached.
        A file that says ``mode: add`` adds its entries to the built-in file's (an entry of the
        same name replaces the built-in one; fabrication values merge key by key), and then the
        folder may leave files out (the built-in ones are used); ``mode: replace`` (the default)
        replaces the built-in file, and then all three files are needed.

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
    labels = {n: str(path / n) for n in CATALOG_FILES}
    docs, origin = _user_docs(path, labels)
    return _build(docs, labels, str(path), origin)




# --------------------------------------------------------------------------------------------
# the catalog a run used, recorded in front.json so `strainline report` rebuilds the same sheets
def catalog_digest(catalog: Catalog) -> str:
    """SHA-256 (hex) of the catalog's content: its edge-unit JSON, keys sorted."""
    import hashlib
    import json

    text = json.dumps(catalog.to_dict(), sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def catalog_subset(catalog: Catalog, dielectrics: Any = (), coverlays: Any = (), foils: Any = (),
                   weights: Any = ()) -> dict[str, Any]:
    """The named entries in edge units (:meth:`Catalog.to_dict` form), loadable by :func:`catalog_from_dict`.

    A coverlay brings its film and adhesive; the fabrication rows per foil weight are kept for the
    named weights only.
    """
    full = catalog.to_dict()
    cov = [c for c in full["coverlays"] if c in set(coverlays)]
    diel = set(dielectrics) | {full["coverlays"][c][r] for c in cov for r in ("film", "adhesive")}
    wts = [w for w in full["weights"] if w in set(weights)]
    fab = copy.deepcopy(full["fabrication"])
    fab["min_feature"]["by_weight"] = {w: v for w, v in fab["min_feature"]["by_weight"].items() if w in wts}
    fab["width_tolerance"]["by_weight_pct"] = {w: v for w, v in fab["width_tolerance"]["by_weight_pct"].items()
                                               if w in wts}
    return {
        "dielectrics": {k: v for k, v in full["dielectrics"].items() if k in diel},
        "coverlays": {k: full["coverlays"][k] for k in cov},
        "foils": {k: v for k, v in full["foils"].items() if k in set(foils)},
        "weights": {k: full["weights"][k] for k in wts},
        "fabrication": fab,
    }


def study_catalog(study: Any, catalog: Catalog) -> dict[str, Any]:
    """front.json's ``catalog``: where it came from, its content hash, and the entries the study can use."""
    st = study.stack
    return {
        "source": catalog.folder,
        "origin": dict(catalog.origin),
        "sha256": catalog_digest(catalog),
        "entries": catalog_subset(catalog, dielectrics=(*st.dielectric, *st.adhesive, *st.coverlay),
                                  coverlays=st.coverlay, foils=st.copper_types, weights=st.copper_weights),
    }


def catalog_from_dict(data: Any, label: str = "front.json: catalog.entries") -> Catalog:
    """A Catalog from :meth:`Catalog.to_dict` / :func:`catalog_subset` output, validated like the files."""
    if not isinstance(data, dict):
        raise CatalogError(f"must be a mapping of catalog sections, got {data!r}"[:120], label)
    foils = data.get("foils")
    if isinstance(foils, dict):   # a derived column of the listing, not a catalog field
        foils = {k: ({f: x for f, x in v.items() if f != "conductivity_ms_per_m"} if isinstance(v, dict) else v)
                 for k, v in foils.items()}
    docs = {
        "materials.yaml": {"dielectrics": data.get("dielectrics"), "coverlays": data.get("coverlays") or {}},
        "copper.yaml": {"foils": foils, "weights": data.get("weights")},
        "fabrication.yaml": data.get("fabrication"),
    }
    labels = dict.fromkeys(CATALOG_FILES, label)
    return _build(docs, labels, label, dict.fromkeys(CATALOG_FILES, "recorded"))
