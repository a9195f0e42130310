"""Suspension figures of each corner from the linearised kinematics.

A *corner* is a road point, its tyre link (a link with one end on
``road.NAME``) and the *wheel carrier*: the body on the tyre link (a
knuckle with its wheel, a trailing arm, or a lumped wheel). The *sprung
body* is the vehicle body (a split body's segments together, never a powertrain
or a seat; the heaviest body of a plain model); a corner's *linkage* is the wheel
carrier and every body joined to it through joints without passing the
sprung body (arms, tie rod). The *wheel centre* is taken above the road
point at the height of the wheel carrier's cg.

All figures come from one motion per model, the **parallel wheel travel**:
the sprung body held still, the tyres left out, every wheel centre raised by
1 m together, and the rest of the model (the linkage's free coordinates,
steer, bar) in static equilibrium: the motion that minimises the strain
energy with those wheel-centre heights, solved as a saddle-point system in
the model's independent coordinates (so joints hold exactly). Per corner:

- **motion ratio** (installation ratio) of each spring and damper: its
  deflection per unit wheel-centre travel (compression positive, so a spring
  compressed in bump has a positive ratio), m/m;
- **wheel rate** k_w: the vertical force at the wheel centre per metre of
  travel (the saddle point's multiplier), equal to sum(k MR^2) over the
  corner's links (virtual work; a bushing's torsion counts with its own
  ratio, rad/m). The wheel's share of each damper, sum(c MR^2), N s/m;
- **ride rate**: wheel and tyre rate in series, 1/k_ride = 1/k_w + 1/k_t,
  with k_t the tyre link's vertical rate;
- **effective unsprung mass**: the linkage's kinetic energy per unit
  wheel-centre vertical speed, m_eff = v^T M v with v the linkage bodies'
  motion (Rayleigh's energy equivalence); bodies outside the corners that
  move in the travel (an anti-roll bar) are named in a note;
- **front-view instant centre** (y, z): the point of the front-view plane
  (through the wheel centre) about which the wheel carrier turns relative
  to the sprung body, from its velocity (v_y, v_z) and roll rate w_x:
  y = y_wc - v_z / w_x, z = z_wc + v_y / w_x; at infinity when w_x = 0.
  For a linkage whose pivot axes are parallel to x this is the intersection
  of the link lines (Aronhold-Kennedy theorem). **Side-view** likewise
  (x, z) = (x_wc + v_z / w_y, z_wc - v_x / w_y);
- **roll centre height** of an axle: the line from each tyre contact point
  through its front-view instant centre (or, with the centre at infinity,
  perpendicular to the carrier's front-view velocity), intersected with the
  other corner's line (with the centreline for a single corner);
- **pitch centre**: the same construction in side view between the front
  and the rear axle (their left corners);
- camber gain and toe change (deg/m; camber positive with the top of the
  wheel outward, toe-in positive), track change at the contact point
  (outward positive) and wheel-centre recession (x, forward positive), m/m.

The construction of instant, roll and pitch centres: T. D. Gillespie,
*Fundamentals of Vehicle Dynamics* (SAE, 1992), chapter 7 (from memory);
motion ratio and wheel rate by virtual work: W. F. Milliken and D. L.
Milliken, *Race Car Vehicle Dynamics* (SAE, 1995), chapter 16 (from
memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.linalg

from ..elements.joint import is_joint
from ..errors import InputError, Where
from ..formatting import number, text_table
from ..linear import LinearModel
from .corners import _axles, _road_links

__all__ = ["CornerKinematics", "LinkRatio", "AxleCentres", "SuspensionFigures",
           "suspension_figures"]


@dataclass(frozen=True)
class LinkRatio:
    """A link of a corner in the wheel travel: its largest component's ratio (m/m, or
    rad/m for a rotation) and its shares of the wheel rate (N/m) and damping (N s/m)."""

    link: str
    type: str
    component: str
    ratio: float
    unit: str
    rate: float
    damping: float

    def to_dict(self) -> dict[str, Any]:
        return {"link": self.link, "type": self.type, "component": self.component,
                "ratio": self.ratio, "ratio_unit": self.unit,
                "wheel_rate_share_n_m": self.rate, "wheel_damping_share_n_s_m": self.damping}


@dataclass(frozen=True)
class CornerKinematics:
    """Figures of one corner (SI: m, N/m, kg, rad). Instant centres None at infinity."""

    road: str
    carrier: str
    bodies: tuple[str, ...]
    wheel_centre: tuple[float, float, float]
    contact: tuple[float, float, float]
    wheel_rate: float
    tyre_rate: float
    ride_rate: float | None
    wheel_damping: float
    effective_mass: float
    links: tuple[LinkRatio, ...]
    front_ic: tuple[float, float] | None
    side_ic: tuple[float, float] | None
    front_slope: float | None
    side_slope: float | None
    camber_gain: float
    toe_change: float
    track_change: float
    recession: float

    def to_dict(self) -> dict[str, Any]:
        return {"road": self.road, "carrier": self.carrier, "bodies": list(self.bodies),
                "wheel_centre_m": list(self.wheel_centre), "contact_m": list(self.contact),
                "wheel_rate_n_m": self.wheel_rate, "tyre_rate_n_m": self.tyre_rate,
                "ride_rate_n_m": self.ride_rate, "wheel_damping_n_s_m": self.wheel_damping,
                "effective_unsprung_mass_kg": self.effective_mass,
                "links": [lk.to_dict() for lk in self.links],
                "front_view_instant_centre_m": None if self.front_ic is None
                else {"y": self.front_ic[0], "z": self.front_ic[1]},
                "side_view_instant_centre_m": None if self.side_ic is None
                else {"x": self.side_ic[0], "z": self.side_ic[1]},
                "camber_gain_deg_m": math.degrees(self.camber_gain),
                "toe_change_deg_m": math.degrees(self.toe_change),
                "track_change_m_m": self.track_change, "recession_m_m": self.recession}


@dataclass(frozen=True)
class AxleCentres:
    """An axle's corners and roll centre (y, z in m; None when the lines are parallel)."""

    name: str
    corners: tuple[str, ...]
    roll_centre: tuple[float, float] | None

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "corners": list(self.corners),
                "roll_centre_m": None if self.roll_centre is None
                else {"y": self.roll_centre[0], "z": self.roll_centre[1]}}


@dataclass(frozen=True)
class SuspensionFigures:
    """Every corner's kinematic figures, the axles' roll centres and the pitch centre."""

    name: str
    sprung: str
    corners: tuple[CornerKinematics, ...]
    axles: tuple[AxleCentres, ...]
    pitch_centre: tuple[float, float] | None
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {"model": self.name, "sprung_body": self.sprung,
                "travel": "parallel wheel travel, sprung body held, tyres left out",
                "corners": [c.to_dict() for c in self.corners],
                "axles": [a.to_dict() for a in self.axles],
                "pitch_centre_m": None if self.pitch_centre is None
                else {"x": self.pitch_centre[0], "z": self.pitch_centre[1]},
                "notes": list(self.notes)}

    def table(self) -> str:
        """The figures as text (rates in kN/m, angles in deg/m)."""
        lines = [f"{self.name}: corner figures in parallel wheel travel "
                 f'(sprung body "{self.sprung}" held, tyres left out)', ""]
        rows = []
        for c in self.corners:
            rows.append([c.road, c.carrier, c.wheel_rate / 1e3, c.tyre_rate / 1e3,
                         None if c.ride_rate is None else c.ride_rate / 1e3,
                         c.wheel_damping, c.effective_mass])
        lines.append(text_table(["corner", "carrier", "wheel kN/m", "tyre kN/m",
                                 "ride kN/m", "damping N s/m", "unsprung kg"], rows))
        lines += ["", "geometry (per m of wheel travel):"]
        rows = []
        for c in self.corners:
            rows.append([c.road, _point(c.front_ic), _point(c.side_ic),
                         math.degrees(c.camber_gain), math.degrees(c.toe_change),
                         c.track_change, c.recession])
        lines.append(text_table(["corner", "front-view IC y, z (m)", "side-view IC x, z (m)",
                                 "camber deg/m", "toe-in deg/m", "track m/m", "recession m/m"],
                                rows, spec=".3g"))
        lines += ["", "links in the travel (ratio: deflection per wheel travel):"]
        rows = [[c.road, lk.link, lk.type, lk.component, lk.ratio, lk.unit, lk.rate / 1e3,
                 lk.damping] for c in self.corners for lk in c.links]
        lines.append(text_table(["corner", "link", "type", "component", "ratio", "unit",
                                 "rate kN/m", "damping N s/m"], rows, spec=".4g"))
        lines.append("")
        for a in self.axles:
            rc = "lines parallel (none)" if a.roll_centre is None else (
                f"{number(a.roll_centre[1], '.3f')} m high at "
                f"y = {number(a.roll_centre[0], '.3f')} m")
            axle = a.name if a.name.endswith("axle") else f"{a.name} axle"
            lines.append(f"roll centre, {axle} ({', '.join(a.corners)}): {rc}")
        if self.pitch_centre is not None:
            lines.append(f"pitch centre: x = {number(self.pitch_centre[0], '.3f')} m, "
                         f"z = {number(self.pitch_centre[1], '.3f')} m")
        elif len(self.axles) >= 2:
            lines.append("pitch centre: the side-view lines are parallel (none)")
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)


def _point(p: tuple[float, float] | None) -> str:
    return "at infinity" if p is None else f"{number(p[0], '.3f')}, {number(p[1], '.3f')}"


def suspension_figures(model: LinearModel) -> SuspensionFigures:
    """The corner figures of an unreduced (possibly jointed) model; see the module notes."""
    if model.parent is not None and model.joints is None:
        raise InputError("corner figures need the full model (not a depth)",
                         Where(field="--depth"))
    asm = model.assembly
    root = model.parent if model.parent is not None else model
    E = np.asarray(model.expansion.toarray()) if model.parent is not None else np.eye(model.n)
    by_road = _road_links(root)
    if not by_road:
        raise InputError("no corner: no link stands on a road point (road.NAME)",
                         Where(asm.source, 0, "links"))
    sprung, held = _sprung_body(asm)
    corners = {r: links[0][1] for r, links in by_road.items() if links[0][1] not in held}
    notes: list[str] = []
    skipped = sorted(set(by_road) - set(corners))
    if skipped:
        notes.append(f"no suspension at {', '.join(skipped)}: the tyre stands under the "
                     f"sprung body {sprung}")
    carriers: dict[str, list[str]] = {}
    for road, carrier in corners.items():
        carriers.setdefault(carrier, []).append(road)
    for carrier, roads in carriers.items():
        if len(roads) > 1:           # a solid axle: one carrier under several road points
            notes.append(f"{', '.join(roads)} stand under one wheel carrier ({carrier}, a "
                         "solid axle): per-wheel figures of a solid axle are not computed "
                         "yet (its modes and responses are)")
            for road in roads:
                del corners[road]
    if not corners:
        raise InputError(f"no corner with a suspension of its own: every tyre stands under "
                         f"{sprung} or a solid axle", Where(asm.source, 0, "links"))
    members = _linkages(asm, corners, held)

    def point_map(body: str, at: np.ndarray) -> np.ndarray:
        return root.body_map(body, at).toarray() @ E              # 6 x n

    K = model.K.toarray()
    for links in by_road.values():
        for _name, _body, lm in links:
            D = lm.q_rows().toarray() @ E
            K = K - D.T @ (lm.stiffness[:, None] * D)
    rows, rhs = [], []
    for body in held:
        for r in point_map(body, None):
            if np.abs(r).max() > 0:
                rows.append(r)
                rhs.append(0.0)
    centres, contacts = {}, {}
    for road, carrier in corners.items():
        at = np.asarray(asm.road[road].at, float)
        centres[road] = np.array([at[0], at[1], asm.bodies[carrier].cg[2]])
        contacts[road] = at
        rows.append(point_map(carrier, centres[road])[2])
        rhs.append(1.0)
    C = np.array(rows)
    scale = max(float(np.abs(np.diag(K)).max(initial=0.0)), 1.0)
    n, m = K.shape[0], C.shape[0]
    A = np.block([[K, scale * C.T], [scale * C, np.zeros((m, m))]])
    b = np.concatenate([np.zeros(n), scale * np.array(rhs)])
    sol, *_ = scipy.linalg.lstsq(A, b, lapack_driver="gelsd")
    if np.abs(A @ sol - b).max() > 1e-6 * scale:
        raise InputError("the wheel centres cannot be raised with the sprung body held "
                         "(a wheel carrier has no vertical travel)", Where(asm.source, 0,
                                                                           "links"))
    q = sol[:n]
    forces = -scale * sol[n:]
    if np.linalg.matrix_rank(A) < n + m:
        notes.append("part of the travel meets no stiffness (a free linkage coordinate "
                     "without the tyres): its figures take the smallest such motion")
    y = E @ q
    tyres = {name for links in by_road.values() for name, _b, _lm in links}
    wheel_force = dict(zip(corners, forces[m - len(corners):]))
    out = []
    for road, carrier in corners.items():
        out.append(_corner(root, asm, road, carrier, members[road], y, centres[road],
                           contacts[road], float(wheel_force[road]), by_road[road], tyres))
    moving = _outside_motion(root, asm, members, held, y)
    if moving:
        notes.append("bodies outside the corners move in the travel (their mass is in "
                     "no corner's unsprung mass): " + ", ".join(moving))
    axles, pitch = _centres(out, asm)
    return SuspensionFigures(asm.name, sprung, tuple(out), axles, pitch, tuple(notes))


def _sprung_body(asm: Any) -> tuple[str, frozenset[str]]:
    """The sprung body's name and the bodies held as it: the vehicle body of
    :func:`~builder.analysis.labels.vehicle_body` (a split body's segments together,
    never a powertrain or a seat), else the heaviest body."""
    from .labels import vehicle_body

    unit = vehicle_body(asm)
    if unit is not None and unit.bodies:
        return unit.name, frozenset(unit.bodies)
    heaviest = max(asm.bodies.values(), key=lambda b: b.mass).name
    return heaviest, frozenset((heaviest,))


def _linkages(asm: Any, corners: dict[str, str], held: frozenset[str]
              ) -> dict[str, tuple[str, ...]]:
    """Each corner's linkage: the carrier and the bodies joined to it by joints, not
    through the sprung body."""
    adj: dict[str, set[str]] = {}
    for lk in asm.links.values():
        if is_joint(lk) and lk.a.kind == "body" and lk.b.kind == "body":
            adj.setdefault(lk.a.node, set()).add(lk.b.node)
            adj.setdefault(lk.b.node, set()).add(lk.a.node)
    out = {}
    for road, carrier in corners.items():
        seen, todo = {carrier}, [carrier]
        while todo:
            for nb in adj.get(todo.pop(), ()):
                if nb not in held and nb not in seen:
                    seen.add(nb)
                    todo.append(nb)
        out[road] = tuple(b for b in asm.bodies if b in seen)
    return out


def _kinetic(root: LinearModel, asm: Any, body: str, y: np.ndarray) -> float:
    cols, T = root.body_point(body)
    v = T @ y[cols]
    return float(v @ asm.bodies[body].mass_matrix @ v)


def _outside_motion(root: LinearModel, asm: Any, members: dict[str, tuple[str, ...]],
                    held: frozenset[str], y: np.ndarray) -> list[str]:
    inside = {b for bodies in members.values() for b in bodies} | set(held)
    out = []
    for b in asm.bodies:
        if b not in inside:
            e = _kinetic(root, asm, b, y)
            if e > 1e-6:
                out.append(f"{b} ({e:.3g} kg referred to the wheel centres)")
    return out


def _corner(root: LinearModel, asm: Any, road: str, carrier: str, bodies: tuple[str, ...],
            y: np.ndarray, wc: np.ndarray, contact: np.ndarray, force: float,
            tyres: list[tuple[str, str, Any]], tyre_names: set[str]) -> CornerKinematics:
    kt = 0.0
    for _name, _body, lm in tyres:
        e = lm.Dr.sum(axis=1)
        kt += float(e @ (lm.stiffness * e))
    ride = 1.0 / (1.0 / force + 1.0 / kt) if force > 0 and kt > 0 else None
    links = []
    members = set(bodies)
    for name, link in asm.links.items():
        if name in tyre_names or name not in root.links:
            continue
        if link.a.node not in members and link.b.node not in members:
            continue
        lm = root.links[name]
        d = lm.deflection(y)
        energy = lm.stiffness * d * d
        damp = lm.damping * d * d
        if not np.any(np.abs(d) > 1e-12):
            continue
        c = int(np.argmax(energy + damp)) if np.any(energy + damp > 0) \
            else int(np.argmax(np.abs(d)))
        links.append(LinkRatio(name, link.type, lm.components[c], float(d[c]),
                               "m/m" if lm.units[c] == "m" else "rad/m",
                               float(energy.sum()), float(damp.sum())))
    mass = sum(_kinetic(root, asm, b, y) for b in bodies)
    motion = root.body_map(carrier, wc).toarray() @ y          # at the wheel centre
    v, w = motion[:3], motion[3:]
    side = 1.0 if wc[1] >= 0 else -1.0
    front_ic = (float(wc[1] - v[2] / w[0]), float(wc[2] + v[1] / w[0])) \
        if abs(w[0]) > 1e-9 else None
    side_ic = (float(wc[0] + v[2] / w[1]), float(wc[2] - v[0] / w[1])) \
        if abs(w[1]) > 1e-9 else None
    at_contact = root.body_map(carrier, contact).toarray() @ y
    return CornerKinematics(
        road, carrier, bodies, tuple(float(x) for x in wc), tuple(float(x) for x in contact),
        force, kt, ride, float(sum(lk.damping for lk in links)), mass, tuple(links),
        front_ic, side_ic, _slope(contact[1], contact[2], front_ic, v[1], v[2]),
        _slope(contact[0], contact[2], side_ic, v[0], v[2]),
        camber_gain=float(-side * w[0]), toe_change=float(-side * w[2]),
        track_change=float(side * at_contact[1]), recession=float(v[0]))


def _slope(h0: float, z0: float, ic: tuple[float, float] | None, vh: float, vz: float
           ) -> float | None:
    """dz/dh of the line from the contact point through the instant centre (or, with
    the centre at infinity, perpendicular to the velocity (vh, vz)); None if vertical."""
    if ic is not None:
        dh = ic[0] - h0
        return None if abs(dh) < 1e-12 else (ic[1] - z0) / dh
    return None if abs(vz) < 1e-12 else -vh / vz


def _meet(p: tuple[float, float], sp_: float | None, q: tuple[float, float],
          sq: float | None) -> tuple[float, float] | None:
    """Where the lines through p and q with slopes sp_, sq meet (None if parallel)."""
    if sp_ is None or sq is None or abs(sp_ - sq) < 1e-12:
        return None
    h = (q[1] - p[1] + sp_ * p[0] - sq * q[0]) / (sp_ - sq)
    return float(h), float(p[1] + sp_ * (h - p[0]))


def _centres(corners: list[CornerKinematics], asm: Any
             ) -> tuple[tuple[AxleCentres, ...], tuple[float, float] | None]:
    axles, _of = _axles([(c.road, c.contact[0]) for c in corners],
                        dict.fromkeys((c.road for c in corners), 0.0))
    by_road = {c.road: c for c in corners}
    out = []
    left_of = []
    for axle in axles:
        cs = [by_road[r] for r in axle.corners]
        rc = None
        if len(cs) >= 2:
            a, b = cs[0], cs[1]
            rc = _meet((a.contact[1], a.contact[2]), a.front_slope,
                       (b.contact[1], b.contact[2]), b.front_slope)
            mid = 0.5 * (a.contact[1] + b.contact[1])
            if rc is None and a.front_slope is not None and b.front_slope is not None:
                za, zb = (c.contact[2] + c.front_slope * (mid - c.contact[1]) for c in (a, b))
                if abs(za - zb) < 1e-9:        # one line (a trailing arm's, at the road)
                    rc = (float(mid), float(za))
        elif cs and cs[0].front_slope is not None:
            c = cs[0]
            rc = (0.0, float(c.contact[2] + c.front_slope * (0.0 - c.contact[1])))
        out.append(AxleCentres(axle.name, axle.corners, rc))
        left_of.append(max(cs, key=lambda c: c.contact[1]))
    pitch = None
    if len(left_of) >= 2:
        f, r = left_of[0], left_of[-1]
        pitch = _meet((f.contact[0], f.contact[2]), f.side_slope,
                      (r.contact[0], r.contact[2]), r.side_slope)
    return tuple(out), pitch
