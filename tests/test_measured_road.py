"""Measured road profiles: Welch PSD and ISO 8608 class, and the exact response to them."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from builder.analysis import road
from builder.analysis.measured_road import profile_inputs, profile_response, stream_outputs
from builder.analysis.profile_psd import profile_spectrum
from builder.analysis.transient import road_history_response
from builder.errors import InputError
from builder.linear import assemble
from builder.load import load_assembly
from builder.profiles import RoadProfile, read_profile

ROOT = Path(__file__).resolve().parent.parent


@pytest.mark.parametrize("letter, waviness, seed", [("C", 2.0, 1), ("E", 2.0, 2), ("B", 2.5, 3)])
def test_welch_psd_of_an_iso_8608_profile_recovers_class_and_waviness(letter, waviness, seed):
    # Source: ISO 8608 (class G_d(n0) geometric means, n0 = 0.1 cycles/m; from memory). A
    # 10 km profile at 5 cm drawn from the class spectrum (builder.analysis.road) gives back
    # its G_d(n0) and waviness. Statistical bounds: the Welch estimate averages about 50
    # half-overlapping segments and the fit some 20 one-third-octave bands; over 20 seeds
    # of this generator the spread is 0.6 % on G_d(n0) and 0.004 on w (measured once), so
    # 5 % and 0.05 are beyond seven standard deviations; a class is a factor 4 wide.
    _, z = road.road_profile(10_000.0, 0.05, letter, seed=seed, waviness=waviness)
    spectrum = profile_spectrum(RoadProfile("generated", 0.0, 0.05, z, z))
    assert spectrum.fit.waviness == pytest.approx(waviness, abs=0.05)
    assert spectrum.fit.gd_n0_free == pytest.approx(road.class_value(letter), rel=0.05)
    if waviness == 2.0:
        assert spectrum.road_class == letter
        assert spectrum.fit.gd_n0 == pytest.approx(road.class_value(letter), rel=0.05)
    assert spectrum.band == (0.011, 2.83)


@pytest.fixture(scope="module")
def seat_car():
    asm = load_assembly(ROOT / "assemblies" / "compact_car_seat.yaml")
    return asm, assemble(asm)


def _profile(length=150.0, step=0.05, seed=5, letter="C") -> RoadProfile:
    _, left = road.road_profile(length, step, letter, seed=seed)
    _, right = road.road_profile(length, step, letter, seed=seed + 1)
    return RoadProfile("generated", 10.0, step, left, right)


def test_profile_response_equals_scipy_lsim(seat_car):
    # Independent library: scipy.signal.lsim (interp=True: the input a straight line
    # between samples) on the same state space from the same initial state. The seat
    # car's tyres have no damping, so the road velocity enters nowhere (checked) and
    # lsim's linear interpolation of the whole input is the solver's first-order hold.
    from scipy import signal

    from builder.analysis.measured_road import _static_state

    asm, model = seat_car
    profile = _profile()
    A, B, C, D = model.to_state_space()
    nr = len(model.inputs)
    assert not B[:, nr:].any() and not D[:, nr:].any()
    resp = profile_response(model, profile, 50 / 3.6, 1000.0, lead_s=0.0, assembly=asm)
    t = resp.time_s
    r = profile_inputs(model, profile, 50 / 3.6, t)
    np.testing.assert_allclose(resp.road_m, r, rtol=0, atol=1e-12)   # round-off of v t
    u = np.hstack([r, np.zeros_like(r)])
    x0 = _static_state(model, A, B, r[0])
    _, y, _ = signal.lsim((A, B, C, D), u, t, X0=x0, interp=True)
    scale = np.abs(y).max(axis=0)
    np.testing.assert_allclose(resp.y / scale, y / scale, rtol=0, atol=1e-8)


def test_streaming_equals_the_whole_record_solver_and_ignores_chunks(seat_car):
    # The chunked modal recurrence against transient.road_history_response (the whole
    # record at once, from rest), a model with tyre damping so that r' enters, and two
    # chunk sizes.
    text = (ROOT / "assemblies" / "compact_car.yaml").read_text()
    text = text.replace('stiffness: "${kt}"}', 'stiffness: "${kt}", damping: 150 N s/m}')
    path = ROOT / "tests" / "_damped_tyres.yaml"
    try:
        path.write_text(text)
        model = assemble(load_assembly(path))
    finally:
        path.unlink()
    assert model.Bv.toarray().any()
    profile = _profile(length=80.0)
    v, rate = 40 / 3.6, 500.0
    t = np.arange(4000) / rate
    r = profile_inputs(model, profile, v, t)
    whole = road_history_response(model, t, r)
    A, B, C, D = model.to_state_space()

    def road_at(idx):
        return profile_inputs(model, profile, v, idx / rate)

    for chunk in (997, 65536):
        y, _ = stream_outputs(A, B, C, D, 1 / rate, t.size, road_at, chunk=chunk)
        scale = np.abs(whole.y).max(axis=0)
        np.testing.assert_allclose(y / scale, whole.y / scale, rtol=0, atol=1e-10)


def _write(path: Path, text: str) -> Path:
    path.write_text(text)
    return path


def _rows(n=40, step=0.1, change=None):
    """Profile rows ``distance,elevation``; ``change`` maps a row index to its text."""
    rows = [f"{k * step:.3f},{np.sin(k / 3):.4f}" for k in range(n)]
    for k, text in (change or {}).items():
        rows[k] = text
    return "\n".join(rows)


@pytest.mark.parametrize("body, line, words", [
    ("distance,elevation\n" + _rows() + "\n4.5,1\n", 42, "a gap of"),
    ("distance,elevation\n" + _rows(change={2: "0.05,1"}), 4, "distance goes back"),
    ("distance,height\n" + _rows(), 1, 'no "elevation" column'),
    ("x,elevation\n" + _rows(), 1, 'no "distance" column'),
    ("distance,elevation,left,right\n" + "\n".join(f"{k},1,1,1" for k in range(20)), 1,
     "not both"),
    ("distance,elevation\n" + _rows(change={1: "0.1,nan"}), 3, "not a number"),
    ("distance,elevation\n" + _rows(change={5: "0.5,"}), 7, "an empty value"),
    ("distance,elevation [kg]\n" + _rows(), 1, "is not a length"),
])
def test_profile_errors_name_file_line_and_column(tmp_path, body, line, words):
    path = _write(tmp_path / "p.csv", body)
    with pytest.raises(InputError) as err:
        read_profile(path)
    assert f"{path}:{line}:" in str(err.value) and words in str(err.value)


def test_profile_units_and_tracks(tmp_path):
    path = _write(tmp_path / "p.csv", "# invented\ndistance [m],left [mm],right [mm]\n"
                  + "\n".join(f"{k * 0.05:.2f},{k},{-k}" for k in range(30)))
    p = read_profile(path)
    assert p.step_m == pytest.approx(0.05) and p.two_tracks
    assert p.left[2] == pytest.approx(2e-3) and p.right[2] == pytest.approx(-2e-3)
    assert p.track(0)[2] == pytest.approx(0.0)


def _cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "builder.cli", *args], capture_output=True,
                          text=True, cwd=ROOT, timeout=300)


def test_ride_and_bump_take_a_profile(tmp_path):
    out = _cli("ride", "assemblies/compact_car_seat.yaml", "--profile",
               "assemblies/records/road_profile.csv", "--speed", "60 km/h", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["profile"]["class"] == "C"
    for entry in data["sensors"].values():
        assert {"rms", "unit"} <= set(entry)
    assert "weighted_rms" in data["sensors"]["driver_seat_z"]
    assert data["comfort_points"][0]["interface"] == "seat"
    csv = tmp_path / "h.csv"
    out = _cli("bump", "assemblies/compact_car.yaml", "--profile",
               "assemblies/records/road_profile.csv", "--speed", "80 km/h", "--csv", str(csv))
    assert out.returncode == 0, out.stderr
    assert "ISO 8608 class C" in out.stdout and csv.exists()


def test_profile_option_errors():
    base = ["assemblies/compact_car.yaml", "--speed", "60 km/h"]
    out = _cli("ride", *base, "--road", "C", "--profile", "assemblies/records/road_profile.csv")
    assert out.returncode == 2 and out.stderr.startswith("--profile: give a road class")
    out = _cli("ride", *base)
    assert out.returncode == 2 and out.stderr.startswith("--road: needed")
    out = _cli("bump", *base, "--profile", "assemblies/records/road_profile.csv", "--height",
               "1 cm")
    assert out.returncode == 2 and out.stderr.startswith("--height: is not used with --profile")
    out = _cli("ride", *base, "--profile", "nowhere.csv")
    assert out.returncode == 2 and out.stderr.strip() == "nowhere.csv: no such file"


def test_loss_factor_enters_the_time_solution_as_equivalent_viscous_damping(write_yaml):
    # A quarter car damped by a loss factor alone (eta = 0.3 on the suspension): the
    # time solution takes viscous damping equivalent at each mode's frequency, so its
    # damping ratios are those lumpgraph modes reports for the loss factor (within 2 %:
    # modal, not coupled, damping), and the note says so.
    from builder.analysis.measured_road import equivalent_viscous
    from builder.analysis.modes import compute_modes

    text = (ROOT / "assemblies" / "quarter_car.yaml").read_text()
    text = text.replace("    damping: ${cs}", "    loss_factor: 0.3")
    assert "loss_factor: 0.3" in text
    model = assemble(load_assembly(write_yaml(text)))
    viscous, note = equivalent_viscous(model)
    assert note and not viscous.H.toarray().any() and viscous.C.toarray().any()
    expected = [m.damping_ratio for m in compute_modes(model).modes]
    got = [m.damping_ratio for m in compute_modes(viscous).modes]
    np.testing.assert_allclose(got, expected, rtol=0.02)
    assert equivalent_viscous(viscous)[0] is viscous
