"""Suspension figures (lumpgraph corner) against plane geometry and statics."""

import json
import math

import numpy as np
import pytest
from conftest import ASSEMBLIES

from builder.analysis.modes import compute_modes
from builder.analysis.suspension import suspension_figures
from builder.errors import InputError
from builder.linear import assemble
from builder.load import load_text

TWO_PI = 2 * math.pi


def trailing_arm_car(a=0.25, b=0.40, k=50e3, kt=200e3, m_arm=30.0, j_arm=0.8,
                     pivot_z=0.32, sprung_joint="") -> str:
    """A sprung body with two trailing arms (revolute about y), each with a vertical
    spring at a behind the pivot and the wheel centre at b (invented)."""
    arms = []
    for side, y in (("l", 0.7), ("r", -0.7)):
        arms.append(f"""
  arm_{side}: {{mass: {m_arm}, cg: [{-b}, {y}, {pivot_z}], inertia: {{xx: {j_arm}, yy: {j_arm}, zz: {j_arm}}}}}""")
    links = []
    for side, y in (("l", 0.7), ("r", -0.7)):
        links.append(f"""
  pivot_{side}: {{type: revolute, a: {{body: arm_{side}, at: [0, {y}, {pivot_z}]}}, b: {{body: body, at: [0, {y}, {pivot_z}]}}, axis: y}}
  spring_{side}: {{type: spring, a: {{body: arm_{side}, at: [{-a}, {y}, {pivot_z}]}}, b: {{body: body, at: [{-a}, {y}, {pivot_z + 0.3}]}}, stiffness: {k}, damping: 3000}}
  tyre_{side}: {{type: spring, a: {{body: arm_{side}, at: [{-b}, {y}, 0]}}, b: road.{side}, axis: z, stiffness: {kt}}}""")
    return f"""
format: 1
name: Trailing arms (invented)
motion: spatial
bodies:
  body: {{mass: 600, cg: [1.0, 0, 0.6], inertia: {{xx: 200, yy: 600, zz: 700}}}}{''.join(arms)}
road:
  l: {{at: [{-b}, 0.7, 0]}}
  r: {{at: [{-b}, -0.7, 0]}}
links:{''.join(links)}
{sprung_joint}
"""


def test_trailing_arm_lever_figures():
    # Statics of a lever (analytic): spring at a from the pivot, wheel at b: motion
    # ratio a/b, wheel rate k (a/b)^2, damping c (a/b)^2, ride rate in series with
    # the tyre. Kinetic energy: m_eff = J_pivot / b^2 with J_pivot = J_cg + m b^2.
    # Side view: the arm turns about its pivot, the instant centre; front view: no
    # roll, centre at infinity and the roll centre on the ground (plane geometry).
    a, b, k, kt, m, j = 0.25, 0.40, 50e3, 200e3, 30.0, 0.8
    fig = suspension_figures(assemble(load_text(trailing_arm_car(a, b, k, kt, m, j))))
    assert fig.sprung == "body"
    c = fig.corners[0]
    assert c.carrier == "arm_l" and c.bodies == ("arm_l",)
    spring = next(lk for lk in c.links if lk.link == "spring_l")
    assert spring.ratio == pytest.approx(a / b, rel=1e-12)
    assert c.wheel_rate == pytest.approx(k * (a / b) ** 2, rel=1e-12)
    assert c.wheel_damping == pytest.approx(3000 * (a / b) ** 2, rel=1e-12)
    kw = k * (a / b) ** 2
    assert c.ride_rate == pytest.approx(kw * kt / (kw + kt), rel=1e-12)
    assert c.effective_mass == pytest.approx((j + m * b * b) / b ** 2, rel=1e-12)
    assert c.side_ic == pytest.approx((0.0, 0.32), abs=1e-12)
    assert c.front_ic is None
    assert fig.axles[0].roll_centre == pytest.approx((0.0, 0.0), abs=1e-12)


def test_jointed_quarter_car_matches_the_lumped_one():
    # The jointed corner against the lumped quarter car built from its figures: the
    # sprung body on a prismatic joint (vertical only), an arm of negligible inertia
    # about its cg carrying the wheel mass at b; the two-DOF quarter car's
    # frequencies (roots of ms mu w^4 - (ms (kw + kt) + mu kw) w^2 + kw kt = 0,
    # analytic) with kw and mu from the corner figures.
    a, b, k, kt, m = 0.25, 0.40, 50e3, 200e3, 30.0
    text = trailing_arm_car(a, b, k, kt, m, 1e-6) + """
  slide: {type: prismatic, a: body, b: ground, axis: z}
"""
    # one corner: the right arm, its links and its road point left out
    lines = [ln for ln in text.splitlines() if "_r" not in ln and "r: {at:" not in ln]
    model = assemble(load_text("\n".join(lines)))
    assert model.n == 2
    fig = suspension_figures(model)
    kw, mu = fig.corners[0].wheel_rate, fig.corners[0].effective_mass
    ms = 600.0
    w2 = np.sort(np.roots([ms * mu, -(ms * (kw + kt) + mu * kw), kw * kt]).real)
    got = compute_modes(model).frequencies_hz
    assert got == pytest.approx(np.sqrt(w2) / TWO_PI, rel=1e-6)


def double_wishbone(upper_pivot=(0.40, 0.52), upper_ball=(0.66, 0.56),
                    lower_pivot=(0.32, 0.20), lower_ball=(0.72, 0.16)) -> str:
    """A heavy body with two mirrored double-wishbone corners, pivot axes along x."""
    parts, links = [], []
    for side, s in (("l", 1.0), ("r", -1.0)):
        up, ub, lp, lb = ((p[0] * s, p[1]) for p in (upper_pivot, upper_ball, lower_pivot,
                                                     lower_ball))
        parts.append(f"""
  upper_{side}: {{mass: 2, cg: [0, {(up[0] + ub[0]) / 2}, {(up[1] + ub[1]) / 2}], gyradius: {{x: 0.1, y: 0.1, z: 0.1}}}}
  lower_{side}: {{mass: 4, cg: [0, {(lp[0] + lb[0]) / 2}, {(lp[1] + lb[1]) / 2}], gyradius: {{x: 0.1, y: 0.12, z: 0.12}}}}
  knuckle_{side}: {{mass: 30, cg: [0, {0.72 * s}, 0.30], gyradius: {{x: 0.2, y: 0.25, z: 0.2}}}}""")
        links.append(f"""
  up_{side}: {{type: revolute, a: {{body: upper_{side}, at: [0, {up[0]}, {up[1]}]}}, b: {{body: body, at: [0, {up[0]}, {up[1]}]}}, axis: x}}
  lp_{side}: {{type: revolute, a: {{body: lower_{side}, at: [0, {lp[0]}, {lp[1]}]}}, b: {{body: body, at: [0, {lp[0]}, {lp[1]}]}}, axis: x}}
  ub_{side}: {{type: spherical, a: {{body: upper_{side}, at: [0, {ub[0]}, {ub[1]}]}}, b: {{body: knuckle_{side}, at: [0, {ub[0]}, {ub[1]}]}}}}
  lb_{side}: {{type: spherical, a: {{body: lower_{side}, at: [0, {lb[0]}, {lb[1]}]}}, b: {{body: knuckle_{side}, at: [0, {lb[0]}, {lb[1]}]}}}}
  steer_{side}: {{type: spring, a: {{body: knuckle_{side}, at: [-0.12, {0.70 * s}, 0.3]}}, b: {{body: body, at: [-0.12, {0.30 * s}, 0.3]}}, stiffness: 5 MN/m}}
  spring_{side}: {{type: spring, a: {{body: lower_{side}, at: [0, {0.55 * s}, 0.18]}}, b: {{body: body, at: [0, {0.50 * s}, 0.62]}}, stiffness: 75 kN/m}}
  tyre_{side}: {{type: spring, a: {{body: knuckle_{side}, at: [0, {0.74 * s}, 0]}}, b: road.{side}, axis: z, stiffness: 220 kN/m}}""")
    return f"""
format: 1
name: Double wishbones (invented)
motion: spatial
bodies:
  body: {{mass: 900, cg: [-1.2, 0, 0.55], inertia: {{xx: 300, yy: 1200, zz: 1300}}}}{''.join(parts)}
road:
  l: {{at: [0, 0.74, 0]}}
  r: {{at: [0, -0.74, 0]}}
links:{''.join(links)}
"""


def _meet(p1, p2, p3, p4):
    """Intersection of line p1-p2 with line p3-p4 (plane geometry)."""
    d1, d2 = np.subtract(p2, p1), np.subtract(p4, p3)
    t = np.linalg.solve(np.column_stack([d1, -d2]), np.subtract(p3, p1))[0]
    return np.add(p1, t * d1)


@pytest.mark.parametrize("geometry", [
    {},
    {"upper_pivot": (0.38, 0.60), "upper_ball": (0.64, 0.52)},   # converging outboard
])
def test_front_view_instant_centre_is_where_the_arm_lines_meet(geometry):
    # Aronhold-Kennedy theorem (three instant centres of the body, an arm and the
    # knuckle lie on one line): the knuckle's front-view instant centre relative to
    # the body is where the two arm lines meet. Roll centre (standard construction):
    # the line from the contact point through it, on the centreline (y = 0).
    text = double_wishbone(**geometry)
    g = {"upper_pivot": (0.40, 0.52), "upper_ball": (0.66, 0.56),
         "lower_pivot": (0.32, 0.20), "lower_ball": (0.72, 0.16), **geometry}
    ic = _meet(g["upper_pivot"], g["upper_ball"], g["lower_pivot"], g["lower_ball"])
    fig = suspension_figures(assemble(load_text(text)))
    left = next(c for c in fig.corners if c.road == "l")
    assert left.front_ic == pytest.approx(tuple(ic), rel=1e-9, abs=1e-9)
    rc = ic[1] * (0.74 - 0.0) / (0.74 - ic[0])
    assert fig.axles[0].roll_centre == pytest.approx((0.0, rc), abs=1e-9)
    right = next(c for c in fig.corners if c.road == "r")
    assert right.front_ic == pytest.approx((-ic[0], ic[1]), rel=1e-9, abs=1e-9)
    assert left.camber_gain == pytest.approx(right.camber_gain, rel=1e-9)


def test_corner_command_prints_and_writes_json(run_cli, write_yaml):
    path = write_yaml(double_wishbone())
    code, out, err = run_cli("corner", path)
    assert code == 0, err
    assert "roll centre, axle axle" in out or "roll centre" in out
    code, out, err = run_cli("corner", path, "--json")
    assert code == 0, err
    data = json.loads(out)
    first = data["corners"][0]
    assert first["wheel_rate_n_m"] > 0 and first["effective_unsprung_mass_kg"] > 30
    assert {"y", "z"} == set(first["front_view_instant_centre_m"])


def test_corner_of_a_lumped_car_is_its_spring(run_cli):
    # A lumped corner (wheel with a z DOF on a vertical spring): motion ratio 1,
    # wheel rate the spring's, unsprung mass the wheel's (definitions).
    from conftest import ASSEMBLIES

    from builder.load import load_assembly

    fig = suspension_figures(assemble(load_assembly(ASSEMBLIES / "compact_car.yaml")))
    fl = next(c for c in fig.corners if c.road == "fl")
    assert fl.wheel_rate == pytest.approx(24e3, rel=1e-12)
    assert fl.effective_mass == pytest.approx(36.0, rel=1e-12)
    assert next(lk for lk in fl.links if lk.link == "susp_fl").ratio == \
        pytest.approx(1.0, rel=1e-12)


def test_jointed_car_runs_through_every_analysis(run_cli):
    # The linkage car (invented) through the downstream commands; the lumped-corner
    # depth keeps the wheel carriers' z, which the joints leave independent.
    from conftest import ASSEMBLIES

    path = ASSEMBLIES / "compact_car_linkage.yaml"
    for args in (("modes", path, "--depth", "lumped_corners"),
                 ("frf", path, "--from", "road.fl", "--to", "floor_front", "--points", "20"),
                 ("ride", path, "--road", "C", "--speed", "60 km/h", "--json"),
                 ("bump", path, "--height", "30 mm", "--length", "0.5 m", "--speed", "30 km/h"),
                 ("check", path),
                 ("sweep", path, "--depth", "lumped_corners", "--vary",
                  "k_spring_front=60kN/m..90kN/m:2", "--modes", "2", "--no-progress")):
        code, out, err = run_cli(*args)
        assert code == 0, (args[0], err)
    code, out, err = run_cli("modes", path, "--keep", "body.z,knuckle_fl.x")
    assert code == 2 and "fixed by the joints" in err


def test_solid_axle_corners_are_named_not_computed():
    # Two road points under one carrier (a solid axle): said so, not computed. The
    # trailing-arm car with every right-hand link moved onto the left arm: one arm
    # (a beam axle) on two coaxial hinges, carrying both springs and both tyres.
    text = trailing_arm_car().replace("  arm_r:", "  unused:").replace("arm_r", "arm_l")
    model = assemble(load_text(text))
    assert any("redundant" in w for w in model.warnings)
    with pytest.raises(InputError, match="solid axle"):
        suspension_figures(model)


def test_split_body_car_holds_the_whole_body_not_the_heavier_engine(run_cli):
    # The flexible demo's body is cut into ten 105 kg segments and its engine
    # weighs 160 kg: the sprung body is the split body (all segments held), and
    # each corner's wheel rate is its vertical bushing's rate, motion ratio 1
    # (statics, analytic), as the file's parameters give: ks_front 24 kN/m,
    # ks_rear 21 kN/m; unsprung mass the wheel's own (36 and 32 kg). To 1e-6: the
    # travel comes from a least-squares solve over the 60-DOF body, whose round-off
    # reached 3e-10 in one run.
    code, out, err = run_cli("corner", ASSEMBLIES / "compact_car_flexible.yaml", "--json")
    assert code == 0, err
    data = json.loads(out)
    assert data["sprung_body"] == "body"
    rates = {c["road"]: c["wheel_rate_n_m"] for c in data["corners"]}
    assert rates == pytest.approx({"fl": 24e3, "fr": 24e3, "rl": 21e3, "rr": 21e3}, rel=1e-6)
    masses = {c["road"]: c["effective_unsprung_mass_kg"] for c in data["corners"]}
    assert masses == pytest.approx({"fl": 36.0, "fr": 36.0, "rl": 32.0, "rr": 32.0}, rel=1e-6)
