"""Pareto local search around an archive (Paquete, Chiarandini & Stuetzle 2004, in *Metaheuristics
for Multiobjective Optimisation*, LNEMS 535, Springer), and the flipped stack of a design.

The local search evaluates every single-variable neighbour of each archive point not yet explored,
in batches, until the archive stops changing; then the two-variable neighbours (variables next to
each other in the coding first) until its budget is spent. The flipped stack of every archive
point (:func:`mirror_map`) is a starting point too.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from strainline.optimizer.search.archive import Archive
from strainline.optimizer.search.exhaustive import Evaluator


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


def _neighbours(x: np.ndarray, sizes: np.ndarray, d: int) -> np.ndarray:
    """``x`` and every point differing from it in exactly one variable (``d = 0``), or every point
    differing in exactly the two variables ``k`` and ``k + d`` for some ``k``."""
    alts = [np.delete(np.arange(int(s)), x[k]) for k, s in enumerate(sizes)]
    out = []
    if d == 0:
        out.append(x[None, :].astype(np.int64))      # the point itself (a flipped stack is new)
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


class Seen:
    """Every grid point evaluated so far, as mixed-radix codes (or row bytes past 2**62 points),
    so no candidate is evaluated twice."""

    def __init__(self, sizes: np.ndarray) -> None:
        self.sizes = np.asarray(sizes, np.int64)
        self.small = float(np.prod(self.sizes.astype(float))) < 2.0 ** 62
        self.codes = np.empty(0, np.int64)
        self.recent: list[np.ndarray] = []
        self.rows: set[bytes] = set()

    def _code(self, X: np.ndarray) -> np.ndarray:
        c = np.zeros(len(X), np.int64)
        for k in range(self.sizes.size - 1, -1, -1):
            c = c * self.sizes[k] + X[:, k]
        return c

    def _known(self, c: np.ndarray) -> np.ndarray:
        out = np.zeros(len(c), bool)
        for part in (self.codes, *self.recent):
            if len(part):
                i = np.minimum(np.searchsorted(part, c), len(part) - 1)
                out |= part[i] == c
        return out

    def new(self, X: np.ndarray) -> np.ndarray:
        """Rows of X not seen before and not repeated earlier in X (in their order)."""
        X = np.asarray(X, np.int64)
        if not len(X):
            return X
        if self.small:
            c = self._code(X)
            _, first = np.unique(c, return_index=True)
            keep = np.zeros(len(X), bool)
            keep[first] = True
            keep &= ~self._known(c)
            return X[keep]
        out, held = [], set()
        for x in X:
            b = x.tobytes()
            if b not in self.rows and b not in held:
                held.add(b)
                out.append(x)
        return np.array(out, np.int64).reshape(-1, X.shape[1])

    def add(self, X: np.ndarray) -> None:
        if self.small:      # sorted runs, merged when the recent ones outgrow a quarter of the rest
            self.recent.append(np.unique(self._code(np.asarray(X, np.int64))))
            if sum(len(r) for r in self.recent) > max(4096, len(self.codes) // 4):
                self.codes = np.unique(np.concatenate([self.codes, *self.recent]))
                self.recent = []
        else:
            self.rows.update(x.tobytes() for x in np.asarray(X, np.int64))


def _order(n: int, own: np.ndarray, other: np.ndarray):
    """(distance, anchors) in the order the local search takes them."""
    yield from ((0, own), (1, own), (0, other), (1, other))
    for d in range(2, n):
        yield from ((d, own), (d, other))


class Twins:
    """The feasible points evaluated so far that no archive point dominated, so the local search
    starts from each design with an archive point's objective vector: the archive keeps one of several designs with equal
    objectives, and the others may lie next to different front points."""

    def __init__(self, n_var: int, per_front: int = 3) -> None:
        self.per_front = per_front
        self.X: list[np.ndarray] = []
        self.F: list[np.ndarray] = []
        self.n_var = n_var

    def add(self, X: np.ndarray, F: np.ndarray, G: np.ndarray, arch: Archive) -> None:
        """Keep the feasible rows no archive point dominates (after ``arch`` took the batch): a row
        dominated now can never equal a later archive point, whose points only improve."""
        ok = np.all(np.isfinite(F), axis=1) & (np.all(G <= 0, axis=1) if G.shape[1] else True)
        rows = np.flatnonzero(ok)
        if len(rows) and len(arch.F):
            A, Fr = arch.F[None, :, :], np.asarray(F, float)[rows][:, None, :]
            ok[rows] = ~np.any(np.all(A <= Fr, axis=2) & np.any(A < Fr, axis=2), axis=1)
        if ok.any():
            self.X.append(np.asarray(X, np.int64)[ok])
            self.F.append(np.asarray(F, float)[ok])

    def anchors(self, arch: Archive) -> np.ndarray:
        """Feasible points whose objectives equal an archive point's (the archive's own among them)."""
        if not self.X:
            return np.empty((0, self.n_var), np.int64)
        X, F = np.concatenate(self.X), np.concatenate(self.F)
        self.X, self.F = [X], [F]
        front = {f.tobytes(): 0 for f in np.ascontiguousarray(arch.F)}
        on = np.zeros(len(F), bool)
        for i, f in enumerate(np.ascontiguousarray(F)):       # the first `per_front` of each
            b = f.tobytes()
            if b in front and front[b] < self.per_front:
                front[b] += 1
                on[i] = True
        return X[on]


def local_search(evaluate: Evaluator, sizes: np.ndarray, arch: Archive, budget: int, rng: np.random.Generator,
                 seen: Seen, mirror: np.ndarray | None = None, batch: int = 2048,
                 twins: Twins | None = None, screen: Any = None) -> tuple[int, str]:
    """Pareto local search on ``arch`` with at most ``budget`` evaluations.

    Each step takes the nearest unexplored moves: the one-variable neighbours of archive points
    (and their flipped stacks) not yet explored; when every archive point has had those, the
    two-variable neighbours at distance 1 in the coding (a film and its adhesive, an adhesive and
    its placement), then distance 2, and so on. A point that enters the archive later starts
    again at one-variable moves. Points already evaluated are skipped (``seen``). With ``twins``
    every evaluated design with an archive point's objectives is a starting point too; with
    ``screen(X) -> mask`` the rows it rules out are not evaluated (nor counted).

    Returns
    -------
    (int, str)
        Evaluations used, and why it stopped.
    """
    used = 0
    explored: list[set[bytes]] = [set() for _ in range(len(sizes))]
    while used < budget:
        own = arch.X if mirror is None else np.concatenate([arch.X, flip(arch.X, mirror)])
        other = np.empty((0, len(sizes)), np.int64)
        if twins is not None:
            other = twins.anchors(arch)
            other = other if mirror is None else np.concatenate([other, flip(other, mirror)])
        # nearest moves first: the archive's points, then their twins, at one variable and at
        # two neighbouring ones; then every further distance, archive points before twins
        for d, pts in _order(len(sizes), own, other):
            todo = [x for x in pts if x.tobytes() not in explored[d]]
            if todo:
                break
        else:
            return used, "local search converged (every archive point's one- and two-variable neighbours evaluated)"
        parts, held = [], 0
        for i in rng.permutation(len(todo)):
            explored[d].add(todo[i].tobytes())
            nb = seen.new(_neighbours(todo[i], sizes, d))
            if screen is not None and len(nb):
                nb = nb[screen(nb)]
            parts.append(nb)
            held += len(nb)
            if held >= batch:
                break
        xb = seen.new(np.concatenate(parts))[: budget - used]
        if not len(xb):
            continue
        seen.add(xb)
        F, G = evaluate(xb)
        arch.add(xb, F, G)
        if twins is not None:
            twins.add(xb, F, G, arch)
        used += len(xb)
    return used, f"budget (local search at {'one-variable' if d == 0 else f'two-variable, distance {d},'} moves)"
