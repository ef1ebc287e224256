"""`strainline line` honours its contract (issue 3), tested in-process."""
from __future__ import annotations

import json

import numpy as np
import pytest

from strainline.models.lines import LineGeometry, evaluate_line
from strainline.models.units import ETA0


def _json(run_cli, *argv):
    code, out, err = run_cli("line", *argv, "--json")
    assert code == 0, err
    return json.loads(out)


def test_microstrip_json_fields(run_cli):
    d = _json(run_cli, "microstrip", "--width-um", "110", "--height-um", "50", "--thickness-um", "18", "--er", "3.3")
    for key in ("kind", "width_um", "gap_um", "z0_ohm", "eps_eff", "method", "findings", "caution", "delay_ps_per_mm"):
        assert key in d
    assert d["kind"] == "microstrip" and d["width_um"] == 110 and d["gap_um"] is None
    ref = evaluate_line("microstrip", LineGeometry(width_m=110e-6, height_m=50e-6, thickness_m=18e-6, er=3.3))
    assert d["z0_ohm"] == pytest.approx(float(ref.z0_ohm), abs=1e-5)
    assert any("Hammerstad & Jensen 1980" in m for m in d["method"])
    assert "fabricator" in d["caution"] and "IPC-2223" in d["caution"]
    assert "loss_db_per_m" not in d


def test_stripline_target_solves_the_width(run_cli):
    d = _json(run_cli, "stripline", "--target-ohm", "50", "--height-um", "50", "--height-top-um", "50",
              "--thickness-um", "12", "--er", "3.0")
    assert d["width_solved"] is True and d["z0_ohm"] == pytest.approx(50.0, abs=1e-5)
    assert 10 < d["width_um"] < 2000
    # zero thickness cross-check with Cohn 1954 (exact): solve, then the exact formula at that width
    d0 = _json(run_cli, "stripline", "--target-ohm", "50", "--height-um", "50", "--thickness-um", "0", "--er", "3.0")
    from scipy.special import ellipk
    x = np.pi * d0["width_um"] / (2 * 100.0)
    z = ETA0 / (4 * np.sqrt(3.0)) * ellipk(1 / np.cosh(x) ** 2) / ellipk(np.tanh(x) ** 2)
    assert z == pytest.approx(50.0, rel=1e-6)


def test_pair_fields_and_definitions(run_cli):
    d = _json(run_cli, "coupled-microstrip", "--width-um", "100", "--gap-um", "100", "--height-um", "50",
              "--thickness-um", "12", "--er", "3.2", "--cover-um", "25", "--cover-er", "3.2")
    for key in ("z_odd_ohm", "z_even_ohm", "z_diff_ohm", "z_common_ohm"):
        assert key in d
    assert d["z_diff_ohm"] == pytest.approx(2 * d["z_odd_ohm"], abs=2e-5)
    assert d["z_common_ohm"] == pytest.approx(d["z_even_ohm"] / 2, abs=2e-5)
    assert any("cover" in f for f in d["findings"])   # the closed-form cover correction is flagged
    t = _json(run_cli, "coupled-stripline", "--target-ohm", "90", "--gap-um", "100", "--height-um", "60",
              "--thickness-um", "12", "--er", "3.2")
    assert t["z_diff_ohm"] == pytest.approx(90.0, abs=1e-5)


def test_frequency_adds_loss_and_delay(run_cli):
    d = _json(run_cli, "microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "3.2",
              "--freq-ghz", "10", "--df", "0.004", "--roughness-um", "0.3")
    loss = d["loss_db_per_m"]
    assert set(loss) == {"conductor", "dielectric", "total"}
    assert loss["total"] == pytest.approx(loss["conductor"] + loss["dielectric"], abs=1e-5)
    assert loss["conductor"] > 0 and loss["dielectric"] > 0
    assert d["delay_ps_per_mm"] == pytest.approx(np.sqrt(d["eps_eff"]) / 299792458.0 * 1e9, rel=1e-5)
    assert any("Kirschning & Jansen 1982" in m for m in d["method"])
    rough = _json(run_cli, "microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "12",
                  "--er", "3.2", "--freq-ghz", "10", "--df", "0.004", "--roughness-um", "1.5")
    assert rough["loss_db_per_m"]["conductor"] > loss["conductor"]


def test_coplanar_bottom_ground_default_and_option(run_cli):
    args = ("coplanar", "--width-um", "100", "--gap-um", "50", "--height-um", "50", "--thickness-um", "0", "--er", "3.2")
    backed = _json(run_cli, *args)
    open_ = _json(run_cli, *args, "--no-bottom-ground")
    assert backed["inputs"]["bottom_ground"] is True and open_["inputs"]["bottom_ground"] is False
    assert backed["z0_ohm"] < open_["z0_ohm"]          # a plane below adds capacitance


def test_readable_summary(run_cli):
    code, out, err = run_cli("line", "coupled-stripline", "--width-um", "80", "--gap-um", "120", "--height-um", "60",
                             "--thickness-um", "12", "--er", "3.2", "--freq-ghz", "5")
    assert code == 0 and err == ""
    assert "Zdiff" in out and "caution" in out and "dB/m" in out and "{" not in out


@pytest.mark.parametrize(
    "argv, option, words",
    [
        (("microstrip", "--width-um", "100", "--height-um", "-50", "--thickness-um", "12", "--er", "3.2"),
         "--height-um", "> 0"),
        (("microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "0.8"),
         "--er", ">= 1"),
        (("coupled-microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "3.2"),
         "--gap-um", "> 0"),
        (("coplanar", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "3.2"),
         "--gap-um", "> 0"),
        (("microstrip", "--height-um", "50", "--thickness-um", "12", "--er", "3.2"), "--width-um", "--target-ohm"),
        (("microstrip", "--target-ohm", "400", "--height-um", "50", "--thickness-um", "12", "--er", "3.2"),
         "--target-ohm", "reachable impedance is"),
        (("microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "-1", "--er", "3.2"),
         "--thickness-um", ">= 0"),
        (("microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "3.2",
          "--freq-ghz", "0"), "--freq-ghz", "> 0"),
        (("microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "3.2",
          "--cover-um", "25"), "--cover-er", ">= 1"),
        (("microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "3.2",
          "--df", "1.5"), "--df", "< 1"),
        (("microstrp", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "3.2"),
         "KIND", "did you mean 'microstrip'"),
    ],
)
def test_bad_input_is_one_line_and_exit_2(run_cli, argv, option, words):
    code, out, err = run_cli("line", *argv)
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and option in lines[0] and words in lines[0], lines
    assert "Traceback" not in err


def test_unreachable_target_names_the_reachable_range(run_cli):
    code, _, err = run_cli("line", "microstrip", "--target-ohm", "400", "--height-um", "50", "--thickness-um", "12",
                           "--er", "3.2")
    lo, hi = (float(x) for x in err.split("is ")[-1].split(" ohm")[0].split(" to "))
    z = evaluate_line("microstrip", LineGeometry(width_m=np.array([2000e-6, 10e-6]), height_m=50e-6,
                                                 thickness_m=12e-6, er=3.2)).z0_ohm
    assert code == 2 and lo == pytest.approx(z[0], abs=0.01) and hi == pytest.approx(z[1], abs=0.01)
