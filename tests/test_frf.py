"""Frequency response against closed forms and python-control; the frf command."""

from __future__ import annotations

import json

import control
import numpy as np
import pytest

from builder.analysis.frf import frequency_response
from builder.linear import assemble
from builder.load import load_assembly
from builder.reduce import reduce_to_depth

ROOT_CAR = __import__("pathlib").Path(__file__).resolve().parent.parent / "assemblies"
METHODS = ("modal", "direct", "sparse")

ONE_DOF = """\
format: 1
name: one DOF on a road point
motion: bounce
bodies:
  mass: {{mass: {m}, cg: [0, 0, 0.5], gyradius: {{x: 0.2, y: 0.2, z: 0.2}}}}
road:
  base: {{at: [0, 0, 0]}}
links:
  mount: {{type: spring, a: mass, b: road.base, axis: z, stiffness: {k}, {extra}}}
sensors:
  x: {{body: mass, measure: displacement, direction: z}}
  a: {{body: mass, measure: acceleration, direction: z}}
"""

QUARTER = """\
format: 1
name: quarter car
motion: bounce
bodies:
  body: {{mass: {ms}, cg: [0, 0, 0.55], gyradius: {{x: 0.3, y: 0.3, z: 0.3}}}}
  wheel: {{mass: {mu}, cg: [0, 0, 0.3], gyradius: {{x: 0.2, y: 0.2, z: 0.2}}}}
road:
  contact: {{at: [0, 0, 0]}}
links:
  suspension: {{type: spring, a: body, b: wheel, axis: z, stiffness: {ks}, damping: {cs}}}
  tyre: {{type: spring, a: wheel, b: road.contact, axis: z, stiffness: {kt}}}
sensors:
  body_accel: {{body: body, measure: acceleration, direction: z}}
  body_disp: {{body: body, measure: displacement, direction: z}}
  travel: {{link: suspension, measure: deflection}}
  tyre_load: {{link: tyre, measure: force}}
"""

# Two masses joined by a spring and damper, nothing to ground: a rigid-body mode.
FREE_FREE = """\
format: 1
name: free-free pair
motion: bounce
bodies:
  one: {mass: 10, cg: [0, 0, 0.5], gyradius: {x: 0.1, y: 0.1, z: 0.1}}
  two: {mass: 30, cg: [0, 0, 1.0], gyradius: {x: 0.1, y: 0.1, z: 0.1}}
links:
  joint: {type: spring, a: one, b: two, axis: z, stiffness: 5e4, damping: 40}
sensors:
  x1: {body: one, measure: displacement, direction: z}
  a2: {body: two, measure: acceleration, direction: z}
"""


def _model(write_yaml, text):
    return assemble(load_assembly(write_yaml(text)))


def test_one_dof_transmissibility_closed_form(write_yaml):
    # Analytic (base-excited mass-spring-damper): X/Y = (k + i c w) / (k - m w^2 + i c w),
    # |X/Y| = sqrt((k^2 + (c w)^2) / ((k - m w^2)^2 + (c w)^2)); acceleration -w^2 X.
    m, k, c = 250.0, 4.0e4, 800.0
    model = _model(write_yaml, ONE_DOF.format(m=m, k=k, extra=f"damping: {c}"))
    f = np.geomspace(0.1, 100.0, 300)
    w = 2 * np.pi * f
    exact = (k + 1j * c * w) / (k - m * w**2 + 1j * c * w)
    magnitude = np.sqrt((k**2 + (c * w) ** 2) / ((k - m * w**2) ** 2 + (c * w) ** 2))
    np.testing.assert_allclose(np.abs(exact), magnitude, rtol=1e-12)
    for method in METHODS:
        fr = frequency_response(model, f, method=method)
        assert fr.method == method
        np.testing.assert_allclose(fr.transmissibility("x", "road.base"), exact, rtol=1e-10)
        np.testing.assert_allclose(fr.magnitude[:, 0, 0], magnitude, rtol=1e-10)
        np.testing.assert_allclose(fr.H[:, 1, 0], -(w**2) * exact, rtol=1e-10)
        np.testing.assert_allclose(fr.phase_deg[:, 0, 0], np.degrees(np.angle(exact)),
                                   atol=1e-8)
        assert fr.unit("x", "road.base") == "m per m"
        assert fr.unit("a", "road.base") == "m/s^2 per m"


def test_quarter_car_closed_form(write_yaml):
    # Analytic (two-DOF quarter car, from the equations of motion solved by Cramer's rule):
    #   Z = [[ks + i w cs - ms w^2, -(ks + i w cs)], [-(ks + i w cs), ks + i w cs + kt - mu w^2]]
    #   det = Z11 Z22 - (ks + i w cs)^2
    #   zs / r = kt (ks + i w cs) / det,   zu / r = kt (ks + i w cs - ms w^2) / det
    ms, mu, ks, cs, kt = 300.0, 36.0, 21e3, 1500.0, 210e3
    model = _model(write_yaml, QUARTER.format(ms=ms, mu=mu, ks=ks, cs=cs, kt=kt))
    f = np.geomspace(0.2, 60.0, 500)
    w = 2 * np.pi * f
    s = ks + 1j * w * cs
    det = (s - ms * w**2) * (s + kt - mu * w**2) - s**2
    zs = kt * s / det
    zu = kt * (s - ms * w**2) / det
    for method in METHODS:
        fr = frequency_response(model, f, method=method)
        np.testing.assert_allclose(fr.transmissibility("body_disp", "road.contact"), zs,
                                   rtol=1e-9)
        np.testing.assert_allclose(fr.transmissibility("body_accel", "road.contact"),
                                   -(w**2) * zs, rtol=1e-9)
        # deflection and force magnitudes (their sign follows the link's a-b convention)
        np.testing.assert_allclose(fr.magnitude[:, fr.sensors.index("travel"), 0],
                                   np.abs(zs - zu), rtol=1e-9)
        np.testing.assert_allclose(fr.magnitude[:, fr.sensors.index("tyre_load"), 0],
                                   np.abs(kt * (zu - 1.0)), rtol=1e-9)
    # Analytic: the undamped body-bounce transmissibility is 1 at zero frequency.
    assert abs(frequency_response(model, [1e-4]).transmissibility("body_disp",
                                                                  "road.contact")[0]) == \
        pytest.approx(1.0, rel=1e-6)


def test_hysteretic_one_dof_closed_form(write_yaml):
    # Analytic: a spring of complex stiffness k (1 + i eta) over a road point gives
    # X/Y = k (1 + i eta) / (k (1 + i eta) - m w^2).
    m, k, eta = 120.0, 5.0e4, 0.15
    model = _model(write_yaml, ONE_DOF.format(m=m, k=k, extra=f"loss_factor: {eta}"))
    f = np.geomspace(0.5, 80.0, 200)
    w = 2 * np.pi * f
    kc = k * (1 + 1j * eta)
    exact = kc / (kc - m * w**2)
    for method in METHODS:
        fr = frequency_response(model, f, method=method)
        np.testing.assert_allclose(fr.transmissibility("x", "road.base"), exact, rtol=1e-10)


def _control_road_frf(model, f):
    """python-control's FRF of to_state_space(), the [r; r'] input folded to r."""
    A, B, C, D = model.to_state_space()
    nr = len(model.inputs)
    w = 2 * np.pi * f
    g = control.frequency_response(control.ss(A, B, C, D), w).complex   # (ny, nu, nf)
    g = np.moveaxis(np.asarray(g).reshape(C.shape[0], B.shape[1], f.size), 2, 0)
    return g[:, :, :nr] + 1j * w[:, None, None] * g[:, :, nr:]


@pytest.mark.parametrize("depth", [None, "half_car", "bounce_pitch"])
def test_compact_car_against_python_control(depth):
    # Independent library: python-control (control.ss + control.frequency_response) on
    # the same state-space matrices; the road input enters as [r; r'], so the FRF per m
    # of road is G_r + i w G_v.
    assembly = load_assembly(ROOT_CAR / "compact_car.yaml")
    model = assemble(assembly)
    if depth:
        model = reduce_to_depth(model, assembly.depths[depth])
    f = np.geomspace(0.3, 60.0, 400)
    expected = _control_road_frf(model, f)
    scale = np.abs(expected).max(axis=(0, 2))[None, :, None]       # per sensor
    for method in METHODS:
        fr = frequency_response(model, f, method=method)
        assert fr.inputs == model.inputs and fr.sensors == model.sensors
        assert np.max(np.abs(fr.H - expected) / scale) < 1e-9


def test_force_input_against_python_control():
    # Independent library: python-control on the state space with a unit force on one
    # DOF (B = [0; M^-1 e], D = Sa M^-1 e); the second force comes from force_input.
    model = assemble(load_assembly(ROOT_CAR / "compact_car.yaml"))
    A, _, C, _ = model.to_state_space()
    n = model.n
    M = model.M.toarray()
    Sa = model.Sa.toarray()
    shake = model.force_input("engine", np.array([0.30, 0.02, 0.55]), [0.0, 0.0, 1.0])
    f = np.geomspace(1.0, 40.0, 120)
    fr = frequency_response(model, f, inputs=["engine.z", ("shake", shake)])
    assert fr.unit("engine_accel", "engine.z") == "m/s^2 per N"
    for col, force in enumerate([np.eye(n)[model.dof_index("engine.z")], shake]):
        B = np.concatenate([np.zeros(n), np.linalg.solve(M, force)])[:, None]
        D = (Sa @ np.linalg.solve(M, force))[:, None]
        g = control.frequency_response(control.ss(A, B, C, D), 2 * np.pi * f).complex
        g = np.asarray(g).reshape(C.shape[0], f.size).T
        np.testing.assert_allclose(fr.H[:, :, col], g, rtol=1e-8,
                                   atol=1e-10 * np.abs(g).max())
    # the unit force on the engine's cg along z is the DOF force itself
    np.testing.assert_allclose(fr.H[:, :, 0], fr.H[:, :, 1], rtol=1e-10, atol=1e-14)


def test_rigid_body_mode_falls_back_to_the_direct_solve(write_yaml):
    # Analytic (free-free two-mass system, force F on mass 1):
    #   det = (k + i w c - m1 w^2)(k + i w c - m2 w^2) - (k + i w c)^2
    #   x1 / F = (k + i w c - m2 w^2) / det,  x2 / F = (k + i w c) / det
    model = _model(write_yaml, FREE_FREE)
    m1, m2, k, c = 10.0, 30.0, 5e4, 40.0
    f = np.geomspace(0.5, 50.0, 200)
    w = 2 * np.pi * f
    s = k + 1j * w * c
    det = (s - m1 * w**2) * (s - m2 * w**2) - s**2
    fr = frequency_response(model, f, inputs=["one.z"])
    assert fr.method == "direct"       # the rigid-body mode makes the modal basis defective
    np.testing.assert_allclose(fr.H[:, 0, 0], (s - m2 * w**2) / det, rtol=1e-9)
    np.testing.assert_allclose(fr.H[:, 1, 0], -(w**2) * s / det, rtol=1e-9)
    assert fr.unit("x1", "one.z") == "m per N"


def test_result_formats(tmp_path):
    model = assemble(load_assembly(ROOT_CAR / "quarter_car.yaml"))
    f = np.geomspace(0.5, 50.0, 7)
    fr = frequency_response(model, f, sensors=["body_accel", "travel"])
    d = fr.to_dict()
    assert list(d) == ["frequency_hz", "responses"]
    assert d["frequency_hz"] == pytest.approx(f.tolist())
    first = d["responses"][0]
    assert set(first) == {"input", "sensor", "unit", "magnitude", "phase_deg"}
    assert (first["input"], first["sensor"], first["unit"]) == ("road.contact", "body_accel",
                                                                "m/s^2 per m")
    assert first["magnitude"] == pytest.approx(np.abs(fr.H[:, 0, 0]).tolist())
    rows = fr.to_csv_rows()
    assert len(rows) == 8 and len(rows[0]) == 1 + 2 * 2
    assert rows[3][1] == pytest.approx(abs(fr.H[2, 0, 0]))
    png = tmp_path / "frf.png"
    fr.plot(str(png))
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_frf_command_json_csv_plot(run_cli, tmp_path):
    path = ROOT_CAR / "compact_car.yaml"
    png = tmp_path / "out.png"
    code, out, err = run_cli("frf", path, "--from", "road.fl", "--from", "road.rr", "--to",
                             "floor_front", "--band", "1:20", "--points", "50", "--json",
                             "--plot", png)
    assert code == 0, err
    data = json.loads(out)
    assert len(data["frequency_hz"]) == 50
    assert data["frequency_hz"][0] == pytest.approx(1.0)
    assert data["frequency_hz"][-1] == pytest.approx(20.0)
    assert [(r["input"], r["sensor"]) for r in data["responses"]] == [
        ("road.fl", "floor_front"), ("road.rr", "floor_front")]
    assert png.stat().st_size > 1000
    code, out, _ = run_cli("frf", path, "--depth", "bounce", "--points", "5", "--csv")
    assert code == 0
    lines = out.strip().splitlines()
    assert len(lines) == 6 and lines[0].startswith("frequency_hz,")
    code, out, _ = run_cli("frf", path, "--to", "travel_fl")
    assert code == 0 and "travel_fl" in out and "m per m" in out and "0.5 to 50 Hz" in out


@pytest.mark.parametrize("args, field", [
    (["--band", "20:5"], "--band"),
    (["--band", "5:5"], "--band"),
    (["--band", "0:5"], "--band"),
    (["--band", "-1:5"], "--band"),
    (["--band", "abc"], "--band"),
    (["--points", "1"], "--points"),
    (["--points", "ten"], "--points"),
    (["--to", "nowhere"], "--to"),
    (["--from", "road.xx"], "--from"),
    (["--depth", "nope"], "--depth"),
    (["--plot", "out.jpg"], "--plot"),
])
def test_frf_command_bad_input_is_one_line(run_cli, args, field):
    code, out, err = run_cli("frf", ROOT_CAR / "compact_car.yaml", *args)
    assert code == 2
    assert out == ""
    assert len(err.strip().splitlines()) == 1
    assert field in err


def test_large_model_uses_the_sparse_path(write_yaml):
    # Independent route: the dense batched solve of the same equations. A chain of 101
    # spatial bodies (606 DOFs) is above SPARSE_LIMIT, so "auto" factorises per frequency.
    from builder.analysis.frf import SPARSE_LIMIT

    lines = ["format: 1", "name: chain", "motion: spatial", "bodies:"]
    count = 101
    for i in range(count):
        lines.append(f"  b{i}: {{mass: 2, cg: [{-0.1 * i:.1f}, 0, 0.5], "
                     "gyradius: {x: 0.1, y: 0.1, z: 0.1}}")
    lines += ["road:", "  p: {at: [0, 0, 0]}", "links:",
              "  tyre: {type: spring, a: b0, b: road.p, axis: z, stiffness: 1e5, damping: 50}",
              "  hold: {type: bushing, a: b0, b: ground, stiffness: {x: 1e6, y: 1e6, z: 0, "
              "rx: 1e4, ry: 1e4, rz: 1e4}}"]
    for i in range(1, count):
        lines.append(f"  j{i}: {{type: bushing, a: b{i}, b: {{body: b{i - 1}, at: "
                     f"[{-0.1 * i:.1f}, 0, 0.5]}}, stiffness: {{x: 1e6, y: 1e6, z: 1e6, "
                     "rx: 1e4, ry: 1e4, rz: 1e4}, damping: {z: 20}, loss_factor: 0.02}")
    lines += ["sensors:", f"  tip: {{body: b{count - 1}, measure: acceleration, direction: z}}",
              "  first: {link: tyre, measure: force}"]
    model = _model(write_yaml, "\n".join(lines) + "\n")
    assert model.n > SPARSE_LIMIT
    f = np.geomspace(1.0, 200.0, 12)
    fr = frequency_response(model, f, inputs=["road.p", "b50.y"])
    assert fr.method == "sparse"
    dense = frequency_response(model, f, inputs=["road.p", "b50.y"], method="direct")
    np.testing.assert_allclose(fr.H, dense.H, rtol=1e-8, atol=1e-10 * np.abs(dense.H).max())
