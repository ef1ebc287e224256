"""Dk tolerance per material from the catalog, in the impedance yield (optimizer.search.yieldcalc).

The reference is an independent brute-force Monte Carlo written here, as in tests/test_yield.py:
pseudo-random normal deviations with sigma = limit / 3, rejected outside the limit; every band of
the row's own cross-section (LineTable.section) gets its Dk moved by its material's catalog
tolerance times one common deviate, the composite Dk of each region is the series rule
sum(t) / sum(t / Dk) (parallel-plate capacitors in series, exact for a uniform field), and the
impedance is the published microstrip closed form (Hammerstad & Jensen 1980, via
strainline.models.lines) times the row's field correction. A wider Dk tolerance on one material
(the acrylic adhesive) must lower the yield by what the brute force predicts.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import yaml
from strainline.models.lines import LineGeometry, evaluate_line

ROOT = Path(__file__).resolve().parents[1]
STUDY = ROOT / "studies" / "handheld-scanner-hinge.yaml"
N_MC = 20_000


def _truncated(rng, n, d):
    """(n, d) deviations in limit units: normal, sigma 1/3, rejected outside [-1, 1]."""
    out = np.empty((0, d))
    while out.shape[0] < n:
        x = rng.normal(0.0, 1.0 / 3.0, (2 * n, d))
        out = np.concatenate([out, x[np.all(np.abs(x) <= 1.0, axis=1)]])
    return out[:n]


def _wide_acrylic_catalog(tmp_path, pct):
    from strainline.optimizer.inputs.catalog import load_catalog

    entry = dict(load_catalog().to_dict()["dielectrics"]["acrylic-adhesive"], dk_tolerance_pct=pct)
    folder = tmp_path / "cat"
    folder.mkdir()
    (folder / "materials.yaml").write_text(yaml.safe_dump(
        {"mode": "add", "dielectrics": {"acrylic-adhesive": entry}}))
    return load_catalog(folder)


def _brute_force_yield(tb, r, geo_tol, dk_of, band, rng):
    """Yield of table row ``r`` from its own layered cross-section (see the module notes)."""
    sec = tb.section(r)
    u = _truncated(rng, N_MC, 5)
    d = u[:, :4] * geo_tol

    def composite(layers):
        t = np.array([a for a, _, _ in layers])
        dk = np.array([e for _, e, _ in layers])
        tol = np.array([dk_of[round(e, 6)] for e in dk])
        dk_s = dk[None, :] * (1.0 + tol[None, :] * u[:, 4:5])   # one deviate, each its own limit
        return t.sum() / (t[None, :] / dk_s).sum(axis=1), t.sum()

    er, h = composite(sec["below"])
    cov_er, cov = composite(sec["above"]) if sec["above"] else (np.ones(N_MC), 0.0)
    g = tb.geometry
    t_cu = float(np.broadcast_to(g.thickness_m, (tb.n_rows,))[r])
    z = np.asarray(evaluate_line("microstrip", LineGeometry(
        width_m=g.width_m[r] * (1 + d[:, 0]), thickness_m=t_cu * (1 + d[:, 1]), height_m=h * (1 + d[:, 2]),
        cover_m=cov * (1 + d[:, 3]), er=er, cover_er=cov_er)).z0_ohm) * np.exp(tb.r_field[r, 0])
    y = np.mean(np.abs(z / tb.target_ohm - 1) <= band)
    return y, np.sqrt(max(y * (1 - y), 1e-4) / N_MC)


def test_catalog_dk_tolerance_per_material_moves_the_yield_as_brute_force_predicts(tmp_path):
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.inputs.study import load_study
    from strainline.optimizer.search.linetable import build_line_table, table_options
    from strainline.optimizer.search.space import build_space
    from strainline.optimizer.search.yieldcalc import row_tolerances, table_yield

    shipped = load_catalog()
    wide = _wide_acrylic_catalog(tmp_path, 40.0)
    assert wide.dk_tolerance_of("acrylic-adhesive") == pytest.approx(0.40)
    assert wide.dk_tolerance_of("polyimide-film") == shipped.dk_tolerance_of("polyimide-film")
    space = build_space(load_study(STUDY, shipped), shipped)
    with table_options(impedance="closed-form"):
        tb = build_line_table(space, shipped)
    band = space.study.line.tolerance
    # the study's dielectrics told apart by their Dk (one tolerance per Dk value)
    mats = [shipped.dielectric(m.name) for m in space.materials]

    def dk_map(cat):
        out: dict[float, float] = {}
        for m in mats:
            tol = cat.dk_tolerance_of(m.name)
            assert out.setdefault(round(m.dk, 6), tol) == tol
        return out

    res0 = table_yield(tb, space, shipped, n=512, replicates=4, seed=7)
    res1 = table_yield(tb, space, wide, n=512, replicates=4, seed=7)
    geo0 = row_tolerances(tb, space, shipped)
    assert np.allclose(row_tolerances(tb, space, wide)[:, :4], geo0[:, :4])
    # rows with acrylic adhesive under the trace, where the wide tolerance costs yield
    acrylic = round(shipped.dielectric("acrylic-adhesive").dk, 6)
    has = np.array([any(round(e, 6) == acrylic and t > 0 for t, e, _ in tb.section(r)["below"])
                    for r in range(tb.n_rows)])
    drop = np.where(has, res0.yield_frac - res1.yield_frac, -1.0)
    picks = [int(i) for i in np.argsort(drop)[-40:][::-1]]
    picks = list(dict.fromkeys([picks[0], *[p for p in picks if 0.2 < res1.yield_frac[p] < 0.8][:3]]))[:3]
    rng = np.random.default_rng(2024)
    checked_drop = 0.0
    for r in picks:
        y0, s0 = _brute_force_yield(tb, r, geo0[r, :4], dk_map(shipped), band, rng)
        y1, s1 = _brute_force_yield(tb, r, geo0[r, :4], dk_map(wide), band, rng)
        assert abs(res0.yield_frac[r] - y0) <= 4 * np.hypot(s0, res0.stderr[r]) + 0.006, (r, res0.yield_frac[r], y0)
        assert abs(res1.yield_frac[r] - y1) <= 4 * np.hypot(s1, res1.stderr[r]) + 0.006, (r, res1.yield_frac[r], y1)
        # the change itself, as the brute force predicts it
        assert abs((res0.yield_frac[r] - res1.yield_frac[r]) - (y0 - y1)) <= (
            4 * np.sqrt(s0**2 + s1**2 + res0.stderr[r] ** 2 + res1.stderr[r] ** 2) + 0.012), r
        checked_drop = max(checked_drop, y0 - y1)
    # not vacuous: the wider acrylic Dk tolerance costs real yield on the checked rows
    assert checked_drop > 0.1


def test_rows_without_the_material_do_not_move(tmp_path):
    # a row whose cross-section holds no acrylic adhesive has the same Dk limit with either catalog
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.inputs.study import load_study
    from strainline.optimizer.search.linetable import build_line_table, table_options
    from strainline.optimizer.search.space import build_space
    from strainline.optimizer.search.yieldcalc import dk_bands

    shipped = load_catalog()
    wide = _wide_acrylic_catalog(tmp_path, 40.0)
    space = build_space(load_study(STUDY, shipped), shipped)
    with table_options(impedance="closed-form"):
        tb = build_line_table(space, shipped)
    acrylic = round(shipped.dielectric("acrylic-adhesive").dk, 6)
    none = np.array([not any(round(e, 6) == acrylic for _, e, _ in
                             tb.section(r)["below"] + tb.section(r)["above"]) for r in range(tb.n_rows)])
    assert none.any() and (~none).any()
    a, b = dk_bands(tb, space, shipped), dk_bands(tb, space, wide)
    assert np.array_equal(a.limit[none], b.limit[none])
    assert np.all(b.limit[~none] > a.limit[~none])
    # a single-material region: the limit is that material's tolerance (series weights sum to 1)
    pi = round(shipped.dielectric("lcp-film").dk, 6)
    only = np.array([all(round(e, 6) == pi for _, e, _ in tb.section(r)["below"]) and not tb.section(r)["above"]
                     for r in range(tb.n_rows)])
    if only.any():
        assert np.allclose(a.limit[only], shipped.dk_tolerance_of("lcp-film"))
