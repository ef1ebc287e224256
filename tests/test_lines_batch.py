"""Batch behaviour of the line models: batch equals loop, every branch in one batch, odd rows
flagged (never raised), width/gap synthesis round trips with reachable and unreachable targets."""
from __future__ import annotations

import numpy as np
import pytest

from strainline.models.lines import (
    LINE_KINDS,
    LineGeometry,
    evaluate_line,
    range_findings,
    range_flags,
    solve_gap,
    solve_width,
)
from strainline.models.lines.microstrip import MicrostripKernel, microstrip
from strainline.models.lines.synthesis import hammerstad_synthesis_u

UM = 1e-6


def _mixed_batch(n: int = 64, seed: int = 3) -> LineGeometry:
    """Rows on both sides of every branch: t = 0 / t > 0, bare / covered, centred / offset,
    equal / different Dk, backed / unbacked, er = 1 / er > 1."""
    rng = np.random.default_rng(seed)
    return LineGeometry(
        width_m=rng.uniform(20, 800, n) * UM,
        gap_m=rng.uniform(20, 400, n) * UM,
        height_m=rng.uniform(12, 200, n) * UM,
        height_top_m=np.where(rng.random(n) < 0.5, np.nan, rng.uniform(12, 200, n) * UM),
        thickness_m=rng.choice([0.0, 9.0, 12.0, 18.0, 35.0], n) * UM,
        er=np.where(rng.random(n) < 0.1, 1.0, rng.uniform(2.2, 4.5, n)),
        er_top=np.where(rng.random(n) < 0.5, np.nan, rng.uniform(2.2, 4.5, n)),
        cover_m=rng.choice([0.0, 12.5, 25.0, 50.0], n) * UM,
        cover_er=rng.uniform(1.0, 4.0, n),
        bottom_ground=rng.random(n) < 0.5,
    )


@pytest.mark.parametrize("kind", LINE_KINDS)
def test_batch_equals_loop(kind):
    g = _mixed_batch()
    freq = np.where(np.arange(g.n) % 3 == 0, 0.0, 10e9)
    batch = evaluate_line(kind, g, freq)
    for i in range(g.n):
        row = g.take(np.array([i]))
        one = evaluate_line(kind, row, freq[i:i + 1])
        for name in ("z0_ohm", "eps_eff", "z_odd_ohm", "z_even_ohm", "z_diff_ohm", "eps_eff_odd", "in_range"):
            np.testing.assert_allclose(getattr(one, name), getattr(batch, name)[i:i + 1], rtol=1e-13,
                                       err_msg=f"{kind} {name} row {i}")


@pytest.mark.parametrize("kind", LINE_KINDS)
def test_every_branch_in_one_batch_is_finite_and_physical(kind):
    # Physics bounds: Z0 > 0 and 1 <= eps_eff; for an edge-coupled pair Z_odd < Z_even (Cohn 1955,
    # Kirschning & Jansen 1984: the odd mode has the larger capacitance).
    g = _mixed_batch(200)
    r = evaluate_line(kind, g, np.full(g.n, 5e9))
    assert np.all(np.isfinite(r.z0_ohm)) and np.all(r.z0_ohm > 0)
    assert np.all(r.eps_eff >= 1.0 - 1e-12)
    if kind.startswith("coupled"):
        assert np.all(r.z_odd_ohm < r.z_even_ohm)


def test_microstrip_branches_change_results():
    # each branch does something: thickness lowers Z0 (wider effective strip), a cover lowers Z0
    # (more dielectric), a cover of Dk 1 changes nothing, frequency raises eps_eff (dispersion)
    base = dict(width_m=100 * UM, height_m=50 * UM, er=3.2)
    z_t0 = evaluate_line("microstrip", LineGeometry(thickness_m=0.0, **base)).z0_ohm
    z_t = evaluate_line("microstrip", LineGeometry(thickness_m=12 * UM, **base)).z0_ohm
    z_c = evaluate_line("microstrip", LineGeometry(thickness_m=12 * UM, cover_m=25 * UM, cover_er=3.2, **base))
    z_air = evaluate_line("microstrip", LineGeometry(thickness_m=12 * UM, cover_m=25 * UM, cover_er=1.0, **base))
    assert z_t < z_t0 and z_c.z0_ohm < z_t
    assert float(z_air.z0_ohm) == pytest.approx(float(z_t), rel=1e-12)
    # Wadell's form for a cover of the substrate's Dk: eps = eps_ms e^(-2d/h) + er (1 - e^(-2d/h))
    bare = evaluate_line("microstrip", LineGeometry(thickness_m=12 * UM, **base))
    e = np.exp(-2 * (25 + 12) / 50)
    assert float(z_c.eps_eff) == pytest.approx(float(bare.eps_eff * e + 3.2 * (1 - e)), rel=1e-12)
    hf = evaluate_line("microstrip", LineGeometry(thickness_m=12 * UM, **base), freq_hz=30e9)
    assert hf.eps_eff > bare.eps_eff


def test_kernel_equals_reference_microstrip():
    g = _mixed_batch(500, seed=9)
    k = MicrostripKernel(g.height_m, g.thickness_m, g.er, g.cover_m, g.cover_er)
    z, _ = microstrip(g.width_m, g.height_m, g.thickness_m, g.er, g.cover_m, g.cover_er)
    np.testing.assert_allclose(np.exp(k.ln_z0(g.width_m / g.height_m)), z, rtol=1e-12)


def test_hammerstad_synthesis_both_branches_near_analysis():
    # Pozar 3.8 synthesis (narrow w/h < 2 and wide branches) is within about 1-2 % of the H&J
    # analysis it inverts (t = 0); it is only our starting point
    er = np.array([3.2, 3.2, 10.0, 2.2])
    z = np.array([100.0, 25.0, 50.0, 60.0])
    u = hammerstad_synthesis_u(z, er)
    assert np.any(u < 2) and np.any(u > 2)
    back = evaluate_line("microstrip", LineGeometry(width_m=u, height_m=1.0, thickness_m=0.0, er=er)).z0_ohm
    assert np.max(np.abs(back / z - 1)) < 0.02


def test_invalid_rows_are_nan_and_flagged_not_raised():
    g = LineGeometry(width_m=[100 * UM, -1 * UM, 100 * UM, 100 * UM], height_m=[50 * UM, 50 * UM, 0.0, 50 * UM],
                     thickness_m=4 * UM, er=[3.2, 3.2, 3.2, 0.5], gap_m=[50 * UM, 50 * UM, 50 * UM, np.nan])
    for kind in LINE_KINDS:
        r = evaluate_line(kind, g)
        assert np.isfinite(r.z0_ohm[0]) and r.in_range[0]
        assert np.all(np.isnan(r.z0_ohm[1:])) and not np.any(r.in_range[1:])
        assert any("geometry invalid" in f for f in range_findings(kind, g))


def test_out_of_range_rows_are_flagged():
    # H&J eps_eff stated for 0.01 <= w/h <= 100; K&J 1984 for 0.1 <= s/h <= 10 (lines.md)
    g = LineGeometry(width_m=[100 * UM, 0.2 * UM, 20e-3], height_m=50 * UM, thickness_m=0.0, er=3.2,
                     gap_m=[50 * UM, 50 * UM, 1e-3])
    r = evaluate_line("microstrip", g)
    assert r.in_range.tolist() == [True, False, False]
    flags = range_flags("coupled-microstrip", g)
    assert flags["coupled microstrip s/h outside 0.1..10 (Kirschning & Jansen 1984)"].tolist() == [False, False, True]
    assert not evaluate_line("coupled-microstrip", g).in_range[2]


# ----------------------------------------------------------------------------------------------
# Synthesis
# ----------------------------------------------------------------------------------------------

def _regular(kind, g, var, lo, hi):
    """Rows with no "not meaningful" range flag at either end of the search range."""
    regular = np.ones(g.n, dtype=bool)
    for end in (lo, hi):
        for name, mask in range_flags(kind, g.with_(**{var: np.full(g.n, end)})).items():
            if "not meaningful" in name:
                regular &= ~mask
    return regular


@pytest.mark.parametrize("kind", LINE_KINDS)
def test_solve_width_round_trip_with_reachable_and_unreachable_targets(kind):
    g = _mixed_batch(300, seed=5)
    rng = np.random.default_rng(11)
    scale = 2.0 if kind.startswith("coupled") else 1.0
    target = scale * rng.uniform(10.0, 160.0, g.n)
    target[:5] = [1.0, 1e4, np.nan, -50.0, 0.0]          # never reachable / invalid
    wmin, wmax = 10 * UM, 2000 * UM
    w, ok = solve_width(kind, target, g, wmin, wmax)
    assert w.shape == ok.shape == (g.n,)
    assert not ok[:5].any() and np.all(np.isnan(w[~ok]))
    # ok rows: inside the range, and the evaluated impedance hits the target
    assert np.all((w[ok] >= wmin * (1 - 1e-12)) & (w[ok] <= wmax * (1 + 1e-12)))
    r = evaluate_line(kind, g.with_(width_m=w))
    np.testing.assert_allclose(r.target_ohm[ok], target[ok], rtol=1e-8)
    # not-ok rows are exactly those whose target lies outside [Z(wmax), Z(wmin)]
    z_wide = evaluate_line(kind, g.with_(width_m=np.full(g.n, wmax))).target_ohm
    z_narrow = evaluate_line(kind, g.with_(width_m=np.full(g.n, wmin))).target_ohm
    reachable = (target >= z_wide) & (target <= z_narrow)
    assert ok.sum() > 50 and (~ok[5:]).sum() > 5
    assert not np.any(ok & ~reachable)
    # where no "not meaningful" flag is raised at either end (the model is continuous), ok is
    # exactly "reachable" (coplanar with no effective slot jumps, and then has no root)
    regular = _regular(kind, g, "width_m", wmin, wmax)
    assert regular.sum() > 100
    np.testing.assert_array_equal(ok[regular], reachable[regular])


def test_solve_width_batch_equals_loop_and_chunking():
    g = _mixed_batch(40, seed=8)
    target = np.linspace(20, 120, g.n)
    w, ok = solve_width("microstrip", target, g, 10 * UM, 2000 * UM)
    w2, ok2 = solve_width("microstrip", target, g, 10 * UM, 2000 * UM, chunk=7)
    np.testing.assert_array_equal(ok, ok2)
    np.testing.assert_allclose(w2[ok], w[ok], rtol=1e-8)
    for i in range(g.n):
        wi, oki = solve_width("microstrip", target[i], g.take(np.array([i])), 10 * UM, 2000 * UM)
        assert oki[0] == ok[i]
        if ok[i]:
            assert wi[0] == pytest.approx(w[i], rel=1e-9)


def test_solve_width_dispersive_microstrip():
    g = LineGeometry(width_m=np.nan, height_m=[50 * UM, 100 * UM], thickness_m=12 * UM, er=3.2)
    w, ok = solve_width("microstrip", 50.0, g, 10 * UM, 2000 * UM, freq_hz=40e9)
    assert ok.all()
    r = evaluate_line("microstrip", g.with_(width_m=w), freq_hz=40e9)
    np.testing.assert_allclose(r.z0_ohm, 50.0, rtol=1e-8)


@pytest.mark.parametrize("kind", ["coupled-microstrip", "coupled-stripline", "coplanar"])
def test_solve_gap_round_trip(kind):
    # a batch inside the stated ranges (K&J 1984: 0.1 <= w/h, s/h <= 10), gap searched in
    # [0.15 h, 8 h]; targets made at a known gap (reachable), every 4th pushed far out
    rng = np.random.default_rng(2)
    n = 120
    h = rng.uniform(25, 150, n) * UM
    g = _mixed_batch(n, seed=6).with_(height_m=h, width_m=rng.uniform(0.3, 5.0, n) * h,
                                      thickness_m=rng.choice([0.0, 2.0, 4.0], n) * UM)
    lo, hi = 0.15 * h, 8.0 * h
    true_gap = rng.uniform(0.2, 7.0, n) * h
    target = evaluate_line(kind, g.with_(gap_m=true_gap)).target_ohm
    far = np.zeros(n, dtype=bool)
    far[::4] = True
    target[far] *= 10.0
    s, ok = solve_gap(kind, target, g, lo, hi)
    regular = evaluate_line(kind, g.with_(gap_m=lo)).in_range & evaluate_line(kind, g.with_(gap_m=hi)).in_range
    assert regular.sum() > 40
    assert not ok[far].any()
    assert ok[~far & regular].all()
    r = evaluate_line(kind, g.with_(gap_m=s))
    np.testing.assert_allclose(r.target_ohm[ok], target[ok], rtol=1e-8)
    assert np.all(np.isnan(s[~ok]))


def test_solve_gap_rejects_a_line_without_gap():
    with pytest.raises(ValueError, match="gap"):
        solve_gap("microstrip", 50.0, _mixed_batch(2), 1e-6, 1e-3)
