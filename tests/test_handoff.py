"""Handoff sheets: every number equals front.json's, the CSV parses with pandas, tolerances follow
the catalog and the published capability table, the cautions and construction notes are there."""
from __future__ import annotations

import io
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pandas as pd
import pytest

from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.outputs.sheets import CSV_COLUMNS, build_handoff, write_handoff
from strainline.optimizer.outputs.report import CAUTION

FIXTURE = Path(__file__).parent / "fixtures" / "front_small.json"


@pytest.fixture(scope="module")
def front():
    return json.loads(FIXTURE.read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def files(front):
    return build_handoff(front, load_catalog())


def resolve(cand: dict, key: str):
    """Follow a key such as ``layers[3].thickness_um`` or ``line.geometry.er`` into a candidate."""
    node = cand
    for part in key.split("."):
        m = re.fullmatch(r"(\w+)\[(\d+)\]", part)
        node = node[m.group(1)][int(m.group(2))] if m else node[part]
    return node


def same(text: str, value) -> bool:
    if isinstance(value, bool):
        return text == ("true" if value else "false")
    if isinstance(value, (int, float)):
        return float(text) == float(value)
    return text == str(value)


class Cells(HTMLParser):
    def __init__(self):
        super().__init__()
        self.cells = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "data-key" in a:
            self.cells.append((a["data-key"], a["data-value"]))


def test_one_sheet_pair_per_candidate_and_an_index(front, files):
    ids = [c["id"] for c in front["candidates"]]
    assert sorted(files) == sorted([f"{i}.html" for i in ids] + [f"{i}.csv" for i in ids] + ["index.html"])
    for i in ids:
        assert f'href="{i}.html"' in files["index.html"] or f"href='{i}.html'" in files["index.html"]


def test_csv_parses_and_every_keyed_number_equals_front_json(front, files):
    for cand in front["candidates"]:
        df = pd.read_csv(io.StringIO(files[f"{cand['id']}.csv"]), dtype=str, keep_default_na=False)
        assert tuple(df.columns) == CSV_COLUMNS
        keyed = df[df["key"] != ""]
        assert len(keyed) >= 5 * len(cand["layers"])          # name, material, thickness, ... per layer
        for key, value in zip(keyed["key"], keyed["value"]):
            assert same(value, resolve(cand, key)), (cand["id"], key, value)
        # every layer appears, top to bottom, with its thickness
        th = df[(df["section"] == "stackup") & (df["quantity"] == "thickness")]
        assert [float(v) for v in th["value"]] == [lay["thickness_um"] for lay in cand["layers"]]
        # the headline figures are all there
        for key in ("objectives.total_thickness_um", "objectives.peak_strain_pct", "line.width_um", "line.z0_ohm",
                    "bend.inner_radius_mm", "bend.cycles_to_failure", "bend.region", "line.geometry.method"):
            assert key in set(keyed["key"]), key


def test_html_cells_carry_the_exact_front_json_values(front, files):
    for cand in front["candidates"]:
        p = Cells()
        p.feed(files[f"{cand['id']}.html"])
        assert len(p.cells) >= 5 * len(cand["layers"])
        for key, value in p.cells:
            assert same(value, resolve(cand, key)), (cand["id"], key, value)
        # the displayed text agrees with the value at display precision
        html = files[f"{cand['id']}.html"]
        m = re.search(r'data-key="line.width_um" data-value="([^"]+)"[^>]*>([^<]+)<', html)
        assert float(m.group(2)) == pytest.approx(float(m.group(1)), rel=5e-4)


def test_tolerances_follow_catalog_and_capability_table(front, files):
    cat = load_catalog()
    for cand in front["candidates"]:
        df = pd.read_csv(io.StringIO(files[f"{cand['id']}.csv"]), dtype=str, keep_default_na=False)
        tol = df[(df["section"] == "stackup") & (df["quantity"] == "thickness tolerance (+/-)") & (df["unit"] == "um")]
        for lay, v in zip(cand["layers"], tol["value"]):
            # polyimide film and adhesiveless core +/-10 %, adhesive +/-15 %, copper foil +/-10 % by weight:
            # materials.md section 5 (typical, from memory) as put in the shipped catalog
            rel = {"polyimide-film": 0.10, "adhesiveless-polyimide-core": 0.10, "acrylic-adhesive": 0.15,
                   "epoxy-adhesive": 0.15, "rolled-annealed": 0.10}[lay["material"]]
            assert float(v) == pytest.approx(lay["thickness_um"] * rel, rel=1e-12)
            if lay["kind"] == "dielectric":
                assert cat.dielectric(lay["material"]).thickness_tolerance == rel
        total = df[(df["section"] == "total") & (df["quantity"] == "total thickness tolerance (+/-)")]["value"]
        # flex fabricator capability table (materials.md section 4, source 10): +/-0.05 mm up to 0.3 mm thick
        assert cand["objectives"]["total_thickness_um"] <= 300
        assert float(total.iloc[0]) == pytest.approx(50.0, rel=1e-9)
        grade = df[df["quantity"] == "IPC-4562 grade"]["value"]
        # rolled-annealed = annealed wrought, IPC-TR-484 (1986) class W7 = IPC-4562 grade 7
        assert set(grade) == {"7"}


def test_cautions_and_construction_notes_with_sources(front, files):
    for name, text in files.items():
        if name.endswith(".html"):
            assert CAUTION.split(";")[0][:40] in text.replace("&#x27;", "'")
            for word in ("IPC-TM-650", "IPC-2223", "IPC-6013", "concept"):
                assert word in text
    for cand in front["candidates"]:
        df = pd.read_csv(io.StringIO(files[f"{cand['id']}.csv"]), dtype=str, keep_default_na=False)
        notes = df[df["section"] == "note"]
        assert len(notes) >= 5 + len(cand["findings"])
        assert (notes["note"] != "").all()                      # every note names a source or says "no source"
        text = " ".join(notes["value"])
        for phrase in ("rolled-annealed", "plated-through", "perpendicular", "glass-reinforced"):
            assert phrase in text
        assert (df["section"] == "caution").any()
        # the findings of the candidate are on its sheet
        for f in cand["findings"]:
            msg = f["message"] if isinstance(f, dict) else f
            assert msg in text


def test_reference_planes_of_a_stripline_are_both_neighbours(front, files):
    cand = front["candidates"][0]
    df = pd.read_csv(io.StringIO(files[f"{cand['id']}.csv"]), dtype=str, keep_default_na=False)
    refs = df[df["quantity"] == "reference planes"]["value"].iloc[0]
    assert refs == "L1 ground, L3 ground"


def test_write_puts_exactly_the_built_files_into_the_folder(front, tmp_path):
    """The sheets are written into the folder given (replacing a previous output set as a whole is the
    output-folder transaction's job, tested with it)."""
    paths = write_handoff(front, tmp_path)
    names = sorted(p.name for p in (tmp_path / "handoff").iterdir())
    assert names == sorted(p.name for p in paths) == sorted(build_handoff(front, load_catalog()))
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]   # no temporary files left


def test_field_check_rows_when_the_front_has_one(front, files):
    cand = front["candidates"][0]
    fc = cand["line"]["field_check"]
    df = pd.read_csv(io.StringIO(files[f"{cand['id']}.csv"]), dtype=str, keep_default_na=False)
    rows = df[df["section"] == "field-check"]
    got = dict(zip(rows["key"], rows["value"]))
    for k in ("z0_ohm", "eps_eff", "width_um", "closed_form_error_pct", "error_estimate_pct", "z_refined_ohm"):
        assert float(got[f"line.field_check.{k}"]) == fc[k]
    assert got["line.field_check.refined_width_in_range"] == "false"
    assert "line.field_check.seconds" not in got                 # run bookkeeping, not for the fabricator
    other = front["candidates"][1]
    df2 = pd.read_csv(io.StringIO(files[f"{other['id']}.csv"]), dtype=str, keep_default_na=False)
    assert list(df2.loc[df2["section"] == "field-check", "value"]) == ["not run"]


# ----------------------------------------------------------------------------- sheets a fabricator can quote from
def _csv(files, cid):
    return pd.read_csv(io.StringIO(files[f"{cid}.csv"]), dtype=str, keep_default_na=False)


def test_overall_tolerance_combines_the_layers_and_says_how(front, files):
    cat = load_catalog()
    for cand in front["candidates"]:
        df = _csv(files, cand["id"])
        layer_tol = [float(v) for v in df[(df["section"] == "stackup") & (df["unit"] == "um")
                                          & (df["quantity"] == "thickness tolerance (+/-)")]["value"]]
        total = df[df["section"] == "total"].set_index("quantity")
        worst = float(total.loc["total thickness tolerance, worst case (+/-)", "value"])
        rss = float(total.loc["total thickness tolerance, root-sum-square (+/-)", "value"])
        # tolerance stack-up: worst case = arithmetic sum, RSS = root of the sum of squares (K. W. Chase and
        # A. R. Parkinson, Research in Engineering Design 3 (1991) 23-37; from memory), at the sheet's 0.01 um
        assert worst == pytest.approx(sum(layer_tol), abs=0.006)
        assert rss == pytest.approx(sum(t * t for t in layer_tol) ** 0.5, abs=0.006)
        assert "worst case" in total.loc["total thickness tolerance, worst case (+/-)", "note"]
        html = files[f"{cand['id']}.html"]
        assert "worst case: the sum of the layer tolerances" in html and "root-sum-square" in html
    assert cat.fabrication.material_thickness_tolerance["copper-foil"] == 0.10


def test_derived_numbers_rounded_to_the_stated_precision(front, files):
    """No float noise (1.2000000000000002) in any derived CSV value and no 1e+02 on any sheet."""
    for cand in front["candidates"]:
        df = _csv(files, cand["id"])
        derived = df[(df["key"] == "") & df["value"].str.fullmatch(r"-?\d+(\.\d+)?")]
        assert len(derived) >= len(cand["layers"])
        for q, u, v in zip(derived["quantity"], derived["unit"], derived["value"]):
            decimals = len(v.split(".")[1]) if "." in v else 0
            assert decimals <= {"um": 2, "%": 2, "mm": 3}.get(u, 4), (q, v)
        html = files[f"{cand['id']}.html"]
        shown = re.findall(r">([^<>]*)</td>", html)
        assert not [t for t in shown if re.search(r"\de[+-]\d", t)]
        assert "0.01 um" in html                                   # the precision is stated
    from strainline.optimizer.outputs.formatting import fmt
    assert fmt(100.0, 2) == "100" and fmt(1.2000000000000002) == "1.2"


def test_etch_tolerance_loss_frequency_dk_frequency_and_coupon(front, files):
    cat = load_catalog()
    cand = front["candidates"][0]
    df = _csv(files, cand["id"])
    etch = df[(df["quantity"] == "trace width tolerance after etch (+/-)")]
    # catalog etched-width tolerance for 1/3 oz copper: +/-15 % (a public flex-fabricator capability table,
    # as put in the shipped catalog); the sheet applies it to the designed width
    rel = cat.fabrication.width_tolerance["1/3oz"]
    assert rel == 0.15
    assert float(etch["value"].iloc[0]) == pytest.approx(rel * cand["line"]["width_um"], abs=0.006)
    loss = df[df["quantity"].str.startswith("line loss")]
    assert (loss["quantity"].str.contains(f"at {front['study']['line']['frequency_ghz']:g} GHz")).all() and len(loss)
    dk = df[(df["quantity"] == "Dk") & (df["item"] == cand["layers"][0]["name"])]
    f_ghz = cat.dielectric(cand["layers"][0]["material"]).dk_frequency_hz / 1e9
    assert f"at {f_ghz:g} GHz" in dk["note"].iloc[0]
    method = df[df["quantity"] == "coupon test method"]["value"].iloc[0]
    assert "IPC-TM-650 2.5.5.7" in method and "TDR" in method     # impedance by TDR: IPC-TM-650 method 2.5.5.7


def test_drawing_fields_hatch_and_bend_zone(front, files):
    import math

    cand = front["candidates"][0]
    df = _csv(files, cand["id"])
    drawing = df[df["section"] == "drawing"].set_index("quantity")
    for q in ("IPC-6013 performance class", "bend-zone length", "stiffener", "surface finish"):
        assert drawing.loc[q, "value"] == "to fill in", q
    # bend zone: arc of the mid-plane, angle x (R + T/2) (circle geometry), 90 and 180 degrees
    r_mm, t_mm = cand["bend"]["inner_radius_mm"], cand["objectives"]["total_thickness_um"] / 1000
    for deg in (90, 180):
        arc = math.radians(deg) * (r_mm + t_mm / 2)
        assert f"{deg} deg -> {arc:.3f}".rstrip("0") in drawing.loc["bend-zone length", "note"]
    # hatch of the 15 % signal-layer copper: a square grid of lines w at pitch p covers 1 - (1 - w/p)^2
    hatch = df[df["quantity"].str.startswith("hatch of")]
    assert len(hatch) == sum(1 for lay in cand["layers"] if lay["kind"] == "copper" and lay["coverage"] < 1)
    ratio = float(re.search(r"= ([0-9.]+) gives", hatch["note"].iloc[0]).group(1))
    assert 1 - (1 - ratio) ** 2 == pytest.approx(0.15, abs=2e-4)


def _variant(front, **changes):
    cand = json.loads(json.dumps(front["candidates"][0]))
    for k, v in changes.items():
        cand[k] = v
    return dict(front, candidates=[cand])


def test_notes_never_contradict_the_candidate(front):
    cat = load_catalog()
    base = front["candidates"][0]
    # electrodeposited copper chosen for one layer: the note explains the choice, it does not order RA foil
    layers = json.loads(json.dumps(base["layers"]))
    layers[2]["material"] = layers[2]["foil"] = "high-ductility-ed"
    ed = build_handoff(_variant(front, layers=layers), cat)
    df = pd.read_csv(io.StringIO(ed[f"{base['id']}.csv"]), dtype=str, keep_default_na=False)
    notes = " ".join(df[df["section"] == "note"]["value"])
    assert "electrodeposited copper in L1 ground" in notes and "Pareto front" in notes
    assert not re.search(r"\bUse rolled-annealed", notes)
    # no coverlay: no coverlay-adhesive note
    bare = [lay for lay in base["layers"] if "cover" not in lay["name"]]
    nc = build_handoff(_variant(front, layers=bare), cat)
    df = pd.read_csv(io.StringIO(nc[f"{base['id']}.csv"]), dtype=str, keep_default_na=False)
    assert "Coverlay adhesive" not in " ".join(df[df["section"] == "note"]["value"])
    # with a coverlay the note is there (the fixture's candidates have one)
    df = pd.read_csv(io.StringIO(build_handoff(front, cat)[f"{base['id']}.csv"]), dtype=str, keep_default_na=False)
    assert "Coverlay adhesive must fill" in " ".join(df[df["section"] == "note"]["value"])


def test_unbonded_candidate_shows_the_bonded_build():
    from strainline.optimizer.outputs.sheetlookup import bonded_build, leaf_of_layers

    cand = {"layers": [{"kind": "copper"}, {"kind": "dielectric"}, {"kind": "copper"},
                       {"kind": "air-gap", "thickness_um": 40.0}, {"kind": "copper"}],
            "choices": {"film[1]": "adhesiveless-polyimide-core 25um", "adhesive[1]": "acrylic-adhesive 15um",
                        "placement[1]": "above"}}
    assert bonded_build(cand) == {3: "adhesiveless-polyimide-core 25 um + acrylic-adhesive 15 um (40.0 um)"}
    cand["layers"][3]["thickness_um"] = 15.0               # only the gap's adhesive is air in the bend
    assert bonded_build(cand) == {3: "acrylic-adhesive 15 um (15.0 um)"}
    cand["layers"][3]["thickness_um"] = 7.0
    assert bonded_build(cand) == {3: "bond material to be agreed (7.0 um)"}
    assert leaf_of_layers(cand["layers"]) == [1, 1, 1, None, 2]


def test_hatch_yield_and_field_verdict_read_from_front_json(front):
    """Keys other parts of strainline add to a candidate show when present: the hatch geometry a study gives
    (line.hatch), the impedance yield (line.impedance_yield) and a failed field verification."""
    from strainline.optimizer.outputs.pagedata import field_flag

    cat = load_catalog()
    cand = json.loads(json.dumps(front["candidates"][0]))
    sig_copper = [i for i, lay in enumerate(cand["layers"]) if lay["kind"] == "copper"].index(4) + 1
    cand["line"]["hatch"] = {"layer": sig_copper, "pitch_um": 500.0, "line_width_um": 39.0, "angle_deg": 45.0}
    cand["line"]["impedance_yield"] = {"yield_pct": 93.25, "dominant": "trace width"}
    files = build_handoff(dict(front, candidates=[cand]), cat)
    df = pd.read_csv(io.StringIO(files[f"{cand['id']}.csv"]), dtype=str, keep_default_na=False)
    hatch = df[df["quantity"].str.startswith("hatch of L2 signal")]
    assert hatch["value"].iloc[0] == "pitch 500 um, line width 39 um, angle 45 deg"
    yld = df[df["key"] == "line.impedance_yield.yield_pct"]
    assert float(yld["value"].iloc[0]) == 93.25 and "trace width" in yld["note"].iloc[0]
    cand["line"]["field_check"] = dict(cand["line"]["field_check"], passed=False, reasons=["width out of range"])
    flag = field_flag(cand, front, cat)
    assert flag["mismatch"] and "width out of range" in flag["text"]
    ok = front["candidates"][0]
    assert field_flag(ok, front, cat)["mismatch"] is False         # 49.12 ohm: -1.8 % of 50, inside +/-10 %
