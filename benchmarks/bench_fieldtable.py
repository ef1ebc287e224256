"""Field-accurate line tables end to end: the shipped studies, cold cache and warm (prints numbers).

    python benchmarks/bench_fieldtable.py                  # the three original shipped studies
    python benchmarks/bench_fieldtable.py studies/*.yaml   # any studies
    python benchmarks/bench_fieldtable.py --verify         # also field-verify every front

Target (issue 10, a benchmark, not a timed test): the three shipped studies end to end with
field-accurate tables in under 30 s wall on 2 cores. Per study it prints the table rows, the
distinct layered cross-sections, the field solves (new / from the cache), the seconds of field work,
the correction's held-out errors, the rows solved directly and the searches, the front size, and
wall and CPU seconds of the whole run (CPU includes the worker processes). On a shared machine the
CPU time is the fairer figure: wall / (CPU / 2) shows how loaded the machine was.
"""
from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SHIPPED = ["gimbal-camera-tail", "handheld-scanner-hinge", "wearable-patch-feed"]


def run(study: Path, out: Path, cache: Path, verify: bool) -> tuple[dict, float, float]:
    env = dict(os.environ, STRAINLINE_CACHE_DIR=str(cache))
    cmd = [sys.executable, "-m", "strainline.optimizer", "solve", str(study), "--out", str(out), "--quiet",
           "--force"] + (["--verify", "--workers", "2"] if verify else [])
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, env=env, stdout=subprocess.DEVNULL)
    wall = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)
    return json.loads((out / "front.json").read_text()), wall, cpu


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("studies", nargs="*")
    ap.add_argument("--verify", action="store_true")
    args = ap.parse_args()
    paths = [Path(p) for p in args.studies] or [ROOT / "studies" / f"{s}.yaml" for s in SHIPPED]
    print(f"load average at start: {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    tot = {"cold": [0.0, 0.0], "warm": [0.0, 0.0]}
    with tempfile.TemporaryDirectory() as tmp:
        cache = Path(tmp) / "cache"
        for p in paths:
            for phase in ("cold", "warm"):
                front, wall, cpu = run(p, Path(tmp) / f"{p.stem}-{phase}", cache, args.verify)
                tot[phase][0] += wall
                tot[phase][1] += cpu
                lt = front["search"].get("line_table", {})
                hold = lt.get("holdout_max_error_pct")
                print(f"{p.stem:28s} {phase}: {wall:6.1f} s wall {cpu:6.1f} s CPU | rows {lt.get('rows')} "
                      f"distinct {lt.get('distinct_cross_sections')} | field solves {lt.get('field_solves')} new "
                      f"{lt.get('from_cache')} cached, {lt.get('seconds')} s | held-out max "
                      f"{'-' if hold is None else f'{hold:.2f} %'} {lt.get('holdout_history_pct', '')} | direct rows "
                      f"{lt.get('direct_rows')} searches {lt.get('searches')} front direct {lt.get('front_rows_direct')} "
                      f"| front {len(front['candidates'])}"
                      + (f" | {front['field_verification']['message']}" if "field_verification" in front else ""))
    for phase, (w, c) in tot.items():
        print(f"all studies {phase}: {w:.1f} s wall, {c:.1f} s CPU (2-core equivalent {c / 2:.1f} s)")


if __name__ == "__main__":
    main()
