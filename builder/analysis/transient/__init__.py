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

Modules: ``events`` (the events and their responses), ``roads`` (road
histories and random roads), ``solver`` (the exact recurrence), ``result``
(:class:`TimeResponse`).

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

Hysteretic (loss-factor) damping has no exact time-domain form: every time
response (events, random roads, measured profiles) replaces it by the viscous
damping equivalent at each mode's own frequency (:func:`equivalent_viscous`,
which keeps the damping ratios ``lumpgraph modes`` reports), and says so in a
note.
"""

from .events import SHAPES, RoadEvent, default_duration, event_response, road_event
from .result import TimeResponse, time_response
from .roads import random_road_inputs, random_road_response, road_history_response
from .solver import (
    DEFAULT_RATE,
    MAX_SAMPLES,
    SETTLE_S,
    equivalent_viscous,
    hold_step,
    state_space,
)

__all__ = [
    "SHAPES", "DEFAULT_RATE", "SETTLE_S", "MAX_SAMPLES", "RoadEvent", "TimeResponse",
    "road_event", "event_response", "default_duration", "road_history_response",
    "random_road_response", "random_road_inputs", "hold_step", "state_space",
    "time_response", "equivalent_viscous",
]
