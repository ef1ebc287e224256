"""Speed of the batch bend models (plain script; numbers go into closing notes, not tests).

    python benchmarks/bench_bending.py [n]

Times, for n random 7-layer candidates (default 10^6): the neutral axis, the exact face strains,
the minimum inner radius, the unbonded-leaf path, the elastic-perfectly-plastic solve (on n/10
rows), and Engelmaier cycles for n strain ranges. Prints candidates per second.
"""
from __future__ import annotations

import sys
import time

import numpy as np

from strainline.models import bending, fatigue


def timed(label: str, rows: int, fn, repeat: int = 3) -> None:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    print(f"{label:<44} {rows:>9d} rows  {best:8.3f} s  {rows / best:12.3e} rows/s")


def main(n: int = 1_000_000) -> None:
    rng = np.random.default_rng(2026)
    L = 7
    t = rng.uniform(5e-6, 60e-6, (n, L))
    e = rng.uniform(1e9, 130e9, (n, L))
    is_cu = rng.random((n, L)) < 0.35
    r = rng.uniform(0.3e-3, 5e-3, n)
    ib = rng.random(n) < 0.5
    leaf = np.broadcast_to(np.array([0, 0, 0, 3, 4, 4, 4]), (n, L))
    e_leaf = np.where(leaf == 3, 0.0, e)
    print(f"strainline bend-model benchmark, {L} layers, numpy {np.__version__}")
    timed("neutral_axis", n, lambda: bending.neutral_axis(t, e))
    timed("bend_strains (NA + exact face strains)", n, lambda: bending.bend_strains(t, e, r, ib))
    timed("bend_strains, two unbonded leaves", n, lambda: bending.bend_strains(t, e_leaf, r, ib, leaf))
    timed("min_inner_radius", n, lambda: bending.min_inner_radius(t, e, is_cu, 0.02, ib))
    m = n // 10
    ey = np.where(is_cu[:m], e[:m], 0.0)
    cap = np.where(is_cu[:m], 1e-3, np.inf)
    timed("epp_bend_strains (48 bisection steps)", m,
          lambda: bending.epp_bend_strains(t[:m], e[:m], ey, cap, r[:m], ib[:m]), repeat=1)
    de = 10 ** rng.uniform(-3.5, -1.3, n)
    d = rng.uniform(0.15, 1.0, n)
    su = rng.uniform(200e6, 400e6, n)
    em = rng.uniform(70e9, 130e9, n)
    timed("engelmaier_cycles (Newton in log10 N)", n, lambda: fatigue.engelmaier_cycles(de, d, su, em))
    timed("engelmaier_strain_range (explicit)", n, lambda: fatigue.engelmaier_strain_range(1e5, d, su, em))


if __name__ == "__main__":
    main(int(float(sys.argv[1])) if len(sys.argv) > 1 else 1_000_000)
