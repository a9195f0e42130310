"""Responses to road histories: any sampled road, and random ISO 8608 roads."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ...errors import InputError, Where
from .. import road
from .events import delays_of
from .result import TimeResponse, result_of
from .solver import (
    DEFAULT_RATE,
    SETTLE_S,
    equivalent_viscous,
    simulate,
    state_space_rows,
    time_grid,
)


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
    model, note = equivalent_viscous(model)
    A, B, C, D, rows = state_space_rows(model, sensors)
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
    y = simulate(A, B, C, D, dt, coef, u, 0.0)
    keep = slice(int(discard), None)
    return result_of(model, assembly, rows, t[keep] - t[int(discard)], r[keep], y[keep],
                   speed_m_s, event or {}, description, [note] if note else [])


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
    delays = delays_of(model, v)
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
    dt, count = time_grid(duration_s, rate_hz)
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
