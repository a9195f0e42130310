"""Measured road profiles: elevation along the road, one track or left and right.

The layout (see the format description, "Measured road profiles"): a CSV
with a header, a column ``distance`` (m) and either ``elevation`` (both
tracks) or ``left`` and ``right``, each optionally with its unit in brackets
(``left [mm]``); rows in increasing distance at one spacing (a profilometer's
step). Lines starting with ``#`` before the header are comments.

Errors name the file, line and column: a distance that goes back or
repeats, a gap (a step longer than 1.5 typical steps), an uneven spacing, a
value that is not a number, a missing column.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .errors import InputError, Where
from .records import column_unit, read_csv_table, regular_step

__all__ = ["RoadProfile", "read_profile", "MIN_SAMPLES"]

#: The fewest profile samples lumpgraph accepts.
MIN_SAMPLES = 16


@dataclass(frozen=True, eq=False)
class RoadProfile:
    """Road elevation (m) at equally spaced distances ``start_m + k step_m`` (m).

    ``left`` and ``right`` are the two tracks (the same array when the file
    gives one ``elevation``); ``source`` the file.
    """

    source: str
    start_m: float
    step_m: float
    left: NDArray[np.float64]
    right: NDArray[np.float64]

    @property
    def samples(self) -> int:
        return int(self.left.size)

    @property
    def length_m(self) -> float:
        """Length covered by the samples (m)."""
        return (self.samples - 1) * self.step_m

    @property
    def two_tracks(self) -> bool:
        return self.left is not self.right

    @property
    def distance_m(self) -> NDArray[np.float64]:
        return self.start_m + self.step_m * np.arange(self.samples)

    def track(self, side: int) -> NDArray[np.float64]:
        """The elevation a road point on ``side`` follows: +1 left, -1 right, 0 (a
        centre point) their mean."""
        if side > 0:
            return self.left
        if side < 0:
            return self.right
        return self.left if not self.two_tracks else 0.5 * (self.left + self.right)


def read_profile(path: str | os.PathLike[str]) -> RoadProfile:
    """Read a measured road profile CSV (see the module notes)."""
    path = os.fspath(path)
    if not os.path.isfile(path):
        raise InputError("no such file", Where(path))
    table = read_csv_table(path)
    index = {c.name.lower(): k for k, c in enumerate(table.columns)}
    if "distance" not in index:
        raise InputError('no "distance" column (a profile has distance and elevation, or '
                         "distance, left and right)", table.where(None, "header"))
    if "elevation" in index:
        wanted = ["elevation"]
        if "left" in index or "right" in index:
            raise InputError('give "elevation" or "left" and "right", not both',
                             table.where(None, "header"))
    elif "left" in index and "right" in index:
        wanted = ["left", "right"]
    else:
        raise InputError('no "elevation" column, nor "left" and "right"',
                         table.where(None, "header"))
    values = {}
    for key in ["distance", *wanted]:
        col = table.columns[index[key]]
        factor, _ = column_unit(col.unit or "m", "length", table.where(None, col.name))
        v = table.data[:, index[key]] * factor
        bad = np.flatnonzero(~np.isfinite(v))
        if bad.size:
            raise InputError(f"not a number ({bad.size} missing): a profile must be complete",
                             table.where(int(bad[0]), col.name))
        values[key] = v
    s = values["distance"]
    if s.size < MIN_SAMPLES:
        raise InputError(f"a profile needs at least {MIN_SAMPLES} samples, this one has "
                         f"{s.size}", table.where(None, "distance"))
    step = _step(table, s)
    left = np.ascontiguousarray(values[wanted[0]])
    right = left if len(wanted) == 1 else np.ascontiguousarray(values["right"])
    return RoadProfile(path, float(s[0]), step, left, right)


def _step(table, s: NDArray) -> float:
    regular_step(table, s, "distance", "m")
    return float((s[-1] - s[0]) / (s.size - 1))
