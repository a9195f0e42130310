"""Engine plugin: mount-system analyses against outside sources, the plugin in files, its CLI.

Sources named beside each check: the independent sympy.physics.mechanics
derivation (tests/reference/sympy_mounts.py), closed forms derived here
(analytic), scipy.signal for the one-DOF isolator, and the published
vibration-isolation result that transmissibility equals 1 at frequency ratio
sqrt(2) (S. S. Rao, Mechanical Vibrations, section on vibration isolation;
J. P. Den Hartog, Mechanical Vibrations, chapter on isolation).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.linalg
import scipy.signal
from reference.sympy_mounts import reference_matrices

from builder.analysis.modes import compute_modes
from builder.errors import InputError
from builder.linear import assemble
from builder.load import load_text
from plugins.engine import analysis as an

# ---------------------------------------------------------------- fixtures --

MASS = 148.0                                   # kg, invented
CG = np.array([0.31, 0.03, 0.57])
INERTIA = {"xx": 8.7, "yy": 5.3, "zz": 8.1, "xy": 0.35, "xz": 0.9, "yz": -0.25}
MOUNTS = [  # name, point, frame z, (kx, ky, kz), (krx, kry, krz), (cx, cy, cz)
    ("right", [0.36, -0.43, 0.71], [0.0, 0.26, 0.966], (9e4, 6e4, 1.9e5), (0, 0, 0),
     (0, 0, 240.0)),
    ("left", [0.29, 0.47, 0.69], [0.1, -0.3, 0.95], (8e4, 5e4, 1.6e5), (40, 25, 0),
     (0, 0, 200.0)),
    ("rear", [0.03, 0.01, 0.37], [0.5, 0.0, 0.866], (1.3e5, 1.8e4, 2.2e4), (0, 0, 0),
     (160.0, 0, 0)),
]


def tensor(i: dict) -> np.ndarray:
    return np.array([[i["xx"], -i["xy"], -i["xz"]], [-i["xy"], i["yy"], -i["yz"]],
                     [-i["xz"], -i["yz"], i["zz"]]])


def engine_yaml(mounts=MOUNTS, motion: str = "vertical", attach: str = "ground",
                extra: str = "") -> str:
    inertia = ", ".join(f"{k}: {v}" for k, v in INERTIA.items())
    lines = ["format: 1", "name: powertrain test (invented data)", f"motion: {motion}",
             "bodies:", "  body: {mass: 900 kg, cg: [-1.2, 0, 0.5], "
             "inertia: {xx: 350, yy: 1400, zz: 1500}}",
             "links:", "  hold: {type: spring, a: body, b: ground, axis: z, stiffness: 1e5}",
             "plugins:", "  - use: engine", "    name: pt", "    with:",
             f"      mass: {MASS} kg", f"      cg: {CG.tolist()}",
             f"      inertia: {{{inertia}}}", "      crank_axis: y",
             f"      attach_to: {attach}", "      mounts:"]
    for name, at, fz, k, kr, c in mounts:
        lines.append(
            f"        - {{name: {name}, at: {at}, frame: {{x: [1, 0, 0], z: {fz}}}, "
            f"stiffness: {{x: {k[0]}, y: {k[1]}, z: {k[2]}, rx: {kr[0]}, ry: {kr[1]}, "
            f"rz: {kr[2]}}}, damping: {{x: {c[0]}, y: {c[1]}, z: {c[2]}}}}}")
    return "\n".join(lines) + "\n" + extra


def frame_of(fz) -> np.ndarray:
    from builder.elements import local_frame
    return local_frame(np.array([1.0, 0, 0]), np.array(fz, float))


def mounts_of(mounts=MOUNTS) -> list[an.Mount]:
    return [an.Mount(n, np.array(at, float), frame_of(fz), np.array([*k, *kr], float),
                     np.array([*c, 0, 0, 0], float)) for n, at, fz, k, kr, c in mounts]


def reference(mounts=MOUNTS):
    bushings = [{"at": at, "frame": frame_of(fz), "k": k, "kr": kr, "c": c}
                for _n, at, fz, k, kr, c in mounts]
    return reference_matrices(MASS, CG, tensor(INERTIA), bushings=bushings)


@pytest.fixture(scope="module")
def ref3():
    return reference()


# ----------------------------------------------------- six frequencies vs sympy --

def test_three_tilted_mounts_six_frequencies_match_sympy(ref3):
    # Independent library: sympy.physics.mechanics (Kane's method, linearised) in
    # tests/reference/sympy_mounts.py; eigenvalues by scipy.linalg.eigh. 1e-9 relative.
    M_ref, C_ref, K_ref = ref3
    expected = np.sqrt(scipy.linalg.eigh(K_ref, M_ref, eigvals_only=True)) / (2 * math.pi)
    # the plugin's body gets six DOFs although the file's motion is vertical
    asm = load_text(engine_yaml())
    assert asm.bodies["pt"].dofs == ("x", "y", "z", "rx", "ry", "rz")
    model = assemble(asm)
    idx = [model.dofs.index(f"pt.{d}") for d in ("x", "y", "z", "rx", "ry", "rz")]
    K = model.K.toarray()[np.ix_(idx, idx)]
    C = model.C.toarray()[np.ix_(idx, idx)]
    np.testing.assert_allclose(K, K_ref, rtol=0, atol=1e-9 * np.abs(K_ref).max())
    np.testing.assert_allclose(C, C_ref, rtol=0, atol=1e-9 * np.abs(C_ref).max())
    modes = compute_modes(model)
    got = sorted(m.frequency_hz for m in modes.modes
                 if sum(v for k, v in m.energy.items() if k.startswith("pt.")) > 0.5)
    assert np.array(got) == pytest.approx(expected, rel=1e-9)
    # the plugin's own grounded analysis gives the same six (same source)
    freqs, _ = an.decoupling_table(an.rigid_mass_matrix(MASS, tensor(INERTIA)),
                                   an.mount_matrices(CG, mounts_of())[0])
    assert freqs == pytest.approx(expected, rel=1e-9)


def test_four_tilted_mounts_analysis_matches_sympy():
    # Independent library: sympy.physics.mechanics reference, four mounts. 1e-9 relative.
    four = [*MOUNTS, ("front", [0.58, 0.0, 0.45], [-0.4, 0.0, 0.92], (1.1e5, 2e4, 3e4),
                      (0, 0, 15), (90.0, 0, 0))]
    M_ref, C_ref, K_ref = reference(four)
    K, C, _ = an.mount_matrices(CG, mounts_of(four))
    np.testing.assert_allclose(K, K_ref, rtol=0, atol=1e-9 * np.abs(K_ref).max())
    np.testing.assert_allclose(C, C_ref, rtol=0, atol=1e-9 * np.abs(C_ref).max())
    expected = np.sqrt(scipy.linalg.eigh(K_ref, M_ref, eigvals_only=True)) / (2 * math.pi)
    freqs, energy = an.decoupling_table(an.rigid_mass_matrix(MASS, tensor(INERTIA)), K)
    assert freqs == pytest.approx(expected, rel=1e-9)
    np.testing.assert_allclose(energy.sum(axis=1), 1.0, atol=1e-12)   # definition


# ------------------------------------------------------------ torque roll axis --

def _adjugate_solve(J: np.ndarray, e: np.ndarray) -> np.ndarray:
    """J^-1 e by the cofactor formula (analytic, Cramer's rule), not a linear solver."""
    a, b, c = J[0]
    d, f, g = J[1]
    h, i, k = J[2]
    adj = np.array([[f * k - g * i, c * i - b * k, b * g - c * f],
                    [g * h - d * k, a * k - c * h, c * d - a * g],
                    [d * i - f * h, b * h - a * i, a * f - b * d]])
    det = a * (f * k - g * i) - b * (d * k - g * h) + c * (d * i - f * h)
    return adj @ e / det


def test_torque_roll_axis_direct_formula_and_rotated_description():
    J = tensor(INERTIA)
    e = np.array([0.05, 1.0, -0.02])
    e = e / np.linalg.norm(e)
    # Analytic: the TRA direction is J^-1 e normalised (Euler's equations at rest, torque T e)
    direct = _adjugate_solve(J, e)
    direct = direct / np.linalg.norm(direct)
    tra = an.torque_roll_axis(J, e)
    np.testing.assert_allclose(tra, direct, atol=1e-12)
    assert abs(np.dot(tra, e)) < 0.9999           # products of inertia tilt it off the crank
    # Analytic: the same body described in axes rotated by Q has J' = Q J Q^T, e' = Q e,
    # and its torque roll axis must be Q times the original one.
    Q = scipy.linalg.expm(np.array([[0, -0.4, 0.2], [0.4, 0, -0.7], [-0.2, 0.7, 0]]))
    tra_rot = an.torque_roll_axis(Q @ J @ Q.T, Q @ e)
    np.testing.assert_allclose(tra_rot, Q @ tra, atol=1e-12)
    # Analytic: along a principal axis of inertia the TRA is the crank axis itself
    w, axes = an.principal_axes(J)
    np.testing.assert_allclose(an.torque_roll_axis(J, axes[1]), axes[1], atol=1e-12)
    np.testing.assert_allclose(axes @ J @ axes.T, np.diag(w), atol=1e-12)


# ------------------------------------------------------ decoupled mount system --

def _decoupled(Q: np.ndarray | None = None):
    """Four mounts at the corners of a rectangle in the cg's horizontal plane, equal
    rates in the global axes: the elastic centre is the cg, and with a diagonal inertia
    tensor every rigid-body direction is a mode of its own. Q describes the same
    system in rotated axes."""
    Q = np.eye(3) if Q is None else Q
    J = np.diag([7.0, 4.5, 9.0])
    cg = np.array([0.2, -0.1, 0.6])
    k = np.array([6e4, 9e4, 2.0e5, 0, 0, 0])
    mounts = [an.Mount(f"m{i}", Q @ (cg + np.array([sx * 0.33, sy * 0.21, 0.0])) ,
                       np.eye(3) @ Q.T, k) for i, (sx, sy) in
              enumerate(((1, 1), (1, -1), (-1, 1), (-1, -1)))]
    return an.rigid_mass_matrix(120.0, Q @ J @ Q.T), Q @ cg, mounts, Q


def test_decoupled_design_gives_diagonal_energy_table():
    # Analytic: elastic centre at the cg and symmetric mounts make K diagonal in the
    # principal axes, so each mode is a single direction (energy table = permutation).
    M6, cg, mounts, _ = _decoupled()
    K, _, _ = an.mount_matrices(cg, mounts)
    np.testing.assert_allclose(K - np.diag(np.diag(K)), 0.0, atol=1e-6)
    freqs, energy = an.decoupling_table(M6, K)
    assert np.sort(energy.max(axis=1)) == pytest.approx(np.ones(6), abs=1e-10)
    assert sorted(np.argmax(energy, axis=1)) == list(range(6))
    # closed form of each uncoupled frequency: bounce sqrt(4 kz / m) (analytic)
    assert freqs[an.bounce_mode_index(energy)] == pytest.approx(
        math.sqrt(4 * 2.0e5 / 120.0) / (2 * math.pi), rel=1e-12)
    # the same system described in rotated axes, tabulated in its principal axes
    Q = scipy.linalg.expm(np.array([[0, -0.3, 0.5], [0.3, 0, -0.2], [-0.5, 0.2, 0]]))
    M6r, cgr, mr, _ = _decoupled(Q)
    Kr, _, _ = an.mount_matrices(cgr, mr)
    _, axes = an.principal_axes(M6r[3:, 3:])
    fr, er = an.decoupling_table(M6r, Kr, axes)
    assert fr == pytest.approx(freqs, rel=1e-10)
    assert np.sort(er.max(axis=1)) == pytest.approx(np.ones(6), abs=1e-9)
    # elastic roll axis of the decoupled system: through the cg along the crank (analytic)
    ea = an.elastic_axis(K, cg, [0, 1, 0])
    np.testing.assert_allclose(ea.direction, [0, 1, 0], atol=1e-12)
    np.testing.assert_allclose(ea.point, cg, atol=1e-12)


def test_roll_torque_mount_forces_closed_form():
    # Analytic: decoupled system, torque T about x at frequency w: rx = T / (Krx - w^2 Ixx),
    # each mount at lateral offset b carries kz b |rx| vertically (no other motion).
    M6, cg, mounts, _ = _decoupled()
    K, _, _ = an.mount_matrices(cg, mounts)
    rpm = np.array([800.0, 3000.0])
    out = an.roll_torque_response(M6, cg, mounts, [1, 0, 0], rpm, 4, 4, amplitude=100.0)
    for i, f in enumerate(out.frequencies_hz):
        w = 2 * math.pi * f
        rx = 100.0 / (K[3, 3] - w * w * M6[3, 3])
        assert out.forces[i] == pytest.approx([2.0e5 * 0.21 * abs(rx)] * 4, rel=1e-10)


def test_mode_axis_recovers_a_known_rotation_axis():
    # Analytic: a small rotation th about a line through p moves the cg by th x (cg - p)
    cg = np.array([0.3, 0.1, 0.6])
    p = np.array([0.25, 0.0, 0.45])
    th = np.array([0.02, 0.9, -0.1])
    shape = np.concatenate([np.cross(th, cg - p), th])
    ax = an.mode_axis(shape, cg)
    np.testing.assert_allclose(ax.direction, th / np.linalg.norm(th), atol=1e-12)
    # the returned point lies on the line through p along th
    assert np.linalg.norm(np.cross(ax.point - p, th)) < 1e-12
    assert ax.pitch == pytest.approx(0.0, abs=1e-12)


# ------------------------------------------------- firing and isolation rules --

def test_firing_frequency_rule():
    # Firing events: a four-stroke cylinder fires once every two revolutions, a
    # two-stroke once per revolution, so f = cylinders * rpm / 120 (four-stroke) and
    # cylinders * rpm / 60 (two-stroke) (definition of the cycle; engine textbooks,
    # e.g. J. B. Heywood, Internal Combustion Engine Fundamentals, ch. 1, from memory).
    assert an.firing_frequency(800.0, 4, 4) == pytest.approx(4 * 800 / 120, rel=1e-15)
    assert an.firing_frequency(1200.0, 6, 2) == pytest.approx(6 * 1200 / 60, rel=1e-15)
    assert an.firing_frequency(3000.0, 3, 4) == pytest.approx(75.0, rel=1e-15)
    assert an.firing_order(4, 4) == 2.0
    with pytest.raises(ValueError):
        an.firing_order(4, 3)


def test_isolation_crossover_is_sqrt2_and_transmissibility_matches_scipy_signal():
    # Published theory (Rao, Mechanical Vibrations; Den Hartog, Mechanical Vibrations):
    # every transmissibility curve passes through T = 1 at r = sqrt(2), whatever the damping.
    for zeta in (0.0, 0.05, 0.2, 0.7):
        assert an.isolation_crossover_ratio(zeta) == pytest.approx(math.sqrt(2), rel=1e-9)
    # Independent library: scipy.signal.freqs of the base-excitation transfer function
    # (2 z wn s + wn^2) / (s^2 + 2 z wn s + wn^2).
    wn, zeta = 2 * math.pi * 12.0, 0.1
    w = wn * np.array([0.3, 1.0, math.sqrt(2), 2.5, 6.0])
    _, h = scipy.signal.freqs([2 * zeta * wn, wn**2], [1, 2 * zeta * wn, wn**2], worN=w)
    np.testing.assert_allclose(an.transmissibility(w / wn, zeta), np.abs(h), rtol=1e-12)
    # idle shake: 4-cylinder four-stroke at 800 rpm fires at 26.67 Hz; mounts to 15 Hz
    margin = an.idle_shake_margin(800.0, 4, 4, [5.0, 9.0, 15.0])
    assert margin.ratio == pytest.approx(26.6666666 / 15.0, rel=1e-6)
    assert margin.isolates
    assert not an.idle_shake_margin(800.0, 4, 4, [20.0]).isolates   # 1.33 < sqrt(2)


# ---------------------------------------------------------------- rate scaling --

def test_rate_scaling_recovers_known_factors():
    # Round trip (analytic construction): scale the local-z rates by 1.3 and the shear
    # rates by 0.8, read that layout's roll and bounce, and ask the helper to find them.
    J = tensor(INERTIA)
    base = mounts_of()
    scaled = [an.Mount(m.name, m.at, m.frame,
                       m.stiffness * np.array([0.8, 0.8, 1.3, 1, 1, 1])) for m in base]
    axes = an.crank_aligned_axes([0, 1, 0])
    f, e = an.decoupling_table(an.rigid_mass_matrix(MASS, J), an.mount_matrices(CG, scaled)[0],
                               axes)
    out = an.scale_mount_rates(MASS, CG, J, base, [0, 1, 0], f[an.roll_mode_index(e)],
                               f[an.bounce_mode_index(e)])
    assert out.converged
    assert out.axial_factor == pytest.approx(1.3, rel=1e-6)
    assert out.shear_factor == pytest.approx(0.8, rel=1e-6)


# -------------------------------------------------------------- plugin in files --

def test_grounded_mounts_in_vehicle_table_equals_grounded_table():
    # Analytic: with every mount grounded the powertrain does not couple to the vehicle,
    # so the in-vehicle powertrain modes are the grounded ones.
    from plugins.engine import engine_report, engine_specs
    asm = load_text(engine_yaml())
    spec = engine_specs(asm)[0]
    rep = engine_report(spec, assemble(asm))
    grounded = [r[1] for r in rep.tables[0].rows]
    vehicle = [r[1] for r in rep.tables[1].rows]
    assert vehicle == pytest.approx(grounded, abs=2e-3)


@pytest.mark.parametrize("change, message", [
    ("      mass: 148.0 kg\n", "missing"),
    ("      mass: 148 kN/m\n", "must be a mass"),
    ("      cylinders: 4\n", "unknown key"),
    ("      attach_to: ground\n", "unknown body"),
])
def test_bad_with_blocks_are_one_line_errors(change, message):
    text = engine_yaml()
    if message == "missing":
        text = text.replace(change, "")
        message = 'engine needs "mass"'
    elif message == "unknown key":
        text = text.replace("      crank_axis: y\n", "      cylinder: 4\n")
    elif message == "unknown body":
        text = text.replace(change, "      attach_to: chassis\n")
    else:
        text = text.replace("      mass: 148.0 kg\n", change)
    with pytest.raises(InputError) as err:
        load_text(text, "t.yaml")
    assert message in str(err.value)
    assert "\n" not in str(err.value)
    assert str(err.value).startswith("t.yaml:")


def test_mounts_that_do_not_hold_six_motions_are_refused():
    one = [MOUNTS[0]]
    with pytest.raises(InputError, match="do not hold all six motions"):
        load_text(engine_yaml(one), "t.yaml")


def test_cli_plugins_lists_engine_and_plugin_prints_the_tables(run_cli, tmp_path):
    code, out, err = run_cli("plugins")
    assert code == 0
    assert "engine:" in out and "crank_axis" in out and "mounts" in out
    code, out, err = run_cli("plugin", "engine", "assemblies/compact_car_engine.yaml")
    assert code == 0, err
    for words in ("mount modes", "torque roll axis",
                  "idle shake", "isolates", "roll torque"):
        assert words in out
    plot = tmp_path / "orders.png"
    code, out, err = run_cli("plugin", "engine", "assemblies/compact_car_engine.yaml",
                             "--json", "--axes", "principal", "--target-roll", "7",
                             "--target-bounce", "8", "--plot", str(plot))
    assert code == 0, err
    data = json.loads(out)["engines"][0]["figures"]
    assert len(data["frequencies_hz"]) == 6
    assert data["rate_scaling"]["roll_hz"] == pytest.approx(7.0, rel=1e-4)
    assert data["rate_scaling"]["bounce_hz"] == pytest.approx(8.0, rel=1e-4)
    assert plot.stat().st_size > 1000
    code, out, err = run_cli("plugin", "engine", "assemblies/compact_car_engine.yaml",
                             "--target-roll", "7")
    assert code == 2 and "both" in err


def test_body_side_roll_torque_response_matches_python_control():
    # Independent library: python-control frequency response of the demo car's state
    # space with the roll torque as the input (built here from M, C, K and the sensor maps).
    import control

    from builder.load import load_assembly
    from plugins.engine import engine_report, engine_specs
    asm = load_assembly("assemblies/compact_car_engine.yaml")
    model = assemble(asm)
    spec = engine_specs(asm)[0]
    table = [t for t in engine_report(spec, model).tables if "body-side" in t.title][0]
    M, C, K = (a.toarray() for a in (model.M, model.C, model.K))
    assert np.abs(model.H.toarray()).max() == 0.0
    f = sum(spec.roll_torque * c * model.force_input("engine", None, d)
            for c, d in zip(spec.crank_axis, ("rx", "ry", "rz")))
    n = model.n
    Minv = np.linalg.inv(M)
    A = np.block([[np.zeros((n, n)), np.eye(n)], [-Minv @ K, -Minv @ C]])
    B = np.concatenate([np.zeros(n), Minv @ f])[:, None]
    names = [c.split()[0] for c in table.columns[2:]]
    rows = [model.sensors.index(s) for s in names]
    Sd, Sv, Sa = (a.toarray()[rows] for a in (model.Sd, model.Sv, model.Sa))
    Cy = np.hstack([Sd - Sa @ Minv @ K, Sv - Sa @ Minv @ C])
    D = (Sa @ Minv @ f)[:, None]
    sys_ = control.ss(A, B, Cy, D)
    for row in table.rows:
        w = 2 * math.pi * row[1]
        resp = control.frequency_response(sys_, [w])
        mag = np.asarray(resp.magnitude).reshape(len(rows))
        assert list(row[2:]) == pytest.approx(mag, rel=2e-3)   # firing Hz is rounded in the table


def test_mode_labels_use_crank_aligned_words():
    # Words only (no outside value): the powertrain's modes are named in its own axes,
    # and as "powertrain", not by the body name "pt" the plugin made.
    labels = [m.label for m in compute_modes(assemble(load_text(engine_yaml()))).modes]
    assert any(lab.startswith("powertrain roll about the crank") for lab in labels)
    assert any(lab.startswith("powertrain bounce") for lab in labels)
    assert not any(lab.startswith("pt ") for lab in labels)


# ------------------------------------------------------- lead lines of the printout --

def test_decoupled_design_leads_with_pure_modes_in_words():
    # Analytic: elastic centre at the cg, mounts' axes along the principal axes of a
    # diagonal inertia tensor: every mode moves in one direction only (purity 100 %),
    # bounce at sqrt(4 kz / m) / 2 pi.
    import dataclasses

    from plugins.engine import engine_report, engine_specs
    M6, cg, mounts, _ = _decoupled()
    spec = dataclasses.replace(engine_specs(load_text(engine_yaml()))[0], mass=120.0,
                               cg=cg, inertia=M6[3:, 3:], mounts=tuple(mounts),
                               crank_axis=np.array([1.0, 0.0, 0.0]))
    rep = engine_report(spec)
    modes = rep.figures["mount_modes"]
    assert [m["purity"] for m in modes] == pytest.approx([1.0] * 6, abs=1e-9)
    assert max(m["coupled_share"] for m in modes) < 1e-9
    assert sorted(m["dominant"] for m in modes) == sorted(
        ("motion along the crank", "motion across the crank", "bounce",
         "roll about the crank", "pitch", "yaw"))
    bounce = next(m for m in modes if m["dominant"] == "bounce")
    assert bounce["frequency_hz"] == pytest.approx(
        math.sqrt(4 * 2.0e5 / 120.0) / (2 * math.pi), rel=1e-12)
    assert "bounce, 100.0 % pure; uncoupled" in rep.table()
    # the default printout leaves the energy matrix out; --detail (detail=True) keeps it
    assert "rx %" not in rep.table()
    assert "rx %" in engine_report(spec, detail=True).table()


def test_printout_leads_with_the_figures_of_the_json(run_cli):
    # every lead figure recomputed from the JSON's own matrices (shares, axes, idle)
    path = "assemblies/compact_car_engine.yaml"
    code, out, err = run_cli("plugin", "engine", path)
    assert code == 0, err
    code, text, err = run_cli("plugin", "engine", path, "--json")
    eng = json.loads(text)["engines"][0]
    fig = eng["figures"]
    assert out.startswith("\n".join(eng["summary"]) + "\n")
    energy = np.array(fig["energy"])
    for i, m in enumerate(fig["mount_modes"]):
        row = np.sort(energy[i])[::-1]
        assert m["purity"] == pytest.approx(row[0], abs=1e-6)
        assert m["coupled_share"] == pytest.approx(row[1], abs=1e-6)
        assert (f"mode {i + 1:<2} {fig['frequencies_hz'][i]:6.2f} Hz  {m['dominant']}, "
                f"{100 * row[0]:.1f} % pure; coupled most with {m['coupled']} "
                f"{100 * row[1]:.1f} %") in out
    worst = int(np.argmin(energy.max(axis=1)))
    assert fig["worst_coupling"]["mode"] == worst + 1
    assert f"least pure: mode {worst + 1} ({fig['frequencies_hz'][worst]:.2f} Hz)" in out
    idle = fig["idle_shake"]
    assert f"is {idle['firing_hz'] / idle['highest_mode_hz']:.2f} x the highest" in out
    assert idle["highest_mode_hz"] == pytest.approx(max(fig["frequencies_hz"]))
    assert f"elastic roll axis is {fig['elastic_axis']['angle_to_tra_deg']:.1f} deg" in out
    assert f"axis {fig['roll_mode_axis']['angle_to_tra_deg']:.1f} deg from it" in out
    assert "rx %" not in out and "angle to TRA deg" not in out
    code, detail, err = run_cli("plugin", "engine", path, "--detail")
    assert code == 0 and "rx %" in detail and "angle to TRA deg" in detail
    assert detail.startswith(out.split("\n\n")[0])
