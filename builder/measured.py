"""Measured modes: the modal test a model is held against, read and written.

A modal test gives, per mode, its natural frequency (Hz), damping ratio
and shape: a complex (or real) value at each *channel*, a measurement point
(name, position in the vehicle's ISO 8855 axes, the body it sits on) and a
direction there (x, y, z or a unit vector). Two neutral layouts, both in
the format description's section "Measured modes":

- CSV, one row per point, direction and mode::

      point,body,x,y,z,direction,mode,frequency_hz,damping_ratio,real,imag
      p01,body,-0.40,0.60,0.50,z,1,1.21,0.24,0.83,0.01

  ``x y z`` in m (a header may carry another length unit in brackets,
  ``x [mm]``); ``direction`` x, y, z or three numbers separated by spaces;
  ``damping_ratio`` and ``imag`` may be left empty. Lines starting with
  ``#`` before the header say what the file is.
- JSON: ``{"points": {"p01": {"body": "body", "at": [x, y, z]}},
  "modes": [{"frequency_hz": f, "damping_ratio": z,
  "shape": {"p01.z": [re, im]}}]}`` (``at`` may carry units as the
  assembly file's vectors do; a shape value may be one real number).

A third reader, :func:`builder.measured_uff.read_uff_map`, takes the
universal-file datasets of modal-test programs (optional extra ``[uff]``);
:func:`builder.measured_files.read_measured` picks the reader by suffix.

Every reader refuses malformed data with the one-line ``FILE:LINE: field:
reason`` error: missing or unknown columns, a point whose position or
body differs between rows, a value that is not a finite number, a unit of
the wrong kind, a mode whose frequency or damping differs between its rows,
a channel missing from some modes, a repeated row, a zero shape. Whether a
point's body exists is checked against the model (:func:`resolve_channels`).
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import InputError, Where
from .quantities import DIMENSIONS, parse_unit

__all__ = ["MeasuredPoint", "Channel", "MeasuredModes", "ModesBuilder", "read_measured_csv",
           "read_measured_json", "measured_csv_text", "measured_json_text", "write_measured",
           "parse_direction", "resolve_channels", "MAX_BYTES", "COLUMNS"]

#: Largest measured-modes file read (bytes).
MAX_BYTES = 50 * 1024 * 1024

#: The CSV layout's columns, in order.
COLUMNS = ("point", "body", "x", "y", "z", "direction", "mode", "frequency_hz",
           "damping_ratio", "real", "imag")
_REQUIRED = ("point", "body", "x", "y", "z", "direction", "mode", "frequency_hz", "real")
_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_-]*$")
_AXES = {"x": (1.0, 0.0, 0.0), "y": (0.0, 1.0, 0.0), "z": (0.0, 0.0, 1.0)}

#: Frequencies (and damping ratios) of one mode on different rows agree when
#: within this relative difference (round-off of the writing program).
AGREE = 1e-6


@dataclass(frozen=True)
class MeasuredPoint:
    """A measurement point: ``at`` (3,) m in the vehicle's axes, on ``body``."""

    name: str
    body: str
    at: np.ndarray
    where: Where = field(default_factory=Where)


@dataclass(frozen=True)
class Channel:
    """One measured direction at a point: ``direction`` (3,) a unit vector;
    ``axis`` its name as written (``x``, ``y``, ``z`` or ``"0 0.7071 0.7071"``)."""

    point: str
    direction: np.ndarray
    axis: str
    where: Where = field(default_factory=Where)

    @property
    def label(self) -> str:
        """``POINT.AXIS``, the channel's key in the JSON layout."""
        return f"{self.point}.{self.axis}"


@dataclass(frozen=True, eq=False)
class MeasuredModes:
    """A set of measured modes.

    ``shapes`` (channels, modes) complex, any consistent unit per mode;
    ``frequencies_hz`` (modes,); ``damping_ratios`` (modes,) NaN where the
    test gave none; ``numbers`` the test's own mode numbers (from 1 in the
    file's order unless it numbered them); ``mode_where`` the place of each
    mode in the file, for messages.
    """

    points: dict[str, MeasuredPoint]
    channels: tuple[Channel, ...]
    frequencies_hz: np.ndarray
    damping_ratios: np.ndarray
    shapes: np.ndarray
    numbers: tuple[int, ...]
    source: str = ""
    title: str = ""
    mode_where: tuple[Where, ...] = ()

    def __len__(self) -> int:
        return len(self.numbers)

    @property
    def labels(self) -> tuple[str, ...]:
        return tuple(c.label for c in self.channels)

    def to_dict(self) -> dict[str, Any]:
        """The JSON layout of the format description."""
        return {"title": self.title,
                "points": {p.name: {"body": p.body, "at": [float(v) for v in p.at]}
                           for p in self.points.values()},
                "modes": [{"number": int(num), "frequency_hz": float(self.frequencies_hz[j]),
                           "damping_ratio": (None if math.isnan(self.damping_ratios[j])
                                             else float(self.damping_ratios[j])),
                           "shape": {c.label: [float(self.shapes[i, j].real),
                                               float(self.shapes[i, j].imag)]
                                     for i, c in enumerate(self.channels)}}
                          for j, num in enumerate(self.numbers)]}


# ------------------------------------------------------------------ reading --

def _read_text(path: str) -> str:
    try:
        size = os.path.getsize(path)
        if size > MAX_BYTES:
            raise InputError(f"file is {size / 1e6:.1f} MB; the limit is "
                             f"{MAX_BYTES // 2**20} MB", Where(path))
        with open(path, "rb") as fh:
            data = fh.read(MAX_BYTES + 1)
    except OSError as exc:
        raise InputError(f"cannot read file ({exc.strerror or exc})", Where(path)) from None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(f"not UTF-8 text (byte {exc.start})", Where(path)) from None
    if not text.strip():
        raise InputError("the file is empty", Where(path, 1))
    return text


def _finite(text: str, where: Where, what: str = "a number") -> float:
    try:
        v = float(text)
    except (TypeError, ValueError):
        raise InputError(f'must be {what}, got "{text}"', where) from None
    if not math.isfinite(v):
        raise InputError(f'must be a finite number, got "{text}"', where)
    return v


def parse_direction(text: str, where: Where) -> tuple[np.ndarray, str]:
    """x, y, z or three numbers separated by spaces: (unit vector (3,), name)."""
    t = " ".join(str(text).split())
    if t in _AXES:
        return np.array(_AXES[t]), t
    parts = t.replace(",", " ").split()
    if len(parts) != 3:
        raise InputError(f'must be x, y, z or three numbers separated by spaces, got "{text}"',
                         where)
    v = np.array([_finite(p, where) for p in parts])
    norm = float(np.linalg.norm(v))
    if norm == 0.0:
        raise InputError("the direction vector is zero", where)
    return v / norm, " ".join(parts)


def _header(row: list[str], where: Where) -> dict[str, tuple[int, float]]:
    """Column name -> (position, factor to SI); x, y, z may carry ``[UNIT]``."""
    import difflib
    out: dict[str, tuple[int, float]] = {}
    for pos, raw in enumerate(row):
        cell = raw.strip()
        m = re.fullmatch(r"([A-Za-z_]+)\s*(?:\[(.*)\])?", cell)
        name, unit = (m.group(1), m.group(2)) if m else (cell, None)
        w = Where(where.file, where.line, name or f"column {pos + 1}")
        if name not in COLUMNS:
            hint = difflib.get_close_matches(name, COLUMNS, n=1)
            tip = f' (did you mean "{hint[0]}"?)' if hint else f" (columns: {', '.join(COLUMNS)})"
            raise InputError(f"unknown column{tip}", w)
        if name in out:
            raise InputError("the column appears twice", w)
        factor = 1.0
        if unit is not None:
            factor = _column_unit(name, unit, w)
        out[name] = (pos, factor)
    for name in _REQUIRED:
        if name not in out:
            raise InputError(f'missing column "{name}" (the layout: {",".join(COLUMNS)})',
                             Where(where.file, where.line, "header"))
    return out


def _column_unit(name: str, unit: str, where: Where) -> float:
    want = {"x": "length", "y": "length", "z": "length", "frequency_hz": "frequency"}.get(name)
    if want is None:
        raise InputError("this column takes no unit", where)
    try:
        factor, dim = parse_unit(unit)
    except ValueError:
        raise InputError(f'unknown unit "{unit}"', where) from None
    if dim != DIMENSIONS[want][0]:
        raise InputError(f'"{unit}" is not a unit of {DIMENSIONS[want][1]}', where)
    return factor


class ModesBuilder:
    """Collects points, channels and mode values, checking each as it comes (the
    readers of every layout build their MeasuredModes through it)."""

    def __init__(self, source: str):
        self.source = source
        self.points: dict[str, MeasuredPoint] = {}
        self.channels: dict[str, Channel] = {}
        self.modes: dict[int, dict[str, Any]] = {}

    def point(self, name: str, body: str, at: np.ndarray, where: Where) -> None:
        if not _NAME.match(name):
            raise InputError(f'"{name}" is not a point name (letters, digits, _ and -, '
                             "starting with a letter or _)", where)
        if not body or not _NAME.match(body):
            raise InputError(f'"{body}" is not a body name', Where(where.file, where.line,
                                                                    "body"))
        old = self.points.get(name)
        if old is None:
            self.points[name] = MeasuredPoint(name, body, np.asarray(at, float), where)
            return
        if old.body != body:
            raise InputError(f'point {name} is on body "{old.body}" on line {old.where.line}, '
                             f'here on "{body}"', Where(where.file, where.line, "body"))
        if not np.allclose(old.at, at, rtol=0.0, atol=1e-9):
            raise InputError(f"point {name} is at {_xyz(old.at)} m on line {old.where.line}, "
                             f"here at {_xyz(at)} m", Where(where.file, where.line, "x"))

    def channel(self, point: str, direction: np.ndarray, axis: str, where: Where) -> str:
        label = f"{point}.{axis}"
        if label not in self.channels:
            self.channels[label] = Channel(point, direction, axis, where)
        return label

    def mode(self, number: int, freq: float, zeta: float, where: Where) -> dict[str, Any]:
        if freq <= 0.0:
            raise InputError(f"must be a positive frequency, got {freq:g}",
                             Where(where.file, where.line, "frequency_hz"))
        if not math.isnan(zeta) and not 0.0 <= zeta < 1.0:
            raise InputError(f"must be a damping ratio from 0 up to 1, got {zeta:g}",
                             Where(where.file, where.line, "damping_ratio"))
        m = self.modes.get(number)
        if m is None:
            m = self.modes[number] = {"f": freq, "zeta": zeta, "where": where, "shape": {}}
            return m
        if abs(m["f"] - freq) > AGREE * max(abs(freq), 1e-300):
            raise InputError(f"mode {number} is at {m['f']:.6g} Hz on line {m['where'].line}, "
                             f"here at {freq:.6g} Hz", Where(where.file, where.line,
                                                             "frequency_hz"))
        same = (math.isnan(zeta) and math.isnan(m["zeta"])) or \
            abs(m["zeta"] - zeta) <= AGREE * max(abs(zeta), 1e-12)
        if not same:
            raise InputError(f"mode {number} has damping ratio {m['zeta']:.6g} on line "
                             f"{m['where'].line}, here {zeta:.6g}",
                             Where(where.file, where.line, "damping_ratio"))
        return m

    def value(self, mode: dict[str, Any], number: int, label: str, v: complex,
              where: Where) -> None:
        if label in mode["shape"]:
            raise InputError(f"mode {number} has a second value at {label} (first on line "
                             f"{mode['shape'][label][1].line})", where)
        mode["shape"][label] = (v, where)

    def finish(self, title: str) -> MeasuredModes:
        if not self.modes:
            raise InputError("the file holds no mode", Where(self.source))
        order = sorted(self.modes)
        labels = list(self.channels)
        for number in order:
            m = self.modes[number]
            for label in labels:
                if label not in m["shape"]:
                    ch = self.channels[label]
                    raise InputError(f"mode {number} has no value at {label} (other modes "
                                     f"have one, e.g. on line {ch.where.line})", m["where"])
        shapes = np.array([[self.modes[k]["shape"][lab][0] for k in order] for lab in labels],
                          dtype=complex).reshape(len(labels), len(order))
        for j, number in enumerate(order):
            if not np.any(np.abs(shapes[:, j]) > 0):
                raise InputError(f"mode {number}: the shape is zero at every channel",
                                 self.modes[number]["where"])
        used = {self.channels[lab].point for lab in labels}
        unused = [p for p in self.points if p not in used]
        if unused:
            raise InputError(f"point {unused[0]} has no measured value",
                             self.points[unused[0]].where)
        return MeasuredModes(dict(self.points), tuple(self.channels[lab] for lab in labels),
                             np.array([self.modes[k]["f"] for k in order]),
                             np.array([self.modes[k]["zeta"] for k in order]), shapes,
                             tuple(order), self.source, title,
                             tuple(self.modes[k]["where"] for k in order))


def _xyz(v: np.ndarray) -> str:
    return "[" + ", ".join(f"{float(x):.6g}" for x in v) + "]"


def read_measured_csv(path: str | os.PathLike[str]) -> MeasuredModes:
    """Measured modes from the CSV layout (see the module docstring)."""
    name = os.fspath(path)
    return measured_from_csv_text(_read_text(name), name)


def measured_from_csv_text(text: str, name: str = "<text>") -> MeasuredModes:
    """Measured modes from CSV text; ``name`` is used in messages."""
    lines = text.splitlines()
    title_lines = []
    start = 0
    while start < len(lines) and (lines[start].lstrip().startswith("#")
                                  or not lines[start].strip()):
        if lines[start].strip():
            title_lines.append(lines[start].lstrip()[1:].strip())
        start += 1
    if start >= len(lines):
        raise InputError("no header line (point,body,x,y,z,...)", Where(name, start))
    reader = csv.reader(io.StringIO("\n".join(lines[start:])))
    try:
        rows = list(reader)
    except csv.Error as exc:
        raise InputError(f"not valid CSV: {exc}", Where(name, start + reader.line_num)) from None
    cols = _header(rows[0], Where(name, start + 1))
    b = ModesBuilder(name)
    for k, row in enumerate(rows[1:]):
        line = start + 2 + k
        if not any(c.strip() for c in row):
            continue
        if len(row) > len(rows[0]):
            raise InputError(f"{len(row)} values on a line of a {len(rows[0])}-column file",
                             Where(name, line))

        def cell(col: str, row: list[str] = row) -> str:
            pos = cols[col][0] if col in cols else None
            return row[pos].strip() if pos is not None and pos < len(row) else ""

        def w(col: str, line: int = line) -> Where:
            return Where(name, line, col)

        for col in _REQUIRED:
            if not cell(col):
                raise InputError("is empty", w(col))
        at = np.array([_finite(cell(c), w(c)) * cols[c][1] for c in "xyz"])
        point = cell("point")
        b.point(point, cell("body"), at, w("point"))
        direction, axis = parse_direction(cell("direction"), w("direction"))
        label = b.channel(point, direction, axis, w("direction"))
        try:
            number = int(cell("mode"))
        except ValueError:
            raise InputError(f'must be a whole mode number, got "{cell("mode")}"',
                             w("mode")) from None
        if number < 1:
            raise InputError(f"mode numbers start at 1, got {number}", w("mode"))
        freq = _finite(cell("frequency_hz"), w("frequency_hz")) * cols["frequency_hz"][1]
        zeta = _finite(cell("damping_ratio"), w("damping_ratio")) \
            if cell("damping_ratio") else math.nan
        mode = b.mode(number, freq, zeta, Where(name, line, "mode"))
        re_ = _finite(cell("real"), w("real"))
        im = _finite(cell("imag"), w("imag")) if cell("imag") else 0.0
        b.value(mode, number, label, complex(re_, im), Where(name, line, "real"))
    return b.finish(" ".join(title_lines))


def read_measured_json(path: str | os.PathLike[str]) -> MeasuredModes:
    """Measured modes from the JSON layout (see the module docstring).

    JSON is read through the safe YAML reader (JSON is YAML), so that every
    value knows its line for the error messages.
    """
    from .yamlnodes import parse_yaml
    name = os.fspath(path)
    text = _read_text(name)
    try:
        json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"not valid JSON: {exc.msg}", Where(name, exc.lineno)) from None
    root = parse_yaml(text, name)
    top = root.mapping(["title", "points", "modes"], ["points", "modes"], "a JSON object")
    b = ModesBuilder(name)
    points = top["points"].mapping(what="an object of points")
    for pname, node in points.items():
        f = node.mapping(["body", "at"], ["body", "at"], "an object with body and at")
        b.point(pname, f["body"].text("a body name"), np.array(f["at"].vector("length")),
                Where(name, node.line, f"points.{pname}"))
    title = top["title"].text("a title") if "title" in top else ""
    for j, mnode in enumerate(top["modes"].items_list("a list of modes")):
        f = mnode.mapping(["number", "frequency_hz", "damping_ratio", "shape", "label"],
                          ["frequency_hz", "shape"], "an object with frequency_hz and shape")
        number = f["number"].integer(1) if "number" in f else j + 1
        if number in b.modes:
            raise InputError(f"mode number {number} appears twice", mnode.where)
        freq = f["frequency_hz"].quantity("frequency")
        zn = f.get("damping_ratio")
        zeta = math.nan if zn is None or zn.value is None else zn.number()
        mode = b.mode(number, freq, zeta, mnode.where)
        for key, vnode in f["shape"].mapping(what="an object of channel: [real, imag]").items():
            if "." not in key:
                raise InputError('a channel is "POINT.DIRECTION", e.g. "p01.z"',
                                 vnode.where)
            pname, axis_text = key.split(".", 1)
            if pname not in b.points:
                known = ", ".join(list(b.points)[:12]) or "none"
                raise InputError(f'no point "{pname}" in "points" (points: {known})',
                                 vnode.where)
            direction, axis = parse_direction(axis_text, vnode.where)
            label = b.channel(pname, direction, axis, vnode.where)
            b.value(mode, number, label, _complex(vnode), vnode.where)
    return b.finish(title)


def _complex(node: Any) -> complex:
    if node.is_list:
        parts = node.value
        if len(parts) not in (1, 2):
            raise node.error(f"must be [real, imag] or one number, got {node.shown()}")
        vals = [p.number() for p in parts]
        return complex(vals[0], vals[1] if len(vals) == 2 else 0.0)
    return complex(node.number(), 0.0)


# ------------------------------------------------------------------ writing --

def measured_csv_text(measured: MeasuredModes, title: str | None = None) -> str:
    """The CSV layout (full precision), a ``#`` line first when there is a title."""
    from .io import csv_text
    rows: list[list[Any]] = [list(COLUMNS)]
    for j, number in enumerate(measured.numbers):
        zeta = measured.damping_ratios[j]
        for i, c in enumerate(measured.channels):
            p = measured.points[c.point]
            v = measured.shapes[i, j]
            rows.append([p.name, p.body, float(p.at[0]), float(p.at[1]), float(p.at[2]),
                         c.axis, int(number), float(measured.frequencies_hz[j]),
                         None if math.isnan(zeta) else float(zeta), float(v.real),
                         float(v.imag)])
    head = title if title is not None else measured.title
    return (f"# {' '.join(head.split())}\n" if head else "") + csv_text(rows)


def measured_json_text(measured: MeasuredModes) -> str:
    """The JSON layout."""
    return json.dumps(measured.to_dict(), indent=1) + "\n"


def write_measured(measured: MeasuredModes, path: str | os.PathLike[str]) -> None:
    """Write the CSV or JSON layout (by suffix), atomically."""
    from .io import write_atomic
    name = os.fspath(path)
    if name.lower().endswith(".json"):
        write_atomic(name, measured_json_text(measured))
    elif name.lower().endswith(".csv"):
        write_atomic(name, measured_csv_text(measured))
    else:
        raise InputError("measured modes are written as .csv or .json", Where(field=name))


# --------------------------------------------------------- against a model --

def resolve_channels(measured: MeasuredModes, bodies: Mapping[str, Any],
                     body_at: Any = None) -> list[str]:
    """The model body that carries each channel's point, in channel order.

    ``bodies`` are the model's bodies by name; ``body_at(name, point)`` (an
    :meth:`Assembly.body_at`) follows a body that a plugin replaced (a split
    body's segments). A point on no body of the model is an InputError at
    the point's line in the measured file.
    """
    out: dict[str, str] = {}
    for p in measured.points.values():
        name = body_at(p.body, p.at) if body_at is not None else (
            p.body if p.body in bodies else None)
        if name is None or name not in bodies:
            import difflib
            hint = difflib.get_close_matches(p.body, list(bodies), n=1)
            tip = f' (did you mean "{hint[0]}"?)' if hint else ""
            known = ", ".join(list(bodies)[:12]) + (", ..." if len(bodies) > 12 else "")
            raise InputError(f'point {p.name} is on "{p.body}", which is no body of the '
                             f"model{tip}; bodies: {known}",
                             Where(p.where.file, p.where.line, "body"))
        out[p.name] = name
    return [out[c.point] for c in measured.channels]


def subset(measured: MeasuredModes, modes: Sequence[int]) -> MeasuredModes:
    """The measured set restricted to some test mode numbers (in that order)."""
    idx = [measured.numbers.index(k) for k in modes]
    return MeasuredModes(measured.points, measured.channels, measured.frequencies_hz[idx],
                         measured.damping_ratios[idx], measured.shapes[:, idx],
                         tuple(measured.numbers[i] for i in idx), measured.source,
                         measured.title, tuple(measured.mode_where[i] for i in idx)
                         if measured.mode_where else ())
