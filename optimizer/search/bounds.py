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

* **Branch and bound over the tree** (:func:`node_ranges`, study problems): from the root (every
  variable free) down to blocks of at least :data:`MIN_BLOCK`, each node gets rigorous lower
  bounds over all its completions (:class:`.boundstrain.NodeModel`) and is skipped, with all its
  subtree, when one proves that no candidate of it is feasible -- ``thickness`` (total thickness
  limit; unbonded regions too), ``line`` (for some line of the study no reachable row of its
  table meets the line constraints or the loss limit), ``leaves`` (unbonded: the leaf grouping
  cannot be built, :mod:`.boundrows`), ``strain`` (peak or signal copper strain, or the fatigue
  range, over its limit; per leaf in unbonded regions, :mod:`.boundleaf`) -- or that none
  can enter the front -- ``dominance``: a known feasible point ``p`` (true evaluations, e.g. an
  evolutionary pre-run) with ``p <= lb`` in every quantized objective and either ``p < lb`` in
  one or an index below the node's first (the archive keeps, of equal objective vectors, the
  smallest index; :mod:`.archive`). A front point of the plain enumeration is never in a skipped
  node, so the front of the surviving blocks is exactly the plain front (same points, same
  indices); the feasible count then covers the enumerated blocks only.

The surviving blocks are enumerated as usual (:mod:`.exhaustive`, :mod:`.parallel`); blocks skipped
by the limits hold no feasible point, so the front is exactly that of the plain enumeration.
"""
from __future__ import annotations

import time
from typing import Any

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


# --------------------------------------------------------------------------------------------
# branch and bound over the tree (study problems)
#: The bound kinds, in the order a node's skip is attributed.
KINDS = ("thickness", "line", "leaves", "strain", "dominance")


class BoundTimeout(Exception):
    """The bound pass ran past its time cap."""


def node_model(evaluate: Any) -> Any:
    """The :class:`.boundstrain.NodeModel` of a study evaluator (``evaluate.problem``), or None
    when the evaluator is not a study problem or its space has a variable the model does not know."""
    pb = getattr(evaluate, "problem", None)
    if pb is None or not hasattr(pb, "space"):
        return None
    from strainline.optimizer.search.boundstrain import NodeModel

    model = NodeModel(pb)
    return model if model.deps is not None else None


def known_points(evaluate: Evaluator, exact: Evaluator, sizes: np.ndarray, n_obj: int, n_con: int, seed: int,
                 budget: int, space: Any = None) -> tuple[np.ndarray, np.ndarray, dict]:
    """Feasible points of a short evolutionary run, re-evaluated with ``exact`` (the enumeration's
    evaluator): objectives (k, n_obj) and candidate indices (k,), for the dominance bound."""
    from strainline.optimizer.search.evolutionary import evolutionary

    t0 = time.perf_counter()
    res = evolutionary(evaluate, sizes, n_obj, n_con, budget, seed, space=space)
    X = res.archive.X
    if not len(X):
        return np.empty((0, n_obj)), np.empty(0, np.int64), {"evaluations": int(res.evaluated), "points": 0}
    F, G = exact(X)
    F, G = np.asarray(F, float), np.asarray(G, float)
    ok = np.all(np.isfinite(F), axis=1) & (np.all(G <= 0, axis=1) if G.shape[1] else True)
    idx = np.zeros(len(X), np.int64)
    for k in range(sizes.size - 1, -1, -1):          # mixed-radix index, first variable fastest
        idx = idx * int(sizes[k]) + X[:, k]
    return F[ok], idx[ok], {"evaluations": int(res.evaluated), "points": int(ok.sum()),
                            "seconds": round(time.perf_counter() - t0, 3)}


def _dominated(Fl: np.ndarray, start: np.ndarray, KF: np.ndarray, Ki: np.ndarray) -> np.ndarray:
    """Nodes whose objective lower bounds ``Fl`` a known point dominates (strictly, or weakly with
    a smaller index than the node's first candidate ``start``)."""
    out = np.zeros(len(Fl), bool)
    for p, ip in zip(KF, Ki):
        le = np.all(p <= Fl, axis=1)
        if le.any():
            out |= le & (np.any(p < Fl, axis=1) | (ip < start))
    return out


def block_level(sizes: np.ndarray) -> int:
    """Level of the enumerated blocks: the fewest fast variables giving at least :data:`MIN_BLOCK`."""
    P = 1
    for m in range(1, sizes.size + 1):
        P *= int(sizes[m - 1])
        if P >= MIN_BLOCK:
            return m
    return sizes.size


def _reasons(model: Any, m: int, q: np.ndarray, P: list[int], KF: np.ndarray | None,
             Ki: np.ndarray | None) -> np.ndarray:
    """Why each node ``q`` of level ``m`` is skipped: 0 kept, else the 1-based :data:`KINDS` code."""
    pb = model.pb
    lim = pb.space.study.limits
    cons = pb.constraint_names
    b = model.bounds(m, q)
    why = np.zeros(q.size, np.int8)
    code = {k: c for c, k in enumerate(KINDS, 1)}
    tests = []
    if "total_thickness" in cons:
        tests.append((code["thickness"], b["thickness_m"] / (lim.total_thickness_um * 1e-6) - 1.0 > SLACK))
    tests.append((code["line"], ~b["line"]))
    if "leaves" in cons:
        tests.append((code["leaves"], ~b["leaves"]))
    s = np.zeros(q.size, bool)
    if "peak_strain" in cons:
        s |= b["peak"].max(axis=1) * 100.0 / lim.peak_strain_pct - 1.0 > SLACK
    if "signal_strain" in cons:
        s |= b["signal"].max(axis=1) * 100.0 / lim.signal_strain_pct - 1.0 > SLACK
    if "fatigue_life" in cons:
        s |= b["fatigue"] - 1.0 > SLACK
    tests.append((code["strain"], s))
    for c, hit in tests:
        why[(why == 0) & hit] = c
    if KF is not None:
        rest = why == 0
        if rest.any():
            Fl = model.objective_bounds({k: v[rest] for k, v in b.items()})
            d = _dominated(Fl, q[rest] * P[m], KF, Ki)
            why[np.flatnonzero(rest)[d]] = code["dominance"]
    return why


def leaf_share(model: Any, sizes: np.ndarray, known: tuple[np.ndarray, np.ndarray] | None = None,
               n: int = 4096, seed: int = 0) -> float:
    """Share of the blocks of :func:`block_level` that no bound skips, from ``n`` random blocks
    bounded directly (the walk from the root skips no more; for the time projection of ``auto``)."""
    sizes = np.asarray(sizes, np.int64)
    m = block_level(sizes)
    P = [space_size(sizes[:k]) for k in range(sizes.size + 1)]
    KF, Ki = known if known is not None and len(known[0]) else (None, None)
    q = np.random.default_rng(seed).integers(0, P[-1] // P[m], n)
    return float(np.mean(_reasons(model, m, q, P, KF, Ki) == 0))


def node_ranges(model: Any, sizes: np.ndarray, known: tuple[np.ndarray, np.ndarray] | None = None,
                m_final: int | None = None, time_cap: float | None = None) -> tuple[list[tuple[int, int]], dict]:
    """Branch and bound from the root to blocks of level ``m_final``: the index ranges left, and
    ``info`` with the skipped candidates per kind (``skipped_by``), ``skipped``, ``blocks``,
    ``blocks_skipped``, ``block_size``, ``nodes_bounded``. Raises :class:`BoundTimeout` past
    ``time_cap`` seconds."""
    sizes = np.asarray(sizes, np.int64)
    n_var = sizes.size
    m_final = block_level(sizes) if m_final is None else m_final
    KF, Ki = known if known is not None and len(known[0]) else (None, None)
    P = [space_size(sizes[:m]) for m in range(n_var + 1)]
    skipped = dict.fromkeys(KINDS, 0)
    kept: list[np.ndarray] = []
    stats = {"nodes": 0}
    t0 = time.perf_counter()

    def reasons(m: int, q: np.ndarray) -> np.ndarray:
        return _reasons(model, m, q, P, KF, Ki)

    def walk(m: int, q: np.ndarray) -> None:
        for a in range(0, q.size, BATCH):
            if time_cap is not None and time.perf_counter() - t0 > time_cap:
                raise BoundTimeout
            c = q[a:a + BATCH]
            why = reasons(m, c)
            stats["nodes"] += c.size
            for code, kind in enumerate(KINDS, 1):
                skipped[kind] += int(np.count_nonzero(why == code)) * P[m]
            keep = c[why == 0]
            if m == m_final:
                kept.append(keep)
            elif keep.size:
                s = int(sizes[m - 1])
                walk(m - 1, (keep[:, None] * s + np.arange(s)).ravel())

    walk(n_var, np.zeros(1, np.int64))
    keep = np.concatenate(kept) if kept else np.empty(0, np.int64)
    Pf = P[m_final]
    # runs of consecutive kept blocks -> index ranges
    brk = np.flatnonzero(np.diff(keep) != 1) if keep.size else np.empty(0, np.int64)
    starts = np.concatenate([keep[:1], keep[brk + 1]]) if keep.size else keep
    stops = np.concatenate([keep[brk], keep[-1:]]) + 1 if keep.size else keep
    ranges = [(int(s) * Pf, int(e) * Pf) for s, e in zip(starts, stops)]
    total = P[n_var]
    skip = sum(skipped.values())
    return ranges, {"skipped": int(skip), "skipped_by": skipped, "blocks": int(total // Pf),
                    "blocks_skipped": int(total // Pf - keep.size), "block_size": int(Pf),
                    "nodes_bounded": int(stats["nodes"]), "bound_seconds": round(time.perf_counter() - t0, 3),
                    "reason": "branch and bound: thickness, line, leaves, strain and dominance bounds per node"}
