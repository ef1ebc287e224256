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
