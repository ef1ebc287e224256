"""``strainline line ... --hatch-pitch-um P --hatch-width-um W [--hatch-angle-deg A]``.

Checks: the hatched-plane result sits beside the solid-plane one and is above it (removing copper
from a grounded plane lowers C and C_a: Dirichlet principle); the copper fill is the square-grid
area fraction 1 - (1 - w/p)^2 (plain geometry); the frequency finding appears exactly when the
frequency passes c0 / (10 P sqrt(eps_eff)) (the lambda/10 rule, common practice, no source); bad
options exit 2 with one line naming the option.
"""
from __future__ import annotations

import json

import pytest

BASE = ["line", "microstrip", "--width-um", "200", "--height-um", "100", "--thickness-um", "12",
        "--er", "3.2", "--hatch-pitch-um", "400", "--hatch-width-um", "100", "--hatch-angle-deg", "90"]


@pytest.fixture(autouse=True)
def _private_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("STRAINLINE_CACHE_DIR", str(tmp_path / "cache"))


def test_hatch_result_beside_the_solid_plane(run_cli):
    code, out, err = run_cli(*BASE, "--json")
    assert code == 0, err
    d = json.loads(out)
    h = d["hatch"]
    assert h["fill"] == pytest.approx(1 - (1 - 100 / 400) ** 2, abs=1e-4)
    assert h["z_ohm"] > h["z_solid_ohm"]
    # the solver's own solid plane agrees with the closed form (H&J 1980, ~0.6 % at t/h = 0.12)
    assert h["z_solid_ohm"] == pytest.approx(d["z0_ohm"], rel=0.02)
    assert h["quasi_static_limit_ghz"] == pytest.approx(h["bragg_frequency_ghz"] / 5, rel=1e-3)
    assert h["findings"] == []
    # a second run is served from the disk cache and gives the same figures
    code, out2, _ = run_cli(*BASE, "--json")
    assert json.loads(out2)["hatch"] == h


def test_frequency_above_the_quasi_static_limit_is_a_finding(run_cli):
    code, out, _ = run_cli(*BASE, "--json")
    f_qs = json.loads(out)["hatch"]["quasi_static_limit_ghz"]
    code, out, _ = run_cli(*BASE, "--freq-ghz", f"{0.9 * f_qs:.3f}", "--json")
    assert json.loads(out)["hatch"]["findings"] == []
    code, out, _ = run_cli(*BASE, "--freq-ghz", f"{1.1 * f_qs:.3f}")
    assert code == 0
    assert "above the quasi-static limit" in out and "over a hatched plane" in out


@pytest.mark.parametrize(("extra", "option"), [
    (["--hatch-pitch-um", "400"], "--hatch-width-um"),
    (["--hatch-pitch-um", "400", "--hatch-width-um", "100", "--hatch-angle-deg", "30"], "--hatch-angle-deg"),
    (["--hatch-pitch-um", "0", "--hatch-width-um", "100"], "--hatch-pitch-um"),
])
def test_bad_hatch_options_exit_2(run_cli, extra, option):
    code, _, err = run_cli("line", "microstrip", "--width-um", "200", "--height-um", "100",
                             "--thickness-um", "12", "--er", "3.2", *extra)
    assert code == 2 and err.count("\n") == 1 and option in err, err


def test_coplanar_over_a_hatch_is_refused(run_cli):
    code, _, err = run_cli("line", "coplanar", "--width-um", "200", "--gap-um", "100", "--height-um", "100",
                           "--thickness-um", "12", "--er", "3.2", "--hatch-pitch-um", "400",
                           "--hatch-width-um", "100")
    assert code == 2 and "--hatch-pitch-um" in err
