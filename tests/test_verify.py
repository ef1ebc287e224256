"""verify_front: field check and width refinement of a front, locally and on a Dask cluster.

Front dicts are built by hand in the ``front.json`` shape (issue 4); closed-form figures come from
the package's closed forms (strainline.models.lines), the reference field values from lines.md.
"""
from __future__ import annotations

import copy
import math

import pytest

from strainline.models.fields import field_solve
from strainline.models.lines import LineGeometry, evaluate_line
from strainline.optimizer.errors import InputError
from strainline.optimizer.search.verify import verify_front

UM = 1e-6
CPF = 2.0  # a coarse base mesh keeps the suite fast; the estimate is still a few tenths of a percent


def _candidate(cid, kind, width_um, geometry, gap_um=None):
    g = LineGeometry(width_m=width_um * UM, gap_m=(gap_um or math.nan) * UM,
                     height_m=geometry["height_um"] * UM,
                     height_top_m=(geometry.get("height_top_um") or math.nan) * UM,
                     thickness_m=geometry["thickness_um"] * UM, er=geometry["er"],
                     er_top=geometry.get("er_top") or math.nan,
                     cover_m=geometry.get("cover_um", 0.0) * UM, cover_er=geometry.get("cover_er", 1.0))
    r = evaluate_line(kind, g)
    pair = kind.startswith("coupled")
    return {
        "id": cid,
        "objectives": {"peak_strain_pct": 0.1, "total_thickness_um": 100.0},
        "line": {
            "type": kind, "layer": "L1", "width_um": width_um, "gap_um": gap_um,
            "z0_ohm": float(r.z0_ohm), "z_diff_ohm": float(r.z_diff_ohm) if pair else None,
            "eps_eff": float(r.eps_eff), "geometry": dict(geometry, method="closed-form"),
        },
    }


def _front(kind, target, width_range, cands):
    return {"study": {"name": "invented-test", "line": {"type": kind, "target_ohm": target,
                                                         "width_range_um": list(width_range)}},
            "version": "0", "seed": 1, "candidates": cands}


COVERED = {"height_um": 50.0, "height_top_um": None, "thickness_um": 12.0, "er": 3.2, "er_top": None,
           "cover_um": 25.0, "cover_er": 3.2}


@pytest.fixture(scope="module")
def microstrip_front():
    cands = [
        _candidate(0, "microstrip", 100.0, COVERED),
        _candidate(1, "microstrip", 80.0, dict(COVERED, thickness_um=18.0)),
        _candidate(2, "microstrip", 100.0, dict(COVERED, height_um=0.0)),   # broken on purpose
    ]
    return _front("microstrip", 50.0, (60.0, 95.0), cands)


@pytest.fixture(scope="module")
def serial_result(microstrip_front):
    return verify_front(microstrip_front, workers=1, cells_per_feature=CPF, keep_unverified=True)


def test_field_check_records_field_closed_form_error_and_refined_width(microstrip_front, serial_result):
    fc = serial_result["candidates"][0]["line"]["field_check"]
    # lines.md 2: the field-solved Z0 of this covered microstrip is 48.67 ohm
    assert fc["z0_ohm"] == pytest.approx(48.67, rel=0.004)
    z_cf = microstrip_front["candidates"][0]["line"]["z0_ohm"]
    assert fc["closed_form_error_pct"] == pytest.approx(100 * (z_cf - fc["z0_ohm"]) / fc["z0_ohm"], abs=1e-3)
    # lines.md 2: the exponential-blend cover correction is 2.7-3.9 % low against the field solution
    assert -4.2 <= fc["closed_form_error_pct"] <= -2.4
    assert 0 < fc["error_estimate_pct"] < 0.5
    # the refined width really gives the target with an independent solve
    assert fc["refined_ok"]
    g = LineGeometry(width_m=fc["width_um"] * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.2,
                     cover_m=25 * UM, cover_er=3.2)
    assert field_solve("microstrip", g, cells_per_feature=CPF).z0_ohm == pytest.approx(50.0, rel=6e-4)
    assert fc["width_um"] < 100.0                       # Z0 was below target: narrower
    assert fc["refined_width_in_range"] is (60.0 <= fc["width_um"] <= 95.0)


def test_one_bad_candidate_does_not_stop_the_batch(serial_result):
    bad = serial_result["candidates"][2]["line"]["field_check"]
    assert bad["error"] and "height_m" in bad["error"]
    assert bad["z0_ohm"] is None and bad["refined_width_in_range"] is False
    summary = serial_result["field_verification"]
    assert summary["failed"] == 1 and summary["candidates"] == 3
    assert "IPC-TM-650" in summary["caution"]
    assert serial_result["candidates"][1]["line"]["field_check"]["error"] is None


def test_input_front_is_not_modified(microstrip_front, serial_result):
    assert "field_check" not in microstrip_front["candidates"][0]["line"]
    assert "field_verification" not in microstrip_front


def test_width_range_override_marks_out_of_range(microstrip_front):
    front = copy.deepcopy(microstrip_front)
    front["candidates"] = front["candidates"][:1]
    res = verify_front(front, cells_per_feature=CPF, width_range_um=(100.0, 200.0), keep_unverified=True)
    fc = res["candidates"][0]["line"]["field_check"]
    assert fc["refined_ok"] and not fc["refined_width_in_range"]
    assert res["field_verification"]["refined_out_of_range"] == 1
    assert fc["passed"] is False and "outside the width range" in fc["reasons"][0]
    assert res["field_verification"]["message"].startswith("1 of 1 candidates failed field verification (kept")


def test_failed_candidates_are_removed_and_counted(microstrip_front, serial_result):
    # the rule: a field impedance outside the nominal window, or a refined width outside the
    # range, fails; failures leave the front unless kept (candidate 2 cannot be solved at all)
    res = verify_front(microstrip_front, cells_per_feature=CPF, nominal_error_pct=1.0)
    summary = res["field_verification"]
    marked = [c["line"]["field_check"] for c in serial_result["candidates"]]
    failed = [i for i, fc in enumerate(marked)
              if fc["error"] or abs(fc["impedance_error_pct"]) > 1.0 or not fc["refined_width_in_range"]]
    assert 2 in failed and 0 in failed        # candidate 0 is -2.7 % off (lines.md 2): outside +/-1 %
    assert summary["failed_candidates"] == len(failed)
    assert [r["id"] for r in summary["removed"]] == failed
    assert len(res["candidates"]) == 3 - len(failed)
    assert summary["message"] == f"{len(failed)} of 3 candidates failed field verification and were removed"


def test_pair_front_refines_differential_impedance():
    cand = _candidate(0, "coupled-microstrip", 100.0, COVERED, gap_um=100.0)
    front = _front("coupled-microstrip", 90.0, (50.0, 150.0), [cand])
    fc = verify_front(front, cells_per_feature=CPF)["candidates"][0]["line"]["field_check"]
    # lines.md 5.3: 87.3 ohm field-solved for this covered pair
    assert fc["z_diff_ohm"] == pytest.approx(87.3, rel=0.004)
    assert fc["z_diff_ohm"] == pytest.approx(2 * fc["z_odd_ohm"], rel=1e-5)
    assert fc["refined_ok"] and fc["width_um"] < 100.0   # below target: narrower strips
    assert fc["z_refined_ohm"] == pytest.approx(90.0, rel=5e-4)


def test_local_processes_give_the_same_numbers(microstrip_front, serial_result):
    seen = []
    res = verify_front(microstrip_front, workers=2, cells_per_feature=CPF, keep_unverified=True,
                       progress=lambda done, total: seen.append((done, total)))
    assert res["field_verification"]["backend"] == "processes"
    assert seen[-1] == (3, 3)
    for a, b in zip(res["candidates"], serial_result["candidates"]):
        fa, fb = dict(a["line"]["field_check"]), dict(b["line"]["field_check"])
        fa.pop("seconds"), fb.pop("seconds")
        assert fa == fb


def test_dask_local_cluster_gives_the_same_numbers(microstrip_front, serial_result):
    distributed = pytest.importorskip("dask.distributed")
    front = copy.deepcopy(microstrip_front)
    keep = [0, 2]  # one good and one broken candidate keep the cluster run short
    front["candidates"] = [front["candidates"][i] for i in keep]
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        res = verify_front(front, dask_address=cluster.scheduler_address, cells_per_feature=CPF,
                           keep_unverified=True)
    assert res["field_verification"]["backend"] == "dask"
    assert res["field_verification"]["failed"] == 1
    for a, b in zip(res["candidates"], [serial_result["candidates"][i] for i in keep]):
        fa, fb = dict(a["line"]["field_check"]), dict(b["line"]["field_check"])
        fa.pop("seconds"), fb.pop("seconds")
        assert fa == fb


def test_bad_worker_count_and_unreachable_scheduler_are_input_errors(microstrip_front):
    with pytest.raises(InputError, match="worker"):
        verify_front(microstrip_front, workers=0)
    pytest.importorskip("dask.distributed")
    with pytest.raises(InputError, match="Dask scheduler"):
        verify_front({"candidates": [microstrip_front["candidates"][0]]},
                     dask_address="tcp://127.0.0.1:9", dask_timeout_s=1.0)


def test_shared_cross_sections_are_solved_once(microstrip_front, serial_result):
    front = copy.deepcopy(microstrip_front)
    twin = copy.deepcopy(front["candidates"][0])
    twin["id"] = 9   # the same line in another stack
    front["candidates"] = [front["candidates"][0], twin]
    res = verify_front(front, cells_per_feature=CPF, keep_unverified=True)
    assert res["field_verification"]["distinct_cross_sections"] == 1
    a, b = (dict(c["line"]["field_check"]) for c in res["candidates"])
    assert a == b
    a.pop("seconds")
    ref = dict(serial_result["candidates"][0]["line"]["field_check"])
    ref.pop("seconds")
    assert a == ref
