"""The drawn scene of an assembly, and how each drawn point follows the DOFs.

:func:`build_scene` turns an :class:`~builder.assembly.Assembly` into a list of
:class:`Part` meshes (plain arrays in a :class:`Geometry`, built without VTK
objects so that thousands of bodies stay cheap; ``Part.mesh`` gives a pyvista
``PolyData``), undeformed, in global coordinates (m):

- each body: its own ``shape`` if it gives one, else the uniform box (or
  ellipsoid) with its mass and principal moments, on its principal axes;
  split bodies, wheels, seat and occupant are drawn as what they are
  (:mod:`builder.render.vehicle`: one skin, tyres, a seated figure);
- springs: coils between their end points; bushings and mounts: blocks at
  end ``a``'s point; beams: tubes; any other link type: a thin line;
- road points: pads; the ground: a lane under each line of road points (a
  slab when there are none);
- body-mounted sensors: small markers at their points.

Every moving point belongs to a body, or to a link end. A body point ``p``
moves as the body's rigid small motion ``u = u_cg + theta x (p - cg)``,
i.e. ``point_map(p - cg) @ q`` with ``q = [u_cg, theta]`` (see
:mod:`builder.kinematics`). A point of a link at fraction ``s`` from end
``a`` to end ``b`` moves as ``(1 - s) u_a + s u_b``, the motions of the two
end points (a ground or road end does not move); a bushing's block moves
with the mean of its two ends (``s = 1/2``). A part stores this as a list of
:class:`Term`: per point, a 3 x 6 map and a weight for one body.

A body solid or skin that encloses another body's cg is drawn see-through, so
what it holds (powertrain, seat, occupant) stays visible.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from types import ModuleType
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import InputError

if TYPE_CHECKING:
    from ..assembly import Assembly
from .shapes import (
    box_edges,
    box_mesh,
    cylinder_mesh,
    ellipse_rings,
    ellipsoid_mesh,
    helix,
    solid_size,
    tube_mesh,
)

__all__ = [
    "Term", "Part", "Scene", "Geometry", "PALETTE", "build_scene", "point_maps", "body_motions",
    "mode_displacements", "import_pyvista",
]

#: The scene's colours (hex), lumpgraph's own (see docs/look.md): warm paper,
#: ink, and one hue per kind of part, drawn pale at rest and deep where it moves.
PALETTE: dict[str, Any] = {
    "paper": "#f3eee3",
    "ink": "#262d36",
    "band": "#262d36",
    "band_text": "#f3eee3",
    "band_dim": "#b9b2a3",
    "accent": "#c8643b",
    "shadow": "#d8d0bf",
    "ground": "#e4ddcf",
    "ground_edges": "#cfc6b4",
    "lane": "#cbc2ae",
    "pad": "#8a8272",
    "track": "#262d36",
    "text": "#262d36",
    "skin": "#4f7896",
    "rib": "#1f3447",
    "bodies": ["#5b7f8f", "#8f7a5b", "#6f8f5b", "#8f5b78", "#7f8f5b", "#5b6f8f"],
    "powertrain": "#c8643b",
    "tyre": "#30343a",
    "rim": "#a9a397",
    "seat": "#6b5e4c",
    "cushion": "#8d7b62",
    "occupant": "#d99a3d",
    "spring": "#b0603a",
    "bushing": "#3b4450",
    "beam": "#59636e",
    "link": "#59636e",
    "sensor": "#e0b341",
    "joint": "#7d3f63",
}

SPATIAL = ("x", "y", "z", "rx", "ry", "rz")


def import_pyvista() -> ModuleType:
    """Import pyvista set up for off-screen CPU rendering (EGL when there is no display)."""
    if not os.environ.get("DISPLAY") and "VTK_DEFAULT_OPENGL_WINDOW" not in os.environ:
        os.environ["VTK_DEFAULT_OPENGL_WINDOW"] = "vtkEGLRenderWindow"
    import pyvista
    from vtkmodules.vtkCommonCore import vtkLogger, vtkObject

    # VTK's own log lines never reach the user: lumpgraph checks what it draws and
    # writes, and a Ctrl-C landing in a VTK callback would otherwise print VTK's
    # report of the interrupted callback instead of one line (builder.interrupts)
    vtkLogger.SetStderrVerbosity(vtkLogger.VERBOSITY_OFF)
    vtkObject.GlobalWarningDisplayOff()
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
    maps: NDArray        # n x 3 x 6 (may be a broadcast view)
    weight: NDArray      # n


@dataclass
class Geometry:
    """A mesh as plain arrays: points (n x 3, m), VTK flat face and line cells."""

    points: NDArray
    faces: NDArray = field(default_factory=lambda: np.zeros(0, np.int64))
    lines: NDArray = field(default_factory=lambda: np.zeros(0, np.int64))

    @staticmethod
    def of(mesh) -> Geometry:
        """The arrays of a pyvista PolyData."""
        return Geometry(np.array(mesh.points, dtype=float), np.array(mesh.faces, np.int64),
                        np.array(mesh.lines, np.int64))

    @staticmethod
    def merge(parts: Sequence[Geometry]) -> Geometry:
        """One geometry of several, points kept in order."""
        points, faces, lines, offset = [], [], [], 0
        for g in parts:
            points.append(g.points)
            faces.append(_shift(g.faces, offset))
            lines.append(_shift(g.lines, offset))
            offset += len(g.points)
        return Geometry(np.vstack(points) if points else np.zeros((0, 3)),
                        np.concatenate(faces) if faces else np.zeros(0, np.int64),
                        np.concatenate(lines) if lines else np.zeros(0, np.int64))

    def polydata(self) -> Any:
        """A pyvista PolyData of these arrays (float64 points)."""
        pv = import_pyvista()
        points = np.ascontiguousarray(self.points, dtype=float)
        # Cells given explicitly: no vertex cell per point (pyvista adds those to a
        # PolyData made from points alone).
        return pv.PolyData(points, faces=self.faces if self.faces.size else None,
                           lines=self.lines if self.lines.size else None)


def _shift(cells: NDArray, offset: int) -> NDArray:
    """VTK flat cells with every point index moved by ``offset``."""
    if not cells.size or offset == 0:
        return cells
    out = cells.copy()
    k = 0
    while k < len(out):
        count = int(out[k])
        out[k + 1:k + 1 + count] += offset
        k += count + 1
    return out


@dataclass(eq=False)
class Part:
    """One drawn piece: its undeformed geometry, colour and how its points move."""

    name: str            # "body:NAME", "spring:NAME", "road:NAME", "ground", ...
    kind: str            # body, spring, bushing, beam, link, sensor, road, ground, axes
    geometry: Geometry   # global axes, m
    color: str
    terms: list[Term] = field(default_factory=list)
    outline: Geometry | None = None   # drawn undeformed as a ghost, or None
    opacity: float = 1.0  # below 1 for a solid that encloses other parts
    s: NDArray | None = None          # link points: fraction of the way from end a to b
    _mesh: Any = None

    @property
    def moving(self) -> bool:
        return bool(self.terms)

    @property
    def mesh(self) -> Any:
        """The geometry as a pyvista PolyData (built once), with ``s`` as point data."""
        if self._mesh is None:
            self._mesh = self.geometry.polydata()
            if self.s is not None:
                self._mesh.point_data["s"] = self.s
        return self._mesh

    @property
    def ghost(self) -> Any:
        """The outline as a pyvista PolyData, or None."""
        return None if self.outline is None else self.outline.polydata()

    def displacement(self, q: NDArray) -> NDArray:
        """Point displacements (n x 3) for body motions ``q`` (nb x 6; may be complex)."""
        n = len(self.geometry.points)
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


def _body_solid(body, kind: str) -> tuple[Geometry, Geometry]:
    """A body's solid and outline: its own ``shape`` if given, else its equivalent solid.

    A file's shape is ``{box: [lx, ly, lz]}`` (edge lengths, m) or
    ``{ellipsoid: [ax, ay, az]}`` (semi-axes, m), along the global axes and
    centred on the cg; the loader gives it as ``{"kind": ..., "size": ...}``.
    """
    cg = _vec(body.cg)
    shape = getattr(body, "shape", None)
    if not shape:
        half, axes = solid_size(body.mass, body.inertia, kind)
        solid = kind
    else:
        solid = str(shape.get("kind", "box"))
        size = np.asarray(shape["size"], dtype=float).reshape(3)
        if solid not in ("box", "ellipsoid"):
            raise InputError(f"shape: unknown kind {solid!r} (box, ellipsoid)",
                             getattr(body, "where", None))
        half, axes = (0.5 * size if solid == "box" else size), np.eye(3)
    if solid == "box":
        points, faces = box_mesh(cg, half, axes)
        corners, lines = box_edges(cg, half, axes)
        return Geometry(points, faces), Geometry(corners, lines=lines)
    points, faces = ellipsoid_mesh(cg, half, axes)
    rings, lines = ellipse_rings(cg, half, axes)
    return Geometry(points, faces), Geometry(rings, lines=lines)


def _end_node(end) -> str:
    return str(getattr(end, "node", getattr(end, "body", "ground")))


def _finite_at(end) -> NDArray | None:
    at = getattr(end, "at", None)
    if at is None:
        return None
    at = np.asarray(at, dtype=float).reshape(3)
    return at if np.all(np.isfinite(at)) else None


def _end_point(end, fallback: NDArray, ground_z: float, bodies: Mapping) -> NDArray:
    at = _finite_at(end)
    if at is not None:
        return at
    node = _end_node(end)
    if node in bodies:
        return _vec(bodies[node].cg)
    return np.array([fallback[0], fallback[1], ground_z])


def _rigid_terms(i: int, points: NDArray, cg: NDArray) -> list[Term]:
    return [Term(i, point_maps(points - cg), np.ones(len(points)))]


def build_scene(assembly: Assembly, solid: str = "box") -> Scene:
    """Build the undeformed scene of ``assembly`` (global axes, m).

    ``solid`` is ``"box"`` or ``"ellipsoid"``: the equivalent solid drawn for
    bodies without a ``shape``.
    """
    if solid not in ("box", "ellipsoid"):
        raise InputError(f"solid: expected box or ellipsoid, got {solid!r}")
    bodies = dict(assembly.bodies)
    links = dict(getattr(assembly, "links", {}) or {})
    names = tuple(bodies)
    index = {name: i for i, name in enumerate(names)}
    cgs = np.array([_vec(b.cg) for b in bodies.values()]).reshape(-1, 3)
    parts: list[Part] = []

    from .vehicle import find_roles, rim_mesh, seat_parts, skin_parts, tyre_mesh

    roles = find_roles(assembly)
    # a shape from the file is honoured; the seat plugin's bodies carry a nominal
    # cube of their own that the seated figure replaces
    shaped = {n for n, b in bodies.items()
              if getattr(b, "shape", None) and n not in roles.seat_bodies}
    for i, (name, body) in enumerate(bodies.items()):
        role = roles.role(name)
        if role in ("skin", "seat", "occupant") and name not in shaped:
            continue
        if role == "wheel":
            centre, radius = roles.wheels[name]
            geometry = Geometry(*rim_mesh(centre, radius))
            parts.append(Part(f"body:{name}", "body", geometry, PALETTE["rim"],
                              _rigid_terms(i, geometry.points, cgs[i])))
            continue
        geometry, outline = _body_solid(body, solid)
        color = PALETTE["powertrain"] if role == "powertrain" else \
            PALETTE["bodies"][i % len(PALETTE["bodies"])]
        parts.append(Part(f"body:{name}", "body", geometry, color,
                          _rigid_terms(i, geometry.points, cgs[i]), outline=outline))
    for name, chain in roles.chains.items():
        parts.extend(skin_parts(name, chain, bodies, index, solid, PALETTE["skin"],
                                PALETTE["rib"]))
    for seat in roles.seats.values():
        for part in seat_parts(seat, bodies, index, PALETTE):
            body = part.name[5:] if part.name.startswith("body:") else ""
            if body not in shaped:
                parts.append(part)
    for lname, (body, centre, radius) in roles.tyres.items():
        i = index[body]
        geometry = Geometry(*tyre_mesh(centre, radius))
        parts.append(Part(f"tyre:{lname}", "tyre", geometry, PALETTE["tyre"],
                          _rigid_terms(i, geometry.points, cgs[i])))

    road = dict(getattr(assembly, "road", {}) or {})
    road_pts = np.array([_vec(r.at) for r in road.values()]).reshape(-1, 3)
    # Vehicle extent: solids, road points and link points.
    ends = [p for link in links.values() for p in (_finite_at(link.a), _finite_at(link.b))
            if p is not None]
    pts = [p.geometry.points for p in parts] + [road_pts, np.array(ends).reshape(-1, 3)]
    allpts = np.vstack(pts)
    if not len(allpts):
        allpts = np.zeros((1, 3))
    lo, hi = allpts.min(axis=0), allpts.max(axis=0)
    size = float(max((hi - lo).max(), 1e-3))
    ground_z = float(road_pts[:, 2].min()) if len(road_pts) else float(lo[2] - 0.05 * size)
    unit = 0.01 * size    # drawing unit for links and markers

    for name, link in links.items():
        if name in roles.tyres:
            continue            # drawn as the tyre
        if {_end_node(link.a), _end_node(link.b)} <= roles.seat_bodies:
            continue            # cushion and occupant couplings: the seated figure shows them
        chain_a = roles.segment_of.get(_end_node(link.a))
        if chain_a is not None and chain_a == roles.segment_of.get(_end_node(link.b)):
            continue            # a beam inside a split body: the skin shows it
        parts.append(_link_part(name, link, bodies, index, cgs, ground_z, unit))

    for name, sensor in getattr(assembly, "sensors", {}).items():
        target = str(getattr(sensor, "target", ""))
        at = getattr(sensor, "at", None)
        if target in index and at is not None:
            i = index[target]
            points, faces = ellipsoid_mesh(_vec(at), np.full(3, 1.6 * unit), np.eye(3))
            parts.append(Part(f"sensor:{name}", "sensor", Geometry(points, faces),
                              PALETTE["sensor"], _rigid_terms(i, points, cgs[i])))

    for name, point in road.items():
        pad = cylinder_mesh(_vec(point.at) + [0, 0, 0.3 * unit], 5 * unit, 0.6 * unit)
        parts.append(Part(f"road:{name}", "road", Geometry(*pad), PALETTE["pad"]))

    parts.append(_ground_part(lo, hi, size, ground_z, road_pts))
    _see_through(parts, bodies, links, roles.powertrain | roles.seat_bodies)
    masses = np.array([float(b.mass) for b in bodies.values()])
    inertias = np.array([np.asarray(b.inertia, float).reshape(3, 3) for b in bodies.values()])
    return Scene(str(getattr(assembly, "name", "")), names, cgs, masses,
                 inertias.reshape(-1, 3, 3), parts, size,
                 np.array([lo[0], hi[0], lo[1], hi[1], lo[2], hi[2]]))


def _see_through(parts: list[Part], bodies: Mapping, links: Mapping,
                 solid: set[str] = frozenset()) -> None:
    """Make see-through every body solid or skin that hides another body's cg or a link end."""
    groups: dict[str, list[Part]] = {}
    for p in parts:
        if p.kind == "body" and p.name[5:] in bodies and p.name[5:] not in solid:
            groups.setdefault(p.name, []).append(p)
        elif p.kind in ("skin", "rib"):
            groups.setdefault("skin:" + p.name.split(":")[1], []).append(p)
    own: dict[str, set[int]] = {}
    for key, members in groups.items():
        own[key] = {t.body for p in members for t in p.terms}
    cgs = np.array([_vec(b.cg) for b in bodies.values()]).reshape(-1, 3)
    ends = [p for link in links.values() for p in (_finite_at(link.a), _finite_at(link.b))
            if p is not None]
    marks = np.vstack([cgs, np.array(ends).reshape(-1, 3)])
    owner = np.concatenate([np.arange(len(cgs)), np.full(len(ends), -1)])
    for key, members in groups.items():
        pts = np.vstack([p.geometry.points for p in members if p.kind != "rib"]
                        or [np.zeros((1, 3))])
        lo, hi = pts.min(axis=0), pts.max(axis=0)
        foreign = ~np.isin(owner, list(own[key]))
        # link ends on the solid's own surface (its mounts) do not count
        inside = np.all((marks > lo) & (marks < hi), axis=1) & foreign & (owner >= 0)
        if inside.any():
            for p in members:
                if p.kind != "rib":
                    p.opacity = 0.3 if p.kind == "skin" else 0.4


def _ground_part(lo: NDArray, hi: NDArray, size: float, ground_z: float,
                 road_pts: NDArray) -> Part:
    """The ground: a lane under each line of road points, or a plain slab without any."""
    margin = 0.12 * size
    if len(road_pts):
        pieces = []
        for y in np.unique(np.round(road_pts[:, 1], 3)):
            pts, faces = box_mesh([(lo[0] + hi[0]) / 2, y, ground_z - 0.004 * size],
                                  [(hi[0] - lo[0]) / 2 + margin, 0.035 * size, 0.002 * size],
                                  np.eye(3))
            pieces.append(Geometry(pts, faces))
        return Part("ground", "ground", Geometry.merge(pieces), PALETTE["lane"])
    pts, faces = box_mesh([(lo[0] + hi[0]) / 2, (lo[1] + hi[1]) / 2, ground_z - 0.004 * size],
                          [(hi[0] - lo[0]) / 2 + margin, (hi[1] - lo[1]) / 2 + margin,
                           0.002 * size], np.eye(3))
    return Part("ground", "ground", Geometry(pts, faces), PALETTE["ground"])


def _link_part(name: str, link, bodies: Mapping, index: Mapping, cgs: NDArray,
               ground_z: float, unit: float) -> Part:
    kind = str(getattr(link, "type", "link"))
    node_a, node_b = _end_node(link.a), _end_node(link.b)
    guess_a = cgs[index[node_a]] if node_a in index else np.zeros(3)
    guess_b = cgs[index[node_b]] if node_b in index else guess_a
    pa = _end_point(link.a, guess_b, ground_z, bodies)
    pb = _end_point(link.b, pa, ground_z, bodies)
    length = float(np.linalg.norm(pb - pa))
    if kind in _JOINT_GLYPHS:
        return _joint_part(name, link, kind, pa, node_a, node_b, index, cgs, unit)
    drawn = {"spring": "spring", "bushing": "bushing", "mount": "bushing", "beam": "beam"}.get(
        kind, "link")
    if drawn in ("spring", "beam", "link") and length < 2 * unit:
        drawn = "bushing"
    outline = None
    if drawn == "spring":
        radius = min(2.5 * unit, 0.18 * length)
        turns = float(np.clip(length / (1.6 * radius), 3.0, 9.0))
        line, s_line = helix(pa, pb, radius, turns)
        points, faces, owner = tube_mesh(line, 0.22 * radius, 8, helper=(pb - pa) / length)
        s = s_line[owner]
        outline = Geometry(np.vstack([pa, pb]), lines=np.array([2, 0, 1], np.int64))
    elif drawn == "bushing":
        points, faces = box_mesh(pa, np.full(3, 1.5 * unit), np.eye(3))
        s = np.full(len(points), 0.5)
    else:
        line = np.linspace(pa, pb, 12)
        radius = (0.9 if drawn == "beam" else 0.35) * unit
        points, faces, owner = tube_mesh(line, radius, 10 if drawn == "beam" else 6)
        s = np.linspace(0.0, 1.0, 12)[owner]
        if drawn == "beam":
            outline = Geometry(line, lines=np.array([12, *range(12)], np.int64))
    terms = []
    for node, point, weight in ((node_a, pa, 1.0 - s), (node_b, pb, s)):
        if node in index:
            i = index[node]
            maps = np.broadcast_to(point_maps((point - cgs[i])[None, :]), (len(s), 3, 6))
            terms.append(Term(i, maps, weight))
    return Part(f"{drawn}:{name}", drawn, Geometry(points, faces),
                PALETTE.get(drawn, PALETTE["link"]), terms, outline=outline, s=s)


#: Joint types drawn as glyphs of their own at end a's point (moving with the mean
#: of the two ends): a ball, a pin along the axis, a longer thin pin, a slider
#: block along the axis, a cross of two pins, a plate across the normal.
_JOINT_GLYPHS = ("spherical", "revolute", "cylindrical", "prismatic", "universal", "planar")


def _joint_part(name: str, link, kind: str, at: NDArray, node_a: str, node_b: str,
                index: Mapping, cgs: NDArray, unit: float) -> Part:
    props = getattr(link, "props", {}) or {}
    axis = np.asarray(props.get("axis", (0.0, 0.0, 1.0)), float)

    def pin(direction: NDArray, half: float, radius: float) -> tuple[NDArray, NDArray]:
        d = direction / np.linalg.norm(direction)
        points, faces, _ = tube_mesh(np.linspace(at - half * d, at + half * d, 2), radius, 12)
        return points, faces

    if kind == "spherical":
        points, faces = ellipsoid_mesh(at, np.full(3, 1.8 * unit), np.eye(3))
    elif kind == "revolute":
        points, faces = pin(axis, 3.0 * unit, 1.1 * unit)
    elif kind == "cylindrical":
        points, faces = pin(axis, 5.0 * unit, 0.7 * unit)
    elif kind == "universal":
        (p1, f1), (p2, f2) = (pin(np.asarray(u, float), 2.5 * unit, 0.8 * unit)
                              for u in props.get("axes", ((1.0, 0, 0), (0, 1.0, 0))))
        points, faces = np.vstack([p1, p2]), np.concatenate([f1, _shift(f2, len(p1))])
    else:                          # prismatic: a slider block; planar: a thin plate
        frame = _frame_along(axis)
        half = (np.array([4.0, 1.2, 1.2]) if kind == "prismatic"
                else np.array([0.3, 3.5, 3.5])) * unit
        points, faces = box_mesh(at, half, frame)
    s = np.full(len(points), 0.5)
    terms = []
    for node, weight in ((node_a, 1.0 - s), (node_b, s)):
        if node in index:
            i = index[node]
            maps = np.broadcast_to(point_maps((at - cgs[i])[None, :]), (len(s), 3, 6))
            terms.append(Term(i, maps, weight))
    return Part(f"joint:{name}", "joint", Geometry(points, faces), PALETTE["joint"], terms,
                s=s)


def _frame_along(axis: NDArray) -> NDArray:
    """Rows: ``axis`` and two unit normals (a right-handed set)."""
    a = axis / np.linalg.norm(axis)
    helper = np.array([0.0, 0.0, 1.0]) if abs(a[2]) < 0.9 else np.array([1.0, 0.0, 0.0])
    b = np.cross(helper, a)
    b /= np.linalg.norm(b)
    return np.array([a, b, np.cross(a, b)])


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
