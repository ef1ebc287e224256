"""Layout guards: imports run one way, cli -> outputs -> search -> inputs -> models.

The rule is the project's own (DEVELOPERS.md, "Layout"); this test reads every module's imports,
function-level ones included, with the standard library's ``ast`` so nothing is executed.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
OPT = ROOT / "optimizer"

#: The rooms of ``strainline.optimizer`` in import order: a room may import its own modules and any
#: room of lower rank, never one of higher rank.  ``errors`` is the one shared leaf of the package.
RANK = {"errors": 0, "inputs": 1, "search": 2, "outputs": 3, "cli": 4, "__init__": 0, "__main__": 5}
MAX_LINES = 420


def _room(path: Path) -> str:
    rel = path.relative_to(OPT)
    return rel.parts[0] if len(rel.parts) > 1 else rel.stem


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            out.add(node.module)
            out.update(f"{node.module}.{a.name}" for a in node.names)
    return out


MODULES = sorted(p for p in OPT.rglob("*.py"))


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(ROOT)))
def test_imports_run_one_way(path):
    room = _room(path)
    bad = []
    for name in _imports(path):
        if not name.startswith("strainline.optimizer."):
            continue
        target = name.split(".")[2]
        if target in RANK and RANK[target] > RANK[room] and target != room:
            bad.append(name)
    assert not bad, f"{path.relative_to(ROOT)} ({room}) imports upward: {sorted(bad)}"


def test_no_import_cycles():
    graph: dict[str, set[str]] = {}
    for path in MODULES:
        mod = "strainline.optimizer." + ".".join(path.relative_to(OPT).with_suffix("").parts)
        mod = mod.removesuffix(".__init__")
        graph[mod] = set()
        for name in _imports(path):
            while name and name not in {m for m in graph} | {
                    "strainline.optimizer." + ".".join(p.relative_to(OPT).with_suffix("").parts)
                    for p in MODULES}:
                name = name.rpartition(".")[0]
            if name and name != mod and name.startswith("strainline.optimizer."):
                graph[mod].add(name)
    seen: dict[str, int] = {}

    def visit(node: str, stack: list[str]) -> None:
        seen[node] = 1
        for nxt in graph.get(node, ()):
            if seen.get(nxt) == 1:
                raise AssertionError("import cycle: " + " -> ".join(stack[stack.index(nxt):] + [nxt])
                                     if nxt in stack else f"import cycle through {nxt}")
            if nxt not in seen:
                visit(nxt, stack + [nxt])
        seen[node] = 2

    for node in graph:
        if node not in seen:
            visit(node, [node])


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(ROOT)))
def test_modules_stay_small(path):
    n = len(path.read_text(encoding="utf-8").splitlines())
    assert n <= MAX_LINES, f"{path.relative_to(ROOT)} has {n} lines (limit about 400)"
