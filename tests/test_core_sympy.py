"""A rigid body with six DOFs on springs and bushings at arbitrary, tilted points,
against an independent derivation with sympy.physics.mechanics (Kane's method,
linearised): tests/reference/sympy_mounts.py, which imports nothing from builder."""

from functools import lru_cache

import numpy as np
import pytest
from reference.sympy_mounts import reference_matrices

from builder.analysis.modes import compute_modes
from builder.elements import local_frame
from builder.linear import assemble
from builder.load import load_text

MASS = 142.0
CG = [0.21, -0.13, 0.47]
INERTIA = {"xx": 5.9, "yy": 7.7, "zz": 6.6, "xy": 0.31, "xz": -0.74, "yz": 0.18}


def tensor(i):
    return np.array([[i["xx"], -i["xy"], -i["xz"]], [-i["xy"], i["yy"], -i["yz"]],
                     [-i["xz"], -i["yz"], i["zz"]]])


SPRINGS = [  # (point, axis, k, c)
    ([0.6, 0.35, 0.55], [0.2, -0.3, 1.0], 1.8e5, 420.0),
    ([0.5, -0.41, 0.6], [-0.1, 0.4, 0.9], 2.3e5, 380.0),
    ([-0.2, 0.05, 0.2], [1.0, 0.1, -0.25], 3.1e5, 150.0),
]
BUSHINGS = [  # (point, frame x, frame z, (kx, ky, kz), (krx, kry, krz), (cx, cy, cz))
    ([0.1, 0.3, 0.7], [1, 0.2, 0], [0, -0.34, 0.94], (9e4, 6e4, 2.2e5), (150, 90, 60),
     (100, 80, 260)),
    ([-0.35, -0.25, 0.3], [0.97, 0, -0.26], [0.26, 0.1, 0.96], (3.5e5, 4e4, 4e4), (0, 0, 0),
     (0, 0, 500)),
]


def yaml_text() -> str:
    i = ", ".join(f"{k}: {v}" for k, v in INERTIA.items())
    lines = ["format: 1", "motion: spatial", "bodies:",
             f"  pt: {{mass: {MASS}, cg: {CG}, inertia: {{{i}}}}}", "links:"]
    for n, (p, ax, k, c) in enumerate(SPRINGS):
        lines.append(f"  s{n}: {{type: spring, a: {{body: pt, at: {p}}}, b: ground, "
                     f"axis: {ax}, stiffness: {k}, damping: {c}}}")
    for n, (p, fx, fz, k, kr, c) in enumerate(BUSHINGS):
        lines.append(f"  b{n}: {{type: bushing, a: {{body: pt, at: {p}}}, b: ground, "
                     f"frame: {{x: {fx}, z: {fz}}}, "
                     f"stiffness: {{x: {k[0]}, y: {k[1]}, z: {k[2]}, rx: {kr[0]}, ry: {kr[1]}, "
                     f"rz: {kr[2]}}}, damping: {{x: {c[0]}, y: {c[1]}, z: {c[2]}}}}}")
    return "\n".join(lines) + "\n"


@lru_cache(maxsize=1)
def reference():
    springs = [{"at": p, "axis": np.array(ax) / np.linalg.norm(ax), "k": k, "c": c}
               for p, ax, k, c in SPRINGS]
    bushings = [{"at": p, "frame": local_frame(np.array(fx, float), np.array(fz, float)),
                 "k": k, "kr": kr, "c": c} for p, fx, fz, k, kr, c in BUSHINGS]
    return reference_matrices(MASS, CG, tensor(INERTIA), springs=springs, bushings=bushings)


def test_matrices_match_kanes_method():
    # Independent library: sympy.physics.mechanics, KanesMethod.linearize (1e-9 relative)
    M_ref, C_ref, K_ref = reference()
    model = assemble(load_text(yaml_text()))
    for ours, ref in ((model.M, M_ref), (model.C, C_ref), (model.K, K_ref)):
        ours = ours.toarray()
        assert np.abs(ours - ref).max() <= 1e-9 * np.abs(ref).max()


def test_six_frequencies_match_kanes_method():
    # Independent library: sympy.physics.mechanics + scipy.linalg.eigh (1e-9 relative)
    import scipy.linalg
    M_ref, _, K_ref = reference()
    expected = np.sqrt(scipy.linalg.eigh(K_ref, M_ref, eigvals_only=True)) / (2 * np.pi)
    got = compute_modes(assemble(load_text(yaml_text()))).frequencies_hz
    assert got == pytest.approx(expected, rel=1e-9)
