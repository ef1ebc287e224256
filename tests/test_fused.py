"""The fused range kernel (optimizer/search/fused.py, driven by fusedplan.py) leaves exactly the
archive the general enumeration leaves.

Reference: the chunked enumeration of the same index pieces through :meth:`Problem.evaluate` (the
evaluation every other test checks: the bend model against the layer path and J. M. Gere and
S. P. Timoshenko's transformed section, tests/test_kernel.py and tests/test_bending.py; the lines
against the published closed forms and field solutions). Compared bit for bit: the candidates
seen, the feasible count, the violations of every constraint column (with the pruning rule: a
failing line counts only its line columns), the front (indices, variables, objectives), the five
nearest infeasible candidates with their total violations, and the background sample. Every study
family runs: bonded and unbonded (leaves auto and fixed), symmetric, either face inside, plane
strain, stripline, pairs, hatched grounds, glass in an install bend, no cover, several bend zones,
several lines, and every shipped study.
"""
from __future__ import annotations

import copy
from pathlib import Path

import numpy as np
import pytest

from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.errors import StudyError
from strainline.optimizer.inputs.study import validate_study
from strainline.optimizer.inputs.yamlio import read_yaml
from strainline.optimizer.search import fusedplan
from strainline.optimizer.search.exhaustive import exhaustive_pieces, space_size
from strainline.optimizer.search.linetable import table_options
from strainline.optimizer.search.parallel import ProblemEvaluator
from strainline.optimizer.search.problem import build_problem
from strainline.optimizer.search.space import build_space

ROOT = Path(__file__).resolve().parents[1]
CAT = load_catalog()

BASE = {
    "name": "fused",
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 500], "frequency_ghz": 2},
    "bend": {"inner_radius_mm": 3, "use": "dynamic", "cycles": 5000},
    "stack": {"copper_layers": 3, "copper_weights": ["1/4oz", "1/2oz", "1oz"],
              "copper_types": ["rolled-annealed", "electrodeposited"],
              "dielectric": ["polyimide-film", "lcp-film"], "dielectric_thickness_um": [12.5, 50],
              "adhesive": ["none", "acrylic-adhesive", "epoxy-adhesive"], "adhesive_thickness_um": [15],
              "coverlay": ["polyimide-coverlay-acrylic", "none"], "ground_coverage": [1.0]},
    "limits": {"total_thickness_um": 220, "peak_strain_pct": 0.6},
    "objectives": ["signal_strain", "thickness", "loss"],
}
STRIP = {"line": {"type": "stripline"}}
CASES = {
    "bonded": {},
    # a calibrated hatch factor keeps 3-D solves out (the column is the same table look-up)
    "hatched-ground": {"stack": {"ground_hatch": [{"pitch_um": 500, "line_width_um": 150, "angle_deg": 45}]},
                       "line": {"hatch_correction": 1.12}},
    "inside-top": {"bend": {"inside": "top"}},
    "plane-strain-top": {"bend": {"plane_strain": True, "inside": "top"}},
    "symmetric-4cu": {"stack": {"symmetric": True, "copper_layers": 4}},
    "free-order-2cu": {"stack": {"copper_layers": 2, "order": "free"}},
    "stripline-free": {"stack": {"order": "free"}, **STRIP},
    "pair": {"line": {"type": "coupled-microstrip", "target_ohm": 90, "gap_um": [75, 150]}},
    "no-cover-uncovered": {"stack": {"coverlay": ["none"]}, "bend": {"allow_uncovered": True}},
    "install-glass": {"bend": {"use": "install", "inner_radius_mm": 2, "cycles": None},
                      "stack": {"dielectric": ["polyimide-film", "glass-thin-laminate"]}},
    "life-reversed-signal-limit": {"bend": {"motion": "reversed", "cycles": 100000},
                                   "limits": {"signal_strain_pct": 0.3}, "objectives": None},
    "loss-limit": {"limits": {"loss_db_per_m": 30.0}},
    "unbonded-auto": {"bend": {"region": "unbonded"}, "stack": {"copper_layers": 4}},
    "unbonded-fixed-top": {"bend": {"region": "unbonded", "leaves": [[1, 2], [3]], "inside": "top"},
                           "stack": {"order": "free"}},
    "unbonded-stripline-free": {"bend": {"region": "unbonded"}, "stack": {"copper_layers": 4, "order": "free"},
                                **STRIP},
}


def _study(over: dict):
    d = copy.deepcopy(BASE)
    for k, v in over.items():
        if v is None:
            continue
        if isinstance(d.get(k), dict):
            d[k].update(v)
            d[k] = {a: b for a, b in d[k].items() if b is not None}
        else:
            d[k] = v
    return validate_study(d, CAT)


def _problem(study, cat=CAT):
    with table_options(impedance="closed-form"):
        return build_problem(build_space(study, cat), cat)


def _pieces(size: int, n: int, seed: int) -> list[tuple[int, int]]:
    """The whole space when small, else a few increasing disjoint ranges of about ``n`` in all."""
    if size <= n:
        return [(0, size)]
    rng = np.random.default_rng(seed)
    cuts = np.sort(rng.choice(size - n // 4, 4, replace=False))
    out, last = [], -1
    for c in cuts:
        a = max(int(c), last)
        out.append((a, min(size, a + n // 4)))
        last = out[-1][1]
    return [(a, b) for a, b in out if b > a]


def _same(pb, pieces):
    sizes = pb.space.sizes
    fused = ProblemEvaluator(pb, fused=True)
    assert fusedplan.fused_plan(pb) is not None, "the kernel must cover this study"
    got = exhaustive_pieces(fused, sizes, pb.n_obj, pieces)
    ref = exhaustive_pieces(ProblemEvaluator(pb, fused=False), sizes, pb.n_obj, pieces)
    assert got.seen == ref.seen == sum(b - a for a, b in pieces)
    assert got.feasible == ref.feasible
    np.testing.assert_array_equal(got.violated, ref.violated)
    np.testing.assert_array_equal(got.index, ref.index)
    np.testing.assert_array_equal(got.X, ref.X)
    np.testing.assert_array_equal(got.F, ref.F)
    np.testing.assert_array_equal(got.nearest_index, ref.nearest_index)
    np.testing.assert_array_equal(got.nearest_cv, ref.nearest_cv)
    np.testing.assert_array_equal(got.sample_F, ref.sample_F)
    return ref


@pytest.mark.parametrize("name", list(CASES))
def test_fused_enumeration_equals_general_path(name):
    pb = _problem(_study(CASES[name]))
    ref = _same(pb, _pieces(pb.space.size, 80_000, 3))
    # the comparison means something: candidates failed several different columns
    assert (ref.violated > 0).sum() >= 2


SHIPPED = sorted((ROOT / "studies").glob("*.yaml")) + sorted((ROOT / "benchmarks" / "studies").glob("*.yaml"))


@pytest.mark.parametrize("path", SHIPPED, ids=[p.stem for p in SHIPPED])
def test_fused_enumeration_on_shipped_studies(path):
    """Every shipped study as written, except its hatched-ground options: their 3-D hatch solves
    cost seconds each and the hatched family above covers that column."""
    data = read_yaml(path, StudyError)
    data["stack"].pop("ground_hatch", None)
    own = data.get("catalog")
    cat = load_catalog(path.parent / own) if own else CAT
    pb = _problem(validate_study(data, cat, file=path.name, folder=path.parent), cat)
    _same(pb, _pieces(pb.space.size, 60_000, 5))


def test_resuming_calls_and_a_front_with_feasible_points(monkeypatch):
    """Small kernel calls (the emission buffer and the step cut the enumeration) change nothing,
    and a range rich in feasible points gives the same front."""
    monkeypatch.setattr(fusedplan, "STEP", 7_777)
    monkeypatch.setattr(fusedplan, "CAP", 600)
    pb = _problem(_study({"limits": {"total_thickness_um": 400, "peak_strain_pct": 2.0},
                          "bend": {"inner_radius_mm": 10}}))
    ref = _same(pb, [(0, 60_000), (90_001, 150_000)])
    assert ref.feasible > 1000 and len(ref.F) >= 3


def test_study_the_kernel_does_not_cover_falls_back(monkeypatch):
    """With the compiled kernels switched off the evaluator declines and the chunked path runs."""
    monkeypatch.setenv("STRAINLINE_KERNEL", "0")
    pb = _problem(_study({}))
    assert fusedplan.fused_plan(pb) is None
    assert ProblemEvaluator(pb, fused=True).range_archive(pb.space.sizes, pb.n_obj, [(0, 10)]) is None
    arch = exhaustive_pieces(ProblemEvaluator(pb), pb.space.sizes, pb.n_obj, [(0, 5000)])
    assert arch.seen == 5000 and space_size(pb.space.sizes) == pb.space.size


def test_default_evaluator_uses_the_kernel_only_for_large_enumerations(monkeypatch):
    pb = _problem(_study({}))
    ev = ProblemEvaluator(pb)
    assert ev.range_archive(pb.space.sizes, pb.n_obj, [(0, 1000)]) is None
    monkeypatch.setattr(fusedplan, "MIN_CANDIDATES", 1000)
    assert ev.range_archive(pb.space.sizes, pb.n_obj, [(0, 1000)]).seen == 1000
