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
from collections.abc import Mapping
from importlib import resources
from pathlib import Path
from types import MappingProxyType
from typing import Any

from strainline.optimizer.errors import CatalogError
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


def _load_from(folder: Path, labels: Mapping[str, str], shown: str) -> Catalog:
    from strainline.optimizer.inputs.catalog_model import (
        _File,
        parse_copper,
        parse_fabrication,
        parse_materials,
    )

    docs = {name: _read(folder / name, labels[name]) for name in CATALOG_FILES}
    dielectrics, coverlays = parse_materials(docs["materials.yaml"], _File(labels["materials.yaml"]))
    foils, weights = parse_copper(docs["copper.yaml"], _File(labels["copper.yaml"]))
    fabrication = parse_fabrication(docs["fabrication.yaml"], _File(labels["fabrication.yaml"]), tuple(weights))
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


