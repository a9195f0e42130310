"""The formatting helper: counts, signless zeros, engineering units, tables.

Outside references: the unit factors are the SI definitions (1 kN = 1000 N,
1 km/h = 1/3.6 m/s, 1 rpm = 2 pi / 60 rad/s, 1 deg = pi / 180 rad); the space
between a number and "%" follows ISO 80000-1 (7.2); English plurals of the
nouns used here are ordinary grammar.
"""

from __future__ import annotations

import doctest
import math

import pytest

from builder import formatting
from builder.formatting import (
    count,
    engineering_unit_of,
    in_unit,
    number,
    percent,
    quantity_text,
    text_table,
)


def test_docstring_examples_run():
    assert doctest.testmod(formatting).failed == 0


@pytest.mark.parametrize(("n", "noun", "text"), [
    (1, "DOF", "1 DOF"), (2, "DOF", "2 DOFs"), (0, "mode", "0 modes"), (1, "body", "1 body"),
    (3, "body", "3 bodies"), (2, "axis", "2 axes"), (2, "key", "2 keys"), (2, "box", "2 boxes"),
])
def test_counts_agree_with_their_noun(n, noun, text):
    assert count(n, noun) == text


@pytest.mark.parametrize(("value", "spec", "text"), [
    (-0.0001, ".2f", "0.00"), (-0.0, ".3f", "0.000"), (-0.004, "8.2f", "    0.00"),
    (-0.006, ".2f", "-0.01"), (-1e-9, ".4g", "-1e-09"), (-2.5, ".1f", "-2.5"),
    (float("nan"), ".2f", "-"), (None, ".2f", "-"),
])
def test_a_value_rounding_to_zero_has_no_sign(value, spec, text):
    assert number(value, spec) == text


def test_percent_uses_the_si_space_and_no_negative_zero():
    assert percent(0.1234) == "12.3 %"
    assert percent(-0.00001, 2) == "0.00 %"
    assert percent(0.05, 2, signed=True) == "+5.00 %"


def test_engineering_units_convert_by_the_si_definitions():
    assert in_unit(24000.0, "kN/m") == pytest.approx(24.0)
    assert quantity_text(83.7758040957278, "angular_speed") == "800 rpm"
    assert quantity_text(30 / 3.6, "speed") == "30 km/h"
    assert quantity_text(math.pi / 18, "angle") == "10 deg"
    assert quantity_text(1800.0, "damping") == "1800 N s/m"
    assert quantity_text(0.28, "length", unit="mm") == "280 mm"
    assert quantity_text(None, "mass") == "none"
    assert quantity_text("body", "name") == "'body'"


def test_si_units_map_to_their_engineering_unit():
    assert engineering_unit_of("N/m") == "kN/m"
    assert engineering_unit_of("m/s") == "km/h"
    assert engineering_unit_of("N s/m") == "N s/m"
    assert engineering_unit_of("Hz") == "Hz"
    assert engineering_unit_of("kN/m") == "kN/m"       # same dimension as N/m
    assert engineering_unit_of("furlong") == "furlong"  # unknown: kept


def test_table_columns_are_as_wide_as_their_longest_cell():
    long = "driver_occ_thighs_pelvis_lower_torso"
    text = text_table(["link", "deflection (mm)"], [["tyre_fl", 19.99], [long, -0.0001]],
                      spec=".2f")
    lines = text.splitlines()
    assert len({len(line) for line in lines}) == 1          # every line equally wide
    assert lines[2].startswith("tyre_fl ") and lines[3].startswith(long + "  ")
    assert lines[3].endswith(" 0.00")                       # right-aligned, no "-0.00"
