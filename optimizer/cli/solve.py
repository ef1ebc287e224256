"""``strainline solve STUDY.yaml``: search the study's stackups and write the Pareto front."""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

from strainline.optimizer.errors import InputError

METHODS = ("auto", "exhaustive", "evolutionary")
#: The phases ``strainline solve`` shows a progress bar for (``verify`` only with --verify).
SOLVE_PHASES = ("line table", "search", "front", "writing")


def _positive_int(text: str) -> int:
    """argparse type: an integer >= 1 (the message is ours; argparse prefixes the option)."""
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text} is not a positive integer") from None
    if v < 1:
        raise argparse.ArgumentTypeError(f"{text} is not a positive integer")
    return v


def _natural_int(text: str) -> int:
    """argparse type: a seed, an integer in [0, 2**32 - 1] (the study's search.seed range)."""
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text} is not an integer >= 0") from None
    if v < 0:
        raise argparse.ArgumentTypeError(f"{text} is not an integer >= 0")
    if v > 2 ** 32 - 1:
        raise argparse.ArgumentTypeError(f"{text} is out of range; allowed range [0, {2 ** 32 - 1}]")
    return v


def _seconds(text: str) -> float:
    """argparse type: a time in seconds, > 0."""
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text} is not a number of seconds") from None
    if not v > 0 or v == float("inf"):
        raise argparse.ArgumentTypeError(f"{text} is out of range; allowed range (0, inf)")
    return v


def _address(text: str) -> str:
    """argparse type: a Dask scheduler address (not empty)."""
    if not text.strip():
        raise argparse.ArgumentTypeError(f"{text!r} is not a scheduler address; give e.g. tcp://10.0.0.5:8786")
    return text


def register(subparsers) -> argparse.ArgumentParser:
    p = subparsers.add_parser(
        "solve",
        help="search a study's stackups and write the Pareto front",
        description="Search the stackups a study allows and write DIR/front.json and DIR/front.csv. "
        "Estimates for concept work: verify with the fabricator and with flex testing.",
    )
    p.add_argument("study", metavar="STUDY.yaml", help="the study file")
    p.add_argument("--out", metavar="DIR", default=None, help="output folder (default out/<study name>)")
    p.add_argument("--method", choices=METHODS, default=None, help="search method (default: the study's, else auto)")
    p.add_argument("--budget", type=_positive_int, default=None, help="evaluation budget of the evolutionary search")
    p.add_argument("--seed", type=_natural_int, default=None, help="random seed (default: the study's)")
    p.add_argument("--quiet", action="store_true", help="no progress bar and no table")
    p.add_argument("--force", action="store_true",
                   help="run past the stated limits (line-table size, projected exhaustive time) and replace "
                        "an --out folder that holds files other than strainline output")
    p.add_argument("--verify", action="store_true", help="field-solve every front candidate")
    p.add_argument("--time-limit", type=_seconds, default=None, metavar="S",
                   help="auto: enumerate when the projected time is at most S seconds (default 60)")
    p.add_argument("--workers", type=_positive_int, default=None,
                   help="local worker processes for the exhaustive search (default: every core) and --verify (default 1)")
    p.add_argument("--dask", metavar="ADDRESS", default=None, type=_address,
                   help="Dask scheduler address: run the exhaustive search and --verify on that cluster")
    p.add_argument("--impedance", choices=("field", "closed-form"), default=None,
                   help="impedance model of the line table (default: the study's search.impedance, else field)")
    p.add_argument("--keep-unverified", action="store_true",
                   help="with --verify, keep candidates that fail the field check on the front (marked)")
    p.add_argument("--catalog", metavar="PATH", default=None,
                   help="catalog folder (the fabricator's materials; default: the study's catalog:, else built-in)")
    return p


def solve(study_path: str | Path, out: str | Path | None = None, method: str | None = None,
          budget: int | None = None, seed: int | None = None, quiet: bool = True,
          catalog=None, *, force: bool = False, phases=None, preflight: bool = False,
          workers: int | None = None, dask_address: str | None = None, time_limit_s: float | None = None,
          impedance: str | None = None) -> tuple[dict, Path]:
    """Run a study end to end; return the front object and the output folder (files written).

    Parameters
    ----------
    study_path : path
        The study YAML.
    out : path, optional
        Output folder (default ``out/<study name>``).
    method, budget, seed : optional
        Override the study's search settings.
    quiet : bool
        No progress bar.
    force : bool
        Build a line table over its stated row limit (:mod:`.limits`), and (with ``preflight``)
        accept an output folder holding other files.
    phases : Phases, optional
        Progress of the phases (line table, search, front); default: bars unless ``quiet``.
    preflight : bool
        Check the output folder before the search (:func:`.folder.check_out`).
    workers, dask_address : optional
        Local processes of the exhaustive search (default: every core), or a Dask scheduler.
    """
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.search.front import build_front
    from strainline.optimizer.search.problem import build_problem
    from strainline.optimizer.cli.limits import check_line_table
    from strainline.optimizer.cli.progress import Phases
    from strainline.optimizer.search.engine import search
    from strainline.optimizer.search.space import build_space
    from strainline.optimizer.inputs.study import load_study

    t0 = time.perf_counter()
    study = load_study(study_path, catalog)   # catalog: --catalog, else the study's catalog:, else built-in
    catalog = catalog or load_catalog(study.catalog_path)
    out_dir = Path(out) if out is not None else Path("out") / study.name
    if preflight:
        from strainline.optimizer.outputs.folder import check_out

        check_out(out_dir, force)
    sp = build_space(study, catalog)
    check_line_table(sp, force)
    phases = phases if phases is not None else Phases(SOLVE_PHASES, quiet=quiet)
    phases.start("line table")
    from strainline.optimizer.search.linetable import table_options

    with table_options(impedance=impedance, dask_address=dask_address):
        problem = build_problem(sp, catalog)
    m = method or study.search.method
    b = study.search.budget if budget is None else budget
    if b < 100:
        raise InputError(f"{b} is out of range; allowed range [100, inf)", "--budget")
    s = study.search.seed if seed is None else seed
    if time_limit_s is None:
        time_limit_s = study.search.time_limit_s          # the study's, else the search default
    progress = phases.start("search")

    from strainline.optimizer.search.parallel import ProblemEvaluator

    # the full evaluation (F, G) for the evolutionary search; it carries the problem, so the search
    # seeds and screens from the line table and the per-option thicknesses (:mod:`.seeding`)
    evaluate = ProblemEvaluator(problem, prune=False)

    from strainline.optimizer.search.fieldrefine import search_on_direct_rows, table_summary

    # field model: the rows the front uses are field-solved directly and the search repeated on them
    result = search_on_direct_rows(problem, lambda: search(
        evaluate, sp.sizes, problem.n_obj, problem.n_con, m, b, s, study.search.population, progress,
        evaluate_exhaustive=ProblemEvaluator(problem, prune=True), workers=workers,
        dask_address=dask_address, force=force, space=sp, bound=_thickness_bound(problem),
        **({} if time_limit_s is None else {"time_limit_s": time_limit_s}),
        notify=None if quiet else (lambda text: print(text, file=sys.stderr))), dask_address=dask_address)
    phases.start("front")
    front = build_front(problem, result, catalog, s)
    front["search"].update(table_summary(problem.table))
    from strainline.optimizer.search.guard import guard_note

    front["search"]["impedance_guard"] = guard_note(sp.study, catalog)
    # the nominal window each line was searched with (the guard may widen the file's default)
    front["search"]["nominal_window_pct"] = {ln.name: round(100.0 * ln.nominal_error, 9) for ln in sp.study.lines}
    if problem.lines:      # several lines: every line's own table (line_table is the first line's)
        front["search"]["line_tables"] = {sub.space.study.line.name: table_summary(sub.table)["line_table"]
                                          for sub in problem.lines}
    from strainline.optimizer.inputs.catalog import study_catalog

    front["catalog"] = study_catalog(study, catalog)   # so `strainline report` rebuilds the same sheets
    phases.close()
    front["search"]["seconds"] = round(time.perf_counter() - t0, 3)
    return front, out_dir


def _user_catalog(args: argparse.Namespace):
    """The catalog of ``--catalog PATH``, or None (then the study's own, else the built-in one)."""
    if getattr(args, "catalog", None) is None:
        return None
    from strainline.optimizer.inputs.catalog import load_catalog

    return load_catalog(args.catalog)


def _thickness_bound(problem):
    """The total thickness limit as a block bound of the exhaustive search (:mod:`.search.bounds`)."""
    from strainline.optimizer.search.parallel import ProblemEvaluator

    if "total_thickness" not in problem.constraint_names:
        return None
    return ProblemEvaluator(problem, prune=False), problem.constraint_names.index("total_thickness")


def _not_applicable(args: argparse.Namespace) -> None:
    """Refuse options the run would not use (one line naming the option, exit 2)."""
    if args.method == "exhaustive" and args.budget is not None:
        raise InputError("the exhaustive search evaluates every candidate and has no budget; --budget applies "
                         "to the evolutionary and auto methods", "--budget")
    if getattr(args, "keep_unverified", False) and not getattr(args, "verify", False):
        raise InputError("applies only with --verify", "--keep-unverified")


def run(args: argparse.Namespace) -> int:
    from strainline.optimizer.search.front import CAUTION

    _not_applicable(args)
    from strainline.optimizer.outputs.frontfiles import format_table, write_outputs

    from strainline.optimizer.cli.progress import Phases
    from strainline.optimizer.outputs.folder import replace_folder, resolve_out

    verify = getattr(args, "verify", False)
    with Phases(SOLVE_PHASES[:3] + (("verify",) if verify else ()) + SOLVE_PHASES[3:], quiet=args.quiet) as phases:
        front, out_dir = solve(args.study, args.out, args.method, args.budget, args.seed, quiet=args.quiet,
                               force=args.force, phases=phases, preflight=True, workers=args.workers,
                               dask_address=args.dask, time_limit_s=getattr(args, "time_limit", None),
                               impedance=getattr(args, "impedance", None),
                               catalog=_user_catalog(args))
        if verify:
            from strainline.optimizer.search.verify import verify_front

            prog = phases.start("verify", total=len(front["candidates"]))
            front = verify_front(front, workers=args.workers or 1, dask_address=args.dask, progress=prog.update,
                                 keep_unverified=getattr(args, "keep_unverified", False))
        phases.start("writing")
        from strainline.optimizer.cli.finite import drop_non_finite

        drop_non_finite(front)          # no NaN or null where a figure belongs reaches the files
        paths = replace_folder(out_dir, lambda stage: write_outputs(front, stage), force=args.force)
    if not args.quiet:
        print(format_table(front))
    else:
        s = front["search"]
        print(f"{len(front['candidates'])} candidates on the front ({s['evaluated']:,} evaluated, "
              f"{s['feasible']:,} feasible)")
        if not front["candidates"]:
            print(s.get("infeasible", {}).get("message", "no feasible stackup"))
    real = resolve_out(out_dir)
    names = [str(Path(p).relative_to(real)) if Path(p).is_relative_to(real) else str(p) for p in paths]
    shown = [n for n in names if "/" not in n and "\\" not in n]
    rest = len(names) - len(shown)
    print(f"wrote {out_dir}/: " + ", ".join(shown) + (f" and {rest} more files" if rest else ""))
    if verify:
        print(front["field_verification"]["message"])
    if "dropped_non_finite" in front["search"]:
        print(front["search"]["dropped_non_finite"]["message"])
    print(f"caution: {CAUTION}")
    sys.stdout.flush()
    return 0
