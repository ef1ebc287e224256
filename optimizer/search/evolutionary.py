"""NSGA-II with operators that respect the kind of each choice, seeded from a batched scan,
followed by a Pareto local search around the archive; and plain random search.

* **Operators.** Materials, copper types, placements and the signal layer are unordered: children
  take each variable from either parent (uniform crossover) and a mutation resets it at random.
  Thicknesses and weights are ordered *within* a material: a mutation steps to the next thinner or
  thicker option of the same material, or switches material keeping the nearest thickness
  (:func:`variable_operators` reads which is which from the space; unknown variables are treated
  as unordered). The NSGA-II loop (Deb et al. 2002, IEEE TEVC 6(2)) runs on numpy arrays: pymoo's
  object-per-individual loop cost about 4 ms per evaluation here, far more than the evaluation.
* **Seeding.** A batched random scan (vectorized, far cheaper per candidate than a generation)
  collects feasible points for the first population; its evaluations are counted and reported
  separately from the budget (``info["scan_evaluations"]``).
* **Budget use.** The stagnation stop scales with the budget (a third of the generations the
  budget allows, at least 30); what is left of the budget then goes to a Pareto local search
  (Paquete, Chiarandini & Stuetzle 2004): every single-variable neighbour of each archive point
  not yet explored, in batches, until the archive stops changing; then the two-variable
  neighbours (variables next to each other in the coding first), until the budget is spent; the
  flipped stack of every archive point (:func:`mirror_map`) is a starting point too.
"""
from __future__ import annotations

import time
from typing import Any

import numpy as np

from strainline.optimizer.search.archive import Archive, SearchResult, hypervolume
from strainline.optimizer.search.exhaustive import Evaluator, space_size

#: Scan at most this many candidates per batch while seeding.
SCAN_BATCH = 65536


class VariableOps:
    """Mutation tables of one variable: ``family`` per option (-1: unordered, every option its own),
    ``up``/``down`` the next option of the same family by thickness (itself at the ends), and
    ``nearest[f][k]`` the option of family ``f`` nearest in thickness to option ``k``."""

    def __init__(self, family: np.ndarray, key: np.ndarray | None) -> None:
        family = np.asarray(family, np.int64)
        n = family.size
        self.size = n
        self.ordered = key is not None
        self.up = np.arange(n)
        self.down = np.arange(n)
        fams = np.unique(family)
        self.families = [np.flatnonzero(family == f) for f in fams]
        self.family = np.searchsorted(fams, family)
        self.fam_size = np.array([len(self.families[f]) for f in self.family])
        if key is None:
            self.nearest = None
            return
        key = np.asarray(key, float)
        for members in self.families:
            m = members[np.argsort(key[members], kind="stable")]
            self.up[m[:-1]], self.down[m[1:]] = m[1:], m[:-1]
        self.nearest = np.array([[m[np.argmin(np.abs(key[m] - key[k]))] for k in range(n)] for m in self.families])


def variable_operators(space: Any = None, sizes: np.ndarray | None = None) -> list[VariableOps]:
    """Operator tables per variable of a study space (or, with only ``sizes``, all ordered)."""
    if space is None:
        return [VariableOps(np.zeros(int(s), np.int64), np.arange(int(s), dtype=float)) for s in sizes]
    ops = []
    for v in space.variables:
        name = v.name.split("[")[0]
        if name == "copper" and len(space.cu_opts) == v.size:
            foils = [f for _, f, _ in space.cu_opts]
            ops.append(VariableOps([sorted(set(foils)).index(f) for f in foils], [t for _, _, t in space.cu_opts]))
        elif name == "film" and len(space.film_opts) == v.size:
            ops.append(VariableOps([m for m, _ in space.film_opts], [t for _, t in space.film_opts]))
        elif name == "adhesive" and len(space.adh_opts) == v.size:
            ops.append(VariableOps([m for m, _ in space.adh_opts], [t for _, t in space.adh_opts]))
        elif name == "cover" and len(space.cover_opts) == v.size:
            c = space.cover_opts
            ops.append(VariableOps([o[1] * 10007 + o[3] for o in c], [o[2] + o[4] for o in c]))
        elif name in ("coverage", "line_gap"):
            ops.append(VariableOps(np.zeros(v.size, np.int64), np.arange(v.size, dtype=float)))
        else:                                   # signal layer, placement, anything new: unordered
            ops.append(VariableOps(np.arange(v.size), None))
    return ops


def mirror_map(space: Any) -> np.ndarray | None:
    """Index map of the flipped stack (top <-> bottom) of an unsymmetric study whose signal may sit
    on either face: ``x_flipped = table[k][x[:, src[k]]]`` per variable, as (src, table) pairs in an
    object array; None when a variable has no known mirror. The flipped stack is a different design
    (the inside face of the bend changes) but often a near one, so the local search visits both."""
    if space is None or space.study.stack.symmetric or len(space.sig_opts) < 2:
        return None
    N = space.n_cu
    names = [v.name for v in space.variables]
    col = {n: k for k, n in enumerate(names)}
    place = list(space.place_opts)
    out = []
    for v in space.variables:
        base, _, rest = v.name.partition("[")
        i = rest.rstrip("]")
        ident = np.arange(v.size)
        if v.name == "signal_layer":
            s = list(space.sig_opts)
            if any(N - 1 - o not in s for o in s):
                return None
            out.append((col[v.name], np.array([s.index(N - 1 - o) for o in s])))
        elif base == "copper":
            out.append((col.get(f"copper[{N - 1 - int(i)}]"), ident))
        elif base in ("film", "adhesive"):
            out.append((col.get(f"{base}[{N - 2 - int(i)}]"), ident))
        elif base == "placement":
            flip = [place.index(2 if p == 2 else 1 - p) if (2 if p == 2 else 1 - p) in place else -1 for p in place]
            if min(flip) < 0:
                return None
            out.append((col.get(f"placement[{N - 2 - int(i)}]"), np.array(flip)))
        elif v.name in ("cover[top]", "cover[bottom]"):
            out.append((col.get("cover[bottom]" if i == "top" else "cover[top]"), ident))
        elif base == "coverage":
            out.append((col.get(f"coverage[{N - 2 - int(i)}]"), ident))
        elif v.name == "line_gap":
            out.append((col[v.name], ident))
        else:
            return None
        if out[-1][0] is None:
            return None
    table = np.empty(len(out), object)
    table[:] = out
    return table


def flip(X: np.ndarray, table: np.ndarray) -> np.ndarray:
    """The flipped stacks of rows X (:func:`mirror_map`)."""
    return np.stack([t[X[:, src]] for src, t in table], axis=1)


def mutate(X: np.ndarray, ops: list[VariableOps], rng: np.random.Generator, prob_var: float) -> np.ndarray:
    """Mutate integer rows: each variable with ``prob_var`` (at least one per row)."""
    X = np.array(X, np.int64)
    n, nv = X.shape
    hit = rng.random((n, nv)) < prob_var
    hit[np.arange(n), rng.integers(0, nv, n)] = True
    for k, op in enumerate(ops):
        rows = np.flatnonzero(hit[:, k])
        if not len(rows) or op.size <= 1:
            continue
        cur = X[rows, k]
        u = rng.random(len(rows))
        new = (cur + rng.integers(1, op.size, len(rows))) % op.size        # uniform reset to another option
        if op.ordered:
            step = (u < 0.6) & (op.fam_size[cur] > 1)
            up = rng.random(len(rows)) < 0.5
            s_up, s_dn = op.up[cur], op.down[cur]
            stepped = np.where(up, np.where(s_up != cur, s_up, s_dn), np.where(s_dn != cur, s_dn, s_up))
            switch = (u >= 0.6) & (u < 0.8) & (len(op.families) > 1)
            if switch.any():
                f = (op.family[cur] + rng.integers(1, max(len(op.families), 2), len(rows))) % len(op.families)
                new = np.where(switch, op.nearest[f, cur], new)
            new = np.where(step, stepped, new)
        X[rows, k] = new
    return X


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
    return SearchResult("random", arch, done, space_size(sizes), time.perf_counter() - t0, "budget")


def _scan(evaluate, sizes, arch, rng, want, limit):
    """Random batches into the archive until ``want`` feasible rows or ``limit`` candidates (counts
    only, so the same seed scans the same candidates)."""
    seeds, done = [], 0
    while done < limit and sum(len(s) for s in seeds) < want:
        m = min(SCAN_BATCH, limit - done)
        x = rng.integers(0, sizes, size=(m, sizes.size))
        F, G = evaluate(x)
        arch.add(x, F, G)
        ok = np.all(G <= 0, axis=1) & np.all(np.isfinite(F), axis=1)
        seeds.append(x[ok])
        done += m
    S = np.concatenate(seeds) if seeds else np.empty((0, sizes.size), np.int64)
    return np.unique(S, axis=0)[:want] if len(S) else S, done


def _neighbours(x: np.ndarray, sizes: np.ndarray, d: int) -> np.ndarray:
    """Every point differing from ``x`` in exactly one variable (``d = 0``), or in exactly the two
    variables ``k`` and ``k + d`` for some ``k``."""
    alts = [np.delete(np.arange(int(s)), x[k]) for k, s in enumerate(sizes)]
    out = []
    if d == 0:
        for k, alt in enumerate(alts):
            nb = np.repeat(x[None, :], len(alt), axis=0)
            nb[:, k] = alt
            out.append(nb)
    else:
        for i in range(len(sizes) - d):
            a, b = np.meshgrid(alts[i], alts[i + d], indexing="ij")
            nb = np.repeat(x[None, :], a.size, axis=0)
            nb[:, i], nb[:, i + d] = a.ravel(), b.ravel()
            out.append(nb)
    return np.concatenate(out) if out else np.empty((0, len(sizes)), np.int64)


def _local_search(evaluate, sizes, arch, budget, rng, mirror=None):
    """Pareto local search: the single-variable neighbours of each unexplored archive point until
    the archive stops changing; then, with budget left, the two-variable neighbours, variables next
    to each other in the coding first (a film and its adhesive, an adhesive and its placement)."""
    used = 0
    for d in range(len(sizes)):
        explored: set[bytes] = set()
        while used < budget:
            anchors = arch.X if mirror is None else np.concatenate([arch.X, flip(arch.X, mirror)])
            todo = [x for x in anchors if x.tobytes() not in explored]
            if not todo:
                break
            batch, held = [], 0
            for i in rng.permutation(len(todo)):
                x = todo[i]
                explored.add(x.tobytes())
                batch.append(_neighbours(x, sizes, d))
                held += len(batch[-1])
                if held >= 4096:
                    break
            xb = np.concatenate(batch)[: budget - used]
            F, G = evaluate(xb)
            arch.add(xb, F, G)
            used += len(xb)
        if used >= budget:
            return used, f"budget (local search at {'one-variable' if d == 0 else f'two-variable, distance {d},'} moves)"
    return used, "local search converged (every archive point's one- and two-variable neighbours evaluated)"


def _crowding(F: np.ndarray) -> np.ndarray:
    """Crowding distance of one front (Deb et al. 2002): boundary points infinite."""
    n, m = F.shape
    d = np.zeros(n)
    if n <= 2:
        return np.full(n, np.inf)
    for k in range(m):
        o = np.argsort(F[:, k], kind="stable")
        f = F[o, k]
        span = f[-1] - f[0]
        d[o[0]] = d[o[-1]] = np.inf
        if span > 0:
            d[o[1:-1]] += (f[2:] - f[:-2]) / span
    return d


def rank_and_crowding(F: np.ndarray, cv: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Non-dominated rank and crowding distance under Deb's feasibility rules: feasible points by
    non-dominated sorting; infeasible ones after them, ordered by total violation."""
    n = len(F)
    rank = np.empty(n, np.int64)
    crowd = np.zeros(n)
    idx = np.flatnonzero(cv <= 0)
    Ff = F[idx]
    # dom[i, j]: feasible point j dominates feasible point i (a population is small: one matrix)
    le = np.ones((len(idx), len(idx)), bool)
    lt = np.zeros((len(idx), len(idx)), bool)
    for k in range(F.shape[1]):
        le &= Ff[None, :, k] <= Ff[:, None, k]
        lt |= Ff[None, :, k] < Ff[:, None, k]
    dom = le & lt
    alive = np.ones(len(idx), bool)
    r = 0
    while alive.any():
        m = alive & ~(dom[:, alive].any(axis=1))
        front = idx[m]
        rank[front] = r
        crowd[front] = _crowding(F[front])
        alive &= ~m
        r += 1
    bad = np.flatnonzero(cv > 0)
    rank[bad[np.argsort(cv[bad], kind="stable")]] = r + np.arange(len(bad))
    return rank, crowd


def _unique_new(X: np.ndarray, known: np.ndarray) -> np.ndarray:
    """Rows of X that are neither in ``known`` nor repeated earlier in X."""
    if not len(X):
        return X
    allx = np.concatenate([known, X])
    _, first = np.unique(allx, axis=0, return_index=True)
    keep = np.zeros(len(allx), bool)
    keep[first] = True
    return X[keep[len(known):]]


def evolutionary(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, n_con: int, budget: int, seed: int,
                 pop_size: int = 100, stagnation: int | None = None, progress: Any = None,
                 hv_bounds: tuple[np.ndarray, np.ndarray] | None = None, space: Any = None,
                 scan: int | None = None, local_search: bool = True) -> SearchResult:
    """NSGA-II (Deb et al. 2002) with kind-aware operators, a seeding scan and a Pareto local search.

    The generational loop is NSGA-II as published: binary tournaments on (rank, crowding),
    offspring by uniform crossover (probability 0.9) and :func:`mutate`, duplicates removed,
    elitist survival of the best ``pop_size`` of parents and offspring by non-dominated rank and
    crowding distance, constraints by Deb's feasibility rules. It is written on numpy arrays (a
    generation costs about a millisecond besides the evaluation).

    Parameters
    ----------
    evaluate : callable
        ``evaluate(x) -> (F, G)``.
    sizes : array of int
        Number of values of each variable.
    n_obj, n_con : int
    budget : int
        Evaluations of the generations and the local search.
    seed : int
        Seed of every random choice (same seed, same front).
    pop_size : int
    stagnation : int, optional
        Generations without an archive change that end the generations (default: a third of the
        generations the budget allows, at least 30).
    hv_bounds : (ideal, nadir), optional
        Record the archive hypervolume after every generation (``history``).
    space : Space, optional
        The study space, for the operator kinds (:func:`variable_operators`).
    scan : int, optional
        Most candidates of the seeding scan (default ``50 * budget``; it stops once it has a
        population of feasible points).
    local_search : bool
        Spend what the generations leave of the budget on the Pareto local search.
    """
    sizes = np.asarray(sizes, np.int64)
    ops = variable_operators(space, sizes)
    rng = np.random.default_rng(seed)
    arch = Archive(n_obj, sizes.size)
    t0 = time.perf_counter()
    seeds, scanned = _scan(evaluate, sizes, arch, rng, pop_size, 50 * budget if scan is None else scan)
    stag = stagnation if stagnation is not None else max(30, budget // pop_size // 3)
    used = 0

    def run(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        nonlocal used
        F, G = evaluate(x)
        arch.add(x, F, G)
        used += len(x)
        cv = np.maximum(G, 0.0).sum(axis=1) if G.shape[1] else np.zeros(len(x))
        bad = ~np.all(np.isfinite(F), axis=1) | ~np.isfinite(cv)
        return np.where(np.isfinite(F), F, 1e30), np.where(bad & (cv <= 0), 1e30, np.where(np.isfinite(cv), cv, 1e30))

    fill = rng.integers(0, sizes, size=(pop_size * 2, sizes.size))
    X = _unique_new(np.concatenate([seeds, fill]), np.empty((0, sizes.size), np.int64))[: min(pop_size, budget)]
    F, cv = run(X)
    rank, crowd = rank_and_crowding(F, cv)
    quiet, gens, history, stopped = 0, 0, [], "budget"
    last_F = arch.F.copy()
    while used < budget:
        n_off = min(pop_size, budget - used)
        # binary tournaments on (rank, crowding)
        a, b = rng.integers(0, len(X), (2, 2 * n_off))
        better_a = (rank[a] < rank[b]) | ((rank[a] == rank[b]) & (crowd[a] >= crowd[b]))
        par = np.where(better_a, a, b).reshape(2, n_off)
        p1, p2 = X[par[0]], X[par[1]]
        swap = (rng.random(p1.shape) < 0.5) & (rng.random((n_off, 1)) < 0.9)
        child = mutate(np.where(swap, p2, p1), ops, rng, 1.0 / sizes.size)
        child = _unique_new(child, X)
        if not len(child):
            child = _unique_new(mutate(X[rng.integers(0, len(X), n_off)], ops, rng, 2.0 / sizes.size), X)
            if not len(child):
                stopped = "no new candidates (the population covers its neighbourhood)"
                break
        Fc, cvc = run(child)
        X, F, cv = np.concatenate([X, child]), np.concatenate([F, Fc]), np.concatenate([cv, cvc])
        rank, crowd = rank_and_crowding(F, cv)
        keep = np.lexsort((-crowd, rank))[:pop_size]
        X, F, cv, rank, crowd = X[keep], F[keep], cv[keep], rank[keep], crowd[keep]
        gens += 1
        same = arch.F.shape == last_F.shape and np.array_equal(arch.F, last_F)
        quiet = quiet + 1 if same else 0
        last_F = arch.F.copy()
        if hv_bounds is not None:
            history.append((used, hypervolume(arch.F, *hv_bounds)))
        if progress is not None:
            progress.update(min(used, budget), budget)
        if quiet >= stag and arch.feasible > 0:
            stopped = f"stagnation ({stag} generations without a new front point)"
            break
    gen_used = used
    ls_used = 0
    if local_search and used < budget and arch.feasible > 0:
        ls_used, why = _local_search(evaluate, sizes, arch, budget - used, rng, mirror_map(space))
        stopped = f"{stopped}; then {why}"
        if progress is not None:
            progress.update(min(used + ls_used, budget), budget)
    info = {"generations": gens, "generation_evaluations": gen_used, "local_search_evaluations": ls_used,
            "scan_evaluations": scanned, "scan_feasible": int(len(seeds)), "stagnation_generations": stag}
    # evaluated counts every candidate the run evaluated, the seeding scan included (info splits it)
    return SearchResult("evolutionary", arch, gen_used + ls_used + scanned, space_size(sizes),
                        time.perf_counter() - t0, stopped, history, info)
