"""``pathlen preview``: a picture of exactly what was measured, in real units.

Contours are coloured by kind (a scheme of our own): closed, open, drawn twice; gaps circled with
their width; a dot at each contour's start and an arrow along its first segment.  A scale bar and
the drawing's extents sit in the corners, a legend below, with what was not measured (the
warnings' words).  SVG output keeps every curve a curve (see :mod:`pathlen.export.preview_paths`);
PNG and PDF are drawn by matplotlib from Bézier paths.  Drawings from DXF have y up, from SVG y
down: the picture keeps each drawing's orientation.
"""

from __future__ import annotations

import datetime
import math
import textwrap
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from pathlen.contours import DEFAULT_JOIN_TOL_MM, chain_contours, duplicate_segments, gap_points
from pathlen.export import markup_text as escape
from pathlen.export.preview_paths import segment_cubics, segment_paths
from pathlen.geometry import Drawing
from pathlen.measure import measure
from pathlen.segments import SegmentTable, segment_layers, segment_table

#: Our colours: closed contours in deep teal, open ones in amber, segments drawn twice in crimson,
#: gaps in violet, starts and arrows in slate.
COLOURS = {"closed": "#0b6e6e", "open": "#d98c00", "twice": "#c0143c", "gap": "#7a3db8", "mark": "#44505c",
           "ghost": "#c3c9cf", "sew": "#1f5fbf"}
LABELS = {"closed": "closed contour", "open": "open contour", "twice": "drawn twice", "gap": "gap (width)",
          "mark": "start and direction", "ghost": "not measured (layer off or frozen)"}
#: Pierce numbers written on a raster picture at most (more are unreadable and slow to draw).
MAX_NUMBERS = 2000
#: Segment kinds drawn as paths, in drawing order (ghosts underneath).
PATH_KINDS = ("ghost", "closed", "open", "twice")


@dataclass
class Scene:
    """Everything the picture shows, in mm in the drawing's own axes."""

    paths: list[str]
    pieces: list[list[np.ndarray]]
    kind: list[str]  # per segment: closed, open or twice
    starts: np.ndarray  # [k, 2]
    arrows: np.ndarray  # [k, 2, 2]: (point, unit direction)
    gaps: list[tuple[float, float, float]]  # x, y, width
    box: tuple[float, float, float, float]  # x0, y0, x1, y1
    y_down: bool
    notes: list[str] = field(default_factory=list)
    title: str = ""
    #: with a cut order: pierce points in order, and the rapid path from home through them
    pierces: list[tuple[float, float]] = field(default_factory=list)
    rapids: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))
    #: words to write on the drawing (x, y in mm, text): seam edge numbers
    labels: list[tuple[float, float, str]] = field(default_factory=list)
    #: computed sew lines (polylines in mm, drawn dashed), notch ticks (x, y, direction of the line)
    #: and lines listed beside the picture (seam matches)
    sew_lines: list[np.ndarray] = field(default_factory=list)
    ticks: list[tuple[float, float, float, float]] = field(default_factory=list)
    side_notes: list[str] = field(default_factory=list)
    #: kinds of our own (kind -> (colour, legend label)), drawn in this order instead of the contour kinds
    styles: dict[str, tuple[str, str]] | None = None
    #: the line above the picture: file, what was measured, date
    heading: str = ""

    def path_kinds(self) -> tuple[str, ...]:
        return tuple(self.styles) if self.styles else PATH_KINDS

    def colour(self, kind: str) -> str:
        return self.styles[kind][0] if self.styles else COLOURS[kind]

    def legend(self) -> list[tuple[str, str]]:
        """(colour, label) per legend line: the path kinds, then whatever else the picture shows."""
        base = list(self.styles.values()) if self.styles else [(COLOURS[k], label) for k, label in LABELS.items()]
        if len(self.pierces):
            base.append((COLOURS["mark"], "pierce order (numbers) and rapid moves (dashed)"))
        if self.sew_lines:
            base.append((COLOURS["sew"], "sew line (dashed), computed from the cut line"))
        if self.ticks:
            base.append((COLOURS["gap"], "notch (a tick across the line)"))
        if self.labels:
            base.append((COLOURS["gap"], "seam edge PIECE:NUMBER, as pathlen seam numbers them"))
        return base


def build_scene(drawing: Drawing, title: str, y_down: bool, join_tol: float = DEFAULT_JOIN_TOL_MM,
                cut_order: bool = False, home: tuple[float, float] = (0.0, 0.0)) -> Scene:
    """Classify the drawing's segments and contours for the picture (``drawing`` without placements);
    with ``cut_order`` also the pierce points in the order ``pathlen cut`` plans (holes first, from
    ``home``) and the rapid moves between them."""
    table = segment_table(drawing, measure(drawing))
    _, layer = segment_layers(drawing, table)
    contours = chain_contours(table, layer, join_tol)
    kind = np.array(["open"] * len(table), dtype=object)
    for k in range(len(contours)):
        if contours.closed[k]:
            kind[contours.steps[contours.first[k]:contours.first[k] + contours.size[k]]] = "closed"
    kind[duplicate_segments(table, layer, join_tol)] = "twice"
    hidden = np.array([e.hidden for e in drawing.entities], dtype=bool)
    if hidden.any() and len(table):
        kind[hidden[table.entity]] = "ghost"
    middle, width, _ = gap_points(contours, join_tol)
    starts = contours.start[:, :2] if len(contours) else np.zeros((0, 2))
    arrows = _arrows(table, contours)
    lo, hi = table.box if len(table) else (np.zeros((1, 3)), np.ones((1, 3)))
    box = (float(lo[:, 0].min()), float(lo[:, 1].min()), float(hi[:, 0].max()), float(hi[:, 1].max()))
    scene = Scene(segment_paths(drawing), segment_cubics(drawing), list(kind), starts, arrows,
                  [(float(m[0]), float(m[1]), float(w)) for m, w in zip(middle, width, strict=True)], box, y_down,
                  list(drawing.warnings), title)
    shown = np.array([k != "ghost" for k in kind], dtype=bool)
    closed = int(contours.closed.sum())
    scene.heading = (f"{title}: {float(table.length[shown].sum()):,.3f} mm measured, {closed} closed and "
                     f"{len(contours) - closed} open contours, {datetime.date.today().isoformat()}")
    if cut_order and len(contours):
        from pathlen.containment import nesting_depth
        from pathlen.estimates.tour import plan_tour

        _, parent = nesting_depth(table, contours)
        tour = plan_tour(contours.start[:, :2], contours.end[:, :2], contours.closed, parent, home)
        path = [np.asarray(home, dtype=float)]
        for k in tour.order.tolist():
            entry = contours.end[k, :2] if tour.reverse[k] else contours.start[k, :2]
            leave = entry if contours.closed[k] else (contours.start[k, :2] if tour.reverse[k] else contours.end[k, :2])
            scene.pierces.append((float(entry[0]), float(entry[1])))
            path += [entry, leave]
        scene.rapids = np.array(path, dtype=float)
    return scene


def _arrows(table: SegmentTable, contours: object) -> np.ndarray:
    out = []
    for c in contours:  # type: ignore[attr-defined]
        pts = table.travel_samples(c.segments[:1], c.forward[:1])[0, :, :2]
        mid = len(pts) // 2
        d = pts[mid + 1] - pts[mid - 1]
        n = float(np.hypot(*d))
        if n > 0:
            out.append([pts[mid], d / n])
    return np.array(out, dtype=float).reshape(-1, 2, 2)


def nice_length(span: float) -> float:
    """A round length (1, 2 or 5 times a power of ten) about a fifth of ``span``."""
    target = max(span / 5.0, 1e-9)
    power = 10.0 ** math.floor(math.log10(target))
    return min((m * power for m in (1, 2, 5, 10)), key=lambda x: abs(x - target))


# -- SVG ----------------------------------------------------------------------------------------
def scene_svg(s: Scene, fit: bool = False) -> str:
    """The picture as a standalone SVG document sized in mm (1 user unit = 1 mm), so that measuring it
    again gives the drawing's lengths; ``fit``: no size, so a browser fits it to its window (user units
    are still mm, but a reader takes them for px)."""
    x0, y0, x1, y1 = s.box
    w, h = max(x1 - x0, 1e-6), max(y1 - y0, 1e-6)
    margin = 0.06 * max(w, h) + 2.0
    text = max(w, h) / 60.0 + 1.0
    legend = s.legend()
    width = w + 2 * margin
    chars = max(40, int((width - 2 * margin) / (0.55 * text)))  # a note wraps within the picture
    notes = [line for note in s.notes[:6] for line in textwrap.wrap(f"note: {note}", chars)[:3]]
    legend_h = text * 1.6 * (len(legend) + len(notes) + len(s.side_notes) + 1)
    height = h + 2 * margin + legend_h
    stroke = max(w, h) / 800.0 + 0.05
    # drawing coordinates -> picture: y up (DXF) is flipped so that it reads as drawn
    flip = f"matrix(1 0 0 -1 {margin - x0:.6f} {margin + y1:.6f})" if not s.y_down else \
        f"translate({margin - x0:.6f} {margin - y0:.6f})"
    size = 'width="100%"' if fit else f'width="{width:.6f}mm" height="{height:.6f}mm"'
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" {size} '
           f'viewBox="0 0 {width:.6f} {height:.6f}" font-family="DejaVu Sans, Helvetica, Arial, sans-serif">',
           f"<title>{escape(s.title)}</title>",
           f'<rect width="{width:.6f}" height="{height:.6f}" fill="#ffffff"/>',
           f'<g id="measured" transform="{flip}" fill="none" stroke-width="{stroke:.4f}" stroke-linecap="round">']
    for kind in s.path_kinds():
        d = " ".join(p for p, k in zip(s.paths, s.kind, strict=True) if k == kind)
        if d:
            dash = f' stroke-dasharray="{4 * stroke:.3f} {2 * stroke:.3f}"' if kind == "twice" else ""
            if kind == "ghost":  # not measured: outside the "measured" group, drawn faintly underneath
                out.insert(-1, f'<path class="ghost" transform="{flip}" fill="none" stroke-width="{stroke:.4f}" '
                               f'stroke="{COLOURS["ghost"]}" d="{d}"/>')
                continue
            out.append(f'<path class="{kind}" stroke="{s.colour(kind)}"{dash} d="{d}"/>')
    out.append("</g>")  # the measured paths alone in their group: re-measuring it gives the drawing's length
    out.append(f'<g id="marks" transform="{flip}" fill="none" stroke-width="{stroke:.4f}">')
    mark = COLOURS["mark"]
    for x, y in s.starts:
        out.append(f'<circle cx="{x:.6f}" cy="{y:.6f}" r="{2.5 * stroke:.4f}" fill="{mark}" stroke="none"/>')
    size = 6 * stroke
    for (px, py), (dx, dy) in s.arrows:
        tip = (px + dx * size, py + dy * size)
        left = (px - dy * size * 0.5, py + dx * size * 0.5)
        right = (px + dy * size * 0.5, py - dx * size * 0.5)
        out.append(f'<path d="M {left[0]:.6f} {left[1]:.6f} L {tip[0]:.6f} {tip[1]:.6f} L {right[0]:.6f} '
                   f'{right[1]:.6f} Z" fill="{mark}" stroke="none"/>')
    for x, y, gw in s.gaps:
        out.append(f'<circle class="gap" cx="{x:.6f}" cy="{y:.6f}" r="{max(4 * stroke, gw):.4f}" '
                   f'stroke="{COLOURS["gap"]}"/>')
    if len(s.rapids) > 1:  # rapid moves: from home to each pierce, dashed (every second leg is the cut)
        legs = " ".join(f"M {a[0]:.6f} {a[1]:.6f} L {b[0]:.6f} {b[1]:.6f}"
                        for a, b in zip(s.rapids[0::2], s.rapids[1::2], strict=False))
        out.append(f'<path class="rapid" d="{legs}" stroke="{COLOURS["mark"]}" '
                   f'stroke-dasharray="{2 * stroke:.3f} {3 * stroke:.3f}"/>')
    if s.sew_lines:  # computed sew lines, dashed inside the cut lines
        d = " ".join("M " + " L ".join(f"{x:.6f} {y:.6f}" for x, y in line) for line in s.sew_lines)
        out.append(f'<path class="sew" d="{d}" stroke="{COLOURS["sew"]}" stroke-width="{stroke:.4f}" '
                   f'stroke-dasharray="{3 * stroke:.3f} {2 * stroke:.3f}"/>')
    for x, y, dx, dy in s.ticks:  # notches: a tick across the line
        nx, ny = -dy * 4 * stroke, dx * 4 * stroke
        out.append(f'<path class="notch" d="M {x - nx:.6f} {y - ny:.6f} L {x + nx:.6f} {y + ny:.6f}" '
                   f'stroke="{COLOURS["gap"]}" stroke-width="{1.5 * stroke:.4f}"/>')
    out.append("</g>")
    for n, (x, y) in enumerate(s.pierces, start=1):  # numbers upright, outside the flipped group
        px, py = x + margin - x0, (y + margin - y0) if s.y_down else (margin + y1 - y)
        out.append(f'<text x="{px + 1.5 * stroke:.4f}" y="{py - 1.5 * stroke:.4f}" font-size="{text * 0.8:.3f}" '
                   f'fill="{COLOURS["mark"]}">{n}</text>')
    for x, y, words in s.labels:
        px, py = x + margin - x0, (y + margin - y0) if s.y_down else (margin + y1 - y)
        out.append(f'<text class="label" x="{px:.4f}" y="{py:.4f}" font-size="{text:.3f}" text-anchor="middle" '
                   f'dominant-baseline="middle" fill="{COLOURS["gap"]}" stroke="#ffffff" '
                   f'stroke-width="{text * 0.25:.3f}" paint-order="stroke">{escape(words)}</text>')
    out.append(f'<g font-size="{text:.3f}" fill="#222222">')
    bar = nice_length(w)
    by = margin + h + text * 1.2
    out.append(f'<rect x="{margin:.4f}" y="{by:.4f}" width="{bar:.6f}" height="{text * 0.3:.4f}" fill="#222222"/>')
    out.append(f'<text x="{margin + bar + text * 0.5:.4f}" y="{by + text * 0.35:.4f}">{bar:g} mm</text>')
    out.append(f'<text x="{width - margin:.4f}" y="{margin * 0.6:.4f}" text-anchor="end">{w:.1f} x {h:.1f} mm</text>')
    if s.heading:
        out.append(f'<text class="heading" x="{margin:.4f}" y="{margin * 0.6:.4f}" font-weight="bold">'
                   f'{escape(s.heading[:chars])}</text>')
    for k, (colour, label) in enumerate(legend):
        y = by + text * 1.6 * (k + 1.5)
        out.append(f'<rect x="{margin:.4f}" y="{y - text * 0.7:.4f}" width="{text * 1.5:.4f}" '
                   f'height="{text * 0.6:.4f}" fill="{colour}"/>'
                   f'<text x="{margin + text * 2:.4f}" y="{y:.4f}">{escape(label)}</text>')
    for k, note in enumerate(notes):
        y = by + text * 1.6 * (len(legend) + k + 1.5)
        out.append(f'<text x="{margin:.4f}" y="{y:.4f}" fill="#777777">{escape(note)}</text>')
    for k, line in enumerate(s.side_notes):
        y = by + text * 1.6 * (len(legend) + len(notes) + k + 1.5)
        out.append(f'<text class="match" x="{margin:.4f}" y="{y:.4f}">{escape(line[:160])}</text>')
    out.append("</g></svg>")
    return "\n".join(out) + "\n"


# -- PNG and PDF ------------------------------------------------------------------------------
def render_raster(s: Scene, path: Path, dpi: float = 150.0) -> None:
    """The picture through matplotlib (Bézier paths), 1 mm on the page per mm drawn for small drawings,
    scaled to fit an A3 sheet for large ones."""
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib import patheffects
    from matplotlib.collections import EllipseCollection, LineCollection
    from matplotlib.figure import Figure
    from matplotlib.patches import PathPatch
    from matplotlib.path import Path as MplPath

    x0, y0, x1, y1 = s.box
    w, h = max(x1 - x0, 1e-6), max(y1 - y0, 1e-6)
    margin = 0.06 * max(w, h) + 2.0
    # mm on paper per mm drawn: 1 where it fits an A3 sheet and a page at least 100 mm wide, else scaled
    scale = max(min(1.0, 400.0 / max(w, h)), 100.0 / (w + 2 * margin))
    band = max(1.6, 0.4 + 0.12 * len(s.side_notes))  # inches below the drawing: scale bar, notes, legend, matches
    tall = (h + 2 * margin) * scale / 25.4
    fig = Figure(figsize=((w + 2 * margin) * scale / 25.4, tall + band), dpi=dpi)
    ax = fig.add_axes((0.0, band / (tall + band), 1.0, tall / (tall + band)))
    ax.set_xlim(x0 - margin, x1 + margin)
    ax.set_ylim((y1 + margin, y0 - margin) if s.y_down else (y0 - margin, y1 + margin))
    ax.set_aspect("equal")
    ax.axis("off")
    for kind in s.path_kinds():
        verts, codes = [], []
        for pieces, k in zip(s.pieces, s.kind, strict=True):
            if k != kind:
                continue
            for piece in pieces:
                verts.extend(piece)
                if len(piece) == 2:
                    codes.extend([MplPath.MOVETO, MplPath.LINETO])
                else:
                    codes.extend([MplPath.MOVETO, MplPath.CURVE4, MplPath.CURVE4, MplPath.CURVE4])
        if verts:
            label = s.styles[kind][1] if s.styles else LABELS[kind]
            ax.add_patch(PathPatch(MplPath(np.array(verts), codes), fill=False, edgecolor=s.colour(kind),
                                   linewidth=1.0, linestyle="--" if kind == "twice" else "-", label=label))
    # marks as one artist each (a drawing of 50,000 contours has 50,000 starts and arrows)
    if len(s.starts):
        ax.plot(s.starts[:, 0], s.starts[:, 1], linestyle="none", marker="o", markersize=2.5, color=COLOURS["mark"])
    size = 0.02 * max(w, h)
    if len(s.arrows):
        ax.quiver(s.arrows[:, 0, 0], s.arrows[:, 0, 1], s.arrows[:, 1, 0] * size, s.arrows[:, 1, 1] * size,
                  angles="xy", scale_units="xy", scale=1.0, color=COLOURS["mark"], width=0.0015)
    if s.gaps:
        gaps = np.array(s.gaps, dtype=float)
        ax.add_collection(EllipseCollection(2 * np.maximum(gaps[:, 2], 0.01 * max(w, h)),
                                            2 * np.maximum(gaps[:, 2], 0.01 * max(w, h)), 0.0, units="xy",
                                            offsets=gaps[:, :2], offset_transform=ax.transData,
                                            facecolors="none", edgecolors=COLOURS["gap"], linewidths=1.0))
    if len(s.rapids) > 1:
        legs = np.stack([s.rapids[0:-1:2], s.rapids[1::2]], axis=1) if len(s.rapids) % 2 == 0 else \
            np.stack([s.rapids[0:-2:2], s.rapids[1:-1:2]], axis=1)
        ax.add_collection(LineCollection(legs, linestyles=(0, (2, 3)), linewidths=0.7, colors=COLOURS["mark"]))
    for n, (x, y) in enumerate(s.pierces[:MAX_NUMBERS], start=1):
        ax.annotate(str(n), (x, y), textcoords="offset points", xytext=(3, 3), fontsize=6, color=COLOURS["mark"])
    for line in s.sew_lines:
        ax.plot(line[:, 0], line[:, 1], linestyle=(0, (3, 2)), linewidth=0.8, color=COLOURS["sew"])
    tick = 0.01 * max(w, h)
    for x, y, dx, dy in s.ticks:
        ax.plot([x + dy * tick, x - dy * tick], [y - dx * tick, y + dx * tick], linewidth=1.2, color=COLOURS["gap"])
    halo = [patheffects.withStroke(linewidth=2.0, foreground="white")]
    for x, y, words in s.labels:
        ax.annotate(words, (x, y), ha="center", va="center", fontsize=7, color=COLOURS["gap"], path_effects=halo)
    for k, line in enumerate(s.side_notes):
        fig.text(0.45, (band - 0.25 - 0.12 * k) / (tall + band), line[:90], fontsize=6, color="#222222")
    bar = nice_length(w)
    fig.text(0.02, 0.08 / (tall + band), f"extents {w:.1f} x {h:.1f} mm", fontsize=7)
    width_in = (w + 2 * margin) * scale / 25.4
    lines = [line for note in s.notes[:4] for line in textwrap.wrap(f"note: {note}", max(40, int(width_in * 10)))[:2]]
    for k, line in enumerate(lines):
        fig.text(0.02, (0.3 + 0.11 * k) / (tall + band), line, fontsize=6, color="#777777")
    bar_y = y0 - margin * 0.5 if not s.y_down else y1 + margin * 0.5
    ax.plot([x0, x0 + bar], [bar_y] * 2, color="#222222", linewidth=2)
    ax.annotate(f"{bar:g} mm", (x0 + bar, bar_y), textcoords="offset points", xytext=(4, 0), va="center",
                fontsize=7, color="#222222")
    from matplotlib.lines import Line2D

    handles = [h_ for h_ in ax.patches if h_.get_label() and not h_.get_label().startswith("_")]
    extras = s.legend()[len(s.styles) if s.styles else len(LABELS):]  # what is shown beside the paths
    handles += [Line2D([], [], color=colour, label=label) for colour, label in extras]
    if handles:
        fig.legend(handles=handles, loc="lower right", bbox_to_anchor=(0.98, 0.06), fontsize=7, frameon=False)
    if s.heading:
        fig.suptitle(s.heading, fontsize=8, x=0.02, ha="left")
    fig.savefig(path, dpi=dpi, facecolor="white")
