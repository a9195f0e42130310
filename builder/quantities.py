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
An expression is at most :data:`MAX_EXPRESSION_CHARS` characters and nests
at most :data:`MAX_EXPRESSION_DEPTH` levels; overflow, division by zero and
powers without a unit are errors, never infinities.

Every value :func:`to_si` returns is finite, and its size lies within the
field's :data:`MAGNITUDES` (no subnormal numbers, no 1e-308 kg wheel, no
1e308 m point): bounds ten or more orders of magnitude beyond any vehicle or
machine, there to catch slips and keep every product of the analysis finite
(common practice, no source).

>>> to_si("21 kN/m", "stiffness")
21000.0
>>> to_si("80 km/h", "speed")
22.22222222222222
>>> to_si("${k * 2}", "stiffness", parameters={"k": Quantity(1000.0, STIFFNESS)})
2000.0
"""

from __future__ import annotations

import functools
import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from .errors import InputError, Where, shown

__all__ = [
    "Quantity", "DIMENSIONS", "MAGNITUDES", "to_si", "parse_quantity", "parse_unit",
    "resolve_parameters", "dimension_noun", "MASS", "LENGTH", "STIFFNESS",
    "MAX_EXPRESSION_CHARS", "MAX_EXPRESSION_DEPTH",
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

#: Plausible sizes of each named dimension, SI: (smallest nonzero size of a
#: positive or non-negative field, largest size of any field). Coordinates and
#: other signed fields may be as small as they like (rounding leaves 1e-17 m
#: where 0 was meant) but not subnormal. Ten or more orders of magnitude beyond
#: any road vehicle or machine (common practice, no source).
MAGNITUDES: dict[str, tuple[float, float]] = {
    "dimensionless": (1e-12, 1e12),
    "mass": (1e-6, 1e9),
    "length": (1e-9, 1e5),
    "time": (1e-9, 1e7),
    "area": (1e-18, 1e10),
    "volume": (1e-27, 1e15),
    "stiffness": (1e-6, 1e15),
    "damping": (1e-6, 1e12),
    "inertia": (1e-15, 1e12),
    "rotational_stiffness": (1e-9, 1e15),
    "rotational_damping": (1e-9, 1e12),
    "torque": (1e-9, 1e15),
    "force": (1e-9, 1e12),
    "speed": (1e-9, 1e4),
    "acceleration": (1e-12, 1e7),
    "frequency": (1e-9, 1e7),
    "angular_speed": (1e-9, 1e7),
    "angle": (1e-12, 1e6),
    "pressure": (1e-6, 1e14),
    "area_moment": (1e-24, 1e8),
    "flexural_rigidity": (1e-9, 1e16),
    "density": (1e-6, 1e6),
    "linear_density": (1e-9, 1e9),
    "spatial_frequency": (1e-9, 1e6),
}

#: Longest ``${...}`` expression (characters) and deepest nesting of it.
MAX_EXPRESSION_CHARS = 2000
MAX_EXPRESSION_DEPTH = 50
#: Longest chain of parameters defined through each other.
MAX_PARAMETER_CHAIN = 50
#: Largest power of a unit (``m^4`` is the largest any field needs).
MAX_UNIT_POWER = 12

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
        return Quantity(_finite(self.value + o.value), self.dim)

    def __sub__(self, o: Quantity) -> Quantity:
        self._same(o, "subtract")
        return Quantity(_finite(self.value - o.value), self.dim)

    def __mul__(self, o: Quantity) -> Quantity:
        return Quantity(_finite(self.value * o.value), _dim_add(self.dim, o.dim, 1))

    def __truediv__(self, o: Quantity) -> Quantity:
        if o.value == 0.0:
            raise ValueError("division by zero")
        return Quantity(_finite(self.value / o.value), _dim_add(self.dim, o.dim, -1))

    def __pow__(self, o: Quantity) -> Quantity:
        if o.dim != NONE:
            raise ValueError("an exponent must be a plain number")
        e = o.value
        if not math.isfinite(e) or (self.dim != NONE and abs(e) > MAX_UNIT_POWER):
            raise ValueError(f"{_dim_text(self.dim)} to the power {e:g} has no unit"
                             if self.dim != NONE else "the exponent is not a finite number")
        dim = tuple(d * e for d in self.dim)
        if any(abs(d - round(d)) > 1e-12 for d in dim):
            raise ValueError(f"{_dim_text(self.dim)} to the power {e:g} has no unit")
        if self.value < 0 and e != int(e):
            raise ValueError("fractional power of a negative number")
        if self.value == 0 and e < 0:
            raise ValueError("zero to a negative power")
        try:
            value = self.value ** e
        except OverflowError:
            raise ValueError("the power overflows") from None
        return Quantity(_finite(value), tuple(int(round(d)) for d in dim))

    def __neg__(self) -> Quantity:
        return Quantity(-self.value, self.dim)


def _finite(value: float) -> float:
    """``value``, or ValueError when an operation overflowed (inf) or lost its meaning (nan)."""
    if value - value != 0.0:  # inf or nan
        raise ValueError("the result overflows (too large a number)")
    return value


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
    raise ValueError(f"unknown unit {shown(name)}")


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
            raise ValueError(f"bad unit {shown(text)}")
        for w in words:
            m = _FACTOR.match(w)
            if not m:
                raise ValueError(f"bad unit {shown(text)}")
            f, d = _unit_factor(m.group(1))
            power = m.group(2) or "1"
            p = int(power) if len(power) < 5 else MAX_UNIT_POWER + 1
            if abs(p) > MAX_UNIT_POWER:
                raise ValueError(f"the unit power {m.group(1)}^{power[:6]} is beyond "
                                 f"{MAX_UNIT_POWER}")
            factor *= f ** (sign * p)
            dim = _dim_add(dim, tuple(x * p for x in d), sign)
    if not 1e-60 < factor < 1e60:
        raise ValueError(f"the unit {shown(text)} is out of range")
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


@functools.lru_cache(maxsize=4096)
def _lex(text: str) -> tuple[tuple[str, str], ...]:
    """The tokens of an expression (cached: a large file repeats the same few)."""
    if len(text) > MAX_EXPRESSION_CHARS:
        raise ValueError(f"the expression has {len(text)} characters; the limit is "
                         f"{MAX_EXPRESSION_CHARS}")
    out, pos = [], 0
    text = text.rstrip()
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if not m or m.end() == pos:
            raise ValueError(f"unexpected {shown(text[pos:].strip()[:10])}")
        kind = m.lastgroup or "op"
        tok = m.group(kind)
        if kind == "num" and not math.isfinite(float(tok)):
            raise ValueError(f"the number {shown(tok)[1:-1]} is too large")
        out.append((kind, "**" if tok == "^" else tok))
        pos = m.end()
    return tuple(out)


class _Parser:
    """Recursive descent over: expr = term (('+'|'-') term)*;
    term = unary (('*'|'/') unary)*; unary = '-' unary | power;
    power = atom ('**' unary)?; atom = number | name | name '(' args ')' | '(' expr ')'.
    Nesting (parentheses, function calls, signs, exponents) is limited to
    :data:`MAX_EXPRESSION_DEPTH` levels, far inside Python's recursion limit."""

    def __init__(self, text: str, lookup: Callable[[str], Quantity]):
        self.tokens = _lex(text)
        self.i = 0
        self.depth = 0
        self.lookup = lookup

    def _enter(self) -> None:
        self.depth += 1
        if self.depth > MAX_EXPRESSION_DEPTH:
            raise ValueError(f"the expression nests more than {MAX_EXPRESSION_DEPTH} levels "
                             "deep (parentheses, functions, signs or powers)")

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
            raise ValueError(f"unexpected {shown(self.tokens[self.i][1])}")
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
        if self.peek() not in ("-", "+"):
            return self.power()
        sign = self.take()[1]
        self._enter()
        q = self.unary()
        self.depth -= 1
        return -q if sign == "-" else q

    def power(self) -> Quantity:
        q = self.atom()
        if self.peek() == "**":
            self.take()
            self._enter()
            q = q ** self.unary()
            self.depth -= 1
        return q

    def nested(self) -> Quantity:
        """An expression inside parentheses or a function's argument list."""
        self._enter()
        q = self.expr()
        self.depth -= 1
        return q

    def atom(self) -> Quantity:
        kind, tok = self.take()
        if kind == "num":
            return Quantity(float(tok))
        if kind == "name":
            if self.peek() == "(":
                if tok not in _FUNCS:
                    raise ValueError(f"unknown function {shown(tok)} (known: {', '.join(_FUNCS)})")
                self.take()
                args = [self.nested()]
                while self.peek() == ",":
                    self.take()
                    args.append(self.nested())
                if self.take()[1] != ")":
                    raise ValueError("missing ')'")
                if tok not in ("min", "max") and len(args) != 1:
                    raise ValueError(f"{tok}() takes one argument")
                return _FUNCS[tok](*args)
            if tok == "pi":
                return Quantity(math.pi)
            return self.lookup(tok)
        if tok == "(":
            q = self.nested()
            if self.take()[1] != ")":
                raise ValueError("missing ')'")
            return q
        raise ValueError(f"unexpected {shown(tok)}")


_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")
_EXPR = re.compile(r"^\s*\$\{(.*)\}\s*(.*?)\s*$", re.S)
_ONE_NAME = re.compile(r"\s*([A-Za-z_][A-Za-z_0-9]*)\s*")


def parse_quantity(value: object,
                   parameters: Mapping[str, Quantity] | Callable[[str], Quantity] | None = None,
                   ) -> Quantity:
    """Read a number, ``"value unit"`` or ``"${expr} [unit]"`` as a Quantity.

    A bare number is dimensionless here; :func:`to_si` reads a plain number
    as SI in whatever dimension the field asks for. Raises ValueError with
    the reason; the value of a Quantity returned is always finite.
    """
    if isinstance(value, Quantity):
        return value
    if isinstance(value, bool) or value is None:
        raise ValueError("not a number")
    if isinstance(value, int | float):
        try:
            v = float(value)
        except OverflowError:
            raise ValueError("the number is too large") from None
        if not math.isfinite(v):
            raise ValueError("not a finite number")
        return Quantity(v)
    if not isinstance(value, str):
        raise ValueError("not a number")
    if "${" not in value:
        return _number_with_unit(value)
    m = _EXPR.match(value)
    if not m:
        raise ValueError("not a number with a unit, nor ${expression} [unit]")
    if callable(parameters):
        lookup = parameters
    else:
        table = parameters or {}

        def lookup(name: str) -> Quantity:
            if name not in table:
                raise ValueError(f"unknown parameter {shown(name)}")
            return table[name]
    name = _ONE_NAME.fullmatch(m.group(1)) if len(m.group(1)) <= MAX_EXPRESSION_CHARS else None
    if name and name.group(1) != "pi":   # ${name} alone, the common case: no parser needed
        return _with_unit(lookup(name.group(1)), m.group(2))
    return _with_unit(_Parser(m.group(1), lookup).parse(), m.group(2))


@functools.lru_cache(maxsize=4096)
def _number_with_unit(value: str) -> Quantity:
    """``"21 kN/m"`` as a Quantity (cached: a large file repeats the same few)."""
    m = _NUMBER.match(value)
    if not m:
        raise ValueError("not a number with a unit")
    if len(m.group(1)) > 100:
        raise ValueError("a number of more than 100 characters")
    return _with_unit(Quantity(float(m.group(1))), m.group(2))


def _with_unit(q: Quantity, unit: str) -> Quantity:
    """``q`` times the unit written after it; ValueError when the product is not finite."""
    if unit:
        f, d = parse_unit(unit)
        q = Quantity(q.value * f, _dim_add(q.dim, d, 1))
    if not math.isfinite(q.value):
        raise ValueError("not a finite number (too large)")
    return q


_SIGN_WORDS = {"positive": "positive ", "nonnegative": "non-negative "}


def to_si(value: object, dimension: str, where: Where | None = None,
          parameters: Mapping[str, Quantity] | None = None,
          sign: str = "any") -> float:
    """``value`` as an SI float of the named ``dimension``.

    ``sign`` is ``"any"``, ``"positive"`` or ``"nonnegative"``. Errors are
    InputError at ``where`` worded for the user, e.g.
    ``must be a positive mass, got "-3 kg"``. The value returned is finite,
    not subnormal, at most the largest size of :data:`MAGNITUDES` and, when
    positive or non-negative and not zero, at least its smallest size.
    """
    cls = value.__class__
    if cls is float or cls is int:   # a bare number (SI): the common case, kept short
        try:
            v = float(value)
        except OverflowError:
            raise _refused(value, dimension, sign, "the number is too large", where) from None
    else:
        try:
            q = parse_quantity(value, parameters)
        except ValueError as exc:
            raise _refused(value, dimension, sign, str(exc), where) from None
        if q.dim != DIMENSIONS[dimension][0] and not (
                q.dim == NONE and _is_plain(value, parameters)):
            raise _refused(value, dimension, sign, _dim_text(q.dim), where)
        v = q.value
    if (sign == "positive" and not v > 0) or (sign == "nonnegative" and v < 0) \
            or v - v != 0.0:
        raise _refused(value, dimension, sign, "" if v - v == 0.0 else "not a finite number",
                       where)
    low, high = _BOUNDS[dimension]
    size = abs(v)
    if size > high or (size < (_SMALLEST if sign == "any" else low) and v != 0.0):
        raise _refused(value, dimension, sign, _size_problem(v, dimension, sign), where)
    return v


def _size_problem(v: float, dimension: str, sign: str) -> str:
    """Why ``v`` (SI) is out of the plausible range of its dimension, or ``""``."""
    size = abs(v)
    low, high = MAGNITUDES.get(dimension, (0.0, math.inf))
    low = max(low, _SMALLEST) if sign != "any" else _SMALLEST
    if size <= high and (size >= low or v == 0.0):
        return ""
    unit = _SI_UNITS.get(DIMENSIONS[dimension][0], "SI")
    if size > high:
        return f"{v:.3g} {unit} is beyond any machine; the largest accepted is {high:g}"
    if sign == "any":
        return f"{v:.3g} {unit} is below the smallest normal number; write 0"
    zero = ", or write 0" if sign == "nonnegative" else ""
    return f"{v:.3g} {unit} is implausibly small; the smallest accepted is {low:g}{zero}"


#: The smallest normal float: anything smaller (subnormal) is refused.
_SMALLEST = 2.2250738585072014e-308
_BOUNDS = {name: (max(MAGNITUDES.get(name, (0.0, math.inf))[0], _SMALLEST),
                  MAGNITUDES.get(name, (0.0, math.inf))[1]) for name in DIMENSIONS}
_SI_UNITS: dict[Dim, str] = {
    NONE: "", MASS: "kg", LENGTH: "m", TIME: "s", STIFFNESS: "N/m", (1, 0, -1): "N s/m",
    (1, 2, 0): "kg m^2", (1, 2, -2): "N m", (1, 2, -1): "N m s", (1, 1, -2): "N",
    (0, 1, -1): "m/s", (0, 1, -2): "m/s^2", (0, 0, -1): "1/s", (1, -1, -2): "Pa",
    (0, 2, 0): "m^2", (0, 3, 0): "m^3", (0, 4, 0): "m^4", (1, 3, -2): "N m^2",
    (1, -3, 0): "kg/m^3", (1, -1, 0): "kg/m", (0, -1, 0): "1/m",
}


def _refused(value: object, dimension: str, sign: str, reason: str,
             where: Where | None) -> InputError:
    """``must be a positive mass, got "-3 kg" (reason)``."""
    noun = DIMENSIONS[dimension][1]
    adj = _SIGN_WORDS.get(sign, "")
    article = "an" if (adj or noun)[0] in "aeiou" else "a"
    if isinstance(value, bool) or value is None:
        text = "nothing" if value is None else str(value).lower()
    elif isinstance(value, Quantity):
        text = f"{value.value:g}"
    else:
        text = shown(value)
    tail = f" ({reason})" if reason else ""
    return InputError(f"must be {article} {adj}{noun}, got {text}{tail}", where)


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
            raise ValueError(f"unknown parameter {shown(name)}")
        if name in active:
            raise ValueError("parameters refer to each other in a cycle: "
                             + " -> ".join([*active[active.index(name):], name]))
        if len(active) >= MAX_PARAMETER_CHAIN:
            raise ValueError(f"parameters refer to each other more than {MAX_PARAMETER_CHAIN} "
                             "deep")
        active.append(name)
        try:
            done[name] = parse_quantity(raw[name], get)
        finally:
            active.pop()
        return done[name]

    for name in raw:
        if not re.fullmatch(r"[A-Za-z_][A-Za-z_0-9]*", str(name)) or name == "pi":
            raise InputError("a parameter name must be letters, digits and _ "
                             f"(and not pi), got {shown(name)}", where(name))
        try:
            get(name)
        except ValueError as exc:
            raise InputError(f"bad value {shown(raw[name])} ({exc})", where(name)) from None
    return done
