"""report.html content (self-contained, data embedded) and `strainline report` on good and bad input."""
from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest

from strainline.optimizer.outputs import sheets as handoff
from strainline.optimizer.outputs.report import (
    CAUTION,
    build_report_html,
    decision_table,
    layer_heights,
    reference_indices,
    signal_index,
)

FIXTURE = Path(__file__).parent / "fixtures" / "front_small.json"


@pytest.fixture
def front():
    return json.loads(FIXTURE.read_text(encoding="utf-8"))


@pytest.fixture
def solved(tmp_path, front):
    d = tmp_path / "run"
    d.mkdir()
    shutil.copy(FIXTURE, d / "front.json")
    return d


def test_report_is_one_self_contained_file_with_the_data(front):
    page = build_report_html(front)
    assert not re.search(r"<script[^>]+\bsrc=", page)                # plotly.js inlined, nothing fetched
    assert "<link" not in page and "<iframe" not in page
    assert "cdn.plot.ly/plotly" not in page.split("<body>")[1]
    m = re.search(r'<script type="application/json" id="strainline-data">(.*?)</script>', page, re.S)
    data = json.loads(m.group(1))
    assert [c["id"] for c in data["candidates"]] == [c["id"] for c in front["candidates"]]
    assert data["objectives"] == ["peak_strain_pct", "total_thickness_um", "loss_db_per_m"]
    assert len(data["dominated"]) == len(front["dominated"])
    assert data["strain_limit_pct"] == front["study"]["limits"]["peak_strain_pct"]
    assert CAUTION.replace("'", "&#x27;") in page
    for word in ("hypervolume", "evaluated", "exhaustive", front["version"]):
        assert word in page


def test_nan_in_front_does_not_break_the_embedded_json(front):
    front["candidates"][0]["line"]["gap_um"] = float("nan")
    page = build_report_html(front)
    m = re.search(r'id="strainline-data">(.*?)</script>', page, re.S)
    assert json.loads(m.group(1))["candidates"][0]["line"]["gap_um"] is None


def test_layer_heights_stack_from_the_bottom_face(front):
    c = front["candidates"][0]
    h = layer_heights(c["layers"])
    assert h[-1][0] == 0.0
    assert h[0][1] == pytest.approx(c["objectives"]["total_thickness_um"], rel=1e-12)
    assert all(a[0] == pytest.approx(b[1]) for a, b in zip(h, h[1:]))
    # exact bend strain at every face, DESIGN.md section 3: (y - y_na) / (R + y_na), bottom face inside
    y_na, r_um = c["bend"]["neutral_axis_um"], 1000.0 * c["bend"]["inner_radius_mm"]
    for lay, (bot, top) in zip(c["layers"], h):
        assert lay["strain_top_pct"] == pytest.approx(100 * (top - y_na) / (r_um + y_na), abs=1e-4)
        assert lay["strain_bottom_pct"] == pytest.approx(100 * (bot - y_na) / (r_um + y_na), abs=1e-4)


def test_signal_and_reference_layers(front):
    c = front["candidates"][0]
    assert signal_index(c) == 4
    assert reference_indices(c) == [2, 7]
    micro = json.loads(json.dumps(c))
    micro["line"]["type"] = "microstrip"
    micro["line"]["layer"] = "L1 ground"
    assert reference_indices(micro) == [4]            # nearest copper below
    micro["line"]["layer"] = 1                        # copper layer number from the top
    assert signal_index(micro) == 2


def test_decision_table_keeps_varying_dimensions(front):
    dims = decision_table(front["candidates"])
    labels = [d["label"] for d in dims]
    assert "width (um)" in labels
    assert "cover adhesive top t (um)" not in labels        # 25 um in every candidate
    for d in dims:
        assert len(d["values"]) == len(front["candidates"])
        assert len(set(map(str, d["values"]))) > 1


def test_cli_rebuilds_report_and_sheets(run_cli, solved, front):
    code, out, err = run_cli("report", solved)
    assert code == 0, err
    assert (solved / "report.html").stat().st_size > 1_000_000
    sheets = sorted(p.name for p in (solved / "handoff").iterdir())
    assert len(sheets) == 2 * len(front["candidates"]) + 1
    assert "caution" in out.lower()
    code, out, err = run_cli("report", solved / "front.json", "--quiet")
    assert code == 0 and out == ""


@pytest.mark.parametrize("content, expect", [
    (None, "front.json: file not found"),
    ("{not json", "not valid JSON at line 1"),
    ("[1, 2]", "expected a JSON object"),
    ('{"candidates": 3}', "candidates: missing 'candidates'"),
    ('{"candidates": [{"id": "a b", "objectives": {}}]}', "candidates[0].id"),
    ('{"candidates": [{"id": "c1", "objectives": {"peak_strain_pct": 1.0}, "layers": []}]}',
     "candidates[0].objectives.total_thickness_um"),
    ('{"candidates": [{"id": "c1", "objectives": {"peak_strain_pct": 1.0, "total_thickness_um": 9}, '
     '"layers": [{"kind": "foil", "thickness_um": 9}]}]}', "candidates[0].layers[0].kind"),
])
def test_cli_bad_front_is_one_line_exit_2(run_cli, tmp_path, content, expect):
    if content is not None:
        (tmp_path / "front.json").write_text(content, encoding="utf-8")
    code, out, err = run_cli("report", tmp_path)
    assert code == 2
    assert err.count("\n") == 1 and "Traceback" not in err
    assert expect in err
    assert not (tmp_path / "report.html").exists() and not (tmp_path / "handoff").exists()


def test_cli_missing_folder_exit_2(run_cli, tmp_path):
    code, out, err = run_cli("report", tmp_path / "nowhere")
    assert code == 2 and "nowhere" in err and err.count("\n") == 1


def test_failure_while_building_leaves_previous_outputs_untouched(run_cli, solved, monkeypatch):
    assert run_cli("report", solved)[0] == 0
    before = {p.name: p.read_bytes() for p in (solved / "handoff").iterdir()}
    report_before = (solved / "report.html").read_bytes()

    def boom(sheet):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(handoff, "sheet_csv", boom)
    code, out, err = run_cli("report", solved)
    assert code == 1 and "disk on fire" in err
    assert {p.name: p.read_bytes() for p in (solved / "handoff").iterdir()} == before
    assert (solved / "report.html").read_bytes() == report_before
    assert not [p for p in solved.iterdir() if p.name.startswith(".")]


def test_text_from_front_json_is_escaped(front):
    """A hostile layer name stays text in the page data, the report and the sheets."""
    evil = '</script><img src=x onerror="alert(1)">'
    front["candidates"][0]["layers"][0]["name"] = evil
    page = build_report_html(front)
    assert evil not in page
    m = re.search(r'id="strainline-data">(.*?)</script>', page, re.S)
    assert json.loads(m.group(1))["candidates"][0]["layers"][0]["name"] == evil
    files = handoff.build_handoff(front)
    sheet = files[f"{front['candidates'][0]['id']}.html"]
    assert evil not in sheet and "&lt;/script&gt;&lt;img" in sheet


def _without_study_limit(front, **bend):
    front["study"]["limits"] = {}
    front["study"]["bend"].update(bend)
    for c in front["candidates"]:
        c["bend"].pop("use", None)
    return front


@pytest.mark.parametrize("motion, per_cycle_peak_pct", [
    # Engelmaier strain range allowed for 1e4 cycles, RA copper D_f 0.65, S_u 230 MPa, E 118 GPa:
    # 0.52 % (bending reference notes, section 3.6 inverse table, computed from Engelmaier's equation);
    # flat-to-bent: peak = range; reversed bending: range = 2 x peak
    ("flat-to-bent", 0.52),
    ("reversed", 0.26),
])
def test_strain_limit_from_required_cycles(front, motion, per_cycle_peak_pct):
    from types import SimpleNamespace

    from strainline.optimizer.outputs.report import strain_limits

    # the typical published rolled-annealed set (IPC-TM-650 2.4.2.1 style data, from memory), given as a
    # catalog of its own so the check does not follow the shipped catalog's tuning
    ra = SimpleNamespace(fatigue_ductility=0.65, tensile_strength_pa=230e6, modulus_pa=118e9)
    cat = SimpleNamespace(foils={"rolled-annealed": ra})
    assert (ra.fatigue_ductility, ra.tensile_strength_pa, ra.modulus_pa) == (0.65, 230e6, 118e9)
    limits, basis = strain_limits(_without_study_limit(front, use="dynamic", cycles=1e4, motion=motion), cat)
    assert len(limits) == len(front["candidates"])
    for v in limits:                      # every fixture copper layer is rolled-annealed at 118 GPa
        assert v == pytest.approx(per_cycle_peak_pct, rel=0.01)
    assert "Engelmaier" in basis and motion in basis


def test_strain_limit_install_and_study_given(front):
    from strainline.optimizer.outputs.report import strain_limits

    limits, basis = strain_limits(front, None)
    assert limits == [5.0] * len(front["candidates"]) and "study" in basis
    limits, basis = strain_limits(_without_study_limit(front, use="install"), None)
    assert limits == [2.0] * len(front["candidates"])          # about 2 %: common practice, no source
    assert "common practice, no source" in basis


# ----------------------------------------------------------------------------- a report read at a glance
def _infeasible_front(front):
    front = json.loads(json.dumps(front))
    front["candidates"], front["dominated"] = [], []
    front["search"].update(evaluated=1000, feasible=0, infeasible={
        "violations": {"impedance": 120, "total_thickness": 900, "fatigue_life": 40},
        "nearest": [{"constraint": "total_thickness", "text": "total thickness limit", "excess": 0.25,
                     "limit": 100.0, "achieved": 125.0, "unit": "um", "bound": "at most"}],
        "nearest_choices": {"signal_layer": "copper 2", "copper[0]": "1/3oz rolled-annealed",
                            "film[0]": "polyimide-film 25um"},
        "message": "no feasible stackup"})
    return front


def test_infeasible_diagnosis_names_counts_limit_reached_and_what_to_relax(front):
    from strainline.optimizer.outputs.diagnosis import diagnosis

    d = diagnosis(_infeasible_front(front))
    rows = {r["key"]: r for r in d["rows"]}
    assert rows["total_thickness"]["count"] == "900" and rows["total_thickness"]["share"] == "90"
    assert rows["total_thickness"]["limit"] == "at most 100 um" and rows["total_thickness"]["reached"] == "125 um"
    assert rows["total_thickness"]["over"] == "25 %"
    assert rows["fatigue_life"]["limit"] == "at least 20,000 cycles"        # the study's bend.cycles
    assert rows["fatigue_life"]["reached"] == "met"
    assert d["relax"][0].startswith("Relax the total thickness limit first") and "125 um" in d["relax"][0]
    assert dict(d["nearest"]) == {"signal layer": "L2", "L1 copper": "1/3oz rolled-annealed",
                                  "film L1-L2": "polyimide-film 25um"}
    assert diagnosis(front) is None
    page = build_report_html(_infeasible_front(front))
    assert 'id="diagnosis"' in page and 'id="front"' not in page
    from strainline.optimizer.outputs.frontfiles import format_table

    table = format_table(_infeasible_front(front)).splitlines()
    assert table[-1] == "candidates breaking each constraint: total thickness 900, impedance 120, fatigue life 40"


def test_search_panel_readable_keys_and_numbers(front):
    from strainline.optimizer.outputs.formatting import fmt
    from strainline.optimizer.outputs.pagedata import search_summary

    front = json.loads(json.dumps(front))
    front["search"].update(evaluated=269568, objectives=["signal_strain_pct", "total_thickness_um"],
                           dominated_sample=12)
    s = search_summary(front, "0.1")
    assert s["objectives"] == ["signal copper strain (%)", "total thickness (um)"]
    assert "dominated points kept for the background" in s and "dominated_sample" not in s
    assert fmt(s["evaluated"]) == "269,568" and fmt(2.696e5) == "269,600"
    page = build_report_html(front)
    assert "2.696e+05" not in page.split('id="search-summary"')[1].split("</section>")[0]


def test_true_objectives_come_from_the_search(front):
    from strainline.optimizer.outputs.pagedata import page_data

    front = json.loads(json.dumps(front))
    front["search"]["objectives"] = ["peak_strain_pct", "total_thickness_um", "loss_db_per_m"]
    front["candidates"][0]["objectives"]["total_thickness_um"] = None     # a gap in one candidate's figures
    front["candidates"][0]["bend"]["total_thickness_um"] = 163.5
    assert "total_thickness_um" in page_data(front, None)["true_objectives"]


def test_choices_named_from_one():
    from strainline.optimizer.outputs.formatting import readable_choice

    assert readable_choice("copper[0]", "1/3oz rolled-annealed") == ("L1 copper", "1/3oz rolled-annealed")
    assert readable_choice("film[1]", "x")[0] == "film L2-L3"
    assert readable_choice("signal_layer", "copper 2") == ("signal layer", "L2")
    assert readable_choice("cover[top]", "none")[0] == "top cover"



def test_readme_example_output_is_a_real_run(repo_root):
    """The README's `strainline solve` example quotes a real run of the demo study: the summary line (all but the
    seconds), the first rows of the table and the number of files written must match a run made now."""
    from strainline.optimizer.cli.solve import solve
    from strainline.optimizer.outputs.frontfiles import format_table

    text = (repo_root / "README.md").read_text(encoding="utf-8")
    m = re.search(r"\$ strainline solve (studies/\S+\.yaml)\n(.*?)\n\.\.\.\nwrote \S+: [^\n]*? and (\d+) more files\n",
                  text, re.S)
    assert m, "the README example block is missing"
    quoted = m.group(2).splitlines()
    front, _ = solve(repo_root / m.group(1), quiet=True)
    now = format_table(front).splitlines()
    strip = lambda line: re.sub(r" \([\d.]+ s\)$", "", line)     # noqa: E731 - run time differs run to run
    assert strip(quoted[0]) == strip(now[0])
    assert quoted[1:] == now[1:len(quoted)]
    assert int(m.group(3)) == 2 * len(front["candidates"]) + 1   # report.html, then a sheet pair each and the index


def test_palette_is_one_place_and_copper_stays_copper(repo_root):
    """report.css holds the family palette the page reads; its hues are the Okabe-Ito colour-blind-safe set
    (M. Okabe and K. Ito, Color Universal Design, 2008: sky blue #56B4E9, yellow #F0E442, blue #0072B2, bluish
    green #009E73, reddish purple #CC79A7, vermillion #D55E00), lightened towards white, and copper keeps the
    hue of copper (#B87333, the common web 'copper' colour)."""
    import colorsys

    from strainline.optimizer.outputs.stack import FAMILY_COLOURS

    css = (repo_root / "optimizer" / "outputs" / "static" / "report.css").read_text(encoding="utf-8")
    given = dict(re.findall(r"--family-([a-z-]+):\s*(#[0-9a-fA-F]{6})", css))
    assert {k: v.lower() for k, v in given.items()} == {k: v.lower() for k, v in FAMILY_COLOURS.items()}

    def hsv(h):
        return colorsys.rgb_to_hsv(*(int(h[i:i + 2], 16) / 255 for i in (1, 3, 5)))

    okabe_ito = {"film": "#56B4E9", "adhesive": "#F0E442", "core": "#0072B2", "laminate": "#009E73",
                 "cover": "#CC79A7"}
    for fam, base in okabe_ito.items():         # same hue, lighter: a tint of the published colour
        assert abs(hsv(given[fam])[0] - hsv(base)[0]) < 0.03, fam
        assert hsv(given[fam])[1] < hsv(base)[1] + 1e-9, fam
    assert given["copper"].lower() == "#b87333"
    assert re.search(r"--signal-trace:\s*#D55E00", css)
