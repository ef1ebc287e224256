"""NSGA-II with operators that respect the kind of each choice, seeded from a batched scan,
followed by a Pareto local search around the archive; and plain random search.

* **Operators.** Materials, copper types, placements and the signal layer are unordered: children
  take each variable from either parent (uniform crossover) and a mutation resets it at random.
  Thicknesses and weights are ordered *within* a material: a mutation steps to the next thinner or
  thicker option of the same material, or switches material keeping the nearest thickness
  (:func:`variable_operators` reads which is which from the space; unknown variables are treated
  as unordered). NSGA-II itself is pymoo's (Deb et al. 2002, IEEE TEVC 6(2)).
* **Seeding.** A batched random scan (vectorized, far cheaper per candidate than a generation)
  collects feasible points for the first population; its evaluations are counted and reported
  separately from the budget (``info["scan_evaluations"]``).
* **Budget use.** The stagnation stop scales with the budget (a third of the generations the
  budget allows, at least 30); what is left of the budget then goes to a Pareto local search
  (Paquete, Chiarandini & Stuetzle 2004): every single-variable neighbour of each archive point
  not yet explored, in batches, until the archive stops changing or the budget is spent.
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


def _scan(evaluate, sizes, arch, rng, want, limit, t_limit):
    """Random batches into the archive until ``want`` feasible rows or ``limit`` candidates."""
    seeds, done, t0 = [], 0, time.perf_counter()
    while done < limit and sum(len(s) for s in seeds) < want and time.perf_counter() - t0 < t_limit:
        m = min(SCAN_BATCH, limit - done)
        x = rng.integers(0, sizes, size=(m, sizes.size))
        F, G = evaluate(x)
        arch.add(x, F, G)
        ok = np.all(G <= 0, axis=1) & np.all(np.isfinite(F), axis=1)
        seeds.append(x[ok])
        done += m
    S = np.concatenate(seeds) if seeds else np.empty((0, sizes.size), np.int64)
    return np.unique(S, axis=0)[:want] if len(S) else S, done


def _local_search(evaluate, sizes, arch, budget, explored):
    """Pareto local search: every single-variable neighbour of each unexplored archive point."""
    used = 0
    while used < budget:
        todo = [x for x in arch.X if x.tobytes() not in explored]
        if not todo:
            return used, "local search converged (every archive point's neighbours evaluated)"
        batch = []
        for x in todo:
            explored.add(x.tobytes())
            for k, s in enumerate(sizes):
                nb = np.repeat(x[None, :], int(s) - 1, axis=0)
                nb[:, k] = np.delete(np.arange(int(s)), x[k])
                batch.append(nb)
            if sum(len(b) for b in batch) >= 4096:
                break
        xb = np.concatenate(batch)[: budget - used]
        F, G = evaluate(xb)
        arch.add(xb, F, G)
        used += len(xb)
    return used, "budget"


def evolutionary(evaluate: Evaluator, sizes: np.ndarray, n_obj: int, n_con: int, budget: int, seed: int,
                 pop_size: int = 100, stagnation: int | None = None, progress: Any = None,
                 hv_bounds: tuple[np.ndarray, np.ndarray] | None = None, space: Any = None,
                 scan: int | None = None, local_search: bool = True) -> SearchResult:
    """NSGA-II (pymoo) with kind-aware operators, a seeding scan and a Pareto local search.

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
        population of feasible points, or after 2 s).
    local_search : bool
        Spend what the generations leave of the budget on the Pareto local search.
    """
    from pymoo.algorithms.moo.nsga2 import NSGA2
    from pymoo.core.mutation import Mutation
    from pymoo.core.problem import Problem as PymooProblem
    from pymoo.operators.crossover.ux import UniformCrossover
    from pymoo.termination.max_eval import MaximumFunctionCallTermination

    sizes = np.asarray(sizes, np.int64)
    ops = variable_operators(space, sizes)
    rng = np.random.default_rng(seed)
    arch = Archive(n_obj, sizes.size)
    t0 = time.perf_counter()
    seeds, scanned = _scan(evaluate, sizes, arch, rng, pop_size, 50 * budget if scan is None else scan, 2.0)
    counter = {"n": 0}
    stag = stagnation if stagnation is not None else max(30, budget // pop_size // 3)

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

    class _Mut(Mutation):
        def _do(self, problem, X, *args, random_state=None, **kwargs):
            return mutate(np.rint(X).astype(np.int64), ops, random_state, 1.0 / sizes.size).astype(float)

    init = np.concatenate([seeds, rng.integers(0, sizes, size=(max(pop_size - len(seeds), 0), sizes.size))])
    algo = NSGA2(pop_size=pop_size, sampling=init.astype(float), crossover=UniformCrossover(prob=0.9),
                 mutation=_Mut(), eliminate_duplicates=True)
    algo.setup(_P(), termination=MaximumFunctionCallTermination(budget), seed=seed, verbose=False)
    quiet, gens, history = 0, 0, []
    stopped = "budget"
    last_F = None
    while algo.has_next():
        algo.next()
        gens += 1
        F = arch.F
        quiet = quiet + 1 if (last_F is not None and F.shape == last_F.shape and np.array_equal(F, last_F)) else 0
        last_F = F.copy()
        if hv_bounds is not None:
            history.append((counter["n"], hypervolume(F, *hv_bounds)))
        if progress is not None:
            progress.update(min(counter["n"], budget), budget)
        if quiet >= stag and arch.feasible > 0:
            stopped = f"stagnation ({stag} generations without a new front point)"
            break
    ls_used = 0
    if local_search and counter["n"] < budget and arch.feasible > 0:
        ls_used, why = _local_search(evaluate, sizes, arch, budget - counter["n"], set())
        stopped = f"{stopped}; then {why}" if stopped != "budget" else "budget"
        if progress is not None:
            progress.update(min(counter["n"] + ls_used, budget), budget)
    info = {"generations": gens, "generation_evaluations": counter["n"], "local_search_evaluations": ls_used,
            "scan_evaluations": scanned, "scan_feasible": int(len(seeds)), "stagnation_generations": stag}
    return SearchResult("evolutionary", arch, counter["n"] + ls_used, space_size(sizes),
                        time.perf_counter() - t0, stopped, history, info)
