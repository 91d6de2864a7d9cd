"""Bulk DXF reader: a text DXF file's tags straight to segment arrays, every entity kind at once.

The ezdxf reader (:mod:`pathlen.importers.dxf`) builds ezdxf's document model and walks it entity by
entity.  This one parses the tag stream in bulk (:mod:`~pathlen.importers.dxf_tags`), places every
entity (:mod:`~pathlen.importers.dxf_layout`), reads the fields of all entities of a kind as arrays
(:mod:`~pathlen.importers.dxf_fields`) and computes their segments with the same formulas as the ezdxf
reader's handlers, in the same order, so that both give the same drawing.  Blocks, INSERT placements,
layer "0" inheritance, hidden layers, units and warnings follow the ezdxf reader's rules exactly.

Whatever it is not sure of raises :class:`~pathlen.importers.dxf_tags.NotPlain`, and the file is read
by ezdxf instead: a file is either read by this module in full or not at all.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from pathlen.geometry import (
    Beziers,
    Drawing,
    EllipticArcs,
    Entity,
    FloatArray,
    IntArray,
    Lines,
    SegmentCollector,
    distinct,
    take_rows,
)
from pathlen.importers.dxf_blocks import BlockCache, place_insert
from pathlen.importers.dxf_fields import Fields
from pathlen.importers.dxf_layout import MEASURED, Layout, header_variable, layout
from pathlen.importers.dxf_rest import rest_is_plain
from pathlen.importers.dxf_tags import PADDING, NotPlain, TagTable, code_table, decode_texts, has_code, parse_tags
from pathlen.importers.nurbs import window_beziers

TWO_PI = 2.0 * math.pi
Z_AXIS = (0.0, 0.0, 1.0)
#: The ezdxf reader's warning for splines given by fit points only (kept word for word).
FIT_POINTS_WARNING = ("SPLINE given by fit points only: curve reconstructed by ezdxf's fit-point "
                      "interpolation, which may differ from the drawing program's")


#: Splines split into Bézier pieces per numpy pass.
SPLINE_CHUNK = 16384

#: Subclass markers of each kind read here, as written since DXF R2000 (DXF reference, the entities'
#: group code tables): AcDbEntity, then the kind's own (ARC: AcDbCircle, AcDbArc; VERTEX: AcDbVertex and
#: its 2-D or 3-D one).
SUBCLASS_MARKERS = {"LINE": 2, "CIRCLE": 2, "ARC": 3, "ELLIPSE": 2, "LWPOLYLINE": 2, "POLYLINE": 2, "SPLINE": 2,
                    "INSERT": 2, "VERTEX": 3}
#: Group codes of the fields read here from the kinds' own subclasses.
FIELD_CODES = np.array([2, 10, 11, 12, 13, 38, 40, 41, 42, 43, 44, 45, 50, 51, 66, 70, 71, 72, 73, 74, 210])
_FIELD_TABLE = code_table(FIELD_CODES)


@dataclass
class PlainDxf:
    """What the bulk reader found: the model space drawing (in drawing units), ``$INSUNITS``, and the
    file without the body of its ENTITIES section (everything this reader checked entity by entity)."""

    drawing: Drawing
    insunits: int
    #: the file without its entities, for ezdxf to load: empty when :func:`rest_is_plain` vouched for
    #: it (unless asked for) and nothing is left to check
    rest: bytes
    rest_checked: bool = False


def read_plain(data: bytes | bytearray, hidden_layers: bool = False, keep_rest: bool = False) -> PlainDxf:
    """Read a text DXF file's model space from its bytes; raises NotPlain (read it with ezdxf)."""
    tags = parse_tags(data)
    del data  # the tag table keeps the bytes as long as it needs them
    lay = layout(tags)
    checked = rest_is_plain(tags, lay)
    rest = _without_entities(tags, lay) if keep_rest or not checked else b""
    reader = _Reader(tags, lay, hidden_layers)
    del tags  # the reader let go of it: the file's bytes and the tag table are freed here
    lay.owner = np.zeros(0, dtype=np.int32)  # per tag: no longer needed
    reader.sort_batches()
    return PlainDxf(reader.model(), reader.insunits, rest, checked)


def _without_entities(tags: TagTable, lay: Layout) -> bytes:
    """The file's bytes with the ENTITIES section emptied (its SECTION and ENDSEC kept)."""
    data, size = tags.data, len(tags.data) - PADDING
    if lay.entities_body is None:
        return bytes(data[:size])
    first, endsec = (int(lay.first_tag[k]) for k in lay.entities_body)

    def line_start(t: int) -> int:  # where tag t's group-code line begins
        return data.index(b"\n", tags.end(t - 1)) + 1

    return bytes(data[:line_start(first)] + data[line_start(endsec):size])


#: Entities whose coordinate and value codes each appear once (DXF reference): a repeat is damage.
SINGLE_CODE_KINDS = ("LINE", "CIRCLE", "ARC", "ELLIPSE", "INSERT")


def _repeated_single_codes(tags: TagTable, lay: Layout) -> bool:
    """Whether an entity of :data:`SINGLE_CODE_KINDS` has a coordinate or value code (10-59, 210-239)
    twice (a code changed into another valid one, say 11 into 21)."""
    owner = lay.owner
    codes = tags.codes
    valued = (owner >= 0) & (((codes >= 10) & (codes <= 59)) | ((codes >= 210) & (codes <= 239)))
    kinds = np.array([k in SINGLE_CODE_KINDS for k in lay.kinds], dtype=bool)
    pick = np.flatnonzero(valued)
    pick = pick[kinds[owner[pick]]]
    if len(pick) == 0:
        return False
    key = owner[pick].astype(np.int64) * 1024 + codes[pick]
    return len(distinct(key)) < len(key)


class _Segments:
    """Segments of all entities, tagged with their entity number (file order)."""

    def __init__(self) -> None:
        self.lines: list[tuple[FloatArray, FloatArray, IntArray]] = []
        self.arcs: list[tuple[FloatArray, FloatArray, FloatArray, FloatArray, FloatArray, IntArray]] = []
        self.beziers: dict[int, list[tuple[FloatArray, FloatArray, IntArray]]] = {}

    def sorted_batches(self) -> tuple[Lines, EllipticArcs, dict[int, Beziers]]:
        """The batches with rows in entity-number order (file order, as the ezdxf reader appends them),
        whose ``entity`` is the entity number.  The pieces are let go column by column as they are
        joined: the peak is the pieces plus one column, not the pieces plus a joined and a sorted copy."""
        lines = Lines(*_sorted_columns(self.lines, 3)) if self.lines else \
            Lines(np.zeros((0, 3)), np.zeros((0, 3)), np.zeros(0, dtype=np.int64))
        arcs = EllipticArcs(*_sorted_columns(self.arcs, 6)) if self.arcs else \
            EllipticArcs(*[np.zeros((0, 3))] * 3, np.zeros(0), np.zeros(0), np.zeros(0, dtype=np.int64))
        beziers = {d: Beziers(*_sorted_columns(self.beziers[d], 3)) for d in sorted(self.beziers)}
        self.lines, self.arcs, self.beziers = [], [], {}
        return lines, arcs, beziers


def _sorted_columns(pieces: list[tuple], width: int) -> list[NDArray]:
    """Columns of ``pieces`` (tuples whose last column is the entity number) joined and sorted by entity
    number (stable); each piece's column is dropped once joined."""
    columns = [list(col) for col in zip(*pieces, strict=True)]
    pieces.clear()
    entity = np.concatenate(columns[width - 1])
    order = np.argsort(entity, kind="stable")
    out = []
    for k in range(width):
        joined = np.concatenate(columns[k]) if k < width - 1 else entity
        columns[k] = []
        out.append(take_rows(joined, order) if joined.ndim > 1 else joined[order])
        del joined
    return out


class _Reader:
    def __init__(self, tags: TagTable, lay: Layout, hidden_layers: bool) -> None:
        self.tags = tags
        self.lay = lay
        if ((tags.codes == 60) & (tags.number != 0) & (lay.owner >= 0)).any():
            raise NotPlain("entities marked invisible (group 60)")  # ezdxf's reader leaves them out
        if _repeated_single_codes(tags, lay):
            raise NotPlain("a group code given twice in one entity")  # damage: ezdxf's reader names it
        self.f = Fields(tags, lay.owner, len(lay.kinds))
        self.kinds = lay.kinds
        self.hidden, self.frozen = (frozenset(), frozenset()) if hidden_layers else self._hidden_layers()
        self.insunits = self._insunits()
        self.spaces = self._spaces()
        self.block_index = {b.name.lower(): k for k, b in enumerate(lay.blocks)}
        self.blocks = BlockCache()
        self.skipped_rows: dict[int, str] = {}
        self.fit_splines: set[int] = set()
        self.loops = np.zeros(len(lay.kinds), dtype=bool)  # closed in the file (per entity number)
        self._measure_all()
        del self.tags, self.f  # the tag table is not needed to assemble the drawing: free it first

    # ----- tables and header -------------------------------------------------------------------
    def _hidden_layers(self) -> tuple[frozenset[str], frozenset[str]]:
        """Layers switched off or frozen, and the frozen ones (as the ezdxf reader's)."""
        entries = np.array(self.lay.layer_entries, dtype=np.int64)
        names = self.f.text(2, entries, "")
        if len({n.lower() for n in names}) != len(names) or "" in names:
            raise NotPlain("layer table with a nameless or repeated layer")
        colour = self.f.integer(62, entries, 7)
        flags = self.f.integer(70, entries, 0)
        rows = list(zip(names, colour.tolist(), flags.tolist(), strict=True))
        return frozenset(n for n, c, fl in rows if c < 0 or fl & 1), frozenset(n for n, _, fl in rows if fl & 1)

    def _insunits(self) -> int:
        codes = self.tags.codes
        assert self.lay.header is not None  # the layout refuses a file without one
        found = header_variable(self.tags, *self.lay.header, b"$INSUNITS")
        if not found:
            return 0
        if len(found) > 1 or codes[found[0] + 1] != 70:
            raise NotPlain("$INSUNITS given twice or without its value")
        value = float(self.tags.number[found[0] + 1])
        if value != round(value):
            raise NotPlain("$INSUNITS is not an integer")
        return int(value)

    def _spaces(self) -> dict[int, list[int]]:
        """Entities of model space (key -1) and of each block (key: block number), main entities only."""
        lay = self.lay
        records = np.array(lay.block_records, dtype=np.int64)
        record_names = [n.lower() for n in self.f.text(2, records, "")]
        record_handles = self.f.text(5, records, "", repeated=False)
        model = dict(zip(record_names, record_handles, strict=True))
        names = self.f.text(2, np.array([b.head for b in lay.blocks], dtype=np.int64), "")
        for b, name in zip(lay.blocks, names, strict=True):
            b.name = name
        keys = [n.lower() for n in names]
        if "" in keys or len(set(keys)) != len(keys):
            raise NotPlain("a nameless or repeated block name")
        if records.size and not set(keys) <= set(record_names):
            raise NotPlain("a block without a block record")
        for b in lay.blocks:
            if b.name.lower() == "*model_space" and b.entities:
                raise NotPlain("entities in the *Model_Space block")
        spaces = {k: b.entities for k, b in enumerate(lay.blocks)}
        ents = np.array(lay.entities, dtype=np.int64)
        owner = self.f.text(330, ents, "")
        paper_flag = self.f.integer(67, ents, 0)
        msp, psp = model.get("*model_space"), model.get("*paper_space")
        paper = [(o == psp) if o in (msp, psp) and o else bool(flag)
                 for o, flag in zip(owner, paper_flag.tolist(), strict=True)]
        spaces[-1] = [e for e, p in zip(lay.entities, paper, strict=True) if not p]
        return spaces

    # ----- geometry of all measured entities ----------------------------------------------------
    def _measure_all(self) -> None:
        kinds = self.kinds
        by_kind: dict[str, list[int]] = {k: [] for k in (*MEASURED, "INSERT")}
        for ents in self.spaces.values():
            for e in ents:
                if kinds[e] in by_kind:
                    by_kind[kinds[e]].append(e)
        self.by_kind = {k: np.array(sorted(v), dtype=np.int64) for k, v in by_kind.items()}
        self._check_subclasses()
        seg = _Segments()
        self._lines(seg)
        self._circles(seg)
        self._ellipses(seg)
        self._lwpolylines(seg)
        self._polylines(seg)
        self._splines(seg)
        self.segments = seg
        self._inserts()
        row = np.zeros(len(kinds), dtype=bool)
        for k, v in self.by_kind.items():
            row[v] = k != "INSERT"
        row[list(self.skipped_rows)] = False
        rows = np.flatnonzero(row)
        self.row_entities = rows  # entities that get an entity row, file order
        self.row_layers = self.f.text(8, rows, "0")
        self.row_handles: list[str] | NDArray[np.bytes_] = self.f.required_raw_text(5, rows)  # decoded when sorted

    def _check_subclasses(self) -> None:
        """Subclass markers (group code 100) as ezdxf loads them: none (R12), or the kind's own count with
        every field read here after the second marker (in the kind's own subclass).  ezdxf reads fields
        by subclass, so a missing, extra or moved marker changes what it reads: such files go to ezdxf."""
        kinds, f = self.kinds, self.f
        vertices = [v for run in self.lay.vertices.values() for v in run]
        ents = np.sort(np.concatenate([*self.by_kind.values(), np.array(vertices, dtype=np.int64)]))
        expected = np.array([SUBCLASS_MARKERS[kinds[e]] for e in ents.tolist()], dtype=np.int64)
        markers = f.tags_of(100)
        own = self.lay.owner[markers].astype(np.int64)
        found = np.bincount(own, minlength=len(kinds))[ents]
        if ((found != 0) & (found != expected)).any():
            raise NotPlain("an entity whose subclass markers are not its kind's")
        rank = np.arange(len(own)) - np.searchsorted(own, own)
        second = np.full(len(kinds), -1, dtype=np.int64)
        second[own[rank == 1]] = markers[rank == 1]
        wanted = np.zeros(len(kinds), dtype=bool)
        wanted[ents] = True
        fields = np.flatnonzero(has_code(self.tags.codes, _FIELD_TABLE))
        owner = self.lay.owner[fields]
        check = wanted[owner] & (second[owner] >= 0)
        if (fields[check] < second[owner[check]]).any():
            raise NotPlain("a field before its subclass marker")

    def _ocs_to_wcs(self, ents: IntArray) -> _Ocs:
        if len(self.f.tags_of(210)) == 0:  # no extrusion in the file: every entity's OCS is the WCS
            return _Ocs.world(len(ents))
        return _Ocs(self.f.point(210, ents, Z_AXIS))

    def _lines(self, seg: _Segments) -> None:
        e = self.by_kind["LINE"]
        if len(e) == 0:
            return
        seg.lines.append((self.f.point(10, e), self.f.point(11, e), e))

    def _circles(self, seg: _Segments) -> None:
        for kind in ("CIRCLE", "ARC"):
            e = self.by_kind[kind]
            if len(e) == 0:
                continue
            r = self.f.number(40, e)
            if not (r > 0).all():
                raise NotPlain("a circle or arc whose radius is not positive")
            ocs = self._ocs_to_wcs(e)
            zero = np.zeros_like(r)
            center = ocs.points(self.f.point(10, e))
            u = ocs.points(np.stack([r, zero, zero], axis=1))
            v = ocs.points(np.stack([zero, r, zero], axis=1))
            if kind == "CIRCLE":
                t0, t1 = zero, np.full_like(r, TWO_PI)
            else:
                t0 = np.radians(self.f.number(50, e)) % TWO_PI
                t1 = np.radians(self.f.number(51, e)) % TWO_PI
                t1 = np.where(t1 <= t0, t1 + TWO_PI, t1)
            seg.arcs.append((center, u, v, t0, t1, e))

    def _ellipses(self, seg: _Segments) -> None:
        e = self.by_kind["ELLIPSE"]
        if len(e) == 0:
            return
        center, major = self.f.point(10, e), self.f.point(11, e)
        ratio = self.f.number(40, e)
        t0, t1 = self.f.number(41, e, 0.0), self.f.number(42, e, TWO_PI)
        extrusion = self.f.point(210, e, Z_AXIS)
        cross = np.cross(extrusion, major)
        length = _magnitude(cross)
        if (length == 0).any():
            raise NotPlain("an ellipse whose major axis is parallel to its extrusion")
        minor = cross * ((_magnitude(major) * ratio) / length)[:, None]
        part = np.abs((t1 - t0) - TWO_PI) > 1e-12
        s0, s1 = t0 % TWO_PI, t1 % TWO_PI
        s1 = np.where(s1 <= s0, s1 + TWO_PI, s1)
        seg.arcs.append((center, major, minor, np.where(part, s0, t0), np.where(part, s1, t1), e))

    def _lwpolylines(self, seg: _Segments) -> None:
        e = self.by_kind["LWPOLYLINE"]
        if len(e) == 0:
            return
        wanted = self._mask(e)
        idx, own = self.f.many(10, wanted)
        xyz = self.f.points_at(idx, 10, flat=True)
        bulge = np.zeros(len(idx))
        b_idx, b_own = self.f.many(42, wanted)
        vertex = np.searchsorted(idx, b_idx) - 1
        if (vertex < 0).any() or (own[np.maximum(vertex, 0)] != b_own).any() or len(distinct(vertex)) < len(vertex):
            raise NotPlain("a bulge that does not follow its vertex")
        bulge[vertex] = self.tags.number[b_idx]
        flags = self.f.integer(70, e, 0)
        elevation = self.f.number(38, e, 0.0)
        closed = (flags & 1).astype(bool)
        self.loops[e[closed]] = True
        _bulge_path(seg, xyz[:, 0], xyz[:, 1], own, e, elevation, closed, self._ocs_to_wcs(e), bulge)

    def _polylines(self, seg: _Segments) -> None:
        e = self.by_kind["POLYLINE"]
        if len(e) == 0:
            return
        flags = self.f.integer(70, e, 0)
        mesh = (flags & (16 | 64)) != 0
        for m in e[mesh].tolist():
            self.skipped_rows[m] = "POLYLINE mesh"
        e, flags = e[~mesh], flags[~mesh]
        closed = (flags & 1).astype(bool)
        vertex_lists = [self.lay.vertices[m] for m in e.tolist()]
        verts = np.array(list(itertools.chain.from_iterable(vertex_lists)), dtype=np.int64)
        own = np.repeat(e, [len(v) for v in vertex_lists])
        keep = (self.f.integer(70, verts, 0) & 16) == 0  # 16: spline frame control point
        verts, own = verts[keep], own[keep]
        if len(e) and (np.bincount(np.searchsorted(e, own), minlength=len(e)) < 2).any():
            raise NotPlain("a POLYLINE with fewer than two vertices")
        location = self.f.point(10, verts)
        self.loops[e[closed]] = True
        three_d = (flags & 8) != 0
        if three_d.any():
            _polyline_3d(seg, location, own, e[three_d], closed[three_d])
        flat = ~three_d
        if flat.any():
            pick = np.isin(own, e[flat])
            elevation = self.f.point(10, e[flat], (0.0, 0.0, 0.0))[:, 2]
            bulge = self.f.number(42, verts[pick], 0.0)
            _bulge_path(seg, location[pick, 0], location[pick, 1], own[pick], e[flat], elevation, closed[flat],
                        self._ocs_to_wcs(e[flat]), bulge)

    def _splines(self, seg: _Segments) -> None:
        e = self.by_kind["SPLINE"]
        if len(e) == 0:
            return
        wanted = self._mask(e)
        ctrl_idx, ctrl_own = self.f.many(10, wanted)
        knot_idx, knot_own = self.f.many(40, wanted)
        w_idx, w_own = self.f.many(41, wanted)
        fit_idx, fit_own = self.f.many(11, wanted)
        degree = self.f.integer(71, e, 3)
        where = np.searchsorted(e, ctrl_own)
        n_ctrl = np.bincount(where, minlength=len(e))
        n_knot = np.bincount(np.searchsorted(e, knot_own), minlength=len(e))
        n_w = np.bincount(np.searchsorted(e, w_own), minlength=len(e))
        n_fit = np.bincount(np.searchsorted(e, fit_own), minlength=len(e))
        ctrl = self.f.points_at(ctrl_idx, 10)
        knots = self.tags.number[knot_idx]
        weights = self.tags.number[w_idx]
        by_ctrl = n_ctrl > 0
        if (~by_ctrl & (n_fit == 0)).any():
            raise NotPlain("a SPLINE without control or fit points")
        p, n = degree, n_ctrl
        bad = by_ctrl & ((p < 1) | (n < p + 1) | (n_knot != n + p + 1) | ((n_w != 0) & (n_w != n)))
        if bad.any():
            raise NotPlain("a SPLINE with inconsistent counts")
        c_start, k_start, w_start = _starts(n_ctrl), _starts(n_knot), _starts(n_w)
        if len(knots) and (np.diff(knots)[(np.diff(np.searchsorted(e, knot_own)) == 0)] < 0).any():
            raise NotPlain("a SPLINE whose knots decrease")
        if len(weights) and not (weights > 0).all():
            raise NotPlain("a SPLINE with a weight that is not positive")
        self._spline_groups(seg, e[by_ctrl], p[by_ctrl], n[by_ctrl], ctrl, c_start[by_ctrl], knots, k_start[by_ctrl],
                            weights, w_start[by_ctrl], n_w[by_ctrl] > 0)
        if (~by_ctrl).any():
            self._fit_splines(seg, e[~by_ctrl], fit_idx, fit_own)

    def _spline_groups(self, seg: _Segments, ents: IntArray, degree: IntArray, count: IntArray, ctrl: FloatArray,
                       c0: IntArray, knots: FloatArray, k0: IntArray, weights: FloatArray, w0: IntArray,
                       has_w: NDArray[np.bool_]) -> None:
        """Splines (arrays aligned with ``ents``) split a group at a time: one group per degree and count,
        at most :data:`SPLINE_CHUNK` splines per pass (bounds the temporaries of the knot insertion)."""
        for deg, n in sorted(set(zip(degree.tolist(), count.tolist(), strict=True))):
            whole = np.flatnonzero((degree == deg) & (count == n))
            for lo in range(0, len(whole), SPLINE_CHUNK):
                group = whole[lo:lo + SPLINE_CHUNK]
                self._spline_group(seg, ents[group], deg, n, ctrl, c0[group], knots, k0[group], weights, w0[group],
                                   has_w[group])

    def _spline_group(self, seg: _Segments, ents: IntArray, p: int, n: int, ctrl: FloatArray, c0: IntArray,
                      knots: FloatArray, k0: IntArray, weights: FloatArray, w0: IntArray, has_w: NDArray[np.bool_]
                      ) -> None:
        """Splines of one degree and control-point count, split into Bézier pieces together."""
        cp = take_rows(ctrl, c0[:, None] + np.arange(n))  # [S, n, 3]
        kv = knots[k0[:, None] + np.arange(n + p + 1)]  # [S, n+p+1]
        w = np.ones((len(ents), n))
        given = np.flatnonzero(has_w)
        w[given] = weights[w0[given][:, None] + np.arange(n)]
        if (kv[:, n] <= kv[:, p]).any():
            raise NotPlain("a SPLINE with an empty knot domain")
        homog = np.concatenate([cp * w[:, :, None], w[:, :, None]], axis=2)
        spans = np.arange(p, n)
        s_idx, k_idx = np.nonzero(take_rows(kv.T, spans + 1).T > take_rows(kv.T, spans).T)
        k = spans[k_idx]
        local = homog[s_idx[:, None], k[:, None] - p + np.arange(p + 1)]
        window = kv[s_idx[:, None], k[:, None] - p + 1 + np.arange(2 * p)]
        h = window_beziers(local, window, p)
        piece_ctrl, piece_w = h[:, :, :3] / h[:, :, 3:], h[:, :, 3]
        rational = has_w & (np.ptp(w, axis=1) > 0)
        piece_w = np.where(rational[s_idx][:, None], piece_w, 1.0)
        _add_pieces(seg, piece_ctrl, piece_w, ents[s_idx], p)

    def _fit_splines(self, seg: _Segments, ents: IntArray, fit_idx: IntArray, fit_own: IntArray) -> None:
        """Splines given by fit points (``ents``, ascending), through ezdxf's own interpolation (as the ezdxf
        reader does); the control points it gives are split into Bézier pieces with the others, by degree
        and count."""
        from ezdxf.math import fit_points_to_cad_cv

        points = self.f.points_at(fit_idx, 11).tolist()
        first, last = np.searchsorted(fit_own, ents).tolist(), np.searchsorted(fit_own, ents, side="right").tolist()
        t_start, t_end = self.f.first(12, ents), self.f.first(13, ents)
        both = np.flatnonzero((t_start >= 0) & (t_end >= 0))
        given = dict(zip(both.tolist(), zip(self.f.points_at(t_start[both], 12).tolist(),
                                            self.f.points_at(t_end[both], 13).tolist(), strict=True), strict=True))
        ctrl: list[list[float]] = []
        knots: list[float] = []
        shapes: list[tuple[int, int]] = []  # (degree, control points) per spline
        for i, e in enumerate(ents.tolist()):
            tangents = [tuple(t) for t in given[i]] if i in given else None
            try:
                tool = fit_points_to_cad_cv([tuple(p) for p in points[first[i]:last[i]]], tangents=tangents)
                cps, kv = [list(c) for c in tool.control_points], list(tool.knots())
            except Exception as exc:  # noqa: BLE001 - whatever ezdxf's interpolation raises, ezdxf's reader reports
                raise NotPlain(f"fit-point spline: {exc}") from None
            if tool.is_rational and np.ptp(np.array(tool.weights())) > 0:
                raise NotPlain("a rational fit-point spline")  # ezdxf's interpolation gives none: read it there
            if len(kv) != len(cps) + tool.degree + 1 or len(cps) < tool.degree + 1:
                raise NotPlain("a fit-point spline ezdxf could not interpolate")
            ctrl.extend(cps)
            knots.extend(kv)
            shapes.append((tool.degree, len(cps)))
            self.fit_splines.add(e)
        degree = np.array([d for d, _ in shapes], dtype=np.int64)
        count = np.array([n for _, n in shapes], dtype=np.int64)
        c_start, k_start = _starts(count), _starts(count + degree + 1)
        cp, kv_all = np.array(ctrl, dtype=float).reshape(-1, 3), np.array(knots, dtype=float)
        self._spline_groups(seg, ents, degree, count, cp, c_start, kv_all, k_start, np.zeros(0),
                            np.zeros(len(ents), dtype=np.int64), np.zeros(len(ents), dtype=bool))

    def _mask(self, ents: IntArray) -> NDArray[np.bool_]:
        mask = np.zeros(len(self.kinds), dtype=bool)
        mask[ents] = True
        return mask

    # ----- assembly ------------------------------------------------------------------------------
    def sort_batches(self) -> None:
        """Join and sort every batch by entity number (call once the tag table is let go)."""
        self.lines, self.arcs, self.beziers = self.segments.sorted_batches()
        del self.segments
        self.row_handles = decode_texts(self.row_handles, repeated=False)

    def model(self) -> Drawing:
        """Model space, with the blocks it places."""
        return self._space_drawing(-1)

    def _space_drawing(self, space: int) -> Drawing:
        """One space as the ezdxf reader's SegmentCollector would leave it."""
        ents = self.spaces[space]
        coll = SegmentCollector(self.hidden, self.frozen)
        kinds = self.kinds
        rows: list[int] = []
        position = np.searchsorted(self.row_entities, ents).tolist()  # where measured entities sit among rows
        loops = self.loops[ents].tolist() if ents else []
        for e, k, loop in zip(ents, position, loops, strict=True):
            kind = kinds[e]
            if kind in MEASURED and e not in self.skipped_rows:
                layer = self.row_layers[k]
                coll.entities.append(Entity(layer, self.row_handles[k], kind, hidden=layer in self.hidden, loop=loop))
                rows.append(e)
                if e in self.fit_splines:
                    coll.warn(FIT_POINTS_WARNING)
            elif kind == "INSERT":
                self._insert(e, coll)
            else:
                coll.skipped[self.skipped_rows.get(e, kind)] += 1
        drawing = coll.drawing()
        row_of = np.array(rows, dtype=np.int64)
        drawing.lines = _own_lines(self.lines, row_of)
        drawing.arcs = _own_arcs(self.arcs, row_of)
        drawing.beziers = {d: _own_beziers(b, row_of) for d, b in self.beziers.items()}
        drawing.beziers = {d: b for d, b in drawing.beziers.items() if len(b)}
        return drawing

    def _insert(self, e: int, coll: SegmentCollector) -> None:
        k = self.insert_row[e]
        name = self.insert_name[k]
        block = self.blocks.get(name, coll, self._build_block)
        if block is None:
            return
        rows, cols = int(self.insert_grid[k, 0]), int(self.insert_grid[k, 1])
        grid = None if rows * cols == 1 else (rows, cols, self.insert_steps[k, 0], self.insert_steps[k, 1])
        place_insert(coll, block, self.insert_matrix[k], name, self.insert_layer[k], self.insert_handle[k], grid)

    def _build_block(self, name: str) -> Drawing | None:
        k = self.block_index.get(name.lower())
        return None if k is None else self._space_drawing(k)

    def _inserts(self) -> None:
        """Every INSERT's fields, 4x4 map (column convention, as ezdxf's ``Insert.matrix44`` builds it:
        OCS axes scaled, then rotated about the extrusion, block base point subtracted) and MINSERT grid
        (rows, columns; row and column steps along the rotated OCS axes, not scaled)."""
        f, e = self.f, self.by_kind["INSERT"]
        self.insert_row = {m: k for k, m in enumerate(e.tolist())}
        if len(e) == 0:
            return
        self.insert_name = f.text(2, e)
        self.insert_layer = f.text(8, e, "0")
        self.insert_handle = f.text(5, e, repeated=False)
        scale = np.stack([f.number(c, e, 1.0) for c in (41, 42, 43)], axis=1)
        angle = np.radians(f.number(50, e, 0.0))
        c, s = np.cos(angle)[:, None], np.sin(angle)[:, None]
        ocs = self._ocs_to_wcs(e)
        ax, ay, az = ocs.unit_axes()
        linear = np.stack([(ax * c + ay * s) * scale[:, 0:1], (ay * c - ax * s) * scale[:, 1:2], az * scale[:, 2:3]],
                          axis=2)  # columns: the images of x, y, z
        heads = np.array([self.lay.blocks[self.block_index[n.lower()]].head if n.lower() in self.block_index else -1
                          for n in self.insert_name], dtype=np.int64)
        base = np.zeros((len(e), 3))
        defined = heads >= 0
        base[defined] = f.point(10, heads[defined], (0.0, 0.0, 0.0))
        self.insert_matrix = np.zeros((len(e), 4, 4))
        self.insert_matrix[:, :3, :3] = linear
        self.insert_matrix[:, :3, 3] = ocs.points(f.point(10, e, (0.0, 0.0, 0.0))) - np.einsum("nij,nj->ni", linear,
                                                                                               base)
        self.insert_matrix[:, 3, 3] = 1.0
        cols, rows = f.integer(70, e, 1), f.integer(71, e, 1)
        dx, dy = f.number(44, e, 0.0), f.number(45, e, 0.0)
        rows = np.where(dy != 0, np.maximum(rows, 0), np.minimum(rows, 1))
        cols = np.where(dx != 0, np.maximum(cols, 0), np.minimum(cols, 1))
        self.insert_grid = np.stack([rows, cols], axis=1)
        zero = np.zeros(len(e))
        c, s = c[:, 0], s[:, 0]
        self.insert_steps = np.stack([ocs.points(np.stack([-s * dy, c * dy, zero], axis=1)),
                                      ocs.points(np.stack([c * dx, s * dx, zero], axis=1))], axis=1)


class _Ocs:
    """Object coordinate systems of many entities by the arbitrary axis algorithm (DXF reference,
    "Object Coordinate Systems"), with ezdxf's rule that an extrusion close to +z is no transformation."""

    def __init__(self, extrusion: FloatArray) -> None:
        length = _magnitude(extrusion)
        if not np.isfinite(extrusion).all() or (length == 0).any():
            raise NotPlain("an extrusion direction of zero or non-finite length")
        az = extrusion * (1.0 / length)[:, None]
        ref = np.array(Z_AXIS)
        close = np.abs(az - ref) <= np.maximum(1e-9 * np.maximum(np.abs(az), np.abs(ref)), 1e-12)
        self.plain = np.all(close, axis=1)
        self.all_plain = bool(self.plain.all())
        if self.all_plain:
            return
        small = (np.abs(az[:, 0]) < 1.0 / 64.0) & (np.abs(az[:, 1]) < 1.0 / 64.0)
        ax = np.where(small[:, None], np.cross([0.0, 1.0, 0.0], az), np.cross(ref, az))
        ax = ax * (1.0 / _magnitude(ax))[:, None]
        ay = np.cross(az, ax)
        ay = ay * (1.0 / _magnitude(ay))[:, None]
        self.ax, self.ay, self.az = ax, ay, az

    @classmethod
    def world(cls, count: int) -> _Ocs:
        """``count`` entities without an extrusion (+z): no transformation, nothing computed."""
        ocs = cls.__new__(cls)
        ocs.plain = np.ones(count, dtype=bool)
        ocs.all_plain = True
        return ocs

    def points(self, p: FloatArray, rows: IntArray | None = None) -> FloatArray:
        """OCS coordinates ``p[n, 3]`` in WCS; point ``k`` in the OCS of entity ``rows[k]`` (default: ``k``)."""
        if self.all_plain:
            return p
        g = slice(None) if rows is None else rows
        wcs = p[:, 0:1] * self.ax[g] + p[:, 1:2] * self.ay[g] + p[:, 2:3] * self.az[g]
        return np.where(self.plain[g][:, None], p, wcs)

    def unit_axes(self) -> tuple[FloatArray, FloatArray, FloatArray]:
        """Each entity's OCS axes (x, y, z unit vectors in WCS), ``[n, 3]`` each."""
        eye = np.eye(3)
        axes = (np.zeros((len(self.plain), 3)),) * 3 if self.all_plain else (self.ax, self.ay, self.az)
        x, y, z = (np.where(self.plain[:, None], eye[k], axis) for k, axis in enumerate(axes))
        return x, y, z


def _magnitude(v: FloatArray) -> FloatArray:
    return np.sqrt(v[:, 0] * v[:, 0] + v[:, 1] * v[:, 1] + v[:, 2] * v[:, 2])


def _starts(counts: IntArray) -> IntArray:
    return np.concatenate(([0], np.cumsum(counts)[:-1])).astype(np.int64)


def _bulge_path(seg: _Segments, x: FloatArray, y: FloatArray, own: IntArray, ents: IntArray, elevation: FloatArray,
                closed: NDArray[np.bool_], ocs: _Ocs, bulge: FloatArray) -> None:
    """Lines and bulge arcs of polylines (vertices ``x, y`` in OCS, grouped by entity in file order), with
    the ezdxf reader's formulas: bulge b = tan(θ/4), centre = chord midpoint + left normal·(1 - b²)/(4b)."""
    if len(ents) == 0:
        return
    group = np.searchsorted(ents, own)
    if (np.bincount(group, minlength=len(ents)) < 2).any():
        raise NotPlain("a polyline with fewer than two vertices")
    i, j = _vertex_pairs(group, len(ents), closed)
    dx, dy = x[j] - x[i], y[j] - y[i]
    i, j, dx, dy = (a[(dx != 0.0) | (dy != 0.0)] for a in (i, j, dx, dy))
    b = bulge[i]
    z = elevation[group[i]]
    rows = group[i]
    straight = b == 0.0
    li, lj = i[straight], j[straight]
    lz = z[straight]
    p0 = ocs.points(np.stack([x[li], y[li], lz], axis=1), rows[straight])
    p1 = ocs.points(np.stack([x[lj], y[lj], lz], axis=1), rows[straight])
    seg.lines.append((p0, p1, own[li]))
    ai, aj, ab, az_ = i[~straight], j[~straight], b[~straight], z[~straight]
    x0, y0, x1, y1 = x[ai], y[ai], x[aj], y[aj]
    ddx, ddy = dx[~straight], dy[~straight]
    k = (1.0 - ab * ab) / (4.0 * ab)
    cx, cy = 0.5 * (x0 + x1) - ddy * k, 0.5 * (y0 + y1) + ddx * k
    ux, uy = x0 - cx, y0 - cy
    vx, vy = np.where(ab > 0, -uy, uy), np.where(ab > 0, ux, -ux)
    theta = 4.0 * np.arctan(np.abs(ab))
    zero = np.zeros_like(ux)
    arc = ~straight
    center = ocs.points(np.stack([cx, cy, az_], axis=1), rows[arc])
    u = ocs.points(np.stack([ux, uy, zero], axis=1), rows[arc])
    v = ocs.points(np.stack([vx, vy, zero], axis=1), rows[arc])
    seg.arcs.append((center, u, v, zero.copy(), theta, own[ai]))


def _polyline_3d(seg: _Segments, location: FloatArray, own: IntArray, ents: IntArray, closed: NDArray[np.bool_]
                 ) -> None:
    """Straight pieces between consecutive vertices of 3-D polylines (closing piece when closed)."""
    pick = np.isin(own, ents)
    pts, o = location[pick], own[pick]
    i, j = _vertex_pairs(np.searchsorted(ents, o), len(ents), closed)
    seg.lines.append((pts[i], pts[j], o[i]))


def _vertex_pairs(group: IntArray, count: int, closed: NDArray[np.bool_]) -> tuple[IntArray, IntArray]:
    """Consecutive vertex pairs ``(i, j)`` of polylines whose vertices are grouped by polyline
    (``group[v]``, ``count`` polylines, in order); a closed polyline's last vertex pairs with its first."""
    counts = np.bincount(group, minlength=count)
    first = _starts(counts)
    last = first + counts - 1
    following = np.arange(len(group)) + 1
    following[last] = first
    use = np.ones(len(group), dtype=bool)
    use[last[~closed]] = False
    i = np.flatnonzero(use)
    return i, following[i]


def _add_pieces(seg: _Segments, ctrl: FloatArray, weights: FloatArray, ents: IntArray, degree: int) -> None:
    """Bézier pieces as the collector's ``add_bezier`` takes them: degree 1 with equal weights is a line."""
    if degree == 1:
        line = weights[:, 0] == weights[:, 1]
        seg.lines.append((ctrl[line, 0], ctrl[line, 1], ents[line]))
        ctrl, weights, ents = ctrl[~line], weights[~line], ents[~line]
        if not len(ents):
            return
    seg.beziers.setdefault(degree, []).append((ctrl, weights, ents))


def _own_lines(lines: Lines, rows: IntArray) -> Lines:
    pick, local = _local(lines.entity, rows)
    return Lines(_rows(lines.p0, pick), _rows(lines.p1, pick), local)


def _own_arcs(arcs: EllipticArcs, rows: IntArray) -> EllipticArcs:
    pick, local = _local(arcs.entity, rows)
    return EllipticArcs(_rows(arcs.center, pick), _rows(arcs.u, pick), _rows(arcs.v, pick),
                        _rows(arcs.t0, pick), _rows(arcs.t1, pick), local)


def _own_beziers(b: Beziers, rows: IntArray) -> Beziers:
    pick, local = _local(b.entity, rows)
    return Beziers(_rows(b.ctrl, pick), _rows(b.weights, pick), local)


def _rows(a: NDArray, pick: IntArray | slice) -> NDArray:
    """Rows ``pick`` of ``a``: a view for a run of rows (no copy of a big model space), else a copy."""
    return a[pick] if isinstance(pick, slice) else take_rows(a, pick)


def _local(entity: IntArray, rows: IntArray) -> tuple[IntArray | slice, IntArray]:
    """Segments (sorted by entity number) whose entity is one of ``rows`` (sorted), and their row number;
    the segments as a slice when they are a run."""
    lo = np.searchsorted(entity, rows[0]) if len(rows) else 0
    hi = np.searchsorted(entity, rows[-1], side="right") if len(rows) else 0
    local = np.searchsorted(rows, entity[lo:hi])
    inside = (local < len(rows)) & (rows[np.minimum(local, len(rows) - 1)] == entity[lo:hi])
    if inside.all():
        return slice(int(lo), int(hi)), local.astype(np.int64)
    return lo + np.flatnonzero(inside), local[inside].astype(np.int64)

