"""Speed and accuracy of the 2-D field solver and of verify_front (plain script, prints numbers).

    python benchmarks/bench_fields.py            # everything
    python benchmarks/bench_fields.py --quick    # skip the 2-worker and pair-front runs

Targets (issue 6): one single-line cross-section to 0.5 % in under 1 s and a pair in under 2 s on
one core; verify_front of a 20-candidate front in under 30 s on 2 cores. Wall time and process CPU
time are both printed: on a shared machine the CPU time is the fairer single-core figure.
"""
from __future__ import annotations

import argparse
import math
import os
import resource
import statistics
import time

import numpy as np
from scipy.special import ellipk, ellipkm1

from strainline.models.fields import field_solve
from strainline.models.lines import LineGeometry, evaluate_line, solve_width
from strainline.models.units import ETA0
from strainline.optimizer.search.verify import verify_front

UM = 1e-6


def timed(fn, repeat=3):
    walls, cpus, out = [], [], None
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        out = fn()
        walls.append(time.perf_counter() - w0)
        cpus.append(time.process_time() - c0)
    return out, statistics.median(walls), statistics.median(cpus)


def kk(k):
    return float(ellipk(k * k) / ellipkm1(k * k))


def speed():
    print("== one cross-section (default mesh, median of 3) ==")
    cases = [
        ("microstrip 100/50/12 um, 25 um cover", "microstrip",
         LineGeometry(width_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.2,
                      cover_m=25 * UM, cover_er=3.2)),
        ("stripline 60 um in 2x50 um, t 12 um", "stripline",
         LineGeometry(width_m=60 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.2)),
        ("CB-CPW 100/50 um on 50 um, t 12 um", "coplanar",
         LineGeometry(width_m=100 * UM, gap_m=50 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.2,
                      cover_m=25 * UM, cover_er=3.2)),
        ("pair 100/100/50/12 um, 25 um cover (odd+even)", "coupled-microstrip",
         LineGeometry(width_m=100 * UM, gap_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM,
                      er=3.2, cover_m=25 * UM, cover_er=3.2)),
        ("stripline pair 75/100 um in 2x50 um (odd+even)", "coupled-stripline",
         LineGeometry(width_m=75 * UM, gap_m=100 * UM, height_m=50 * UM, thickness_m=12 * UM, er=3.2)),
    ]
    for label, kind, g in cases:
        r, wall, cpu = timed(lambda: field_solve(kind, g, isolated_line=False))
        z = r.target_ohm
        print(f"{label:50s} Z={z:8.3f} ohm  est {r.error_estimate_pct:5.3f} %  "
              f"wall {wall:5.3f} s  cpu {cpu:5.3f} s  nodes {r.nodes}")


def accuracy():
    print("== against exact results (default mesh) ==")
    er = 3.0
    for w, b in [(100, 100), (30, 200), (400, 100)]:
        exact = ETA0 / (4 * math.sqrt(er)) / kk(math.tanh(math.pi * w / (2 * b)))
        r = field_solve("stripline", LineGeometry(width_m=w * UM, height_m=b / 2 * UM,
                                                  thickness_m=0.0, er=er))
        print(f"Cohn 1954 stripline w={w} b={b} um: field {r.z0_ohm:.4f} exact {exact:.4f} "
              f"dev {100 * (r.z0_ohm / exact - 1):+.4f} %  estimate {r.error_estimate_pct:.3f} %")
    for w, s, b in [(100, 50, 100), (50, 100, 150)]:
        a, c = math.pi * w / (2 * b), math.pi * (w + s) / (2 * b)
        ze = ETA0 / (4 * math.sqrt(3.2)) / kk(math.tanh(a) * math.tanh(c))
        zo = ETA0 / (4 * math.sqrt(3.2)) / kk(math.tanh(a) / math.tanh(c))
        r = field_solve("coupled-stripline", LineGeometry(width_m=w * UM, gap_m=s * UM,
                                                          height_m=b / 2 * UM, thickness_m=0.0,
                                                          er=3.2), isolated_line=False)
        print(f"Cohn 1955 pair w={w} s={s} b={b} um: odd dev {100 * (r.z_odd_ohm / zo - 1):+.4f} %, "
              f"even dev {100 * (r.z_even_ohm / ze - 1):+.4f} %  estimate {r.error_estimate_pct:.3f} %")
    for w, s in [(100, 50), (200, 20)]:
        exact = ETA0 / 4 / kk(w / (w + 2 * s))
        r = field_solve("coplanar", LineGeometry(width_m=w * UM, gap_m=s * UM, height_m=50 * UM,
                                                 thickness_m=0.0, er=1.0, bottom_ground=False))
        print(f"CPW in air w={w} s={s} um: dev {100 * (r.z0_ohm / exact - 1):+.4f} %  "
              f"estimate {r.error_estimate_pct:.3f} %")
    bare = field_solve("microstrip", LineGeometry(width_m=100 * UM, height_m=50 * UM,
                                                  thickness_m=12 * UM, er=3.2))
    cov = field_solve("microstrip", LineGeometry(width_m=100 * UM, height_m=50 * UM,
                                                 thickness_m=12 * UM, er=3.2, cover_m=25 * UM,
                                                 cover_er=3.2))
    print(f"covered microstrip (lines.md 52.75 -> 48.67 ohm): {bare.z0_ohm:.3f} -> {cov.z0_ohm:.3f} "
          f"ohm ({100 * (cov.z0_ohm / bare.z0_ohm - 1):+.2f} %)")
    base = dict(width_m=100 * UM, gap_m=100 * UM, height_m=50 * UM, er=3.2)
    for label, g, ref in [
        ("t=0", LineGeometry(thickness_m=0.0, **base), 105.0),
        ("t=12", LineGeometry(thickness_m=12 * UM, **base), 97.0),
        ("t=12 + 25 um cover", LineGeometry(thickness_m=12 * UM, cover_m=25 * UM, cover_er=3.2,
                                            **base), 87.3)]:
        r = field_solve("coupled-microstrip", g, isolated_line=False)
        print(f"pair table lines.md 5.3, {label}: Zdiff {r.z_diff_ohm:.3f} ohm (ref {ref})")


def synthetic_front(kind: str, n: int = 20, seed: int = 7) -> dict:
    """n invented candidates with closed-form widths for the target (as `solve` would give)."""
    rng = np.random.default_rng(seed)
    pair = kind.startswith("coupled")
    target = 90.0 if pair else 50.0
    h = rng.choice([25.0, 38.0, 50.0, 75.0], n)
    t = rng.choice([9.0, 12.0, 18.0], n)
    cover = rng.choice([0.0, 25.0, 37.5], n)
    er = rng.choice([3.0, 3.2, 3.4], n)
    gap = np.full(n, 100.0) if pair else np.full(n, np.nan)
    g = LineGeometry(width_m=np.zeros(n), gap_m=gap * UM, height_m=h * UM, thickness_m=t * UM, er=er,
                     cover_m=cover * UM, cover_er=np.full(n, 3.2))
    w, ok = solve_width(kind, target, g, 10 * UM, 1000 * UM)
    res = evaluate_line(kind, g.with_(width_m=w))
    cands = []
    for i in range(n):
        if not ok[i]:
            continue
        cands.append({"id": i, "line": {
            "type": kind, "width_um": float(w[i] / UM), "gap_um": float(gap[i]) if pair else None,
            "z0_ohm": float(res.z0_ohm[i]),
            "z_diff_ohm": float(res.z_diff_ohm[i]) if pair else None,
            "eps_eff": float(res.eps_eff[i]),
            "geometry": {"height_um": float(h[i]), "height_top_um": None, "thickness_um": float(t[i]),
                         "er": float(er[i]), "er_top": None, "cover_um": float(cover[i]),
                         "cover_er": 3.2, "method": "closed-form"}}})
    return {"study": {"line": {"type": kind, "target_ohm": target, "width_range_um": [25, 300]}},
            "candidates": cands}


def front_runs(quick: bool):
    print("== verify_front on a synthetic 20-candidate front ==")
    kinds = ["microstrip"] if quick else ["microstrip", "coupled-microstrip"]
    for kind in kinds:
        front = synthetic_front(kind)
        for workers in ([1] if quick else [1, 2]):
            c0 = time.process_time()
            ch0 = resource.getrusage(resource.RUSAGE_CHILDREN)
            t0 = time.perf_counter()
            res = verify_front(front, workers=workers)
            wall = time.perf_counter() - t0
            ch1 = resource.getrusage(resource.RUSAGE_CHILDREN)
            cpu = (time.process_time() - c0 + (ch1.ru_utime - ch0.ru_utime)
                   + (ch1.ru_stime - ch0.ru_stime))
            fc = [c["line"]["field_check"] for c in res["candidates"]]
            err = [abs(c["closed_form_error_pct"]) for c in fc if c["closed_form_error_pct"] is not None]
            nd = res["field_verification"]["distinct_cross_sections"]
            print(f"{kind:20s} {len(fc)} candidates ({nd} distinct), workers={workers}: wall {wall:6.2f} s, "
                  f"cpu {cpu:6.2f} s  "
                  f"(refined ok {sum(c['refined_ok'] for c in fc)}/{len(fc)}, "
                  f"|closed-form error| median {statistics.median(err):.2f} % max {max(err):.2f} %, "
                  f"max estimate {max(c['error_estimate_pct'] for c in fc):.3f} %)")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true")
    args = ap.parse_args()
    print(f"load average at start: {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    speed()
    accuracy()
    front_runs(args.quick)


if __name__ == "__main__":
    main()
