"""Search drivers: exact exhaustive enumeration, NSGA-II with an archive, and ``auto``.

All drivers work on an *evaluator*: any callable ``evaluate(x) -> (F, G)`` taking integer vectors
(n, n_var) and returning objectives (n, n_obj, minimized) and constraints (n, n_con, feasible where
every column is <= 0). The study problem (:class:`strainline.optimizer.search.problem.Problem`) is one;
the tests and benchmarks also use small synthetic ones.

* :class:`Archive` -- a streaming non-dominated filter: feed it batches, it keeps exactly the
  feasible non-dominated points seen so far (one representative per distinct objective vector,
  the first seen), so memory is bounded by the front, not by the space.
* :func:`exhaustive` -- enumerates every index of a mixed-radix space in vectorized chunks.
* :func:`evolutionary` -- pymoo NSGA-II with integer operators (random integer sampling, SBX and
  polynomial mutation with rounding repair), duplicate elimination, a seeded generator, an external
  archive of every non-dominated feasible point seen, and a stop on stagnation of the archive's
  hypervolume as well as on the budget.
* :func:`search` -- ``auto`` picks exhaustive when the space is at most :data:`AUTO_EXHAUSTIVE_MAX`.
* :func:`hypervolume` -- exact hypervolume in normalized objective space (pymoo's ``HV``
  indicator, exact for the dimensions we use).
"""
from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from strainline.optimizer.search.archive import (  # noqa: F401  (re-exported)
    Archive, _dominated_by, additive_epsilon, hypervolume, nondominated_mask, normalize)

#: ``auto`` enumerates spaces up to this size (measured: ~10^6 candidates/s enumerated against
#: ~1.5x10^4 evaluations/s through pymoo's loop, see benchmarks/bench_search.py).
AUTO_EXHAUSTIVE_MAX = 10_000_000
#: Candidates per chunk of the exhaustive enumeration.
CHUNK = 65536

Evaluator = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]]


# ---------------------------------------------------------------------------------------------
# drivers
@dataclass
class SearchResult:
    """Outcome of a search: the archive front and how it was found."""

    method: str
    archive: Archive
    evaluated: int
    space_size: int
    seconds: float
    stopped: str = ""
    history: list[tuple[int, float]] = field(default_factory=list)   # (evaluations, archive HV)


def _digits(index: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    out = np.empty((index.size, sizes.size), np.int64, order="F")   # column per variable, contiguous
    idx = index.copy()
    for k, s in enumerate(sizes):
        idx, out[:, k] = np.divmod(idx, s)
    return out


class _ChunkDigits:
    """Mixed-radix digits of consecutive index ranges ``[start, start + chunk)``, equal to
    :func:`_digits` of ``np.arange(start, start + chunk)``.

    The chunk is rounded to a multiple of ``P = prod(sizes[:m])`` (the fastest m variables, P <=
    the requested chunk), so for a chunk starting at a multiple of ``P`` those m digits follow the
    same pattern in every chunk (computed once); the slower digits change only every ``P`` rows
    and come from ``chunk / P`` divisions, repeated.
    """

    def __init__(self, sizes: np.ndarray, chunk: int) -> None:
        self.sizes = np.asarray(sizes, np.int64)
        p, m = 1, 0
        while m < self.sizes.size and p * int(self.sizes[m]) <= chunk:
            p *= int(self.sizes[m])
            m += 1
        self.P, self.m = p, m
        self.chunk = max(chunk // p, 1) * p
        self.low = _digits(np.arange(self.chunk, dtype=np.int64), self.sizes[:m])

    def __call__(self, start: int, stop: int) -> np.ndarray:
        n = stop - start
        out = np.empty((n, self.sizes.size), np.int64, order="F")
        out[:, :self.m] = self.low[:n]
        if self.m < self.sizes.size:
            q0 = start // self.P
            q = np.arange(q0, q0 + -(-n // self.P), dtype=np.int64)
            high = _digits(q, self.sizes[self.m:])
            for k in range(high.shape[1]):
                out[:, self.m + k] = np.repeat(high[:, k], self.P)[:n]
        return out


def exhaustive(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, chunk: int = CHUNK,
               progress: Any = None) -> SearchResult:
    """Evaluate every point of the mixed-radix space ``sizes`` in chunks; exact front.

    Parameters
    ----------
    evaluate : callable
        ``evaluate(x) -> (F, G)`` for integer vectors (n, n_var).
    sizes : array of int
        Number of values of each variable (first variable fastest in the index).
    n_obj : int
    chunk : int
        Candidates per vectorized batch (memory is bounded by the chunk and the front).
    progress : Progress, optional
        Gets ``update(done, total)``.
    """
    sizes = np.asarray(sizes, np.int64)
    total = int(np.prod([int(s) for s in sizes], dtype=object))
    if total >= 2**62:
        raise ValueError("space too large to enumerate")
    t0 = time.perf_counter()
    arch = Archive(n_obj, sizes.size)
    digits = _ChunkDigits(sizes, chunk)
    chunk = digits.chunk
    for start in range(0, total, chunk):
        x = digits(start, min(start + chunk, total))
        F, G = evaluate(x)
        arch.add(x, F, G)
        if progress is not None:
            progress.update(min(start + chunk, total), total)
    return SearchResult("exhaustive", arch, total, total, time.perf_counter() - t0, "complete")


def random_search(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, budget: int, seed: int,
                  chunk: int = 8192) -> SearchResult:
    """Uniform random sampling of ``budget`` points (the baseline the benchmarks compare against)."""
    sizes = np.asarray(sizes, np.int64)
    rng = np.random.default_rng(seed)
    t0 = time.perf_counter()
    arch = Archive(n_obj, sizes.size)
    done = 0
    while done < budget:
        m = min(chunk, budget - done)
        x = rng.integers(0, sizes, size=(m, sizes.size))
        F, G = evaluate(x)
        arch.add(x, F, G)
        done += m
    return SearchResult("random", arch, done, int(np.prod([int(s) for s in sizes], dtype=object)),
                        time.perf_counter() - t0, "budget")


def evolutionary(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, n_con: int, budget: int, seed: int,
                 pop_size: int = 100, stagnation: int = 60, progress: Any = None,
                 hv_bounds: tuple[np.ndarray, np.ndarray] | None = None) -> SearchResult:
    """NSGA-II (pymoo) on integer variables with an external archive; seeded and reproducible.

    Stops when the budget of evaluations is spent or when the archive has not changed for
    ``stagnation`` generations in a row.

    Parameters
    ----------
    evaluate : callable
        ``evaluate(x) -> (F, G)``.
    sizes : array of int
        Number of values of each variable.
    n_obj, n_con : int
    budget : int
        Maximum number of evaluations.
    seed : int
        Seed of the algorithm's random generator.
    pop_size : int
    stagnation : int
        Generations without any archive change before stopping.
    hv_bounds : (ideal, nadir), optional
        If given, the archive hypervolume is recorded after every generation (``history``).
    """
    from pymoo.algorithms.moo.nsga2 import NSGA2
    from pymoo.core.problem import Problem as PymooProblem
    from pymoo.operators.crossover.sbx import SBX
    from pymoo.operators.mutation.pm import PM
    from pymoo.operators.repair.rounding import RoundingRepair
    from pymoo.operators.sampling.rnd import IntegerRandomSampling
    from pymoo.termination.max_eval import MaximumFunctionCallTermination

    sizes = np.asarray(sizes, np.int64)
    arch = Archive(n_obj, sizes.size)
    counter = {"n": 0}

    class _P(PymooProblem):
        def __init__(self) -> None:
            super().__init__(n_var=sizes.size, n_obj=n_obj, n_ieq_constr=n_con, xl=np.zeros(sizes.size),
                             xu=(sizes - 1).astype(float), vtype=int, elementwise=False)

        def _evaluate(self, X, out, *args, **kwargs):
            x = np.clip(np.rint(X).astype(np.int64), 0, sizes - 1)
            F, G = evaluate(x)
            arch.add(x, F, G)
            counter["n"] += len(x)
            out["F"] = np.where(np.isfinite(F), F, 1e30)
            if n_con:
                out["G"] = np.where(np.isfinite(G), G, 1e30)

    t0 = time.perf_counter()
    problem = _P()
    algo = NSGA2(
        pop_size=pop_size,
        sampling=IntegerRandomSampling(),
        crossover=SBX(prob=0.9, eta=3.0, vtype=float, repair=RoundingRepair()),
        mutation=PM(eta=3.0, vtype=float, repair=RoundingRepair()),
        eliminate_duplicates=True,
    )
    algo.setup(problem, termination=MaximumFunctionCallTermination(budget), seed=seed, verbose=False)
    quiet_gens = 0
    history: list[tuple[int, float]] = []
    stopped = "budget"
    last_front_size, last_F = -1, None
    while algo.has_next():
        algo.next()
        F = arch.F
        same = last_F is not None and F.shape == last_F.shape and np.array_equal(F, last_F)
        quiet_gens = quiet_gens + 1 if same else 0
        last_F = F.copy()
        if hv_bounds is not None:
            history.append((counter["n"], hypervolume(F, *hv_bounds)))
        if progress is not None:
            progress.update(min(counter["n"], budget), budget)
        if quiet_gens >= stagnation and arch.feasible > 0:
            stopped = f"stagnation ({stagnation} generations without a new front point)"
            break
    del last_front_size
    return SearchResult("evolutionary", arch, counter["n"], int(np.prod([int(s) for s in sizes], dtype=object)),
                        time.perf_counter() - t0, stopped, history)


def choose_method(method: str, space_size: int) -> str:
    """``auto`` -> ``exhaustive`` up to :data:`AUTO_EXHAUSTIVE_MAX` candidates, else ``evolutionary``."""
    if method != "auto":
        return method
    return "exhaustive" if space_size <= AUTO_EXHAUSTIVE_MAX else "evolutionary"


def search(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, n_con: int, method: str = "auto",
           budget: int = 20000, seed: int = 1, pop_size: int = 100, progress: Any = None,
           evaluate_exhaustive: Evaluator | None = None) -> SearchResult:
    """Run the chosen search method (see :func:`choose_method`).

    ``evaluate_exhaustive`` (optional) is used by the enumeration instead of ``evaluate``; it may
    skip expensive work for candidates a cheap constraint already rules out, as long as it never
    reports such a candidate feasible.
    """
    sizes = np.asarray(sizes, np.int64)
    size = int(np.prod([int(s) for s in sizes], dtype=object))
    m = choose_method(method, size)
    if m == "exhaustive":
        if size >= 2**62:
            from strainline.optimizer.errors import StudyError

            raise StudyError(f"the space has {size:.3e} candidates, too many to enumerate; use 'evolutionary'",
                             "search.method")
        return exhaustive(evaluate_exhaustive or evaluate, sizes, n_obj, progress=progress)
    return evolutionary(evaluate, sizes, n_obj, n_con, budget, seed, pop_size=pop_size, progress=progress)
