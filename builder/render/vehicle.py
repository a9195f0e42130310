"""Vehicle parts drawn as what they are: split-body skins, tyres, seat and occupant.

:func:`vehicle_parts` looks at an assembly for the parts a reviewer knows
by sight and returns their drawn :class:`~builder.render.scene.Part` pieces:

- **split body** (a chain of segments that a plugin made of one body, found
  in ``assembly.replaced``): one continuous skin, the body's section (its
  ``shape`` from the file, else its uniform equivalent box or ellipsoid
  across the split axis) swept along the axis over the split span. Each
  section follows the rigid motions of the segment nodes (the segment cgs)
  blended with Catmull-Rom weights of its axial place, ``u(p) = sum_k
  w_k(s) (u_k + theta_k x (p - c_k))``. The weights sum to one, so a rigid
  motion of the whole chain moves the skin rigidly, and they interpolate
  (``w_k = 1`` at node k), so the skin passes through every node's motion
  and is smooth (C1) between stations. Past the first and last node the
  skin moves with the end segment. Ribs at the nodes mark the stations.
- **wheels**: a link from a body point to a road point (a tyre) is drawn as
  a tyre on that point (the wheel centre), radius its height above the road;
  a body whose cg is that centre is drawn as the wheel's rim.
- **seat and occupant** (the seat plugin's bodies ``NAME_frame``,
  ``NAME_surface``, ``NAME_occupant_x`` and the occupant segments): a seat
  base and backrest on the frame, the cushion on the surface, and a simple
  seated figure facing +x whose pelvis and thighs, torso pieces and head
  move with the segments (ordered by height) and, fore and aft, with the
  occupant's fore-aft body; the shins blend from the pelvis to the frame.
- **powertrain**: the engine plugin's body keeps its solid, in its own colour,
  opaque inside the see-through skin.

A body whose file gives a ``shape`` is always drawn with that shape.
Lengths in m.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .shapes import box_mesh, ellipsoid_mesh, solid_size

__all__ = ["Roles", "find_roles", "catmull_rom_weights", "section_profile", "skin_parts",
           "tyre_mesh", "seat_parts", "TYRE_WIDTH"]

#: Tyre width over its radius (a 205/55 R16 tyre: 0.205 / 0.316 m = 0.65; from
#: the ISO tyre size code, the numbers of a common car size).
TYRE_WIDTH = 0.65


@dataclass
class Roles:
    """What each body is, for drawing."""

    chains: dict[str, Any] = field(default_factory=dict)       # split body name -> chain
    segment_of: dict[str, str] = field(default_factory=dict)   # segment -> split body name
    powertrain: set[str] = field(default_factory=set)
    seats: dict[str, dict[str, Any]] = field(default_factory=dict)   # seat prefix -> bodies
    seat_bodies: set[str] = field(default_factory=set)
    tyres: dict[str, tuple[str, NDArray, float]] = field(default_factory=dict)
    wheels: dict[str, tuple[NDArray, float]] = field(default_factory=dict)  # body -> centre, r

    def role(self, body: str) -> str:
        """``skin``, ``wheel``, ``powertrain``, ``seat``, ``occupant`` or ``body``."""
        if body in self.segment_of:
            return "skin"
        if body in self.wheels:
            return "wheel"
        if body in self.powertrain:
            return "powertrain"
        for seat in self.seats.values():
            if body in (seat["frame"], seat["surface"]):
                return "seat"
        if body in self.seat_bodies:
            return "occupant"
        return "body"


def _plugin_uses(assembly: Any) -> list[tuple[str, str]]:
    out = []
    for use in getattr(assembly, "plugins", ()) or ():
        kind = use.get("use") if isinstance(use, Mapping) else getattr(use, "use", None)
        name = use.get("name") if isinstance(use, Mapping) else getattr(use, "name", None)
        if kind:
            out.append((str(kind), str(name or kind)))
    return out


def find_roles(assembly: Any) -> Roles:
    """The drawn roles of an assembly's bodies and road links (see the module notes)."""
    bodies = dict(assembly.bodies)
    roles = Roles()
    for name, chain in (getattr(assembly, "replaced", {}) or {}).items():
        names = tuple(getattr(chain, "names", ()))
        if names and all(n in bodies for n in names) and hasattr(chain, "axis"):
            roles.chains[name] = chain
            roles.segment_of.update({n: name for n in names})
    for kind, name in _plugin_uses(assembly):
        if kind == "engine" and name in bodies:
            roles.powertrain.add(name)
        if kind == "seat":
            frame, surface, fore = f"{name}_frame", f"{name}_surface", f"{name}_occupant_x"
            if frame in bodies and surface in bodies:
                parts = [b for b in bodies if b.startswith(f"{name}_")
                         and b not in (frame, surface, fore)]
                parts.sort(key=lambda b: float(np.asarray(bodies[b].cg)[2]))
                roles.seats[name] = {"frame": frame, "surface": surface,
                                     "fore": fore if fore in bodies else None,
                                     "segments": parts}
                roles.seat_bodies.update([frame, surface, *parts]
                                         + ([fore] if fore in bodies else []))
    road = dict(getattr(assembly, "road", {}) or {})
    for lname, link in (getattr(assembly, "links", {}) or {}).items():
        ends = (link.a, link.b)
        nodes = [str(getattr(e, "node", "")) for e in ends]
        if sum(n.startswith("road.") for n in nodes) != 1:
            continue
        k = 0 if nodes[1].startswith("road.") else 1
        body, rname = nodes[k], nodes[1 - k][5:]
        if body not in bodies or rname not in road:
            continue
        at = getattr(ends[k], "at", None)
        centre = np.asarray(bodies[body].cg if at is None else at, dtype=float).reshape(3)
        if not np.all(np.isfinite(centre)):
            centre = np.asarray(bodies[body].cg, dtype=float).reshape(3)
        ground = np.asarray(road[rname].at, dtype=float).reshape(3)
        radius = float(centre[2] - ground[2])
        if not 0.05 <= radius <= 2.0:
            continue
        roles.tyres[lname] = (body, centre, radius)
        b = bodies[body]
        if (not getattr(b, "shape", None) and body not in roles.segment_of
                and float(np.linalg.norm(np.asarray(b.cg, float) - centre)) < 0.5 * radius):
            roles.wheels[body] = (centre, radius)
    return roles


# ---------------------------------------------------------------- the skin

def catmull_rom_weights(s: NDArray, nodes: NDArray) -> NDArray:
    """Weights (len(s) x len(nodes)) blending node motions at axial places ``s`` (m).

    Uniform Catmull-Rom basis on each node interval (a missing neighbour at
    a chain end counts as the end node itself); before the first node and
    after the last one the weight is 1 on the end node. Every row sums to 1
    and the weights interpolate: ``w = 1`` on node k at ``s = nodes[k]``.
    """
    s = np.asarray(s, dtype=float)
    nodes = np.asarray(nodes, dtype=float)
    n = len(nodes)
    w = np.zeros((len(s), n))
    if n == 1:
        w[:, 0] = 1.0
        return w
    j = np.clip(np.searchsorted(nodes, s, side="right") - 1, 0, n - 2)
    u = np.clip((s - nodes[j]) / (nodes[j + 1] - nodes[j]), 0.0, 1.0)
    basis = np.column_stack([(-u ** 3 + 2 * u ** 2 - u) / 2, (3 * u ** 3 - 5 * u ** 2 + 2) / 2,
                             (-3 * u ** 3 + 4 * u ** 2 + u) / 2, (u ** 3 - u ** 2) / 2])
    rows = np.arange(len(s))
    for offset in range(4):
        k = np.clip(j - 1 + offset, 0, n - 1)
        np.add.at(w, (rows, k), basis[:, offset])
    return w


def section_profile(half_a: float, half_b: float, round_off: float = 0.2,
                    per_corner: int = 5) -> NDArray:
    """A rounded rectangle (n x 2, m) of half-sizes ``half_a``, ``half_b``, anticlockwise.

    Corner radius ``round_off`` times the smaller half-size.
    """
    r = round_off * min(half_a, half_b)
    centres = [(half_a - r, half_b - r), (-half_a + r, half_b - r), (-half_a + r, -half_b + r),
               (half_a - r, -half_b + r)]
    out = []
    for k, (ca, cb) in enumerate(centres):
        t = np.linspace(k * np.pi / 2, (k + 1) * np.pi / 2, per_corner)
        out.append(np.column_stack([ca + r * np.cos(t), cb + r * np.sin(t)]))
    return np.vstack(out)


def _chain_section(chain: Any, bodies: Mapping, solid: str) -> tuple[NDArray, NDArray, NDArray,
                                                                       str]:
    """(centre on the axis at s = 0, section axes e1, e2 (columns), half-sizes, kind)."""
    from ..assembly import combined_mass_properties

    axis = np.asarray(chain.axis, float) / np.linalg.norm(chain.axis)
    segments = [bodies[n] for n in chain.names]
    mass, cg, inertia = combined_mass_properties(segments)
    shape = getattr(chain, "shape", None)
    if shape:
        kind = str(shape.get("kind", "box"))
        size = np.asarray(shape["size"], float).reshape(3)
        half = 0.5 * size if kind == "box" else size
        axes = np.eye(3)
    else:
        kind = solid
        half, axes = solid_size(mass, inertia, solid)   # type: ignore[arg-type]
    # the two box axes most across the split axis
    along = int(np.argmax(np.abs(axes.T @ axis)))
    across = [k for k in range(3) if k != along]
    e = axes[:, across]
    e = e - np.outer(axis, axis @ e)
    e /= np.linalg.norm(e, axis=0, keepdims=True)
    if np.linalg.det(np.column_stack([axis, e])) < 0:
        e = e[:, ::-1]
        across = across[::-1]
    line = cg - float(cg @ axis) * axis
    return line, e, np.array([half[across[0]], half[across[1]], half[along]]), kind


def skin_parts(name: str, chain: Any, bodies: Mapping, index: Mapping[str, int],
               solid: str, color: str, rib_color: str) -> list[Any]:
    """The skin of a split body as parts (one per node interval), and its ribs."""
    from .scene import Geometry, Part, Term, point_maps

    axis = np.asarray(chain.axis, float) / np.linalg.norm(chain.axis)
    line, e, half, kind = _chain_section(chain, bodies, solid)
    cgs = np.array([np.asarray(bodies[n].cg, float) for n in chain.names])
    nodes = cgs @ axis
    order = np.argsort(nodes)
    nodes, names, cgs = nodes[order], [chain.names[k] for k in order], cgs[order]
    stations = np.asarray(chain.stations, float)
    s0, s1 = float(min(stations[0], nodes[0])), float(max(stations[-1], nodes[-1]))
    s_mid = 0.5 * (s0 + s1) if kind == "box" else float(
        sum(bodies[n].mass * c for n, c in zip(names, nodes, strict=True))
        / sum(bodies[n].mass for n in names))
    if kind == "box":
        profile = section_profile(half[0], half[1])
    else:                       # an ellipsoid's sections are ellipses
        t = np.linspace(0.0, 2 * np.pi, 24, endpoint=False)
        profile = np.column_stack([half[0] * np.cos(t), half[1] * np.sin(t)])
    m = len(profile)
    per = int(np.clip(600 // max(len(nodes), 1), 2, 6))
    cuts = np.concatenate([[s0], nodes, [s1]])
    parts: list[Any] = []

    def scale_at(s: NDArray) -> NDArray:
        if kind == "box":
            return np.ones_like(s)
        t = (s - s_mid) / max(half[2], 1e-9)
        return np.sqrt(np.clip(1.0 - t ** 2, 0.0, None)) * 0.92 + 0.08

    def rings(s: NDArray, grow: float = 1.0) -> NDArray:
        k = scale_at(s) * grow
        return (line[None, None, :] + s[:, None, None] * axis[None, None, :]
                + k[:, None, None] * (profile[None, :, 0, None] * e[:, 0][None, None, :]
                                      + profile[None, :, 1, None] * e[:, 1][None, None, :]))

    def terms_for(points: NDArray, s_points: NDArray) -> list[Any]:
        w = catmull_rom_weights(s_points, nodes)
        out = []
        for k in np.nonzero(np.abs(w).max(axis=0) > 0)[0]:
            out.append(Term(index[names[k]], point_maps(points - cgs[k]), w[:, k]))
        return out

    for j in range(len(cuts) - 1):
        a, b = cuts[j], cuts[j + 1]
        if b - a <= 1e-9:
            continue
        s = np.linspace(a, b, per + 1)
        ring = rings(s)                                 # (per+1) x m x 3
        points = ring.reshape(-1, 3)
        s_pts = np.repeat(s, m)
        cells = [[4, i * m + q, i * m + (q + 1) % m, (i + 1) * m + (q + 1) % m,
                  (i + 1) * m + q] for i in range(per) for q in range(m)]
        if j == 0:                                      # end caps
            cells.append([m, *range(m - 1, -1, -1)])
        if j == len(cuts) - 2:
            cells.append([m, *range(per * m, per * m + m)])
        geometry = Geometry(points, np.hstack(cells).astype(np.int64))
        parts.append(Part(f"skin:{name}:{j}", "skin", geometry, color,
                          terms_for(points, s_pts)))
    # ribs: a flat band just outside the skin at every node
    width = 0.012 * (s1 - s0)
    for k, s_node in enumerate(nodes):
        s = np.array([s_node - width, s_node + width])
        ring = rings(s, 1.015).reshape(-1, 3)
        cells = [[4, q, (q + 1) % m, m + (q + 1) % m, m + q] for q in range(m)]
        geometry = Geometry(ring, np.hstack(cells).astype(np.int64))
        parts.append(Part(f"rib:{name}:{k + 1}", "rib", geometry, rib_color,
                          [Term(index[names[k]], point_maps(ring - cgs[k]), np.ones(len(ring)))]))
    return parts


# ---------------------------------------------------------------- tyres

def tyre_mesh(centre: NDArray, radius: float, width: float | None = None,
              steps: int = 28) -> tuple[NDArray, NDArray]:
    """A tyre (axis y) as points and quads: a rounded section revolved about the axle."""
    width = TYRE_WIDTH * radius if width is None else width
    section = section_profile(0.19 * radius, 0.5 * width, 0.45, 4)
    radial = 0.81 * radius + section[:, 0]
    lateral = section[:, 1]
    m = len(section)
    angle = np.linspace(0.0, 2 * np.pi, steps, endpoint=False)
    c, s = np.cos(angle), np.sin(angle)
    points = np.empty((steps, m, 3))
    points[:, :, 0] = c[:, None] * radial[None, :]
    points[:, :, 1] = lateral[None, :]
    points[:, :, 2] = s[:, None] * radial[None, :]
    points = np.asarray(centre, float) + points.reshape(-1, 3)
    cells = [[4, i * m + q, i * m + (q + 1) % m, ((i + 1) % steps) * m + (q + 1) % m,
              ((i + 1) % steps) * m + q] for i in range(steps) for q in range(m)]
    return points, np.hstack(cells).astype(np.int64)


def rim_mesh(centre: NDArray, radius: float, steps: int = 20) -> tuple[NDArray, NDArray]:
    """The wheel's rim: a disc of 0.62 radius, 0.8 tyre width, axis y."""
    half = 0.4 * TYRE_WIDTH * radius
    t = np.linspace(0.0, 2 * np.pi, steps, endpoint=False)
    ring = np.column_stack([0.62 * radius * np.cos(t), np.zeros(steps), 0.62 * radius * np.sin(t)])
    c = np.asarray(centre, float)
    points = np.vstack([c + ring - [0, half, 0], c + ring + [0, half, 0]])
    cells = [[4, j, (j + 1) % steps, steps + (j + 1) % steps, steps + j] for j in range(steps)]
    cells.append([steps, *range(steps)])
    cells.append([steps, *range(2 * steps - 1, steps - 1, -1)])
    return points, np.hstack(cells).astype(np.int64)


# ---------------------------------------------------------------- seat and occupant

def _box(lo: NDArray, hi: NDArray) -> tuple[NDArray, NDArray]:
    lo, hi = np.asarray(lo, float), np.asarray(hi, float)
    return box_mesh(0.5 * (lo + hi), 0.5 * (hi - lo), np.eye(3))


def seat_parts(seat: Mapping[str, Any], bodies: Mapping, index: Mapping[str, int],
               colors: Mapping[str, str]) -> list[Any]:
    """The seat (base, backrest, cushion) and a seated figure facing +x, as parts."""
    from .scene import Geometry, Part, Term, point_maps

    def rigid(body: str, points: NDArray, weight: NDArray | None = None) -> Any:
        cg = np.asarray(bodies[body].cg, float)
        return Term(index[body], point_maps(points - cg),
                    np.ones(len(points)) if weight is None else weight)

    frame, surface, fore = seat["frame"], seat["surface"], seat["fore"]
    segments = list(seat["segments"])
    top = np.asarray(bodies[surface].cg, float)
    floor_z = 2.0 * float(np.asarray(bodies[frame].cg, float)[2]) - float(top[2])
    if not floor_z < top[2] - 0.05:
        floor_z = float(top[2]) - 0.3
    x0, y0, z0 = top
    parts: list[Any] = []
    # seat: base and backrest on the frame, cushion on the surface
    base = [_box([x0 - 0.2, y0 - 0.2, floor_z], [x0 + 0.2, y0 + 0.2, z0 - 0.07]),
            _box([x0 - 0.3, y0 - 0.23, z0 - 0.07], [x0 - 0.22, y0 + 0.23, z0 + 0.6])]
    g = _merge(base)
    parts.append(Part(f"body:{frame}", "body", g, colors["seat"], [rigid(frame, g.points)]))
    g = Geometry(*_box([x0 - 0.24, y0 - 0.24, z0 - 0.07], [x0 + 0.26, y0 + 0.24, z0]))
    parts.append(Part(f"body:{surface}", "body", g, colors["cushion"],
                      [rigid(surface, g.points)]))
    if not segments:
        return parts
    heights = [float(np.asarray(bodies[b].cg, float)[2]) - z0 for b in segments]

    def person(body: str, pieces: list[tuple[NDArray, NDArray]]) -> None:
        geometry = _merge(pieces)
        terms = [rigid(body, geometry.points)]
        if fore is not None:
            terms.append(rigid(fore, geometry.points))
        parts.append(Part(f"body:{body}", "body", geometry, colors["occupant"], terms))

    low, high = segments[0], segments[-1]
    pelvis = [_box([x0 - 0.2, y0 - 0.17, z0], [x0 + 0.02, y0 + 0.17, z0 + 0.16])]
    for side in (-1, 1):
        pelvis.append(_box([x0 - 0.02, y0 + side * 0.16 - 0.07, z0 + 0.01],
                           [x0 + 0.42, y0 + side * 0.16 + 0.07, z0 + 0.14]))
    middle = segments[1:-1] if len(segments) >= 3 else []
    head_h = heights[-1] if len(segments) >= 3 else 0.72
    shoulder = max(head_h - 0.13, 0.45)
    torso_from = 0.14
    if middle:
        person(low, pelvis)
        cuts = [torso_from] + [max(h, torso_from + 0.05) for h in heights[2:-1]] + [shoulder]
        for k, body in enumerate(middle):
            a, b = cuts[k], max(cuts[k + 1], cuts[k] + 0.05)
            person(body, [_box([x0 - 0.19, y0 - 0.18, z0 + a], [x0 + 0.03, y0 + 0.18, z0 + b])])
        head = ellipsoid_mesh(top + [-0.06, 0.0, head_h], np.array([0.1, 0.085, 0.115]),
                              np.eye(3))
        person(high, [head])
    else:
        torso = _box([x0 - 0.19, y0 - 0.18, z0 + torso_from], [x0 + 0.03, y0 + 0.18, z0 + shoulder])
        head = ellipsoid_mesh(top + [-0.06, 0.0, head_h], np.array([0.1, 0.085, 0.115]),
                              np.eye(3))
        if len(segments) == 1:
            person(low, [*pelvis, torso, head])
        else:
            person(low, pelvis)
            person(high, [torso, head])
    # shins: from the knee (with the pelvis) down to the floor (with the frame)
    shins = _merge([_box([x0 + 0.36, y0 + side * 0.16 - 0.055, floor_z + 0.02],
                         [x0 + 0.47, y0 + side * 0.16 + 0.055, z0 + 0.08]) for side in (-1, 1)])
    s = np.clip((shins.points[:, 2] - floor_z) / max(z0 + 0.08 - floor_z, 1e-6), 0.0, 1.0)
    terms = [rigid(low, shins.points, s), rigid(frame, shins.points, 1.0 - s)]
    if fore is not None:
        terms.append(rigid(fore, shins.points, s))
    parts.append(Part(f"figure:{low}:shins", "occupant", shins, colors["occupant"], terms))
    return parts


def _merge(pieces: list[tuple[NDArray, NDArray]]) -> Any:
    from .scene import Geometry

    return Geometry.merge([Geometry(p, f) for p, f in pieces])
