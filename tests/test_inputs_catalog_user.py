"""The fabricator's own catalog: ``mode: add`` / ``replace``, ``--catalog`` on solve, bend and report,
a study's ``catalog:``, and the catalog recorded in front.json (content hash and entries).

Expectations are the catalog format's own rules as the README states them; the test material is
invented ("invented for a test" in its source), not a real product.
"""
from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
import yaml
from strainline.optimizer.errors import CatalogError
from strainline.optimizer.inputs.catalog import (
    catalog_digest,
    catalog_from_dict,
    catalog_subset,
    load_catalog,
)

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


def test_add_mode_adds_and_replaces_by_name_and_says_so(tmp_path):
    stiffer = {**load_catalog().to_dict()["dielectrics"]["polyimide-film"], "modulus_gpa": 5.0}
    folder = _user(tmp_path, {"materials.yaml": {"mode": "add", "dielectrics": {
        "fab-film": FILM, "polyimide-film": stiffer}}})
    cat = load_catalog(folder)
    shipped = load_catalog()
    assert set(cat.dielectrics) == set(shipped.dielectrics) | {"fab-film"}
    assert cat.dielectric("polyimide-film").modulus_pa == 5.0e9                 # same name: the user's entry
    assert cat.dielectric("lcp-film") == shipped.dielectric("lcp-film")          # the rest: built-in
    assert cat.foils == shipped.foils and cat.fabrication == shipped.fabrication  # files left out: built-in
    assert dict(cat.origin) == {"materials.yaml": "added", "copper.yaml": "built-in", "fabrication.yaml": "built-in"}


def test_fabrication_adds_key_by_key(tmp_path):
    folder = _user(tmp_path, {
        "copper.yaml": {"mode": "add", "weights": {"3oz": {"weight_oz": 3, "thickness_um": 105, "source": "x"}}},
        "fabrication.yaml": {"mode": "add", "min_feature": {"by_weight": {"3oz": {"trace_um": 300, "space_um": 300}}},
                             "width_tolerance": {"by_weight_pct": {"3oz": 25}}}})
    cat = load_catalog(folder)
    assert cat.fabrication.min_trace_m["3oz"] == pytest.approx(300e-6)
    assert cat.fabrication.min_trace_m["1oz"] == load_catalog().fabrication.min_trace_m["1oz"]


def test_adding_a_weight_without_its_fabrication_row_is_one_line(tmp_path):
    folder = _user(tmp_path, {"copper.yaml": {"mode": "add", "weights": {
        "3oz": {"weight_oz": 3, "thickness_um": 105, "source": "x"}}}})
    with pytest.raises(CatalogError) as exc:
        load_catalog(folder)
    assert str(exc.value).endswith("min_feature.by_weight.3oz: required entry is missing (every foil weight needs one)")


def test_bad_mode_and_bad_added_entry_name_the_user_file(tmp_path):
    folder = _user(tmp_path, {"materials.yaml": {"mode": "ad", "dielectrics": {"fab-film": FILM}}})
    with pytest.raises(CatalogError, match=r"materials.yaml: mode: 'ad' is not one of \['replace', 'add'\]; "
                                           r"did you mean 'add'\?"):
        load_catalog(folder)
    folder = _user(tmp_path, {"materials.yaml": {"mode": "add", "dielectrics": {"fab-film": {**FILM, "dk": 1e300}}}})
    with pytest.raises(CatalogError) as exc:
        load_catalog(folder)
    assert str(exc.value) == f"{folder / 'materials.yaml'}: dielectrics.fab-film.dk: must be <= 100, got 1e+300"


def test_replace_mode_needs_all_three_files(tmp_path):
    folder = _user(tmp_path, {"materials.yaml": {"mode": "replace", "dielectrics": {"fab-film": FILM}}})
    with pytest.raises(CatalogError, match="copper.yaml: file not found"):
        load_catalog(folder)


def test_digest_follows_content_not_location(tmp_path):
    folder = tmp_path / "copy"
    shutil.copytree(ROOT / "catalogs", folder)
    assert catalog_digest(load_catalog(folder)) == catalog_digest(load_catalog())
    changed = _user(tmp_path, {"materials.yaml": {"mode": "add", "dielectrics": {"fab-film": FILM}}})
    assert catalog_digest(load_catalog(changed)) != catalog_digest(load_catalog())


def test_recorded_entries_rebuild_the_same_records():
    cat = load_catalog()
    assert catalog_from_dict(cat.to_dict()) == cat
    part = catalog_subset(cat, dielectrics=["lcp-film"], coverlays=["polyimide-coverlay-epoxy"],
                          foils=["rolled-annealed"], weights=["1/3oz"])
    again = catalog_from_dict(json.loads(json.dumps(part)))
    assert set(again.dielectrics) == {"lcp-film", "polyimide-film", "epoxy-adhesive"}   # the coverlay's parts too
    assert again.dielectric("lcp-film") == cat.dielectric("lcp-film")
    assert again.coverlay("polyimide-coverlay-epoxy") == cat.coverlay("polyimide-coverlay-epoxy")
    assert again.fabrication.min_trace_m["1/3oz"] == cat.fabrication.min_trace_m["1/3oz"]
    with pytest.raises(CatalogError, match=r"front.json: catalog.entries: dielectrics.lcp-film.dk: must be"):
        catalog_from_dict({**part, "dielectrics": {"lcp-film": {**part["dielectrics"]["lcp-film"], "dk": -1}}})


def test_catalog_listing_says_what_the_user_catalog_did(run_cli, tmp_path):
    folder = _user(tmp_path, {"materials.yaml": {"mode": "add", "dielectrics": {"fab-film": FILM}}})
    code, out, err = run_cli("catalog", "--catalog", folder, "--section", "dielectrics")
    assert code == 0, err
    first = out.splitlines()[0]
    assert first == (f"Catalog {folder}: materials.yaml added to the built-in entries; copper.yaml built-in "
                     "(not in the folder); fabrication.yaml built-in (not in the folder)")
    assert "fab-film" in out and "lcp-film" in out
