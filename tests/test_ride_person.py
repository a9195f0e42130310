"""ISO 2631-1 comfort words and health multipliers only where a person is.

Source for the multipliers and weightings: ISO 2631-1:1997 clauses 7.2.3 and
8.2 (from memory): seat surface comfort 1, 1, 1 (Wd, Wd, Wk) and health
1.4, 1.4, 1; seat back 0.8 (Wc), 0.5, 0.4 (Wd); feet 0.25, 0.25, 0.4 (Wk);
standing on the floor 1, 1, 1. Annex C words: :data:`comfort.COMFORT_BANDS`.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from builder.analysis import comfort
from builder.analysis.ride import ride_response
from builder.linear import assemble
from builder.load import load_assembly, load_text

ASSEMBLIES = Path(__file__).resolve().parent.parent / "assemblies"

BUS = """\
format: 1
name: a bay of a bus floor on two suspensions (invented data)
motion: planar
bodies:
  floor: {{mass: 2400, cg: [-3.0, 0, 0.9], inertia: {{xx: 2000, yy: 9000, zz: 9000}}}}
road:
  f: {{at: [0, 0, 0]}}
  r: {{at: [-6, 0, 0]}}
links:
  front: {{type: spring, a: {{body: floor, at: [0, 0, 0.6]}}, b: road.f, axis: z, stiffness: 250 kN/m, damping: 12 kN s/m}}
  rear: {{type: spring, a: {{body: floor, at: [-6, 0, 0.6]}}, b: road.r, axis: z, stiffness: 300 kN/m, damping: 14 kN s/m}}
sensors:
  back_x: {{body: floor, at: [-4, 0, 1.6], measure: acceleration, direction: x, person: back}}
  back_z: {{body: floor, at: [-4, 0, 1.6], measure: acceleration, direction: z, person: back}}
  feet_z: {{body: floor, at: [-4, 0, 0.9], measure: acceleration, direction: z, person: feet}}
  aisle_z: {{body: floor, at: [-2, 0, 0.9], measure: acceleration, direction: z, person: {standing}}}
  axle_z: {{body: floor, at: [0, 0, 0.6], measure: acceleration, direction: z}}
"""


def test_engine_sensors_get_no_comfort_words(run_cli):
    # Before: "engine_accel_z ... extremely uncomfortable" on a powertrain sensor.
    code, out, err = run_cli("ride", ASSEMBLIES / "compact_car_engine.yaml", "--road", "C",
                             "--speed", "60 km/h")
    assert code == 0, err
    rows = [line for line in out.splitlines() if line.startswith("engine_accel")]
    assert len(rows) == 3
    assert not any("uncomfortable" in line for line in rows)
    assert "multipliers 1.4" not in out and "vector sum" not in out
    code, out, _ = run_cli("ride", ASSEMBLIES / "compact_car_engine.yaml", "--road", "C",
                           "--speed", "60 km/h", "--json")
    data = json.loads(out)
    assert "comfort" not in data["sensors"]["engine_accel_z"]
    assert data["sensors"]["engine_accel_z"]["weighted_rms"] > 0     # the contract keeps it
    assert "comfort_points" not in data


def test_seat_plugin_sensors_are_the_seated_person():
    asm = load_assembly(ASSEMBLIES / "compact_car_seat.yaml")
    result = ride_response(assemble(asm), "C", 60 / 3.6, assembly=asm)
    (point,) = result.points
    # titled by where it is and which axes, no raw coordinates
    assert point.title == "driver seat (seated person, seat surface), axes x, z"
    x, z = (result.sensors[f"driver_seat_{a}"].weighted_rms for a in "xz")
    assert point.vector_sum == pytest.approx(math.hypot(x, z), rel=1e-12)
    assert point.vector_sum_health == pytest.approx(math.hypot(1.4 * x, z), rel=1e-12)
    assert point.reactions == tuple(comfort.comfort_reactions(math.hypot(x, z)))
    # the floor under the seat rails and the head are no person interface
    for name in ("driver_floor_z", "driver_head_z", "engine_accel", "floor_front"):
        assert result.sensors[name].person == "" and result.sensors[name].reactions == ()
    assert "comfort at a person" in result.table()
    assert "[-1.25" not in result.table()


def test_interfaces_take_their_weightings_and_multipliers():
    asm = load_text(BUS.format(standing="floor"), "bus.yaml")
    res = ride_response(assemble(asm), "C", 50 / 3.6, assembly=asm)
    s = res.sensors
    assert s["back_x"].weighting == "Wc" and s["back_z"].weighting == "Wd"
    assert s["feet_z"].weighting == "Wk" and s["aisle_z"].weighting == "Wk"
    points = {p.interface: p for p in res.points}
    assert set(points) == {"back", "feet", "floor"}
    back = points["back"]
    assert back.multipliers == {"x": 0.8, "z": 0.4}
    assert back.vector_sum == pytest.approx(
        math.hypot(0.8 * s["back_x"].weighted_rms, 0.4 * s["back_z"].weighted_rms), rel=1e-12)
    assert back.vector_sum_health is None                     # health: seat surface only
    feet = points["feet"]
    assert feet.vector_sum == pytest.approx(0.4 * s["feet_z"].weighted_rms, rel=1e-12)
    assert s["feet_z"].reactions == tuple(comfort.comfort_reactions(feet.vector_sum))
    assert points["floor"].vector_sum == pytest.approx(s["aisle_z"].weighted_rms, rel=1e-12)
    assert s["axle_z"].person == "" and s["axle_z"].reactions == ()
    assert "standing person, floor" in res.table()


def test_person_key_errors(write_yaml, run_cli):
    def run(text):
        code, out, err = run_cli("ride", write_yaml(text), "--road", "C", "--speed", "50 km/h")
        assert code == 2 and out == "" and err.count("\n") == 1, err
        return err
    err = run(BUS.format(standing="stand"))
    assert ":16: sensors.aisle_z.person: must be one of seat, back, feet, floor" in err
    err = run(BUS.format(standing="floor").replace("measure: acceleration, direction: z, "
                                                   "person: feet", "measure: displacement, "
                                                   "direction: z, person: feet"))
    assert "sensors.feet_z.person: only acceleration sensors" in err
    err = run(BUS.format(standing="floor").replace(
        "  axle_z:", "  travel: {link: front, measure: deflection, person: seat}\n  axle_z:"))
    assert "sensors.travel" in err
