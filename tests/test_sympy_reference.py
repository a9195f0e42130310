"""Self-test of the sympy reference (tests/reference/sympy_mounts.py) against closed forms.

The reference is used to check the project's assembly of rigid bodies on
mounts, so it is itself checked here against results that need no program:
a body on four vertical corner springs (bounce, pitch and roll frequencies
in closed form) and a body on a single rotated bushing at its cg.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from reference.sympy_mounts import reference_matrices

MASS = 1200.0                     # kg, invented
CG = np.array([-1.2, 0.05, 0.55])
IXX, IYY, IZZ = 450.0, 1800.0, 2000.0


def _corner_springs(kf: float, kr: float, a: float, b: float, t: float, c: float = 0.0):
    """Vertical springs at x = cg + a (front pair, rate kf) and cg - b (rear pair, rate kr),
    y = cg +- t, at a height below the cg (height does not matter for vertical springs)."""
    out = []
    for x, k in ((CG[0] + a, kf), (CG[0] - b, kr)):
        for y in (CG[1] + t, CG[1] - t):
            out.append({"at": [x, y, 0.3], "axis": [0, 0, 1], "k": k, "c": c})
    return out


@pytest.fixture(scope="module")
def symmetric_car():
    k, c, a, t = 25e3, 1500.0, 1.3, 0.75
    J = np.diag([IXX, IYY, IZZ])
    return (k, c, a, t), reference_matrices(MASS, CG, J, springs=_corner_springs(k, k, a, a, t, c))


def test_corner_springs_bounce_pitch_roll_closed_form(symmetric_car):
    (k, c, a, t), (M, C, K) = symmetric_car
    # Analytic (free-body equations of a rigid plate on four vertical springs, as in any
    # vibration textbook's bounce-pitch model, e.g. W. T. Thomson, Theory of Vibration with
    # Applications, two-DOF car model): with equal corner springs the motions uncouple and
    #   w_bounce^2 = 4 k / m,  w_pitch^2 = 4 k a^2 / Iyy,  w_roll^2 = 4 k t^2 / Ixx.
    assert K[2, 2] / M[2, 2] == pytest.approx(4 * k / MASS, rel=1e-12)
    assert K[4, 4] / M[4, 4] == pytest.approx(4 * k * a**2 / IYY, rel=1e-12)
    assert K[3, 3] / M[3, 3] == pytest.approx(4 * k * t**2 / IXX, rel=1e-12)
    lam = np.sort(np.linalg.eigvals(np.linalg.solve(M, K)).real)
    expected = np.sort([0.0, 0.0, 0.0, 4 * k / MASS, 4 * k * a**2 / IYY, 4 * k * t**2 / IXX])
    np.testing.assert_allclose(lam[3:], expected[3:], rtol=1e-12)
    assert np.abs(lam[:3]).max() < 1e-9 * lam[3:].max()       # x, y, yaw have no stiffness
    # the dampers sit beside the springs: C is K scaled by c/k (analytic)
    np.testing.assert_allclose(C, K * (c / k), rtol=1e-12, atol=1e-9)
    # mass matrix: diag(m, m, m) and the inertia tensor (definition)
    np.testing.assert_allclose(M, np.diag([MASS] * 3 + [IXX, IYY, IZZ]), atol=1e-12)


def test_corner_springs_coupled_bounce_pitch_closed_form():
    # Unequal front and rear: bounce and pitch couple. Closed form (analytic, the two-DOF
    # bounce-pitch model): K11 = 2(kf + kr), K12 = -2(kf a - kr b), K22 = 2(kf a^2 + kr b^2),
    # and w^2 are the roots of m J w^4 - (K11 J + K22 m) w^2 + K11 K22 - K12^2 = 0.
    kf, kr, a, b, t = 22e3, 28e3, 1.05, 1.55, 0.76
    M, _C, K = reference_matrices(MASS, CG, np.diag([IXX, IYY, IZZ]),
                                  springs=_corner_springs(kf, kr, a, b, t))
    k11, k12, k22 = 2 * (kf + kr), -2 * (kf * a - kr * b), 2 * (kf * a**2 + kr * b**2)
    p = MASS * IYY
    s = k11 * IYY + k22 * MASS
    r = k11 * k22 - k12**2
    disc = math.sqrt(s * s - 4 * p * r)
    w2 = sorted([(s - disc) / (2 * p), (s + disc) / (2 * p)])
    sub = [2, 4]
    lam = np.sort(np.linalg.eigvals(np.linalg.solve(M[np.ix_(sub, sub)],
                                                    K[np.ix_(sub, sub)])).real)
    np.testing.assert_allclose(lam, w2, rtol=1e-12)
    assert abs(K[2, 4]) == pytest.approx(abs(k12), rel=1e-12)
    # sign: a nose-down pitch (positive ry about y left) lifts the rear, lowers the front:
    # a positive rotation about +y moves a point at +x by -x*ry in z (right-hand rule).
    assert K[2, 4] == pytest.approx(k12, rel=1e-12)


def test_rotated_bushing_at_cg_rotational_and_translational_blocks():
    # A single bushing at the cg whose local axes are a rotation R of the global ones.
    # Analytic: the global stiffness blocks are R^T diag(k) R (translation) and
    # R^T diag(kr) R (rotation), uncoupled because the point is the cg.
    ang = 0.4
    R = np.array([[math.cos(ang), math.sin(ang), 0.0],
                  [-math.sin(ang), math.cos(ang), 0.0],
                  [0.0, 0.0, 1.0]])
    tilt = 0.3
    Rx = np.array([[1, 0, 0], [0, math.cos(tilt), math.sin(tilt)],
                   [0, -math.sin(tilt), math.cos(tilt)]])
    R = Rx @ R
    k, kr = np.array([1e5, 2e5, 5e5]), np.array([800.0, 1500.0, 3000.0])
    J = np.array([[30.0, -2.0, 1.0], [-2.0, 20.0, 0.5], [1.0, 0.5, 25.0]])
    M, _C, K = reference_matrices(150.0, CG, J, bushings=[
        {"at": CG, "frame": R, "k": k, "kr": kr}])
    np.testing.assert_allclose(K[:3, :3], R.T @ np.diag(k) @ R, rtol=1e-12, atol=1e-6)
    np.testing.assert_allclose(K[3:, 3:], R.T @ np.diag(kr) @ R, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(K[:3, 3:], 0.0, atol=1e-6)
    np.testing.assert_allclose(M[3:, 3:], J, atol=1e-12)   # inertia enters unchanged
