"""A text DXF file's tag stream as arrays: group codes, value positions and numbers, parsed in bulk.

A DXF file is a sequence of tags, each two lines: a group code (an integer) and a value whose type the
code fixes (DXF reference, "Group Code Value Types").  Here the whole file is one ``bytes`` object and
every tag is a row of arrays: ``codes[i]``, the value's byte range ``[start[i], start[i] + width[i])`` and, for the
numeric codes pathlen reads, ``number[i]`` (NaN otherwise).  Nothing is made per tag in Python.

Anything outside the plain form (a binary DXF, a byte-order mark, a lone carriage return, a group code
that is not digits after optional spaces, an unreadable number, no EOF) raises :class:`NotPlain`: the
caller reads such a file with ezdxf instead, which knows every odd form and its error messages.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from pathlen.geometry import distinct

#: Group codes with numeric values (DXF reference, "Group Code Value Types"; the ranges ezdxf converts):
#: every one must be a number, as ezdxf refuses the file otherwise.
#: Of those, the integer codes: ezdxf refuses a value that is not a finite number there.
INTEGER_CODES = np.zeros(1072, dtype=bool)
for _lo, _hi in ((60, 79), (90, 99), (160, 179), (270, 299), (370, 389), (400, 409), (420, 429), (440, 459),
                 (1060, 1071)):
    INTEGER_CODES[_lo:_hi + 1] = True
NUMERIC_CODES = INTEGER_CODES.copy()
for _lo, _hi in ((10, 59), (110, 149), (210, 239), (460, 469), (1010, 1059)):  # floats
    NUMERIC_CODES[_lo:_hi + 1] = True
#: Codes of a point's x; its y (code + 10) must follow.
POINT_CODES = np.array([10, 11, 12, 13, 14, 15, 16, 17, 18, 110, 111, 112, 210, 211, 212, 213,
                        1010, 1011, 1012, 1013])
#: Codes of binary chunks: hexadecimal digits in pairs.
BINARY_CODES = np.array([310, 311, 312, 313, 314, 315, 316, 317, 318, 319, 1004])


def code_table(wanted: object) -> NDArray[np.bool_]:
    """A lookup table of the group codes ``wanted`` (an array or sequence of codes): True at each, False
    elsewhere, one slot past the largest (see :func:`has_code`)."""
    listed = np.asarray(wanted, dtype=np.int64)
    table = np.zeros(int(listed.max(initial=0)) + 2, dtype=bool)
    table[listed] = True
    return table


def has_code(codes: NDArray[np.integer], table: NDArray[np.bool_]) -> NDArray[np.bool_]:
    """Whether each group code (non-negative, as :func:`parse_tags` leaves them) is in the :func:`code_table`
    ``table``: one lookup per code (``np.isin`` costs ~30 µs a call, most of a small file's check)."""
    return table[np.minimum(codes, len(table) - 1)]


POINT_TABLE, BINARY_TABLE = code_table(POINT_CODES), code_table(BINARY_CODES)
_HEX_LINE = re.compile(rb"(?:[0-9A-Fa-f]{2})*")

#: Largest group code kept in bulk (codes are stored as int16; the DXF reference lists none above 1071).
MAX_GROUP_CODE = 32767
#: Longest group-code line (spaces and digits) and numeric value read in bulk; longer ones are parsed one by one.
CODE_WIDTH = 6
NUMBER_WIDTH = 32
TEXT_WIDTH = 256
#: Zero bytes after the file's bytes, for the widest window.
PADDING = TEXT_WIDTH
#: Bytes scanned for line ends per numpy pass.
NEWLINE_CHUNK = 1 << 22
#: Bytes of windows gathered directly (beyond, through a sliding window view: no index array per byte).
SMALL_WINDOWS = 1 << 16
#: Files up to this size (bytes) that are ASCII are also kept as one ``str`` (see :attr:`TagTable.ascii_text`).
WHOLE_TEXT_UP_TO = 1 << 22
#: Lists of texts from this length on share one ``str`` per distinct value (see :meth:`TagTable.texts`).
SHARED_TEXTS_FROM = 1024
#: Up to this many numbers in a pass, each distinct text is converted once (a sort, then one conversion
#: each: about half the time where most repeat); beyond, every number is converted where it stands.
DISTINCT_NUMBERS_UP_TO = 1 << 16
#: Tags handled per numpy pass (bounds the temporary arrays: CHUNK x NUMBER_WIDTH bytes).
CHUNK = 1 << 18

_NUMBER_BYTES = np.zeros(256, dtype=bool)
for _c in b"0123456789+-.eE ":
    _NUMBER_BYTES[_c] = True


#: Up to this many values, texts are cut out one by one (about 0.4 us each); beyond, in one numpy gather
#: (about 40 us however few).
FEW_TEXTS = 128


class NotPlain(Exception):
    """The file is not in the plain form the bulk reader takes; the reason says why."""


@dataclass
class TagTable:
    """Tags ``0 .. len-1`` of a DXF file up to (not including) its EOF tag."""

    data: bytearray  # the file's bytes, then PADDING zero bytes
    codes: NDArray[np.int16]
    start: NDArray[np.int64]
    width: NDArray[np.integer]  # bytes of each value: uint8, uint16 or int32, the narrowest that holds them
    number: NDArray[np.float64]
    #: the whole of ``data`` as a ``str`` when it is ASCII and at most :data:`WHOLE_TEXT_UP_TO` bytes: texts are
    #: then cut from it (no decoding per value)
    ascii_text: str | None = None

    def __len__(self) -> int:
        return len(self.codes)

    def end(self, index: NDArray[np.integer] | int) -> NDArray[np.int64] | int:
        """Where the values of the tags ``index`` end (exclusive byte positions)."""
        if isinstance(index, (int, np.integer)):
            return int(self.start[index]) + int(self.width[index])
        return self.start[index].astype(np.int64) + self.width[index]

    def text(self, i: int) -> str:
        """Value of tag ``i`` as text (ASCII; anything else raises :class:`NotPlain`)."""
        if self.ascii_text is not None:
            return self.ascii_text[self.start[i]:self.end(i)]
        raw = self.data[self.start[i]:self.end(i)]
        if not raw.isascii():
            raise NotPlain("text that is not ASCII")
        return raw.decode("ascii")

    def texts(self, index: NDArray[np.int64], repeated: bool = True) -> list[str]:
        """Values of the tags ``index`` as text (ASCII; anything else raises :class:`NotPlain`).

        ``repeated`` (kinds, layer names: few distinct values): equal values share one ``str`` object,
        so a million entities on three layers hold three strings, not a million."""
        index = np.asarray(index, dtype=np.int64)
        if len(index) <= FEW_TEXTS:
            return self._one_by_one(index)
        if int(self.width[index].max()) > TEXT_WIDTH:
            return [self.text(i) for i in index.tolist()]
        return decode_texts(self.raw_texts(index), repeated)

    def _one_by_one(self, index: NDArray[np.int64]) -> list[str]:
        """Values of the tags ``index`` cut out and decoded one by one (the decoding is the ASCII check;
        trailing zero bytes dropped, as in the fixed-width arrays of :meth:`raw_texts`): for few tags
        (:data:`FEW_TEXTS`) or long values."""
        text = self.ascii_text
        if text is not None:
            return [text[a:a + n].rstrip("\0") for a, n in zip(self.start[index].tolist(), self.width[index].tolist(),
                                                                strict=True)]
        data = self.data
        try:
            return [data[a:a + n].decode("ascii").rstrip("\0")
                    for a, n in zip(self.start[index].tolist(), self.width[index].tolist(), strict=True)]
        except UnicodeDecodeError:
            raise NotPlain("text that is not ASCII") from None

    def raw_texts(self, index: NDArray[np.int64]) -> NDArray[np.bytes_]:
        """Values of the tags ``index`` as one fixed-width bytes array (ASCII checked; trailing zero bytes
        dropped): a few bytes per value, no Python object each (see :func:`decode_texts`)."""
        index = np.asarray(index, dtype=np.int64)
        if len(index) == 0:
            return np.zeros(0, dtype="S1")
        start, length = self.start[index], self.width[index].astype(np.int64)
        width = max(int(length.max()), 1)
        if len(index) <= FEW_TEXTS or width > TEXT_WIDTH:
            return np.array(self._one_by_one(index), dtype=f"S{width}")  # ASCII: encoded back byte for byte
        chars = windows(self.data, start, width, length)
        if chars.max(initial=0) >= 128:
            raise NotPlain("text that is not ASCII")
        return chars.view(f"S{width}").ravel()


def decode_texts(raw: NDArray[np.bytes_], repeated: bool = True) -> list[str]:
    """``raw`` (ASCII, from :meth:`TagTable.raw_texts`) as a list of ``str``; ``repeated``: equal values
    share one object."""
    if len(raw) == 0:
        return []
    text = f"U{raw.dtype.itemsize}"
    if not repeated or len(raw) < SHARED_TEXTS_FROM:
        return raw.astype(text).tolist()
    values, which = distinct(raw, return_inverse=True)
    return np.array(values.astype(text).tolist(), dtype=object)[which].tolist()


def windows(data: bytearray, start: NDArray[np.int64], width: int, length: NDArray[np.int64] | None = None
            ) -> NDArray[np.uint8]:
    """``[n, width]`` bytes of ``data`` (padded: see :func:`read_padded`) from each ``start``; bytes at or
    past ``length`` (per row) are 0."""
    raw = np.frombuffer(data, dtype=np.uint8)
    if len(start) * width <= SMALL_WINDOWS:  # a direct gather: no view machinery for small requests
        rows = raw[start[:, None] + np.arange(width)]
    else:
        rows = np.lib.stride_tricks.sliding_window_view(raw, width)[start]
    if length is not None:
        rows *= np.arange(width) < length[:, None]  # zero past each length (a product: no masked write)
    return rows


def read_padded(path: Path) -> bytearray:
    """A file's bytes followed by :data:`PADDING` zero bytes (room for fixed-width windows at the end)."""
    with path.open("rb") as fh:
        size = os.fstat(fh.fileno()).st_size
        data = bytearray(size + PADDING)
        got = fh.readinto(memoryview(data)[:size])
    if got != size:
        raise OSError("file changed while reading")
    return data


def parse_tags(data: bytes | bytearray) -> TagTable:
    """The tag table of a text DXF file's bytes; :class:`NotPlain` for any other form.  ``data`` from
    :func:`read_padded` is used as it is; plain ``bytes`` are copied once with the padding."""
    if isinstance(data, bytes):
        data = bytearray(data + bytes(PADDING))
    size = len(data) - PADDING
    if data.startswith(b"AutoCAD Binary DXF"):
        raise NotPlain("binary DXF")
    if data.startswith(b"\xef\xbb\xbf"):
        raise NotPlain("byte-order mark")
    buf = np.frombuffer(data, dtype=np.uint8, count=size)
    position = np.int32 if size < 2**31 - PADDING else np.int64  # halves the position arrays of most files
    newline, returns = _newlines(buf, position)
    if newline.size == 0 or newline[-1] != size - 1:  # last line without a newline
        newline = np.append(newline, position(size))
    line_end = newline  # position of each line's end (its newline, or its carriage return)
    if returns:
        crlf = buf[np.maximum(newline - 1, 0)] == 13
        if int(np.count_nonzero(crlf)) != returns:
            raise NotPlain("a carriage return that does not end a line")
        line_end -= crlf
        del crlf
    pairs = len(line_end) // 2
    if pairs == 0:
        raise NotPlain("no tags")
    code_end, value_end = line_end[0:2 * pairs:2].copy(), line_end[1:2 * pairs:2].copy()
    value_start = newline[0:2 * pairs:2] + 1  # a value line starts after its code line's newline
    if returns:
        value_start += buf[code_end] == 13
    code_start = np.empty_like(value_start)
    code_start[0] = 0
    code_start[1:] = newline[1:2 * pairs - 1:2] + 1
    if returns:
        code_start[1:] += buf[value_end[:-1]] == 13
    del newline, line_end
    codes = _group_codes(data, code_start, code_end)
    eof = _eof_index(data, codes, value_start, value_end)
    codes, value_start, value_end = codes[:eof], value_start[:eof], value_end[:eof]
    if (codes < 0).any():
        raise NotPlain("a group code that is not a plain integer")
    _check_points_and_binary(data, codes, value_start, value_end)
    number = _numbers(data, codes, value_start, value_end)
    text = data.decode("ascii") if size <= WHOLE_TEXT_UP_TO and data.isascii() else None
    return TagTable(data, codes, value_start, _narrowest(value_end - value_start), number, text)


def _narrowest(width: NDArray[np.integer]) -> NDArray[np.integer]:
    """``width`` (non-negative) in the narrowest of uint8, uint16 and int32 that holds it."""
    top = int(width.max(initial=0))
    return width.astype(np.uint8 if top < 2**8 else np.uint16 if top < 2**16 else np.int32)


def _newlines(buf: NDArray[np.uint8], position: type) -> tuple[NDArray[np.integer], int]:
    """Positions of the line feeds and the count of carriage returns, a few megabytes at a time (no
    temporary as large as the file)."""
    parts, returns = [], 0
    for lo in range(0, len(buf), NEWLINE_CHUNK):
        chunk = buf[lo:lo + NEWLINE_CHUNK]
        parts.append((np.flatnonzero(chunk == 10) + lo).astype(position))
        returns += int(np.count_nonzero(chunk == 13))
    return (np.concatenate(parts) if parts else np.zeros(0, dtype=position)), returns


def _check_points_and_binary(data: bytes, codes: NDArray[np.int16], start: NDArray[np.int64],
                             end: NDArray[np.int64]) -> None:
    """A point's x followed by its y; binary chunks in hexadecimal: ezdxf's tag compiler refuses others."""
    x = np.flatnonzero(has_code(codes, POINT_TABLE))
    if len(x) and (x[-1] + 1 >= len(codes) or (codes[np.minimum(x + 1, len(codes) - 1)] != codes[x] + 10).any()):
        raise NotPlain("a point without its y")
    for i in np.flatnonzero(has_code(codes, BINARY_TABLE)).tolist():
        if _HEX_LINE.fullmatch(data, start[i], end[i]) is None:
            raise NotPlain("binary data that is not hexadecimal")


def _group_codes(data: bytearray, start: NDArray[np.int64], end: NDArray[np.int64]) -> NDArray[np.int16]:
    """Integer group codes; -1 where the line is not optional spaces followed by digits."""
    out = np.full(len(start), -1, dtype=np.int16)
    raw = np.frombuffer(data, dtype=np.uint8)
    for lo in range(0, len(start), CHUNK):
        s, e = start[lo:lo + CHUNK], end[lo:lo + CHUNK]
        length = e - s
        first = np.maximum(e - CODE_WIDTH, 0)  # the CODE_WIDTH bytes before each line end, a column at a time
        value = np.zeros(len(s), dtype=np.int32)
        digits = np.zeros(len(s), dtype=bool)  # a digit seen so far
        ok = (length <= CODE_WIDTH) & (length > 0)
        # columns before the longest line's start hold spaces for every line: nothing to read there
        widest = min(int(length.max(initial=0)), CODE_WIDTH)
        for k in range(CODE_WIDTH - widest, CODE_WIDTH):
            byte = np.where(CODE_WIDTH - 1 - k < length, raw[first + k], 32)  # before the line: a space
            digit = (byte >= 48) & (byte <= 57)
            ok &= digit | ((byte == 32) & ~digits)  # spaces then digits, nothing else
            digits |= digit
            value = value * 10 + np.where(digit, byte - 48, 0)
        ok &= digits  # at least one digit (so the last byte is one)
        value = np.where(ok, value, -1)
        for k in np.flatnonzero(e < CODE_WIDTH).tolist():  # a line near the start of the file
            text = bytes(data[s[k]:e[k]])
            value[k] = int(text) if text.lstrip(b" ").isdigit() else -1
        if value.max(initial=-1) > MAX_GROUP_CODE:
            raise NotPlain("a group code beyond those the DXF reference lists")
        out[lo:lo + CHUNK] = value
    return out


def _eof_index(data: bytearray, codes: NDArray[np.int16], start: NDArray[np.int64], end: NDArray[np.int64]) -> int:
    """Index of the (0, "EOF") tag, which must be the file's last tag and its only EOF."""
    zero = np.flatnonzero(codes == 0)
    eof = [int(i) for i in zero[end[zero] - start[zero] == 3].tolist() if data[start[i]:end[i]] == b"EOF"]
    if not eof:
        raise NotPlain("no EOF tag")
    if len(eof) > 1:
        raise NotPlain("more than one EOF")
    if eof[0] != len(codes) - 1:
        raise NotPlain("tags after EOF")
    return eof[0]


def _numbers(data: bytearray, codes: NDArray[np.int16], start: NDArray[np.int64],
             end: NDArray[np.int64]) -> NDArray[np.float64]:
    """Values of the numeric codes as floats (NaN for other tags), parsed as Python's float() does."""
    number = np.full(len(codes), np.nan)
    numeric = np.flatnonzero(has_code(codes, NUMERIC_CODES))
    for lo in range(0, len(numeric), CHUNK):
        rows = numeric[lo:lo + CHUNK]
        s, e = start[rows], end[rows]
        wide = e - s > NUMBER_WIDTH
        width = min(NUMBER_WIDTH, max(int((e - s).max()), 1))  # no wider than the longest (short in most files)
        chars = windows(data, s, width, e - s)
        if not (_NUMBER_BYTES[chars] | (chars == 0)).all():
            raise NotPlain("a number with characters other than digits, sign, point and exponent")
        try:
            text = chars.view(f"S{width}").ravel()
            if len(text) <= DISTINCT_NUMBERS_UP_TO:  # a small file repeats most values (0, 1.0, 256): read each once
                found, which = distinct(text, return_inverse=True)
                values = found.astype(np.float64)[which]
            else:
                values = text.astype(np.float64)
            for k in np.flatnonzero(wide).tolist():
                values[k] = float(data[s[k]:e[k]])
        except ValueError:
            raise NotPlain("a number that cannot be read") from None
        number[rows] = values
    if not np.isfinite(number[numeric][has_code(codes[numeric], INTEGER_CODES)]).all():
        raise NotPlain("an integer code whose value is not a finite number")
    return number
