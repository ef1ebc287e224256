"""Stackup records: layers listed top to bottom, and the array views the batch models take.

A :class:`Stackup` is an ordered tuple of :class:`Layer` records (top to bottom). Copper layers with
coverage below 1 are homogenised with a *fill* material by the Voigt rule of mixtures; the fill is
resolved when the stackup is built (see :func:`resolve_fills`). ``air-gap`` layers mark unbonded
interfaces: each bonded run of layers between air gaps is a *leaf* that bends about its own neutral
axis (see :mod:`strainline.models.bending`).

SI units throughout (metres, pascals).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Literal, get_args

import numpy as np

from strainline.models.materials import CopperFoil

LayerKind = Literal["dielectric", "copper", "air-gap"]
LAYER_KINDS: tuple[str, ...] = get_args(LayerKind)

BendAreaFeature = Literal["plated-through-holes", "nickel-plating", "panel-plating", "button-plating"]
BEND_AREA_FEATURES: tuple[str, ...] = get_args(BendAreaFeature)

#: Dielectric families that flow into the gaps between copper features during lamination: bond and
#: coverlay adhesives, and a photoimageable cover (applied liquid or as a dry film that fills the
#: gaps). Films, cores, laminates and stiffeners do not flow.
FLOWING_FAMILIES: tuple[str, ...] = ("adhesive", "cover")


def _check(cond: bool, what: str) -> None:
    if not cond:
        raise ValueError(what)


def _finite(x: float) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


@dataclass(frozen=True)
class Layer:
    """One layer of a flex stack (SI units).

    Parameters
    ----------
    name : str
        Display name (unique names make reports easier to read).
    kind : {"dielectric", "copper", "air-gap"}
        ``air-gap`` marks an unbonded interface; it carries no stiffness (modulus 0).
    thickness_m : float
        Layer thickness, m, >= 0 (0 allowed for padding and for a zero-height air gap).
    modulus_pa : float
        In-plane Young's modulus along the bend direction, Pa. For a copper layer this is the copper
        modulus (before coverage); 0 for an air gap.
    poisson : float
        Poisson's ratio, in [0, 0.5).
    dk, df : float or None
        Relative permittivity and loss tangent (None where it does not apply).
    material : str
        Catalog key, or ``"inline"``.
    coverage : float
        Copper area fraction of a copper layer within the bend zone, in (0, 1]; 1 for others.
    fill_modulus_pa, fill_poisson : float or None
        Modulus (Pa) and Poisson's ratio of the material filling the gaps between copper features.
        ``None`` on an unresolved layer; :class:`Stackup` resolves it (:func:`resolve_fills`).
    copper : CopperFoil or None
        The foil record of a copper layer (strengths, fatigue ductility, roughness).
    glass_reinforced : bool
        True for a woven-glass reinforced dielectric.
    family : str or None
        Dielectric family from the catalog (``"adhesive"``, ``"film"``, ...), used to pick the fill.
    fill_material : str or None
        Name of the fill (catalog key, ``"air"`` or ``"inline"``); ``None`` lets :class:`Stackup`
        pick it (:func:`resolve_fills`).
    elongation : float or None
        Tensile elongation at break of a dielectric, fraction (None: no limit known).
    min_bend_radius_m : float or None
        Smallest bend radius the material tolerates, m (a photoimageable cover), where a source gives one.
    """

    name: str
    kind: LayerKind
    thickness_m: float
    modulus_pa: float
    poisson: float
    dk: float | None
    df: float | None
    material: str
    coverage: float = 1.0
    fill_modulus_pa: float | None = None
    fill_poisson: float | None = None
    copper: CopperFoil | None = None
    glass_reinforced: bool = False
    family: str | None = None
    fill_material: str | None = None
    elongation: float | None = None
    min_bend_radius_m: float | None = None

    def __post_init__(self) -> None:
        _check(self.kind in LAYER_KINDS, f"kind {self.kind!r} is not one of {list(LAYER_KINDS)}")
        _check(_finite(self.thickness_m) and self.thickness_m >= 0,
               f"thickness {self.thickness_m!r} m must be a finite number >= 0")
        _check(_finite(self.poisson) and 0.0 <= self.poisson < 0.5,
               f"poisson {self.poisson!r} must be in [0, 0.5)")
        _check(_finite(self.coverage) and 0.0 < self.coverage <= 1.0,
               f"coverage {self.coverage!r} must be in (0, 1]")
        if self.kind == "air-gap":
            _check(self.modulus_pa == 0, "an air-gap layer carries modulus 0")
        else:
            _check(_finite(self.modulus_pa) and self.modulus_pa > 0,
                   f"modulus {self.modulus_pa!r} Pa must be a finite number > 0")
        if self.kind != "copper":
            _check(self.coverage == 1.0, "coverage applies to copper layers only")
            _check(self.copper is None, "only copper layers carry a foil record")
        else:
            _check(self.copper is not None, "a copper layer needs its foil record (copper=...)")
        if self.fill_modulus_pa is not None:
            _check(_finite(self.fill_modulus_pa) and self.fill_modulus_pa >= 0,
                   f"fill modulus {self.fill_modulus_pa!r} Pa must be a finite number >= 0")
        if self.fill_poisson is not None:
            _check(_finite(self.fill_poisson) and 0.0 <= self.fill_poisson < 0.5,
                   f"fill poisson {self.fill_poisson!r} must be in [0, 0.5)")
        for name in ("dk", "df"):
            v = getattr(self, name)
            _check(v is None or _finite(v), f"{name} {v!r} must be a finite number or None")

    @property
    def needs_fill(self) -> bool:
        """True for a copper layer with coverage < 1 (its gaps hold a fill material)."""
        return self.kind == "copper" and self.coverage < 1.0

    def effective_modulus(self, plane_strain: bool = False) -> float:
        """Voigt (iso-strain) homogenised modulus, Pa: f E_Cu + (1 - f) E_fill.

        With ``plane_strain`` each constituent uses E / (1 - nu^2) (wide strip, no anticlastic
        curl; Timoshenko & Woinowsky-Krieger, *Theory of Plates and Shells*, 1959).
        """
        e = self.modulus_pa / (1.0 - self.poisson**2) if plane_strain else self.modulus_pa
        if not self.needs_fill:
            return float(e)
        if self.fill_modulus_pa is None:
            raise ValueError(f"layer {self.name!r}: fill not resolved")
        nu_f = self.fill_poisson if self.fill_poisson is not None else 0.0
        ef = self.fill_modulus_pa / (1.0 - nu_f**2) if plane_strain else self.fill_modulus_pa
        return float(self.coverage * e + (1.0 - self.coverage) * ef)


def resolve_fills(layers: tuple[Layer, ...]) -> tuple[Layer, ...]:
    """Give every partially covered copper layer its fill material.

    Rule (follows lamination; documented in README.md, bend mechanics): a layer's explicit fill wins.
    Otherwise the gaps hold what flows into them during lamination: the adjacent bond or coverlay
    adhesive, or a photoimageable cover (:data:`FLOWING_FAMILIES`; the layer above first, then the
    one below). A film or core does not flow, nor does an air gap, so with no flowing neighbour the
    fill is air (modulus 0). A copper at the edge of the stack or next to an air gap on one side only
    is filled from that side alone (its cover, else air): the adhesive on its core side was cured
    before the copper was etched. Zero-thickness layers are skipped when looking for the neighbour.
    """
    out = list(layers)
    for i, lay in enumerate(layers):
        if not lay.needs_fill or lay.fill_modulus_pa is not None:
            continue
        nbrs: list[Layer | None] = []
        for step in (-1, 1):
            j = i + step
            while 0 <= j < len(layers) and layers[j].thickness_m == 0 and layers[j].kind != "air-gap":
                j += step
            nbrs.append(layers[j] if 0 <= j < len(layers) else None)
        # a copper at the edge of the stack or next to an air gap is outer on that side: what is laid
        # over it there (its cover) decides alone, because the other side was bonded before etching
        outer = [n is None or n.kind == "air-gap" for n in nbrs]
        if outer[0] and not outer[1]:
            nbrs = [nbrs[0]]
        elif outer[1] and not outer[0]:
            nbrs = [nbrs[1]]
        flowing = [n for n in nbrs if n is not None and n.kind == "dielectric"
                   and n.family in FLOWING_FAMILIES]
        pick = (flowing or [None])[0]
        if pick is None:
            out[i] = replace(lay, fill_modulus_pa=0.0, fill_poisson=0.0, fill_material="air")
        else:
            out[i] = replace(lay, fill_modulus_pa=pick.modulus_pa, fill_poisson=pick.poisson,
                             fill_material=pick.material)
    return tuple(out)


@dataclass(frozen=True)
class StackArrays:
    """Array view of stackups for the batch models: every field is (n, L), layers top to bottom.

    Fields
    ------
    thickness_m : layer thickness, m.
    modulus_pa : effective (Voigt, after coverage) modulus, Pa; plane-strain if requested; 0 for air gaps.
    yielding_modulus_pa : the part of ``modulus_pa`` carried by copper that can yield (f E_Cu), Pa.
    yield_strain : copper elastic-limit strain sigma_y / E (inf for non-copper layers).
    is_copper, is_air_gap : bool masks.
    leaf : int, the bonded leaf each layer belongs to (air gaps get their own id), 0-based, top to bottom.
    copper_modulus_pa, tensile_strength_pa, fatigue_ductility : copper foil data (nan elsewhere).
    """

    thickness_m: np.ndarray
    modulus_pa: np.ndarray
    yielding_modulus_pa: np.ndarray
    yield_strain: np.ndarray
    is_copper: np.ndarray
    is_air_gap: np.ndarray
    leaf: np.ndarray
    copper_modulus_pa: np.ndarray
    tensile_strength_pa: np.ndarray
    fatigue_ductility: np.ndarray

    @property
    def bonded(self) -> bool:
        """True when the stack has no air gap (one bonded leaf)."""
        return not bool(self.is_air_gap.any())


@dataclass(frozen=True)
class Stackup:
    """A flex stack, layers top to bottom.

    Parameters
    ----------
    layers : tuple of Layer
        Top to bottom. Fills of partially covered copper layers are resolved on construction.
    name : str
    features : frozenset of str
        Declared bend-area features, each one of :data:`BEND_AREA_FEATURES`.
    """

    layers: tuple[Layer, ...]
    name: str = ""
    features: frozenset[str] = field(default_factory=frozenset)

    def __post_init__(self) -> None:
        layers = tuple(self.layers)
        _check(len(layers) > 0, "a stackup needs at least one layer")
        _check(all(isinstance(x, Layer) for x in layers), "layers must be Layer records")
        _check(layers[0].kind != "air-gap" and layers[-1].kind != "air-gap",
               "an air gap must sit between two bonded leaves, not on the outside")
        for a, b in zip(layers, layers[1:]):
            _check(not (a.kind == "air-gap" and b.kind == "air-gap"), "two air gaps in a row")
        _check(sum(x.thickness_m for x in layers if x.kind != "air-gap") > 0,
               "the stack has no thickness")
        bad = sorted(set(self.features) - set(BEND_AREA_FEATURES))
        _check(not bad, f"unknown bend-area features {bad}; allowed {list(BEND_AREA_FEATURES)}")
        object.__setattr__(self, "layers", resolve_fills(layers))
        object.__setattr__(self, "features", frozenset(self.features))

    @property
    def total_thickness_m(self) -> float:
        """Total thickness including air gaps, m."""
        return float(sum(x.thickness_m for x in self.layers))

    @property
    def copper_layers(self) -> tuple[int, ...]:
        """Indices (top to bottom) of the copper layers."""
        return tuple(i for i, x in enumerate(self.layers) if x.kind == "copper")

    @property
    def bonded(self) -> bool:
        return all(x.kind != "air-gap" for x in self.layers)

    def leaf_ids(self) -> tuple[int, ...]:
        """Leaf id of every layer, top to bottom; an air gap gets its own id between its leaves."""
        ids, k = [], 0
        for x in self.layers:
            if x.kind == "air-gap":
                k += 1
                ids.append(k)
                k += 1
            else:
                ids.append(k)
        return tuple(ids)

    def mirrored(self) -> Stackup:
        """The same stack turned upside down (layers bottom to top)."""
        return replace(self, layers=tuple(reversed(self.layers)))

    def arrays(self, plane_strain: bool = False) -> StackArrays:
        """The (1, L) arrays the batch models take.

        Parameters
        ----------
        plane_strain : bool
            Use E / (1 - nu^2) for every constituent (wide strip; see
            :meth:`Layer.effective_modulus`).
        """
        lay = self.layers

        def row(values, dtype=float):
            return np.asarray([values], dtype=dtype)

        def e_cu(x: Layer) -> float:
            return x.modulus_pa / (1.0 - x.poisson**2) if plane_strain else x.modulus_pa

        is_cu = [x.kind == "copper" for x in lay]
        return StackArrays(
            thickness_m=row([x.thickness_m for x in lay]),
            modulus_pa=row([x.effective_modulus(plane_strain) if x.kind != "air-gap" else 0.0 for x in lay]),
            yielding_modulus_pa=row([x.coverage * e_cu(x) if c else 0.0 for x, c in zip(lay, is_cu)]),
            yield_strain=row([x.copper.yield_strength_pa / x.modulus_pa if c else np.inf
                              for x, c in zip(lay, is_cu)]),
            is_copper=row(is_cu, bool),
            is_air_gap=row([x.kind == "air-gap" for x in lay], bool),
            leaf=row(self.leaf_ids(), np.int64),
            copper_modulus_pa=row([x.modulus_pa if c else np.nan for x, c in zip(lay, is_cu)]),
            tensile_strength_pa=row([x.copper.tensile_strength_pa if c else np.nan for x, c in zip(lay, is_cu)]),
            fatigue_ductility=row([x.copper.fatigue_ductility if c else np.nan for x, c in zip(lay, is_cu)]),
        )
