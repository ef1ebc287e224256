"""The field solver on real layered cross-sections: bands, fill, loss tangent, convergence.

Each check names its outside source beside it: exact solutions (a one-dimensional parallel-plate
field, the homogeneous TEM line), the variational (envelope) property of the capacitance, and mesh
convergence (the table's coarse mesh against a four-times finer one).
"""
from __future__ import annotations

import math

import pytest
from strainline.models.fields import field_solve
from strainline.models.fields.grid import Box, Problem, bisect, graded_points, solve
from strainline.models.lines import LineGeometry

UM = 1e-6


def test_identical_bands_reproduce_the_single_dielectric():
    # Exact identity: a substrate cut into three bands of one Dk is the same physical problem.
    g = LineGeometry(width_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.3,
                     cover_m=37 * UM, cover_er=3.3)
    one = field_solve("microstrip", g, cells_per_feature=2.0)
    three = field_solve("microstrip", g, cells_per_feature=2.0,
                        layers_below=[(12.5 * UM, 3.3), (25 * UM, 3.3), (12.5 * UM, 3.3)],
                        layers_above=[(25 * UM, 3.3), (12 * UM, 3.3)], fill=(3.3,))
    # the extra interface lines refine the mesh: equal within the solver's own estimate
    assert three.z0_ohm == pytest.approx(one.z0_ohm, rel=max(one.error_estimate_pct, 0.05) / 100)
    assert three.eps_eff == pytest.approx(one.eps_eff, rel=1e-3)


def test_parallel_plate_loss_tangent_is_the_series_value():
    # Exact 1-D field between full-width plates (magnetic side walls): D is uniform, E_i = D/eps_i,
    # so the energy of layer i is proportional to t_i/eps_i and
    # tan_eff = sum(t_i tan_i / eps_i) / sum(t_i / eps_i) (series capacitors; Pozar, Microwave
    # Engineering, 4th ed., section 1.3 on the lossy dielectric, from memory of the section).
    layers = [(20e-6, 3.3, 0.004), (15e-6, 4.0, 0.03), (10e-6, 2.9, 0.002)]
    y = [0.0]
    for t, _, _ in layers:
        y.append(y[-1] + t)
    x = graded_points([0.0, 1e-4], 2e-6, 1.6, 1e-5)
    yy = graded_points(y, 1e-6, 1.6, 5e-6)
    diel = tuple(Box(-1.0, 1.0, y[i], y[i + 1], e) for i, (_, e, _) in enumerate(layers))
    p = Problem(x, yy, diel, (Box(-1.0, 1.0, y[-1], y[-1], 1.0),),
                {"left": "magnetic", "right": "magnetic", "bottom": "electric", "top": "magnetic"},
                tuple(d for *_, d in layers))
    sol = solve(p, with_air=False)
    num = sum(t * d / e for t, e, d in layers)
    den = sum(t / e for t, e, _ in layers)
    assert sol.tan_eff == pytest.approx(num / den, rel=1e-9)


def test_homogeneous_stripline_loss_tangent_is_the_material_one():
    # A TEM line in one homogeneous dielectric: alpha_d = k tan(delta)/2, i.e. tan_eff = tan(delta)
    # exactly (Pozar, Microwave Engineering, 4th ed., section 3.1 on TEM line loss, from memory).
    g = LineGeometry(width_m=80 * UM, height_m=60 * UM, height_top_m=40 * UM, thickness_m=12 * UM, er=3.2)
    r = field_solve("stripline", g, cells_per_feature=1.5,
                    layers_below=[(60 * UM, 3.2, 0.006)], layers_above=[(40 * UM, 3.2, 0.006)],
                    fill=(3.2, 0.006))
    assert r.tan_eff == pytest.approx(0.006, rel=1e-9)


def test_loss_tangent_equals_the_dk_derivative_of_the_capacitance():
    # Variational (envelope) property of the capacitance C = min over potentials of the field
    # energy: dC/d(eps_i) = (energy density integral over region i) / eps_i, so the energy share of
    # region i is (eps_i / C) dC/d(eps_i) (the Thomson/Dirichlet principle, e.g. J. D. Jackson,
    # Classical Electrodynamics, 3rd ed., 1999, problem 1.17-1.19 on variational capacitance; from
    # memory). Checked on a covered microstrip with a lossy cover only, on one mesh (levels=1): the
    # discrete energy minimum has the same property, so the two agree to the difference step.
    base = LineGeometry(width_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.3)
    kw = dict(cells_per_feature=3.0, levels=1, layers_below=[(50 * UM, 3.3, 0.0)])
    d = 1e-4
    r0 = field_solve("microstrip", base, layers_above=[(30 * UM, 3.6, 1.0)], fill=(3.6, 1.0), **kw)
    r1 = field_solve("microstrip", base, layers_above=[(30 * UM, 3.6 * (1 + d), 1.0)],
                     fill=(3.6 * (1 + d), 1.0), **kw)
    # C = eps_eff * C_air and C_air does not depend on the Dk
    share = (r1.eps_eff / r0.eps_eff - 1.0) / d
    assert r0.tan_eff == pytest.approx(share, rel=5e-4)


FAMILIES = {
    # name: (kind, geometry, layers below (um, Dk, Df), layers above, fill)
    "covered microstrip (adhesive + film cover)": (
        "microstrip", LineGeometry(width_m=90 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.3),
        [(12.5, 3.6, 0.03), (25, 3.3, 0.008), (12.5, 3.6, 0.03)], [(25, 3.6, 0.03), (12.5, 3.3, 0.008)], (3.6, 0.03)),
    "offset two-Dk stripline": (
        "stripline", LineGeometry(width_m=70 * UM, height_m=100 * UM, thickness_m=12 * UM, er=3.0),
        [(25, 3.6, 0.03), (50, 2.9, 0.002), (25, 3.6, 0.03)], [(25, 3.6, 0.03), (25, 3.3, 0.006)], (3.6, 0.03)),
    "covered pair": (
        "coupled-microstrip", LineGeometry(width_m=80 * UM, gap_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM,
                                           er=3.3),
        [(25, 3.3, 0.004), (25, 3.6, 0.03)], [(25, 3.6, 0.03), (12.5, 3.3, 0.008)], (3.6, 0.03)),
    "covered conductor-backed coplanar": (
        "coplanar", LineGeometry(width_m=150 * UM, gap_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.3),
        [(50, 2.9, 0.002)], [(20, 3.4, 0.02)], (3.4, 0.02)),
}


@pytest.mark.parametrize("name", list(FAMILIES))
def test_table_mesh_is_converged_for_layered_families(name):
    # Mesh convergence (Richardson 1911; Roache 1994): the line table's base mesh (1.5 cells per
    # smallest feature, three nested meshes) against a base mesh 2.7 times finer. The table's
    # accuracy target is 0.5 %; the two must agree far inside it.
    kind, g, below, above, fill = FAMILIES[name]
    kw = dict(layers_below=[(a * UM, e, d) for a, e, d in below],
              layers_above=[(a * UM, e, d) for a, e, d in above], fill=fill,
              isolated_line=False, even_mode=False)
    coarse = field_solve(kind, g, cells_per_feature=1.5, **kw)
    fine = field_solve(kind, g, cells_per_feature=4.0, **kw)
    assert coarse.target_ohm == pytest.approx(fine.target_ohm, rel=1e-3)
    assert coarse.eps_eff == pytest.approx(fine.eps_eff, rel=1e-3)
    assert coarse.tan_eff == pytest.approx(fine.tan_eff, rel=5e-3)
    assert math.isfinite(coarse.error_estimate_pct) and coarse.error_estimate_pct < 0.6


def test_nested_mesh_helper_still_nests():
    # bisect keeps every coarse line (the nested meshes Richardson extrapolation needs)
    p = graded_points([0.0, 1.0, 3.0], 0.1, 1.6, 1.0)
    q = bisect(p, 2)
    assert set(p.tolist()) <= set(q.tolist())
