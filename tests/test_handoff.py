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
