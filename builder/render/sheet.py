"""The review sheet: the lowest N modes in one image, a grid of titled panels.

Every panel comes from one plotter and the same fixed camera per view (see
:class:`~builder.render.modeshape.ModeRenderer`), so the panels compare
directly. Each panel's view is chosen from the mode's motion (side for
pitch, front for roll, iso otherwise) unless one view is given for all.

Each panel carries its caption band (:mod:`builder.render.look`); the band's
text is wrapped between words to the panel's width and its font shrinks
until the label fits. The legend of the amplitude cue is drawn once, in a
strip under the grid.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import InputError
from .look import caption_of, fit_band, hex_rgb, legend_strip
from .modeshape import (
    DEFAULT_SCALE,
    ModeRenderer,
    _get,
    choose_view,
    encode_png,
    mode_field,
    write_bytes,
)
from .scene import PALETTE, Scene

__all__ = ["sheet_layout", "render_sheet", "save_sheet", "mode_list", "sheet_renderer",
           "LEGEND_HEIGHT"]

GAP = 4  # pixels between panels
#: Height (pixels) of the legend strip under a sheet.
LEGEND_HEIGHT = 34


def mode_list(modes: Any) -> list[Any]:
    """The modes of a ModeSet (``.modes``), a mapping with ``"modes"``, or a sequence."""
    if hasattr(modes, "modes"):
        return list(modes.modes)
    if isinstance(modes, dict) and "modes" in modes:
        return list(modes["modes"])
    return list(modes)


def sheet_layout(count: int) -> tuple[int, int]:
    """(rows, columns) of a sheet of ``count`` 4:3 panels, at most 4 columns.

    The layout with the fewest empty cells wins, and between near ties the one
    whose whole sheet is closest to a 16:10 landscape page.
    """
    if count < 1:
        raise InputError(f"--sheet: need at least one mode, got {count}")

    def cost(cols: int) -> float:
        rows = math.ceil(count / cols)
        return 0.35 * (rows * cols - count) + abs(math.log((cols * 4.0) / (rows * 3.0) / 1.6))

    cols = min(range(1, min(4, count) + 1), key=cost)
    return math.ceil(count / cols), cols


def _selected(modes: Any, count: int, skip_rigid: bool) -> list[Any]:
    chosen = [m for m in mode_list(modes)
              if not (skip_rigid and float(_get(m, "frequency_hz", 1.0) or 0.0) <= 0.0)]
    if not chosen:
        raise InputError("--sheet: the model has no modes to draw")
    return chosen[:count]


def render_sheet(scene: Scene, dofs: Sequence[str], modes: Any, count: int = 12, *,
                 size: tuple[int, int] | None = None, view: str | None = None,
                 scale: float = DEFAULT_SCALE, skip_rigid: bool = True,
                 renderer: ModeRenderer | None = None) -> NDArray:
    """Image (h x w x 3 uint8) of the lowest ``count`` modes in a grid, the legend under it.

    ``size`` is the whole sheet in pixels (default: 480 x 360 per panel and the
    legend strip); rigid-body (zero-frequency) modes are left out unless
    ``skip_rigid`` is false. ``renderer`` (a sheet renderer of this scene at
    the panel size, see :func:`sheet_renderer`) reuses its plotter.
    """
    chosen = _selected(modes, count, skip_rigid)
    rows, cols = sheet_layout(len(chosen))
    strip = LEGEND_HEIGHT
    if size is None:
        size = (cols * 480 + (cols - 1) * GAP, rows * 360 + (rows - 1) * GAP + strip)
    width, height = size
    strip = min(strip, max(0, height // 8))
    pw = (width - (cols - 1) * GAP) // cols
    ph = (height - strip - (rows - 1) * GAP) // rows
    if pw < 32 or ph < 32:
        raise InputError(f"--size: {width}x{height} is too small for {len(chosen)} panels")
    sheet = np.empty((height, width, 3), dtype=np.uint8)
    sheet[:] = hex_rgb(PALETTE["ground_edges"]).astype(np.uint8)
    views = [view or choose_view(scene, dofs, mode) for mode in chosen]
    captions = [caption_of(mode, v) for mode, v in zip(chosen, views, strict=True)]
    band = fit_band((pw, ph), captions, sheet=True)
    own = renderer is None
    if renderer is None or renderer.size != (pw, ph) or renderer.band != band:
        renderer = sheet_renderer(scene, (pw, ph), scale, band)
        own = True
    try:
        for k, mode in enumerate(chosen):
            field = mode_field(scene, dofs, _get(mode, "shape"))
            image = renderer.draw(field, captions[k], views[k])
            r, c = divmod(k, cols)
            y, x = r * (ph + GAP), c * (pw + GAP)
            sheet[y:y + ph, x:x + pw] = image
    finally:
        if own:
            renderer.close()
    if strip:
        sheet[height - strip:] = legend_strip(width, strip)
    return sheet


def sheet_renderer(scene: Scene, panel: tuple[int, int], scale: float = DEFAULT_SCALE,
                   band: int | None = None) -> ModeRenderer:
    """A renderer for sheet panels of ``panel`` (w, h) pixels (no legend in the band;
    ``band``: its height in pixels, see :func:`builder.render.look.fit_band`)."""
    return ModeRenderer(scene, panel, scale=scale, legend=False, sheet=True, band=band)


def save_sheet(scene: Scene, dofs: Sequence[str], modes: Any, path: str | os.PathLike,
               count: int = 12, **options: Any) -> Path:
    """Write the review sheet as a PNG (options as :func:`render_sheet`)."""
    if Path(path).suffix.lower() != ".png":
        raise InputError(f"--out: the review sheet is a .png, got {Path(path).name!r}")
    return write_bytes(path, encode_png(render_sheet(scene, dofs, modes, count, **options)))
