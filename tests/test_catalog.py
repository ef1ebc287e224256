"""The material catalog: shipped values against outside sources, validation, and `strainline catalog`.

Outside sources used here (named again beside each check):
* materials.md (the project's material reference notes) -- typical property ranges, mostly from
  memory; kept as data in tests/reference/catalog_typical_ranges.yaml with a source per entry;
* IPC-TR-484 (1986) copper-foil ductility round robin -- foil classes E1 standard ED, E2
  high-ductility ED, E3 high-temperature ED, W7 annealed wrought, i.e. IPC-4562 grades 1, 2, 3, 7;
* the definitions of the avoirdupois ounce (28.349523125 g) and the foot (0.3048 m), exact since
  the 1959 international yard and pound agreement, and copper density about 8.9 g/cm^3 (handbook
  value, from memory);
* IEC 60028 (international annealed copper standard): 100 % IACS = 1/0.017241 ohm mm^2/m.
"""
from __future__ import annotations

import json
import math
import shutil
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import yaml

from strainline.models.materials import CopperFoil, Coverlay, Dielectric, FoilWeight
from strainline.optimizer.inputs.catalog import CAUTION, SECTIONS, Catalog, load_catalog
from strainline.optimizer.errors import CatalogError

HERE = Path(__file__).resolve().parent
RANGES = yaml.safe_load((HERE / "reference" / "catalog_typical_ranges.yaml").read_text(encoding="utf-8"))
SHIPPED = Path(__file__).resolve().parents[1] / "catalogs"

# The catalog keys pinned in the interfaces other parts code against.
DIELECTRIC_KEYS = {
    "polyimide-film", "polyimide-film-high-modulus", "acrylic-adhesive", "epoxy-adhesive",
    "adhesiveless-polyimide-core", "lcp-film", "ptfe-flex-laminate", "low-loss-polyimide-film",
    "photoimageable-cover", "glass-thin-laminate", "fr4-stiffener",
}
COVERLAY_KEYS = {"polyimide-coverlay-acrylic", "polyimide-coverlay-epoxy"}
FOIL_KEYS = {"rolled-annealed", "electrodeposited", "low-profile-ed", "high-ductility-ed"}
WEIGHT_KEYS = {"1/4oz", "1/3oz", "1/2oz", "1oz", "2oz"}


@pytest.fixture(scope="module")
def cat() -> Catalog:
    return load_catalog()


# ---------------------------------------------------------------------------------------------
# the shipped catalog
# ---------------------------------------------------------------------------------------------
def test_loads_with_the_interface_keys(cat):
    assert set(cat.dielectrics) == DIELECTRIC_KEYS
    assert set(cat.coverlays) == COVERLAY_KEYS
    assert set(cat.foils) == FOIL_KEYS
    assert set(cat.weights) == WEIGHT_KEYS
    assert all(isinstance(v, Dielectric) for v in cat.dielectrics.values())
    assert all(isinstance(v, Coverlay) for v in cat.coverlays.values())
    assert all(isinstance(v, CopperFoil) for v in cat.foils.values())
    assert all(isinstance(v, FoilWeight) for v in cat.weights.values())
    for c in cat.coverlays.values():  # both coverlays: polyimide-film + an adhesive (issue 2)
        assert c.film == "polyimide-film"
        assert cat.dielectric(c.adhesive).family == "adhesive"


def test_default_catalog_is_cached(cat):
    assert load_catalog() is cat


def test_every_entry_names_its_source(cat):
    records = [*cat.dielectrics.values(), *cat.coverlays.values(), *cat.foils.values(), *cat.weights.values()]
    for rec in records:
        assert rec.source.strip(), rec.name
    for key, text in cat.fabrication.sources.items():
        assert text.strip(), key
    # A value from memory must say so (project rule): every dielectric and foil entry is at least
    # partly from memory, as its typical-range reference below records.
    for rec in [*cat.dielectrics.values(), *cat.foils.values()]:
        assert "from memory" in rec.source, rec.name


def test_records_are_si(cat):
    # Edge units in the files, SI in the records: E of rolled-annealed copper 118 GPa in copper.yaml.
    doc = yaml.safe_load((SHIPPED / "copper.yaml").read_text(encoding="utf-8"))
    ra = doc["foils"]["rolled-annealed"]
    foil = cat.foil("rolled-annealed")
    assert foil.modulus_pa == pytest.approx(ra["modulus_gpa"] * 1e9, rel=1e-12)
    assert foil.tensile_strength_pa == pytest.approx(ra["tensile_strength_mpa"] * 1e6, rel=1e-12)
    assert foil.fatigue_ductility == pytest.approx(ra["fatigue_ductility_pct"] / 100, rel=1e-12)
    assert foil.roughness_rq_m == pytest.approx(ra["roughness_rq_um"] * 1e-6, rel=1e-12)
    # IEC 60028: 100 % IACS is a resistivity of 0.017241 ohm mm^2/m, i.e. 58.0 MS/m (to 1e-4).
    iacs = 1.0 / 0.017241e-6
    assert foil.conductivity_s_per_m == pytest.approx(ra["conductivity_pct_iacs"] / 100 * iacs, rel=1e-4)
    pi = cat.dielectric("polyimide-film")
    assert pi.thicknesses_m[1] == pytest.approx(25e-6, rel=1e-12)
    assert pi.dk_frequency_hz == pytest.approx(10e9, rel=1e-12)


def test_to_dict_round_trips_the_files(cat):
    # Converting to SI and back to edge units reproduces every value written in the YAML files.
    d = cat.to_dict()
    mats = yaml.safe_load((SHIPPED / "materials.yaml").read_text(encoding="utf-8"))
    copper = yaml.safe_load((SHIPPED / "copper.yaml").read_text(encoding="utf-8"))
    fab = yaml.safe_load((SHIPPED / "fabrication.yaml").read_text(encoding="utf-8"))

    def norm(x: Any) -> Any:  # YAML folded text vs. the loader's whitespace-normalised text
        if isinstance(x, str):
            return " ".join(x.split())
        if isinstance(x, dict):
            return {k: norm(v) for k, v in x.items()}
        if isinstance(x, list):
            return [norm(v) for v in x]
        return x

    assert norm(d["dielectrics"]) == norm(mats["dielectrics"])
    assert norm(d["coverlays"]) == norm(mats["coverlays"])
    foils = {k: {f: v for f, v in e.items() if f != "conductivity_ms_per_m"} for k, e in d["foils"].items()}
    assert norm(foils) == norm(copper["foils"])
    assert norm(d["weights"]) == norm(copper["weights"])
    fab.pop("about")
    assert norm(d["fabrication"]) == norm(fab)


@pytest.mark.parametrize("name", sorted(DIELECTRIC_KEYS))
def test_dielectric_inside_typical_range(cat, name):
    # Source: materials.md section 1, typical ranges, from memory (per entry in the reference file).
    ref = RANGES["dielectrics"][name]
    assert ref["source"]
    row = cat.to_dict()["dielectrics"][name]
    checked = 0
    for field in ("modulus_gpa", "poisson", "dk", "df", "elongation_pct", "thickness_tolerance_pct"):
        if field in ref:
            lo, hi = ref[field]
            assert lo <= row[field] <= hi, f"{name}.{field} = {row[field]} outside [{lo}, {hi}] ({ref['source']})"
            checked += 1
    if "thicknesses_um" in ref:
        lo, hi = ref["thicknesses_um"]
        assert all(lo <= t <= hi for t in row["thicknesses_um"]), f"{name}.thicknesses_um outside [{lo}, {hi}]"
    assert checked >= 4  # E, nu, Dk and Df at least


@pytest.mark.parametrize("name", sorted(FOIL_KEYS))
def test_foil_inside_typical_range(cat, name):
    # Source: materials.md section 3.2 (mechanical) and 3.3 (roughness), typical, from memory.
    ref = RANGES["foils"][name]
    row = cat.to_dict()["foils"][name]
    for field in ("modulus_gpa", "poisson", "yield_strength_mpa", "tensile_strength_mpa",
                  "fatigue_ductility_pct", "roughness_rq_um"):
        lo, hi = ref[field]
        assert lo <= row[field] <= hi, f"{name}.{field} = {row[field]} outside [{lo}, {hi}] ({ref['source']})"


def test_every_entry_has_a_reference_range(cat):
    # Adding a material means adding its typical range to tests/reference (DEVELOPERS.md).
    assert set(RANGES["dielectrics"]) == set(cat.dielectrics)
    assert set(RANGES["foils"]) == set(cat.foils)


@pytest.mark.parametrize("name", sorted(FOIL_KEYS))
def test_ipc4562_grades(cat, name):
    # IPC-TR-484 (1986) round-robin classes: E1 standard ED, E2 high-ductility ED, E3 HTE ED,
    # W7 annealed wrought -> IPC-4562 grades 1, 2, 3, 7 (materials.md section 3.1).
    ref = RANGES["foils"][name]
    foil = cat.foil(name)
    assert foil.ipc4562_grade == ref["ipc4562_grade"]
    assert foil.copper_type == ref["copper_type"]


def test_ra_is_grade_7_and_standard_ed_grade_1(cat):
    # IPC-TR-484 (1986): W7 annealed wrought = "rolled-annealed", E1 standard electrodeposited.
    assert cat.foil("rolled-annealed").ipc4562_grade == 7
    assert cat.foil("electrodeposited").ipc4562_grade == 1
    # Annealed wrought is the one IPC-TR-484 recommends for severe flexing: the catalog must give
    # it the largest fatigue ductility of the foils it lists.
    assert cat.foil("rolled-annealed").fatigue_ductility == max(f.fatigue_ductility for f in cat.foils.values())


@pytest.mark.parametrize("name", sorted(WEIGHT_KEYS))
def test_foil_thickness_agrees_with_area_weight(cat, name):
    # 1 oz/ft^2 = 28.349523125 g / 0.3048^2 m^2 = 305.15 g/m^2 (exact unit definitions); copper
    # density 8.9 g/cm^3 (handbook, from memory); t = m'' / rho [derived]. The traded nominal
    # thickness must agree within the foil-weight tolerance of +/-10 % (materials.md section 3.4/5,
    # from memory).
    w = cat.weight(name)
    num, _, den = name.removesuffix("oz").partition("/")
    oz = int(num) / (int(den) if den else 1)
    assert w.weight_oz == pytest.approx(oz, rel=1e-5)
    g_per_m2 = oz * 28.349523125 / 0.3048**2
    t_um = g_per_m2 / 8.9  # g/m^2 over g/cm^3 = um
    assert abs(w.thickness_m * 1e6 / t_um - 1.0) <= 0.10, (name, w.thickness_m * 1e6, t_um)


def test_one_ounce_is_305_g_per_m2():
    # Cross-check of the arithmetic above against the figure quoted in materials.md section 3.4.
    assert 28.349523125 / 0.3048**2 == pytest.approx(305.15, abs=0.01)


def test_fabrication_capability(cat):
    fab = cat.fabrication
    # materials.md section 4: controlled impedance +/-10 % standard, +/-8 % tight (rigid-flex
    # table); +/-5 % by special agreement is common practice, no source.
    assert dict(fab.impedance_tolerance) == pytest.approx({"standard": 0.10, "tight": 0.08, "special": 0.05})
    assert set(fab.min_trace_m) == set(fab.min_space_m) == set(fab.width_tolerance) == WEIGHT_KEYS
    for w in WEIGHT_KEYS:
        # materials.md section 4: the spread of the fabricators' standard and advanced columns.
        lo, hi = RANGES["min_feature_um"][w]
        assert lo <= fab.min_trace_m[w] * 1e6 <= hi, w
        assert lo <= fab.min_space_m[w] * 1e6 <= hi, w
        # Etched line and space at least about 1x the copper thickness: common practice, no source.
        assert fab.min_trace_m[w] >= cat.weight(w).thickness_m
        assert fab.min_space_m[w] >= cat.weight(w).thickness_m
    # materials.md section 4 (source 10b): width tolerance +/-15 % for thin copper, +/-20 % for 1/2-1 oz.
    assert fab.width_tolerance["1/4oz"] == pytest.approx(0.15)
    assert fab.width_tolerance["1/3oz"] == pytest.approx(0.15)
    assert fab.width_tolerance["1/2oz"] == pytest.approx(0.20)
    assert fab.width_tolerance["1oz"] == pytest.approx(0.20)
    # materials.md section 5: copper foil +/-10 % by weight, polyimide film +/-10 %.
    assert fab.material_thickness_tolerance["copper-foil"] == pytest.approx(0.10)
    assert fab.material_thickness_tolerance["film"] == pytest.approx(0.10)
    # materials.md section 4 (source 10): FR-4 stiffener +/-0.1 mm.
    assert fab.stiffener_thickness_tolerance_m == pytest.approx(0.1e-3)


def test_dk_tolerance_of_every_shipped_dielectric(cat):
    # Every shipped dielectric gives its own Dk tolerance and says where it comes from; the values
    # sit inside +/-1-10 %, the span of flex and laminate data-sheet Dk tolerances (about +/-0.05 on
    # filled PTFE to +/-0.3 on adhesives, around Dk 3-4.5; from memory).
    mats = yaml.safe_load((SHIPPED / "materials.yaml").read_text(encoding="utf-8"))["dielectrics"]
    for name, entry in mats.items():
        assert "dk_tolerance_pct" in entry, name
        assert "Dk tolerance" in entry["source"] and "from memory" in entry["source"], name
        assert 1.0 <= entry["dk_tolerance_pct"] <= 10.0, name
        assert cat.dk_tolerance_of(name) == pytest.approx(entry["dk_tolerance_pct"] / 100)
    fab = yaml.safe_load((SHIPPED / "fabrication.yaml").read_text(encoding="utf-8"))
    assert cat.fabrication.dk_tolerance_default == pytest.approx(fab["dk_tolerance"]["default_pct"] / 100)
    assert "from memory" in cat.fabrication.sources["dk_tolerance"]


def test_dk_tolerance_falls_back_to_the_fabrication_default(tmp_path):
    # the format's rule (catalogs/materials.yaml header): a dielectric without dk_tolerance_pct takes
    # fabrication.yaml dk_tolerance.default_pct; with neither it has none (held exactly)
    folder = _copy(tmp_path)
    _edit(folder, "materials.yaml", _drop("dielectrics", "lcp-film", "dk_tolerance_pct"))
    _edit(folder, "fabrication.yaml", _set("dk_tolerance", "default_pct", 7))
    got = load_catalog(folder)
    assert got.dk_tolerance_of("lcp-film") == pytest.approx(0.07)
    assert got.dk_tolerance_of("polyimide-film") == pytest.approx(0.05)
    _edit(folder, "fabrication.yaml", _drop("dk_tolerance"))
    got = load_catalog(folder)
    assert got.dk_tolerance_of("lcp-film") is None
    assert got.fabrication.dk_tolerance_default is None
    assert "dk_tolerance" not in got.to_dict()["fabrication"]


def test_total_thickness_tolerance_rule(cat):
    rule = cat.fabrication.total_thickness_tolerance
    # materials.md section 4 (source 10): +/-0.05 mm below 0.3 mm, +/-0.1 mm for 0.3-0.8 mm;
    # section 5: +/-10 % for thick builds.
    total = np.array([[0.05e-3, 0.25e-3], [0.5e-3, 0.8e-3], [1.6e-3, 3.0e-3]])
    tol = rule.tolerance_m(total)
    assert tol.shape == total.shape  # a row per candidate, any shape
    np.testing.assert_allclose(tol, [[0.05e-3, 0.05e-3], [0.1e-3, 0.1e-3], [0.16e-3, 0.30e-3]], rtol=1e-12)
    # Just above the last band the 10 % rule never falls below that band.
    assert rule.tolerance_m(0.85e-3) == pytest.approx(0.1e-3)
    # Batch equals loop.
    flat = total.ravel()
    np.testing.assert_array_equal(rule.tolerance_m(flat), [rule.tolerance_m(t) for t in flat])


def test_accessors_unknown_names_give_catalog_error(cat):
    with pytest.raises(CatalogError) as exc:
        cat.dielectric("polimide-film", "stack.layers[2].material")
    msg = str(exc.value)
    assert msg.startswith("stack.layers[2].material: 'polimide-film' is not one of [")
    assert msg.endswith("did you mean 'polyimide-film'?")
    with pytest.raises(CatalogError, match=r"did you mean 'rolled-annealed'\?"):
        cat.foil("rolled-anealed")
    with pytest.raises(CatalogError, match=r"'3/4oz' is not one of \['1/4oz'"):
        cat.weight("3/4oz", "copper_weight")
    with pytest.raises(CatalogError, match="did you mean 'polyimide-coverlay-epoxy'"):
        cat.coverlay("polyimide-coverlay-epoxi")
    assert cat.weight("1/2oz").thickness_m == pytest.approx(17.5e-6)


# ---------------------------------------------------------------------------------------------
# malformed catalogs
# ---------------------------------------------------------------------------------------------
def _copy(tmp_path: Path) -> Path:
    folder = tmp_path / "cat"
    folder.mkdir()
    for name in ("materials.yaml", "copper.yaml", "fabrication.yaml"):
        shutil.copy(SHIPPED / name, folder / name)
    return folder


def _edit(folder: Path, name: str, change) -> None:
    path = folder / name
    doc = yaml.safe_load(path.read_text(encoding="utf-8"))
    change(doc)
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")


def _error(folder: Path) -> str:
    with pytest.raises(CatalogError) as exc:
        load_catalog(folder)
    text = str(exc.value)
    assert "\n" not in text
    return text


def _set(*path_and_value):
    *path, value = path_and_value

    def change(doc):
        node = doc
        for key in path[:-1]:
            node = node[key]
        node[path[-1]] = value

    return change


def _drop(*path):
    def change(doc):
        node = doc
        for key in path[:-1]:
            node = node[key]
        del node[path[-1]]

    return change


BAD = [
    # (file, change, expected text after "<folder>/")
    ("materials.yaml", _set("dielectrics", "acrylic-adhesive", "modulus_gpa", -1),
     "materials.yaml: dielectrics.acrylic-adhesive.modulus_gpa: must be > 0, got -1"),
    ("materials.yaml", _set("dielectrics", "polyimide-film", "dk", "three"),
     "materials.yaml: dielectrics.polyimide-film.dk: must be a number, got 'three'"),
    ("materials.yaml", _set("dielectrics", "lcp-film", "poisson", 0.5),
     "materials.yaml: dielectrics.lcp-film.poisson: must be < 0.5, got 0.5"),
    ("materials.yaml", _set("dielectrics", "lcp-film", "thicknesses_um", [25, 0]),
     "materials.yaml: dielectrics.lcp-film.thicknesses_um[1]: must be > 0, got 0"),
    ("materials.yaml", _set("dielectrics", "lcp-film", "glass_reinforced", "no"),
     "materials.yaml: dielectrics.lcp-film.glass_reinforced: must be true or false, got 'no'"),
    ("materials.yaml", _set("dielectrics", "epoxy-adhesive", "family", "glue"),
     "materials.yaml: dielectrics.epoxy-adhesive.family: 'glue' is not one of ["),
    ("materials.yaml", _set("dielectrics", "polyimide-film", "modulus_gp", 2.8),
     "materials.yaml: dielectrics.polyimide-film: 'modulus_gp' is not one of ["),
    ("materials.yaml", _drop("dielectrics", "lcp-film", "source"),
     "materials.yaml: dielectrics.lcp-film.source: required field is missing"),
    ("materials.yaml", _set("dielectrics", "lcp-film", "source", "  "),
     "materials.yaml: dielectrics.lcp-film.source: must be non-empty text, got '  '"),
    ("materials.yaml", _set("dielectrics", "Polyimide Film", {}),
     "materials.yaml: dielectrics.Polyimide Film: name 'Polyimide Film' must be lower-case"),
    ("materials.yaml", _set("coverlays", "polyimide-coverlay-acrylic", "film", "polyimide-flim"),
     "materials.yaml: coverlays.polyimide-coverlay-acrylic.film: 'polyimide-flim' is not one of ["),
    ("materials.yaml", _set("coverlays", "polyimide-coverlay-acrylic", "film", "acrylic-adhesive"),
     "materials.yaml: coverlays.polyimide-coverlay-acrylic.film: 'acrylic-adhesive' has family 'adhesive'"),
    ("materials.yaml", _set("coverlays", "polyimide-coverlay-epoxy", "builds_um", [[25, 25], [25, 17]]),
     "materials.yaml: coverlays.polyimide-coverlay-epoxy.builds_um[1][1]: 17 um is not a listed thickness"),
    ("materials.yaml", _set("extra", 1),
     "materials.yaml: 'extra' is not one of ['dielectrics', 'coverlays', 'about']"),
    ("copper.yaml", _set("foils", "rolled-annealed", "yield_strength_mpa", 300),
     "copper.yaml: foils.rolled-annealed.yield_strength_mpa: must be <= 230, got 300"),
    ("copper.yaml", _set("foils", "rolled-annealed", "ipc4562_grade", 7.5),
     "copper.yaml: foils.rolled-annealed.ipc4562_grade: must be a whole number, got 7.5"),
    ("copper.yaml", _set("foils", "electrodeposited", "copper_type", "ed"),
     "copper.yaml: foils.electrodeposited.copper_type: 'ed' is not one of ['rolled-annealed', 'electrodeposited']"),
    ("copper.yaml", _set("foils", "electrodeposited", "fatigue_ductility_pct", float("nan")),
     "copper.yaml: foils.electrodeposited.fatigue_ductility_pct: must be a finite number, got nan"),
    ("copper.yaml", _set("weights", "half", {"weight_oz": 0.5, "thickness_um": 17.5, "source": "x"}),
     "copper.yaml: weights.half: name 'half' must be like '1/2oz' or '1oz'"),
    ("copper.yaml", _drop("weights"),
     "copper.yaml: weights: required field is missing"),
    ("fabrication.yaml", _drop("min_feature", "by_weight", "2oz"),
     "fabrication.yaml: min_feature.by_weight.2oz: required entry is missing"),
    ("fabrication.yaml", _set("width_tolerance", "by_weight_pct", "3oz", 20),
     "fabrication.yaml: width_tolerance.by_weight_pct: '3oz' is not one of ['1/4oz'"),
    ("fabrication.yaml", _drop("impedance_tolerance", "classes_pct", "tight"),
     "fabrication.yaml: impedance_tolerance.classes_pct.tight: required class is missing"),
    ("fabrication.yaml", _set("thickness_tolerance", "total", "bands",
                              [{"up_to_um": 800, "plus_minus_um": 100}, {"up_to_um": 300, "plus_minus_um": 50}]),
     "fabrication.yaml: thickness_tolerance.total.bands[1].up_to_um: must be > 800, got 300"),
    ("fabrication.yaml", _drop("impedance_tolerance", "source"),
     "fabrication.yaml: impedance_tolerance.source: required field is missing"),
    ("materials.yaml", _set("dielectrics", "acrylic-adhesive", "dk_tolerance_pct", 80),
     "materials.yaml: dielectrics.acrylic-adhesive.dk_tolerance_pct: must be <= 50, got 80"),
    ("materials.yaml", _set("dielectrics", "lcp-film", "dk_tolerance_pct", -1),
     "materials.yaml: dielectrics.lcp-film.dk_tolerance_pct: must be >= 0, got -1"),
    ("fabrication.yaml", _set("dk_tolerance", "default_pct", "five"),
     "fabrication.yaml: dk_tolerance.default_pct: must be a number, got 'five'"),
    ("fabrication.yaml", _drop("dk_tolerance", "source"),
     "fabrication.yaml: dk_tolerance.source: required field is missing"),
]


@pytest.mark.parametrize("name, change, expected", BAD, ids=[b[2].split(": ", 2)[1] for b in BAD])
def test_malformed_catalog_names_file_and_field(tmp_path, name, change, expected):
    folder = _copy(tmp_path)
    _edit(folder, name, change)
    text = _error(folder)
    assert text.startswith(f"{folder / expected.split(':')[0]}:"), text
    assert expected in text, text


def test_malformed_yaml_syntax(tmp_path):
    folder = _copy(tmp_path)
    (folder / "copper.yaml").write_text("foils: [unclosed\n", encoding="utf-8")
    text = _error(folder)
    assert text.startswith(f"{folder / 'copper.yaml'}: not valid YAML at line"), text


def test_duplicate_key_is_refused(tmp_path):
    # YAML itself would silently keep the second entry.
    folder = _copy(tmp_path)
    with (folder / "copper.yaml").open("a", encoding="utf-8") as fh:
        fh.write("  1oz:\n    weight_oz: 1.0\n    thickness_um: 34\n    source: again\n")
    assert _error(folder).startswith(f"{folder / 'copper.yaml'}: key '1oz' appears twice (line ")


def test_missing_file_and_folder(tmp_path):
    folder = _copy(tmp_path)
    (folder / "fabrication.yaml").unlink()
    assert _error(folder) == f"{folder / 'fabrication.yaml'}: file not found"
    assert _error(tmp_path / "nowhere") == f"{tmp_path / 'nowhere'}: catalog folder not found"


def test_empty_file(tmp_path):
    folder = _copy(tmp_path)
    (folder / "materials.yaml").write_text("# nothing here\n", encoding="utf-8")
    assert _error(folder) == f"{folder / 'materials.yaml'}: must be a mapping, got nothing"


def test_copied_catalog_loads_and_equals_shipped(tmp_path, cat):
    assert load_catalog(_copy(tmp_path)) == cat


def test_errors_survive_pickling(tmp_path):
    import pickle

    folder = _copy(tmp_path)
    _edit(folder, "materials.yaml", _set("dielectrics", "acrylic-adhesive", "modulus_gpa", -1))
    with pytest.raises(CatalogError) as exc:
        load_catalog(folder)
    again = pickle.loads(pickle.dumps(exc.value))
    assert str(again) == str(exc.value)


# ---------------------------------------------------------------------------------------------
# the command
# ---------------------------------------------------------------------------------------------
def test_cli_json_matches_load_catalog(run_cli, cat):
    code, out, err = run_cli("catalog", "--json")
    assert code == 0 and err == ""
    data = json.loads(out)
    assert data.pop("caution") == CAUTION
    assert data == cat.to_dict()
    assert list(data) == list(SECTIONS)


@pytest.mark.parametrize("section", SECTIONS)
def test_cli_json_one_section(run_cli, cat, section):
    code, out, _ = run_cli("catalog", "--json", "--section", section)
    assert code == 0
    data = json.loads(out)
    assert set(data) == {section, "caution"}
    assert data[section] == cat.to_dict()[section]


def test_cli_text_tables(run_cli, cat):
    code, out, err = run_cli("catalog")
    assert code == 0 and err == ""
    for header in ("E (GPa)", "Dk", "Df", "at (GHz)", "thicknesses (um)", "UTS (MPa)", "D_f (%)", "Rq (um)",
                   "nominal thickness (um)", "min trace (um)", "tolerance (+/-%)"):
        assert header in out, header
    for name in [*cat.dielectrics, *cat.coverlays, *cat.foils, *cat.weights]:
        assert name in out, name
    last = out.strip().splitlines()[-1]
    assert last.startswith("Note: ") and "concept work" in last and "fabricator's material set" in last
    # Columns are aligned: every row of the dielectric table is as wide as its rule line or narrower,
    # and the numbers of the modulus column end at the same place.
    lines = out.splitlines()
    head = next(i for i, line in enumerate(lines) if line.startswith("name") and "E (GPa)" in line)
    end = lines[head].index("E (GPa)") + len("E (GPa)")
    rows = lines[head + 2: head + 2 + len(cat.dielectrics)]
    for row, d in zip(rows, cat.dielectrics.values()):
        assert row[:end].rstrip().endswith(f"{d.modulus_pa / 1e9:g}"), row
        assert row[end] == " "


def test_cli_text_one_section(run_cli):
    code, out, _ = run_cli("catalog", "--section", "weights")
    assert code == 0
    assert "FOIL WEIGHTS" in out and "DIELECTRICS" not in out
    assert out.strip().splitlines()[-1].startswith("Note: ")


def test_cli_unknown_section_is_one_line_exit_2(run_cli):
    code, out, err = run_cli("catalog", "--section", "dielectric")
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "Traceback" not in err
    assert "--section: 'dielectric' is not one of [" in err and "did you mean 'dielectrics'?" in err


def test_cli_bad_catalog_folder_is_one_line_exit_2(run_cli, tmp_path):
    folder = _copy(tmp_path)
    _edit(folder, "copper.yaml", _set("foils", "rolled-annealed", "modulus_gpa", 0))
    code, out, err = run_cli("catalog", "--catalog", folder)
    assert code == 2 and out == ""
    assert err.strip() == (
        f"strainline: error: {folder / 'copper.yaml'}: foils.rolled-annealed.modulus_gpa: must be > 0, got 0"
    )


def test_cli_catalog_option_reads_that_folder(run_cli, tmp_path):
    folder = _copy(tmp_path)
    _edit(folder, "copper.yaml", _set("foils", "rolled-annealed", "modulus_gpa", 70))
    code, out, _ = run_cli("catalog", "--json", "--section", "foils", "--catalog", folder)
    assert code == 0
    assert json.loads(out)["foils"]["rolled-annealed"]["modulus_gpa"] == 70
    assert math.isclose(load_catalog().foil("rolled-annealed").modulus_pa, 75e9)   # shipped value
