"""Fronts for the several-lines output tests (tests/test_outputs_lines.py, tests/test_report_lines_browser.py).

``solved_front`` runs the shipped two-zone study (studies/reader-fold-and-hinge.yaml, its own catalog) with an
impedance-yield limit added, so every candidate carries ``line.impedance_yield`` and two real bend zones.
``three_lines`` then copies each candidate's real ``line`` into a ``lines`` list of three named lines. The
copies are a TEST FIXTURE, not physics: the second and third lines get made-up widths (+10 um, +20 um), made-up
routed lengths and a made-up yield (5 and 10 points lower), so that every number shown can be traced to its own
line. ``infeasible`` turns a front into one with no feasible candidate and ``search.infeasible.nearest_candidates``
built from three of its real candidates (their layers and choices), each missing a thickness limit set below it.
"""
from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
STUDY = ROOT / "studies" / "reader-fold-and-hinge.yaml"
NAMES = ("rf-feed", "usb-pair", "cam-pair")
LENGTHS_MM = (40.0, 65.0, None)        # made up; the third line has no routed length


def solved_front(tmp: Path) -> dict[str, Any]:
    """A real `strainline solve` of the shipped two-zone study with ``limits.min_yield_pct: 50`` added."""
    from strainline.optimizer.cli.main import main

    text = STUDY.read_text(encoding="utf-8")
    assert "catalog: catalogs/reader-fab" in text and "  total_thickness_um: 400\n" in text
    text = text.replace("catalog: catalogs/reader-fab", f"catalog: {STUDY.parent / 'catalogs' / 'reader-fab'}")
    text = text.replace("  total_thickness_um: 400\n", "  total_thickness_um: 400\n  min_yield_pct: 50\n")
    study = tmp / "reader-yield.yaml"
    study.write_text(text, encoding="utf-8")
    out = tmp / "solved"
    assert main(["solve", str(study), "--out", str(out), "--budget", "1500", "--quiet"]) == 0
    front = json.loads((out / "front.json").read_text(encoding="utf-8"))
    assert front["candidates"] and all(len(c["bends"]) == 2 for c in front["candidates"])
    assert all(isinstance(c["line"].get("impedance_yield"), dict) for c in front["candidates"])
    return front


def three_lines(front: dict[str, Any], names: tuple[str, ...] = NAMES) -> dict[str, Any]:
    """The front with three named lines per candidate (a test fixture, see the module docstring)."""
    front = copy.deepcopy(front)
    for c in front["candidates"]:
        base = c["line"]
        lines = []
        for k, name in enumerate(names):
            ln = copy.deepcopy(base)
            ln["name"] = name
            ln["width_um"] = base["width_um"] + 10.0 * k
            ln["length_mm"] = LENGTHS_MM[k]
            ln["insertion_loss_db"] = None if LENGTHS_MM[k] is None else base["loss_db_per_m"] * LENGTHS_MM[k] / 1000
            ln["impedance_yield"] = dict(base["impedance_yield"], yield_pct=base["impedance_yield"]["yield_pct"] - 5 * k)
            lines.append(ln)
        c["lines"] = lines
        c["line"] = lines[0]
    study_line = front["study"].pop("line")
    front["study"]["lines"] = [dict(study_line, name=n) for n in names]
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
