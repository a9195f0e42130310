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
    "solid_size", "helix", "box_corners", "box_mesh", "box_edges", "ellipsoid_mesh",
    "ellipse_rings", "cylinder_mesh", "tube_mesh", "SPHERE",
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


# ---------------------------------------------------------------- meshes in numpy
# Surfaces as (points n x 3, faces) with faces in VTK's flat layout
# ([count, i0, i1, ...] per cell), built without pyvista so a scene of
# thousands of bodies costs array arithmetic, not thousands of VTK objects.

# Corner k of box_corners has signs (x, y, z) from the bits of k (z lowest);
# each face is listed anticlockwise seen from outside (outward normal).
_BOX_FACES = ((0, 1, 3, 2), (4, 6, 7, 5), (0, 4, 5, 1), (2, 3, 7, 6), (0, 2, 6, 4), (1, 5, 7, 3))


def box_mesh(center: ArrayLike, half: ArrayLike, axes: ArrayLike) -> tuple[NDArray, NDArray]:
    """A box as 24 points (four per face, for flat shading) and six quads."""
    corners = box_corners(center, half, axes)
    points = np.vstack([corners[list(face)] for face in _BOX_FACES])
    faces = np.hstack([[4, 4 * k, 4 * k + 1, 4 * k + 2, 4 * k + 3] for k in range(6)])
    return points, faces.astype(np.int64)


def box_edges(center: ArrayLike, half: ArrayLike, axes: ArrayLike) -> tuple[NDArray, NDArray]:
    """The twelve edges of a box: its 8 corners and VTK line cells."""
    corners = box_corners(center, half, axes)
    pairs = [(a, b) for a in range(8) for b in range(a + 1, 8) if bin(a ^ b).count("1") == 1]
    return corners, np.hstack([[2, a, b] for a, b in pairs]).astype(np.int64)


def _sphere_template(rings: int = 12, segments: int = 24) -> tuple[NDArray, NDArray]:
    phi = np.linspace(0.0, np.pi, rings + 1)[1:-1]
    theta = np.linspace(0.0, 2 * np.pi, segments, endpoint=False)
    ring = np.stack([np.outer(np.sin(phi), np.cos(theta)), np.outer(np.sin(phi), np.sin(theta)),
                     np.outer(np.cos(phi), np.ones_like(theta))], axis=-1).reshape(-1, 3)
    points = np.vstack([[0.0, 0.0, 1.0], ring, [0.0, 0.0, -1.0]])
    bottom = len(points) - 1
    cells = []
    for j in range(segments):                      # caps
        cells.append([3, 0, 1 + j, 1 + (j + 1) % segments])
        base = 1 + (rings - 2) * segments
        cells.append([3, bottom, base + (j + 1) % segments, base + j])
    for r in range(rings - 2):                     # bands
        for j in range(segments):
            a = 1 + r * segments + j
            b = 1 + r * segments + (j + 1) % segments
            cells.append([4, a, a + segments, b + segments, b])
    return points, np.hstack(cells).astype(np.int64)


SPHERE = _sphere_template()


def ellipsoid_mesh(center: ArrayLike, semi: ArrayLike, axes: ArrayLike,
                   template: tuple[NDArray, NDArray] = SPHERE) -> tuple[NDArray, NDArray]:
    """An ellipsoid (semi-axes along the columns of ``axes``) from a unit-sphere template."""
    unit, faces = template
    return np.asarray(center, float) + (unit * np.asarray(semi, float)) @ np.asarray(axes).T, faces


def ellipse_rings(center: ArrayLike, semi: ArrayLike, axes: ArrayLike,
                  segments: int = 36) -> tuple[NDArray, NDArray]:
    """The three principal outlines of an ellipsoid as closed polylines."""
    t = np.linspace(0.0, 2 * np.pi, segments, endpoint=False)
    c, s = np.cos(t), np.sin(t)
    rings = []
    for i, j in ((0, 1), (1, 2), (0, 2)):
        unit = np.zeros((segments, 3))
        unit[:, i], unit[:, j] = c, s
        rings.append(unit)
    unit = np.vstack(rings)
    points = np.asarray(center, float) + (unit * np.asarray(semi, float)) @ np.asarray(axes).T
    lines = np.hstack([[segments + 1, *range(k * segments, (k + 1) * segments), k * segments]
                       for k in range(3)])
    return points, lines.astype(np.int64)


def cylinder_mesh(center: ArrayLike, radius: float, height: float,
                  segments: int = 24) -> tuple[NDArray, NDArray]:
    """A closed vertical cylinder (axis z) as points and cells."""
    t = np.linspace(0.0, 2 * np.pi, segments, endpoint=False)
    ring = np.column_stack([radius * np.cos(t), radius * np.sin(t), np.zeros(segments)])
    c = np.asarray(center, float)
    lo = c + ring - [0, 0, height / 2]
    hi = c + ring + [0, 0, height / 2]
    points = np.vstack([lo, hi])
    cells = [[4, j, (j + 1) % segments, segments + (j + 1) % segments, segments + j]
             for j in range(segments)]
    cells.append([segments, *range(segments - 1, -1, -1)])
    cells.append([segments, *range(segments, 2 * segments)])
    return points, np.hstack(cells).astype(np.int64)


def tube_mesh(line: ArrayLike, radius: float, sides: int = 8,
              helper: ArrayLike | None = None) -> tuple[NDArray, NDArray, NDArray]:
    """A tube of ``radius`` around a polyline: (points, quads, index of the line point).

    Each ring of ``sides`` points sits in the plane normal to the local
    tangent; ``helper`` (default: the least-aligned global axis per ring)
    fixes the ring's first direction. The third array gives, for every tube
    point, the polyline point it rings (to carry per-point data across).
    """
    line = np.asarray(line, dtype=float)
    n = len(line)
    tangent = np.gradient(line, axis=0)
    tangent /= np.maximum(np.linalg.norm(tangent, axis=1, keepdims=True), 1e-300)
    if helper is None:
        pick = np.argmin(np.abs(tangent), axis=1)
        aid = np.eye(3)[pick]
    else:
        aid = np.broadcast_to(np.asarray(helper, float), (n, 3))
    e1 = np.cross(tangent, aid)
    bad = np.linalg.norm(e1, axis=1) < 1e-6
    if bad.any():
        e1[bad] = np.cross(tangent[bad], np.eye(3)[np.argmin(np.abs(tangent[bad]), axis=1)])
    e1 /= np.linalg.norm(e1, axis=1, keepdims=True)
    e2 = np.cross(tangent, e1)
    angle = np.linspace(0.0, 2 * np.pi, sides, endpoint=False)
    ring = (np.cos(angle)[None, :, None] * e1[:, None, :]
            + np.sin(angle)[None, :, None] * e2[:, None, :])
    points = (line[:, None, :] + radius * ring).reshape(-1, 3)
    cells = [[4, i * sides + j, i * sides + (j + 1) % sides, (i + 1) * sides + (j + 1) % sides,
              (i + 1) * sides + j] for i in range(n - 1) for j in range(sides)]
    owner = np.repeat(np.arange(n), sides)
    return points, np.hstack(cells).astype(np.int64), owner
