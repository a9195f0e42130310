"""Correlation of model and measured modes: MAC, pairing, COMAC, the command.

Sources: the MAC's definition (Allemang and Brown 1982) gives 1 for shapes
that differ by a (complex) factor and 0 for orthogonal ones; modes of a
symmetric problem are M-orthogonal (any text on vibration theory, e.g.
Meirovitch, Elements of Vibration Analysis, 1986); COMAC after Lieven and
Ewins (1988); the one-to-one assignment checked by brute force over every
permutation (an independent enumeration, itertools).
"""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest
import scipy.linalg
from conftest import ASSEMBLIES

from builder.analysis.correlation import comac, correlate, pair_by_mac, simulate_test
from builder.analysis.modes import mac_matrix
from builder.linear import assemble
from builder.load import load_assembly
from builder.measured import measured_csv_text
from builder.measured_files import read_measured

CAR = ASSEMBLIES / "compact_car.yaml"
TEST = ASSEMBLIES / "measured" / "compact_car_test.csv"

POINTS = {"p1": ("body", [-0.2, 0.6, 0.4]), "p2": ("body", [-0.2, -0.6, 0.4]),
          "p3": ("body", [-2.4, 0.6, 0.4]), "p4": ("body", [-2.4, -0.6, 0.4]),
          "e1": ("engine", [0.4, 0.2, 0.7]), "e2": ("engine", [0.1, -0.2, 0.7]),
          "w1": ("wheel_fl", [0, 0.74, 0.3]), "w2": ("wheel_fr", [0, -0.74, 0.3]),
          "w3": ("wheel_rl", [-2.6, 0.73, 0.3]), "w4": ("wheel_rr", [-2.6, -0.73, 0.3])}
CHANNELS = [(p, "z") for p in POINTS] + [("e1", "x"), ("p1", "0 0.6 0.8")]


def _chain(masses):
    n = len(masses)
    K = np.zeros((n, n))
    for i in range(n):
        K[i, i] += 2e4
        if i + 1 < n:
            K[i, i] += 1e4
            K[i + 1, i + 1] += 1e4
            K[i, i + 1] = K[i + 1, i] = -1e4
    return K, np.diag(masses)


def test_mac_of_identical_scaled_and_complex_rotated_shapes_is_one():
    # Allemang and Brown (1982): MAC is invariant to any complex scaling of either vector.
    rng = np.random.default_rng(3)
    a = rng.normal(size=12) + 1j * rng.normal(size=12)
    B = np.column_stack([a, 2.5 * a, -0.01 * a, np.exp(1j * 0.7) * a, (3 - 4j) * a])
    assert np.allclose(mac_matrix(a[:, None], B), 1.0, atol=1e-14)


def test_mac_of_mass_orthogonal_modes_is_zero():
    # Modes of a diagonal-mass model are M-orthogonal; with equal masses M = m I they are
    # orthogonal outright, so MAC (Allemang and Brown 1982) is 0 off the diagonal. With
    # unequal masses the mass-weighted MAC is 0, the plain one is not.
    K, M = _chain([40.0] * 6)
    _lam, phi = scipy.linalg.eigh(K, M)
    mac = mac_matrix(phi, phi)
    assert np.allclose(mac, np.eye(6), atol=1e-12)
    K, M = _chain([10.0, 40.0, 15.0, 80.0, 20.0, 30.0])
    _lam, phi = scipy.linalg.eigh(K, M)
    assert np.allclose(mac_matrix(phi, phi, mass=M), np.eye(6), atol=1e-12)
    assert np.max(mac_matrix(phi, phi) - np.eye(6)) > 1e-3


def test_pairing_is_the_best_one_to_one_assignment():
    # brute force over every assignment (itertools): the pairing is one-to-one and has
    # the largest summed MAC among admissible pairs; greedy row-wise choice would pair
    # test modes 0 and 1 both with model mode 0.
    mac = np.array([[0.95, 0.90, 0.10, 0.0, 0.2],
                    [0.93, 0.20, 0.65, 0.1, 0.0],
                    [0.10, 0.10, 0.70, 0.3, 0.0],
                    [0.00, 0.05, 0.10, 0.4, 0.3]])
    pairs = pair_by_mac(mac, 0.6)
    cols = [c for _, c in pairs]
    assert len(set(cols)) == len(cols)
    best, best_set = -1.0, None
    for perm in itertools.permutations(range(5), 4):
        chosen = [(r, c) for r, c in enumerate(perm) if mac[r, c] >= 0.6]
        total = sum(mac[r, c] for r, c in chosen)
        if total > best + 1e-12:
            best, best_set = total, sorted(chosen)
    assert pairs == best_set
    assert (3, 3) not in pairs     # below the threshold: unpaired


def test_comac_follows_its_definition():
    # Lieven and Ewins (1988) on a 3-channel, 2-pair example worked by hand: shapes equal
    # (after scaling) give 1 everywhere; a channel with the wrong amplitude drops.
    X = np.array([[1.0, 0.5], [2.0, -1.0], [0.5, 1.0]])
    assert np.allclose(comac(X, -3.0 * X), 1.0)
    A = X.copy()
    A[2, 0] = 0.0
    got = comac(X, A)
    assert got[2] < 0.95 and got[2] < min(got[0], got[1])
    # hand formula on unit-normalised test columns and MSF-scaled model columns
    Xn = X / np.linalg.norm(X, axis=0)
    msf = np.sum(A * Xn, axis=0) / np.sum(A * A, axis=0)
    An = A * msf
    want = np.sum(np.abs(Xn) * np.abs(An), 1) ** 2 / (np.sum(Xn ** 2, 1) * np.sum(An ** 2, 1))
    assert np.allclose(got, want)


def test_model_against_its_own_shapes():
    # a test made from the model itself: every pair on the diagonal, MAC 1, error 0
    model = assemble(load_assembly(CAR))
    test = simulate_test(model, POINTS, CHANNELS, [1, 2, 3, 4, 7, 10], title="invented")
    res = correlate(model, test)
    assert [(p.test, p.model) for p in res.pairs] == list(zip(range(1, 7), [1, 2, 3, 4, 7, 10],
                                                              strict=True))
    assert all(abs(p.mac - 1.0) < 1e-12 and abs(p.error) < 1e-12 for p in res.pairs)
    assert np.allclose([v for v in res.point_comac.values()], 1.0)
    # model shapes at the channels = the sensors' kinematics: point z of body at p1
    b = model.assembly.bodies["body"]
    r = np.array(POINTS["p1"][1]) - b.cg
    phi = res.modes.modes[0].shape
    i = model.dofs.index
    z = phi[i("body.z")] + r[1] * phi[i("body.rx")] - r[0] * phi[i("body.ry")]
    assert abs(res.model_shapes[0, 0] - z) < 1e-12


def test_depth_and_split_body_points():
    # a depth correlates through the expansion; a split body's points find their segment
    car = load_assembly(ASSEMBLIES / "compact_car_flexible.yaml")
    model = assemble(car)
    pts = {"a": ("body", [-2.8, 0.5, 0.5]), "b": ("body", [0.6, -0.5, 0.5]),
           "c": ("body", [-1.2, 0.6, 0.5])}
    test = simulate_test(model, pts, [(p, "z") for p in pts] + [("a", "y")], [7, 8, 9])
    res = correlate(model, test)
    assert len(res.pairs) == 3 and min(p.mac for p in res.pairs) > 0.999999
    from builder.reduce import reduce_to_depth
    ride = reduce_to_depth(model, car.depths["ride"])
    assert correlate(ride, test).mac.shape[1] == ride.n


def test_auto_mac_flags_too_few_channels():
    # two channels on one rigid body cannot tell bounce, pitch and roll apart
    model = assemble(load_assembly(CAR))
    pts = {"p1": ("body", [-0.2, 0.6, 0.4]), "p2": ("body", [-0.3, 0.55, 0.4])}
    test = simulate_test(model, pts, [("p1", "z"), ("p2", "z")], [1, 2, 3])
    res = correlate(model, test)
    assert res.auto_mac_flags()
    assert "hardly tell apart" in res.table()
    assert any("fewer channels" in n for n in res.notes)


def test_command_json_csv_and_plot(run_cli, tmp_path):
    code, out, err = run_cli("correlate", CAR, "--measured", TEST, "--json")
    assert code == 0, err
    data = json.loads(out)
    assert {"test", "model", "test_hz", "model_hz", "error", "mac"} <= set(data["pairs"][0])
    assert len(data["mac"]) == 8                     # test modes as rows
    code, out, err = run_cli("correlate", CAR, "--measured", TEST, "--csv")
    assert code == 0 and out.startswith("test,model,test_hz")
    png = tmp_path / "mac.png"
    code, out, err = run_cli("correlate", CAR, "--measured", TEST, "--plot", png,
                             "--depth", "half_car")
    assert code == 0 and png.stat().st_size > 10_000


@pytest.mark.parametrize("args, field", [
    (["--threshold", "1.5"], "--threshold"),
    (["--threshold", "x"], "--threshold"),
    (["--plot", "out.jpg"], "--plot"),
    (["--depth", "nope"], "--depth"),
])
def test_command_refuses_bad_options(run_cli, args, field):
    code, out, err = run_cli("correlate", CAR, "--measured", TEST, *args)
    assert code == 2 and field in err and "Traceback" not in err


def test_point_on_no_body(run_cli, tmp_path):
    text = TEST.read_text().replace("eng_fl,engine", "eng_fl,motor")
    bad = tmp_path / "t.csv"
    bad.write_text(text)
    code, _out, err = run_cli("correlate", CAR, "--measured", bad)
    lines = text.splitlines()
    line = next(i for i, s in enumerate(lines, 1) if s.startswith("eng_fl,motor"))
    assert code == 2 and f"t.csv:{line}: body:" in err and "motor" in err


def test_demo_file_reads_and_says_it_is_invented():
    m = read_measured(TEST)
    assert len(m) == 8 and len(m.channels) == 20 and "INVENTED" in m.title
    assert measured_csv_text(m).startswith("# INVENTED")
