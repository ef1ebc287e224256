"""Exact enumeration of a mixed-radix space, by index range.

A candidate index in ``[0, prod n_k)`` is the mixed-radix number of its variables (first variable
fastest). :func:`exhaustive_range` evaluates one index range in vectorized chunks into an
:class:`~strainline.optimizer.search.archive.Archive`; ranges are the unit of work of the parallel
and distributed drivers (:mod:`strainline.optimizer.search.parallel`), whose archives merge into
exactly the archive of one pass.
"""
from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from strainline.optimizer.search.archive import Archive

#: Candidates per chunk of the exhaustive enumeration.
CHUNK = 65536

Evaluator = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]]


def space_size(sizes) -> int:
    """Number of points of the mixed-radix space (exact Python integer)."""
    out = 1
    for s in sizes:
        out *= int(s)
    return out


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
    and come from ``chunk / P`` divisions, repeated. A chunk starting elsewhere is decoded directly.
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
        if start % self.P or n > self.chunk:
            return _digits(np.arange(start, stop, dtype=np.int64), self.sizes)
        out = np.empty((n, self.sizes.size), np.int64, order="F")
        out[:, :self.m] = self.low[:n]
        if self.m < self.sizes.size:
            q0 = start // self.P
            q = np.arange(q0, q0 + -(-n // self.P), dtype=np.int64)
            high = _digits(q, self.sizes[self.m:])
            for k in range(high.shape[1]):
                out[:, self.m + k] = np.repeat(high[:, k], self.P)[:n]
        return out


def _fused(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, pieces: list[tuple[int, int]], progress: Any,
           archive: Archive | None) -> Archive | None:
    """The evaluator's own enumeration of ``pieces`` (``evaluate.range_archive``: the fused compiled
    kernel of a study problem, :mod:`.fusedplan`), or None when it has none or does not cover it."""
    run = getattr(evaluate, "range_archive", None)
    return None if run is None else run(sizes, n_obj, pieces, progress, archive)


def exhaustive_range(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, start: int, stop: int,
                     chunk: int = CHUNK, progress: Any = None, archive: Archive | None = None) -> Archive:
    """Evaluate the candidates ``start <= index < stop`` in chunks; return their exact archive.

    Parameters
    ----------
    evaluate : callable
        ``evaluate(x) -> (F, G)`` for integer vectors (n, n_var). If it has an ``exact(x) -> (F, G)``
        method (a pruning evaluator's full evaluation, :class:`~.parallel.ProblemEvaluator`), the
        archive refines pruned rows that could be among the nearest infeasible candidates with it.
    sizes : array of int
        Number of values of each variable (first variable fastest in the index).
    n_obj : int
    start, stop : int
        The index range.
    chunk : int
        Candidates per vectorized batch (rounded to the digit pattern, :class:`_ChunkDigits`).
    progress : callable, optional
        ``progress(n)`` after each chunk of ``n`` candidates.
    archive : Archive, optional
        Continue this archive (it must hold only indices below ``start``).
    """
    sizes = np.asarray(sizes, np.int64)
    got = _fused(evaluate, sizes, n_obj, [(start, stop)], progress, archive)
    if got is not None:
        return got
    arch = archive if archive is not None else Archive(n_obj, sizes.size)
    digits = _ChunkDigits(sizes, chunk)
    step = digits.chunk
    a = start
    while a < stop:
        b = min(stop, (a // step + 1) * step)       # chunks on the pattern's grid
        x = digits(a, b)
        F, G = evaluate(x)
        arch.add(x, F, G, start=a, refine=getattr(evaluate, "exact", None))
        if progress is not None:
            progress(b - a)
        a = b
    return arch


def split_ranges(start: int, stop: int, parts: int, align: int) -> list[tuple[int, int]]:
    """``parts`` consecutive ranges covering ``[start, stop)``, inner bounds on multiples of ``align``."""
    n = stop - start
    bounds = [start]
    for k in range(1, parts):
        b = (start + n * k // parts) // align * align
        if b > bounds[-1]:
            bounds.append(b)
    bounds.append(stop)
    return [(a, b) for a, b in zip(bounds[:-1], bounds[1:]) if b > a]


def exhaustive_pieces(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, pieces: list[tuple[int, int]],
                      chunk: int = CHUNK, progress: Any = None, archive: Archive | None = None) -> Archive:
    """:func:`exhaustive_range` over increasing disjoint ``pieces``; short pieces (e.g. the blocks a
    bound leaves) are gathered into batches of about ``chunk`` candidates, so each evaluation call
    stays large."""
    sizes = np.asarray(sizes, np.int64)
    got = _fused(evaluate, sizes, n_obj, pieces, progress, archive)
    if got is not None:
        return got
    arch = archive if archive is not None else Archive(n_obj, sizes.size)
    buf: list[np.ndarray] = []
    held = 0

    def flush() -> None:
        nonlocal buf, held
        if held:
            idx = np.concatenate(buf)
            x = _digits(idx, sizes)
            F, G = evaluate(x)
            arch.add(x, F, G, index=idx, refine=getattr(evaluate, "exact", None))
            if progress is not None:
                progress(held)
        buf, held = [], 0

    for a, b in pieces:
        if b - a >= chunk:
            flush()
            exhaustive_range(evaluate, sizes, n_obj, a, b, chunk, progress, arch)
            continue
        buf.append(np.arange(a, b, dtype=np.int64))
        held += b - a
        if held >= chunk:
            flush()
    flush()
    return arch
