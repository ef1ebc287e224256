"""NSGA-II with operators that respect the kind of each choice, seeded by construction from the
study's tables, followed by a Pareto local search around the archive; and plain random search.

Every candidate the run evaluates counts in its budget, seeding included (``info`` splits the
evaluations by phase), and no candidate is evaluated twice.

* **Seeding** (:mod:`.seeding`). With a study problem the first candidates are constructed from
  its line table (the line variables of every seed come from a combination whose row meets every
  line constraint) and its per-option thicknesses (the stack within the thickness limit), and the
  sampling weights follow the elite of every evaluated batch (cross-entropy method). Seeding
  stops when it holds a population of feasible points or has spent its share of the budget
  (``seed_share``); the first population is the best of it by Deb's feasibility rules.
* **Operators.** Materials, copper types, placements and the signal layer are unordered: children
  take each variable from either parent (uniform crossover) and a mutation resets it at random.
  Thicknesses and weights are ordered *within* a material: a mutation steps to the next thinner or
  thicker option of the same material, or switches material keeping the nearest thickness
  (:func:`variable_operators` reads which is which from the space; unknown variables are treated
  as unordered). The NSGA-II loop (Deb et al. 2002, IEEE TEVC 6(2)) runs on numpy arrays: pymoo's
  object-per-individual loop cost about 4 ms per evaluation here, far more than the evaluation.
* **Budget use.** The stagnation stop scales with the budget (a third of the generations the
  budget allows, at least 30); what is left then goes to a Pareto local search
  (:mod:`.localsearch`).
"""
from __future__ import annotations

import time
from typing import Any

import numpy as np

from strainline.optimizer.search.archive import Archive, SearchResult, hypervolume
from strainline.optimizer.search.exhaustive import Evaluator, space_size
from strainline.optimizer.search.localsearch import Seen, Twins, flip, mirror_map  # noqa: F401
from strainline.optimizer.search.localsearch import local_search as pareto_local_search
from strainline.optimizer.search.seeding import RandomSeeder, build_seeder

#: Share of the budget the seeding may spend (it stops earlier with a population of feasible points).
SEED_SHARE = 0.1


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


def _seed(evaluate, seeder, rng, seen, run, pop_size: int, limit: int):
    """Evaluate constructed seeds in batches of ``pop_size`` until ``pop_size`` of them are
    feasible or ``limit`` are spent; the first population is the best by rank and crowding."""
    Xs, Fs, cvs, used, stale = [], [], [], 0, 0
    while used < limit and sum(int(np.sum(c <= 0)) for c in cvs) < pop_size and stale < 20:
        X = seen.new(seeder.sample(min(pop_size, limit - used), rng))
        if not len(X):
            stale += 1                      # the seeder keeps drawing evaluated points
            continue
        F, cv = run(X)
        seeder.learn(X, F, cv)
        Xs.append(X), Fs.append(F), cvs.append(cv)
        used += len(X)
    X, F, cv = np.concatenate(Xs), np.concatenate(Fs), np.concatenate(cvs)
    rank, crowd = rank_and_crowding(F, cv)
    keep = np.lexsort((-crowd, rank))[:pop_size]
    return X[keep], F[keep], cv[keep], used, int(np.sum(cv <= 0))


def evolutionary(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, n_con: int, budget: int, seed: int,
                 pop_size: int = 100, stagnation: int | None = None, progress: Any = None,
                 hv_bounds: tuple[np.ndarray, np.ndarray] | None = None, space: Any = None,
                 seeder: Any = None, seed_share: float = SEED_SHARE, local_search: bool = True) -> SearchResult:
    """NSGA-II (Deb et al. 2002) with kind-aware operators, constructed seeds and a Pareto local search.

    The generational loop is NSGA-II as published: binary tournaments on (rank, crowding),
    offspring by uniform crossover (probability 0.9) and :func:`mutate`, candidates evaluated
    before dropped, elitist survival of the best ``pop_size`` of parents and offspring by
    non-dominated rank and crowding distance, constraints by Deb's feasibility rules (Deb 2000,
    CMAME 186). It is written on numpy arrays (a generation costs about a millisecond besides the
    evaluation).

    Parameters
    ----------
    evaluate : callable
        ``evaluate(x) -> (F, G)``. When it carries the study problem (``evaluate.problem``, as
        :class:`.parallel.ProblemEvaluator` does) the seeds are constructed from its tables.
    sizes : array of int
        Number of values of each variable.
    n_obj, n_con : int
    budget : int
        Most candidate evaluations of the whole run: seeding, generations and local search.
    seed : int
        Seed of every random choice (same seed, same front).
    pop_size : int
    stagnation : int, optional
        Generations without an archive change that end the generations (default: a third of the
        generations the budget allows, at least 30).
    hv_bounds : (ideal, nadir), optional
        Record the archive hypervolume after every generation (``history``).
    space : Space, optional
        The study space, for the operator kinds (:func:`variable_operators`) and the seeder.
    seeder : optional
        An object with ``sample(n, rng)``, ``learn(X, F, cv)`` and ``report()``
        (:mod:`.seeding`); default :func:`.seeding.build_seeder` of the space and problem, or
        uniform random grid points.
    seed_share : float
        Share of the budget the seeding may spend (at least one population).
    local_search : bool
        Spend what the generations leave of the budget on the Pareto local search.
    """
    sizes = np.asarray(sizes, np.int64)
    problem = getattr(evaluate, "problem", None)
    if space is None and problem is not None:
        space = problem.space
    ops = variable_operators(space, sizes)
    rng = np.random.default_rng(seed)
    t0 = time.perf_counter()
    if seeder is None:
        seeder = build_seeder(space, problem, sizes) if space is not None else RandomSeeder(sizes)
    arch = Archive(n_obj, sizes.size)
    seen, twins = Seen(sizes), Twins(sizes.size)
    stag = stagnation if stagnation is not None else max(30, budget // pop_size // 3)
    used = 0

    def run(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        nonlocal used
        seen.add(x)
        F, G = evaluate(x)
        arch.add(x, F, G)
        twins.add(x, F, G, arch)
        used += len(x)
        cv = np.maximum(G, 0.0).sum(axis=1) if G.shape[1] else np.zeros(len(x))
        bad = ~np.all(np.isfinite(F), axis=1) | ~np.isfinite(cv)
        return np.where(np.isfinite(F), F, 1e30), np.where(bad & (cv <= 0), 1e30, np.where(np.isfinite(cv), cv, 1e30))

    limit = min(budget, max(pop_size, int(seed_share * budget)))
    X, F, cv, seed_used, seed_feasible = _seed(evaluate, seeder, rng, seen, run, pop_size, limit)
    rank, crowd = rank_and_crowding(F, cv)
    quiet, empty, gens, history, stopped = 0, 0, 0, [], "budget"
    last_F = arch.F.copy()
    while used < budget:
        n_off = min(pop_size, budget - used)
        # binary tournaments on (rank, crowding)
        a, b = rng.integers(0, len(X), (2, 2 * n_off))
        better_a = (rank[a] < rank[b]) | ((rank[a] == rank[b]) & (crowd[a] >= crowd[b]))
        par = np.where(better_a, a, b).reshape(2, n_off)
        p1, p2 = X[par[0]], X[par[1]]
        swap = (rng.random(p1.shape) < 0.5) & (rng.random((n_off, 1)) < 0.9)
        child = seen.new(mutate(np.where(swap, p2, p1), ops, rng, 1.0 / sizes.size))
        child = child[seeder.screen(child)] if len(child) else child
        if not len(child):
            child = seen.new(mutate(X[rng.integers(0, len(X), n_off)], ops, rng, 2.0 / sizes.size))
            child = child[seeder.screen(child)] if len(child) else child
        if not len(child):              # a generation without new candidates is a quiet one
            empty += 1
            quiet += 1
            if quiet >= stag and arch.feasible > 0:
                stopped = f"stagnation ({stag} generations without a new front point)"
                break
            if empty >= 50:
                stopped = "no new candidates (the population covers its neighbourhood)"
                break
            continue
        empty = 0
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
    gen_used = used - seed_used
    ls_used = 0
    if local_search and used < budget and arch.feasible > 0:
        ls_used, why = pareto_local_search(evaluate, sizes, arch, budget - used, rng, seen, mirror_map(space),
                                             twins=twins, screen=seeder.screen)
        used += ls_used
        stopped = f"{stopped}; then {why}"
        if progress is not None:
            progress.update(min(used, budget), budget)
    info = {"generations": gens, "scan_evaluations": seed_used, "scan_feasible": seed_feasible,
            "generation_evaluations": gen_used, "local_search_evaluations": ls_used,
            "stagnation_generations": stag, "seeding": seeder.report()}
    # evaluated counts every candidate the run evaluated: seeding, generations and local search
    return SearchResult("evolutionary", arch, used, space_size(sizes), time.perf_counter() - t0, stopped,
                        history, info)
