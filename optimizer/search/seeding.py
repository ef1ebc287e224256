"""Seeders of the evolutionary search's first population: constructed from the study's own tables.

At a feasible share of 1e-4 a random sample of 20,000 candidates holds about two feasible points,
so the first population is *constructed* instead (:class:`TableSeeder`):

* **Line rows.** A candidate's line row depends on a few of its choices (signal position, signal
  copper, the builds beside the trace, the cover, the pair gap). For every value of the variable
  that places the line, the variables that change the row or its line constraints are found by
  probing the table (:meth:`LineTable.index`), every combination of them is looked up once, and
  only the combinations whose row meets *every* row-level line constraint (impedance, width
  range, validity, yield; the same values :meth:`Problem.evaluate` reports) are kept. A seed takes
  one of them whole.
* **Thickness.** The total thickness is a sum of per-option layer thicknesses (the space's option
  tables, :meth:`Space.mechanics`); with a thickness limit a seed is drawn again until its stack is
  within it (the other variables are free).
* **Learning.** Strain and the rest need the bend model, so they are left to evaluations: after
  every evaluated batch the sampling weights of each variable's options move toward the batch's
  elite under Deb's feasibility rules -- the cross-entropy method (Rubinstein & Kroese 2004, *The
  Cross-Entropy Method*, Springer) with a factorized (one distribution per variable) model, the
  univariate marginal distribution algorithm (Muehlenbein & Paass 1996, PPSN IV, LNCS 1141).

None of this evaluates a candidate: the table lookups and the thickness sums read precomputed
per-option figures. Every seed the search then evaluates counts in its budget.
:class:`RandomSeeder` (uniform grid points, the same learning) serves a bare ``evaluate``.
"""
from __future__ import annotations

from typing import Any

import numpy as np

#: Most line-variable combinations looked up per value of the line-placing variable; a larger
#: product is sampled (this many random combinations) instead of enumerated.
MAX_COMBOS = 1_000_000
#: Share of an evaluated batch taken as the elite of the cross-entropy update, its smoothing
#: (weight of the new frequencies) and the floor of every option's weight (relative to uniform).
ELITE, ALPHA, FLOOR = 0.2, 0.5, 0.05
#: Variables that place the line(s) (one group of relevant variables per value).
SELECTORS = ("signal_layer", "line_layers")


class RandomSeeder:
    """Grid points drawn from per-variable option weights (uniform at first), which
    :meth:`learn` moves toward the elite of every evaluated batch (cross-entropy method)."""

    def __init__(self, sizes: np.ndarray) -> None:
        self.sizes = np.asarray(sizes, np.int64)
        self.weights = [np.full(int(s), 1.0 / int(s)) for s in self.sizes]
        self.drawn = 0                 # candidates constructed (screened by tables, not evaluated)
        self.updates = 0

    def _free(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """Each variable drawn independently from its weights."""
        X = np.empty((n, self.sizes.size), np.int64)
        for k, w in enumerate(self.weights):
            X[:, k] = np.minimum(np.searchsorted(np.cumsum(w), rng.random(n) * w.sum()), len(w) - 1)
        return X

    def sample(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` grid points (rows may repeat; the caller removes repeats)."""
        self.drawn += n
        return self._free(n, rng)

    def learn(self, X: np.ndarray, F: np.ndarray, cv: np.ndarray) -> None:
        """Cross-entropy update from an evaluated batch: the elite are the feasible rows and, to
        make up ``ELITE`` of the batch, the least-violating others (Deb's feasibility rules)."""
        if len(X) < 5:
            return
        m = max(int(np.ceil(ELITE * len(X))), int(np.sum(cv <= 0)))
        elite = X[np.argsort(cv, kind="stable")[:m]]
        for k, s in enumerate(self.sizes):
            freq = np.bincount(elite[:, k], minlength=int(s)) / len(elite)
            w = (1 - ALPHA) * self.weights[k] / self.weights[k].sum() + ALPHA * freq
            self.weights[k] = np.maximum(w, FLOOR / int(s))
        self.updates += 1

    def screen(self, X: np.ndarray) -> np.ndarray:
        """True for every row (a bare evaluator has no tables to screen with)."""
        return np.ones(len(X), bool)

    def report(self) -> dict[str, Any]:
        return {"seeder": "random", "constructed": int(self.drawn), "weight_updates": self.updates}


class TableSeeder(RandomSeeder):
    """Seeds whose line variables come whole from line-feasible table rows and whose stack meets
    the thickness limit (module docstring).

    Parameters
    ----------
    space : Space
    problem : Problem
        The study problem (its line table and row-level line constraints).
    max_draw : int
        Most candidates constructed per :meth:`sample` call while meeting the thickness limit.
    """

    def __init__(self, space: Any, problem: Any, max_draw: int = 400_000) -> None:
        super().__init__(space.sizes)
        self.space, self.problem, self.max_draw = space, problem, max_draw
        lim = getattr(space.study.limits, "total_thickness_um", None)
        self.limit_m = None if lim is None else float(lim) * 1e-6
        self.combos, self.line_vars = self._line_combos()
        self.kept = 0
        self.screened = 0                # rows the screen kept from evaluation

    # ------------------------------------------------------------------ line rows
    def line_figures(self, X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Line rows (n,) or (n, K) and the row-level line constraint values (n, c) of grid points."""
        pb = self.problem
        slots = self.space.slots(X)
        rows = pb._rows(slots)
        g = pb._line_g(rows, slots)
        G = np.stack([np.asarray(v, float) for v in g.values()], axis=1) if g else np.zeros((len(X), 0))
        return rows.reshape(len(X), -1), G

    def _line_combos(self) -> tuple[np.ndarray | None, list[int]]:
        """Every line-feasible combination of the line variables, as rows of the full coding with
        -1 at the variables the line does not depend on (None when none could be built)."""
        sizes, names = self.sizes, [v.name for v in self.space.variables]
        sel = next((names.index(s) for s in SELECTORS if s in names), None)
        rng = np.random.default_rng(0)
        out, used = [], set()
        for v in range(int(sizes[sel])) if sel is not None else [None]:
            base = rng.integers(0, sizes, size=(16, sizes.size))
            if sel is not None:
                base[:, sel] = v
            rel = []
            r0, g0 = self.line_figures(base)
            for k in range(sizes.size):
                if k == sel:
                    continue
                for val in range(int(sizes[k])):
                    b = base.copy()
                    b[:, k] = val
                    r, g = self.line_figures(b)
                    if not (np.array_equal(r, r0) and np.array_equal(g, g0, equal_nan=True)):
                        rel.append(k)
                        break
            n_comb = int(np.prod(sizes[rel])) if rel else 1
            if n_comb <= MAX_COMBOS:
                digits = np.indices(tuple(int(sizes[k]) for k in rel)).reshape(len(rel), -1).T
            else:
                digits = rng.integers(0, sizes[rel], size=(MAX_COMBOS, len(rel)))
            X = np.zeros((len(digits), sizes.size), np.int64)
            X[:, rel] = digits
            if sel is not None:
                X[:, sel] = v
            ok = np.ones(len(X), bool)
            for a in range(0, len(X), 65536):
                _, g = self.line_figures(X[a:a + 65536])
                ok[a:a + 65536] = np.all(g <= 0, axis=1)
            T = np.full((int(ok.sum()), sizes.size), -1, np.int64)
            cols = rel + ([sel] if sel is not None else [])
            T[:, cols] = X[ok][:, cols]
            out.append(T)
            used.update(cols)
        T = np.concatenate(out) if out else np.empty((0, sizes.size), np.int64)
        return (T if len(T) else None), sorted(used)

    # ------------------------------------------------------------------ sampling
    def _construct(self, n: int, rng: np.random.Generator) -> np.ndarray:
        X = self._free(n, rng)
        T = self.combos
        if T is not None:
            p = np.ones(len(T))
            for k in self.line_vars:
                fixed = T[:, k] >= 0
                p[fixed] *= self.weights[k][T[fixed, k]]
            pick = T[np.minimum(np.searchsorted(np.cumsum(p), rng.random(n) * p.sum()), len(T) - 1)]
            X = np.where(pick >= 0, pick, X)
        return X

    def sample(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` constructed grid points: line variables from a line-feasible combination, the stack
        within the thickness limit (drawn again while over it, at most ``max_draw`` in all; the
        thinnest of the draws make up a shortfall)."""
        if self.limit_m is None:
            self.drawn += n
            return self._construct(n, rng)
        got, spare, drawn = [], [], 0
        have = 0
        while have < n and drawn < self.max_draw:
            m = min(max(8 * n, 4096), self.max_draw - drawn)
            X = self._construct(m, rng)
            drawn += m
            t = self.thickness(X)
            ok = t <= self.limit_m * (1 + 1e-12)
            got.append(X[ok][: n - have])
            have += len(got[-1])
            spare.append((X[~ok], t[~ok]))
        self.drawn += drawn
        out = np.concatenate(got) if got else np.empty((0, self.sizes.size), np.int64)
        self.kept += len(out)
        if len(out) < n:
            Xs = np.concatenate([s[0] for s in spare])
            ts = np.concatenate([s[1] for s in spare])
            out = np.concatenate([out, Xs[np.argsort(ts, kind="stable")[: n - len(out)]]])
        return out

    def screen(self, X: np.ndarray) -> np.ndarray:
        """True where a grid point's line row meets every row-level line constraint and its stack
        the thickness limit: read from the tables, so the rest need not be evaluated (they
        are infeasible whatever the bend model says)."""
        if not len(X):
            return np.ones(0, bool)
        _, g = self.line_figures(X)
        ok = np.all(g <= 0, axis=1)
        if self.limit_m is not None:
            ok &= self.thickness(X) <= self.limit_m * (1 + 1e-12)
        self.screened += int(np.sum(~ok))
        return ok

    def thickness(self, X: np.ndarray) -> np.ndarray:
        """Total stack thickness of grid points, m (sum of the per-option layer thicknesses)."""
        return self.space.mechanics(X)[0].sum(axis=1)

    def report(self) -> dict[str, Any]:
        return {"seeder": "line table and thickness", "constructed": int(self.drawn),
                "within_thickness": int(self.kept),
                "line_combinations": 0 if self.combos is None else int(len(self.combos)),
                "line_variables": [self.space.variables[k].name for k in self.line_vars],
                "screened_out": int(self.screened),
                "weight_updates": self.updates}


def build_seeder(space: Any = None, problem: Any = None, sizes: np.ndarray | None = None) -> RandomSeeder:
    """The seeder a search can use: :class:`TableSeeder` with a study problem, else
    :class:`RandomSeeder` over ``sizes`` (or the space's)."""
    if problem is not None and space is not None and getattr(problem, "table", None) is not None:
        return TableSeeder(space, problem)
    return RandomSeeder(space.sizes if space is not None else sizes)
