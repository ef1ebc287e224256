"""Search quality and speed (plain script; prints numbers, asserts nothing).

1. Where the exact front is known (a study space enumerated exhaustively): NSGA-II with its archive
   at 20,000 evaluations, 5 seeds -- hypervolume as a share of the exact front's, the additive
   epsilon indicator (Zitzler et al. 2003) and the share of exact front points found -- beside
   random search of the same budget.
2. The NSGA-II loop's own speed (evaluations/s with a trivial evaluator) against the enumeration
   speed of a study problem.
3. A space of 10^10 or more (6 copper layers, free order): archive hypervolume against
   evaluations until the run stops, and the wall time.
4. The README demo study end to end (``strainline solve studies/handheld-scanner-hinge.yaml``).
5. benchmarks/studies/bench-3cu-1e9.yaml (8.5e8 candidates, feasible share ~1e-4): the exact front
   by ``search(method="exhaustive")`` with the thickness bound on 2 worker processes (wall time,
   share skipped; cached in /tmp as .npz), then NSGA-II at 20,000 evaluations in all (seeding,
   generations and local search) on 5 seeds against it.
6. benchmarks/studies/bench-4cu-1e12.yaml (1.2e12 candidates): a best-known front from three runs
   of 400,000 evaluations (cached in /tmp), then 5 seeds at 20,000 and 100,000 evaluations.

Run:  python benchmarks/bench_search.py [--quick] [part numbers, e.g. 1 3]
"""
from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.search.problem import build_problem
from strainline.optimizer.search.archive import Archive
from strainline.optimizer.search.engine import (
    additive_epsilon, evolutionary, exhaustive, hypervolume, random_search, search,
)
from strainline.optimizer.search.parallel import ProblemEvaluator
from strainline.optimizer.search.space import build_space
from strainline.optimizer.inputs.study import validate_study

ROOT = Path(__file__).resolve().parents[1]
CAT = load_catalog()

EXACT = {
    "name": "bench-exact",
    "line": {"type": "microstrip", "target_ohm": 50, "width_range_um": [50, 500], "frequency_ghz": 2.4},
    "bend": {"inner_radius_mm": 8, "use": "dynamic", "cycles": 10000},
    "stack": {"copper_layers": 2, "copper_weights": ["1/4oz", "1/3oz", "1/2oz"],
              "copper_types": ["rolled-annealed", "high-ductility-ed"],
              "dielectric": ["polyimide-film", "adhesiveless-polyimide-core", "lcp-film"],
              "adhesive": ["none", "acrylic-adhesive"], "adhesive_thickness_um": [15, 25],
              "coverlay": ["polyimide-coverlay-acrylic", "none"], "ground_coverage": [1.0], "ground_hatch": [{"pitch_um": 500, "line_width_um": 150, "angle_deg": 45}]},
    "limits": {"total_thickness_um": 250},
    "objectives": ["signal_strain", "thickness", "loss"],
}

BIG = {
    "name": "bench-6cu",
    "line": {"type": "stripline", "target_ohm": 50, "width_range_um": [50, 400], "frequency_ghz": 2.4},
    "bend": {"inner_radius_mm": 25, "use": "dynamic", "cycles": 2000},
    "stack": {"copper_layers": 6, "signal_layer": "auto", "order": "free",
              "copper_weights": ["1/4oz", "1/3oz", "1/2oz"], "copper_types": ["rolled-annealed", "high-ductility-ed"],
              "dielectric": ["polyimide-film", "adhesiveless-polyimide-core", "lcp-film"],
              "adhesive": ["none", "acrylic-adhesive"], "adhesive_thickness_um": [15, 25],
              "coverlay": ["polyimide-coverlay-acrylic"], "ground_coverage": [1.0], "ground_hatch": [{"pitch_um": 500, "line_width_um": 150, "angle_deg": 45}]},
    "limits": {"total_thickness_um": 600},
    "objectives": ["signal_strain", "thickness", "loss"],
}


def problem_of(data):
    study = validate_study(data, CAT)
    sp = build_space(study, CAT)
    return build_problem(sp, CAT)


def evaluator(pb, prune=False):
    def ev(x):
        e = pb.evaluate(x, prune=prune)
        return e.F, e.G
    return ev


def part1(seeds=(1, 2, 3, 4, 5), budget=20000) -> None:
    pb = problem_of(EXACT)
    sp = pb.space
    t0 = time.perf_counter()
    ex = exhaustive(evaluator(pb, prune=True), sp.sizes, pb.n_obj)
    t_ex = time.perf_counter() - t0
    R = ex.archive.F
    ideal, nadir = R.min(axis=0), R.max(axis=0)
    hv_exact = hypervolume(R, ideal, nadir)
    print(f"[1] exact front: space {sp.size:,}, {ex.archive.feasible:,} feasible, {len(R)} front points, "
          f"exhaustive {t_ex:.1f} s, hypervolume {hv_exact:.5f} (normalized, reference 1.1)")
    exact_set = {tuple(r) for r in R}
    rows = []
    for seed in seeds:
        t0 = time.perf_counter()
        evo = evolutionary(evaluator(pb), sp.sizes, pb.n_obj, pb.n_con, budget=budget, seed=seed, pop_size=100)
        dt = time.perf_counter() - t0
        rnd = random_search(evaluator(pb), sp.sizes, pb.n_obj, budget=budget, seed=seed)
        A = evo.archive.F
        rows.append((
            seed, evo.evaluated, dt, hypervolume(A, ideal, nadir) / hv_exact, additive_epsilon(A, R, ideal, nadir),
            len(exact_set & {tuple(r) for r in A}) / len(R), hypervolume(rnd.archive.F, ideal, nadir) / hv_exact,
            additive_epsilon(rnd.archive.F, R, ideal, nadir), evo.stopped))
    print("    seed  evals  seconds  HV/HV_exact  eps+   exact pts found | random HV/HV_exact  eps+   stop")
    for r in rows:
        print(f"    {r[0]:4d} {r[1]:6d} {r[2]:8.1f} {r[3]:11.5f} {r[4]:7.4f} {r[5]:10.1%}     | {r[6]:12.5f} {r[7]:8.4f}  {r[8]}")
    med = np.median(np.array([r[1:8] for r in rows], dtype=float), axis=0)
    print(f"    median: evaluations {med[0]:.0f}, HV share {med[2]:.5f}, eps+ {med[3]:.4f}, "
          f"exact points found {med[4]:.1%}; random: HV share {med[5]:.5f}, eps+ {med[6]:.4f}")


def part2() -> None:
    sizes = np.full(6, 10)
    W = np.random.default_rng(0).random((6, 10, 3))

    def cheap(x):
        return W[np.arange(6)[None, :], x, :].sum(axis=1), np.zeros((len(x), 0))

    t0 = time.perf_counter()
    r = evolutionary(cheap, sizes, 3, 0, budget=20000, seed=1, pop_size=100, stagnation=10**9)
    dt = time.perf_counter() - t0
    pb = problem_of(EXACT)
    x = pb.space.index_to_x(np.arange(min(pb.space.size, 400000)))
    t1 = time.perf_counter()
    for s in range(0, len(x), 65536):
        pb.evaluate(x[s:s + 65536], prune=True)
    dt2 = time.perf_counter() - t1
    print(f"[2] NSGA-II loop with a trivial evaluator: {r.evaluated / dt:,.0f} evaluations/s; "
          f"enumeration of the study problem: {len(x) / dt2:,.0f} candidates/s (wall clock); "
          f"ratio {len(x) / dt2 / (r.evaluated / dt):.0f}x")


def part3(budget=200000) -> None:
    pb = problem_of(BIG)
    sp = pb.space
    print(f"[3] 6-copper free-order space: {sp.size:.3e} candidates ({len(sp.variables)} variables), "
          f"line table {pb.table.n_rows:,} rows")
    t0 = time.perf_counter()
    evo = evolutionary(evaluator(pb), sp.sizes, pb.n_obj, pb.n_con, budget=budget, seed=1, pop_size=200,
                       stagnation=40)
    dt = time.perf_counter() - t0
    A = evo.archive.F
    if not len(A):
        print("    no feasible point found")
        return
    ideal, nadir = A.min(axis=0), A.max(axis=0)
    # replay the archive growth: hypervolume of the archive after k evaluations (normalized by the final front)
    evo2 = evolutionary(evaluator(pb), sp.sizes, pb.n_obj, pb.n_con, budget=budget, seed=1, pop_size=200,
                        stagnation=40, hv_bounds=(ideal, nadir))
    hist = evo2.history
    marks = sorted({int(len(hist) * q) for q in (0.02, 0.05, 0.1, 0.2, 0.3, 0.5, 0.7, 0.9)} | {len(hist) - 1})
    print(f"    stopped after {evo.evaluated:,} evaluations ({evo.stopped}), {dt:.1f} s wall, "
          f"{evo.archive.feasible:,} feasible seen, {len(A)} front points")
    print("    evaluations -> archive hypervolume (normalized by the final front)")
    for k in marks:
        if 0 <= k < len(hist):
            print(f"    {hist[k][0]:8,d}  {hist[k][1]:.5f}")


def _study_problem(name):
    from strainline.optimizer.inputs.study import load_study

    study = load_study(ROOT / "benchmarks" / "studies" / name, CAT)
    sp = build_space(study, CAT)
    return build_problem(sp, CAT)


def _evo_rows(pb, R, budgets, seeds):
    """NSGA-II runs against the front R: hypervolume share and every evaluation by phase (the
    budget counts them all: seeding, generations, local search)."""
    ideal, nadir = R.min(axis=0), R.max(axis=0)
    hv = hypervolume(R, ideal, nadir)
    sp = pb.space
    for budget in budgets:
        shares = []
        for seed in seeds:
            t0 = time.perf_counter()
            r = evolutionary(ProblemEvaluator(pb, prune=False), sp.sizes, pb.n_obj, pb.n_con, budget, seed,
                             pop_size=100, space=sp)
            dt = time.perf_counter() - t0
            i = r.info
            shares.append(hypervolume(r.archive.F, ideal, nadir) / hv)
            print(f"    budget {budget:7,d} seed {seed}: HV share {shares[-1]:.5f}, {r.evaluated:,} evaluations in all "
                  f"(seeding {i['scan_evaluations']:,} with {i['scan_feasible']} feasible, generations "
                  f"{i['generation_evaluations']:,} in {i['generations']}, local search {i['local_search_evaluations']:,}; "
                  f"{i['seeding'].get('screened_out', 0):,} ruled out by the tables unevaluated), {dt:.1f} s wall; "
                  f"stopped: {r.stopped}")
        print(f"    budget {budget:,}: HV share {min(shares):.5f} - {max(shares):.5f} over {len(shares)} seeds")


def _cached(path, make):
    """The front in ``path`` (.npz), else ``make()`` -> (F, X, note), saved there."""
    if path and os.path.exists(path):
        d = np.load(path)
        return d["F"], d["X"], f"read from {path}"
    F, X, note = make()
    if path:
        np.savez(path, F=F, X=X)
    return F, X, note


def part5(seeds=(1, 2, 3, 4, 5), cache="/tmp/strainline-bench-3cu-1e9-front.npz") -> None:
    pb = _study_problem("bench-3cu-1e9.yaml")
    sp = pb.space
    col = pb.constraint_names.index("total_thickness")

    def make():
        t0 = time.perf_counter()
        ex = search(ProblemEvaluator(pb, prune=False), sp.sizes, pb.n_obj, pb.n_con, "exhaustive", workers=2,
                    evaluate_exhaustive=ProblemEvaluator(pb), bound=(ProblemEvaluator(pb, prune=False), col),
                    force=True)
        dt = time.perf_counter() - t0
        b = ex.info.get("bounds", {})
        return ex.archive.F, ex.archive.X, (
            f"{ex.archive.feasible:,} feasible, {dt:.1f} s wall on 2 workers; bound skipped "
            f"{b.get('skipped', 0) / sp.size:.1%} ({b.get('blocks_skipped', 0):,} of {b.get('blocks', 0):,} blocks of "
            f"{b.get('block_size', 0)}); {ex.info['rate_per_s']:,} candidates/s over the whole space")

    F, _, note = _cached(cache, make)
    print(f"[5] 3-copper space {sp.size:,}: exact front {len(F)} points ({note})")
    _evo_rows(pb, F, (20000,), seeds)


def part6(seeds=(1, 2, 3, 4, 5), ref_budget=400000, cache="/tmp/strainline-bench-4cu-1e12-front.npz") -> None:
    pb = _study_problem("bench-4cu-1e12.yaml")
    sp = pb.space

    def make():
        ref = Archive(pb.n_obj, len(sp.sizes))
        t0 = time.perf_counter()
        fronts = []
        for seed in (101, 102, 103):
            r = evolutionary(ProblemEvaluator(pb, prune=False), sp.sizes, pb.n_obj, pb.n_con, ref_budget, seed,
                             pop_size=200, space=sp)
            fronts.append({tuple(f) for f in r.archive.F})
            ref.merge(r.archive)
        same = "the same front from each" if fronts[0] == fronts[1] == fronts[2] else "merged fronts"
        return ref.F, ref.X, (f"{same} of 3 runs of {ref_budget:,} evaluations, "
                              f"{time.perf_counter() - t0:.0f} s")

    F, _, note = _cached(cache, make)
    print(f"[6] 4-copper space {sp.size:.3e}: best-known front {len(F)} points ({note})")
    _evo_rows(pb, F, (20000, 100000), seeds)


def part4() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "strainline.optimizer", "solve",
                        str(ROOT / "studies" / "handheld-scanner-hinge.yaml"), "--out", tmp, "--quiet"],
                       check=True, capture_output=True, env={**os.environ})
        dt = time.perf_counter() - t0
    print(f"[4] README demo (strainline solve studies/handheld-scanner-hinge.yaml) end to end: {dt:.1f} s wall")


if __name__ == "__main__":
    quick = "--quick" in sys.argv
    parts = [a for a in sys.argv[1:] if a.isdigit()] or ["4", "2", "1", "3"]
    for part in parts:
        if part == "4":
            part4()
        elif part == "2":
            part2()
        elif part == "1":
            part1(seeds=(1, 2) if quick else (1, 2, 3, 4, 5))
        elif part == "3":
            part3(budget=40000 if quick else 200000)
        elif part == "5":
            part5(seeds=(1, 2) if quick else (1, 2, 3, 4, 5))
        elif part == "6":
            part6(seeds=(1, 2) if quick else (1, 2, 3, 4, 5), ref_budget=100000 if quick else 400000)
