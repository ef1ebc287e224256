"""The front archive and front-quality measures.

* :class:`Archive` -- a streaming non-dominated filter: feed it batches, it keeps exactly the
  feasible non-dominated points seen so far (one representative per distinct objective vector,
  the first seen), so memory is bounded by the front, not by the space.
* :func:`hypervolume` -- exact hypervolume in normalized objective space (pymoo's ``HV``
  indicator, exact for the dimensions we use); :func:`additive_epsilon`.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


# ---------------------------------------------------------------------------------------------
# non-dominated filtering
def nondominated_mask(F: np.ndarray) -> np.ndarray:
    """Mask of the non-dominated rows of ``F`` (minimization), duplicates kept once (first row).

    Exact. Rows are processed in lexicographic order so a row can only be dominated by earlier
    ones; 2-objective sets use a running-minimum scan, others a blocked pairwise test.
    """
    F = np.asarray(F, float)
    n = F.shape[0]
    mask = np.zeros(n, bool)
    if n == 0:
        return mask
    # lexicographic order (stable, so equal rows keep their input order); drop repeats
    order = np.lexsort(F.T[::-1])
    S = F[order]
    first_of_run = np.ones(n, bool)
    first_of_run[1:] = np.any(S[1:] != S[:-1], axis=1)
    order, S = order[first_of_run], S[first_of_run]
    if S.shape[1] == 1:
        keep = np.zeros(len(S), bool)
        keep[0] = True
    elif S.shape[1] == 2:
        # sorted by f1 then f2: a row is non-dominated iff its f2 is below every earlier f2
        prev_min = np.minimum.accumulate(np.concatenate([[np.inf], S[:-1, 1]]))
        keep = S[:, 1] < prev_min
    else:
        keep = _nd_blocked(S)
    mask[order[keep]] = True
    return mask


def _nd_blocked(S: np.ndarray) -> np.ndarray:
    """Non-dominated rows of lexicographically sorted unique rows ``S`` (any number of objectives).

    The first remaining row in lexicographic order is never dominated by a later one, so it is
    on the front; it then removes every remaining row it dominates. Cost O(|front| * n).
    """
    n = S.shape[0]
    keep = np.zeros(n, bool)
    alive = np.arange(n)
    cols = [np.ascontiguousarray(S[:, k]) for k in range(S.shape[1])]   # tested column by column
    while len(alive):
        keep[alive[0]] = True
        d = cols[0] >= cols[0][0]             # includes the row itself
        for k in range(1, len(cols)):
            d &= cols[k] >= cols[k][0]
        rest = ~d
        alive, cols = alive[rest], [c[rest] for c in cols]
    return keep


@dataclass
class Archive:
    """Streaming exact non-dominated filter over feasible points.

    ``F`` (m, n_obj) objectives, ``X`` (m, n_var) variables and ``payload`` (an optional integer
    per point, e.g. the candidate index) of the current front. Infeasible points never enter; the
    archive tracks the least-violating ones for the "nothing feasible" report.
    """

    n_obj: int
    n_var: int
    F: np.ndarray = field(init=False)
    X: np.ndarray = field(init=False)
    seen: int = 0
    feasible: int = 0
    near_cv: float = np.inf
    near_X: np.ndarray | None = None
    near_G: np.ndarray | None = None
    violated: np.ndarray | None = None     # per constraint: how many candidates violate it
    #: Size of the uniform sample of feasible objective vectors kept for the report's background
    #: (bottom-k sampling on seeded random keys: uniform over the stream, reproducible).
    sample_size: int = 1000
    sample_F: np.ndarray = field(init=False)
    _sample_keys: np.ndarray = field(init=False, repr=False)
    _sample_rng: np.random.Generator = field(init=False, repr=False)

    def __post_init__(self) -> None:
        self.F = np.empty((0, self.n_obj))
        self.X = np.empty((0, self.n_var), np.int64)
        self.sample_F = np.empty((0, self.n_obj))
        self._sample_keys = np.empty(0)
        self._sample_rng = np.random.default_rng(0)

    def _sample(self, Fb: np.ndarray) -> None:
        keys = np.concatenate([self._sample_keys, self._sample_rng.random(len(Fb))])
        Fs = np.concatenate([self.sample_F, Fb])
        if len(keys) > self.sample_size:
            keep = np.argpartition(keys, self.sample_size - 1)[: self.sample_size]
            keys, Fs = keys[keep], Fs[keep]
        self._sample_keys, self.sample_F = keys, Fs

    def add(self, X: np.ndarray, F: np.ndarray, G: np.ndarray) -> int:
        """Merge a batch; return how many archive points changed (0 = no improvement)."""
        X = np.asarray(X, np.int64)
        F = np.asarray(F, float)
        G = np.asarray(G, float)
        self.seen += len(X)
        if G.shape[1]:
            # column by column: fast for any memory order (numpy reduces short rows slowly)
            feas = G[:, 0] <= 0
            for k in range(1, G.shape[1]):
                feas &= G[:, k] <= 0
            for k in range(F.shape[1]):
                feas &= np.isfinite(F[:, k])
            viol = np.array([np.count_nonzero(G[:, k] > 0) for k in range(G.shape[1])], dtype=np.int64)
            self.violated = viol if self.violated is None else self.violated + viol
            if not feas.all():
                # total violation; a feasible row has every G <= 0, so its sum is 0 before the inf
                cv = np.maximum(G[:, 0], 0.0)
                for k in range(1, G.shape[1]):
                    cv += np.maximum(G[:, k], 0.0)
                cv = np.where(feas, np.inf, cv)
                k = int(np.argmin(cv))
                if cv[k] < self.near_cv:
                    self.near_cv, self.near_X, self.near_G = float(cv[k]), X[k].copy(), G[k].copy()
        else:
            feas = np.all(np.isfinite(F), axis=1)
        self.feasible += int(feas.sum())
        if not feas.any():
            return 0
        Fb, Xb = F[feas], X[feas]
        if self.sample_size:
            self._sample(Fb)
        # quick pre-screen against the current front (most points of a big batch are dominated)
        if len(self.F):
            dom = _dominated_by(Fb, self.F)
            Fb, Xb = Fb[~dom], Xb[~dom]
            if not len(Fb):
                return 0
        Fc = np.concatenate([self.F, Fb])
        Xc = np.concatenate([self.X, Xb])
        m = nondominated_mask(Fc)
        old = len(self.F)
        changed = int((~m[:old]).sum() + m[old:].sum())
        self.F, self.X = Fc[m], Xc[m]
        return changed


def _dominated_by(A: np.ndarray, P: np.ndarray) -> np.ndarray:
    """For each row of A: is it weakly dominated by (<= everywhere) some row of P.

    Front points are tried strongest first (smallest normalized sum) and each test runs only on
    the rows still undominated, which shrink fast.
    """
    dom = np.zeros(len(A), bool)
    if not len(P) or not len(A):
        return dom
    span = np.ptp(P, axis=0)
    order = np.argsort(((P - P.min(axis=0)) / np.where(span > 0, span, 1.0)).sum(axis=1))
    alive = np.arange(len(A))
    cols = [np.ascontiguousarray(A[:, k]) for k in range(A.shape[1])]   # tested column by column
    for pi in order:
        p = P[pi]
        d = cols[0] >= p[0]
        for k in range(1, len(cols)):
            d &= cols[k] >= p[k]
        if d.any():
            dom[alive[d]] = True
            keep = ~d
            alive, cols = alive[keep], [c[keep] for c in cols]
            if not len(alive):
                break
    return dom


# ---------------------------------------------------------------------------------------------
# hypervolume
def normalize(F: np.ndarray, ideal: np.ndarray, nadir: np.ndarray) -> np.ndarray:
    """Objectives scaled so that ``ideal`` -> 0 and ``nadir`` -> 1 (a zero span scales by 1)."""
    span = np.where(nadir - ideal > 0, nadir - ideal, 1.0)
    return (np.asarray(F, float) - ideal) / span


def hypervolume(F: np.ndarray, ideal: np.ndarray, nadir: np.ndarray, ref: float = 1.1) -> float:
    """Exact hypervolume of ``F`` in normalized objective space with reference point ``ref`` (all axes).

    Normalization maps ``ideal`` to 0 and ``nadir`` to 1; points beyond the reference point add
    nothing. Uses pymoo's ``HV`` indicator (exact; Fonseca et al. 2006 for 3-D and above).
    """
    if len(F) == 0:
        return 0.0
    from pymoo.indicators.hv import HV

    Z = normalize(F, ideal, nadir)
    Z = Z[np.all(Z < ref, axis=1)]
    if len(Z) == 0:
        return 0.0
    if Z.shape[1] == 1:
        return float(ref - Z.min())
    return float(HV(ref_point=np.full(Z.shape[1], ref))(Z))


def additive_epsilon(A: np.ndarray, R: np.ndarray, ideal: np.ndarray, nadir: np.ndarray) -> float:
    """Additive epsilon indicator of approximation ``A`` against reference front ``R`` (normalized).

    The smallest eps such that every point of R is weakly dominated by some point of A shifted by
    -eps (Zitzler et al. 2003, IEEE TEVC 7(2)). 0 means A covers R.
    """
    if len(A) == 0:
        return float("inf")
    a, r = normalize(A, ideal, nadir), normalize(R, ideal, nadir)
    return float(np.max(np.min(np.max(a[None, :, :] - r[:, None, :], axis=2), axis=1)))
