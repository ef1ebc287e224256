"""``strainline report DIR``: rebuild ``DIR/report.html`` and ``DIR/handoff/`` from ``DIR/front.json``."""
from __future__ import annotations

import argparse
from pathlib import Path

from strainline.optimizer.errors import InputError
from strainline.optimizer.outputs.report import CAUTION, load_front, write_all


def register(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = subparsers.add_parser(
        "report",
        help="rebuild report.html and handoff/ from an existing front.json (no new search)",
        description="Rebuild DIR/report.html (interactive, self-contained, offline) and DIR/handoff/ "
        "(one fabricator sheet per front candidate, HTML and CSV) from DIR/front.json written by "
        "`strainline solve`. " + CAUTION,
    )
    p.add_argument("folder", metavar="DIR", help="output folder of `strainline solve` (holds front.json)")
    p.add_argument("--quiet", action="store_true", help="print nothing on success")
    return p


def run(args: argparse.Namespace) -> int:
    folder = Path(args.folder)
    if not folder.is_dir():
        if folder.name == "front.json" and folder.is_file():
            folder = folder.parent
        else:
            raise InputError("is not a folder holding front.json (the --out folder of `strainline solve`)",
                             str(folder))
    front = load_front(folder / "front.json")
    paths = write_all(front, folder)
    if not args.quiet:
        n = len(front["candidates"])
        print(f"wrote {folder / 'report.html'} and {n} handoff sheet(s) in {folder / 'handoff'}")
        print(f"caution: {CAUTION}")
    return 0 if paths else 1
