"""The front archive and front-quality measures.

* :class:`Archive` -- a streaming non-dominated filter: feed it batches, it keeps exactly the
  feasible non-dominated points seen so far (one representative per distinct objective vector,
  the one of smallest index), so memory is bounded by the front, not by the space. Archives of
  disjoint index ranges merge (:meth:`Archive.merge`) into exactly the archive of their union, so
  a front does not depend on how the work was split.
* :func:`hypervolume` -- exact hypervolume in normalized objective space (pymoo's ``HV``
  indicator, exact for the dimensions we use); :func:`additive_epsilon`.

The archive also keeps the :data:`NEAR_K` nearest infeasible candidates (the "nothing feasible"
diagnosis, :mod:`.infeasible`): distinct designs ranked by total violation, the sum of the
positive constraint values, ties broken by the decision vector read from its last variable to
its first (for an enumeration this is the candidate index order: the first variable runs fastest
in the mixed-radix index), then by index. The k best of a union are the k best of the k best of
its parts, so merged archives keep the same list, bit for bit, however the work was split.
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

#: How many nearest infeasible candidates an archive keeps (rank 1 is ``near_X``).
NEAR_K = 5
#: Candidates whose violation is only a lower bound (pruned) are refined in batches of this size,
#: growing fourfold, in increasing order of the bound.
_REFINE_BATCH = 256


# ---------------------------------------------------------------------------------------------
# non-dominated filtering
def nondominated_mask(F: np.ndarray, tiebreak: np.ndarray | None = None) -> np.ndarray:
    """Mask of the non-dominated rows of ``F`` (minimization), duplicates kept once.

    Exact. Rows are processed in lexicographic order so a row can only be dominated by earlier
    ones; 2-objective sets use a running-minimum scan, others a blocked pairwise test. Of equal
    rows the first is kept, or the one of smallest ``tiebreak`` when given.
    """
    F = np.asarray(F, float)
    n = F.shape[0]
    mask = np.zeros(n, bool)
    if n == 0:
        return mask
    # lexicographic order (stable, so equal rows keep their input order); drop repeats
    keys = tuple(F.T[::-1]) if tiebreak is None else (np.asarray(tiebreak),) + tuple(F.T[::-1])
    order = np.lexsort(keys)
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
class SearchResult:
    """Outcome of a search: the archive front and how it was found.

    ``info`` holds what the search did, for the summary (``front.json`` search section): the
    rate in candidates per second, the workers, generations, the seeding scan, skipped blocks.
    """

    method: str
    archive: "Archive"
    evaluated: int
    space_size: int
    seconds: float
    stopped: str = ""
    history: list[tuple[int, float]] = field(default_factory=list)   # (evaluations, archive HV)
    info: dict = field(default_factory=dict)


def _hash64(index: np.ndarray) -> np.ndarray:
    """SplitMix64 finalizer of int64 indices (Steele, Lea & Flood 2014): reproducible uniform keys."""
    z = np.asarray(index, np.int64).astype(np.uint64) + np.uint64(0x9E3779B97F4A7C15)
    z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return z ^ (z >> np.uint64(31))


@dataclass
class Archive:
    """Streaming exact non-dominated filter over feasible points.

    ``F`` (m, n_obj) objectives, ``X`` (m, n_var) variables and ``index`` (m,) of the current
    front. Every added row has an integer index: the candidate index of an enumeration (``start``
    of :meth:`add`), else its position in the stream. Of equal objective vectors the archive
    keeps the smallest index, so archives of disjoint ranges merged with :meth:`merge` equal the
    archive of one pass over their union, bit for bit. Infeasible points never enter the front; the
    archive keeps the :data:`NEAR_K` least-violating distinct ones (``nearest_X``, ``nearest_G``,
    ``nearest_cv``, ``nearest_index``, best first; ``near_X``, ``near_G``, ``near_cv``,
    ``near_index`` are rank 1) for the "nothing feasible" report.

    Batches given to :meth:`add` must come in increasing index order (a stream or consecutive
    ranges); archives of any ranges combine with :meth:`merge`.
    """

    n_obj: int
    n_var: int
    F: np.ndarray = field(init=False)
    X: np.ndarray = field(init=False)
    index: np.ndarray = field(init=False)
    seen: int = 0
    feasible: int = 0
    near_cv: float = np.inf
    near_X: np.ndarray | None = None
    near_G: np.ndarray | None = None
    near_index: int = -1
    violated: np.ndarray | None = None     # per constraint: how many candidates violate it
    near_k: int = NEAR_K
    nearest_X: np.ndarray = field(init=False)
    nearest_G: np.ndarray | None = None    # (m, n_con) once a constraint row was seen
    nearest_cv: np.ndarray = field(init=False)
    nearest_index: np.ndarray = field(init=False)
    #: Size of the uniform sample of feasible objective vectors kept for the report's background
    #: (bottom-k sampling on hashed indices: uniform, reproducible, and independent of the split).
    sample_size: int = 1000
    sample_F: np.ndarray = field(init=False)
    _sample_keys: np.ndarray = field(init=False, repr=False)

    def __post_init__(self) -> None:
        self.F = np.empty((0, self.n_obj))
        self.X = np.empty((0, self.n_var), np.int64)
        self.index = np.empty(0, np.int64)
        self.sample_F = np.empty((0, self.n_obj))
        self._sample_keys = np.empty(0, np.uint64)
        self.nearest_X = np.empty((0, self.n_var), np.int64)
        self.nearest_cv = np.empty(0)
        self.nearest_index = np.empty(0, np.int64)

    def _sample(self, Fb: np.ndarray, keys: np.ndarray) -> None:
        keys = np.concatenate([self._sample_keys, keys])
        Fs = np.concatenate([self.sample_F, Fb])
        if len(keys) > self.sample_size:
            keep = np.sort(np.argpartition(keys, self.sample_size - 1)[: self.sample_size])
            keys, Fs = keys[keep], Fs[keep]
        order = np.argsort(keys, kind="stable")        # a canonical order, whatever the split
        self._sample_keys, self.sample_F = keys[order], Fs[order]

    def add(self, X: np.ndarray, F: np.ndarray, G: np.ndarray, start: int | None = None,
            index: np.ndarray | None = None, refine: Callable | None = None) -> int:
        """Merge a batch; return how many archive points changed (0 = no improvement).

        Row ``i`` has index ``start + i`` (default: the stream position, ``seen + i``), or
        ``index[i]`` (increasing, above every index added before).

        ``refine(x) -> (F, G)`` (optional) evaluates rows in full: an infeasible row with a
        non-finite objective is taken as pruned (its ``G`` a lower bound of the full one, e.g. the
        mechanical columns left at 0, :meth:`Problem.evaluate`) and is re-evaluated when it could
        enter the nearest list, so the list ranks full violations whatever the batches pruned.
        """
        X = np.asarray(X, np.int64)
        F = np.asarray(F, float)
        G = np.asarray(G, float)
        start = self.seen if start is None else int(start)
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
                idx = np.arange(start, start + len(X), dtype=np.int64) if index is None else \
                    np.asarray(index, np.int64)
                self._near_batch(X, F, G, np.where(feas, np.inf, total_violation(G)), idx, refine)
        else:
            feas = np.all(np.isfinite(F), axis=1)
        rows = np.flatnonzero(feas)
        self.feasible += len(rows)
        if not len(rows):
            return 0
        Fb, Xb = F[rows], X[rows]
        Ib = rows.astype(np.int64) + start if index is None else np.asarray(index, np.int64)[rows]
        if self.sample_size:
            self._sample(Fb, _hash64(Ib))
        # quick pre-screen against the current front (most points of a big batch are dominated;
        # an equal point already archived has a smaller index)
        if len(self.F):
            dom = _dominated_by(Fb, self.F)
            Fb, Xb, Ib = Fb[~dom], Xb[~dom], Ib[~dom]
            if not len(Fb):
                return 0
        return self._absorb(Fb, Xb, Ib)

    def _absorb(self, Fb: np.ndarray, Xb: np.ndarray, Ib: np.ndarray) -> int:
        Fc = np.concatenate([self.F, Fb])
        Xc = np.concatenate([self.X, Xb])
        Ic = np.concatenate([self.index, Ib])
        m = nondominated_mask(Fc, Ic)
        old = len(self.F)
        changed = int((~m[:old]).sum() + m[old:].sum())
        keep = np.flatnonzero(m)
        keep = keep[np.argsort(Ic[keep], kind="stable")]     # front in index order
        self.F, self.X, self.index = Fc[keep], Xc[keep], Ic[keep]
        return changed

    # ----------------------------------------------------------------------------- nearest list
    def _near_threshold(self) -> float:
        """Violation of the k-th kept candidate (inf while fewer are kept): a row above it cannot enter."""
        return float(self.nearest_cv[-1]) if len(self.nearest_cv) >= self.near_k else np.inf

    def _near_batch(self, X: np.ndarray, F: np.ndarray, G: np.ndarray, cv: np.ndarray, idx: np.ndarray,
                    refine: Callable | None) -> None:
        """Offer the infeasible rows of a batch (``cv`` finite) to the nearest list."""
        if self.near_k <= 0:
            return
        cand = np.flatnonzero(cv <= self._near_threshold())      # drops inf (feasible) and nan
        if not len(cand):
            return
        part = np.zeros(len(cand), bool)
        if refine is not None:
            for k in range(F.shape[1]):
                part |= ~np.isfinite(F[cand, k])
        full = cand[~part]
        if len(full):
            self._near_absorb(X[full], G[full], cv[full], idx[full])
        low = cand[part]
        if len(low):
            # a pruned row's violation is a lower bound: refine in increasing order of the bound
            # until the bound passes the k-th full violation kept
            low = low[np.argsort(cv[low], kind="stable")]
            pos, step = 0, _REFINE_BATCH
            while pos < len(low) and cv[low[pos]] <= self._near_threshold():
                rows = low[pos:pos + step]
                rows = rows[cv[rows] <= self._near_threshold()]
                Fr, Gr = refine(X[rows])
                Fr, Gr = np.asarray(Fr, float), np.asarray(Gr, float)
                ok = np.all(Gr <= 0, axis=1) & np.all(np.isfinite(Fr), axis=1)
                cvr = np.where(ok, np.inf, total_violation(Gr))
                keep = np.flatnonzero(np.isfinite(cvr))
                self._near_absorb(X[rows[keep]], Gr[keep], cvr[keep], idx[rows[keep]])
                pos += len(low[pos:pos + step])
                step *= 4

    def _near_absorb(self, Xc: np.ndarray, Gc: np.ndarray, cvc: np.ndarray, Ic: np.ndarray) -> None:
        """Keep the ``near_k`` best distinct designs of the kept list and these rows."""
        if not len(cvc):
            return
        cvc = np.asarray(cvc, float)
        # rows past the k-th kept violation cannot enter; nor can rows past the k-th smallest
        # violation of these rows, unless repeats of one design leave fewer than k distinct
        # designs at or below it
        sel = np.flatnonzero(cvc <= self._near_threshold())
        m = self.near_k
        while m < len(sel):
            v = np.partition(cvc[sel], m - 1)[m - 1]
            best = sel[cvc[sel] <= v]
            if len(np.unique(Xc[best], axis=0)) >= self.near_k:
                sel = best
                break
            m *= 2
        if not len(sel):
            return
        Xc, Gc, cvc, Ic = Xc[sel], Gc[sel], cvc[sel], Ic[sel]
        X = np.concatenate([self.nearest_X, np.asarray(Xc, np.int64)])
        G = np.asarray(Gc, float) if self.nearest_G is None else np.concatenate([self.nearest_G, Gc])
        cv = np.concatenate([self.nearest_cv, cvc])
        ix = np.concatenate([self.nearest_index, np.asarray(Ic, np.int64)])
        # violation first, then x from its last variable to its first (= index order), then index
        order = np.lexsort((ix,) + tuple(X.T) + (cv,))
        X, G, cv, ix = X[order], G[order], cv[order], ix[order]
        _, first = np.unique(X, axis=0, return_index=True)       # first (best) row of each design
        keep = np.sort(first)[: self.near_k]
        self.nearest_X, self.nearest_G = X[keep], G[keep]
        self.nearest_cv, self.nearest_index = cv[keep], ix[keep]
        self.near_cv, self.near_X, self.near_G = float(cv[keep[0]]), X[keep[0]].copy(), G[keep[0]].copy()
        self.near_index = int(ix[keep[0]])

    def merge(self, other: "Archive") -> "Archive":
        """Absorb the archive of a disjoint index range; the result does not depend on the order."""
        self.seen += other.seen
        self.feasible += other.feasible
        if other.violated is not None:
            self.violated = other.violated.copy() if self.violated is None else self.violated + other.violated
        if other.nearest_G is not None and len(other.nearest_cv):
            self._near_absorb(other.nearest_X, other.nearest_G, other.nearest_cv, other.nearest_index)
        if self.sample_size and len(other.sample_F):
            self._sample(other.sample_F, other._sample_keys)
        if len(other.F):
            self._absorb(other.F, other.X, other.index)
        return self


def total_violation(G: np.ndarray) -> np.ndarray:
    """Total normalized violation of each row: the sum of its positive constraint values.

    Summed column by column, left to right (the order every caller uses, so equal rows give
    equal sums bit for bit). A nan constraint value gives nan.
    """
    G = np.asarray(G, float)
    cv = np.maximum(G[:, 0], 0.0)
    for k in range(1, G.shape[1]):
        cv = cv + np.maximum(G[:, k], 0.0)
    return cv


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
