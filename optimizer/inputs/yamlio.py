"""Safe YAML reading for every input file (study, stackup, catalog)."""
from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import yaml

from strainline.optimizer.errors import StrainlineError


def read_yaml(path: str | os.PathLike[str], cls: type[StrainlineError]) -> Any:
    """Read a YAML file; a missing file or a YAML syntax error becomes one ``cls`` line."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise cls("file not found", str(path)) from None
    except (IsADirectoryError, PermissionError, UnicodeDecodeError) as exc:
        raise cls(f"cannot read: {exc.__class__.__name__}", str(path)) from None
    try:
        return yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"line {mark.line + 1}" if mark is not None else "somewhere"
        problem = getattr(exc, "problem", None) or "invalid YAML"
        raise cls(f"not valid YAML at {where}: {problem}", str(path)) from None
