"""A small spatial linkage against sympy.physics.mechanics (Kane's method).

Two bodies: body 1 on a spherical joint to ground at the origin, body 2 on a
revolute joint (axis x) to body 1, four springs to ground. sympy builds the
exact nonlinear kinematics in the linkage's own minimal coordinates (body
1's three body-fixed angles about the ball, body 2's hinge angle), Kane's
equations with the springs as forces, and linearises them at rest. The
eliminated lumpgraph model must be the same linear system: its expansion
spans the same motions as sympy's partial velocities (J X = T), and
X^T M_kane X, X^T K_kane X give lumpgraph's M and K, and the frequencies,
to 1e-9.
"""

import numpy as np
import pytest

from builder.analysis.modes import compute_modes
from builder.linear import assemble
from builder.load import load_text

C1, C2, H = (0.3, 0.1, -0.2), (0.3, 0.5, 0.1), (0.2, 0.2, 0.1)
M1, M2 = 8.0, 3.0
#: inertia tensors about the cgs (entries, kg m^2): sympy's inertia() arguments
I1 = (0.5, 0.7, 0.6, 0.05, 0.0, 0.02)     # ixx, iyy, izz, ixy, iyz, izx
I2 = (0.2, 0.1, 0.25, 0.0, 0.01, 0.0)
SPRINGS = [(1, (0.4, 0.0, 0.0), (0.4, 0.0, -0.3), 2.0e4),
           (1, (0.0, 0.4, 0.0), (0.0, 0.4, -0.3), 3.0e4),
           (1, (0.4, 0.0, 0.0), (0.4, 0.3, 0.0), 1.5e4),
           (2, (0.5, 0.6, 0.1), (0.5, 0.6, -0.3), 1.0e4)]


def _sympy_linear():
    """M, K (4 x 4) of Kane's equations linearised at rest, and J (12 x 4): the body
    DOF velocities (cg velocity, angular velocity, global axes) per generalised speed."""
    import sympy as sm
    import sympy.physics.mechanics as me

    q = me.dynamicsymbols("q1:5")
    u = me.dynamicsymbols("u1:5")
    N = me.ReferenceFrame("N")
    origin = me.Point("O")
    origin.set_vel(N, 0)
    B1 = N.orientnew("B1", "Body", q[0:3], "XYZ")
    B2 = B1.orientnew("B2", "Axis", [q[3], B1.x])
    B1.set_ang_vel(N, u[0] * B1.x + u[1] * B1.y + u[2] * B1.z)
    B2.set_ang_vel(B1, u[3] * B1.x)

    def vec(F, v):
        return v[0] * F.x + v[1] * F.y + v[2] * F.z

    G1 = origin.locatenew("G1", vec(B1, C1))
    G1.v2pt_theory(origin, N, B1)
    Hp = origin.locatenew("H", vec(B1, H))
    Hp.v2pt_theory(origin, N, B1)
    G2 = Hp.locatenew("G2", vec(B2, [C2[i] - H[i] for i in range(3)]))
    G2.v2pt_theory(Hp, N, B2)
    Bq = me.ReferenceFrame("Bq")
    Bq.orient(N, "Body", q[0:3], "XYZ")
    w = Bq.ang_vel_in(N)
    kd = [w.dot(Bq.x) - u[0], w.dot(Bq.y) - u[1], w.dot(Bq.z) - u[2], q[3].diff() - u[3]]
    bodies = [me.RigidBody("b1", G1, B1, M1, (me.inertia(B1, *I1), G1)),
              me.RigidBody("b2", G2, B2, M2, (me.inertia(B2, *I2), G2))]
    loads = []
    for i, (b, p, g, k) in enumerate(SPRINGS):
        if b == 1:
            P = origin.locatenew(f"P{i}", vec(B1, p))
            P.v2pt_theory(origin, N, B1)
        else:
            P = G2.locatenew(f"P{i}", vec(B2, [p[j] - C2[j] for j in range(3)]))
            P.v2pt_theory(G2, N, B2)
        L0 = float(np.linalg.norm(np.subtract(p, g)))
        e = vec(N, [(p[j] - g[j]) / L0 for j in range(3)])
        # an axial spring without preload: linearised, its force stays on its line
        loads.append((P, -k * ((P.pos_from(origin) - vec(N, g)).dot(e) - L0) * e))
    kane = me.KanesMethod(N, q_ind=q, u_ind=u, kd_eqs=kd)
    kane.kanes_equations(bodies, loads)
    op = {**{x: 0 for x in q}, **{x: 0 for x in u}}
    Ms = np.array(me.msubs(kane.mass_matrix, op), dtype=float)
    Ks = -np.array(me.msubs(kane.forcing.jacobian(q), op), dtype=float)
    rows = []
    for point, frame in ((G1, B1), (G2, B2)):
        v = [point.vel(N).diff(ui, N) for ui in u]
        om = [frame.ang_vel_in(N).diff(ui, N) for ui in u]
        for part in (v, om):
            for axis in (N.x, N.y, N.z):
                rows.append([float(sm.N(me.msubs(pv.dot(axis), op))) for pv in part])
    return Ms, Ks, np.array(rows)


def _file() -> str:
    def tensor(t):
        ixx, iyy, izz, ixy, iyz, izx = t     # the file's products are -(tensor entries)
        return f"{{xx: {ixx}, yy: {iyy}, zz: {izz}, xy: {-ixy}, yz: {-iyz}, xz: {-izx}}}"
    springs = "\n".join(
        f"  s{i}: {{type: spring, a: {{body: b{b}, at: {list(p)}}}, "
        f"b: {{body: ground, at: {list(g)}}}, stiffness: {k}}}"
        for i, (b, p, g, k) in enumerate(SPRINGS))
    return f"""
format: 1
name: ball and hinge linkage (invented)
motion: spatial
bodies:
  b1: {{mass: {M1}, cg: {list(C1)}, inertia: {tensor(I1)}}}
  b2: {{mass: {M2}, cg: {list(C2)}, inertia: {tensor(I2)}}}
links:
  ball: {{type: spherical, a: {{body: b1, at: [0, 0, 0]}}, b: ground}}
  hinge: {{type: revolute, a: {{body: b2, at: {list(H)}}}, b: {{body: b1, at: {list(H)}}}, axis: x}}
{springs}
"""


def test_ball_and_hinge_linkage_matches_kanes_method():
    Ms, Ks, J = _sympy_linear()
    model = assemble(load_text(_file()))
    assert model.n == 4
    T = model.expansion.toarray()
    X = np.linalg.lstsq(J, T, rcond=None)[0]
    assert np.abs(J @ X - T).max() < 1e-12 * np.abs(T).max()   # the same motions
    M, K = model.M.toarray(), model.K.toarray()
    assert X.T @ Ms @ X == pytest.approx(M, rel=1e-9, abs=1e-9 * np.abs(M).max())
    assert X.T @ Ks @ X == pytest.approx(K, rel=1e-9, abs=1e-9 * np.abs(K).max())
    import scipy.linalg
    w2 = np.sort(scipy.linalg.eigh(Ks, Ms, eigvals_only=True))
    got = compute_modes(model).frequencies_hz
    assert got == pytest.approx(np.sqrt(w2) / (2 * np.pi), rel=1e-9)
