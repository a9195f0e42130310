"""Static corner and axle loads, wheel rates and ride rates of a vehicle model.

A *corner* is a road point and the link that stands on it (the tyre: a link
with one end on ``road.NAME``). From the static solution under 1 g:

- corner load (N): the vertical force the link puts on its road point,
  ``sum_c k_c d_c e_c`` over the link's deflection components, with d the
  static deflection and e the component's change per unit road input (the
  generalised force of the link on the road input); positive presses on the
  road;
- axle: road points at the same x (within :data:`AXLE_TOLERANCE`), front
  first, with their load and share of the load all road points carry.

Rates, each along the road-input direction (vertical):

- tyre rate k_t = sum_c k_c e_c^2: the link's stiffness between its body and
  the road point;
- wheel rate k_w: the stiffness of the links between the wheels (the bodies
  the tyres stand under) and the rest of the model, with every body that is
  not a wheel held fixed and every wheel raised together by the same amount
  at its tyre (parallel wheel travel, so an anti-roll bar does not count).
  The force each corner then needs per metre is its wheel rate: the spring
  rate times the square of the installation ratio for a lever suspension,
  each spring's own rate for a corner carried directly;
- ride rate: tyre and wheel rate in series, 1/k_ride = 1/k_w + 1/k_t.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.linalg
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from ..linear import GRAVITY, LinearModel

__all__ = ["Corner", "Axle", "CornerFigures", "corner_figures", "AXLE_TOLERANCE",
           "WHEEL_RATE_SOURCE"]

#: Road points whose x differ by at most this (m) belong to one axle (dual tyres).
AXLE_TOLERANCE = 0.1

#: A body on a tyre link heavier than this share of the model's mass is the
#: vehicle standing on its tyres (no suspension), not a wheel.
UNSPRUNG_SHARE = 0.5

#: Where the wheel rate comes from, as printed beside the figures.
WHEEL_RATE_SOURCE = ("wheel rate: the links between each wheel (the body on its tyre link) "
                     "and the rest of the model, all wheels raised together at the tyre, "
                     "everything else held; ride rate: wheel and tyre rate in series "
                     "(1/k_ride = 1/k_wheel + 1/k_tyre)")

#: Most wheel DOFs for which a singular wheel system is solved by least squares (dense).
_MAX_WHEEL_DOFS = 3000


@dataclass(frozen=True)
class Corner:
    """One road point: its link, the body it carries, load (N) and rates (N/m)."""

    road: str
    link: str
    body: str
    x: float
    y: float
    axle: str
    load: float
    tyre_rate: float
    wheel_rate: float | None
    ride_rate: float | None

    def to_dict(self) -> dict[str, Any]:
        return {"road": self.road, "link": self.link, "body": self.body, "axle": self.axle,
                "at_m": [self.x, self.y], "static_load_n": self.load,
                "static_load_kg": self.load / GRAVITY, "tyre_rate_n_m": self.tyre_rate,
                "wheel_rate_n_m": self.wheel_rate, "ride_rate_n_m": self.ride_rate}


@dataclass(frozen=True)
class Axle:
    """Road points at one x: name, x (m), corner names, load (N), share of the road load."""

    name: str
    x: float
    corners: tuple[str, ...]
    load: float
    share: float

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "x_m": self.x, "corners": list(self.corners),
                "static_load_n": self.load, "static_load_kg": self.load / GRAVITY,
                "share": self.share}


@dataclass(frozen=True)
class CornerFigures:
    """Corners and axles of a model; ``weight`` (N) is the load of gravity on its DOFs;
    ``grounded``: some link ends on ground (and may carry part of the weight)."""

    corners: tuple[Corner, ...]
    axles: tuple[Axle, ...]
    road_load: float
    weight: float
    grounded: bool = False
    notes: tuple[str, ...] = ()

    @property
    def imbalance(self) -> float:
        """Relative gap between the road load and the weight of an ungrounded model
        (a measure of the static solution's accuracy; 0 for a grounded one)."""
        if self.grounded or not self.weight:
            return 0.0
        return abs(self.road_load - self.weight) / abs(self.weight)

    @property
    def other_supports(self) -> float:
        """Part of the weight (N) not carried by road points (ground links)."""
        return self.weight - self.road_load

    def to_dict(self) -> dict[str, Any]:
        return {"corners": [c.to_dict() for c in self.corners],
                "axles": [a.to_dict() for a in self.axles], "road_load_n": self.road_load,
                "weight_n": self.weight, "other_supports_n": self.other_supports,
                "wheel_rate_source": WHEEL_RATE_SOURCE, "notes": list(self.notes)}


def _road_links(model: LinearModel) -> dict[str, list[tuple[str, str, Any]]]:
    """Road point -> [(link, body, link map)] of every link with one end on it and the
    other on a body, in file order."""
    out: dict[str, list[tuple[str, str, Any]]] = {}
    for link in model.assembly.links.values():
        ends = (link.a, link.b)
        roads = [e for e in ends if e.kind == "road"]
        bodies = [e for e in ends if e.kind == "body"]
        if len(roads) == 1 and len(bodies) == 1 and link.name in model.links:
            out.setdefault(roads[0].node[len("road."):], []).append(
                (link.name, bodies[0].node, model.links[link.name]))
    return out


def _axles(points: list[tuple[str, float]], loads: dict[str, float]
           ) -> tuple[list[Axle], dict[str, str]]:
    """Group road points by x, front (largest x) first."""
    groups: list[list[tuple[str, float]]] = []
    for p in sorted(points, key=lambda p: -p[1]):
        if groups and abs(np.mean([q[1] for q in groups[-1]]) - p[1]) <= AXLE_TOLERANCE:
            groups[-1].append(p)
        else:
            groups.append([p])
    if len(groups) == 1:
        names = ["axle"]
    elif len(groups) == 2:
        names = ["front", "rear"]
    else:
        names = [f"axle {i + 1}" for i in range(len(groups))]
    total = sum(loads.values())
    axles, of = [], {}
    for name, g in zip(names, groups, strict=True):
        load = float(sum(loads[p[0]] for p in g))
        axles.append(Axle(name, float(np.mean([p[1] for p in g])), tuple(p[0] for p in g),
                          load, load / total if total else float("nan")))
        of.update({p[0]: name for p in g})
    return axles, of


def _wheel_rates(model: LinearModel, by_road: dict[str, list[tuple[str, str, Any]]]
                 ) -> tuple[dict[str, float | None], str]:
    """Wheel rate (N/m) of each road point in parallel wheel travel; a note if not solved."""
    wheels = list(dict.fromkeys(body for links in by_road.values() for _, body, _ in links))
    starts = model._body_start
    idx = np.concatenate([np.arange(starts[w], starts[w] + len(model.assembly.bodies[w].dofs))
                          for w in wheels]) if wheels else np.zeros(0, int)
    roads = list(by_road)
    if idx.size == 0:
        return dict.fromkeys(roads), ""
    local = -np.ones(model.n, dtype=int)
    local[idx] = np.arange(idx.size)
    n, m = idx.size, len(roads)
    tyre_r, tyre_c, tyre_v, t_r, t_c, t_v = [], [], [], [], [], []
    for i, road in enumerate(roads):
        kt, row_c, row_v = 0.0, [], []
        for _, _, lm in by_road[road]:
            pos = local[lm.cols]
            keep = pos >= 0
            e = lm.Dr.sum(axis=1)                   # component change per unit road input
            k = lm.stiffness
            block = ((lm.Dq.T * k) @ lm.Dq)[np.ix_(keep, keep)]      # the tyre, left out
            rr, cc = np.meshgrid(pos[keep], pos[keep], indexing="ij")
            tyre_r.append(rr.ravel())
            tyre_c.append(cc.ravel())
            tyre_v.append(-block.ravel())
            # the wheel's displacement along the road input, as the tyre sees it
            row_c.append(pos[keep])
            row_v.append(-((e * k) @ lm.Dq)[keep])
            kt += float(e @ (k * e))
        if kt > 0 and row_c:
            t_r.append(np.full(sum(len(c) for c in row_c), i))
            t_c.append(np.concatenate(row_c))
            t_v.append(np.concatenate(row_v) / kt)
    Ks = sp.csr_array(model.K[idx][:, idx]) + sp.csr_array(
        (np.concatenate(tyre_v), (np.concatenate(tyre_r), np.concatenate(tyre_c))),
        shape=(n, n))
    Ks = 0.5 * (Ks + Ks.T)
    T = sp.csr_array((np.concatenate(t_v), (np.concatenate(t_r), np.concatenate(t_c))),
                     shape=(m, n)) if t_r else sp.csr_array((m, n))
    scale = max(float(np.abs(Ks.diagonal()).max()), 1.0)
    # Saddle point of the parallel travel T q = 1 (rows scaled like Ks, for accuracy):
    # [Ks, s T^T; s T, 0] [q; -f/s] = [0; s 1].
    A = sp.bmat([[Ks, scale * T.T], [scale * T, None]], format="csc")
    rhs = np.concatenate([np.zeros(n), scale * np.ones(m)])
    try:
        with np.errstate(all="raise"), warnings.catch_warnings():
            warnings.simplefilter("error")
            sol = splu(A).solve(rhs)
        if not np.all(np.isfinite(sol)):
            raise RuntimeError("singular")
    except (RuntimeError, FloatingPointError, Warning):
        # a wheel direction no link holds: the least-squares answer gives it no rate
        if n + m > _MAX_WHEEL_DOFS:
            return dict.fromkeys(roads), (f"wheel rates not solved: a wheel moves without "
                                          f"deforming a link and the wheels have {n} DOFs")
        sol = scipy.linalg.lstsq(A.toarray(), rhs, lapack_driver="gelsd")[0]
    forces = -scale * sol[n:]
    return {r: (float(f) if abs(f) > 1e-9 * scale else 0.0) for r, f in zip(roads, forces)}, ""


def corner_figures(model: LinearModel, q_static: np.ndarray | None = None,
                   g: float = GRAVITY) -> CornerFigures | None:
    """Corner and axle loads under ``g`` (m/s^2) and rates of an unreduced model.

    None when no link stands on a road point. ``q_static`` is the static
    solution if already known (m, rad).
    """
    by_road = _road_links(model)
    if not by_road:
        return None
    q = model.static_response(g) if q_static is None else q_static
    loads: dict[str, float] = {}
    tyre: dict[str, float] = {}
    for road, links in by_road.items():
        loads[road], tyre[road] = 0.0, 0.0
        for _, _, lm in links:
            e = lm.Dr.sum(axis=1)
            loads[road] += float(np.sum(lm.stiffness * lm.deflection(q) * e))
            tyre[road] += float(np.sum(lm.stiffness * e * e))
    at = {r: model.assembly.road[r].at for r in by_road}
    axles, axle_of = _axles([(r, float(at[r][0])) for r in by_road], loads)
    # A body carrying most of the mass on its tyres is the vehicle itself, not a
    # wheel: it has no suspension, and its ride rate is the tyre rate.
    total = float(sum(b.mass for b in model.assembly.bodies.values()))
    direct = {r for r, links in by_road.items()
              if model.assembly.bodies[links[0][1]].mass > UNSPRUNG_SHARE * total}
    wheel, note = _wheel_rates(model, {r: v for r, v in by_road.items() if r not in direct})
    notes = [note] if note else []
    if direct:
        notes.append(f"no suspension at {', '.join(sorted(direct))}: the body on the tyre "
                     "carries most of the mass, so the ride rate is the tyre rate")
    out = []
    for road, links in by_road.items():
        kt, kw = tyre[road], wheel.get(road)
        if road in direct:
            ride: float | None = kt
        else:
            ride = None if kw is None else (1 / (1 / kw + 1 / kt) if kw > 0 and kt > 0
                                            else 0.0)
        out.append(Corner(road, "+".join(n for n, _, _ in links), links[0][1],
                          float(at[road][0]), float(at[road][1]), axle_of[road], loads[road],
                          kt, kw, ride))
    # gravity's load on the vertical DOFs: the bodies that have one (at the cg, z
    # moves only with z)
    weight = g * float(sum(b.mass for b in model.assembly.bodies.values() if "z" in b.dofs))
    grounded = any(e.kind == "ground" for lk in model.assembly.links.values()
                   for e in (lk.a, lk.b))
    return CornerFigures(tuple(out), tuple(axles), float(sum(loads.values())), weight,
                         grounded, tuple(notes))
