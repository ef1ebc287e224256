"""The default impedance guard (strainline.optimizer.search.guard).

Expectations are the rule of issue 14 as the module states it: when the catalog carries the
fabrication tolerances, the impedance yield replaces the half-tolerance nominal window as the default
guard (limits.min_yield_pct defaults to 90 %, common practice, no source; a line without
nominal_error_pct gets the full tolerance band as its window); nominal_error_pct stays an option.
The yield itself is checked against an independent brute-force Monte Carlo in tests/test_yield*.py.
"""
from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest
import yaml

ROOT = Path(__file__).resolve().parents[1]
STUDY = ROOT / "studies" / "handheld-scanner-hinge.yaml"


def _study(tmp_path: Path, extra_line: str = "", extra_limits: str = "", width: str = "[75, 400]"):
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.inputs.study import load_study

    text = STUDY.read_text()
    text = text.replace("  width_range_um: [75, 400]", f"  width_range_um: {width}{extra_line}")
    text = text.replace("  total_thickness_um: 200\n", f"  total_thickness_um: 200\n{extra_limits}")
    p = tmp_path / "s.yaml"
    p.write_text(text)
    cat = load_catalog()
    return load_study(p, cat), cat


def test_yield_becomes_the_default_guard(tmp_path):
    from strainline.optimizer.search.guard import DEFAULT_MIN_YIELD_PCT, apply_default_guard, guard_note

    study, cat = _study(tmp_path)
    assert study.limits.min_yield_pct is None
    assert study.line.nominal_error == pytest.approx(study.line.tolerance / 2)   # the half window
    g = apply_default_guard(study, cat)
    assert g.limits.min_yield_pct == DEFAULT_MIN_YIELD_PCT == 90.0
    assert g.line.nominal_error == g.line.tolerance == pytest.approx(0.10)
    lines = getattr(g, "lines", (g.line,))
    assert lines[0] is g.line and all(ln.nominal_error == ln.tolerance for ln in lines)
    # pure: the given study is untouched
    assert study.limits.min_yield_pct is None and study.line.nominal_error == pytest.approx(0.05)
    note = guard_note(g, cat)
    assert "yield at least 90 %" in note and "common practice, no source" in note
    assert "+/-10 %" in note and "the yield decides" in note
    assert "\n" not in note


def test_a_given_nominal_window_is_kept(tmp_path):
    from strainline.optimizer.search.guard import apply_default_guard, guard_note

    study, cat = _study(tmp_path, extra_line="\n  nominal_error_pct: 3")
    if not getattr(study.line, "nominal_error_given", False):
        pytest.skip("study records without nominal_error_given (study_spec before the lead's change)")
    assert apply_default_guard(study, cat) is study
    assert "line.nominal_error_pct" in guard_note(study, cat)


def test_a_given_yield_limit_is_kept_and_the_window_widens(tmp_path):
    from strainline.optimizer.search.guard import apply_default_guard, guard_note

    study, cat = _study(tmp_path, extra_limits="  min_yield_pct: 97\n")
    g = apply_default_guard(study, cat)
    assert g.limits.min_yield_pct == 97
    assert g.line.nominal_error == pytest.approx(g.line.tolerance)
    assert "the study's limits.min_yield_pct" in guard_note(g, cat)


def test_without_a_dk_tolerance_the_half_window_stays(tmp_path):
    # a catalog that gives no Dk tolerance for a dielectric of the study cannot price its scatter
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.search.guard import apply_default_guard, guard_note, tolerances_known

    study, cat = _study(tmp_path)
    folder = tmp_path / "cat"
    folder.mkdir()
    entry = {k: v for k, v in cat.to_dict()["dielectrics"]["lcp-film"].items() if k != "dk_tolerance_pct"}
    (folder / "materials.yaml").write_text(yaml.safe_dump({"mode": "add", "dielectrics": {"lcp-film": entry}}))
    fab = cat.to_dict()["fabrication"]
    fab.pop("dk_tolerance")
    (folder / "fabrication.yaml").write_text(yaml.safe_dump(fab))
    partial = load_catalog(folder)
    assert partial.dk_tolerance_of("lcp-film") is None
    assert not tolerances_known(study, partial) and tolerances_known(study, cat)
    assert apply_default_guard(study, partial) is study
    note = guard_note(study, partial)
    assert "half the tolerance" in note and "no Dk tolerance for lcp-film" in note


def test_guarded_constraints_let_the_yield_decide(tmp_path):
    # a width range too narrow for some rows: their nominal impedance misses the target. With the
    # default guard the window is the whole band (no row outside it passes) and the yield limit
    # is a constraint of every row.
    from strainline.optimizer.search.guard import apply_default_guard
    from strainline.optimizer.search.linetable import table_options
    from strainline.optimizer.search.problem import build_problem
    from strainline.optimizer.search.space import build_space

    study, cat = _study(tmp_path, width="[75, 110]")
    g = apply_default_guard(study, cat)
    with table_options(impedance="closed-form"):
        pb = build_problem(build_space(g, cat), cat)
    tb = pb.table
    c = pb._line_constraints_direct(np.arange(tb.n_rows))
    assert "yield" in c
    np.testing.assert_array_equal(c["impedance"] <= 0, tb.rel_err <= g.line.tolerance)
    between = (tb.rel_err > g.line.tolerance / 2) & (tb.rel_err <= g.line.tolerance)
    assert between.any()            # rows the half window refused and the yield now judges
    y = pb.row_yield().yield_frac
    np.testing.assert_allclose(c["yield"], 1.0 - 100.0 * y / 90.0)
    # the yield decides between them: some pass the 90 % limit, some do not
    assert (y[between] >= 0.9).any() and (y[between] < 0.9).any()
    # a nominal point near the band edge cannot yield much: its spread straddles the edge (about
    # half its builds fall outside; exact for a symmetric spread centred on the edge)
    edge = (tb.rel_err > 0.9 * g.line.tolerance) & (tb.rel_err <= g.line.tolerance)
    assert edge.any() and np.all(y[edge] < 0.9)


def test_replace_keeps_line_and_lines_consistent(tmp_path):
    from strainline.optimizer.search.guard import apply_default_guard

    study, cat = _study(tmp_path)
    g = apply_default_guard(study, cat)
    if any(f.name == "lines" for f in dataclasses.fields(g)):
        assert g.lines[0] == g.line
