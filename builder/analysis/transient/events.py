"""Discrete road events (bump, pothole, ramp step) and their exact responses."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ...errors import InputError, Where
from .. import road
from .result import TimeResponse, result_of
from .solver import (
    DEFAULT_RATE,
    SETTLE_S,
    SNAP,
    equivalent_viscous,
    simulate,
    state_space_rows,
    time_grid,
)

SHAPES = ("bump", "pothole", "step")


@dataclass(frozen=True)
class RoadEvent:
    """A discrete road event: ``shape`` (bump, pothole, step), height and length in m."""

    shape: str
    height_m: float
    length_m: float

    def profile(self, s: ArrayLike) -> NDArray[np.float64]:
        """Road height z (m) at distances ``s`` (m) from the event's start."""
        s = np.asarray(s, dtype=float)
        h, L = self.height_m, self.length_m
        inside = (s >= 0) & (s <= L)
        if self.shape == "step":
            return np.where(s < 0, 0.0, np.where(s > L, h, h * np.clip(s, 0, L) / L))
        sign = -1.0 if self.shape == "pothole" else 1.0
        return np.where(inside, sign * h * np.sin(np.pi * np.clip(s, 0, L) / L), 0.0)

    def describe(self) -> str:
        words = {"bump": "half-sine bump", "pothole": "half-sine pothole",
                 "step": "ramp step"}[self.shape]
        return f"{words} {self.height_m * 1e3:g} mm over {self.length_m:g} m"

    def _pieces(self, v: float) -> tuple[float, list[tuple[float, float, tuple[float, ...]]]]:
        """(W, pieces): in the time t' since a point reached the event, the road is
        ``a0 + a1 t' + a_s sin(W t') + a_c cos(W t')`` on each piece [t_a, t_b)."""
        T = self.length_m / v
        h = self.height_m
        if self.shape == "step":
            return 0.0, [(0.0, T, (0.0, h / T, 0.0, 0.0)), (T, math.inf, (h, 0.0, 0.0, 0.0))]
        sign = -1.0 if self.shape == "pothole" else 1.0
        return math.pi / T, [(0.0, T, (0.0, 0.0, sign * h, 0.0))]


def road_event(shape: str, height_m: float, length_m: float) -> RoadEvent:
    """A checked RoadEvent: ``shape`` one of bump, pothole, step; height (m) non-zero,
    length (m) positive."""
    if shape not in SHAPES:
        raise InputError(f'unknown shape "{shape}": choose bump, pothole or step',
                         Where(field="--shape"))
    h, L = float(height_m), float(length_m)
    if not math.isfinite(h) or h == 0:
        raise InputError(f"height must be a non-zero length, not {height_m!r} m",
                         Where(field="--height"))
    if not math.isfinite(L) or L <= 0:
        raise InputError(f"length must be positive, not {length_m!r} m", Where(field="--length"))
    return RoadEvent(shape, h, L)


def _event_coefficients(pieces: list, omega: float, delays: NDArray, start: NDArray,
                        mid: NDArray) -> NDArray:
    """Coefficients (k, 4, 2 nr) of [r; r'] on intervals starting at ``start`` (s);
    each interval's piece is the one holding its midpoint ``mid``."""
    nr = delays.size
    out = np.zeros((start.size, 4, 2 * nr))
    for j, tau in enumerate(delays):
        t0, tm = start - tau, mid - tau
        for ta, tb, (a0, a1, a_s, a_c) in pieces:
            sel = (tm >= ta) & (tm < tb)
            if not sel.any():
                continue
            phi = t0[sel]
            sn, cs = np.sin(omega * phi), np.cos(omega * phi)
            cos_part = a_s * sn + a_c * cs
            sin_part = a_s * cs - a_c * sn
            out[sel, 0, j] = a0 + a1 * phi
            out[sel, 1, j] = a1
            out[sel, 2, j] = cos_part
            out[sel, 3, j] = sin_part
            out[sel, 0, nr + j] = a1
            out[sel, 2, nr + j] = omega * sin_part
            out[sel, 3, nr + j] = -omega * cos_part
    return out


def _event_splits(pieces: list, omega: float, delays: NDArray, t0: float, dt: float,
                  nint: int) -> dict[int, list[tuple[float, NDArray]]]:
    """Sub-intervals of the sample intervals in which some input changes its form."""
    times = sorted({tau + edge for tau in delays for ta, tb, _ in pieces
                    for edge in (ta, tb) if math.isfinite(edge)})
    cuts: dict[int, list[float]] = {}
    for tb in times:
        pos = (tb - t0) / dt
        i = int(math.floor(pos))
        theta = pos - i
        if i < 0 or i >= nint or theta < SNAP or theta > 1 - SNAP:
            continue
        cuts.setdefault(i, []).append(theta * dt)
    splits = {}
    for i, thetas in cuts.items():
        edges = [0.0, *sorted(set(thetas)), dt]
        start = np.array([t0 + i * dt + a for a in edges[:-1]])
        mid = np.array([t0 + i * dt + 0.5 * (a + b) for a, b in zip(edges[:-1], edges[1:],
                                                                     strict=True)])
        coef = _event_coefficients(pieces, omega, delays, start, mid)
        splits[i] = [(b - a, coef[k]) for k, (a, b) in enumerate(zip(edges[:-1], edges[1:],
                                                                      strict=True))]
    return splits


def delays_of(model: Any, v: float) -> NDArray:
    x = np.asarray(model.input_positions, dtype=float).reshape(-1, 3)[:, 0]
    return (x.max() - x) / v


def default_duration(model: Any, event: RoadEvent, speed_m_s: float) -> float:
    """Time (s) for the last road point to pass the event, plus :data:`SETTLE_S`."""
    v = road.check_speed(speed_m_s)
    delays = delays_of(model, v)
    return float((delays.max() if delays.size else 0.0) + event.length_m / v + SETTLE_S)


def event_response(model: Any, event: RoadEvent, speed_m_s: float,
                   duration_s: float | None = None, rate_hz: float = DEFAULT_RATE, *,
                   assembly: Any = None, sensors: Sequence[str] | None = None) -> TimeResponse:
    """Exact response of every sensor (or of ``sensors``) to ``event`` at ``speed_m_s``.

    Samples at ``rate_hz`` from t = 0 (the front-most road point reaches the
    event) to ``duration_s`` (default :func:`default_duration`). ``assembly``
    gives the sensors' directions for the comfort weightings (default: the
    model's own).
    """
    v = road.check_speed(speed_m_s)
    if not isinstance(event, RoadEvent):
        raise InputError("event must be a RoadEvent (see road_event)", Where(field="--shape"))
    model, note = equivalent_viscous(model)
    A, B, C, D, rows = state_space_rows(model, sensors)
    duration = default_duration(model, event, v) if duration_s is None else duration_s
    dt, count = time_grid(duration, rate_hz)
    t = np.arange(count) * dt
    delays = delays_of(model, v)
    omega, pieces = event._pieces(v)
    # after the last change of form every interval has the same coefficients: the
    # intervals up to the first one wholly past it are enough
    last = max((tau + edge for tau in delays for ta, tb, _ in pieces for edge in (ta, tb)
                if math.isfinite(edge)), default=0.0)
    active = min(count - 1, int(math.floor(last / dt)) + 2)
    starts = t[:active]
    coef = _event_coefficients(pieces, omega, delays, starts, starts + 0.5 * dt)
    at_samples = _event_coefficients(pieces, omega, delays, t, t)
    u = at_samples[:, 0] + at_samples[:, 2]
    splits = _event_splits(pieces, omega, delays, 0.0, dt, active)
    y = simulate(A, B, C, D, dt, coef, u, omega, splits)
    nr = len(model.inputs)
    return result_of(model, assembly, rows, t, u[:, :nr], y, v,
                   {"shape": event.shape, "height_m": event.height_m,
                    "length_m": event.length_m}, event.describe(), [note] if note else [])
