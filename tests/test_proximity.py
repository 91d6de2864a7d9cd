"""Grid-hash neighbour search and components against scipy's KD-tree and graph routines."""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from pathlen.proximity import close_pairs, components, nearest_partners


@pytest.mark.parametrize(("n", "tol", "dims", "seed"), [(500, 0.3, 3, 1), (3000, 0.05, 2, 2), (2000, 0.0, 2, 3),
                                                        (50, 100.0, 3, 4), (1, 1.0, 2, 5),
                                                        (30, 3.0, 2, 6), (40, 0.0, 3, 8), (80, 2.0, 3, 9)])
def test_close_pairs_match_kdtree(n, tol, dims, seed):
    # Reference: scipy.spatial.cKDTree.query_pairs (all pairs within a distance), filtered by group.
    # The last three cases have at most FEW_POINTS points: every pair tested directly, no grid.
    rng = np.random.default_rng(seed)
    p = np.zeros((n, 3))
    p[:, :dims] = rng.uniform(-20, 20, (n, dims))
    p = np.concatenate([p, p[: n // 2] + rng.normal(0, max(tol, 1e-3) / 2, (n // 2, 3)) * (np.arange(3) < dims)])
    p[:10] = p[10:20] if len(p) >= 20 else p[:10]  # exact duplicates too
    group = rng.integers(0, 4, len(p))
    ours = {tuple(x) for x in close_pairs(p, tol, group)}
    ref = cKDTree(p).query_pairs(tol, output_type="ndarray")
    ref = {tuple(sorted(x)) for x in ref if group[x[0]] == group[x[1]]}
    assert ours == ref


@pytest.mark.parametrize(("n", "tol", "dims", "seed", "batch"), [(3000, 0.05, 2, 2, None), (500, 0.3, 3, 1, None),
                                                                 (400, 0.5, 2, 3, 7), (60, 2.0, 2, 4, None)])
def test_nearest_partners_match_kdtree(monkeypatch, n, tol, dims, seed, batch):
    # Reference: scipy.spatial.cKDTree.query_ball_point (every point within reach), the nearest picked by
    # distance, then by index; pairs refused by the caller's rule left out.  batch=7: a few candidate pairs
    # at a time (crowded cells are walked in pieces).
    import pathlen.proximity as proximity

    if batch:
        monkeypatch.setattr(proximity, "PAIR_BATCH", batch)
        monkeypatch.setattr(proximity, "QUERY_BATCH", 5)
    rng = np.random.default_rng(seed)
    p = np.zeros((n, 3))
    p[:, :dims] = rng.uniform(-5, 5, (n, dims))
    p = np.concatenate([p, p[: n // 2] + rng.normal(0, tol / 2, (n // 2, 3)) * (np.arange(3) < dims)])
    group = rng.integers(0, 3, len(p)).astype(np.int32)
    query = np.flatnonzero(rng.random(len(p)) < 0.4)

    def refused(src, dst):
        return (src + dst) % 5 == 0

    src, dst = nearest_partners(p, tol, group, query, refused)
    tree = cKDTree(p)
    expect = {}
    for q in query.tolist():
        near = [j for j in tree.query_ball_point(p[q], tol * (1 + 1e-9))
                if j != q and group[j] == group[q] and not refused(np.array(q), np.array(j))
                and np.sum((p[q] - p[j]) ** 2) <= tol * tol]
        if near:
            expect[q] = min(near, key=lambda j: (float(np.linalg.norm(p[q] - p[j])), j))
    assert dict(zip(src.tolist(), dst.tolist(), strict=True)) == expect
    assert len(expect) >= 20  # the check has something to check


def test_components_match_scipy():
    # Reference: scipy.sparse.csgraph.connected_components on the same undirected edges.
    rng = np.random.default_rng(7)
    n = 5000
    a, b = rng.integers(0, n, 4000), rng.integers(0, n, 4000)
    ours = components(n, a, b)
    count, ref = connected_components(coo_matrix((np.ones(len(a)), (a, b)), shape=(n, n)), directed=False)
    assert len(np.unique(ours)) == count
    # the same partition: a bijection between labels
    pairs = set(zip(ours.tolist(), ref.tolist(), strict=True))
    assert len(pairs) == count
    assert np.all(ours <= np.arange(n))  # each label is the smallest member


def test_crowded_cluster_and_sparse_points():
    # Many points packed in a tiny region beside a sparse field: the coarse grid must fall back without
    # losing or inventing pairs (reference: scipy cKDTree).
    rng = np.random.default_rng(9)
    dense = rng.uniform(0, 0.05, (400, 3)) * [1, 1, 0]
    sparse = rng.uniform(0, 5000, (3000, 3)) * [1, 1, 0]
    p = np.concatenate([dense, sparse])
    ours = {tuple(x) for x in close_pairs(p, 0.01)}
    ref = {tuple(sorted(x)) for x in cKDTree(p).query_pairs(0.01, output_type="ndarray")}
    assert ours == ref and len(ref) > 100


@pytest.mark.parametrize(("span", "tol"), [(40.0, 0.5), (4e6, 1e-6)])
def test_close_pairs_in_small_batches_and_wide_cell_numbers(monkeypatch, span, tol):
    # candidates tested a few at a time give the pairs of one pass; a grid whose cell numbers pass
    # int32 (4 km at a micrometre: 4e12 cells) still finds every pair (reference: scipy cKDTree)
    import pathlen.proximity as proximity

    rng = np.random.default_rng(11)
    p = np.zeros((3000, 3))
    p[:, :2] = rng.uniform(0, span, (3000, 2))
    p = np.concatenate([p, p[:1500] + rng.normal(0, tol / 2, (1500, 3)) * [1, 1, 0]])
    ref = {tuple(sorted(x)) for x in cKDTree(p).query_pairs(tol, output_type="ndarray")}
    whole = close_pairs(p, tol)
    monkeypatch.setattr(proximity, "PAIR_BATCH", 7)
    batched = close_pairs(p, tol)
    assert np.array_equal(whole, batched) and {tuple(x) for x in whole} == ref and len(ref) > 500


@given(st.lists(st.integers(-5, 5), max_size=60), st.sampled_from(["int64", "S3"]))
def test_distinct_is_numpys_unique(values, dtype):
    # pathlen.geometry.distinct replaces np.unique on big arrays (sorting, not hashing): the reference is
    # numpy's own np.unique, values and inverse alike
    from pathlen.geometry import distinct

    a = np.array([str(v).encode() if dtype == "S3" else v for v in values], dtype=dtype)
    want, want_inverse = np.unique(a, return_inverse=True)
    got, inverse = distinct(a, return_inverse=True)
    assert got.tolist() == want.tolist() and distinct(a).tolist() == want.tolist()
    assert inverse.tolist() == want_inverse.ravel().tolist()
