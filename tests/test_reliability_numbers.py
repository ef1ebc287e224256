"""Clean numbers on the command line (issue 15): absurd values are refused naming the option and
its sane range, options that do not apply are errors, argparse speaks our words, the loss is never
negative and no NaN, null or numpy warning reaches an output. Ends with a seeded fuzz test.
"""
from __future__ import annotations

import contextlib
import io
import json
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from strainline.models.lines import LineGeometry, evaluate_line
from strainline.models.loss import line_loss
from strainline.optimizer.cli.main import main
from strainline.optimizer.cli.numbers import RANGES

BASE = ("--height-um", "50", "--thickness-um", "12", "--er", "3.2")


def _run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main([str(a) for a in argv])
    return code, out.getvalue(), err.getvalue()


def _one_line_2(code: int, out: str, err: str) -> str:
    assert code == 2 and out == "" and err.count("\n") == 1 and "Traceback" not in err, (code, out, err)
    return err


@pytest.mark.parametrize("argv, words", [
    (("line", "microstrip", "--width-um", "1e300", *BASE), "--width-um: 1e+300 is out of range; the trace width"),
    (("line", "microstrip", "--width-um", "100", "--height-um", "50", "--thickness-um", "12", "--er", "1e300"),
     "--er: 1e+300 is out of range; the relative permittivity must be >= 1 and <= 100"),
    (("line", "microstrip", "--width-um", "nan", *BASE), "--width-um: nan is out of range"),
    (("line", "microstrip", "--width-um", "inf", *BASE), "--width-um: inf is out of range"),
    (("line", "stripline", "--width-um", "100", *BASE, "--freq-ghz", "1e9"), "--freq-ghz: 1e+09 is out of range"),
    (("solve", "x.yaml", "--budget", "-5"), "--budget: -5 is not a positive integer"),
    (("solve", "x.yaml", "--budget", "2.5"), "--budget: 2.5 is not a positive integer"),
    (("solve", "x.yaml", "--seed", "-1"), "--seed: -1 is not an integer >= 0"),
    (("line", "microstrip", "--width-um", "abc", *BASE), "--width-um: 'abc' is not a number"),
    (("solve", "x.yaml", "--method", "exhaustiv"), "did you mean 'exhaustive'?"),
    (("line", "microstrip", *BASE), "--width-um"),
    (("solve",), "missing STUDY.yaml (required)"),
    (("solve", "x.yaml", "--bogus"), "unknown option or extra value: --bogus"),
])
def test_bad_numbers_and_arguments_in_our_words(argv, words):
    err = _one_line_2(*_run(*argv))
    assert words in err
    assert "invalid" not in err and "argument " not in err and "_positive_int" not in err


def test_bend_radius_out_of_range_is_refused_without_warnings(repo_root):
    stackup = sorted((repo_root / "studies" / "stackups").glob("*.yaml"))[0]
    err = _one_line_2(*_run("bend", stackup, "--inner-radius-mm", "1e300"))
    assert "--inner-radius-mm: 1e+300 is out of range" in err and "<= 100000" in err
    code, out, err = _run("bend", stackup, "--inner-radius-mm", "1e5", "--json")   # the top of the range
    assert code == 0 and err == "" and "NaN" not in out and "Infinity" not in out


@pytest.mark.parametrize("argv, option", [
    (("microstrip", "--width-um", "100", *BASE, "--gap-um", "50"), "--gap-um"),
    (("microstrip", "--width-um", "100", *BASE, "--height-top-um", "50"), "--height-top-um"),
    (("coplanar", "--width-um", "100", "--gap-um", "50", *BASE, "--er-top", "3"), "--er-top"),
    (("stripline", "--width-um", "100", *BASE, "--cover-um", "25", "--cover-er", "3.2"), "--cover-um"),
    (("stripline", "--width-um", "100", *BASE, "--no-bottom-ground"), "--no-bottom-ground"),
    (("microstrip", "--width-um", "100", *BASE, "--df", "0.01"), "--df"),
    (("microstrip", "--width-um", "100", *BASE, "--roughness-um", "1"), "--roughness-um"),
])
def test_options_that_do_not_apply_are_errors(argv, option):
    err = _one_line_2(*_run("line", *argv))
    assert f"{option}:" in err


def test_degenerate_pair_is_refused_naming_the_options_never_null():
    # w/h = 19,000: far outside Kirschning & Jansen 1984's 0.1..10, where the closed form has no
    # finite odd-mode result
    err = _one_line_2(*_run("line", "coupled-microstrip", "--width-um", "38000", "--gap-um", "19000",
                            "--height-um", "2", "--thickness-um", "2", "--er", "2", "--json"))
    assert "no valid result" in err and "--width-um" in err and "--height-um" in err and "0.1..10" in err


def test_conductor_loss_is_never_negative():
    # A thick coplanar strip without a bottom ground (t/s = 8, outside the first-order thickness
    # correction) where the closed-form impedance *falls* as the walls recede, so Wheeler's
    # incremental-inductance rule (Wheeler 1942: the loss is proportional to dZ/dn, which is >= 0
    # for any physical line) would give a negative loss. The fallback is the parallel-plate loss
    # Rs/(Z0 w) (Pozar, Microwave Engineering, parallel-plate line, from memory),
    # Rs = sqrt(pi f mu0 / sigma).
    g = LineGeometry(width_m=np.array([127.6e-6]), gap_m=np.array([29.8e-6]), height_m=np.array([1921e-6]),
                     thickness_m=np.array([242e-6]), er=np.array([13.75]), bottom_ground=np.array([False]))
    f, sigma = 10e9, 5.8e7
    r = evaluate_line("coplanar", g)
    loss = line_loss("coplanar", g, r, f, 0.0, 0.0, sigma)
    assert loss.wheeler_failed[0]
    rs = math.sqrt(math.pi * f * 4e-7 * math.pi / sigma)     # mu0 ~ 4 pi 1e-7 (pre-2019 exact, 1e-9 rel.)
    expected_db = 20 / math.log(10) * rs / (float(r.z0_ohm[0]) * 127.6e-6)
    assert float(loss.conductor_db_per_m[0]) == pytest.approx(expected_db, rel=1e-6)
    assert float(loss.conductor_db_per_m[0]) > 0


# ------------------------------------------------------------------------------------------------
# seeded fuzz: random valid-shaped line geometries and option texts through the command line
# ------------------------------------------------------------------------------------------------
def _in(option: str, lo: float | None = None, hi: float | None = None):
    r = RANGES[option]
    lo = r.low if lo is None else lo
    hi = r.high if hi is None else hi
    return st.floats(min_value=max(lo, 1e-3), max_value=hi, allow_nan=False, allow_infinity=False)


KINDS = ("microstrip", "stripline", "coupled-microstrip", "coupled-stripline", "coplanar")
NUMERIC_KEYS = ("width_um", "z0_ohm", "eps_eff", "delay_ps_per_mm", "z_odd_ohm", "z_even_ohm", "z_diff_ohm",
                "z_common_ohm", "eps_eff_odd", "eps_eff_even", "skin_depth_um", "roughness_factor")


@st.composite
def line_args(draw):
    kind = draw(st.sampled_from(KINDS))
    argv = ["line", kind, "--height-um", repr(draw(_in("--height-um", 1.0))),
            "--thickness-um", repr(draw(st.one_of(st.just(0.0), _in("--thickness-um", 0.1, 200.0)))),
            "--er", repr(draw(_in("--er", 1.0)))]
    if draw(st.booleans()):
        argv += ["--width-um", repr(draw(_in("--width-um", 1.0)))]
    else:
        argv += ["--target-ohm", repr(draw(_in("--target-ohm", 5.0, 300.0)))]
    if kind in ("coupled-microstrip", "coupled-stripline", "coplanar"):
        argv += ["--gap-um", repr(draw(_in("--gap-um", 1.0)))]
    if kind in ("stripline", "coupled-stripline") and draw(st.booleans()):
        argv += ["--height-top-um", repr(draw(_in("--height-top-um", 1.0))), "--er-top", repr(draw(_in("--er-top", 1.0)))]
    if kind in ("microstrip", "coupled-microstrip", "coplanar") and draw(st.booleans()):
        argv += ["--cover-um", repr(draw(_in("--cover-um", 1.0, 1000.0))), "--cover-er", repr(draw(_in("--cover-er", 1.0)))]
    if kind == "coplanar" and draw(st.booleans()):
        argv += ["--no-bottom-ground"]
    if draw(st.booleans()):
        argv += ["--freq-ghz", repr(draw(_in("--freq-ghz", 0.01, 100.0))), "--df", repr(draw(st.floats(0, 0.1))),
                 "--roughness-um", repr(draw(st.floats(0, 5)))]
    return argv + ["--json"]


@settings(max_examples=200, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(line_args())
def test_fuzz_line_geometries_no_nan_no_warning_no_exit_1(argv):
    code, out, err = _run(*argv)            # pytest turns any warning into an error, i.e. exit 1 here
    assert code in (0, 2), (argv, err)
    if code == 2:
        assert out == "" and err.count("\n") == 1, (argv, err)
        return
    d = json.loads(out)
    for key in NUMERIC_KEYS:
        if key in d:
            assert d[key] is not None and math.isfinite(d[key]), (argv, key, d[key])
    for part in ("loss_db_per_m", "loss_db_per_inch"):
        for key, v in d.get(part, {}).items():
            assert v is not None and v >= 0, (argv, part, key, v)
    assert "NaN" not in out and "Infinity" not in out


NUMBER_TEXT = st.one_of(
    st.sampled_from(["nan", "-nan", "inf", "-inf", "1e999", "-0", "0", "", " ", "0x10", "1_0", "١٢", "1e-400",
                     "--", "5 5", "1e308", "-1e308"]),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.text(max_size=6),
)


@settings(max_examples=100, deadline=None, derandomize=True)
@given(st.sampled_from(["--width-um", "--height-um", "--thickness-um", "--er", "--freq-ghz", "--target-ohm"]),
       NUMBER_TEXT)
def test_fuzz_option_texts_exit_0_or_2(option, text):
    argv = {"--width-um": "100", "--height-um": "50", "--thickness-um": "12", "--er": "3.2"}
    argv[option] = text
    flat = ["line", "microstrip"] + [x for kv in argv.items() for x in kv]
    if option == "--target-ohm":
        flat = [x for x in flat if x not in ("--width-um", "100")]
    code, out, err = _run(*flat)
    assert code in (0, 2), (flat, err)
    if code == 2:
        assert err.count("\n") == 1 and "Traceback" not in err, (flat, err)


def test_a_candidate_with_a_non_finite_figure_never_reaches_the_files():
    # front.json writes a non-finite figure as null; the figures a candidate is chosen by must be
    # numbers (JSON, RFC 8259, has no NaN), so such a candidate is taken off before writing
    from strainline.optimizer.cli.finite import drop_non_finite

    def cand(i, z_diff):
        return {"id": f"C{i:03d}", "objectives": {"peak_strain_pct": 0.3},
                "line": {"type": "coupled-microstrip", "width_um": 80.0, "gap_um": 100.0, "z0_ohm": 50.0,
                         "z_diff_ohm": z_diff, "eps_eff": 2.5, "impedance_error_pct": 0.1, "loss_db_per_m": 10.0,
                         "conductor_loss_db_per_m": 8.0, "dielectric_loss_db_per_m": 2.0,
                         "geometry": {"height_um": 50.0, "thickness_um": 12.0, "er": 3.2, "height_top_um": None}},
                "bend": {"total_thickness_um": 100.0, "peak_copper_strain_pct": 0.3,
                         "signal_copper_strain_pct": 0.2, "cycles_to_failure": None}}

    front = {"study": {"line": {"type": "coupled-microstrip"}}, "search": {},
             "candidates": [cand(1, 90.0), cand(2, None), cand(3, float("nan"))]}
    notes = drop_non_finite(front)
    assert [c["id"] for c in front["candidates"]] == ["C001"]       # nulls by design (height_top_um) stay
    assert len(notes) == 2 and "line.z_diff_ohm" in notes[0]
    assert front["search"]["dropped_non_finite"]["count"] == 2
    json.dumps(front["candidates"], allow_nan=False)


@pytest.mark.parametrize("argv, option", [
    (("--method", "exhaustive", "--budget", "5000"), "--budget"),
    (("--keep-unverified",), "--keep-unverified"),
])
def test_solve_options_that_do_not_apply_are_errors(repo_root, argv, option):
    study = repo_root / "studies" / "handheld-scanner-hinge.yaml"
    err = _one_line_2(*_run("solve", study, "--out", "/nonexistent-never-written", *argv))
    assert f"{option}:" in err


@settings(max_examples=60, deadline=None, derandomize=True)
@given(st.one_of(st.floats(min_value=1e-3, max_value=1e5), st.floats().map(float)),
       st.sampled_from(["bottom", "top"]), st.sampled_from(["install", "dynamic"]))
def test_fuzz_bend_radius_no_nan_no_warning_no_exit_1(radius, inside, use):
    from pathlib import Path

    stackup = sorted((Path(__file__).resolve().parents[1] / "studies" / "stackups").glob("*.yaml"))[0]
    code, out, err = _run("bend", stackup, "--inner-radius-mm", repr(radius), "--inside", inside, "--use", use,
                          "--json")
    assert code in (0, 2), (radius, err)
    if code == 0:
        assert "NaN" not in out and "Infinity" not in out
        d = json.loads(out)
        assert math.isfinite(d["neutral_axis_um"]) and math.isfinite(d["peak_copper_strain_pct"])
    else:
        assert err.count("\n") == 1 and "--inner-radius-mm" in err


@settings(max_examples=80, deadline=None, derandomize=True)
@given(st.sampled_from(["--budget", "--seed", "--workers", "--method", "--out"]), NUMBER_TEXT)
def test_fuzz_solve_option_texts_are_one_line_errors(option, text):
    code, out, err = _run("solve", "/nonexistent/study.yaml", option, text, "--quiet")
    assert code == 2 and out == "" and err.count("\n") == 1 and "Traceback" not in err, (option, text, err)
