"""Cost of several controlled-impedance lines (plain script; prints numbers, asserts nothing).

The same stack family (4 copper layers, free order) with one line (a 50-ohm microstrip) and with
three lines (that microstrip, a 90-ohm and a 100-ohm coupled microstrip that may share a layer):
the line tables' build time, full problem evaluation in candidates per second on one core (fast
bonded path and the unbonded layer path), and the CPU time of an exhaustive search of the whole
space. Each extra line adds one table gather and its constraint columns per candidate; the
mechanics are shared, so the target is a three-line study at no more than 2x the time per candidate
of the one-line study of the same stack. The three-line space is larger (the line assignment and
the two pairs' gap options are decision variables), so the whole-search time is printed too.

Times are process CPU seconds (time.process_time), best of three (shared, noisy machines).

Run:  python benchmarks/bench_multiline.py
"""
from __future__ import annotations

import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")          # one core

import copy  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

from strainline.optimizer.inputs.catalog import load_catalog  # noqa: E402
from strainline.optimizer.inputs.study import validate_study  # noqa: E402
from strainline.optimizer.search.engine import exhaustive  # noqa: E402
from strainline.optimizer.search.linetable import table_options  # noqa: E402
from strainline.optimizer.search.problem import build_problem  # noqa: E402
from strainline.optimizer.search.space import build_space  # noqa: E402

CAT = load_catalog()
LINES = [
    {"name": "antenna", "type": "microstrip", "target_ohm": 50, "tolerance": 10, "width_range_um": [50, 400],
     "layer": "auto", "frequency_ghz": 2.4, "length_mm": 60, "nominal_error_pct": 5},
    {"name": "usb", "type": "coupled-microstrip", "target_ohm": 90, "tolerance": 10, "width_range_um": [50, 250],
     "gap_um": [75, 100], "layer": "auto", "frequency_ghz": 2.5, "share_with": ["display"], "nominal_error_pct": 5},
    {"name": "display", "type": "coupled-microstrip", "target_ohm": 100, "tolerance": 10,
     "width_range_um": [50, 250], "gap_um": [100, 125], "layer": "auto", "frequency_ghz": 5, "nominal_error_pct": 5},
]
BASE = {
    "name": "bench-lines",
    "bends": [{"name": "fold", "inner_radius_mm": 1, "inside": "top", "use": "install"},
              {"name": "hinge", "inner_radius_mm": 5, "use": "dynamic", "cycles": 2000}],
    "stack": {"copper_layers": 4, "order": "free", "copper_weights": ["1/4oz", "1/3oz"],
              "copper_types": ["rolled-annealed"], "dielectric": ["adhesiveless-polyimide-core"],
              "dielectric_thickness_um": [25, 50], "adhesive": ["none", "acrylic-adhesive"],
              "adhesive_thickness_um": [25], "coverlay": ["polyimide-coverlay-acrylic"]},
    "limits": {"total_thickness_um": 450},
    "objectives": ["peak_strain", "thickness", "loss"],
    "search": {"impedance": "closed-form"},
}


def problem(n_lines: int, region: str):
    d = copy.deepcopy(BASE)
    d["lines"] = copy.deepcopy(LINES[:n_lines])
    for b in d["bends"]:
        b["region"] = region
    study = validate_study(d, CAT)
    t0 = time.process_time()
    with table_options(impedance="closed-form", cache=False):
        pb = build_problem(build_space(study, CAT), CAT)
    return pb, time.process_time() - t0


def best(f, repeat: int = 3) -> float:
    out = []
    for _ in range(repeat):
        t0 = time.process_time()
        f()
        out.append(time.process_time() - t0)
    return min(out)


def main() -> None:
    n = 65536
    print(f"{'lines':>5}  {'region':>8}  {'space':>11}  {'tables s':>8}  {'eval/s':>11}  {'x per cand':>10}  "
          f"{'exhaustive s':>12}  {'us/cand':>8}  {'x per cand':>10}")
    for region in ("bonded", "unbonded"):
        base = None
        for k in (1, 3):
            pb, t_build = problem(k, region)
            sp = pb.space
            x = sp.index_to_x(np.random.default_rng(1).integers(0, sp.size, n))
            pb.evaluate(x[:256])
            t = best(lambda: pb.evaluate(x))
            rate = n / t
            full = sp.size <= 6e6
            if full:
                t_ex = best(lambda: exhaustive(lambda xx: (lambda e: (e.F, e.G))(pb.evaluate(xx, prune=True)),
                                               sp.sizes, pb.n_obj), repeat=1)
                per = 1e6 * t_ex / sp.size
            if base is None:
                base = (rate, per if full else None)
            r1 = base[0] / rate
            r2 = (per / base[1]) if (full and base[1]) else float("nan")
            print(f"{k:>5}  {region:>8}  {sp.size:>11,}  {t_build:>8.2f}  {rate:>11,.0f}  {r1:>10.2f}  "
                  f"{(t_ex if full else float('nan')):>12.2f}  {(per if full else float('nan')):>8.3f}  {r2:>10.2f}")


if __name__ == "__main__":
    main()
