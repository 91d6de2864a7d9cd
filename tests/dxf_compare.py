"""Side-by-side check of the two DXF readers: the bulk reader against ezdxf's document model."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from pathlen.errors import InputError
from pathlen.geometry import Drawing
from pathlen.importers.dxf import read_bulk
from pathlen.importers.dxf_bulk import read_plain
from pathlen.importers.dxf_ezdxf import loads_silently
from pathlen.importers.dxf_ezdxf import read_dxf as read_with_ezdxf
from pathlen.importers.dxf_tags import NotPlain
from pathlen.importers.dxf_units import in_millimetres, unit_of_code


def assert_same_drawing(a: Drawing, b: Drawing, where: str = "") -> None:
    """Same entities, warnings, counts of skipped kinds, segments (to rounding) and placements."""
    assert a.entities == b.entities, where
    assert a.warnings == b.warnings, where
    assert a.skipped == b.skipped, where
    assert a.recovered == b.recovered, where
    pairs = [(a.lines.p0, b.lines.p0), (a.lines.p1, b.lines.p1), (a.arcs.center, b.arcs.center),
             (a.arcs.u, b.arcs.u), (a.arcs.v, b.arcs.v), (a.arcs.t0, b.arcs.t0), (a.arcs.t1, b.arcs.t1)]
    assert np.array_equal(a.lines.entity, b.lines.entity), where
    assert np.array_equal(a.arcs.entity, b.arcs.entity), where
    assert sorted(a.beziers) == sorted(b.beziers), where
    for d in a.beziers:
        assert np.array_equal(a.beziers[d].entity, b.beziers[d].entity), where
        pairs += [(a.beziers[d].ctrl, b.beziers[d].ctrl), (a.beziers[d].weights, b.beziers[d].weights)]
    for x, y in pairs:
        assert x.shape == y.shape, where
        scale = max(1.0, float(np.max(np.abs(y[np.isfinite(y)]), initial=0.0)))
        # both readers compute with the same formulas; only the last bits of rounding may differ
        np.testing.assert_allclose(x, y, rtol=1e-12, atol=1e-12 * scale, err_msg=where)
    assert len(a.placements) == len(b.placements), where
    for p, q in zip(a.placements, b.placements, strict=True):
        np.testing.assert_allclose(p.matrices, q.matrices, rtol=1e-12, atol=1e-12, err_msg=where)
        assert np.array_equal(p.entity, q.entity), where
        assert (p.grid is None) == (q.grid is None), where
        if p.grid is not None:
            assert p.grid[:2] == q.grid[:2], where
            np.testing.assert_allclose(np.array(p.grid[2:]), np.array(q.grid[2:]), rtol=1e-12, atol=1e-12)
        assert_same_drawing(p.definition, q.definition, where + " (block)")


def compare_readers(path: Path, hidden_layers: bool = False, require_bulk: bool = False) -> bool:
    """Read ``path`` with both readers and require the same drawing (or, when the bulk reader
    declines, nothing to compare).  Returns whether the bulk reader took the file."""
    try:
        plain = read_bulk(path, hidden_layers, keep_rest=True)
    except InputError as bulk_error:
        try:
            read_with_ezdxf(path, None, False, hidden_layers)
        except InputError as ezdxf_error:
            assert str(bulk_error) == str(ezdxf_error), path
            return True
        raise AssertionError(f"{path}: bulk reader refused what ezdxf reads: {bulk_error}") from None
    if plain is None:
        if require_bulk:
            try:
                read_plain(path.read_bytes(), hidden_layers)
            except NotPlain as why:
                raise AssertionError(f"{path}: the bulk reader declined it: {why}") from None
        return False
    silent = loads_silently(plain.rest)
    # the structural check that spares ezdxf's loading must never vouch for a file ezdxf objects to
    assert silent or not plain.rest_checked, f"{path}: ezdxf objects to a rest the bulk reader's check passed"
    if not silent:  # ezdxf objects to the header, tables, blocks or objects: read_dxf defers
        assert not require_bulk, f"{path}: ezdxf objects to the parts outside ENTITIES"
        return False
    bulk = in_millimetres(plain.drawing, *unit_of_code(plain.insunits))
    try:
        reference = read_with_ezdxf(path, None, False, hidden_layers)
    except InputError as refused:
        raise AssertionError(f"{path}: the bulk reader read a file ezdxf refuses ({refused})") from None
    assert_same_drawing(bulk, reference, str(path))
    return True
