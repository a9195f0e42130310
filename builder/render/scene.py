"""The drawn scene of an assembly, and how each drawn point follows the DOFs.

:func:`build_scene` turns an :class:`~builder.assembly.Assembly` into a list of
:class:`Part` meshes (pyvista ``PolyData``, undeformed, global coordinates in
metres):

- each body: its own ``shape`` if it gives one, else the uniform box (or
  ellipsoid) with its mass and principal moments, on its principal axes;
- springs: coils between their end points; bushings: blocks at end ``a``'s
  point; beams: tubes; any other link type: a thin line;
- road points: pads; ground: a plane under everything; the ISO 8855 axes
  (x forward, y left, z up) as a triad of arrows;
- body-mounted sensors: small markers at their points.

Every moving point belongs to a body, or to a link end. A body point ``p``
moves as the body's rigid small motion ``u = u_cg + theta x (p - cg)``,
i.e. ``point_map(p - cg) @ q`` with ``q = [u_cg, theta]`` (see
:mod:`builder.kinematics`). A point of a link at fraction ``s`` from end
``a`` to end ``b`` moves as ``(1 - s) u_a + s u_b``, the motions of the two
end points (a ground or road end does not move). A part stores this as a
list of :class:`Term`: per point, a 3 x 6 map and a weight for one body.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import InputError
from .shapes import helix, solid_size

__all__ = [
    "Term", "Part", "Scene", "PALETTE", "build_scene", "point_maps", "body_motions",
    "mode_displacements", "import_pyvista",
]

#: The scene's colours (hex). Chosen for this project: warm paper background,
#: slate and clay solids, a sand-to-brick ramp for amplitude.
PALETTE: dict[str, Any] = {
    "background_top": "#f6f3ec",
    "background_bottom": "#dde3e6",
    "ground": "#d6d9cf",
    "ground_edges": "#bcc1b5",
    "pad": "#5d636b",
    "ghost": "#8f98a8",
    "text": "#23272e",
    "axis_x": "#c9553a",
    "axis_y": "#4f8f4a",
    "axis_z": "#3f6aa8",
    "bodies": ["#6d7f99", "#b28a62", "#7c9a83", "#9a7c9a", "#a39a6a", "#6a95a3"],
    "spring": "#b0603a",
    "bushing": "#3f4a57",
    "beam": "#59636e",
    "link": "#59636e",
    "sensor": "#d9a441",
    # amplitude ramp: (position, colour)
    "ramp": [(0.0, "#33445e"), (0.3, "#3a8a8c"), (0.62, "#e2c46b"), (1.0, "#c03f2b")],
}

SPATIAL = ("x", "y", "z", "rx", "ry", "rz")


def import_pyvista():
    """Import pyvista set up for off-screen CPU rendering (EGL when there is no display)."""
    if not os.environ.get("DISPLAY") and "VTK_DEFAULT_OPENGL_WINDOW" not in os.environ:
        os.environ["VTK_DEFAULT_OPENGL_WINDOW"] = "vtkEGLRenderWindow"
    import pyvista

    return pyvista


def point_maps(arms: ArrayLike) -> NDArray:
    """Small-motion maps (n x 3 x 6) of points at ``arms`` (n x 3, m) from a cg.

    Block ``i`` is :func:`builder.kinematics.point_map` of ``arms[i]``:
    ``[I, -skew(r)]``, so ``maps[i] @ [u, theta] = u + theta x r``.
    """
    from ..kinematics import point_map_all

    return point_map_all(np.asarray(arms, dtype=float).reshape(-1, 3))


@dataclass
class Term:
    """One body's share of a part's point motion: ``u += weight * maps @ q[body]``."""

    body: int            # index into Scene.bodies
    maps: NDArray        # n x 3 x 6
    weight: NDArray      # n


@dataclass
class Part:
    """One drawn piece: its undeformed mesh, colour and how its points move."""

    name: str            # "body:NAME", "spring:NAME", "road:NAME", "ground", ...
    kind: str            # body, spring, bushing, beam, link, sensor, road, ground, axes
    mesh: Any            # pyvista.PolyData (float64 points, global axes, m)
    color: str
    terms: list[Term] = field(default_factory=list)
    ghost: Any = None    # outline drawn undeformed, or None
    opacity: float = 1.0  # below 1 for a solid that encloses other parts

    @property
    def moving(self) -> bool:
        return bool(self.terms)

    def displacement(self, q: NDArray) -> NDArray:
        """Point displacements (n x 3) for body motions ``q`` (nb x 6; may be complex)."""
        n = self.mesh.n_points
        out = np.zeros((n, 3), dtype=np.result_type(q.dtype, float))
        for term in self.terms:
            out += term.weight[:, None] * np.einsum("nij,j->ni", term.maps, q[term.body])
        return out


@dataclass
class Scene:
    """Everything drawn for an assembly, undeformed, plus the data to move it."""

    name: str
    bodies: tuple[str, ...]
    cgs: NDArray                 # nb x 3
    masses: NDArray              # nb
    inertias: NDArray            # nb x 3 x 3
    parts: list[Part]
    size: float                  # characteristic length (m): largest extent of the vehicle
    bounds: NDArray              # xmin, xmax, ymin, ymax, zmin, zmax of the vehicle (m)

    @property
    def center(self) -> NDArray:
        b = self.bounds
        return np.array([(b[0] + b[1]) / 2, (b[2] + b[3]) / 2, (b[4] + b[5]) / 2])

    def part(self, name: str) -> Part:
        for part in self.parts:
            if part.name == name:
                return part
        raise KeyError(name)


# ---------------------------------------------------------------- building

def _vec(value: Any) -> NDArray:
    return np.asarray(value, dtype=float).reshape(3)


def _with_double(mesh):
    mesh.points_to_double()
    return mesh


def _body_solid(pv, body, kind: str):
    """The mesh of a body: its own ``shape`` if given, else its equivalent uniform solid.

    A file's shape is ``{box: [lx, ly, lz]}`` (edge lengths, m) or
    ``{ellipsoid: [ax, ay, az]}`` (semi-axes, m), along the global axes and
    centred on the cg; the loader gives it as ``{"kind": ..., "size": ...}``.
    """
    cg = _vec(body.cg)
    shape = getattr(body, "shape", None)
    if not shape:
        half, axes = solid_size(body.mass, body.inertia, kind)
        return _oriented(pv, kind, cg, half, axes)
    solid = str(shape.get("kind", "box"))
    size = np.asarray(shape["size"], dtype=float).reshape(3)
    if solid == "ellipsoid":
        return _oriented(pv, "ellipsoid", cg, size, np.eye(3))
    if solid != "box":
        raise InputError(f"shape: unknown kind {solid!r} (box, ellipsoid)",
                         getattr(body, "where", None))
    return _oriented(pv, "box", cg, 0.5 * size, np.eye(3))


def _oriented(pv, kind: str, center: NDArray, half: NDArray, axes: NDArray):
    if kind == "box":
        unit = pv.Cube(center=(0, 0, 0), x_length=2, y_length=2, z_length=2, clean=False)
    else:
        unit = pv.Sphere(radius=1.0, theta_resolution=28, phi_resolution=16)
    unit = _with_double(unit)
    unit.points = np.asarray(center, float) + (unit.points * half) @ np.asarray(axes).T
    return unit


def _end_node(end) -> str:
    return str(getattr(end, "node", getattr(end, "body", "ground")))


def _end_point(end, fallback: NDArray, ground_z: float, bodies: Mapping) -> NDArray:
    at = getattr(end, "at", None)
    if at is not None and np.all(np.isfinite(np.asarray(at, dtype=float))):
        return _vec(at)
    node = _end_node(end)
    if node in bodies:
        return _vec(bodies[node].cg)
    return np.array([fallback[0], fallback[1], ground_z])


def build_scene(assembly, solid: str = "box") -> Scene:
    """Build the undeformed scene of ``assembly`` (global axes, m).

    ``solid`` is ``"box"`` or ``"ellipsoid"``: the equivalent solid drawn for
    bodies without a ``shape``.
    """
    if solid not in ("box", "ellipsoid"):
        raise InputError(f"solid: expected box or ellipsoid, got {solid!r}")
    pv = import_pyvista()
    bodies = dict(assembly.bodies)
    names = tuple(bodies)
    index = {name: i for i, name in enumerate(names)}
    cgs = np.array([_vec(b.cg) for b in bodies.values()]).reshape(-1, 3)
    parts: list[Part] = []

    for i, (name, body) in enumerate(bodies.items()):
        mesh = _body_solid(pv, body, solid)
        color = PALETTE["bodies"][i % len(PALETTE["bodies"])]
        parts.append(Part(f"body:{name}", "body", mesh, color,
                          [Term(i, point_maps(mesh.points - cgs[i]), np.ones(mesh.n_points))],
                          ghost=mesh.extract_feature_edges(20.0, boundary_edges=True,
                                                           non_manifold_edges=False,
                                                           manifold_edges=False)))

    road = dict(getattr(assembly, "road", {}) or {})
    road_pts = np.array([_vec(r.at) for r in road.values()]).reshape(-1, 3)
    # Vehicle extent: solids, road points and link points.
    pts = [p.mesh.points for p in parts] + [road_pts]
    for link in getattr(assembly, "links", {}).values():
        for end in (link.a, link.b):
            at = getattr(end, "at", None)
            if at is not None and np.all(np.isfinite(np.asarray(at, dtype=float))):
                pts.append(_vec(at)[None, :])
    allpts = np.vstack([p for p in pts if len(p)]) if any(len(p) for p in pts) else np.zeros((1, 3))
    lo, hi = allpts.min(axis=0), allpts.max(axis=0)
    size = float(max((hi - lo).max(), 1e-3))
    ground_z = float(road_pts[:, 2].min()) if len(road_pts) else float(lo[2] - 0.05 * size)
    unit = 0.01 * size    # drawing unit for links and markers

    for name, link in getattr(assembly, "links", {}).items():
        parts.append(_link_part(pv, name, link, bodies, index, cgs, ground_z, unit))

    for name, sensor in getattr(assembly, "sensors", {}).items():
        target = str(getattr(sensor, "target", ""))
        at = getattr(sensor, "at", None)
        if target in index and at is not None:
            mesh = _with_double(pv.Sphere(radius=1.6 * unit, center=_vec(at),
                                          theta_resolution=12, phi_resolution=8))
            i = index[target]
            parts.append(Part(f"sensor:{name}", "sensor", mesh, PALETTE["sensor"],
                              [Term(i, point_maps(mesh.points - cgs[i]), np.ones(mesh.n_points))]))

    for name, point in road.items():
        at = _vec(point.at)
        pad = pv.Cylinder(center=at + [0, 0, 0.6 * unit], direction=(0, 0, 1),
                          radius=6 * unit, height=1.2 * unit, resolution=24)
        parts.append(Part(f"road:{name}", "road", _with_double(pad.triangulate()), PALETTE["pad"]))

    span = hi - lo
    margin = 0.15 * size
    plane = pv.Plane(center=((lo[0] + hi[0]) / 2, (lo[1] + hi[1]) / 2, ground_z),
                     direction=(0, 0, 1), i_size=span[0] + 2 * margin,
                     j_size=span[1] + 2 * margin, i_resolution=10, j_resolution=6)
    parts.append(Part("ground", "ground", _with_double(plane), PALETTE["ground"]))
    # The triad stands off the front-right corner: left of the vehicle in the
    # side, front and iso views, clear of the scalar bar on the right.
    parts.extend(_axes_parts(pv, np.array([hi[0] + 0.6 * margin, lo[1] - 0.4 * margin,
                                           ground_z]), 0.12 * size))

    _see_through(parts, bodies)
    masses = np.array([float(b.mass) for b in bodies.values()])
    inertias = np.array([np.asarray(b.inertia, float).reshape(3, 3) for b in bodies.values()])
    return Scene(str(getattr(assembly, "name", "")), names, cgs, masses,
                 inertias.reshape(-1, 3, 3), parts, size, np.array([lo[0], hi[0], lo[1], hi[1],
                                                                   lo[2], hi[2]]))


def _see_through(parts: list[Part], bodies: Mapping) -> None:
    """Make translucent every body solid that hides another body's cg or a link point."""
    solids = [p for p in parts if p.kind == "body"]
    marks = {p.name: np.vstack([_vec(bodies[p.name[5:]].cg)[None, :]]) for p in solids}
    others = [p for p in parts if p.kind != "body"]
    for solid in solids:
        lo, hi = solid.mesh.points.min(axis=0), solid.mesh.points.max(axis=0)
        pts = [m for name, m in marks.items() if name != solid.name]
        pts += [o.mesh.points for o in others]
        if not pts:
            continue
        inside = np.all((np.vstack(pts) > lo) & (np.vstack(pts) < hi), axis=1)
        if inside.any():
            solid.opacity = 0.4


def _link_part(pv, name: str, link, bodies: Mapping, index: Mapping, cgs: NDArray,
               ground_z: float, unit: float) -> Part:
    kind = str(getattr(link, "type", "link"))
    node_a, node_b = _end_node(link.a), _end_node(link.b)
    guess_a = cgs[index[node_a]] if node_a in index else np.zeros(3)
    guess_b = cgs[index[node_b]] if node_b in index else guess_a
    pa = _end_point(link.a, guess_b, ground_z, bodies)
    pb = _end_point(link.b, pa, ground_z, bodies)
    length = float(np.linalg.norm(pb - pa))
    drawn = {"spring": "spring", "bushing": "bushing", "mount": "bushing", "beam": "beam"}.get(
        kind, "link")
    if drawn in ("spring", "beam", "link") and length < 2 * unit:
        drawn = "bushing"
    if drawn == "spring":
        radius = min(2.5 * unit, 0.18 * length) if length > 0 else 2.5 * unit
        turns = float(np.clip(length / (1.6 * radius), 3.0, 9.0))
        line, s = helix(pa, pb, radius, turns)
        poly = pv.lines_from_points(line)
        poly.point_data["s"] = s
        mesh = poly.tube(radius=0.22 * radius, n_sides=8, capping=False)
        ghost = pv.lines_from_points(np.vstack([pa, pb]))
    elif drawn == "bushing":
        mesh = pv.Cube(center=pa, x_length=3 * unit, y_length=3 * unit, z_length=3 * unit,
                       clean=False)
        mesh.point_data["s"] = np.full(mesh.n_points, 0.5)
        ghost = None
    else:
        poly = pv.lines_from_points(np.linspace(pa, pb, 12))
        poly.point_data["s"] = np.linspace(0.0, 1.0, 12)
        radius = (0.9 if drawn == "beam" else 0.35) * unit
        mesh = poly.tube(radius=radius, n_sides=10 if drawn == "beam" else 6, capping=True)
        ghost = poly if drawn == "beam" else None
    mesh = _with_double(mesh)
    s = np.asarray(mesh.point_data["s"], dtype=float)
    terms = []
    for node, point, weight in ((node_a, pa, 1.0 - s), (node_b, pb, s)):
        if node in index:
            i = index[node]
            maps = np.broadcast_to(point_maps((point - cgs[i])[None, :]), (len(s), 3, 6))
            terms.append(Term(i, maps, weight))
    if ghost is not None:
        ghost = _with_double(ghost)
    return Part(f"{drawn}:{name}", drawn, mesh, PALETTE.get(drawn, PALETTE["link"]), terms,
                ghost=ghost)


def _axes_parts(pv, origin: NDArray, length: float) -> list[Part]:
    parts = []
    for label, direction in (("x", (1, 0, 0)), ("y", (0, 1, 0)), ("z", (0, 0, 1))):
        color = PALETTE[f"axis_{label}"]
        arrow = pv.Arrow(start=origin, direction=direction, scale=length, tip_length=0.25,
                         tip_radius=0.08, shaft_radius=0.025)
        text = pv.Text3D(label, depth=0.02)
        text.points = text.points * (0.4 * length)
        tip = origin + 1.12 * length * np.asarray(direction, float)
        text.translate(tip - np.asarray(text.center), inplace=True)
        if label != "z":      # lay the letters on the ground plane so they read from above
            text.translate((0, 0, 0.02 * length), inplace=True)
        parts.append(Part(f"axes:{label}", "axes", _with_double(arrow.merge(text)), color))
    return parts


# ---------------------------------------------------------------- motion

def body_motions(scene: Scene, dofs: Sequence[str], shape: ArrayLike) -> NDArray:
    """Each body's 6-DOF motion ``[x, y, z, rx, ry, rz]`` (nb x 6) from a shape over ``dofs``.

    DOF labels are ``BODY.DOF``; a DOF a body lacks stays zero.
    """
    shape = np.asarray(shape)
    if shape.shape != (len(dofs),):
        raise InputError(f"mode shape has {shape.size} entries for {len(dofs)} DOFs")
    q = np.zeros((len(scene.bodies), 6), dtype=np.result_type(shape.dtype, float))
    index = {name: i for i, name in enumerate(scene.bodies)}
    for label, value in zip(dofs, shape, strict=True):
        body, _, dof = str(label).rpartition(".")
        if body in index and dof in SPATIAL:
            q[index[body], SPATIAL.index(dof)] = value
    return q


def mode_displacements(scene: Scene, dofs: Sequence[str], shape: ArrayLike) -> list[NDArray | None]:
    """Displacement (n x 3, shape units) of every drawn point of every part; None if static."""
    q = body_motions(scene, dofs, shape)
    return [part.displacement(q) if part.moving else None for part in scene.parts]
