"""The stackup file (``strainline bend``) as pydantic models: the file and one model per layer kind.

A layer's kind is given (``kind:``) or inferred (a ``copper:`` key makes a copper layer, a coverlay
``material:`` a coverlay, anything else a dielectric); the layer is then validated by that kind's
model. Catalog names and the rules that join fields (an inline dielectric gives its thickness,
modulus and Poisson ratio; weight or thickness, not both) are checked by
:mod:`~strainline.optimizer.inputs.stackup_file`. Every number has a sane range, so ``1e300`` or
a 400-digit integer is refused at its field.
"""
from __future__ import annotations

from typing import Any, ClassVar

from pydantic import ValidationError
from strainline.models.stackup import BEND_AREA_FEATURES
from strainline.optimizer.errors import StackupError, closest
from strainline.optimizer.inputs.modelkit import Base, Bounds, Kit, Style, first_error


def fmt(v: Any) -> str:
    return repr(v) if isinstance(v, str) else str(v)


class StackupStyle(Style):
    """The stackup file's wording: ``-25 is out of range; must be in (0, 10000]``."""

    top = "(top level)"

    def rng(self, b: Bounds) -> str:
        lo, hi, lo_open, hi_open = b
        if lo is not None and hi is not None:
            return f"must be in {'(' if lo_open else '['}{lo:g}, {hi:g}{')' if hi_open else ']'}"
        if lo is not None:
            return f"must be {'>' if lo_open else '>='} {lo:g}"
        if hi is not None:
            return f"must be {'<' if hi_open else '<='} {hi:g}"
        return "must be a finite number"

    def not_number(self, value: Any, integer: bool, b: Bounds) -> str:
        return f"{fmt(value)} is not a number; {self.rng(b)}"

    def out_of_range(self, value: Any, b: Bounds) -> str:
        return f"{fmt(value)} is out of range; {self.rng(b)}"

    def not_text(self, value: Any) -> str:
        return f"{fmt(value)} is not a name; give non-empty text"

    def not_mapping(self, value: Any, keys: Any) -> str:
        return (f"{fmt(value)} is not a layer; give a mapping such as {{material: polyimide-film, thickness_um: 25}}"
                if keys and "kind" in keys else f"expected a mapping with 'layers:', got {type(value).__name__}")

    def not_list(self, value: Any, what: str) -> str:
        return f"must be a list drawn from [{', '.join(BEND_AREA_FEATURES)}]"

    def unknown_key(self, path: str, key: Any, allowed: Any, model: Any = None) -> tuple[str, str]:
        what = getattr(model, "what", "this entry")
        hint = closest(str(key), allowed)
        msg = f"{key!r} is not {what}; allowed: [{', '.join(allowed)}]" + (f"; did you mean {hint!r}?" if hint else "")
        return (f"{path}.{key}" if path else str(key)), msg

    def missing(self, path: str) -> tuple[str, str]:
        return path, "missing"


K = Kit(StackupStyle())
Name = K.text(nonempty=True)
Text = K.text()
THICK_UM = K.num(0.0, 10000.0, lo_open=True)


class DielectricLayer(Base):
    what: ClassVar[str] = "a field of a dielectric layer"
    name: Name = None
    kind: Text = None
    material: Text = None
    thickness_um: THICK_UM = None
    modulus_gpa: K.num(0.0, 1000.0, lo_open=True) = None
    poisson: K.num(0.0, 0.5, hi_open=True) = None
    dk: K.num(1.0, 100.0) = None
    df: K.num(0.0, 1.0, hi_open=True) = None
    glass_reinforced: K.boolean() = None


class CoverlayLayer(Base):
    what: ClassVar[str] = "a field of a coverlay layer"
    name: Name = None
    kind: Text = None
    material: Text = None
    film_um: THICK_UM = None
    adhesive_um: THICK_UM = None


class CopperLayer(Base):
    what: ClassVar[str] = "a field of a copper layer"
    name: Name = None
    kind: Text = None
    copper: Text = None
    weight: Text = None
    thickness_um: K.num(0.0, 1000.0, lo_open=True) = None
    coverage: K.num(0.0, 1.0, lo_open=True) = None
    fill: Text = None
    modulus_gpa: K.num(0.0, 1000.0, lo_open=True) = None
    poisson: K.num(0.0, 0.5, hi_open=True) = None
    tensile_strength_mpa: K.num(0.0, 5000.0, lo_open=True) = None
    yield_strength_mpa: K.num(0.0, 5000.0, lo_open=True) = None
    fatigue_ductility: K.num(0.0, 5.0, lo_open=True) = None


class AirGapLayer(Base):
    what: ClassVar[str] = "a field of an air-gap layer"
    name: Name = None
    kind: Text = None
    thickness_um: K.num(0.0, 10000.0) = None


class StackupFile(Base):
    what: ClassVar[str] = "a top-level field"
    name: Text = None
    description: Text = None
    layers: Any = None   # a non-empty list, checked by the reader (each entry by its kind's model)
    bend_area_features: K.choice_list(BEND_AREA_FEATURES, allow_empty=True) = None


def validate(model: type[Base], data: Any, where: Any) -> Any:
    """``model`` validated from ``data``; the first problem as one StackupError at ``where(path)``."""
    try:
        return model.model_validate(data)
    except ValidationError as exc:
        raise first_error(exc, model, K.style, where, StackupError) from None
