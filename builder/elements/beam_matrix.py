"""Stiffness of a straight elastic beam element between two points.

The element joins point ``a`` to point ``b``. Its local axes are x from ``a``
to ``b`` and the section axes y and z (bending "about local y" uses ``EIy``,
deflection along local z; bending "about local z" uses ``EIz``, deflection
along local y). Degrees of freedom, local or global, are ordered

    [u_a (3), theta_a (3), u_b (3), theta_b (3)]

(translations in m, small rotations in rad). Stiffness properties are SI:
``EA`` in N, ``EIy``, ``EIz``, ``GJ`` in N m^2, shear stiffnesses
``shear_y`` / ``shear_z`` (k G A, the effective shear rigidity for shear
along local y / z) in N.

Without shear stiffness the element is the Euler-Bernoulli beam; with it,
the shear-deformable (Timoshenko) beam with shear parameter
``phi = 12 EI / (k G A L^2)``. Both are exact for end-loaded prismatic beams.

The matrix is built from the cantilever flexibility of end ``b`` with end
``a`` clamped, inverted in closed form, and spread onto both ends through the
equilibrium map ``G`` (deformation of ``b`` relative to the rigid motion
carried from ``a``): ``K = G^T K_bb G``. Rigid motions give zero deformation
by construction, so the six rigid-body motions are null vectors.

>>> k = beam_local_stiffness(2.0, EA=1.0e6, EIy=1.0e4, EIz=2.0e4, GJ=5.0e3)
>>> float(k[1, 1]), float(k[2, 4]), float(k[3, 9])  # 12 EIz/L^3, -6 EIy/L^2, -GJ/L
(30000.0, -15000.0, -2500.0)
"""

from __future__ import annotations

__all__ = ["beam_local_stiffness", "beam_rotation", "beam_rotations", "check_beam_axes",
           "beam_global_stiffness"]

import math

import numpy as np

from ..errors import InputError, Where


def _positive(value: float, name: str, where: Where | None) -> float:
    value = float(value)
    if not np.isfinite(value) or value <= 0.0:
        raise InputError(f"{name} must be a positive finite number, got {value!r}", where)
    return value


def _bending_block(length: float, EI: float, shear: float | None,
                   where: Where | None, name: str) -> tuple[float, float, float]:
    """End-b stiffness of a clamped-free beam in one bending plane.

    Returns (k_ff, k_fm, k_mm): force per deflection, force per rotation (for
    the plane where rotation and deflection slope agree in sign) and moment per
    rotation, N/m, N/rad, N m/rad.
    """
    EI = _positive(EI, name, where)
    phi = 0.0 if shear is None else 12.0 * EI / (_positive(shear, "shear stiffness", where)
                                                 * length * length)
    den = 1.0 + phi
    return (12.0 * EI / (length ** 3 * den),
            6.0 * EI / (length ** 2 * den),
            (4.0 + phi) * EI / (length * den))


def _skew(r: np.ndarray) -> np.ndarray:
    return np.array([[0.0, -r[2], r[1]], [r[2], 0.0, -r[0]], [-r[1], r[0], 0.0]])


def beam_local_stiffness(length: float, EA: float, EIy: float, EIz: float, GJ: float,
                         shear_y: float | None = None, shear_z: float | None = None,
                         where: Where | None = None) -> np.ndarray:
    """12x12 stiffness of a straight beam in its local axes.

    Parameters
    ----------
    length : element length, m (> 0).
    EA : axial rigidity, N.  EIy, EIz : bending rigidities about local y, z, N m^2.
    GJ : torsional rigidity, N m^2.
    shear_y, shear_z : shear rigidities k G A for shear along local y, z, N;
        ``None`` for Euler-Bernoulli (no shear deformation) in that plane.

    Returns
    -------
    ndarray (12, 12), exactly symmetric, on [u_a, theta_a, u_b, theta_b] in
    local axes (N/m, N/rad, N m/rad).
    """
    L = _positive(length, "beam length", where)
    EA = _positive(EA, "EA", where)
    GJ = _positive(GJ, "GJ", where)
    # Stiffness of end b (a clamped), local [u, v, w, rx, ry, rz] of b.
    kbb = np.zeros((6, 6))
    kbb[0, 0] = EA / L
    kbb[3, 3] = GJ / L
    # Plane x-y: deflection v, rotation rz (slope dv/dx = +rz), shear along y, EIz.
    kff, kfm, kmm = _bending_block(L, EIz, shear_y, where, "EIz")
    kbb[1, 1], kbb[5, 5] = kff, kmm
    kbb[1, 5] = kbb[5, 1] = -kfm
    # Plane x-z: deflection w, rotation ry (slope dw/dx = -ry), shear along z, EIy.
    kff, kfm, kmm = _bending_block(L, EIy, shear_z, where, "EIy")
    kbb[2, 2], kbb[4, 4] = kff, kmm
    kbb[2, 4] = kbb[4, 2] = kfm
    # Deformation of b relative to the rigid motion of a: d = G q.
    g = np.zeros((6, 12))
    g[0:3, 0:3] = -np.eye(3)
    g[0:3, 3:6] = _skew(np.array([L, 0.0, 0.0]))
    g[0:3, 6:9] = np.eye(3)
    g[3:6, 3:6] = -np.eye(3)
    g[3:6, 9:12] = np.eye(3)
    k = g.T @ kbb @ g
    return 0.5 * (k + k.T)


def beam_rotation(pa: np.ndarray, pb: np.ndarray, z_hint: np.ndarray,
                  where: Where | None = None) -> np.ndarray:
    """Local axes of the beam from ``pa`` to ``pb`` as the rows of a 3x3 matrix.

    Local x points from ``pa`` to ``pb``; local z is ``z_hint`` made
    orthogonal to x; local y = z cross x. A local vector is ``R @ global``.
    Raises InputError when the points coincide or the hint is (nearly, within
    about 0.06 degrees) parallel to the beam.
    """
    check_beam_axes(pa, pb, z_hint, where)
    return beam_rotations(np.asarray(pa, float).reshape(1, 3), np.asarray(pb, float).reshape(1, 3),
                          np.asarray(z_hint, float).reshape(1, 3))[0]


def check_beam_axes(pa, pb, z_hint, where: Where | None = None) -> None:
    """The checks of :func:`beam_rotation` alone (plain float arithmetic: it runs once
    per beam read): distinct finite points, a non-zero section axis across the beam."""
    ax, ay, az = np.asarray(pa, dtype=float).reshape(3).tolist()
    bx, by, bz = np.asarray(pb, dtype=float).reshape(3).tolist()
    dx, dy, dz = bx - ax, by - ay, bz - az
    length = math.sqrt(dx * dx + dy * dy + dz * dz)
    if not math.isfinite(length) or length <= 1e-12 * max(1.0, math.sqrt(ax * ax + ay * ay
                                                                         + az * az)):
        raise InputError("beam ends coincide: the element needs two distinct points", where)
    hx, hy, hz = np.asarray(z_hint, dtype=float).reshape(3).tolist()
    norm = math.sqrt(hx * hx + hy * hy + hz * hz)
    if not math.isfinite(norm) or norm == 0.0:
        raise InputError("beam frame z must be a non-zero vector", where)
    along = (hx * dx + hy * dy + hz * dz) / (norm * length)
    if 1.0 - along * along < 1e-6:          # |z - (z.x) x| < 1e-3
        raise InputError("beam frame z is parallel to the beam axis; give a section axis "
                         "across the beam", where)


def beam_rotations(pa: np.ndarray, pb: np.ndarray, z_hint: np.ndarray) -> np.ndarray:
    """:func:`beam_rotation` of many beams at once, (L, 3) points and hints to
    (L, 3, 3) rows of local axes, without the checks (done when a beam is read)."""
    axis = np.asarray(pb, dtype=float) - np.asarray(pa, dtype=float)
    x = axis / np.linalg.norm(axis, axis=1, keepdims=True)
    z = np.asarray(z_hint, dtype=float)
    z = z / np.linalg.norm(z, axis=1, keepdims=True)
    z = z - np.sum(z * x, axis=1, keepdims=True) * x
    z = z / np.linalg.norm(z, axis=1, keepdims=True)
    y = np.cross(z, x)
    return np.stack([x, y, z], axis=1)


def beam_global_stiffness(pa: np.ndarray, pb: np.ndarray, z_hint: np.ndarray,
                          EA: float, EIy: float, EIz: float, GJ: float,
                          shear_y: float | None = None, shear_z: float | None = None,
                          where: Where | None = None) -> np.ndarray:
    """12x12 stiffness of the beam from ``pa`` to ``pb`` in global axes.

    On the motions of the two points [translation at pa (m), rotation (rad),
    translation at pb, rotation]; section axes from :func:`beam_rotation`;
    properties as in :func:`beam_local_stiffness` (SI). Exactly symmetric;
    the six rigid-body motions of the two points are null vectors.
    """
    r = beam_rotation(pa, pb, z_hint, where)
    length = float(np.linalg.norm(np.asarray(pb, dtype=float) - np.asarray(pa, dtype=float)))
    k_local = beam_local_stiffness(length, EA, EIy, EIz, GJ, shear_y, shear_z, where)
    # R^T K R on each 3x3 block of the four (translation, rotation) triples.
    k = np.einsum("ai,AaBb,bj->AiBj", r, k_local.reshape(4, 3, 4, 3), r).reshape(12, 12)
    return 0.5 * (k + k.T)
