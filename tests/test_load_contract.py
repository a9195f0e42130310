"""Holes in the file contract (issue 11, items 8 and 9): inertia only where a body rotates;
``bodies:`` empty or absent when plugins add the bodies; plugin errors carry their place."""

import math

import numpy as np
import pytest
import scipy.linalg
from conftest import ASSEMBLIES

from builder.analysis.modes import compute_modes
from builder.errors import InputError
from builder.linear import assemble
from builder.load import load_text

QUARTER = """format: 1
motion: bounce
bodies:
  body: {mass: 300 kg, cg: [0, 0, 0.55]}
  wheel: {mass: 36 kg, cg: [0, 0, 0.30]}
road:
  contact: {at: [0, 0, 0]}
links:
  suspension: {type: spring, a: body, b: wheel, axis: z, stiffness: 21 kN/m}
  tyre: {type: spring, a: wheel, b: road.contact, axis: z, stiffness: 210 kN/m}
"""


def test_translation_only_bodies_need_no_inertia():
    # Undamped quarter car, analytic: the eigenvalues of M^-1 K with
    # M = diag(ms, mu), K = [[ks, -ks], [-ks, ks + kt]] (any vibration textbook,
    # e.g. Gillespie, Fundamentals of Vehicle Dynamics, ch. 5).
    ms, mu, ks, kt = 300.0, 36.0, 21e3, 210e3
    lam = scipy.linalg.eigh(np.array([[ks, -ks], [-ks, ks + kt]]), np.diag([ms, mu]),
                            eigvals_only=True)
    asm = load_text(QUARTER)
    assert np.all(asm.bodies["wheel"].inertia == 0)
    modes = compute_modes(assemble(asm))
    assert modes.frequencies_hz[:2] == pytest.approx(np.sqrt(lam) / (2 * math.pi), rel=1e-9)


def test_a_rotating_body_still_needs_its_inertia():
    text = QUARTER.replace("motion: bounce", "motion: planar")
    with pytest.raises(InputError) as err:
        load_text(text, "q.yaml")
    assert str(err.value).startswith('q.yaml:4: bodies.body: missing required key "inertia"')
    assert "rotation DOFs" in str(err.value)
    # a body that lists only translations is a point mass, whatever the motion setting
    text = text.replace("cg: [0, 0, 0.30]}", "cg: [0, 0, 0.30], dofs: [z]}").replace(
        "cg: [0, 0, 0.55]}", "cg: [0, 0, 0.55], gyradius: {x: 0.5, y: 1.1, z: 1.2}}")
    assert load_text(text).dof_labels == ("body.z", "body.ry", "wheel.z")


def test_an_inertia_given_to_a_translating_body_is_still_checked():
    text = QUARTER.replace("cg: [0, 0, 0.30]}", "cg: [0, 0, 0.30], "
                           "inertia: {xx: 1, yy: 1, zz: 5}}")
    with pytest.raises(InputError, match="triangle inequality"):
        load_text(text, "q.yaml")


def _grounded_engine(bodies: str) -> str:
    from test_engine import engine_yaml
    lines = engine_yaml(attach="ground").splitlines()
    start, end = lines.index("bodies:"), lines.index("plugins:")
    return "\n".join(lines[:start] + ([bodies] if bodies else []) + lines[end:]) + "\n"


@pytest.mark.parametrize("bodies", ["", "bodies: {}", "bodies:"])
def test_plugins_may_add_every_body(bodies):
    # An engine on three mounts on a test rig: the six frequencies equal those of the
    # sympy.physics.mechanics (Kane) model of tests/reference/sympy_mounts.py.
    from test_engine import reference
    M_ref, _, K_ref = reference()
    expected = np.sqrt(scipy.linalg.eigh(K_ref, M_ref, eigvals_only=True)) / (2 * math.pi)
    asm = load_text(_grounded_engine(bodies))
    assert list(asm.bodies) == ["pt"]
    got = compute_modes(assemble(asm)).frequencies_hz
    assert got == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize("text, line", [
    ("format: 1\nname: nothing\n", 1),
    ("format: 1\nbodies: {}\n", 2),
    ("format: 1\nbodies:\nlinks: {}\n", 2),
])
def test_a_file_without_any_body_is_refused(text, line, write_yaml, run_cli):
    path = write_yaml(text)
    code, out, err = run_cli("check", path)
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1, err
    assert err.startswith(f"{path}:{line}: bodies: the file defines no body and no plugin "
                          "adds one"), err


def test_plugin_error_names_file_line_and_field(write_yaml, run_cli):
    # The seat plugin found its body missing only when it ran, and its error named no file.
    text = (ASSEMBLIES / "compact_car_seat.yaml").read_text().replace(
        "      body: body\n", "      body: cabin\n")
    path = write_yaml(text)
    code, _, err = run_cli("check", path)
    line = text[:text.index("      body: cabin")].count("\n") + 1     # the field's own line
    assert code == 2 and len(err.strip().splitlines()) == 1, err
    assert err.startswith(f'{path}:{line}: plugins[0].with.body: seat body "cabin" is not a '
                          "body"), err


def test_city_bus_fixture_loads_with_point_masses_and_plugins():
    # An invented 12 m bus (tests/data/models/city_bus.yaml): beam axles with roll, a ramp
    # that only bounces (no inertia given), a rear engine and the driver's seat by plugins.
    from pathlib import Path

    from builder.load import load_assembly
    from builder.reduce import reduce_to_depth
    asm = load_assembly(Path(__file__).parent / "data" / "models" / "city_bus.yaml")
    assert not asm.warnings
    assert asm.bodies["tag_mass"].dofs == ("z",) and not asm.bodies["tag_mass"].inertia.any()
    model = assemble(asm)
    assert len(model.dofs) == 25
    # Bounce, hand estimate (common practice, no source): each air spring in series with its
    # tyres, all springs in parallel, carrying every mass but the axles'.
    def series(a, b):
        return a * b / (a + b)
    k = 2 * series(250e3, 1.0e6) + 2 * series(350e3, 2.0e6)
    m = sum(b.mass for n, b in asm.bodies.items() if not n.startswith("axle"))
    f_hand = math.sqrt(k / m) / (2 * math.pi)
    f_bounce = compute_modes(reduce_to_depth(model, asm.depths["bounce"])).frequencies_hz[0]
    assert f_bounce == pytest.approx(f_hand, rel=0.03)
