"""Units and ${...} expressions.

Conversion factors are the SI definitions (BIPM SI Brochure, 9th edition):
1 km/h = 1000/3600 m/s, 1 deg = pi/180 rad, 1 rpm = 2 pi/60 rad/s,
1 kgf-free: 1 N = 1 kg m/s^2, prefixes k = 1e3, m = 1e-3, M = 1e6, G = 1e9.
"""

import math

import pytest

from builder.errors import InputError, Where
from builder.quantities import Quantity, parse_unit, resolve_parameters, to_si


@pytest.mark.parametrize("text, dim, expected", [
    ("21 kN/m", "stiffness", 21e3),
    ("1.5 kN s/m", "damping", 1.5e3),
    ("36 kg", "mass", 36.0),
    ("80 km/h", "speed", 80 / 3.6),
    ("760 mm", "length", 0.76),
    ("2.1e5 N/m", "stiffness", 2.1e5),
    ("120 N m/rad", "rotational_stiffness", 120.0),
    ("120 Nm/deg", "rotational_stiffness", 120 * 180 / math.pi),
    ("3.0e6 N m^2", "flexural_rigidity", 3.0e6),
    ("210 GPa", "pressure", 210e9),
    ("5 cm^4", "area_moment", 5e-8),
    ("800 rpm", "angular_speed", 800 * 2 * math.pi / 60),
    ("9.81 m/s^2", "acceleration", 9.81),
    ("12 Hz", "frequency", 12.0),
    ("1 t", "mass", 1000.0),
    ("450 kg m^2", "inertia", 450.0),
    (1250, "mass", 1250.0),
])
def test_si_conversions(text, dim, expected):
    # SI definitions (BIPM SI Brochure): exact factors
    assert to_si(text, dim) == pytest.approx(expected, rel=1e-12)


def test_expression_arithmetic_and_dimensions():
    params = resolve_parameters(
        {"k": "20 kN/m", "m": "300 kg", "f": "${sqrt(k / m) / (2 * pi)}", "k2": "${k * 1.1}",
         "half": "${2 ** -1}"}, lambda n: Where("t.yaml", 1, f"parameters.{n}"))
    # f = sqrt(k/m)/(2 pi) by hand (analytic)
    assert params["f"].value == pytest.approx(math.sqrt(20e3 / 300) / (2 * math.pi))
    assert params["f"].dim == (0, 0, -1)
    assert to_si("${k2}", "stiffness", parameters=params) == pytest.approx(22e3)
    assert to_si("${half} m", "length", parameters=params) == 0.5
    assert to_si("${-3 * (1 + 1)}", "dimensionless") == -6


@pytest.mark.parametrize("text, dim, message", [
    ("-3 kg", "mass", 'must be a positive mass, got "-3 kg"'),
    ("3 m", "mass", "a length"),
    ("3 furlongs", "length", "unknown unit"),
    ("${k +}", "stiffness", "ends too early"),
    ("${__import__('os')}", "length", "unexpected"),
    ("${k * m}", "stiffness", "kg^2"),
    ("${nope}", "length", "unknown parameter"),
    ("${sqrt(-1)}", "length", "sqrt of a negative"),
    ("${1/0}", "length", "division by zero"),
    ("inf", "length", "not a number"),
])
def test_bad_quantities(text, dim, message):
    params = {"k": Quantity(1.0, (1, 0, -2)), "m": Quantity(2.0, (1, 0, 0))}
    with pytest.raises(InputError) as err:
        to_si(text, dim, Where("f.yaml", 3, "x"), params, "positive")
    assert message in str(err.value)
    assert str(err.value).startswith("f.yaml:3: x: ")


def test_parameter_cycle_is_refused():
    with pytest.raises(InputError, match="cycle"):
        resolve_parameters({"a": "${b}", "b": "${a}"}, lambda n: Where("t", 1, n))


def test_unit_parser_denominator_rule():
    # engineers' reading: everything after "/" is in the denominator:
    # kg/m s = kg/(m s), the SI unit of dynamic viscosity (Pa s)
    factor, dim = parse_unit("kg/m s")
    assert factor == 1.0 and dim == parse_unit("Pa s")[1] == (1, -1, -1)


# -- robustness: every value to_si returns is finite and plausible (issue 12) ---------------

@pytest.mark.parametrize("text, dim, sign, message", [
    ("${10**400}", "mass", "positive", "the power overflows"),
    ("${1e300 * 1e300}", "length", "any", "overflows"),
    ("${1e300 / 1e-300}", "length", "any", "overflows"),
    ("5 km^999", "length", "any", "unit power km^999"),
    ("5 m^99999999999999999999", "length", "any", "unit power"),
    ("${0**-1}", "mass", "positive", "zero to a negative power"),
    ("${(k - k)**-1}", "length", "any", "zero to a negative power"),
    ("${k**1e400}", "mass", "any", "1e400 is too large"),
    ("${(-2)**1e400}", "mass", "any", "1e400 is too large"),
    ("${k**20}", "stiffness", "any", "has no unit"),
    ("1e400 kg", "mass", "any", "not a finite number"),
    ("1e-308 kg", "mass", "positive", "implausibly small; the smallest accepted is 1e-06"),
    ("1e-320", "length", "any", "below the smallest normal number; write 0"),
    ("1e308", "length", "any", "beyond any machine; the largest accepted is 100000"),
    ("1e30 N/m", "stiffness", "nonnegative", "beyond any machine"),
    ("1e-30 N/m", "stiffness", "nonnegative", "implausibly small; the smallest accepted is "
                                              "1e-06, or write 0"),
    ("${" + "(" * 60 + "1" + ")" * 60 + "}", "mass", "any", "nests more than 50 levels"),
    ("${" + "-" * 60 + "1}", "mass", "any", "nests more than 50 levels"),
    ("${" + "sqrt(" * 60 + "1" + ")" * 60 + "}", "mass", "any", "nests more than 50 levels"),
    ("${" + "2**" * 60 + "1}", "dimensionless", "any", "nests more than 50 levels"),
    ("${" + "1+" * 1500 + "1}", "mass", "any", "the limit is 2000"),
], ids=lambda v: v[:24] if isinstance(v, str) else None)
def test_overflow_and_absurd_sizes_are_refused(text, dim, sign, message):
    # Python raised OverflowError, ZeroDivisionError or RecursionError on these, or
    # returned inf/nan/subnormal values that broke the eigen-solvers downstream.
    params = {"k": Quantity(1000.0, (1, 0, -2))}
    with pytest.raises(InputError) as err:
        to_si(text, dim, Where("f.yaml", 3, "x"), params, sign)
    assert message in str(err.value), str(err.value)
    assert len(str(err.value)) < 300


@pytest.mark.parametrize("value", [10 ** 400, 9 ** 5000], ids=["400 digits", "4772 digits"])
def test_huge_python_integers(value):
    # float(10**400) raised OverflowError; repr of a 5000-digit int raises ValueError.
    with pytest.raises(InputError) as err:
        to_si(value, "mass", Where("f.yaml", 3, "x"), None, "positive")
    assert "too large" in str(err.value) and len(str(err.value)) < 200


@pytest.mark.parametrize("text, dim, expected", [
    ("${" + "(" * 40 + "2" + ")" * 40 + "} kg", "mass", 2.0),
    ("${-(-(-(-3)))} m", "length", 3.0),
    ("${0.3 - 0.1 * 3} m", "length", 0.3 - 0.1 * 3),   # rounding leaves -5.6e-17: accepted
    ("0", "length", 0.0),
    ("1e-6 kg", "mass", 1e-6),
    ("2.1e11 Pa", "pressure", 2.1e11),
    ("1e12 N/m", "stiffness", 1e12),
], ids=lambda v: v[:24] if isinstance(v, str) else None)
def test_plausible_values_still_pass(text, dim, expected):
    assert to_si(text, dim, sign="any") == pytest.approx(expected, rel=1e-15, abs=0)


def test_long_parameter_chain_is_refused_not_recursed():
    raw = {f"p{i}": f"${{p{i + 1}}}" for i in range(2000)}
    raw["p2000"] = "1 m"
    with pytest.raises(InputError, match="more than 50 deep"):
        resolve_parameters(raw, lambda n: Where("t", 1, n))


def test_long_values_are_cut_and_escapes_shown():
    with pytest.raises(InputError) as err:
        to_si("\x1b[31m" + "9" * 5000 + " kg", "mass", Where("f.yaml", 3, "x"))
    text = str(err.value)
    assert "\x1b" not in text and "\\x1b[31m" in text
    assert len(text) < 200 and "..." in text
