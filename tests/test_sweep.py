"""Sweeps: option grammar, designs, batched modes, MAC tracking, executors, CSV resume."""

from __future__ import annotations

import io
import math

import numpy as np
import pytest
import scipy.linalg

from builder.analysis.sampling import (
    REF_NOMINAL,
    REF_NONE,
    build_design,
    full_grid,
    parse_scatter,
    parse_vary,
)
from builder.analysis.sweep import (
    AffineFamily,
    FunctionProblem,
    ModesProblem,
    Progress,
    batched_modes,
    find_parameters,
    run_sweep,
)
from builder.analysis.tracking import mac_matrix, track_modes
from builder.errors import InputError

# ---------------------------------------------------------------- grammar --


def test_vary_reads_units():
    # Source: SI definition of the kilo prefix (1 kN/m = 1000 N/m).
    s = parse_vary("ks_front=15kN/m..30kN/m:16")
    assert (s.name, s.low, s.high, s.count) == ("ks_front", 15e3, 30e3, 16)
    assert s.values()[1] == pytest.approx(16e3)
    s = parse_vary("x=-20 mm..1.5e1 mm:3")
    assert s.values() == pytest.approx([-0.02, -0.0025, 0.015])


@pytest.mark.parametrize("text", ["ks", "ks=1..", "ks=..2:3", "ks=1kN/m..2kg:4", "ks=1..2:0",
                                  "ks=1..2:x", "1k=1..2:3", "ks=a..2:3", "ks=1..2"])
def test_vary_errors_are_one_line_and_name_the_option(text):
    with pytest.raises(InputError) as err:
        parse_vary(text)
    msg = str(err.value)
    assert "--vary" in msg and "\n" not in msg


def test_scatter_reads_normal_percent_and_uniform():
    # Source: definition; 5 % of 20 kN/m is 1 kN/m.
    s = parse_scatter("ks=normal:20kN/m,5%")
    assert (s.kind, s.a, s.b) == ("normal", 20e3, pytest.approx(1e3))
    s = parse_scatter("m=uniform:30 kg,40 kg")
    assert (s.kind, s.a, s.b, s.centre) == ("uniform", 30.0, 40.0, 35.0)
    for bad in ("ks=gauss:1,2", "ks=normal:1", "ks=normal:1,-2", "ks=uniform:2,1",
                "ks=normal:1kg,2m"):
        with pytest.raises(InputError, match="--scatter"):
            parse_scatter(bad)


def test_grid_order_and_references():
    # Source: definition of a full factorial grid, first factor slowest
    # (itertools.product order); each point tracks against its neighbour one
    # step back along the innermost axis not at its start.
    a, b = parse_vary("a=0..1:2"), parse_vary("b=10..30:3")
    values, ref = full_grid([a, b])
    assert values.tolist() == [[0, 10], [0, 20], [0, 30], [1, 10], [1, 20], [1, 30]]
    assert ref.tolist() == [REF_NONE, 0, 1, 0, 3, 4]


def test_latin_hypercube_fills_every_stratum_once():
    # Source: the definition of a Latin hypercube sample (McKay, Beckman and
    # Conover, Technometrics 21, 1979): n points, one in each of n equal
    # intervals of every parameter.
    d = build_design([parse_vary("a=1..2", need_count=False), parse_vary("b=-5..5:2")],
                     lhs=50, seed=4)
    assert d.values.shape == (50, 2) and d.kind == "lhs"
    for j, (lo, hi) in enumerate([(1, 2), (-5, 5)]):
        strata = np.floor((d.values[:, j] - lo) / (hi - lo) * 50).astype(int)
        assert sorted(strata.tolist()) == list(range(50))
    assert np.all(d.reference == REF_NOMINAL)
    again = build_design([parse_vary("a=1..2", need_count=False), parse_vary("b=-5..5:2")],
                         lhs=50, seed=4)
    assert np.array_equal(d.values, again.values)


def test_design_option_errors():
    with pytest.raises(InputError, match="--samples"):
        build_design(scatter=[parse_scatter("k=normal:1,0.1")])
    with pytest.raises(InputError, match="COUNT"):
        build_design([parse_vary("a=1..2", need_count=False)])
    with pytest.raises(InputError, match="twice"):
        build_design([parse_vary("a=1..2:2"), parse_vary("a=1..3:2")])


def test_grid_with_scatter_repeats_the_same_samples():
    d = build_design([parse_vary("a=1..2:2")], [parse_scatter("k=uniform:0,1")], samples=3,
                     seed=1)
    assert d.values.shape == (6, 2)
    assert np.array_equal(d.values[:3, 1], d.values[3:, 1])


# --------------------------------------------------------- batched modes --

def test_batched_modes_match_scipy_generalised_eigh():
    # Source: scipy.linalg.eigh(K, M) per variant (independent LAPACK driver).
    rng = np.random.default_rng(0)
    n, k = 7, 5
    A = rng.normal(size=(k, n, n))
    K = A @ np.swapaxes(A, 1, 2) + n * np.eye(n)
    B = rng.normal(size=(k, n, n))
    M = B @ np.swapaxes(B, 1, 2) + n * np.eye(n)
    for Ms in (M, M[0]):
        f, phi = batched_modes(K, Ms)
        for v in range(k):
            Mv = Ms if Ms.ndim == 2 else Ms[v]
            lam = scipy.linalg.eigh(K[v], Mv, eigvals_only=True)
            np.testing.assert_allclose(f[v], np.sqrt(lam) / (2 * math.pi), rtol=1e-10)
            np.testing.assert_allclose(phi[v].T @ Mv @ phi[v], np.eye(n), atol=1e-10)


# -------------------------------------------------------------- tracking --

def _crossing_family() -> tuple[AffineFamily, np.ndarray]:
    """Two uncoupled oscillators, m1 = 10 kg on k1 = 4000 N/m (f = sqrt(400)/2pi)
    and m2 = 1 kg on k2 (swept), written in rotated coordinates q = R x so the
    matrices are full and the mode shapes are not unit vectors."""
    c, s = math.cos(0.6), math.sin(0.6)
    R = np.array([[c, -s], [s, c]])
    K0 = R @ np.diag([4000.0, 100.0]) @ R.T
    dK = (R @ np.diag([0.0, 1.0]) @ R.T)[None]
    M0 = R @ np.diag([10.0, 1.0]) @ R.T
    return AffineFamily(("k2",), np.array([100.0]), K0, dK, M0), R


def test_tracking_follows_modes_through_a_crossing():
    # Source: analytic. The oscillators are uncoupled, so one mode stays at
    # sqrt(k1/m1)/2pi and the other is sqrt(k2/m2)/2pi; they cross at k2 = 400.
    fam, _ = _crossing_family()
    design = build_design([parse_vary("k2=100..1000:20")])
    res = run_sweep(ModesProblem(fam), design, chunk_size=4)
    k2 = res.column("k2")
    np.testing.assert_allclose(res.column("mode1_hz"), np.sqrt(k2) / (2 * math.pi), rtol=1e-10)
    np.testing.assert_allclose(res.column("mode2_hz"), np.sqrt(400.0) / (2 * math.pi),
                               rtol=1e-10)
    srt = res.sorted_frequencies()
    assert srt[0, 0] == pytest.approx(res.results[0, 0]) and srt[-1, 0] < res.results[-1, 0]
    assert res.ranks[0].tolist() == [0, 1] and res.ranks[-1].tolist() == [1, 0]


def test_track_modes_hungarian_on_shapes():
    # Source: analytic, as above: the shape of the k2 oscillator is R e2
    # whatever the frequency order.
    fam, R = _crossing_family()
    k2s = np.linspace(100, 1000, 12)   # steps past, not onto, k2 = 400
    K, M = fam.matrices(k2s[:, None])
    _f, shapes = batched_modes(K, M)
    perms = track_modes(list(shapes), mass=M)
    for v, p in enumerate(perms):
        mac = mac_matrix(R[:, [1]], shapes[v][:, p], M)
        assert mac[0, 0] == pytest.approx(1.0) and mac[0, 1] == pytest.approx(0.0, abs=1e-12)
        assert p.tolist() == ([0, 1] if k2s[v] < 400 else [1, 0])


# ------------------------------------------------------------ executors --

def _grid_problem() -> tuple[ModesProblem, object]:
    rng = np.random.default_rng(5)
    n = 6
    A = rng.normal(size=(n, n))
    K0 = A @ A.T + n * np.eye(n)
    dK = np.stack([np.diag(rng.uniform(0.5, 1.5, n)), np.outer(A[0], A[0])])
    M0 = np.diag(rng.uniform(1.0, 3.0, n))
    dM = np.stack([np.zeros((n, n)), np.diag(rng.uniform(0.0, 0.2, n))])
    fam = AffineFamily(("a", "b"), np.array([0.0, 0.0]), K0, dK, M0, dM)
    design = build_design([parse_vary("a=0..8:9"), parse_vary("b=0..3:7")],
                          [parse_scatter("c=normal:1,0.1")][:0])
    return ModesProblem(fam, n_modes=4), design


def test_results_identical_in_process_local_workers_and_dask(tmp_path):
    # Source: determinism requirement; the executors must not change a bit.
    from distributed import Client, LocalCluster
    problem, design = _grid_problem()
    base = run_sweep(problem, design, chunk_size=10, csv_path=tmp_path / "a.csv")
    procs = run_sweep(problem, design, chunk_size=10, workers=2, csv_path=tmp_path / "b.csv")
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp",
                      host="127.0.0.1", scheduler_port=0, dashboard_address=None) as cluster, \
            Client(cluster) as client:
        dask = run_sweep(problem, design, chunk_size=10, cluster=client,
                         csv_path=tmp_path / "c.csv")
        addr = run_sweep(problem, design, chunk_size=10, cluster=cluster.scheduler_address)
    for other in (procs, dask, addr):
        assert np.array_equal(other.results, base.results)
        assert np.array_equal(other.ranks, base.ranks)
    text = (tmp_path / "a.csv").read_text()
    assert text == (tmp_path / "b.csv").read_text() == (tmp_path / "c.csv").read_text()
    # and the same frequencies as scipy.linalg.eigh of every variant alone
    K, M = problem.family.matrices(design.values)
    for v in range(len(design)):
        lam = scipy.linalg.eigh(K[v], M[v], eigvals_only=True)
        f = np.sqrt(lam) / (2 * math.pi)
        np.testing.assert_allclose(base.results[v], f[base.ranks[v]], rtol=1e-10)


class _Stopper:
    """A result function that stops the sweep (as Ctrl-C would) at one variant."""

    def __init__(self, stop_at: int | None):
        self.stop_at, self.calls = stop_at, 0

    def __call__(self, p: dict) -> dict:
        self.calls += 1
        if self.stop_at is not None and self.calls > self.stop_at:
            raise KeyboardInterrupt
        return {"y": p["a"] ** 2 + p.get("b", 0.0), "z": math.sin(p["a"])}


def test_interrupted_sweep_keeps_rows_and_resume_finishes(tmp_path):
    design = build_design([parse_vary("a=0..1:6"), parse_vary("b=0..1:5")])
    path = tmp_path / "out.csv"
    whole = run_sweep(FunctionProblem(design.names, _Stopper(None), ("y", "z")), design,
                      chunk_size=4, csv_path=tmp_path / "whole.csv")
    with pytest.raises(KeyboardInterrupt):
        run_sweep(FunctionProblem(design.names, _Stopper(13), ("y", "z")), design,
                  chunk_size=4, csv_path=path)
    lines = path.read_text().splitlines()
    assert len(lines) == 1 + 12                      # header + three finished chunks
    with open(path, "a") as fh:
        fh.write("12,0.4,0.")                        # a half-written line from a crash
    again = _Stopper(None)
    res = run_sweep(FunctionProblem(design.names, again, ("y", "z")), design, chunk_size=4,
                    csv_path=path, resume=True)
    assert again.calls == 30 - 12
    assert path.read_text() == (tmp_path / "whole.csv").read_text()
    assert np.array_equal(res.results, whole.results)
    assert path.read_text().splitlines()[0] == "variant,a,b,y,z"


def test_resume_refuses_another_sweep(tmp_path):
    design = build_design([parse_vary("a=0..1:6")])
    path = tmp_path / "out.csv"
    run_sweep(FunctionProblem(design.names, _Stopper(None), ("y",)), design, csv_path=path)
    other = build_design([parse_vary("a=0..2:6")])
    with pytest.raises(InputError, match="--resume"):
        run_sweep(FunctionProblem(other.names, _Stopper(None), ("y",)), other, csv_path=path,
                  resume=True)


def test_modes_resume_continues_tracking(tmp_path):
    # Source: analytic crossing as above; the tracked curves must survive a restart.
    fam, _ = _crossing_family()
    design = build_design([parse_vary("k2=100..1000:20")])
    path = tmp_path / "m.csv"
    run_sweep(ModesProblem(fam), design, chunk_size=4, csv_path=path)
    lines = path.read_text().splitlines()
    path.write_text("\n".join(lines[:6]) + "\n")     # the first five variants only
    res = run_sweep(ModesProblem(fam), design, chunk_size=4, csv_path=path, resume=True)
    np.testing.assert_allclose(res.column("mode1_hz"), np.sqrt(res.column("k2")) / (2 * math.pi),
                               rtol=1e-10)
    assert path.read_text().splitlines() == lines


# ------------------------------------------------------- tables, extras --

def test_records_pandas_and_progress():
    fam, _ = _crossing_family()
    design = build_design([parse_vary("k2=100..1000:5")])
    buf = io.StringIO()
    res = run_sweep(ModesProblem(fam), design, progress=Progress(5, stream=buf))
    recs = res.to_records()
    assert recs[0]["k2"] == 100.0 and set(recs[0]) == {"variant", "k2", "mode1_hz", "mode2_hz"}
    assert "5/5" in buf.getvalue() and "100%" in buf.getvalue()
    import pandas as pd
    df = res.to_pandas()
    assert isinstance(df, pd.DataFrame) and list(df.columns) == ["k2", "mode1_hz", "mode2_hz"]


def test_plots_write_png(tmp_path):
    fam, _ = _crossing_family()
    res = run_sweep(ModesProblem(fam), build_design([parse_vary("k2=100..1000:9")]))
    out = res.plot(tmp_path / "f.png")
    assert (tmp_path / "f.png").read_bytes()[:4] == b"\x89PNG" and out.endswith("f.png")
    res.histogram(tmp_path / "h.png")
    assert (tmp_path / "h.png").stat().st_size > 1000


def test_find_parameters_hits_two_targets():
    # Source: analytic. Two uncoupled oscillators: f_i = sqrt(k_i/m_i)/2pi,
    # so the rates that give 1.2 Hz on 300 kg and 11 Hz on 40 kg are
    # k = m (2 pi f)^2.
    fam = AffineFamily(("k1", "k2"), np.array([20e3, 150e3]), np.diag([20e3, 150e3]),
                       np.stack([np.diag([1.0, 0.0]), np.diag([0.0, 1.0])]),
                       np.diag([300.0, 40.0]))
    res = find_parameters(fam, {"k1": (5e3, 60e3), "k2": (50e3, 400e3)}, targets={1: 1.2, 2: 11})
    assert res.success
    assert res.values["k1"] == pytest.approx(300 * (2 * math.pi * 1.2) ** 2, rel=1e-7)
    assert res.values["k2"] == pytest.approx(40 * (2 * math.pi * 11) ** 2, rel=1e-7)
    assert res.achieved["mode1_hz"] == pytest.approx(1.2, rel=1e-9)
    assert "target" in res.text()
    # a target outside the bounds stops at the bound (k1 <= 20 kN/m: 1.3 Hz max)
    capped = find_parameters(fam, {"k1": (5e3, 20e3)}, targets={1: 2.0})
    assert capped.values["k1"] == pytest.approx(20e3)
    assert capped.achieved["mode1_hz"] == pytest.approx(math.sqrt(20e3 / 300) / (2 * math.pi))


def test_find_parameters_minimises_within_bounds():
    # Source: analytic. (f1 - 1.0 Hz)^2 over k1 in [5, 60] kN/m is least at
    # k1 = 300 (2 pi)^2 N/m.
    fam = AffineFamily(("k1",), np.array([20e3]), np.array([[20e3]]), np.array([[[1.0]]]),
                       np.array([[300.0]]))

    def objective(p):
        return (math.sqrt(p["k1"] / 300.0) / (2 * math.pi) - 1.0) ** 2 * 1e3

    res = find_parameters(fam, {"k1": (5e3, 60e3)}, objective=objective)
    assert res.values["k1"] == pytest.approx(300 * (2 * math.pi) ** 2, rel=1e-3)
    with pytest.raises(InputError, match="mode 3"):
        find_parameters(fam, {"k1": (5e3, 60e3)}, targets={3: 1.0})


# ------------------------------------------------------------ file sweeps --

ASSEMBLIES = __import__("pathlib").Path(__file__).resolve().parent.parent / "assemblies"
QUARTER = ASSEMBLIES / "quarter_car.yaml"
COMPACT = ASSEMBLIES / "compact_car.yaml"


def _quarter_closed_form(ks, kt=210e3, ms=300.0, mu=36.0):
    """Source: analytic. Roots of ms mu lambda^2 - (ks mu + (ks + kt) ms) lambda
    + ks kt = 0 (the 2-DOF quarter car), as frequencies in Hz."""
    ks = np.asarray(ks, dtype=float)
    a, b, c = ms * mu, -(ks * mu + (ks + kt) * ms), ks * kt
    disc = np.sqrt(b * b - 4 * a * c)
    return np.sqrt(np.stack([(-b - disc) / (2 * a), (-b + disc) / (2 * a)], axis=-1)) / (
        2 * math.pi)


def test_file_sweep_matches_quarter_car_closed_form(tmp_path, run_cli):
    # Source: analytic closed form of the quarter car (above), through the
    # command line, with the file's ks swept in kN/m.
    out = tmp_path / "q.csv"
    code, text, err = run_cli("sweep", QUARTER, "--vary", "ks=15kN/m..30kN/m:7", "--csv", out)
    assert code == 0, err
    assert "batched" in text and "mode1_hz: " in text      # curves named by their modes
    rows = [line.split(",") for line in out.read_text().splitlines()]
    assert rows[0] == ["variant", "ks", "mode1_hz", "mode2_hz", "ranks"]
    ks = np.array([float(r[1]) for r in rows[1:]])
    f = np.array([[float(r[2]), float(r[3])] for r in rows[1:]])
    np.testing.assert_allclose(ks, np.linspace(15e3, 30e3, 7))
    np.testing.assert_allclose(f, _quarter_closed_form(ks), rtol=1e-10)


def test_file_fast_path_agrees_with_rebuilding_every_variant():
    # Consistency with the core's public API (load with overrides, assemble,
    # reduce), not an outside check: the batched path must not change results.
    from builder.analysis.sweep import CallbackFamily, FileModel, file_family, file_parameters
    params = file_parameters(COMPACT)
    names = ("ks_front", "kt", "mount_z")
    rng = np.random.default_rng(2)
    p0 = np.array([params[n].value for n in names])
    rows = p0 * rng.uniform(0.7, 1.3, (4, 3))
    dims = tuple((n, q.dim) for n, q in params.items())
    for depth in (None, "half_car"):
        fam = file_family(COMPACT, names, p0, 0.3 * p0, depth=depth)
        assert isinstance(fam, AffineFamily)
        slow = CallbackFamily(names, FileModel(str(COMPACT), dims, depth), p0)
        fast_f, _ = batched_modes(*fam.matrices(rows))
        slow_f, _ = batched_modes(*slow.matrices(rows))
        np.testing.assert_allclose(fast_f, slow_f, rtol=1e-9)


def test_file_sweep_with_a_non_affine_parameter_rebuilds(tmp_path):
    # Source: analytic. A spring rate written as ${k0 * r**2} is not affine in
    # r, so the sweep rebuilds every variant; the frequency of the one-DOF
    # model stays sqrt(k0 r^2 / m)/2pi.
    from builder.analysis.sweep import CallbackFamily, file_family
    path = tmp_path / "lever.yaml"
    path.write_text("""format: 1
motion: bounce
parameters: {k0: 20 kN/m, r: 0.8, m: 250 kg}
bodies:
  body: {mass: "${m}", cg: [0, 0, 0.5], gyradius: {x: 0.3, y: 0.3, z: 0.3}}
links:
  spring: {type: spring, a: body, b: ground, axis: z, stiffness: "${k0 * r**2}"}
""")
    fam = file_family(path, ("r",), spans=(0.4,))
    assert isinstance(fam, CallbackFamily)
    design = build_design([parse_vary("r=0.5..1.1:4")])
    res = run_sweep(ModesProblem(fam), design, workers=2)
    r = res.column("r")
    np.testing.assert_allclose(res.column("mode1_hz"),
                               np.sqrt(20e3 * r**2 / 250) / (2 * math.pi), rtol=1e-10)


def test_sensitivity_and_target_commands_on_the_quarter_car(run_cli):
    # Source: analytic. df/dks from the derivative of the closed form (central
    # difference of the exact roots), and the ks that puts the bounce mode at
    # 1.2 Hz from the characteristic equation solved for ks:
    # ks = ms lam (kt - mu lam) / (kt - (ms + mu) lam), lam = (2 pi 1.2)^2.
    code, text, err = run_cli("sweep", QUARTER, "--sensitivity", "--vary", "ks=1..2", "--json")
    assert code == 0, err
    import json
    data = json.loads(text)
    h = 1.0
    want = (_quarter_closed_form(21e3 + h) - _quarter_closed_form(21e3 - h)) / (2 * h)
    got = [m["df_dp"]["ks"] for m in data["modes"]]
    np.testing.assert_allclose(got, want, rtol=1e-5)
    assert data["modes"][0]["relative"]["ks"] == pytest.approx(21e3 * want[0] / float(
        _quarter_closed_form(21e3)[0]), rel=1e-5)

    code, text, err = run_cli("sweep", QUARTER, "--vary", "ks=10kN/m..40kN/m",
                              "--target", "1=1.2Hz", "--json")
    assert code == 0, err
    lam, ms, mu, kt = (2 * math.pi * 1.2) ** 2, 300.0, 36.0, 210e3
    ks = ms * lam * (kt - mu * lam) / (kt - (ms + mu) * lam)
    data = json.loads(text)
    assert data["parameters"]["ks"] == pytest.approx(ks, rel=1e-7)
    assert data["achieved"]["mode1_hz"] == pytest.approx(1.2, rel=1e-9)


def test_ride_sweep_matches_the_ride_analysis(tmp_path, run_cli):
    # Consistency with builder.analysis.ride at one variant (the ride figures
    # themselves are checked against outside sources in test_ride.py).
    from builder.analysis.ride import ride_response
    from builder.linear import assemble
    from builder.load import load_assembly
    out = tmp_path / "r.csv"
    code, text, err = run_cli("sweep", QUARTER, "--vary", "ks=18kN/m..24kN/m:3", "--result",
                              "ride:body_accel", "--road", "C", "--speed", "20 m/s",
                              "--csv", out)
    assert code == 0, err
    rows = [line.split(",") for line in out.read_text().splitlines()]
    assert rows[0] == ["variant", "ks", "body_accel_rms", "body_accel_weighted_rms"]
    model = assemble(load_assembly(QUARTER, overrides={"ks": "24 kN/m"}))
    want = ride_response(model, "C", 20.0, points=400, sensors=["body_accel"])
    assert float(rows[3][2]) == pytest.approx(want.sensors["body_accel"].rms, rel=1e-12)
    a = [float(r[3]) for r in rows[1:]]
    assert a[0] < a[1] < a[2]          # a stiffer spring gives a harsher ride


@pytest.mark.parametrize("args, option", [
    (["--vary", "kz=1..2:3"], "--vary"),
    (["--vary", "ks=1kg..2kg:3"], "--vary"),
    (["--vary", "ks=1..2"], "--vary"),
    (["--scatter", "ks=normal:1,2"], "--samples"),
    (["--vary", "ks=1..2:2", "--result", "ride:nope", "--road", "C", "--speed", "20"],
     "--result"),
    (["--vary", "ks=1..2:2", "--result", "ride:body_accel"], "--road"),
    (["--vary", "ks=1..2:2", "--resume"], "--resume"),
    (["--vary", "ks=1..2:2", "--csv", "out.txt"], "--csv"),
    (["--vary", "ks=10kN/m..40kN/m", "--target", "x=1Hz"], "--target"),
    (["--vary", "ks=10kN/m..40kN/m", "--target", "1=1kg"], "--target"),
    (["--vary", "ks=1..2:2", "--cluster", "nonsense"], "--cluster"),
    (["--vary", "ks=1..2:2", "--workers", "0"], "--workers"),
])
def test_sweep_command_errors_are_one_line(run_cli, args, option):
    code, text, err = run_cli("sweep", QUARTER, *args)
    assert code == 2
    assert option in err and err.count("\n") == 1


class _FakePlugin:
    """A plugin with an analysis of its own (data invented for the test)."""

    def analyse(self, model, assembly=None, **options):
        class Result:
            def to_dict(self):
                return {"seats": [{"ride": {"vector_sum": 0.53, "label": "x"}}]}
        return Result()


def test_plugin_figure_reads_a_dotted_path():
    from types import SimpleNamespace

    from builder.analysis.sweep import plugin_figure
    asm = SimpleNamespace(plugins=(SimpleNamespace(use="seat", name="driver",
                                                   plugin=_FakePlugin()),))
    assert plugin_figure(asm, None, "driver", "seats.0.ride.vector_sum") == 0.53
    assert plugin_figure(asm, None, "seat", "seats.0.ride.vector_sum") == 0.53
    for use, path, words in [("seat", "seats.1", "positions 0..0"),
                             ("seat", "seats.0.ride.label", "not a number"),
                             ("seat", "seats.0.ride.vs", "vector_sum, label"),
                             ("engine", "x", "plugins: seat")]:
        with pytest.raises(InputError, match="--result") as err:
            plugin_figure(asm, None, use, path)
        assert words in str(err.value)


def test_plugin_figure_sweep_on_the_seat_example(tmp_path, run_cli):
    # Consistency with the seat plugin's own analysis at one variant (the
    # seat figures are checked against outside sources in the seat tests).
    path = ASSEMBLIES / "compact_car_seat.yaml"
    from builder.analysis.sweep import plugin_figure
    from builder.linear import assemble
    from builder.load import load_assembly
    out = tmp_path / "p.csv"
    fig = "seats.0.ride.seat_weighted_rms.z"
    code, text, err = run_cli("sweep", path, "--vary", "ks_front=20kN/m..28kN/m:2",
                              "--result", f"plugin:driver:{fig}", "--csv", out)
    assert code == 0, err
    rows = [line.split(",") for line in out.read_text().splitlines()]
    assert rows[0] == ["variant", "ks_front", f"driver:{fig}"]
    asm = load_assembly(path, overrides={"ks_front": "28 kN/m"})
    want = plugin_figure(asm, assemble(asm), "driver", fig)
    assert float(rows[2][2]) == pytest.approx(want, rel=1e-12)


def test_lhs_and_scatter_commands_plot_and_repeat(tmp_path, run_cli):
    # Source: analytic closed form of the quarter car for every sampled ks;
    # the same seed gives the same table.
    import json
    code, text, err = run_cli("sweep", QUARTER, "--vary", "ks=15kN/m..30kN/m", "--lhs", "12",
                              "--seed", "3", "--plot", tmp_path / "h.png", "--json")
    assert code == 0, err
    data = json.loads(text)
    assert data["kind"] == "lhs" and len(data["rows"]) == 12
    rows = np.array(data["rows"])
    np.testing.assert_allclose(rows[:, 1:], _quarter_closed_form(rows[:, 0]), rtol=1e-10)
    assert (tmp_path / "h.png").read_bytes()[:4] == b"\x89PNG"
    args = ("sweep", QUARTER, "--scatter", "kt=normal:210kN/m,3%", "--scatter",
            "sprung_mass=uniform:280kg,320kg", "--samples", "50", "--seed", "9")
    code1, text1, _ = run_cli(*args, "--csv", tmp_path / "a.csv")
    code2, text2, _ = run_cli(*args, "--csv", tmp_path / "b.csv", "--workers", "2")
    assert code1 == code2 == 0
    assert (tmp_path / "a.csv").read_text() == (tmp_path / "b.csv").read_text()
    assert "mean" in text1
