"""The study file as a pydantic model, and its conversion to :class:`~.study.Study`.

The models below ARE the study format: sections, keys, types, ranges and defaults. The JSON
Schema shipped for editors (``catalogs/study.schema.json``) is generated from them by
:mod:`strainline.optimizer.inputs.schema`. Catalog names (foil weights, foils, dielectrics, ...)
are checked against the catalog passed in the validation context; the schema lists the shipped
catalog's names. Rules that join several fields (the copper layers a line type needs, the gap a
pair needs, the leaves of an unbonded bend) are checked in :func:`build_study` after the model.
"""
from __future__ import annotations

import re
from pathlib import Path
from typing import Annotated, Any

from pydantic import Field, ValidationError
from pydantic_core import PydanticCustomError
from strainline.optimizer.errors import StudyError, not_one_of
from strainline.optimizer.inputs import study_spec as S
from strainline.optimizer.inputs.modelkit import (
    Base,
    Kit,
    Leaf,
    Style,
    fail,
    first_error,
    show,
)
from strainline.optimizer.inputs.study_lines import study_lines
from strainline.optimizer.inputs.study_zones import bend_zones


class _StudyStyle(Style):
    top = "study"


K = Kit(_StudyStyle())
_PCT = re.compile(r"\s*([0-9]+(?:\.[0-9]*)?|\.[0-9]+)\s*%\s*")


def _shipped() -> Any:
    from strainline.optimizer.inputs.catalog import load_catalog

    return load_catalog()


def _films(cat: Any) -> list[str]:
    return [k for k, d in cat.dielectrics.items() if d.family != "adhesive"]


def _adhesives(cat: Any) -> list[str]:
    return [k for k, d in cat.dielectrics.items() if d.family == "adhesive"] + [S.NONE]


def _covers(cat: Any) -> list[str]:
    return list(cat.coverlays) + [k for k, d in cat.dielectrics.items() if d.family == "cover"] + [S.NONE]


def _ctx(names: Any) -> Any:
    """``names(catalog)`` for a validator (catalog from the context) and for the schema (shipped)."""
    return (lambda ctx: names(ctx["catalog"])), (lambda: names(_shipped()))


def _weight(value: Any, ctx: Any) -> Any:
    from strainline.optimizer.inputs.catalog import weight_key

    return weight_key(value, ctx["catalog"].weights) if isinstance(value, str) else value


def _tolerance(value: Any, info: Any) -> tuple[float, str]:
    return tolerance_of(value, info.context["catalog"])


def tolerance_of(value: Any, catalog: Any) -> tuple[float, str]:
    """A percent number (``10`` or ``"10%"``) or a catalog tolerance class -> (relative, label)."""
    classes = dict(getattr(catalog.fabrication, "impedance_tolerance", {}) or {})
    if isinstance(value, str):
        m = _PCT.fullmatch(value)
        if m:
            value = float(m.group(1))
        elif value in classes:
            return float(classes[value]), value
        else:
            raise fail(not_one_of(None, value, list(classes) + ["<percent, e.g. 10%>"]).message)
    pct = K.check_number(value, (0.0, 50.0, True, False))
    return pct / 100.0, f"{pct:g}%"


def _width_range(value: Any) -> tuple[float, float]:
    if not (isinstance(value, list) and len(value) == 2):
        raise fail(f"{show(value)} must be [min, max] in um")
    lo, hi = (K.check_number(v, (1.0, 5000.0, False, False), sub=f"[{i}]") for i, v in enumerate(value))
    if hi <= lo:
        raise fail(f"{show(value)}: max must be larger than min")
    return lo, hi


def _signal_layer(value: Any) -> int | None:
    if value == "auto":
        return None
    return int(K.check_number(value, (1, 8, False, False), integer=True))


_THK = K.num_list(0.0, 2000.0)


def _thickness_options(value: Any) -> Any:
    """``[12.5, 25]`` (every listed material) or ``{material: [..]}``; names are checked later."""
    check = _THK.__metadata__[0].check
    if isinstance(value, dict):
        out = {}
        for k, vals in value.items():
            try:
                out[k] = check(vals)
            except PydanticCustomError as exc:   # the same error with the material in the path
                c = exc.context or {}
                raise fail(c.get("message", exc.message()), f"{k}{c.get('sub', '')}") from None
        return out
    return check(value)


def _leaves(value: Any) -> str | tuple[tuple[int, ...], ...]:
    if value == "auto":
        return "auto"
    if not isinstance(value, list) or not value or not all(isinstance(g, list) and g for g in value):
        raise fail(f"{show(value)} must be 'auto' or a list of lists of copper layer numbers, e.g. [[1, 2], [3, 4]]")
    return tuple(tuple(int(K.check_number(n, (1, 8, False, False), integer=True, sub=f"[{i}][{j}]"))
                       for j, n in enumerate(g)) for i, g in enumerate(value))


def _catalog_path(value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise fail(f"{show(value)} must be the path of a catalog folder (relative to the study file)")
    return value


_NUM_LIST = {"type": "array", "items": {"type": "number", "exclusiveMinimum": 0}, "minItems": 1}


def _thickness_schema(names: Any, description: str) -> Any:
    return lambda: {"description": description, "oneOf": [
        _NUM_LIST, {"type": "object", "propertyNames": {"enum": list(names(_shipped()))},
                    "additionalProperties": _NUM_LIST}]}


# ------------------------------------------------------------------------------------------------
class LineModel(Base):
    type: K.choice(S.LINE_KINDS, description="microstrip and coplanar sit on an outer copper layer under the "
                   "cover; striplines on an inner layer")
    target_ohm: K.num(5.0, 300.0, description="Z0 for single lines, differential impedance for pairs")
    tolerance: Annotated[tuple, Leaf(_tolerance, {
        "description": "a percent (10 or '10%') or a catalog tolerance class",
        "oneOf": [{"type": "number", "exclusiveMinimum": 0, "maximum": 50}, {"type": "string"}]}, info=True)] = None
    nominal_error_pct: K.num(0.0, 100.0, lo_open=True, description=(
        "Largest nominal (as-designed) impedance error accepted, percent of the target; at most the tolerance. "
        "Default: half the tolerance, leaving the rest for process scatter.")) = None
    width_range_um: Annotated[tuple, Leaf(_width_range, {
        "type": "array", "items": {"type": "number", "minimum": 1, "maximum": 5000}, "minItems": 2, "maxItems": 2,
        "description": "[min, max] trace width the layout allows, um"})]
    gap_um: K.num_list(1.0, 5000.0, description="pairs: edge-to-edge gap; coplanar: slot to the side grounds; "
                       "one value or a list of options, um") = None
    frequency_ghz: K.num(0.001, 100.0, description="frequency for the loss, GHz (default 1)") = 1.0
    hatch_correction: K.num(0.5, 5.0, description=(
        "impedance factor of a hatched reference plane calibrated on coupons (Z over the hatch / Z over a "
        "solid plane); overrides the 3-D field solver's factor")) = None
    length_mm: K.num(0.0, 1e5, lo_open=True, description="routed length of the line, mm, for its insertion loss "
                     "in dB (optional)") = None


def _line_layer(value: Any) -> int | None:
    if value == "auto":
        return None
    return int(K.check_number(value, (1, 8, False, False), integer=True))


_LINE_NAME = {"pattern": r"[A-Za-z0-9][A-Za-z0-9_.-]{0,39}", "rule": "a short name of letters, digits, '-', '_' or '.'"}


class LineEntryModel(LineModel):
    """One entry of ``lines:``: a line as in ``line:``, with its name, layer and sharing."""

    name: K.text(**_LINE_NAME, description="the line's name (unique in the study)")
    layer: Annotated[Any, Leaf(_line_layer, {
        "description": "copper layer (1 = top) carrying this line, or auto (the search chooses; free order only)",
        "oneOf": [{"type": "integer", "minimum": 1, "maximum": 8}, {"const": "auto"}]})] = None
    share_with: list[K.text(**_LINE_NAME)] = Field(default=None, description=(
        "names of other lines that may run on the same copper layer as this one (default: none)"))


_LEAVES_SCHEMA = {
    "description": "unbonded region only: copper layers (1 = top) of each bonded leaf, top to bottom, e.g. "
                   "[[1, 2], [3, 4]]; or auto (the search chooses among buildable groupings)",
    "oneOf": [{"const": "auto"},
              {"type": "array", "minItems": 1,
               "items": {"type": "array", "minItems": 1, "items": {"type": "integer", "minimum": 1, "maximum": 8}}}]}


_ZONE_NAME = {"pattern": r"[A-Za-z0-9][A-Za-z0-9_.-]{0,39}",
              "rule": "a short name of letters, digits, '-', '_' or '.'"}


class BendModel(Base):
    name: K.text(**_ZONE_NAME, description="the bend zone's name (bends: list; default bend, or bend-<n>)") = None
    inner_radius_mm: K.num(0.0, 1000.0, lo_open=True, description="radius of the inner (mandrel) face of the bend, mm")
    inside: K.choice(("bottom", "top"), description="which face of the stack is the inside of the bend "
                     "(default bottom)") = "bottom"
    use: K.choice(("install", "dynamic"), description="one-time install bend or dynamic flexing "
                  "(default dynamic)") = "dynamic"
    cycles: K.num(1.0, 1e12, description="flex cycles the product needs (required for dynamic use)") = None
    motion: K.choice(("flat-to-bent", "reversed"), description="flat->bent->flat (range = peak) or +R->-R "
                     "(range = 2 x peak)") = "flat-to-bent"
    region: K.choice(("bonded", "unbonded"), description="bonded bend region, or unbonded (gaps not bordering "
                     "the signal layer become air gaps, or as bend.leaves says)") = "bonded"
    leaves: Annotated[Any, Leaf(_leaves, _LEAVES_SCHEMA)] = None
    allow_uncovered: K.boolean("a dynamic bend needs a cover on both outer faces unless this is true "
                               "(default false)") = False
    plane_strain: K.boolean("use E/(1-nu^2) for every layer (wide strip)") = False


_FILMS, _FILMS_S = _ctx(_films)
_ADH, _ADH_S = _ctx(_adhesives)
_COV, _COV_S = _ctx(_covers)
_WTS, _WTS_S = _ctx(lambda c: list(c.weights))
_FOILS, _FOILS_S = _ctx(lambda c: list(c.foils))


class HatchModel(Base):
    pitch_um: K.num(10.0, 20000.0, description="centre-to-centre pitch of the hatch lines, um")
    line_width_um: K.num(5.0, 20000.0, description="copper width of each hatch line, um (below the pitch)")
    angle_deg: K.num(45.0, 90.0, description="angle of the hatch lines to the trace: 45 or 90 degrees") = 45.0


class StackModel(Base):
    copper_layers: K.num(1, 8, integer=True)
    symmetric: K.boolean("mirror the top half of the stack onto the bottom half") = False
    signal_layer: Annotated[Any, Leaf(_signal_layer, {
        "description": "copper layer (1 = top) carrying the line, or auto (free order only)",
        "oneOf": [{"type": "integer", "minimum": 1, "maximum": 8}, {"const": "auto"}]})] = None
    order: K.choice(("free", "fixed"), description=(
        "free: the search places each gap's adhesive (below, above or both sides of its film) and, with "
        "signal_layer auto, chooses the signal layer; fixed: adhesive on both sides, signal layer given")) = "free"
    copper_weights: K.choice_list(_WTS, schema_allowed=_WTS_S, normalize=_weight,
                                  description="foil weights allowed for every copper layer ('1/2oz', '0.5 oz' "
                                  "and '1/2 oz' are the same foil)")
    copper_types: K.choice_list(_FOILS, schema_allowed=_FOILS_S,
                                description="copper foil types allowed (default rolled-annealed)") = ("rolled-annealed",)
    dielectric: K.choice_list(_FILMS, schema_allowed=_FILMS_S,
                              description="films or cores allowed between copper layers")
    dielectric_thickness_um: Annotated[Any, Leaf(_thickness_options, _thickness_schema(
        _films, "thickness options in um (a list for every dielectric, or per material); default: the catalog's "
        "standard thicknesses"))] = None
    adhesive: K.choice_list(_ADH, schema_allowed=_ADH_S,
                            description="bond adhesives allowed in each gap; none = adhesiveless") = (S.NONE,)
    adhesive_thickness_um: Annotated[Any, Leaf(_thickness_options, _thickness_schema(
        lambda c: _adhesives(c)[:-1], "adhesive thickness options in um; default: the catalog's standard "
        "thicknesses"))] = None
    coverlay: K.choice_list(_COV, schema_allowed=_COV_S, description=(
        "covers allowed on the outer faces (coverlay builds from the catalog, a cover-family dielectric, "
        "or none)")) = (S.NONE,)
    ground_coverage: K.num_list(0.0, 1.0, description="copper fraction of the ground layers: 1 (a solid plane); "
                                "give hatched planes as geometry in ground_hatch") = (1.0,)
    signal_coverage: K.num(0.0, 1.0, lo_open=True, description="copper fraction of the signal layer in the bend "
                           "(default 0.25)") = 0.25
    ground_hatch: list[HatchModel] = Field(default=None, description=(
        "hatched ground planes as geometry (pitch, line width, angle): each adds a coverage option of fill "
        "1 - (1 - w/p)^2, and front candidates over it get a 3-D field solution"))


class LimitsModel(Base):
    total_thickness_um: K.num(0.0, 100000.0, lo_open=True, description="maximum total thickness, um") = None
    peak_strain_pct: K.num(0.0, 100.0, lo_open=True, description="maximum copper strain over all copper "
                           "layers, percent") = None
    signal_strain_pct: K.num(0.0, 100.0, lo_open=True, description="maximum strain in the signal copper, "
                             "percent") = None
    min_cycles: K.num(0.0, 1e15, lo_open=True, description="minimum Engelmaier fatigue life, cycles (default: "
                      "bend.cycles for dynamic use)") = None
    loss_db_per_m: K.num(0.0, 1e6, lo_open=True, description="maximum line loss at the frequency, dB/m") = None
    elongation_fraction: K.num(0.0, 1.0, lo_open=True, description=(
        "share of each dielectric, adhesive and cover's catalog elongation the bend may use (default 0.5)")) = 0.5
    min_yield_pct: K.num(0.0, 100.0, lo_open=True, description=(
        "least impedance yield, percent: share of builds inside the impedance tolerance under the catalog's "
        "fabrication tolerances (quasi-Monte Carlo)")) = None


class SearchModel(Base):
    method: K.choice(("auto", "exhaustive", "evolutionary")) = "auto"
    budget: K.num(100, 1e9, integer=True, description="evaluations of the evolutionary search") = 20000
    seed: K.num(0, 2**32 - 1, integer=True) = 1
    population: K.num(8, 100000, integer=True) = 100
    impedance: K.choice(("field", "closed-form"), description=(
        "what decides the line's impedance in the search: field (a field-accurate line table, the default) or "
        "closed-form (the published equations alone)")) = "field"
    time_limit_s: K.num(0.0, 1e7, lo_open=True, description=(
        "auto: enumerate every candidate when the projected exhaustive time is at most this many seconds, "
        "else run the evolutionary search (default 60; --time-limit wins)")) = None


class StudyModel(Base):
    """A strainline study: the line, the bend, the stack family to search, limits, objectives and
    search settings. Units are in every field name (um, mm, GHz, ohm, pct). See README.md, section
    'Study files'."""

    name: K.text(pattern=r"[A-Za-z0-9][A-Za-z0-9_.-]{0,79}", rule="a short name of letters, digits, '-', '_' or '.'",
                 description="short name; the default output folder is out/<name>")
    description: K.text() = ""
    catalog: Annotated[str, Leaf(_catalog_path, {
        "type": "string", "description": "a catalog folder (materials.yaml, copper.yaml, fabrication.yaml) "
        "relative to the study file; default: the built-in catalog"})] = None
    line: LineModel = Field(default=None, description="the controlled-impedance line; or give lines: for several")
    lines: list[LineEntryModel] = Field(default=None, description=(
        "several controlled-impedance lines (each as line:, with name, layer and share_with); a candidate is "
        "feasible only when every line holds"))
    loss_line: K.text(**_LINE_NAME, description=(
        "the line the loss objective reads (default: the worst line)")) = None
    bend: BendModel = Field(default=None, description="the bend (one zone); or give bends: for several zones")
    bends: list[BendModel] = Field(default=None, description=(
        "several bend zones (each as bend:, with a name); strain, life and material limits hold in every zone"))
    strain_bend: K.text(**_ZONE_NAME, description=(
        "the bend zone the strain and life objectives read (default: the worst zone)")) = None
    stack: StackModel
    limits: LimitsModel = LimitsModel()
    objectives: K.choice_list(S.OBJECTIVES, description="minimized: peak_strain, signal_strain, thickness, loss; "
                              "maximized: life, yield (impedance yield)") = ("peak_strain", "thickness")
    search: SearchModel = SearchModel()


assert tuple(StudyModel.model_fields) == S._TOP_KEYS and tuple(BendModel.model_fields) == S._BEND_KEYS
assert tuple(LineEntryModel.model_fields) == S._LINES_ENTRY_KEYS
assert tuple(LineModel.model_fields) == S._LINE_KEYS and tuple(StackModel.model_fields) == S._STACK_KEYS
assert tuple(LimitsModel.model_fields) == S._LIMIT_KEYS and tuple(SearchModel.model_fields) == S._SEARCH_KEYS


# ------------------------------------------------------------------------------------------------
def _ground_hatch(st: Any, err: Any) -> tuple[tuple[float, ...], tuple[tuple[float, float, float], ...]]:
    """Coverage options and hatch geometry: ``ground_coverage`` holds the solid plane (1); each
    ``ground_hatch`` entry adds its fill 1 - (1 - w/p)^2 (square grid) as a further option. A bare
    fraction below 1 is refused: the line table would solve it as a solid plane, and the search would
    take its lower strain at no impedance cost."""
    partial = [c for c in st.ground_coverage if c < 1.0]
    if partial:
        raise err("stack.ground_coverage", f"{partial[0]:g} is not allowed: ground_coverage takes only 1 (a solid "
                  "plane); give a hatched plane as geometry in stack.ground_hatch (pitch_um, line_width_um, "
                  "angle_deg 45 or 90), whose impedance is then solved")
    if not st.ground_hatch:
        return tuple(st.ground_coverage), ()
    hatches, fills = [], []
    for i, h in enumerate(st.ground_hatch):
        if h.angle_deg not in (45.0, 90.0):
            raise err(f"stack.ground_hatch[{i}].angle_deg", f"{h.angle_deg:g} is not one of [45, 90]")
        if not h.line_width_um < h.pitch_um:
            raise err(f"stack.ground_hatch[{i}].line_width_um",
                      f"{h.line_width_um:g} must be below the pitch {h.pitch_um:g} um (equal = a solid plane)")
        fill = round(1.0 - (1.0 - h.line_width_um / h.pitch_um) ** 2, 9)
        if fill in fills:
            raise err(f"stack.ground_hatch[{i}]", f"has the same copper fill ({fill:.4g}) as an earlier hatch")
        hatches.append((float(h.pitch_um), float(h.line_width_um), float(h.angle_deg)))
        fills.append(fill)
    return tuple(st.ground_coverage) + tuple(fills), tuple(hatches)


def build_study(data: Any, catalog: Any, file: str = "", folder: Path | None = None) -> S.Study:
    """Validate ``data`` with :class:`StudyModel`, check the cross-field rules, build the Study."""
    def where(path: str) -> str:
        return f"{file}: {path}" if file else path

    def err(path: str, msg: str) -> StudyError:
        return StudyError(msg, where(path))

    def rng(path: str, value: Any, lo: float, hi: float, lo_open: bool = False) -> StudyError:
        return err(path, K.style.out_of_range(value, (lo, hi, lo_open, False)))

    if not isinstance(data, dict):
        raise err("study", K.style.not_mapping(data, S._TOP_KEYS))
    try:
        m = StudyModel.model_validate(data, context={"catalog": catalog})
    except ValidationError as exc:
        raise first_error(exc, StudyModel, K.style, where, StudyError) from None

    st = m.stack
    ncu = st.copper_layers
    lines = study_lines(m, catalog, err, rng, tolerance_of)
    zones = bend_zones(m, ncu, err)
    bd = m.bend if m.bend is not None else m.bends[0]
    line, bend = lines[0], zones[0]
    for i, name in enumerate(st.dielectric):
        if catalog.dielectrics[name].glass_reinforced and any(z.use == "dynamic" for z in zones):
            raise err(f"stack.dielectric[{i}]", f"{name!r} is glass-reinforced and does not belong in a dynamic bend "
                                                "(an install bend allows it above about 10 x thickness)")
    dth = _per_material("stack.dielectric_thickness_um", st.dielectric_thickness_um, st.dielectric, where)
    ath = _per_material("stack.adhesive_thickness_um", st.adhesive_thickness_um,
                        [a for a in st.adhesive if a != S.NONE], where)
    gcov, hatches = _ground_hatch(st, err)
    stack = S.StackSpec(ncu, st.symmetric, st.signal_layer, st.order, st.copper_weights, st.copper_types,
                        st.dielectric, dth, st.adhesive, ath, st.coverlay, gcov, st.signal_coverage, hatches)

    lim = m.limits
    lvals = {k: getattr(lim, k) for k in S._LIMIT_KEYS}
    if lvals["min_cycles"] is None and bd.use == "dynamic" and len(zones) == 1:
        lvals["min_cycles"] = bd.cycles
    limits = S.Limits(**lvals)
    se = m.search
    search = S.SearchSpec(se.method, se.budget, se.seed, se.population, se.impedance, se.time_limit_s)
    catalog_path = None
    if m.catalog is not None:
        p = Path(m.catalog).expanduser()
        catalog_path = p if p.is_absolute() else (folder or Path(".")) / p
    return S.Study(m.name, m.description, line, bend, stack, limits, m.objectives, search, raw=dict(data),
                   source=file, catalog_path=catalog_path, bends=zones, strain_bend=m.strain_bend, lines=lines,
                   loss_line=m.loss_line)


def _per_material(path: str, value: Any, materials: Any, where: Any) -> dict[str, tuple[float, ...]]:
    if value is None:
        return {}
    if isinstance(value, dict):
        for k in value:
            if k not in materials:
                raise StudyError(not_one_of(None, k, list(materials)).message, where(f"{path}.{k}"))
        return {str(k): v for k, v in value.items()}
    return {m: value for m in materials}
