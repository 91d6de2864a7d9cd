"""The picture of a bead estimate: each joint's paths in its own colour, with a legend line per joint
(selector, section, product); paths no joint seals drawn grey.  Built on the preview's scene (same
SVG, PNG and PDF output, mm, exact curves)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from pathlen.estimates.bead import Joint
from pathlen.export.nest_picture import PALETTE
from pathlen.export.preview import COLOURS, Scene, build_scene
from pathlen.geometry import Drawing
from pathlen.measure import measure
from pathlen.segments import segment_table


def bead_scene(drawing: Drawing, joints: list[Joint], title: str, y_down: bool) -> Scene:
    """The drawing's scene with its segments grouped by the joint that seals them (the first that
    names their layer or colour)."""
    scene = build_scene(drawing, title, y_down)
    table = segment_table(drawing, measure(drawing))
    entities = drawing.entities
    kind = np.full(len(table), "unsealed", dtype=object)
    styles: dict[str, tuple[str, str]] = {}
    for k, joint in enumerate(joints):
        if joint.selector == "":
            hit = np.ones(len(entities), dtype=bool)
        else:
            hit = np.array([e.color == joint.selector if joint.selector.startswith("#") else e.layer == joint.selector
                            for e in entities], dtype=bool)
        chosen = hit[table.entity] & (kind == "unsealed") if len(table) else np.zeros(0, dtype=bool)
        kind[chosen] = f"joint{k}"
        label = f"{joint.selector or 'every path'}: {joint.section.text()}"
        label += f" x{joint.sides} sides" if joint.sides == 2 else ""
        label += f", {joint.product}" if joint.product else ""
        styles[f"joint{k}"] = (PALETTE[k % len(PALETTE)], label)
    styles["unsealed"] = (COLOURS["ghost"], "not sealed")
    scene.kind = list(kind)
    scene.styles = styles
    scene.starts = np.zeros((0, 2))
    scene.arrows = np.zeros((0, 2, 2))
    return scene


def write_bead_picture(path: str, drawing_path: Path, drawing: Drawing, joints: list[Joint]) -> None:
    """SVG (written whole or not at all), PNG or PDF by the suffix of ``path``."""
    from pathlen.cli.reading import write_atomic
    from pathlen.export.preview import render_raster, scene_svg

    scene = bead_scene(drawing, joints, drawing_path.name, drawing_path.suffix.lower() == ".svg")
    if path.lower().endswith(".svg"):
        write_atomic(path, scene_svg(scene))
    else:
        from pathlen.atomic import write_file_atomic

        write_file_atomic(Path(path), lambda tmp: render_raster(scene, tmp))
