"""What engineers write is accepted, and the study keys added for unbonded leaves, covers, material
elongation, impedance method and a study's own catalog parse as the README describes.

Sources of the expectations: foil weight notation is plain arithmetic (1/2 oz = 0.5 oz); exponent
floats follow the YAML 1.2.2 specification, section 10.3.2 (core schema: ``2e4`` and ``1e-3`` are
floats); every other expectation is the study format's own rule as the README states it.
"""
from __future__ import annotations

import copy
from pathlib import Path

import pytest
import yaml
from strainline.optimizer.errors import StudyError
from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.inputs.study import load_study, validate_study

BASE = {
    "name": "unit",
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [75, 400], "frequency_ghz": 2},
    "bend": {"inner_radius_mm": 5, "use": "dynamic", "cycles": 10000},
    "stack": {"copper_layers": 2, "copper_weights": ["1/3oz"], "dielectric": ["polyimide-film"],
              "coverlay": ["polyimide-coverlay-acrylic"]},
}


def _study(**sections):
    d = copy.deepcopy(BASE)
    for key, value in sections.items():
        if isinstance(value, dict) and isinstance(d.get(key), dict):
            d[key].update(value)
        else:
            d[key] = value
    return d


def _error(data) -> str:
    with pytest.raises(StudyError) as ei:
        validate_study(data, load_catalog(), file="study.yaml")
    text = str(ei.value)
    assert "\n" not in text
    return text


@pytest.mark.parametrize("written", ["1/2oz", "0.5oz", "0.5 oz", "1/2 oz", "0.50 OZ", ".5oz"])
def test_half_ounce_foil_in_any_notation(written):
    # 1/2 = 0.5 exactly: every notation names the catalog's "1/2oz" foil
    s = validate_study(_study(stack={"copper_weights": [written, "1oz"]}), load_catalog())
    assert s.stack.copper_weights == ("1/2oz", "1oz")
    assert load_catalog().weight(written) is load_catalog().weights["1/2oz"]


def test_same_foil_twice_in_two_notations_is_a_duplicate():
    assert "lists a value twice" in _error(_study(stack={"copper_weights": ["1/2oz", "0.5 oz"]}))


def test_unknown_foil_weight_still_lists_the_catalog():
    text = _error(_study(stack={"copper_weights": ["0.7oz"]}))
    assert text.startswith("study.yaml: stack.copper_weights[0]: '0.7oz' is not one of ['1/4oz'")


def test_stackup_weight_in_engineer_notation(tmp_path):
    from strainline.optimizer.inputs.stackup_file import load_stackup

    p = tmp_path / "s.yaml"
    p.write_text("layers:\n  - kind: copper\n    copper: rolled-annealed\n    weight: 1/2 oz\n"
                 "  - material: polyimide-film\n    thickness_um: 25\n", encoding="utf-8")
    cat = load_catalog()
    assert load_stackup(p, cat).layers[0].thickness_m == cat.weights["1/2oz"].thickness_m


def test_exponent_numbers_are_numbers(tmp_path):
    # YAML 1.2.2, 10.3.2: 2e4 and 1e-3 are floats (PyYAML's YAML 1.1 reads them as strings)
    text = yaml.safe_dump(BASE, sort_keys=False).replace("cycles: 10000", "cycles: 2e4")
    text += "limits:\n  peak_strain_pct: 1e-1\n  loss_db_per_m: 1.5E+1\n"
    p = tmp_path / "unit.yaml"
    p.write_text(text, encoding="utf-8")
    s = load_study(p)
    assert s.bend.cycles == 20000.0 and s.limits.min_cycles == 20000.0
    assert s.limits.peak_strain_pct == pytest.approx(0.1) and s.limits.loss_db_per_m == 15.0


def test_duplicate_key_in_a_study_names_key_and_line(tmp_path):
    # the case: target_ohm 50 then 90 used to run at 90 without a word
    text = yaml.safe_dump(BASE, sort_keys=False).replace("target_ohm: 50", "target_ohm: 50\n  target_ohm: 90")
    p = tmp_path / "unit.yaml"
    p.write_text(text, encoding="utf-8")
    with pytest.raises(StudyError, match=r"unit.yaml: key 'target_ohm' appears twice \(line 5\)"):
        load_study(p)


# ---------------------------------------------------------------------------------------------
# new study keys
def test_new_keys_default_to_todays_behaviour():
    s = validate_study(BASE, load_catalog())
    assert s.bend.leaves is None and s.bend.allow_uncovered is False
    assert s.limits.elongation_fraction == 0.5
    assert s.search.impedance == "field"
    assert s.catalog_path is None


def test_search_impedance():
    assert validate_study(_study(search={"impedance": "closed-form"}), load_catalog()).search.impedance == "closed-form"
    assert "did you mean 'closed-form'?" in _error(_study(search={"impedance": "closed"}))


def test_leaves_as_written():
    four = {"copper_layers": 4}
    s = validate_study(_study(stack=four, bend={"region": "unbonded", "leaves": [[1, 2], [3, 4]]}), load_catalog())
    assert s.bend.leaves == ((1, 2), (3, 4))
    s = validate_study(_study(stack=four, bend={"region": "unbonded", "leaves": "auto"}), load_catalog())
    assert s.bend.leaves == "auto"
    s = validate_study(_study(stack=four, bend={"region": "unbonded", "leaves": [[1], [2, 3], [4]]}), load_catalog())
    assert s.bend.leaves == ((1,), (2, 3), (4,))


@pytest.mark.parametrize("bend, expect", [
    ({"leaves": [[1], [2]]}, "bend.leaves: only applies to an unbonded bend"),
    ({"region": "unbonded", "leaves": [[1, 3], [2, 4]]}, "must name every copper layer 1..4 exactly once"),
    ({"region": "unbonded", "leaves": [[1, 2]]}, "must name every copper layer 1..4 exactly once"),
    ({"region": "unbonded", "leaves": [[2, 1], [3, 4]]}, "each leaf a run of adjacent layers"),
    ({"region": "unbonded", "leaves": [[1, 2], [3, 4], [4]]}, "exactly once"),
    ({"region": "unbonded", "leaves": [[1, 2], [3, 5]]}, "bend.leaves[1][1]: 5 is out of range; allowed range [1, 4]"),
    ({"region": "unbonded", "leaves": [[1, 2], []]}, "must be 'auto' or a list of lists"),
    ({"region": "unbonded", "leaves": "automatic"}, "must be 'auto' or a list of lists"),
    ({"region": "unbonded", "leaves": [[1, 2.5]]}, "bend.leaves[0][1]: 2.5 is not an integer"),
])
def test_bad_leaves(bend, expect):
    assert expect in _error(_study(stack={"copper_layers": 4}, bend=bend))


def test_allow_uncovered_and_elongation_fraction():
    s = validate_study(_study(bend={"allow_uncovered": True}, limits={"elongation_fraction": 1}), load_catalog())
    assert s.bend.allow_uncovered is True and s.limits.elongation_fraction == 1.0
    assert "bend.allow_uncovered: 'yes' is not one of [true, false]" in _error(_study(bend={"allow_uncovered": "yes"}))
    assert "limits.elongation_fraction: 0 is out of range; allowed range (0, 1]" in _error(
        _study(limits={"elongation_fraction": 0}))
    assert "allowed range (0, 1]" in _error(_study(limits={"elongation_fraction": 1.5}))


def test_catalog_path_is_relative_to_the_study(tmp_path):
    folder = tmp_path / "project"
    (folder / "fab" / "catalog").mkdir(parents=True)
    (folder / "fab" / "catalog" / "copper.yaml").write_text(
        "mode: add\nfoils: {}\nweights:\n  3oz: {weight_oz: 3, thickness_um: 105, source: invented for the test}\n",
        encoding="utf-8")
    (folder / "fab" / "catalog" / "fabrication.yaml").write_text(
        "mode: add\nmin_feature:\n  by_weight:\n    3oz: {trace_um: 300, space_um: 300}\n"
        "width_tolerance:\n  by_weight_pct:\n    3oz: 25\n", encoding="utf-8")
    p = folder / "unit.yaml"
    p.write_text(yaml.safe_dump(_study(catalog="fab/catalog", stack={"copper_weights": ["3oz"]}), sort_keys=False),
                 encoding="utf-8")
    s = load_study(p)   # validated against the study's own catalog: the built-in one plus 3oz
    assert s.catalog_path == folder / "fab" / "catalog" and s.stack.copper_weights == ("3oz",)
    p.write_text(yaml.safe_dump(_study(catalog="nowhere"), sort_keys=False), encoding="utf-8")
    with pytest.raises(StudyError, match=r"unit.yaml: catalog: 'nowhere' is not a catalog folder"):
        load_study(p)
    assert "catalog: 0 must be the path" in _error(_study(catalog=0))


def test_shipped_schema_knows_the_new_keys():
    import json

    schema = json.loads((Path(__file__).resolve().parents[1] / "catalogs" / "study.schema.json").read_text())
    props = schema["properties"]
    assert "catalog" in props
    assert {"leaves", "allow_uncovered"} <= set(props["bend"]["properties"])
    assert props["search"]["properties"]["impedance"]["enum"] == ["field", "closed-form"]
    assert props["limits"]["properties"]["elongation_fraction"]["maximum"] == 1
