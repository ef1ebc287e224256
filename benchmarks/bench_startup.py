"""Start-up cost of the command line (plain script; numbers go into closing notes, not tests).

    python benchmarks/bench_startup.py [repeats]

Runs ``strainline --help`` and ``strainline COMMAND --help`` for every command in fresh
interpreters and prints the CPU time (user + system, from ``os.wait4``) and the wall time, the
median of ``repeats`` runs (default 7). Target: ``strainline --help`` under 0.3 s of CPU.
"""
from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time


def cpu_of(argv: list[str]) -> tuple[float, float]:
    """(CPU seconds, wall seconds) of one run of ``argv``."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _, _, usage = os.wait4(proc.pid, 0)
    return usage.ru_utime + usage.ru_stime, time.perf_counter() - t0


def main(repeats: int = 7) -> None:
    base = [sys.executable, "-m", "strainline.optimizer"]
    from strainline.optimizer.cli.main import COMMANDS

    print(f"{'command':<28} {'CPU s':>8} {'wall s':>8}   (median of {repeats})")
    for extra in [["--help"]] + [[c, "--help"] for c in COMMANDS]:
        runs = [cpu_of(base + extra) for _ in range(repeats)]
        cpu = statistics.median(r[0] for r in runs)
        wall = statistics.median(r[1] for r in runs)
        print(f"{'strainline ' + ' '.join(extra):<28} {cpu:8.3f} {wall:8.3f}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 7)
