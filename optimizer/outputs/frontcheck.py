"""Reading ``front.json`` for the report and the sheets: load, check, and the catalog they look up.

``load_front(path)`` reads and checks a front (InputError naming the file and field on bad input);
``check_front(front)`` checks an object already parsed; ``try_catalog()`` loads the shipped catalog or
returns None (both outputs still draw without it).
"""
from __future__ import annotations

import json
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from strainline.optimizer.errors import InputError
from strainline.optimizer.outputs.formatting import clean, is_num

_ID_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,79}$")


def check_front(front: Any, where: str = "front.json") -> dict:
    """Check the parts of a front the report and the sheets rely on; raise InputError naming the field.

    Parameters
    ----------
    front : object
        The parsed ``front.json``.
    where : str
        File name used in the messages.

    Returns
    -------
    dict
        ``front`` itself (non-finite floats replaced by None).
    """
    if not isinstance(front, Mapping):
        raise InputError(f"expected a JSON object at the top level, got {type(front).__name__}", where)
    cands = front.get("candidates")
    if not isinstance(cands, list):
        raise InputError("missing 'candidates' (a list of front candidates)", f"{where}: candidates")
    seen: set[str] = set()
    for i, c in enumerate(cands):
        field = f"{where}: candidates[{i}]"
        if not isinstance(c, Mapping):
            raise InputError("expected an object", field)
        cid = c.get("id")
        if not isinstance(cid, str) or not _ID_RE.match(cid):
            raise InputError(f"id {cid!r} must be 1-80 letters, digits, '.', '_' or '-'", f"{field}.id")
        if cid.lower() == "index":   # handoff/index.html is the sheets' index page
            raise InputError(f"id {cid!r} is reserved for the index page of handoff/", f"{field}.id")
        if cid in seen:
            raise InputError(f"duplicate id {cid!r}", f"{field}.id")
        seen.add(cid)
        obj = c.get("objectives")
        if not isinstance(obj, Mapping) or not obj:
            raise InputError("missing 'objectives' (a non-empty object)", f"{field}.objectives")
        for key, value in obj.items():
            if value is not None and not is_num(value):
                raise InputError(f"{key!r} is not a number: {value!r}", f"{field}.objectives.{key}")
        for key in ("peak_strain_pct", "total_thickness_um"):
            bend = c.get("bend") if isinstance(c.get("bend"), Mapping) else {}
            alt = "peak_copper_strain_pct" if key == "peak_strain_pct" else key
            if not is_num(obj.get(key)) and not is_num(bend.get(alt)):
                raise InputError(f"missing or non-numeric {key!r} (nor bend.{alt}): {obj.get(key)!r}",
                                 f"{field}.objectives.{key}")
        layers = c.get("layers")
        if not isinstance(layers, list) or not layers:
            raise InputError("missing 'layers' (a non-empty list, top to bottom)", f"{field}.layers")
        for j, lay in enumerate(layers):
            lf = f"{field}.layers[{j}]"
            if not isinstance(lay, Mapping):
                raise InputError("expected an object", lf)
            if not is_num(lay.get("thickness_um")) or lay["thickness_um"] < 0:
                raise InputError(f"thickness_um {lay.get('thickness_um')!r} must be a number >= 0", f"{lf}.thickness_um")
            if lay.get("kind") not in ("dielectric", "copper", "air-gap"):
                raise InputError(f"kind {lay.get('kind')!r} is not one of ['dielectric', 'copper', 'air-gap']",
                                 f"{lf}.kind")
        for part in ("line", "bend"):
            if part in c and not isinstance(c[part], Mapping):
                raise InputError("expected an object", f"{field}.{part}")
    return clean(front)


def load_front(path: str | Path) -> dict:
    """Read ``front.json`` (or ``DIR/front.json``) and check it.

    Raises
    ------
    InputError
        Missing file, invalid JSON or a front missing what the report needs; one line naming the file
        and the field.
    """
    path = Path(path)
    if path.is_dir():
        path = path / "front.json"
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError("file not found (run `strainline solve` first)", str(path)) from None
    except (IsADirectoryError, PermissionError, UnicodeDecodeError, NotADirectoryError) as exc:
        raise InputError(f"cannot read: {exc.__class__.__name__}", str(path)) from None
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"not valid JSON at line {exc.lineno} column {exc.colno}: {exc.msg}", str(path)) from None
    except RecursionError:
        too_deep = True
    else:
        too_deep = _depth(data) > MAX_DEPTH
    if too_deep:
        raise InputError(f"nesting deeper than {MAX_DEPTH} levels; not a strainline front", str(path))
    return check_front(data, str(path))


#: Deepest nesting of objects and lists accepted in a front (a front needs about 8 levels).
MAX_DEPTH = 64


def _depth(data: Any) -> int:
    """Nesting depth of parsed JSON, walked without recursion (stops past :data:`MAX_DEPTH`)."""
    deepest, stack = 0, [(data, 0)]
    while stack:
        node, d = stack.pop()
        if isinstance(node, (dict, list)):
            d += 1
            deepest = max(deepest, d)
            if deepest > MAX_DEPTH:
                break
            stack.extend((v, d) for v in (node.values() if isinstance(node, dict) else node))
    return deepest


def try_catalog(front: Mapping[str, Any] | None = None) -> Any | None:
    """The catalog a front was solved with (its recorded ``catalog.entries``), else the shipped one,
    or None when it cannot be loaded (families are then guessed from names). Recorded entries that
    do not validate raise CatalogError naming ``front.json: catalog.entries``."""
    recorded = front.get("catalog") if isinstance(front, Mapping) else None
    if isinstance(recorded, Mapping) and "entries" in recorded:
        from strainline.optimizer.inputs.catalog import catalog_from_dict

        return catalog_from_dict(recorded["entries"])
    try:
        from strainline.optimizer.inputs.catalog import load_catalog

        return load_catalog()
    except Exception:  # noqa: BLE001 - the report still draws without it (families guessed)
        return None


__all__ = ["check_front", "load_front", "try_catalog"]
