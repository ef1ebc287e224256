"""Field-accurate line tables: the cache, and fronts that hold their impedance.

The decisive check takes the candidates of real solves and recomputes each one's impedance with an
independent field solve of its full layer stack, read here from the candidate's own layers in
``front.json`` (each film, adhesive and cover its own band) on a finer mesh than the table's. The
field solver itself is checked against exact solutions in tests/test_fields.py and
tests/test_fields_layered.py (Cohn 1954/1955, the coplanar conformal map, parallel plates).
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
import yaml
from strainline.models.fields import field_solve
from strainline.models.lines import LineGeometry, evaluate_line

UM = 1e-6

COVERED_MICROSTRIP = {
    "name": "field-table-microstrip",
    "line": {"type": "microstrip", "target_ohm": 50, "tolerance": 10, "width_range_um": [50, 400],
             "frequency_ghz": 2},
    "bend": {"inner_radius_mm": 3, "use": "install"},
    "stack": {"copper_layers": 2, "copper_weights": ["1/3oz"], "copper_types": ["rolled-annealed"],
              "dielectric": ["polyimide-film"], "dielectric_thickness_um": [25, 50],
              "adhesive": ["none", "acrylic-adhesive"], "adhesive_thickness_um": [25],
              "coverlay": ["polyimide-coverlay-acrylic", "photoimageable-cover"]},
    "objectives": ["peak_strain", "thickness", "loss"],
}
COVERED_PAIR = {
    "name": "field-table-pair",
    "line": {"type": "coupled-microstrip", "target_ohm": 90, "tolerance": 10, "width_range_um": [50, 300],
             "gap_um": [100, 150], "frequency_ghz": 2},
    "bend": {"inner_radius_mm": 3, "use": "install"},
    "stack": {"copper_layers": 2, "copper_weights": ["1/3oz"], "copper_types": ["rolled-annealed"],
              "dielectric": ["polyimide-film"], "dielectric_thickness_um": [50],
              "adhesive": ["none", "epoxy-adhesive"], "adhesive_thickness_um": [25],
              "coverlay": ["polyimide-coverlay-epoxy"]},
    "objectives": ["thickness", "loss"],
}


@pytest.fixture(scope="module")
def cache_dir(tmp_path_factory):
    d = tmp_path_factory.mktemp("field-cache")
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("STRAINLINE_CACHE_DIR", str(d))
        yield d


def _solve(tmp: Path, data: dict, *extra: str) -> dict:
    from strainline.optimizer.cli.main import main

    study = tmp / f"{data['name']}.yaml"
    study.write_text(yaml.safe_dump(data, sort_keys=False))
    out = tmp / ("out-" + "-".join(e.strip("-") for e in extra) if extra else "out")
    assert main(["solve", str(study), "--out", str(out), "--quiet", *extra]) == 0
    return json.loads((out / "front.json").read_text())


@pytest.fixture(scope="module")
def fronts(cache_dir, tmp_path_factory):
    tmp = tmp_path_factory.mktemp("fronts")
    return {d["name"]: _solve(tmp, d) for d in (COVERED_MICROSTRIP, COVERED_PAIR)}


def _bands_from_layers(cand: dict) -> tuple[list, list, tuple, float]:
    """The candidate's line cross-section from its own layers (written here, not the package's)."""
    layers = cand["layers"]
    cu = [i for i, lay in enumerate(layers) if lay["kind"] == "copper"]
    sig = cu[cand["line"]["layer"] - 1]
    band = lambda lay: (lay["thickness_um"] * UM, lay["dk"], lay["df"])
    if sig == cu[0]:          # top copper: plane below, cover above
        below = [band(x) for x in layers[sig + 1:cu[1]]][::-1]
        above = [band(x) for x in layers[:sig]][::-1]
    else:                     # bottom copper: plane above, cover below
        below = [band(x) for x in layers[cu[-2] + 1:sig]]
        above = [band(x) for x in layers[sig + 1:]]
    below = [b for b in below if b[0] > 0]
    above = [b for b in above if b[0] > 0]
    fill = (above[0][1], above[0][2]) if above else (1.0, 0.0)
    return below, above, fill, layers[sig]["thickness_um"] * UM


@pytest.mark.parametrize("name", ["field-table-microstrip", "field-table-pair"])
def test_front_candidates_hold_their_impedance_in_an_independent_layered_solve(fronts, name):
    # Accuracy target of the issue: every front candidate's impedance at its reported width within
    # 0.5 % of a converged 2-D field solution of its real layered cross-section.
    front = fronts[name]
    assert front["search"]["impedance_model"] == "field"
    assert front["candidates"], "the small study must have a front"
    line0 = front["study"]["line"]
    kind, target = line0["type"], float(line0["target_ohm"])
    seen = set()
    for c in front["candidates"]:
        if len(seen) >= 6:      # distinct cross-sections checked (keeps the suite fast)
            break
        ln = c["line"]
        below, above, fill, t = _bands_from_layers(c)
        key = (ln["width_um"], ln.get("gap_um"), tuple(below), tuple(above), fill, t)
        if key in seen:
            continue
        seen.add(key)
        g = LineGeometry(width_m=ln["width_um"] * UM, height_m=sum(b[0] for b in below), thickness_m=t,
                         er=below[-1][1], gap_m=(ln.get("gap_um") or math.nan) * UM)
        r = field_solve(kind, g, cells_per_feature=3.0, layers_below=below, layers_above=above, fill=fill,
                        isolated_line=False, even_mode=False)
        reported = ln["z_diff_ohm"] if kind.startswith("coupled") else ln["z0_ohm"]
        assert r.target_ohm == pytest.approx(reported, rel=5e-3), (c["id"], r.target_ohm, reported)
        if ln["field"]["direct_solve"]:
            assert r.target_ohm == pytest.approx(target, rel=5e-3)
        # the closed form is kept beside the field value, with its measured deviation
        cf = ln["closed_form"]
        assert cf["deviation_pct"] == pytest.approx(100 * (cf["z_ohm_at_width"] / reported - 1), abs=1e-6)
    assert front["search"]["line_table"]["front_rows_direct"] is True


def test_closed_form_values_beside_the_field_ones_recompute_from_the_published_equations(fronts):
    # Hammerstad & Jensen 1980 with the Wadell 1991 cover blend on the composite geometry
    # (models/lines; checked against scikit-rf in tests/test_lines_reference.py)
    for c in fronts["field-table-microstrip"]["candidates"]:
        ln, g = c["line"], c["line"]["geometry"]
        geom = LineGeometry(width_m=ln["width_um"] * UM, height_m=g["height_um"] * UM,
                            thickness_m=g["thickness_um"] * UM, er=g["er"], cover_m=g["cover_um"] * UM,
                            cover_er=g["cover_er"])
        z = float(evaluate_line("microstrip", geom).z0_ohm)
        assert z == pytest.approx(ln["closed_form"]["z_ohm_at_width"], rel=1e-9)


def test_closed_form_option_lets_the_published_equations_decide(cache_dir, tmp_path):
    front = _solve(tmp_path, COVERED_MICROSTRIP, "--impedance", "closed-form")
    assert front["search"]["impedance_model"] == "closed-form"
    for c in front["candidates"][:5]:
        ln, g = c["line"], c["line"]["geometry"]
        geom = LineGeometry(width_m=ln["width_um"] * UM, height_m=g["height_um"] * UM,
                            thickness_m=g["thickness_um"] * UM, er=g["er"], cover_m=g["cover_um"] * UM,
                            cover_er=g["cover_er"])
        assert float(evaluate_line("microstrip", geom).z0_ohm) == pytest.approx(ln["z0_ohm"], rel=1e-9)


def test_study_key_selects_the_model(cache_dir, tmp_path):
    data = dict(COVERED_MICROSTRIP, search={"impedance": "closed-form"})
    assert _solve(tmp_path, data)["search"]["impedance_model"] == "closed-form"


def test_verify_removes_a_candidate_that_misses_and_says_so(fronts):
    # A candidate whose width is moved 40 % off no longer holds 50 ohm: an independent field solve
    # (the check itself) finds it outside the nominal window; it leaves the front and is counted.
    from strainline.optimizer.search.verify import verify_front

    front = json.loads(json.dumps(fronts["field-table-microstrip"]))
    front["candidates"] = front["candidates"][:3]
    front["candidates"][1]["line"]["width_um"] *= 1.4
    res = verify_front(front, workers=1)
    fv = res["field_verification"]
    assert fv["failed_candidates"] == 1 and [r["id"] for r in fv["removed"]] == [front["candidates"][1]["id"]]
    assert fv["message"] == "1 of 3 candidates failed field verification and were removed"
    assert len(res["candidates"]) == 2
    kept = verify_front(front, workers=1, keep_unverified=True)
    assert len(kept["candidates"]) == 3 and kept["candidates"][1]["line"]["field_check"]["passed"] is False


def test_cache_makes_a_rerun_free_and_gives_the_same_numbers(tmp_path):
    from strainline.optimizer.search.fieldcache import CACHE_ENV, FieldCache, cache_dir
    from strainline.optimizer.search.fieldsolve import (
        Section,
        SolveStats,
        solve_sections,
    )

    secs = [Section("microstrip", w * UM, 12 * UM, math.nan, ((50 * UM, 3.3, 0.004),),
                    ((25 * UM, 3.6, 0.03), (12.5 * UM, 3.3, 0.008)), (3.6, 0.03)) for w in (80.0, 120.0)]
    c = FieldCache(tmp_path)
    s1, s2 = SolveStats(), SolveStats()
    first = solve_sections(secs, workers=1, cache=c, stats=s1)
    again = solve_sections(secs, workers=1, cache=FieldCache(tmp_path), stats=s2)
    assert (s1.solved, s1.cached, s2.solved, s2.cached) == (2, 0, 0, 2)
    assert [r["z"] for r in first] == [r["z"] for r in again]
    # the cached record is the solver's own answer for that cross-section
    g = LineGeometry(width_m=80 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.3)
    ref = field_solve("microstrip", g, cells_per_feature=1.5, layers_below=[(50 * UM, 3.3, 0.004)],
                      layers_above=[(25 * UM, 3.6, 0.03), (12.5 * UM, 3.3, 0.008)], fill=(3.6, 0.03))
    assert first[0]["z"] == pytest.approx(ref.z0_ohm, rel=1e-12)
    assert CACHE_ENV == "STRAINLINE_CACHE_DIR"
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv(CACHE_ENV, str(tmp_path / "x"))
        assert cache_dir() == tmp_path / "x"


def test_table_solves_on_processes_and_dask_give_the_same_numbers(tmp_path):
    # The same cross-sections solved in this process, on local worker processes and on a local Dask
    # cluster: the solver is deterministic, so the records must be identical (no cache involved).
    from strainline.optimizer.search.fieldsolve import (
        Section,
        SolveStats,
        solve_sections,
    )

    secs = [Section("stripline", w * UM, 12 * UM, math.nan, ((50 * UM, 3.0, 0.002), (12.5 * UM, 3.6, 0.02)),
                    ((12.5 * UM, 3.6, 0.02), (50 * UM, 3.0, 0.002)), (3.6, 0.02)) for w in (50.0, 60.0, 70.0, 80.0)]
    serial = solve_sections(secs, workers=1)
    st = SolveStats()
    procs = solve_sections(secs, workers=2, stats=st)
    assert st.backend == "processes"
    key = lambda rs: [(r["z"], r["eps"], r["tan"]) for r in rs]
    assert key(procs) == key(serial)
    distributed = pytest.importorskip("dask.distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  dashboard_address=None) as cluster:
        st = SolveStats()
        on_dask = solve_sections(secs, dask_address=cluster.scheduler_address, stats=st)
    assert st.backend == "dask" and key(on_dask) == key(serial)
