"""Readers of command-line option values: one line naming the option, never a traceback.

Every option value of every command (and of a plugin's own options) is read
through these functions, so that a bad value is an :class:`InputError` at
``Where(field="--points")``, printed as ``--points: reason`` with exit
status 2:

- :func:`quantity`: a number with a unit (``"80 km/h"``, ``22.2``), finite,
  of the right dimension and inside the plausible range of
  :data:`builder.quantities.MAGNITUDES`, optionally within ``low..high``;
- :func:`whole`: a whole number within ``low..high`` (``1e20`` or a
  5,000-digit number is refused before it is converted);
- :func:`fraction`: a plain finite number within bounds;
- :func:`choice`: one of a few words;
- :func:`pixels`: an image size ``WxH`` within a ceiling of side and area;
- output files and folders: :func:`builder.io.output_path` and
  :func:`builder.io.output_folder`.

:func:`argtype` turns a reader into an argparse ``type=`` callable; argparse
lets an :class:`InputError` through unchanged, and the command line prints it.

The ceilings of size-like options are in :data:`CEILINGS`: each is derived
from memory and time on a machine of a few GB (the reasoning is its text,
printed with the refusal and listed by docs/format.md, section "Limits of the
command options").
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Sequence
from typing import Any, NamedTuple

from .errors import InputError, Where, shown

__all__ = ["quantity", "whole", "fraction", "choice", "pixels", "argtype", "output_file", "Ceiling",
           "CEILINGS", "ceiling", "refuse_above"]


class Ceiling(NamedTuple):
    """The largest accepted value of a size-like option and why (memory, time)."""

    value: int
    why: str


#: option -> its ceiling (see the module text); docs/format.md lists them.
CEILINGS: dict[str, Ceiling] = {
    "ride --points": Ceiling(200_000, "the response PSDs hold points x sensors x inputs complex "
                             "numbers; 200,000 points of a 20-sensor, 4-input model need about "
                             "0.3 GB and the grid is refined at every mode anyway"),
    "frf --points": Ceiling(1_000_000, "FRFs of points x sensors x inputs complex numbers: "
                            "1,000,000 points of 20 sensors and 4 inputs are 1.3 GB"),
    "sweep variants": Ceiling(10_000_000, "the design and result tables hold variants x "
                              "columns floats (10,000,000 variants of 10 columns: 0.8 GB) and "
                              "a batched modal sweep solves about 10,000 variants a second: "
                              "some 20 minutes"),
    "sweep --lhs": Ceiling(10_000_000, "as the sweep variants: the hypercube is one variant "
                           "per row"),
    "sweep --samples": Ceiling(10_000_000, "as the sweep variants: one variant per sample"),
    "render --frames": Ceiling(3_600, "every frame is drawn (about 0.05 s) and held in memory "
                               "until the cycle is encoded: 3,600 frames are 3 minutes of "
                               "drawing, and a smooth cycle needs 20 to 100"),
    "render --sheet": Ceiling(64, "a review sheet has 4 columns of 480x360 panels: 64 modes "
                              "make 16 rows, 5,760 pixels tall, within the 8,192-pixel side "
                              "of off-screen windows"),
    "render --size": Ceiling(8_192, "off-screen render windows of most OpenGL drivers stop at "
                             "8,192 pixels a side"),
    "render --size area": Ceiling(16_777_216, "one RGBA image of 16.8 million pixels (4096 x "
                                  "4096) is 67 MB in the renderer and again in the PNG encoder"),
    "render GIF area": Ceiling(1_228_800, "a GIF holds every frame quantised in memory (1280 x "
                               "960 pixels, 36 frames: 130 MB); larger cycles are MP4 or PNG "
                               "frames"),
    "render GIF frames x area": Ceiling(200_000_000, "frames x pixels of an animation: 200 "
                                        "million pixels of RGB frames are 0.6 GB held before "
                                        "encoding"),
}

_WHOLE = re.compile(r"[+-]?\d{1,4000}", re.ASCII)


def ceiling(key: str) -> Ceiling:
    """The ceiling of an option (a key of :data:`CEILINGS`)."""
    return CEILINGS[key]


def refuse_above(value: int, key: str, option: str, what: str = "") -> None:
    """An InputError at ``option`` when ``value`` exceeds the ceiling ``key``, with its why."""
    top = CEILINGS[key]
    if value > top.value:
        noun = f"{what} " if what else ""
        raise InputError(f"{noun}{_int_text(value)} is above the ceiling of {top.value:,} "
                         f"({top.why})", Where(field=option))


def quantity(text: object, option: str, dimension: str, *, sign: str = "positive",
             low: float | None = None, high: float | None = None, unit: str = "") -> float:
    """An option's quantity in SI (``--speed "80 km/h"`` -> 22.2), see :func:`to_si`.

    ``sign`` is ``"positive"`` (default), ``"nonnegative"`` or ``"any"``;
    ``low`` and ``high`` (SI) narrow the range, shown in ``unit`` words when given.
    """
    from .quantities import to_si

    where = Where(field=option)
    try:
        value = to_si(text, dimension, where, sign=sign)
    except InputError as exc:
        raise InputError(exc.reason, where) from None
    if (low is not None and value < low) or (high is not None and value > high):
        span = f"{_g(low)} to {_g(high)}" if low is not None and high is not None else (
            f"at least {_g(low)}" if low is not None else f"at most {_g(high)}")
        raise InputError(f"must be {span}{' ' + unit if unit else ' (SI)'}, got {shown(text)}",
                         where)
    return value


def _g(v: float | None) -> str:
    return "" if v is None else f"{v:g}"


def whole(text: object, option: str, low: int = 1, high: int | None = None,
          ceiling_key: str | None = None) -> int:
    """A whole number ``low <= N <= high``; with ``ceiling_key`` the high end is that
    ceiling of :data:`CEILINGS` and a refusal says why."""
    where = Where(field=option)
    if isinstance(text, bool):
        raise InputError(f"must be a whole number, got {shown(text)}", where)
    if isinstance(text, int):
        value = text
    else:
        raw = str(text).strip().replace("_", "")
        if not _WHOLE.fullmatch(raw):
            hint = ""
            if re.fullmatch(r"[+-]?(\d+\.?\d*|\.\d+)[eE][+-]?\d+", raw):
                hint = " (write it out in digits)"
            raise InputError(f"must be a whole number, got {shown(str(text))}{hint}", where)
        value = int(raw)
    if ceiling_key is not None:
        if value < low:
            raise InputError(f"must be at least {low:,}, got {_int_text(value)}", where)
        refuse_above(value, ceiling_key, option)
        return value
    if value < low or (high is not None and value > high):
        span = f"{low:,} to {high:,}" if high is not None else f"at least {low:,}"
        raise InputError(f"must be {span}, got {_int_text(value)}", where)
    return value


def _int_text(value: int) -> str:
    return f"{value:,}" if abs(value) < 10**30 else shown(value).replace(
        "a number", "a whole number") if abs(value) >= 10**240 else f"{value:.3e}"


def fraction(text: object, option: str, low: float = -math.inf, high: float = math.inf,
             *, low_open: bool = False) -> float:
    """A plain finite number ``low <= x <= high`` (``low < x`` with ``low_open``)."""
    where = Where(field=option)
    try:
        value = float(str(text).strip()) if not isinstance(text, int | float) else float(text)
    except (ValueError, OverflowError):
        raise InputError(f"must be a number, got {shown(str(text))}", where) from None
    if not math.isfinite(value):
        raise InputError(f"must be a finite number, got {shown(str(text))}", where)
    if value < low or value > high or (low_open and value == low):
        lo = f"above {low:g}" if low_open else (f"at least {low:g}" if low > -math.inf else "")
        hi = f"at most {high:g}" if high < math.inf else ""
        raise InputError(f"must be {' and '.join(p for p in (lo, hi) if p)}, got "
                         f"{shown(str(text))}", where)
    return value


def choice(text: object, option: str, choices: Sequence[str]) -> str:
    """One of ``choices`` (compared without case and surrounding spaces)."""
    word = str(text).strip().lower()
    for c in choices:
        if word == c.lower():
            return c
    raise InputError(f"must be {_either(choices)}, got {shown(str(text))}", Where(field=option))


def _either(words: Sequence[str]) -> str:
    words = list(words)
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " or " + words[-1]


def pixels(text: object, option: str = "--size", *, side: str = "render --size",
           area: str = "render --size area", smallest: int = 16) -> tuple[int, int]:
    """An image size ``WxH`` in pixels, each side from ``smallest`` to the ``side``
    ceiling and the area at most the ``area`` ceiling (keys of :data:`CEILINGS`)."""
    where = Where(field=option)
    parts = str(text).strip().lower().split("x")
    if len(parts) != 2 or not all(_WHOLE.fullmatch(p.strip()) for p in parts):
        raise InputError(f"expected WIDTHxHEIGHT in pixels (e.g. 1024x768), got "
                         f"{shown(str(text))}", where)
    if max(len(p.strip()) for p in parts) > 9:
        raise InputError(f"each side must be {smallest} to {CEILINGS[side].value:,} pixels, got "
                         f"{shown(str(text))}", where)
    w, h = (int(p) for p in parts)
    top = CEILINGS[side]
    if not (smallest <= w <= top.value and smallest <= h <= top.value):
        raise InputError(f"each side must be {smallest} to {top.value:,} pixels ({top.why}), "
                         f"got {w}x{h}", where)
    refuse_above(w * h, area, option, f"{w}x{h} =")
    return w, h


def output_file(text: str, option: str, suffixes: Sequence[str]) -> str:
    """An output file name checked by :func:`builder.io.output_path` (suffix, folder,
    length, write permission), as a reader for :func:`argtype`."""
    from .io import output_path

    return output_path(text, suffixes, option)


def argtype(reader: Callable[..., Any], option: str, *args: Any, **kwargs: Any
            ) -> Callable[[str], Any]:
    """An argparse ``type=`` callable reading with ``reader(text, option, ...)``."""
    def read(text: str) -> Any:
        return reader(text, option, *args, **kwargs)

    read.__name__ = getattr(reader, "__name__", "value")
    return read
