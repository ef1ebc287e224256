"""Search drivers: exact enumeration (on every core or a Dask cluster), NSGA-II, and ``auto``.

All drivers work on an *evaluator*: any callable ``evaluate(x) -> (F, G)`` taking integer vectors
(n, n_var) and returning objectives (n, n_obj, minimized) and constraints (n, n_con, feasible where
every column is <= 0). The study problem (:class:`strainline.optimizer.search.problem.Problem`) is one;
the tests and benchmarks also use small synthetic ones.

* :class:`Archive` -- a streaming exact non-dominated filter (:mod:`.archive`).
* :func:`exhaustive` -- enumerates every index of a mixed-radix space in vectorized chunks (or,
  for a study problem's evaluator and a large space, the fused compiled kernel of :mod:`.fused`),
  in index ranges on ``workers`` local processes or on a Dask cluster (:mod:`.parallel`); the
  front is the same, bit for bit, however the work is split. Branch and bound (:mod:`.bounds`)
  first leaves out the blocks no candidate of which can be feasible or on the front.
* :func:`evolutionary` -- NSGA-II with categorical and ordered operators, seeded by construction
  from the line table and the per-option thicknesses and screened by them (:mod:`.seeding`), with
  a Pareto local search (:mod:`.localsearch`); every evaluation counts in the budget.
* :func:`search` -- ``auto`` measures the enumeration rate on the first chunks, projects the time
  of the whole space over the workers and enumerates when that fits the time limit (default
  :data:`AUTO_TIME_LIMIT_S`); an explicit exhaustive run projected past :data:`REFUSE_S` needs
  ``force``.
"""
from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

import numpy as np

from strainline.optimizer.search.archive import (  # noqa: F401  (re-exported)
    Archive, SearchResult, _dominated_by, additive_epsilon, hypervolume, nondominated_mask, normalize)
from strainline.optimizer.search.evolutionary import evolutionary, random_search  # noqa: F401
from strainline.optimizer.search.exhaustive import (  # noqa: F401  (re-exported)
    CHUNK, Evaluator, _ChunkDigits, _digits, exhaustive_pieces, exhaustive_range, space_size)
from strainline.optimizer.search.parallel import default_workers, run_ranges

#: ``auto`` enumerates when the projected wall time is at most this (seconds).
AUTO_TIME_LIMIT_S = 60.0
#: An exhaustive run projected longer than this (a day) needs ``force``.
REFUSE_S = 86400.0
#: Seconds of enumeration that measure the rate before the projection.
PROBE_S = 0.3
#: Spaces from this size on try the block bounds first (:mod:`.bounds`).
BOUND_MIN = 20_000_000
#: Evaluations of the evolutionary pre-run whose feasible points feed the dominance bound.
PRE_BUDGET = 2000
#: Below this projected time (s) the enumeration stays in this process (no pool to start).
POOL_MIN_S = 1.5


def _progress_fn(progress: Any, total: int, done0: int = 0) -> Callable[[int], None] | None:
    if progress is None:
        return None
    state = {"done": done0}

    def step(n: int) -> None:
        state["done"] += n
        progress.update(state["done"], total)
    return step


def _probe(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, ranges: list[tuple[int, int]], chunk: int,
           progress: Any, total: int) -> tuple[Archive, list[tuple[int, int]], int, float]:
    """Enumerate the first chunks of ``ranges`` for :data:`PROBE_S`; return the archive, the ranges
    left, the count done and the rate."""
    arch = Archive(n_obj, sizes.size)
    step = _ChunkDigits(sizes, chunk).chunk
    t0 = time.perf_counter()
    done = 0
    left = list(ranges)
    while left and (time.perf_counter() - t0 < PROBE_S or done == 0):
        pieces, held = [], 0
        while left and held < step:             # about one chunk, on the chunk grid
            a, b = left[0]
            e = min(b, (a // step + 1) * step, a + step - held)
            pieces.append((a, e))
            held += e - a
            left[0] = (e, b)
            if e >= b:
                left.pop(0)
        exhaustive_pieces(evaluate, sizes, n_obj, pieces, chunk, archive=arch)
        done += held
        if progress is not None:
            progress.update(done, total)
    dt = max(time.perf_counter() - t0, 1e-9)
    return arch, left, done, max(done / dt, 1.0)       # every block skipped: nothing left to rate


def exhaustive(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, chunk: int = CHUNK, progress: Any = None,
               workers: int = 1, dask_address: str | None = None, archive: Archive | None = None,
               start: int = 0, ranges: list[tuple[int, int]] | None = None) -> SearchResult:
    """Evaluate every point of the mixed-radix space ``sizes``; exact front.

    Parameters
    ----------
    evaluate : callable
        ``evaluate(x) -> (F, G)`` for integer vectors (n, n_var); picklable for ``workers > 1``
        or a Dask cluster.
    sizes : array of int
        Number of values of each variable (first variable fastest in the index).
    n_obj : int
    chunk : int
        Candidates per vectorized batch (memory is bounded by the chunk and the front).
    progress : Progress, optional
        Gets ``update(done, total)``.
    workers : int
        Local processes (1 = this one).
    dask_address : str, optional
        Enumerate on the Dask cluster of this scheduler instead.
    archive, start : optional
        Continue an archive that already holds the indices below ``start``.
    ranges : list of (start, stop), optional
        Enumerate only these (the blocks a bound leaves, :mod:`.bounds`; ``archive`` then holds
        the rest of the feasible points).
    """
    sizes = np.asarray(sizes, np.int64)
    total = space_size(sizes)
    if total >= 2**62:
        raise ValueError("space too large to enumerate")
    ranges = [(start, total)] if ranges is None else ranges
    todo = sum(b - a for a, b in ranges)
    t0 = time.perf_counter()
    arch, used = run_ranges(evaluate, sizes, n_obj, 0, 0, workers, dask_address,
                            _progress_fn(progress, total, total - todo), chunk, archive, ranges=ranges)
    dt = time.perf_counter() - t0
    info = {"rate_per_s": round(todo / max(dt, 1e-9)), "workers": used,
            "backend": "dask" if dask_address else ("processes" if used > 1 else "in-process")}
    return SearchResult("exhaustive", arch, todo, total, dt, "complete", info=info)


def _rate(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, size: int, seed: int) -> float:
    """Candidates per second of ``evaluate``'s enumeration, timed on a random index range (about
    :data:`PROBE_S` / 3 s; the result is discarded)."""
    start = int(np.random.default_rng(seed).integers(0, max(size - 2 * CHUNK, 1)))
    n, done, t0 = CHUNK, 0, time.perf_counter()
    while time.perf_counter() - t0 < PROBE_S / 3 and start + done + n <= size:
        exhaustive_pieces(evaluate, sizes, n_obj, [(start + done, start + done + n)])
        done += n
        n *= 2
    return max(done, 1) / max(time.perf_counter() - t0, 1e-9)


def _tree_bounds(bnd: Any, model: Any, evaluate: Evaluator, ev_ex: Evaluator, sizes: np.ndarray, n_obj: int,
                 n_con: int, seed: int, space: Any, cap: float | None,
                 par: int = 1) -> tuple[list | None, dict]:
    """Branch and bound over the tree (:func:`.bounds.node_ranges`) with the feasible points of a
    short evolutionary pre-run (:data:`PRE_BUDGET` evaluations) for the dominance bound. ``cap``
    (``auto``: the time limit): the blocks left are first estimated from random blocks
    (:func:`.bounds.leaf_share`) at the enumeration's measured rate over ``par`` workers, and a
    projection past ``cap`` gives None ranges at once; the pass itself may take half of ``cap``."""
    t0 = time.perf_counter()
    KF, Ki, kinfo = bnd.known_points(evaluate, ev_ex, sizes, n_obj, n_con, seed, PRE_BUDGET, space)
    if cap is not None:
        size = space_size(sizes)
        share = bnd.leaf_share(model, sizes, (KF, Ki), seed=seed)
        guess = size * share / _rate(ev_ex, sizes, n_obj, size, seed) / max(par, 1)
        if guess > cap:
            return None, {"known_points": kinfo, "estimated_kept_share": round(share, 6),
                          "projected_s": round(guess, 1),
                          "reason": "the blocks no bound skips (estimated from 4,096 random blocks) would take past "
                                    "the time limit to enumerate"}
        cap = 0.5 * cap
    try:
        ranges, info = bnd.node_ranges(model, sizes, (KF, Ki), time_cap=cap)
    except bnd.BoundTimeout:
        return None, {"known_points": kinfo, "projected_s": round(time.perf_counter() - t0, 1),
                      "reason": "the bound pass alone ran past the time limit"}
    info["known_points"] = kinfo
    return ranges, info


def choose_method(method: str, space_size: int, rate_per_s: float = 1e6, workers: int = 1,
                  time_limit_s: float = AUTO_TIME_LIMIT_S) -> str:
    """``auto`` -> ``exhaustive`` when ``space_size / (rate_per_s * workers)`` fits ``time_limit_s``."""
    if method != "auto":
        return method
    if space_size >= 2**62:
        return "evolutionary"
    return "exhaustive" if space_size / (rate_per_s * max(workers, 1)) <= time_limit_s else "evolutionary"


def _fmt_s(s: float) -> str:
    if s < 120:
        return f"{s:.0f} s"
    if s < 7200:
        return f"{s / 60:.0f} min"
    if s < 2 * 86400:
        return f"{s / 3600:.1f} h"
    return f"{s / 86400:.1f} days"


def search(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, n_con: int, method: str = "auto",
           budget: int = 20000, seed: int = 1, pop_size: int = 100, progress: Any = None,
           evaluate_exhaustive: Evaluator | None = None, workers: int | None = None,
           dask_address: str | None = None, time_limit_s: float = AUTO_TIME_LIMIT_S, force: bool = False,
           notify: Callable[[str], None] | None = None, space: Any = None,
           bound: tuple[Evaluator, int] | None = None) -> SearchResult:
    """Run the chosen search method.

    ``auto`` and ``exhaustive`` first enumerate the first chunks for :data:`PROBE_S` seconds (kept:
    the enumeration continues from there) to measure the rate, and project the whole space's wall
    time over the workers. ``auto`` enumerates when the projection is at most ``time_limit_s``,
    else runs the evolutionary search. ``exhaustive`` reports a projection above 10 s through
    ``notify`` and refuses one above :data:`REFUSE_S` unless ``force``.

    ``evaluate_exhaustive`` (optional) is used by the enumeration instead of ``evaluate``; it may
    skip expensive work for candidates a cheap constraint already rules out, as long as it never
    reports such a candidate feasible. It must pickle for more than one worker. ``space`` (the
    study's :class:`Space`) tells the evolutionary operators which choices are ordered.

    ``bound = (evaluate, column)`` names an additive limit column (the total thickness) of an
    evaluator that computes it for every row: spaces of at least :data:`BOUND_MIN` candidates
    then skip the blocks whose thinnest stack is over the limit (:mod:`.bounds`; the front is
    unchanged). When that evaluator is a study problem's (``evaluate.problem``, bonded region) the
    branch and bound of :func:`.bounds.node_ranges` runs instead: a :data:`PRE_BUDGET`-evaluation
    evolutionary pre-run gives known feasible points, and nodes of the index tree are skipped by
    their thickness, line, strain and dominance lower bounds (``info["bounds"]["skipped_by"]``;
    the front is exactly that of the plain enumeration; under ``auto`` the pass may take half the
    time limit). ``rate_per_s`` in ``info`` counts the whole space over the wall time.
    """
    from strainline.optimizer.errors import StudyError

    sizes = np.asarray(sizes, np.int64)
    size = space_size(sizes)
    workers = default_workers() if workers is None else max(1, int(workers))
    ev_ex = evaluate_exhaustive or evaluate
    if method == "exhaustive" and size >= 2**62:
        raise StudyError(f"the space has {size:.3e} candidates, too many to enumerate; use 'evolutionary'",
                         "search.method")
    if method in ("auto", "exhaustive") and size < 2**62:
        t0 = time.perf_counter()
        ranges, binfo = [(0, size)], {}
        par = 1 if dask_address else workers
        if dask_address:
            from strainline.optimizer.search.parallel import cluster_threads
            par = cluster_threads(dask_address)
        model = None
        if bound is not None and size >= BOUND_MIN:
            from strainline.optimizer.search import bounds as bnd

            model = bnd.node_model(bound[0])
        if model is not None:
            ev_ex = ev_ex.sized(size) if hasattr(ev_ex, "sized") else ev_ex
            ranges, binfo = _tree_bounds(bnd, model, evaluate, ev_ex, sizes, n_obj, n_con, seed, space,
                                         time_limit_s if method == "auto" else None, par)
        elif bound is not None and size >= BOUND_MIN:
            rng = np.random.default_rng(seed)
            t1 = time.perf_counter()
            split = bnd.find_split(bound[0], sizes, bound[1], rng)
            if split is not None:
                share = bnd.estimate_skip(bound[0], sizes, bound[1], split, rng)
                P = space_size(sizes[:split[0]])
                rate0 = (4 * P + 4096) / max(time.perf_counter() - t1, 1e-9)
                guess = (size // P + size * (1.0 - share)) / rate0 / par
                if method == "auto" and guess > time_limit_s:
                    ranges = None            # even with the bound the space is too large: skip the pass
                    binfo = {"estimated_skip_share": round(share, 4), "projected_s": round(guess, 1)}
                else:
                    ranges, binfo = bnd.surviving_ranges(bound[0], sizes, bound[1], seed, split)
        if ranges is None:
            if notify is not None:
                notify(f"auto: an exhaustive run of {size:,} candidates is projected at {_fmt_s(binfo['projected_s'])}"
                       f" even with the {'block bounds' if 'known_points' in binfo else 'thickness bound'}"
                       f" (limit {_fmt_s(time_limit_s)}); running the evolutionary search")
            res = evolutionary(evaluate, sizes, n_obj, n_con, budget, seed, pop_size=pop_size, progress=progress,
                               space=space)
            res.info.update(bounds=binfo, time_limit_s=time_limit_s,
                            auto="evolutionary: projected exhaustive time over the limit")
            return res
        todo = sum(b - a for a, b in ranges)
        # the enumeration's evaluator for this many candidates (the fused kernel for large ones,
        # compiled before the probe times it)
        ev_ex = ev_ex.sized(todo) if hasattr(ev_ex, "sized") else ev_ex
        arch, left, done, rate = _probe(ev_ex, sizes, n_obj, ranges, CHUNK, progress, size)
        remaining = (todo - done) / rate
        projected = remaining / par
        info = {"rate_per_s_probe": round(rate), "projected_s": round(projected + (done / rate), 3),
                "time_limit_s": time_limit_s}
        if binfo:
            info["bounds"] = binfo
        m = choose_method(method, todo, rate, par, time_limit_s)
        if m == "exhaustive":
            if projected > REFUSE_S and not force:
                raise StudyError(
                    f"an exhaustive run of {size:.3e} candidates is projected at {_fmt_s(projected)} "
                    f"({rate:,.0f} candidates/s on each of {par} workers); use --force to run it anyway, "
                    "or 'evolutionary'", "search.method")
            if projected > 10 and notify is not None:
                notify(f"exhaustive search of {size:,} candidates: projected {_fmt_s(projected)} on {par} "
                       f"worker{'s' if par > 1 else ''} ({rate:,.0f} candidates/s each)")
            use = par if (dask_address or remaining > POOL_MIN_S) else 1
            res = exhaustive(ev_ex, sizes, n_obj, progress=progress, workers=use, dask_address=dask_address,
                             archive=arch, ranges=left)
            res.seconds = time.perf_counter() - t0
            res.evaluated = todo + int(binfo.get("bound_evaluations", 0)) + \
                int(binfo.get("known_points", {}).get("evaluations", 0))
            res.info.update(info, rate_per_s=round(size / max(res.seconds, 1e-9)))
            return res
        if notify is not None:
            notify(f"auto: an exhaustive run of {size:,} candidates is projected at {_fmt_s(projected)} "
                   f"(limit {_fmt_s(time_limit_s)}); running the evolutionary search")
        res = evolutionary(evaluate, sizes, n_obj, n_con, budget, seed, pop_size=pop_size, progress=progress,
                           space=space)
        res.info.update(info, auto="evolutionary: projected exhaustive time over the limit")
        return res
    return evolutionary(evaluate, sizes, n_obj, n_con, budget, seed, pop_size=pop_size, progress=progress,
                        space=space)
