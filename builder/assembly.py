"""The Assembly: bodies, ground, road points, links between them, sensors.

An :class:`Assembly` is a frozen value. It is read from a file by
:func:`builder.load.load_assembly`, changed by plugins (each returns a new
Assembly through :func:`dataclasses.replace`), and turned into matrices by
:func:`builder.linear.assemble`. Its :meth:`Assembly.graph` is a networkx
multigraph with one node per body, ``ground`` and each ``road.NAME``, and one
edge per link.

All values are SI: kg, m, kg m^2 (about the body's cg, in global ISO 8855
axes: x forward, y left, z up).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import networkx as nx
import numpy as np

from .errors import Where
from .kinematics import DOF_NAMES, skew

__all__ = [
    "Body", "End", "Link", "RoadPoint", "Sensor", "Depth", "Assembly", "GROUND",
    "MOTIONS", "combined_mass_properties", "merge_rigid_links",
]

GROUND = "ground"

#: DOFs a body has for each ``motion`` setting of the file.
MOTIONS: dict[str, tuple[str, ...]] = {
    "spatial": DOF_NAMES,
    "vertical": ("z", "rx", "ry"),
    "planar": ("z", "ry"),
    "bounce": ("z",),
}


@dataclass(frozen=True, eq=False)
class Body:
    """A rigid body: mass (kg), cg (m), inertia tensor about the cg (kg m^2), active DOFs.

    ``directional_part_of`` names the bodies that already hold this body's
    mass: the body is a directional part of one physical mass that the model
    splits over separate bodies (a seated occupant is a vertical chain of
    segments, and one fore-aft body with the same mass). Its DOFs carry that
    mass in their own directions, but the total mass, cg and inertia
    (:meth:`Assembly.mass_properties`) count it once, in the named bodies.
    """

    name: str
    mass: float
    cg: np.ndarray
    inertia: np.ndarray
    dofs: tuple[str, ...] = DOF_NAMES
    shape: dict[str, Any] | None = None
    where: Where = field(default_factory=Where)
    directional_part_of: tuple[str, ...] = ()

    @property
    def mass_matrix(self) -> np.ndarray:
        """6 x 6 mass matrix at the cg in global axes (all six DOFs)."""
        out = np.zeros((6, 6))
        out[:3, :3] = self.mass * np.eye(3)
        out[3:, 3:] = self.inertia
        return out


@dataclass(frozen=True, eq=False)
class End:
    """A link end: ``node`` is a body name, ``"ground"`` or ``"road.NAME"``; ``at`` in m."""

    node: str
    at: np.ndarray

    @property
    def kind(self) -> str:
        if self.node == GROUND:
            return "ground"
        return "road" if self.node.startswith("road.") else "body"


@dataclass(frozen=True, eq=False)
class Link:
    """A compliant (or rigid) connection between two ends; ``props`` are SI and type-specific."""

    name: str
    type: str
    a: End
    b: End
    props: dict[str, Any]
    where: Where = field(default_factory=Where)


@dataclass(frozen=True, eq=False)
class RoadPoint:
    """A road contact point (m): the link end there gets the road's vertical displacement."""

    name: str
    at: np.ndarray
    where: Where = field(default_factory=Where)


@dataclass(frozen=True, eq=False)
class Sensor:
    """An output: motion of a body point, or deflection/force of a link.

    ``kind`` is ``"body"`` (``target`` a body, ``at`` a point, ``direction`` a
    6-vector over the point's [x, y, z, rx, ry, rz] motion) or ``"link"``
    (``target`` a link, ``component`` the index of the link's deflection
    component). ``measure`` is displacement, velocity, acceleration,
    deflection or force. ``person`` names the ISO 2631-1 interface of a
    person the sensor is at (``seat``, ``back``, ``feet``, ``floor``; ""
    for none), ``place`` a name that groups the sensors of one person's
    interface (e.g. a seat's name).
    """

    name: str
    kind: str
    target: str
    measure: str
    at: np.ndarray | None = None
    direction: np.ndarray | None = None
    component: int = 0
    axis_name: str = ""
    where: Where = field(default_factory=Where)
    person: str = ""
    place: str = ""


@dataclass(frozen=True, eq=False)
class Depth:
    """A model depth: DOFs kept as masters (patterns), tie groups (first survives),
    and ``modes``: (pattern, count) pairs, fixed-interface modes of the condensed DOFs
    matching the pattern kept as extra coordinates (Craig-Bampton)."""

    name: str
    keep: tuple[str, ...]
    tie: tuple[tuple[str, ...], ...] = ()
    where: Where = field(default_factory=Where)
    keep_where: tuple[Where, ...] = ()
    modes: tuple[tuple[str, int], ...] = ()


@dataclass(frozen=True, eq=False)
class Assembly:
    """A vehicle (or any machine) as a graph of bodies and links. SI units."""

    name: str
    motion: str
    bodies: dict[str, Body]
    road: dict[str, RoadPoint] = field(default_factory=dict)
    links: dict[str, Link] = field(default_factory=dict)
    sensors: dict[str, Sensor] = field(default_factory=dict)
    depths: dict[str, Depth] = field(default_factory=dict)
    parameters: dict[str, Any] = field(default_factory=dict)
    plugins: tuple[Any, ...] = ()
    source: str = ""
    warnings: tuple[str, ...] = ()
    replaced: dict[str, Any] = field(default_factory=dict)
    #: detailed-model superelements (builder.superelement.Superelement) by name
    superelements: dict[str, Any] = field(default_factory=dict)

    def replace(self, **changes: Any) -> Assembly:
        """A new Assembly with some fields changed."""
        return replace(self, **changes)

    def body_at(self, name: str, point: Any) -> str | None:
        """The body that carries ``point`` (m) for a body ``name`` as a file wrote it.

        The body itself when it exists; when a plugin replaced it (``replaced``
        maps its name to an object whose ``body_at(point)`` names the part
        holding the point, e.g. the segment of a split body), that part,
        followed through further replacements. None for an unknown name. So a
        plugin that refers to a body works whichever plugin ran first.
        """
        seen: set[str] = set()
        while name not in self.bodies:
            part = self.replaced.get(name)
            if part is None or name in seen:
                return None
            seen.add(name)
            name = part.body_at(np.asarray(point, dtype=float))
        return name

    @property
    def dof_labels(self) -> tuple[str, ...]:
        """Every active DOF as ``BODY.DOF``, bodies in file order."""
        bodies = tuple(f"{b.name}.{d}" for b in self.bodies.values() for d in b.dofs)
        return bodies + tuple(q for se in self.superelements.values() for q in se.interior)

    def graph(self) -> nx.MultiGraph:
        """Bodies, ground and road points as nodes; links as edges (key = link name)."""
        g = nx.MultiGraph()
        for b in self.bodies.values():
            g.add_node(b.name, kind="body", body=b)
        g.add_node(GROUND, kind="ground")
        for r in self.road.values():
            g.add_node(f"road.{r.name}", kind="road", point=r)
        for link in self.links.values():
            g.add_edge(link.a.node, link.b.node, key=link.name, link=link)
        return g

    def mass_properties(self) -> tuple[float, np.ndarray, np.ndarray]:
        """Total mass (kg), combined cg (m) and inertia about it (kg m^2).

        Each physical mass counts once: a body that is a directional part of
        others (:attr:`Body.directional_part_of`) is left out when any of those
        is in the model. Every consumer of the model's total mass, cg or
        inertia takes it from here.
        """
        parts = self.directional_parts()
        return combined_mass_properties(
            [b for b in self.bodies.values() if b.name not in parts])

    def directional_parts(self) -> dict[str, tuple[str, ...]]:
        """Bodies whose mass is counted in others: name -> the bodies that count it."""
        return {b.name: tuple(r for r in b.directional_part_of if r in self.bodies)
                for b in self.bodies.values()
                if any(r in self.bodies for r in b.directional_part_of)}

    def unconnected_bodies(self) -> list[str]:
        """Bodies with no path through links to ground or a road point."""
        g = self.graph()
        anchors = {GROUND, *(f"road.{r}" for r in self.road)}
        out = []
        for comp in nx.connected_components(g):
            if not comp & anchors:
                out.extend(sorted(n for n in comp if n in self.bodies))
        return out


def combined_mass_properties(bodies: list[Body]) -> tuple[float, np.ndarray, np.ndarray]:
    """Mass (kg), cg (m) and inertia about the combined cg (kg m^2) by the parallel-axis theorem.

    For each body, J_combined += J_body + m (|d|^2 I - d d^T) with d the
    offset of its cg from the combined cg. No bodies give zero mass, cg and inertia.
    """
    m = np.array([b.mass for b in bodies], dtype=float)
    mass = float(m.sum())
    if not bodies or mass <= 0:
        return mass, np.zeros(3), np.zeros((3, 3))
    d = np.array([b.cg for b in bodies], dtype=float).reshape(-1, 3)
    cg = m @ d / mass
    d = d - cg
    inertia = np.sum([b.inertia for b in bodies], axis=0) + (
        np.sum(m * np.sum(d * d, axis=1)) * np.eye(3) - (m[:, None] * d).T @ d)
    return mass, cg, 0.5 * (inertia + inertia.T)


def merge_rigid_links(assembly: Assembly) -> Assembly:
    """Merge bodies joined by ``rigid`` links into one body each.

    A group of bodies joined by rigid links becomes one body named after its
    heaviest member, with the combined mass, cg and inertia (parallel-axis
    theorem) and the union of the members' DOFs. A group rigidly joined to
    ``ground`` is removed: its links then end on ground. Links and sensors
    keep their points; only the body they name changes.
    """
    rigid = [lk for lk in assembly.links.values() if lk.type == "rigid"]
    if not rigid:
        return assembly
    g = nx.Graph()
    g.add_nodes_from(assembly.bodies)
    for lk in rigid:
        g.add_edge(lk.a.node, lk.b.node)
    rename: dict[str, str] = {}
    bodies: dict[str, Body] = {}
    for comp in nx.connected_components(g):
        members = [assembly.bodies[n] for n in comp if n in assembly.bodies]
        if GROUND in comp:
            rename.update({m.name: GROUND for m in members})
            continue
        if len(members) == 1:
            continue
        main = max(members, key=lambda b: b.mass)
        mass, cg, inertia = combined_mass_properties(members)
        dofs = tuple(d for d in DOF_NAMES if any(d in m.dofs for m in members))
        bodies[main.name] = replace(main, mass=mass, cg=cg, inertia=inertia, dofs=dofs)
        rename.update({m.name: main.name for m in members})
    new_bodies = {}
    for name, b in assembly.bodies.items():
        target = rename.get(name, name)
        if target == GROUND or (target != name):
            continue
        new_bodies[name] = bodies.get(name, b)

    def end(e: End) -> End:
        return End(rename.get(e.node, e.node), e.at)

    links = {n: replace(lk, a=end(lk.a), b=end(lk.b)) for n, lk in assembly.links.items()
             if lk.type != "rigid"}
    sensors = {n: replace(s, target=rename.get(s.target, s.target)) if s.kind == "body" else s
               for n, s in assembly.sensors.items()}
    return assembly.replace(bodies=new_bodies, links=links, sensors=sensors)


def inertia_is_physical(inertia: np.ndarray) -> str:
    """Empty string if the tensor (kg m^2) is finite, symmetric, positive definite and its
    principal moments satisfy the triangle inequalities; otherwise the reason.

    The tensor is scaled by its largest entry before the eigenvalues are
    taken, so that no size of entry (1e-300 or 1e300) makes LAPACK fail; a
    diagonal tensor (every gyradius) needs no eigenvalues at all.
    """
    t = np.asarray(inertia, dtype=float)
    if t.shape != (3, 3):
        return "the tensor is not 3 x 3"
    rows = t.tolist()
    flat = rows[0] + rows[1] + rows[2]
    if any(v - v != 0.0 for v in flat):
        return "the tensor has entries that are not finite numbers"
    scale = max(abs(v) for v in flat)
    if scale == 0.0:
        return "the tensor is zero (give the inertia of a body that rotates)"
    (a, b, c), (d, e, f), (g, h, i) = rows
    if max(abs(b - d), abs(c - g), abs(f - h)) > 1e-12 * scale:
        return "the tensor is not symmetric"
    if b == 0.0 and c == 0.0 and f == 0.0:
        unit = np.sort(np.array([a, e, i])) / scale
    else:
        try:
            unit = np.linalg.eigvalsh(0.5 * (t + t.T) / scale)
        except np.linalg.LinAlgError:
            return "its principal moments cannot be computed"
    moments = unit * scale
    if unit[0] <= 0.0:
        return (f"the principal moments {', '.join(f'{m:.4g}' for m in moments)} kg m^2 "
                "are not all positive")
    if unit[0] + unit[1] < unit[2] * (1 - 1e-9):
        m1, m2, m3 = moments
        return (f"the principal moments {m1:.4g}, {m2:.4g}, {m3:.4g} kg m^2 break the "
                "triangle inequality (I1 + I2 >= I3)")
    return ""


def parallel_axis(mass: float, offset: np.ndarray) -> np.ndarray:
    """Inertia (kg m^2) of a point mass at ``offset`` (m) about the origin."""
    return -mass * skew(offset) @ skew(offset)
