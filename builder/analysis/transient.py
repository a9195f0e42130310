"""Transient response to road events and to random road histories, solved exactly.

A vehicle at speed ``v`` (m/s) meets a discrete road event: every road point
sees the same profile ``z(s)`` (m, over the distance ``s`` from the event's
start) delayed by ``tau_j = (x_front - x_j) / v``, so ``r_j(t) = z(v (t - tau_j))``
and ``r_j'(t) = v z'(v (t - tau_j))``. Time ``t = 0`` is the moment the
front-most road point reaches the event. The events (``height`` h, ``length`` L):

- ``bump``: a half-sine ``z = h sin(pi s / L)`` for ``0 <= s <= L``;
- ``pothole``: the same half-sine downward, ``z = -h sin(pi s / L)``. The
  half-sine dip stands for a pothole as the tyre's contact patch rides it
  (the patch bridges sharp edges, so the wheel path is rounded); a
  rectangular dip would send an infinite road velocity through any damper
  to the road;
- ``step``: a ramp of length L from 0 to h, then h: ``z = h s / L`` on
  ``0 <= s <= L`` (a kerb or a slab joint; L > 0 keeps the road velocity finite).

The model is the state space of :meth:`LinearModel.to_state_space`, state
``x = [q; q']``, input ``u = [r; r']``. Its solution is computed exactly
(to round-off), not by a time-stepping formula: on each sample interval
``[t_i, t_i + dt]`` the input is written as ``u = c0 + c1 tau + c2 cos(W tau) +
c3 sin(W tau)`` (``W = pi v / L``; every event is of this form piecewise),
so that

    x_{i+1} = e^{A dt} x_i + sum_b Gamma_b c_b,
    Gamma_b = integral_0^dt e^{A (dt - tau)} B phi_b(tau) d tau,

with the ``e^{A dt}`` and every ``Gamma_b`` taken from one matrix
exponential of an augmented matrix (the input's own generator appended
to ``A``: Van Loan's construction). An interval in which an input changes
its form (the wheel reaching or leaving the event) is split exactly at that
instant. The samples are therefore those of the exact response to the exact
half-sine, ramp or step, with the road velocity ``r'`` entering analytically.
The recurrence over the samples runs in modal coordinates (one first-order
recursive filter per eigenvalue, ``scipy.signal.lfilter``, one of each
complex-conjugate pair) when the eigenvectors are well conditioned, and as a
plain loop otherwise; once the last road point has passed the event the
input keeps one form, and the rest of the record is the closed-form modal
decay ``xi_p + mu^k (xi_0 - xi_p)``, with no recursion. The matrices are
dense: for models of more than a few hundred DOFs, analyse a depth.

A random road (ISO 8608 class) is a realisation from
:func:`builder.analysis.road.road_profile`; each road point reads the
profile of its track at its delayed position, linearly interpolated, and the
road displacement is taken as piecewise linear between the time samples
(first-order hold, so ``r'`` is piecewise constant): the solution is exact for
that input, which differs from the smooth profile by the interpolation only:
a harmonic at ``f`` keeps ``sinc^2(f / rate)``, about ``1 - (pi f / rate)^2 / 3``,
of its amplitude (0.8 % less at 50 Hz sampled at 1 kHz, 3.3 % at a tenth of
the rate), plus images above the rate that the vehicle filters. The profile
repeats every ``v * duration`` metres, so after the lead-in (default 3 s,
discarded) the record is one period of the steady response. Left and right
tracks: ``identical``, ``independent`` or ``coherent`` (independent
realisations mixed harmonic by harmonic through the Cholesky factor of the
isotropic-road coherence of :func:`builder.analysis.road.isotropic_coherence`
at the distance between the tracks' mean lateral positions; tracks are the
points with ``y > 0``, ``y < 0`` and ``y = 0``, as in :mod:`.road`).

Every sensor gets its peak ``max |y|``, extremes and RMS over the record;
acceleration sensors also the ISO 2631-1 weighted history (the weighting of
their direction, causal filter of :func:`builder.analysis.comfort.weighted_time_history`
with ``method="iir"``), its RMS, crest factor, MTVV and the vibration dose value
``VDV = (integral a_w^4 dt)^(1/4)``, by :func:`builder.analysis.evaluate.channel_figures`,
the function that evaluates measured records. The bilinear weighting filter is within
about 2 % of the analog one up to 80 Hz at 1 kHz, and 0.5 % at 2 kHz.

Hysteretic (loss-factor) damping has no time-domain form and is left out
(a note says so); use viscous damping for transients.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.linalg
from numpy.typing import ArrayLike, NDArray

from ..errors import InputError, Where
from ..formatting import percent, text_table
from . import comfort, road
from .evaluate import channel_figures
from .ride import sensor_weighting

__all__ = [
    "SHAPES", "DEFAULT_RATE", "SETTLE_S", "MAX_SAMPLES", "RoadEvent", "TimeResponse",
    "road_event", "event_response", "default_duration", "road_history_response",
    "random_road_response", "random_road_inputs", "hold_step", "state_space",
    "time_response",
]

SHAPES = ("bump", "pothole", "step")
#: Default output rate (Hz).
DEFAULT_RATE = 1000.0
#: Settling time added after the last road point has passed the event (s).
SETTLE_S = 3.0
#: Largest number of time samples of one response.
MAX_SAMPLES = 20_000_000
_SNAP = 1e-9          # a change of input form this close to a sample (in dt) sits on it
_MODAL_CONDITION = 1e8


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


# ---------------------------------------------------------------- solver --

def _step_matrices(A: NDArray, B: NDArray, h: float, omega: float) -> tuple[NDArray, NDArray]:
    """e^{A h} and Gamma (4, N, m) for the input basis [1, tau, cos W tau, sin W tau].

    One exponential of the augmented generator (Van Loan): state
    [x, c, u, u', p, q] with x' = A x + B (c + u + p), u'' = 0, p' = -W q, q' = W p.
    """
    N, m = B.shape
    blocks = 5 if omega else 3
    L = np.zeros((N + blocks * m, N + blocks * m))
    c, u, ud, p, q = (N + k * m for k in range(5))
    eye = np.eye(m)
    L[:N, :N] = A
    L[:N, c:c + m] = B
    L[:N, u:u + m] = B
    L[u:u + m, ud:ud + m] = eye
    if omega:
        L[:N, p:p + m] = B
        L[p:p + m, q:q + m] = -omega * eye
        L[q:q + m, p:p + m] = omega * eye
    E = scipy.linalg.expm(L * h)
    gam = np.zeros((4, N, m))
    gam[0] = E[:N, c:c + m]
    gam[1] = E[:N, ud:ud + m]            # u(0) = 0, u'(0) = I: u = tau
    if omega:
        gam[2] = E[:N, p:p + m]          # p(0) = I, q(0) = 0: p = cos
        gam[3] = -E[:N, q:q + m]         # p(0) = 0, q(0) = -I: p = sin
    return E[:N, :N], gam


def hold_step(A: NDArray, B: NDArray, dt: float) -> tuple[NDArray, NDArray, NDArray]:
    """``(e^{A dt}, Gamma0, Gamma1)`` of one step ``dt`` (s) of an input that is a
    straight line on the step: ``x(dt) = e^{A dt} x(0) + Gamma0 u(0) + Gamma1 u'``."""
    Phi, gam = _step_matrices(A, B, dt, 0.0)
    return Phi, gam[0], gam[1]


def _recurrence(A: NDArray, Phi: NDArray, g: NDArray, dt: float, Cout: NDArray,
                nint: int) -> NDArray:
    """Outputs ``Cout x_i`` (nint + 1, ns) of x_0 = 0, x_{i+1} = Phi x_i + g_i.

    ``g`` holds the first ``len(g)`` forcing terms; every later one equals ``g[-1]``
    (the input keeps one constant form after the event), so that part is the closed
    form ``xi_p + mu^p (xi_0 - xi_p)`` per mode, with no recursion.
    """
    from scipy.signal import lfilter

    active, N = g.shape
    lam, V = np.linalg.eig(A)
    ok = np.all(np.isfinite(lam)) and np.linalg.cond(V) < _MODAL_CONDITION
    if ok:
        mu = np.exp(lam * dt)
        Vinv = np.linalg.inv(V)
        ok = np.allclose((V * mu) @ Vinv, Phi, rtol=1e-9, atol=1e-11 * np.abs(Phi).max())
    out = np.zeros((nint + 1, Cout.shape[0]))
    if not ok:
        x = np.zeros(N)
        states = np.empty((nint, N))
        for i in range(nint):
            x = Phi @ x + g[min(i, active - 1)]
            states[i] = x
        out[1:] = states @ Cout.T
        return out
    # A is real: its complex modes come in conjugate pairs (LAPACK returns exact
    # conjugates), so one of each pair, counted twice, gives the real output.
    keep = lam.imag >= 0
    weight = np.where(lam.imag[keep] > 0, 2.0, 1.0)
    mu, lam = mu[keep], lam[keep]
    h = np.ascontiguousarray(Vinv[keep] @ g.T)          # (modes, active)
    xi = np.empty((mu.size, nint), dtype=complex)
    for k in range(mu.size):
        xi[k, :active] = lfilter([1.0], [1.0, -mu[k]], h[k])
    if nint > active:
        tail = h[:, -1]
        steps = np.arange(1, nint - active + 1) * dt
        last = xi[:, active - 1]
        grows = np.abs(1.0 - mu) < 1e-13                  # a zero eigenvalue: xi grows linearly
        safe = np.where(grows, 1.0, 1.0 - mu)
        fixed = np.where(grows, 0.0, tail / safe)
        decay = np.exp(lam[:, None] * steps[None, :])
        xi[:, active:] = fixed[:, None] + decay * (last - fixed)[:, None]
        if grows.any():
            xi[grows, active:] = last[grows, None] + np.outer(tail[grows], steps / dt)
    out[1:] = ((Cout @ V[:, keep] * weight) @ xi).real.T
    return out


def _simulate(A: NDArray, B: NDArray, Cout: NDArray, D: NDArray, dt: float, coef: NDArray,
              u_samples: NDArray, omega: float,
              splits: dict[int, list[tuple[float, NDArray]]] | None = None) -> NDArray:
    """Exact outputs at the samples, (nt, ns), for interval coefficients (k, 4, m).

    Intervals from ``k - 1`` on share the coefficients ``coef[-1]``; ``splits[i]``
    replaces interval i by sub-intervals ``(length, coef (4, m))``."""
    Phi, gam = _step_matrices(A, B, dt, omega)
    active, _, m = coef.shape
    g = coef.reshape(active, 4 * m) @ gam.transpose(0, 2, 1).reshape(4 * m, -1)
    cache: dict[float, tuple[NDArray, NDArray]] = {}
    for i, subs in (splits or {}).items():
        gi = np.zeros(A.shape[0])
        for h, c in subs:
            if h not in cache:
                cache[h] = _step_matrices(A, B, h, omega)
            Ph, Gh = cache[h]
            gi = Ph @ gi + np.einsum("bnm,bm->n", Gh, c)
        g[i] = gi
    return _recurrence(A, Phi, g, dt, Cout, u_samples.shape[0] - 1) + u_samples @ D.T


# --------------------------------------------------------- event inputs --

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
        if i < 0 or i >= nint or theta < _SNAP or theta > 1 - _SNAP:
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


def _delays(model: Any, v: float) -> NDArray:
    x = np.asarray(model.input_positions, dtype=float).reshape(-1, 3)[:, 0]
    return (x.max() - x) / v


def default_duration(model: Any, event: RoadEvent, speed_m_s: float) -> float:
    """Time (s) for the last road point to pass the event, plus :data:`SETTLE_S`."""
    v = road.check_speed(speed_m_s)
    delays = _delays(model, v)
    return float((delays.max() if delays.size else 0.0) + event.length_m / v + SETTLE_S)


def _time_grid(duration_s: float, rate_hz: float) -> tuple[float, int]:
    rate, dur = float(rate_hz), float(duration_s)
    if not math.isfinite(rate) or rate <= 0:
        raise InputError(f"rate must be a positive frequency, not {rate_hz!r} Hz",
                         Where(field="--rate"))
    if not math.isfinite(dur) or dur <= 0:
        raise InputError(f"duration must be positive, not {duration_s!r} s",
                         Where(field="--duration"))
    count = int(round(dur * rate)) + 1
    if count < 4:
        raise InputError(f"{dur:g} s at {rate:g} Hz gives fewer than four samples",
                         Where(field="--duration"))
    if count > MAX_SAMPLES:
        raise InputError(f"{dur:g} s at {rate:g} Hz gives {count} samples (at most "
                         f"{MAX_SAMPLES})", Where(field="--rate"))
    return 1.0 / rate, count


def _state_space(model: Any, sensors: Sequence[str] | None) -> tuple[NDArray, ...]:
    if model.n == 0:
        raise InputError("the model has no degrees of freedom", Where(field="--depth"))
    if not model.inputs:
        raise InputError("the model has no road points to excite", Where(field="road"))
    if isinstance(sensors, str):
        sensors = [sensors]
    rows = (list(range(len(model.sensors))) if sensors is None
            else [model.sensor_index(s) for s in sensors])
    if not rows:
        raise InputError("the model has no sensors to report", Where(field="sensors"))
    A, B, C, D = model.to_state_space()
    return A, B, C[rows], D[rows], np.array(rows, dtype=int)


def state_space(model: Any, sensors: Sequence[str] | None = None) -> tuple[NDArray, ...]:
    """``(A, B, C, D, rows)`` of the model for time responses: the outputs of ``sensors``
    (default all) and their rows in ``model.sensors``; errors for a model that has no
    DOFs, road inputs or sensors."""
    return _state_space(model, sensors)


def time_response(model: Any, rows: NDArray, t: NDArray, r: NDArray, y: NDArray, *,
                  assembly: Any = None, speed_m_s: float = math.nan,
                  event: dict[str, Any] | None = None,
                  description: str = "road history") -> TimeResponse:
    """A :class:`TimeResponse` of sensor histories ``y`` (nt, len(rows)) at ``t`` (s) under
    road displacements ``r`` (nt, nr), with its ISO 2631-1 and load figures."""
    return _result(model, assembly, np.asarray(rows), t, r, y, speed_m_s, event or {},
                   description, _notes(model))


def _notes(model: Any) -> list[str]:
    H = getattr(model, "H", None)
    dense = H.toarray() if hasattr(H, "toarray") else np.asarray(H if H is not None else 0.0)
    if np.any(dense != 0):
        return ["the model's hysteretic (loss-factor) damping has no time-domain form and is "
                "left out of this transient"]
    return []


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
    A, B, C, D, rows = _state_space(model, sensors)
    duration = default_duration(model, event, v) if duration_s is None else duration_s
    dt, count = _time_grid(duration, rate_hz)
    t = np.arange(count) * dt
    delays = _delays(model, v)
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
    y = _simulate(A, B, C, D, dt, coef, u, omega, splits)
    nr = len(model.inputs)
    return _result(model, assembly, rows, t, u[:, :nr], y, v,
                   {"shape": event.shape, "height_m": event.height_m,
                    "length_m": event.length_m}, event.describe(), _notes(model))


# -------------------------------------------------------- road histories --

def road_history_response(model: Any, time_s: ArrayLike, road_m: ArrayLike, *,
                          assembly: Any = None, sensors: Sequence[str] | None = None,
                          discard: int = 0, speed_m_s: float = math.nan,
                          description: str = "road history",
                          event: dict[str, Any] | None = None) -> TimeResponse:
    """Exact response to road displacements ``road_m`` (nt, nr) in m at equally spaced
    ``time_s``, taken as piecewise linear between samples (r' piecewise constant).

    The model starts at rest in static equilibrium at ``time_s[0]``; the first
    ``discard`` samples (a lead-in) are dropped from the result.
    """
    t = np.asarray(time_s, dtype=float).reshape(-1)
    r = np.asarray(road_m, dtype=float)
    A, B, C, D, rows = _state_space(model, sensors)
    nr = len(model.inputs)
    if r.ndim != 2 or r.shape != (t.size, nr):
        raise InputError(f"road history must be {t.size} samples by {nr} road inputs, got "
                         f"{r.shape}", Where(field="road"))
    if t.size < 4 or np.any(np.diff(t) <= 0) or np.ptp(np.diff(t)) > 1e-9 * (t[1] - t[0]):
        raise InputError("time samples must be at least four, equally spaced and increasing",
                         Where(field="time"))
    dt = float(t[1] - t[0])
    slope = np.diff(r, axis=0) / dt
    coef = np.zeros((t.size - 1, 4, 2 * nr))
    coef[:, 0, :nr] = r[:-1]
    coef[:, 1, :nr] = slope
    coef[:, 0, nr:] = slope
    u = np.hstack([r, np.vstack([slope, slope[-1:]])])
    y = _simulate(A, B, C, D, dt, coef, u, 0.0)
    keep = slice(int(discard), None)
    return _result(model, assembly, rows, t[keep] - t[int(discard)], r[keep], y[keep],
                   speed_m_s, event or {}, description, _notes(model))


def random_road_inputs(model: Any, road_class: str, speed_m_s: float, time_s: ArrayLike,
                       period_s: float, seed: int | None = None, tracks: str = "coherent",
                       waviness: float = 2.0,
                       band: Sequence[float] | None = None) -> NDArray[np.float64]:
    """Road displacement (nt, nr) in m under every road point at ``time_s`` (s).

    The ISO 8608 realisation repeats every ``speed * period_s`` m, sampled at the
    distance travelled in one time step; ``band`` (Hz) keeps the harmonics
    whose temporal frequency at this speed lies in it. Tracks: see the module notes.
    """
    v = road.check_speed(speed_m_s)
    road.class_value(road_class)
    if tracks not in road.TRACK_MODELS:
        raise InputError(f'unknown track model "{tracks}": choose identical, independent or '
                         "coherent", Where(field="--tracks"))
    t = np.asarray(time_s, dtype=float).reshape(-1)
    dt = float(t[1] - t[0])
    dx = v * dt
    length = v * float(period_s)
    spatial_band = None if band is None else (float(band[0]) / v, float(band[1]) / v)
    pos = np.asarray(model.input_positions, dtype=float).reshape(-1, 3)
    side = np.sign(pos[:, 1]).astype(int)
    names = sorted(set(side.tolist()), reverse=True)          # left (+1), centre, right (-1)
    count = 1 if tracks == "identical" else len(names)
    seeds = np.random.SeedSequence(seed).spawn(count)
    profiles = []
    for s in seeds:
        x, z = road.road_profile(length, dx, road_class, seed=int(s.generate_state(1)[0]),
                                 waviness=waviness, band=spatial_band)
        profiles.append(z)
    if tracks == "coherent" and count > 1:
        profiles = _mix_tracks(profiles, dx, [float(pos[side == k, 1].mean()) for k in names],
                               waviness)
    track_profile = {k: profiles[0 if tracks == "identical" else i] for i, k in enumerate(names)}
    period = x.size * dx
    delays = _delays(model, v)
    out = np.empty((t.size, pos.shape[0]))
    for j in range(pos.shape[0]):
        out[:, j] = np.interp(v * (t - delays[j]), x, track_profile[side[j]], period=period)
    return out


def _mix_tracks(profiles: list[NDArray], dx: float, y: list[float],
                waviness: float) -> list[NDArray]:
    """Independent track profiles mixed per harmonic to the isotropic coherence."""
    count = profiles[0].size
    spectra = np.array([np.fft.rfft(p) for p in profiles])            # (T, nh)
    n = np.fft.rfftfreq(count, dx)
    T = len(profiles)
    gamma = np.ones((n.size, T, T))
    for a in range(T):
        for b in range(T):
            if a != b:
                gamma[:, a, b] = road.isotropic_coherence(n, y[a] - y[b], waviness)
    # lower-triangular factor (track 1 keeps its own profile); a symmetric square root
    # where the coherence matrix is singular to round-off
    try:
        factor = np.linalg.cholesky(gamma + 1e-12 * np.eye(T)[None])
    except np.linalg.LinAlgError:
        vals, vecs = np.linalg.eigh(gamma)
        factor = vecs * np.sqrt(np.clip(vals, 0.0, None))[:, None, :]
    mixed = np.einsum("nab,bn->an", factor, spectra)
    return [np.fft.irfft(m, count) for m in mixed]


def random_road_response(model: Any, road_class: str, speed_m_s: float,
                         duration_s: float = 20.0, rate_hz: float = DEFAULT_RATE, *,
                         seed: int | None = None, tracks: str = "coherent",
                         waviness: float = 2.0, band: Sequence[float] | None = None,
                         lead_s: float = SETTLE_S, assembly: Any = None,
                         sensors: Sequence[str] | None = None) -> TimeResponse:
    """Response to a random ISO 8608 road of ``road_class`` at ``speed_m_s`` over
    ``duration_s`` (one period of the profile) after a discarded ``lead_s`` (s)."""
    v = road.check_speed(speed_m_s)
    road.class_value(road_class)
    dt, count = _time_grid(duration_s, rate_hz)
    count -= 1                                     # one period: the last sample is the first
    lead = int(round(max(float(lead_s), 0.0) / dt))
    t = (np.arange(-lead, count)) * dt
    r = random_road_inputs(model, road_class, v, t, count * dt, seed, tracks, waviness, band)
    info = {"road": str(road_class).upper(), "tracks": tracks, "waviness": waviness,
            "seed": seed}
    if band is not None:
        info["band_hz"] = [float(band[0]), float(band[1])]
    return road_history_response(
        model, t, r, assembly=assembly, sensors=sensors, discard=lead, speed_m_s=v,
        description=f"ISO 8608 class {str(road_class).upper()} road (tracks {tracks}, "
        f"seed {seed})", event=info)


# ---------------------------------------------------------------- result --

def _assembly_of(model: Any, assembly: Any) -> Any:
    current = model
    while assembly is None and current is not None:
        assembly = getattr(current, "assembly", None)
        current = getattr(current, "parent", None)
    return assembly


def _result(model: Any, assembly: Any, rows: NDArray, t: NDArray, r: NDArray, y: NDArray,
            v: float, event: dict, description: str, notes: list[str]) -> TimeResponse:
    asm = _assembly_of(model, assembly)
    names = tuple(model.sensors[i] for i in rows)
    units = tuple(model.sensor_units[i] for i in rows)
    measures = tuple(model.sensor_measures[i] for i in rows)
    weighting, weighted_rms, vdv, crest, mtvv = {}, {}, {}, {}, {}
    for k, (name, unit, measure) in enumerate(zip(names, units, measures, strict=True)):
        if measure != "acceleration":
            continue
        info = asm.sensors.get(name) if asm is not None else None
        w = sensor_weighting(info) if info is not None else (
            "We" if unit.startswith("rad") else "Wk")
        # the same figures as a measured record (builder.analysis.evaluate), from rest
        figures, _ = channel_figures(y[:, k], 1.0 / float(t[1] - t[0]), w, name=name,
                                     unit=unit, remove_mean=False)
        weighting[name] = w
        weighted_rms[name] = figures.weighted_rms
        vdv[name] = figures.vdv
        crest[name] = figures.crest_factor
        mtvv[name] = figures.mtvv
    static, least = _contact_loads(model, asm, rows, names, measures, y)
    if any(ratio < 0 for ratio in least.values()):
        lifted = ", ".join(n for n, ratio in least.items() if ratio < 0)
        notes = [*notes, f"lift-off: the load through {lifted} falls to zero (the wheel would lift "
                 "off the road); the linear model cannot leave it and would pull the tyre onto "
                 "the road instead, so its response after the first lift-off is not "
                 "physical"]
    return TimeResponse(
        time_s=t, inputs=tuple(model.inputs), road_m=r, sensors=names, units=units,
        measures=measures, y=y, speed_m_s=float(v), event=dict(event),
        description=description, weighting=weighting, weighted_rms=weighted_rms, vdv=vdv,
        crest_factor=crest, mtvv=mtvv, static=static, least_load_ratio=least,
        model_name=getattr(model, "name", ""), notes=tuple(notes))


def _contact_loads(model: Any, asm: Any, rows: NDArray, names: tuple[str, ...],
                   measures: tuple[str, ...], y: NDArray) -> tuple[dict, dict]:
    """Static force under 1 g (N) of the force sensors on links to a road point, and the
    least of (static + dynamic) / static over the record (negative: the load reverses)."""
    wanted = [k for k, (name, measure) in enumerate(zip(names, measures, strict=True))
              if measure == "force" and asm is not None and name in asm.sensors
              and _touches_road(asm, asm.sensors[name])]
    if not wanted:
        return {}, {}
    try:
        q = model.static_response()
    except Exception:  # noqa: BLE001 - no static equilibrium: no static loads
        return {}, {}
    if q is None or not np.all(np.isfinite(q)):
        return {}, {}
    Sd = model.Sd.toarray() if hasattr(model.Sd, "toarray") else np.asarray(model.Sd)
    static, least = {}, {}
    for k in wanted:
        s0 = float(Sd[rows[k]] @ q)
        static[names[k]] = s0
        if s0 != 0.0:
            least[names[k]] = float(np.min((s0 + y[:, k]) / s0))
    return static, least


def _touches_road(asm: Any, sensor: Any) -> bool:
    link = asm.links.get(getattr(sensor, "target", ""))
    return link is not None and any(str(getattr(e, "node", "")).startswith("road.")
                                    for e in (link.a, link.b))


@dataclass(frozen=True, eq=False)
class TimeResponse:
    """Sensor time histories ``y (nt, ns)`` (sensor units) at ``time_s`` (s), with the
    road displacements ``road_m (nt, nr)`` (m) that caused them and their figures.

    ``weighting``, ``weighted_rms`` (m/s^2 or rad/s^2), ``vdv`` (m/s^1.75 or
    rad/s^1.75) and ``crest_factor`` are keyed by the acceleration sensors' names;
    ``static`` (N, under 1 g) and ``least_load_ratio`` (least total over static
    load; below 0 the load reverses and a wheel would lift off) by the force
    sensors on links to a road point.
    """

    time_s: NDArray
    inputs: tuple[str, ...]
    road_m: NDArray
    sensors: tuple[str, ...]
    units: tuple[str, ...]
    measures: tuple[str, ...]
    y: NDArray
    speed_m_s: float = math.nan
    event: dict[str, Any] = field(default_factory=dict)
    description: str = ""
    weighting: dict[str, str] = field(default_factory=dict)
    weighted_rms: dict[str, float] = field(default_factory=dict)
    vdv: dict[str, float] = field(default_factory=dict)
    crest_factor: dict[str, float] = field(default_factory=dict)
    mtvv: dict[str, float] = field(default_factory=dict)
    static: dict[str, float] = field(default_factory=dict)
    least_load_ratio: dict[str, float] = field(default_factory=dict)
    model_name: str = ""
    notes: tuple[str, ...] = ()
    caution: str = comfort.CAUTION

    @property
    def rate_hz(self) -> float:
        return float(1.0 / (self.time_s[1] - self.time_s[0]))

    @property
    def peak(self) -> dict[str, float]:
        """Largest ``|y|`` of every sensor (its unit)."""
        return dict(zip(self.sensors, np.abs(self.y).max(axis=0).tolist(), strict=True))

    @property
    def maximum(self) -> dict[str, float]:
        return dict(zip(self.sensors, self.y.max(axis=0).tolist(), strict=True))

    @property
    def minimum(self) -> dict[str, float]:
        return dict(zip(self.sensors, self.y.min(axis=0).tolist(), strict=True))

    @property
    def rms(self) -> dict[str, float]:
        """RMS of every sensor over the record (its unit)."""
        return dict(zip(self.sensors, np.sqrt(np.mean(self.y**2, axis=0)).tolist(), strict=True))

    def history(self, sensor: str) -> NDArray[np.float64]:
        """The time history (nt,) of one sensor."""
        if sensor not in self.sensors:
            raise InputError(f'unknown sensor "{sensor}" (sensors: {", ".join(self.sensors)})',
                             Where(field="--sensor"))
        return self.y[:, self.sensors.index(sensor)]

    def _vdv_unit(self, name: str) -> str:
        return "rad/s^1.75" if self.weighting.get(name) == "We" else "m/s^1.75"

    def to_dict(self, history: bool = False) -> dict[str, Any]:
        """JSON-ready figures; ``history=True`` adds the time, road and sensor histories."""
        peak, mx, mn, rms = self.peak, self.maximum, self.minimum, self.rms
        sensors: dict[str, Any] = {}
        for name, unit, measure in zip(self.sensors, self.units, self.measures, strict=True):
            entry: dict[str, Any] = {"unit": unit, "measure": measure, "peak": peak[name],
                                     "max": mx[name], "min": mn[name], "rms": rms[name]}
            if name in self.vdv:
                entry.update(weighting=self.weighting[name],
                             weighted_rms=self.weighted_rms[name], vdv=self.vdv[name],
                             vdv_unit=self._vdv_unit(name),
                             crest_factor=self.crest_factor[name],
                             mtvv=self.mtvv.get(name, math.nan))
            if name in self.static:
                entry["static"] = self.static[name]
            if name in self.least_load_ratio:
                entry["least_load_ratio"] = self.least_load_ratio[name]
                entry["lift_off_s"] = self.lift_off_s(name)
            sensors[name] = entry
        out: dict[str, Any] = {
            "model": self.model_name, "description": self.description, "event": self.event,
            "speed_m_s": self.speed_m_s, "duration_s": float(self.time_s[-1] - self.time_s[0]),
            "rate_hz": self.rate_hz, "samples": int(self.time_s.size), "sensors": sensors,
            "caution": self.caution}
        if self.notes:
            out["notes"] = list(self.notes)
        if history:
            out["time_s"] = self.time_s.tolist()
            out["road_m"] = {n: self.road_m[:, j].tolist() for j, n in enumerate(self.inputs)}
            out["history"] = {n: self.y[:, k].tolist() for k, n in enumerate(self.sensors)}
        return out

    def to_csv_rows(self) -> list[list[Any]]:
        """Header and one row per sample: time (s), road inputs (m), sensors (their units)."""
        header = (["time_s"] + [f"{n} (m)" for n in self.inputs]
                  + [f"{s} ({u})" for s, u in zip(self.sensors, self.units, strict=True)])
        data = np.column_stack([self.time_s, self.road_m, self.y])
        return [header] + [[float(v) for v in row] for row in data]

    def table(self) -> str:
        """Readable table of peak, RMS and VDV per sensor, with the caution."""
        head = f"{self.model_name}: {self.description}"
        if math.isfinite(self.speed_m_s):
            head += f" at {self.speed_m_s:.3g} m/s ({self.speed_m_s * 3.6:.3g} km/h)"
        head += (f", {self.time_s[-1] - self.time_s[0]:.3g} s at {self.rate_hz:g} Hz")
        peak, mx, mn, rms = self.peak, self.maximum, self.minimum, self.rms
        rows = []
        for name, unit, measure in zip(self.sensors, self.units, self.measures, strict=True):
            extra = ""
            vdv = None
            if name in self.vdv:
                vdv = self.vdv[name]
                extra = (f"{self.weighting[name]}, VDV in {self._vdv_unit(name)}; weighted "
                         f"RMS {self.weighted_rms[name]:.3g}, crest factor "
                         f"{self.crest_factor[name]:.3g}")
            elif name in self.least_load_ratio:
                extra = f"static {self.static[name]:.4g} {unit}, " + self._load_text(name)
            rows.append([name, measure, unit, peak[name], mx[name], mn[name], rms[name], vdv,
                         extra])
        lines = [head, "", text_table(["sensor", "measure", "unit", "peak", "max", "min",
                                       "RMS", "VDV", "weighting or contact load"], rows,
                                      rule=False)]
        notes = list(self.notes)
        if self.vdv:
            notes.append("VDV (ISO 2631-1) suits shocks and crest factors above 9; it describes "
                         "a person only at a seat or floor point where one sits or stands")
        lines += [""] + [f"note: {n}" for n in notes] + [self.caution]
        return "\n".join(lines)

    def lift_off_s(self, name: str) -> float | None:
        """Time (s) at which the load through a road-contact force sensor first reverses
        (the wheel would lift off), or None if it never does."""
        s0 = self.static.get(name)
        if not s0:
            return None
        below = np.flatnonzero((s0 + self.history(name)) / s0 < 0)
        return float(self.time_s[below[0]]) if below.size else None

    def _load_text(self, name: str) -> str:
        ratio = self.least_load_ratio[name]
        lift = self.lift_off_s(name)
        if lift is None:
            return f"least load {percent(ratio, 0)} of static"
        return f"lifts off at {lift:.3f} s (see the note)"

    def plot(self, path: str | None = None) -> Any:
        """Time histories: road inputs, then one panel per sensor unit. Returns the figure;
        writes a PNG to ``path`` when given."""
        from .. import plots

        units = list(dict.fromkeys(self.units))
        fig, axes = plots.figure(len(units) + 1, height=2.3)
        t = self.time_s
        for j, name in enumerate(self.inputs):
            axes[0].plot(t, self.road_m[:, j], label=name, linewidth=1.0)
        plots.style(axes[0], ylabel="road displacement (m)")
        for ax, unit in zip(axes[1:], units, strict=True):
            for k, name in enumerate(self.sensors):
                if self.units[k] == unit:
                    ax.plot(t, self.y[:, k], label=name, linewidth=1.0)
            plots.style(ax, ylabel=f"({unit})")
        axes[-1].set_xlabel("time (s)")
        axes[-1].set_xlim(t[0], t[-1])
        plots.finish(fig, f"{self.model_name}: {self.description}".strip(": "))
        if path is not None:
            plots.save_png(fig, path)
        return fig
