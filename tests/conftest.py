"""Shared fixtures for the strainline test suite."""
from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


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
