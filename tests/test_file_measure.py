"""Per-layer and per-colour totals of a file's entities (pathlen.file_measure.totals_by)."""

import random

import numpy as np

from pathlen.batch import LayerTotal
from pathlen.file_measure import totals_by


def _reference(keys, length, bound, copies):
    """The sums written out one entity at a time, in the entities' order, keys sorted."""
    out: dict[str, list] = {}
    for k, a, b, c in zip(keys, length.tolist(), bound.tolist(), copies, strict=True):
        row = out.setdefault(k, [0.0, 0.0, 0])
        row[0] += a
        row[1] += b
        row[2] += c
    return {k: LayerTotal(*out[k]) for k in sorted(out)}


def test_totals_by_key_equal_a_plain_loop_and_come_sorted():
    rng = random.Random(7)
    names = ["0", "CUT", "ENGRAVE", "Layer 10", "Layer 9", "ÄUSSERE", "", "#ff0000", "a b"]
    for n in (0, 1, 40, 5000):
        keys = [rng.choice(names) for _ in range(n)]
        length = np.array([rng.uniform(0.0, 1e4) for _ in range(n)])
        bound = length * 1e-12
        copies = [rng.choice([1, 1, 1, 4, 0]) for _ in range(n)]
        got = totals_by(keys, length, bound, copies)
        assert got == _reference(keys, length, bound, copies)
        assert list(got) == sorted(got)
