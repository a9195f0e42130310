"""The exact response to a measured road profile, streamed over long profiles.

Each road point follows its track of the profile (left for ``y > 0``, right
for ``y < 0``, their mean on the centre line; one ``elevation`` for all) at
its delayed position: at time ``t`` the point ``x_j`` is at distance
``s_j = s_0 + (x_j - x_rear) + v t`` along the profile, so ``t = 0`` is when
the rear-most point stands on the profile's first sample and the record ends
when the front-most reaches its last. The elevation between profile samples
is linear, and between time samples the road displacement is taken as a
straight line (first-order hold, ``r'`` constant on each step), for which the
solution through :func:`builder.analysis.transient.hold_step` is exact: the
samples are those of ``scipy.signal.lsim`` with ``interp=True`` on the same
state space.

Loss-factor (hysteretic) damping has no time-domain form; here it enters as
the viscous damping equivalent at each mode's own frequency
(:func:`equivalent_viscous`, the damping ratios ``lumpgraph modes`` reports),
so a model damped by loss factors alone is not left undamped.

The model starts in static equilibrium on the profile's first elevations
(``K q0 = Br r(0)``), and the first ``lead_s`` seconds (default 2 s) are left
out of the figures, so the start does not count as a bump.

Long profiles stream: the recurrence runs in modal coordinates (one
first-order recursive filter per eigenvalue, ``scipy.signal.lfilter`` with
its state carried from chunk to chunk) over chunks of :data:`CHUNK` samples;
only the current chunk's states exist at any time, and only the sensor
outputs are kept (a 10 km profile at 60 km/h is 600,000 samples at 1 kHz:
its 42 states would take 200 MB, its sensors take what they take). A
model whose eigenvectors are ill-conditioned steps ``x <- e^{A dt} x + g``
in a plain loop instead, chunk by chunk as well.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import InputError, Where
from . import comfort, road
from .profile_psd import ProfileSpectrum, profile_spectrum
from .ride import SensorRide, comfort_points, sensor_weighting
from .transient import (
    DEFAULT_RATE,
    MAX_SAMPLES,
    TimeResponse,
    equivalent_viscous,
    hold_step,
    state_space,
    time_response,
)

__all__ = ["CHUNK", "LEAD_S", "profile_inputs", "stream_outputs", "profile_response",
           "ProfileRide", "profile_ride", "equivalent_viscous"]

#: Samples per chunk of the streamed recurrence.
CHUNK = 65536
#: Seconds at the start left out of the figures.
LEAD_S = 2.0
_MODAL_CONDITION = 1e8


def _timing(model: Any, profile: Any, speed: float, rate: float) -> tuple[NDArray, NDArray, int]:
    """(offset of each road point ahead of the rear-most, m; its track side; samples)."""
    pos = np.asarray(model.input_positions, dtype=float).reshape(-1, 3)
    ahead = pos[:, 0] - pos[:, 0].min()
    span = float(ahead.max()) if ahead.size else 0.0
    usable = profile.length_m - span
    if usable <= 0:
        raise InputError(f"the profile ({profile.length_m:.4g} m) is shorter than the distance "
                         f"between the road points ({span:.4g} m)",
                         Where(profile.source, 0, "distance"))
    count = int(math.floor(usable / speed * rate + 1e-9)) + 1
    if count > MAX_SAMPLES:
        raise InputError(f"{usable / speed:.4g} s at {rate:g} Hz gives {count} samples (at most "
                         f"{MAX_SAMPLES})", Where(field="--rate"))
    return ahead, np.sign(pos[:, 1]).astype(int), count


def profile_inputs(model: Any, profile: Any, speed_m_s: float, time_s: NDArray) -> NDArray:
    """Road displacement (nt, nr) in m under every road point at ``time_s`` (see the notes)."""
    v = road.check_speed(speed_m_s)
    pos = np.asarray(model.input_positions, dtype=float).reshape(-1, 3)
    ahead = pos[:, 0] - pos[:, 0].min()
    side = np.sign(pos[:, 1]).astype(int)
    s = profile.distance_m
    out = np.empty((np.size(time_s), pos.shape[0]))
    for j in range(pos.shape[0]):
        out[:, j] = np.interp(s[0] + ahead[j] + v * np.asarray(time_s), s, profile.track(side[j]))
    return out


def _static_state(model: Any, A: NDArray, B: NDArray, r0: NDArray) -> NDArray:
    """State [q0; 0] of static equilibrium on the road displacements r0 (zero if K is singular)."""
    n, nr = model.n, r0.size
    # A = [[0, I], [-M^-1 K, -M^-1 C]], B = [[0], [M^-1 [Br Bv]]]: statics M^-1 K q0 = M^-1 Br r0
    Kt, Bt = -A[n:, :n], B[n:, :nr]
    try:
        q0 = np.linalg.solve(Kt, Bt @ r0)
    except np.linalg.LinAlgError:
        return np.zeros(2 * n)
    if not np.all(np.isfinite(q0)):
        return np.zeros(2 * n)
    return np.concatenate([q0, np.zeros(n)])


def stream_outputs(A: NDArray, B: NDArray, C: NDArray, D: NDArray, dt: float, count: int,
                   road_at: Any, x0: NDArray | None = None,
                   chunk: int = CHUNK) -> tuple[NDArray, NDArray]:
    """Outputs ``y`` (count, ns) and road ``r`` (count, nr) of the exact first-order-hold
    response, the road displacements given by ``road_at(sample indices)``; ``x0`` the
    initial state (default rest). Only one chunk of states is held at a time."""
    from scipy.signal import lfilter

    N, m = B.shape
    nr = m // 2
    Phi, G0, G1 = hold_step(A, B, dt)
    # g_i = G0 [r_i; s_i] + G1 [s_i; 0] with the slope s_i = (r_{i+1} - r_i) / dt
    Pr = G0[:, :nr]
    Ps = G0[:, nr:] + G1[:, :nr]
    x0 = np.zeros(N) if x0 is None else np.asarray(x0, dtype=float)
    lam, V = np.linalg.eig(A)
    modal = bool(np.all(np.isfinite(lam)) and np.linalg.cond(V) < _MODAL_CONDITION)
    if modal:
        Vinv = np.linalg.inv(V)
        mu = np.exp(lam * dt)
        modal = np.allclose((V * mu) @ Vinv, Phi, rtol=1e-9, atol=1e-11 * np.abs(Phi).max())
    y = np.empty((count, C.shape[0]))
    r_all = np.empty((count, nr))
    if modal:
        keep = lam.imag >= 0
        weight = np.where(lam.imag[keep] > 0, 2.0, 1.0)
        mu = mu[keep]
        W = (C @ V[:, keep]) * weight
        P, S = Vinv[keep] @ Pr, Vinv[keep] @ Ps
        xi = Vinv[keep] @ x0
    else:
        x = x0.copy()
    for start in range(0, count, chunk):
        stop = min(start + chunk, count)
        idx = np.arange(start, min(stop + 1, count))
        r = road_at(idx)
        if idx.size == stop - start:                 # the last chunk: hold the last slope
            slope = np.diff(r, axis=0) / dt
            slope = np.vstack([slope, slope[-1:]]) if slope.size else np.zeros((1, nr))
        else:
            slope = np.diff(r, axis=0) / dt
            r = r[:-1]
        u = np.hstack([r, slope])
        if modal:
            h = P @ r.T + S @ slope.T                  # (modes, k): forcing of each step
            seq = np.empty((mu.size, stop - start), dtype=complex)
            for k in range(mu.size):
                nxt = lfilter([1.0], [1.0, -mu[k]], h[k], zi=[mu[k] * xi[k]])[0]
                seq[k, 0] = xi[k]
                seq[k, 1:] = nxt[:-1]
                xi[k] = nxt[-1]
            y[start:stop] = (W @ seq).real.T + u @ D.T
        else:
            g = r @ Pr.T + slope @ Ps.T
            states = np.empty((stop - start, N))
            for i in range(stop - start):
                states[i] = x
                x = Phi @ x + g[i]
            y[start:stop] = states @ C.T + u @ D.T
        r_all[start:stop] = r
    return y, r_all


def profile_response(model: Any, profile: Any, speed_m_s: float,
                     rate_hz: float = DEFAULT_RATE, *, lead_s: float = LEAD_S,
                     assembly: Any = None, sensors: Sequence[str] | None = None,
                     chunk: int = CHUNK) -> TimeResponse:
    """Exact response of the sensors to a :class:`builder.profiles.RoadProfile` at
    ``speed_m_s``, sampled at ``rate_hz``; the first ``lead_s`` seconds left out."""
    v = road.check_speed(speed_m_s)
    rate = float(rate_hz)
    if not math.isfinite(rate) or rate <= 0:
        raise InputError(f"rate must be a positive frequency, not {rate_hz!r} Hz",
                         Where(field="--rate"))
    model, note = equivalent_viscous(model)
    A, B, C, D, rows = state_space(model, sensors)
    ahead, side, count = _timing(model, profile, v, rate)
    lead = int(round(max(float(lead_s), 0.0) * rate))
    if count - lead < 4:
        raise InputError(f"the profile gives {count / rate:.3g} s at {v:.3g} m/s, not more than "
                         f"the {lead_s:g} s lead-in", Where(profile.source, 0, "distance"))
    s = profile.distance_m
    tracks = [profile.track(k) for k in side]
    dt = 1.0 / rate

    def road_at(idx: NDArray) -> NDArray:
        out = np.empty((idx.size, ahead.size))
        for j in range(ahead.size):
            out[:, j] = np.interp(s[0] + ahead[j] + v * idx * dt, s, tracks[j])
        return out

    x0 = _static_state(model, A, B, road_at(np.array([0]))[0])
    y, r = stream_outputs(A, B, C, D, dt, count, road_at, x0, chunk)
    t = np.arange(count - lead) * dt
    event = {"profile": str(profile.source), "length_m": profile.length_m,
             "step_m": profile.step_m, "lead_s": lead / rate}
    resp = time_response(model, rows, t, r[lead:], y[lead:], assembly=assembly, speed_m_s=v,
                         event=event, description=f"measured profile {profile.source}")
    notes = [note] if note else []
    if v * dt > 2.0 * profile.step_m:
        notes.append(f"one time step ({v * dt:.3g} m at {rate:g} Hz) spans "
                     f"{v * dt / profile.step_m:.0f} profile samples: the road is a straight "
                     "line over it, so wavelengths shorter than a few steps are smoothed out; "
                     "sample faster")
    if notes:
        from dataclasses import replace

        resp = replace(resp, notes=(*resp.notes, *notes))
    return resp


@dataclass(frozen=True, eq=False)
class ProfileRide:
    """Ride figures over a measured profile: its spectrum and class, the exact time
    response and, at the sensors at a person, the comfort vector sums."""

    spectrum: ProfileSpectrum
    response: TimeResponse
    points: tuple[Any, ...] = ()
    dynamic_load_ratio: dict[str, float] = field(default_factory=dict)
    persons: dict[str, str] = field(default_factory=dict)
    caution: str = comfort.CAUTION

    def to_dict(self, psd: bool = False) -> dict[str, Any]:
        """JSON-ready figures, ``sensors`` as in ``ride --json`` (rms, unit, weighted_rms)."""
        resp = self.response.to_dict()
        sensors = {}
        for name, entry in resp["sensors"].items():
            item = dict(entry)
            if name in self.dynamic_load_ratio:
                item["dynamic_load_ratio"] = self.dynamic_load_ratio[name]
            if name in self.persons:
                item["person"] = self.persons[name]
            sensors[name] = item
        out = {"model": resp["model"], "road": str(self.spectrum.source),
               "profile": self.spectrum.to_dict(psd), "speed_m_s": resp["speed_m_s"],
               "duration_s": resp["duration_s"], "rate_hz": resp["rate_hz"],
               "samples": resp["samples"], "sensors": sensors,
               "comfort_points": [p.to_dict() for p in self.points], "caution": self.caution}
        if resp.get("notes"):
            out["notes"] = resp["notes"]
        return out

    def table(self) -> str:
        """The profile's class line, the response table and the comfort at a person."""
        lines = [self.spectrum.describe(), "", self.response.table()]
        if self.dynamic_load_ratio:
            lines += ["", "dynamic tyre load ratio (RMS dynamic over static load): " + ", ".join(
                f"{n} {v:.3f}" for n, v in self.dynamic_load_ratio.items())]
        if self.points:
            lines += ["", "comfort at a person (ISO 2631-1 vector sum, clause 8; words of "
                      "Annex C):"]
            for p in self.points:
                lines.append(f"  {p.title}: {p.vector_sum:.3g} m/s^2: {', '.join(p.reactions)}")
        return "\n".join(lines)

    def plot(self, path: str | None = None) -> Any:
        """The profile's PSD against the ISO 8608 classes (see ProfileSpectrum.plot)."""
        return self.spectrum.plot(path)


def profile_ride(model: Any, profile: Any, speed_m_s: float, rate_hz: float = DEFAULT_RATE,
                 *, lead_s: float = LEAD_S, assembly: Any = None,
                 sensors: Sequence[str] | None = None) -> ProfileRide:
    """Ride over a measured profile: the Welch PSD and ISO 8608 class of the profile and
    the figures of the exact response (see :func:`profile_response`)."""
    spectrum = profile_spectrum(profile)
    resp = profile_response(model, profile, speed_m_s, rate_hz, lead_s=lead_s,
                            assembly=assembly, sensors=sensors)
    asm = assembly
    current = model
    while asm is None and current is not None:
        asm = getattr(current, "assembly", None)
        current = getattr(current, "parent", None)
    rms = resp.rms
    ride_like, persons = {}, {}
    for name, unit, measure in zip(resp.sensors, resp.units, resp.measures, strict=True):
        info = asm.sensors.get(name) if asm is not None else None
        person = getattr(info, "person", "") or ""
        weighted = resp.weighted_rms.get(name)
        ride_like[name] = SensorRide(name, unit, measure, np.zeros(0), rms[name],
                                     weighting=resp.weighting.get(name) or (
                                         sensor_weighting(info) if info is not None and
                                         weighted is not None else None),
                                     weighted_rms=weighted, person=person if weighted is not
                                     None else "")
        if person and weighted is not None:
            persons[name] = person
    points = comfort_points(ride_like, asm)
    ratio = {}
    for name, static in resp.static.items():
        if static:
            k = resp.sensors.index(name)
            dynamic = resp.y[:, k]
            ratio[name] = float(np.sqrt(np.mean((dynamic - dynamic.mean()) ** 2)) / abs(static))
    return ProfileRide(spectrum, resp, points, ratio, persons)
