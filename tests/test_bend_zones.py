"""Several bend zones in one study (``bends:``): the study format, the per-zone mechanics of the
search against hand mechanics, and the one-zone forms.

Independent checks:
- strain of every copper face in every zone from the transformed section written out here
  (neutral axis = sum(E t y_c) / sum(E t); strain = (y - y_NA) / (R + y_NA) with the bottom face
  inside, (y_NA - y) / (R + T - y_NA) with the top inside: Gere & Timoshenko, Mechanics of
  Materials, composite beams, with the exact curvature of the inner face at R), and beside it
  :func:`strainline.models.bending.bend_strains`;
- every zone's cycles to failure against Engelmaier's equation written out here (IPC-TR-484 /
  Engelmaier 1983, the total strain range allowed at N cycles).
"""
from __future__ import annotations

import copy
import json
import math
from pathlib import Path

import numpy as np
import pytest

from strainline.models.bending import bend_strains
from strainline.optimizer.errors import StudyError
from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.inputs.study import validate_study

CAT = load_catalog()

BASE = {
    "name": "zones",
    "line": {"type": "microstrip", "target_ohm": 50, "tolerance": 10, "width_range_um": [60, 400],
             "frequency_ghz": 2.0},
    "stack": {"copper_layers": 2, "signal_layer": "auto", "order": "free",
              "copper_weights": ["1/3oz", "1/2oz"], "copper_types": ["rolled-annealed", "high-ductility-ed"],
              "dielectric": ["polyimide-film"], "adhesive": ["none", "acrylic-adhesive"],
              "adhesive_thickness_um": [25], "coverlay": ["polyimide-coverlay-acrylic"]},
    "limits": {"total_thickness_um": 220},
    "objectives": ["peak_strain", "thickness", "life"],
    "search": {"method": "exhaustive", "impedance": "closed-form"},
}
FOLD = {"name": "fold", "inner_radius_mm": 1.0, "inside": "top", "use": "install"}
HINGE = {"name": "hinge", "inner_radius_mm": 5.0, "inside": "bottom", "use": "dynamic", "cycles": 1000,
         "motion": "reversed"}


def study(**over):
    d = copy.deepcopy(BASE)
    d.update(copy.deepcopy(over))
    return d


def _solve(tmp_path: Path, data: dict, tag: str) -> dict:
    import yaml

    from strainline.optimizer.cli.solve import solve

    f = tmp_path / f"{tag}.yaml"
    f.write_text(yaml.safe_dump(data, sort_keys=False))
    front, _ = solve(f, out=tmp_path / tag, quiet=True, force=True)
    return json.loads(json.dumps(front))


@pytest.fixture(scope="module")
def two_zone_front(tmp_path_factory) -> dict:
    return _solve(tmp_path_factory.mktemp("zones"), study(bends=[FOLD, HINGE]), "two")


# ---------------------------------------------------------------------------------------------
# study format
def test_bends_list_and_single_forms():
    s = validate_study(study(bends=[FOLD, HINGE]), CAT)
    assert [z.name for z in s.bends] == ["fold", "hinge"]
    assert s.bend is s.bends[0]
    one = validate_study(study(bend={k: v for k, v in HINGE.items() if k != "name"}), CAT)
    assert len(one.bends) == 1 and one.bends[0].name == "bend" and one.bend is one.bends[0]
    assert one.limits.min_cycles == 1000            # the single form keeps bend.cycles as the life limit
    # several zones: an install zone has no life limit, the dynamic one its own cycles
    from strainline.optimizer.inputs.study_spec import required_cycles
    assert [required_cycles(s, z) for z in s.bends] == [None, 1000]


@pytest.mark.parametrize("over, field, words", [
    ({"bends": [FOLD, HINGE], "bend": HINGE}, "bend", "not both"),
    ({"bends": [FOLD, dict(HINGE, name="fold")]}, "bends[1].name", "unique"),
    ({"bends": [FOLD, dict(HINGE, region="unbonded")]}, "bends[1].region", "share"),
    ({"bends": [FOLD, {k: v for k, v in HINGE.items() if k != "cycles"}]}, "bends[1].cycles", "required"),
    ({"bends": [FOLD, HINGE], "strain_bend": "hinj"}, "strain_bend", "did you mean 'hinge'"),
    ({"bends": []}, "bends", "empty"),
    ({}, "bend", "required"),
    ({"bends": [FOLD, dict(HINGE, radius_mm=3)]}, "bends[1]", "radius_mm"),
])
def test_bad_zones_are_one_line_errors(over, field, words):
    with pytest.raises(StudyError) as e:
        validate_study(study(**over), CAT, file="s.yaml")
    text = str(e.value)
    assert "\n" not in text and field in text and words in text, text


def test_bad_zone_exits_2_on_the_command_line(tmp_path, capsys):
    import yaml

    from strainline.optimizer.cli.main import main

    f = tmp_path / "bad.yaml"
    f.write_text(yaml.safe_dump(study(bends=[FOLD, dict(HINGE, name="fold")])))
    assert main(["solve", str(f), "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err.strip()
    assert "bends[1].name" in err and "Traceback" not in err and len(err.splitlines()) == 1


# ---------------------------------------------------------------------------------------------
# the search: every zone of every candidate against hand mechanics
def _hand_strains(layers: list[dict], radius_mm: float, inside: str) -> tuple[np.ndarray, np.ndarray]:
    """Top and bottom face strain of every layer (fractions), transformed section written out
    (Gere & Timoshenko, composite beams; exact curvature of the inner face)."""
    t = np.array([lay["thickness_um"] for lay in layers]) * 1e-6
    e = np.array([lay["effective_modulus_gpa"] for lay in layers]) * 1e9
    yb = np.array([lay["y_bottom_um"] for lay in layers]) * 1e-6
    yt = yb + t
    y_na = np.sum(e * t * (yb + t / 2)) / np.sum(e * t)
    r, total = radius_mm * 1e-3, yt.max()
    if inside == "bottom":
        return (yt - y_na) / (r + y_na), (yb - y_na) / (r + y_na)
    return (y_na - yt) / (r + total - y_na), (y_na - yb) / (r + total - y_na)


def _engelmaier_range(n: float, df: float, su: float, e: float) -> float:
    """Total strain range at N cycles (Engelmaier; IPC-TR-484), written out."""
    return n ** -0.6 * df ** 0.75 + 0.9 * su / e * (math.exp(df) / 0.36) ** (0.1785 * math.log10(1e5 / n))


def test_every_zone_of_every_candidate_against_hand_mechanics(two_zone_front):
    cands = two_zone_front["candidates"]
    assert cands, two_zone_front["search"].get("infeasible")
    zones = {"fold": FOLD, "hinge": HINGE}
    for c in cands:
        assert [b["name"] for b in c["bends"]] == ["fold", "hinge"]
        layers = c["layers"]
        assert all(lay["kind"] != "air-gap" for lay in layers)   # bonded region: one transformed section
        cu = [i for i, lay in enumerate(layers) if lay["kind"] == "copper"]
        t = np.array([[lay["thickness_um"] * 1e-6 for lay in layers]])
        e = np.array([[lay["effective_modulus_gpa"] * 1e9 for lay in layers]])
        for b in c["bends"]:
            z = zones[b["name"]]
            top, bot = _hand_strains(layers, z["inner_radius_mm"], z["inside"])
            peak = max(max(abs(top[i]), abs(bot[i])) for i in cu)
            assert b["peak_copper_strain_pct"] == pytest.approx(100 * peak, rel=1e-9)
            lib = bend_strains(t, e, z["inner_radius_mm"] * 1e-3, inside_bottom=z["inside"] == "bottom")
            assert np.allclose(lib.strain_top[0], top, rtol=1e-9, atol=1e-15)
            # the zone's strain profile is this zone's, face by face
            prof_top = np.array([p["strain_top_pct"] for p in b["profile"]], float)
            assert np.allclose(prof_top, 100 * top, rtol=1e-9, atol=1e-12)
            # life: Engelmaier's range at the reported cycles matches the worst copper layer's range
            n = b["cycles_to_failure"]
            need = []
            for i in cu:
                f = CAT.foils[layers[i]["copper"]]
                rng = max(abs(top[i]), abs(bot[i])) * (2.0 if z.get("motion") == "reversed" else 1.0)
                need.append(rng / _engelmaier_range(n, f.fatigue_ductility, f.tensile_strength_pa, f.modulus_pa))
            assert max(need) == pytest.approx(1.0, rel=1e-6)
            if z["use"] == "dynamic":
                assert b["required_cycles"] == z["cycles"] and n >= z["cycles"] * (1 - 1e-9)
            else:
                assert b["required_cycles"] is None
        # objectives: peak strain of the worst zone, life of the zone with a life limit (the hinge)
        worst = max(c["bends"], key=lambda b: b["peak_copper_strain_pct"])
        assert c["objectives"]["peak_strain_pct"] == pytest.approx(worst["peak_copper_strain_pct"], rel=1e-12)
        assert c["objectives"]["cycles_to_failure"] == pytest.approx(c["bends"][1]["cycles_to_failure"], rel=1e-12)
        assert c["bend"]["name"] == worst["name"]
        assert c["bend"]["peak_copper_strain_pct"] == worst["peak_copper_strain_pct"]


def test_a_repeated_zone_changes_nothing_and_one_zone_lists_match(tmp_path, two_zone_front):
    """Two identical zones must give the one-zone front (every zone holds = that zone holds), and
    ``bend:`` equals a one-element ``bends:``."""
    h = {k: v for k, v in HINGE.items() if k != "name"}
    single = _solve(tmp_path, study(bend=h), "single")
    listed = _solve(tmp_path, study(bends=[dict(h, name="bend")]), "listed")
    twice = _solve(tmp_path, study(bends=[dict(h, name="a"), dict(h, name="b")]), "twice")
    obj = [[c["objectives"] for c in f["candidates"]] for f in (single, listed, twice)]
    assert obj[0] and obj[0] == obj[1] == obj[2]
    assert single["search"]["constraints"] == twice["search"]["constraints"]
    for c in twice["candidates"]:
        assert c["bends"][0]["peak_copper_strain_pct"] == c["bends"][1]["peak_copper_strain_pct"]
    # adding the tight install fold can only remove designs or raise the peak strain objective
    assert len(two_zone_front["candidates"]) >= 1


def test_strain_bend_names_the_zone_the_objectives_read(tmp_path):
    f = _solve(tmp_path, study(bends=[FOLD, HINGE], strain_bend="hinge"), "named")
    for c in f["candidates"]:
        hinge = c["bends"][1]
        assert c["objectives"]["peak_strain_pct"] == pytest.approx(hinge["peak_copper_strain_pct"], rel=1e-12)
        assert c["bend"]["name"] == "hinge"
        assert c["bends"][0]["peak_copper_strain_pct"] > hinge["peak_copper_strain_pct"]   # R 1 mm vs 5 mm


def test_csv_has_every_zone_and_no_profile_columns(two_zone_front):
    from strainline.optimizer.outputs.frontfiles import flat_rows

    row = flat_rows(two_zone_front)[0]
    for z, name in ((1, "fold"), (2, "hinge")):
        assert row[f"bends.{z}.name"] == name
        assert row[f"bends.{z}.peak_copper_strain_pct"] == two_zone_front["candidates"][0]["bends"][z - 1][
            "peak_copper_strain_pct"]
    assert not [k for k in row if ".profile." in k]


def test_shipped_two_zone_study_with_its_catalog(tmp_path):
    """studies/reader-fold-and-hinge.yaml: its own catalog (mode: add), two zones of an unbonded
    region; every leaf of every zone recomputed by hand (transformed section of the leaf about its
    own axis, at the leaf's own inner radius: Gere & Timoshenko, composite beams)."""
    from strainline.optimizer.cli.solve import solve

    path = Path(__file__).resolve().parents[1] / "studies" / "reader-fold-and-hinge.yaml"
    front, _ = solve(path, out=tmp_path / "o", method="evolutionary", budget=1500, quiet=True, force=True,
                     impedance="closed-form")
    front = json.loads(json.dumps(front))
    assert front["catalog"]["origin"]["materials.yaml"] == "added"
    cands = front["candidates"]
    assert cands
    # the user catalog's core (Dk 3.2 there, 3.3 built in) is what the candidates are built of
    user_dk = {lay["dk"] for c in cands for lay in c["layers"] if lay.get("material") == "adhesiveless-polyimide-core"}
    assert user_dk and all(dk == pytest.approx(3.2, abs=1e-12) for dk in user_dk)
    zones = {"fold": (1.0, "top"), "hinge": (5.0, "bottom")}
    for c in cands:
        assert [b["name"] for b in c["bends"]] == ["fold", "hinge"]
        by_name = {lay["name"]: lay for lay in c["layers"]}
        for b in c["bends"]:
            r_mm, inside = zones[b["name"]]
            prof = {p["name"]: p for p in b["profile"]}
            peak = 0.0
            for leaf in b["leaves"]:
                lays = [by_name[n] for n in leaf["layers"]]
                # the leaf's own inner radius: the zone's radius plus what lies inside the leaf
                assert leaf["inner_radius_mm"] >= r_mm - 1e-12
                top, bot = _hand_strains(
                    [dict(lay, y_bottom_um=lay["y_bottom_um"] - min(x["y_bottom_um"] for x in lays)) for lay in lays],
                    leaf["inner_radius_mm"], inside)
                for lay, t_, b_ in zip(lays, top, bot):
                    assert prof[lay["name"]]["strain_top_pct"] == pytest.approx(100 * t_, rel=1e-9, abs=1e-12)
                    assert prof[lay["name"]]["strain_bottom_pct"] == pytest.approx(100 * b_, rel=1e-9, abs=1e-12)
                    if lay["kind"] == "copper":
                        peak = max(peak, abs(t_), abs(b_))
            assert b["peak_copper_strain_pct"] == pytest.approx(100 * peak, rel=1e-9)
        assert c["bends"][1]["cycles_to_failure"] >= 5000 * (1 - 1e-9)


def test_nothing_feasible_names_the_zone_limit_reached(tmp_path):
    """A hinge life no stack reaches: the nearest candidate's fatigue figure is the hinge's (the
    install fold has no life limit), cycles reached below the hinge's cycles required."""
    f = _solve(tmp_path, study(bends=[FOLD, dict(HINGE, cycles=1e9)]), "hopeless")
    assert not f["candidates"]
    near = {n["constraint"]: n for n in f["search"]["infeasible"]["nearest"]}
    fat = near["fatigue_life"]
    assert fat["limit"] == 1e9 and fat["achieved"] is not None and fat["achieved"] < 1e9
    assert f["search"]["infeasible"]["violations"]["fatigue_life"] > 0
