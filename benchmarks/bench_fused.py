"""Speed of the fused range kernel (plain script; prints numbers, asserts nothing).

On the 3-copper benchmark study (benchmarks/studies/bench-3cu-1e9.yaml, 8.5e8 candidates) and an
unbonded variant of it, in candidates per CPU second on one core (best of three):

1. the exhaustive enumeration of a range of the space into an archive: the fused kernel
   (:mod:`strainline.optimizer.search.fused`) against the chunked evaluation it replaces
   (``Problem.evaluate`` per chunk of 65,536 + ``Archive.add``);
2. the kernel call alone (no archive work), and its two paths: every candidate's line failing
   (decode, table row, counting) and every line holding (decode, queue, bend model, columns);
3. the bend model alone on blocks of the kernel's size (the batch kernel of
   :mod:`strainline.optimizer.search.kernel`, exact dielectric strain and with the bound cut);
4. first-call cost of the kernel in a new process: empty numba cache (compilation) and filled;
5. the exact front of the whole study as ``strainline solve --method exhaustive`` finds it
   (branch and bound, then the kernel on 2 worker processes), wall seconds.

The line table uses the closed-form model (only the table's build time depends on it).
Run:  python benchmarks/bench_fused.py [--quick]
"""
from __future__ import annotations

import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMBA_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
from bench_kernel import build  # noqa: E402


def best(f, repeat: int = 3) -> float:
    out = float("inf")
    for _ in range(repeat):
        t0 = time.process_time()
        f()
        out = min(out, time.process_time() - t0)
    return out


def enumeration(pb, n: int, n_general: int) -> None:
    from strainline.optimizer.search.exhaustive import exhaustive_range
    from strainline.optimizer.search.parallel import ProblemEvaluator

    sizes, start = pb.space.sizes, 123_456_789 % (pb.space.size - n)
    fused, general = ProblemEvaluator(pb, fused=True), ProblemEvaluator(pb, fused=False)
    exhaustive_range(fused, sizes, pb.n_obj, 0, 1000)                       # compile / load
    tf = best(lambda: exhaustive_range(fused, sizes, pb.n_obj, start, start + n))
    tg = best(lambda: exhaustive_range(general, sizes, pb.n_obj, start, start + n_general))
    print(f"  enumeration into an archive: fused {n / tf / 1e6:.2f} M/s, chunked {n_general / tg / 1e6:.2f} M/s "
          f"({(n / tf) / (n_general / tg):.1f}x)")


def kernel_paths(pb, n: int) -> None:
    from strainline.optimizer.search import fused as fz
    from strainline.optimizer.search import fusedplan as fp

    plan = fp.fused_plan(pb)
    C = len(pb.constraint_names)
    sizes = pb.space.sizes
    args = list(plan["args"])
    ok_at = next(i for i, v in enumerate(args) if v is plan["line_ok"])

    def run(a) -> None:
        fz.run_range(np.array([0]), np.array([n]), np.array([0, 0]), sizes, *a, np.full(5, np.inf),
                     np.empty(1 << 22, np.int64), np.zeros(C, np.int64), np.zeros(plan["n_rows"], np.int64),
                     np.zeros(3, np.int64), np.int64(n))

    run(args)
    t = best(lambda: run(args))
    share = float(np.mean(args[ok_at]))
    out = [f"  kernel call alone {n / t / 1e6:.2f} M/s (line-table rows holding their line: {share:.0%})"]
    for label, fill in (("every line failing", False), ("every line holding", True)):
        a = list(args)
        a[ok_at] = np.full_like(args[ok_at], fill)
        out.append(f"{label} {n / best(lambda: run(a)) / 1e6:.2f} M/s")
    print("; ".join(out))


def bend_block(pb) -> None:
    from strainline.optimizer.search import kernel

    sp, B = pb.space, 520
    x = np.random.default_rng(0).integers(0, sp.sizes, size=(B, len(sp.sizes)))
    s = sp.slots(x)
    cu, film, adh, place = (np.ascontiguousarray(s[k].T).astype(np.int64) for k in ("cu", "film", "adh", "place"))
    ct, cb = np.ascontiguousarray(s["cover_top"]), np.ascontiguousarray(s["cover_bot"])
    cov = np.ascontiguousarray(s["cov_val"].T)
    tabs = kernel._tables(pb)
    out = (np.zeros(B), np.zeros((sp.n_cu, B)), np.zeros(B))
    na, nc = np.int64(len(sp.adh_opts)), np.int64(len(sp.cover_opts))
    r = sp.study.bend.inner_radius_mm * 1e-3
    res = []
    for cut in (-1.0, 0.5):
        def f():
            for _ in range(200):
                kernel._bonded_jit(0, B, cu, film, adh, place, ct, cb, cov, *tabs["bonded"], na, nc, tabs["stiff"],
                                   r, True, cut, *out)
        f()
        res.append(best(f) / 200 / B * 1e9)
    print(f"  bend model alone (bonded batch kernel, blocks of {B}): {res[0]:.0f} ns/candidate exact, "
          f"{res[1]:.0f} ns with the dielectric bound cut")


def first_call() -> None:
    code = ("import sys, time; sys.path.insert(0, %r); from bench_kernel import build; "
            "from strainline.optimizer.search.fusedplan import warm; pb = build(); "
            "t0 = time.perf_counter(); warm(pb); print(time.perf_counter() - t0)") % str(HERE)
    with tempfile.TemporaryDirectory() as d:
        env = dict(os.environ, NUMBA_CACHE_DIR=d)
        t = [float(subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True,
                                  check=True).stdout.split()[-1]) for _ in range(2)]
    print(f"  first kernel call of a process: {t[0]:.1f} s with an empty numba cache, {t[1]:.2f} s with it filled")


def exact_front() -> None:
    with tempfile.TemporaryDirectory() as d:
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "strainline.optimizer", "solve", str(HERE / "studies" / "bench-3cu-1e9.yaml"),
                        "--method", "exhaustive", "--workers", "2", "--impedance", "closed-form", "--quiet",
                        "--force", "--out", str(Path(d) / "o")], check=True, capture_output=True)
        wall = time.perf_counter() - t0
        import json
        s = json.loads((Path(d) / "o" / "front.json").read_text())
        srch = s["search"]
    print(f"  bench-3cu-1e9 exact front, solve on 2 workers: {wall:.1f} s wall in all, search {srch['seconds']:.1f} s; "
          f"{len(s['candidates'])} front points; {srch['evaluated']:,} candidates enumerated, the bounds skipped "
          f"{srch.get('bounds', {}).get('skipped', 0):,}")


def main() -> None:
    quick = "--quick" in sys.argv
    n = 2_000_000 if quick else 8_000_000
    for unbonded in (False, True):
        pb = build(unbonded=unbonded)
        print(f"[{'unbonded' if unbonded else 'bonded'}] {pb.space.study.name}: {pb.space.size:,} candidates")
        enumeration(pb, n, n // 4)
        kernel_paths(pb, n)
        if not unbonded:
            bend_block(pb)
    first_call()
    if not quick:
        exact_front()


if __name__ == "__main__":
    main()
