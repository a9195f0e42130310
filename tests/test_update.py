"""Model updating against measured modes.

Sources: noise-free synthetic data made from the model with known
parameter changes (the exact answer is known); with noise, an independent
fit by scipy.optimize.least_squares (finite-difference Jacobian, its own
residual from freshly assembled matrices and scipy.linalg.eigh); two
springs in series enter only through k_a k_b / (k_a + k_b), so no test can
separate them (analytic: the two Jacobian columns are proportional).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
import scipy.linalg
import scipy.optimize
import yaml
from conftest import ASSEMBLIES
from scipy.optimize import linear_sum_assignment

from builder.analysis.correlation import channel_map, simulate_test
from builder.analysis.modes import mac_matrix
from builder.analysis.updating import update
from builder.linear import assemble
from builder.load import load_assembly
from builder.quantities import STIFFNESS, Quantity

CAR = ASSEMBLIES / "compact_car.yaml"
POINTS = {"p1": ("body", [-0.2, 0.6, 0.4]), "p2": ("body", [-0.2, -0.6, 0.4]),
          "p3": ("body", [-2.4, 0.6, 0.4]), "p4": ("body", [-2.4, -0.6, 0.4]),
          "p5": ("body", [-1.2, 0.0, 1.3]),
          "e1": ("engine", [0.4, 0.2, 0.7]), "e2": ("engine", [0.1, -0.2, 0.7]),
          "w1": ("wheel_fl", [0, 0.74, 0.3]), "w2": ("wheel_fr", [0, -0.74, 0.3]),
          "w3": ("wheel_rl", [-2.6, 0.73, 0.3]), "w4": ("wheel_rr", [-2.6, -0.73, 0.3])}
CHANNELS = [(p, "z") for p in POINTS] + [("e1", "x"), ("p5", "y")]
TRUE = {"ks_front": 24e3 * 1.10, "kt": 220e3 * 0.95, "mount_z": 250e3 * 1.08}
BOUNDS = {"ks_front": (15e3, 35e3), "kt": (150e3, 300e3), "mount_z": (150e3, 350e3)}


def _model(path, values):
    over = {k: Quantity(v, STIFFNESS) for k, v in values.items()}
    return assemble(load_assembly(path, overrides=over))


def _synthetic(noise=0.0, seed=0):
    return simulate_test(_model(CAR, TRUE), POINTS, CHANNELS, [1, 2, 3, 4, 5, 8, 10],
                         shape_noise=noise, frequency_noise=noise, seed=seed,
                         title="invented synthetic test")


@pytest.mark.parametrize("mac_weight", [0.0, 0.5])
def test_recovers_a_known_change_exactly_without_noise(mac_weight):
    res = update(CAR, _synthetic(), BOUNDS, mac_weight=mac_weight)
    for n, v in TRUE.items():
        assert abs(res.final[n] / v - 1.0) < 1e-6, (n, res.final[n], v)
    assert res.residual_final < 1e-7 < res.residual_start
    assert all(abs(p.error) < 1e-7 for p in res.after.pairs)
    assert len(res.singular_values) == 3
    assert all(c.verdict == "determined" for c in res.combinations)


def test_with_noise_agrees_with_scipy_least_squares():
    test = _synthetic(noise=0.01, seed=7)
    res = update(CAR, test, BOUNDS)
    rows = [test.numbers.index(k) for k in res.fitted]
    names = list(BOUNDS)
    start = np.array([24e3, 220e3, 250e3])
    lo = np.array([b[0] for b in BOUNDS.values()]) / start
    hi = np.array([b[1] for b in BOUNDS.values()]) / start
    obs = channel_map(assemble(load_assembly(CAR)), test).toarray()

    def residual(x):
        model = _model(CAR, dict(zip(names, x * start, strict=True)))
        lam, phi = scipy.linalg.eigh(model.K.toarray(), model.M.toarray())
        mac = mac_matrix(test.shapes[:, rows], obs @ phi)
        r, c = linear_sum_assignment(-mac)
        f = np.sqrt(lam[c[np.argsort(r)]]) / (2 * np.pi)
        return f / test.frequencies_hz[rows] - 1.0

    ref = scipy.optimize.least_squares(residual, np.ones(3), bounds=(lo, hi), xtol=1e-12,
                                       ftol=1e-12, gtol=1e-12)
    got = np.array([res.final[n] for n in names]) / start
    assert np.allclose(got, ref.x, rtol=2e-5), (got, ref.x)
    assert abs(res.residual_final - np.linalg.norm(ref.fun)) < 1e-8


SERIES = """
format: 1
name: Quarter car with a tyre of two springs in series (invented data)
motion: bounce
parameters:
  ks: 21 kN/m
  kt_a: 400 kN/m
  kt_b: 450 kN/m
bodies:
  body: {mass: 300 kg, cg: [0, 0, 0.55], gyradius: {x: 0.3, y: 0.3, z: 0.3}}
  wheel: {mass: 36 kg, cg: [0, 0, 0.30], gyradius: {x: 0.25, y: 0.2, z: 0.25}}
road:
  contact: {at: [0, 0, 0]}
links:
  suspension: {type: spring, a: body, b: wheel, axis: z, stiffness: "${ks}"}
  tyre: {type: spring, a: wheel, b: road.contact, axis: z, stiffness: "${kt_a * kt_b / (kt_a + kt_b)}"}
"""


def test_springs_in_series_are_not_separable(write_yaml):
    path = write_yaml(SERIES)
    pts = {"b": ("body", [0, 0, 0.55]), "w": ("wheel", [0, 0, 0.3])}
    chans = [("b", "z"), ("w", "z")]
    test = simulate_test(_model(path, {"kt_a": 440e3}), pts, chans, title="invented")
    res = update(path, test, {"kt_a": (2e5, 8e5), "kt_b": (2e5, 8e5)})
    verdicts = [c.verdict for c in res.combinations]
    assert verdicts.count("not separable") == 1
    lost = next(c for c in res.combinations if c.verdict == "not separable")
    # analytic: d ln k / d ln k_a : d ln k / d ln k_b = k_b : k_a, so the unseen direction
    # of relative changes is (k_a, -k_b) normalised
    ka, kb = res.final["kt_a"], res.final["kt_b"]
    want = np.array([ka, -kb]) / np.hypot(ka, kb)
    got = np.array([lost.weights["kt_a"], lost.weights["kt_b"]])
    assert abs(abs(got @ want) - 1.0) < 1e-6
    assert "cannot separate" in res.table()
    # the series rate itself is matched
    k = ka * kb / (ka + kb)
    assert abs(k / (440e3 * 450e3 / 890e3) - 1.0) < 1e-6
    # control: the suspension and one tyre spring are separable
    test = simulate_test(_model(path, {"kt_a": 440e3, "ks": 22e3}), pts, chans)
    res = update(path, test, {"ks": (1e4, 4e4), "kt_a": (2e5, 8e5)})
    assert [c.verdict for c in res.combinations] == ["determined", "determined"]
    assert abs(res.final["ks"] / 22e3 - 1) < 1e-6 and abs(res.final["kt_a"] / 440e3 - 1) < 1e-6


def test_large_model_subspace_path(tmp_path):
    # above the dense limit (flexible car, 120 segments: 730 DOFs): the subspace fit
    # recovers a known change as the dense one does
    text = (ASSEMBLIES / "compact_car_flexible.yaml").read_text()
    text = text.replace("segments: 10", "segments: 120").split("\ndepths:")[0] + "\n"
    path = tmp_path / "flex.yaml"
    path.write_text(text)
    true = {"ks_front": 26e3, "mount_z": 230e3}
    model = _model(path, true)
    assert model.n > 600
    pts = {f"s{i}": ("body", [x, y, 0.5]) for i, (x, y) in enumerate(
        [(0.5, 0.6), (0.5, -0.6), (-1.0, 0.6), (-1.0, -0.6), (-2.8, 0.6), (-2.8, -0.6)])}
    pts.update({"e": ("engine", [0.4, 0.2, 0.7]), "w1": ("wheel_fl", [0, 0.74, 0.3]),
                "w2": ("wheel_rl", [-2.6, 0.73, 0.3])})
    test = simulate_test(model, pts, [(p, "z") for p in pts] + [("e", "x"), ("s0", "y")],
                         [1, 2, 3, 4, 5, 6], title="invented")
    res = update(path, test, {"ks_front": (1.5e4, 3.5e4), "mount_z": (1.5e5, 3.5e5)})
    for n, v in true.items():
        assert abs(res.final[n] / v - 1.0) < 1e-6, (n, res.final[n])


def test_command_json_snippet_and_plot(run_cli, tmp_path):
    test = tmp_path / "t.csv"
    from builder.measured import write_measured
    write_measured(_synthetic(noise=0.005, seed=3), test)
    out_yaml, png = tmp_path / "p.yaml", tmp_path / "u.png"
    code, out, err = run_cli("update", CAR, "--measured", test, "--vary",
                             "ks_front=15kN/m..35kN/m", "--vary", "kt=150kN/m..300kN/m",
                             "--weight", "1=2", "--json", "--write-parameters", out_yaml,
                             "--plot", png)
    assert code == 0, err
    data = json.loads(out)
    assert set(data["parameters"]["kt"]) >= {"start", "final"}
    assert data["parameters"]["kt"]["start"] == 220e3
    assert len(data["singular_values"]) == 2 and data["pairs"]
    snippet = yaml.safe_load(out_yaml.read_text())["parameters"]
    final = float(snippet["kt"].split()[0]) * 1e3
    assert abs(final / data["parameters"]["kt"]["final"] - 1) < 1e-5
    assert png.stat().st_size > 10_000


@pytest.mark.parametrize("args, field", [
    ([], "--vary"),
    (["--vary", "nope=1..2"], "--vary"),
    (["--vary", "ks_front=1kg..2kg"], "--vary"),
    (["--vary", "ks_front=20kN/m..30kN/m", "--weight", "x"], "--weight"),
    (["--vary", "ks_front=20kN/m..30kN/m", "--weight", "99=1"], "weight"),
    (["--vary", "ks_front=20kN/m..30kN/m", "--mac-weight", "-1"], "--mac-weight"),
    (["--vary", "ks_front=20kN/m..30kN/m", "--write-parameters", "out.txt"],
     "--write-parameters"),
    (["--vary", "ks_front=20kN/m..30kN/m", "--vary", "ks_front=20kN/m..30kN/m"], "--vary"),
])
def test_command_refuses_bad_options(run_cli, args, field):
    code, _out, err = run_cli("update", CAR, "--measured",
                              ASSEMBLIES / "measured" / "compact_car_test.csv", *args)
    assert code == 2 and field in err and "Traceback" not in err, err


TRACTOR = ASSEMBLIES.parent / "tests" / "models" / "tractor_cab.yaml"


def test_a_mass_and_mount_rates_of_a_tractor_cab(write_yaml):
    # a model of its own (invented tractor, not a demo file): a mass parameter moves M,
    # so the eigenvalue derivative's -lambda dM/dp term is exercised; noise-free data
    # made with known changes are recovered exactly
    from builder.quantities import MASS
    true = {"kcab_front": Quantity(207e3, STIFFNESS), "kcab_rear": Quantity(216e3, STIFFNESS),
            "cab_mass": Quantity(756.0, MASS)}
    model = assemble(load_assembly(TRACTOR, overrides=true))
    pts = {n: ("cab", at) for n, at in {"a": [0.9, 0.7, 1.3], "b": [0.9, -0.7, 1.3],
                                         "c": [-0.6, 0.7, 1.3], "d": [-0.6, -0.7, 2.9]}.items()}
    pts["e"] = ("chassis", [2.3, 0.5, 0.9])
    test = simulate_test(model, pts, [(p, "z") for p in pts] + [("d", "x"), ("d", "y")],
                         [1, 2, 4, 7, 10, 11, 12], title="invented")
    res = update(TRACTOR, test, {"kcab_front": (1e5, 3e5), "kcab_rear": (1e5, 4e5),
                                 "cab_mass": (500.0, 900.0)}, mac_weight=0.2)
    for n, q in true.items():
        assert abs(res.final[n] / q.value - 1.0) < 1e-6, (n, res.final[n])
    assert "kg" in res.parameters_yaml()


MASS_ON_SPRINGS = """
format: 1
name: A mass on two springs (invented data)
motion: planar
parameters:
  m: 400 kg
  k1: 30 kN/m
  k2: 45 kN/m
bodies:
  block: {mass: "${m}", cg: [0, 0, 0.5], gyradius: {x: 0.4, y: 0.5, z: 0.4}}
links:
  front: {type: spring, a: {body: block, at: [0.6, 0, 0.5]}, b: ground, axis: z, stiffness: "${k1}"}
  rear: {type: spring, a: {body: block, at: [-0.7, 0, 0.5]}, b: ground, axis: z, stiffness: "${k2}"}
"""


def test_mass_and_all_rates_together_are_not_separable(write_yaml):
    # analytic: omega^2 = eig(K, M) is unchanged when m, k1 and k2 all scale by one
    # factor, so frequencies cannot separate the direction (1, 1, 1)/sqrt(3) of relative
    # changes; the shapes (MAC) do not change along it either
    path = write_yaml(MASS_ON_SPRINGS)
    test = simulate_test(_model(path, {"k1": 33e3}), {"f": ("block", [0.6, 0, 0.5]),
                                                     "r": ("block", [-0.7, 0, 0.5])},
                         [("f", "z"), ("r", "z")], title="invented")
    res = update(path, test, {"m": (300.0, 500.0), "k1": (2e4, 5e4), "k2": (3e4, 6e4)})
    lost = [c for c in res.combinations if c.verdict == "not separable"]
    assert len(lost) == 1
    v = np.array([lost[0].weights[n] for n in ("m", "k1", "k2")])
    assert abs(abs(v @ np.ones(3)) / np.sqrt(3) - 1.0) < 1e-6
