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
    """A rigid body: mass (kg), cg (m), inertia tensor about the cg (kg m^2), active DOFs."""

    name: str
    mass: float
    cg: np.ndarray
    inertia: np.ndarray
    dofs: tuple[str, ...] = DOF_NAMES
    shape: dict[str, Any] | None = None
    where: Where = field(default_factory=Where)

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
    """A model depth: DOFs kept as masters (patterns), tie groups (first survives)."""

    name: str
    keep: tuple[str, ...]
    tie: tuple[tuple[str, ...], ...] = ()
    where: Where = field(default_factory=Where)
    keep_where: tuple[Where, ...] = ()


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
        """Total mass (kg), combined cg (m) and inertia about it (kg m^2)."""
        return combined_mass_properties(list(self.bodies.values()))

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
    offset of its cg from the combined cg.
    """
    mass = float(sum(b.mass for b in bodies))
    cg = sum(b.mass * b.cg for b in bodies) / mass
    inertia = np.zeros((3, 3))
    for b in bodies:
        d = b.cg - cg
        inertia += b.inertia + b.mass * (d @ d * np.eye(3) - np.outer(d, d))
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
    """Empty string if the tensor is symmetric positive definite and its principal
    moments satisfy the triangle inequalities; otherwise the reason."""
    if not np.allclose(inertia, inertia.T, rtol=1e-12, atol=1e-12 * np.abs(inertia).max()):
        return "the tensor is not symmetric"
    moments = np.linalg.eigvalsh(inertia)
    if moments[0] <= 0:
        return (f"the principal moments {', '.join(f'{m:.4g}' for m in moments)} kg m^2 "
                "are not all positive")
    a, b, c = moments
    if a + b < c * (1 - 1e-9):
        return (f"the principal moments {a:.4g}, {b:.4g}, {c:.4g} kg m^2 break the triangle "
                "inequality (I1 + I2 >= I3)")
    return ""


def parallel_axis(mass: float, offset: np.ndarray) -> np.ndarray:
    """Inertia (kg m^2) of a point mass at ``offset`` (m) about the origin."""
    return -mass * skew(offset) @ skew(offset)
