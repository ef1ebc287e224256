"""Pydantic building blocks shared by the input models (study, stackup file, catalog).

The input files are pydantic v2 models: their structure (sections, required keys, unknown keys,
defaults) is the models' and the JSON Schema is generated from them. Every leaf value is an
annotated type from :class:`Kit`, whose validator checks type, finiteness and range itself and
says what is wrong in the file's own words (a :class:`Style`). :func:`first_error` turns pydantic's
``ValidationError`` into ONE of our errors, naming the file, the field path, the bad value and
what is allowed; pydantic's own multi-line text never reaches the user.

This module imports pydantic; only the modules that load inputs import it, lazily.
"""
from __future__ import annotations

import math
import types
import typing
from collections.abc import Callable, Sequence
from typing import Annotated, Any, Union

from pydantic import BaseModel, ConfigDict, ValidationError, model_validator
from pydantic_core import PydanticCustomError, core_schema
from strainline.optimizer.errors import StrainlineError, closest, not_one_of

Bounds = tuple[float | None, float | None, bool, bool]   # lo, hi, lo_open, hi_open
_CUSTOM = "strainline"


def show(value: Any) -> str:
    """A value as an error message shows it (at most 60 characters)."""
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


class Style:
    """How one kind of file words its errors. Subclasses override what differs."""

    #: The field path shown when the whole document is wrong.
    top: str = ""

    def not_number(self, value: Any, integer: bool, b: Bounds) -> str:
        return f"{show(value)} is not {'an integer' if integer else 'a number'}{self.rng(b)}"

    def not_finite(self, value: Any, b: Bounds) -> str:
        return self.not_number(value, False, b)

    def out_of_range(self, value: Any, b: Bounds) -> str:
        return f"{show(value)} is out of range{self.rng(b)}"

    def rng(self, b: Bounds) -> str:
        lo, hi, lo_open, hi_open = b
        if lo is None and hi is None:
            return ""
        lo_s = "-inf" if lo is None else f"{lo:g}"
        hi_s = "inf" if hi is None else f"{hi:g}"
        return f"; allowed range {'(' if lo_open else '['}{lo_s}, {hi_s}{')' if hi_open else ']'}"

    def not_bool(self, value: Any) -> str:
        return f"{show(value)} is not one of [true, false]"

    def not_text(self, value: Any) -> str:
        return f"{show(value)} must be text"

    def not_mapping(self, value: Any, keys: Sequence[str]) -> str:
        return f"{show(value)} must be a mapping with keys [{', '.join(keys)}]"

    def not_list(self, value: Any, what: str) -> str:
        return f"{show(value)} must be a non-empty list of {what}"

    def twice(self, value: Any) -> str:
        return f"{show(value)} lists a value twice"

    def unknown_key(self, path: str, key: Any, allowed: Sequence[str], model: Any = None) -> tuple[str, str]:
        msg = f"unknown key {key!r}; allowed keys are [{', '.join(repr(x) for x in allowed)}]"
        hint = closest(key, allowed)
        return join(path, str(key)), msg + (f"; did you mean {hint!r}?" if hint else "")

    def missing(self, path: str) -> tuple[str, str]:
        return path, "is required"


def join(path: str, key: str) -> str:
    """``a.b`` + ``c`` -> ``a.b.c``; list indices are already ``[i]``."""
    if not key:
        return path
    if not path:
        return key
    return path + key if key.startswith("[") else f"{path}.{key}"


def loc_path(loc: Sequence[Any]) -> str:
    """A pydantic location as our field path: ``('stack', 'dielectric', 1)`` -> ``stack.dielectric[1]``."""
    path = ""
    for part in loc:
        if part == "[key]":
            continue
        path = join(path, f"[{part}]" if isinstance(part, int) else str(part))
    return path


def fail(message: str, sub: str = "") -> PydanticCustomError:
    """Our own error from inside a validator; ``sub`` extends the field path (``[1]``)."""
    return PydanticCustomError(_CUSTOM, "{message}", {"message": message, "sub": sub})


class Base(BaseModel):
    """Frozen, strict model: unknown keys are errors; an empty YAML value (null) means 'not given'."""

    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, populate_by_name=False)

    @model_validator(mode="before")
    @classmethod
    def _drop_nulls(cls, data: Any) -> Any:
        if isinstance(data, dict):
            return {k: v for k, v in data.items() if v is not None}
        return data


class Leaf:
    """Annotation that makes a value validated by ``check`` and described by ``schema``."""

    def __init__(self, check: Callable[..., Any], schema: dict | Callable[[], dict], info: bool = False) -> None:
        self.check, self.schema, self.info = check, schema, info

    def __get_pydantic_core_schema__(self, source: Any, handler: Any) -> core_schema.CoreSchema:
        if self.info:
            return core_schema.with_info_plain_validator_function(self.check)
        return core_schema.no_info_plain_validator_function(self.check)

    def __get_pydantic_json_schema__(self, cs: Any, handler: Any) -> dict:
        return dict(self.schema() if callable(self.schema) else self.schema)


def is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


class Kit:
    """Annotated leaf types worded in one :class:`Style`."""

    def __init__(self, style: Style) -> None:
        self.style = style

    def check_number(self, value: Any, b: Bounds, integer: bool = False, sub: str = "") -> float | int:
        st = self.style
        if not is_number(value):
            raise fail(st.not_number(value, integer, b), sub)
        if integer and isinstance(value, float):
            if not (math.isfinite(value) and value.is_integer()):
                raise fail(st.not_number(value, integer, b), sub)
            value = int(value)
        try:
            v = float(value)
        except OverflowError:   # an integer of hundreds of digits
            raise fail(st.out_of_range(value, b), sub) from None
        if not math.isfinite(v):
            raise fail(st.not_finite(value, b), sub)
        lo, hi, lo_open, hi_open = b
        if (lo is not None and (v < lo or (lo_open and v <= lo))) or (hi is not None and (v > hi or (hi_open and v >= hi))):
            raise fail(st.out_of_range(value, b), sub)
        return int(value) if integer else v

    @staticmethod
    def num_schema(b: Bounds, integer: bool = False, description: str | None = None) -> dict:
        lo, hi, lo_open, hi_open = b
        s: dict[str, Any] = {"type": "integer" if integer else "number"}
        if lo is not None:
            s["exclusiveMinimum" if lo_open else "minimum"] = lo
        if hi is not None:
            s["exclusiveMaximum" if hi_open else "maximum"] = hi
        if description:
            s["description"] = description
        return s

    def num(self, lo: float | None = None, hi: float | None = None, *, lo_open: bool = False,
            hi_open: bool = False, integer: bool = False, description: str | None = None) -> Any:
        """A finite number (or integer) in a range."""
        b = (lo, hi, lo_open, hi_open)
        tp = int if integer else float
        return Annotated[tp, Leaf(lambda v: self.check_number(v, b, integer), self.num_schema(b, integer, description))]

    def num_list(self, lo: float | None, hi: float | None, *, lo_open: bool = True, hi_open: bool = False,
                 single: bool = True, unique: bool = True, description: str | None = None) -> Any:
        """A non-empty list of numbers (``single``: a lone number is a list of one)."""
        b = (lo, hi, lo_open, hi_open)
        st = self.style

        def check(value: Any) -> tuple[float, ...]:
            if single and is_number(value):
                value = [value]
            if not isinstance(value, list) or not value:
                raise fail(st.not_list(value, f"numbers{st.rng(b)}"))
            vals = tuple(self.check_number(x, b, sub=f"[{i}]") for i, x in enumerate(value))
            if unique and len(set(vals)) != len(vals):
                raise fail(st.twice(value))
            return vals

        item = self.num_schema(b)
        arr = {"type": "array", "items": item, "minItems": 1}
        schema = {"oneOf": [item, arr]} if single else arr
        if description:
            schema["description"] = description
        return Annotated[tuple[float, ...], Leaf(check, schema)]

    def choice(self, allowed: Sequence[str] | Callable[[Any], Sequence[str]], *, description: str | None = None,
               schema_allowed: Callable[[], Sequence[str]] | None = None,
               normalize: Callable[[Any, Any], Any] | None = None) -> Any:
        """One of ``allowed`` (or of ``allowed(context)`` for catalog names)."""
        def pick(value: Any, info: Any = None) -> str:
            names = list(allowed(info.context if info is not None else None) if callable(allowed) else allowed)
            if normalize is not None:
                value = normalize(value, info.context if info is not None else None)
            if not isinstance(value, str) or value not in names:
                raise fail(not_one_of(None, value, names).message)
            return value

        def schema() -> dict:
            names = schema_allowed() if schema_allowed else allowed
            s: dict[str, Any] = {"enum": list(names)}
            if description:
                s["description"] = description
            return s

        return Annotated[str, Leaf(pick, schema, info=callable(allowed))]

    def choice_list(self, allowed: Sequence[str] | Callable[[Any], Sequence[str]], *,
                    description: str | None = None, schema_allowed: Callable[[], Sequence[str]] | None = None,
                    normalize: Callable[[Any, Any], Any] | None = None, allow_empty: bool = False) -> Any:
        """A non-empty (or ``allow_empty``) list of distinct choices; a lone value is a list of one."""
        st = self.style

        def pick(value: Any, info: Any = None) -> tuple[str, ...]:
            ctx = info.context if info is not None else None
            names = list(allowed(ctx) if callable(allowed) else allowed)
            if isinstance(value, str):
                value = [value]
            if not isinstance(value, list) or (not value and not allow_empty):
                raise fail(st.not_list(value, f"[{', '.join(repr(a) for a in names)}]"))
            out = []
            for i, v in enumerate(value):
                if normalize is not None:
                    v = normalize(v, ctx)
                if not isinstance(v, str) or v not in names:
                    raise fail(not_one_of(None, v, names).message, f"[{i}]")
                out.append(v)
            if len(set(out)) != len(out):
                raise fail(st.twice(value))
            return tuple(out)

        def schema() -> dict:
            names = schema_allowed() if schema_allowed else allowed
            s: dict[str, Any] = {"type": "array", "items": {"enum": list(names)}, "minItems": 0 if allow_empty else 1,
                                 "uniqueItems": True}
            if description:
                s["description"] = description
            return s

        return Annotated[tuple[str, ...], Leaf(pick, schema, info=callable(allowed))]

    def boolean(self, description: str | None = None) -> Any:
        def check(value: Any) -> bool:
            if not isinstance(value, bool):
                raise fail(self.style.not_bool(value))
            return value
        s: dict[str, Any] = {"type": "boolean"}
        if description:
            s["description"] = description
        return Annotated[bool, Leaf(check, s)]

    def text(self, *, nonempty: bool = False, squash: bool = False, pattern: str | None = None,
             rule: str = "", description: str | None = None) -> Any:
        """Text; ``nonempty`` refuses blank text, ``squash`` folds whitespace, ``pattern`` a regex rule."""
        import re

        rx = re.compile(pattern) if pattern else None

        def check(value: Any) -> str:
            if not isinstance(value, str) or (nonempty and not value.strip()):
                raise fail(self.style.not_text(value))
            if rx is not None and not rx.fullmatch(value):
                raise fail(f"{show(value)} must be {rule}")
            return " ".join(value.split()) if squash else value
        s: dict[str, Any] = {"type": "string"}
        if pattern:
            s["pattern"] = f"^{pattern}$"
        if description:
            s["description"] = description
        return Annotated[str, Leaf(check, s)]


def _unwrap(tp: Any) -> Any:
    """The model (or container) type inside Annotated / Optional / Union."""
    while True:
        origin = typing.get_origin(tp)
        if origin is Annotated:
            tp = typing.get_args(tp)[0]
        elif origin in (Union, types.UnionType):
            args = [a for a in typing.get_args(tp) if a is not type(None)]
            models = [a for a in args if isinstance(a, type) and issubclass(a, BaseModel)]
            tp = models[0] if models else args[0]
        else:
            return tp


def _descend(tp: Any, part: Any) -> Any:
    tp = _unwrap(tp)
    if isinstance(tp, type) and issubclass(tp, BaseModel):
        f = tp.model_fields.get(part) if isinstance(part, str) else None
        return f.annotation if f is not None else None
    args = typing.get_args(tp)
    origin = typing.get_origin(tp)
    if origin is dict and args:
        return args[1]
    if origin in (list, tuple) and args:
        return args[0]
    return None


def model_at(root: type[BaseModel], loc: Sequence[Any]) -> Any:
    """The model class found at a location, or None."""
    tp: Any = root
    for part in loc:
        if part == "[key]":
            continue
        tp = _descend(tp, part)
        if tp is None:
            return None
    tp = _unwrap(tp)
    return tp if isinstance(tp, type) and issubclass(tp, BaseModel) else None


def first_error(exc: ValidationError, root: type[BaseModel], style: Style,
                where: Callable[[str], str], cls: type[StrainlineError]) -> StrainlineError:
    """Pydantic's ValidationError as ONE of our errors (an unknown key first, else the first error)."""
    errors = exc.errors(include_url=False)
    errors.sort(key=lambda e: e["type"] != "extra_forbidden")
    e = errors[0]
    loc = tuple(e["loc"])
    kind = e["type"]
    if kind == _CUSTOM:
        ctx = e.get("ctx") or {}
        return cls(ctx.get("message", e["msg"]), where(join(loc_path(loc), ctx.get("sub", ""))))
    if kind == "extra_forbidden":
        parent = model_at(root, loc[:-1])
        allowed = list(parent.model_fields) if parent else []
        path, msg = style.unknown_key(loc_path(loc[:-1]), loc[-1], allowed, parent)
        return cls(msg, where(path))
    if kind == "missing":
        path, msg = style.missing(loc_path(loc))
        return cls(msg, where(path))
    if kind in ("model_type", "model_attributes_type", "dict_type"):
        model = model_at(root, loc)
        keys = list(model.model_fields) if model else []
        return cls(style.not_mapping(e.get("input"), keys), where(loc_path(loc) or style.top))
    if kind in ("list_type", "tuple_type", "too_short"):
        return cls(style.not_list(e.get("input"), "entries"), where(loc_path(loc)))
    # anything else pydantic found: still one line, in our words as far as we can
    return cls(f"{show(e.get('input'))} is not valid here ({kind.replace('_', ' ')})", where(loc_path(loc)))
