"""Plain geometry for the drawn scene (numpy only, no pyvista).

A body that gives no shape of its own is drawn as the uniform solid that has
its mass and its principal moments of inertia: a box (default) or an
ellipsoid, centred on the centre of gravity and turned to the principal
axes. For a uniform box of edge lengths ``(a, b, c)`` along its axes,
``I1 = m (b^2 + c^2) / 12`` and so on; solving the three equations gives
``a^2 = 6 (I2 + I3 - I1) / m``. For a uniform ellipsoid of semi-axes
``(a, b, c)``, ``I1 = m (b^2 + c^2) / 5``, so ``a^2 = 5 (I2 + I3 - I1) / (2 m)``.

A body with no rotary inertia (a point mass) gets a cube whose volume is its
mass over a nominal density, :data:`NOMINAL_DENSITY`.

All lengths are in metres, masses in kg, inertias in kg m^2.

>>> lengths, axes = box_dimensions(12.0, np.diag([5.0, 4.0, 3.0]))
>>> [round(float(v), 6) for v in lengths]
[1.414214, 2.0, 2.44949]
"""

from __future__ import annotations

import itertools
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "NOMINAL_DENSITY", "principal_axes", "box_dimensions", "ellipsoid_semi_axes",
    "solid_size", "helix", "box_corners",
]

#: Density (kg/m^3) used to size a body that has mass but no rotary inertia.
#: Roughly that of water; common practice, no source: it only sets a drawing size.
NOMINAL_DENSITY = 1000.0

#: Smallest drawn edge as a fraction of the largest edge of the same solid.
MIN_ASPECT = 0.04


def principal_axes(inertia: ArrayLike) -> tuple[NDArray, NDArray]:
    """Principal moments (kg m^2) and axes (columns, right-handed) of an inertia tensor.

    The axes are ordered and signed to lie as close as possible to the global
    x, y and z axes, so a body whose tensor is nearly diagonal keeps its
    natural orientation (its first axis runs fore and aft).
    """
    tensor = np.asarray(inertia, dtype=float).reshape(3, 3)
    tensor = 0.5 * (tensor + tensor.T)
    moments, vectors = np.linalg.eigh(tensor)
    best = max(itertools.permutations(range(3)),
               key=lambda order: sum(abs(vectors[i, order[i]]) for i in range(3)))
    vectors = vectors[:, best]
    moments = moments[list(best)]
    for i in range(3):
        if vectors[i, i] < 0.0:
            vectors[:, i] = -vectors[:, i]
    if np.linalg.det(vectors) < 0.0:
        vectors[:, 2] = -vectors[:, 2]
    return moments, vectors


def _edges_from_moments(mass: float, moments: NDArray, factor: float) -> NDArray:
    total = moments.sum()
    squares = factor * (total - 2.0 * moments) / mass
    return np.sqrt(np.clip(squares, 0.0, None))


def box_dimensions(mass: float, inertia: ArrayLike) -> tuple[NDArray, NDArray]:
    """Edge lengths (m) and axes of the uniform box with this mass (kg) and inertia.

    Returns ``(lengths, axes)`` with ``lengths[i]`` along column ``axes[:, i]``.
    """
    moments, axes = principal_axes(inertia)
    return _edges_from_moments(float(mass), moments, 6.0), axes


def ellipsoid_semi_axes(mass: float, inertia: ArrayLike) -> tuple[NDArray, NDArray]:
    """Semi-axes (m) and axes of the uniform ellipsoid with this mass (kg) and inertia."""
    moments, axes = principal_axes(inertia)
    return _edges_from_moments(float(mass), moments, 2.5), axes


def solid_size(mass: float, inertia: ArrayLike,
               kind: Literal["box", "ellipsoid"] = "box") -> tuple[NDArray, NDArray]:
    """Drawn half-extents (m) and axes of a body's equivalent solid.

    ``box`` half-extents are half the edge lengths; ``ellipsoid`` ones are the
    semi-axes. A point mass (no rotary inertia) gets a cube (or sphere) of
    volume ``mass / NOMINAL_DENSITY``; a flat or slender solid keeps at
    least :data:`MIN_ASPECT` of its largest extent in every direction so it
    stays visible.
    """
    mass = float(mass)
    tensor = np.asarray(inertia, dtype=float).reshape(3, 3)
    if kind == "box":
        lengths, axes = box_dimensions(mass, tensor) if mass > 0 else (np.zeros(3), np.eye(3))
        half = 0.5 * lengths
    else:
        half, axes = ellipsoid_semi_axes(mass, tensor) if mass > 0 else (np.zeros(3), np.eye(3))
    largest = float(half.max())
    if not np.isfinite(largest) or largest <= 1e-9:
        edge = (max(mass, 1e-3) / NOMINAL_DENSITY) ** (1.0 / 3.0)
        if kind == "ellipsoid":
            edge *= (6.0 / np.pi) ** (1.0 / 3.0)   # sphere of the same volume
        return np.full(3, 0.5 * edge), np.eye(3)
    return np.maximum(half, MIN_ASPECT * largest), axes


def box_corners(center: ArrayLike, half: ArrayLike, axes: ArrayLike) -> NDArray:
    """The eight corners (8 x 3, m) of a box with half-extents along the columns of ``axes``."""
    signs = np.array(list(itertools.product((-1.0, 1.0), repeat=3)))
    return np.asarray(center, float) + (signs * np.asarray(half, float)) @ np.asarray(axes).T


def helix(a: ArrayLike, b: ArrayLike, radius: float, turns: float,
          points_per_turn: int = 24, lead: float = 0.12) -> tuple[NDArray, NDArray]:
    """A coil from point ``a`` to point ``b`` (m), for drawing a spring.

    Returns ``(points, s)``: the coil's centre-line points (n x 3) and each
    point's fraction ``s`` of the way from ``a`` (0) to ``b`` (1) along the
    axis. The first and last ``lead`` fraction are straight lead-in wires on
    the axis, so the coil ends exactly at the two points.
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    axis = b - a
    length = float(np.linalg.norm(axis))
    if length <= 0.0:
        raise ValueError("helix needs two distinct end points")
    e3 = axis / length
    helper = np.array([0.0, 0.0, 1.0]) if abs(e3[2]) < 0.9 else np.array([1.0, 0.0, 0.0])
    e1 = np.cross(helper, e3)
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(e3, e1)
    n = max(int(round(turns * points_per_turn)), 8)
    t = np.linspace(0.0, 1.0, n + 1)
    angle = 2.0 * np.pi * turns * t
    s_coil = lead + (1.0 - 2.0 * lead) * t
    ring = radius * (np.outer(np.cos(angle), e1) + np.outer(np.sin(angle), e2))
    coil = a + np.outer(s_coil, axis) + ring
    # Lead wires: from a to the coil start (which lies at radius off the axis).
    s = np.concatenate([[0.0], s_coil, [1.0]])
    points = np.vstack([a, coil, b])
    return points, s
