"""Impedance yield inside the search: ``limits.min_yield_pct`` and the ``yield`` objective.

Checks: every front candidate honours the yield limit (recomputed here from the candidate's own
line-table row with an independent brute-force Monte Carlo, as in tests/test_yield.py); the
reported objective is 100 - yield; the variance shares sum to 1; a bad limit exits 2 naming it.
"""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[1]


def _study(tmp_path: Path, limit: str = "95", objectives: str = "[signal_strain, thickness, yield]") -> Path:
    text = (ROOT / "studies" / "handheld-scanner-hinge.yaml").read_text()
    text = text.replace("  total_thickness_um: 200\n", f"  total_thickness_um: 200\n  min_yield_pct: {limit}\n")
    text = text.replace("objectives: [signal_strain, thickness, loss]", f"objectives: {objectives}")
    assert "min_yield_pct" in text and objectives in text
    p = tmp_path / "hinge-yield.yaml"
    p.write_text(text)
    return p


def test_front_honours_the_yield_limit(tmp_path, run_cli, monkeypatch):
    monkeypatch.setenv("STRAINLINE_CACHE_DIR", str(tmp_path / "cache"))
    out = tmp_path / "out"
    code, _, err = run_cli("solve", _study(tmp_path), "--out", out, "--quiet", "--impedance", "closed-form",
                           "--workers", "1")
    assert code == 0, err
    d = json.loads((out / "front.json").read_text())
    assert "yield" in d["search"]["constraints"]
    assert "yield_shortfall_pct" in d["search"]["objectives"]
    assert d["candidates"]
    for c in d["candidates"]:
        y = c["line"]["impedance_yield"]
        assert y["yield_pct"] >= 95.0
        assert c["objectives"]["yield_shortfall_pct"] == pytest.approx(100.0 - y["yield_pct"])
        assert sum(y["variance_share"].values()) == pytest.approx(1.0)
        assert any(f["code"] == "impedance-yield" for f in c["findings"])


def test_yield_limit_matches_brute_force_on_the_table(tmp_path):
    # the constraint column against an independent Monte Carlo of the same rows (truncated normal,
    # limit = 3 sigma, rejection sampling; closed forms of strainline.models.lines)
    from strainline.models.lines import LineGeometry, evaluate_line
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.inputs.study import load_study
    from strainline.optimizer.search.linetable import table_options
    from strainline.optimizer.search.problem import build_problem
    from strainline.optimizer.search.space import build_space
    from strainline.optimizer.search.yieldcalc import row_tolerances

    catalog = load_catalog()
    space = build_space(load_study(_study(tmp_path, "80"), catalog), catalog)
    with table_options(impedance="closed-form"):
        pb = build_problem(space, catalog)
    tb = pb.table
    g = pb._line_constraints_direct(np.arange(tb.n_rows))["yield"]
    y = 0.8 * (1.0 - g)                     # g = 1 - yield / 0.80
    tol = row_tolerances(tb, space, catalog)
    rng = np.random.default_rng(4)
    geo = tb.geometry
    for r in [int(np.argmin(np.abs(y - q))) for q in (0.5, 0.8, 0.95)]:
        x = rng.normal(0.0, 1.0 / 3.0, (60_000, 5))
        d = x[np.all(np.abs(x) <= 1.0, axis=1)][:20_000] * tol[r]
        t = float(np.broadcast_to(geo.thickness_m, (tb.n_rows,))[r])
        z = np.asarray(evaluate_line("microstrip", LineGeometry(
            width_m=geo.width_m[r] * (1 + d[:, 0]), thickness_m=t * (1 + d[:, 1]),
            height_m=geo.height_m[r] * (1 + d[:, 2]), cover_m=geo.cover_m[r] * (1 + d[:, 3]),
            er=geo.er[r] * (1 + d[:, 4]), cover_er=np.maximum(geo.cover_er[r] * (1 + d[:, 4]), 1.0))).z0_ohm)
        y_mc = np.mean(np.abs(z / tb.target_ohm - 1) <= space.study.line.tolerance)
        assert abs(y[r] - y_mc) < 0.02, (r, y[r], y_mc)


@pytest.mark.parametrize("bad", ["0", "150", "'x'"])
def test_bad_yield_limit_exits_2(tmp_path, run_cli, bad):
    code, _, err = run_cli("solve", _study(tmp_path, bad), "--out", tmp_path / "o", "--quiet")
    assert code == 2 and "limits.min_yield_pct" in err and err.count("\n") == 1, err
