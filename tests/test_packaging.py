"""Packaging guards (STYLE.md practices 1 and 14)."""
from __future__ import annotations

import re
import subprocess
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_every_package_folder_is_declared():
    cfg = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    declared = set(cfg["packages"])
    mapping = cfg["package-dir"]
    found = set()
    for pkg, folder in mapping.items():
        for init in (ROOT / folder).rglob("__init__.py"):
            rel = init.parent.relative_to(ROOT / folder)
            found.add(".".join([pkg, *rel.parts]) if rel.parts else pkg)
    assert found == declared, f"undeclared: {found - declared}, stale: {declared - found}"


def test_models_is_pure():
    code = (
        "import sys, strainline.models, pkgutil, importlib\n"
        "import strainline.models as m\n"
        "for info in pkgutil.walk_packages(m.__path__, 'strainline.models.'):\n"
        "    importlib.import_module(info.name)\n"
        "bad = [n for n in ('yaml', 'pandas', 'plotly', 'pymoo', 'strainline.optimizer') if n in sys.modules]\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "", f"models/ imported {out.stdout.strip()}"


def test_ci_runs_the_readme_test_command():
    readme = (ROOT / "README.md").read_text()
    ci = (ROOT / ".ci" / "run").read_text()
    blocks = re.findall(r"```(?:bash|sh)?\n(.*?)```", readme, flags=re.S)
    test_cmds = [line.strip() for b in blocks for line in b.splitlines() if "pytest" in line]
    assert test_cmds, "README has no test command"
    assert test_cmds[0] in ci


def test_python_m_entry_point():
    out = subprocess.run([sys.executable, "-m", "strainline.optimizer", "--version"],
                         capture_output=True, text=True)
    assert out.returncode == 0 and out.stdout.startswith("strainline ")
