"""Ideal joints: exact elimination against analytic statics and dynamics, constraint
exactness in every mode, redundant loops and mechanisms named, errors."""

import math

import numpy as np
import pytest

from builder.analysis.modes import compute_modes
from builder.elements.joint import constrained_directions
from builder.errors import InputError
from builder.linear import assemble
from builder.load import load_text
from builder.reduce import full_model, reduce_keep

TWO_PI = 2 * math.pi


def lever_text(a=0.4, k=1e4, m=10.0, d=0.5, jcg=1.0, joint="revolute",
               extra="") -> str:
    return f"""
format: 1
name: Lever on a hinge (invented)
motion: spatial
bodies:
  arm: {{mass: {m}, cg: [{d}, 0, 0], inertia: {{xx: 0.1, yy: {jcg}, zz: {jcg}}}}}
links:
  pivot: {{type: {joint}, a: {{body: arm, at: [0, 0, 0]}}, b: ground, axis: y}}
  spring:
    type: spring
    a: {{body: arm, at: [{a}, 0, 0]}}
    b: {{body: ground, at: [{a}, 0, -0.2]}}
    stiffness: {k}
{extra}
"""


def test_lever_wheel_rate_is_k_times_motion_ratio_squared():
    # Statics (analytic): an arm on a hinge, a spring k at distance a and a load at
    # distance b: the moment balance F b = k (a/b) x a gives the rate at b,
    # F / x = k (a/b)^2; the spring moves a/b of the load point (the motion ratio).
    a, b, k = 0.4, 0.9, 1e4
    model = assemble(load_text(lever_text(a=a, k=k)))
    assert model.n == 1 and model.joints is not None
    f = model.force_input("arm", np.array([b, 0, 0]), "z")
    x = np.linalg.solve(model.K.toarray(), f)
    z_b = (model.body_map("arm", np.array([b, 0, 0])).toarray() @ x)[2]
    assert 1.0 / z_b == pytest.approx(k * (a / b) ** 2, rel=1e-12)
    spring = model.links["spring"]
    stroke = (spring.q_rows() @ model.expansion @ x)[0]
    assert abs(stroke / z_b) == pytest.approx(a / b, rel=1e-12)


def test_hinged_bar_frequency():
    # Analytic: a rigid bar on a hinge, spring k at a: omega^2 = k a^2 / J_pivot with
    # J_pivot = J_cg + m d^2 (parallel-axis theorem).
    a, k, m, d, jcg = 0.4, 1e4, 10.0, 0.5, 1.0
    modes = compute_modes(assemble(load_text(lever_text(a, k, m, d, jcg))))
    assert modes.frequencies_hz[0] == pytest.approx(
        math.sqrt(k * a * a / (jcg + m * d * d)) / TWO_PI, rel=1e-12)


FREE = {  # the spec's table: relative motions each joint leaves free (t: translation)
    "spherical": 3, "revolute": 1, "cylindrical": 2, "prismatic": 1, "universal": 2,
    "planar": 3}


@pytest.mark.parametrize("kind", list(FREE))
def test_each_joint_leaves_the_motions_of_the_format_table(kind):
    # The format's table (docs/format.md): a body on a joint to ground keeps exactly
    # the listed relative motions; checked on the expanded motion at the joint point.
    axis = {"spherical": "", "universal": "axes: [[1, 0, 0], [0, 1, 0]]"}.get(
        kind, ("normal" if kind == "planar" else "axis") + ": [0, 0.6, 0.8]")
    text = f"""
format: 1
motion: spatial
bodies:
  b: {{mass: 5, cg: [0.1, 0.2, 0.3], inertia: {{xx: 1, yy: 1.2, zz: 0.9}}}}
links:
  j: {{type: {kind}, a: {{body: b, at: [0.5, -0.1, 0.2]}}, b: ground, {axis}}}
"""
    model = assemble(load_text(text))
    assert model.n == FREE[kind]
    motion = model.body_map("b", np.array([0.5, -0.1, 0.2])).toarray()   # 6 x n
    link = model.assembly.links["j"]
    rows = np.array([np.r_[d, 0, 0, 0] if t == "t" else np.r_[0, 0, 0, d]
                     for t, d in constrained_directions(kind, link.props)])
    assert np.abs(rows @ motion).max() < 1e-14
    assert np.linalg.matrix_rank(motion) == FREE[kind]
    u = np.array([0, 0.6, 0.8])
    if kind in ("revolute", "cylindrical"):       # rotation about the axis is free
        assert np.linalg.matrix_rank(np.column_stack([motion, np.r_[0, 0, 0, u]])) == \
            FREE[kind]
    if kind in ("prismatic", "cylindrical"):      # translation along the axis is free
        assert np.linalg.matrix_rank(np.column_stack([motion, np.r_[u, 0, 0, 0]])) == \
            FREE[kind]


WISHBONE = """
format: 1
name: Double wishbone on a fixed body (invented)
motion: spatial
bodies:
  upper: {mass: 2, cg: [0, 0.45, 0.55], inertia: {xx: 0.02, yy: 0.01, zz: 0.02}}
  lower: {mass: 4, cg: [0, 0.40, 0.20], inertia: {xx: 0.05, yy: 0.02, zz: 0.05}}
  knuckle: {mass: 30, cg: [0, 0.70, 0.32], inertia: {xx: 0.8, yy: 0.9, zz: 0.6}}
road:
  contact: {at: [0, 0.76, 0]}
links:
  upper_front: {type: revolute, a: {body: upper, at: [0.15, 0.30, 0.55]}, b: ground, axis: x}
  upper_rear: {type: revolute, a: {body: upper, at: [-0.15, 0.30, 0.55]}, b: ground, axis: x}
  lower_front: {type: revolute, a: {body: lower, at: [0.2, 0.20, 0.20]}, b: ground, axis: x}
  upper_ball: {type: spherical, a: {body: upper, at: [0, 0.62, 0.55]}, b: {body: knuckle, at: [0, 0.62, 0.55]}}
  lower_ball: {type: spherical, a: {body: lower, at: [0, 0.72, 0.18]}, b: {body: knuckle, at: [0, 0.72, 0.18]}}
  steer: {type: spring, a: {body: knuckle, at: [-0.12, 0.68, 0.30]}, b: {body: ground, at: [-0.12, 0.35, 0.30]}, stiffness: 5 MN/m}
  spring: {type: spring, a: {body: lower, at: [0, 0.55, 0.20]}, b: {body: ground, at: [0, 0.50, 0.60]}, stiffness: 30 kN/m, damping: 2 kN s/m}
  tyre: {type: spring, a: {body: knuckle, at: [0, 0.76, 0.0]}, b: road.contact, axis: z, stiffness: 220 kN/m}
  camber: {type: bushing, a: {body: knuckle, at: [0, 0.70, 0.32]}, b: {body: ground, at: [0, 0.70, 0.32]}, stiffness: {y: 1 kN/m}}
"""


def test_constraints_hold_in_every_mode_and_redundant_hinge_is_named():
    # Exactness: the relative motion each joint forbids is zero to round-off in every
    # mode (the constraint rows A applied to each expanded shape), including the rows
    # dropped as redundant (the second revolute of the upper arm repeats the first in
    # every row but one).
    model = assemble(load_text(WISHBONE))
    elim = model.joints
    assert elim is not None
    red = {r.joint for r in elim.redundant}
    assert red == {"upper_rear"}
    assert all(set(r.loop) >= {"upper_front", "upper_rear"} for r in elim.redundant)
    assert any("upper_rear" in w and "redundant" in w for w in model.warnings)
    modes = compute_modes(model)
    _assert_joints_hold(model, np.asarray(model.expansion @ modes.shapes))
    # three bodies (18 DOFs); the upper arm's two hinges share an axis, so all five
    # rows of the second repeat the first: 5 + 5 + 3 + 3 independent rows leave two
    # coordinates, wheel travel and steer (held by the steer spring)
    assert len(elim.redundant) == 5
    assert model.dofs == ("knuckle.z", "knuckle.rz")
    assert all(m.frequency_hz > 0.5 for m in modes.modes)


def _assert_joints_hold(model, phi):
    """Every joint's forbidden relative motion is zero to round-off in the root
    motions ``phi`` (columns)."""
    for link in model.assembly.links.values():
        if link.type not in FREE:
            continue
        p = np.asarray(link.a.at)
        rel = -(model.parent.body_map(link.a.node, p).toarray() @ phi)
        if link.b.node != "ground":
            rel = model.parent.body_map(link.b.node, p).toarray() @ phi + rel
        rows = np.array([np.r_[d, 0, 0, 0] if t == "t" else np.r_[0, 0, 0, d]
                         for t, d in constrained_directions(link.type, link.props)])
        assert np.abs(rows @ rel).max() < 1e-12 * np.abs(phi).max(), link.name


def test_a_joint_on_the_shared_body_holds_with_the_corners():
    # The linkage car (invented) with its body confined to the x-z plane by a planar
    # joint: the body is shared by many joints (solved with the corners' own groups
    # first, then with the planar joint); every joint holds in every mode, and the
    # body's in-plane modes are those of the free car (they do not use y, rx, rz).
    from conftest import ASSEMBLIES

    text = (ASSEMBLIES / "compact_car_linkage.yaml").read_text()
    free = compute_modes(assemble(load_text(text)))
    held = assemble(load_text(text.replace(
        "\nsensors:", "\n  slide: {type: planar, a: body, b: ground, normal: y}\n\nsensors:")))
    assert held.n == 9
    modes = compute_modes(held)
    _assert_joints_hold(held, np.asarray(held.expansion @ modes.shapes))
    bounce = [m.frequency_hz for m in free.modes if m.label.startswith("body bounce")]
    assert modes.frequencies_hz[0] == pytest.approx(bounce[0], rel=1e-9)


def test_mechanism_is_reported_with_the_bodies_that_move():
    # A rod between two spherical joints spins about its own axis: a free motion
    # no link resists (the classic tie-rod mechanism); it is named, with the rod.
    text = (WISHBONE.replace("  steer: {type: spring", "  steer_off: {type: spring") + """
  rod_a: {type: spherical, a: {body: rod, at: [0.1, 0.70, 0.30]}, b: {body: knuckle, at: [0.1, 0.70, 0.30]}}
  rod_b: {type: spherical, a: {body: rod, at: [0.1, 0.35, 0.30]}, b: ground}
""").replace("road:", """  rod: {mass: 1, cg: [0.1, 0.52, 0.30], inertia: {xx: 0.001, yy: 0.02, zz: 0.02}}
road:""")
    model = assemble(load_text(text))
    mech = model.joints.mechanisms
    assert len(mech) == 1 and mech[0].bodies == ("rod",)
    assert any(w.startswith("mechanism:") and "rod" in w for w in model.warnings)
    modes = compute_modes(model)
    assert modes.frequencies_hz[0] == pytest.approx(0.0, abs=1e-3)


def test_depths_condense_the_independent_coordinates():
    # Guyan over the eliminated coordinates: the one travel coordinate kept, the
    # steer condensed; the depth expands through both transforms to body motions.
    model = assemble(load_text(WISHBONE))
    kept = model.dofs[0]
    small = reduce_keep(model, [kept])
    assert small.n == 1 and full_model(small) is model
    assert small.expansion.shape == (model.parent.n, 1)


@pytest.mark.parametrize("snippet, message", [
    ("  j: {type: revolute, a: arm, b: ground}", 'missing required key "axis"'),
    ("  j: {type: universal, a: arm, b: ground, axes: [[1, 0, 0], [1, 1, 0]]}",
     "orthogonal"),
    ("  j: {type: universal, a: arm, b: ground, axes: [[1, 0, 0]]}", "two axes"),
    ("  j: {type: spherical, a: arm, b: road.r}", "road point"),
    ("  j: {type: planar, a: arm, b: ground, normal: [0, 0, 0]}", "zero vector"),
])
def test_bad_joints_are_one_line_errors(snippet, message):
    text = lever_text(extra=snippet).replace("links:", "road:\n  r: {at: [0, 0, 0]}\nlinks:")
    with pytest.raises(InputError) as err:
        load_text(text)
    assert message in str(err.value)
    assert "\n" not in str(err.value)


def test_a_sensor_on_a_joint_is_refused():
    text = lever_text() + "sensors:\n  s: {link: pivot, measure: force}\n"
    with pytest.raises(InputError, match="has no deflection"):
        load_text(text)
