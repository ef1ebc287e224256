"""Speed of the compiled bend-mechanics kernel (plain script; prints numbers, asserts nothing).

On the 3-copper benchmark study (benchmarks/studies/bench-3cu-1e9.yaml) and an unbonded variant of
it (``bend.region: unbonded``, leaves auto), in candidates per CPU second on one core:

1. the strains of one bend zone alone: the compiled kernel (:func:`kernel.zone_mechanics`) against
   the numpy path it replaces (bonded: the group-sum fast path; unbonded: the layer path
   ``Space.mechanics`` + ``bend_strains`` + ``strain_ratio``);
2. the whole ``Problem.evaluate`` with and without the kernel. Until ``Problem._evaluate`` calls the
   kernel itself, this script patches its strain block the way the integration note in the kernel's
   hand-over describes (``if fast: ... else: ...`` -> ``zone_mechanics``); once it does, the
   comparison runs with ``STRAINLINE_KERNEL=0`` and ``1``;
3. compile time: a fresh process with an empty numba cache (``NUMBA_CACHE_DIR``) times its first
   call, a second process with the filled cache times its first call again (what a parallel worker
   pays);
4. where the time of one evaluation block (``BLOCK`` rows) goes with the kernel: nanoseconds per
   candidate of each step ``Problem._evaluate`` runs (decode, strains, line rows, line columns,
   hatch width, material limits, fatigue) and of the whole block.

The line table uses the closed-form impedance model (it only changes the table's build time, not the
evaluation). Times are process CPU seconds (time.process_time), best of three (shared, noisy
machines). Run:  python benchmarks/bench_kernel.py
"""
from __future__ import annotations

import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMBA_NUM_THREADS"):
    os.environ.setdefault(_v, "1")          # one core

import contextlib  # noqa: E402
import inspect  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import textwrap  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

HERE = Path(__file__).resolve().parent
STUDY = HERE / "studies" / "bench-3cu-1e9.yaml"
N_BATCH = 65536


def build(unbonded: bool = False):
    from strainline.optimizer.inputs.catalog import load_catalog
    from strainline.optimizer.inputs.study import validate_study
    from strainline.optimizer.inputs.yamlio import read_yaml
    from strainline.optimizer.search.linetable import table_options
    from strainline.optimizer.search.problem import build_problem
    from strainline.optimizer.search.space import build_space

    data = read_yaml(STUDY, ValueError)
    if unbonded:
        data["bend"]["region"] = "unbonded"
        data["name"] += "-unbonded"
    cat = load_catalog()
    with table_options(impedance="closed-form"):
        sp = build_space(validate_study(data, cat), cat)
        return build_problem(sp, cat)


def best_rate(f, n: int, repeat: int = 3) -> float:
    f()                                                     # warm up
    best = float("inf")
    for _ in range(repeat):
        t0 = time.process_time()
        f()
        best = min(best, time.process_time() - t0)
    return n / best


def numpy_strains(pb, x, slots, zone):
    from strainline.optimizer.search import constraints as material

    sp = pb.space
    pb.zone = zone
    try:
        if not sp.unbonded:
            return pb.copper_strains(slots, dielectric=True)
        t, e, leaf, _ = sp.mechanics(x, slots)
        bs = pb.strains(t, e, leaf)
        cols = [sp.cu_col(i) for i in range(sp.n_cu)]
        peak = np.maximum(np.abs(bs.strain_top[:, cols]), np.abs(bs.strain_bottom[:, cols]))
        return t.sum(axis=1), peak, material.strain_ratio(sp, slots, bs.strain_top, bs.strain_bottom)
    finally:
        pb.zone = None


#: The strain block of ``Problem._evaluate`` before and after the integration (see the module doc).
BEFORE = ("        fast = self.fast is not None and not sp.unbonded\n        if fast:\n",
          "                if fast:\n                    total, cu_peak, ratio = self.copper_strains(slots, dielectric=True)\n")
AFTER = ("        fast = self.fast is not None and not sp.unbonded\n        use_kernel = _kernel.enabled()\n"
         "        if fast or use_kernel:\n",
         "                if use_kernel:\n                    total, cu_peak, ratio = _kernel.zone_mechanics(self, slots, zone)\n"
         "                elif fast:\n                    total, cu_peak, ratio = self.copper_strains(slots, dielectric=True)\n")


@contextlib.contextmanager
def kernel_in_evaluate(on: bool):
    """``Problem._evaluate`` with the kernel (``on``) or the numpy path."""
    from strainline.optimizer.search import kernel, problem

    old_env = os.environ.get("STRAINLINE_KERNEL")
    os.environ["STRAINLINE_KERNEL"] = "1" if on else "0"
    src = inspect.getsource(problem.Problem._evaluate)
    orig = problem.Problem._evaluate
    patched = "zone_mechanics" not in src and on
    if patched:
        for a, b in zip(BEFORE, AFTER):
            if a not in src:
                raise SystemExit("Problem._evaluate changed; update BEFORE/AFTER in bench_kernel.py")
            src = src.replace(a, b)
        src = textwrap.dedent(src)
        ns = dict(vars(problem), _kernel=kernel)
        exec(compile(src, problem.__file__, "exec"), ns)
        problem.Problem._evaluate = ns["_evaluate"]
    try:
        yield "patched here" if patched else ("problem.py" if on else "numpy")
    finally:
        problem.Problem._evaluate = orig
        if old_env is None:
            os.environ.pop("STRAINLINE_KERNEL", None)
        else:
            os.environ["STRAINLINE_KERNEL"] = old_env


def compile_times() -> tuple[float, float]:
    """Seconds of the first kernel call (bonded and unbonded) in a fresh process: with an empty
    numba cache, then with the cache that process filled."""
    code = (
        "import sys, time, importlib.util\n"
        f"spec = importlib.util.spec_from_file_location('bk', {str(Path(__file__).resolve())!r})\n"
        "bk = importlib.util.module_from_spec(spec); spec.loader.exec_module(bk)\n"
        "from strainline.optimizer.search import kernel\n"
        "total = 0.0\n"
        "for unb in (False, True):\n"
        "    pb = bk.build(unb); sp = pb.space\n"
        "    s = sp.slots(sp.index_to_x(list(range(64))))\n"
        "    t0 = time.perf_counter(); kernel.zone_mechanics(pb, s); total += time.perf_counter() - t0\n"
        "print(total)\n")
    out = []
    with tempfile.TemporaryDirectory() as d:
        env = dict(os.environ, NUMBA_CACHE_DIR=d)
        for _ in range(2):
            p = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True)
            out.append(float(p.stdout.strip().splitlines()[-1]))
    return out[0], out[1]


def breakdown(pb) -> None:
    """Nanoseconds per candidate of the steps of one evaluation block, with the kernel."""
    from strainline.models.fatigue import strain_range
    from strainline.optimizer.search import constraints as material, kernel
    from strainline.optimizer.search.problem import BLOCK

    sp, zone = pb.space, pb.space.study.bend
    rng = np.random.default_rng(1)
    xs = [sp.index_to_x(rng.integers(0, sp.size, BLOCK)) for _ in range(8)]
    S = [sp.slots(x) for x in xs]
    K = [kernel.zone_mechanics(pb, s, zone) for s in S]
    R = [pb._rows(s) for s in S]

    def fatigue(i: int) -> None:
        out = None
        for j in range(sp.n_cu):
            r = strain_range(K[i][1][:, j], zone.motion) / pb.allowed_range[0].take(S[i]["cu"][:, j], mode="clip")
            out = r if out is None else np.maximum(out, r, out=out)

    steps = {"decode (Space.slots)": lambda i: sp.slots(xs[i]),
             "strains (kernel)": lambda i: kernel.zone_mechanics(pb, S[i], zone),
             "line rows": lambda i: pb._rows(S[i]),
             "line constraint columns": lambda i: pb._line_g(R[i], S[i]),
             "material limits": lambda i: material.material_constraints(pb, S[i], K[i][0], K[i][2])}
    if "hatch_width" in pb.constraint_names:
        from strainline.optimizer.search.hatchsearch import hatch_width_constraint
        steps["hatch width"] = lambda i: hatch_width_constraint(pb, S[i], R[i])
    if pb.allowed_range is not None and pb.allowed_range[0] is not None:
        steps["fatigue (life limit)"] = fatigue
    with kernel_in_evaluate(True):
        steps["whole _evaluate block"] = lambda i: pb._evaluate(xs[i])
        parts = []
        for name, f in steps.items():
            ns = 1e9 / best_rate(lambda: [f(i) for i in range(len(xs))], BLOCK * len(xs))
            parts.append(f"{name} {ns:.0f}")
    print(f"  ns per candidate, blocks of {BLOCK}: " + ", ".join(parts))


def main() -> None:
    from strainline.optimizer.search import kernel

    print(f"study: {STUDY.name} (and an unbonded variant); batches of {N_BATCH}; candidates per CPU second")
    cold, warm = compile_times()
    print(f"first kernel call, bonded + unbonded: {cold:.1f} s with an empty cache (compile), "
          f"{warm:.2f} s with the cache filled (a new process or worker)")
    for unbonded in (False, True):
        pb = build(unbonded)
        sp = pb.space
        rng = np.random.default_rng(0)
        xs = [sp.index_to_x(rng.integers(0, sp.size, N_BATCH)) for _ in range(4)]
        x = xs[0]
        s = sp.slots(x)
        zone = sp.study.bend
        label = "unbonded" if unbonded else "bonded"
        k = best_rate(lambda: kernel.zone_mechanics(pb, s, zone), N_BATCH)
        old = best_rate(lambda: numpy_strains(pb, x, s, zone), N_BATCH)
        ref = numpy_strains(pb, x, s, zone)
        got = kernel.zone_mechanics(pb, s, zone)
        err = max(float(np.max(np.abs(a / b - 1))) for a, b in zip(got, ref) if np.size(a))
        print(f"[{label}] strains of one zone: kernel {k / 1e6:6.2f} M/s, numpy path {old / 1e6:6.2f} M/s "
              f"({k / old:.1f}x); largest relative difference {err:.1e}")
        rates = {}
        for on in (False, True):
            with kernel_in_evaluate(on) as how:
                rates[on] = best_rate(lambda: [pb.evaluate(xx) for xx in xs], N_BATCH * len(xs))
                print(f"[{label}] Problem.evaluate, {'kernel' if on else 'numpy '} ({how}): "
                      f"{rates[on] / 1e6:6.2f} M/s")
        print(f"[{label}] full evaluation speed-up {rates[True] / rates[False]:.2f}x "
              f"(issue 13 target: 25 M/s per core on the bonded study)")
        breakdown(pb)


if __name__ == "__main__":
    main()
