"""Block bounds of the exhaustive search (optimizer/search/bounds.py, boundstrain.py).

References:
* exhaustive enumeration of the same space (brute force: every candidate of every block evaluated
  by Problem.evaluate) for the lower bounds and for the front;
* the strain model the bound relaxes is the transformed section of Gere & Timoshenko (*Mechanics of
  Materials*, composite beams), which Problem.evaluate implements (tests/test_kernel.py,
  tests/test_fast_evaluation.py check that against the layer path).
"""
from __future__ import annotations

import copy

import numpy as np
import pytest

from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.inputs.study import validate_study
from strainline.optimizer.search import bounds as bnd
from strainline.optimizer.search import engine
from strainline.optimizer.search.archive import Archive
from strainline.optimizer.search.exhaustive import _digits, exhaustive_pieces, space_size
from strainline.optimizer.search.linetable import table_options
from strainline.optimizer.search.parallel import ProblemEvaluator
from strainline.optimizer.search.problem import build_problem
from strainline.optimizer.search.space import build_space

CAT = load_catalog()

BASE = {
    "name": "bounds",
    # a calibrated hatch factor keeps 3-D solves out of these search tests (tests/test_hatch*.py)
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 400], "frequency_ghz": 2.4,
             "hatch_correction": 1.12},
    "bend": {"inner_radius_mm": 12, "use": "dynamic", "cycles": 2000},
    "stack": {"copper_layers": 2, "signal_layer": "auto", "order": "free",
              "copper_weights": ["1/4oz", "1/2oz"], "copper_types": ["rolled-annealed"],
              "dielectric": ["polyimide-film", "lcp-film"], "dielectric_thickness_um": [25],
              "adhesive": ["none", "acrylic-adhesive"], "adhesive_thickness_um": [12.5],
              "coverlay": ["polyimide-coverlay-acrylic", "none"], "ground_coverage": [1.0],
              "ground_hatch": [{"pitch_um": 500, "line_width_um": 150, "angle_deg": 45}],
              "signal_coverage": 0.25},
    "limits": {"total_thickness_um": 150, "peak_strain_pct": 0.5},
    "objectives": ["signal_strain", "thickness", "loss"],
}

CASES = {
    "bonded": {},
    "inside-top-signal-limit": {"bend": {"inside": "top"}, "limits": {"signal_strain_pct": 0.3}},
    "symmetric-4cu": {"stack": {"symmetric": True, "copper_layers": 4}, "limits": {"total_thickness_um": 300}, "bend": {"inner_radius_mm": 25}},
    "two-zones": {"bend": None, "bends": [
        {"name": "fold", "inner_radius_mm": 10, "inside": "top", "use": "install"},
        {"name": "hinge", "inner_radius_mm": 15, "inside": "bottom", "use": "dynamic", "cycles": 2000}]},
    "3cu": {"stack": {"copper_layers": 3, "coverlay": ["polyimide-coverlay-acrylic"], "dielectric": ["polyimide-film"],
                     "adhesive": ["acrylic-adhesive"]},
            "limits": {"total_thickness_um": 250}, "bend": {"inner_radius_mm": 25}},
    "unbonded": {"bend": {"region": "unbonded", "inner_radius_mm": 6}, "stack": {"copper_layers": 3, "coverlay": ["polyimide-coverlay-acrylic"],
                                                        "dielectric": ["polyimide-film"], "adhesive": ["acrylic-adhesive"]},
                 "limits": {"total_thickness_um": 250}},
    "peak-objective-loss-limit": {"objectives": ["peak_strain", "thickness", "loss"],
                                  "limits": {"loss_db_per_m": 25}},
}
# several lines (a feed and a pair, each on its own outer layer, worst line's loss objective and
# loss limit); 4 copper layers, 8 line-layer options; bonded, and unbonded with the grouping free
LINES = [{"name": "feed", "type": "microstrip", "target_ohm": 50, "tolerance": 15, "width_range_um": [50, 400],
          "frequency_ghz": 2.4, "hatch_correction": 1.12},
         {"name": "pair", "type": "coupled-microstrip", "target_ohm": 90, "tolerance": 15,
          "width_range_um": [50, 250], "gap_um": [75, 125], "frequency_ghz": 5, "hatch_correction": 1.12}]
MULTI = {"line": None, "lines": LINES, "bend": {"inner_radius_mm": 25},
         "stack": {"signal_layer": None, "copper_layers": 4, "dielectric": ["polyimide-film"],
                   "adhesive": ["acrylic-adhesive"], "coverlay": ["polyimide-coverlay-acrylic"]},
         "limits": {"total_thickness_um": 300, "peak_strain_pct": 0.5, "loss_db_per_m": 60}}
CASES["multi-line"] = MULTI
CASES["multi-line-unbonded"] = {**MULTI, "bend": {"inner_radius_mm": 25, "region": "unbonded"}}
#: Unbonded cases (leaves bend about their own axes; the strain bound is :mod:`.boundleaf`'s).
UNBONDED = ("unbonded", "multi-line-unbonded")


def _problem(name: str):
    d = copy.deepcopy(BASE)
    for k, v in CASES[name].items():
        if v is None:
            d.pop(k)
        elif isinstance(v, dict) and k in d:
            d[k].update(v)
            for kk in [kk for kk, vv in v.items() if vv is None]:
                d[k].pop(kk)
        else:
            d[k] = v
    with table_options(impedance="closed-form"):
        return build_problem(build_space(validate_study(d, CAT), CAT), CAT)


_PB: dict = {}


def problem(name: str):
    if name not in _PB:
        _PB[name] = _problem(name)
    return _PB[name]


def _plain(pb) -> Archive:
    """Reference front: plain enumeration of every candidate."""
    arch = exhaustive_pieces(ProblemEvaluator(pb), pb.space.sizes, pb.n_obj, [(0, pb.space.size)])
    assert len(arch.F) >= 2                 # a front to compare (every case study is built to have one)
    return arch


def _line_columns(pb) -> list[int]:
    """Constraint columns read from the line-table rows (every line's; the loss limit included)."""
    own = set(pb.lines[0].constraint_names if pb.lines else []) | {"impedance", "width_range", "gap_space",
                                                                     "equation_range", "yield", "loss"}
    return [k for k, c in enumerate(pb.constraint_names) if c in own]


@pytest.mark.parametrize("name", list(CASES))
def test_lower_bounds_hold_on_every_sampled_node(name):
    # Reference: brute force -- every candidate of the node evaluated (Problem.evaluate, the
    # Gere & Timoshenko transformed section, every line's table row); each bound must be <= the
    # node's true minimum, and a node the bound calls infeasible must hold no feasible candidate.
    pb = problem(name)
    model = bnd.node_model(ProblemEvaluator(pb, prune=False))
    assert model is not None
    sizes = np.asarray(pb.space.sizes)
    rng = np.random.default_rng(5)
    lcols = _line_columns(pb)
    kl = pb.objectives.index("loss")
    bit = {"strain": 0, "thickness": 0, "line": 0, "leaves": 0, "loss": 0}
    for m in range(1, sizes.size + 1):
        P = space_size(sizes[:m])
        if P > 20000:
            break
        q = rng.integers(0, space_size(sizes) // P, 12 if P < 2000 else 4)
        b = model.bounds(m, q)
        Fl = model.objective_bounds(b)
        for j, qq in enumerate(q):
            e = pb.evaluate(_digits(qq * P + np.arange(P), sizes))
            zp = e.zone_peak if e.zone_peak is not None else e.peak_strain[:, None]
            zs = e.zone_signal if e.zone_signal is not None else e.signal_strain[:, None]
            # brute force: the least total thickness of the node's candidates (unbonded: the
            # layer path's total, air gaps and leaf-face covers counted)
            assert b["thickness_m"][j] <= e.total_thickness_m.min()
            assert np.all(b["peak"][j] <= zp.min(axis=0))
            assert np.all(b["signal"][j] <= zs.min(axis=0))
            if "fatigue_life" in pb.constraint_names:   # brute force: the least fatigue column
                assert b["fatigue"][j] - 1.0 <= e.G[:, pb.constraint_names.index("fatigue_life")].min() + 1e-12
            # brute force: the least (quantized) loss objective over every candidate (worst line)
            assert b["loss"][j] <= e.F[:, kl].min()
            feas = np.all(e.G <= 0, axis=1)
            if not b["line"][j]:        # no reachable row of some line meets it: every candidate fails a line column
                assert np.all(np.any(e.G[:, lcols] > 0, axis=1))
                bit["line"] += 1
            if not b["leaves"][j]:      # every candidate: an unbuildable grouping (constraint leaves) or a line fails
                bad = e.G[:, pb.constraint_names.index("leaves")] > 0
                assert np.all(bad | np.any(e.G[:, lcols] > 0, axis=1))
                bit["leaves"] += 1
            if feas.any():              # objective bounds in the quantized units
                assert np.all(Fl[j] <= e.F[feas].min(axis=0))
            bit["strain"] += b["peak"][j].max() > 0.5 * zp.min()
            bit["thickness"] += b["thickness_m"][j] > 0.9 * e.total_thickness_m.min()
            bit["loss"] += b["loss"][j] >= e.F[:, kl].min()
    # the bounds are not trivially 0 / True (the new ones included)
    assert bit["thickness"] > 0 and bit["loss"] > 0
    assert bit["strain"] > 0
    if name.startswith("multi-line"):
        assert bit["line"] > 0
    if name == "multi-line-unbonded":
        assert bit["leaves"] > 0


@pytest.mark.parametrize("name", list(CASES))
def test_front_with_bounds_equals_plain_enumeration(name):
    # Reference: plain enumeration of the whole space (same indices, same objective values).
    pb = problem(name)
    sizes = np.asarray(pb.space.sizes)
    ref = _plain(pb)
    model = bnd.node_model(ProblemEvaluator(pb, prune=False))
    for m_final in (1, 4):
        # known points: the exact front itself and a few other feasible points (the strongest
        # dominance the bound can see, ties with smaller indices included)
        r, info = bnd.node_ranges(model, sizes, (ref.F, ref.index), m_final=m_final)
        got = exhaustive_pieces(ProblemEvaluator(pb), sizes, pb.n_obj, r)
        np.testing.assert_array_equal(got.index, ref.index)
        np.testing.assert_array_equal(got.F, ref.F)
        assert info["skipped"] == pb.space.size - sum(b - a for a, b in r)
        assert info["skipped"] == sum(info["skipped_by"].values())
        assert info["skipped"] > 0
        # the exact front dominates some nodes (the unbonded ones through the per-leaf strain
        # bound of the signal-strain objective; not in the small 3-copper unbonded case)
        if m_final == 1 and name != "unbonded":
            assert info["skipped_by"]["dominance"] > 0
            if "signal_strain" in pb.constraint_names:
                assert info["skipped_by"]["strain"] > 0
        if name in UNBONDED:                         # the unbonded thickness and leaf bounds bite
            assert info["skipped_by"]["thickness"] > 0
            assert m_final > 1 or info["skipped_by"]["leaves"] > 0
        if name == "unbonded":                       # the per-leaf strain bound against the peak limit
            assert info["skipped_by"]["strain"] > 0
        if name.startswith("multi-line"):            # the multi-line row bound bites
            assert info["skipped_by"]["line"] > 0


@pytest.mark.parametrize("name", ["bonded", "unbonded", "two-zones", "multi-line-unbonded"])
def test_search_with_bounds_equals_plain_front(name, monkeypatch):
    # Reference: plain enumeration. The engine's bound path (evolutionary pre-run for the known
    # points, branch and bound, enumeration of the rest) on a space small enough for the test.
    pb = problem(name)
    ref = _plain(pb)
    monkeypatch.setattr(engine, "BOUND_MIN", 0)
    monkeypatch.setattr(engine, "PRE_BUDGET", 300)
    monkeypatch.setattr(bnd, "MIN_BLOCK", 8)
    col = pb.constraint_names.index("total_thickness")
    res = engine.search(ProblemEvaluator(pb, prune=False), pb.space.sizes, pb.n_obj, pb.n_con, "exhaustive",
                        workers=1, evaluate_exhaustive=ProblemEvaluator(pb), space=pb.space,
                        bound=(ProblemEvaluator(pb, prune=False), col))
    np.testing.assert_array_equal(res.archive.index, ref.index)
    np.testing.assert_array_equal(res.archive.F, ref.F)
    b = res.info["bounds"]
    assert b["skipped"] > 0
    assert set(b["skipped_by"]) == set(bnd.KINDS)


def test_dominance_respects_index_ties():
    # Exact rule of the archive: of equal objective vectors it keeps the smallest index. A node
    # whose bound equals a known point's objectives is skipped only if that point's index is
    # below the node's first candidate.
    Fl = np.array([[1.0, 2.0], [1.0, 2.0], [1.0, 2.5]])
    start = np.array([10, 0, 0])
    KF, Ki = np.array([[1.0, 2.0]]), np.array([5])
    np.testing.assert_array_equal(bnd._dominated(Fl, start, KF, Ki), [True, False, True])
