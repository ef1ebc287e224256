"""Benchmark: batch microstrip width synthesis against a per-row scipy brentq loop.

Target (issue 3): 10^6 microstrip widths in one batch at >= 500,000 rows/s on one core, and
>= 20x a per-row ``scipy.optimize.brentq`` loop on the same model, measured side by side.

    python benchmarks/bench_lines.py [--rows 1000000] [--loop-rows 2000] [--seed 0]

Prints rows/s for both, the speed-up, and the agreement between the two on the subsample.
Single-threaded numpy ufuncs: the batch runs on one core. Wall and CPU (process) time are both
printed: on a shared machine the CPU time is the fairer one-core figure.
"""
from __future__ import annotations

import argparse
import time

import numpy as np
from scipy.optimize import brentq

from strainline.models.lines import LineGeometry, solve_width
from strainline.models.lines.microstrip import microstrip

UM = 1e-6
W_MIN, W_MAX = 10 * UM, 2000 * UM


def make_batch(n: int, seed: int) -> tuple[LineGeometry, np.ndarray]:
    """Flex-like microstrip candidates: bare and coverlaid, 0-35 um copper, 25-200 um dielectric."""
    rng = np.random.default_rng(seed)
    geom = LineGeometry(
        width_m=np.nan,
        height_m=rng.uniform(25, 200, n) * UM,
        thickness_m=rng.choice([0.0, 9.0, 12.0, 18.0, 35.0], n) * UM,
        er=rng.uniform(2.5, 4.0, n),
        cover_m=rng.choice([0.0, 25.0, 37.5], n) * UM,
        cover_er=rng.uniform(2.8, 3.6, n),
    )
    target = rng.uniform(25.0, 110.0, n)
    return geom, target


def loop_brentq(geom: LineGeometry, target: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The per-row reference: brentq on Z0(w) - target with the same model, one row at a time."""
    n = target.size
    out = np.full(n, np.nan)
    ok = np.zeros(n, dtype=bool)
    for i in range(n):
        h, t, er = geom.height_m[i], geom.thickness_m[i], geom.er[i]
        cm, ce = geom.cover_m[i], geom.cover_er[i]

        def f(w: float) -> float:
            return float(microstrip(w, h, t, er, cm, ce)[0]) - target[i]

        fa, fb = f(W_MIN), f(W_MAX)
        if fa * fb > 0:
            continue
        out[i] = brentq(f, W_MIN, W_MAX, xtol=1e-15, rtol=1e-12)
        ok[i] = True
    return out, ok


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=1_000_000)
    ap.add_argument("--loop-rows", type=int, default=2000)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()

    geom, target = make_batch(args.rows, args.seed)
    geom = geom.broadcast(args.rows)
    best = best_cpu = np.inf
    for _ in range(args.repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        width, ok = solve_width("microstrip", target, geom, W_MIN, W_MAX)
        best = min(best, time.perf_counter() - t0)
        best_cpu = min(best_cpu, time.process_time() - c0)
    batch_rate = args.rows / best
    print(f"batch synthesis: {args.rows} rows in {best:.3f} s wall, {best_cpu:.3f} s CPU (best of {args.repeat}) = "
          f"{batch_rate:,.0f} rows/s wall, {args.rows / best_cpu:,.0f} rows/s CPU; "
          f"{ok.mean():.1%} reachable in {W_MIN / UM:g}-{W_MAX / UM:g} um")

    m = min(args.loop_rows, args.rows)
    sub = geom.take(np.arange(m))
    t0, c0 = time.perf_counter(), time.process_time()
    w_loop, ok_loop = loop_brentq(sub, target[:m])
    loop_time = time.perf_counter() - t0
    loop_cpu = time.process_time() - c0
    loop_rate = m / loop_time
    print(f"brentq loop:     {m} rows in {loop_time:.3f} s wall, {loop_cpu:.3f} s CPU = {loop_rate:,.0f} rows/s wall, "
          f"{m / loop_cpu:,.0f} rows/s CPU")
    print(f"speed-up:        {batch_rate / loop_rate:,.0f}x wall, {(args.rows / best_cpu) / (m / loop_cpu):,.0f}x CPU")
    same = ok_loop == ok[:m]
    both = ok_loop & ok[:m]
    rel = np.max(np.abs(w_loop[both] / width[:m][both] - 1)) if both.any() else float("nan")
    print(f"agreement:       ok flags equal on {same.mean():.2%} of the subsample; "
          f"largest relative width difference {rel:.2e}")
    print(f"targets (wall):  >= 500,000 rows/s: {'met' if batch_rate >= 5e5 else 'NOT met'}; "
          f">= 20x brentq: {'met' if batch_rate / loop_rate >= 20 else 'NOT met'}")


if __name__ == "__main__":
    main()
