"""Block definitions and INSERT placements, as both DXF readers handle them (no ezdxf needed here).

Each block is built once per name and placed by every INSERT as a whole (see
:meth:`~pathlen.geometry.SegmentCollector.add_placement`); a block that inserts itself, at any depth,
fails the file naming the chain; entities on layer "0" inside a block take the INSERT's layer.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable

import numpy as np

from pathlen.errors import InputError
from pathlen.geometry import Drawing, FloatArray, SegmentCollector


class BlockCache:
    """Block drawings by the name INSERTs use.  The reader that owns the cache passes its builder with
    each request rather than the cache keeping it: a reader holding a cache holding the reader's bound
    method would be a reference cycle, left for the garbage collector (its arrays with it) after every file."""

    def __init__(self) -> None:
        self.drawings: dict[str, Drawing] = {}
        self.open_blocks: list[str] = []

    def get(self, name: str, coll: SegmentCollector, build: Callable[[str], Drawing | None]) -> Drawing | None:
        """The block's drawing, made by ``build(name)`` (None: no such block) on first use; a warning in
        ``coll`` when it is not defined."""
        if name in self.drawings:
            return self.drawings[name]
        if name in self.open_blocks:
            chain = [*self.open_blocks[self.open_blocks.index(name):], name]
            steps = ", ".join(f"{a!r} inserts {b!r}" for a, b in itertools.pairwise(chain))
            raise InputError(f"block cycle: {steps}; a block cannot contain itself")
        self.open_blocks.append(name)
        try:
            drawing = build(name)
        finally:
            self.open_blocks.pop()
        if drawing is None:
            coll.warn(f"block {name!r} is not defined: INSERT skipped")
            return None
        self.drawings[name] = drawing
        return drawing


def place_insert(coll: SegmentCollector, block: Drawing, matrix: FloatArray, name: str, layer: str, handle: str,
                 grid: tuple[int, int, FloatArray, FloatArray] | None) -> None:
    """Place ``block`` by one INSERT (4x4 ``matrix``, column convention; ``grid`` for a MINSERT), or warn
    and skip it when its map is not finite."""
    if not np.all(np.isfinite(matrix)):
        coll.warn(f"INSERT #{handle} of block {name!r} skipped: non-finite insertion point, scale or rotation")
        return
    coll.add_placement(block, matrix, (name, layer), lambda lay: layer if lay == "0" else lay, f"{name}/", grid,
                       frozen=layer in coll.frozen_layers)
