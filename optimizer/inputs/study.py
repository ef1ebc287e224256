"""Load and validate a study file (YAML).

A study names the line to hold, the bend, the stack family to search, limits, objectives and the
search settings. Every problem with a study becomes one :class:`StudyError` whose text names the
file, the field path, the bad value and the allowed values (with the closest match).

The format is documented in ``README.md, "Study files"``; ``catalogs/study.schema.json`` is the matching JSON
Schema for editors. Values stay in edge units here (um, mm, GHz, ohm, percent); the design space
converts to SI.
"""
from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal, get_args

from strainline.optimizer.errors import StudyError, closest, not_one_of
from strainline.optimizer.inputs.yamlio import read_yaml

LineKind = Literal["microstrip", "stripline", "coupled-microstrip", "coupled-stripline", "coplanar"]
LINE_KINDS: tuple[str, ...] = get_args(LineKind)
PAIR_KINDS: tuple[str, ...] = ("coupled-microstrip", "coupled-stripline")
GAP_KINDS: tuple[str, ...] = PAIR_KINDS + ("coplanar",)
Inside = Literal["bottom", "top"]
Use = Literal["install", "dynamic"]
Motion = Literal["flat-to-bent", "reversed"]
Region = Literal["bonded", "unbonded"]
Order = Literal["free", "fixed"]
Method = Literal["auto", "exhaustive", "evolutionary"]
Objective = Literal["peak_strain", "signal_strain", "thickness", "loss", "life"]
OBJECTIVES: tuple[str, ...] = get_args(Objective)
#: Objective name -> output key (edge units) in front.json.
OBJECTIVE_KEYS: dict[str, str] = {
    "peak_strain": "peak_strain_pct",
    "signal_strain": "signal_strain_pct",
    "thickness": "total_thickness_um",
    "loss": "loss_db_per_m",
    "life": "cycles_to_failure",
}
#: Resolution of each objective on the front, in its front.json unit (life: log10 cycles).
#: Designs whose objectives agree to this grid are equal for the search, so the front is not
#: filled with variants that differ only in the fourth significant digit of a strain. The grid is
#: far below what the models can resolve (closed-form impedance and beam strain are estimates).
OBJECTIVE_RESOLUTION: dict[str, float] = {
    "peak_strain": 1e-3,     # percent (10 microstrain)
    "signal_strain": 1e-3,   # percent
    "thickness": 0.1,        # um
    "loss": 0.01,            # dB/m
    "life": 0.01,            # log10 cycles (2.3 % in cycles; the equation is good to an order of magnitude)
}
NONE = "none"

_TOP_KEYS = ("name", "description", "line", "bend", "stack", "limits", "objectives", "search")
_LINE_KEYS = ("type", "target_ohm", "tolerance", "nominal_error_pct", "width_range_um", "gap_um", "frequency_ghz")
_BEND_KEYS = ("inner_radius_mm", "inside", "use", "cycles", "motion", "region", "plane_strain")
_STACK_KEYS = (
    "copper_layers", "symmetric", "signal_layer", "order", "copper_weights", "copper_types",
    "dielectric", "dielectric_thickness_um", "adhesive", "adhesive_thickness_um", "coverlay",
    "ground_coverage", "signal_coverage",
)
_LIMIT_KEYS = ("total_thickness_um", "peak_strain_pct", "signal_strain_pct", "min_cycles", "loss_db_per_m")
_SEARCH_KEYS = ("method", "budget", "seed", "population")


@dataclass(frozen=True)
class LineSpec:
    """The controlled-impedance line (edge units)."""

    type: str
    target_ohm: float
    tolerance: float            # relative, e.g. 0.10
    tolerance_label: str        # "10%" or a catalog class name
    nominal_error: float        # relative; the largest nominal (as-designed) impedance error accepted
    width_min_um: float
    width_max_um: float
    gap_um: tuple[float, ...]   # empty for single lines
    frequency_ghz: float


@dataclass(frozen=True)
class BendSpec:
    """The bend (edge units)."""

    inner_radius_mm: float
    inside: str
    use: str
    cycles: float | None
    motion: str
    region: str
    plane_strain: bool


@dataclass(frozen=True)
class StackSpec:
    """The stack family to search. Thickness options are in um."""

    copper_layers: int
    symmetric: bool
    signal_layer: int | None           # 1-based copper index, None = the search chooses
    order: str
    copper_weights: tuple[str, ...]
    copper_types: tuple[str, ...]
    dielectric: tuple[str, ...]
    dielectric_thickness_um: Mapping[str, tuple[float, ...]]
    adhesive: tuple[str, ...]          # may contain "none"
    adhesive_thickness_um: Mapping[str, tuple[float, ...]]
    coverlay: tuple[str, ...]          # coverlay keys, cover-family dielectrics, or "none"
    ground_coverage: tuple[float, ...]
    signal_coverage: float


@dataclass(frozen=True)
class Limits:
    total_thickness_um: float | None = None
    peak_strain_pct: float | None = None
    signal_strain_pct: float | None = None
    min_cycles: float | None = None
    loss_db_per_m: float | None = None


@dataclass(frozen=True)
class SearchSpec:
    method: str = "auto"
    budget: int = 20000
    seed: int = 1
    population: int = 100


@dataclass(frozen=True)
class Study:
    """A validated study. ``raw`` is the study as given (for front.json)."""

    name: str
    description: str
    line: LineSpec
    bend: BendSpec
    stack: StackSpec
    limits: Limits
    objectives: tuple[str, ...]
    search: SearchSpec
    raw: Mapping[str, Any] = field(repr=False, compare=False, default_factory=dict)
    source: str = ""


# ----------------------------------------------------------------------------------------------
# small validation helpers; ``where`` is the field path, ``file`` the file prefix
class _V:
    def __init__(self, file: str) -> None:
        self.file = file

    def err(self, path: str, msg: str) -> StudyError:
        return StudyError(msg, f"{self.file}: {path}" if self.file else path)

    def one_of(self, path: str, value: Any, allowed: Sequence[Any]) -> StudyError:
        e = not_one_of(path, value, allowed, StudyError)
        return StudyError(e.message, f"{self.file}: {path}" if self.file else path)

    def mapping(self, path: str, value: Any, keys: Sequence[str], required: Sequence[str] = ()) -> dict:
        if not isinstance(value, Mapping):
            raise self.err(path or "study", f"{_show(value)} must be a mapping with keys [{', '.join(keys)}]")
        for k in value:
            if k not in keys:
                hint = closest(k, keys)
                msg = f"unknown key {k!r}; allowed keys are [{', '.join(repr(x) for x in keys)}]"
                if hint:
                    msg += f"; did you mean {hint!r}?"
                raise self.err(_join(path, str(k)), msg)
        for k in required:
            if k not in value or value[k] is None:
                raise self.err(_join(path, k), "is required")
        return dict(value)

    def number(self, path: str, value: Any, lo: float | None = None, hi: float | None = None,
               lo_open: bool = False, integer: bool = False) -> float:
        ok = isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
        if integer:
            ok = ok and float(value).is_integer()
        rng = _range_text(lo, hi, lo_open)
        if not ok:
            raise self.err(path, f"{_show(value)} is not {'an integer' if integer else 'a number'}{rng}")
        v = float(value)
        if (lo is not None and (v < lo or (lo_open and v <= lo))) or (hi is not None and v > hi):
            raise self.err(path, f"{_show(value)} is out of range{rng}")
        return v

    def choice(self, path: str, value: Any, allowed: Sequence[str]) -> str:
        if not isinstance(value, str) or value not in allowed:
            raise self.one_of(path, value, allowed)
        return value

    def boolean(self, path: str, value: Any) -> bool:
        if not isinstance(value, bool):
            raise self.err(path, f"{_show(value)} is not one of [true, false]")
        return value

    def str_list(self, path: str, value: Any, allowed: Sequence[str]) -> tuple[str, ...]:
        if isinstance(value, str):
            value = [value]
        if not isinstance(value, list) or not value:
            raise self.err(path, f"{_show(value)} must be a non-empty list of [{', '.join(repr(a) for a in allowed)}]")
        out = []
        for i, v in enumerate(value):
            out.append(self.choice(f"{path}[{i}]", v, allowed))
        if len(set(out)) != len(out):
            raise self.err(path, f"{_show(value)} lists a value twice")
        return tuple(out)

    def num_list(self, path: str, value: Any, lo: float, hi: float | None, lo_open: bool = True) -> tuple[float, ...]:
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            value = [value]
        if not isinstance(value, list) or not value:
            raise self.err(path, f"{_show(value)} must be a number or a non-empty list of numbers{_range_text(lo, hi, lo_open)}")
        vals = tuple(self.number(f"{path}[{i}]", v, lo, hi, lo_open) for i, v in enumerate(value))
        if len(set(vals)) != len(vals):
            raise self.err(path, f"{_show(value)} lists a value twice")
        return vals


def _join(path: str, key: str) -> str:
    return f"{path}.{key}" if path else key


def _show(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _range_text(lo: float | None, hi: float | None, lo_open: bool) -> str:
    if lo is None and hi is None:
        return ""
    a = "(" if lo_open else "["
    lo_s = "-inf" if lo is None else f"{lo:g}"
    hi_s = "inf" if hi is None else f"{hi:g}"
    return f"; allowed range {a}{lo_s}, {hi_s}]"


def _tolerance(v: _V, path: str, value: Any, classes: Mapping[str, float]) -> tuple[float, str]:
    """A percent number (``10`` or ``"10%"``) or a catalog tolerance class name."""
    if isinstance(value, str):
        m = re.fullmatch(r"\s*([0-9.]+)\s*%\s*", value)
        if m:
            value = float(m.group(1))
        elif value in classes:
            return float(classes[value]), value
        else:
            raise v.one_of(path, value, list(classes) + ["<percent, e.g. 10%>"])
    pct = v.number(path, value, 0.0, 50.0, lo_open=True)
    return pct / 100.0, f"{pct:g}%"


def _thickness_options(v: _V, path: str, value: Any, materials: Sequence[str]) -> dict[str, tuple[float, ...]]:
    """``[12.5, 25]`` (for every listed material) or ``{material: [..]}``; empty = catalog standard."""
    if value is None:
        return {}
    if isinstance(value, Mapping):
        out = {}
        for k, vals in value.items():
            if k not in materials:
                raise v.one_of(f"{path}.{k}", k, list(materials))
            out[str(k)] = v.num_list(f"{path}.{k}", vals, 0.0, 2000.0)
        return out
    vals = v.num_list(path, value, 0.0, 2000.0)
    return {m: vals for m in materials}


def validate_study(data: Any, catalog: Any, file: str = "") -> Study:
    """Validate a parsed study mapping against the catalog.

    Parameters
    ----------
    data : mapping
        The parsed YAML.
    catalog : Catalog
        From :func:`strainline.optimizer.inputs.catalog.load_catalog`.
    file : str
        File name used as the prefix of every error.

    Raises
    ------
    StudyError
        One line naming the field, the bad value and the allowed values.
    """
    v = _V(file)
    top = v.mapping("", data, _TOP_KEYS, required=("name", "line", "bend", "stack"))
    name = top["name"]
    if not isinstance(name, str) or not re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9_.-]{0,79}", name):
        raise v.err("name", f"{_show(name)} must be a short name of letters, digits, '-', '_' or '.'")
    description = top.get("description") or ""
    if not isinstance(description, str):
        raise v.err("description", f"{_show(description)} must be text")

    # --- line
    ln = v.mapping("line", top["line"], _LINE_KEYS, required=("type", "target_ohm", "width_range_um"))
    kind = v.choice("line.type", ln["type"], LINE_KINDS)
    target = v.number("line.target_ohm", ln["target_ohm"], 5.0, 300.0)
    classes = dict(getattr(catalog.fabrication, "impedance_tolerance", {}) or {})
    tol, tol_label = _tolerance(v, "line.tolerance", ln.get("tolerance", 10), classes)
    # The nominal design must sit well inside the tolerance, leaving the rest of the band for
    # dielectric thickness, Dk and etch scatter: by default half of it (common practice, no source).
    nominal = v.number("line.nominal_error_pct", ln.get("nominal_error_pct", 50.0 * tol), 0.0, 100.0 * tol,
                       lo_open=True) / 100.0
    wr = ln["width_range_um"]
    if not (isinstance(wr, list) and len(wr) == 2):
        raise v.err("line.width_range_um", f"{_show(wr)} must be [min, max] in um")
    wmin = v.number("line.width_range_um[0]", wr[0], 1.0, 5000.0)
    wmax = v.number("line.width_range_um[1]", wr[1], 1.0, 5000.0)
    if wmax <= wmin:
        raise v.err("line.width_range_um", f"{_show(wr)}: max must be larger than min")
    if kind in GAP_KINDS:
        if ln.get("gap_um") is None:
            raise v.err("line.gap_um", f"is required for a {kind} line (a number or a list of gaps in um)")
        gaps = v.num_list("line.gap_um", ln["gap_um"], 1.0, 5000.0)
    else:
        if ln.get("gap_um") is not None:
            raise v.err("line.gap_um", f"is only used by [{', '.join(GAP_KINDS)}], not by {kind!r}")
        gaps = ()
    freq = v.number("line.frequency_ghz", ln.get("frequency_ghz", 1.0), 0.001, 100.0)
    line = LineSpec(kind, target, tol, tol_label, nominal, wmin, wmax, gaps, freq)

    # --- bend
    bd = v.mapping("bend", top["bend"], _BEND_KEYS, required=("inner_radius_mm",))
    radius = v.number("bend.inner_radius_mm", bd["inner_radius_mm"], 0.0, 1000.0, lo_open=True)
    inside = v.choice("bend.inside", bd.get("inside", "bottom"), get_args(Inside))
    use = v.choice("bend.use", bd.get("use", "dynamic"), get_args(Use))
    cycles = None
    if bd.get("cycles") is not None:
        cycles = v.number("bend.cycles", bd["cycles"], 1.0, 1e12)
    elif use == "dynamic":
        raise v.err("bend.cycles", "is required for dynamic use (the number of flex cycles the product needs)")
    motion = v.choice("bend.motion", bd.get("motion", "flat-to-bent"), get_args(Motion))
    region = v.choice("bend.region", bd.get("region", "bonded"), get_args(Region))
    plane_strain = v.boolean("bend.plane_strain", bd.get("plane_strain", False))
    bend = BendSpec(radius, inside, use, cycles, motion, region, plane_strain)

    # --- stack
    st = v.mapping("stack", top["stack"], _STACK_KEYS, required=("copper_layers", "copper_weights", "dielectric"))
    ncu = int(v.number("stack.copper_layers", st["copper_layers"], 1, 8, integer=True))
    min_cu = {"microstrip": 2, "coupled-microstrip": 2, "stripline": 3, "coupled-stripline": 3, "coplanar": 1}[kind]
    if ncu < min_cu:
        raise v.err("stack.copper_layers", f"{ncu} is too few for a {kind} line; allowed range [{min_cu}, 8]")
    symmetric = v.boolean("stack.symmetric", st.get("symmetric", False))
    order = v.choice("stack.order", st.get("order", "free"), get_args(Order))
    sig = st.get("signal_layer", "auto")
    if sig == "auto":
        signal_layer = None
        if order == "fixed":
            raise v.err("stack.signal_layer", "'auto' needs stack.order 'free'; give a copper layer number for a fixed order")
    else:
        signal_layer = int(v.number("stack.signal_layer", sig, 1, ncu, integer=True))
    weights = v.str_list("stack.copper_weights", st["copper_weights"], list(catalog.weights))
    ctypes = v.str_list("stack.copper_types", st.get("copper_types", ["rolled-annealed"]), list(catalog.foils))
    films = [k for k, d in catalog.dielectrics.items() if d.family != "adhesive"]
    adhesives = [k for k, d in catalog.dielectrics.items() if d.family == "adhesive"]
    diel = v.str_list("stack.dielectric", st["dielectric"], films)
    adh = v.str_list("stack.adhesive", st.get("adhesive", [NONE]), adhesives + [NONE])
    covers_allowed = list(catalog.coverlays) + [k for k, d in catalog.dielectrics.items() if d.family == "cover"] + [NONE]
    cov = v.str_list("stack.coverlay", st.get("coverlay", [NONE]), covers_allowed)
    for i, m in enumerate(diel):
        if catalog.dielectrics[m].glass_reinforced:
            raise v.err(f"stack.dielectric[{i}]", f"{m!r} is glass-reinforced and does not belong in a bend region")
    dth = _thickness_options(v, "stack.dielectric_thickness_um", st.get("dielectric_thickness_um"), diel)
    ath = _thickness_options(v, "stack.adhesive_thickness_um", st.get("adhesive_thickness_um"),
                             [a for a in adh if a != NONE])
    gcov = v.num_list("stack.ground_coverage", st.get("ground_coverage", [1.0]), 0.0, 1.0)
    scov = v.number("stack.signal_coverage", st.get("signal_coverage", 0.25), 0.0, 1.0, lo_open=True)
    stack = StackSpec(ncu, symmetric, signal_layer, order, weights, ctypes, diel, dth, adh, ath, cov,
                      gcov, scov)

    # --- limits
    lim = v.mapping("limits", top.get("limits") or {}, _LIMIT_KEYS)
    lvals = {k: (v.number(f"limits.{k}", lim[k], 0.0, None, lo_open=True) if lim.get(k) is not None else None)
             for k in _LIMIT_KEYS}
    if lvals["min_cycles"] is None and use == "dynamic":
        lvals["min_cycles"] = cycles
    limits = Limits(**lvals)

    # --- objectives
    objs = top.get("objectives", ["peak_strain", "thickness"])
    objectives = v.str_list("objectives", objs, OBJECTIVES)

    # --- search
    se = v.mapping("search", top.get("search") or {}, _SEARCH_KEYS)
    method = v.choice("search.method", se.get("method", "auto"), get_args(Method))
    budget = int(v.number("search.budget", se.get("budget", 20000), 100, 1e9, integer=True))
    seed = int(v.number("search.seed", se.get("seed", 1), 0, 2**32 - 1, integer=True))
    pop = int(v.number("search.population", se.get("population", 100), 8, 100000, integer=True))
    search = SearchSpec(method, budget, seed, pop)
    return Study(name, description, line, bend, stack, limits, objectives, search, raw=dict(data), source=file)


def load_study(path: str | Path, catalog: Any | None = None) -> Study:
    """Read and validate a study file.

    Parameters
    ----------
    path : str or Path
        The YAML study file.
    catalog : Catalog, optional
        Defaults to the shipped catalog.
    """
    if catalog is None:
        from strainline.optimizer.inputs.catalog import load_catalog

        catalog = load_catalog()
    path = Path(path)
    data = read_yaml(path, StudyError)
    if data is None:
        raise StudyError("the file is empty; a study needs at least [name, line, bend, stack]", str(path))
    return validate_study(data, catalog, file=path.name)
