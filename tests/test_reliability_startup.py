"""Start-up stays light (issue 9): ``strainline --help`` imports none of the heavy libraries.

A module-list check, not a timing check (the timing is benchmarks/bench_startup.py): the help
runs in a fresh interpreter, which then lists ``sys.modules`` (every module imported, including
those loaded through ``importlib.import_module``, which ``python -X importtime`` does not log);
the list must not name any of the modules below.
"""
from __future__ import annotations

import subprocess
import sys

import pytest

HEAVY = ("numpy", "scipy", "pandas", "plotly", "pymoo", "pydantic", "jinja2", "yaml", "tqdm", "numba",
         "strainline.models", "strainline.optimizer.inputs", "strainline.optimizer.search",
         "strainline.optimizer.outputs")


SCRIPT = """
import sys
from strainline.optimizer.cli.main import main
try:
    main(sys.argv[1:])
except SystemExit:
    pass
sys.__stderr__.write("\\nMODULES " + " ".join(sorted(sys.modules)) + "\\n")
"""


def _imported(*argv: str) -> set[str]:
    proc = subprocess.run([sys.executable, "-c", SCRIPT, *argv], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert "usage: strainline" in proc.stdout
    names = set(proc.stderr.rsplit("MODULES ", 1)[1].split())
    assert "strainline.optimizer.cli.main" in names        # the list really holds our modules
    return names


def _heavy(names: set[str]) -> list[str]:
    return sorted(n for n in names if any(n == h or n.startswith(h + ".") for h in HEAVY))


def test_top_level_help_imports_nothing_heavy():
    names = _imported("--help")
    assert _heavy(names) == []
    assert not [n for n in names if n.startswith("strainline.optimizer.cli.") and n != "strainline.optimizer.cli.main"]


@pytest.mark.parametrize("command", ["solve", "report"])
def test_command_help_imports_only_that_command(command):
    names = _imported(command, "--help")
    assert _heavy(names) == []
    others = {n for n in names if n.startswith("strainline.optimizer.cli.")}
    assert others == {"strainline.optimizer.cli.main", f"strainline.optimizer.cli.{command}"}


def test_version_is_looked_up_only_when_asked(capsys):
    from strainline.optimizer.cli.main import main

    with pytest.raises(SystemExit) as info:
        main(["--version"])
    assert info.value.code == 0
    from importlib.metadata import version

    assert capsys.readouterr().out.strip() == f"strainline {version('strainline')}"


def test_constants_are_the_codata_values_without_importing_scipy_constants():
    # models/units.py carries literals (no scipy.constants at start-up); they must equal the CODATA
    # recommended values scipy.constants carries (NIST), and satisfy c^2 mu0 eps0 = 1 (Maxwell).
    import math

    from scipy import constants as codata

    from strainline.models import units

    assert units.C0 == 299792458.0 == codata.c                      # exact by the SI definition of the metre
    assert units.MU0 == codata.mu_0 and units.EPS0 == codata.epsilon_0
    assert units.C0 ** 2 * units.MU0 * units.EPS0 == pytest.approx(1.0, abs=1e-9)
    assert units.ETA0 == pytest.approx(math.sqrt(codata.mu_0 / codata.epsilon_0), rel=1e-15)
    assert units.ETA0 == pytest.approx(376.730313, rel=1e-8)        # CODATA 2022 characteristic impedance of vacuum
