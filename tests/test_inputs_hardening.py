"""Hardened inputs: every bad study, stackup or catalog is ONE line, exit 2, naming the field; fast.

A corpus of hostile and malformed inputs (size, depth, aliases, duplicate keys, absurd and
non-finite numbers, falsy values, line types without the copper they need). The expected results
are the rules of the study format itself (README "Study files"); the copper each line type needs
follows from its geometry: a microstrip or conductor-backed coplanar line has its ground plane in
the adjacent copper layer (Wadell, "Transmission Line Design Handbook", 1991, sections 3.4 and
3.5.2), a stripline lies between two planes (ibid., 3.6).
"""
from __future__ import annotations

import copy
import time

import pytest
import yaml

BASE = {
    "name": "unit",
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [75, 400], "frequency_ghz": 2},
    "bend": {"inner_radius_mm": 5, "use": "dynamic", "cycles": 10000},
    "stack": {"copper_layers": 2, "copper_weights": ["1/3oz"], "dielectric": ["polyimide-film"],
              "coverlay": ["polyimide-coverlay-acrylic"]},
}


def _with(path: str, value):
    d = copy.deepcopy(BASE)
    node = d
    keys = path.split(".")
    for k in keys[:-1]:
        node = node.setdefault(k, {})
    if value is _DROP:
        del node[keys[-1]]
    else:
        node[keys[-1]] = value
    return yaml.safe_dump(d, sort_keys=False)


_DROP = object()


def _solve(run_cli, tmp_path, text: str, name: str = "study.yaml") -> str:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    import strainline.optimizer.inputs.study_model  # noqa: F401  (time the refusal, not the first import)
    from strainline.optimizer.inputs.catalog import load_catalog

    load_catalog()
    t0 = time.process_time()
    code, _, err = run_cli("solve", p, "--out", tmp_path / "out", "--quiet")
    took = time.process_time() - t0
    assert code == 2, (code, err)
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    assert str(p.name) in lines[0]
    assert took < 1.0, f"{took:.2f} s CPU to refuse a bad input"
    return lines[0]


# (case id, study text, text the one line must hold)
STUDIES = [
    ("falsy-description", _with("description", 0), "description: 0 must be text"),
    ("falsy-limits-list", _with("limits", []), "limits: [] must be a mapping"),
    ("falsy-search-zero", _with("search", 0), "search: 0 must be a mapping"),
    ("falsy-name-false", _with("name", False), "name: False must be text"),
    ("huge-integer", _with("stack.copper_layers", 10 ** 400), "stack.copper_layers:"),
    ("huge-integer-range", _with("bend.cycles", 10 ** 400), "allowed range [1, 1e+12]"),
    ("absurd-thickness-limit", _with("limits.total_thickness_um", 1e300),
     "limits.total_thickness_um: 1e+300 is out of range; allowed range (0, 100000]"),
    ("infinite-radius", _with("bend.inner_radius_mm", float("inf")), "bend.inner_radius_mm: inf is not a number"),
    ("nan-target", _with("line.target_ohm", float("nan")), "line.target_ohm: nan is not a number"),
    ("tolerance-two-dots", _with("line.tolerance", "1.2.3%"), "line.tolerance: '1.2.3%' is not one of ["),
    ("tolerance-zero", _with("line.tolerance", "0%"), "line.tolerance: 0.0 is out of range"),
    ("thickness-option-absurd", _with("stack.dielectric_thickness_um", [25, 1e300]),
     "stack.dielectric_thickness_um[1]: 1e+300 is out of range"),
    ("thickness-map-absurd", _with("stack.dielectric_thickness_um", {"polyimide-film": [1e300]}),
     "stack.dielectric_thickness_um.polyimide-film[0]: 1e+300 is out of range"),
    ("thickness-map-unknown", _with("stack.dielectric_thickness_um", {"polimide-film": [25]}),
     "did you mean 'polyimide-film'?"),
    # the copper layers each line type needs
    ("coplanar-one-copper", _with("stack.copper_layers", 1).replace("microstrip", "coplanar").replace(
        "frequency_ghz: 2", "frequency_ghz: 2\n  gap_um: 100"),
     "stack.copper_layers: 1 is too few for a coplanar line"),
    ("microstrip-one-copper", _with("stack.copper_layers", 1), "1 is too few for a microstrip line"),
    ("stripline-two-copper", _with("line.type", "stripline"), "2 is too few for a stripline line"),
    ("stripline-on-outer", yaml.safe_dump({**BASE, "line": {**BASE["line"], "type": "stripline"},
                                           "stack": {**BASE["stack"], "copper_layers": 3, "signal_layer": 1}}),
     "stack.signal_layer: 1 cannot carry a stripline line; it must be an inner copper layer, one of [2]"),
    ("microstrip-on-inner", yaml.safe_dump({**BASE, "stack": {**BASE["stack"], "copper_layers": 3,
                                                              "signal_layer": 2}}),
     "stack.signal_layer: 2 cannot carry a microstrip line; it must be an outer copper layer, one of [1, 3]"),
    ("signal-past-last", _with("stack.signal_layer", 5), "stack.signal_layer: 5 is out of range; allowed range [1, 2]"),
    # duplicate keys: YAML would keep the last silently
    ("duplicate-target", yaml.safe_dump(BASE, sort_keys=False).replace(
        "target_ohm: 50", "target_ohm: 50\n  target_ohm: 90"), "key 'target_ohm' appears twice (line 5)"),
    # YAML machinery refused in a study
    ("alias", yaml.safe_dump(BASE, sort_keys=False).replace("inner_radius_mm: 5", "inner_radius_mm: &r 5")
     .replace("use: dynamic", "use: dynamic\n  cycles_again: *r"), "YAML anchor '&r' at line"),
    ("alias-bomb", ("a: &a [x,x,x,x,x,x,x,x,x]\nb: &b [*a,*a,*a,*a,*a,*a,*a,*a,*a]\nc: &c [*b,*b,*b,*b,*b,*b,*b,*b,*b]\n"
                   "d: &d [*c,*c,*c,*c,*c,*c,*c,*c,*c]\ne: &e [*d,*d,*d,*d,*d,*d,*d,*d,*d]\n"
                   "f: &f [*e,*e,*e,*e,*e,*e,*e,*e,*e]\ng: &g [*f,*f,*f,*f,*f,*f,*f,*f,*f]\n"
                   "h: &h [*g,*g,*g,*g,*g,*g,*g,*g,*g]\ni: &i [*h,*h,*h,*h,*h,*h,*h,*h,*h]\n"), "YAML anchor '&a' at line 1"),
    ("deep-flow", "name: " + "[" * 20000 + "]" * 20000 + "\n", "nesting deeper than 64 levels at line 1"),
    ("deep-block", "".join("  " * i + f"k{i}:\n" for i in range(200)) + "  " * 200 + "x: 1\n", "nesting deeper than 64"),
    ("top-is-list", "- 1\n- 2\n", "study: [1, 2] must be a mapping"),
]


@pytest.mark.parametrize("name, text, expect", STUDIES, ids=[s[0] for s in STUDIES])
def test_bad_study_is_one_line_exit_2(run_cli, tmp_path, name, text, expect):
    line = _solve(run_cli, tmp_path, text)
    assert expect in line, line


def test_fifty_megabyte_study_is_refused_before_reading(run_cli, tmp_path):
    p = tmp_path / "big.yaml"
    with p.open("wb") as fh:   # sparse: 50 MB of nothing, refused on its size alone
        fh.truncate(50 * 1024 * 1024)
    t0 = time.perf_counter()
    code, _, err = run_cli("solve", p, "--out", tmp_path / "out", "--quiet")
    assert time.perf_counter() - t0 < 1.0
    assert code == 2 and err.count("\n") == 1
    assert "the file is 52,428,800 bytes; the limit is 1,000,000 bytes (1 MB)" in err


def test_stackup_alias_and_absurd_numbers(run_cli, tmp_path):
    cases = [
        ("layers:\n  - &l {material: polyimide-film, thickness_um: 25}\n  - *l\n", "YAML anchor '&l' at line 2"),
        ("layers:\n  - material: polyimide-film\n    thickness_um: 1e300\n",
         "layers[0].thickness_um: 1e+300 is out of range; must be in (0, 10000]"),
        ("layers:\n  - thickness_um: 25\n    modulus_gpa: 1e300\n    poisson: 0.3\n",
         "layers[0].modulus_gpa: 1e+300 is out of range; must be in (0, 1000]"),
        ("layers:\n  - material: polyimide-film\n    thickness_um: 25\n    thickness_um: 50\n",
         "key 'thickness_um' appears twice (line 4)"),
        ("layers: {}\n", "layers: must be a non-empty list"),
        ("description: 0\nlayers:\n  - {material: polyimide-film, thickness_um: 25}\n", "description: 0 is not a name"),
    ]
    for i, (text, expect) in enumerate(cases):
        p = tmp_path / f"s{i}.yaml"
        p.write_text(text, encoding="utf-8")
        code, out, err = run_cli("bend", p, "--inner-radius-mm", "3")
        assert code == 2 and out == "" and err.count("\n") == 1, (text, err)
        assert expect in err, (expect, err)


def test_catalog_alias_bomb_and_duplicate_walk_are_bounded(tmp_path):
    # The catalog may use anchors (shared values), but their expansion is capped and the
    # duplicate-key walk visits each node once: a billion-leaf bomb fails in well under a second.
    import shutil
    from pathlib import Path

    from strainline.optimizer.errors import CatalogError
    from strainline.optimizer.inputs.catalog import load_catalog

    shipped = Path(__file__).resolve().parents[1] / "catalogs"
    folder = tmp_path / "cat"
    folder.mkdir()
    for n in ("materials.yaml", "copper.yaml", "fabrication.yaml"):
        shutil.copy(shipped / n, folder / n)
    levels = ["a0: &a0 [x, x, x, x, x, x, x, x, x, x]"]
    levels += [f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 10) + "]" for i in range(1, 10)]
    with (folder / "copper.yaml").open("a", encoding="utf-8") as fh:
        fh.write("about:\n" + "".join(f"  {line}\n" for line in levels))
    t0 = time.perf_counter()
    with pytest.raises(CatalogError, match="YAML aliases expand to more than 200,000 values"):
        load_catalog(folder)
    assert time.perf_counter() - t0 < 1.0


# ---------------------------------------------------------------------------------------------
# seeded fuzz: random values of every kind at random fields give a Study or ONE StudyError line
_FUZZ_STUDY = {
    "name": "unit", "catalog": "x",
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [75, 400], "frequency_ghz": 2,
             "tolerance": "10%", "nominal_error_pct": 3},
    "bend": {"inner_radius_mm": 5, "use": "dynamic", "cycles": 10000, "region": "unbonded", "leaves": [[1], [2]],
             "allow_uncovered": False, "plane_strain": True, "inside": "top", "motion": "reversed"},
    "stack": {"copper_layers": 2, "copper_weights": ["1/3oz"], "dielectric": ["polyimide-film"], "symmetric": True,
              "signal_layer": 1, "order": "free", "copper_types": ["rolled-annealed"],
              "coverlay": ["polyimide-coverlay-acrylic"], "adhesive": ["none", "acrylic-adhesive"],
              "dielectric_thickness_um": {"polyimide-film": [25]}, "adhesive_thickness_um": [25],
              "ground_coverage": [1], "ground_hatch": [{"pitch_um": 500, "line_width_um": 150, "angle_deg": 45}],
              "signal_coverage": 0.3},
    "limits": {"total_thickness_um": 300, "peak_strain_pct": 0.3, "min_cycles": 1e5, "elongation_fraction": 0.5},
    "objectives": ["loss", "life"],
    "search": {"method": "auto", "budget": 1000, "seed": 3, "population": 50, "impedance": "closed-form"},
}
_FUZZ_VALUES = [None, 0, -1, 1, 2.5, 1e300, -1e300, float("nan"), float("inf"), 10 ** 400, "", "x", "auto", "10%",
                "1.2.3%", [], [1], [[1]], {}, {"a": 1}, True, False, [None], ["1/2oz"], [1e300],
                {"polyimide-film": 1e300}, [[1, 2], [3]], "0.5 oz", {1: 2}, [float("nan")]]


def _paths(d, prefix=()):
    for k, v in d.items():
        yield (*prefix, k)
        if isinstance(v, dict):
            yield from _paths(v, (*prefix, k))


def test_fuzzed_studies_give_a_study_or_one_line():
    import random

    from strainline.optimizer.errors import StudyError
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.inputs.study import validate_study

    rng = random.Random(7)
    paths = list(_paths(_FUZZ_STUDY))
    cat = load_catalog()
    outcomes = {"ok": 0, "error": 0}
    for _ in range(1500):
        d = copy.deepcopy(_FUZZ_STUDY)
        for _ in range(rng.randint(1, 3)):
            p = rng.choice(paths)
            node = d
            for k in p[:-1]:
                node = node[k] if isinstance(node, dict) else {}
            if isinstance(node, dict):
                node[p[-1]] = copy.deepcopy(rng.choice(_FUZZ_VALUES))
        try:
            validate_study(d, cat, file="f.yaml")
            outcomes["ok"] += 1
        except StudyError as exc:   # anything else fails the test with its traceback
            assert "\n" not in str(exc) and str(exc).startswith("f.yaml: ")
            outcomes["error"] += 1
    assert outcomes["ok"] > 0 and outcomes["error"] > 0, outcomes   # the fuzz reaches both ends


def test_fuzzed_stackups_give_a_stackup_or_one_line(tmp_path):
    import random

    from strainline.optimizer.errors import StackupError
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.inputs.stackup_file import load_stackup

    base = {"name": "s", "bend_area_features": ["button-plating"], "layers": [
        {"name": "cov", "material": "polyimide-coverlay-acrylic", "film_um": 12.5, "adhesive_um": 25},
        {"name": "sig", "kind": "copper", "copper": "rolled-annealed", "weight": "1/2oz", "coverage": 0.3,
         "fill": "acrylic-adhesive", "yield_strength_mpa": 150},
        {"name": "core", "material": "polyimide-film", "thickness_um": 25, "dk": 3.4},
        {"name": "gap", "kind": "air-gap", "thickness_um": 0},
        {"name": "inl", "thickness_um": 25, "modulus_gpa": 3, "poisson": 0.3},
        {"name": "gnd", "kind": "copper", "copper": "rolled-annealed", "thickness_um": 12}]}
    rng = random.Random(7)
    cat = load_catalog()
    for i in range(250):
        d = copy.deepcopy(base)
        layer = rng.choice(d["layers"])
        layer[rng.choice([*layer, "kind", "thickness_um"])] = copy.deepcopy(rng.choice(_FUZZ_VALUES))
        if rng.random() < 0.2:
            d[rng.choice(["name", "layers", "bend_area_features", "description"])] = rng.choice(_FUZZ_VALUES)
        p = tmp_path / f"f{i}.yaml"
        p.write_text(yaml.safe_dump(d), encoding="utf-8")
        try:
            load_stackup(p, cat)
        except StackupError as exc:
            assert "\n" not in str(exc) and str(exc).startswith(str(p))


@pytest.mark.parametrize("field, value, expect", [
    ("modulus_gpa", 1e300, "dielectrics.lcp-film.modulus_gpa: must be <= 1000, got 1e+300"),
    ("modulus_gpa", 10 ** 400, "dielectrics.lcp-film.modulus_gpa: must be <= 1000, got 1000000"),
    ("dk", float("inf"), "dielectrics.lcp-film.dk: must be a finite number, got inf"),
    ("thicknesses_um", [25, 1e300], "dielectrics.lcp-film.thicknesses_um[1]: must be <= 10000, got 1e+300"),
    ("description", 0, "dielectrics.lcp-film.description: must be non-empty text, got 0"),
])
def test_absurd_catalog_numbers_are_refused_at_the_field(run_cli, tmp_path, field, value, expect):
    import shutil
    from pathlib import Path

    folder = tmp_path / "cat"
    shutil.copytree(Path(__file__).resolve().parents[1] / "catalogs", folder)
    doc = yaml.safe_load((folder / "materials.yaml").read_text(encoding="utf-8"))
    doc["dielectrics"]["lcp-film"][field] = value
    (folder / "materials.yaml").write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    code, out, err = run_cli("catalog", "--catalog", folder)
    assert code == 2 and out == "" and err.count("\n") == 1
    assert f"{folder / 'materials.yaml'}: {expect}" in err, err
