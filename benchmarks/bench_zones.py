"""Cost of several bend zones (plain script; prints numbers, asserts nothing).

The same design space with one, two and three bend zones (``bends:``): full problem evaluation in
candidates per second on one core (fast bonded path and the unbonded layer path), and the CPU time
of an exhaustive search of the whole space. The line table is shared by the zones; the mechanics,
material limits and life run once per zone, vectorized over the candidates, so Z zones should cost
about Z times the mechanics, not Z times the whole evaluation.

Times are process CPU seconds (time.process_time), best of three (shared, noisy machines).

Run:  python benchmarks/bench_zones.py
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

BASE = {
    "name": "bench-zones",
    "line": {"type": "microstrip", "target_ohm": 50, "tolerance": 10, "width_range_um": [50, 400],
             "frequency_ghz": 2.0},
    "stack": {"copper_layers": 3, "signal_layer": "auto", "order": "free",
              "copper_weights": ["1/3oz", "1/2oz"], "copper_types": ["rolled-annealed"],
              "dielectric": ["polyimide-film", "adhesiveless-polyimide-core"], "dielectric_thickness_um": [25, 50],
              "adhesive": ["none", "acrylic-adhesive"], "adhesive_thickness_um": [25],
              "coverlay": ["polyimide-coverlay-acrylic"], "ground_coverage": [1.0], "ground_hatch": [{"pitch_um": 500, "line_width_um": 150, "angle_deg": 45}]},
    "objectives": ["peak_strain", "thickness", "life"],
    "search": {"impedance": "closed-form"},
}
ZONES = [
    {"name": "hinge", "inner_radius_mm": 5.0, "use": "dynamic", "cycles": 2000},
    {"name": "fold", "inner_radius_mm": 1.0, "inside": "top", "use": "install"},
    {"name": "slide", "inner_radius_mm": 3.0, "use": "dynamic", "cycles": 500, "motion": "reversed"},
]


def problem(n_zones: int, region: str = "bonded"):
    d = copy.deepcopy(BASE)
    d["bends"] = [dict(z, region=region) for z in ZONES[:n_zones]]
    study = validate_study(d, CAT)
    with table_options(impedance="closed-form", cache=False):
        return build_problem(build_space(study, CAT), CAT)


def best(f, repeat: int = 3) -> float:
    out = []
    for _ in range(repeat):
        t0 = time.process_time()
        f()
        out.append(time.process_time() - t0)
    return min(out)


def main() -> None:
    n = 65536
    print(f"{'zones':>5}  {'region':>8}  {'space':>9}  {'eval/s':>12}  {'x one zone':>10}  {'exhaustive s':>12}  {'x':>5}")
    for region in ("bonded", "unbonded"):
        base_rate = base_ex = None
        for z in (1, 2, 3):
            pb = problem(z, region)
            sp = pb.space
            x = sp.index_to_x(np.random.default_rng(1).integers(0, sp.size, n))
            pb.evaluate(x[:256])
            t = best(lambda: pb.evaluate(x))
            rate = n / t

            def run():
                exhaustive(lambda xx: (lambda e: (e.F, e.G))(pb.evaluate(xx, prune=True)), sp.sizes,
                           pb.n_obj)

            ex = best(run, 1)
            base_rate = base_rate or rate
            base_ex = base_ex or ex
            print(f"{z:>5}  {region:>8}  {sp.size:>9,}  {rate:>12,.0f}  {base_rate / rate:>10.2f}  {ex:>12.2f}  "
                  f"{ex / base_ex:>5.2f}")


if __name__ == "__main__":
    main()
