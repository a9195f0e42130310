"""Whole-body vibration figures of ISO 2631-1:1997: frequency weightings and ratings.

The frequency weightings are built from the standard's analytic definition
(its Annex A): the product of

- a band-limiting high-pass, second order Butterworth at ``f1``
  ``Hh(p) = p^2 / (p^2 + w1 p / Q1 + w1^2)`` with ``Q1 = 1/sqrt(2)``,
- a band-limiting low-pass, second order Butterworth at ``f2``
  ``Hl(p) = w2^2 / (p^2 + w2 p / Q2 + w2^2)`` with ``Q2 = 1/sqrt(2)``,
- an acceleration-velocity transition
  ``Ht(p) = (1 + p / w3) / (1 + p / (Q4 w4) + (p / w4)^2)``,
- an upward step
  ``Hs(p) = (w5/w6)^2 (1 + p / (Q5 w5) + (p / w5)^2) / (1 + p / (Q6 w6) + (p / w6)^2)``,

with ``p = 2 pi i f`` and ``wk = 2 pi fk``. An infinite ``f3`` drops the
numerator term of ``Ht``, and weightings without a transition or step omit
that factor. The parameters (the standard's table beside the definition)
are in :data:`PARAMETERS`: ``Wk`` (vertical, z, seated/standing/recumbent),
``Wd`` (horizontal, x and y), ``We`` (rotational, rx ry rz), ``Wc``
(seat-back x), ``Wj`` (head, recumbent) and ``Wf`` (motion sickness).

Weighted RMS ``a_w`` (m/s^2, or rad/s^2 for ``We``) comes either from a
one-sided acceleration PSD, ``a_w^2 = integral |W(f)|^2 G(f) df``, or from a
sampled time history filtered by the weighting. The vibration dose value
``VDV = (integral a_w(t)^4 dt)^(1/4)`` (m/s^1.75) suits signals with shocks
(crest factor above 9, as the standard puts it).

Axis multipliers for the vector sum ``a_v = sqrt((kx awx)^2 + (ky awy)^2 +
(kz awz)^2)`` depend on the purpose (clauses 7 and 8 of the standard):

- health, seated person, seat surface: ``kx = ky = 1.4``, ``kz = 1.0``
  (:data:`HEALTH_SEAT`, the defaults of :func:`vector_sum`);
- comfort, seated person, seat surface: ``kx = ky = kz = 1.0``
  (:data:`COMFORT_SEAT`); rotations on the seat surface ``krx = 0.63``,
  ``kry = 0.4``, ``krz = 0.2`` m/rad (:data:`COMFORT_SEAT_ROTATION`); seat
  back ``0.8, 0.5, 0.4`` (``Wc`` for x, ``Wd`` for y and z); feet
  ``0.25, 0.25, 0.4``.

These figures are screening estimates (see :data:`CAUTION`).

>>> round(float(weighting_magnitude("Wk", [5.0])[0]), 3)
1.039
>>> comfort_reactions(0.7)
['fairly uncomfortable']
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.integrate import trapezoid as _trapezoid

from ..errors import InputError, Where

__all__ = [
    "CAUTION", "PARAMETERS", "WEIGHTING_BY_DIRECTION", "HEALTH_SEAT", "COMFORT_SEAT",
    "COMFORT_SEAT_ROTATION", "COMFORT_SEAT_BACK", "COMFORT_FEET", "COMFORT_BANDS",
    "WeightingParameters", "ComfortEvaluation", "Interface", "INTERFACES",
    "weighting", "weighting_magnitude", "weighting_for_direction",
    "weighted_rms_from_psd", "weighted_time_history", "weighted_rms_from_time",
    "vdv", "estimated_vdv", "crest_factor", "vector_sum", "comfort_reactions", "evaluate_comfort",
    "RUNNING_RMS_S", "running_rms", "mtvv", "filter_deviation", "weighted_at_rate",
]

CAUTION = (
    "These are screening estimates. Exposure limits and acceptance follow ISO 2631-1, "
    "local regulation and qualified engineering judgement."
)

_INF = math.inf


@dataclass(frozen=True)
class WeightingParameters:
    """Corner frequencies (Hz) and quality factors of one ISO 2631-1 weighting.

    ``f3 = inf`` drops the transition's numerator term; ``f4 = inf`` drops the
    transition altogether; ``f5 = f6 = inf`` drops the upward step.
    """

    f1: float
    f2: float
    f3: float = _INF
    f4: float = _INF
    q4: float = 1.0
    f5: float = _INF
    q5: float = 1.0
    f6: float = _INF
    q6: float = 1.0


#: The standard's parameter table (ISO 2631-1:1997, Annex A; from memory).
PARAMETERS: dict[str, WeightingParameters] = {
    "Wk": WeightingParameters(0.4, 100.0, 12.5, 12.5, 0.63, 2.37, 0.91, 3.35, 0.91),
    "Wd": WeightingParameters(0.4, 100.0, 2.0, 2.0, 0.63),
    "Wc": WeightingParameters(0.4, 100.0, 8.0, 8.0, 0.63),
    "We": WeightingParameters(0.4, 100.0, 1.0, 1.0, 0.63),
    "Wj": WeightingParameters(0.4, 100.0, f5=3.75, q5=0.91, f6=5.32, q6=0.91),
    "Wf": WeightingParameters(0.08, 0.63, _INF, 0.25, 0.86, 0.0625, 0.80, 0.1, 0.80),
}

#: The weighting a seated-person comfort figure applies to each measuring direction.
WEIGHTING_BY_DIRECTION: dict[str, str] = {
    "x": "Wd", "y": "Wd", "z": "Wk", "rx": "We", "ry": "We", "rz": "We",
}

#: Axis multipliers (kx, ky, kz): health, seated, seat surface (ISO 2631-1 clause 7.2.3).
HEALTH_SEAT = (1.4, 1.4, 1.0)
#: Comfort, seated, seat surface (ISO 2631-1 clause 8.2.2).
COMFORT_SEAT = (1.0, 1.0, 1.0)
#: Comfort, seated, seat surface rotations (krx, kry, krz) in m/rad (clause 8.2.2).
COMFORT_SEAT_ROTATION = (0.63, 0.4, 0.2)
#: Comfort, seated, seat back (kx, ky, kz) (clause 8.2.2).
COMFORT_SEAT_BACK = (0.8, 0.5, 0.4)
#: Comfort, seated, feet (kx, ky, kz) (clause 8.2.2).
COMFORT_FEET = (0.25, 0.25, 0.4)

@dataclass(frozen=True)
class Interface:
    """A place where vibration enters a person, as ISO 2631-1 clause 8 names them.

    ``weightings`` maps translational axes to their frequency weighting;
    ``comfort`` holds the comfort multipliers (kx, ky, kz) of the vector sum
    there, ``health`` the health ones (seat surface only: the standard's
    health guidance, clause 7, is for seated persons). Rotations count only
    on a seat surface (We, multipliers :data:`COMFORT_SEAT_ROTATION`, m/rad).
    """

    name: str
    words: str
    weightings: dict[str, str]
    comfort: tuple[float, float, float]
    health: tuple[float, float, float] | None = None

    def multiplier(self, axis: str) -> float:
        """The comfort multiplier of one axis (x, y, z, or rx, ry, rz on a seat surface)."""
        if axis in ("x", "y", "z"):
            return self.comfort["xyz".index(axis)]
        if self.name == "seat" and axis in ("rx", "ry", "rz"):
            return COMFORT_SEAT_ROTATION[("rx", "ry", "rz").index(axis)]
        return 0.0


#: The person interfaces a sensor may be at (``Sensor.person``), ISO 2631-1 clause 8.2
#: (weightings and multipliers from memory): seated person at the seat surface, the
#: seat back and the feet, and a standing person on the floor.
INTERFACES: dict[str, Interface] = {
    "seat": Interface("seat", "seated person, seat surface",
                      {"x": "Wd", "y": "Wd", "z": "Wk"}, COMFORT_SEAT, HEALTH_SEAT),
    "back": Interface("back", "seated person, seat back",
                      {"x": "Wc", "y": "Wd", "z": "Wd"}, COMFORT_SEAT_BACK),
    "feet": Interface("feet", "seated person, feet",
                      {"x": "Wk", "y": "Wk", "z": "Wk"}, COMFORT_FEET),
    "floor": Interface("floor", "standing person, floor",
                       {"x": "Wd", "y": "Wd", "z": "Wk"}, (1.0, 1.0, 1.0)),
}

#: Approximate reactions to vibration in public transport (ISO 2631-1 Annex C.2.3):
#: (lower m/s^2, upper m/s^2, words). A band holds lower <= a_w < upper, except
#: the last ("greater than 2 m/s^2"), which holds a_w > 2. The bands overlap on purpose.
COMFORT_BANDS: tuple[tuple[float, float, str], ...] = (
    (0.0, 0.315, "not uncomfortable"),
    (0.315, 0.63, "a little uncomfortable"),
    (0.5, 1.0, "fairly uncomfortable"),
    (0.8, 1.6, "uncomfortable"),
    (1.25, 2.5, "very uncomfortable"),
    (2.0, _INF, "extremely uncomfortable"),
)


def _parameters(name: str) -> WeightingParameters:
    try:
        return PARAMETERS[name]
    except KeyError:
        raise InputError(
            f"unknown frequency weighting {name!r}: choose one of {', '.join(PARAMETERS)}",
            Where(field="weighting")) from None


def _factors(par: WeightingParameters, p: NDArray) -> NDArray:
    """Complex product Hh Hl Ht Hs at the Laplace variable ``p`` (rad/s)."""
    q_band = 1.0 / math.sqrt(2.0)
    w1, w2 = 2 * math.pi * par.f1, 2 * math.pi * par.f2
    h = p**2 / (p**2 + p * w1 / q_band + w1**2)
    h = h * w2**2 / (p**2 + p * w2 / q_band + w2**2)
    if math.isfinite(par.f4):
        w4 = 2 * math.pi * par.f4
        numerator = 1.0 + (p / (2 * math.pi * par.f3) if math.isfinite(par.f3) else 0.0)
        h = h * numerator / (1.0 + p / (par.q4 * w4) + (p / w4) ** 2)
    if math.isfinite(par.f5):
        w5, w6 = 2 * math.pi * par.f5, 2 * math.pi * par.f6
        h = h * (w5 / w6) ** 2 * (1.0 + p / (par.q5 * w5) + (p / w5) ** 2) / (
            1.0 + p / (par.q6 * w6) + (p / w6) ** 2)
    return h


def weighting(name: str, frequency_hz: ArrayLike) -> NDArray[np.complex128]:
    """Complex transfer function of weighting ``name`` (``"Wk"``, ``"Wd"``, ...) at Hz.

    Dimensionless; multiply an acceleration spectrum by it to weight it.
    """
    f = np.asarray(frequency_hz, dtype=float)
    return _factors(_parameters(name), 2j * math.pi * f)


def weighting_magnitude(name: str, frequency_hz: ArrayLike) -> NDArray[np.float64]:
    """``|W(f)|`` of weighting ``name`` at the frequencies (Hz); dimensionless."""
    return np.abs(weighting(name, frequency_hz))


def weighting_for_direction(direction: str) -> str:
    """The comfort weighting for a measuring direction: z -> Wk, x/y -> Wd, rx/ry/rz -> We."""
    try:
        return WEIGHTING_BY_DIRECTION[direction]
    except KeyError:
        raise InputError(
            f"no ISO 2631-1 weighting for direction {direction!r}: use x, y, z, rx, ry or rz",
            Where(field="direction")) from None


def weighted_rms_from_psd(frequency_hz: ArrayLike, psd: ArrayLike, name: str) -> float:
    """Weighted RMS from a one-sided PSD: ``sqrt(integral |W|^2 G df)``.

    ``psd`` in (m/s^2)^2/Hz (or (rad/s^2)^2/Hz for ``We``) on the increasing
    grid ``frequency_hz`` (Hz); trapezoidal rule over the grid given, so the
    grid should cover the weighting's band (0.5 to 80 Hz for ``Wk``) finely
    enough. Returns m/s^2 (rad/s^2).
    """
    f = np.asarray(frequency_hz, dtype=float)
    g = np.asarray(psd, dtype=float)
    if f.ndim != 1 or g.shape != f.shape:
        raise InputError("PSD and frequency grid must be 1-D arrays of one length",
                         Where(field="psd"))
    if f.size < 2 or np.any(np.diff(f) <= 0):
        raise InputError("frequency grid must hold at least two increasing values",
                         Where(field="frequency_hz"))
    return float(np.sqrt(max(_trapezoid(weighting_magnitude(name, f) ** 2 * g, f), 0.0)))


def _sample_interval(t: NDArray) -> float:
    if t.ndim != 1 or t.size < 4:
        raise InputError("time history needs at least four samples", Where(field="time"))
    dt = np.diff(t)
    if np.any(dt <= 0) or np.ptp(dt) > 1e-6 * abs(dt.mean()):
        raise InputError("time samples must be equally spaced and increasing",
                         Where(field="time"))
    return float(dt.mean())


@functools.lru_cache(maxsize=64)
def _bilinear_sos(par: WeightingParameters, fs: float) -> NDArray:
    """Second-order sections of the weighting by the bilinear transform at rate ``fs``
    (cached: the same weighting at the same rate is designed once)."""
    from scipy import signal

    q_band = 1.0 / math.sqrt(2.0)
    sections: list[tuple[list[float], list[float]]] = []
    w1, w2 = 2 * math.pi * par.f1, 2 * math.pi * par.f2
    sections.append(([1.0, 0.0, 0.0], [1.0, w1 / q_band, w1**2]))
    sections.append(([w2**2], [1.0, w2 / q_band, w2**2]))
    if math.isfinite(par.f4):
        w4 = 2 * math.pi * par.f4
        num = [1.0 / (2 * math.pi * par.f3), 1.0] if math.isfinite(par.f3) else [1.0]
        sections.append((num, [1.0 / w4**2, 1.0 / (par.q4 * w4), 1.0]))
    if math.isfinite(par.f5):
        w5, w6 = 2 * math.pi * par.f5, 2 * math.pi * par.f6
        k = (w5 / w6) ** 2
        sections.append(([k / w5**2, k / (par.q5 * w5), k],
                         [1.0 / w6**2, 1.0 / (par.q6 * w6), 1.0]))
    rows = []
    for b, a in sections:
        bz, az = signal.bilinear(b, a, fs)
        bz = np.concatenate([np.zeros(3 - len(bz)), bz]) if len(bz) < 3 else bz
        az = np.concatenate([np.zeros(3 - len(az)), az]) if len(az) < 3 else az
        # bilinear of a second-order section always gives three coefficients each
        rows.append(np.concatenate([bz / az[0], az / az[0]]))
    return np.array(rows)


def filter_deviation(name: str, rate_hz: float, frequency_hz: float) -> float:
    """Relative error of the sampled weighting filter (``method="iir"``) at a frequency:
    ``|W_digital| / |W| - 1`` at ``rate_hz`` (scipy.signal.sosfreqz of the sections)."""
    from scipy import signal

    _, h = signal.sosfreqz(_bilinear_sos(_parameters(name), float(rate_hz)),
                           worN=[float(frequency_hz)], fs=float(rate_hz))
    return float(np.abs(h[0]) / weighting_magnitude(name, [frequency_hz])[0] - 1.0)


def weighted_time_history(t: ArrayLike, a: ArrayLike, name: str,
                          method: str = "fft") -> NDArray[np.float64]:
    """Apply weighting ``name`` to acceleration ``a`` (m/s^2) sampled at times ``t`` (s).

    ``method="fft"`` multiplies the discrete Fourier transform by the exact
    complex weighting at each bin frequency and transforms back. This treats
    the record as one period of a periodic signal: it is exact for a
    steady-state periodic record (a sine over whole cycles) and, for a long
    random record, differs from a causal filter only over the first and last
    few time constants (about 1 s for the 0.4 Hz high-pass). ``method="iir"``
    runs the causal analog filter discretised by the bilinear transform
    (scipy.signal.bilinear per second-order section, zero initial state):
    the right choice for transients and shocks (VDV of a bump). Its
    frequency axis is warped by about ``(pi f / fs)^2 / 3`` relative, so the
    magnitude error is that times the local slope of ``|W|``: about 1 % at
    80 Hz when sampled at 2 kHz. Sample at 2 kHz or faster for the 80 Hz band.
    """
    tt = np.asarray(t, dtype=float)
    aa = np.asarray(a, dtype=float)
    if aa.shape != tt.shape:
        raise InputError("time and acceleration arrays must have one length",
                         Where(field="acceleration"))
    dt = _sample_interval(tt)
    par = _parameters(name)
    if method == "fft":
        spectrum = np.fft.rfft(aa)
        f = np.fft.rfftfreq(aa.size, dt)
        return np.fft.irfft(spectrum * _factors(par, 2j * math.pi * f), aa.size)
    if method == "iir":
        return weighted_at_rate(aa, 1.0 / dt, name)
    raise InputError(f"unknown weighting method {method!r}: use fft or iir",
                     Where(field="method"))


def weighted_at_rate(a: ArrayLike, rate_hz: float, name: str) -> NDArray[np.float64]:
    """The causal weighting filter (``method="iir"`` of :func:`weighted_time_history`) on
    samples ``a`` (m/s^2) taken at ``rate_hz`` (Hz), from rest."""
    from scipy import signal

    return signal.sosfilt(_bilinear_sos(_parameters(name), float(rate_hz)),
                          np.asarray(a, dtype=float))


def weighted_rms_from_time(t: ArrayLike, a: ArrayLike, name: str, method: str = "fft") -> float:
    """Weighted RMS (m/s^2) of a sampled acceleration history (see weighted_time_history)."""
    aw = weighted_time_history(t, a, name, method)
    return float(np.sqrt(np.mean(aw**2)))


def vdv(t: ArrayLike, a: ArrayLike, name: str | None = None, method: str = "iir") -> float:
    """Vibration dose value ``(integral a_w^4 dt)^(1/4)`` in m/s^1.75.

    ``a`` (m/s^2) at equally spaced times ``t`` (s) is weighted by ``name``
    first (causal filter by default, see weighted_time_history); ``name=None``
    takes ``a`` as already weighted. The integral is the rectangle rule
    ``sum(a_w^4) dt`` over the record.
    """
    tt = np.asarray(t, dtype=float)
    aw = np.asarray(a, dtype=float) if name is None else weighted_time_history(tt, a, name, method)
    dt = _sample_interval(tt)
    return float(np.sum(aw**4) * dt) ** 0.25


#: Integration time of the running RMS for the MTVV (ISO 2631-1 clause 6.3.1: 1 s).
RUNNING_RMS_S = 1.0


def running_rms(aw: ArrayLike, rate_hz: float,
                integration_s: float = RUNNING_RMS_S) -> NDArray[np.float64]:
    """Running RMS of a weighted acceleration (m/s^2) by linear integration.

    ``a_w(t0) = sqrt(1/tau integral_(t0 - tau)^t0 a_w(t)^2 dt)`` (ISO 2631-1
    clause 6.3.1, equation 6), ``tau = integration_s``, at every sample from
    the first full window on: ``len(aw) - N + 1`` values for a window of
    ``N = round(tau rate)`` samples (rectangle rule, as :func:`vdv`). Empty
    when the record is shorter than one window.
    """
    x = np.asarray(aw, dtype=float)
    window = int(round(float(integration_s) * float(rate_hz)))
    if window < 1:
        raise InputError(f"the running RMS window of {integration_s!r} s holds no sample at "
                         f"{rate_hz!r} Hz", Where(field="rate"))
    if x.size < window:
        return np.zeros(0)
    total = np.empty(x.size + 1)
    total[0] = 0.0
    np.cumsum(x * x, out=total[1:])
    out = total[window:] - total[:-window]
    del total
    np.maximum(out, 0.0, out=out)
    out /= window
    return np.sqrt(out, out=out)


def mtvv(aw: ArrayLike, rate_hz: float, integration_s: float = RUNNING_RMS_S) -> float:
    """Maximum transient vibration value: the largest running RMS (m/s^2), ISO 2631-1
    clause 6.3.1 (equation 7). NaN when the record is shorter than one window."""
    r = running_rms(aw, rate_hz, integration_s)
    return float(r.max()) if r.size else math.nan


def estimated_vdv(aw: float, duration_s: float) -> float:
    """Estimated vibration dose value ``1.4 a_w T^(1/4)`` (m/s^1.75) of ISO 2631-1 clause 6.3.

    For a steady random signal of weighted RMS ``aw`` (m/s^2) lasting
    ``duration_s`` (s); the factor 1.4 is the standard's (from memory). A
    Gaussian signal gives ``3^(1/4) = 1.32`` in place of 1.4.
    """
    if not duration_s >= 0:
        raise InputError(f"duration must be non-negative, not {duration_s!r} s",
                         Where(field="duration"))
    return 1.4 * float(aw) * float(duration_s) ** 0.25


def crest_factor(aw: ArrayLike) -> float:
    """Peak over RMS of a (weighted) acceleration history; dimensionless."""
    x = np.asarray(aw, dtype=float)
    rms = float(np.sqrt(np.mean(x**2)))
    if rms == 0.0:
        return 0.0
    return float(np.max(np.abs(x)) / rms)


def vector_sum(ax: float, ay: float, az: float,
               kx: float = 1.4, ky: float = 1.4, kz: float = 1.0) -> float:
    """Vibration total value ``sqrt((kx ax)^2 + (ky ay)^2 + (kz az)^2)`` (m/s^2).

    The defaults are the health multipliers for a seated person on the seat
    surface (1.4, 1.4, 1.0). For comfort on the seat surface pass
    ``*COMFORT_SEAT`` (all 1.0); see the module notes for the seat back and feet.
    """
    return float(math.sqrt((kx * ax) ** 2 + (ky * ay) ** 2 + (kz * az) ** 2))


def comfort_reactions(aw: float) -> list[str]:
    """Words of every comfort band of ISO 2631-1 Annex C that ``aw`` (m/s^2) falls in.

    The bands overlap, so a value can give two reactions (0.55 m/s^2: a little
    and fairly uncomfortable). Edges: see :data:`COMFORT_BANDS`.
    """
    value = float(aw)
    if not math.isfinite(value) or value < 0:
        raise InputError(f"weighted acceleration must be a finite non-negative number, "
                         f"not {aw!r}", Where(field="aw"))
    out = []
    for lower, upper, words in COMFORT_BANDS:
        inside = value > lower if math.isinf(upper) else lower <= value < upper
        if inside:
            out.append(words)
    return out


@dataclass(frozen=True)
class ComfortEvaluation:
    """Weighted RMS per axis (m/s^2), their vector sum and the comfort reactions."""

    axes: dict[str, float]
    weightings: dict[str, str]
    multipliers: dict[str, float]
    total: float
    reactions: tuple[str, ...]
    vdv: dict[str, float] = field(default_factory=dict)
    caution: str = CAUTION

    def to_dict(self) -> dict:
        """Plain JSON-ready dictionary."""
        return {
            "weighted_rms": dict(self.axes),
            "weightings": dict(self.weightings),
            "multipliers": dict(self.multipliers),
            "vector_sum": self.total,
            "reactions": list(self.reactions),
            "vdv": dict(self.vdv),
            "caution": self.caution,
        }


def evaluate_comfort(weighted_rms: dict[str, float],
                     multipliers: Sequence[float] = COMFORT_SEAT,
                     vdv_values: dict[str, float] | None = None) -> ComfortEvaluation:
    """Comfort figures from weighted RMS per translational axis ``{"x":..,"y":..,"z":..}``.

    Missing axes count as zero. ``multipliers`` (kx, ky, kz) default to the
    comfort seat-surface values (all 1.0).
    """
    for axis in weighted_rms:
        if axis not in ("x", "y", "z"):
            raise InputError(f"comfort axis must be x, y or z, not {axis!r}", Where(field="axis"))
    kx, ky, kz = (float(k) for k in multipliers)
    values = {axis: float(weighted_rms.get(axis, 0.0)) for axis in ("x", "y", "z")}
    total = vector_sum(values["x"], values["y"], values["z"], kx, ky, kz)
    return ComfortEvaluation(
        axes=values,
        weightings={axis: WEIGHTING_BY_DIRECTION[axis] for axis in values},
        multipliers={"x": kx, "y": ky, "z": kz},
        total=total,
        reactions=tuple(comfort_reactions(total)),
        vdv=dict(vdv_values or {}),
    )
