"""Exhaustive enumeration on every core and on a Dask cluster.

The index space is cut into consecutive ranges (:func:`~strainline.optimizer.search.exhaustive.split_ranges`),
each range is a task that returns the exact :class:`~strainline.optimizer.search.archive.Archive` of its
candidates, and the archives merge (:meth:`Archive.merge`, independent of the order the tasks finish in)
into exactly the archive of one pass: the front is the same, bit for bit, however the work is split.

The evaluator travels to the workers pickled (:class:`ProblemEvaluator` wraps a study problem; a
3-copper study's problem pickles in ~3 ms to ~1.3 MB, against ~0.2 s to rebuild it from the study
and the catalog), once per worker: as the initializer argument of a local process pool, or
scattered to every Dask worker.
"""
from __future__ import annotations

import copyreg
import multiprocessing
import os
import sys
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor, as_completed
from types import MappingProxyType
from typing import Any

import numpy as np

from strainline.optimizer.search.archive import Archive
from strainline.optimizer.search.exhaustive import CHUNK, _ChunkDigits, exhaustive_pieces, split_ranges

# Read-only catalog mappings (types.MappingProxyType) travel as their contents: the problem holds
# catalog records and must pickle to reach a Dask worker.
def _mapping_proxy(d: dict) -> MappingProxyType:
    return MappingProxyType(d)


copyreg.pickle(MappingProxyType, lambda m: (_mapping_proxy, (dict(m),)))

#: Tasks per worker: enough for the progress bar and for balancing uneven ranges.
TASKS_PER_WORKER = 6


class ProblemEvaluator:
    """A picklable ``evaluate(x) -> (F, G)`` of a study problem (``prune``: skip the bend model
    for candidates whose line already fails, :meth:`Problem.evaluate`)."""

    def __init__(self, problem: Any, prune: bool = True, fused: bool | None = None) -> None:
        self.problem = problem
        self.prune = prune
        self.fused = fused

    def __call__(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        e = self.problem.evaluate(x, prune=self.prune)
        return e.F, e.G

    def range_archive(self, sizes: np.ndarray, n_obj: int, pieces: list[tuple[int, int]], progress: Any = None,
                      archive: Any = None) -> Any:
        """Enumerate index ``pieces`` with the fused compiled kernel (:func:`.fusedplan.range_archive`;
        the same archive as the chunked evaluation), or None when the kernel does not cover the study
        (then the enumeration evaluates chunks). ``fused``: True always, False never, None (default)
        for pieces of at least :data:`.fusedplan.MIN_CANDIDATES` candidates."""
        from strainline.optimizer.search.fusedplan import MIN_CANDIDATES, range_archive

        if not self.prune or self.fused is False:
            return None
        if self.fused is None and sum(b - a for a, b in pieces) < MIN_CANDIDATES:
            return None          # a small enumeration does not pay the kernel's first compilation
        return range_archive(self.problem, self, sizes, n_obj, pieces, progress, archive)

    def sized(self, total: int) -> "ProblemEvaluator":
        """This evaluator for an enumeration of ``total`` candidates in all: with the fused kernel
        (compiled now, so a timed probe measures the kernel and forked workers inherit it) when
        ``total`` reaches :data:`.fusedplan.MIN_CANDIDATES` and the kernel covers the study."""
        if self.fused is not None or not self.prune:
            return self
        from strainline.optimizer.search.fusedplan import MIN_CANDIDATES, warm

        return ProblemEvaluator(self.problem, self.prune, total >= MIN_CANDIDATES and warm(self.problem))

    def exact(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """``(F, G)`` without pruning: the enumeration refines pruned rows that could be among the
        nearest infeasible candidates with it (:meth:`Archive.add` ``refine``)."""
        e = self.problem.evaluate(x, prune=False)
        return e.F, e.G


def default_workers() -> int:
    """Cores this process may run on."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:          # not on Linux
        return max(1, os.cpu_count() or 1)


# --------------------------------------------------------------------------------------------- tasks
_WORKER: dict[str, Any] = {}


def _init_worker(evaluate: Any) -> None:
    _WORKER["evaluate"] = evaluate


def _do_task(evaluate: Any, sizes: np.ndarray, n_obj: int, pieces: list[tuple[int, int]], chunk: int) -> Archive:
    return exhaustive_pieces(evaluate, sizes, n_obj, pieces, chunk)     # increasing pieces


def _local_task(sizes: np.ndarray, n_obj: int, pieces: list[tuple[int, int]], chunk: int) -> Archive:
    return _do_task(_WORKER["evaluate"], sizes, n_obj, pieces, chunk)


def _dask_task(evaluate: Any, sizes: np.ndarray, n_obj: int, pieces: list[tuple[int, int]], chunk: int) -> Archive:
    return _do_task(evaluate, sizes, n_obj, pieces, chunk)


def make_tasks(ranges: list[tuple[int, int]], parts: int, align: int) -> list[list[tuple[int, int]]]:
    """Group disjoint increasing ``ranges`` into about ``parts`` tasks of similar size (ranges cut on
    multiples of ``align``)."""
    total = sum(b - a for a, b in ranges)
    if total <= 0:
        return []
    target = max(total // parts, 1)
    pieces = []
    for a, b in ranges:
        pieces += split_ranges(a, b, max(1, round(parts * (b - a) / total)), align)
    tasks, cur, size = [], [], 0
    for a, b in pieces:
        cur.append((a, b))
        size += b - a
        if size >= target:
            tasks.append(cur)
            cur, size = [], 0
    if cur:
        tasks.append(cur)
    return tasks


def run_ranges(evaluate: Callable, sizes: np.ndarray, n_obj: int, start: int, stop: int, workers: int = 1,
               dask_address: str | None = None, progress: Callable[[int], None] | None = None,
               chunk: int = CHUNK, archive: Archive | None = None,
               ranges: list[tuple[int, int]] | None = None) -> tuple[Archive, int]:
    """Enumerate ``[start, stop)`` (or the disjoint increasing ``ranges``) on ``workers`` local
    processes or a Dask cluster.

    Parameters
    ----------
    evaluate : callable
        ``evaluate(x) -> (F, G)``; must pickle for more than one worker (:class:`ProblemEvaluator`).
    sizes : array of int
    n_obj : int
    start, stop : int
        The index range (ignored when ``ranges`` is given).
    workers : int
        Local worker processes (1 = this process). Ignored with ``dask_address``.
    dask_address : str, optional
        Address of a Dask scheduler (``tcp://host:8786``).
    progress : callable, optional
        ``progress(n)`` as candidates finish.
    archive : Archive, optional
        Merge into this archive (of indices outside the ranges).
    ranges : list of (start, stop), optional
        Several ranges (e.g. the blocks a bound leaves, :mod:`.bounds`).

    Returns
    -------
    archive : Archive
        The merged archive.
    workers : int
        Workers that took part (Dask: the cluster's worker threads).
    """
    sizes = np.asarray(sizes, np.int64)
    arch = archive if archive is not None else Archive(n_obj, sizes.size)
    ranges = [(start, stop)] if ranges is None else [(a, b) for a, b in ranges if b > a]
    align = _ChunkDigits(sizes, chunk).chunk
    if dask_address:
        return _run_dask(evaluate, sizes, n_obj, ranges, dask_address, progress, chunk, align, arch)
    if workers <= 1 or sum(b - a for a, b in ranges) <= align:
        arch.merge(exhaustive_pieces(evaluate, sizes, n_obj, ranges, chunk, progress))
        return arch, 1
    tasks = make_tasks(ranges, workers * TASKS_PER_WORKER, align)
    # fork shares the built problem without pickling it; Python 3.12+ warns about forking a process
    # that runs threads (progress bars, clients), so there the workers come from a fork server
    ctx = multiprocessing.get_context("forkserver") if sys.version_info >= (3, 12) and os.name == "posix" else None
    with ProcessPoolExecutor(max_workers=workers, initializer=_init_worker, initargs=(evaluate,),
                             mp_context=ctx) as pool:
        futures = {pool.submit(_local_task, sizes, n_obj, t, chunk): sum(b - a for a, b in t) for t in tasks}
        for fut in as_completed(futures):
            arch.merge(fut.result())
            if progress is not None:
                progress(futures[fut])
    return arch, workers


def _run_dask(evaluate, sizes, n_obj, ranges, address, progress, chunk, align, arch):
    from strainline.optimizer.search.cluster import connect

    client = connect(address)
    from dask.distributed import as_completed as dask_as_completed
    try:
        threads = max(1, sum(client.nthreads().values()))
        ev = client.scatter(evaluate, broadcast=True)
        tasks = make_tasks(ranges, threads * TASKS_PER_WORKER, align)
        futures = [client.submit(_dask_task, ev, sizes, n_obj, t, chunk, pure=False) for t in tasks]
        size_of = {f.key: sum(b - a for a, b in t) for f, t in zip(futures, tasks)}
        for fut in dask_as_completed(futures):
            arch.merge(fut.result())
            if progress is not None:
                progress(size_of[fut.key])
    finally:
        client.close()
    return arch, threads


def cluster_threads(address: str) -> int:
    """Worker threads of the Dask cluster at ``address`` (for the time projection)."""
    from strainline.optimizer.search.cluster import connect

    with connect(address) as client:
        return max(1, sum(client.nthreads().values()))
