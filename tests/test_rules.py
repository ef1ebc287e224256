"""Design-rule findings against the figures they encode.

* common-practice figures (common practice, no source): about 2 % copper strain for a one-time install
  bend; inner radius >= about 10 x thickness one-time, >= about 25 x dynamic;
* IPC-2223 bend ratios as recalled (from memory, bending note §2.3): 6 / 12 / 24 install, 100 / 150
  dynamic, dynamic multilayer not recommended;
* the balanced single-sided build's copper strain is (c/2) / (R + T/2) exactly (Euler-Bernoulli
  kinematics, bending note §1.2), which places the radii on either side of the 2 % threshold.
"""
from __future__ import annotations

import pytest

from strainline.models import rules
from strainline.models.materials import CopperFoil
from strainline.models.stackup import Layer, Stackup

UM, GPA = 1e-6, 1e9
RA = CopperFoil("ra", "rolled-annealed", 7, "test RA", 118e9, 0.34, 230e6, 110e6, 0.65, 0.3e-6, 5.8e7, "test")
ED = CopperFoil("ed", "electrodeposited", 1, "test ED", 118e9, 0.34, 330e6, 250e6, 0.3, 1e-6, 5.8e7, "test")


def diel(name, t_um, e_gpa=2.8, glass=False, family="film"):
    return Layer(name, "dielectric", t_um * UM, e_gpa * GPA, 0.34, 3.3, 0.005, "inline", glass_reinforced=glass,
                 family=family)


def cu(name, t_um=18, foil=RA):
    return Layer(name, "copper", t_um * UM, foil.modulus_pa, 0.34, None, None, foil.name, copper=foil)


def single_sided(foil=RA, features=(), glass=False):
    # balanced: 45 / 18 / 45 um, T = 108 um, NA at the copper mid-plane
    return Stackup((diel("cover", 45), cu("sig", foil=foil), diel("base", 45, glass=glass)),
                   features=frozenset(features))


def codes(findings):
    return {f.code for f in findings}


def test_install_strain_threshold_two_percent():
    # copper strain (c/2)/(R + T/2) = 2 % at R = 9/0.02 - 54 = 396 um (common practice, no source: ~2 %)
    s = single_sided()
    above = rules.bend_findings(s, 0.97 * 396e-6, "install")
    below = rules.bend_findings(s, 1.03 * 396e-6, "install")
    assert "copper-strain-install" in codes(above)
    assert "copper-strain-install" not in codes(below)
    f = next(x for x in above if x.code == "copper-strain-install")
    assert f.source == "common practice, no source" and f.severity == "warning"
    # not an install rule: absent in dynamic use
    assert "copper-strain-install" not in codes(rules.bend_findings(s, 0.97 * 396e-6, "dynamic"))


@pytest.mark.parametrize("use, ratio, code", [("install", 10.0, "bend-ratio-one-time"),
                                              ("dynamic", 25.0, "bend-ratio-dynamic")])
def test_common_practice_bend_ratios(use, ratio, code):
    # common practice, no source: R >= ~10 T one-time, ~25 T dynamic
    s = single_sided()
    t = s.total_thickness_m
    assert code in codes(rules.bend_findings(s, 0.99 * ratio * t, use))
    assert code not in codes(rules.bend_findings(s, 1.01 * ratio * t, use))
    f = next(x for x in rules.bend_findings(s, 0.99 * ratio * t, use) if x.code == code)
    assert f.source == rules.COMMON_PRACTICE == "common practice, no source"


@pytest.mark.parametrize("n_cu, use, ratio", [(1, "install", 6), (2, "install", 12), (3, "install", 24),
                                              (1, "dynamic", 100), (2, "dynamic", 150)])
def test_ipc2223_ratio_by_copper_count(n_cu, use, ratio):
    # IPC-2223 ratios as recalled (from memory; bending note §2.3)
    layers = [diel("top", 25)]
    for k in range(n_cu):
        layers += [cu(f"c{k}"), diel(f"d{k}", 25)]
    s = Stackup(tuple(layers))
    t = s.total_thickness_m
    assert rules.ipc2223_bend_ratio(n_cu, use) == ratio
    hit = [f for f in rules.bend_findings(s, 0.99 * ratio * t, use) if f.code == "ipc2223-bend-ratio"]
    assert hit and "from memory" in hit[0].source
    assert "ipc2223-bend-ratio" not in codes(rules.bend_findings(s, 1.01 * ratio * t, use))


def test_dynamic_bonded_multilayer_not_recommended():
    s = Stackup((diel("a", 25), cu("c1"), diel("b", 25), cu("c2"), diel("c", 25), cu("c3"), diel("d", 25)))
    assert rules.ipc2223_bend_ratio(3, "dynamic") is None
    assert "ipc2223-dynamic-multilayer" in codes(rules.bend_findings(s, 100e-3, "dynamic"))
    # unbonded: each leaf has at most 2 copper layers, the multilayer warning goes away
    gap = Layer("gap", "air-gap", 0.0, 0.0, 0.0, None, None, "inline")
    s2 = Stackup((diel("a", 25), cu("c1"), diel("b", 25), cu("c2"), diel("c", 25), gap, cu("c3"), diel("d", 25)))
    assert "ipc2223-dynamic-multilayer" not in codes(rules.bend_findings(s2, 100e-3, "dynamic"))


def test_material_and_feature_findings():
    assert "glass-in-bend" in codes(rules.bend_findings(single_sided(glass=True), 5e-3))
    assert "glass-in-bend" not in codes(rules.bend_findings(single_sided(), 5e-3))
    # electrodeposited copper flagged in a dynamic bend only (IPC-TR-484 recommendation)
    ed = single_sided(foil=ED)
    assert "ed-copper-dynamic" in codes(rules.bend_findings(ed, 50e-3, "dynamic"))
    assert "ed-copper-dynamic" not in codes(rules.bend_findings(ed, 50e-3, "install"))
    assert "ed-copper-dynamic" not in codes(rules.bend_findings(single_sided(), 50e-3, "dynamic"))
    feats = rules.bend_findings(single_sided(features=("plated-through-holes", "nickel-plating", "panel-plating",
                                                       "button-plating")), 5e-3)
    assert {"plated-through-holes-in-bend", "nickel-plating-in-bend", "panel-plating-in-bend",
            "button-plating"} <= codes(feats)
    sev = {f.code: f.severity for f in feats}
    assert sev["panel-plating-in-bend"] == "warning" and sev["button-plating"] == "info"


def test_elastic_above_yield_flag():
    # yield strain 110 MPa / 118 GPa = 0.0932 %: copper strain 9/(R + 54) crosses it at R = 9605 um
    s = single_sided()
    assert "elastic-above-yield" in codes(rules.bend_findings(s, 0.95 * 9605e-6))
    assert "elastic-above-yield" not in codes(rules.bend_findings(s, 1.05 * 9605e-6))


def test_every_finding_has_a_source_and_valid_severity():
    s = single_sided(foil=ED, features=("panel-plating",), glass=True)
    for use in ("install", "dynamic"):
        for f in rules.bend_findings(s, 0.2e-3, use):
            assert f.source.strip() and f.severity in rules.SEVERITIES
    with pytest.raises(ValueError):
        rules.bend_findings(s, 1e-3, "sometimes")


def test_ipc2223_formula_finding_matches_general_model_on_balanced_build():
    # IPC-2223 single-sided formula (from memory), E_B 0.3 % dynamic: R = 9 (0.997/0.003) - 45 um
    # = 2946 um for the balanced 45/18/45 build (bending note §2.2 worked number 2946 um)
    s = single_sided()
    r_ipc, offset, arm = rules.ipc2223_formula_radius(s, "dynamic")
    assert r_ipc == pytest.approx(2946e-6, abs=0.5e-6) and offset == pytest.approx(0.0, abs=1e-12)
    assert "ipc2223-formula-radius" in codes(rules.bend_findings(s, 0.99 * r_ipc, "dynamic"))
    assert "ipc2223-formula-radius" not in codes(rules.bend_findings(s, 1.01 * r_ipc, "dynamic"))
    # install, RA: E_B 16 % -> 2.25 um (§2.2)
    assert rules.ipc2223_formula_radius(s, "install")[0] == pytest.approx(2.25e-6, abs=0.01e-6)
    # double-sided, c = 18, d = 25, D = 37.5 um, E_B 0.3 % -> 10 099 um (§2.2)
    d = Stackup((diel("f1", 12.5), diel("a1", 25, 1.0, family="adhesive"), cu("c1"), diel("core", 25, 5.0),
                 cu("c2"), diel("a2", 25, 1.0, family="adhesive"), diel("f2", 12.5)))
    assert rules.ipc2223_formula_radius(d, "dynamic")[0] == pytest.approx(10099e-6, abs=0.5e-6)
    assert arm == pytest.approx(9e-6, rel=1e-12)
    # unbalanced single-sided (no cover): the axis sits 2.1 um (23 % of c/2) below the copper centre
    # (hand: (118*18*59 + 2.8*50*25)/(118*18 + 2.8*50) = 56.90 um vs 59 um) -> info finding
    bare = Stackup((cu("c"), diel("base", 50)))
    assert "ipc2223-formula-unbalanced" in codes(rules.bend_findings(bare, 5e-3, "install"))
    assert "ipc2223-formula-unbalanced" not in codes(rules.bend_findings(s, 5e-3, "install"))
