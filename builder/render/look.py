"""lumpgraph's look: the caption band, the motion colours and the legend (docs/look.md).

Every picture (PNG, GIF frame, sheet panel, report image) is the 3D view
above a **caption band**: a dark ink strip across the bottom with the mode
number in an accent tile at its left, then the frequency, damping and the
view on the first line and the mode's label below. A single picture also
carries, at the band's right, the **legend** of the amplitude cue; a sheet
carries it once, under the grid.

The amplitude cue: every part has its own hue (by what it is: skin,
powertrain, tyres, seat, occupant...), drawn **pale where it stays still and
deep where it moves most** (intensity by the point's amplitude over the
mode's largest); each moving body's centre of gravity leaves a **track**,
the closed path it draws in one cycle at drawing scale, with a dot where it
is at the frame's phase; the rest position is a flat pale **shadow** behind
the scene.

Pictures are composed with Pillow (fonts: DejaVu Sans when found, else
Pillow's own); sizes in pixels.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .scene import PALETTE

__all__ = ["Caption", "caption_of", "band_height", "draw_band", "band_layout", "fit_band",
           "BandLayout", "legend_strip", "hex_rgb",
           "motion_colours", "VIEW_WORDS", "LEGEND"]

#: How each view is named in the caption.
VIEW_WORDS = {"side": "from the left", "front": "from ahead", "top": "from above",
              "iso": "from ahead-left, above"}

#: The legend's three entries (the words of the amplitude cue).
LEGEND = ("deep colour: moves most", "ring: path of a cg in one cycle", "pale shadow: at rest")

#: Share of a colour kept when a part is still (the rest blends to the paper).
STILL_SHARE = 0.28


def hex_rgb(color: str) -> NDArray:
    """``#rrggbb`` -> float RGB (3,) in 0..255."""
    color = color.lstrip("#")
    return np.array([int(color[k:k + 2], 16) for k in (0, 2, 4)], dtype=float)


def motion_colours(base: NDArray, amplitude: NDArray) -> NDArray:
    """Per-point colours (n x 3 uint8): ``base`` (n x 3, 0..255) pale at amplitude 0 and
    full at 1 (amplitude over the mode's largest, 0..1)."""
    paper = hex_rgb(PALETTE["paper"])
    a = np.clip(np.asarray(amplitude, float), 0.0, 1.0) ** 0.7
    share = STILL_SHARE + (1.0 - STILL_SHARE) * a
    out = paper[None, :] + share[:, None] * (np.asarray(base, float) - paper[None, :])
    return np.clip(np.round(out), 0, 255).astype(np.uint8)


@dataclass(frozen=True)
class Caption:
    """What the band says: mode number, frequency (Hz), damping ratio, label, view."""

    number: str = ""
    frequency_hz: float | None = None
    damping_ratio: float | None = None
    label: str = ""
    view: str = ""

    def line(self) -> str:
        """The first line: frequency, damping, view (plain words)."""
        parts = []
        if self.frequency_hz is not None and np.isfinite(self.frequency_hz):
            f = float(self.frequency_hz)
            parts.append(f"{f:.2f} Hz" if f < 10 else f"{f:.1f} Hz" if f < 100 else f"{f:.0f} Hz")
        if self.damping_ratio is not None and np.isfinite(self.damping_ratio):
            parts.append(f"damping {100 * float(self.damping_ratio):.1f} %")
        if self.view:
            parts.append(VIEW_WORDS.get(self.view, self.view))
        return "   ".join(parts)


def caption_of(mode: Any, view: str = "") -> Caption:
    """The caption of a mode (mapping or object with number, frequency_hz, damping_ratio,
    label) or of a plain text (its first line as the label)."""
    if isinstance(mode, str):
        return Caption(label=mode.replace("\n", "  "), view=view)
    get = (lambda k: mode.get(k)) if isinstance(mode, Mapping) else (
        lambda k: getattr(mode, k, None))
    number = get("number")
    freq, zeta = get("frequency_hz"), get("damping_ratio")
    return Caption("" if number is None else str(number),
                   None if freq is None else float(freq),
                   None if zeta is None else float(zeta), str(get("label") or ""), view)


@lru_cache(maxsize=64)
def _font(size: int, bold: bool = False) -> Any:
    from PIL import ImageFont

    names = ("DejaVuSans-Bold.ttf", "DejaVuSansCondensed-Bold.ttf") if bold else (
        "DejaVuSans.ttf", "DejaVuSansCondensed.ttf")
    for name in names:
        for folder in ("", "/usr/share/fonts/truetype/dejavu/"):
            try:
                return ImageFont.truetype(folder + name, size)
            except OSError:
                continue
    try:
        return ImageFont.load_default(size=size)
    except TypeError:        # Pillow before 10.1
        return ImageFont.load_default()


def band_height(size: Sequence[int], sheet: bool = False) -> int:
    """Height (pixels) of the caption band of a picture of ``size`` (w, h)."""
    share = 0.17 if sheet else 0.13
    return int(max(20, min(160, round(share * size[1]))))


def _wrap(text: str, font: Any, width: float) -> list[str]:
    words, lines, line = text.split(), [], ""
    for word in words:
        trial = f"{line} {word}".strip()
        if font.getlength(trial) <= width or not line:
            line = trial
        else:
            lines.append(line)
            line = word
    if line:
        lines.append(line)
    return lines


@dataclass(frozen=True)
class BandLayout:
    """Where the band's parts go (pixels): text start ``x``, room for the text, fonts."""

    pad: int
    tile: int
    tile_w: int
    x: float
    room: float
    legend_left: float | None
    legend_size: int
    head_size: int
    label_size: int
    label: tuple[str, ...]
    fits: bool
    head: str = ""     # the first line as drawn (without the view when it does not fit)


#: Smallest label font (pixels); a label that does not fit at it makes the band taller.
SMALLEST_LABEL = 7


def band_layout(width: int, height: int, caption: Caption, legend: bool = False,
                tile_cap: int | None = None) -> BandLayout:
    """Lay out a band: the first line keeps its size (shrinking only to fit the width);
    the label wraps between words and shrinks down to :data:`SMALLEST_LABEL`;
    ``fits`` says whether every label line fits in the band's height."""
    pad = max(3, min(height, 2 * (tile_cap or height)) // 10)
    tile = height - 2 * pad if tile_cap is None else min(height - 2 * pad, tile_cap)
    x = float(pad)
    tile_w = 0
    if caption.number:
        tile_w = max(tile, int(_font(int(tile * 0.62), True).getlength(caption.number)) + pad)
        x += tile_w + 2 * pad
    right = float(width - pad)
    legend_left, legend_size = None, 0
    if legend and width >= 640:
        legend_size = max(8, int(min(height, 1.5 * tile + 2 * pad) * 0.19))
        font = _font(legend_size)
        legend_left = right - (max(font.getlength(t) for t in LEGEND) + 2.2 * legend_size)
        right = legend_left - 2 * pad
    room = max(right - x, 10.0)
    head = caption.line()
    size = max(8, int((tile + 2 * pad) * 0.26))
    while size > 6 and _font(size, True).getlength(head) > room:
        size -= 1
    if _font(size, True).getlength(head) > room and caption.view:
        head = Caption(caption.number, caption.frequency_hz, caption.damping_ratio).line()
    head_h = size * 1.3 if head else 0.0
    lsize = max(SMALLEST_LABEL, int(size * 0.85))
    while True:
        label = _wrap(caption.label, _font(lsize), room) if caption.label else []
        fits = head_h + len(label) * lsize * 1.18 <= height - 2 * pad
        if fits or lsize <= SMALLEST_LABEL:
            break
        lsize -= 1
    return BandLayout(pad, tile, tile_w, x, room, legend_left, legend_size, size, lsize,
                      tuple(label), fits, head)


def fit_band(size: Sequence[int], captions: Sequence[Caption], sheet: bool = False,
             legend: bool = False) -> int:
    """The band height (pixels) for pictures of ``size`` that holds every caption whole:
    :func:`band_height`, made taller (up to 40 % of the picture) for a long label."""
    base = band_height(size, sheet)
    height = base
    while height < 0.4 * size[1] and not all(
            band_layout(int(size[0]), height, c, legend, base).fits for c in captions):
        height += 2
    return height


def draw_band(width: int, height: int, caption: Caption, legend: bool = False,
              tile_cap: int | None = None) -> NDArray:
    """The caption band as an image (height x width x 3 uint8); ``tile_cap`` limits the
    number tile's size in a band made taller for a long label."""
    from PIL import Image, ImageDraw

    ink, text, dim = (tuple(int(v) for v in hex_rgb(PALETTE[k]))
                      for k in ("band", "band_text", "band_dim"))
    image = Image.new("RGB", (width, height), ink)
    draw = ImageDraw.Draw(image)
    lay = band_layout(width, height, caption, legend, tile_cap)
    pad, tile = lay.pad, lay.tile
    if caption.number:
        accent = tuple(int(v) for v in hex_rgb(PALETTE["accent"]))
        top = (height - tile) / 2
        draw.rectangle([pad, top, pad + lay.tile_w, top + tile], fill=accent)
        draw.text((pad + lay.tile_w / 2, top + tile / 2), caption.number,
                  font=_font(int(tile * 0.62), True), fill=text, anchor="mm")
    if lay.legend_left is not None:
        size = lay.legend_size
        span = min(height - 2 * pad, 1.5 * tile)
        y0 = (height - span) / 2
        for k, words in enumerate(LEGEND):
            y = y0 + (k + 0.5) * span / 3
            _legend_mark(draw, k, lay.legend_left + 0.6 * size, y, size)
            draw.text((lay.legend_left + 1.8 * size, y), words, font=_font(size), fill=dim,
                      anchor="lm")
    head = lay.head
    head_h = lay.head_size * 1.3 if head else 0.0
    need = head_h + len(lay.label) * lay.label_size * 1.18
    y = pad + max(0.0, (height - 2 * pad - need) / 2)
    if head:
        draw.text((lay.x, y), head, font=_font(lay.head_size, True), fill=text)
        y += head_h
    for line in lay.label:
        draw.text((lay.x, y), line, font=_font(lay.label_size), fill=dim)
        y += lay.label_size * 1.18
    return np.asarray(image)


def _legend_mark(draw: Any, k: int, x: float, y: float, size: int) -> None:
    r = 0.45 * size
    if k == 0:
        deep = tuple(int(v) for v in hex_rgb(PALETTE["skin"]))
        pale = tuple(int(v) for v in motion_colours(hex_rgb(PALETTE["skin"])[None, :],
                                                     np.zeros(1))[0])
        draw.rectangle([x - r, y - r, x, y + r], fill=pale)
        draw.rectangle([x, y - r, x + r, y + r], fill=deep)
    elif k == 1:
        draw.ellipse([x - r, y - 0.6 * r, x + r, y + 0.6 * r],
                     outline=tuple(int(v) for v in hex_rgb(PALETTE["band_text"])), width=2)
    else:
        draw.rectangle([x - r, y - r, x + r, y + r],
                       fill=tuple(int(v) for v in hex_rgb(PALETTE["shadow"])))


def legend_strip(width: int, height: int) -> NDArray:
    """The legend alone, its entries in one row on the band's ink (under a sheet)."""
    from PIL import Image, ImageDraw

    image = Image.new("RGB", (width, height), tuple(int(v) for v in hex_rgb(PALETTE["band"])))
    draw = ImageDraw.Draw(image)
    size = max(8, int(0.42 * height))
    font = _font(size)
    dim = tuple(int(v) for v in hex_rgb(PALETTE["band_dim"]))
    x = width - size
    for k in range(len(LEGEND) - 1, -1, -1):
        words = LEGEND[k]
        x -= font.getlength(words)
        if x < 2.2 * size:
            break                   # a narrow sheet keeps the entries that fit whole
        draw.text((x, height / 2), words, font=font, fill=dim, anchor="lm")
        x -= 1.2 * size
        _legend_mark(draw, k, x, height / 2, size)
        x -= 2.0 * size
    return np.asarray(image)
