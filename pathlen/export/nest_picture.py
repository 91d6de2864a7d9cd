"""Pictures of a nest: every sheet (or the roll) with its parts drawn with their exact curves, numbered,
a legend of the numbers and a scale bar.

SVG keeps curves as curves (:mod:`pathlen.export.preview_paths`); PNG and PDF are drawn by matplotlib
from Bézier pieces.  Sheets are stacked top to bottom, each with y up from its lower-left corner (the
``pathlen-nest`` coordinates).  Units: mm on the page (1 SVG user unit = 1 mm).  Part colours are our own.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from pathlen.export import markup_text as escape
from pathlen.export.preview import nice_length
from pathlen.export.preview_paths import segment_cubics, segment_paths
from pathlen.geometry import Drawing, affine
from pathlen.nest.layout import NestResult, place_points, placement_matrix

PALETTE = ("#0b6e6e", "#b5562b", "#3d5a99", "#7a3db8", "#5b7f1f", "#a8326e", "#8a6d00", "#2f6f8f")
SHEET_FILL = "#f4f1ea"
SHEET_EDGE = "#6b6b6b"


def _placed_drawing(result: NestResult, k: int) -> Drawing:
    p = result.placements[k]
    m = affine(placement_matrix(p.rotation_deg, p.mirrored), (p.offset[0], p.offset[1], 0.0))
    return result.demands[p.demand].part.drawing.transformed(m)


def _label_point(result: NestResult, k: int) -> tuple[float, float]:
    p = result.placements[k]
    part = result.demands[p.demand].part
    pts = place_points(part.outline, p.rotation_deg, p.mirrored, p.offset)
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    return float(0.5 * (lo[0] + hi[0])), float(0.5 * (lo[1] + hi[1]))


def legend(result: NestResult) -> list[str]:
    """The legend's lines, number n for demand n - 1."""
    return [f"{i + 1}: {d.part.name or f'{Path(d.part.file).name} part {d.part.index + 1}'} x {d.quantity}"
            for i, d in enumerate(result.demands)]


def nest_svg(result: NestResult, title: str = "") -> str:
    """All sheets as one SVG document."""
    if not result.sheets:
        return ('<svg xmlns="http://www.w3.org/2000/svg" width="100mm" height="20mm" viewBox="0 0 100 20">'
                '<text x="2" y="10" font-size="4">nothing placed</text></svg>\n')
    wide = max(s.length for s in result.sheets)
    text = wide / 70.0 + 1.0
    space = 3 * text
    heights = [s.width for s in result.sheets]
    lines = legend(result)
    legend_h = text * 1.5 * (len(lines) + 2)
    width = wide + 2 * space
    height = sum(heights) + space * (len(heights) + 1) + legend_h
    stroke = wide / 1500.0 + 0.1
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width:.3f}mm" height="{height:.3f}mm" '
           f'viewBox="0 0 {width:.3f} {height:.3f}" font-family="DejaVu Sans, Helvetica, Arial, sans-serif">',
           f"<title>{escape(title or 'nest')}</title>",
           f'<rect width="{width:.3f}" height="{height:.3f}" fill="#ffffff"/>']
    top = space
    for n, s in enumerate(result.sheets):
        out.append(f'<text x="{space:.3f}" y="{top - 0.6 * text:.3f}" font-size="{text:.3f}">'
                   f'{"roll" if result.roll else f"sheet {n + 1}"}: {s.width:g} x {s.length:.1f} mm, '
                   f'{s.parts} parts, {100 * s.utilisation:.1f} %</text>')
        flip = f"matrix(1 0 0 -1 {space:.3f} {top + s.width:.3f})"
        out.append(f'<g class="sheet" transform="{flip}">')
        out.append(f'<rect width="{s.length:.3f}" height="{s.width:.3f}" fill="{SHEET_FILL}" stroke="{SHEET_EDGE}" '
                   f'stroke-width="{stroke:.3f}"/>')
        if s.last and s.used_length < s.length and not result.roll:
            out.append(f'<line x1="{s.used_length:.3f}" y1="0" x2="{s.used_length:.3f}" y2="{s.width:.3f}" '
                       f'stroke="{SHEET_EDGE}" stroke-dasharray="{4 * stroke:.3f} {3 * stroke:.3f}" '
                       f'stroke-width="{stroke:.3f}"/>')
        labels = []
        for k, p in enumerate(result.placements):
            if p.sheet != n:
                continue
            colour = PALETTE[p.demand % len(PALETTE)]
            d = " ".join(segment_paths(_placed_drawing(result, k)))
            out.append(f'<path class="part" data-part="{p.demand + 1}" fill="none" stroke="{colour}" '
                       f'stroke-width="{stroke:.3f}" d="{d}"/>')
            labels.append((_label_point(result, k), p.demand + 1))
        out.append("</g>")
        for (x, y), number in labels:  # upright numbers, outside the flipped group
            out.append(f'<text x="{space + x:.3f}" y="{top + s.width - y:.3f}" font-size="{0.8 * text:.3f}" '
                       f'text-anchor="middle" dominant-baseline="middle" fill="#222222">{number}</text>')
        top += s.width + space
    bar = nice_length(wide)
    out.append(f'<rect x="{space:.3f}" y="{top:.3f}" width="{bar:.3f}" height="{0.3 * text:.3f}" fill="#222222"/>'
               f'<text x="{space + bar + text * 0.5:.3f}" y="{top + 0.4 * text:.3f}" font-size="{text:.3f}">'
               f"{bar:g} mm</text>")
    for i, line in enumerate(lines):
        out.append(f'<text x="{space:.3f}" y="{top + text * 1.5 * (i + 2):.3f}" font-size="{text:.3f}" '
                   f'fill="{PALETTE[i % len(PALETTE)]}">{escape(line)}</text>')
    out.append("</svg>")
    return "\n".join(out) + "\n"


def render_nest_raster(result: NestResult, path: Path, dpi: float = 150.0) -> None:
    """The sheets through matplotlib (PNG or PDF by ``path``'s suffix), one axes per sheet."""
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure
    from matplotlib.patches import PathPatch, Rectangle
    from matplotlib.path import Path as MplPath

    sheets = result.sheets or []
    wide = max((s.length for s in sheets), default=100.0)
    tall = sum(s.width for s in sheets) or 20.0
    scale = min(1.0, 380.0 / max(wide, 1e-9))  # fits an A3 page across
    fig_w = max(wide * scale / 25.4, 4.0)
    fig = Figure(figsize=(fig_w, tall * scale / 25.4 + 0.5 * len(sheets) + 0.3 * (len(result.demands) + 2)), dpi=dpi)
    rows = len(sheets) + 1
    ratios = [s.width for s in sheets] + [0.3 * (len(result.demands) + 2) * 25.4 / scale]
    grid = fig.add_gridspec(rows, 1, height_ratios=ratios)
    for n, s in enumerate(sheets):
        ax = fig.add_subplot(grid[n])
        ax.set_xlim(-0.02 * wide, wide * 1.02)
        ax.set_ylim(-0.02 * s.width, s.width * 1.02)
        ax.set_aspect("equal")
        ax.axis("off")
        ax.add_patch(Rectangle((0, 0), s.length, s.width, facecolor=SHEET_FILL, edgecolor=SHEET_EDGE, linewidth=0.6))
        ax.set_title(f"{'roll' if result.roll else f'sheet {n + 1}'}: {s.width:g} x {s.length:.1f} mm, "
                     f"{s.parts} parts, {100 * s.utilisation:.1f} %", fontsize=7, loc="left")
        for k, p in enumerate(result.placements):
            if p.sheet != n:
                continue
            verts, codes = [], []
            for pieces in segment_cubics(_placed_drawing(result, k)):
                for piece in pieces:
                    verts.extend(piece)
                    codes.extend([MplPath.MOVETO, MplPath.LINETO] if len(piece) == 2 else
                                 [MplPath.MOVETO, MplPath.CURVE4, MplPath.CURVE4, MplPath.CURVE4])
            if verts:
                ax.add_patch(PathPatch(MplPath(np.array(verts), codes), fill=False,
                                       edgecolor=PALETTE[p.demand % len(PALETTE)], linewidth=0.6))
            x, y = _label_point(result, k)
            ax.annotate(str(p.demand + 1), (x, y), ha="center", va="center", fontsize=5)
        if n == len(sheets) - 1:  # the scale bar in the drawing's own units, under the last sheet
            bar = nice_length(wide)
            ax.set_ylim(-0.06 * s.width, s.width * 1.02)
            ax.plot([0, bar], [-0.04 * s.width] * 2, color="#222222", linewidth=2)
            ax.annotate(f"{bar:g} mm", (bar, -0.04 * s.width), xytext=(4, 0), textcoords="offset points",
                        va="center", fontsize=6)
    ax = fig.add_subplot(grid[-1])
    ax.axis("off")
    lines = legend(result)
    for i, line in enumerate(lines):
        ax.text(0.0, 1.0 - i / max(len(lines), 1), line, fontsize=6, va="top", transform=ax.transAxes,
                color=PALETTE[i % len(PALETTE)])
    fig.savefig(path, dpi=dpi, facecolor="white")
