"""Block bounds of the exhaustive search (plain script; prints numbers, asserts nothing).

1. benchmarks/studies/bench-3cu-1e9.yaml (8.5e8 candidates): the exact front by
   ``search(method="exhaustive")`` on 2 workers with the branch and bound (evolutionary pre-run,
   thickness / line / strain / dominance bounds): wall time and the share skipped by each bound.
2. benchmarks/studies/bench-4cu-1e12.yaml (1.2e12 candidates): the bound pass alone down to a
   coarse level (the share each bound skips there, its time), with a cap.
3. studies/dock-tail-three-lines.yaml (three lines, unbonded fold and hinge) and a larger variant
   (three copper weights, three core and two adhesive thicknesses; once more with a 28 dB/m loss
   limit, which half of the display pair's rows miss): the bound pass down to the
   enumerated blocks with the known points of a short evolutionary run -- the share each bound
   skips (the multi-line row bound ``line``, the unbonded thickness, the leaf grouping, the
   per-leaf strain bound and the dominance it enables) -- against
   the additive thickness split these studies had before (closed-form line tables, to keep the
   run short).

Run:  OMP_NUM_THREADS=1 python benchmarks/bench_bounds.py [1] [2] [3]
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.inputs.study import load_study
from strainline.optimizer.search import bounds as bnd
from strainline.optimizer.search.engine import PRE_BUDGET, search
from strainline.optimizer.search.parallel import ProblemEvaluator
from strainline.optimizer.search.problem import build_problem
from strainline.optimizer.search.space import build_space

ROOT = Path(__file__).resolve().parents[1]
CAT = load_catalog()


def _problem(name: str):
    return build_problem(build_space(load_study(ROOT / "benchmarks" / "studies" / name, CAT), CAT), CAT)


def _shares(info: dict, size: int) -> str:
    return ", ".join(f"{k} {v / size:.3%}" for k, v in info.get("skipped_by", {}).items())


def part1() -> None:
    pb = _problem("bench-3cu-1e9.yaml")
    sp = pb.space
    col = pb.constraint_names.index("total_thickness")
    t0 = time.perf_counter()
    ex = search(ProblemEvaluator(pb, prune=False), sp.sizes, pb.n_obj, pb.n_con, "exhaustive", workers=2,
                evaluate_exhaustive=ProblemEvaluator(pb), bound=(ProblemEvaluator(pb, prune=False), col),
                force=True, space=sp)
    dt = time.perf_counter() - t0
    b = ex.info.get("bounds", {})
    left = sp.size - b.get("skipped", 0)
    print(f"[1] 3-copper space {sp.size:,}: exact front {len(ex.archive.F)} points, {dt:.1f} s wall on 2 workers "
          f"(bound pass {b.get('bound_seconds', 0):.1f} s over {b.get('nodes_bounded', 0):,} nodes, pre-run "
          f"{b.get('known_points', {}).get('seconds', 0):.1f} s, {b.get('known_points', {}).get('points', 0)} known "
          f"points); enumerated {left:,} ({left / sp.size:.3%}); skipped: {_shares(b, sp.size)}")


def part2(levels=(12, 9, 7), cap: float = 100.0) -> None:
    pb = _problem("bench-4cu-1e12.yaml")
    sp = pb.space
    sizes = np.asarray(sp.sizes)
    ev = ProblemEvaluator(pb, prune=False)
    KF, Ki, kinfo = bnd.known_points(ev, ProblemEvaluator(pb), sizes, pb.n_obj, pb.n_con, 1, 10 * PRE_BUDGET, sp)
    model = bnd.node_model(ev)
    for m in levels:
        t0 = time.perf_counter()
        try:
            r, info = bnd.node_ranges(model, sizes, (KF, Ki), m_final=m, time_cap=cap)
        except bnd.BoundTimeout:
            print(f"[2] level {m}: bound pass over {cap:.0f} s")
            break
        left = sum(b - a for a, b in r)
        print(f"[2] 4-copper space {sp.size:.3e}, nodes down to level {m} (blocks of {info['block_size']:,}): "
              f"{time.perf_counter() - t0:.1f} s, {info['nodes_bounded']:,} nodes, {kinfo['points']} known points; "
              f"left {left:.3e} ({left / sp.size:.2%}); skipped: {_shares(info, sp.size)}")


def _dock(larger: bool, loss: float | None = None):
    import yaml

    from strainline.optimizer.inputs.study import validate_study
    from strainline.optimizer.search.linetable import table_options

    path = ROOT / "studies" / "dock-tail-three-lines.yaml"
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    if larger:
        data["stack"].update(copper_weights=["1/4oz", "1/3oz", "1/2oz"], dielectric_thickness_um=[25, 50, 75],
                             adhesive_thickness_um=[15, 25])
    if loss is not None:
        data["limits"]["loss_db_per_m"] = loss
    cat = load_catalog(path.parent / data["catalog"])
    study = validate_study(data, cat, file=path.name, folder=path.parent)
    with table_options(impedance="closed-form"):
        return build_problem(build_space(study, cat), cat)


def part3() -> None:
    for larger, loss in ((False, None), (True, None), (True, 28.0)):
        pb = _dock(larger, loss)
        sp = pb.space
        sizes = np.asarray(sp.sizes)
        ev = ProblemEvaluator(pb, prune=False)
        col = pb.constraint_names.index("total_thickness")
        t0 = time.perf_counter()
        split = bnd.find_split(ev, sizes, col, np.random.default_rng(0))
        old = bnd.estimate_skip(ev, sizes, col, split, np.random.default_rng(0)) if split is not None else 0.0
        t_old = time.perf_counter() - t0
        KF, Ki, kinfo = bnd.known_points(ev, ProblemEvaluator(pb), sizes, pb.n_obj, pb.n_con, 1, PRE_BUDGET, sp)
        model = bnd.node_model(ev)
        t0 = time.perf_counter()
        r, info = bnd.node_ranges(model, sizes, (KF, Ki))
        left = sum(b - a for a, b in r)
        what = (" (larger variant" + (f", loss limit {loss:g} dB/m" if loss else "") + ")") if larger else ""
        print(f"[3] three-line dock study{what}, {sp.size:,} candidates: "
              f"branch and bound to blocks of {info['block_size']:,} in {time.perf_counter() - t0:.1f} s "
              f"({info['nodes_bounded']:,} nodes, {kinfo['points']} known points from {kinfo['evaluations']} "
              f"evaluations); left {left:,} ({left / sp.size:.2%}); skipped: {_shares(info, sp.size)}; "
              f"before (additive thickness split only): {old:.2%} skipped (estimated, {t_old:.1f} s)")


if __name__ == "__main__":
    parts = [a for a in sys.argv[1:] if a.isdigit()] or ["1", "2", "3"]
    for part in parts:
        {"1": part1, "2": part2, "3": part3}[part]()
