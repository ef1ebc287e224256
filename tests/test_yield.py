"""Impedance yield (strainline.models.tolerance, strainline.optimizer.search.yieldcalc).

The reference is an independent brute-force Monte Carlo written here: pseudo-random normal
deviations with sigma = limit / 3, rejected outside the limit (plain rejection sampling of a
truncated normal), the impedance evaluated at every sample with the published closed forms
(Hammerstad & Jensen 1980 microstrip via strainline.models.lines), the pass share counted. The
QMC estimate must agree within the combined sampling uncertainty (plus a small allowance for the
quadratic response surface).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.stats import truncnorm
from strainline.models.lines import LineGeometry, evaluate_line
from strainline.models.tolerance import (
    deviate_std,
    deviates,
    impedance_yield,
    qmc_deviates,
)

UM = 1e-6
ROOT = Path(__file__).resolve().parents[1]


def _brute_force_deviations(rng, n, tol, distribution="normal"):
    """(n, d) relative deviations: rejection-sampled truncated normal (limit = 3 sigma) or uniform."""
    d = tol.size
    if distribution == "uniform":
        return rng.uniform(-1.0, 1.0, (n, d)) * tol
    out = np.empty((0, d))
    while out.shape[0] < n:
        x = rng.normal(0.0, 1.0 / 3.0, (2 * n, d))
        out = np.concatenate([out, x[np.all(np.abs(x) <= 1.0, axis=1)]])
    return out[:n] * tol


def _microstrip_rows():
    w = np.array([70, 90, 110, 130, 150, 100]) * UM
    h = np.array([50, 50, 60, 70, 75, 45]) * UM
    return w, h


def _ms_z(w, h, delta):
    """Microstrip (H&J 1980) at deviations of width, height, copper thickness and Dk."""
    g = LineGeometry(width_m=w * (1 + delta[..., 0]), height_m=h * (1 + delta[..., 1]),
                     thickness_m=12 * UM * (1 + delta[..., 2]), er=3.2 * (1 + delta[..., 3]))
    return np.asarray(evaluate_line("microstrip", g).z0_ohm, float)


@pytest.mark.parametrize("distribution", ["normal", "uniform"])
@pytest.mark.parametrize("surrogate", [True, False])
def test_yield_matches_brute_force_monte_carlo(distribution, surrogate):
    w, h = _microstrip_rows()
    tol = np.array([0.15, 0.10, 0.10, 0.05])
    target, band = 50.0, 0.10

    def z_fn(idx, delta):
        return _ms_z(w[idx, None], h[idx, None], delta)

    res = impedance_yield(z_fn, np.tile(tol, (w.size, 1)), target, band, n=1024, replicates=4,
                          seed=3, distribution=distribution, surrogate=surrogate)
    rng = np.random.default_rng(12345)
    n_mc = 20_000
    for i in range(w.size):
        z = _ms_z(w[i], h[i], _brute_force_deviations(rng, n_mc, tol, distribution))
        y_mc = np.mean(np.abs(z / target - 1) <= band)
        se_mc = np.sqrt(max(y_mc * (1 - y_mc), 1e-4) / n_mc)
        allowance = 0.0 if not surrogate else 0.006
        assert abs(res.yield_frac[i] - y_mc) <= 4 * np.hypot(se_mc, res.stderr[i]) + allowance, (
            i, res.yield_frac[i], y_mc)
    # the rows span the interesting range (not all 0 or 1): the check is not vacuous
    assert np.ptp(res.yield_frac) > 0.5


def test_deviate_spread_matches_scipy_truncnorm():
    # scipy.stats.truncnorm on [-3, 3] sigma, scaled to the limit
    assert deviate_std("normal") == pytest.approx(truncnorm.std(-3, 3) / 3, rel=1e-9)
    assert deviate_std("uniform") == pytest.approx(1 / np.sqrt(3))
    u = qmc_deviates(2, 4096, 1, seed=1)[0]
    assert u.std(axis=0) == pytest.approx([deviate_std()] * 2, rel=2e-2)
    q = np.array([0.1, 0.5, 0.9])
    assert deviates(q) == pytest.approx(truncnorm.ppf(q, -3, 3) / 3, rel=1e-9, abs=1e-12)


def test_sensitivity_shares_of_a_log_linear_law():
    # Z = Z0 exp(sum a_i delta_i): ln Z is linear in the deviations, d lnZ / du_i = a_i tol_i, so the
    # first-order variance shares are (a_i tol_i)^2 / sum (standardised regression coefficients
    # squared; Saltelli et al., Global Sensitivity Analysis: The Primer, Wiley 2008, ch. 1)
    a = np.array([-0.8, 0.6, -0.1, -0.5])
    tol = np.array([0.2, 0.1, 0.1, 0.05])

    def z_fn(idx, delta):
        return 50.0 * np.exp(delta @ a)

    res = impedance_yield(z_fn, tol[None, :], 50.0, 0.1, n=256, replicates=2)
    expect = (a * tol) ** 2 / np.sum((a * tol) ** 2)
    assert res.shares[0] == pytest.approx(expect, rel=1e-9)
    assert res.dominant[0] == 0
    assert res.z_nominal[0] == pytest.approx(50.0)
    # and the spread: sigma of ln Z = sqrt(sum (a_i tol_i sigma_u)^2) (first order, small)
    assert res.sigma_rel[0] == pytest.approx(np.sqrt(np.sum((a * tol) ** 2)) * deviate_std(), rel=3e-2)


def test_uncertainty_shrinks_with_samples():
    w, h = _microstrip_rows()
    tol = np.tile([0.15, 0.10, 0.10, 0.05], (w.size, 1))

    def z_fn(idx, delta):
        return _ms_z(w[idx, None], h[idx, None], delta)

    small = impedance_yield(z_fn, tol, 50.0, 0.1, n=128, replicates=8, seed=5)
    large = impedance_yield(z_fn, tol, 50.0, 0.1, n=4096, replicates=8, seed=5)
    mid = (small.yield_frac > 0.05) & (small.yield_frac < 0.95)
    assert mid.any()
    assert np.mean(large.stderr[mid]) < 0.5 * np.mean(small.stderr[mid])


def test_table_yield_matches_brute_force_on_study_rows():
    # a shipped study's closed-form line table: a few rows re-sampled here from their own
    # cross-section with an independent brute-force Monte Carlo
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.inputs.study import load_study
    from strainline.optimizer.search.linetable import build_line_table, table_options
    from strainline.optimizer.search.space import build_space
    from strainline.optimizer.search.yieldcalc import (
        TOLERANCE_NAMES,
        row_tolerances,
        table_yield,
    )

    catalog = load_catalog()
    space = build_space(load_study(ROOT / "studies" / "handheld-scanner-hinge.yaml", catalog), catalog)
    with table_options(impedance="closed-form"):
        tb = build_line_table(space, catalog)
    res = table_yield(tb, space, catalog, n=512, replicates=4, seed=2)
    assert res.names == TOLERANCE_NAMES and res.yield_frac.shape == (tb.n_rows,)
    tol = row_tolerances(tb, space, catalog)
    # the catalog's etch tolerance for the row's copper weight (fabrication.yaml width_tolerance)
    assert set(np.round(tol[:, 0], 6)) <= {0.15, 0.2}
    rng = np.random.default_rng(99)
    band = space.study.line.tolerance
    picks = [int(np.argmin(np.abs(res.yield_frac - q))) for q in (0.3, 0.6, 0.9)]
    g = tb.geometry
    for r in picks:
        d = _brute_force_deviations(rng, 20_000, tol[r])
        geo = LineGeometry(
            width_m=g.width_m[r] * (1 + d[:, 0]), thickness_m=float(np.broadcast_to(g.thickness_m, (tb.n_rows,))[r])
            * (1 + d[:, 1]), height_m=g.height_m[r] * (1 + d[:, 2]),
            cover_m=g.cover_m[r] * (1 + d[:, 3]), er=g.er[r] * (1 + d[:, 4]),
            cover_er=np.maximum(g.cover_er[r] * (1 + d[:, 4]), 1.0))
        z = np.asarray(evaluate_line("microstrip", geo).z0_ohm) * np.exp(tb.r_field[r, 0])
        y_mc = np.mean(np.abs(z / tb.target_ohm - 1) <= band)
        se = np.hypot(np.sqrt(max(y_mc * (1 - y_mc), 1e-4) / 20_000), res.stderr[r])
        assert abs(res.yield_frac[r] - y_mc) <= 4 * se + 0.006, (r, res.yield_frac[r], y_mc)
