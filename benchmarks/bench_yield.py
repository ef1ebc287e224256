"""Speed of the impedance yield over whole line tables (plain script, prints numbers).

    python benchmarks/bench_yield.py

Target (issue 14): yield for a 14,000-row table in under 10 s on 2 cores. The shipped studies'
closed-form line tables are used as they are (the field correction does not change the cost of the
yield, only the table build), plus a 14,000-row table of coupled microstrips (the most expensive
closed form). One process; wall and CPU time printed.
"""
from __future__ import annotations

import os
import time
from pathlib import Path

import numpy as np
from strainline.models.lines import LineGeometry, evaluate_line
from strainline.models.tolerance import impedance_yield
from strainline.optimizer.inputs.catalog import load_catalog
from strainline.optimizer.inputs.study import load_study
from strainline.optimizer.search.linetable import build_line_table, table_options
from strainline.optimizer.search.space import build_space
from strainline.optimizer.search.yieldcalc import table_yield

ROOT = Path(__file__).resolve().parents[1]
UM = 1e-6


def main() -> None:
    print(f"load average {os.getloadavg()[0]:.1f}; 512 Sobol points x 4 scrambles per row")
    catalog = load_catalog()
    for st in ("wearable-patch-feed", "handheld-scanner-hinge", "gimbal-camera-tail"):
        space = build_space(load_study(ROOT / "studies" / f"{st}.yaml", catalog), catalog)
        with table_options(impedance="closed-form"):
            tb = build_line_table(space, catalog)
        w0, c0 = time.perf_counter(), time.process_time()
        r = table_yield(tb, space, catalog)
        wall, cpu = time.perf_counter() - w0, time.process_time() - c0
        print(f"{st:24s} {tb.kind:18s} rows {tb.n_rows:6d}  wall {wall:5.2f} s  cpu {cpu:5.2f} s  "
              f"median yield {100 * np.median(r.yield_frac):5.1f} %  largest stderr "
              f"{100 * r.stderr.max():.2f} %")
    rows = 14_000
    rng = np.random.default_rng(0)
    w = rng.uniform(50, 150, rows) * UM
    s = rng.uniform(50, 200, rows) * UM
    h = rng.uniform(25, 100, rows) * UM

    def z_fn(idx, d):
        wi = w[idx, None] * (1 + d[..., 0])
        g = LineGeometry(width_m=wi.ravel(), gap_m=(s[idx, None] - (wi - w[idx, None])).ravel(),
                         height_m=(h[idx, None] * (1 + d[..., 1])).ravel(),
                         thickness_m=(12 * UM * (1 + d[..., 2])).ravel(),
                         er=(3.2 * (1 + d[..., 3])).ravel(), cover_m=(25 * UM * (1 + d[..., 4])).ravel(),
                         cover_er=(3.4 * (1 + d[..., 3])).ravel())
        return np.asarray(evaluate_line("coupled-microstrip", g).target_ohm).reshape(d.shape[:2])

    tol = np.tile([0.2, 0.1, 0.1, 0.05, 0.15], (rows, 1))
    w0, c0 = time.perf_counter(), time.process_time()
    r = impedance_yield(z_fn, tol, 90.0, 0.1, n=512, replicates=4)
    print(f"{'synthetic pairs':24s} {'coupled-microstrip':18s} rows {rows:6d}  wall "
          f"{time.perf_counter() - w0:5.2f} s  cpu {time.process_time() - c0:5.2f} s  median yield "
          f"{100 * np.median(r.yield_frac):5.1f} %")


if __name__ == "__main__":
    main()
