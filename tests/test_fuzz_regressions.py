"""Files that once crashed `lumpgraph modes` (tests/data/fuzz/): each now ends with exit
status 2 and one line `FILE:LINE: field: reason`, without a traceback."""

from pathlib import Path

import numpy as np
import pytest

DATA = Path(__file__).parent / "data" / "fuzz"

# file, line, field, words in the reason
CASES = [
    ("recursive_alias.yaml", 2, "bodies", "recursive alias"),
    ("recursive_merge.yaml", 3, "bodies.b", "recursive alias"),
    ("recursive_merge_in_links.yaml", 2, "links.a", "recursive alias"),
    ("deep_parentheses.yaml", 4, "bodies.b.mass", "the limit is 2000"),
    ("many_minus_signs.yaml", 4, "bodies.b.mass", "nests more than 50 levels"),
    ("nested_sqrt.yaml", 4, "bodies.b.mass", "the limit is 2000"),
    ("power_overflow.yaml", 4, "bodies.b.mass", "the power overflows"),
    ("zero_negative_power.yaml", 4, "bodies.b.mass", "zero to a negative power"),
    ("zero_difference_negative_power.yaml", 6, "bodies.wheel_fl.gyradius.z",
     "zero to a negative power"),
    ("infinite_exponent_of_unit.yaml", 6, "bodies.b.mass", "1e400 is too large"),
    ("negative_to_infinite_power.yaml", 4, "bodies.b.mass", "1e400 is too large"),
    ("unit_power_overflow.yaml", 5, "bodies.b.cg[2]", "unit power km^999"),
    ("huge_integer.yaml", 4, "bodies.b.mass", "401 characters"),
    ("integer_5000_digits.yaml", 4, "bodies.b.mass", "5000 characters"),
    ("damping_400_digits.yaml", 23, "links.suspension.damping", "401 characters"),
    ("deep_yaml_nesting.yaml", 5, "bodies.b.cg[0][0]", "more than 40 levels deep"),
    ("gyradius_1e308.yaml", 6, "bodies.b.gyradius.y", "beyond any machine"),
    ("wheel_gyradius_1e308.yaml", 13, "bodies.wheel_fr.gyradius.y", "beyond any machine"),
    ("stiffness_1e308.yaml", 9, "links.s.stiffness", "beyond any machine"),
    ("point_1e308.yaml", 9, "links.s.a.at[2]", "beyond any machine"),
    ("mount_point_-1e308.yaml", 23, "links.mount_right.a.at[2]", "beyond any machine"),
    ("engine_cg_1e308.yaml", 13, "plugins[0].with.cg[0]", "beyond any machine"),
    ("mass_1e-308.yaml", 5, "bodies.b.mass", "implausibly small"),
    ("wheel_mass_1e-308.yaml", 18, "bodies.wheel_rr.mass", "implausibly small"),
    ("seat_occupant_mass_1e-320.yaml", 61, "plugins[0].with.occupant_mass",
     "below the smallest normal number"),
]


@pytest.mark.parametrize("name, line, field, words", CASES, ids=[c[0] for c in CASES])
def test_crash_reproducer_ends_cleanly(name, line, field, words, run_cli):
    path = DATA / name
    code, out, err = run_cli("modes", path)
    assert code == 2, err
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith(f"{path}:{line}: {field}"), err
    assert words in lines[0], err
    assert len(lines[0]) < 400 + len(str(path)), err   # long values are cut


def test_every_reproducer_is_listed():
    assert {c[0] for c in CASES} == {p.name for p in DATA.glob("*.yaml")}


@pytest.mark.parametrize("tensor, words", [
    (np.diag([1.0, np.inf, 1.0]), "not finite"),              # 36 kg at a 1e308 m gyradius
    (np.full((3, 3), np.nan), "not finite"),
    (np.diag([1.0, 1e308, 1.0]), "triangle inequality"),
    (np.zeros((3, 3)), "zero"),
])
def test_inertia_check_gives_a_reason_and_never_raises(tensor, words):
    # numpy's eigvalsh raised LinAlgError ("did not converge") on an infinite entry.
    from builder.assembly import inertia_is_physical
    assert words in inertia_is_physical(tensor)


def test_inertia_check_at_any_scale():
    # Principal moments of [[a, b, 0], [b, a, 0], [0, 0, c]] are a - b, a + b, c (analytic):
    # 0.9, 1.1, 1.5 satisfy the triangle inequalities at any scale.
    from builder.assembly import inertia_is_physical
    t = np.array([[1.0, 0.1, 0], [0.1, 1.0, 0], [0, 0, 1.5]])
    assert inertia_is_physical(t * 1e300) == "" and inertia_is_physical(t * 1e-300) == ""
    assert "2.2" in inertia_is_physical(np.array([[1.0, 0.1, 0], [0.1, 1.0, 0], [0, 0, 2.2]]))
