"""Safe, bounded YAML reading for every input file (study, stackup, catalog).

Every input file goes through :func:`read_yaml`, which

* refuses a file larger than its stated limit before reading it (:data:`MAX_INPUT_BYTES` for
  studies and stackups, :data:`MAX_CATALOG_BYTES` for each catalog file);
* refuses nesting deeper than :data:`MAX_DEPTH` (checked on the parser's event stream, which does
  not recurse, so a 20,000-deep file fails in milliseconds);
* refuses anchors and aliases outright in studies and stackups (``aliases=False``); where they are
  allowed (catalogs) it caps the expanded size at :data:`MAX_EXPANDED_NODES`, counted on the node
  graph in linear time, so an alias bomb fails before anything expands it;
* refuses a key given twice in one mapping, naming the key and its line (YAML itself keeps the
  last one silently); each node is checked once, so the walk is linear even with aliases;
* reads numbers as engineers write them: ``2e4``, ``1e-3`` and ``1.5E+3`` are floats, as in
  YAML 1.2 (YAML 1.1, PyYAML's default, reads them as text unless they hold a dot and a signed
  exponent).

Every problem becomes one line of the caller's error class naming the file and the line.
"""
from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any

import yaml
from strainline.optimizer.errors import StrainlineError

#: Largest study or stackup file accepted, bytes (1 MB; a real study is about 2 kB).
MAX_INPUT_BYTES: int = 1_000_000
#: Largest catalog file accepted, bytes (4 MB; the shipped materials.yaml is about 15 kB).
MAX_CATALOG_BYTES: int = 4_000_000
#: Deepest nesting of mappings and lists accepted (a study needs 4 levels).
MAX_DEPTH: int = 64
#: Largest number of nodes an aliased document may expand to (catalogs only).
MAX_EXPANDED_NODES: int = 200_000
#: Most digits an integer may have (Python refuses to convert more than 4,300; no field needs 20).
MAX_INT_DIGITS: int = 1_000

_BASE = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
# YAML 1.2 core-schema floats without a dot or with an unsigned exponent ("2e4", "1e-3", "1.5e3");
# PyYAML's YAML 1.1 resolver leaves them as text.
_FLOAT_12 = re.compile(r"^[-+]?(?:[0-9][0-9_]*(?:\.[0-9_]*)?|\.[0-9][0-9_]*)[eE][-+]?[0-9]+$")


class _InputError(Exception):
    """Raised inside the loader; read_yaml turns it into the caller's error class."""

    def __init__(self, message: str) -> None:
        super().__init__(message)
        self.message = message


class StrictLoader(_BASE):  # type: ignore[misc, valid-type]
    """Safe loader that refuses duplicate keys and reads YAML 1.2 exponent floats."""

    def construct_mapping(self, node: yaml.Node, deep: bool = False) -> dict[Any, Any]:
        if isinstance(node, yaml.MappingNode):
            seen: set[str] = set()
            for key_node, _ in node.value:
                if isinstance(key_node, yaml.ScalarNode) and key_node.tag != "tag:yaml.org,2002:merge":
                    if key_node.value in seen:
                        raise _InputError(
                            f"key {key_node.value!r} appears twice (line {key_node.start_mark.line + 1}); "
                            "give each key once")
                    seen.add(key_node.value)
        return super().construct_mapping(node, deep=deep)

    def construct_yaml_int(self, node: yaml.Node) -> int:
        digits = sum(ch.isalnum() for ch in str(node.value))   # hex and octal digits too
        if digits > MAX_INT_DIGITS:
            raise _InputError(f"an integer of {digits:,} digits at line {node.start_mark.line + 1}; "
                              f"the limit is {MAX_INT_DIGITS:,} digits")
        return super().construct_yaml_int(node)


StrictLoader.add_constructor("tag:yaml.org,2002:int", StrictLoader.construct_yaml_int)
StrictLoader.add_implicit_resolver("tag:yaml.org,2002:float", _FLOAT_12, list("-+0123456789."))


def _check_events(text: str, aliases: bool) -> None:
    """Depth and (optionally) anchors/aliases, from the event stream (no recursion, no expansion)."""
    depth = 0
    for event in yaml.parse(text, Loader=StrictLoader):
        if isinstance(event, (yaml.MappingStartEvent, yaml.SequenceStartEvent)):
            depth += 1
            if depth > MAX_DEPTH:
                raise _InputError(f"nesting deeper than {MAX_DEPTH} levels at line {event.start_mark.line + 1}")
        elif isinstance(event, (yaml.MappingEndEvent, yaml.SequenceEndEvent)):
            depth -= 1
        if not aliases:
            if isinstance(event, yaml.AliasEvent):
                raise _InputError(
                    f"YAML alias '*{event.anchor}' at line {event.start_mark.line + 1} is not allowed in this "
                    "file; write the value out")
            anchor = getattr(event, "anchor", None)
            if anchor is not None:
                raise _InputError(
                    f"YAML anchor '&{anchor}' at line {event.start_mark.line + 1} is not allowed in this file; "
                    "write the value out")


def _expanded_size(root: yaml.Node) -> int:
    """Nodes the document expands to, counting each alias in full (memoized: linear in the graph)."""
    size: dict[int, int] = {}
    stack: list[tuple[yaml.Node, bool]] = [(root, False)]
    while stack:
        node, done = stack.pop()
        if id(node) in size:
            continue
        kids: list[yaml.Node] = []
        if isinstance(node, yaml.MappingNode):
            kids = [n for pair in node.value for n in pair]
        elif isinstance(node, yaml.SequenceNode):
            kids = list(node.value)
        if done:
            size[id(node)] = min(1 + sum(size[id(k)] for k in kids), MAX_EXPANDED_NODES + 1)
        else:
            stack.append((node, True))
            stack.extend((k, False) for k in kids if id(k) not in size)
    return size[id(root)]


def parse_yaml(text: str, *, aliases: bool = False) -> Any:
    """Parse YAML text with the checks of :func:`read_yaml`; raises ``_InputError`` or ``yaml.YAMLError``."""
    _check_events(text, aliases)
    loader = StrictLoader(text)
    try:
        node = loader.get_single_node()
        if node is None:
            return None
        if aliases and _expanded_size(node) > MAX_EXPANDED_NODES:
            raise _InputError(f"YAML aliases expand to more than {MAX_EXPANDED_NODES:,} values")
        return loader.construct_document(node)
    finally:
        loader.dispose()


def read_yaml(
    path: str | os.PathLike[str],
    cls: type[StrainlineError],
    *,
    aliases: bool = False,
    max_bytes: int = MAX_INPUT_BYTES,
) -> Any:
    """Read a YAML file; every problem becomes one ``cls`` line naming the file.

    Parameters
    ----------
    path : path-like
        The file.
    cls : type of StrainlineError
        The error class to raise (StudyError, StackupError, CatalogError).
    aliases : bool
        Accept YAML anchors and aliases (expansion capped); refused when False.
    max_bytes : int
        Largest file accepted, bytes; checked before reading.
    """
    path = Path(path)
    try:
        size = path.stat().st_size
        if size > max_bytes:
            raise cls(f"the file is {size:,} bytes; the limit is {max_bytes:,} bytes ({max_bytes / 1e6:g} MB)",
                      str(path))
        with path.open("rb") as fh:
            raw = fh.read(max_bytes + 1)
        if len(raw) > max_bytes:  # grew, or a device that reports no size
            raise cls(f"the file is larger than the limit of {max_bytes:,} bytes ({max_bytes / 1e6:g} MB)",
                      str(path))
        text = raw.decode("utf-8")
    except FileNotFoundError:
        raise cls("file not found", str(path)) from None
    except (IsADirectoryError, PermissionError, UnicodeDecodeError, NotADirectoryError, OSError) as exc:
        raise cls(f"cannot read: {exc.__class__.__name__}", str(path)) from None
    try:
        return parse_yaml(text, aliases=aliases)
    except _InputError as exc:
        raise cls(exc.message, str(path)) from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"line {mark.line + 1}" if mark is not None else "somewhere"
        problem = getattr(exc, "problem", None) or "invalid YAML"
        if "nesting depth" in problem:   # libyaml's own guard (1,000 flow levels) fired first
            raise cls(f"nesting deeper than {MAX_DEPTH} levels at {where}", str(path)) from None
        raise cls(f"not valid YAML at {where}: {problem}", str(path)) from None
    except RecursionError:
        raise cls(f"nesting deeper than {MAX_DEPTH} levels", str(path)) from None
