"""Bend mechanics against outside references: hand-computed composite-beam (transformed-section)
results, exact invariants of plane-section kinematics, the IPC-2223 bend formulas as special cases,
independent scipy root solves for the elastic-perfectly-plastic force balance.

Sources named beside each check:
* [GT] J. M. Gere and S. P. Timoshenko, *Mechanics of Materials*, composite beams: transformed
  section, y_NA = sum(E t y_c) / sum(E t); strain linear through the section, zero at the axis.
* [EB] Euler-Bernoulli kinematics of a strip that starts straight: a fibre at height y has radius
  R + y, so eps = (y - y_NA) / (R + y_NA) exactly; a homogeneous layer's surface strain is
  T / (2R + T) (the foil-over-mandrel strain).
* [IPC] IPC-2223 single- and double-sided bend-radius formulas (printed form from memory,
  bending note §2.1); worked numbers of bending note §2.2/§2.3 (derived there by hand).
* [TW] Timoshenko & Woinowsky-Krieger, *Theory of Plates and Shells*: plane-strain modulus E/(1-nu^2).
"""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from strainline.models import bending as b
from strainline.models.materials import CopperFoil
from strainline.models.stackup import Layer, Stackup

UM, GPA = 1e-6, 1e9

FOIL = CopperFoil("ra", "rolled-annealed", 7, "test foil", 118e9, 0.34, 230e6, 110e6, 0.65, 0.3e-6, 5.8e7, "test")


def diel(name, t_um, e_gpa, nu=0.34, family="film"):
    return Layer(name, "dielectric", t_um * UM, e_gpa * GPA, nu, 3.3, 0.005, "inline", family=family)


def cu(name, t_um, coverage=1.0, e_gpa=118.0, **kw):
    return Layer(name, "copper", t_um * UM, e_gpa * GPA, 0.34, None, None, "ra", coverage=coverage, copper=FOIL, **kw)


# ---------------------------------------------------------------------------------------------
# transformed section, by hand
# ---------------------------------------------------------------------------------------------

def test_transformed_section_by_hand():
    # [GT] three layers, top to bottom: 25 um at 3 GPa, 18 um at 120 GPa, 50 um at 5 GPa.
    # centroids from the bottom: 25, 50 + 9 = 59, 68 + 12.5 = 80.5 um
    # y_NA = (5*50*25 + 120*18*59 + 3*25*80.5) / (5*50 + 120*18 + 3*25) = 139727.5 / 2485 um
    t = np.array([[25, 18, 50]]) * UM
    e = np.array([[3, 120, 5]]) * GPA
    hand = 139727.5 / 2485 * UM
    assert b.neutral_axis(t, e)[0] == pytest.approx(hand, rel=1e-12)
    # [EB] strain at the copper top face (y = 68 um), bottom face inside, R = 1 mm, by hand
    r = 1e-3
    s = b.bend_strains(t, e, r)
    assert s.strain_top[0, 1] == pytest.approx((68 * UM - hand) / (r + hand), rel=1e-12)
    assert s.strain_bottom[0, 2] == pytest.approx(-hand / (r + hand), rel=1e-12)


def test_neutral_axis_zero_axial_force_by_quadrature():
    # [GT] independent check: the axis is where the axial force of a linear strain field vanishes;
    # integrate E(y) (y - y0) on a fine grid and root-solve y0 with scipy brentq.
    rng = np.random.default_rng(3)
    t = rng.uniform(5, 60, 6) * UM
    e = rng.uniform(0.5, 130, 6) * GPA
    edges = np.concatenate([[0.0], np.cumsum(t[::-1])])
    y = np.linspace(0, edges[-1], 200001)
    mid = 0.5 * (y[1:] + y[:-1])
    e_of_y = e[::-1][np.clip(np.searchsorted(edges, mid) - 1, 0, 5)]
    dy = np.diff(y)
    y0 = brentq(lambda c: np.sum(e_of_y * (mid - c) * dy), 0, edges[-1], xtol=1e-15)
    # grid discretisation at the interfaces limits agreement to about 1e-7
    assert b.neutral_axis(t[None], e[None])[0] == pytest.approx(y0, rel=1e-6)


def test_two_layer_textbook_formula():
    # [GT] bimaterial strip: y_NA = (E1 t1^2/2 + E2 t2 (t1 + t2/2)) / (E1 t1 + E2 t2), layer 1 at the bottom
    t1, t2, e1, e2 = 18e-6, 25e-6, 118e9, 3e9
    hand = (e1 * t1**2 / 2 + e2 * t2 * (t1 + t2 / 2)) / (e1 * t1 + e2 * t2)
    assert b.neutral_axis([[t2, t1]], [[e2, e1]])[0] == pytest.approx(hand, rel=1e-12)


# ---------------------------------------------------------------------------------------------
# exact invariants
# ---------------------------------------------------------------------------------------------

def test_balanced_stack_axis_at_mid_thickness_and_modulus_scaling():
    # [GT] a stack symmetric about its mid-plane has its axis there; scaling every modulus by the
    # same factor leaves the axis unchanged.
    rng = np.random.default_rng(7)
    half_t = rng.uniform(5, 50, (40, 3)) * UM
    half_e = rng.uniform(1, 130, (40, 3)) * GPA
    t = np.hstack([half_t, half_t[:, ::-1]])
    e = np.hstack([half_e, half_e[:, ::-1]])
    na = b.neutral_axis(t, e)
    np.testing.assert_allclose(na, t.sum(axis=1) / 2, rtol=1e-12)
    t2 = rng.uniform(5, 50, (40, 5)) * UM
    e2 = rng.uniform(1, 130, (40, 5)) * GPA
    np.testing.assert_allclose(b.neutral_axis(t2, e2 * 37.5), b.neutral_axis(t2, e2), rtol=1e-12)


def test_strain_linear_continuous_and_zero_at_axis():
    # [EB] strain is linear in y with slope 1/(R + y_NA), continuous across interfaces, 0 at the axis
    rng = np.random.default_rng(11)
    t = rng.uniform(5, 60, (30, 6)) * UM
    e = rng.uniform(1, 130, (30, 6)) * GPA
    r = rng.uniform(0.2e-3, 5e-3, 30)
    s = b.bend_strains(t, e, r)
    yb, yt = b.layer_heights(t)
    na = s.y_na_m[:, :1]
    slope = (s.strain_top - s.strain_bottom) / t
    np.testing.assert_allclose(slope, np.broadcast_to(1 / (r[:, None] + na), slope.shape), rtol=1e-10)
    np.testing.assert_allclose(s.strain_bottom[:, :-1], s.strain_top[:, 1:], rtol=1e-12, atol=1e-15)
    at_axis = s.strain_bottom + (na - yb) * slope
    np.testing.assert_allclose(at_axis, 0, atol=1e-15)


def test_single_homogeneous_layer_surface_strain():
    # [EB] foil over a mandrel: outer surface strain T/(2R + T), inner -T/(2R + T)
    t, r = 35e-6, np.array([0.0, 0.1e-3, 1e-3, 10e-3])
    s = b.bend_strains(np.full((4, 1), t), np.full((4, 1), 118e9), r)
    np.testing.assert_allclose(s.strain_top[:, 0], t / (2 * r + t), rtol=1e-13)
    np.testing.assert_allclose(s.strain_bottom[:, 0], -t / (2 * r + t), rtol=1e-13)


def test_top_inside_equals_mirrored_stack_bottom_inside():
    # [EB] bending with the top face inside is the mirrored stack bent with its bottom inside
    rng = np.random.default_rng(5)
    t = rng.uniform(5, 60, (20, 5)) * UM
    e = rng.uniform(1, 130, (20, 5)) * GPA
    r = rng.uniform(0.2e-3, 5e-3, 20)
    top = b.bend_strains(t, e, r, inside_bottom=False)
    mir = b.bend_strains(t[:, ::-1], e[:, ::-1], r, inside_bottom=True)
    np.testing.assert_allclose(top.strain_top, mir.strain_bottom[:, ::-1], rtol=1e-12)
    np.testing.assert_allclose(top.strain_bottom, mir.strain_top[:, ::-1], rtol=1e-12)
    # outer face (bottom when the top is inside) in tension, inner face in compression
    assert np.all(top.strain_bottom[:, -1] > 0) and np.all(top.strain_top[:, 0] < 0)


def test_mixed_inside_batch_takes_both_branches():
    # one batch mixing both faces inside equals the two separate batches (np.where branches)
    rng = np.random.default_rng(9)
    t = rng.uniform(5, 60, (10, 4)) * UM
    e = rng.uniform(1, 130, (10, 4)) * GPA
    ib = np.arange(10) % 2 == 0
    mixed = b.bend_strains(t, e, 1e-3, ib)
    for flag in (True, False):
        sep = b.bend_strains(t[ib == flag], e[ib == flag], 1e-3, flag)
        np.testing.assert_array_equal(mixed.strain_top[ib == flag], sep.strain_top)


def test_plane_strain_moduli_and_common_poisson_axis():
    # [TW] plane strain: each layer E/(1-nu^2); with one common nu the factor cancels in the axis
    layers = (diel("a", 25, 2.8), cu("c", 18), diel("b", 50, 5.0))
    st_ = Stackup(layers)
    ps = st_.arrays(plane_strain=True)
    np.testing.assert_allclose(ps.modulus_pa[0], [x.modulus_pa / (1 - 0.34**2) for x in layers], rtol=1e-14)
    np.testing.assert_allclose(b.neutral_axis(ps.thickness_m, ps.modulus_pa),
                               b.neutral_axis(st_.arrays().thickness_m, st_.arrays().modulus_pa), rtol=1e-12)


# ---------------------------------------------------------------------------------------------
# coverage (Voigt) and fill resolution
# ---------------------------------------------------------------------------------------------

def test_voigt_coverage_by_hand_and_default_fill():
    # Voigt iso-strain rule (R. M. Jones, Mechanics of Composite Materials): f E_Cu + (1 - f) E_fill
    assert b.effective_modulus(118e9, 0.25, 1e9) == pytest.approx(0.25 * 118e9 + 0.75 * 1e9, rel=1e-15)
    # default fill: the adjacent adhesive (below here), not the film above
    s = Stackup((diel("film", 25, 2.8), cu("c", 18, coverage=0.4), diel("adh", 25, 1.0, 0.4, family="adhesive")))
    assert s.layers[1].fill_material == "inline" and s.layers[1].fill_modulus_pa == 1.0e9
    assert s.arrays().modulus_pa[0, 1] == pytest.approx(0.4 * 118e9 + 0.6 * 1e9, rel=1e-14)
    # fill follows lamination (bending note section 1.6: the fill is whatever flowed into the gaps,
    # coverlay or bond adhesive or the photoimageable cover): a film or core does not flow -> air
    s2 = Stackup((diel("film", 25, 2.8), cu("c", 18, coverage=0.4), diel("core", 25, 5.0)))
    assert s2.layers[1].fill_modulus_pa == 0.0 and s2.layers[1].fill_material == "air"
    assert s2.arrays().modulus_pa[0, 1] == pytest.approx(0.4 * 118e9, rel=1e-14)
    # an adhesive above wins over one below; a photoimageable cover flows too
    s5 = Stackup((diel("pic", 20, 2.0, 0.35, family="cover"), cu("c", 18, coverage=0.4),
                  diel("adh", 25, 1.0, 0.4, family="adhesive")))
    assert s5.layers[1].fill_modulus_pa == 2.0e9
    # an air gap does not flow: the adhesive on the far side of the copper fills it
    s6 = Stackup((diel("core", 25, 5.0), cu("c", 18, coverage=0.4),
                  Layer("g", "air-gap", 10 * UM, 0.0, 0.0, None, None, "air"), diel("adh", 25, 1.0, family="adhesive"),
                  cu("d", 18)))
    assert s6.layers[1].fill_modulus_pa == 0.0
    # explicit fill wins; no dielectric neighbour -> air
    s3 = Stackup((diel("film", 25, 2.8), cu("c", 18, coverage=0.4, fill_modulus_pa=2e9, fill_poisson=0.35,
                                          fill_material="x")))
    assert s3.layers[1].fill_modulus_pa == 2e9
    s4 = Stackup((cu("c", 18, coverage=0.5),))
    assert s4.layers[0].fill_modulus_pa == 0.0 and s4.layers[0].fill_material == "air"


def test_voigt_equals_side_by_side_strips():
    # [GT] Voigt is exact for strips along the strain: a homogenised layer gives the same axis as
    # the transformed section of side-by-side copper (width f) and fill (width 1 - f) strips.
    f, ecu, efill = 0.3, 118e9, 1e9
    t = np.array([25, 18, 50]) * UM
    e_hom = np.array([2.8e9, b.effective_modulus(ecu, f, efill), 5e9])
    yb, yt = b.layer_heights(t[None])
    yc = (0.5 * (yb + yt))[0]
    ea = [2.8e9 * t[0], f * ecu * t[1], (1 - f) * efill * t[1], 5e9 * t[2]]
    ys = [yc[0], yc[1], yc[1], yc[2]]
    hand = np.dot(ea, ys) / np.sum(ea)
    assert b.neutral_axis(t[None], e_hom[None])[0] == pytest.approx(hand, rel=1e-12)


# ---------------------------------------------------------------------------------------------
# IPC-2223 formulas as special cases, and the inverse
# ---------------------------------------------------------------------------------------------

@pytest.mark.parametrize("eb, hand_um", [(0.16, 2.25), (0.11, 27.8), (0.10, 36.0), (0.003, 2946.0)])
def test_ipc_single_sided_worked_numbers_and_special_case(eb, hand_um):
    # [IPC] bending note §2.2: c = 18, D = 45 um; R = (c/2)(100 - E_B)/E_B - D (worked numbers to 3-4 digits)
    r = b.ipc2223_single_sided_radius(18e-6, 45e-6, eb)
    assert r / UM == pytest.approx(hand_um, abs=0.05 + 5e-4 * hand_um)
    # the formula's own assumption: a build balanced about the copper (NA at the copper mid-plane)
    for e_cover, e_adh in [(2.8, 1.0), (8.5, 2.5)]:
        t = np.array([[25, 20, 18, 20, 25]]) * UM
        e = np.array([[e_cover, e_adh, 118, e_adh, e_cover]]) * GPA
        rmin = b.min_inner_radius(t, e, [[False, False, True, False, False]], eb)
        assert rmin[0] == pytest.approx(max(float(r), 0.0), rel=1e-10, abs=1e-15)


@pytest.mark.parametrize("eb, hand_um", [(0.16, 122.6), (0.11, 209.3), (0.10, 237.0), (0.003, 10099.0)])
def test_ipc_double_sided_worked_numbers_and_special_case(eb, hand_um):
    # [IPC] bending note §2.2: c = 18, d = 25, D = 37.5 um; R = (d/2 + c)(100 - E_B)/E_B - D
    r = b.ipc2223_double_sided_radius(18e-6, 25e-6, 37.5e-6, eb)
    assert r / UM == pytest.approx(hand_um, abs=0.05 + 5e-4 * hand_um)
    # symmetric build (NA at the core mid-plane), any symmetric moduli
    t = np.array([[12.5, 25, 18, 25, 18, 25, 12.5]]) * UM
    e = np.array([[2.8, 1.0, 118, 5.0, 118, 1.0, 2.8]]) * GPA
    is_cu = [[False, False, True, False, True, False, False]]
    assert b.min_inner_radius(t, e, is_cu, eb)[0] == pytest.approx(float(r), rel=1e-10)
    assert b.min_inner_radius(t, e, is_cu, eb, inside_bottom=False)[0] == pytest.approx(float(r), rel=1e-10)


def test_ipc_single_sided_is_wrong_for_unbalanced_build():
    # [IPC] bending note §2.1: the single-sided formula assumes the NA at the copper centre; with no
    # cover on the outside the general model needs a different radius.
    t = np.array([[18, 20, 25]]) * UM        # copper on top, adhesive + film below (inside)
    e = np.array([[118, 1.0, 2.8]]) * GPA
    general = b.min_inner_radius(t, e, [[True, False, False]], 0.003)[0]
    ipc = float(b.ipc2223_single_sided_radius(18e-6, 45e-6, 0.003))
    assert abs(general - ipc) / ipc > 0.05


@pytest.mark.parametrize("ratio, single_pct, single_tol, double_pct, double_tol",
                         [(10, 0.79, 0.005, 2.14, 0.005), (25, 0.33, 0.005, 0.88, 0.005),
                          (100, 0.083, 0.0005, 0.22, 0.005)])
def test_peak_strain_at_bend_ratios(ratio, single_pct, single_tol, double_pct, double_tol):
    # bending note §2.3 (derived there by hand): balanced single-sided T = 108 um (25 film + 20 adh
    # + 18 Cu + 20 adh + 25 film) and double-sided symmetric T = 136 um; tolerance = half a unit of
    # the last printed digit.
    t1 = np.array([[25, 20, 18, 20, 25]]) * UM
    e1 = np.array([[2.8, 1.0, 118, 1.0, 2.8]]) * GPA
    s1 = b.bend_strains(t1, e1, ratio * 108e-6)
    assert 100 * abs(s1.strain_top[0, 2]) == pytest.approx(single_pct, abs=single_tol)
    t2 = np.array([[12.5, 25, 18, 25, 18, 25, 12.5]]) * UM
    e2 = np.array([[2.8, 1.0, 118, 5.0, 118, 1.0, 2.8]]) * GPA
    s2 = b.bend_strains(t2, e2, ratio * 136e-6)
    assert 100 * abs(s2.strain_top[0, 2]) == pytest.approx(double_pct, abs=double_tol)


def test_min_inner_radius_round_trip():
    # the inverse: at R_min the worst copper face sits exactly at the limit
    rng = np.random.default_rng(21)
    t = rng.uniform(5, 60, (50, 6)) * UM
    e = rng.uniform(1, 130, (50, 6)) * GPA
    is_cu = rng.random((50, 6)) < 0.4
    is_cu[:, 2] = True
    lim = rng.uniform(0.001, 0.02, 50)
    ib = rng.random(50) < 0.5
    rmin = b.min_inner_radius(t, e, is_cu, lim, ib)
    s = b.bend_strains(t, e, rmin, ib)
    worst = np.where(is_cu, np.maximum(abs(s.strain_top), abs(s.strain_bottom)), 0).max(axis=1)
    pos = rmin > 0
    np.testing.assert_allclose(worst[pos], lim[pos], rtol=1e-10)
    assert np.all(worst[~pos] <= lim[~pos] * (1 + 1e-12))


# ---------------------------------------------------------------------------------------------
# unbonded leaves
# ---------------------------------------------------------------------------------------------

def test_leaves_bend_about_own_axis_on_nested_radius():
    # [EB] bending note §1.7: leaf k bends about its own axis on R_k = R + everything between it and
    # the mandrel (gaps included). Homogeneous leaves: surface strain t_k / (2 R_k + t_k).
    t = np.array([[40, 30, 25]]) * UM     # leaf 0 (top), 30 um air gap, leaf 2 (bottom)
    e = np.array([[3.0, 0.0, 5.0]]) * GPA
    leaf = np.array([[0, 1, 2]])
    r = 1e-3
    s = b.bend_strains(t, e, r, True, leaf)
    r_top = r + 55e-6
    assert s.strain_top[0, 0] == pytest.approx(40e-6 / (2 * r_top + 40e-6), rel=1e-12)
    assert s.strain_bottom[0, 0] == pytest.approx(-40e-6 / (2 * r_top + 40e-6), rel=1e-12)
    assert s.strain_top[0, 2] == pytest.approx(25e-6 / (2 * r + 25e-6), rel=1e-12)
    assert s.leaf_inner_radius_m[0, 0] == pytest.approx(r_top, rel=1e-14)
    # top face inside: the top leaf is now the inner one on R, the bottom leaf on R + 70 um
    s2 = b.bend_strains(t, e, r, False, leaf)
    assert s2.strain_top[0, 0] == pytest.approx(-40e-6 / (2 * r + 40e-6), rel=1e-12)
    assert s2.strain_bottom[0, 2] == pytest.approx(25e-6 / (2 * (r + 70e-6) + 25e-6), rel=1e-12)


def test_leaf_equals_separate_stack_at_nested_radius():
    # each composite leaf gives the same strains as that leaf alone at its nested radius
    t = np.array([[12.5, 25, 18, 25, 0, 25, 18, 12.5]]) * UM
    e = np.array([[2.8, 1.0, 118, 5.0, 0, 5.0, 118, 2.8]]) * GPA
    leaf = np.array([[0, 0, 0, 0, 4, 5, 5, 5]])
    s = b.bend_strains(t, e, 2e-3, True, leaf)
    top_alone = b.bend_strains(t[:, :4], e[:, :4], 2e-3 + 55.5e-6, True)
    bot_alone = b.bend_strains(t[:, 5:], e[:, 5:], 2e-3, True)
    np.testing.assert_allclose(s.strain_top[:, :4], top_alone.strain_top, rtol=1e-12)
    np.testing.assert_allclose(s.strain_bottom[:, 5:], bot_alone.strain_bottom, rtol=1e-12)


# ---------------------------------------------------------------------------------------------
# elastic-perfectly-plastic copper
# ---------------------------------------------------------------------------------------------

def _epp_inputs(t_um, e_gpa, is_cu, eps_y):
    t = np.array([t_um], float) * UM
    e = np.array([e_gpa], float) * GPA
    ey = np.where(np.array([is_cu]), e, 0.0)
    cap = np.where(np.array([is_cu]), eps_y, np.inf)
    return t, e, ey, cap


def test_epp_equals_elastic_when_copper_stays_elastic():
    # Elastic-perfectly-plastic limit: below yield the force balance reduces to the transformed
    # section (Gere & Timoshenko, composite beams), so both give the same axis and strains.
    t, e, ey, cap = _epp_inputs([25, 18, 25], [2.8, 118, 5.0], [False, True, False], 1.0)
    el = b.bend_strains(t, e, 1e-3)
    pl = b.epp_bend_strains(t, e, ey, cap, 1e-3)
    np.testing.assert_allclose(pl.y_na_m, el.y_na_m, rtol=1e-12)
    np.testing.assert_allclose(pl.strain_top, el.strain_top, rtol=1e-10)


def test_epp_axis_moves_toward_elastic_layers_and_peak_grows():
    # bending note §1.8: copper-dominated stack (thin film on top of copper): once the copper
    # yields the axis moves toward the elastic film and the worst copper strain grows.
    t, e, ey, cap = _epp_inputs([12.5, 18], [5.0, 120], [False, True], 150e6 / 120e9)
    el = b.bend_strains(t, e, 1e-3)
    pl = b.epp_bend_strains(t, e, ey, cap, 1e-3)
    assert pl.y_na_m[0, 0] > el.y_na_m[0, 0] + 1e-6
    assert abs(pl.strain_bottom[0, 1]) > 1.15 * abs(el.strain_bottom[0, 1])


def test_epp_force_balance_by_quadrature():
    # the solved axis carries zero net axial force: integrate the EPP stress on a fine grid
    t, e, ey, cap = _epp_inputs([25, 20, 18, 12.5, 35], [2.8, 1.0, 118, 5.0, 118], [False, False, True, False, True],
                                110e6 / 118e9)
    r = 0.8e-3
    pl = b.epp_bend_strains(t, e, ey, cap, r)
    y_na = pl.y_na_m[0, 0]
    edges = np.concatenate([[0.0], np.cumsum(t[0, ::-1])])
    y = np.linspace(0, edges[-1], 400001)
    mid = 0.5 * (y[1:] + y[:-1])
    k = np.clip(np.searchsorted(edges, mid) - 1, 0, 4)
    eps = (mid - y_na) / (r + y_na)
    e_rev, c_rev, cu_rev = e[0, ::-1], cap[0, ::-1], (ey[0, ::-1] > 0)
    stress = np.where(cu_rev[k], e_rev[k] * np.clip(eps, -c_rev[k], c_rev[k]), e_rev[k] * eps)
    force = np.sum(stress * np.diff(y))
    scale = np.sum(np.abs(stress) * np.diff(y))
    assert abs(force) < 1e-6 * scale


def test_epp_rigid_plastic_limit_against_brentq():
    # independent scalar force balance: copper (bottom, 0..c) at +/- sigma_y (tiny yield strain), an
    # elastic film on top; sigma_y (c - 2 y) + E_f t_f ((c + t_f/2) - y)/(R + y) = 0, solved with brentq.
    # (an artificially stiff copper, E = sigma_y / 1e-7, makes it rigid-plastic)
    c, tf, ef, r = 35e-6, 12.5e-6, 5e9, 1e-3
    sy = 150e6
    ecu = sy / 1e-7
    t, e, ey, cap = _epp_inputs([tf / UM, c / UM], [ef / GPA, ecu / GPA], [False, True], sy / ecu)
    pl = b.epp_bend_strains(t, e, ey, cap, r)
    y = brentq(lambda yy: sy * (c - 2 * yy) + ef * tf * ((c + tf / 2) - yy) / (r + yy), 0, c, xtol=1e-16)
    # the tiny elastic core of the copper (|y - y_NA| < eps_y (R + y_NA) ~ 0.1 nm) is the only difference
    assert pl.y_na_m[0, 0] == pytest.approx(y, abs=1e-10)


# ---------------------------------------------------------------------------------------------
# batch equals loop; properties
# ---------------------------------------------------------------------------------------------

def test_batch_equals_loop():
    rng = np.random.default_rng(1)
    n, L = 25, 7
    t = rng.uniform(0, 60, (n, L)) * UM
    t[:, 3] = np.where(rng.random(n) < 0.3, 0.0, t[:, 3])       # zero-thickness padding in some rows
    e = rng.uniform(1, 130, (n, L)) * GPA
    is_cu = rng.random((n, L)) < 0.4
    r = rng.uniform(0.3e-3, 5e-3, n)
    ib = rng.random(n) < 0.5
    leaf = np.where(np.arange(L) < 3, 0, np.where(np.arange(L) == 3, 3, 4))[None].repeat(n, 0)
    e_leaf = np.where(leaf == 3, 0.0, e)
    ey = np.where(is_cu, e, 0.0)
    cap = np.where(is_cu, 1.2e-3, np.inf)
    batch = b.bend_strains(t, e_leaf, r, ib, leaf)
    rmin = b.min_inner_radius(t, e, is_cu, 0.01, ib)
    pl = b.epp_bend_strains(t, e, ey, cap, r, ib)
    for i in range(n):
        one = b.bend_strains(t[i:i + 1], e_leaf[i:i + 1], r[i], bool(ib[i]), leaf[i:i + 1])
        np.testing.assert_allclose(batch.strain_top[i], one.strain_top[0], rtol=1e-12)
        np.testing.assert_allclose(batch.y_na_m[i], one.y_na_m[0], rtol=1e-12)
        assert rmin[i] == pytest.approx(b.min_inner_radius(t[i:i + 1], e[i:i + 1], is_cu[i:i + 1], 0.01,
                                                           bool(ib[i]))[0], rel=1e-12, abs=1e-18)
        p1 = b.epp_bend_strains(t[i:i + 1], e[i:i + 1], ey[i:i + 1], cap[i:i + 1], r[i], bool(ib[i]))
        np.testing.assert_allclose(pl.y_na_m[i], p1.y_na_m[0], rtol=1e-12)


layer_t = st.floats(1.0, 100.0)
layer_e = st.floats(0.5, 200.0)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(layer_t, layer_e), min_size=1, max_size=7), st.floats(0.05, 20.0), st.booleans())
def test_property_axis_inside_and_strain_falls_with_radius(layers, r_mm, inside_bottom):
    # Exact properties of the transformed section and of strain (y - y_na)/(R + y_na): a weighted
    # centroid lies inside the stack, and every face strain shrinks as the radius grows.
    t = np.array([[x[0] for x in layers]]) * UM
    e = np.array([[x[1] for x in layers]]) * GPA
    na = b.neutral_axis(t, e)[0]
    assert 0 <= na <= t.sum() * (1 + 1e-12)
    s1 = b.bend_strains(t, e, r_mm * 1e-3, inside_bottom)
    s2 = b.bend_strains(t, e, 1.5 * r_mm * 1e-3, inside_bottom)
    assert np.all(np.abs(s2.strain_top) <= np.abs(s1.strain_top) + 1e-18)
    assert np.all(np.abs(s2.strain_bottom) <= np.abs(s1.strain_bottom) + 1e-18)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(layer_t, layer_e), min_size=1, max_size=4), st.floats(0.05, 20.0))
def test_property_symmetric_stack_antisymmetric_under_flip(half, r_mm):
    # [EB] symmetric stack: flipping which face is inside negates every strain
    rows = half + half[::-1]
    t = np.array([[x[0] for x in rows]]) * UM
    e = np.array([[x[1] for x in rows]]) * GPA
    a = b.bend_strains(t, e, r_mm * 1e-3, True)
    c = b.bend_strains(t, e, r_mm * 1e-3, False)
    np.testing.assert_allclose(a.strain_top, -c.strain_top, rtol=1e-9, atol=1e-15)
    np.testing.assert_allclose(a.strain_bottom, -c.strain_bottom, rtol=1e-9, atol=1e-15)


def test_epp_leaf_equals_separate_leaf():
    # an unbonded leaf solved with the others gives the same EPP axis as that leaf alone on its radius
    t, e, ey, cap = _epp_inputs([12.5, 18, 25, 0, 25, 35, 12.5], [5.0, 118, 1.0, 0, 5.0, 118, 2.8],
                                [False, True, False, False, False, True, False], 110e6 / 118e9)
    leaf = np.array([[0, 0, 0, 3, 4, 4, 4]])
    r = 1.2e-3
    for ib in (True, False):
        both = b.epp_bend_strains(t, e, ey, cap, r, ib, leaf)
        low_r = r if ib else r + 55.5e-6
        up_r = r + 72.5e-6 if ib else r
        up = b.epp_bend_strains(t[:, :3], e[:, :3], ey[:, :3], cap[:, :3], up_r, ib)
        low = b.epp_bend_strains(t[:, 4:], e[:, 4:], ey[:, 4:], cap[:, 4:], low_r, ib)
        np.testing.assert_allclose(both.strain_top[:, :3], up.strain_top, rtol=1e-9)
        np.testing.assert_allclose(both.strain_bottom[:, 4:], low.strain_bottom, rtol=1e-9)
        np.testing.assert_allclose(both.y_na_m[0, 4], low.y_na_m[0, 0], rtol=1e-9)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(layer_t, layer_e, st.booleans()), min_size=1, max_size=7), st.floats(0.05, 20.0),
       st.booleans(), st.floats(2e-4, 3e-3))
def test_property_epp_axis_inside_and_balanced(layers, r_mm, inside_bottom, eps_y):
    # force balance of the solved axis, checked with the per-layer closed-form integral of axial_force
    # (a separate code path from the bisection's division-free sum)
    t = np.array([[x[0] for x in layers]]) * UM
    e = np.array([[x[1] for x in layers]]) * GPA
    is_cu = np.array([[x[2] for x in layers]])
    ey = np.where(is_cu, e, 0.0)
    cap = np.where(is_cu, eps_y, np.inf)
    p = b.epp_bend_strains(t, e, ey, cap, r_mm * 1e-3, inside_bottom)
    na = p.y_na_m[0, 0]
    assert -1e-15 <= na <= t.sum() * (1 + 1e-12)
    f = b.axial_force(t, e, ey, cap, p.strain_top, p.strain_bottom)
    scale = np.sum(e * t * (np.abs(p.strain_top) + np.abs(p.strain_bottom)))   # an all-elastic force size
    assert abs(f.sum()) <= 1e-9 * scale


def test_stackup_records_validate_and_mirror():
    with pytest.raises(ValueError, match="thickness"):
        diel("x", -1, 2.8)
    with pytest.raises(ValueError, match="coverage"):
        cu("c", 18, coverage=1.2)
    with pytest.raises(ValueError, match="foil"):
        Layer("c", "copper", 18e-6, 118e9, 0.34, None, None, "ra")
    gap = Layer("g", "air-gap", 0.0, 0.0, 0.0, None, None, "inline")
    with pytest.raises(ValueError, match="air gap"):
        Stackup((gap, diel("a", 25, 2.8)))
    with pytest.raises(ValueError, match="two air gaps"):
        Stackup((diel("a", 25, 2.8), gap, gap, diel("b", 25, 2.8)))
    with pytest.raises(ValueError, match="features"):
        Stackup((diel("a", 25, 2.8),), features=frozenset({"gold"}))
    s = Stackup((diel("a", 25, 2.8), cu("c", 18), diel("b", 50, 5.0), gap, diel("d", 25, 3.0)))
    assert s.leaf_ids() == (0, 0, 0, 1, 2)
    a = s.arrays()
    assert a.leaf.tolist() == [[0, 0, 0, 1, 2]] and not a.bonded and a.is_copper.tolist() == [[False, True, False,
                                                                                                False, False]]
    # [EB] the mirrored stack bent with its bottom inside equals the original with its top inside
    m = s.mirrored().arrays()
    top = b.bend_strains(a.thickness_m, a.modulus_pa, 1e-3, False, a.leaf)
    bot = b.bend_strains(m.thickness_m, m.modulus_pa, 1e-3, True, m.leaf)
    keep = ~a.is_air_gap[0]
    np.testing.assert_allclose(top.strain_top[0, keep], bot.strain_bottom[0, ::-1][keep], rtol=1e-12)


def test_bare_outer_copper_in_a_stackup_file_is_air_filled():
    # [V] fill follows lamination (bending note section 1.6): the adhesive under an outer foil is cured
    # before the copper is etched, so a bare outer copper has air in its gaps; a covered one takes the
    # cover adhesive.
    s = Stackup((cu("c", 18, coverage=0.4), diel("adh", 25, 1.0, 0.4, family="adhesive"), diel("film", 25, 2.8)))
    assert s.layers[0].fill_material == "air" and s.layers[0].fill_modulus_pa == 0.0
    s2 = Stackup((diel("cadh", 25, 1.5, 0.4, family="adhesive"), cu("c", 18, coverage=0.4),
                  diel("adh", 25, 1.0, 0.4, family="adhesive"), diel("film", 25, 2.8)))
    assert s2.layers[1].fill_modulus_pa == 1.5e9
