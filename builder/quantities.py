"""Quantities with units, and ``${...}`` expressions, turned into SI floats.

A quantity in an assembly file is a bare number (already SI), a string with
a unit (``"21 kN/m"``, ``"1.5 kN s/m"``, ``"80 km/h"``), or an expression
``"${ks_front * 1.1}"`` over named parameters, optionally followed by a unit
(``"${2 * t} mm"``).

Units are handled by a small table of our own rather than a general units
library: the set an assembly needs is short, and building a general unit
registry at start-up would cost more than the whole analysis of a small
model. Dimensions are exponents of (mass, length, time); the radian is
dimensionless, as in SI, so ``N m/rad`` and ``N m`` are the same dimension.

Unit strings are read the way engineers write them: factors separated by
spaces, ``*`` or ``.``, powers with ``^`` or ``**``, and everything after a
``/`` in the denominator (``"J/kg K"`` is J/(kg K)).

Expressions are parsed by a recursive-descent parser (never ``eval``):
numbers, parameter names, ``+ - * / **``, parentheses, the constant ``pi``
and the functions ``sqrt``, ``sin``, ``cos``, ``tan`` (radians), ``abs``,
``min``, ``max``. Arithmetic carries dimensions, so ``${k_front * 1.1}`` is a
stiffness when ``k_front`` is, and adding a length to a mass is an error.

>>> to_si("21 kN/m", "stiffness")
21000.0
>>> to_si("80 km/h", "speed")
22.22222222222222
>>> to_si("${k * 2}", "stiffness", parameters={"k": Quantity(1000.0, STIFFNESS)})
2000.0
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from .errors import InputError, Where

__all__ = [
    "Quantity", "DIMENSIONS", "to_si", "parse_quantity", "parse_unit",
    "resolve_parameters", "dimension_noun", "MASS", "LENGTH", "STIFFNESS",
]

Dim = tuple[int, int, int]  # exponents of (kg, m, s)

MASS: Dim = (1, 0, 0)
LENGTH: Dim = (0, 1, 0)
TIME: Dim = (0, 0, 1)
STIFFNESS: Dim = (1, 0, -2)
NONE: Dim = (0, 0, 0)

#: Named dimensions a field can ask for: name -> (exponents, noun for messages).
DIMENSIONS: dict[str, tuple[Dim, str]] = {
    "dimensionless": (NONE, "plain number"),
    "mass": (MASS, "mass"),
    "length": (LENGTH, "length"),
    "time": (TIME, "time"),
    "area": ((0, 2, 0), "area"),
    "volume": ((0, 3, 0), "volume (m^3)"),
    "stiffness": (STIFFNESS, "stiffness"),
    "damping": ((1, 0, -1), "damping coefficient"),
    "inertia": ((1, 2, 0), "moment of inertia"),
    "rotational_stiffness": ((1, 2, -2), "rotational stiffness"),
    "rotational_damping": ((1, 2, -1), "rotational damping coefficient"),
    "torque": ((1, 2, -2), "torque"),
    "force": ((1, 1, -2), "force"),
    "speed": ((0, 1, -1), "speed"),
    "acceleration": ((0, 1, -2), "acceleration"),
    "frequency": ((0, 0, -1), "frequency"),
    "angular_speed": ((0, 0, -1), "rotational speed"),
    "angle": (NONE, "angle"),
    "pressure": ((1, -1, -2), "pressure"),
    "area_moment": ((0, 4, 0), "second moment of area (m^4)"),
    "flexural_rigidity": ((1, 3, -2), "bending or torsional rigidity (N m^2)"),
    "density": ((1, -3, 0), "density"),
    "linear_density": ((1, -1, 0), "mass per length"),
    "spatial_frequency": ((0, -1, 0), "spatial frequency (cycles/m)"),
}

_BASE: dict[str, tuple[float, Dim]] = {
    # name: (factor to SI, dimension); prefixable ones are listed below
    "m": (1.0, LENGTH),
    "g": (1e-3, MASS),
    "s": (1.0, TIME),
    "N": (1.0, (1, 1, -2)),
    "Nm": (1.0, (1, 2, -2)),
    "Ns": (1.0, (1, 1, -1)),
    "Pa": (1.0, (1, -1, -2)),
    "Hz": (1.0, (0, 0, -1)),
    "J": (1.0, (1, 2, -2)),
    "W": (1.0, (1, 2, -3)),
    "rad": (1.0, NONE),
}
_PREFIXES = {"G": 1e9, "M": 1e6, "k": 1e3, "c": 1e-2, "m": 1e-3, "u": 1e-6, "µ": 1e-6, "n": 1e-9}
_OTHER: dict[str, tuple[float, Dim]] = {
    "t": (1000.0, MASS),
    "min": (60.0, TIME),
    "h": (3600.0, TIME),
    "deg": (math.pi / 180.0, NONE),
    "rev": (2.0 * math.pi, NONE),
    "rpm": (2.0 * math.pi / 60.0, (0, 0, -1)),
    "cycles": (1.0, NONE),
    "cycle": (1.0, NONE),
    "percent": (0.01, NONE),
    "%": (0.01, NONE),
    "1": (1.0, NONE),
}


@dataclass(frozen=True)
class Quantity:
    """A value in SI units with its dimension exponents (kg, m, s)."""

    value: float
    dim: Dim = NONE

    def _same(self, other: Quantity, op: str) -> None:
        if self.dim != other.dim:
            raise ValueError(f"cannot {op} {_dim_text(self.dim)} and {_dim_text(other.dim)}")

    def __add__(self, o: Quantity) -> Quantity:
        self._same(o, "add")
        return Quantity(self.value + o.value, self.dim)

    def __sub__(self, o: Quantity) -> Quantity:
        self._same(o, "subtract")
        return Quantity(self.value - o.value, self.dim)

    def __mul__(self, o: Quantity) -> Quantity:
        return Quantity(self.value * o.value, _dim_add(self.dim, o.dim, 1))

    def __truediv__(self, o: Quantity) -> Quantity:
        if o.value == 0.0:
            raise ValueError("division by zero")
        return Quantity(self.value / o.value, _dim_add(self.dim, o.dim, -1))

    def __pow__(self, o: Quantity) -> Quantity:
        if o.dim != NONE:
            raise ValueError("an exponent must be a plain number")
        dim = tuple(d * o.value for d in self.dim)
        if any(abs(d - round(d)) > 1e-12 for d in dim):
            raise ValueError(f"{_dim_text(self.dim)} to the power {o.value:g} has no unit")
        if self.value < 0 and o.value != int(o.value):
            raise ValueError("fractional power of a negative number")
        return Quantity(self.value ** o.value, tuple(int(round(d)) for d in dim))

    def __neg__(self) -> Quantity:
        return Quantity(-self.value, self.dim)


def _dim_add(a: Dim, b: Dim, sign: int) -> Dim:
    return (a[0] + sign * b[0], a[1] + sign * b[1], a[2] + sign * b[2])


def _dim_text(dim: Dim) -> str:
    for _name, (d, noun) in DIMENSIONS.items():
        if d == dim and _name not in ("angle", "angular_speed", "torque"):
            return f"a {noun}" if noun[0] not in "aeiou" else f"an {noun}"
    parts = [f"{u}^{e}" if e != 1 else u for u, e in zip(("kg", "m", "s"), dim) if e]
    return " ".join(parts) if parts else "a plain number"


def dimension_text(dim: Dim) -> str:
    """How a dimension is named in messages, e.g. "a stiffness"."""
    return _dim_text(dim)


def dimension_noun(dimension: str) -> str:
    """The noun used in messages for a named dimension (``"stiffness"``)."""
    return DIMENSIONS[dimension][1]


# ----------------------------------------------------------------- units --

def _unit_factor(name: str) -> tuple[float, Dim]:
    if name in _OTHER:
        return _OTHER[name]
    if name in _BASE:
        return _BASE[name]
    if len(name) > 1 and name[0] in _PREFIXES and name[1:] in _BASE:
        f, d = _BASE[name[1:]]
        return _PREFIXES[name[0]] * f, d
    raise ValueError(f"unknown unit {name!r}")


_FACTOR = re.compile(r"^([A-Za-zµ%1]+)(?:(?:\^|\*\*)([+-]?\d+))?$")


def parse_unit(text: str) -> tuple[float, Dim]:
    """Factor to SI and dimension of a unit string such as ``"kN s/m"``."""
    text = text.strip().replace("·", " ").replace("**", "^")
    if not text:
        return 1.0, NONE
    factor, dim = 1.0, NONE
    for i, group in enumerate(text.split("/")):
        sign = 1 if i == 0 else -1
        words = [w for w in re.split(r"[\s*.]+", group) if w]
        if not words:
            raise ValueError(f"bad unit {text!r}")
        for w in words:
            m = _FACTOR.match(w)
            if not m:
                raise ValueError(f"bad unit {text!r}")
            f, d = _unit_factor(m.group(1))
            p = int(m.group(2) or 1)
            factor *= f ** (sign * p)
            dim = _dim_add(dim, tuple(x * p for x in d), sign)
    return factor, dim


# ----------------------------------------------------------- expressions --

_TOKEN = re.compile(
    r"\s*(?:(?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)|(?P<name>[A-Za-z_][A-Za-z_0-9]*)"
    r"|(?P<op>\*\*|[-+*/(),^]))")

_FUNCS: dict[str, Callable[..., Quantity]] = {}


def _plain(q: Quantity, fname: str) -> float:
    if q.dim != NONE:
        raise ValueError(f"{fname}() needs a plain number, got {_dim_text(q.dim)}")
    return q.value


def _sqrt(q: Quantity) -> Quantity:
    if q.value < 0:
        raise ValueError("sqrt of a negative number")
    return q ** Quantity(0.5)


_FUNCS.update({
    "sqrt": _sqrt,
    "sin": lambda q: Quantity(math.sin(_plain(q, "sin"))),
    "cos": lambda q: Quantity(math.cos(_plain(q, "cos"))),
    "tan": lambda q: Quantity(math.tan(_plain(q, "tan"))),
    "abs": lambda q: Quantity(abs(q.value), q.dim),
    "min": lambda *qs: min(qs, key=lambda q: (qs[0]._same(q, "compare"), q.value)[1]),
    "max": lambda *qs: max(qs, key=lambda q: (qs[0]._same(q, "compare"), q.value)[1]),
})


class _Parser:
    """Recursive descent over: expr = term (('+'|'-') term)*;
    term = unary (('*'|'/') unary)*; unary = '-' unary | power;
    power = atom ('**' unary)?; atom = number | name | name '(' args ')' | '(' expr ')'."""

    def __init__(self, text: str, lookup: Callable[[str], Quantity]):
        self.tokens = self._lex(text)
        self.i = 0
        self.lookup = lookup

    @staticmethod
    def _lex(text: str) -> list[tuple[str, str]]:
        out, pos = [], 0
        text = text.rstrip()
        while pos < len(text):
            m = _TOKEN.match(text, pos)
            if not m or m.end() == pos:
                raise ValueError(f"unexpected {text[pos:].strip()[:10]!r}")
            kind = m.lastgroup or "op"
            tok = m.group(kind)
            out.append((kind, "**" if tok == "^" else tok))
            pos = m.end()
        return out

    def peek(self) -> str | None:
        return self.tokens[self.i][1] if self.i < len(self.tokens) else None

    def take(self) -> tuple[str, str]:
        if self.i >= len(self.tokens):
            raise ValueError("expression ends too early")
        self.i += 1
        return self.tokens[self.i - 1]

    def parse(self) -> Quantity:
        if not self.tokens:
            raise ValueError("empty expression")
        q = self.expr()
        if self.i != len(self.tokens):
            raise ValueError(f"unexpected {self.tokens[self.i][1]!r}")
        return q

    def expr(self) -> Quantity:
        q = self.term()
        while self.peek() in ("+", "-"):
            op = self.take()[1]
            r = self.term()
            q = q + r if op == "+" else q - r
        return q

    def term(self) -> Quantity:
        q = self.unary()
        while self.peek() in ("*", "/"):
            op = self.take()[1]
            r = self.unary()
            q = q * r if op == "*" else q / r
        return q

    def unary(self) -> Quantity:
        if self.peek() == "-":
            self.take()
            return -self.unary()
        if self.peek() == "+":
            self.take()
            return self.unary()
        return self.power()

    def power(self) -> Quantity:
        q = self.atom()
        if self.peek() == "**":
            self.take()
            q = q ** self.unary()
        return q

    def atom(self) -> Quantity:
        kind, tok = self.take()
        if kind == "num":
            return Quantity(float(tok))
        if kind == "name":
            if self.peek() == "(":
                if tok not in _FUNCS:
                    raise ValueError(f"unknown function {tok!r} (known: {', '.join(_FUNCS)})")
                self.take()
                args = [self.expr()]
                while self.peek() == ",":
                    self.take()
                    args.append(self.expr())
                if self.take()[1] != ")":
                    raise ValueError("missing ')'")
                if tok not in ("min", "max") and len(args) != 1:
                    raise ValueError(f"{tok}() takes one argument")
                return _FUNCS[tok](*args)
            if tok == "pi":
                return Quantity(math.pi)
            return self.lookup(tok)
        if tok == "(":
            q = self.expr()
            if self.take()[1] != ")":
                raise ValueError("missing ')'")
            return q
        raise ValueError(f"unexpected {tok!r}")


_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")
_EXPR = re.compile(r"^\s*\$\{(.*)\}\s*(.*?)\s*$", re.S)


def parse_quantity(value: object,
                   parameters: Mapping[str, Quantity] | Callable[[str], Quantity] | None = None,
                   ) -> Quantity:
    """Read a number, ``"value unit"`` or ``"${expr} [unit]"`` as a Quantity.

    A bare number is dimensionless here; :func:`to_si` reads a plain number
    as SI in whatever dimension the field asks for. Raises ValueError with
    the reason.
    """
    if isinstance(value, Quantity):
        return value
    if isinstance(value, bool) or value is None:
        raise ValueError("not a number")
    if isinstance(value, int | float):
        v = float(value)
        if not math.isfinite(v):
            raise ValueError("not a finite number")
        return Quantity(v)
    if not isinstance(value, str):
        raise ValueError("not a number")
    m = _EXPR.match(value)
    if m:
        if callable(parameters):
            lookup = parameters
        else:
            table = parameters or {}

            def lookup(name: str) -> Quantity:
                if name not in table:
                    raise ValueError(f"unknown parameter {name!r}")
                return table[name]
        q = _Parser(m.group(1), lookup).parse()
        unit = m.group(2)
    else:
        m = _NUMBER.match(value)
        if not m:
            raise ValueError("not a number with a unit")
        q = Quantity(float(m.group(1)))
        unit = m.group(2)
    if unit:
        f, d = parse_unit(unit)
        q = Quantity(q.value * f, _dim_add(q.dim, d, 1))
    if not math.isfinite(q.value):
        raise ValueError("not a finite number")
    return q


def to_si(value: object, dimension: str, where: Where | None = None,
          parameters: Mapping[str, Quantity] | None = None,
          sign: str = "any") -> float:
    """``value`` as an SI float of the named ``dimension``.

    ``sign`` is ``"any"``, ``"positive"`` or ``"nonnegative"``. Errors are
    InputError at ``where`` worded for the user, e.g.
    ``must be a positive mass, got "-3 kg"``.
    """
    dim, noun = DIMENSIONS[dimension]
    adj = {"positive": "positive ", "nonnegative": "non-negative "}.get(sign, "")
    article = "an" if (adj or noun)[0] in "aeiou" else "a"
    shown = f'"{value}"' if isinstance(value, str) else repr(value)
    if isinstance(value, bool) or value is None:
        shown = "nothing" if value is None else str(value).lower()
    try:
        q = parse_quantity(value, parameters)
    except ValueError as exc:
        raise InputError(f"must be {article} {adj}{noun}, got {shown} ({exc})", where) from None
    if q.dim != dim and not (q.dim == NONE and _is_plain(value, parameters)):
        raise InputError(
            f"must be {article} {adj}{noun}, got {shown} ({_dim_text(q.dim)})", where)
    if (sign == "positive" and not q.value > 0) or (sign == "nonnegative" and q.value < 0):
        raise InputError(f"must be {article} {adj}{noun}, got {shown}", where)
    return q.value


def _is_plain(value: object, parameters: Mapping[str, Quantity] | None) -> bool:
    """A value written without any unit anywhere: a bare number, or an
    expression whose parameters are all bare numbers. Read as SI."""
    if isinstance(value, int | float):
        return True
    if isinstance(value, Quantity):
        return value.dim == NONE
    if not isinstance(value, str):
        return False
    m = _EXPR.match(value)
    if m:
        return not m.group(2)
    m = _NUMBER.match(value)
    return bool(m) and not m.group(2)


def resolve_parameters(raw: Mapping[str, object], where: Callable[[str], Where]
                       ) -> dict[str, Quantity]:
    """Evaluate a ``parameters:`` block; entries may refer to each other.

    ``where(name)`` gives the place of each entry for error messages. A
    cycle (``a: ${b}``, ``b: ${a}``) is an error.
    """
    done: dict[str, Quantity] = {}
    active: list[str] = []

    def get(name: str) -> Quantity:
        if name in done:
            return done[name]
        if name not in raw:
            raise ValueError(f"unknown parameter {name!r}")
        if name in active:
            raise ValueError("parameters refer to each other in a cycle: "
                             + " -> ".join([*active[active.index(name):], name]))
        active.append(name)
        try:
            done[name] = parse_quantity(raw[name], get)
        finally:
            active.pop()
        return done[name]

    for name in raw:
        if not re.fullmatch(r"[A-Za-z_][A-Za-z_0-9]*", str(name)) or name == "pi":
            raise InputError("a parameter name must be letters, digits and _ "
                             f"(and not pi), got {name!r}", where(name))
        try:
            get(name)
        except ValueError as exc:
            raise InputError(f"bad value {raw[name]!r} ({exc})", where(name)) from None
    return done
