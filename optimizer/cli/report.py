"""``strainline report DIR``: rebuild ``DIR/report.html`` and ``DIR/handoff/`` from ``DIR/front.json``.

The folder is replaced as one unit (:mod:`strainline.optimizer.outputs.folder`): the new report
and sheets are written beside it together with copies of front.json and front.csv, and swapped in
only when everything is written, so a failure anywhere leaves the previous files as they were.
"""
from __future__ import annotations

import argparse
from pathlib import Path

from strainline.optimizer.errors import InputError


def register(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = subparsers.add_parser(
        "report",
        help="rebuild report.html and handoff/ from an existing front.json (no new search)",
        description="Rebuild DIR/report.html (interactive, self-contained, offline) and DIR/handoff/ "
        "(one fabricator sheet per front candidate, HTML and CSV) from DIR/front.json written by "
        "`strainline solve`. Estimates for concept work: verify with the fabricator and with flex testing.",
    )
    p.add_argument("folder", metavar="DIR", help="output folder of `strainline solve` (holds front.json)")
    p.add_argument("--quiet", action="store_true", help="print nothing on success")
    p.add_argument("--force", action="store_true",
                   help="rebuild even when DIR holds files that are not strainline output (they are removed)")
    p.add_argument("--catalog", metavar="PATH", default=None,
                   help="catalog folder to rebuild with (default: the entries front.json recorded, else built-in)")
    return p


def run(args: argparse.Namespace) -> int:
    from strainline.optimizer.cli.progress import Phases
    from strainline.optimizer.outputs.folder import check_out, replace_folder
    from strainline.optimizer.outputs.report import CAUTION, load_front, write_all

    folder = Path(args.folder)
    if not folder.is_dir():
        if folder.name == "front.json" and folder.is_file():
            folder = folder.parent
        else:
            raise InputError("is not a folder holding front.json (the --out folder of `strainline solve`)",
                             str(folder))
    front = load_front(folder / "front.json")          # a bad front.json is named before anything else
    check_out(folder, args.force, option="DIR")
    catalog = None
    if getattr(args, "catalog", None) is not None:
        from strainline.optimizer.inputs.catalog import load_catalog

        catalog = load_catalog(args.catalog)
    with Phases(quiet=args.quiet) as phases:
        phases.start("writing")
        paths = replace_folder(folder, lambda stage: write_all(front, stage, catalog), force=args.force,
                               keep=("front.json", "front.csv"), option="DIR")
    if not args.quiet:
        n = len(front["candidates"])
        print(f"wrote {folder / 'report.html'} and {n} handoff sheet(s) in {folder / 'handoff'}")
        print(f"caution: {CAUTION}")
    return 0 if paths else 1
