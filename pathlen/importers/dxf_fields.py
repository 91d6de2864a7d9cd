"""Entity fields of a tag table, for many entities at once.

Inside an entity a group code names a field (DXF reference, "Entities Section").  :class:`Fields`
answers "the value of code ``c`` for each of these entities" as arrays, from the tags of that code
across the whole file.  Tags inside application groups (``102 {NAME ... 102 }``) are not fields of
the entity and are left out.  A field given twice, or a point whose y does not follow its x, raises
:class:`~pathlen.importers.dxf_tags.NotPlain`: ezdxf resolves such files its own way.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from pathlen.importers.dxf_tags import NotPlain, TagTable

IntArray = NDArray[np.int64]
#: Up to this many entities, each field's per-entity tag index is kept once looked up (a few kinds ask
#: for the same field); beyond, it is made again each time (8 bytes an entity a field).
FIELDS_KEPT_UP_TO = 1 << 16


class Fields:
    """Field lookup over a tag table whose tag ``i`` belongs to entity ``owner[i]``."""

    def __init__(self, tags: TagTable, owner: NDArray[np.int32], entity_count: int) -> None:
        self.tags = tags
        self.owner = owner
        self.count = entity_count
        self.grouped = _application_groups(tags, owner)
        self._by_code: dict[int, IntArray] = {}
        self._where_of: dict[int, tuple[IntArray, NDArray[np.bool_] | None]] = {}

    def tags_of(self, code: int) -> IntArray:
        """Indices of the tags with ``code`` outside application groups, in file order."""
        if code not in self._by_code:
            idx = np.flatnonzero(self.tags.codes == code)
            self._by_code[code] = idx[~self.grouped[idx]] if len(self.grouped) else idx
        return self._by_code[code]

    def first(self, code: int, entities: IntArray) -> IntArray:
        """Tag index of the field ``code`` of each entity (-1 where it has none)."""
        where, twice = self._where(code)
        if twice is not None and len(entities) and twice[entities].any():
            raise NotPlain(f"group code {code} twice in one entity")
        return where[entities]

    def _where(self, code: int) -> tuple[IntArray, NDArray[np.bool_] | None]:
        """Per entity: the tag index of field ``code`` (-1: none; the last where given twice), and which
        entities have it twice (None: none does).  Kept for the next call when the file has few entities."""
        hit = self._where_of.get(code)
        if hit is not None:
            return hit
        idx = self.tags_of(code)
        own = self.owner[idx]
        where = np.full(self.count, -1, dtype=np.int64)
        where[own] = idx
        repeated = own[1:] == own[:-1]  # owners ascend with the tags
        twice = None
        if repeated.any():
            twice = np.zeros(self.count, dtype=bool)
            twice[own[1:][repeated]] = True
        if self.count <= FIELDS_KEPT_UP_TO:
            self._where_of[code] = where, twice
        return where, twice

    def number(self, code: int, entities: IntArray, default: float | None = None) -> NDArray[np.float64]:
        """Numeric field per entity; ``default`` where missing (None: the field is required)."""
        at = self.first(code, entities)
        return self._fill(self.tags.number[np.maximum(at, 0)], at, default, code)

    def integer(self, code: int, entities: IntArray, default: int) -> IntArray:
        values = self.number(code, entities, float(default))
        if not (values == np.round(values)).all():
            raise NotPlain(f"group code {code} is not an integer")
        return values.astype(np.int64)

    def point(self, code: int, entities: IntArray, default: tuple[float, float, float] | None = None
              ) -> NDArray[np.float64]:
        """Point field (x: ``code``, y: ``code + 10``, optional z: ``code + 20``) per entity, ``[n, 3]``."""
        at = self.first(code, entities)
        xyz = self.points_at(at[at >= 0], code)
        out = np.empty((len(entities), 3))
        out[at >= 0] = xyz
        if (at < 0).any():
            if default is None:
                raise NotPlain(f"an entity without group code {code}")
            out[at < 0] = default
        return out

    def points_at(self, idx: IntArray, code: int, flat: bool = False) -> NDArray[np.float64]:
        """Points whose x tags are ``idx``; ``flat``: a z must not follow (LWPOLYLINE vertices)."""
        codes, number = self.tags.codes, self.tags.number
        last = len(codes) - 1
        y_at, z_at = np.minimum(idx + 1, last), np.minimum(idx + 2, last)
        if not (codes[y_at] == code + 10).all():
            raise NotPlain(f"group code {code} without its y")
        has_z = (codes[z_at] == code + 20) & (z_at == idx + 2)
        if flat and has_z.any():
            raise NotPlain(f"a z after a 2-D point of group code {code}")
        out = np.empty((len(idx), 3))
        out[:, 0], out[:, 1] = number[idx], number[y_at]
        out[:, 2] = np.where(has_z, number[z_at], 0.0)
        return out

    def text(self, code: int, entities: IntArray, default: str | None = None, repeated: bool = True) -> list[str]:
        """Text field per entity; ``repeated``: see :meth:`TagTable.texts` (False for handles)."""
        at = self.first(code, entities)
        if (at < 0).any() and default is None:
            raise NotPlain(f"an entity without group code {code}")
        values = self.tags.texts(at[at >= 0], repeated)
        if len(values) == len(at):
            return values
        it = iter(values)
        return [next(it) if a >= 0 else default for a in at.tolist()]  # type: ignore[misc]

    def required_raw_text(self, code: int, entities: IntArray) -> NDArray[np.bytes_]:
        """Text field every one of ``entities`` has (else :class:`NotPlain`), as a bytes array (see
        :meth:`TagTable.raw_texts`): decoded later, once the tag table is let go."""
        at = self.first(code, entities)
        if (at < 0).any():
            raise NotPlain(f"an entity without group code {code}")
        return self.tags.raw_texts(at)

    def many(self, code: int, wanted: NDArray[np.bool_]) -> tuple[IntArray, IntArray]:
        """Every tag of ``code`` whose entity is ``wanted`` (mask over entities): (tag indices, entities)."""
        idx = self.tags_of(code)
        own = self.owner[idx]
        keep = wanted[own]
        return idx[keep], own[keep].astype(np.int64)

    @staticmethod
    def _fill(values: NDArray[np.float64], at: IntArray, default: float | None, code: int) -> NDArray[np.float64]:
        if (at < 0).any():
            if default is None:
                raise NotPlain(f"an entity without group code {code}")
            values = np.where(at >= 0, values, default)
        return values


def _application_groups(tags: TagTable, owner: NDArray[np.int32]) -> NDArray[np.bool_]:
    """Mask of tags inside ``102 {NAME ... 102 }`` groups (empty array when the file has none)."""
    marks = np.flatnonzero(tags.codes == 102)
    if len(marks) == 0:
        return np.zeros(0, dtype=bool)
    data = tags.data
    opens = np.array([data[s:s + 1] == b"{" for s in tags.start[marks].tolist()], dtype=bool)
    closes = np.array([data[s:e] == b"}" for s, e in zip(tags.start[marks].tolist(), tags.end(marks).tolist(),
                                                         strict=True)], dtype=bool)
    if not (opens | closes).all():
        raise NotPlain("group code 102 that neither opens nor closes a group")
    step = np.zeros(len(tags) + 1, dtype=np.int32)
    step[marks] = np.where(opens, 1, -1)
    depth = np.cumsum(step[:-1])
    if depth.min() < 0 or depth.max() > 1:
        raise NotPlain("nested or unbalanced application groups")
    inside = depth > 0
    inside[marks[closes]] = True
    if (owner[marks[opens]] != owner[np.minimum(marks[opens] + 1, len(owner) - 1)]).any() or \
            inside[tags.codes == 0].any():
        raise NotPlain("an application group that is not closed in its entity")
    return inside
