"""Recorded vibration: acceleration time histories read from CSV or WAV files.

A record is one or more channels sampled at one rate. The layout (see the
format description, "Recorded vibration"):

- **CSV** with a header line: a first column ``time`` (s) or no time column
  and a rate given by the caller; every other column a channel, its name
  optionally followed by its unit in brackets (``seat_z [m/s^2]``,
  ``floor_x [g]``; default m/s^2). Lines starting with ``#`` before the
  header are comments (a file may say what it is there). The time column
  may carry a unit too (``time [ms]``).
- **WAV** (as many data loggers write it, read with :func:`scipy.io.wavfile.read`):
  the rate comes from the file; the file holds neither names nor units, so
  the caller gives the channel names and the acceleration at digital full
  scale (the largest integer of the sample type, or 1.0 for a float file).

Values are turned to SI on reading: m/s^2 for translations, rad/s^2 for
rotations. ``g`` in a header is standard gravity (9.80665 m/s^2, not the
gram) and ``mg`` a thousandth of it, as accelerometer data sheets write them.

Problems are :class:`~builder.errors.InputError` one-liners naming the
file, line and column: a missing or non-number value, a time column that
goes back, repeats or jumps (a gap), a time column that disagrees with a
given rate. Clipped channels (a flat top at the channel's extreme, or
samples at a WAV file's digital full scale) are not errors but are listed in
``Record.clipped`` with the first line concerned, since their peak, crest
factor and VDV are then lower bounds.
"""

from __future__ import annotations

import math
import os
import re
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from .errors import InputError, Where
from .quantities import parse_unit

__all__ = ["GRAVITY", "Column", "CsvTable", "Record", "Clipping", "read_csv_table",
           "read_record", "column_unit", "acceleration_value", "regular_step", "MAX_GAP_STEPS"]

#: Standard gravity (m/s^2), the unit ``g`` of accelerometer records.
GRAVITY = 9.80665
#: A time step longer than this many typical steps is a gap in the record.
MAX_GAP_STEPS = 1.5
#: Time steps that vary by more than this fraction of the step are refused
#: (a record must be sampled at one rate); smaller jitter (timestamps printed
#: with few digits) is accepted and the rate taken from the first and last time.
MAX_JITTER = 0.25
_CLIP_RUN = 3            # samples at the extreme in a row that make a flat top
_HEADER = re.compile(r"^\s*(?P<name>[^\[\]()]*?)\s*(?:[\[(]\s*(?P<unit>[^\])]*?)\s*[\])])?\s*$")
_ACCEL = (0, 1, -2)      # (mass, length, time) exponents of an acceleration
_ROT_ACCEL = (0, 0, -2)  # rad/s^2: the radian is dimensionless


@dataclass(frozen=True)
class Column:
    """One CSV column: its name, the unit as written ("" when none), file column (1-based)."""

    name: str
    unit: str
    index: int


@dataclass(frozen=True, eq=False)
class CsvTable:
    """A numeric CSV table: header columns, data (rows, columns) and where things are.

    ``header_line`` is the file line (1-based) of the header; :meth:`line_of`
    finds the file line of a data row (blank and comment lines among the rows
    counted), scanning the file only when asked.
    """

    path: str
    columns: tuple[Column, ...]
    data: NDArray[np.float64]
    header_line: int
    _lines: dict[str, NDArray[np.int64] | None] = field(default_factory=dict, repr=False)

    @property
    def first_line(self) -> int:
        return self.line_of(0)

    def line_of(self, row: int) -> int:
        """File line (1-based) of data row ``row`` (0-based)."""
        if "lines" not in self._lines:
            self._lines["lines"] = _data_lines(self.path, self.header_line, self.data.shape[0])
        lines = self._lines["lines"]
        if lines is None or row >= lines.size:
            return self.header_line + 1 + int(row)
        return int(lines[row])

    def where(self, row: int | None, field: str) -> Where:
        return Where(self.path, self.header_line if row is None else self.line_of(row), field)


@dataclass(frozen=True)
class Clipping:
    """A channel that looks clipped: the level (SI), samples at it, where first
    ("line 120" of a CSV file, "sample 4410" of a WAV file)."""

    level: float
    samples: int
    first: str


@dataclass(frozen=True, eq=False)
class Record:
    """Channels sampled at ``rate_hz``: ``data`` (samples, channels) in SI units, stored
    channel by channel (Fortran order), so a channel is one contiguous block.

    ``units`` are "m/s^2" or "rad/s^2"; ``start_s`` the time of the first
    sample; ``clipped`` the channels that look clipped; ``warnings`` what the
    reader noticed and accepted (uneven time stamps, a rate taken from the file).
    """

    source: str
    rate_hz: float
    names: tuple[str, ...]
    units: tuple[str, ...]
    data: NDArray[np.float64]
    start_s: float = 0.0
    clipped: dict[str, Clipping] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()

    @property
    def samples(self) -> int:
        return int(self.data.shape[0])

    @property
    def duration_s(self) -> float:
        """Length of the record (s): samples over the rate."""
        return self.samples / self.rate_hz

    def channel(self, name: str) -> NDArray[np.float64]:
        """One channel's samples (SI)."""
        if name not in self.names:
            raise InputError(f'unknown channel "{name}" (channels: {", ".join(self.names)})',
                             Where(self.source, 0, "channel"))
        return self.data[:, self.names.index(name)]


# ------------------------------------------------------------------ CSV --

def _split_header(text: str) -> Column:
    m = _HEADER.match(text)
    if m is None or not m.group("name"):
        return Column(text.strip(), "", 0)
    return Column(m.group("name").strip(), (m.group("unit") or "").strip(), 0)


def _header(path: str, fh) -> tuple[list[Column], int]:
    number = 0
    for raw in fh:
        number += 1
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        cells = [c for c in line.split(",")]
        columns = []
        for i, cell in enumerate(cells, start=1):
            col = _split_header(cell)
            if not col.name:
                raise InputError(f"column {i} has no name", Where(path, number, "header"))
            columns.append(Column(col.name, col.unit, i))
        names = [c.name for c in columns]
        for name in names:
            if names.count(name) > 1:
                raise InputError(f'two columns are called "{name}"', Where(path, number, "header"))
        try:
            float(cells[0])
        except ValueError:
            return columns, number
        raise InputError("the first line is numbers, not a header of column names "
                         "(e.g. time,seat_z [m/s^2])", Where(path, number, "header"))
    raise InputError("the file holds no header and no data", Where(path, 0, "header"))


def _locate_problem(path: str, columns: Sequence[Column], header_line: int) -> InputError:
    """The first bad value of a CSV file, found by a slow second pass."""
    with open(path, encoding="utf-8", errors="replace") as fh:
        for number, raw in enumerate(fh, start=1):
            if number <= header_line:
                continue
            line = raw.strip()
            if not line or line.startswith("#"):
                continue
            cells = line.split(",")
            if len(cells) != len(columns):
                return InputError(f"{len(cells)} values where the header has {len(columns)} "
                                  "columns", Where(path, number, "row"))
            for col, cell in zip(columns, cells, strict=True):
                text = cell.strip()
                try:
                    float(text)
                except ValueError:
                    what = "an empty value" if not text else f'"{text}" is not a number'
                    return InputError(what, Where(path, number, col.name))
    return InputError("the data cannot be read as numbers", Where(path, header_line, "data"))


def read_csv_table(path: str | os.PathLike[str]) -> CsvTable:
    """A CSV file with a header line and numbers below it; errors name file, line, column."""
    path = os.fspath(path)
    try:
        fh = open(path, encoding="utf-8", errors="strict")  # noqa: SIM115 - closed below
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", Where(path)) from None
    with fh:
        try:
            columns, header_line = _header(path, fh)
            try:
                data = np.loadtxt(fh, delimiter=",", comments="#", ndmin=2, dtype=float)
            except ValueError:
                raise _locate_problem(path, columns, header_line) from None
        except UnicodeDecodeError:
            raise InputError("not a text file (is it a WAV file with a .csv name?)",
                             Where(path)) from None
    if data.size == 0:
        raise InputError("the file holds a header but no data", Where(path, header_line, "data"))
    if data.shape[1] != len(columns):
        raise _locate_problem(path, columns, header_line)
    return CsvTable(path, tuple(columns), data, header_line)


def _data_lines(path: str, header_line: int, rows: int) -> NDArray[np.int64] | None:
    """File lines (1-based) of the data rows, skipping blank and comment lines."""
    out = []
    with open(path, "rb") as fh:
        for number, raw in enumerate(fh, start=1):
            if number > header_line and raw.strip() and not raw.lstrip().startswith(b"#"):
                out.append(number)
                if len(out) >= rows:
                    break
    return np.array(out, dtype=np.int64) if out else None


def column_unit(text: str, kind: str, where: Where) -> tuple[float, str]:
    """(factor to SI, SI unit) of a column's unit text; ``kind`` "acceleration",
    "length" or "time". Acceleration accepts g and mg (standard gravity) and rad/s^2."""
    unit = text.strip()
    if kind == "acceleration":
        if unit in ("", "m/s^2", "m/s2"):
            return 1.0, "m/s^2"
        if unit in ("g", "gn", "G"):
            return GRAVITY, "m/s^2"
        if unit == "mg":
            return 1e-3 * GRAVITY, "m/s^2"
    wanted = {"acceleration": (_ACCEL, _ROT_ACCEL), "length": ((0, 1, 0),),
              "time": ((0, 0, 1),)}[kind]
    try:
        factor, dim = parse_unit(unit.replace("s2", "s^2"))
    except ValueError:
        raise InputError(f'unknown unit "{unit}"', where) from None
    if tuple(dim[:3]) not in wanted or any(dim[3:]):
        noun = {"acceleration": "an acceleration (m/s^2, g, mg or rad/s^2)",
                "length": "a length (m, mm)", "time": "a time (s, ms)"}[kind]
        raise InputError(f'unit "{unit}" is not {noun}', where)
    if kind == "acceleration":
        return factor, "m/s^2" if tuple(dim[:3]) == _ACCEL else "rad/s^2"
    return factor, {"length": "m", "time": "s"}[kind]


def _is_time(column: Column) -> bool:
    return column.name.lower() in ("time", "time_s", "t")


def regular_step(table: CsvTable, x: NDArray, field: str, unit: str) -> tuple[float, float]:
    """(median step, largest relative deviation from it) of an increasing, evenly spaced
    column ``x``; errors name the line where it goes back, repeats, jumps (a gap) or
    varies by more than :data:`MAX_JITTER` of the step."""
    if x.size < 2:
        raise InputError("at least two samples are needed", table.where(None, field))
    dx = np.diff(x)
    bad = np.flatnonzero(~(dx > 0))
    if bad.size:
        i = int(bad[0])
        what = "repeats" if dx[i] == 0 else "goes back"
        raise InputError(f"{field} {what} ({x[i]:.9g} {unit}, then {x[i + 1]:.9g} {unit}): "
                         f"rows must be in increasing {field}", table.where(i + 1, field))
    step = float(np.median(dx))
    gaps = np.flatnonzero(dx > MAX_GAP_STEPS * step)
    if gaps.size:
        i = int(gaps[0])
        raise InputError(
            f"a gap of {dx[i]:.6g} {unit} after {x[i]:.9g} {unit}, where the step is "
            f"{step:.6g} {unit} ({gaps.size} gap{'s' if gaps.size > 1 else ''} in all): the "
            "data must be continuous; take its parts separately", table.where(i + 1, field))
    jitter = float(np.max(np.abs(dx - step)) / step)
    if jitter > MAX_JITTER:
        i = int(np.argmax(np.abs(dx - step)))
        raise InputError(f"the step varies by {100 * jitter:.0f} % ({dx[i]:.6g} {unit} against "
                         f"{step:.6g} {unit}): the data must be sampled at one spacing",
                         table.where(i + 1, field))
    return step, jitter


def _rate_from_time(table: CsvTable, t: NDArray, warnings: list[str]) -> float:
    _, jitter = regular_step(table, t, "time", "s")
    rate = (t.size - 1) / float(t[-1] - t[0])
    if jitter > 1e-3:
        warnings.append(f"{os.path.basename(table.path)}: time steps vary by up to "
                        f"{100 * jitter:.2g} % of the step; taken as equally spaced at "
                        f"{rate:.6g} Hz (from the first and last time)")
    return rate


def _check_rate(rate_hz: float | None, where: Where) -> float | None:
    if rate_hz is None:
        return None
    rate = float(rate_hz)
    if not math.isfinite(rate) or rate <= 0:
        raise InputError(f"the rate must be a positive frequency, not {rate_hz!r} Hz", where)
    return rate


def _csv_record(path: str, rate_hz: float | None, rate_where: Where) -> Record:
    table = read_csv_table(path)
    columns = list(table.columns)
    data = table.data
    warnings: list[str] = []
    rate = _check_rate(rate_hz, rate_where)
    start = 0.0
    if _is_time(columns[0]):
        factor, _ = column_unit(columns[0].unit or "s", "time", table.where(None, columns[0].name))
        t = data[:, 0] * factor
        nan = np.flatnonzero(~np.isfinite(t))
        if nan.size:
            raise InputError("not a number", table.where(int(nan[0]), columns[0].name))
        from_time = _rate_from_time(table, t, warnings)
        if rate is not None and abs(from_time / rate - 1.0) > 1e-3:
            raise InputError(f"the time column gives {from_time:.6g} Hz, not the {rate:g} Hz "
                             "given: leave the rate out, or correct the time column",
                             rate_where)
        if from_time < 2.0 and columns[0].unit == "":
            warnings.append(f"{os.path.basename(path)}: the time column gives only "
                            f"{from_time:.3g} Hz; if it is in milliseconds, write "
                            "\"time [ms]\" in the header")
        rate, start = from_time, float(t[0])
        columns, data = columns[1:], data[:, 1:]
    elif rate is None:
        raise InputError(f'no time column (the first column is "{columns[0].name}"): name the '
                         'first column "time", or give the sampling rate',
                         table.where(None, columns[0].name))
    if not columns:
        raise InputError("no channel columns besides time", table.where(None, "header"))
    scales, units, kept, skipped = [], [], [], []
    for k, col in enumerate(columns):
        try:
            factor, unit = column_unit(col.unit, "acceleration", table.where(None, col.name))
        except InputError as exc:
            if "is not" not in exc.reason:
                raise
            skipped.append((col, exc))
            continue
        scales.append(factor)
        units.append(unit)
        kept.append(k)
    if not kept:
        raise skipped[0][1]
    if skipped:
        warnings.append(f"{os.path.basename(path)}: left out the columns that are not "
                        "accelerations: " + ", ".join(f"{c.name} [{c.unit}]" for c, _ in skipped))
        columns, data = [columns[k] for k in kept], data[:, kept]
    values = data * np.asarray(scales)[None, :] if any(s != 1.0 for s in scales) else data
    bad = ~np.isfinite(values)
    if bad.any():
        row, k = np.argwhere(bad)[0]
        count = int(bad[:, k].sum())
        raise InputError(f"not a number ({count} missing value{'s' if count > 1 else ''} in "
                         "this channel): a record must be complete; fill or cut the dropout",
                         table.where(int(row), columns[k].name))
    clipped = {}
    for k, col in enumerate(columns):
        clip = _flat_top(values[:, k])
        if clip is not None:
            clipped[col.name] = Clipping(clip[0], clip[1], f"line {table.line_of(clip[2])}")
    return Record(path, float(rate), tuple(c.name for c in columns), tuple(units),
                  np.asfortranarray(values), start, clipped, tuple(warnings))


def _flat_top(x: NDArray) -> tuple[float, int, int] | None:
    """(level, samples at it, first row) when the channel's extreme is held for
    :data:`_CLIP_RUN` or more samples in a row, else None."""
    for level in (float(x.max()), float(x.min())):
        if level == 0.0:
            continue
        at = x == level
        count = int(at.sum())
        if count < _CLIP_RUN:
            continue
        run = np.convolve(at.astype(np.int8), np.ones(_CLIP_RUN, dtype=np.int8), "valid")
        hits = np.flatnonzero(run == _CLIP_RUN)
        if hits.size:
            return level, count, int(np.flatnonzero(at)[0])
    return None


# ------------------------------------------------------------------ WAV --

def _wav_record(path: str, rate_hz: float | None, rate_where: Where,
                names: Sequence[str] | None, full_scale: float | Sequence[float] | None,
                scale_where: Where) -> Record:
    from scipy.io import wavfile

    try:
        file_rate, raw = wavfile.read(path, mmap=False)
    except (ValueError, OSError, EOFError) as exc:
        raise InputError(f"cannot read as a WAV file: {exc}", Where(path)) from None
    raw = raw.reshape(raw.shape[0], -1)
    count = raw.shape[1]
    if names is None:
        names = tuple(f"ch{k + 1}" for k in range(count))
    names = tuple(names)
    if len(names) != count:
        raise InputError(f"the file has {count} channel{'s' if count > 1 else ''}, "
                         f"{len(names)} name{'s' if len(names) != 1 else ''} given",
                         Where(path, 0, "channels"))
    if full_scale is None:
        raise InputError("a WAV file holds no units: give the acceleration at digital full "
                         'scale (e.g. "20 g"; 1.0 in a float file, the largest integer in '
                         "an integer file)", scale_where)
    scale = np.broadcast_to(np.asarray(full_scale, dtype=float).reshape(-1), (count,)) \
        if np.size(full_scale) in (1, count) else None
    if scale is None:
        raise InputError(f"give one full-scale value or one per channel ({count})", scale_where)
    if not np.all(np.isfinite(scale)) or np.any(scale <= 0):
        raise InputError("full scale must be positive", scale_where)
    warnings: list[str] = []
    rate = float(file_rate)
    given = _check_rate(rate_hz, rate_where)
    if given is not None and abs(given / rate - 1.0) > 1e-6:
        warnings.append(f"{os.path.basename(path)}: the file says {rate:g} Hz; the "
                        f"{given:g} Hz given is used")
        rate = given
    values = np.empty(raw.shape, dtype=np.float64, order="F")     # channel by channel
    if np.issubdtype(raw.dtype, np.integer):
        info = np.iinfo(raw.dtype)
        if raw.dtype == np.uint8:                      # 8-bit WAV is offset binary
            offset, rail, low, high = 128.0, 127.0, 0, 255
        else:
            offset, rail, low, high = 0.0, float(info.max), int(info.min), int(info.max)
        for k in range(count):
            column = values[:, k]
            column[:] = raw[:, k]
            column -= offset
            column *= scale[k] / rail
        at_rail = (raw <= low) | (raw >= high)
    else:
        values[:] = raw
        at_rail = np.abs(values) >= 1.0
        values *= scale[None, :]
    bad = ~np.isfinite(values)
    if bad.any():
        row, k = np.argwhere(bad)[0]
        raise InputError(f"sample {int(row)} is not a number", Where(path, 0, names[k]))
    clipped = {}
    for k, name in enumerate(names):
        hits = np.flatnonzero(at_rail[:, k])
        if hits.size:
            clipped[name] = Clipping(float(scale[k]), int(hits.size), f"sample {int(hits[0])}")
    units = tuple("m/s^2" for _ in names)
    return Record(path, rate, names, units, values, 0.0, clipped, tuple(warnings))


def read_record(path: str | os.PathLike[str], rate_hz: float | None = None, *,
                names: Sequence[str] | None = None,
                full_scale: float | Sequence[float] | None = None,
                rate_where: Where | None = None, scale_where: Where | None = None) -> Record:
    """Read a CSV or WAV record (by its suffix). ``rate_hz`` for a CSV file without
    a time column (or to override a WAV header); ``names`` and ``full_scale``
    (m/s^2 at digital full scale, one value or one per channel) for WAV.
    ``rate_where`` and ``scale_where`` say where those values came from, for errors."""
    path = os.fspath(path)
    rate_where = rate_where or Where(path, 0, "rate")
    if not os.path.isfile(path):
        raise InputError("no such file", Where(path))
    if path.lower().endswith(".wav"):
        return _wav_record(path, rate_hz, rate_where, names, full_scale,
                           scale_where or Where(path, 0, "full_scale"))
    if names is not None or full_scale is not None:
        raise InputError("channel names and full scale are for WAV files; a CSV header "
                         "names its channels and units", Where(path, 0, "channels"))
    return _csv_record(path, rate_hz, rate_where)


def acceleration_value(text: str, where: Where) -> float:
    """An acceleration written with its unit ("20 g", "50 m/s^2", "500 mg") in m/s^2."""
    m = re.match(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$", str(text))
    if m is None:
        raise InputError(f'must be an acceleration such as "20 g" or "50 m/s^2", got "{text}"',
                         where)
    factor, _ = column_unit(m.group(2), "acceleration", where)
    return float(m.group(1)) * factor
