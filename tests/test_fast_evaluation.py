"""The bonded fast path of the problem evaluation equals the general bend model.

``Problem.copper_strains`` stacks per-option group sums (thickness, sum E t, first moment)
instead of building (n, L) layer arrays; it must give the same copper strains as
:func:`strainline.models.bending.bend_strains` on the decoded layers (exact strain
(y - y_NA)/(R + y_NA), transformed section: Gere & Timoshenko, *Mechanics of Materials*, composite
beams) to 1e-12, for both inside faces, hatched grounds, plane strain, symmetric stacks and unbonded
bend regions (each leaf about its own neutral axis).
"""
from __future__ import annotations

import copy
import dataclasses

import numpy as np
import pytest

from strainline.models.bending import bend_strains
from strainline.models.units import MM
from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.search.problem import build_problem
from strainline.optimizer.search.space import build_space
from strainline.optimizer.inputs.study import validate_study

CAT = load_catalog()


@pytest.fixture(autouse=True)
def _closed_form_lines():
    # These tests are about the mechanics: the line table uses the closed-form impedance model
    # (fast) where the field-accurate one is the default.
    try:
        from strainline.optimizer.search.linetable import table_options
    except ImportError:
        yield
        return
    with table_options(impedance="closed-form"):
        yield

BASE = {
    "name": "fast-path",
    # a calibrated hatch factor: the hatch-width column without 3-D solves (tests/test_hatch*.py
    # cover those), since these tests are about the mechanics
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 500], "frequency_ghz": 2,
             "hatch_correction": 1.12},
    "bend": {"inner_radius_mm": 1.5, "use": "dynamic", "cycles": 5000},
    "stack": {"copper_layers": 3, "copper_weights": ["1/4oz", "1/2oz", "1oz"],
              "copper_types": ["rolled-annealed", "electrodeposited"],
              "dielectric": ["polyimide-film", "lcp-film"], "dielectric_thickness_um": [12.5, 50],
              "adhesive": ["none", "acrylic-adhesive", "epoxy-adhesive"], "adhesive_thickness_um": [15],
              "coverlay": ["polyimide-coverlay-acrylic", "polyimide-coverlay-epoxy", "none"],
              "ground_coverage": [1.0],   # hatched grounds of fill 0.51 and 0.25 as geometry
              "ground_hatch": [{"pitch_um": 500, "line_width_um": 150, "angle_deg": 45},
                               {"pitch_um": 500, "line_width_um": 67, "angle_deg": 45}]},
    "limits": {"total_thickness_um": 300, "min_cycles": 2000},
    "objectives": ["signal_strain", "thickness", "loss"],
}

CASES = [
    {},
    {"bend": {"inside": "top"}},
    {"bend": {"plane_strain": True, "inside": "top"}},
    {"stack": {"symmetric": True}},
    {"stack": {"symmetric": True, "copper_layers": 4}, "bend": {"inside": "top"}},
    {"stack": {"copper_layers": 2}},
    {"stack": {"copper_layers": 5}, "line": {"type": "stripline"}},
    {"line": {"type": "coupled-microstrip", "target_ohm": 90, "gap_um": [75, 100, 150]},
     "objectives": ["peak_strain", "thickness", "life"]},
    {"bend": {"region": "unbonded"}, "stack": {"copper_layers": 4}},
    {"bend": {"region": "unbonded", "inside": "top"}, "stack": {"copper_layers": 5},
     "line": {"type": "stripline"}},
    {"bend": {"region": "unbonded", "plane_strain": True}, "stack": {"copper_layers": 4, "symmetric": True}},
]


def problem(over):
    d = copy.deepcopy(BASE)
    for k, v in over.items():
        if isinstance(v, dict):
            d[k].update(v)
        else:
            d[k] = v
    sp = build_space(validate_study(d, CAT), CAT)
    return build_problem(sp, CAT)


@pytest.mark.parametrize("over", CASES)
def test_fast_path_equals_bend_strains(over):
    pb = problem(over)
    sp, bend = pb.space, pb.space.study.bend
    x = sp.repair(np.random.default_rng(7).integers(0, sp.sizes, (3000, len(sp.sizes))))
    total, cu_peak = pb.copper_strains(sp.slots(x))
    t, e, leaf, _ = sp.mechanics(x)
    assert (leaf is None) == (bend.region == "bonded")
    bs = bend_strains(t, e, bend.inner_radius_mm * MM, inside_bottom=(bend.inside == "bottom"), leaf=leaf)
    cols = [sp.cu_col(i) for i in range(sp.n_cu)]
    ref = np.maximum(np.abs(bs.strain_top[:, cols]), np.abs(bs.strain_bottom[:, cols]))
    assert ref.max() > 1e-3                 # strains large enough for the comparison to mean something
    np.testing.assert_allclose(cu_peak, ref, rtol=1e-12, atol=0)
    np.testing.assert_allclose(total, t.sum(axis=1), rtol=1e-12, atol=0)
    # hatched grounds are present in the batch (coverage below 1 on some non-signal copper)
    assert (sp.slots(x)["cov_val"] < 1).any()


@pytest.mark.parametrize("over", [CASES[0], CASES[2], CASES[7], CASES[9]])
def test_fast_evaluation_equals_the_general_evaluation(over):
    pb = dataclasses.replace(problem(over), fast_unbonded=True)
    slow = dataclasses.replace(pb, fast=None)
    x = pb.space.repair(np.random.default_rng(3).integers(0, pb.space.sizes, (4000, pb.n_var)))
    a, b = pb.evaluate(x, want_cycles=True), slow.evaluate(x, want_cycles=True)
    np.testing.assert_allclose(a.peak_strain, b.peak_strain, rtol=1e-12, atol=0)
    np.testing.assert_allclose(a.signal_strain, b.signal_strain, rtol=1e-12, atol=0)
    np.testing.assert_allclose(a.cycles, b.cycles, rtol=1e-9, atol=0)
    np.testing.assert_array_equal(a.line_row, b.line_row)
    # objectives are rounded to the objective resolution: a 1e-16 difference may move one quantum
    # (only feasible rows are rounded; the others keep full precision)
    f = a.feasible
    diff = np.abs(np.nan_to_num(a.F[f], posinf=0.0) - np.nan_to_num(b.F[f], posinf=0.0))
    assert np.all(diff <= pb.resolution * 1.0001)            # at most one grid step per column
    assert diff.size == 0 or np.mean(diff == 0) > 0.999      # and almost always none
    assert np.all(np.abs(a.F[~f] - b.F[~f]) <= pb.resolution * 0.5001)   # loss comes pre-rounded
    np.testing.assert_allclose(a.G, b.G, rtol=1e-10, atol=1e-15)
    np.testing.assert_array_equal(a.feasible, b.feasible)
    pa, pbb = pb.evaluate(x, prune=True), slow.evaluate(x, prune=True)
    np.testing.assert_array_equal(pa.feasible, pbb.feasible)


def test_chunk_digits_equal_numpy_unravel_index():
    # Reference: numpy.unravel_index with order="F" gives mixed-radix digits, first variable fastest.
    from strainline.optimizer.search.engine import _ChunkDigits

    rng = np.random.default_rng(5)
    for _ in range(60):
        sizes = rng.integers(1, 9, rng.integers(1, 7))
        total = int(np.prod(sizes))
        dig = _ChunkDigits(sizes, int(rng.integers(1, 300)))
        assert 1 <= dig.chunk
        got = np.concatenate([dig(a, min(a + dig.chunk, total)) for a in range(0, total, dig.chunk)])
        ref = np.stack(np.unravel_index(np.arange(total), tuple(int(s) for s in sizes), order="F"), axis=1)
        np.testing.assert_array_equal(got, ref)
