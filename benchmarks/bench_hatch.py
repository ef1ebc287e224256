"""Speed and convergence of the 3-D hatched-plane solver (plain script, prints numbers).

    python benchmarks/bench_hatch.py            # typical flex cases and a refinement history
    python benchmarks/bench_hatch.py --quick    # the typical cases only

Target (issue 14): well under a few seconds per solve on one core. Wall time and process CPU
time are both printed; on a shared machine the CPU time is the fairer single-core figure.
Set OPENBLAS_NUM_THREADS=1 for single-core numbers.
"""
from __future__ import annotations

import argparse
import os
import time

from strainline.models.hatch import Hatch, hatch_solve
from strainline.models.hatch.solver import _solve_cached
from strainline.models.lines import LineGeometry

UM = 1e-6

CASES = [
    ("microstrip 100/50/12 um, 45 deg 1.0 mm / 0.2 mm", "microstrip",
     LineGeometry(width_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.2),
     Hatch(1.0e-3, 0.2e-3, 45.0)),
    ("microstrip 100/50/12 um, 90 deg 1.0 mm / 0.2 mm, over a line", "microstrip",
     LineGeometry(width_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.2),
     Hatch(1.0e-3, 0.2e-3, 90.0)),
    ("covered microstrip 150/75/18 um, 45 deg 0.5 mm / 0.15 mm", "microstrip",
     LineGeometry(width_m=150 * UM, height_m=75 * UM, thickness_m=18 * UM, er=3.3,
                  cover_m=37 * UM, cover_er=3.4),
     Hatch(0.5e-3, 0.15e-3, 45.0)),
    ("stripline 75 um in 2 x 75 um, 45 deg 0.6 mm / 0.2 mm", "stripline",
     LineGeometry(width_m=75 * UM, height_m=75 * UM, thickness_m=12 * UM, er=3.2),
     Hatch(0.6e-3, 0.2e-3, 45.0)),
    ("pair 75/100 um on 50 um, 90 deg 0.5 mm / 0.15 mm", "coupled-microstrip",
     LineGeometry(width_m=75 * UM, gap_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.2),
     Hatch(0.5e-3, 0.15e-3, 90.0)),
]


def run(kind, geom, hatch, **kw):
    _solve_cached.cache_clear()
    w0, c0 = time.perf_counter(), time.process_time()
    r = hatch_solve(kind, geom, hatch, **kw)
    return r, time.perf_counter() - w0, time.process_time() - c0


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true")
    a = ap.parse_args()
    print(f"load average {os.getloadavg()[0]:.1f}; defaults (2 cells per feature, 6 across a hatch line)")
    print(f"{'case':62s} {'fill':>5s} {'Z solid':>8s} {'Z hatch':>8s} {'ratio':>6s} "
          f"{'f_qs GHz':>8s} {'unknowns':>9s} {'wall s':>7s} {'cpu s':>6s}")
    for name, kind, geom, hatch in CASES:
        r, wall, cpu = run(kind, geom, hatch, cells_per_feature=2.0)
        print(f"{name:62s} {r.fill:5.3f} {r.z_solid_ohm:8.2f} {r.z0_ohm:8.2f} {r.ratio:6.3f} "
              f"{r.f_quasi_static_hz / 1e9:8.2f} {r.unknowns:9d} {wall:7.2f} {cpu:6.2f}")
    if a.quick:
        return
    print("\nrefinement history (first case): cells per feature, hatch cells -> Z")
    _, kind, geom, hatch = CASES[0]
    for cpf, hc in ((2, 4), (2, 6), (3, 6), (4, 8), (6, 12)):
        r, wall, cpu = run(kind, geom, hatch, cells_per_feature=cpf, hatch_cells=hc)
        print(f"  {cpf:3d} {hc:3d}  Z {r.z0_ohm:8.3f}  ratio {r.ratio:6.4f}  unknowns {r.unknowns:8d}"
              f"  wall {wall:6.2f} s  cpu {cpu:6.2f} s")


if __name__ == "__main__":
    main()
