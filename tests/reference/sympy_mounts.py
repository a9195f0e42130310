"""Independent reference: a rigid body on grounded elastic elements, by Kane's method.

This module derives the linear mass, damping and stiffness matrices of one
rigid body with six degrees of freedom on N grounded elastic elements using
``sympy.physics.mechanics`` only (``ReferenceFrame``, ``Point``,
``RigidBody``, ``KanesMethod`` and its ``linearize``). It imports nothing
from ``builder``, so the project's own small-motion kinematics helper and
element matrices can be checked against it.

Coordinates (DOF order x, y, z, rx, ry, rz)
--------------------------------------------
* ``q1, q2, q3``: displacement of the centre of gravity in global axes (m).
* ``q4, q5, q6``: three rotations (rad) of the body, applied as space-fixed
  rotations about the global x, then global y, then global z axis
  (sympy's ``orient_space_fixed(..., "XYZ")``), so that the body's
  orientation is ``R = Rz(q6) Ry(q5) Rx(q4)``. To first order
  ``R = I + skew(q4, q5, q6)``, i.e. at small motion ``(q4, q5, q6)`` is the
  rotation vector in global axes, and at ``q = 0`` the angular velocity is
  exactly ``(q4', q5', q6')``; the linear model therefore uses the same DOFs
  as ``x, y, z, rx, ry, rz`` at the cg.
* Generalised speeds: ``u1..u3 = q1'..q3'`` and ``u4..u6`` the angular
  velocity in global components (equal to ``q4'..q6'`` at ``q = 0``).

At ``q = 0`` the body axes coincide with the global axes, so the inertia
tensor given about the cg in global axes is the body-fixed tensor.

Elements (all grounded on the other side, no preload, no gravity)
-----------------------------------------------------------------
* axial spring: ``{"at": point, "axis": unit vector, "k": N/m, "c": N s/m}``.
  It is modelled as a genuinely nonlinear line element: its ground anchor is
  at ``at - L * axis`` (``L`` = 1 m; the linear result does not depend on
  it), its free length is ``L``, its force on the body point is
  ``-k (|P - A| - L) e - c (e . v_P) e`` with ``e`` the unit vector from the
  anchor to the moving point. Kane's linearisation then yields the small-motion
  stiffness without assuming it.
* bushing: ``{"at": point, "frame": 3x3 (rows = local x, y, z axes in global
  coordinates), "k": (kx, ky, kz) N/m, "kr": (krx, kry, krz) N m/rad
  (optional), "c": (cx, cy, cz) N s/m (optional), "cr": (...) N m s/rad
  (optional)}``. The local axes are fixed to the ground side. The force on
  the body point is ``-sum_i k_i (e_i . (P - P0)) e_i - sum_i c_i (e_i . v_P) e_i``;
  the torque is ``-sum_i kr_i (e_i . theta) e_i - sum_i cr_i (e_i . omega) e_i``
  where ``theta`` is the axial vector of the antisymmetric part of the
  body's direction-cosine matrix (sympy's ``N.dcm(B)``), exact to first
  order.

Linearisation
-------------
Kane's equations ``M(q) u' = f(q, u)`` are linearised about the static
equilibrium ``q = 0, u = 0`` by differentiating sympy's ``forcing``
(``K = -df/dq``, ``C = -df/du``) and evaluating ``mass_matrix`` at zero;
this is what ``KanesMethod.linearize`` does, done column by column on plain
symbols because the generic routine takes minutes on these expressions.

Public function: :func:`reference_matrices`.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence

import numpy as np
import sympy as sp
from sympy.physics import mechanics as me

__all__ = ["reference_matrices"]

_ANCHOR_LENGTH = 1.0  # m; free length of an axial spring (any positive value gives the same K)


def _vec(frame: me.ReferenceFrame, v: Sequence[float]) -> me.Vector:
    return float(v[0]) * frame.x + float(v[1]) * frame.y + float(v[2]) * frame.z


def _triple(values: Sequence[float] | None) -> tuple[float, float, float]:
    if values is None:
        return (0.0, 0.0, 0.0)
    a = [float(x) for x in values]
    if len(a) != 3:
        raise ValueError("expected three values")
    return (a[0], a[1], a[2])


def reference_matrices(mass: float, cg: Sequence[float], inertia_3x3: Sequence[Sequence[float]],
                       springs: Iterable[Mapping] = (), bushings: Iterable[Mapping] = (),
                       ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Linear (M, C, K) of a rigid body on grounded springs and bushings.

    mass in kg, cg in m (global), inertia_3x3 in kg m^2 about the cg in
    global axes (the full tensor, products with their minus signs). Returns
    three float 6x6 numpy arrays in DOF order x, y, z, rx, ry, rz at the cg
    (m and rad; M in kg and kg m^2, C in N s/m ..., K in N/m ...), from
    Kane's equations ``M(q) u' = f(q, u)`` linearised about ``q = 0, u = 0``:
    ``K = -df/dq``, ``C = -df/du`` and ``M = M(0)`` (at ``q = 0``, ``u = q'``).
    """
    q = me.dynamicsymbols("q1:7")
    u = me.dynamicsymbols("u1:7")
    qd = [sp.diff(qi, me.dynamicsymbols._t) for qi in q]

    N = me.ReferenceFrame("N")
    B = me.ReferenceFrame("B")
    B.orient_space_fixed(N, (q[3], q[4], q[5]), "XYZ")
    omega = B.ang_vel_in(N)
    # generalised speeds: cg velocity and angular velocity, both in global components
    kd = [qd[i] - u[i] for i in range(3)]
    kd += [u[3 + i] - omega.dot(a) for i, a in enumerate((N.x, N.y, N.z))]
    B.set_ang_vel(N, u[3] * N.x + u[4] * N.y + u[5] * N.z)

    origin = me.Point("O")
    origin.set_vel(N, 0)
    cg = np.asarray(cg, dtype=float)
    G = origin.locatenew("G", _vec(N, cg) + q[0] * N.x + q[1] * N.y + q[2] * N.z)
    G.set_vel(N, u[0] * N.x + u[1] * N.y + u[2] * N.z)

    J = np.asarray(inertia_3x3, dtype=float)
    axes = (B.x, B.y, B.z)
    dyadic = sum((float(J[i, j]) * (axes[i] | axes[j]) for i in range(3) for j in range(3)),
                 start=0 * (B.x | B.x))
    body = me.RigidBody("body", G, B, float(mass), (dyadic, G))

    loads: list[tuple] = []

    def body_point(name: str, at: Sequence[float]) -> tuple[me.Point, sp.Matrix, sp.Matrix]:
        r = np.asarray(at, dtype=float) - cg
        P = G.locatenew(name, _vec(B, r))       # fixed in the body
        P.v2pt_theory(G, N, B)
        return P, P.pos_from(origin).to_matrix(N), P.vel(N).to_matrix(N)

    def in_n(m: sp.Matrix) -> me.Vector:
        return m[0] * N.x + m[1] * N.y + m[2] * N.z

    for n, s in enumerate(springs):
        axis = np.asarray(s["axis"], dtype=float)
        axis = axis / np.linalg.norm(axis)
        k = float(s.get("k", 0.0))
        c = float(s.get("c", 0.0))
        P, rP, vP = body_point(f"S{n}", s["at"])
        anchor = sp.Matrix(np.asarray(s["at"], dtype=float) - _ANCHOR_LENGTH * axis)
        d = rP - anchor
        length = sp.sqrt(d.dot(d))
        e = d / length
        force = -k * (length - _ANCHOR_LENGTH) * e - c * vP.dot(e) * e
        loads.append((P, in_n(force)))

    theta = _small_rotation(N, B)
    for n, b in enumerate(bushings):
        frame = np.asarray(b["frame"], dtype=float)
        e = [sp.Matrix(row / np.linalg.norm(row)) for row in frame]
        kt, kr = _triple(b.get("k")), _triple(b.get("kr"))
        ct, cr = _triple(b.get("c")), _triple(b.get("cr"))
        P, rP, vP = body_point(f"B{n}", b["at"])
        disp = rP - sp.Matrix(np.asarray(b["at"], dtype=float))
        force = sp.zeros(3, 1)
        for i in range(3):
            force += -kt[i] * disp.dot(e[i]) * e[i] - ct[i] * vP.dot(e[i]) * e[i]
        loads.append((P, in_n(force)))
        if any(kr) or any(cr):
            w = sp.Matrix(u[3:6])
            torque = sp.zeros(3, 1)
            for i in range(3):
                torque += -kr[i] * theta.dot(e[i]) * e[i] - cr[i] * w.dot(e[i]) * e[i]
            loads.append((B, in_n(torque)))

    kane = me.KanesMethod(N, q_ind=list(q), u_ind=list(u), kd_eqs=kd)
    kane.kanes_equations([body], loads)
    # Plain symbols differentiate much faster than functions of time.
    qs = sp.symbols("qq1:7")
    us = sp.symbols("uu1:7")
    to_plain = (dict(zip(q, qs, strict=True)), dict(zip(u, us, strict=True)))
    forcing = me.msubs(kane.forcing, *to_plain)
    mass_matrix = me.msubs(kane.mass_matrix, *to_plain)
    zero = {s: 0 for s in (*qs, *us)}
    M = _numeric(mass_matrix.xreplace(zero))
    static = forcing.xreplace({s: 0 for s in us})
    K = np.zeros((6, 6))
    for j in range(6):
        # every other coordinate at zero first: the column of the Jacobian at q = 0
        g = static.xreplace({s: 0 for i, s in enumerate(qs) if i != j})
        K[:, j] = -_numeric(g.diff(qs[j]).xreplace(zero)).ravel()
    moving = forcing.xreplace({s: 0 for s in qs})
    C = -_numeric(moving.jacobian(us).xreplace(zero))
    return M, C, K


def _numeric(m: sp.Matrix) -> np.ndarray:
    return np.array(m.evalf(), dtype=float)


def _small_rotation(N: me.ReferenceFrame, B: me.ReferenceFrame) -> sp.Matrix:
    """Axial vector of the antisymmetric part of the DCM: the rotation vector to first order."""
    R = N.dcm(B)   # columns: B's axes in N components
    return sp.Matrix([R[2, 1] - R[1, 2], R[0, 2] - R[2, 0], R[1, 0] - R[0, 1]]) / 2
