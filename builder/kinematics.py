"""The one small-motion kinematics helper every element, sensor and render uses.

A rigid body's six DOFs are the translation of its cg ``u`` (m) and a small
rotation vector ``theta`` (rad) about global axes. A point at offset
``r = p - cg`` moves by ``u + theta x r = u - r x theta``, so

    point_map(r) = [I, -skew(r)]            (3 x 6)

and the motion of the point as a six-vector (translation at the point,
rotation) is ``motion_map(r) = [[I, -skew(r)], [0, I]]`` (6 x 6).

>>> point_map([0.0, 1.0, 0.0]) @ [0, 0, 0, 0, 0, 0.1]    # yaw moves a point on +y
array([-0.1,  0. ,  0. ])
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["DOF_NAMES", "skew", "point_map", "point_map_all", "motion_map", "motion_map_all",
           "rigid_motions"]

#: The six DOF names of a body, in order: translations (m), rotations (rad).
DOF_NAMES: tuple[str, ...] = ("x", "y", "z", "rx", "ry", "rz")


def skew(r: ArrayLike) -> np.ndarray:
    """The cross-product matrix: ``skew(r) @ v == np.cross(r, v)``."""
    x, y, z = np.asarray(r, dtype=float)
    return np.array([[0.0, -z, y], [z, 0.0, -x], [-y, x, 0.0]])


def point_map(r: ArrayLike) -> np.ndarray:
    """3 x 6 map from a body's DOFs to the translation (m) of the point at offset r (m)."""
    out = np.zeros((3, 6))
    out[:, :3] = np.eye(3)
    out[:, 3:] = -skew(r)
    return out


def motion_map(r: ArrayLike) -> np.ndarray:
    """6 x 6 map from a body's DOFs to the point's [translation (m); rotation (rad)]."""
    out = np.eye(6)
    out[:3, 3:] = -skew(r)
    return out


def rigid_motions(points: ArrayLike, about: ArrayLike = (0.0, 0.0, 0.0)) -> np.ndarray:
    """The six unit rigid-body motions of a set of points, as a (6, npoints, 3) array."""
    pts = np.asarray(points, dtype=float) - np.asarray(about, dtype=float)
    return np.moveaxis(point_map_all(pts), 2, 0)


def point_map_all(offsets: np.ndarray) -> np.ndarray:
    """Stacked :func:`point_map` for many offsets: (npoints, 3, 6)."""
    offs = np.asarray(offsets, dtype=float).reshape(-1, 3)
    out = np.zeros((len(offs), 3, 6))
    out[:, :, :3] = np.eye(3)
    x, y, z = offs.T
    out[:, 0, 4], out[:, 0, 5] = z, -y
    out[:, 1, 3], out[:, 1, 5] = -z, x
    out[:, 2, 3], out[:, 2, 4] = y, -x
    return out


def motion_map_all(offsets: np.ndarray) -> np.ndarray:
    """Stacked :func:`motion_map` for many offsets: (npoints, 6, 6)."""
    offs = np.asarray(offsets, dtype=float).reshape(-1, 3)
    out = np.zeros((len(offs), 6, 6))
    out[:, :3, :] = point_map_all(offs)
    out[:, 3:, 3:] = np.eye(3)
    return out
