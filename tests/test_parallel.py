"""Exhaustive search split over processes and a Dask cluster: the archive (front X and F, the index of
each representative, the background sample, the counters, the nearest infeasible list) is identical,
bit for bit, however the index space is split. Reference: the single-pass enumeration, itself checked
against the definition of Pareto dominance (brute force) in tests/test_search.py."""
from __future__ import annotations

import pickle

import numpy as np
import pytest

from strainline.optimizer.search.archive import Archive
from strainline.optimizer.search.engine import exhaustive
from strainline.optimizer.search.exhaustive import exhaustive_range, split_ranges
from strainline.optimizer.search.parallel import ProblemEvaluator, run_ranges


class Toy:
    """Picklable separable toy problem with many ties (equal objective vectors from different x)."""

    def __init__(self, n_var=5, base=9, seed=0):
        rng = np.random.default_rng(seed)
        self.W = np.round(rng.random((n_var, base, 3)) * 4) / 4
        self.n_var = n_var
        self.sizes = np.full(n_var, base)

    def __call__(self, x):
        F = self.W[np.arange(self.n_var)[None, :], x, :].sum(axis=1)
        G = np.stack([F[:, 0] - 0.55 * self.n_var, F[:, 1] - 0.7 * self.n_var], axis=1)
        return F, G


def same_archive(a: Archive, b: Archive) -> None:
    np.testing.assert_array_equal(a.F, b.F)
    np.testing.assert_array_equal(a.X, b.X)
    np.testing.assert_array_equal(a.index, b.index)
    np.testing.assert_array_equal(a.sample_F, b.sample_F)
    np.testing.assert_array_equal(a.violated, b.violated)
    np.testing.assert_array_equal(a.near_X, b.near_X)
    assert (a.seen, a.feasible, a.near_cv, a.near_index) == (b.seen, b.feasible, b.near_cv, b.near_index)
    for key in ("nearest_X", "nearest_G", "nearest_cv", "nearest_index"):     # the nearest infeasible list
        np.testing.assert_array_equal(getattr(a, key), getattr(b, key))


@pytest.fixture(scope="module")
def toy_serial():
    toy = Toy()
    return toy, exhaustive_range(toy, toy.sizes, 3, 0, 9**5, chunk=4096)


def test_any_split_of_the_ranges_gives_the_same_archive(toy_serial):
    toy, ref = toy_serial
    total = 9**5
    assert len(ref.F) >= 10 and ref.feasible < total       # ties and infeasible rows both present
    for parts, chunk in ((2, 4096), (7, 1000), (13, 729)):
        pieces = [exhaustive_range(toy, toy.sizes, 3, a, b, chunk) for a, b in split_ranges(0, total, parts, 81)]
        merged = Archive(3, toy.n_var)
        for p in pieces[::-1]:                            # any order of arrival
            merged.merge(p)
        same_archive(merged, ref)


def test_two_worker_processes_equal_one(toy_serial):
    toy, ref = toy_serial
    arch, used = run_ranges(toy, toy.sizes, 3, 0, 9**5, workers=2, chunk=4096)
    assert used == 2
    same_archive(arch, ref)


def test_dask_local_cluster_equals_one_process(toy_serial):
    distributed = pytest.importorskip("distributed")
    toy, ref = toy_serial
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp", host="127.0.0.1",
                                  dashboard_address=None) as cluster:
        res = exhaustive(toy, toy.sizes, 3, chunk=4096, dask_address=cluster.scheduler_address)
    same_archive(res.archive, ref)
    assert res.info["backend"] == "dask" and res.info["workers"] == 2


def test_study_problem_pickles_and_two_workers_equal_one():
    from test_search import small_problem

    pb = small_problem()
    ev = ProblemEvaluator(pb)
    ev2 = pickle.loads(pickle.dumps(ev))
    x = pb.space.index_to_x(np.arange(0, pb.space.size, 7))
    for a, b in zip(ev(x), ev2(x)):
        np.testing.assert_array_equal(a, b)
    one = exhaustive(ev, pb.space.sizes, pb.n_obj, chunk=5000)
    two = exhaustive(ev, pb.space.sizes, pb.n_obj, chunk=5000, workers=2)
    same_archive(one.archive, two.archive)
    assert two.info["workers"] == 2 and two.info["rate_per_s"] > 0


def test_short_pieces_gathered_into_batches_give_the_same_archive(toy_serial):
    from strainline.optimizer.search.exhaustive import exhaustive_pieces

    toy, ref = toy_serial
    cuts = np.unique(np.concatenate([[0, 9**5], np.random.default_rng(1).integers(0, 9**5, 3000)]))
    pieces = [(int(a), int(b)) for a, b in zip(cuts[:-1], cuts[1:])]
    same_archive(exhaustive_pieces(toy, toy.sizes, 3, pieces, chunk=2048), ref)
