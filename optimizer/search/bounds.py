"""Bounds that skip whole blocks of the enumeration (branch and bound over the mixed-radix tree).

The index space splits into blocks of ``P = prod(sizes[:m])`` consecutive candidates that share
every slow digit (the *prefix*) and run over every value of the ``m`` fast variables. A block is
skipped when a lower bound proves that none of its candidates can be feasible:

* **Additive limits** (the total thickness limit): a constraint column ``g(x) = A(prefix) +
  B(fast)`` that is a sum over the variables' contributions has its block minimum at the fast
  digits ``b0`` minimizing ``B``, whatever the prefix; so ``g(prefix, b0) > 0`` rules out the whole
  block. ``b0`` comes from one full block; the split is accepted only after the differences
  ``g(q, b) - g(q, b0)`` of full blocks at other prefixes ``q`` equal those of the first block
  (to 1e-12), i.e. the column is measured additive across the split (a split inside a group of
  coupled variables, e.g. an adhesive and its placement, fails and the next split is tried).

The surviving blocks are enumerated as usual (:mod:`.exhaustive`, :mod:`.parallel`); skipped
blocks hold no feasible point, so the front is exactly that of the plain enumeration.
"""
from __future__ import annotations

import numpy as np

from strainline.optimizer.search.exhaustive import Evaluator, _digits, space_size

#: Smallest block (a block's bound costs one evaluation, so P >= 256 keeps the bound pass below
#: 0.4 % of the space).
MIN_BLOCK = 256
#: Most blocks the bound pass handles (above this the spaces are left to the evolutionary search).
MAX_BLOCKS = 200_000_000
#: Rows per batch of the bound pass.
BATCH = 65536
#: A bound above this (relative excess over the limit) skips the block.
SLACK = 1e-9


def _block_x(sizes: np.ndarray, m: int, q: np.ndarray, fast: np.ndarray) -> np.ndarray:
    """Candidates with fast digits ``fast`` (n, m) and prefixes ``q`` (n,)."""
    x = np.empty((len(q), sizes.size), np.int64, order="F")
    x[:, :m] = fast
    x[:, m:] = _digits(np.asarray(q, np.int64), sizes[m:])
    return x


def find_split(evaluate: Evaluator, sizes: np.ndarray, col: int, rng: np.random.Generator,
               checks: int = 3) -> tuple[int, np.ndarray] | None:
    """The smallest split ``m`` (block of at least :data:`MIN_BLOCK`) over which constraint column
    ``col`` is additive; return ``(m, b0)`` with the fast digits minimizing it, or None."""
    sizes = np.asarray(sizes, np.int64)
    P = 1
    for m in range(1, sizes.size):
        P *= int(sizes[m - 1])
        if P < MIN_BLOCK:
            continue
        if P > 4 * BATCH:
            return None
        Q = space_size(sizes[m:])
        if Q > MAX_BLOCKS:
            continue
        fast = _digits(np.arange(P, dtype=np.int64), sizes[:m])
        g0 = evaluate(_block_x(sizes, m, np.zeros(P, np.int64), fast))[1][:, col]
        if not np.all(np.isfinite(g0)):
            continue
        k0 = int(np.argmin(g0))
        ok = True
        for q in rng.integers(0, Q, checks):
            g = evaluate(_block_x(sizes, m, np.full(P, q, np.int64), fast))[1][:, col]
            if not np.allclose(g - g[k0], g0 - g0[k0], rtol=0, atol=1e-12):
                ok = False
                break
        if ok:
            return m, fast[k0]
    return None


def estimate_skip(evaluate: Evaluator, sizes: np.ndarray, col: int, split: tuple[int, np.ndarray],
                  rng: np.random.Generator, n: int = 4096) -> float:
    """Share of the blocks the bound skips, from ``n`` random blocks (for the time projection)."""
    m, b0 = split
    q = rng.integers(0, space_size(sizes[m:]), n)
    g = evaluate(_block_x(np.asarray(sizes, np.int64), m, q, np.broadcast_to(b0, (n, m))))[1][:, col]
    return float(np.mean(g > SLACK))


def surviving_ranges(evaluate: Evaluator, sizes: np.ndarray, col: int, seed: int = 0,
                     split: tuple[int, np.ndarray] | None = None) -> tuple[list[tuple[int, int]], dict]:
    """Index ranges left after skipping every block whose bound on column ``col`` is over its limit.

    Returns
    -------
    ranges : list of (start, stop)
        Increasing, disjoint; their union holds every feasible candidate.
    info : dict
        ``skipped`` candidates, ``blocks``/``blocks_skipped``, ``block_size``, ``bound_evaluations``
        and the ``reason``; ``ranges`` is the whole space when no additive split exists.
    """
    sizes = np.asarray(sizes, np.int64)
    total = space_size(sizes)
    found = split if split is not None else find_split(evaluate, sizes, col, np.random.default_rng(seed))
    if found is None:
        return [(0, total)], {"skipped": 0, "reason": "no additive split of the limit's column found"}
    m, b0 = found
    P = space_size(sizes[:m])
    Q = total // P
    keep = np.empty(Q, bool)
    for a in range(0, Q, BATCH):
        q = np.arange(a, min(Q, a + BATCH), dtype=np.int64)
        g = evaluate(_block_x(sizes, m, q, np.broadcast_to(b0, (len(q), m))))[1][:, col]
        keep[a:a + len(q)] = ~(g > SLACK)
    # runs of kept blocks -> index ranges
    edges = np.flatnonzero(np.diff(np.concatenate([[0], keep.astype(np.int8), [0]])))
    ranges = [(int(s) * P, int(e) * P) for s, e in zip(edges[::2], edges[1::2])]
    n_skip = int(Q - keep.sum())
    return ranges, {"skipped": n_skip * P, "blocks": int(Q), "blocks_skipped": n_skip, "block_size": int(P),
                    "bound_evaluations": int(Q + (1 + 3) * P),
                    "reason": "total thickness: the thinnest stack of the block is over the limit"}
