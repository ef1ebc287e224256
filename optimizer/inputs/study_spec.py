"""The validated study records (frozen dataclasses) and the constants of the study format.

A study names the lines to hold, the bend, the stack family to search, limits, objectives and the
search settings. Every problem with a study becomes one :class:`StudyError` whose text names the
file, the field path, the bad value and the allowed values (with the closest match).

The format is documented in ``README.md, "Study files"``. The file's structure is the pydantic model
in :mod:`strainline.optimizer.inputs.study_model`; ``catalogs/study.schema.json`` is generated from it
(``python -m strainline.optimizer.inputs.schema``). This module holds the validated records the rest
of the code uses (plain frozen dataclasses, so importing it does not import pydantic). Values stay in
edge units here (um, mm, GHz, ohm, percent); the design space converts to SI.
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal, get_args

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
Impedance = Literal["field", "closed-form"]
Objective = Literal["peak_strain", "signal_strain", "thickness", "loss", "life", "yield"]
OBJECTIVES: tuple[str, ...] = get_args(Objective)
#: Objective name -> output key (edge units) in front.json.
OBJECTIVE_KEYS: dict[str, str] = {
    "peak_strain": "peak_strain_pct",
    "signal_strain": "signal_strain_pct",
    "thickness": "total_thickness_um",
    "loss": "loss_db_per_m",
    "life": "cycles_to_failure",
    "yield": "yield_shortfall_pct",
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
    "yield": 0.1,            # percent of builds outside the impedance band (100 - impedance yield)
}
NONE = "none"

# the keys of each section, in file order (the model in study_model.py has exactly these fields)
_TOP_KEYS = ("name", "description", "catalog", "line", "lines", "loss_line", "bend", "bends", "strain_bend", "stack", "limits", "objectives",
             "search")
_LINE_KEYS = ("type", "target_ohm", "tolerance", "nominal_error_pct", "width_range_um", "gap_um", "frequency_ghz",
              "hatch_correction", "length_mm")
#: The keys of one ``lines:`` entry: a line's keys plus its name, its copper layer and the lines it may
#: share that layer with.
_LINES_ENTRY_KEYS = _LINE_KEYS + ("name", "layer", "share_with")
#: Most lines one study may hold (each adds a line table and a gather per candidate).
MAX_LINES = 8
_BEND_KEYS = ("name", "inner_radius_mm", "inside", "use", "cycles", "motion", "region", "leaves", "allow_uncovered",
              "plane_strain")
_STACK_KEYS = (
    "copper_layers", "symmetric", "signal_layer", "order", "copper_weights", "copper_types",
    "dielectric", "dielectric_thickness_um", "adhesive", "adhesive_thickness_um", "coverlay",
    "ground_coverage", "signal_coverage", "ground_hatch",
)
_LIMIT_KEYS = ("total_thickness_um", "peak_strain_pct", "signal_strain_pct", "min_cycles", "loss_db_per_m",
               "elongation_fraction", "min_yield_pct")
_SEARCH_KEYS = ("method", "budget", "seed", "population", "impedance", "time_limit_s")
#: Fewest copper layers each line type needs: an outer line has its plane in the adjacent copper
#: (conductor-backed coplanar included); a stripline sits on an inner layer between two planes.
MIN_COPPER: dict[str, int] = {"microstrip": 2, "coupled-microstrip": 2, "coplanar": 2, "stripline": 3,
                              "coupled-stripline": 3}
#: Line types carried on an inner copper layer; the others sit on an outer one.
INNER_KINDS: tuple[str, ...] = ("stripline", "coupled-stripline")


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
    #: Coupon-calibrated impedance factor of a hatched reference plane (None: the 3-D solver's).
    hatch_correction: float | None = None
    #: The line's name (``lines[i].name``; "line" for the single ``line:`` form).
    name: str = "line"
    #: 1-based copper layer carrying the line; None = the search chooses.
    layer: int | None = None
    #: Routed length through the design, mm, for insertion loss in dB (None: loss per metre only).
    length_mm: float | None = None
    #: Names of the other lines this one may share its copper layer with.
    share_with: tuple[str, ...] = ()
    #: True when the study gave ``nominal_error_pct`` (else the default guard decides it).
    nominal_error_given: bool = False


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
    #: Unbonded region only: None (today's rule), "auto" (the search chooses the grouping) or the
    #: 1-based copper layers of each bonded leaf, top to bottom, e.g. ((1, 2), (3, 4)).
    leaves: None | str | tuple[tuple[int, ...], ...] = None
    #: A dynamic bend needs a cover on both outer faces unless this waives it.
    allow_uncovered: bool = False
    #: The zone's name (``bends[i].name``; "bend" for the single ``bend:`` form).
    name: str = "bend"


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
    #: Hatched ground options as geometry, (pitch_um, line_width_um, angle_deg) each; their fills
    #: are among ``ground_coverage``.
    ground_hatch: tuple[tuple[float, float, float], ...] = ()


@dataclass(frozen=True)
class Limits:
    total_thickness_um: float | None = None
    peak_strain_pct: float | None = None
    signal_strain_pct: float | None = None
    min_cycles: float | None = None
    loss_db_per_m: float | None = None
    #: Share of each dielectric/adhesive/cover's catalog elongation the bend may use, (0, 1].
    elongation_fraction: float = 0.5
    #: Least impedance yield (share of builds inside the impedance tolerance under the catalog's
    #: fabrication tolerances), percent; None = not a limit.
    min_yield_pct: float | None = None


@dataclass(frozen=True)
class SearchSpec:
    method: str = "auto"
    budget: int = 20000
    seed: int = 1
    population: int = 100
    #: How the line table solves impedance: "field" (field-solver corrected) or "closed-form".
    impedance: str = "field"
    #: ``auto`` enumerates when the projected exhaustive time is at most this, seconds (None: the
    #: command line's ``--time-limit``, default 60 s).
    time_limit_s: float | None = None


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
    #: The study's ``catalog:`` resolved against the study file's folder (None: the built-in one).
    catalog_path: Path | None = None
    #: Every bend zone (``bends:``; the single ``bend:`` is the one-zone case). ``bend`` is the first
    #: zone. Zones share the build of the bend region (region, leaves, plane_strain).
    bends: tuple[BendSpec, ...] = ()
    #: The zone the strain and life objectives read (``strain_bend:``); None = the worst zone.
    strain_bend: str | None = None
    #: Every controlled-impedance line (``lines:``; the single ``line:`` is the one-line case).
    #: ``line`` is the first. A candidate is feasible only when every line holds.
    lines: tuple[LineSpec, ...] = ()
    #: The line the loss objective reads (``loss_line:``); None = the worst line.
    loss_line: str | None = None

    def __post_init__(self) -> None:
        if not self.bends:
            object.__setattr__(self, "bends", (self.bend,))
        if not self.lines:
            object.__setattr__(self, "lines", (self.line,))


def required_cycles(study: Study, zone: BendSpec) -> float | None:
    """Cycles a zone must survive. One zone: ``limits.min_cycles`` (which defaults to ``bend.cycles``
    of a dynamic bend), as before. Several zones: a dynamic zone needs ``limits.min_cycles`` when
    given, else its own ``cycles``; an install zone has no life limit."""
    if len(study.bends) <= 1:
        return study.limits.min_cycles
    if zone.use != "dynamic":
        return None
    return study.limits.min_cycles if study.limits.min_cycles is not None else zone.cycles
