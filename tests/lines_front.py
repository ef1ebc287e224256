"""Fronts for the several-lines output tests (tests/test_outputs_lines.py, tests/test_report_lines_browser.py).

``solved_front`` runs the shipped three-line study (studies/dock-tail-three-lines.yaml: a 50-ohm feed, a 90-ohm
and a 100-ohm pair, a fold and a hinge, its own catalog) with an impedance-yield limit added, so every line of
every candidate carries ``impedance_yield``; ``one_line_front`` does the same with the shipped one-line two-zone
study (studies/reader-fold-and-hinge.yaml). ``renamed`` gives the lines other names (test fixture: hostile
text). ``infeasible`` turns a front into one with no feasible candidate and
``search.infeasible.nearest_candidates`` built from three of its real candidates (their layers and choices),
each missing a thickness limit set below it (a test fixture, not a search result).
"""
from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
STUDY = ROOT / "studies" / "dock-tail-three-lines.yaml"
ONE_LINE_STUDY = ROOT / "studies" / "reader-fold-and-hinge.yaml"
NAMES = ("antenna", "usb", "display")


def _solve(study: Path, catalog: str, limit: str, tmp: Path) -> dict[str, Any]:
    """`strainline solve` of a shipped study copied to ``tmp`` (its catalog path made absolute) with
    ``limits.min_yield_pct: 50`` added; a short evolutionary run."""
    from strainline.optimizer.cli.main import main

    text = study.read_text(encoding="utf-8")
    assert f"catalog: {catalog}" in text and f"  total_thickness_um: {limit}\n" in text
    text = text.replace(f"catalog: {catalog}", f"catalog: {study.parent / catalog}")
    text = text.replace(f"  total_thickness_um: {limit}\n", f"  total_thickness_um: {limit}\n  min_yield_pct: 50\n")
    path = tmp / study.name
    path.write_text(text, encoding="utf-8")
    out = tmp / (study.stem + "-out")
    assert main(["solve", str(path), "--out", str(out), "--method", "evolutionary", "--budget", "1500", "--quiet"]) == 0
    front = json.loads((out / "front.json").read_text(encoding="utf-8"))
    assert front["candidates"] and all(len(c["bends"]) == 2 for c in front["candidates"])
    return front


def solved_front(tmp: Path) -> dict[str, Any]:
    """The shipped three-line study, solved with a yield limit: three lines and two zones per candidate."""
    front = _solve(STUDY, "catalogs/dock-fab", "450", tmp)
    for c in front["candidates"]:
        assert [ln["name"] for ln in c["lines"]] == list(NAMES) and c["line"] == c["lines"][0]
        assert all(isinstance(ln.get("impedance_yield"), dict) for ln in c["lines"])
    return front


def one_line_front(tmp: Path) -> dict[str, Any]:
    """The shipped one-line two-zone study, solved with a yield limit."""
    front = _solve(ONE_LINE_STUDY, "catalogs/reader-fab", "400", tmp)
    assert all(isinstance(c["line"].get("impedance_yield"), dict) for c in front["candidates"])
    return front


def renamed(front: dict[str, Any], names: tuple[str, ...]) -> dict[str, Any]:
    """The front with its lines renamed (in the candidates and the study echo): a test fixture."""
    front = copy.deepcopy(front)
    for c in front["candidates"]:
        for ln, name in zip(c["lines"], names):
            ln["name"] = name
        c["line"] = c["lines"][0]
    for entry, name in zip(front["study"]["lines"], names):
        entry["name"] = name
    return front


def infeasible(front: dict[str, Any]) -> dict[str, Any]:
    """No feasible candidate; three real candidates as the nearest, each missing a thickness limit."""
    front = copy.deepcopy(front)
    near = front["candidates"][:3]
    limit = min(c["bend"]["total_thickness_um"] for c in near) - 20.0
    out = []
    for k, c in enumerate(near):
        t = c["bend"]["total_thickness_um"]
        miss = {"constraint": "total_thickness", "text": "total thickness", "excess": (t - limit) / limit,
                "limit": limit, "achieved": t, "unit": "um", "bound": "at most"}
        out.append({"rank": k + 1, "total_violation": miss["excess"], "choices": c["choices"], "layers": c["layers"],
                    "total_thickness_um": t, "misses": [miss]})
    front["search"]["infeasible"] = {"violations": {"total_thickness": 900, "impedance": 12},
                                     "nearest": out[0]["misses"], "nearest_choices": near[0]["choices"],
                                     "message": "no feasible stackup (test fixture)", "nearest_candidates": out}
    front["candidates"] = []
    front["dominated"] = []
    return front
