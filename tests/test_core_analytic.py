"""The core's matrices and modes against analytic solutions and textbook examples."""

import math

import numpy as np
import pytest
from conftest import ASSEMBLIES

from builder.analysis.modes import compute_modes
from builder.linear import assemble
from builder.load import load_assembly, load_text
from builder.reduce import guyan, reduce_keep, reduce_to_depth

TWO_PI = 2 * math.pi


def quarter_car_text(ms=300.0, mu=36.0, ks=21e3, cs=1.5e3, kt=210e3) -> str:
    return f"""
format: 1
motion: bounce
bodies:
  body: {{mass: {ms}, cg: [0, 0, 0.5], gyradius: {{x: 0.3, y: 0.3, z: 0.3}}}}
  wheel: {{mass: {mu}, cg: [0, 0, 0.3], gyradius: {{x: 0.2, y: 0.2, z: 0.2}}}}
road:
  contact: {{at: [0, 0, 0]}}
links:
  s: {{type: spring, a: body, b: wheel, axis: z, stiffness: {ks}, damping: {cs}}}
  t: {{type: spring, a: wheel, b: road.contact, axis: z, stiffness: {kt}}}
"""


def test_quarter_car_closed_form_frequencies():
    # Analytic: the two-DOF quarter car's undamped frequencies are the roots of
    # ms mu w^4 - (ms (ks + kt) + mu ks) w^2 + ks kt = 0 (e.g. Gillespie,
    # "Fundamentals of Vehicle Dynamics", 1992, ch. 5; derived here directly).
    ms, mu, ks, kt = 300.0, 36.0, 21e3, 210e3
    a, b, c = ms * mu, -(ms * (ks + kt) + mu * ks), ks * kt
    w2 = np.sort(np.roots([a, b, c]).real)
    modes = compute_modes(assemble(load_text(quarter_car_text(ms, mu, ks, 0.0, kt))))
    assert modes.frequencies_hz == pytest.approx(np.sqrt(w2) / TWO_PI, rel=1e-12)
    assert modes[0].label == "body bounce" and modes[1].label == "wheel hop"


def test_guyan_condensation_of_the_wheel_gives_series_stiffness():
    # Analytic: condensing the massless-in-statics wheel leaves the suspension
    # and tyre in series, k = ks kt / (ks + kt); the Guyan mass adds the
    # wheel's quasi-static participation mu (ks / (ks + kt))^2.
    ms, mu, ks, kt = 300.0, 36.0, 21e3, 210e3
    model = assemble(load_text(quarter_car_text(ms, mu, ks, 1500.0, kt)))
    small = guyan(model, ["body.z"])
    assert small.K.toarray()[0, 0] == pytest.approx(ks * kt / (ks + kt), rel=1e-13)
    assert small.M.toarray()[0, 0] == pytest.approx(ms + mu * (ks / (ks + kt)) ** 2, rel=1e-13)
    # the road input reaches the body through the same series spring (static part)
    assert small.Br.toarray()[0, 0] == pytest.approx(ks * kt / (ks + kt), rel=1e-13)


def test_bounce_and_pitch_textbook_example():
    # Textbook worked example (from memory): Rao, "Mechanical Vibrations",
    # example "frequencies and modes of an automobile": m = 1000 kg, radius of
    # gyration 0.9 m, front axle 1.0 m and rear axle 1.5 m from the cg,
    # kf = 18 kN/m, kr = 22 kN/m; omega_1 = 5.8593 rad/s, omega_2 = 9.4341 rad/s.
    text = """
format: 1
motion: planar
bodies:
  car: {mass: 1000 kg, cg: [0, 0, 0.5], gyradius: {x: 0.5, y: 0.9, z: 0.9}}
links:
  front: {type: spring, a: {body: car, at: [1.0, 0, 0.5]}, b: ground, axis: z, stiffness: 18 kN/m}
  rear: {type: spring, a: {body: car, at: [-1.5, 0, 0.5]}, b: ground, axis: z, stiffness: 22 kN/m}
"""
    modes = compute_modes(assemble(load_text(text)))
    omega = modes.frequencies_hz * TWO_PI
    assert omega == pytest.approx([5.8593, 9.4341], abs=2e-4)


@pytest.mark.parametrize("zeta", [0.05, 0.3, 0.7])
def test_one_dof_damped_roots(zeta):
    # Analytic: m x'' + c x' + k x = 0 has s = -zeta wn +- i wn sqrt(1 - zeta^2).
    m, k = 50.0, 2.0e4
    wn = math.sqrt(k / m)
    c = 2 * zeta * math.sqrt(k * m)
    text = f"""
format: 1
motion: bounce
bodies: {{b: {{mass: {m}, cg: [0, 0, 0], gyradius: {{x: 0.1, y: 0.1, z: 0.1}}}}}}
links: {{s: {{type: spring, a: b, b: ground, axis: z, stiffness: {k}, damping: {c}}}}}
"""
    mode = compute_modes(assemble(load_text(text)))[0]
    assert mode.frequency_hz == pytest.approx(wn / TWO_PI, rel=1e-12)
    assert mode.damping_ratio == pytest.approx(zeta, rel=1e-10)
    assert mode.damped_frequency_hz == pytest.approx(wn * math.sqrt(1 - zeta**2) / TWO_PI,
                                                     rel=1e-10)
    root = max(mode.roots, key=lambda s: s.imag)
    assert root == pytest.approx(complex(-zeta * wn, wn * math.sqrt(1 - zeta**2)), rel=1e-10)


def test_overdamped_one_dof_reports_both_real_roots():
    # Analytic: zeta = 2 gives real roots s = wn (-zeta +- sqrt(zeta^2 - 1)).
    m, k, zeta = 10.0, 1.0e3, 2.0
    wn = math.sqrt(k / m)
    c = 2 * zeta * math.sqrt(k * m)
    text = f"""
format: 1
motion: bounce
bodies: {{b: {{mass: {m}, cg: [0, 0, 0], gyradius: {{x: 0.1, y: 0.1, z: 0.1}}}}}}
links: {{s: {{type: spring, a: b, b: ground, axis: z, stiffness: {k}, damping: {c}}}}}
"""
    mode = compute_modes(assemble(load_text(text)))[0]
    assert mode.overdamped and mode.damped_frequency_hz is None
    assert mode.damping_ratio == pytest.approx(zeta, rel=1e-9)
    expected = sorted([wn * (-zeta + math.sqrt(zeta**2 - 1)), wn * (-zeta - math.sqrt(zeta**2 - 1))])
    assert sorted(r.real for r in mode.roots) == pytest.approx(expected, rel=1e-9)


def test_loss_factor_gives_half_its_value_as_damping_ratio():
    # Analytic: a complex stiffness k (1 + i eta) behaves at resonance like
    # viscous damping with zeta = eta / 2 (e.g. Nashif, Jones & Henderson,
    # "Vibration Damping", 1985). With c = eta k / wn exactly that. By hand:
    # k (1 + i eta) - w^2 m = 0 gives w^2 = (k/m)(1 + i eta), loss factor Im/Re,
    # and the viscous eta k/|s| at the root's own |s| = wn gives
    # s = wn (-eta/2 + i sqrt(1 - eta^2/4)), so fd = f sqrt(1 - eta^2/4).
    m, k, eta = 20.0, 5.0e4, 0.12
    text = f"""
format: 1
motion: bounce
bodies: {{b: {{mass: {m}, cg: [0, 0, 0], gyradius: {{x: 0.1, y: 0.1, z: 0.1}}}}}}
links: {{s: {{type: bushing, a: b, b: ground, stiffness: {{z: {k}}}, loss_factor: {eta}}}}}
"""
    model = assemble(load_text(text))
    assert model.H.toarray()[0, 0] == pytest.approx(eta * k)
    modes = compute_modes(model)
    mode = modes[0]
    lam = (k / m) * (1 + 1j * eta)
    assert mode.damping_ratio == pytest.approx(lam.imag / (2 * lam.real), rel=1e-12)
    assert mode.damped_frequency_hz == pytest.approx(
        math.sqrt(lam.real * (1 - eta ** 2 / 4)) / TWO_PI, rel=1e-12)
    assert abs(max(mode.roots, key=lambda s: s.imag)) == pytest.approx(math.sqrt(lam.real),
                                                                        rel=1e-12)
    assert any("loss factors" in n for n in modes.notes)


FREE_PAIR = """
format: 1
motion: spatial
bodies:
  a: {mass: 100, cg: [0.1, -0.2, 0.3], inertia: {xx: 3, yy: 4, zz: 5, xy: 0.2, xz: -0.1, yz: 0.3}}
  b: {mass: 40, cg: [1.2, 0.4, -0.3], inertia: {xx: 1, yy: 1.5, zz: 1.2}}
links:
  s1: {type: spring, a: {body: a, at: [0.5, 0.1, 0.2]}, b: {body: b, at: [1.0, 0.3, 0.1]}, stiffness: 1e5}
  s2: {type: spring, a: {body: a, at: [0.2, 0.5, 0.0]}, b: {body: b, at: [1.3, 0.1, -0.2]}, axis: [0.3, 1, 0.2], stiffness: 2e5}
  mount: {type: bushing, a: {body: b, at: [0.9, 0.0, 0.0]}, b: {body: a, at: [0.9, 0.0, 0.0]},
          frame: {x: [1, 1, 0], z: [0, 0.2, 1]}, stiffness: {x: 1e5, y: 2e5, z: 3e5, rx: 1e3, ry: 2e3, rz: 3e3}}
"""


def test_free_assembly_has_six_rigid_modes_and_no_rigid_motion_strain():
    # Analytic: an unconstrained assembly has six zero-frequency rigid-body
    # modes, and K times any rigid-body motion vanishes (no element deforms).
    asm = load_text(FREE_PAIR)
    model = assemble(asm)
    modes = compute_modes(model)
    assert modes.rigid_count == 6
    assert all(m.label == "rigid" and m.frequency_hz == 0 for m in modes.modes[:6])
    assert all(m.frequency_hz > 1 for m in modes.modes[6:])
    K = model.K.toarray()
    scale = np.abs(K).max()
    for k in range(6):
        motion = np.zeros(6)
        motion[k] = 1.0
        q = []
        for b in asm.bodies.values():   # rigid motion about the origin, at each cg
            u = motion[:3] + np.cross(motion[3:], b.cg)
            q.extend([*u, *motion[3:]])
        assert np.abs(K @ np.array(q)).max() < 1e-10 * scale


def test_matrices_are_exactly_symmetric():
    model = assemble(load_text(FREE_PAIR))
    for A in (model.M, model.K, model.C):
        assert abs(A - A.T).max() == 0.0


def test_merged_bodies_against_point_mass_summation():
    # Independent check of the parallel-axis theorem: each body is replaced by
    # six point masses on its principal axes with the same mass and inertia,
    # and the combined tensor is summed from the definition
    # J = sum m (|r|^2 I - r r^T) about the combined cg.
    text = """
format: 1
bodies:
  cab: {mass: 80, cg: [0.4, 0.2, 1.1], inertia: {xx: 12, yy: 9, zz: 15, xz: 1.5}}
  body: {mass: 900, cg: [-1.0, 0.0, 0.5], inertia: {xx: 350, yy: 1300, zz: 1500, xy: 20}}
  wheel: {mass: 30, cg: [0, 0.7, 0.3], gyradius: {x: 0.2, y: 0.25, z: 0.2}}
links:
  hinge: {type: rigid, a: cab, b: body}
  s: {type: spring, a: body, b: wheel, axis: z, stiffness: 2e4}
"""
    asm = load_text(text)
    assert list(asm.bodies) == ["body", "wheel"]       # merged into the heavier body
    merged = asm.bodies["body"]
    raw = [(80, [0.4, 0.2, 1.1], [[12, 0, -1.5], [0, 9, 0], [-1.5, 0, 15]]),
           (900, [-1.0, 0, 0.5], [[350, -20, 0], [-20, 1300, 0], [0, 0, 1500]])]
    points = []
    for m, cg, J in raw:
        w, V = np.linalg.eigh(np.array(J, float))
        # six masses m/6 at +-a_i along principal axis i give I_i = m/3 (a_j^2 + a_k^2)
        s = 3.0 / m * (w.sum() / 2 - w)      # a_i^2
        for i in range(3):
            for sign in (1, -1):
                points.append((m / 6, np.array(cg) + sign * math.sqrt(s[i]) * V[:, i]))
    total = sum(p[0] for p in points)
    cg = sum(p[0] * p[1] for p in points) / total
    J = sum(p[0] * ((p[1] - cg) @ (p[1] - cg) * np.eye(3) - np.outer(p[1] - cg, p[1] - cg))
            for p in points)
    assert merged.mass == pytest.approx(total)
    assert merged.cg == pytest.approx(cg, rel=1e-12)
    assert merged.inertia == pytest.approx(J, rel=1e-10, abs=1e-9)


def symmetric_full_car() -> str:
    return """
format: 1
motion: vertical
bodies:
  body: {mass: 1200, cg: [-1.2, 0, 0.5], inertia: {xx: 450, yy: 1700, zz: 1900}}
  wheel_fl: {mass: 35, cg: [0, 0.75, 0.3], dofs: [z], gyradius: {x: 0.2, y: 0.2, z: 0.2}}
  wheel_fr: {mass: 35, cg: [0, -0.75, 0.3], dofs: [z], gyradius: {x: 0.2, y: 0.2, z: 0.2}}
  wheel_rl: {mass: 30, cg: [-2.6, 0.75, 0.3], dofs: [z], gyradius: {x: 0.2, y: 0.2, z: 0.2}}
  wheel_rr: {mass: 30, cg: [-2.6, -0.75, 0.3], dofs: [z], gyradius: {x: 0.2, y: 0.2, z: 0.2}}
road:
  fl: {at: [0, 0.75, 0]}
  fr: {at: [0, -0.75, 0]}
  rl: {at: [-2.6, 0.75, 0]}
  rr: {at: [-2.6, -0.75, 0]}
links:
  s_fl: {type: spring, a: {body: body, at: [0, 0.75, 0.45]}, b: wheel_fl, axis: z, stiffness: 25e3}
  s_fr: {type: spring, a: {body: body, at: [0, -0.75, 0.45]}, b: wheel_fr, axis: z, stiffness: 25e3}
  s_rl: {type: spring, a: {body: body, at: [-2.6, 0.75, 0.45]}, b: wheel_rl, axis: z, stiffness: 20e3}
  s_rr: {type: spring, a: {body: body, at: [-2.6, -0.75, 0.45]}, b: wheel_rr, axis: z, stiffness: 20e3}
  t_fl: {type: spring, a: wheel_fl, b: road.fl, axis: z, stiffness: 200e3}
  t_fr: {type: spring, a: wheel_fr, b: road.fr, axis: z, stiffness: 200e3}
  t_rl: {type: spring, a: wheel_rl, b: road.rl, axis: z, stiffness: 200e3}
  t_rr: {type: spring, a: wheel_rr, b: road.rr, axis: z, stiffness: 200e3}
depths:
  half_car:
    keep: [body.z, body.ry, "wheel_?l.z"]
    tie: [[wheel_fl.z, wheel_fr.z], [wheel_rl.z, wheel_rr.z]]
"""


def test_tied_half_car_equals_the_symmetric_modes_of_the_full_car():
    # Analytic (symmetry): for a car symmetric about its x-z plane the modes
    # split into symmetric and antisymmetric sets; tying left to right keeps
    # exactly the symmetric set, and the condensed roll is decoupled from it.
    asm = load_text(symmetric_full_car())
    full = compute_modes(assemble(asm))
    half = compute_modes(reduce_to_depth(assemble(asm), asm.depths["half_car"]))
    assert half.model.dofs == ("body.z", "body.ry", "wheel_fl.z", "wheel_rl.z")
    symmetric = [m.frequency_hz for m in full.modes if
                 abs(m.shape[full.model.dofs.index("body.rx")]) < 1e-9 and
                 m.energy["wheel_fl.z"] == pytest.approx(m.energy["wheel_fr.z"], abs=1e-9)]
    assert half.frequencies_hz == pytest.approx(symmetric, rel=1e-9)
    labels = [m.label for m in full.modes]
    assert "front wheels hop, opposed" in labels and "front wheels hop, in phase" in labels


def test_keep_with_wildcards_matches_file_depths():
    asm = load_assembly(ASSEMBLIES / "compact_car.yaml")
    model = assemble(asm)
    a = reduce_keep(model, ["body.*", "wheel_*.z"])
    assert a.dofs == ("body.z", "body.rx", "body.ry", "wheel_fl.z", "wheel_fr.z",
                      "wheel_rl.z", "wheel_rr.z")


def test_state_space_eigenvalues_are_the_damped_roots():
    # Independent library: scipy.linalg.eigvals of the state matrix against
    # the roots reported per mode.
    import scipy.linalg
    model = assemble(load_assembly(ASSEMBLIES / "compact_car.yaml"))
    A, B, C, D = model.to_state_space()
    eig = np.sort_complex(scipy.linalg.eigvals(A))
    roots = np.sort_complex(np.array([r for m in compute_modes(model).modes for r in m.roots]))
    assert roots == pytest.approx(eig, rel=1e-8)
    assert B.shape == (20, 8) and C.shape == (len(model.sensors), 20)
