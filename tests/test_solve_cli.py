"""``strainline solve`` end to end: the output contract, recomputation of reported figures from the
reported layers and geometry, shipped studies, infeasible studies, one-line errors."""
from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest
import yaml

from strainline.models.bending import bend_strains
from strainline.models.lines import LineGeometry, evaluate_line
from strainline.models.units import GPA, MM, UM

ROOT = Path(__file__).resolve().parents[1]
STUDIES = sorted((ROOT / "studies").glob("*.yaml"))

SMALL = {
    "name": "cli-unit",
    # a calibrated hatch factor: the hatched grounds without 3-D solves (tests/test_hatch*.py)
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 500], "frequency_ghz": 2,
             "hatch_correction": 1.12},
    "bend": {"inner_radius_mm": 6, "use": "dynamic", "cycles": 3000},
    "stack": {"copper_layers": 2, "copper_weights": ["1/3oz", "1/2oz"],
              "dielectric": ["polyimide-film", "lcp-film"],
              "adhesive": ["none", "acrylic-adhesive"], "adhesive_thickness_um": [15, 25],
              "coverlay": ["polyimide-coverlay-acrylic", "none"], "ground_coverage": [1.0],
              "ground_hatch": [{"pitch_um": 500, "line_width_um": 150, "angle_deg": 45}]},
    "objectives": ["signal_strain", "thickness", "loss", "life"],
    "search": {"seed": 5},
}


def write_study(tmp_path: Path, data: dict, name="study.yaml") -> Path:
    p = tmp_path / name
    p.write_text(yaml.safe_dump(data, sort_keys=False))
    return p


def engelmaier_residual(n, strain_range, d, su, e):
    # Engelmaier's copper-foil equation (IPC-TM-650 2.4.2.1, printed form from memory, bending.md 3.3):
    # N^-0.6 D^0.75 + 0.9 (S_u/E) [e^D/0.36]^(0.1785 log10(1e5/N)) - d_eps = 0
    return n ** -0.6 * d ** 0.75 + 0.9 * su / e * (np.exp(d) / 0.36) ** (0.1785 * np.log10(1e5 / n)) - strain_range


@pytest.fixture(scope="module")
def solved(tmp_path_factory):
    from strainline.optimizer.cli.main import main

    tmp = tmp_path_factory.mktemp("solve")
    study = write_study(tmp, SMALL)
    code = main(["solve", str(study), "--out", str(tmp / "out"), "--quiet"])
    assert code == 0
    return json.loads((tmp / "out" / "front.json").read_text()), tmp / "out"


def test_front_json_contract(solved):
    front, _ = solved
    assert set(front) >= {"study", "version", "seed", "search", "candidates", "caution"}
    assert front["study"]["name"] == "cli-unit" and front["seed"] == 5
    s = front["search"]
    assert set(s) >= {"method", "evaluated", "space_size", "feasible", "hypervolume", "reference_point", "seconds"}
    assert s["method"] == "exhaustive" and s["evaluated"] == s["space_size"]
    assert 0 < s["hypervolume"] and len(front["candidates"]) >= 3
    assert "IPC-2223" in front["caution"] and "coupons" in front["caution"]
    for c in front["candidates"]:
        assert set(c) >= {"id", "objectives", "line", "bend", "layers", "findings"}
        assert set(c["objectives"]) == {"signal_strain_pct", "total_thickness_um", "loss_db_per_m", "cycles_to_failure"}
        assert set(c["line"]) >= {"type", "layer", "width_um", "gap_um", "z0_ohm", "z_diff_ohm", "eps_eff",
                                  "geometry", "method"}
        assert set(c["line"]["geometry"]) >= {"height_um", "height_top_um", "thickness_um", "er", "er_top",
                                              "cover_um", "cover_er"}
        assert set(c["bend"]) >= {"inner_radius_mm", "inside", "neutral_axis_um", "region", "cycles_to_failure",
                                  "radius_to_thickness"}
        for lay in c["layers"]:
            assert set(lay) >= {"name", "material", "thickness_um", "modulus_gpa", "effective_modulus_gpa", "dk",
                                "df", "coverage", "strain_top_pct", "strain_bottom_pct"}


def test_candidates_are_feasible_and_mutually_non_dominated(solved):
    front, _ = solved
    cands = front["candidates"]
    # objectives to minimize (life is maximized)
    F = np.array([[c["objectives"]["signal_strain_pct"], c["objectives"]["total_thickness_um"],
                   c["objectives"]["loss_db_per_m"], -c["objectives"]["cycles_to_failure"]] for c in cands])
    for i in range(len(F)):
        dom = np.all(F <= F[i], axis=1) & np.any(F < F[i], axis=1)
        assert not dom.any(), f"{cands[i]['id']} is dominated"
    for c in cands:
        assert abs(c["line"]["z0_ohm"] / 50 - 1) <= 0.10 + 1e-12                 # impedance within tolerance
        assert c["bend"]["cycles_to_failure"] >= 3000                            # required life
        assert c["line"]["width_um"] >= 75 - 1e-9                                # 1/3oz minimum trace 75 um
        assert c["line"]["width_um"] <= 500 + 1e-9


def test_dominated_sample_lies_behind_the_front(solved):
    # Pareto dominance by definition (weakly worse everywhere, strictly somewhere), written here:
    # every background point the report draws is dominated by some front candidate, within the
    # search's objective resolution (the sample is on the grid, the candidates exact).
    front, _ = solved
    keys = ["signal_strain_pct", "total_thickness_um", "loss_db_per_m", "cycles_to_failure"]
    res = np.array([1e-3, 0.1, 0.01, 0.0])
    sign = np.array([1, 1, 1, -1])                      # life is maximized
    F = np.array([[c["objectives"][k] for k in keys] for c in front["candidates"]]) * sign
    D = front["dominated"]
    assert 0 < len(D) <= 1000 and len(D) <= front["search"]["feasible"]
    assert front["search"]["dominated_sample"] == len(D)
    for d in D:
        q = np.array([d["objectives"][k] for k in keys]) * sign
        life_tol = np.array([0, 0, 0, abs(q[3]) * 0.024])   # life grid: 0.01 decade
        assert np.any(np.all(F <= q + res / 2 + life_tol + 1e-9, axis=1)), d


def test_reported_strains_recompute_from_the_reported_layers(solved):
    # Exact strain (bending.md 1.2), bottom face inside: eps = (y - y_na)/(R + y_na), y_na the
    # transformed-section centroid of the reported effective moduli. By hand, and through the model.
    front, _ = solved
    R = 6 * MM
    for c in front["candidates"]:
        t = np.array([lay["thickness_um"] for lay in c["layers"]]) * UM
        e = np.array([lay["effective_modulus_gpa"] for lay in c["layers"]]) * GPA
        yb = np.cumsum(t[::-1])[::-1] - t
        yna = np.sum(e * t * (yb + t / 2)) / np.sum(e * t)
        assert c["bend"]["neutral_axis_um"] == pytest.approx(yna / UM, rel=1e-9)
        top = 100 * (yb + t - yna) / (R + yna)
        bot = 100 * (yb - yna) / (R + yna)
        np.testing.assert_allclose([lay["strain_top_pct"] for lay in c["layers"]], top, rtol=1e-9, atol=1e-12)
        np.testing.assert_allclose([lay["strain_bottom_pct"] for lay in c["layers"]], bot, rtol=1e-9, atol=1e-12)
        bs = bend_strains(t[None], e[None], R, True)
        np.testing.assert_allclose(100 * bs.strain_top[0], top, rtol=1e-12, atol=1e-15)
        cu = [i for i, lay in enumerate(c["layers"]) if lay["kind"] == "copper"]
        peak = max(max(abs(top[i]), abs(bot[i])) for i in cu)
        assert c["bend"]["peak_copper_strain_pct"] == pytest.approx(peak, rel=1e-9)
        sig = [i for i in cu if "signal" in c["layers"][i]["name"]][0]
        assert c["objectives"]["signal_strain_pct"] == pytest.approx(max(abs(top[sig]), abs(bot[sig])), rel=1e-9)
        assert c["objectives"]["total_thickness_um"] == pytest.approx(t.sum() / UM, rel=1e-12)
        assert c["bend"]["radius_to_thickness"] == pytest.approx(R / t.sum(), rel=1e-12)


def test_reported_fatigue_life_solves_engelmaiers_equation(solved):
    front, _ = solved
    from strainline.optimizer.inputs.catalog import load_catalog

    foil = load_catalog().foils["rolled-annealed"]
    for c in front["candidates"]:
        n = c["bend"]["cycles_to_failure"]
        strains = [max(abs(lay["strain_top_pct"]), abs(lay["strain_bottom_pct"])) / 100
                   for lay in c["layers"] if lay["kind"] == "copper"]
        rng = max(strains)                                   # flat-to-bent: range = peak
        res = engelmaier_residual(n, rng, foil.fatigue_ductility, foil.tensile_strength_pa, foil.modulus_pa)
        assert abs(res) <= 1e-9 * rng
        assert c["objectives"]["cycles_to_failure"] == pytest.approx(n, rel=1e-9)


def test_reported_impedance_recomputes_from_the_reported_geometry(solved):
    front, _ = solved
    for c in front["candidates"]:
        ln, g = c["line"], c["line"]["geometry"]
        # over a hatched plane the closed-form record is of the solid-plane row (line.solid_plane)
        geom = LineGeometry(width_m=ln.get("solid_plane", ln)["width_um"] * UM, height_m=g["height_um"] * UM,
                            thickness_m=g["thickness_um"] * UM, er=g["er"], cover_m=g["cover_um"] * UM,
                            cover_er=g["cover_er"])
        r = evaluate_line("microstrip", geom)
        # field model (the default): the closed form's own figure is kept beside the field value
        z_cf = ln["closed_form"]["z_ohm_at_width"] if ln.get("impedance_model") == "field" else ln["z0_ohm"]
        assert float(np.ravel(r.z0_ohm)[0]) == pytest.approx(z_cf, rel=1e-9)
        # the geometry is read off the reported layers: height = dielectric between signal and plane
        names = [lay["name"] for lay in c["layers"]]
        s = names.index(f"L{ln['layer']} signal")
        p = names.index("L2 ground") if ln["layer"] == 1 else names.index("L1 ground")
        between = c["layers"][min(s, p) + 1:max(s, p)]
        assert g["height_um"] == pytest.approx(sum(x["thickness_um"] for x in between), rel=1e-12)
        t = np.array([x["thickness_um"] for x in between])
        er = np.array([x["dk"] for x in between])
        assert g["er"] == pytest.approx(t.sum() / np.sum(t / er), rel=1e-12)   # series capacitance


def test_front_csv_has_one_row_per_candidate(solved):
    front, out = solved
    with (out / "front.csv").open(newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == len(front["candidates"])
    assert [r["id"] for r in rows] == [c["id"] for c in front["candidates"]]
    assert float(rows[0]["line.width_um"]) == pytest.approx(front["candidates"][0]["line"]["width_um"])
    assert "layers.1.strain_top_pct" in rows[0]
    assert all("IPC-2223" in r["caution"] and "coupons" in r["caution"] for r in rows)


def test_front_dataframe_view(solved):
    from strainline.optimizer.outputs.frontfiles import front_dataframe

    front, _ = solved
    df = front_dataframe(front)
    assert len(df) == len(front["candidates"]) and "objectives.total_thickness_um" in df.columns


@pytest.mark.parametrize("path", STUDIES, ids=[p.stem for p in STUDIES])
def test_every_shipped_study_runs(path, tmp_path, run_cli):
    """Every shipped study as written, except that a study with hatched grounds takes a calibrated
    hatch factor: the front candidates over a hatch then need no 3-D solves (seconds each;
    tests/test_hatch_study.py runs those)."""
    data = yaml.safe_load(path.read_text())
    if data["stack"].get("ground_hatch"):
        data["line"]["hatch_correction"] = 1.12
    if data.get("catalog"):
        data["catalog"] = str((path.parent / data["catalog"]).resolve())
    code, out, err = run_cli("solve", write_study(tmp_path, data), "--out", tmp_path / "out", "--method",
                             "evolutionary", "--budget", "1500", "--quiet")
    assert code == 0, err
    front = json.loads((tmp_path / "out" / "front.json").read_text())
    s = front["search"]
    assert s["method"] == "evolutionary"
    assert s["generation_evaluations"] + s["local_search_evaluations"] <= 1500 + 100
    assert s["feasible"] <= s["evaluated"]
    assert "caution" in out and "wrote" in out
    assert (tmp_path / "out" / "front.csv").exists()


def test_same_seed_gives_the_same_front(tmp_path, run_cli):
    study = write_study(tmp_path, SMALL)
    fronts = []
    for k in range(2):
        code, _, err = run_cli("solve", study, "--out", tmp_path / f"o{k}", "--method", "evolutionary",
                               "--budget", "800", "--seed", "9", "--quiet")
        assert code == 0, err
        f = json.loads((tmp_path / f"o{k}" / "front.json").read_text())
        fronts.append([(c["objectives"], c["choices"]) for c in f["candidates"]])
    assert fronts[0] == fronts[1]


def test_infeasible_study_exits_0_and_says_why(tmp_path, run_cli):
    data = json.loads(json.dumps(SMALL))
    data["limits"] = {"total_thickness_um": 20}
    study = write_study(tmp_path, data)
    code, out, err = run_cli("solve", study, "--out", tmp_path / "o")
    assert code == 0, err
    front = json.loads((tmp_path / "o" / "front.json").read_text())
    assert front["candidates"] == []
    msg = front["search"]["infeasible"]["message"]
    assert "total thickness limit" in msg and "% over the limit" in msg
    assert "no feasible stackup" in out


def test_bad_study_is_one_line_exit_2(tmp_path, run_cli):
    data = json.loads(json.dumps(SMALL))
    data["stack"]["dielectric"] = ["polyimide-film", "polimide"]
    study = write_study(tmp_path, data)
    code, out, err = run_cli("solve", study)
    assert code == 2
    assert err.strip().count("\n") == 0 and "Traceback" not in err
    assert "study.yaml: stack.dielectric[1]: 'polimide' is not one of [" in err
    assert "did you mean 'polyimide-film'?" in err


def test_bad_signal_layer_and_options(tmp_path, run_cli):
    data = json.loads(json.dumps(SMALL))
    data["stack"].update({"copper_layers": 3, "signal_layer": 2})
    code, _, err = run_cli("solve", write_study(tmp_path, data))
    assert code == 2 and "stack.signal_layer: 2 cannot carry a microstrip line" in err
    code, _, err = run_cli("solve", write_study(tmp_path, SMALL, "s2.yaml"), "--method", "genetic")
    assert code == 2 and "'genetic'" in err
    code, _, err = run_cli("solve", tmp_path / "missing.yaml")
    assert code == 2 and "file not found" in err


def test_reported_figures_match_the_bend_and_line_commands(solved, tmp_path, run_cli):
    # Round trip through the other commands: the candidate's layers written as a stackup file and
    # bent by `strainline bend`, its line geometry given to `strainline line`, give the same figures.
    from strainline.optimizer.inputs.catalog import load_catalog

    weights = {round(w.thickness_m / UM, 6): k for k, w in load_catalog().weights.items()}
    front, _ = solved
    for c in front["candidates"][:3]:
        layers = []
        for lay in c["layers"]:
            if lay["kind"] == "copper":
                layers.append({"name": lay["name"], "kind": "copper", "copper": lay["material"],
                               "weight": weights[round(lay["thickness_um"], 6)], "coverage": lay["coverage"]})
            else:
                layers.append({"name": lay["name"], "material": lay["material"], "thickness_um": lay["thickness_um"]})
        path = tmp_path / f"{c['id']}.yaml"
        path.write_text(yaml.safe_dump({"name": c["id"], "layers": layers}, sort_keys=False))
        code, out, err = run_cli("bend", path, "--inner-radius-mm", "6", "--use", "dynamic", "--json")
        assert code == 0, err
        rep = json.loads(out)
        assert rep["neutral_axis_um"] == pytest.approx(c["bend"]["neutral_axis_um"], rel=1e-12)
        assert rep["peak_copper_strain_pct"] == pytest.approx(c["bend"]["peak_copper_strain_pct"], rel=1e-9)
        np.testing.assert_allclose([x["strain_top_pct"] for x in rep["layers"]],
                                   [x["strain_top_pct"] for x in c["layers"]], rtol=1e-12)
        assert min(rep["cycles_to_failure"].values()) == pytest.approx(c["bend"]["cycles_to_failure"], rel=1e-9)
        ln, g = c["line"], c["line"]["geometry"]
        args = ["line", "microstrip", "--width-um", repr(ln.get("solid_plane", ln)["width_um"]),
                "--height-um", repr(g["height_um"]),
                "--thickness-um", repr(g["thickness_um"]), "--er", repr(g["er"]), "--json"]
        if g["cover_um"]:
            args += ["--cover-um", repr(g["cover_um"]), "--cover-er", repr(g["cover_er"])]
        code, out, err = run_cli(*args)
        assert code == 0, err
        z_cf = ln["closed_form"]["z_ohm_at_width"] if ln.get("impedance_model") == "field" else ln["z0_ohm"]
        assert json.loads(out)["z0_ohm"] == pytest.approx(z_cf, rel=1e-6)   # the command prints 6 decimals


def test_verify_flag_field_checks_the_front(tmp_path, run_cli):
    pytest.importorskip("strainline.optimizer.search.verify")
    data = {
        "name": "verify-unit",
        "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 500], "frequency_ghz": 2},
        "bend": {"inner_radius_mm": 6, "use": "dynamic", "cycles": 3000},
        "stack": {"copper_layers": 2, "copper_weights": ["1/3oz"], "dielectric": ["polyimide-film"],
                  "adhesive": ["none"], "coverlay": ["polyimide-coverlay-acrylic"]},
        "objectives": ["thickness"],
    }
    code, out, err = run_cli("solve", write_study(tmp_path, data), "--out", tmp_path / "o", "--verify", "--quiet")
    assert code == 0, err
    front = json.loads((tmp_path / "o" / "front.json").read_text())
    fv = front["field_verification"]
    assert fv["candidates"] == len(front["candidates"]) == 1 and fv["failed"] == 0
