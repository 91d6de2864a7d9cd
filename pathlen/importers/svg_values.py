"""SVG attribute values: lengths, transforms, viewBox mapping, colours, style declarations.

Affine maps here are SVG's six numbers ``(a, b, c, d, e, f)``::

    x' = a x + c y + e
    y' = b x + d y + f

as in the SVG ``matrix(a b c d e f)`` transform.  Lengths are in CSS px
(user units) unless said otherwise; CSS fixes 1 in = 96 px (CSS Values and Units, "absolute lengths").
"""

from __future__ import annotations

import colorsys
import math
import re
from dataclasses import dataclass

import webcolors

Affine2 = tuple[float, float, float, float, float, float]

IDENTITY: Affine2 = (1.0, 0.0, 0.0, 1.0, 0.0, 0.0)

#: CSS absolute units in px (CSS Values and Units Level 3, section 5.2: 1in = 2.54cm = 96px = 72pt = 6pc,
#: 1Q = 1/4 mm).  Unitless user units count as px.
PX_PER_UNIT = {
    "": 1.0, "px": 1.0, "in": 96.0, "cm": 96.0 / 2.54, "mm": 96.0 / 25.4, "q": 96.0 / 101.6,
    "pt": 96.0 / 72.0, "pc": 16.0,
}

#: One number of the SVG grammar (SVG 2, 9.3.9 path data "number"; CSS <number>), as an atomic group
#: (no backtracking into it: no ReDoS).  ASCII digits only: Python's ``float`` also takes
#: underscores, "inf", "nan" and other scripts' digits, which the grammar does not.
NUMBER = r"(?>[-+]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][-+]?[0-9]+)?)"
_LENGTH = re.compile(rf"\s*({NUMBER})\s*([a-zA-Z]*|%)\s*")
_LIST_SEP = re.compile(r"[\s,]+")


class BadValue(ValueError):
    """An attribute value that does not parse (the message says which)."""


@dataclass(frozen=True)
class Relative:
    """What relative CSS lengths are worth here, in px (user units): ``em`` the element's font size
    (CSS initial 16 px), ``ex`` half of it (CSS Values 4: 0.5em where the x-height is not known),
    ``rem`` the root's font size, ``vw``/``vh`` 1% of the root viewport's width/height."""

    em: float = 16.0
    rem: float = 16.0
    vw: float = 0.0
    vh: float = 0.0

    def px_per(self, unit: str) -> float | None:
        vmin, vmax = min(self.vw, self.vh), max(self.vw, self.vh)
        return {"em": self.em, "ex": 0.5 * self.em, "rem": self.rem, "vw": self.vw, "vh": self.vh,
                "vmin": vmin, "vmax": vmax}.get(unit)


def parse_length(text: str, percent_of: float = 0.0, rel: Relative | None = None) -> tuple[float, str]:
    """``"12.5mm"`` -> ``(47.24..., "mm")``: the length in px and the unit written.

    Percentages are taken of ``percent_of`` (px); relative units (em, ex, rem, vw, vh, vmin, vmax)
    by ``rel`` (defaults: 16 px font, no viewport).
    """
    m = _LENGTH.fullmatch(text)
    if not m:
        raise BadValue(f"not a length: {text[:40]!r}")
    value, unit = finite(m.group(1)), m.group(2).lower()
    if unit == "%":
        return value / 100.0 * percent_of, unit
    relative = (rel or Relative()).px_per(unit)
    if relative is not None:
        return value * relative, unit
    if unit not in PX_PER_UNIT:
        raise BadValue(f"unit {unit!r} is not a length unit")
    return value * PX_PER_UNIT[unit], unit


def number_prefix(text: str) -> tuple[list[float], bool]:
    """The numbers of a whitespace/comma separated list up to the first bad token, and whether the
    whole list was good (SVG 2: a ``points`` list in error is rendered up to the error)."""
    out: list[float] = []
    for p in (p for p in _LIST_SEP.split(text.strip()) if p):
        found = re.findall(NUMBER, p)
        pos = 0
        for f in found:  # packed numbers ("1-2") are fine; anything between them is not
            at = p.find(f, pos)
            if at != pos:
                return out, False
            value = float(f)
            if not math.isfinite(value):
                return out, False
            out.append(value)
            pos = at + len(f)
        if pos != len(p):
            return out, False
    return out, True


_CSS_FUNCTION = re.compile(r"\s*([a-zA-Z]+)\s*\(([^()]*)\)")
_ANGLE_DEG = {"deg": 1.0, "rad": 180.0 / math.pi, "grad": 0.9, "turn": 360.0, "": 1.0}


def parse_css_transform(text: str, rel: Relative | None = None) -> Affine2:
    """A CSS ``transform`` property value (CSS Transforms 1: functions with units, comma separated
    arguments; ``none``) as an affine map on user units (px)."""
    text = text.strip()
    if text == "none":
        return IDENTITY
    result, pos = IDENTITY, 0
    while pos < len(text):
        m = _CSS_FUNCTION.match(text, pos)
        if not m:
            raise BadValue(f"bad transform: {text[:60]!r}")
        pos = m.end()
        name, args = m.group(1), [a.strip() for a in m.group(2).split(",")] if m.group(2).strip() else []
        result = compose(result, _css_function(name, args, text, rel))
        while pos < len(text) and text[pos].isspace():
            pos += 1
    return result


def _css_function(name: str, args: list[str], text: str, rel: Relative | None) -> Affine2:
    def length(a: str) -> float:
        return parse_length(a, 0.0, rel)[0]

    def angle(a: str) -> float:
        m = re.fullmatch(rf"({NUMBER})\s*(deg|rad|grad|turn)?", a)
        if not m:
            raise BadValue(f"not an angle: {a[:20]!r}")
        return finite(m.group(1)) * _ANGLE_DEG[m.group(2) or ""]

    def number(a: str) -> float:
        return finite(a) if re.fullmatch(NUMBER, a) else _bad(a)

    n = len(args)
    lower = name.lower()
    if lower == "translate" and n in (1, 2):
        return translate(length(args[0]), length(args[1]) if n == 2 else 0.0)
    if lower in ("translatex", "translatey") and n == 1:
        return translate(length(args[0]), 0.0) if lower.endswith("x") else translate(0.0, length(args[0]))
    if lower == "scale" and n in (1, 2):
        sx = number(args[0])
        return (sx, 0.0, 0.0, number(args[1]) if n == 2 else sx, 0.0, 0.0)
    if lower in ("scalex", "scaley") and n == 1:
        return (number(args[0]), 0.0, 0.0, 1.0, 0.0, 0.0) if lower.endswith("x") else \
            (1.0, 0.0, 0.0, number(args[0]), 0.0, 0.0)
    if lower == "matrix" and n == 6:
        return tuple(number(a) for a in args)  # type: ignore[return-value]
    if lower in ("rotate", "skewx", "skewy", "skew") and n in (1, 2):
        degs = [angle(a) for a in args]
        if lower == "rotate" and n == 1:
            return _one_transform("rotate", degs, text)
        if lower == "skew":
            ax, ay = math.radians(degs[0]), math.radians(degs[1]) if n == 2 else 0.0
            return (1.0, math.tan(ay), math.tan(ax), 1.0, 0.0, 0.0)
        if n == 1:
            return _one_transform("skewX" if lower == "skewx" else "skewY", degs, text)
    raise BadValue(f"bad transform {name}() with {n} arguments in {text[:60]!r}")


def _bad(token: str) -> float:
    raise BadValue(f"not a number: {token[:20]!r}")


def transform_origin(text: str, box: tuple[float, float], rel: Relative | None = None) -> tuple[float, float]:
    """A CSS ``transform-origin`` (lengths, percentages of ``box`` or keywords) as a point in px."""
    words = text.split()
    if not 1 <= len(words) <= 3:
        raise BadValue(f"bad transform-origin: {text[:40]!r}")
    keys = {"left": ("x", 0.0), "right": ("x", 1.0), "top": ("y", 0.0), "bottom": ("y", 1.0), "center": ("", 0.5)}
    x = y = None
    loose: list[float] = []
    for k, w in enumerate(words[:2]):
        if w in keys:
            axis, share = keys[w]
            if axis == "x" or (axis == "" and k == 0 and x is None):
                x = share * box[0]
            else:
                y = share * box[1]
        else:
            loose.append(parse_length(w, box[0] if x is None and not loose else box[1], rel)[0])
    for value in loose:
        if x is None:
            x = value
        else:
            y = value
    return (x if x is not None else 0.5 * box[0], y if y is not None else 0.5 * box[1])


def parse_numbers(text: str) -> list[float]:
    """A whitespace/comma separated number list (``points``, ``viewBox``)."""
    parts = [p for p in _LIST_SEP.split(text.strip()) if p]
    out: list[float] = []
    for p in parts:
        found = re.findall(NUMBER, p)
        if "".join(found) != p:
            raise BadValue(f"not a number list: {text[:40]!r}")
        out.extend(finite(f) for f in found)
    return out


def finite(token: str) -> float:
    """A number token of the grammar as a float; one too large for a double (1e400) is a bad value."""
    value = float(token)
    if not math.isfinite(value):
        raise BadValue(f"number {token[:40]!r} is out of range")
    return value


def compose(m: Affine2, n: Affine2) -> Affine2:
    """``m ∘ n``: apply ``n`` first, then ``m``."""
    a, b, c, d, e, f = m
    a2, b2, c2, d2, e2, f2 = n
    return (a * a2 + c * b2, b * a2 + d * b2, a * c2 + c * d2, b * c2 + d * d2,
            a * e2 + c * f2 + e, b * e2 + d * f2 + f)


def translate(tx: float, ty: float) -> Affine2:
    return (1.0, 0.0, 0.0, 1.0, tx, ty)


_TRANSFORM = re.compile(r"\s*,?\s*(matrix|translate|scale|rotate|skewX|skewY)\s*\(([^()]*)\)\s*,?", re.S)


def parse_transform(text: str) -> Affine2:
    """An SVG transform list, composed left to right as the spec says (SVG 1.1, 7.6)."""
    result = IDENTITY
    pos = 0
    text = text.strip()
    while pos < len(text):
        m = _TRANSFORM.match(text, pos)
        if not m:
            raise BadValue(f"bad transform: {text[:60]!r}")
        pos = m.end()
        name, args = m.group(1), parse_numbers(m.group(2))
        result = compose(result, _one_transform(name, args, text))
    return result


def _one_transform(name: str, v: list[float], text: str) -> Affine2:
    n = len(v)
    if name == "matrix" and n == 6:
        return (v[0], v[1], v[2], v[3], v[4], v[5])
    if name == "translate" and n in (1, 2):
        return translate(v[0], v[1] if n == 2 else 0.0)
    if name == "scale" and n in (1, 2):
        return (v[0], 0.0, 0.0, v[1] if n == 2 else v[0], 0.0, 0.0)
    if name == "rotate" and n in (1, 3):
        a = math.radians(v[0])
        rot = (math.cos(a), math.sin(a), -math.sin(a), math.cos(a), 0.0, 0.0)
        if n == 1:
            return rot
        return compose(compose(translate(v[1], v[2]), rot), translate(-v[1], -v[2]))
    if name == "skewX" and n == 1:
        return (1.0, 0.0, math.tan(math.radians(v[0])), 1.0, 0.0, 0.0)
    if name == "skewY" and n == 1:
        return (1.0, math.tan(math.radians(v[0])), 0.0, 1.0, 0.0, 0.0)
    raise BadValue(f"bad transform {name}() with {n} numbers in {text[:60]!r}")


_ALIGNS = {"none", *(f"x{h}Y{v}" for h in ("Min", "Mid", "Max") for v in ("Min", "Mid", "Max"))}


def viewbox_transform(viewbox: tuple[float, float, float, float], viewport: tuple[float, float, float, float],
                      preserve: str = "") -> Affine2:
    """The map from a viewBox to a viewport (x, y, width, height), both in px.

    Follows "the equivalent transform of an SVG viewport" (SVG 2, section 8.2):
    ``meet`` scales by the smaller ratio, ``slice`` by the larger, ``none`` stretches,
    and the alignment shifts the scaled box to the min, middle or max of the viewport.
    """
    vb_x, vb_y, vb_w, vb_h = viewbox
    e_x, e_y, e_w, e_h = viewport
    words = preserve.split()
    if words and words[0] == "defer":
        words = words[1:]
    align = words[0] if words else "xMidYMid"
    mode = words[1] if len(words) > 1 else "meet"
    if align not in _ALIGNS or mode not in ("meet", "slice") or len(words) > 2:
        raise BadValue(f"bad preserveAspectRatio: {preserve!r}")
    sx, sy = e_w / vb_w, e_h / vb_h
    if align != "none":
        sx = sy = min(sx, sy) if mode == "meet" else max(sx, sy)
    tx, ty = e_x - vb_x * sx, e_y - vb_y * sy
    if align != "none":
        h, v = align[1:4], align[5:8]
        tx += {"Min": 0.0, "Mid": 0.5, "Max": 1.0}[h] * (e_w - vb_w * sx)
        ty += {"Min": 0.0, "Mid": 0.5, "Max": 1.0}[v] * (e_h - vb_h * sy)
    return (sx, 0.0, 0.0, sy, tx, ty)


def parse_style(text: str) -> dict[str, str]:
    """``"stroke:#f00; display:none"`` -> ``{"stroke": "#f00", "display": "none"}``."""
    out: dict[str, str] = {}
    for decl in text.split(";"):
        name, sep, value = decl.partition(":")
        if sep:
            out[name.strip().lower()] = value.replace("!important", "").strip()
    return out


_RGB = re.compile(r"rgba?\(\s*([^)]*)\)")
_HSL = re.compile(r"hsla?\(\s*([^)]*)\)")


def normalise_color(value: str, current: str = "#000000") -> str:
    """A CSS colour as ``#rrggbb``; ``"none"`` for no paint; ``"other"`` for paint servers and unknowns.

    Accepts ``#rgb``, ``#rgba``, ``#rrggbb``, ``#rrggbbaa`` (alpha dropped), ``rgb()``/``rgba()``
    with numbers or percentages, ``hsl()``/``hsla()``, the CSS named colours (CSS Color Module
    Level 4, via webcolors) and ``currentColor`` (the ``color`` property, ``current``).
    """
    v = value.strip().lower()
    if v in ("", "none", "transparent"):
        return "none"
    if v == "currentcolor":
        return current
    if v.startswith("url("):
        fallback = v[v.find(")") + 1:].strip()
        return normalise_color(fallback, current) if fallback else "other"
    try:
        if v.startswith("#"):
            digits = v[1:]
            if len(digits) in (4, 8):
                digits = digits[: len(digits) * 3 // 4]
            return webcolors.normalize_hex("#" + digits)
        if m := _RGB.fullmatch(v):
            return _rgb_hex(m.group(1))
        if m := _HSL.fullmatch(v):
            return _hsl_hex(m.group(1))
        return webcolors.name_to_hex(v)
    except ValueError:
        return "other"


def _channels(args: str) -> list[str]:
    return [p for p in re.split(r"[\s,/]+", args.strip()) if p]


def _rgb_hex(args: str) -> str:
    parts = _channels(args)[:3]
    if len(parts) != 3:
        raise ValueError(args)
    rgb = [float(p[:-1]) * 2.55 if p.endswith("%") else float(p) for p in parts]
    return webcolors.rgb_to_hex(tuple(min(255, max(0, round(c))) for c in rgb))


def _hsl_hex(args: str) -> str:
    parts = _channels(args)[:3]
    if len(parts) != 3:
        raise ValueError(args)
    h = float(parts[0].removesuffix("deg")) / 360.0 % 1.0
    s, lum = (min(100.0, max(0.0, float(p.rstrip("%")))) / 100.0 for p in parts[1:])
    r, g, b = colorsys.hls_to_rgb(h, lum, s)
    return webcolors.rgb_to_hex((round(r * 255), round(g * 255), round(b * 255)))
