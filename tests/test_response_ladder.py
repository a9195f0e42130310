"""The ladder judged on responses, checked against outside sources.

Sources named beside each check: analytic symmetry of a symmetric car,
the static condensation theory of a two-DOF system (closed-form
eigenvalues), the textbook integrals of a second-order system under white
noise (Newland, An Introduction to Random Vibrations, spectral integrals;
from memory) cross-checked by scipy's Lyapunov solver, and independent
``ride`` runs of the same depths.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import scipy.linalg

from builder.analysis import road
from builder.analysis.response_ladder import Question, response_ladder
from builder.analysis.transient import road_event
from builder.linear import assemble
from builder.load import load_assembly

ROOT = Path(__file__).resolve().parent.parent
SYMMETRIC = ROOT / "tests" / "models" / "symmetric_car.yaml"
QUARTER = ROOT / "assemblies" / "quarter_car.yaml"
V = 60 / 3.6


def _ladder(path, question, **kw):
    return response_ladder(assemble(load_assembly(path)), question, **kw)


def test_symmetric_car_on_identical_tracks_the_tied_half_car_is_exact_and_chosen():
    # analytic symmetry: a car symmetric about its centre plane, both tracks
    # identical, moves symmetrically; the tie of left and right wheels and the
    # condensation of body roll then lose nothing, for every sensor (also the
    # off-centre ones) and for the ride and the bump alike
    q = Question(ride=("C", V, "identical", (0.5, 80.0)),
                 bump=(road_event("bump", 0.03, 0.5), V, None, 1000.0))
    lad = _ladder(SYMMETRIC, q)
    half = lad.depth("half_car")
    assert max(abs(e) for e in half.errors.values()) < 1e-5
    bump_keys = [k for k in half.errors if k.endswith((".peak", ".vdv"))]
    assert bump_keys and max(abs(half.errors[k]) for k in bump_keys) < 1e-9
    assert not lad.depth("bounce_pitch").within
    assert lad.recommended == "half_car"        # over the 7-DOF full depth
    assert "floor_front_left" in half.expanded  # reads the condensed roll


def test_symmetric_car_on_independent_tracks_the_error_is_the_difference_of_ride_runs(
        run_cli):
    # independent ride runs of the two depths (the ride command) give the
    # error the ladder reports, within their integration tolerance
    q = Question(ride=("C", V, "independent", (0.5, 80.0)))
    lad = _ladder(SYMMETRIC, q)
    half = lad.depth("half_car")
    assert not half.within and lad.recommended == "full"
    runs = {}
    for depth in ("half_car", "full"):
        code, out, _ = run_cli("ride", SYMMETRIC, "--road", "C", "--speed", "60 km/h",
                               "--tracks", "independent", "--depth", depth, "--json")
        assert code == 0
        runs[depth] = json.loads(out)["sensors"]
    for key, err in half.errors.items():
        sensor, figure = key.rsplit(".", 1)
        a, b = runs["half_car"][sensor][figure], runs["full"][sensor][figure]
        assert err == pytest.approx((a - b) / b, abs=2e-3), key
    assert max(abs(e) for e in half.errors.values()) > 0.05


def _two_dof(write_yaml, k2: float) -> Path:
    return write_yaml(f"""
format: 1
name: two masses, stiff connection (invented data)
motion: bounce
bodies:
  base: {{mass: 100 kg, cg: [0, 0, 0.3]}}
  top: {{mass: 50 kg, cg: [0, 0, 0.6]}}
road:
  p: {{at: [0, 0, 0]}}
links:
  support: {{type: spring, a: base, b: road.p, axis: z, stiffness: 100 kN/m, damping: 0.8 N s/m}}
  joint: {{type: spring, a: top, b: base, axis: z, stiffness: {k2:g} N/m}}
sensors:
  base_acc: {{body: base, measure: acceleration, direction: z}}
depths:
  condensed: {{keep: [base.z]}}
""", name=f"two_{int(k2)}.yaml")


def test_guyan_error_of_a_stiff_connection_falls_as_static_condensation_theory_says(
        write_yaml):
    # analytic two-DOF case: m1 on k1 (road), m2 on m1 through k2. Guyan onto
    # m1 gives omega_g^2 = k1 / (m1 + m2); the exact lower eigenvalue solves
    # m1 m2 l^2 - (m1 k2 + m2 (k1 + k2)) l + k1 k2 = 0, and to first order
    # the relative frequency error is omega_g^2 m2^2 / (2 (m1 + m2) k2),
    # halving each time k2 doubles. Damping is light (zeta 1e-5), so the FRF
    # peak sits at the undamped frequency to 1e-10.
    m1, m2, k1 = 100.0, 50.0, 1e5
    lg = k1 / (m1 + m2)
    errors = []
    for k2 in (1e7, 2e7, 4e7):
        q = Question(frf=(("road.p", "base_acc"),), frf_band=(1.0, 20.0))
        lad = _ladder(_two_dof(write_yaml, k2), q)
        err = lad.depth("condensed").errors["road.p:base_acc.frf_peak_hz"]
        b = m1 * k2 + m2 * (k1 + k2)
        exact = (b - math.sqrt(b * b - 4 * m1 * m2 * k1 * k2)) / (2 * m1 * m2)
        assert err == pytest.approx(math.sqrt(lg / exact) - 1, rel=2e-3)
        assert err == pytest.approx(lg * m2**2 / (2 * (m1 + m2) * k2), rel=2e-2)
        errors.append(err)
    assert errors[0] / errors[1] == pytest.approx(2, rel=2e-2)
    assert errors[1] / errors[2] == pytest.approx(2, rel=2e-2)


def test_quarter_car_travel_matches_the_white_noise_closed_forms():
    # ISO 8608: a waviness-2 road is white in vertical velocity, one-sided
    # PSD G0 = 4 pi^2 Gd(n0) n0^2 v. Suspension travel variance of the
    # quarter car: G0 (ms + mu) / (4 cs) (from memory; checked here against
    # scipy's Lyapunov solver); of the Guyan bounce depth (one DOF, mass
    # ms + a^2 mu, damping cs b^2, travel b (x - r), a = ks/(ks+kt), b = 1-a):
    # b^2 G0 m / (4 cs b^2) = G0 (ms + a^2 mu) / (4 cs), from the integral
    # of w^2 |H|^2 of a second-order system, pi / (2 m c) (Newland; from memory)
    ms, mu, ks, cs, kt = 300.0, 36.0, 21e3, 1.5e3, 210e3
    g0 = 4 * math.pi**2 * road.class_value("C") * 0.1**2 * V
    A = np.array([[0, 0, 1, -1], [0, 0, 0, 1], [-ks / ms, 0, -cs / ms, cs / ms],
                  [ks / mu, -kt / mu, cs / mu, -cs / mu]])
    B = np.array([[0.0], [-1.0], [0.0], [0.0]])
    P = scipy.linalg.solve_continuous_lyapunov(A, -B @ B.T * g0 / 2)
    full = g0 * (ms + mu) / (4 * cs)
    assert P[0, 0] == pytest.approx(full, rel=1e-9)
    a = ks / (ks + kt)
    bounce = g0 * (ms + a * a * mu) / (4 * cs)
    q = Question(ride=("C", V, "coherent", (1e-3, 1e4)), sensors=("travel",))
    lad = _ladder(QUARTER, q)
    assert lad.full["travel.rms"] == pytest.approx(math.sqrt(full), rel=2e-4)
    d = lad.depth("bounce")
    assert d.values["travel.rms"] == pytest.approx(math.sqrt(bounce), rel=2e-4)
    assert d.errors["travel.rms"] == pytest.approx(math.sqrt(bounce / full) - 1, abs=3e-4)


def test_ladder_command_json_keys_tolerance_and_plot(run_cli, tmp_path):
    png = tmp_path / "errors.png"
    code, out, err = run_cli("ladder", SYMMETRIC, "--ride", "C", "--speed", "60 km/h",
                             "--tracks", "identical", "--sensors", "floor_front_left,travel_fl",
                             "--frf", "road.fl:floor_front_left", "--tolerance", "2%",
                             "--plot", png, "--json")
    assert code == 0, err
    data = json.loads(out)
    # one wheel's FRF is not a symmetric input: the tied half car misses it
    assert data["recommended"] == "full" and data["tolerance"] == 0.02
    half = next(d for d in data["depths"] if d["name"] == "half_car")
    assert abs(half["errors"]["road.fl:floor_front_left.frf_peak"]) > 0.02
    assert abs(half["errors"]["travel_fl.rms"]) < 1e-5
    for d in data["depths"]:
        assert {"name", "dofs", "errors", "within"} <= set(d)
        assert set(d["errors"]) == {"floor_front_left.rms", "floor_front_left.weighted_rms",
                                    "travel_fl.rms", "road.fl:floor_front_left.frf_peak",
                                    "road.fl:floor_front_left.frf_peak_hz"}
    assert png.stat().st_size > 1000
    code, out, _ = run_cli("ladder", SYMMETRIC, "--ride", "C", "--speed", "60 km/h")
    assert code == 0 and "recommended:" in out and "expansion" in out


@pytest.mark.parametrize("args, field", [
    (["--ride", "C"], "--speed"),
    (["--ride", "Q", "--speed", "60 km/h"], ""),
    (["--ride", "C", "--speed", "60 km/h", "--tolerance", "120%"], "--tolerance"),
    (["--ride", "C", "--speed", "60 km/h", "--tolerance", "five"], "--tolerance"),
    (["--ride", "C", "--speed", "60 km/h", "--sensors", "nowhere"], "--sensors"),
    (["--frf", "road.fl"], "--frf"),
    (["--bump", "30 mm", "--speed", "30 km/h"], "--bump"),
    (["--tolerance", "5%"], "--tolerance"),
    (["--propose"], "--propose"),
])
def test_ladder_command_refuses_bad_options_in_one_line(run_cli, args, field):
    code, out, err = run_cli("ladder", SYMMETRIC, *args)
    assert code == 2 and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1 and field in err


def test_a_depth_that_loses_all_its_damping_is_left_out_with_a_note(write_yaml):
    # analytic: the only damper joins the two masses; Guyan onto the lower one
    # makes the upper follow it rigidly (x2 = x1), so the damper never works
    # and the depth's mode sqrt(k1 / (m1 + m2)) is undamped: no RMS exists
    path = write_yaml("""
format: 1
name: damper inside (invented data)
motion: bounce
bodies:
  base: {mass: 100 kg, cg: [0, 0, 0.3]}
  top: {mass: 50 kg, cg: [0, 0, 0.6]}
road:
  p: {at: [0, 0, 0]}
links:
  support: {type: spring, a: base, b: road.p, axis: z, stiffness: 100 kN/m}
  joint: {type: spring, a: top, b: base, axis: z, stiffness: 40 kN/m, damping: 900 N s/m}
sensors:
  base_acc: {body: base, measure: acceleration, direction: z}
depths:
  condensed: {keep: [base.z]}
""")
    lad = _ladder(path, Question(ride=("C", V, "coherent", (0.5, 80.0))))
    assert lad.depths == () and lad.recommended is None
    assert any("condensed left out" in n and "infinite" in n for n in lad.notes)


def test_a_force_on_a_condensed_body_enters_through_the_expansion_exactly_at_zero_frequency():
    # Guyan condensation is exact in statics (Guyan, 1965): a force on the
    # engine, which the bounce-pitch depth condenses, gives the full model's
    # static travel and tyre load at the depth too; at 15 Hz it does not
    # (with the static correction of the force, as road inputs have theirs)
    from builder.analysis.frf import frequency_response
    from builder.analysis.response_ladder import _frf
    from builder.reduce import reduce_to_depth

    asm = load_assembly(ROOT / "assemblies" / "compact_car.yaml")
    model = assemble(asm)
    depth = reduce_to_depth(model, asm.depths["bounce_pitch"])
    f = np.array([1e-4, 15.0])
    for sensor in ("travel_fl", "tyre_load_rl", "floor_front"):
        full = frequency_response(model, f, inputs=["engine.z"], sensors=[sensor]).H[:, 0, 0]
        red = _frf(depth, "engine.z", sensor, f)
        if sensor != "floor_front":         # an acceleration is zero in statics
            assert red[0].real == pytest.approx(full[0].real, rel=1e-8), sensor
            # the damping part, O(w c / k), is not exact in a Guyan depth
            assert abs(red[0].imag - full[0].imag) < 1e-3 * abs(full[0]), sensor
        assert abs(red[1] - full[1]) > 0.05 * abs(full[1]), sensor
