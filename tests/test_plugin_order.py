"""Plugin order does not matter: a plugin that names a body another plugin replaced
follows the replacement (the split body tells which segment carries a point)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import scipy.linalg

from builder.linear import assemble
from builder.load import load_text

ASSEMBLIES = Path(__file__).resolve().parent.parent / "assemblies"

SEAT = """\
  - use: seat
    name: driver
    with:
      body: body
      rails: [[-1.05, 0.25, 0.30], [-1.05, 0.50, 0.30], [-1.45, 0.25, 0.30], [-1.45, 0.50, 0.30]]
      occupant_mass: 75 kg
"""

ENGINE = """\
  - use: engine
    name: power
    with:
      mass: 60 kg
      cg: [0.5, 0.0, 0.6]
      inertia: {xx: 2.0, yy: 2.0, zz: 2.0}
      crank_axis: y
      attach_to: body
      mounts:
        - {name: left, at: [0.5, 0.3, 0.6], stiffness: {x: 80 kN/m, y: 80 kN/m, z: 150 kN/m}, damping: {z: 200 N s/m}}
        - {name: right, at: [0.5, -0.3, 0.6], stiffness: {x: 80 kN/m, y: 80 kN/m, z: 150 kN/m}, damping: {z: 200 N s/m}}
        - {name: rear, at: [0.2, 0.0, 0.5], stiffness: {x: 80 kN/m, y: 80 kN/m, z: 80 kN/m}}
"""


def _flexible(extra: str, first: bool) -> str:
    """The flexible demo car with ``extra`` plugin blocks before or after its split."""
    text = (ASSEMBLIES / "compact_car_flexible.yaml").read_text()
    head, tail = text.split("plugins:\n", 1)
    split, depths = tail.split("\ndepths:", 1)
    blocks = extra + split.rstrip("\n") + "\n" if first else split.rstrip("\n") + "\n" + extra
    return head + "plugins:\n" + blocks + "\ndepths:" + depths


def _frequencies(text: str) -> np.ndarray:
    model = assemble(load_text(text, "car.yaml"))
    lam = scipy.linalg.eigh(model.K.toarray(), model.M.toarray(), eigvals_only=True)
    return np.sqrt(np.clip(lam, 0, None)) / (2 * np.pi)


@pytest.mark.parametrize("extra", [SEAT, ENGINE, SEAT + ENGINE], ids=["seat", "engine", "both"])
def test_both_orders_give_the_same_model(extra):
    # Before: with split_body listed first the seat could not find "body"
    # (an error without a file or line). Analytic check: the two orders build
    # the same graph, so the same eigenvalues (to 1e-9 relative) and the same
    # attachments.
    before = load_text(_flexible(extra, first=True), "car.yaml")
    after = load_text(_flexible(extra, first=False), "car.yaml")
    assert set(before.bodies) == set(after.bodies)
    for name, link in after.links.items():
        assert {before.links[name].a.node, before.links[name].b.node} == {link.a.node,
                                                                          link.b.node}, name
    for name, sensor in after.sensors.items():
        assert before.sensors[name].target == sensor.target, name
    f1, f2 = _frequencies(_flexible(extra, True)), _frequencies(_flexible(extra, False))
    np.testing.assert_allclose(f1, f2, rtol=1e-9, atol=1e-9)


def test_seat_rails_go_to_the_segment_holding_each_rail():
    asm = load_text(_flexible(SEAT, first=False), "car.yaml")
    # segments of 0.38 m from x = -3.0 m: x = -1.05 lies in body_s06, x = -1.45 in body_s05
    ends = {asm.links[f"driver_rail_{i}"].b.node for i in (1, 2)}   # frame at a, body at b
    assert ends == {"body_s06"}
    assert {asm.links[f"driver_rail_{i}"].b.node for i in (3, 4)} == {"body_s05"}
    assert asm.sensors["driver_floor_z"].target == "body_s05"     # mean rail x = -1.25


def test_unknown_seat_body_error_has_its_place(write_yaml, run_cli):
    text = _flexible(SEAT.replace("body: body", "body: chassis"), first=False)
    code, out, err = run_cli("modes", write_yaml(text))
    assert code == 2 and out == "" and err.count("\n") == 1
    assert err.split(":")[1].isdigit(), err                  # FILE:LINE: ...
    assert 'seat body "chassis" is not a body' in err
