"""3-D hatched-plane solver (strainline.models.hatch): checks against outside references.

References used:
* an independent 2-D solver of the same cross-section over a solid plane (bilinear finite
  elements, Richardson-extrapolated: strainline.models.fields, itself checked against Cohn 1954
  and the coplanar conformal map in tests/test_fields.py) and Cohn 1954's exact stripline;
* the Dirichlet principle / monotonicity of capacitance in the grounded conductor set (adding
  grounded copper never lowers C or C_a; e.g. W. R. Smythe, *Static and Dynamic Electricity*,
  3rd ed., 1968, sec. 2.23, from memory): solid plane <= hatch <= no plane, and Z rises as the
  copper fill falls;
* homogenisation of a fine periodic screen: as the pitch shrinks at fixed fill the fields leaking
  through the openings decay within about a pitch (evanescent, exp(-2 pi d / p)), so the line
  tends to the solid-plane value (e.g. Collin, *Field Theory of Guided Waves*, 2nd ed. 1991,
  ch. 12 on periodic screens, from memory);
* plain geometry for the copper fill (pixel count of the pattern).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import ellipk
from strainline.models.fields import field_solve
from strainline.models.hatch import (
    Hatch,
    bragg_frequency_hz,
    hatch_fill,
    hatch_solve,
    hatch_solve_width,
    hatch_width_for_fill,
    no_plane_impedance,
    quasi_static_limit_hz,
)
from strainline.models.lines import LineGeometry
from strainline.models.units import C0, ETA0

UM = 1e-6
#: A flex-like microstrip with the openings' scale comparable to the dielectric.
MS = LineGeometry(width_m=200 * UM, height_m=100 * UM, thickness_m=12 * UM, er=3.2)
COARSE = {"cells_per_feature": 2.0}


@pytest.mark.parametrize("angle", [45.0, 90.0])
@pytest.mark.parametrize("ratio", [0.1, 0.25, 0.5, 0.8])
def test_fill_is_the_copper_area_fraction(angle, ratio):
    # plain geometry: count the copper points of the pattern on a fine grid over whole periods
    h = Hatch(1.0, ratio, angle)
    period = h.lateral_period_m
    pts = np.random.default_rng(7).uniform(0.0, 2 * period, size=(2, 400_000))
    frac = h.copper(pts[0], pts[1]).mean()
    # binomial standard error below 8e-4
    assert frac == pytest.approx(1 - (1 - ratio) ** 2, abs=3e-3)
    assert h.fill == pytest.approx(float(hatch_fill(1.0, ratio)))
    assert float(hatch_width_for_fill(1.0, h.fill)) == pytest.approx(ratio)


@pytest.mark.parametrize("angle", [45.0, 90.0])
def test_full_fill_matches_the_2d_solver(angle):
    # 100 % fill: the 3-D solution must equal an independent converged 2-D solution within 0.5 %
    geom = LineGeometry(width_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.2,
                        cover_m=25 * UM, cover_er=3.4)
    ref = field_solve("microstrip", geom)
    r = hatch_solve("microstrip", geom, Hatch(0.5e-3, 0.5e-3, angle), **COARSE)
    assert r.fill == 1.0
    assert r.z0_ohm == pytest.approx(ref.z0_ohm, rel=5e-3)
    assert r.eps_eff == pytest.approx(ref.eps_eff, rel=5e-3)


def test_full_fill_stripline_matches_cohn_1954():
    # Cohn 1954 exact zero-thickness centred stripline: Z0 = eta0/(4 sqrt er) K(k)/K(k'),
    # k = sech(pi w / 2b)
    w, b, er = 100 * UM, 100 * UM, 3.0
    k = 1 / math.cosh(math.pi * w / (2 * b))
    kp = math.tanh(math.pi * w / (2 * b))
    exact = ETA0 / (4 * math.sqrt(er)) * ellipk(k * k) / ellipk(kp * kp)
    geom = LineGeometry(width_m=w, height_m=b / 2, thickness_m=0.0, er=er)
    r = hatch_solve("stripline", geom, Hatch(0.4e-3, 0.4e-3, 90.0), **COARSE)
    assert r.z0_ohm == pytest.approx(exact, rel=5e-3)
    assert r.eps_eff == pytest.approx(er, rel=1e-9)


def test_converges_under_mesh_refinement():
    # nested-in-spirit refinement of every mesh density; the history (90 degrees, 0.4 mm pitch,
    # 0.1 mm lines, measured when written) was 59.454, 59.537, 59.599 ohm for 2, 3, 4 cells per
    # feature: each change smaller than the last, the 3-D energy falling toward its limit from
    # above (Z rising), as the Dirichlet principle requires for a conforming scheme
    h = Hatch(0.4e-3, 0.1e-3, 90.0)
    hist = [hatch_solve("microstrip", MS, h, cells_per_feature=c).z0_ohm for c in (2.0, 3.0, 4.0)]
    d = np.diff(hist)
    assert np.all(d > 0), hist
    assert abs(d[1]) < abs(d[0]), hist
    assert abs(d[1]) / hist[-1] < 2e-3, hist


@pytest.mark.parametrize("angle", [45.0, 90.0])
def test_between_solid_plane_and_no_plane(angle):
    h = Hatch(0.4e-3, 0.1e-3, angle)
    r = hatch_solve("microstrip", MS, h, **COARSE)
    z_none = no_plane_impedance("microstrip", MS, h, **COARSE)
    assert r.z_solid_ohm < r.z0_ohm < z_none
    assert r.z_solid_mesh_ohm < r.z_raw_ohm
    # the solid-plane value is also the independent 2-D solver's
    assert r.z_solid_ohm == pytest.approx(field_solve("microstrip", MS).z0_ohm, rel=5e-3)


def test_impedance_rises_as_fill_falls():
    fills = []
    ratios = []
    for w in (0.3e-3, 0.2e-3, 0.1e-3, 0.05e-3):
        h = Hatch(0.4e-3, w, 90.0)
        fills.append(h.fill)
        ratios.append(hatch_solve("microstrip", MS, h, **COARSE).ratio)
    assert np.all(np.diff(fills) < 0)
    assert np.all(np.diff(ratios) > 0), ratios
    assert ratios[0] > 1.0


def test_tends_to_the_solid_plane_as_pitch_shrinks():
    # fixed fill 0.4375 (w = p / 4); pitches 2, 1, 0.5 times the dielectric height
    excess = [hatch_solve("microstrip", MS, Hatch(p, p / 4, 90.0), **COARSE).ratio - 1.0
              for p in (0.2e-3, 0.1e-3, 0.05e-3)]
    assert np.all(np.array(excess) > 0)
    assert excess[1] < 0.7 * excess[0] and excess[2] < 0.7 * excess[1], excess


def test_width_for_target_over_hatch_is_wider():
    # over the hatch the impedance is higher, so the same target needs a wider trace
    h = Hatch(0.4e-3, 0.1e-3, 90.0)
    w_solid = MS.width_m
    target = hatch_solve("microstrip", MS, Hatch(0.4e-3, 0.4e-3, 90.0), **COARSE).z0_ohm
    sol = hatch_solve_width("microstrip", target, MS, h, float(w_solid), tol_pct=0.2, **COARSE)
    assert sol.ok
    assert sol.width_m > w_solid
    assert sol.result.z0_ohm == pytest.approx(target, rel=2e-3)


def test_frequency_limits_follow_the_bragg_condition():
    # Bragg: beta P = pi with beta = 2 pi f sqrt(eps_eff) / c0  (Brillouin 1946)
    h = Hatch(0.4e-3, 0.1e-3, 45.0)
    r = hatch_solve("microstrip", MS, h, **COARSE)
    beta_p = 2 * math.pi * r.f_bragg_hz * math.sqrt(r.eps_eff) / C0 * h.period_m
    assert beta_p == pytest.approx(math.pi)
    assert r.f_quasi_static_hz == pytest.approx(r.f_bragg_hz / 5)
    assert bragg_frequency_hz(h.period_m, r.eps_eff) == r.f_bragg_hz
    assert quasi_static_limit_hz(h.period_m, r.eps_eff) == r.f_quasi_static_hz
    assert h.period_m == pytest.approx(0.4e-3 * math.sqrt(2))


def test_bad_hatch_names_the_field():
    with pytest.raises(ValueError, match="angle_deg"):
        Hatch(1e-3, 1e-4, 30.0)
    with pytest.raises(ValueError, match="pitch_m"):
        Hatch(0.0, 1e-4)
