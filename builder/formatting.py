"""Numbers, counts, units and tables as an engineer reads them.

One place for the small rules every printed table follows:

- counts agree with their noun: ``count(1, "DOF")`` is ``"1 DOF"``,
  ``count(2, "body")`` is ``"2 bodies"``;
- a value that rounds to zero prints without a sign: ``number(-1e-9, ".2f")``
  is ``"0.00"``, never ``"-0.00"``; ``percent(-1e-5)`` is ``"0.0 %"``;
- quantities print in the unit engineers use for their dimension
  (:data:`ENGINEERING_UNITS`: stiffness in kN/m, damping in N s/m, rotational
  speed in rpm, ...), or in a unit the caller names, with the unit always
  written; SI values go in and conversion factors come from
  :func:`builder.quantities.parse_unit`, so a unit is spelled the way the
  file format reads it;
- text tables size their columns from their content, so that a long name
  never breaks a column (:func:`text_table`).

Machine-readable outputs (JSON, CSV) stay in SI; these helpers are for text
and plot labels only.

>>> count(1, "DOF"), count(21, "DOF"), count(3, "body")
('1 DOF', '21 DOFs', '3 bodies')
>>> number(-0.0001, ".2f"), percent(-0.00001)
('0.00', '0.0 %')
>>> quantity_text(83.7758040957278, "angular_speed")
'800 rpm'
>>> quantity_text(24000.0, "stiffness")
'24 kN/m'
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from typing import Any

from .quantities import DIMENSIONS, parse_unit

__all__ = ["ENGINEERING_UNITS", "SI_UNITS", "count", "plural", "number", "percent",
           "in_unit", "display_unit", "quantity_text", "engineering_unit_of", "unit_of_dimension",
           "text_table"]

#: The unit a value of each named dimension is printed in (text and plots).
ENGINEERING_UNITS: dict[str, str] = {
    "dimensionless": "", "mass": "kg", "length": "m", "time": "s", "area": "m^2",
    "volume": "m^3", "stiffness": "kN/m", "damping": "N s/m", "inertia": "kg m^2",
    "rotational_stiffness": "N m/rad", "rotational_damping": "N m s/rad", "torque": "N m",
    "force": "N", "speed": "km/h", "acceleration": "m/s^2", "frequency": "Hz",
    "angular_speed": "rpm", "angle": "deg", "pressure": "kPa", "area_moment": "m^4",
    "flexural_rigidity": "N m^2", "density": "kg/m^3", "linear_density": "kg/m",
    "spatial_frequency": "cycles/m",
}

#: The SI unit of each named dimension, as the CSV and JSON outputs state it.
SI_UNITS: dict[str, str] = {
    "dimensionless": "", "mass": "kg", "length": "m", "time": "s", "area": "m^2",
    "volume": "m^3", "stiffness": "N/m", "damping": "N s/m", "inertia": "kg m^2",
    "rotational_stiffness": "N m/rad", "rotational_damping": "N m s/rad", "torque": "N m",
    "force": "N", "speed": "m/s", "acceleration": "m/s^2", "frequency": "Hz",
    "angular_speed": "rad/s", "angle": "rad", "pressure": "Pa", "area_moment": "m^4",
    "flexural_rigidity": "N m^2", "density": "kg/m^3", "linear_density": "kg/m",
    "spatial_frequency": "cycles/m",
}

_IRREGULAR = {"DOF": "DOFs", "axis": "axes", "vertex": "vertices", "index": "indices"}


def plural(noun: str) -> str:
    """The plural of an English noun of this tool's vocabulary (``body`` -> ``bodies``)."""
    if noun in _IRREGULAR:
        return _IRREGULAR[noun]
    if noun.endswith("y") and len(noun) > 1 and noun[-2] not in "aeiou":
        return noun[:-1] + "ies"
    if noun.endswith(("s", "x", "ch", "sh")):
        return noun + "es"
    return noun + "s"


def count(n: int, noun: str, plural_form: str | None = None) -> str:
    """``n`` and its noun, singular for exactly one: ``"1 DOF"``, ``"0 modes"``."""
    n = int(n)
    return f"{n} {noun if n == 1 else (plural_form or plural(noun))}"


def number(value: Any, spec: str = ".4g", missing: str = "-") -> str:
    """``format(value, spec)`` without a sign on a value that rounds to zero.

    None and NaN print as ``missing``; infinities as ``inf`` / ``-inf``.
    """
    if value is None:
        return missing
    x = float(value)
    if math.isnan(x):
        return missing
    text = format(x, spec)
    if text.lstrip().startswith("-"):
        mantissa = re.split(r"[eE]", text)[0]
        if not any(c in "123456789" for c in mantissa):   # rounds to zero: no sign
            text = format(0.0, spec)
    return text


def percent(ratio: float, digits: int = 1, signed: bool = False) -> str:
    """A ratio as a percentage with the SI space: ``percent(0.1234)`` is ``"12.3 %"``."""
    spec = f"{'+' if signed else ''}.{digits}f"
    text = number(100.0 * float(ratio), spec)
    return f"{text} %"


def in_unit(value_si: float, unit: str) -> float:
    """An SI value expressed in ``unit`` (``in_unit(24000, "kN/m")`` is 24.0)."""
    factor, _ = parse_unit(unit)
    return float(value_si) / factor


def display_unit(dimension: str) -> str:
    """The engineering unit of a named dimension (``"stiffness"`` -> ``"kN/m"``)."""
    if dimension not in ENGINEERING_UNITS:
        raise KeyError(f"no display unit for dimension {dimension!r}")
    return ENGINEERING_UNITS[dimension]


def quantity_text(value_si: Any, dimension: str | None = None, unit: str | None = None,
                  spec: str = ".4g") -> str:
    """A value with its unit: in ``unit`` if given, else the dimension's engineering unit.

    Non-numbers (names, lists) are returned as text; None as ``"none"``.
    """
    if value_si is None:
        return "none"
    if isinstance(value_si, bool) or not isinstance(value_si, int | float):
        return str(value_si) if not isinstance(value_si, str) else repr(value_si)
    if unit is None:
        unit = ENGINEERING_UNITS.get(dimension or "", "")
    text = number(in_unit(value_si, unit) if unit else value_si, spec)
    return f"{text} {unit}" if unit else text


def unit_of_dimension(dim: tuple[int, int, int]) -> str:
    """The engineering unit of a dimension given as exponents of (kg, m, s);
    ``(1, 0, -2)`` -> ``"kN/m"``. A frequency-like (1/s) value prints in Hz."""
    for name, (d, _noun) in DIMENSIONS.items():
        if d == tuple(dim) and name in ENGINEERING_UNITS and name not in (
                "angular_speed", "angle", "torque"):
            return ENGINEERING_UNITS[name]
    return ""


def engineering_unit_of(si_unit: str) -> str:
    """The engineering unit for values given in ``si_unit`` (same dimension).

    ``"N/m"`` -> ``"kN/m"``, ``"m/s"`` -> ``"km/h"``; a unit this module does
    not know is returned as it is.
    """
    for name, si in SI_UNITS.items():
        if si == si_unit.strip():
            return ENGINEERING_UNITS[name]
    try:
        _, dim = parse_unit(si_unit)
    except ValueError:
        return si_unit
    return unit_of_dimension(dim) or si_unit


def _is_number(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool)


def text_table(headers: Sequence[str], rows: Sequence[Sequence[Any]], *,
               spec: str | Sequence[str] = ".4g", indent: str = "",
               align: str | None = None, rule: bool = True) -> str:
    """A plain-text table whose column widths come from its content.

    Numbers are formatted with ``spec`` (one for all columns, or one per
    column) through :func:`number` and right-aligned; text is left-aligned;
    None prints as ``-``. ``align`` overrides with one letter per column
    (``l`` or ``r``). A line of dashes follows the header when ``rule``.
    """
    ncol = len(headers)
    specs = [spec] * ncol if isinstance(spec, str) else list(spec)
    cells = [[number(v, specs[j]) if _is_number(v) else ("-" if v is None else str(v))
              for j, v in enumerate(row)] for row in rows]
    if align is None:
        kinds = []
        for j in range(ncol):
            col = [row[j] for row in rows if j < len(row) and row[j] is not None]
            kinds.append("r" if all(_is_number(v) for v in col) else "l")
        align = "".join(kinds)
    widths = [max([len(headers[j])] + [len(r[j]) for r in cells if j < len(r)])
              for j in range(ncol)]

    def line(values: Sequence[str]) -> str:
        parts = [(v.rjust(w) if a == "r" else v.ljust(w))
                 for v, w, a in zip(values, widths, align, strict=False)]
        return (indent + "  ".join(parts)).rstrip()

    out = [line(list(headers))]
    if rule:
        out.append(indent + "  ".join("-" * w for w in widths))
    out.extend(line(r) for r in cells)
    return "\n".join(out)
