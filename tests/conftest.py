"""Shared fixtures for the strainline test suite.

The suite runs against the installed package (the README's test command installs it). When
``strainline`` is not installed in the Python that runs pytest, the checkout itself is put on the
path (a throw-away folder that maps ``strainline.models``/``optimizer``/``catalogs`` onto the
source folders, exported through ``PYTHONPATH`` so subprocesses and worker processes see it too).
A dependency from ``pyproject.toml`` that is missing stops the run before collection with one line
naming it and the install command, instead of one import error per test module.
"""
from __future__ import annotations

import importlib.util
import os
import re
import sys
import tempfile
import tomllib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

#: Import name of each distribution whose name differs from it.
_IMPORT_NAME = {"pyyaml": "yaml", "scikit-rf": "skrf", "dask": "distributed"}


def _put_checkout_on_path() -> None:
    try:
        if importlib.util.find_spec("strainline.optimizer") is not None:
            return
    except ImportError:
        pass
    sys.modules.pop("strainline", None)     # e.g. an empty namespace left by an uninstall
    cfg = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    folders = cfg["tool"]["setuptools"]["package-dir"]          # strainline.models -> models, ...
    shim = Path(tempfile.mkdtemp(prefix="strainline-src-")) / "strainline"
    shim.mkdir()
    (shim / "__init__.py").write_text('"""The strainline checkout, mapped for the test suite."""\n')
    for pkg, folder in folders.items():
        (shim / pkg.split(".", 1)[1]).symlink_to(ROOT / folder, target_is_directory=True)
    sys.path.insert(0, str(shim.parent))
    os.environ["PYTHONPATH"] = os.pathsep.join(filter(None, [str(shim.parent), os.environ.get("PYTHONPATH")]))


def _missing_dependencies() -> list[str]:
    proj = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    wanted = list(proj["dependencies"]) + list(proj["optional-dependencies"]["test"])
    missing = []
    for req in wanted:
        dist = re.match(r"[A-Za-z0-9_.-]+", req).group(0).lower()
        if importlib.util.find_spec(_IMPORT_NAME.get(dist, dist.replace("-", "_"))) is None:
            missing.append(dist)
    return missing


_put_checkout_on_path()


def pytest_sessionstart(session):
    missing = _missing_dependencies()
    if missing:
        pytest.exit(f"this Python ({sys.executable}) lacks {', '.join(missing)}; the suite needs the test "
                    "dependencies: run the README's test command, python3 -m venv .venv && . .venv/bin/activate && "
                    "pip install \".[test]\" && python -m pytest -q (or pip install -e \".[test]\" into this Python)",
                    returncode=4)


@pytest.fixture
def repo_root() -> Path:
    return ROOT


@pytest.fixture
def run_cli(capsys):
    """Run ``strainline`` in-process; return (exit_code, stdout, stderr)."""
    from strainline.optimizer.cli.main import main

    def _run(*argv: str) -> tuple[int, str, str]:
        code = main([str(a) for a in argv])
        out, err = capsys.readouterr()
        return code, out, err

    return _run


@pytest.fixture(scope="session", autouse=True)
def _private_field_cache(tmp_path_factory):
    """Every test session solves into its own field cache, so results never depend on what an
    earlier run (or the user's own runs) left in ``~/.cache/strainline``."""
    import os

    old = os.environ.get("STRAINLINE_CACHE_DIR")
    os.environ["STRAINLINE_CACHE_DIR"] = str(tmp_path_factory.mktemp("field-cache"))
    yield
    if old is None:
        os.environ.pop("STRAINLINE_CACHE_DIR", None)
    else:
        os.environ["STRAINLINE_CACHE_DIR"] = old
