"""The compiled bend-mechanics kernel (optimizer/search/kernel.py) equals the general layer path.

Reference: the decoded layer arrays (:meth:`Space.mechanics`) bent by
:func:`strainline.models.bending.bend_strains` -- the transformed-section composite beam of
J. M. Gere and S. P. Timoshenko, *Mechanics of Materials* (4th ed., 1997), with the exact strain
``(y - y_NA) / (R + y_NA)`` (bottom inside) or ``(y_NA - y) / (R + T - y_NA)`` (top inside) and one
axis per bonded leaf; tests/test_bending.py checks that function against hand mechanics -- and the
dielectric limit :func:`.constraints.strain_ratio` on the same strains. Every column is compared to
rtol 1e-12 on random candidates of every study family: bonded and unbonded (leaves auto and fixed),
symmetric, inside top and bottom, plane strain, 2 to 6 copper layers (a study needs at least 2), no cover, adhesiveless, and
every shipped study with its own catalog.
"""
from __future__ import annotations

import copy
import types
from pathlib import Path

import numpy as np
import pytest

from strainline.models.bending import bend_strains
from strainline.models.units import MM
from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.inputs.study import load_study, validate_study
from strainline.optimizer.search import constraints as material
from strainline.optimizer.search import kernel
from strainline.optimizer.search.space import build_space

ROOT = Path(__file__).resolve().parents[1]
CAT = load_catalog()
RTOL = 1e-12

BASE = {
    "name": "kernel",
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 500], "frequency_ghz": 2},
    "bend": {"inner_radius_mm": 1.5, "use": "dynamic", "cycles": 5000},
    "stack": {"copper_layers": 3, "copper_weights": ["1/4oz", "1/2oz", "1oz"],
              "copper_types": ["rolled-annealed", "electrodeposited"],
              "dielectric": ["polyimide-film", "lcp-film"], "dielectric_thickness_um": [12.5, 50],
              "adhesive": ["none", "acrylic-adhesive", "epoxy-adhesive"], "adhesive_thickness_um": [15],
              "coverlay": ["polyimide-coverlay-acrylic", "polyimide-coverlay-epoxy", "none"],
              "ground_coverage": [1.0],   # hatched grounds of fill 0.51 and 0.25 as geometry
              "ground_hatch": [{"pitch_um": 500, "line_width_um": 150, "angle_deg": 45},
                               {"pitch_um": 500, "line_width_um": 67, "angle_deg": 45}]},
    "limits": {"total_thickness_um": 300},
    "objectives": ["signal_strain", "thickness", "loss"],
}

STRIP = {"line": {"type": "stripline"}}
CASES = {
    "bonded": {},
    "inside-top": {"bend": {"inside": "top"}},
    "plane-strain-top": {"bend": {"plane_strain": True, "inside": "top"}},
    "symmetric": {"stack": {"symmetric": True}},
    "symmetric-4cu-top": {"stack": {"symmetric": True, "copper_layers": 4}, "bend": {"inside": "top"}},
    "2cu": {"stack": {"copper_layers": 2}},
    "5cu-stripline": {"stack": {"copper_layers": 5}, **STRIP},
    "6cu-stripline-free": {"stack": {"copper_layers": 6, "order": "free"}, **STRIP},
    "free-order": {"stack": {"order": "free"}},
    "no-cover": {"stack": {"coverlay": ["none"]}},
    "adhesiveless": {"stack": {"adhesive": ["none"], "order": "free"}},
    "coupled": {"line": {"type": "coupled-microstrip", "target_ohm": 90, "gap_um": [75, 100, 150]}},
    "unbonded-auto": {"bend": {"region": "unbonded"}, "stack": {"copper_layers": 4}},
    "unbonded-auto-free-top": {"bend": {"region": "unbonded", "inside": "top"},
                               "stack": {"copper_layers": 5, "order": "free"}, **STRIP},
    "unbonded-6cu": {"bend": {"region": "unbonded"}, "stack": {"copper_layers": 6, "order": "free"}, **STRIP},
    "unbonded-fixed": {"bend": {"region": "unbonded", "leaves": [[1, 2], [3], [4]]},
                       "stack": {"copper_layers": 4, "order": "free"}},
    "unbonded-fixed-3cu-top": {"bend": {"region": "unbonded", "leaves": [[1, 2], [3]], "inside": "top"},
                               "stack": {"copper_layers": 3, "order": "free"}},
    "unbonded-symmetric-plane-strain": {"bend": {"region": "unbonded", "plane_strain": True},
                                        "stack": {"copper_layers": 4, "symmetric": True}},
    "unbonded-no-cover": {"bend": {"region": "unbonded", "inside": "top"},
                          "stack": {"copper_layers": 4, "coverlay": ["none"], "order": "free"}},
}


def _study(over: dict):
    d = copy.deepcopy(BASE)
    for k, v in over.items():
        d[k].update(v)
    return validate_study(d, CAT)


def reference(sp, slots, zone):
    """The general layer path: decoded layers, bend_strains (Gere & Timoshenko), strain_ratio."""
    x = None
    t, e, leaf, _ = sp.mechanics(x, slots)
    bs = bend_strains(t, e, zone.inner_radius_mm * MM, inside_bottom=(zone.inside == "bottom"), leaf=leaf)
    cols = [sp.cu_col(i) for i in range(sp.n_cu)]
    peak = np.maximum(np.abs(bs.strain_top[:, cols]), np.abs(bs.strain_bottom[:, cols]))
    return t.sum(axis=1), peak, material.strain_ratio(sp, slots, bs.strain_top, bs.strain_bottom), leaf


def check(sp, n: int = 3000, seed: int = 7):
    pb = types.SimpleNamespace(space=sp, zone=None)       # the kernel reads only the space
    x = sp.repair(np.random.default_rng(seed).integers(0, sp.sizes, (n, len(sp.sizes))))
    slots = sp.slots(x)
    for zone in sp.study.bends:
        r_total, r_peak, r_ratio, leaf = reference(sp, slots, zone)
        assert (leaf is not None) == sp.unbonded
        assert r_peak.max() > 1e-4                 # strains large enough for the comparison to mean something
        assert r_ratio.max() > 1e-3
        # the bonded kernel and the general (leaf) kernel, which a bonded region also runs through
        for general in ((False, True) if not sp.unbonded else (False,)):
            total, peak, ratio = kernel.zone_mechanics(pb, slots, zone, general=general)
            np.testing.assert_allclose(total, r_total, rtol=RTOL, atol=0)
            np.testing.assert_allclose(peak, r_peak, rtol=RTOL, atol=0)
            np.testing.assert_allclose(ratio, r_ratio, rtol=RTOL, atol=0)
    return slots


@pytest.mark.parametrize("name", list(CASES))
def test_kernel_equals_layer_path(name):
    sp = build_space(_study(CASES[name]), CAT)
    slots = check(sp)
    if sp.unbonded:
        # the batch really holds leaf boundaries (on both film sides where the order is free and the stack not mirrored)
        from strainline.optimizer.search.leaves import leaf_state
        bnd, up, _ = leaf_state(sp, slots)
        assert bnd.any()
        if sp.study.stack.order == "free" and not sp.study.stack.symmetric:
            assert (bnd & up).any() and (bnd & ~up).any()
    if "no-cover" not in name and sp.n_cu > 1:
        assert (slots["cov_val"] < 1).any()        # hatched grounds (fill by the lamination rule)


SHIPPED = sorted((ROOT / "studies").glob("*.yaml")) + sorted((ROOT / "benchmarks" / "studies").glob("*.yaml"))


@pytest.mark.parametrize("path", SHIPPED, ids=[p.stem for p in SHIPPED])
def test_kernel_equals_layer_path_on_shipped_studies(path):
    study = load_study(path)
    cat = load_catalog(study.catalog_path) if getattr(study, "catalog_path", None) else CAT
    check(build_space(study, cat), n=2000)


def test_parallel_variant_and_empty_batch():
    sp = build_space(_study(CASES["unbonded-auto"]), CAT)
    pb = types.SimpleNamespace(space=sp, zone=None)
    x = sp.repair(np.random.default_rng(3).integers(0, sp.sizes, (10000, len(sp.sizes))))
    s = sp.slots(x)
    for a, b in zip(kernel.zone_mechanics(pb, s, parallel=True), kernel.zone_mechanics(pb, s)):
        np.testing.assert_array_equal(a, b)         # the same arithmetic per row, whatever the split
    bonded = build_space(_study({}), CAT)
    pb = types.SimpleNamespace(space=bonded, zone=None)
    s = bonded.slots(bonded.repair(np.random.default_rng(4).integers(0, bonded.sizes, (10000, len(bonded.sizes)))))
    for a, b in zip(kernel.zone_mechanics(pb, s, parallel=True), kernel.zone_mechanics(pb, s)):
        np.testing.assert_array_equal(a, b)
    s = bonded.slots(np.zeros((0, len(bonded.sizes)), np.int64))
    total, peak, ratio = kernel.zone_mechanics(pb, s)
    assert total.shape == (0,) and peak.shape == (0, 3) and ratio.shape == (0,)


def test_switch(monkeypatch):
    monkeypatch.setenv("STRAINLINE_KERNEL", "0")
    assert not kernel.enabled()
    monkeypatch.setenv("STRAINLINE_KERNEL", "1")
    assert kernel.enabled()
    monkeypatch.delenv("STRAINLINE_KERNEL")
    assert kernel.enabled()


# --------------------------------------------------------------------------- the whole evaluation
#: The strain block of ``Problem._evaluate`` and its replacement by the kernel (the integration the
#: kernel's hand-over proposes; benchmarks/bench_kernel.py applies the same one). Once problem.py
#: calls the kernel itself, the test toggles ``STRAINLINE_KERNEL`` instead.
PATCH = (("        fast = self.fast is not None and not sp.unbonded\n        if fast:\n",
          "        fast = self.fast is not None and not sp.unbonded\n        use_kernel = _kernel.enabled()\n"
          "        if fast or use_kernel:\n"),
         ("                if fast:\n                    total, cu_peak, ratio = self.copper_strains(slots, dielectric=True)\n",
          "                if use_kernel:\n                    total, cu_peak, ratio = _kernel.zone_mechanics(self, slots, zone)\n"
          "                elif fast:\n                    total, cu_peak, ratio = self.copper_strains(slots, dielectric=True)\n"))


def _with_kernel(monkeypatch, on: bool) -> None:
    import inspect
    import textwrap

    from strainline.optimizer.search import problem

    monkeypatch.setenv("STRAINLINE_KERNEL", "1" if on else "0")
    src = inspect.getsource(problem.Problem._evaluate)
    if "zone_mechanics" in src or not on:
        return
    for old, new in PATCH:
        assert old in src, "Problem._evaluate changed: update PATCH"
        src = src.replace(old, new)
    ns = dict(vars(problem), _kernel=kernel)
    exec(compile(textwrap.dedent(src), problem.__file__, "exec"), ns)
    monkeypatch.setattr(problem.Problem, "_evaluate", ns["_evaluate"])


EVAL_CASES = ["bonded", "plane-strain-top", "coupled", "unbonded-auto", "unbonded-fixed", "shipped:reader-fold-and-hinge",
              "shipped:dock-tail-three-lines"]


@pytest.mark.parametrize("name", EVAL_CASES)
def test_evaluate_with_kernel_equals_numpy_evaluate(name, monkeypatch):
    # Reference: Problem.evaluate on the numpy paths (STRAINLINE_KERNEL=0), itself checked against
    # the layer path in tests/test_fast_evaluation.py.
    from strainline.optimizer.search.linetable import table_options
    from strainline.optimizer.search.problem import build_problem

    if name.startswith("shipped:"):
        study = load_study(ROOT / "studies" / (name.split(":")[1] + ".yaml"))
        cat = load_catalog(study.catalog_path) if getattr(study, "catalog_path", None) else CAT
    else:
        study, cat = _study(CASES[name]), CAT
    with table_options(impedance="closed-form"):
        pb = build_problem(build_space(study, cat), cat)
    x = pb.space.repair(np.random.default_rng(3).integers(0, pb.space.sizes, (12000, pb.n_var)))
    runs = {}
    for on in (False, True):
        with monkeypatch.context() as m:
            _with_kernel(m, on)
            runs[on] = (pb.evaluate(x, want_cycles=True), pb.evaluate(x, prune=True))
    (a, ap), (b, bp) = runs[True], runs[False]
    np.testing.assert_allclose(a.peak_strain, b.peak_strain, rtol=RTOL, atol=0)
    np.testing.assert_allclose(a.signal_strain, b.signal_strain, rtol=RTOL, atol=0)
    np.testing.assert_allclose(a.total_thickness_m, b.total_thickness_m, rtol=RTOL, atol=0)
    np.testing.assert_allclose(a.cycles, b.cycles, rtol=1e-9, atol=0)
    np.testing.assert_allclose(a.zone_peak, b.zone_peak, rtol=RTOL, atol=0)
    np.testing.assert_array_equal(a.line_row, b.line_row)
    np.testing.assert_allclose(a.G, b.G, rtol=1e-10, atol=1e-15)
    # feasibility agrees except on a row sitting exactly on a limit (e.g. a stack whose layers sum
    # to the thickness limit: the numpy batch sum may end 1 ulp above it, the sequential sum on it)
    mech = [k for k, c in enumerate(pb.constraint_names)
            if c in ("total_thickness", "peak_strain", "signal_strain", "fatigue_life", "material_strain", "glass")]
    edge = np.any(np.abs(b.G[:, mech]) < 1e-12, axis=1)
    assert np.array_equal(a.feasible[~edge], b.feasible[~edge]) and edge.mean() < 0.01
    # objectives of feasible rows are rounded to the objective grid: a 1e-16 difference may move one
    # step (as in tests/test_fast_evaluation.py); the others keep full precision
    f = a.feasible & b.feasible
    diff = np.abs(np.nan_to_num(a.F[f], posinf=0.0) - np.nan_to_num(b.F[f], posinf=0.0))
    assert np.all(diff <= pb.resolution * 1.0001)
    nf = ~a.feasible & ~b.feasible
    np.testing.assert_allclose(a.F[nf], b.F[nf], rtol=1e-10, atol=0)
    np.testing.assert_array_equal(ap.feasible[~edge], bp.feasible[~edge])
    np.testing.assert_allclose(ap.G, bp.G, rtol=1e-10, atol=1e-15)
