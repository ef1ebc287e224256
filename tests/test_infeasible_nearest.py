"""The nearest infeasible candidates of a study that finds nothing (front.json
``search.infeasible.nearest_candidates``).

Reference throughout: the definition, recomputed here independently of the archive. A candidate's
total violation is the sum of its constraint values clipped at 0 (every constraint is normalized,
g <= 0 means met); the nearest list is the NEAR_K distinct designs of smallest total violation,
ties taken in candidate-index order (for a stream without an index: x read from its last variable
to its first, then the stream position). The brute force evaluates every candidate of the space in
full with Problem.evaluate (no pruning) and sorts.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest

from strainline.models.units import UM
from strainline.optimizer.search.archive import NEAR_K, Archive
from strainline.optimizer.search.engine import exhaustive
from strainline.optimizer.search.exhaustive import exhaustive_range, split_ranges
from strainline.optimizer.search.infeasible import explain_infeasible
from strainline.optimizer.search.parallel import ProblemEvaluator
from test_search import SMALL, small_problem

#: A thickness limit no stack of the SMALL study meets: its thinnest stack is 61.5 um (two 12 um
#: foils and the thinnest film and adhesive), so every candidate is infeasible.
TIGHT = {"total_thickness_um": 20}


def clipped_sum(G: np.ndarray) -> np.ndarray:
    """Total violation by the definition: constraint values clipped at 0, summed left to right."""
    out = np.zeros(len(G))
    for k in range(G.shape[1]):
        out = out + np.maximum(G[:, k], 0.0)
    return out


def brute_nearest(pb, k: int = NEAR_K) -> tuple[np.ndarray, np.ndarray]:
    """Indices and violations of the k nearest candidates: every candidate in full, sorted."""
    x = pb.space.index_to_x(np.arange(pb.space.size))
    ev = pb.evaluate(x)                                     # full evaluation, no pruning
    assert not ev.feasible.any()
    cv = clipped_sum(ev.G)
    order = np.lexsort((np.arange(len(cv)), cv))[:k]        # violation, then candidate index
    return order, cv[order]


@pytest.fixture(scope="module", params=["thin", "thin-75-ohm"])
def hopeless(request):
    """The SMALL study with an unreachable thickness limit; the 75-ohm variant also fails its line
    on most candidates, so the pruned enumeration (the command's) skips their bend model."""
    line = dict(SMALL["line"], target_ohm=75) if request.param.endswith("75-ohm") else SMALL["line"]
    pb = small_problem(limits=TIGHT, line=line)
    ref = exhaustive(ProblemEvaluator(pb), pb.space.sizes, pb.n_obj, chunk=65536)
    return pb, ref.archive


def same_nearest(a: Archive, b: Archive) -> None:
    np.testing.assert_array_equal(a.nearest_X, b.nearest_X)
    np.testing.assert_array_equal(a.nearest_G, b.nearest_G)
    np.testing.assert_array_equal(a.nearest_cv, b.nearest_cv)
    np.testing.assert_array_equal(a.nearest_index, b.nearest_index)
    np.testing.assert_array_equal(a.near_X, b.near_X)
    assert (a.near_cv, a.near_index) == (b.near_cv, b.near_index)


def test_archive_keeps_the_k_nearest_by_the_definition(hopeless):
    pb, arch = hopeless
    idx, cv = brute_nearest(pb)
    # brute force over the whole space (definition above)
    np.testing.assert_array_equal(arch.nearest_index, idx)
    np.testing.assert_array_equal(arch.nearest_X, pb.space.index_to_x(idx))
    np.testing.assert_array_equal(arch.nearest_cv, cv)
    assert len(arch.nearest_cv) == NEAR_K == 5
    assert len({tuple(x) for x in arch.nearest_X}) == NEAR_K            # distinct designs
    assert np.all(np.diff(arch.nearest_cv) >= 0)                          # best first
    # rank 1 is the archive's "nearest" of before
    assert arch.near_index == idx[0] and arch.near_cv == cv[0]
    np.testing.assert_array_equal(arch.near_X, arch.nearest_X[0])


def test_pruned_rows_are_ranked_by_their_full_violation():
    """Pruning leaves the bend-model constraints of a line-failing candidate at 0; the nearest list
    must not take that for the candidate's violation (definition: the full evaluation)."""
    pb = small_problem(limits=TIGHT, line=dict(SMALL["line"], target_ohm=75))
    x = pb.space.index_to_x(np.arange(pb.space.size))
    pruned = clipped_sum(pb.evaluate(x, prune=True).G)
    full = clipped_sum(pb.evaluate(x).G)
    assert pruned.min() < full.min()            # the case is real: pruned sums undercount
    arch = exhaustive(ProblemEvaluator(pb), pb.space.sizes, pb.n_obj, chunk=65536).archive
    np.testing.assert_array_equal(arch.nearest_cv, np.sort(full)[:NEAR_K])


@pytest.mark.parametrize("chunk, workers", [(5000, 1), (729, 1), (8192, 2)])
def test_nearest_list_does_not_depend_on_the_split(hopeless, chunk, workers):
    pb, ref = hopeless
    res = exhaustive(ProblemEvaluator(pb), pb.space.sizes, pb.n_obj, chunk=chunk, workers=workers)
    same_nearest(res.archive, ref)


def test_ranges_merged_in_any_order_give_the_same_nearest_list(hopeless):
    pb, ref = hopeless
    ev = ProblemEvaluator(pb)
    pieces = [exhaustive_range(ev, pb.space.sizes, pb.n_obj, a, b, 4096)
              for a, b in split_ranges(0, pb.space.size, 9, 96)]
    for order in (pieces, pieces[::-1], pieces[1::2] + pieces[::2]):
        merged = Archive(pb.n_obj, pb.space.sizes.size)
        for p in order:
            merged.merge(p)
        same_nearest(merged, ref)


def test_stream_with_repeats_keeps_distinct_designs_in_any_batching():
    """An evolutionary stream repeats designs and has no candidate index: the list holds distinct
    designs, ties in the order of x read from its last variable, whatever the batches and merges."""
    rng = np.random.default_rng(3)
    X = rng.integers(0, 3, (4000, 4))
    G = np.stack([X.sum(axis=1) / 4.0 - 0.25, (X[:, 0] == X[:, 3]) - 0.5], axis=1)   # many ties, a few feasible
    F = X[:, :2].astype(float)
    cv = clipped_sum(G)
    # definition: distinct infeasible x by (violation, x from its last variable); first stream
    # position of that x breaks nothing further (equal x, equal violation)
    best: dict[tuple, float] = {}
    for x, c in zip(map(tuple, X), cv):
        if c > 0:
            best[x] = min(best.get(x, np.inf), c)
    want = sorted(best, key=lambda x: (best[x], x[::-1]))[:NEAR_K]
    first_pos = {x: i for i, x in reversed(list(enumerate(map(tuple, X))))}
    for cuts in ([4000], [1, 17, 999, 2500, 4000], list(range(250, 4001, 250))):
        a, bounds = Archive(2, 4), [0] + cuts
        parts = []
        for s, e in zip(bounds[:-1], bounds[1:]):
            a.add(X[s:e], F[s:e], G[s:e])                         # one stream
            p = Archive(2, 4)
            p.add(X[s:e], F[s:e], G[s:e], start=s)                # or pieces, merged backwards
            parts.append(p)
        m = Archive(2, 4)
        for p in parts[::-1]:
            m.merge(p)
        for arch in (a, m):
            assert [tuple(x) for x in arch.nearest_X] == want
            np.testing.assert_array_equal(arch.nearest_cv, [best[x] for x in want])
            np.testing.assert_array_equal(arch.nearest_index, [first_pos[x] for x in want])


def test_front_json_nearest_candidates(hopeless):
    pb, arch = hopeless
    d = json.loads(json.dumps(explain_infeasible(pb, arch), allow_nan=False))    # plain JSON
    # the keys of before, unchanged, describe rank 1
    assert set(d) >= {"violations", "nearest", "nearest_choices", "message", "nearest_candidates"}
    cands = d["nearest_candidates"]
    assert [c["rank"] for c in cands] == [1, 2, 3, 4, 5]
    assert d["nearest"] == cands[0]["misses"] and d["nearest_choices"] == cands[0]["choices"]
    tv = [c["total_violation"] for c in cands]
    assert tv == sorted(tv)
    assert len({json.dumps(c["choices"], sort_keys=True) for c in cands}) == 5       # distinct designs
    ev = pb.evaluate(arch.nearest_X)                         # Problem.evaluate in full, per candidate
    for c, x, g, t_m in zip(cands, arch.nearest_X, ev.G, ev.total_thickness_m):
        # definition: sum of the constraint values clipped at 0 (correctly rounded sum)
        assert c["total_violation"] == pytest.approx(math.fsum(max(v, 0.0) for v in g), rel=1e-12, abs=0)
        assert c["choices"] == pb.space.describe(x)
        # misses = the constraints with g > 0, each with its normalized excess
        assert [m["constraint"] for m in c["misses"]] == [n for n, v in zip(pb.constraint_names, g) if v > 0]
        for m in c["misses"]:
            assert m["excess"] == pytest.approx(g[pb.constraint_names.index(m["constraint"])], rel=1e-12)
            assert set(m) == {"constraint", "text", "excess", "limit", "achieved", "unit", "bound"}
        # the cross-section: layers add up to the total, which is the evaluation's stack thickness
        lays = c["layers"]
        assert c["total_thickness_um"] == pytest.approx(math.fsum(l["thickness_um"] for l in lays), rel=1e-12)
        assert c["total_thickness_um"] == pytest.approx(t_m / UM, rel=1e-9)
        assert lays[0]["y_top_um"] == pytest.approx(c["total_thickness_um"], rel=1e-12)
        assert lays[-1]["y_bottom_um"] == 0.0
        for up, down in zip(lays[:-1], lays[1:]):                 # top to bottom, no gaps or overlaps
            assert up["y_bottom_um"] == pytest.approx(down["y_top_um"], rel=1e-12)
        assert {l["kind"] for l in lays} <= {"copper", "dielectric", "air-gap"}
        assert sum(l["kind"] == "copper" for l in lays) == 2       # the study's two copper layers
        miss = {m["constraint"]: m for m in c["misses"]}
        # thickness is over its limit for every stack: reached = the cross-section's total
        assert miss["total_thickness"]["achieved"] == pytest.approx(c["total_thickness_um"], rel=1e-9)
        assert miss["total_thickness"]["limit"] == TIGHT["total_thickness_um"]
        # the normalized thickness constraint is t / limit - 1 (relative excess over the limit)
        assert miss["total_thickness"]["excess"] == pytest.approx(c["total_thickness_um"] / 20 - 1, rel=1e-9)
