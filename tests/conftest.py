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
