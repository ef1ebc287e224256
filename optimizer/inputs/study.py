"""Load and validate a study file (YAML).

A study names the line to hold, the bend, the stack family to search, limits, objectives and the
search settings. Every problem with a study becomes one :class:`StudyError` whose text names the
file, the field path, the bad value and the allowed values (with the closest match).

The format is documented in ``README.md, "Study files"``. The records and constants live in
:mod:`~strainline.optimizer.inputs.study_spec` (re-exported here); the file's structure is the
pydantic model in :mod:`~strainline.optimizer.inputs.study_model`, imported only when a study is
validated; ``catalogs/study.schema.json`` is generated from it
(``python -m strainline.optimizer.inputs.schema``).
"""
from __future__ import annotations

from pathlib import Path
from typing import Any

from strainline.optimizer.errors import StudyError
from strainline.optimizer.inputs.study_spec import (  # noqa: F401  (the public API of this module)
    _BEND_KEYS,
    _LIMIT_KEYS,
    _LINE_KEYS,
    _SEARCH_KEYS,
    _STACK_KEYS,
    _TOP_KEYS,
    GAP_KINDS,
    INNER_KINDS,
    LINE_KINDS,
    MIN_COPPER,
    NONE,
    OBJECTIVE_KEYS,
    OBJECTIVE_RESOLUTION,
    OBJECTIVES,
    PAIR_KINDS,
    BendSpec,
    Impedance,
    Inside,
    Limits,
    LineKind,
    LineSpec,
    Method,
    Motion,
    Objective,
    Order,
    Region,
    SearchSpec,
    StackSpec,
    Study,
    Use,
)


def validate_study(data: Any, catalog: Any, file: str = "", folder: str | Path | None = None) -> Study:
    """Validate a parsed study mapping against the catalog.

    Parameters
    ----------
    data : mapping
        The parsed YAML.
    catalog : Catalog
        From :func:`strainline.optimizer.inputs.catalog.load_catalog`.
    file : str
        File name used as the prefix of every error.
    folder : str or Path, optional
        Folder that a relative ``catalog:`` path is resolved against (the study file's folder);
        the current folder when None.

    Raises
    ------
    StudyError
        One line naming the field, the bad value and the allowed values.
    """
    from strainline.optimizer.inputs.study_model import build_study  # imports pydantic

    return build_study(data, catalog, file, Path(folder) if folder is not None else None)


def load_study(path: str | Path, catalog: Any | None = None) -> Study:
    """Read and validate a study file.

    Parameters
    ----------
    path : str or Path
        The YAML study file.
    catalog : Catalog, optional
        The catalog to validate against (a ``--catalog`` given on the command line). By default the
        study's own ``catalog:`` folder (relative to the study file), else the shipped catalog.
    """
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.inputs.yamlio import read_yaml

    path = Path(path)
    data = read_yaml(path, StudyError)
    if data is None:
        raise StudyError("the file is empty; a study needs at least [name, line, bend, stack]", str(path))
    if catalog is None:
        own = data.get("catalog") if isinstance(data, dict) else None
        if isinstance(own, str) and own.strip():
            folder = Path(own).expanduser()
            folder = folder if folder.is_absolute() else path.parent / folder
            if not folder.is_dir():
                raise StudyError(f"{own!r} is not a catalog folder (looked for {folder}; a relative path is "
                                 "relative to the study file)", f"{path.name}: catalog")
            catalog = load_catalog(folder)
        else:
            catalog = load_catalog()
    return validate_study(data, catalog, file=path.name, folder=path.parent)
