"""Study files: validation errors (one line, field path, allowed values, closest match) and schema."""
from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest
import yaml

from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.errors import StudyError
from strainline.optimizer.inputs.study import LINE_KINDS, OBJECTIVES, load_study, validate_study

ROOT = Path(__file__).resolve().parents[1]
STUDIES = sorted((ROOT / "studies").glob("*.yaml"))

BASE = {
    "name": "unit",
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [75, 400], "frequency_ghz": 2},
    "bend": {"inner_radius_mm": 5, "use": "dynamic", "cycles": 10000},
    "stack": {"copper_layers": 2, "copper_weights": ["1/3oz"], "dielectric": ["polyimide-film"],
              "coverlay": ["polyimide-coverlay-acrylic"]},
}


def _with(path: str, value):
    d = copy.deepcopy(BASE)
    keys = path.split(".")
    node = d
    for k in keys[:-1]:
        node = node[k]
    node[keys[-1]] = value
    return d


def _error(data) -> str:
    with pytest.raises(StudyError) as ei:
        validate_study(data, load_catalog(), file="study.yaml")
    text = str(ei.value)
    assert "\n" not in text
    return text


def test_base_study_is_valid():
    s = validate_study(BASE, load_catalog(), file="study.yaml")
    assert s.line.tolerance == pytest.approx(0.10)   # default 10 %
    assert s.limits.min_cycles == 10000              # dynamic use: the required cycles are the life limit
    assert s.objectives == ("peak_strain", "thickness")


def test_misspelled_dielectric_names_field_value_allowed_and_closest():
    text = _error(_with("stack.dielectric", ["polyimide-film", "polimide"]))
    assert text.startswith("study.yaml: stack.dielectric[1]: 'polimide' is not one of [")
    assert "'polyimide-film'" in text and text.endswith("did you mean 'polyimide-film'?")


def test_unknown_key_is_an_error_with_did_you_mean():
    d = copy.deepcopy(BASE)
    d["bend"]["inner_radius"] = 3
    text = _error(d)
    assert text.startswith("study.yaml: bend.inner_radius: unknown key 'inner_radius'")
    assert "did you mean 'inner_radius_mm'?" in text


@pytest.mark.parametrize("path, value, expect", [
    ("line.type", "microstip", "did you mean 'microstrip'?"),
    ("line.target_ohm", -5, "line.target_ohm: -5 is out of range; allowed range [5, 300]"),
    ("line.tolerance", "tigth", "did you mean 'tight'?"),
    ("line.width_range_um", [400, 75], "max must be larger than min"),
    ("bend.inner_radius_mm", 0, "bend.inner_radius_mm: 0 is out of range; allowed range (0, 1000]"),
    ("bend.inside", "outside", "'outside' is not one of ['bottom', 'top']"),
    ("bend.motion", "reverse", "did you mean 'reversed'?"),
    ("stack.copper_layers", 2.5, "is not an integer"),
    ("stack.copper_weights", ["half-oz"], "stack.copper_weights[0]: 'half-oz' is not one of ["),
    ("stack.adhesive", ["acrylic"], "did you mean 'acrylic-adhesive'?"),
    ("stack.ground_coverage", [1.0, 1.5], "stack.ground_coverage[1]: 1.5 is out of range"),
    ("objectives", ["los"], "did you mean 'loss'?"),
    ("search", {"method": "genetic"}, "search.method: 'genetic' is not one of ['auto', 'exhaustive', 'evolutionary']"),
])
def test_bad_values_give_one_line(path, value, expect):
    assert expect in _error(_with(path, value))


def test_glass_laminate_is_refused_in_a_bend():
    text = _error(_with("stack.dielectric", ["glass-thin-laminate"]))
    assert "glass" in text


def test_stripline_needs_three_copper_layers():
    d = _with("line.type", "stripline")
    assert "too few" in _error(d)


def test_pair_needs_a_gap():
    d = _with("line.type", "coupled-microstrip")
    assert "line.gap_um: is required" in _error(d)


def test_dynamic_use_needs_cycles():
    d = copy.deepcopy(BASE)
    del d["bend"]["cycles"]
    assert "bend.cycles: is required" in _error(d)


def test_tolerance_class_from_catalog_and_percent():
    cat = load_catalog()
    s = validate_study(_with("line.tolerance", "tight"), cat)
    assert s.line.tolerance == pytest.approx(cat.fabrication.impedance_tolerance["tight"])
    s = validate_study(_with("line.tolerance", "7.5%"), cat)
    assert s.line.tolerance == pytest.approx(0.075)


def test_missing_and_empty_files(tmp_path):
    with pytest.raises(StudyError, match="file not found"):
        load_study(tmp_path / "nope.yaml")
    (tmp_path / "empty.yaml").write_text("")
    with pytest.raises(StudyError, match="empty"):
        load_study(tmp_path / "empty.yaml")


@pytest.mark.parametrize("path", STUDIES, ids=[p.stem for p in STUDIES])
def test_shipped_studies_are_valid(path):
    s = load_study(path)
    assert s.name == path.stem


def test_schema_matches_the_validator():
    schema = json.loads((ROOT / "catalogs" / "study.schema.json").read_text())
    from strainline.optimizer.inputs import study as S

    props = schema["properties"]
    assert set(props) == set(S._TOP_KEYS)
    assert set(props["line"]["properties"]) == set(S._LINE_KEYS)
    assert set(props["bend"]["properties"]) == set(S._BEND_KEYS)
    assert set(props["stack"]["properties"]) == set(S._STACK_KEYS)
    assert set(props["limits"]["properties"]) == set(S._LIMIT_KEYS)
    assert set(props["search"]["properties"]) == set(S._SEARCH_KEYS)
    assert props["line"]["properties"]["type"]["enum"] == list(LINE_KINDS)
    assert props["objectives"]["items"]["enum"] == list(OBJECTIVES)
    cat = load_catalog()
    assert set(props["stack"]["properties"]["copper_weights"]["items"]["enum"]) == set(cat.weights)
    assert set(props["stack"]["properties"]["copper_types"]["items"]["enum"]) == set(cat.foils)


def test_schema_accepts_shipped_studies_and_rejects_unknown_keys():
    import jsonschema  # test extra
    schema = json.loads((ROOT / "catalogs" / "study.schema.json").read_text())
    from strainline.optimizer.inputs.catalog import load_catalog
    for p in STUDIES:
        data = yaml.safe_load(p.read_text())
        if "catalog" in data:
            # the schema lists the built-in catalog's names; a study's own catalog may add others:
            # those names are checked by the validator against that catalog instead
            own = load_catalog(load_study(p).catalog_path)
            extra = set(own.dielectrics) - set(load_catalog().dielectrics)
            for key in ("dielectric", "adhesive", "coverlay"):
                data["stack"][key] = [m for m in data["stack"].get(key, []) if m not in extra] or ["none"] \
                    if key != "dielectric" else [m for m in data["stack"][key] if m not in extra] or ["polyimide-film"]
        jsonschema.validate(data, schema)
    bad = copy.deepcopy(BASE)
    bad["stack"]["dielectrics"] = ["polyimide-film"]
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(bad, schema)


def test_schema_ships_as_package_data():
    from importlib import resources

    text = resources.files("strainline.catalogs").joinpath("study.schema.json").read_text()
    assert json.loads(text)["title"] == "strainline study"
