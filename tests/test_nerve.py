"""Tests of the nerve: edges from M^T M and triangles, against brute-force loops over sets."""

import itertools

import numpy as np
import pytest
from numpy.testing import assert_allclose

from lenswork.graph import build_graph, membership_matrix, nerve_edges, nerve_triangles


def random_membership(rng, n_rows=120, n_nodes=25, p=0.08):
    dense = rng.random((n_rows, n_nodes)) < p
    rows, nodes = np.nonzero(dense)
    return membership_matrix(rows, nodes, n_rows, n_nodes), dense


def test_membership_matrix_matches_dense():
    rng = np.random.default_rng(301)
    M, dense = random_membership(rng)
    assert M.dtype == np.int8 and M.format == "csr"
    assert np.array_equal(M.toarray().astype(bool), dense)
    # column sums are node sizes, row sums the number of nodes of each row
    assert np.array_equal(np.asarray(M.sum(axis=0)).ravel(), dense.sum(axis=0))


def test_edges_and_shared_counts_match_brute_force():
    rng = np.random.default_rng(302)
    M, dense = random_membership(rng)
    edges, shared = nerve_edges(M)
    sets = [set(np.flatnonzero(dense[:, a]).tolist()) for a in range(dense.shape[1])]
    # brute force over every pair of node sets (reference in this file)
    want = {(a, b): len(sets[a] & sets[b])
            for a, b in itertools.combinations(range(len(sets)), 2) if sets[a] & sets[b]}
    got = {(int(a), int(b)): int(s) for (a, b), s in zip(edges, shared)}
    assert got == want
    assert np.all(edges[:, 0] < edges[:, 1])
    assert [tuple(e) for e in edges.tolist()] == sorted(want)


def test_shared_counts_do_not_overflow_int8():
    # 300 rows shared by two nodes: the int8 membership must not wrap around in M^T M
    M = membership_matrix(np.repeat(np.arange(300), 2), np.tile([0, 1], 300), 300, 2)
    edges, shared = nerve_edges(M)
    assert edges.tolist() == [[0, 1]] and shared.tolist() == [300]


def test_jaccard_weight_matches_brute_force():
    rng = np.random.default_rng(303)
    X = rng.normal(size=(600, 2))
    g = build_graph(X[:, 0], X, intervals=6, overlap=0.4)
    for e in g.edges:
        a = set(g.members(e.source).tolist())
        b = set(g.members(e.target).tolist())
        assert e.shared == len(a & b)
        # Jaccard index |a ∩ b| / |a ∪ b| with Python sets as reference; same float formula
        assert_allclose(e.jaccard, len(a & b) / len(a | b), rtol=1e-15)


def test_triangles_match_brute_force():
    rng = np.random.default_rng(304)
    M, dense = random_membership(rng, n_rows=80, n_nodes=12, p=0.25)
    tri, shared = nerve_triangles(M)
    sets = [set(np.flatnonzero(dense[:, a]).tolist()) for a in range(12)]
    want = {}
    for a, b, c in itertools.combinations(range(12), 3):
        common = sets[a] & sets[b] & sets[c]
        if common:
            want[(a, b, c)] = len(common)
    got = {tuple(int(x) for x in t): int(s) for t, s in zip(tri, shared)}
    assert got == want  # brute force over every triple of node sets


def test_no_triangles_without_rows_in_three_nodes():
    M = membership_matrix([0, 0, 1, 1, 2, 2], [0, 1, 1, 2, 0, 2], 3, 3)
    tri, shared = nerve_triangles(M)
    # a 3-cycle of pairwise overlaps is not a triangle of the nerve: no row lies in all three
    assert tri.shape == (0, 3) and shared.size == 0


def test_overlap_zero_gives_no_edges():
    rng = np.random.default_rng(305)
    X = rng.normal(size=(800, 2))
    g = build_graph(X[:, 0], X, intervals=8, overlap=0.0)
    # overlap 0 makes the cover a partition (each row in one element), so no two nodes share
    # a row and M^T M is diagonal
    assert g.n_edges == 0
    assert g.n_nodes >= 8


def segment(rng, n=3000):
    t = rng.uniform(0, 10, n)
    return np.column_stack([t, rng.normal(0, 0.05, n)])


@pytest.mark.parametrize("overlap", [0.2, 0.4, 0.5])
def test_overlap_at_most_half_gives_no_three_way_overlaps(overlap):
    rng = np.random.default_rng(306)
    X = segment(rng)
    g = build_graph(X[:, 0], X, intervals=10, overlap=overlap)
    tri, _ = g.triangles()
    # r = 1 / (1 - p) <= 2: no row lies in three intervals, hence in three nodes
    assert tri.shape[0] == 0
    assert g.n_edges > 0


@pytest.mark.parametrize("overlap", [0.55, 0.7])
def test_overlap_above_half_gives_three_way_overlaps(overlap):
    rng = np.random.default_rng(307)
    X = segment(rng)
    g = build_graph(X[:, 0], X, intervals=10, overlap=overlap)
    tri, shared = g.triangles()
    # r > 2: rows in the triple overlaps of consecutive intervals lie in three nodes
    assert tri.shape[0] > 0 and shared.min() >= 1
    M = g.membership.toarray().astype(bool)
    for t, s in zip(tri, shared):
        assert M[:, t].all(axis=1).sum() == s  # dense numpy check of each triple's rows
