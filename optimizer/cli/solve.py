"""``strainline solve STUDY.yaml``: search the study's stackups and write the Pareto front."""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

from strainline.optimizer.errors import InputError

METHODS = ("auto", "exhaustive", "evolutionary")


def _positive_int(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        raise InputError(f"{text!r} is not an integer", "--budget/--seed/--workers") from None
    if v < 0:
        raise InputError(f"{text!r} is out of range; allowed range [0, inf)", "--budget/--seed/--workers")
    return v


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
    p.add_argument("--seed", type=_positive_int, default=None, help="random seed (default: the study's)")
    p.add_argument("--quiet", action="store_true", help="no progress bar and no table")
    try:
        import strainline.optimizer.search.verify  # noqa: F401

        p.add_argument("--verify", action="store_true", help="field-solve every front candidate")
        p.add_argument("--workers", type=_positive_int, default=1, help="local worker processes for --verify")
        p.add_argument("--dask", metavar="ADDRESS", default=None, help="Dask scheduler address for --verify")
    except ImportError:
        pass
    return p


def solve(study_path: str | Path, out: str | Path | None = None, method: str | None = None,
          budget: int | None = None, seed: int | None = None, quiet: bool = True,
          catalog=None) -> tuple[dict, Path]:
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
    """
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.search.front import build_front
    from strainline.optimizer.search.problem import build_problem
    from strainline.optimizer.cli.progress import Progress
    from strainline.optimizer.search.engine import search
    from strainline.optimizer.search.space import build_space
    from strainline.optimizer.inputs.study import load_study

    t0 = time.perf_counter()
    catalog = catalog or load_catalog()
    study = load_study(study_path, catalog)
    sp = build_space(study, catalog)
    problem = build_problem(sp, catalog)
    m = method or study.search.method
    b = study.search.budget if budget is None else budget
    if b < 100:
        raise InputError(f"{b} is out of range; allowed range [100, inf)", "--budget")
    s = study.search.seed if seed is None else seed
    progress = Progress(f"solve {study.name}", quiet=quiet)

    def evaluate(x):
        e = problem.evaluate(x)
        return e.F, e.G

    def evaluate_pruned(x):
        e = problem.evaluate(x, prune=True)
        return e.F, e.G

    result = search(evaluate, sp.sizes, problem.n_obj, problem.n_con, m, b, s, study.search.population, progress,
                    evaluate_exhaustive=evaluate_pruned)
    progress.close()
    front = build_front(problem, result, catalog, s)
    front["search"]["seconds"] = round(time.perf_counter() - t0, 3)
    out_dir = Path(out) if out is not None else Path("out") / study.name
    return front, out_dir


def run(args: argparse.Namespace) -> int:
    from strainline.optimizer.search.front import CAUTION
    from strainline.optimizer.outputs.frontfiles import format_table, write_outputs

    front, out_dir = solve(args.study, args.out, args.method, args.budget, args.seed, quiet=args.quiet)
    if getattr(args, "verify", False):
        from strainline.optimizer.cli.progress import Progress
        from strainline.optimizer.search.verify import verify_front

        prog = Progress("verify", quiet=args.quiet)
        front = verify_front(front, workers=max(1, args.workers), dask_address=args.dask, progress=prog.update)
        prog.close()
    paths = write_outputs(front, out_dir)
    if not args.quiet:
        print(format_table(front))
    else:
        s = front["search"]
        print(f"{len(front['candidates'])} candidates on the front ({s['evaluated']:,} evaluated, "
              f"{s['feasible']:,} feasible)")
        if not front["candidates"]:
            print(s.get("infeasible", {}).get("message", "no feasible stackup"))
    names = [str(Path(p).relative_to(out_dir)) if Path(p).is_relative_to(out_dir) else str(p) for p in paths]
    shown = [n for n in names if "/" not in n and "\\" not in n]
    rest = len(names) - len(shown)
    print(f"wrote {out_dir}/: " + ", ".join(shown) + (f" and {rest} more files" if rest else ""))
    print(f"caution: {CAUTION}")
    sys.stdout.flush()
    return 0
