"""``--catalog`` on solve, bend and report, a study's ``catalog:``, and the catalog recorded in
front.json (content hash and entries) from which ``strainline report`` rebuilds the same sheets.

Expectations are the catalog format's own rules as the README states them; the test material is
invented ("invented for a test" in its source), not a real product.
"""
from __future__ import annotations

import json
import shutil
from pathlib import Path

import yaml
from strainline.optimizer.inputs.catalog import catalog_digest, load_catalog

ROOT = Path(__file__).resolve().parents[1]
FILM = {
    "family": "film", "description": "the fabricator's polyimide film (invented for a test)",
    "modulus_gpa": 4.0, "poisson": 0.34, "dk": 3.3, "df": 0.004, "dk_freq_ghz": 10, "elongation_pct": 50,
    "glass_reinforced": False, "thicknesses_um": [25, 50], "thickness_tolerance_pct": 10,
    "source": "invented for a test",
}


def _user(tmp_path: Path, files: dict[str, dict]) -> Path:
    folder = tmp_path / "fab"
    folder.mkdir(exist_ok=True)
    for name, doc in files.items():
        (folder / name).write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return folder


def test_bend_reads_the_given_catalog(run_cli, tmp_path):
    folder = _user(tmp_path, {"materials.yaml": {"mode": "add", "dielectrics": {"fab-film": FILM}}})
    p = tmp_path / "s.yaml"
    p.write_text("layers:\n  - kind: copper\n    copper: rolled-annealed\n    weight: 1/2oz\n"
                 "  - material: fab-film\n    thickness_um: 25\n", encoding="utf-8")
    code, out, err = run_cli("bend", p, "--inner-radius-mm", "3", "--json", "--catalog", folder)
    assert code == 0, err
    assert "fab-film" in out
    code, _, err = run_cli("bend", p, "--inner-radius-mm", "3")
    assert code == 2 and "did you mean" in err and err.count("\n") == 1


SMALL = {
    "name": "fab-unit",
    "catalog": "fab",
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 500], "frequency_ghz": 2},
    "bend": {"inner_radius_mm": 6, "use": "install"},
    "stack": {"copper_layers": 2, "copper_weights": ["1/2oz"], "dielectric": ["fab-film"],
              "coverlay": ["polyimide-coverlay-acrylic"]},
    "objectives": ["peak_strain", "thickness"],
    "search": {"method": "exhaustive", "impedance": "closed-form"},
}


def test_solve_with_the_studys_catalog_records_it_and_report_rebuilds_from_it(run_cli, tmp_path):
    folder = _user(tmp_path, {"materials.yaml": {"mode": "add", "dielectrics": {"fab-film": FILM}}})
    study = tmp_path / "study.yaml"
    study.write_text(yaml.safe_dump(SMALL, sort_keys=False), encoding="utf-8")
    code, _, err = run_cli("solve", study, "--out", tmp_path / "out", "--quiet")
    assert code == 0, err
    front = json.loads((tmp_path / "out" / "front.json").read_text())
    rec = front["catalog"]
    assert rec["sha256"] == catalog_digest(load_catalog(folder))
    assert rec["origin"]["materials.yaml"] == "added"
    assert set(rec["entries"]["dielectrics"]) == {"fab-film", "polyimide-film", "acrylic-adhesive"}
    assert any(layer["material"] == "fab-film" for c in front["candidates"] for layer in c["layers"])
    sheet = (tmp_path / "out" / "handoff" / f"{front['candidates'][0]['id']}.html").read_text()
    shutil.rmtree(folder)          # the report needs only what front.json recorded
    code, _, err = run_cli("report", tmp_path / "out", "--quiet")
    assert code == 0, err
    assert (tmp_path / "out" / "handoff" / f"{front['candidates'][0]['id']}.html").read_text() == sheet
    # --catalog on the command line wins over the study's catalog:
    code, _, err = run_cli("solve", study, "--out", tmp_path / "out2", "--quiet", "--catalog", ROOT / "catalogs")
    assert code == 2 and "stack.dielectric[0]: 'fab-film' is not one of [" in err and err.count("\n") == 1
