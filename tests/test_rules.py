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
    # woven glass (common practice, no source): never in a dynamic bend; in an install bend allowed
    # above the one-time ratio 10 x T (T = 108 um -> 1.08 mm), flagged below it
    g = single_sided(glass=True)
    assert "glass-dynamic" in codes(rules.material_findings(g, 5e-3, "dynamic"))
    assert "glass-install" in codes(rules.material_findings(g, 1.1e-3, "install"))
    assert "glass-install-tight" in codes(rules.material_findings(g, 1.0e-3, "install"))
    assert not codes(rules.material_findings(single_sided(), 5e-3, "dynamic"))
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


def test_dielectric_strain_within_derated_elongation():
    # The strain at a dielectric face against elongation x fraction (catalog elongation; the 0.5
    # derating is common practice, no source). Balanced 45/18/45 build, bottom inside: the outer
    # cover face sits 54 um above the axis, strain 54/(R + 54) (exact Euler-Bernoulli strain,
    # bending note section 1.2). With a 6 % elongation epoxy-like cover the limit is 3 %:
    # 54/(R + 54) = 0.03 at R = 1746 um.
    def stack():
        cover = Layer("cover", "dielectric", 45 * UM, 2.8 * GPA, 0.34, 3.3, 0.005, "inline", family="adhesive",
                      elongation=0.06)
        return Stackup((cover, cu("sig"), diel("base", 45)))
    assert "dielectric-strain" in codes(rules.material_findings(stack(), 0.99 * 1746e-6))
    assert "dielectric-strain" not in codes(rules.material_findings(stack(), 1.01 * 1746e-6))
    # a stated fraction of 1 allows the full 6 %: 54/(R + 54) = 0.06 at R = 846 um
    assert "dielectric-strain" not in codes(rules.material_findings(stack(), 0.9 * 1746e-6, elongation_fraction=1.0))
    assert "dielectric-strain" in codes(rules.material_findings(stack(), 0.99 * 846e-6, elongation_fraction=1.0))


def test_cover_minimum_radius_and_cover_on_both_faces():
    # Photoimageable cover minimum bend radius 0.4 in = 10.16 mm (K. Smith, trade-magazine column, part II, 2019)
    pic = Layer("pic", "dielectric", 20 * UM, 2.0 * GPA, 0.35, 3.6, 0.028, "inline", family="cover",
                min_bend_radius_m=10.16e-3)
    s = Stackup((pic, cu("sig"), diel("base", 45)))
    assert "cover-min-radius" in codes(rules.material_findings(s, 10.0e-3))
    assert "cover-min-radius" not in codes(rules.material_findings(s, 10.2e-3))
    # a dynamic flex needs a cover on both faces of every leaf (common practice, no source)
    bare = Stackup((cu("sig"), diel("base", 45)))
    assert "copper-uncovered-dynamic" in codes(rules.material_findings(bare, 20e-3, "dynamic"))
    assert "copper-uncovered-dynamic" not in codes(rules.material_findings(bare, 20e-3, "install"))
    assert "copper-uncovered-dynamic" not in codes(rules.material_findings(bare, 20e-3, "dynamic",
                                                                           allow_uncovered=True))
    # a leaf face bordering an air gap counts as bare; a covered one does not
    gap = Layer("gap", "air-gap", 10 * UM, 0.0, 0.0, None, None, "air")
    leafy = Stackup((diel("c", 25), cu("a"), diel("core", 25), cu("b"), gap, diel("core2", 25), cu("c3"), diel("d", 25)))
    assert rules.bare_copper(leafy) == ("b",)
