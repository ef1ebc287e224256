"""The independent checker's bad-input corpus: every command, every input file, one table.

Each case runs ``strainline`` in-process and must end in exit 2 with exactly ONE line on stderr
(``strainline: error: ...``) that names the field or option at fault, with no traceback, no
internal error, no Python warning (pytest turns warnings into errors, and ``main`` would report
one as an internal error, exit 1), nothing on stdout, and nothing half-written (no output folder,
no temporary folder beside it, an existing folder left byte for byte as it was). A few legitimately
valid odd inputs must exit 0.

The expectations are the product's stated contract (README "What it does": exit 2 = bad input, one
line naming the field, the bad value and the allowed values; "Study files": what is refused; the
bend, line, catalog and report sections) and the YAML 1.1 / JSON (RFC 8259) grammars the files are
written in. No expected value is a result of strainline's own code.
"""
from __future__ import annotations

import copy
import hashlib
import json
import shutil
from pathlib import Path

import pytest
import yaml

ROOT = Path(__file__).resolve().parents[1]
STACKUP = ROOT / "studies" / "stackups" / "single-sided-balanced.yaml"
AIR_GAP = ROOT / "studies" / "stackups" / "gsg-air-gap.yaml"
FRONT = ROOT / "tests" / "fixtures" / "front_small.json"

# A tiny study (250 candidates, closed forms): bad inputs are refused before any search.
BASE = {
    "name": "corpus",
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [75, 400], "frequency_ghz": 2},
    "bend": {"inner_radius_mm": 5, "use": "dynamic", "cycles": 10000},
    "stack": {"copper_layers": 2, "copper_weights": ["1/3oz"], "dielectric": ["polyimide-film"],
              "coverlay": ["polyimide-coverlay-acrylic"]},
    "search": {"impedance": "closed-form"},
}
_DROP = object()


def _study(**changes) -> str:
    """BASE with ``section__key=value`` changes (``_DROP`` removes the key) as YAML text."""
    d = copy.deepcopy(BASE)
    for dotted, value in changes.items():
        keys = dotted.split("__")
        node = d
        for k in keys[:-1]:
            node = node.setdefault(k, {})
        if value is _DROP:
            del node[keys[-1]]
        else:
            node[keys[-1]] = value
    return yaml.safe_dump(d, sort_keys=False, allow_unicode=True)


def _one_line(code: int, out: str, err: str, expect: str) -> str:
    assert code == 2, (code, out[-300:], err)
    assert out == "", out
    lines = err.splitlines()
    assert len(lines) == 1 and err.endswith("\n"), err
    line = lines[0]
    assert line.startswith("strainline: error: "), line
    assert "Traceback" not in err and "internal error" not in err and "Warning" not in err, err
    assert expect in line, (expect, line)
    return line


def _nothing_written(tmp_path: Path) -> None:
    assert not (tmp_path / "out").exists()
    assert not [p.name for p in tmp_path.iterdir() if p.name.startswith(".")], list(tmp_path.iterdir())


# ---------------------------------------------------------------------------------------------
# study fields: (field path, bad value, text the line must hold besides the path)
FIELD_CASES = [
    ("name", "", "short name"), ("name", "a b", "short name"), ("name", "../x", "short name"),
    ("name", 1, "must be text"), ("name", None, "is required"), ("name", "ünï", "short name"),
    ("name", True, "must be text"), ("name", "..", "short name"), ("name", "-x", "short name"),
    ("description", 1, "must be text"), ("description", [], "must be text"), ("description", {"a": 1}, "must be text"),
    ("catalog", 1, "catalog folder"), ("catalog", "/nonexistent-catalog", "not a catalog folder"),
    ("catalog", "", "catalog folder"), ("catalog", [], "catalog folder"),
    ("line__type", "microstrp", "did you mean 'microstrip'"), ("line__type", "Microstrip", "did you mean 'microstrip'"),
    ("line__type", 1, "is not one of"), ("line__type", None, "is required"), ("line__type", [], "is not one of"),
    ("line__type", "stripline ", "did you mean 'stripline'"),
    ("line__target_ohm", "50", "allowed range [5, 300]"), ("line__target_ohm", "fifty", "is not a number"),
    ("line__target_ohm", -50, "out of range"), ("line__target_ohm", 0, "out of range"),
    ("line__target_ohm", -0.0, "out of range"), ("line__target_ohm", True, "is not a number"),
    ("line__target_ohm", 1e300, "out of range"), ("line__target_ohm", ".nan", "is not a number"),
    ("line__target_ohm", ".inf", "is not a number"), ("line__target_ohm", 500, "allowed range [5, 300]"),
    ("line__target_ohm", [50], "is not a number"), ("line__target_ohm", float("nan"), "is not a number"),
    ("line__tolerance", "standart", "did you mean 'standard'"), ("line__tolerance", -5, "out of range"),
    ("line__tolerance", 0, "out of range"), ("line__tolerance", 150, "allowed range (0, 50]"),
    ("line__tolerance", "5", "is not one of"), ("line__tolerance", True, "is not a number"),
    ("line__tolerance", "100%", "out of range"), ("line__tolerance", "1.2.3%", "is not one of"),
    ("line__nominal_error_pct", -1, "out of range"), ("line__nominal_error_pct", 0, "out of range"),
    ("line__nominal_error_pct", 1e300, "out of range"), ("line__nominal_error_pct", "x", "is not a number"),
    ("line__width_range_um", [400, 75], "max must be larger than min"), ("line__width_range_um", [75], "[min, max]"),
    ("line__width_range_um", [75, 400, 500], "[min, max]"), ("line__width_range_um", "75-400", "[min, max]"),
    ("line__width_range_um", [-1, 10], "allowed range [1, 5000]"), ("line__width_range_um", [75, "x"], "is not a number"),
    ("line__width_range_um", [75, True], "is not a number"), ("line__width_range_um", [1e300, 1e301], "out of range"),
    ("line__width_range_um", [75, 75], "max must be larger than min"),
    ("line__frequency_ghz", 0, "allowed range [0.001, 100]"), ("line__frequency_ghz", "2GHz", "is not a number"),
    ("line__frequency_ghz", 1e-12, "out of range"), ("line__gap_um", 100, "is only used by"),
    ("bend__inner_radius_mm", 0, "allowed range (0, 1000]"), ("bend__inner_radius_mm", -0.0, "out of range"),
    ("bend__inner_radius_mm", "5mm", "is not a number"), ("bend__inner_radius_mm", True, "is not a number"),
    ("bend__inner_radius_mm", 1e300, "out of range"), ("bend__inner_radius_mm", [5], "is not a number"),
    ("bend__inner_radius_mm", float("inf"), "is not a number"), ("bend__inner_radius_mm", float("-inf"), "is not a number"),
    ("bend__inside", "bottm", "did you mean 'bottom'"), ("bend__inside", True, "is not one of"),
    ("bend__use", "dynamc", "did you mean 'dynamic'"), ("bend__use", "static", "['install', 'dynamic']"),
    ("bend__cycles", 0, "allowed range [1, 1e+12]"), ("bend__cycles", -1, "out of range"),
    ("bend__cycles", True, "is not a number"), ("bend__cycles", 1e300, "out of range"), ("bend__cycles", _DROP, "is required"),
    ("bend__motion", "reverse", "did you mean 'reversed'"), ("bend__region", "unbond", "did you mean 'unbonded'"),
    ("bend__leaves", [[1], [2]], "only applies to an unbonded bend"), ("bend__allow_uncovered", "yes", "[true, false]"),
    ("bend__allow_uncovered", 1, "[true, false]"), ("bend__plane_strain", "no", "[true, false]"),
    # an option that does not apply is an error, never silently ignored (issue text: options that don't apply)
    ("bend__use", "install", "bend.cycles: only applies to use: dynamic"),
    ("stack__copper_layers", 0, "allowed range [1, 8]"), ("stack__copper_layers", 9, "out of range"),
    ("stack__copper_layers", 2.5, "is not an integer"), ("stack__copper_layers", "2", "is not an integer"),
    ("stack__copper_layers", True, "is not an integer"), ("stack__copper_layers", 10 ** 400, "stack.copper_layers"),
    ("stack__symmetric", "yes", "[true, false]"), ("stack__signal_layer", 0, "out of range"),
    ("stack__signal_layer", 3, "allowed range [1, 2]"), ("stack__signal_layer", "top", "is not an integer"),
    ("stack__signal_layer", "auto ", "is not an integer"), ("stack__order", "fixd", "did you mean 'fixed'"),
    ("stack__copper_weights", [], "non-empty list"), ("stack__copper_weights", ["3oz"], "did you mean '1/3oz'"),
    ("stack__copper_weights", ["1/2 oz", "0.5oz"], "lists a value twice"), ("stack__copper_weights", [0.5], "is not one of"),
    ("stack__copper_types", ["rolled-anealed"], "did you mean 'rolled-annealed'"), ("stack__copper_types", [None], "is not one of"),
    ("stack__dielectric", [], "non-empty list"), ("stack__dielectric", ["polimide-film"], "did you mean 'polyimide-film'"),
    ("stack__dielectric", ["acrylic-adhesive"], "is not one of"), ("stack__dielectric", ["fr4-glass-laminate"], "is not one of"),
    ("stack__dielectric_thickness_um", [-25], "allowed range (0, 2000]"), ("stack__dielectric_thickness_um", [0], "out of range"),
    ("stack__dielectric_thickness_um", {"polyimide-film": []}, "non-empty list"),
    ("stack__dielectric_thickness_um", {"lcp-film": [25]}, "did you mean 'polyimide-film'"),
    ("stack__dielectric_thickness_um", [25, 1e300], "out of range"),
    ("stack__adhesive", ["acrylic"], "did you mean 'acrylic-adhesive'"), ("stack__adhesive", [], "non-empty list"),
    ("stack__adhesive_thickness_um", [0], "allowed range (0, 2000]"),
    ("stack__coverlay", ["polyimide-coverlay"], "did you mean"), ("stack__coverlay", ["polyimide-film"], "is not one of"),
    ("stack__ground_coverage", [0], "allowed range (0, 1]"), ("stack__ground_coverage", [1.5], "out of range"),
    ("stack__signal_coverage", 0, "allowed range (0, 1]"), ("stack__signal_coverage", [0.5], "is not a number"),
    ("limits", [], "must be a mapping"), ("limits__total_thickness_um", 0, "allowed range (0, 100000]"),
    ("limits__total_thickness_um", "200", "is not a number"), ("limits__peak_strain_pct", 1e300, "allowed range (0, 100]"),
    ("limits__min_cycles", -1, "out of range"), ("limits__loss_db_per_m", 0, "out of range"),
    ("limits__elongation_fraction", 1.0000001, "allowed range (0, 1]"), ("limits__max_thickness_um", 1, "unknown key"),
    ("objectives", [], "non-empty list"), ("objectives", ["strain"], "did you mean 'peak_strain'"),
    ("objectives", ["loss", "loss"], "lists a value twice"), ("objectives", ["Loss"], "did you mean 'loss'"),
    ("objectives", {"loss": 1}, "non-empty list"),
    ("search", 0, "must be a mapping"), ("search__method", "exhaustve", "did you mean 'exhaustive'"),
    ("search__budget", 99, "allowed range [100, 1e+09]"), ("search__budget", 1.5, "is not an integer"),
    ("search__budget", 10 ** 20, "out of range"), ("search__seed", -1, "out of range"), ("search__seed", True, "is not an integer"),
    ("search__population", 3, "allowed range [8, 100000]"), ("search__impedance", "closed", "did you mean 'closed-form'"),
    ("search__reference_point", [1], "unknown key"), ("unknown_top", 1, "unknown key"), ("bend__radius_mm", 5, "unknown key"),
    ("line", _DROP, "is required"), ("stack", _DROP, "is required"), ("stack__copper_layers", _DROP, "is required"),
    ("line__width_range_um", _DROP, "is required"),
]


@pytest.mark.parametrize("path, value, expect", FIELD_CASES,
                         ids=[f"{p}={v!r}"[:60] for p, v, _ in FIELD_CASES])
def test_study_field(run_cli, tmp_path, path, value, expect):
    p = tmp_path / "study.yaml"
    p.write_text(_study(**{path: value}), encoding="utf-8")
    line = _one_line(*run_cli("solve", p, "--out", tmp_path / "out", "--quiet"), expect)
    assert "study.yaml" in line and path.replace("__", ".") in line, line
    _nothing_written(tmp_path)


# ---------------------------------------------------------------------------------------------
# study files as text: YAML machinery, encodings, cross-field rules
_TEXT = yaml.safe_dump(BASE, sort_keys=False)
TEXT_CASES = [
    ("empty", "", "the file is empty"),
    ("comment-only", "# nothing\n", "the file is empty"),
    ("null-document", "null\n", "the file is empty"),
    ("scalar-document", "hello\n", "must be a mapping"),
    ("list-document", "- name: x\n", "must be a mapping"),
    ("unclosed-flow", "name: [unclosed\n", "not valid YAML at line 2"),
    ("bad-indent", "name: x\n line: 3\n  bend: 4\n", "not valid YAML at line 2"),
    ("binary", b"\x00\x01\x02\xff\xfe", "cannot read: UnicodeDecodeError"),
    ("latin-1", "name: caf\xe9\n".encode("latin-1"), "cannot read: UnicodeDecodeError"),
    ("utf-16", _TEXT.encode("utf-16"), "cannot read: UnicodeDecodeError"),
    ("two-documents", _TEXT + "---\n" + _TEXT, "but found another document"),
    ("python-tag", _TEXT.replace("target_ohm: 50", "target_ohm: !!python/object:os.system 50"), "could not determine a constructor"),
    ("set-tag", _TEXT.replace("target_ohm: 50", "target_ohm: !!set {50}"), "line.target_ohm: {50} is not a number"),
    ("binary-tag", _TEXT.replace("target_ohm: 50", "target_ohm: !!binary aGVsbG8="), "line.target_ohm: b'hello' is not a number"),
    ("timestamp", _TEXT.replace("target_ohm: 50", "target_ohm: 2001-12-14"), "line.target_ohm: datetime.date"),
    ("integer-key", _TEXT + "1: 2\n", "invalid key"),
    ("null-key", _TEXT + "~: 2\n", "invalid key"),
    ("list-key", _TEXT + "? [a]\n: 2\n", "found unhashable key"),
    ("yaml-.nan", _TEXT.replace("target_ohm: 50", "target_ohm: .nan"), "line.target_ohm: nan is not a number"),
    ("yaml-.NaN", _TEXT.replace("target_ohm: 50", "target_ohm: .NaN"), "line.target_ohm: nan is not a number"),
    ("yaml-.inf", _TEXT.replace("inner_radius_mm: 5", "inner_radius_mm: .inf"), "bend.inner_radius_mm: inf is not a number"),
    ("yaml--.inf", _TEXT.replace("inner_radius_mm: 5", "inner_radius_mm: -.inf"), "bend.inner_radius_mm: -inf is not a number"),
    ("word-nan", _TEXT.replace("target_ohm: 50", "target_ohm: nan"), "line.target_ohm: 'nan' is not a number"),
    ("negative-zero-int", _TEXT.replace("inner_radius_mm: 5", "inner_radius_mm: -0"), "bend.inner_radius_mm: 0 is out of range"),
    ("exponent-overflow", _TEXT.replace("cycles: 10000", "cycles: 1e400"), "bend.cycles: inf is not a number"),
    # regression: a 5,000-digit integer passed Python's int-conversion limit and exited 1
    ("5000-digit-integer", _TEXT.replace("target_ohm: 50", "target_ohm: " + "9" * 5000),
     "an integer of 5,000 digits at line"),
    ("5000-digit-hex", _TEXT.replace("target_ohm: 50", "target_ohm: 0x" + "f" * 5000), "the limit is 1,000 digits"),
    ("999-digit-integer", _TEXT.replace("target_ohm: 50", "target_ohm: " + "9" * 999), "line.target_ohm: 999"),
    ("duplicate-key", _TEXT.replace("target_ohm: 50", "target_ohm: 50\n  target_ohm: 90"), "key 'target_ohm' appears twice"),
    ("anchor", _TEXT.replace("inner_radius_mm: 5", "inner_radius_mm: &r 5"), "YAML anchor '&r'"),
    ("deep-flow", "name: " + "[" * 5000 + "]" * 5000 + "\n", "nesting deeper than 64 levels"),
    # cross-field rules
    ("dynamic-without-cycles", _study(bend__cycles=_DROP), "bend.cycles: is required for dynamic use"),
    ("fixed-order-auto-signal", _study(stack__order="fixed"), "stack.signal_layer: 'auto' needs stack.order 'free'"),
    ("coplanar-without-gap", _study(line__type="coplanar"), "line.gap_um: is required for a coplanar line"),
    ("pair-without-gap", _study(line__type="coupled-microstrip"), "line.gap_um: is required"),
    ("stripline-two-copper", _study(line__type="stripline"), "stack.copper_layers: 2 is too few for a stripline"),
    ("stripline-on-outer", _study(line__type="stripline", stack__copper_layers=3, stack__signal_layer=1),
     "must be an inner copper layer, one of [2]"),
    ("microstrip-on-inner", _study(stack__copper_layers=3, stack__signal_layer=2), "must be an outer copper layer"),
    ("coplanar-one-copper", _study(line__type="coplanar", line__gap_um=100, stack__copper_layers=1),
     "stack.copper_layers: 1 is too few for a coplanar line"),
    ("leaves-past-last-copper", _study(bend__region="unbonded", bend__leaves=[[1, 2], [3]]), "bend.leaves[1][0]: 3"),
    ("leaves-out-of-order", _study(bend__region="unbonded", bend__leaves=[[2], [1]]), "leaves in order top to bottom"),
    ("leaves-twice", _study(bend__region="unbonded", bend__leaves=[[1], [1]]), "exactly once"),
    ("leaves-not-adjacent", _study(bend__region="unbonded", stack__copper_layers=3, bend__leaves=[[1, 3], [2]]),
     "a run of adjacent layers"),
    ("leaves-one-leaf", _study(bend__region="unbonded", bend__leaves=[[1, 2]]), "is one leaf"),
    ("leaves-empty-leaf", _study(bend__region="unbonded", bend__leaves=[[]]), "bend.leaves: [[]]"),
    ("leaves-fraction", _study(bend__region="unbonded", bend__leaves=[[1.5], [2]]), "bend.leaves[0][0]: 1.5 is not an integer"),
    ("leaves-near-miss-auto", _study(bend__region="unbonded", bend__leaves="autp"), "must be 'auto' or a list"),
    ("nominal-above-tolerance", _study(line__tolerance=5, line__nominal_error_pct=50), "allowed range (0, 5]"),
    ("catalog-relative-missing", _TEXT + "catalog: fab/catalog\n", "catalog: 'fab/catalog' is not a catalog folder"),
]


@pytest.mark.parametrize("name, text, expect", TEXT_CASES, ids=[c[0] for c in TEXT_CASES])
def test_study_text(run_cli, tmp_path, name, text, expect):
    p = tmp_path / "study.yaml"
    (p.write_bytes if isinstance(text, bytes) else p.write_text)(text)
    line = _one_line(*run_cli("solve", p, "--out", tmp_path / "out", "--quiet"), expect)
    assert "study.yaml" in line, line
    _nothing_written(tmp_path)


# valid, if odd: these run (exit 0) and write a complete output set
VALID_ODD = [
    ("byte-order-mark", b"\xef\xbb\xbf" + _TEXT.encode()),
    ("exponent-cycles-and-foil-notation", _study(bend__cycles="2e4", stack__copper_weights=["0.5 oz"]).replace(
        "cycles: '2e4'", "cycles: 2e4")),
    ("unicode-and-control-description", _study(description="Ω µm ✓ \u202e rtl \x1b[31m </script>")),
    ("impossible-5-ohm-target", _study(line__target_ohm=5)),   # no width reaches it: an empty front, explained
]


@pytest.mark.parametrize("name, text", VALID_ODD, ids=[c[0] for c in VALID_ODD])
def test_valid_odd_study_runs(run_cli, tmp_path, name, text):
    p = tmp_path / "study.yaml"
    (p.write_bytes if isinstance(text, bytes) else p.write_text)(text)
    code, out, err = run_cli("solve", p, "--out", tmp_path / "out", "--quiet")
    assert code == 0 and err == "", err
    front = json.loads((tmp_path / "out" / "front.json").read_text(encoding="utf-8"))
    manifest = json.loads((tmp_path / "out" / "strainline-output.json").read_text(encoding="utf-8"))
    assert sorted(manifest["files"]) == sorted(
        str(f.relative_to(tmp_path / "out")) for f in (tmp_path / "out").rglob("*")
        if f.is_file() and f.name != "strainline-output.json")
    if name == "impossible-5-ohm-target":
        assert front["candidates"] == [] and "nominal impedance" in out, out
    assert "NaN" not in json.dumps(front) and "Infinity" not in json.dumps(front)


# ---------------------------------------------------------------------------------------------
# stackup files for `strainline bend`
CU = {"name": "sig", "kind": "copper", "copper": "rolled-annealed", "weight": "1/2oz"}
FILM = {"name": "base", "material": "polyimide-film", "thickness_um": 25}
COV = {"name": "cov", "material": "polyimide-coverlay-acrylic", "film_um": 25, "adhesive_um": 25}
AIR = {"name": "gap", "kind": "air-gap", "thickness_um": 10}


def _layers(*layers, **top):
    return yaml.safe_dump({"name": "s", **top, "layers": list(layers)}, sort_keys=False)


STACKUP_CASES = [
    ("empty", "", "expected a mapping with 'layers:'"),
    ("list", "- a\n", "expected a mapping with 'layers:'"),
    ("no-layers", "name: s\n", "layers: missing"),
    ("layers-text", "layers: x\n", "layers: must be a non-empty list"),
    ("layers-empty", "layers: []\n", "layers: must be a non-empty list"),
    ("layer-null", "layers: [null]\n", "layers[0]: None is not a layer"),
    ("material-near-miss", _layers({"material": "polimide-film", "thickness_um": 25}), "did you mean 'polyimide-film'"),
    ("material-number", _layers({"material": 5, "thickness_um": 25}), "layers[0].material: 5 is not a name"),
    ("thickness-missing", _layers(CU, {"material": "polyimide-film"}), "sold in [12.5, 25, 50, 75, 125] um"),
    ("thickness-text", _layers(CU, {**FILM, "thickness_um": "25um"}), "must be in (0, 10000]"),
    ("thickness-zero", _layers(CU, {**FILM, "thickness_um": 0}), "layers[1].thickness_um: 0 is out of range"),
    ("thickness-negative-zero", _layers(CU, {**FILM, "thickness_um": -0.0}), "-0.0 is out of range"),
    ("thickness-nan", _layers(CU, {**FILM, "thickness_um": float("nan")}), "nan is not a number"),
    ("thickness-inf", _layers(CU, {**FILM, "thickness_um": float("inf")}), "inf is not a number"),
    ("thickness-bool", _layers(CU, {**FILM, "thickness_um": True}), "True is not a number"),
    ("thickness-huge", _layers(CU, {**FILM, "thickness_um": 1e300}), "must be in (0, 10000]"),
    ("kind-near-miss", _layers({**CU, "kind": "coper"}), "did you mean 'copper'"),
    ("foil-near-miss", _layers({**CU, "copper": "rolled"}), "did you mean 'rolled-annealed'"),
    ("weight-unknown", _layers({**CU, "weight": "3oz"}), "['1/4oz', '1/3oz', '1/2oz', '1oz', '2oz']"),
    ("weight-and-thickness", _layers({**CU, "thickness_um": 18}), "give weight or thickness_um, not both"),
    ("coverage-zero", _layers({**CU, "coverage": 0}), "layers[0].coverage: 0 is out of range; must be in (0, 1]"),
    ("coverage-text", _layers({**CU, "coverage": "half"}), "is not a number"),
    ("fill-unknown", _layers({**CU, "coverage": 0.5, "fill": "glue"}), "layers[0].fill: 'glue' is not one of ['air'"),
    ("fill-copper", _layers({**CU, "coverage": 0.5, "fill": "rolled-annealed"}), "layers[0].fill"),
    ("modulus-nan", _layers({**CU, "modulus_gpa": float("nan")}), "layers[0].modulus_gpa: nan is not a number"),
    ("modulus-absurd", _layers({**CU, "modulus_gpa": 1e300}), "must be in (0, 1000]"),
    ("yield-above-tensile", _layers({**CU, "yield_strength_mpa": 900, "tensile_strength_mpa": 300}), "yield must be <= tensile"),
    ("poisson-half", _layers({**CU, "poisson": 0.5}), "must be in [0, 0.5)"),
    ("fatigue-ductility-zero", _layers({**CU, "fatigue_ductility": 0}), "must be in (0, 5]"),
    ("inline-without-poisson", _layers(CU, {"thickness_um": 25, "modulus_gpa": 3}), "layers[1].poisson: missing"),
    ("inline-dk-below-1", _layers(CU, {"thickness_um": 25, "modulus_gpa": 3, "poisson": 0.3, "dk": 0.5}), "must be in [1, 100]"),
    ("inline-df-2", _layers(CU, {"thickness_um": 25, "modulus_gpa": 3, "poisson": 0.3, "df": 2}), "must be in [0, 1)"),
    ("glass-flag-text", _layers(CU, {"thickness_um": 25, "modulus_gpa": 3, "poisson": 0.3, "glass_reinforced": "yes"}),
     "[true, false]"),
    ("copper-field-on-dielectric", _layers(CU, {**FILM, "copper": "rolled-annealed", "kind": "dielectric"}),
     "is not a field of a dielectric layer"),
    ("unknown-layer-key", _layers(CU, {**FILM, "colour": "amber"}), "'colour' is not a field"),
    ("unknown-top-key", _layers(CU, FILM, colour=1), "'colour' is not a top-level field"),
    ("duplicate-layer-name", _layers(CU, {**FILM, "name": "sig"}), "names must be unique"),
    ("coverlay-between-coppers", _layers(CU, COV, {**CU, "name": "g"}), "needs exactly one copper layer next to it"),
    ("coverlay-no-copper", _layers(COV, FILM, CU), "needs exactly one copper layer next to it"),
    ("air-gap-outside", _layers(AIR, CU, FILM), "an air gap must sit between two bonded leaves"),
    ("two-air-gaps", _layers(CU, FILM, AIR, {**AIR, "name": "gap2"}, {**CU, "name": "g"}), "two air gaps in a row"),
    ("air-gap-negative", _layers(CU, FILM, {**AIR, "thickness_um": -1}, {**FILM, "name": "b2"}, {**CU, "name": "g"}),
     "must be in [0, 10000]"),
    ("air-gap-material", _layers(CU, FILM, {**AIR, "material": "polyimide-film"}, {**FILM, "name": "b2"}, {**CU, "name": "g"}),
     "is not a field of an air-gap layer"),
    ("feature-unknown", _layers(CU, FILM, bend_area_features=["vias"]), "'vias' is not one of ['plated-through-holes'"),
    ("feature-twice", _layers(CU, FILM, bend_area_features=["button-plating", "button-plating"]), "lists a value twice"),
    ("stiffener-in-bend", _layers(CU, {"material": "stainless-stiffener", "thickness_um": 100}), "layers[1].material"),
    ("duplicate-key", "layers:\n  - material: polyimide-film\n    thickness_um: 25\n    thickness_um: 50\n", "appears twice"),
    ("alias", "layers:\n  - &l {material: polyimide-film, thickness_um: 25}\n  - *l\n", "YAML anchor '&l'"),
    ("5000-digit-integer", "layers:\n  - material: polyimide-film\n    thickness_um: " + "1" * 5000 + "\n",
     "an integer of 5,000 digits"),
]


@pytest.mark.parametrize("name, text, expect", STACKUP_CASES, ids=[c[0] for c in STACKUP_CASES])
def test_stackup_file(run_cli, tmp_path, name, text, expect):
    p = tmp_path / "stack.yaml"
    p.write_text(text, encoding="utf-8")
    line = _one_line(*run_cli("bend", p, "--inner-radius-mm", "3"), expect)
    assert "stack.yaml" in line, line


# ---------------------------------------------------------------------------------------------
# command-line options of every command: (argv, text the line must hold)
_MS = ["--height-um", "50", "--thickness-um", "12", "--er", "3.2"]
_B = [STACKUP, "--inner-radius-mm", "2"]
OPTION_CASES = [
    # top level
    ([], "missing COMMAND"), (["bogus"], "'bogus' is not one of ['solve', 'report', 'bend', 'line', 'catalog']"),
    (["solv"], "did you mean 'solve'"), (["--bogus"], "unknown option '--bogus' before the command"),
    # bend
    (["bend", STACKUP], "missing --inner-radius-mm"), (["bend", STACKUP, "--inner-radius-mm"], "--inner-radius-mm: needs a value"),
    (["bend", STACKUP, "--inner-radius-mm", "0"], "must be > 0 and <= 100000"),
    (["bend", STACKUP, "--inner-radius-mm", "-0"], "--inner-radius-mm: -0 is out of range"),
    (["bend", STACKUP, "--inner-radius-mm", "nan"], "--inner-radius-mm: nan is out of range"),
    (["bend", STACKUP, "--inner-radius-mm", "inf"], "--inner-radius-mm: inf is out of range"),
    (["bend", STACKUP, "--inner-radius-mm", ".inf"], "'.inf' is not a number"),
    (["bend", STACKUP, "--inner-radius-mm", "1e300"], "--inner-radius-mm: 1e+300 is out of range"),
    (["bend", STACKUP, "--inner-radius-mm", "1,5"], "'1,5' is not a number"),
    (["bend", STACKUP, "--inner-radius-mm", ""], "'' is not a number"),
    ([*("bend",), *_B, "--inside", "bottm"], "did you mean 'bottom'"), ([*("bend",), *_B, "--inside", "TOP"], "['bottom', 'top']"),
    ([*("bend",), *_B, "--motion", "reverse"], "did you mean 'reversed'"), ([*("bend",), *_B, "--use", "dyn"], "did you mean 'dynamic'"),
    ([*("bend",), *_B, "--cycles", "5000"], "--cycles: applies to dynamic use only"),
    ([*("bend",), *_B, "--allow-uncovered"], "--allow-uncovered: applies to dynamic use only"),
    ([*("bend",), *_B, "--use", "dynamic", "--cycles", "0"], "--cycles: '0' is out of range"),
    ([*("bend",), *_B, "--use", "dynamic", "--cycles", "nan"], "--cycles: 'nan' is out of range"),
    ([*("bend",), *_B, "--use", "dynamic", "--cycles", "-5"], "--cycles: '-5' is out of range"),
    # regression: 1e300 cycles was accepted and printed a minimum radius of 5e38 mm
    ([*("bend",), *_B, "--use", "dynamic", "--cycles", "1e300"], "must be >= 1 and <= 1e12 cycles"),
    ([*("bend",), *_B, "--use", "dynamic", "--cycles", "1e20"], "--cycles: '1e20' is out of range"),
    ([*("bend",), *_B, "--elongation-fraction", "0"], "allowed (0, 1]"), ([*("bend",), *_B, "--elongation-fraction", "1.5"], "(0, 1]"),
    ([*("bend",), *_B, "--elongation-fraction", "x"], "'x' is not a number"),
    ([*("bend",), *_B, "--bogus"], "unknown option or extra value: --bogus"), ([*("bend",), *_B, "extra"], "extra"),
    (["bend", "/nonexistent-stackup.yaml", "--inner-radius-mm", "2"], "file not found"),
    (["bend", ROOT / "studies", "--inner-radius-mm", "2"], "cannot read: IsADirectoryError"),
    (["bend", "/dev/null", "--inner-radius-mm", "2"], "expected a mapping with 'layers:'"),
    ([*("bend",), *_B, "--catalog", "/nonexistent-catalog"], "catalog folder not found"),
    ([*("bend",), *_B, "--catalog", STACKUP], "catalog folder not found"),
    # line
    (["line", "microstrip", *_MS], "--width-um: give the trace width"),
    (["line", "microstrp", "--width-um", "100", *_MS], "did you mean 'microstrip'"),
    (["line", "microstrip", "--width-um", "100"], "missing --height-um, --thickness-um, --er"),
    (["line", "microstrip", "--width-um", "100", "--target-ohm", "50", *_MS], "--target-ohm: give either"),
    (["line", "microstrip", "--width-um", "0", *_MS], "--width-um: 0 is out of range"),
    (["line", "microstrip", "--width-um", "-0", *_MS], "--width-um: -0 is out of range"),
    (["line", "microstrip", "--width-um", "nan", *_MS], "--width-um: nan is out of range"),
    (["line", "microstrip", "--width-um", "1e300", *_MS], "must be > 0 and <= 100000"),
    (["line", "microstrip", "--width-um", "1e-300", *_MS], "change --width-um, --height-um"),
    (["line", "microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "0.5"],
     "--er: 0.5 is out of range; the relative permittivity must be >= 1 and <= 100"),
    (["line", "microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "-1", "--er", "3"], "--thickness-um: -1"),
    (["line", "microstrip", "--width-um", "100", "--er-top", "3", *_MS], "--er-top: microstrip has no dielectric above"),
    (["line", "microstrip", "--width-um", "100", "--gap-um", "50", *_MS], "--gap-um: microstrip has no gap"),
    (["line", "microstrip", "--width-um", "100", "--df", "0.01", *_MS], "--df: the loss needs a frequency"),
    (["line", "microstrip", "--width-um", "100", "--freq-ghz", "0", *_MS], "--freq-ghz: 0 is out of range"),
    (["line", "microstrip", "--width-um", "100", "--freq-ghz", "1e6", *_MS], "must be > 0 and <= 1000"),
    (["line", "microstrip", "--width-um", "100", "--freq-ghz", "5", "--df", "1", *_MS], "must be >= 0 and < 1"),
    (["line", "microstrip", "--width-um", "100", "--freq-ghz", "5", "--roughness-um", "1e300", *_MS], "--roughness-um"),
    (["line", "microstrip", "--width-um", "100", "--cover-um", "25", *_MS], "--cover-er: a cover needs its relative permittivity"),
    (["line", "microstrip", "--width-um", "100", "--cover-um", "25", "--cover-er", "0.9", *_MS], "--cover-er: 0.9 is out of range"),
    # regression: a cover permittivity without a cover thickness was silently ignored (README: an option
    # that does not apply is an error, never ignored)
    (["line", "microstrip", "--width-um", "100", "--cover-er", "3", *_MS], "--cover-er: a cover permittivity needs"),
    (["line", "coplanar", "--width-um", "100", "--gap-um", "100", "--cover-er", "3", *_MS], "give --cover-um C"),
    (["line", "microstrip", "--target-ohm", "500", *_MS], "the reachable impedance is"),
    (["line", "microstrip", "--target-ohm", "inf", *_MS], "--target-ohm: inf is out of range"),
    (["line", "microstrip", "--no-bottom-ground", "--width-um", "100", *_MS], "--no-bottom-ground applies to coplanar"),
    (["line", "stripline", "--width-um", "100", "--height-top-um", "0", *_MS], "--height-top-um: 0 is out of range"),
    (["line", "stripline", "--width-um", "100", "--cover-um", "25", "--cover-er", "3", *_MS], "--cover-um: stripline has no cover"),
    (["line", "coupled-microstrip", "--width-um", "100", *_MS], "--gap-um: coupled-microstrip needs --gap-um"),
    (["line", "coupled-microstrip", "--width-um", "100", "--gap-um", "0", *_MS], "--gap-um: 0 is out of range"),
    (["line", "coplanar", "--width-um", "100", *_MS], "--gap-um: coplanar needs --gap-um"),
    (["line", "microstrip", "--width-um", "100", "--hatch-pitch-um", "500", *_MS], "needs both --hatch-pitch-um and"),
    (["line", "microstrip", "--width-um", "100", "--hatch-pitch-um", "500", "--hatch-width-um", "100",
      "--hatch-angle-deg", "30", *_MS], "--hatch-angle-deg: 30 is not one of [45, 90]"),
    # regression: hatch lines wider than the pitch were silently cut to the pitch (a solid plane)
    (["line", "microstrip", "--width-um", "100", "--hatch-pitch-um", "500", "--hatch-width-um", "600", *_MS],
     "--hatch-width-um: 600 must be below --hatch-pitch-um 500 um"),
    (["line", "microstrip", "--width-um", "100", "--hatch-pitch-um", "500", "--hatch-width-um", "500", *_MS],
     "equal = a solid plane"),
    (["line", "microstrip", "--width-um", "100", "--bogus", *_MS], "unknown option or extra value: --bogus"),
    (["line"], "missing KIND"),
    # catalog
    (["catalog", "--section", "foil"], "did you mean 'foils'"), (["catalog", "--section", ""], "'' is not one of"),
    (["catalog", "--catalog", "/nonexistent-catalog"], "catalog folder not found"),
    (["catalog", "--catalog", ROOT / "studies"], "materials.yaml: file not found"), (["catalog", "extra"], "extra"),
    # report
    (["report"], "missing DIR"), (["report", "/nonexistent-folder"], "is not a folder holding front.json"),
    (["report", STACKUP], "is not a folder holding front.json"),
    (["report", ROOT / "studies"], "front.json: file not found"),
]


@pytest.mark.parametrize("argv, expect", OPTION_CASES, ids=[" ".join(str(a) for a in c[0])[-70:] for c in OPTION_CASES])
def test_option(run_cli, argv, expect):
    _one_line(*run_cli(*argv), expect)


# solve options and output paths: refused before any search, nothing written
SOLVE_CASES = [
    ([], "missing STUDY.yaml"), (["--method", "exhaustve"], "did you mean 'exhaustive'"),
    (["--budget", "-5"], "--budget: -5 is not a positive integer"), (["--budget", "1e3"], "--budget: 1e3"),
    (["--budget", "50"], "allowed range [100"), (["--seed", "-1"], "--seed: -1 is not an integer >= 0"),
    (["--seed", "1.5"], "--seed: 1.5"),
    # regression: a seed past the study's range and an empty Dask address were accepted (the empty
    # address silently ran locally)
    (["--seed", "99999999999999999999"], "allowed range [0, 4294967295]"),
    (["--dask", ""], "--dask: '' is not a scheduler address"), (["--workers", "0"], "--workers: 0 is not a positive integer"),
    (["--workers", "x"], "--workers: x"), (["--keep-unverified"], "--keep-unverified: applies only with --verify"),
    (["--impedance", "closed"], "did you mean 'closed-form'"), (["--catalog", "/nonexistent-catalog"], "catalog folder not found"),
    (["--out", "/proc/strainline-out"], "--out /proc/strainline-out"), (["--out", "/dev/null"], "is a file, not a folder"),
    (["--out", "/"], "is a file-system root"), (["--bogus"], "unknown option or extra value: --bogus"),
    (["--out", "{study}"], "is a file, not a folder"), (["--out", "{study}/sub"], "which is a file, not a folder"),
    (["--out", "{foreign}"], "holds files that are not strainline output"),
]


@pytest.mark.parametrize("argv, expect", SOLVE_CASES, ids=[" ".join(c[0]) or "no-study" for c in SOLVE_CASES])
def test_solve_option(run_cli, tmp_path, argv, expect):
    study = tmp_path / "study.yaml"
    study.write_text(_TEXT, encoding="utf-8")
    foreign = tmp_path / "mine"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("keep me", encoding="utf-8")
    argv = [a.format(study=study, foreign=foreign) for a in argv]
    head = [] if argv == [] else [study]
    out = [] if "--out" in argv else ["--out", tmp_path / "out"]
    _one_line(*run_cli("solve", *head, *argv, *([] if argv == [] else out), "--quiet"), expect)
    _nothing_written(tmp_path)
    assert (foreign / "notes.txt").read_text(encoding="utf-8") == "keep me" and len(list(foreign.iterdir())) == 1


# ---------------------------------------------------------------------------------------------
# a tampered or truncated front.json given to `strainline report`: refused, the folder untouched
@pytest.fixture(scope="module")
def report_folder(tmp_path_factory):
    from strainline.optimizer.cli.main import main

    folder = tmp_path_factory.mktemp("report") / "run"
    folder.mkdir()
    shutil.copy(FRONT, folder / "front.json")
    assert main(["report", str(folder), "--quiet"]) == 0
    return folder


def _snapshot(folder: Path) -> dict[str, str]:
    return {str(f.relative_to(folder)): hashlib.sha256(f.read_bytes()).hexdigest()
            for f in sorted(folder.rglob("*")) if f.is_file()}


_GOOD = json.loads(FRONT.read_text(encoding="utf-8"))
_RAW = FRONT.read_text(encoding="utf-8")


def _front(mutate) -> str:
    d = copy.deepcopy(_GOOD)
    mutate(d)
    return json.dumps(d)


REPORT_CASES = [
    ("empty", "", "not valid JSON at line 1 column 1"),
    ("truncated-half", _RAW[: len(_RAW) // 2], "not valid JSON"),
    ("truncated-end", _RAW.rstrip()[:-1], "not valid JSON"),
    ("not-json", "hello", "not valid JSON"),
    ("top-list", "[]", "expected a JSON object at the top level, got list"),
    ("top-null", "null", "expected a JSON object at the top level"),
    ("binary", b"\xff\xfe\x00", "cannot read: UnicodeDecodeError"),
    ("no-candidates", _front(lambda d: d.pop("candidates")), "candidates: missing 'candidates'"),
    ("candidates-object", _front(lambda d: d.__setitem__("candidates", {})), "candidates: missing 'candidates'"),
    ("candidate-null", _front(lambda d: d["candidates"].__setitem__(0, None)), "candidates[0]: expected an object"),
    ("no-objectives", _front(lambda d: d["candidates"][0].pop("objectives")), "candidates[0].objectives: missing"),
    ("objective-text", _front(lambda d: d["candidates"][0]["objectives"].__setitem__("peak_strain_pct", "x")),
     "candidates[0].objectives.peak_strain_pct"),
    ("objective-bool", _front(lambda d: d["candidates"][0]["objectives"].__setitem__("peak_strain_pct", True)),
     "is not a number: True"),
    ("no-layers", _front(lambda d: d["candidates"][0].pop("layers")), "candidates[0].layers: missing 'layers'"),
    ("layer-thickness-negative", _front(lambda d: d["candidates"][0]["layers"][0].__setitem__("thickness_um", -5)),
     "candidates[0].layers[0].thickness_um"),
    ("layer-kind-unknown", _front(lambda d: d["candidates"][0]["layers"][0].__setitem__("kind", "plasma")),
     "['dielectric', 'copper', 'air-gap']"),
    ("line-null", _front(lambda d: d["candidates"][0].__setitem__("line", None)), "candidates[0].line: expected an object"),
    ("id-duplicate", _front(lambda d: d["candidates"][1].__setitem__("id", d["candidates"][0]["id"])), "duplicate id"),
    ("id-path", _front(lambda d: d["candidates"][0].__setitem__("id", "../../evil")), "candidates[0].id"),
    ("id-number", _front(lambda d: d["candidates"][0].__setitem__("id", 5)), "candidates[0].id"),
    # regression: a candidate named 'index' silently replaced handoff/index.html (or was replaced by it)
    ("id-index", _front(lambda d: d["candidates"][0].__setitem__("id", "index")), "is reserved for the index page"),
    ("id-Index", _front(lambda d: d["candidates"][0].__setitem__("id", "Index")), "is reserved for the index page"),
    # regression: deep nesting ended in RecursionError, exit 1 (issue 15: nesting is bounded)
    ("nested-100000", _RAW.rstrip()[:-1] + ', "x": ' + "[" * 100000 + "]" * 100000 + "}", "nesting deeper than 64"),
    ("nested-500", _RAW.rstrip()[:-1] + ', "x": ' + "[" * 500 + "]" * 500 + "}", "nesting deeper than 64"),
    ("catalog-entries-number", _front(lambda d: d.__setitem__("catalog", {"entries": 5})), "catalog.entries"),
]


@pytest.mark.parametrize("name, text, expect", REPORT_CASES, ids=[c[0] for c in REPORT_CASES])
def test_tampered_front(run_cli, report_folder, tmp_path, name, text, expect):
    folder = tmp_path / "run"
    shutil.copytree(report_folder, folder)
    (folder / "front.json").write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    before = _snapshot(folder)
    _one_line(*run_cli("report", folder, "--quiet"), expect)
    assert _snapshot(folder) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run"]


# ---------------------------------------------------------------------------------------------
# a user catalog with errors (strainline catalog --catalog DIR; solve and bend read it the same way)
def _catalog(tmp_path: Path, file: str, edit) -> Path:
    folder = tmp_path / "cat"
    shutil.copytree(ROOT / "catalogs", folder, ignore=shutil.ignore_patterns("*.json"))
    doc = yaml.safe_load((folder / file).read_text(encoding="utf-8"))
    edit(doc)
    (folder / file).write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return folder


def _set(path, value):
    def edit(doc):
        node = doc
        for k in path[:-1]:
            node = node[k]
        if value is _DROP:
            del node[path[-1]]
        else:
            node[path[-1]] = value
    return edit


CATALOG_CASES = [
    ("materials.yaml", _set(("dielectrics", "lcp-film", "modulus_gpa"), -1), "dielectrics.lcp-film.modulus_gpa"),
    ("materials.yaml", _set(("dielectrics", "lcp-film", "modulus_gpa"), "stiff"), "dielectrics.lcp-film.modulus_gpa"),
    ("materials.yaml", _set(("dielectrics", "lcp-film", "dk"), float("nan")), "dielectrics.lcp-film.dk"),
    ("materials.yaml", _set(("dielectrics", "lcp-film", "family"), "flim"), "dielectrics.lcp-film.family"),
    ("materials.yaml", _set(("dielectrics", "lcp-film", "thicknesses_um"), []), "dielectrics.lcp-film.thicknesses_um"),
    ("materials.yaml", _set(("dielectrics", "lcp-film", "poisson"), _DROP), "dielectrics.lcp-film.poisson"),
    ("materials.yaml", _set(("dielectrics", "lcp-film", "colour"), "amber"), "dielectrics.lcp-film: 'colour' is not one of"),
    ("materials.yaml", _set(("dielectrics",), []), "dielectrics"),
    ("materials.yaml", _set(("mode",), "merge"), "mode"),
    ("copper.yaml", _set(("foils", "rolled-annealed", "fatigue_ductility_pct"), 0), "foils.rolled-annealed"),
    ("copper.yaml", _set(("weights", "1oz", "thickness_um"), -35), "weights.1oz.thickness_um"),
    ("fabrication.yaml", _set(("impedance_tolerance",), "tight"), "impedance_tolerance"),
]


@pytest.mark.parametrize("file, edit, expect", CATALOG_CASES, ids=[f"{c[0]}:{c[2]}" for c in CATALOG_CASES])
def test_user_catalog(run_cli, tmp_path, file, edit, expect):
    folder = _catalog(tmp_path, file, edit)
    line = _one_line(*run_cli("catalog", "--catalog", folder), expect)
    assert file in line, line
    # the same catalog given to solve is refused before anything is written
    study = tmp_path / "study.yaml"
    study.write_text(_TEXT, encoding="utf-8")
    _one_line(*run_cli("solve", study, "--catalog", folder, "--out", tmp_path / "out", "--quiet"), expect)
    assert not (tmp_path / "out").exists()


def test_user_catalog_empty_file(run_cli, tmp_path):
    folder = tmp_path / "cat"
    shutil.copytree(ROOT / "catalogs", folder, ignore=shutil.ignore_patterns("*.json"))
    (folder / "copper.yaml").write_text("", encoding="utf-8")
    line = _one_line(*run_cli("catalog", "--catalog", folder), "copper.yaml")
    assert str(folder) in line


# regression: a path longer than the system allows (ENAMETOOLONG) ended in an internal error, exit 1
_LONG = "x" * 300


@pytest.mark.parametrize("argv", [
    ["solve", "{study}", "--out", "{tmp}/" + _LONG],
    ["solve", "{study}", "--catalog", _LONG, "--out", "{tmp}/out"],
    ["report", _LONG],
    ["catalog", "--catalog", _LONG],
    ["bend", STACKUP, "--inner-radius-mm", "2", "--catalog", _LONG],
], ids=["solve-out", "solve-catalog", "report", "catalog", "bend-catalog"])
def test_file_name_too_long(run_cli, tmp_path, argv):
    study = tmp_path / "study.yaml"
    study.write_text(_TEXT, encoding="utf-8")
    argv = [str(a).format(study=study, tmp=tmp_path) for a in argv]
    _one_line(*run_cli(*argv), "file name too long")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["study.yaml"]
