"""Several controlled-impedance lines in one study (``lines:``).

Sources named beside each check:

* reference planes: a microstrip or coplanar line on an outer copper layer uses the adjacent
  copper as its plane; a stripline sits between the planes above and below it (B. C. Wadell,
  *Transmission Line Design Handbook*, Artech House 1991, sections 3.4 and 3.5: the geometries
  the equations are derived for). A plane carries no line: definition of the reference plane.
* series-capacitance composite Dk of stacked dielectrics, h / er = sum t_i / er_i: exact for a
  parallel-plate field (any electromagnetics text; it is the rule the closed forms are fed with).
* insertion loss in dB = attenuation in dB/m x length in m: definition.
* field check: the project's 2-D field solver on each line's own layered cross-section read from
  the candidate's layer list (independent of the line table that decided it).
"""
from __future__ import annotations

import copy
import json
import math
from itertools import product
from pathlib import Path

import numpy as np
import pytest
import yaml

from strainline.optimizer.errors import StudyError
from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.inputs.study import load_study, validate_study

ROOT = Path(__file__).resolve().parents[1]
DOCK = ROOT / "studies" / "dock-tail-three-lines.yaml"
CAT = load_catalog()
INNER = ("stripline", "coupled-stripline")


@pytest.fixture(scope="module")
def dock_front(tmp_path_factory):
    from strainline.optimizer.cli.main import main

    out = tmp_path_factory.mktemp("dock") / "out"
    assert main(["solve", str(DOCK), "--out", str(out), "--quiet", "--method", "evolutionary",
                 "--budget", "1500", "--seed", "3"]) == 0
    return json.loads((out / "front.json").read_text())


def _planes(kind: str, layer: int, n_cu: int) -> set[int]:
    """1-based plane layers of a line (Wadell 1991, sections 3.4/3.5)."""
    if kind in INNER:
        return {layer - 1, layer + 1}
    return {2} if layer == 1 else {n_cu - 1}


def _brute_assignments(kinds, fixed, share, n_cu):
    """Every assignment by the rule, written out independently of the search code."""
    out = []
    for combo in product(range(1, n_cu + 1), repeat=len(kinds)):
        ok = True
        for a, (k, s) in enumerate(zip(kinds, combo)):
            if fixed[a] is not None and s != fixed[a]:
                ok = False
            outer = s in (1, n_cu)
            if (k in INNER) == outer or (k in INNER and not 1 < s < n_cu):
                ok = False
            for b, t in enumerate(combo):
                if b != a and (t in _planes(k, s, n_cu) or (t == s and frozenset((a, b)) not in share)):
                    ok = False
        if ok:
            out.append(tuple(c - 1 for c in combo))
    return sorted(out)


def _study(kinds, fixed, share, n_cu):
    lines = []
    for i, (k, f) in enumerate(zip(kinds, fixed)):
        ln = {"name": f"l{i}", "type": k, "target_ohm": 90 if "coupled" in k else 50, "width_range_um": [40, 400],
              "layer": "auto" if f is None else f}
        if k in ("coupled-microstrip", "coupled-stripline", "coplanar"):
            ln["gap_um"] = [100]
        ln["share_with"] = [f"l{b}" for b in range(len(kinds)) if b > i and frozenset((i, b)) in share]
        lines.append(ln)
    return {"name": "multi", "lines": lines, "bend": {"inner_radius_mm": 5, "use": "install"},
            "stack": {"copper_layers": n_cu, "copper_weights": ["1/3oz"], "dielectric": ["polyimide-film"],
                      "dielectric_thickness_um": [50], "coverlay": ["polyimide-coverlay-acrylic"]}}


CASES = [
    (("microstrip", "coupled-stripline", "coupled-stripline"), (None, None, None), {frozenset((1, 2))}, 4),
    (("microstrip", "coupled-stripline", "coupled-stripline"), (None, None, None), set(), 4),
    (("microstrip", "coupled-microstrip", "coupled-microstrip"), (None, None, None), {frozenset((1, 2))}, 4),
    (("microstrip", "stripline", "coupled-stripline", "coplanar"), (1, None, None, None), set(), 6),
    (("stripline", "stripline"), (None, None), set(), 5),
    (("microstrip", "microstrip"), (None, None), {frozenset((0, 1))}, 3),
]


@pytest.mark.parametrize("case", CASES)
def test_layer_assignments_equal_a_brute_force_of_the_plane_rule(case):
    # Wadell 1991 3.4/3.5 (planes of each line type); a plane carries no line; sharing per share_with
    from strainline.optimizer.search.linelayers import assignments

    kinds, fixed, share, n_cu = case
    study = validate_study(_study(kinds, fixed, share, n_cu), CAT)
    want = _brute_assignments(kinds, fixed, share, n_cu)
    if not want:
        with pytest.raises(StudyError, match="no assignment"):
            assignments(study, n_cu)
        return
    assert sorted(assignments(study, n_cu)) == want


def test_an_impossible_assignment_is_one_line_naming_lines(tmp_path, run_cli):
    data = _study(("stripline", "stripline"), (None, None), set(), 4)
    p = tmp_path / "s.yaml"
    p.write_text(yaml.safe_dump(data))
    code, out, err = run_cli("solve", p, "--out", tmp_path / "o", "--quiet")
    assert code == 2 and "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert "lines" in err and "share_with" in err and not (tmp_path / "o").exists()


def test_every_line_of_every_candidate_recomputed_from_its_layers(dock_front):
    from strainline.models.lines import LineGeometry, composite_er, evaluate_line

    study = load_study(DOCK)
    spec = {ln.name: ln for ln in study.lines}
    cands = dock_front["candidates"]
    assert len(cands) >= 3
    for c in cands:
        lines = c["lines"]
        assert [ln["name"] for ln in lines] == ["antenna", "usb", "display"] and c["line"] == lines[0]
        cu = [lay for lay in c["layers"] if lay["kind"] == "copper"]
        n_cu = len(cu)
        carried = {}
        for ln in lines:
            carried.setdefault(ln["layer"], []).append(ln["name"])
        for ln in lines:
            s = spec[ln["name"]]
            # planes: exactly the rule, and no line on them (Wadell 1991 3.4/3.5; definition)
            assert set(ln["references"]) == _planes(ln["type"], ln["layer"], n_cu)
            assert not any(p in carried for p in ln["references"])
            others = [o for o in carried[ln["layer"]] if o != ln["name"]]
            assert all(o in s.share_with or ln["name"] in spec[o].share_with for o in others)
            assert cu[ln["layer"] - 1]["name"].endswith("signal")
            # the closed form from the layer list alone (series composite Dk, exact for parallel plates)
            idx = [i for i, lay in enumerate(c["layers"]) if lay["kind"] == "copper"]
            sig, ref = idx[ln["layer"] - 1], idx[ln["references"][0] - 1]
            lo, hi = sorted((sig, ref))
            band = [lay for lay in c["layers"][lo + 1:hi] if lay["thickness_um"] > 0]
            t = np.array([lay["thickness_um"] for lay in band]) * 1e-6
            er = np.array([lay["dk"] for lay in band])
            h = t.sum()
            assert h * 1e6 == pytest.approx(ln["geometry"]["height_um"], rel=1e-9)
            assert float(composite_er(t[None], er[None])[0]) == pytest.approx(h / np.sum(t / er), rel=1e-12)
            assert ln["geometry"]["er"] == pytest.approx(h / np.sum(t / er), rel=1e-9)
            g = ln["geometry"]
            geom = LineGeometry(width_m=np.array([ln["width_um"] * 1e-6]), height_m=np.array([h]),
                                thickness_m=np.array([cu[ln["layer"] - 1]["thickness_um"] * 1e-6]),
                                er=np.array([g["er"]]), gap_m=np.array([(ln["gap_um"] or math.nan) * 1e-6]),
                                height_top_m=np.array([(g["height_top_um"] or math.nan) * 1e-6]),
                                er_top=np.array([g["er_top"] or math.nan]),
                                cover_m=np.array([g["cover_um"] * 1e-6]), cover_er=np.array([g["cover_er"]]),
                                bottom_ground=np.array([True]))
            z = float(np.asarray(evaluate_line(ln["type"], geom).target_ohm)[0])
            assert z == pytest.approx(ln["closed_form"]["z_ohm_at_width"], rel=1e-9)
            # the decided impedance holds the target within the window the search used
            win = dock_front["search"]["nominal_window_pct"][ln["name"]]
            zt = ln["z_diff_ohm"] if "coupled" in ln["type"] else ln["z0_ohm"]
            assert abs(zt / s.target_ohm - 1) * 100 <= win + 1e-9
            assert ln["target_ohm"] == s.target_ohm and ln["frequency_ghz"] == s.frequency_ghz
            # insertion loss = dB/m x m (definition)
            assert ln["insertion_loss_db"] == pytest.approx(ln["loss_db_per_m"] * s.length_mm / 1000, rel=1e-12)
            assert ln["impedance_yield"]["yield_pct"] >= study.limits.min_yield_pct - 1e-9 if \
                study.limits.min_yield_pct else True
        # the loss objective reads the worst line (no loss_line in this study)
        worst = max(ln["loss_db_per_m"] for ln in lines)
        assert c["objectives"]["loss_db_per_m"] == pytest.approx(worst, rel=1e-12)
        # signal strain of the picked zone (strain_bend: hinge) = largest over the line layers' faces
        hinge = next(b for b in c["bends"] if b["name"] == "hinge")
        peaks = [max(abs(cu[k - 1]["strain_top_pct"]), abs(cu[k - 1]["strain_bottom_pct"])) for k in carried]
        assert hinge["signal_copper_strain_pct"] == pytest.approx(max(peaks), rel=1e-9)


def test_every_line_passes_an_independent_field_solve(dock_front):
    # the 2-D field solver on each line's own layered cross-section from the layer list
    from strainline.optimizer.search.verify import verify_front

    front = copy.deepcopy(dock_front)
    front["candidates"] = front["candidates"][:3]
    out = verify_front(front, keep_unverified=True)
    for c in out["candidates"]:
        assert len(c["lines"]) == 3
        for ln in c["lines"]:
            fc = ln["field_check"]
            assert fc["passed"], (c["id"], ln["name"], fc["reasons"])
    assert out["field_verification"]["failed_candidates"] == 0


def test_one_line_in_lines_form_equals_the_line_form(tmp_path, run_cli):
    base = {"name": "one", "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 400],
                                    "frequency_ghz": 2},
            "bend": {"inner_radius_mm": 5, "use": "dynamic", "cycles": 3000},
            "stack": {"copper_layers": 2, "copper_weights": ["1/3oz", "1/2oz"], "dielectric": ["polyimide-film"],
                      "dielectric_thickness_um": [25, 50], "adhesive": ["none", "acrylic-adhesive"],
                      "adhesive_thickness_um": [25], "coverlay": ["polyimide-coverlay-acrylic", "none"]},
            "search": {"impedance": "closed-form"}}
    many = copy.deepcopy(base)
    many["lines"] = [dict(many.pop("line"), name="line", layer="auto")]
    fronts = []
    for k, d in enumerate((base, many)):
        p = tmp_path / f"s{k}.yaml"
        p.write_text(yaml.safe_dump(d, sort_keys=False))
        code, _, err = run_cli("solve", p, "--out", tmp_path / f"o{k}", "--quiet")
        assert code == 0, err
        f = json.loads((tmp_path / f"o{k}" / "front.json").read_text())
        fronts.append([(c["objectives"], c["line"]["width_um"], c["line"]["layer"]) for c in f["candidates"]])
    assert fronts[0] and fronts[0] == fronts[1]


def test_several_line_columns_are_the_worst_line(dock_front):
    # the study's constraint column is the largest of the lines' own columns (feasible = every line holds)
    from strainline.optimizer.search.linelayers import view_slots
    from strainline.optimizer.search.linetable import table_options
    from strainline.optimizer.search.problem import build_problem
    from strainline.optimizer.search.space import build_space

    study = load_study(DOCK)
    cat = load_catalog(study.catalog_path)
    with table_options(impedance="closed-form"):
        sp = build_space(study, cat)
        pb = build_problem(sp, cat)
    x = sp.index_to_x(np.random.default_rng(4).integers(0, sp.size, 3000))
    ev = pb.evaluate(x)
    slots = sp.slots(x)
    for name in ("impedance", "width_range", "gap_space", "equation_range", "yield"):
        col = ev.G[:, pb.constraint_names.index(name)]
        per = [sub._line_constraints_direct(sub.table.index(view_slots(slots, k))).get(name)
               for k, sub in enumerate(pb.lines)]
        per = [p for p in per if p is not None]
        np.testing.assert_array_equal(col, np.max(np.stack(per, 1), 1))
    assert ev.line_rows.shape == (3000, 3)


@pytest.mark.parametrize("edit,path,words", [
    (lambda d: d.update(line={"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 400]}), "line",
     "not both"),
    (lambda d: d["lines"][1].update(name="antenna"), "lines[1].name", "unique"),
    (lambda d: d["lines"][1].update(share_with=["displai"]), "lines[1].share_with[0]", "display"),
    (lambda d: d.update(loss_line="hdmi"), "loss_line", "antenna"),
    (lambda d: d["stack"].update(signal_layer=1), "stack.signal_layer", "lines[i].layer"),
    (lambda d: d["lines"][0].update(layer=2), "lines[0].layer", "outer"),
    (lambda d: d["lines"][0].update(layer=9), "lines[0].layer", "8"),
    (lambda d: d.update(lines=[]), "lines", "empty"),
    (lambda d: d["lines"][0].update(gap_um=50), "lines[0].gap_um", "not by 'microstrip'"),
    (lambda d: d["lines"][2].pop("name"), "lines[2].name", "required"),
])
def test_bad_lines_are_one_line_errors(edit, path, words):
    data = yaml.safe_load(DOCK.read_text())
    data.pop("catalog")
    data["stack"]["dielectric"] = ["adhesiveless-polyimide-core"]
    edit(data)
    with pytest.raises(StudyError) as exc:
        validate_study(data, CAT, file="s.yaml")
    msg = str(exc.value)
    assert path in msg and words in msg and "\n" not in msg


def test_study_time_limit_sends_auto_to_the_evolutionary_search(tmp_path, run_cli):
    # the study's search.time_limit_s is the auto limit when --time-limit is not given
    data = yaml.safe_load(DOCK.read_text())
    data["catalog"] = str((DOCK.parent / data["catalog"]).resolve())
    data["search"].update(time_limit_s=1e-6, budget=300, impedance="closed-form")
    p = tmp_path / "s.yaml"
    p.write_text(yaml.safe_dump(data, sort_keys=False))
    code, _, err = run_cli("solve", p, "--out", tmp_path / "o", "--quiet", "--workers", "1")
    assert code == 0, err
    s = json.loads((tmp_path / "o" / "front.json").read_text())["search"]
    assert s["method"] == "evolutionary" and s["time_limit_s"] == 1e-6
    data["search"]["time_limit_s"] = 0
    p.write_text(yaml.safe_dump(data, sort_keys=False))
    with pytest.raises(StudyError, match="search.time_limit_s"):
        load_study(p)
