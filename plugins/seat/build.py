"""The seat and its occupant as bodies, links and sensors added to an Assembly.

Layout (all names start with the plugin block's ``name`` and ``_``):

- ``NAME_frame``: the seat frame (``frame_mass``) on the vehicle body through
  one bushing per rail point (``rail_stiffness_x`` and ``rail_stiffness_z``
  are totals, shared equally between the rails; the same for damping). Its
  DOFs are x and z, plus the rotations the rail layout restrains (ry when the
  rails differ in x, rx and rz when they differ in y), so that it follows the
  body's pitch, roll and yaw instead of holding them against the ground (a
  DOF a body lacks is held at zero). Lateral (y) motion is not modelled.
- ``NAME_surface``: the cushion surface, DOF z: the cushion's moving mass
  (``cushion_mass``) plus the part of the occupant that moves with the seat
  without vibrating (the occupant model's seat mass). Joined to the frame by
  the vertical cushion spring and damper (``NAME_cushion``).
- one body per segment of the occupant model (``NAME_pelvis`` etc.), DOF z,
  joined by the model's couplings as vertical springs and dampers
  (``NAME_occ_LOWER_UPPER``); the lowest couplings end on ``NAME_surface``.
- ``NAME_occupant_x``: the occupant's fore-aft inertia, DOF x, with the
  seated mass of the occupant model; joined to the frame by the fore-aft
  cushion and backrest stiffness and damping (``NAME_cushion_x``). The
  published occupant models are vertical only, so in fore-aft the person is
  one rigid mass on the cushion. The vertical and fore-aft occupant bodies
  share no DOF, so no mass is counted twice in any direction; the fore-aft
  body is marked as a directional part of the vertical ones
  (``Body.directional_part_of``), so that the model's total mass, cg and
  inertia count the person once.

Signs: every spring here reads positive in compression (cushion, backrest
and occupant couplings, like the suspension and tyre springs of a vehicle
file), and the rail bushings have the seat frame, the part they carry, at
end a, as an engine mount has the engine, so that their vertical deflection
under the seat's weight is positive too.

Sensors: ``NAME_seat_z`` and ``NAME_seat_x`` (seat surface accelerations,
the latter that of the occupant's fore-aft mass, which sits on it),
``NAME_floor_z`` and ``NAME_floor_x`` (vehicle body accelerations at the mean
rail point), ``NAME_head_z`` where the model has a head, and
``NAME_travel`` (cushion deflection: the seat's suspension travel).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from builder.assembly import Assembly, Body, End, Link, Sensor
from builder.elements.bushing import bushing_props
from builder.elements.spring import spring_props
from builder.errors import InputError, Where

from .occupants import OCCUPANT_MODELS, SEAT, OccupantModel, scaled

__all__ = ["SeatSpec", "add_seat", "seat_names", "SeatNames", "frame_dofs"]

_Z = np.array([0.0, 0.0, 1.0])
_X = np.array([1.0, 0.0, 0.0])


@dataclass(frozen=True)
class SeatSpec:
    """The seat and occupant, SI units (m, kg, N/m, N s/m)."""

    name: str
    body: str
    rails: tuple[tuple[float, float, float], ...]
    surface_height: float = 0.28
    frame_mass: float = 15.0
    rail_stiffness_x: float = 6.0e5
    rail_stiffness_z: float = 1.5e6
    rail_damping_x: float = 400.0
    rail_damping_z: float = 600.0
    cushion_mass: float = 3.0
    cushion_stiffness: float = 6.0e4
    cushion_damping: float = 500.0
    cushion_stiffness_x: float = 4.0e4
    cushion_damping_x: float = 800.0
    occupant: str = "boileau_rakheja_1998"
    occupant_mass: float = 75.0
    where: Where = field(default_factory=Where, compare=False)
    #: the place of each field given in the file (errors found when the seat is built)
    places: dict[str, Where] = field(default_factory=dict, compare=False)

    def occupant_model(self) -> OccupantModel:
        """The occupant model scaled to ``occupant_mass``."""
        return scaled(OCCUPANT_MODELS[self.occupant], self.occupant_mass)

    @property
    def rail_centre(self) -> np.ndarray:
        """Mean rail point (m): the floor point of the seat."""
        return np.mean(np.asarray(self.rails, dtype=float), axis=0)

    @property
    def surface_point(self) -> np.ndarray:
        """The cushion surface point (m), ``surface_height`` above the rail centre."""
        return self.rail_centre + self.surface_height * _Z


@dataclass(frozen=True)
class SeatNames:
    """Names of what :func:`add_seat` adds for one seat (``seat``: the block's name)."""

    seat: str
    frame: str
    surface: str
    occupant_x: str
    segments: dict[str, str]
    cushion: str
    cushion_x: str
    seat_z: str
    seat_x: str
    floor_z: str
    floor_x: str
    head_z: str | None
    travel: str


def seat_names(spec: SeatSpec) -> SeatNames:
    """Body, link and sensor names of a seat (see the module notes)."""
    p = spec.name
    model = OCCUPANT_MODELS[spec.occupant]
    return SeatNames(
        seat=p, frame=f"{p}_frame", surface=f"{p}_surface", occupant_x=f"{p}_occupant_x",
        segments={s.name: f"{p}_{s.name}" for s in model.segments},
        cushion=f"{p}_cushion", cushion_x=f"{p}_cushion_x",
        seat_z=f"{p}_seat_z", seat_x=f"{p}_seat_x", floor_z=f"{p}_floor_z",
        floor_x=f"{p}_floor_x", head_z=f"{p}_head_z" if model.head else None,
        travel=f"{p}_travel",
    )


def _point_body(name: str, mass: float, cg: np.ndarray, dofs: tuple[str, ...],
                radius: float, where: Where, part_of: tuple[str, ...] = ()) -> Body:
    # A compact body: inertia of a sphere of the given radius (only its active
    # translations matter, the tensor just has to be physical).
    inertia = 0.4 * mass * radius**2 * np.eye(3)
    return Body(name, float(mass), np.asarray(cg, dtype=float), inertia, dofs,
                {"kind": "box", "size": [2 * radius] * 3}, where, part_of)


def frame_dofs(rails) -> tuple[str, ...]:
    """DOFs of the seat frame: x, z and the rotations its rails restrain."""
    r = np.asarray(rails, dtype=float).reshape(-1, 3)
    spread_x = np.ptp(r[:, 0]) > 1e-6
    spread_y = np.ptp(r[:, 1]) > 1e-6
    return ("x", "z") + (("rx",) if spread_y else ()) + (("ry",) if spread_x else ()) + (
        ("rz",) if spread_y else ())


def _end(node: str, at: np.ndarray) -> End:
    return End(node, np.asarray(at, dtype=float).copy())


def _accel(name: str, body: str, at: np.ndarray, axis: str, where: Where,
           person: str = "", place: str = "") -> Sensor:
    direction = np.zeros(6)
    direction["xyz".index(axis)] = 1.0
    return Sensor(name, "body", body, "acceleration", at=np.asarray(at, dtype=float).copy(),
                  direction=direction, axis_name=axis, where=where, person=person, place=place)


def add_seat(assembly: Assembly, spec: SeatSpec, where: Where | None = None) -> Assembly:
    """A new Assembly with the seat and occupant of ``spec`` added (see module notes)."""
    where = where or spec.where
    floor = spec.rail_centre
    # the body carrying each point: the seat's body, or the segment of it that a
    # plugin listed before this one (split_body) put there
    floor_body = assembly.body_at(spec.body, floor)
    if floor_body is None:
        known = ", ".join(assembly.bodies) or "none"
        raise InputError(f'seat body "{spec.body}" is not a body (bodies: {known})',
                         spec.places.get("body", where.child("body")))
    if spec.occupant not in OCCUPANT_MODELS:
        raise InputError(f'unknown occupant model "{spec.occupant}" '
                         f'(models: {", ".join(OCCUPANT_MODELS)})',
                         spec.places.get("occupant", where.child("occupant")))
    if not spec.rails:
        raise InputError("give at least one rail point", where.child("rails"))
    names = seat_names(spec)
    model = spec.occupant_model()
    taken = set(assembly.bodies) | set(assembly.links) | set(assembly.sensors)
    new_names = [names.frame, names.surface, names.occupant_x, *names.segments.values(),
                 names.cushion, names.cushion_x, names.seat_z, names.seat_x, names.floor_z,
                 names.floor_x, names.travel] + ([names.head_z] if names.head_z else [])
    clash = sorted(taken.intersection(new_names))
    if clash:
        raise InputError(f'seat "{spec.name}" would reuse the name(s) {", ".join(clash)}: '
                         "give the plugin block another name", where.child("name"))
    surface_mass = spec.cushion_mass + model.seat_mass
    if surface_mass <= 0:
        raise InputError("the cushion surface has no mass: give cushion_mass > 0 for this "
                         "occupant model", where.child("cushion_mass"))

    top = spec.surface_point
    frame_cg = floor + 0.5 * spec.surface_height * _Z
    bodies = dict(assembly.bodies)
    links = dict(assembly.links)
    sensors = dict(assembly.sensors)

    bodies[names.frame] = _point_body(names.frame, spec.frame_mass, frame_cg,
                                      frame_dofs(spec.rails), 0.25, where)
    bodies[names.surface] = _point_body(names.surface, surface_mass, top, ("z",), 0.05, where)
    seg_cg = {s.name: top + s.height * _Z for s in model.segments}
    for s in model.segments:
        bodies[names.segments[s.name]] = _point_body(names.segments[s.name], s.mass,
                                                     seg_cg[s.name], ("z",), 0.1, where)
    occupant_cg = top + sum(s.mass * s.height for s in model.segments) / model.seated_mass * _Z
    # The same person as the vertical chain (segments and the seat-moving part
    # on the surface), in fore-aft: counted once, there.
    bodies[names.occupant_x] = _point_body(names.occupant_x, model.seated_mass, occupant_cg,
                                           ("x",), 0.1, where,
                                           (names.surface, *names.segments.values()))

    rails = np.asarray(spec.rails, dtype=float)
    share = 1.0 / len(rails)
    for i, r in enumerate(rails, start=1):
        k = np.array([spec.rail_stiffness_x, 0, spec.rail_stiffness_z, 0, 0, 0]) * share
        c = np.array([spec.rail_damping_x, 0, spec.rail_damping_z, 0, 0, 0]) * share
        links[f"{spec.name}_rail_{i}"] = Link(
            f"{spec.name}_rail_{i}", "bushing", _end(names.frame, r),
            _end(assembly.body_at(spec.body, r), r),
            bushing_props(np.eye(3), k, c), where)
    links[names.cushion] = Link(
        names.cushion, "spring", _end(names.frame, top), _end(names.surface, top),
        spring_props(_Z, spec.cushion_stiffness, spec.cushion_damping), where)
    links[names.cushion_x] = Link(
        names.cushion_x, "spring", _end(names.frame, occupant_cg),
        _end(names.occupant_x, occupant_cg),
        spring_props(_X, spec.cushion_stiffness_x, spec.cushion_damping_x), where)
    for c in model.couplings:
        lower = names.surface if c.lower == SEAT else names.segments[c.lower]
        upper = names.segments[c.upper]
        at = seg_cg[c.upper]
        link_name = f"{spec.name}_occ_{c.lower}_{c.upper}"
        links[link_name] = Link(link_name, "spring", _end(lower, at), _end(upper, at),
                                spring_props(_Z, c.stiffness, c.damping), where)

    # the seat surface is where ISO 2631-1 rates the seated occupant (person "seat")
    place = f"{spec.name} seat"
    sensors[names.seat_z] = _accel(names.seat_z, names.surface, top, "z", where, "seat", place)
    sensors[names.seat_x] = _accel(names.seat_x, names.occupant_x, occupant_cg, "x", where,
                                   "seat", place)
    sensors[names.floor_z] = _accel(names.floor_z, floor_body, floor, "z", where)
    sensors[names.floor_x] = _accel(names.floor_x, floor_body, floor, "x", where)
    if names.head_z:
        head = names.segments[model.head]
        sensors[names.head_z] = _accel(names.head_z, head, seg_cg[model.head], "z", where)
    sensors[names.travel] = Sensor(names.travel, "link", names.cushion, "deflection",
                                   component=0, axis_name="axial", where=where)
    return assembly.replace(bodies=bodies, links=links, sensors=sensors)
