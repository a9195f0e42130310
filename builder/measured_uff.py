"""Measured modes from a universal file (the modal-test trade's UFF), optional.

Read through pyuff (``pip install lumpgraph[uff]``): datasets 15 or 2411
give node numbers and coordinates, dataset 55 the mode shapes (analysis
type 2, normal modes, with frequency and viscous damping ratio; or type 3,
complex modes, with the complex eigenvalue s = -zeta omega + i omega_d in
rad/s), dataset 164 the file's length unit. A universal file names no
bodies, so it is read through a small mapping block, a YAML file::

    # invented example
    universal: body_test.unv     # the universal file, beside this one
    body: body                   # the body of every node not listed below
    length_unit: mm              # optional: overrides dataset 164 (default m)
    nodes:                       # optional: only these nodes, with their names
      101: {point: sill_fl}
      205: {point: eng_fl, body: engine}

Without ``nodes`` every node of the mode shapes is read, called ``n101``
and so on, on ``body``. Coordinates and the x, y, z response directions
are taken in the vehicle's axes (the file's global system). Directions
that are zero in every mode (not measured) are left out.
"""

from __future__ import annotations

import math
import os
from typing import Any

import numpy as np

from .errors import InputError, Where
from .measured import MeasuredModes, ModesBuilder
from .quantities import DIMENSIONS, parse_unit

__all__ = ["read_uff_map", "read_uff"]

_AXES = (("x", "r1", (1.0, 0.0, 0.0)), ("y", "r2", (0.0, 1.0, 0.0)),
         ("z", "r3", (0.0, 0.0, 1.0)))


def _pyuff() -> Any:
    try:
        import pyuff
    except ImportError:
        raise InputError("reading universal files needs pyuff: pip install "
                         "\"lumpgraph[uff]\" (or pip install pyuff)") from None
    return pyuff


def read_uff_map(path: str | os.PathLike[str]) -> MeasuredModes:
    """Measured modes through a mapping block (see the module docstring)."""
    from .yamlnodes import load_yaml
    name = os.fspath(path)
    root = load_yaml(name, name)
    f = root.mapping(["universal", "body", "length_unit", "nodes", "title"], ["universal"],
                     "a mapping block with universal, body and nodes")
    uff = os.path.join(os.path.dirname(os.path.abspath(name)), f["universal"].text("a file name"))
    factor = None
    if "length_unit" in f:
        unit = f["length_unit"].text("a length unit")
        try:
            factor, dim = parse_unit(unit)
        except ValueError:
            raise f["length_unit"].error(f'unknown unit "{unit}"') from None
        if dim != DIMENSIONS["length"][0]:
            raise f["length_unit"].error(f'"{unit}" is not a unit of length')
    default_body = f["body"].text("a body name") if "body" in f else None
    mapping: dict[int, tuple[str, str, Where]] = {}
    if "nodes" in f:
        for key, node in f["nodes"].mapping(what="a mapping of node numbers").items():
            try:
                num = int(key)
            except (TypeError, ValueError):
                raise InputError("a node number must be a whole number",
                                 f["nodes"].where.child(str(key))) from None
            g = node.mapping(["point", "body"], ["point"], "{point: NAME, body: BODY}")
            body = g["body"].text("a body name") if "body" in g else default_body
            if body is None:
                raise InputError('no body: give "body" here or for the whole block',
                                 node.where)
            mapping[num] = (g["point"].text("a point name"), body, node.where)
    elif default_body is None:
        raise InputError('give "body" (the body of every node) or "nodes"', root.where)
    title = f["title"].text("a title") if "title" in f else ""
    return read_uff(uff, mapping or None, default_body, factor, title, display=name)


def _sets(path: str) -> list[dict[str, Any]]:
    pyuff = _pyuff()
    if not os.path.isfile(path):
        raise InputError("cannot read the universal file (no such file)", Where(path))
    try:
        return list(pyuff.UFF(path).read_sets())
    except Exception as exc:  # pyuff raises many kinds on a malformed file
        raise InputError(f"not a readable universal file ({type(exc).__name__}: "
                         f"{' '.join(str(exc).split())[:120]})", Where(path)) from None


def read_uff(path: str | os.PathLike[str], mapping: dict[int, tuple[str, str, Where]] | None,
             body: str | None, length_factor: float | None = None, title: str = "",
             display: str | None = None) -> MeasuredModes:
    """Measured modes from a universal file; ``mapping`` node number -> (point, body,
    place in the mapping block), or None for every node on ``body``."""
    path = os.fspath(path)
    sets = _sets(path)
    if isinstance(sets, dict):
        sets = [sets]
    coords: dict[int, np.ndarray] = {}
    factor = length_factor
    modes = []
    for s in sets:
        t = s.get("type")
        if t in (15, 2411):
            for k, x, y, z in zip(s["node_nums"], s["x"], s["y"], s["z"], strict=True):
                coords[int(k)] = np.array([x, y, z], dtype=float)
        elif t == 164 and length_factor is None and s.get("length"):
            factor = 1.0 / float(s["length"])       # UFF: SI = file value / factor
        elif t == 55 and s.get("analysis_type") in (2, 3):
            modes.append(s)
    factor = 1.0 if factor is None else factor
    where = Where(path)
    if not modes:
        raise InputError("no mode shapes (dataset 55, normal or complex modes) in the "
                         "universal file",
                         where)
    if not coords:
        raise InputError("no node coordinates (dataset 15 or 2411) in the universal file", where)
    b = ModesBuilder(display or path)
    used = sorted({int(k) for m in modes for k in m["node_nums"]})
    nodes = sorted(mapping) if mapping else used
    for num in nodes:
        place = mapping[num][2] if mapping else where
        if num not in coords:
            raise InputError(f"node {num} has no coordinates in the universal file", place)
        if num not in used:
            raise InputError(f"node {num} has no mode shape values in the universal file", place)
        point, on = (mapping[num][0], mapping[num][1]) if mapping else (f"n{num}", str(body))
        b.point(point, on, coords[num] * factor, place)
    values: dict[tuple[int, str], list[complex]] = {}
    numbers = []
    for j, m in enumerate(sorted(modes, key=lambda m: int(m.get("mode_n") or 0))):
        f_hz, zeta = _frequency(m, where)
        number = int(m.get("mode_n") or j + 1)
        if number in numbers:
            number = max(numbers) + 1
        numbers.append(number)
        b.mode(number, f_hz, zeta, where)
        index = {int(k): i for i, k in enumerate(m["node_nums"])}
        for num in nodes:
            for axis, key, _d in _AXES:
                arr = m.get(key)
                v = complex(arr[index[num]]) if arr is not None and num in index else 0j
                if not (math.isfinite(v.real) and math.isfinite(v.imag)):
                    raise InputError(f"mode {number}: node {num} {axis} is not a finite number",
                                     where)
                values.setdefault((num, axis), []).append(v)
    for num in nodes:
        point = mapping[num][0] if mapping else f"n{num}"
        for axis, _key, d in _AXES:
            vals = values.get((num, axis), [])
            if not any(abs(v) > 0 for v in vals):
                continue
            label = b.channel(point, np.array(d), axis, b.points[point].where)
            for number, v in zip(numbers, vals, strict=True):
                b.value(b.modes[number], number, label, v, where)
    return b.finish(title)


def _frequency(m: dict[str, Any], where: Where) -> tuple[float, float]:
    """(frequency Hz, damping ratio) of a dataset-55 mode."""
    if m.get("analysis_type") == 3:
        s = complex(m.get("eig"))
        w = abs(s)
        if not math.isfinite(w) or w <= 0:
            raise InputError(f"mode {m.get('mode_n')}: eigenvalue {s} is not usable", where)
        return w / (2 * math.pi), -s.real / w
    f = float(m.get("freq", math.nan))
    z = float(m.get("modal_damp_vis", math.nan))
    if not math.isfinite(f):
        raise InputError(f"mode {m.get('mode_n')}: no frequency", where)
    return f, (z if math.isfinite(z) else math.nan)

