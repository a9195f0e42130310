"""``check``: mass counted once, corner and axle loads, ride rates, zero-frequency modes.

Outside references (beside each test): static equilibrium of the whole
vehicle (vertical force and moment balance); springs in series,
1/k = 1/k1 + 1/k2; the lever (virtual work) rule for a spring acting between
a pivot and the wheel, wheel rate = k (a/L)^2 (the installation-ratio rule of
suspension texts, e.g. Milliken and Milliken, Race Car Vehicle Dynamics,
1995, from memory); scipy.linalg.eigh for the smallest eigenvalue of M;
Euler-Bernoulli free-free beam and free-free shaft frequencies.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import scipy.linalg

from builder.analysis.checks import check_model
from builder.analysis.corners import corner_figures
from builder.eigen import lowest_modes, zero_frequency_modes
from builder.errors import InputError
from builder.linear import GRAVITY, assemble
from builder.load import load_assembly, load_text

ROOT = Path(__file__).resolve().parent.parent
SEAT_CAR = ROOT / "assemblies" / "compact_car_seat.yaml"
VAN = Path(__file__).resolve().parent / "models" / "light_van.yaml"


def tyre_loads(model) -> dict[str, float]:
    """Static tyre loads (N) from first principles: each tyre is a vertical spring from
    its body point to a road point at rest, so its load is -k times the static vertical
    displacement of that point (springs of the file read directly, not the check)."""
    q = model.static_response(GRAVITY)
    out = {}
    for link in model.assembly.links.values():
        if link.b.kind == "road":
            w = (model.body_map(link.a.node, link.a.at) @ q)[2]
            out[link.name] = -link.props["stiffness"] * w
    return out


@pytest.mark.parametrize("path", [SEAT_CAR, VAN], ids=["seat car", "light van"])
def test_total_mass_equals_the_static_tyre_loads_over_g(path):
    # Statics: a vehicle standing on its tyres alone carries its whole weight
    # there, so sum(tyre loads) / g is its mass. The occupant's fore-aft body
    # repeats the mass of the vertical occupant chain and must count once.
    model = assemble(load_assembly(path))
    mass, cg, _ = model.assembly.mass_properties()
    assert mass == pytest.approx(sum(tyre_loads(model).values()) / GRAVITY, rel=1e-9)
    checks = check_model(model)
    assert checks.total_mass == pytest.approx(mass, rel=1e-12)
    assert checks.corners.road_load / GRAVITY == pytest.approx(mass, rel=1e-9)
    assert set(checks.directional_parts) == {
        f"{s}_occupant_x" for s in (("driver",) if path == SEAT_CAR else ("driver",
                                                                          "passenger"))}


@pytest.mark.parametrize("path", [SEAT_CAR, VAN], ids=["seat car", "light van"])
def test_axle_loads_follow_the_lever_rule_about_the_cg(path):
    # Moment balance about y of the whole vehicle (no horizontal forces in a
    # vertical model): front axle load = W (x_cg - x_rear) / (x_front - x_rear).
    model = assemble(load_assembly(path))
    mass, cg, _ = model.assembly.mass_properties()
    cf = corner_figures(model)
    front, rear = cf.axles
    assert (front.name, rear.name) == ("front", "rear")
    weight = mass * GRAVITY
    expected = weight * (cg[0] - rear.x) / (front.x - rear.x)
    assert front.load == pytest.approx(expected, rel=1e-9)
    assert front.share + rear.share == pytest.approx(1.0)
    loads = tyre_loads(model)
    for c in cf.corners:
        assert c.load == pytest.approx(loads[c.link], rel=1e-9)


QUARTER = """
format: 1
name: quarter car with a lever suspension
motion: planar
parameters: {ks: 30 kN/m, kt: 200 kN/m}
bodies:
  body: {mass: 300 kg, cg: [0, 0, 0.6], inertia: {xx: 50, yy: 50, zz: 50}, dofs: [z]}
  arm: {mass: 20 kg, cg: [0.2, 0, 0.3], inertia: {xx: 1, yy: 0.6, zz: 1}, dofs: [z, ry]}
road:
  contact: {at: [0, 0, 0]}
links:
  pivot: {type: bushing, a: {body: arm, at: [0.4, 0, 0.3]}, b: {body: body, at: [0.4, 0, 0.3]}, stiffness: {x: 1.0e10, y: 1.0e10, z: 1.0e10}}
  spring: {type: spring, a: {body: body, at: [%X%, 0, 0.6]}, b: {body: arm, at: [%X%, 0, 0.3]}, axis: z, stiffness: "${ks}"}
  tyre: {type: spring, a: {body: arm, at: [0, 0, 0.3]}, b: road.contact, axis: z, stiffness: "${kt}"}
"""


@pytest.mark.parametrize("spring_x", [0.0, 0.2, 0.3])
def test_wheel_rate_is_the_spring_rate_times_the_installation_ratio_squared(spring_x):
    # Virtual work on the arm (pivot at x = 0.4, wheel at x = 0): a spring at
    # distance a from the pivot moves a/L as far as the wheel, so the wheel
    # rate is k (a/L)^2; the ride rate is that in series with the tyre.
    model = assemble(load_text(QUARTER.replace("%X%", str(spring_x))))
    corner = corner_figures(model).corners[0]
    ratio = (0.4 - spring_x) / 0.4
    wheel = 30e3 * ratio ** 2
    assert corner.tyre_rate == pytest.approx(200e3, rel=1e-12)
    assert corner.wheel_rate == pytest.approx(wheel, rel=1e-5)     # pivot 1e10 N/m, not rigid
    assert corner.ride_rate == pytest.approx(1 / (1 / wheel + 1 / 200e3), rel=1e-5)


def test_ride_rates_of_the_van_are_spring_and_tyre_in_series():
    # The van's front coils act at the wheel, its rear leaves on a beam axle
    # inboard of the tyres; in parallel travel neither the anti-roll bar nor
    # the leaves' span counts: ride = 1/(1/k_spring + 1/k_tyre) per corner.
    cf = corner_figures(assemble(load_assembly(VAN)))
    rates = {c.road: (c.wheel_rate, c.ride_rate) for c in cf.corners}
    for road, k in (("fl", 38e3), ("fr", 38e3), ("rl", 62e3), ("rr", 62e3)):
        assert rates[road][0] == pytest.approx(k, rel=1e-9)
        assert rates[road][1] == pytest.approx(1 / (1 / k + 1 / 300e3), rel=1e-9)


def test_check_table_shows_loads_rates_and_the_mass_once(run_cli):
    code, out, _ = run_cli("check", VAN)
    assert code == 0
    assert "counted once: driver_occupant_x" in out and "passenger_occupant_x" in out
    assert "front   0.000" in out and "57.1 %" in out
    assert "wheel rate: the links between each wheel" in out
    assert "-0.0" not in out and "1 DOFs" not in out
    code, out, _ = run_cli("check", VAN, "--json")
    data = json.loads(out)
    assert {c["road"] for c in data["corners"]["corners"]} == {"fl", "fr", "rl", "rr"}
    assert data["total_mass_kg"] == pytest.approx(
        data["corners"]["road_load_n"] / GRAVITY, rel=1e-9)
    assert len(data["static_deflection"]) == 29          # every link in the JSON


def test_seat_and_suspension_deflections_share_one_sign():
    # Springs read positive in compression: under 1 g the suspension, tyres,
    # cushion and occupant couplings all carry weight, so all are positive and
    # each equals its force over its stiffness (Hooke).
    checks = check_model(assemble(load_assembly(SEAT_CAR)))
    rows = {s["link"]: s for s in checks.static}
    for name in ("susp_fl", "tyre_fl", "driver_cushion", "driver_occ_seat_thighs_pelvis",
                 "driver_occ_upper_torso_head"):
        assert rows[name]["deflection"] > 0 and rows[name]["force"] > 0, name
    # The seat rails carry the seat frame like engine mounts: positive in z.
    assert rows["driver_rail_1"]["component"] == "z" and rows["driver_rail_1"]["force"] > 0


HANGING = """
format: 1
name: mass on a spring, and a mass hanging from one
motion: bounce
bodies:
  sitting: {mass: 10 kg, cg: [0, 0, 0.5]}
  hanging: {mass: 4 kg, cg: [1, 0, 0.5]}
links:
  below: {type: spring, a: sitting, b: {body: ground, at: [0, 0, 0]}, stiffness: 9806.65 N/m}
  above: {type: spring, a: hanging, b: {body: ground, at: [1, 0, 1]}, stiffness: 9806.65 N/m}
  upside_down: {type: spring, a: {body: ground, at: [0, 0, 0]}, b: sitting, stiffness: 9806.65 N/m}
sensors:
  squeeze: {link: below, measure: deflection}
"""


def test_a_spring_reads_compression_positive_whichever_end_is_a(write_yaml):
    # Hooke: delta = m g / k. The sitting mass compresses both its springs
    # (one written a = mass, one a = ground, both with the default axis a-b);
    # the hanging mass stretches its spring (negative).
    path = write_yaml(HANGING.replace("sitting: {mass: 10 kg, cg: [0, 0, 0.5]}",
                                      "sitting: {mass: 10 kg, cg: [0, 0, 0.5], "
                                      "gyradius: {x: 1, y: 1, z: 1}}")
                      .replace("hanging: {mass: 4 kg, cg: [1, 0, 0.5]}",
                               "hanging: {mass: 4 kg, cg: [1, 0, 0.5], "
                               "gyradius: {x: 1, y: 1, z: 1}}"))
    model = assemble(load_assembly(path))
    rows = {s["link"]: s["deflection"] for s in check_model(model).static}
    assert rows["below"] == pytest.approx(10 * GRAVITY / 2 / 9806.65, rel=1e-9)
    assert rows["upside_down"] == pytest.approx(rows["below"], rel=1e-12)
    assert rows["above"] == pytest.approx(-4 * GRAVITY / 9806.65, rel=1e-9)
    q = model.static_response(GRAVITY)
    assert float((model.Sd @ q)[0]) == pytest.approx(rows["below"], rel=1e-12)   # the sensor


BRACKET = """
format: 1
name: quarter car with a stiff accelerometer bracket
motion: bounce
bodies:
  body: {mass: 300 kg, cg: [0, 0, 0.6]}
  wheel: {mass: 40 kg, cg: [0, 0, 0.3]}
  bracket:
    mass: 0.05 kg
    cg: [0.1, 0, 0.6]
    dofs: [z, rx, ry]
    inertia: {xx: 2.0e-6, yy: 2.0e-6, zz: 2.0e-6}
road:
  contact: {at: [0, 0, 0]}
links:
  susp: {type: spring, a: {body: body, at: [0, 0, 0.6]}, b: wheel, axis: z, stiffness: 20 kN/m}
  tyre: {type: spring, a: wheel, b: road.contact, axis: z, stiffness: 200 kN/m}
  bolt:
    type: bushing
    a: {body: bracket, at: [0.1, 0, 0.6]}
    b: {body: body, at: [0.1, 0, 0.6]}
    stiffness: {x: 1.0e9, y: 1.0e9, z: 1.0e9, rx: 1.0e5, ry: 1.0e5, rz: 1.0e5}
"""


def _bracket_text(tyre: bool = True) -> str:
    text = BRACKET.replace("{mass: 300 kg, cg: [0, 0, 0.6]}",
                           "{mass: 300 kg, cg: [0, 0, 0.6], gyradius: {x: 1, y: 1, z: 1}}")
    text = text.replace("{mass: 40 kg, cg: [0, 0, 0.3]}",
                        "{mass: 40 kg, cg: [0, 0, 0.3], gyradius: {x: 1, y: 1, z: 1}}")
    return text if tyre else text.replace(
        "  tyre: {type: spring, a: wheel, b: road.contact, axis: z, stiffness: 200 kN/m}\n", "")


def test_a_stiff_small_part_does_not_turn_real_modes_into_zero_frequency_ones():
    # The bracket's bolt (K/M up to 5e10 s^-2, a 36 kHz bracket mode) must not
    # turn real modes into zero-frequency ones: the quarter car's two modes
    # (analytic: the 2-DOF characteristic equation) must be found and no zero
    # mode reported; without the tyre, exactly one (the free bounce). A bolt a
    # thousand times stiffer in rotation (1 MHz), which made a threshold on the
    # largest K_jj / M_jj call the 1 Hz bounce "zero-frequency", is now refused
    # as beyond any vehicle model before any analysis.
    stiffer = _bracket_text().replace("rx: 1.0e5, ry: 1.0e5, rz: 1.0e5", "rx: 1.0e8, ry: 1.0e8, rz: 1.0e8")
    with pytest.raises(InputError, match="links.bolt.*beyond any vehicle"):
        assemble(load_text(stiffer))
    checks = check_model(assemble(load_text(_bracket_text())))
    assert checks.zero_modes == 0
    ms, mu, ks, kt = 300.05, 40.0, 20e3, 200e3
    a, b, c = ms * mu, -(ks * (ms + mu) + kt * ms), ks * kt
    lam = sorted(np.roots([a, b, c]).real)
    assert checks.lowest_hz[0] == pytest.approx(math.sqrt(lam[0]) / (2 * math.pi), rel=1e-6)
    free = check_model(assemble(load_text(_bracket_text(tyre=False))))
    assert free.zero_modes == 1 and "not attached" in free.zero_mode_note


def test_zero_frequency_modes_of_a_free_chain_of_stiff_segments():
    # A free-free bar of 300 stiff short segments: exactly six rigid-body
    # modes (a free body in space), then its elastic modes.
    from plugins.split_body.split import uniform_bar
    asm = uniform_bar(300, 3.0, 20.0, 3e-4, {"EA": 1e9, "EIy": 4e4, "EIz": 6e4, "GJ": 30.0})
    model = assemble(asm)
    lam, x = lowest_modes(model.K, model.M, 10)
    assert zero_frequency_modes(model.K, lam, x).tolist() == [True] * 6 + [False] * 4


def test_finely_split_car_on_its_tyres_has_no_zero_frequency_mode(tmp_path):
    # A car standing on its tyres is held to ground: it has no rigid-body mode
    # (statics). With its body split into 2,000 short stiff segments the
    # round-off level of its lowest modes (1.2 to 4.6 Hz) lies above them, and
    # they were once flagged as zero-frequency; no jump separates them, so they
    # are real. The same rule still finds six modes on a free bar (test above).
    text = (ROOT / "assemblies" / "compact_car_flexible.yaml").read_text()
    text = text.replace("segments: 10", "segments: 2000").split("\ndepths:")[0] + "\n"
    assert "segments: 2000" in text
    path = tmp_path / "fine.yaml"
    path.write_text(text)
    model = assemble(load_assembly(path))
    lam, x = lowest_modes(model.K, model.M, 8)
    assert lam[0] > (2 * np.pi * 1.0) ** 2
    assert not zero_frequency_modes(model.K, lam, x).any()


@pytest.mark.parametrize("path", [SEAT_CAR, VAN], ids=["seat car", "light van"])
def test_smallest_eigenvalue_of_m_matches_a_dense_solve(path):
    model = assemble(load_assembly(path))
    checks = check_model(model)
    exact = scipy.linalg.eigh(model.M.toarray(), eigvals_only=True)[0]    # scipy, dense
    assert checks.min_eigenvalue["M"] == pytest.approx(exact, rel=1e-12)


def test_split_body_summary_matches_free_free_beam_theory():
    # Euler-Bernoulli free-free bending, beta L = 4.7300 (root of
    # cos(bL) cosh(bL) = 1), and the free-free shaft omega = pi/L sqrt(GJ/rho Ip).
    from plugins.split_body.split import uniform_bar
    from plugins.split_body.summary import check_summary
    L, rho_a, rho_ip = 3.0, 20.0, 3e-4
    EIy, EIz, GJ = 4.0e4, 6.0e4, 30.0
    model = assemble(uniform_bar(80, L, rho_a, rho_ip,
                                 {"EA": 1e9, "EIy": EIy, "EIz": EIz, "GJ": GJ}))
    lam, x = lowest_modes(model.K, model.M, 8)
    (line,) = check_summary(model, lam, x)        # asks for more modes itself
    bending = 4.7300 ** 2 * np.sqrt(np.array([EIy, EIz]) / (rho_a * L ** 4)) / (2 * np.pi)
    torsion = np.pi / L * np.sqrt(GJ / rho_ip) / (2 * np.pi)
    assert line["first_vertical_bending_hz"] == pytest.approx(bending[0], rel=2e-3)
    assert line["first_lateral_bending_hz"] == pytest.approx(bending[1], rel=2e-3)
    assert line["first_torsion_hz"] == pytest.approx(torsion, rel=2e-3)
    assert line["text"].startswith("split body bar in the vehicle: first torsion")


def test_check_of_the_flexible_demo_names_first_torsion_and_bending(run_cli):
    # The check's summary line must agree with the split_body plugin's own
    # labelled modes (the same model, analysed by the plugin).
    from builder.plugin import get_plugin
    path = ROOT / "assemblies" / "compact_car_flexible.yaml"
    model = assemble(load_assembly(path))
    result = get_plugin("split_body").analyse(model)
    first = {lab.split("first ", 1)[1]: f for f, lab in zip(result.frequencies_hz,
                                                              result.labels)
             if lab.startswith("body first ")}
    code, out, _ = run_cli("check", path, "--json")
    (line,) = json.loads(out)["plugin_summaries"]
    assert line["plugin"] == "split_body"
    assert line["first_torsion_hz"] == pytest.approx(first["torsion"], rel=1e-9)
    assert line["first_vertical_bending_hz"] == pytest.approx(first["vertical bending"],
                                                              rel=1e-9)
    code, out, _ = run_cli("check", path)
    assert "split body body in the vehicle: first torsion 26.8 Hz" in out


def test_long_models_get_a_one_screen_summary_and_details_on_request(run_cli, write_yaml):
    # 300 small bodies on springs: the summary stays short, --detail lists all.
    lines = ["format: 1", "name: a long row of masses", "motion: bounce", "bodies:"]
    lines += [f"  m{i}: {{mass: 2 kg, cg: [{i}, 0, 1], gyradius: {{x: 1, y: 1, z: 1}}}}"
              for i in range(300)]
    lines += ["road:"] + [f"  r{i}: {{at: [{i}, 0, 0]}}" for i in range(300)]
    lines += ["links:"] + [f"  k{i}: {{type: spring, a: m{i}, b: road.r{i}, axis: z, "
                           f"stiffness: {1000 + i} N/m}}" for i in range(300)]
    path = write_yaml("\n".join(lines) + "\n")
    code, out, _ = run_cli("check", path)
    assert code == 0 and len(out.splitlines()) <= 60
    assert "the 12 largest of 300 links (--detail lists all)" in out
    assert "more road points (--detail lists all)" in out
    code, out, _ = run_cli("check", path, "--detail")
    assert code == 0 and all(f"k{i} " in out for i in range(300))


def test_a_wheel_pulling_on_the_road_and_a_loose_wheel_are_reported():
    # Without its front-left spring the van stands on three springs and the
    # anti-roll bar: statics put a pulling (negative) load on the diagonal
    # corner, rr, and the front-left wheel rises with no spring to deform.
    text = VAN.read_text().replace("  susp_fl:", "  #susp_fl:").replace(
        "  travel_fl: {link: susp_fl, measure: deflection}\n", "")
    model = assemble(load_text(text))
    loads = tyre_loads(model)
    assert loads["tyre_rr"] < 0 < min(loads["tyre_fl"], loads["tyre_fr"], loads["tyre_rl"])
    warnings = "\n".join(check_model(model).warnings)
    assert f"the static load at rr ({loads['tyre_rr']:.0f} N) is negative" in warnings
    assert "wheel rate 0 at fl" in warnings


def test_report_takes_mass_loads_and_rates_from_the_checks():
    from builder import report
    model = assemble(load_assembly(SEAT_CAR))
    html = report._checks(model)
    mass = model.assembly.mass_properties()[0]
    assert f"{mass:.2f} kg; driver_occupant_x" in html and "counted once" in html
    assert "Static loads under 1 g and ride rates" in html and "front" in html


def test_a_body_standing_on_its_tyres_has_the_tyre_rate_as_ride_rate(write_yaml):
    # A rigid vehicle on its tyres (no suspension): the ride rate is the tyre
    # rate (a spring in series with an infinitely stiff one), the load its weight.
    path = write_yaml("""
format: 1
name: a rigid cart on one tyre (invented)
motion: bounce
bodies:
  cart: {mass: 40 kg, cg: [0, 0, 0.3], gyradius: {x: 1, y: 1, z: 1}}
road:
  c: {at: [0, 0, 0]}
links:
  t: {type: spring, a: cart, b: road.c, axis: z, stiffness: 200 kN/m}
""")
    checks = check_model(assemble(load_assembly(path)))
    (corner,) = checks.corners.corners
    assert corner.wheel_rate is None and corner.ride_rate == pytest.approx(200e3)
    assert corner.load == pytest.approx(40 * GRAVITY, rel=1e-12)
    assert not any("wheel rate 0" in w for w in checks.warnings)
