"""Random road response: sensor PSDs and RMS, ISO 2631-1 comfort, travel and tyre load.

A vehicle runs at speed ``v`` over an ISO 8608 road (see :mod:`.road`). The
road displacements under the ``nr`` road points have the cross-spectral
matrix ``S_r(f)`` (nr x nr, m^2/Hz), each point seeing its track's profile
delayed by its distance behind the front-most point. With the frequency
response ``H(f)`` (ns x nr) from road displacement to the sensors, the
one-sided PSD of every sensor is the diagonal of

    S_y(f) = H(f) S_r(f) H(f)^H

and its variance the integral of ``S_y`` over the band (default 0.5 to
80 Hz, the band of the ISO 2631-1 weightings). The band matters: a
displacement PSD of waviness 2 grows as ``1/f^2`` towards zero frequency, so
absolute displacement RMS depends on ``f_min``.

The integral converges by construction. The frequency response is a modal
superposition (:class:`builder.analysis.frf.ModalForm`: one eigensolve of
the first-order form, then any number of frequencies at the cost of a
matrix product; a direct solve where the modal basis is unsafe, a sparse
one per frequency above :data:`builder.analysis.frf.SPARSE_LIMIT` DOFs).
Its poles place the grid (:func:`builder.analysis.frf.resolving_grid`):
``points`` log-spaced frequencies plus a cluster at every damped mode whose
spacing is a small fraction of the mode's half-power bandwidth ``2 zeta f``,
however light its damping. The adaptive trapezoidal rule
(:mod:`.quadrature`) then halves intervals until the Richardson estimate of
every variance is below ``rtol`` (relative; default 1e-3, so 0.05 % on an
RMS), and the result states that estimate per figure.

A mode inside the band with no damping (damping ratio below
:data:`ZETA_FLOOR`) that the road drives into a sensor gives that sensor an
infinite variance: the response is refused with a line naming the mode and
the links it deforms, never given as a number. A mode the road does not
drive, or a sensor that does not see it, is left out of that sensor's sum.

Per sensor the result carries:

- acceleration sensors: the weighted RMS with the comfort weighting of
  their direction (z -> Wk, x and y -> Wd, rx ry rz -> We; a sensor along a
  general vector takes the weighting of its largest component; a seat-back
  x sensor Wc, feet sensors Wk). ISO 2631-1 comfort and health apply to a
  person at the interfaces the standard names, so only sensors that say
  they are at a person (``Sensor.person``: seat, back, feet, floor; the
  seat plugin's seat-surface sensors, or a file sensor's ``person:`` key)
  get the comfort words of Annex C, grouped per place into the vector sum
  with the multipliers of that interface (:class:`ComfortPoint`);
- deflection sensors: the RMS suspension travel (m or rad);
- force sensors: the static force under 1 g (from the model's static
  response) and, when the link has an end on a road point, the dynamic tyre
  load ratio ``RMS dynamic force / |static force|``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import InputError, Where
from ..threads import blas_threads_for
from . import comfort, road
from .quadrature import Integral, adaptive_trapezoid

__all__ = [
    "DEFAULT_BAND", "DEFAULT_POINTS", "DEFAULT_RTOL", "ZETA_FLOOR", "SensorRide",
    "ComfortPoint", "RideResult", "ride_response",
    "road_frequency_response", "response_psd", "frequency_grid", "sensor_weighting",
    "comfort_points",
]

#: Default analysis band (Hz): that of the ISO 2631-1 comfort weightings.
DEFAULT_BAND = (0.5, 80.0)
#: Default number of log-spaced frequencies (the grid adds clusters at the modes).
DEFAULT_POINTS = 400
#: Default relative tolerance on every variance (0.05 % on an RMS).
DEFAULT_RTOL = 1e-3
#: A mode with a damping ratio below this counts as undamped: no vehicle
#: structure has less (material damping alone is above 1e-4; common practice,
#: no source), and its variance would hang on damping the model leaves out.
ZETA_FLOOR = 1e-6

_DIRECTIONS = ("x", "y", "z", "rx", "ry", "rz")
_CHUNK = 2048               # frequencies per evaluation block (bounded memory)
_MAX_POINTS = 100_000       # refinement budget, dense models
_SPARSE_FACTOR = 3          # refinement budget of sparse models: this times the start
_DELAY_POINTS = 20_000      # most evenly spaced points for the wheelbase delay ripple
_COUPLED = 1e-8             # a cosine below this: the road or the sensor misses a mode


def frequency_grid(band: Sequence[float] = DEFAULT_BAND, points: int = DEFAULT_POINTS,
                   option: str = "--band") -> NDArray[np.float64]:
    """``points`` log-spaced frequencies (Hz) from ``band[0]`` to ``band[1]``, checked."""
    fmin, fmax = _check_band(band, option)
    if int(points) < 2:
        raise InputError(f"needs at least 2 points, got {points}", Where(field="--points"))
    return np.geomspace(fmin, fmax, int(points))


def _check_band(band: Sequence[float], option: str = "--band") -> tuple[float, float]:
    fmin, fmax = (float(b) for b in band)
    if not (math.isfinite(fmin) and math.isfinite(fmax)) or fmin <= 0 or fmin >= fmax:
        raise InputError(f"band needs 0 < FMIN < FMAX, got {fmin:g}:{fmax:g} Hz",
                         Where(field=option))
    return fmin, fmax


def _dense(a: Any) -> NDArray:
    return a.toarray() if hasattr(a, "toarray") else np.asarray(a, dtype=float)


def road_frequency_response(model: Any, frequency_hz: ArrayLike) -> NDArray[np.complex128]:
    """Complex H (nf, ns, nr) from the road inputs (m) to every sensor (its unit per m)."""
    from .frf import frequency_response

    f = np.asarray(frequency_hz, dtype=float).reshape(-1)
    fr = frequency_response(model, f)
    H = np.asarray(fr.H)
    sensors, inputs = tuple(fr.sensors), tuple(fr.inputs)
    if sensors != tuple(model.sensors) or inputs != tuple(model.inputs):
        rows = [sensors.index(s) for s in model.sensors]
        cols = [inputs.index(r) for r in model.inputs]
        H = H[:, rows][:, :, cols]
    return H


def response_psd(H: NDArray, road_spectrum: NDArray) -> NDArray[np.float64]:
    """Diagonal of ``H S_r H^H``: one-sided PSD (nf, ns) of every sensor.

    ``S_r`` (nf, nr, nr) is Hermitian, so the sum runs over its diagonal and
    upper triangle: ``sum_i |H_i|^2 S_ii + 2 sum_(i<j) Re(H_i conj(H_j) S_ij)``.
    """
    H = np.asarray(H)
    S = np.asarray(road_spectrum)
    nf, ns, nr = H.shape
    out = np.zeros((nf, ns))
    columns = [np.ascontiguousarray(H[:, :, i]) for i in range(nr)]
    for i, hi in enumerate(columns):
        out += (hi.real**2 + hi.imag**2) * S[:, i, i].real[:, None]
        for j in range(i + 1, nr):
            x = hi * np.conj(columns[j])
            sij = S[:, i, j]
            out += 2.0 * (x.real * sij.real[:, None] - x.imag * sij.imag[:, None])
    return out.clip(min=0.0)


def sensor_weighting(sensor: Any) -> str:
    """The ISO 2631-1 weighting of a body acceleration sensor (Wk, Wd, We, or Wc at a
    seat back), from its direction and the person interface it is at."""
    axis = getattr(sensor, "axis_name", "") or ""
    if axis not in _DIRECTIONS:
        d = np.abs(np.asarray(getattr(sensor, "direction", None) if getattr(
            sensor, "direction", None) is not None else [0, 0, 1], dtype=float))
        axis = _DIRECTIONS[int(np.argmax(d))]
    interface = comfort.INTERFACES.get(getattr(sensor, "person", "") or "")
    if interface is not None and axis in interface.weightings:
        return interface.weightings[axis]
    return comfort.weighting_for_direction(axis)


@dataclass(frozen=True, eq=False)
class SensorRide:
    """Road response of one sensor: PSD (unit^2/Hz) on the grid, RMS and derived figures.

    ``rms_error`` and ``weighted_rms_error`` are the estimated relative
    integration errors of the RMS figures (half those of the variances).
    ``person`` is the ISO 2631-1 interface the sensor is at ("" for none);
    ``reactions`` the Annex C words of its own axis contribution there.
    """

    name: str
    unit: str
    measure: str
    psd: NDArray
    rms: float
    weighting: str | None = None
    weighted_rms: float | None = None
    reactions: tuple[str, ...] = ()
    static: float | None = None
    road_contact: bool = False
    dynamic_load_ratio: float | None = None
    rms_error: float = 0.0
    weighted_rms_error: float | None = None
    person: str = ""

    def to_dict(self) -> dict:
        """JSON-ready figures (the PSD itself is left out; see RideResult.to_dict)."""
        out: dict[str, Any] = {"rms": self.rms, "unit": self.unit, "measure": self.measure,
                               "rms_error": self.rms_error}
        if self.weighting is not None:
            out["weighting"] = self.weighting
            out["weighted_rms"] = self.weighted_rms
            out["weighted_rms_error"] = self.weighted_rms_error
        if self.person:
            out["person"] = self.person
            out["comfort"] = list(self.reactions)
        if self.measure == "force":
            out["static"] = self.static
            if self.road_contact:
                out["dynamic_load_ratio"] = self.dynamic_load_ratio
        return out


@dataclass(frozen=True, eq=False)
class ComfortPoint:
    """The acceleration sensors at one person's interface, combined for comfort.

    ``place`` says where (the seat's name, or the body and sensor names),
    ``interface`` which ISO 2631-1 interface (:data:`comfort.INTERFACES`);
    ``vector_sum`` uses that interface's comfort multipliers (clause 8.2);
    ``vector_sum_health`` the health ones (1.4, 1.4, 1.0 on a seat surface,
    clause 7.2.3), None elsewhere: the standard's health guidance is for
    seated persons at the seat surface.
    """

    place: str
    interface: str
    sensors: dict[str, str]            # axis -> sensor name
    weighted_rms: dict[str, float]     # axis -> m/s^2 (rad/s^2 for rotations)
    vector_sum: float
    vector_sum_health: float | None
    reactions: tuple[str, ...]
    multipliers: dict[str, float] = field(default_factory=dict)

    @property
    def title(self) -> str:
        """Where and which axes, in words."""
        words = comfort.INTERFACES[self.interface].words
        return f"{self.place} ({words}), axes {', '.join(self.sensors)}"

    def to_dict(self) -> dict:
        """JSON-ready figures."""
        return {"place": self.place, "interface": self.interface, "title": self.title,
                "sensors": dict(self.sensors), "weighted_rms": dict(self.weighted_rms),
                "multipliers": dict(self.multipliers), "vector_sum": self.vector_sum,
                "vector_sum_health": self.vector_sum_health, "comfort": list(self.reactions)}


def _place_of(info: Any) -> tuple[str, ...]:
    """Grouping key of a person sensor: its place name, else its body and point."""
    place = getattr(info, "place", "") or ""
    if place:
        return (info.person, place)
    at = np.round(np.asarray(info.at if info.at is not None else [0, 0, 0], float), 4)
    return (info.person, info.target, *map(str, at.tolist()))


def _comfort_points(sensors: dict[str, SensorRide], asm: Any) -> tuple[ComfortPoint, ...]:
    """Group the person sensors by interface and place; one vector sum per group."""
    if asm is None:
        return ()
    groups: dict[tuple[str, ...], dict[str, str]] = {}
    for name, s in sensors.items():
        info = asm.sensors.get(name)
        if not s.person or s.weighted_rms is None or info is None:
            continue
        axis = getattr(info, "axis_name", "")
        if axis not in _DIRECTIONS:
            continue
        groups.setdefault(_place_of(info), {}).setdefault(axis, name)
    out = []
    for key, axes in groups.items():
        interface = comfort.INTERFACES[key[0]]
        axes = {a: axes[a] for a in _DIRECTIONS if a in axes}
        values = {a: float(sensors[n].weighted_rms) for a, n in axes.items()}
        k = {a: interface.multiplier(a) for a in axes}
        total = math.sqrt(sum((k[a] * values[a]) ** 2 for a in axes))
        health = None
        if interface.health is not None and set(axes) <= {"x", "y", "z"}:
            health = math.sqrt(sum((interface.health["xyz".index(a)] * values[a]) ** 2
                                   for a in axes))
        place = getattr(asm.sensors[next(iter(axes.values()))], "place", "") or (
            f"{', '.join(axes.values())} on {key[1]}")
        out.append(ComfortPoint(place, interface.name, axes, values, total, health,
                                tuple(comfort.comfort_reactions(total)), k))
    return tuple(out)


def comfort_points(sensors: dict[str, SensorRide], assembly: Any) -> tuple[ComfortPoint, ...]:
    """The person sensors grouped by interface and place, one vector sum per group
    (the figures of ``ride``; any source of weighted RMS per sensor may use it)."""
    return _comfort_points(sensors, assembly)


@dataclass(frozen=True, eq=False)
class RideResult:
    """Response of every sensor to an ISO 8608 road at one speed.

    ``integration`` tells how the variances were integrated: the number of
    frequencies, how many came from the log grid, the mode clusters and the
    refinement, the FRF method, whether the tolerance was met and the
    largest estimated relative error of any RMS.
    """

    road_class: str
    speed_m_s: float
    waviness: float
    tracks: str
    frequency_hz: NDArray
    sensors: dict[str, SensorRide]
    model_name: str = ""
    caution: str = comfort.CAUTION
    notes: tuple[str, ...] = field(default_factory=tuple)
    points: tuple[ComfortPoint, ...] = ()
    integration: dict[str, Any] = field(default_factory=dict)

    def to_dict(self, psd: bool = False) -> dict:
        """JSON-ready result; ``psd=True`` adds the grid and every sensor's PSD."""
        out: dict[str, Any] = {
            "model": self.model_name,
            "road": self.road_class,
            "road_gd_n0_m3": road.class_value(self.road_class),
            "waviness": self.waviness,
            "tracks": self.tracks,
            "speed_m_s": self.speed_m_s,
            "band_hz": [float(self.frequency_hz[0]), float(self.frequency_hz[-1])],
            "sensors": {name: s.to_dict() for name, s in self.sensors.items()},
            "integration": dict(self.integration),
            "caution": self.caution,
        }
        if self.points:
            out["comfort_points"] = [p.to_dict() for p in self.points]
        if self.notes:
            out["notes"] = list(self.notes)
        if psd:
            out["frequency_hz"] = self.frequency_hz.tolist()
            for name, s in self.sensors.items():
                out["sensors"][name]["psd"] = s.psd.tolist()
        return out

    def _integration_note(self) -> str:
        i = self.integration
        if not i:
            return ""
        parts = [f"{i['points']} frequencies ({i['log_points']} log-spaced"]
        if i.get("mode_points"):
            parts.append(f", {i['mode_points']} around {i['modes']} mode"
                         f"{'s' if i['modes'] != 1 else ''}")
        if i.get("delay_points"):
            parts.append(f", {i['delay_points']} evenly spaced for the wheelbase delay")
        if i.get("refined_points"):
            parts.append(f", {i['refined_points']} added by refinement")
        head = "".join(parts) + f"; {i['method']} FRF)"
        if i.get("converged", True):
            return (f"integration: {head}; estimated error at most "
                    f"{_percent(i['max_rms_error'])} of any RMS (Richardson, tolerance "
                    f"{_percent(i['rms_tolerance'])})")
        return (f"integration did not reach its tolerance within {i['points']} frequencies: "
                f"{head}; estimated error up to {_percent(i['max_rms_error'])} "
                f"({i.get('worst', '')})")

    def table(self) -> str:
        """Readable text table of the figures."""
        lines = [
            f"{self.model_name}: ISO 8608 class {self.road_class} road (waviness "
            f"{self.waviness:g}, tracks {self.tracks}) at {self.speed_m_s:.3g} m/s "
            f"({self.speed_m_s * 3.6:.3g} km/h), {self.frequency_hz[0]:g} to "
            f"{self.frequency_hz[-1]:g} Hz",
            "",
        ]
        width = max([20, *(len(s.name) for s in self.sensors.values())])
        lines.append(f"{'sensor':<{width}} {'measure':<13} {'RMS':>11} {'unit':<8} "
                     f"{'weighted RMS':>16}  at a person / load")
        for s in self.sensors.values():
            weighted, extra = "", ""
            if s.weighted_rms is not None:
                weighted = f"{s.weighted_rms:.3g} ({s.weighting})"
                if s.person:
                    extra = comfort.INTERFACES[s.person].words
            elif s.measure == "force" and s.static is not None:
                extra = f"static {s.static:.4g} {s.unit}"
                if s.road_contact and s.dynamic_load_ratio is not None:
                    extra += f", dynamic load ratio {s.dynamic_load_ratio:.3f}"
            lines.append(f"{s.name:<{width}} {s.measure:<13} {s.rms:>11.4g} {s.unit:<8} "
                         f"{weighted:>16}  {extra}".rstrip())
        if self.points:
            lines += ["", "comfort at a person (ISO 2631-1: vector sum with the multipliers "
                      "of the interface, clause 8; words of Annex C):"]
        for p in self.points:
            k = ", ".join(f"{p.multipliers[a]:g}" for a in p.sensors)
            line = (f"  {p.title}: {p.vector_sum:.3g} m/s^2 (multipliers {k}): "
                    f"{', '.join(p.reactions)}")
            if p.vector_sum_health is not None:
                line += (f"; health: {p.vector_sum_health:.3g} m/s^2 with the multipliers "
                         "1.4 (x, y) and 1 (z), clause 7")
            lines.append(line)
        notes = list(self.notes)
        note = self._integration_note()
        if note:
            notes.append(note)
        if any(s.weighted_rms is not None and not s.person for s in self.sensors.values()):
            notes.append("comfort words and health figures are given only for sensors at a "
                         "person (a seat surface, seat back, feet or the floor under a "
                         "standing person); the weighted RMS of other sensors is for "
                         "comparison only")
        lines += [""] + [f"note: {n}" for n in notes] + [self.caution]
        return "\n".join(lines)

    def plot(self, path: str | None = None) -> Any:
        """Sensor PSDs on log axes, one panel per unit, ISO 2631-1 bands shaded.

        The light band is the 0.5 to 80 Hz range of the weightings; the darker
        ones where ``|Wk| >= 0.9`` (vertical) and ``|Wd| >= 0.9`` (horizontal),
        the most sensitive ranges. Returns the matplotlib figure; writes a PNG
        to ``path`` when given (through a temporary file and a rename).
        """
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        from ..plots import log_floor

        units = list(dict.fromkeys(s.unit for s in self.sensors.values()))
        fig, axes = plt.subplots(len(units), 1, figsize=(8, 2.8 * len(units) + 0.6),
                                 squeeze=False, sharex=True)
        f = self.frequency_hz
        fine = np.geomspace(0.1, 400.0, 2000)
        for ax, unit in zip(axes[:, 0], units, strict=True):
            ax.axvspan(0.5, 80.0, color="0.93", zorder=0, label="ISO 2631-1 band 0.5-80 Hz")
            for name, color in (("Wk", "tab:orange"), ("Wd", "tab:green")):
                high = fine[comfort.weighting_magnitude(name, fine) >= 0.9]
                if high.size:
                    ax.axvspan(high[0], high[-1], color=color, alpha=0.12, zorder=0,
                               label=f"|{name}| >= 0.9")
            curves = [s for s in self.sensors.values() if s.unit == unit]
            floor = log_floor(*(s.psd for s in curves))
            for s in curves:
                ax.loglog(f, np.maximum(s.psd, floor), label=s.name)
            ax.set_ylim(bottom=floor)
            ax.set_ylabel(f"PSD ({unit})$^2$/Hz")
            ax.grid(True, which="both", alpha=0.3)
            ax.legend(fontsize=7, loc="best")
        axes[-1, 0].set_xlabel("frequency (Hz)")
        axes[-1, 0].set_xlim(f[0], f[-1])
        fig.suptitle(f"{self.model_name}: class {self.road_class} road at "
                     f"{self.speed_m_s * 3.6:.3g} km/h", fontsize=10)
        fig.tight_layout()
        if path is not None:
            import io

            from ..io import write_atomic

            buf = io.BytesIO()
            fig.savefig(buf, format="png", dpi=110)
            write_atomic(path, buf.getvalue())
            plt.close(fig)
        return fig


def _percent(x: float) -> str:
    value = 100.0 * float(x)
    if value == 0.0:
        return "0 %"
    return f"{value:.2g} %" if value < 10 else f"{value:.0f} %"


def assembly_of(model: Any, assembly: Any = None) -> Any:
    """``assembly`` if given, else the assembly ``model`` (or a model it was reduced
    from) carries; None when there is none."""
    current = model
    while assembly is None and current is not None:
        assembly = getattr(current, "assembly", None)
        current = getattr(current, "parent", None)
    return assembly


def _static_outputs(model: Any) -> NDArray | None:
    """Sensor values (their units) in static equilibrium under 1 g, or None."""
    try:
        q = model.static_response()
    except Exception:  # noqa: BLE001 - a model without a static solution has no ratio
        return None
    if q is None or not np.all(np.isfinite(q)):
        return None
    return np.asarray(_dense(model.Sd) @ q).ravel()


# ------------------------------------------------------------ the response --

@dataclass(eq=False)
class _Response:
    """H from the road inputs to the chosen sensors at any frequency, and its poles."""

    model: Any
    names: list[str]
    band: tuple[float, float]
    form: Any = None
    poles: NDArray = field(default_factory=lambda: np.zeros(0, complex))
    method: str = "modal"
    drop: NDArray | None = None
    modes: tuple[NDArray, NDArray] | None = None      # real (omega, shapes) when known

    @classmethod
    def of(cls, model: Any, names: list[str], band: tuple[float, float]) -> _Response:
        from .frf import SPARSE_LIMIT, modal_form, system_poles

        out = cls(model, names, band)
        if model.n > SPARSE_LIMIT:
            out.method = "sparse"
            out.modes = _lowest_modes(model, band[1])
            out.poles = _estimated_poles(model, *out.modes)
            return out
        check = (band[0], math.sqrt(band[0] * band[1]), band[1])
        out.form = modal_form(model, sensors=names, check_hz=check)
        if out.form is not None:
            out.poles = out.form.poles
        else:
            out.method = "direct"
            out.poles = system_poles(model)
        return out

    def __call__(self, f: NDArray) -> NDArray[np.complex128]:
        if self.form is not None:
            return self.form.response(f, self.drop)
        from .frf import frequency_response

        return frequency_response(self.model, f, sensors=self.names, method=self.method).H


def _lowest_modes(model: Any, fmax: float) -> tuple[NDArray, NDArray]:
    """Undamped modes of a large model up to beyond ``fmax`` Hz: (omega rad/s, shapes)."""
    from ..eigen import lowest_modes

    count = min(model.n - 1, 30)
    while True:
        lam, phi = lowest_modes(model.K, model.M, count)
        omega = np.sqrt(np.clip(lam, 0.0, None))
        if omega[-1] > 2 * math.pi * 1.5 * fmax or count >= min(model.n - 1, 480):
            return omega, phi
        count = min(2 * count, model.n - 1, 480)


def _estimated_poles(model: Any, omega: NDArray, phi: NDArray) -> NDArray[np.complex128]:
    """Poles from undamped modes and their diagonal modal damping (large models)."""
    c = np.einsum("ij,ij->j", phi, np.asarray(model.C @ phi))
    h = np.einsum("ij,ij->j", phi, np.asarray(model.H @ phi))
    with np.errstate(divide="ignore", invalid="ignore"):
        zeta = np.where(omega > 0, c / (2 * omega) + h / (2 * omega**2), 0.0)
    zeta = np.clip(np.nan_to_num(zeta), 0.0, 0.999)
    return -zeta * omega + 1j * omega * np.sqrt(1 - zeta**2)


# ------------------------------------------------------------ undamped modes --

def _real_modes(model: Any, response: _Response) -> tuple[NDArray, NDArray]:
    if response.modes is not None:
        return response.modes
    import scipy.linalg

    K, M = _dense(model.K), _dense(model.M)
    lam, phi = scipy.linalg.eigh(0.5 * (K + K.T), 0.5 * (M + M.T))
    return np.sqrt(np.clip(lam, 0.0, None)), phi


def _full_shape(model: Any, phi: NDArray) -> tuple[Any, NDArray]:
    if getattr(model, "parent", None) is not None and model.expansion is not None:
        return model.parent, np.asarray(model.expansion @ phi).ravel()
    return model, phi


def _describe_mode(model: Any, phi: NDArray) -> tuple[str, list[tuple[str, Any]]]:
    """DOFs holding most of a mode's kinetic energy, and the links it strains most."""
    energy = phi * np.asarray(model.M @ phi).ravel()
    share = energy / max(float(energy.sum()), 1e-300)
    order = np.argsort(share)[::-1]
    dofs = [f"{model.dofs[i]} {100 * share[i]:.0f} %" for i in order[:3] if share[i] >= 0.05]
    full, shape = _full_shape(model, phi)
    strain = {}
    for name, lm in (getattr(full, "links", {}) or {}).items():
        d = lm.deflection(shape)
        strain[name] = float(np.sum(np.asarray(lm.stiffness) * d**2))
    total = sum(strain.values()) or 1.0
    asm = getattr(full, "assembly", None)
    links = [(n, getattr(asm.links.get(n), "where", None) if asm is not None else None)
             for n, e in sorted(strain.items(), key=lambda kv: -kv[1]) if e >= 0.1 * total][:3]
    return ", ".join(dofs), links


def _road_maps(model: Any, names: list[str], w: float) -> tuple[NDArray, NDArray]:
    """Generalised road force F(w) (n, nr) and sensor observation O(w) (ns, n)."""
    from .frf import resolve_inputs

    spec = resolve_inputs(model)
    rows = [model.sensors.index(s) for s in names]
    seen = (_dense(model.Sd)[rows] + 1j * _dense(model.Sh)[rows]
            + 1j * w * _dense(model.Sv)[rows] - w**2 * _dense(model.Sa)[rows])
    return spec.F0 + 1j * w * spec.Fv, seen


def _undamped(model: Any, response: _Response, names: list[str], spectrum: Any,
              where: Where) -> None:
    """Refuse a mode without damping in the band that the road drives into a sensor;
    leave out of each sensor's sum the undamped modes it cannot see."""
    poles = response.poles
    fmin, fmax = response.band
    fd = poles.imag / (2 * math.pi)
    with np.errstate(divide="ignore", invalid="ignore"):
        zeta = np.where(np.abs(poles) > 0, -poles.real / np.abs(poles), 1.0)
    suspects = np.flatnonzero((fd >= fmin) & (fd <= fmax) & (zeta < ZETA_FLOOR))
    if suspects.size == 0:
        return
    omega, phi = _real_modes(model, response)
    drop = np.zeros((len(names), poles.size), dtype=bool)
    problems: list[tuple[float, Any, float, list[str]]] = []
    for k in suspects:
        w = float(poles[k].imag)
        j = int(np.argmin(np.abs(omega - w)))
        twins = np.flatnonzero(np.abs(poles - np.conj(poles[k])) <= 1e-9 * abs(poles[k]))
        if abs(omega[j] - w) > 1e-3 * w:          # no matching real mode: assume coupled
            coupled = list(range(len(names)))
        else:
            F, obs = _road_maps(model, names, w)
            shape = phi[:, j]
            p = shape @ F                                     # (nr,) road participation
            o = obs @ shape                                     # (ns,) sensor observation
            S = spectrum(np.array([w / (2 * math.pi)]))[0]
            size = np.linalg.norm(shape)
            drives = (np.linalg.norm(p) > _COUPLED * np.linalg.norm(F) * size
                      and float(np.real(p @ S @ np.conj(p)))
                      > _COUPLED * np.linalg.norm(p) ** 2 * float(np.abs(S).max()))
            seen = np.abs(o) > _COUPLED * np.linalg.norm(obs, axis=1) * size
            coupled = list(np.flatnonzero(seen)) if drives else []
            decoupled = [s for s in range(len(names)) if s not in coupled]
            drop[np.ix_(decoupled, [k, *twins])] = True
        if coupled:
            problems.append((w, phi[:, j] if abs(omega[j] - w) <= 1e-3 * w else None,
                             float(zeta[k]), [names[s] for s in coupled]))
    if problems:
        _refuse(model, sorted(problems, key=lambda x: x[0]), len(names), where)
    response.drop = drop


def _refuse(model: Any, problems: list[tuple[float, Any, float, list[str]]], count: int,
            where: Where) -> None:
    """InputError naming the lowest undamped mode the road drives, and how to fix it."""
    w, shape, zeta, sensors = problems[0]
    what, links = _describe_mode(model, shape) if shape is not None else ("", [])
    mode = f"the mode at {w / (2 * math.pi):.4g} Hz" + (f" (mostly {what})" if what else "")
    damping = "no damping" if zeta < 1e-12 else (
        f"a damping ratio of {zeta:.1g}, below {ZETA_FLOOR:g}: in effect none")
    shown = ", ".join(sensors[:4]) + (f" and {len(sensors) - 4} more" if len(sensors) > 4 else "")
    fix = (f"give the links it deforms most ({', '.join(n for n, _ in links)}) damping or a "
           "loss_factor" if links else "give its links damping or a loss_factor")
    others = len({round(p[0] / (2 * math.pi), 6) for p in problems[1:]})
    more = f" ({others} more undamped mode{'s' if others > 1 else ''} too)" if others else ""
    every = {s for p in problems for s in p[3]}
    leave = ", or leave those sensors out with --sensor" if len(every) < count else ""
    place = links[0][1] if links and links[0][1] is not None else where
    raise InputError(f"the RMS response to a random road is infinite: {mode} has {damping} "
                     f"and the road drives it into {shown}{more}; {fix}{leave}", place)


# ------------------------------------------------------------ integration --

def _integrand(response: _Response, spectrum: Any, weightings: list[tuple[int, str]]) -> Any:
    """f -> (y, g): sensor PSDs and weighted PSDs (nf, ns + na), and their incoherent
    sums (the scale that round-off cannot cancel)."""
    names = sorted({name for _, name in weightings})
    cols = [i for i, _ in weightings]

    def evaluate(f: NDArray) -> tuple[NDArray, NDArray]:
        ys, gs = [], []
        for a in range(0, f.size, _CHUNK):
            fc = f[a:a + _CHUNK]
            H = response(fc)
            S = spectrum(fc)
            psd = response_psd(H, S)
            inc = np.einsum("fsi,fi->fs", H.real**2 + H.imag**2,
                            np.abs(np.diagonal(S, axis1=1, axis2=2)))
            square = {name: comfort.weighting_magnitude(name, fc) ** 2 for name in names}
            w2 = np.column_stack([square[name] for _, name in weightings]) if weightings \
                else np.zeros((fc.size, 0))
            ys.append(np.hstack([psd, psd[:, cols] * w2]))
            gs.append(np.hstack([inc, inc[:, cols] * w2]))
        return np.vstack(ys), np.vstack(gs)
    return evaluate


def _start_grid(band: tuple[float, float], points: int, frequency_hz: ArrayLike | None,
                poles: NDArray, undamped: NDArray, delay_s: float) -> tuple[NDArray, dict]:
    """The starting grid, and how many of its points came from where.

    The log grid (or the given one), a cluster at every damped mode
    (:func:`builder.analysis.frf.resolving_grid`), and, when the road points
    lie at different x, an even grid of spacing ``1 / (8 tau)``: the rear
    wheels see the front profile ``tau`` later, which makes the PSD ripple
    with period ``1 / tau`` in frequency (at most :data:`_DELAY_POINTS`).
    """
    from .frf import resolving_grid

    if frequency_hz is None:
        base = np.geomspace(band[0], band[1], int(points))
    else:
        base = np.asarray(frequency_hz, dtype=float).reshape(-1)
    clusters = resolving_grid(band, 2, poles)
    f = np.union1d(base, clusters)
    modes = f.size - base.size
    ripple = np.zeros(0)
    if delay_s > 0:
        count = min(int(math.ceil(8 * delay_s * (band[1] - band[0]))) + 1, _DELAY_POINTS)
        ripple = np.linspace(band[0], band[1], max(count, 2))
    f = np.union1d(f, ripple)
    # keep clear of undamped poles left out of the sums (no point on a singularity)
    for fk in undamped:
        f = f[np.abs(f - fk) > 1e-6 * fk]
    return f, {"log_points": int(base.size), "mode_points": int(modes),
               "delay_points": int(f.size - base.size - modes) if delay_s > 0 else 0}


def ride_response(model: Any, road_class: str, speed_m_s: float, *, waviness: float = 2.0,
                  tracks: str = "coherent", band: Sequence[float] = DEFAULT_BAND,
                  points: int = DEFAULT_POINTS, frequency_hz: ArrayLike | None = None,
                  assembly: Any = None, sensors: Sequence[str] | None = None,
                  rtol: float = DEFAULT_RTOL) -> RideResult:
    """Response of every sensor (or of ``sensors``) to an ISO 8608 road at ``speed_m_s``.

    ``road_class`` ``"A"``..``"H"``; ``tracks`` identical, independent or
    coherent (see :mod:`.road`). The starting grid is ``frequency_hz`` if
    given (its ends are the band), else ``points`` log-spaced frequencies
    over ``band`` (Hz); either way it is merged with a cluster at every
    damped mode and refined until every variance meets ``rtol`` (relative).
    ``assembly`` gives sensor directions, person interfaces and which links
    touch the road (default: the model's own). An undamped mode in the band
    that the road drives into a chosen sensor is an InputError.
    """
    road_class = str(road_class).strip().upper()
    road.class_value(road_class)
    v = road.check_speed(speed_m_s)
    if frequency_hz is None:
        fmin, fmax = _check_band(band)
        if int(points) < 2:
            raise InputError(f"needs at least 2 points, got {points}", Where(field="--points"))
    else:
        given = np.asarray(frequency_hz, dtype=float).reshape(-1)
        if given.size < 2 or np.any(np.diff(given) <= 0) or given[0] <= 0 or not np.all(
                np.isfinite(given)):
            raise InputError("frequency grid must be positive and increasing",
                             Where(field="--band"))
        fmin, fmax = float(given[0]), float(given[-1])
    if not (math.isfinite(rtol) and 0 < rtol < 1):
        raise InputError(f"tolerance must be between 0 and 1, got {rtol!r}",
                         Where(field="tolerance"))
    if not model.inputs:
        raise InputError("the model has no road points to excite", Where(field="road"))
    names = list(model.sensors)
    if sensors is not None:
        for s in sensors:
            if s not in names:
                raise InputError(f'unknown sensor "{s}" (sensors: {", ".join(names) or "none"})',
                                 Where(field="--sensor"))
        names = [s for s in names if s in set(sensors)]
    if not names:
        raise InputError("the model has no sensors to report", Where(field="sensors"))
    asm = assembly_of(model, assembly)
    positions = np.asarray(model.input_positions)[:, :2]

    def spectrum(f: NDArray) -> NDArray:
        return road.road_cross_spectrum(f, v, positions, road_class, tracks, waviness)

    with blas_threads_for(2 * model.n):     # small dense problems: one BLAS thread
        return _ride(model, asm, names, spectrum, (fmin, fmax), points, frequency_hz,
                     (road_class, v, float(waviness), tracks), rtol)


def _ride(model: Any, asm: Any, names: list[str], spectrum: Any, band: tuple[float, float],
          points: int, frequency_hz: ArrayLike | None, case: tuple[str, float, float, str],
          rtol: float) -> RideResult:
    """The response, the grid, the integrals and the result (see :func:`ride_response`)."""
    fmin, fmax = band
    response = _Response.of(model, names, (fmin, fmax))
    where = Where(file=getattr(asm, "source", "") or "", field="ride")
    _undamped(model, response, names, spectrum, where)
    undamped = response.poles.imag[(np.abs(response.poles.real)
                                    < ZETA_FLOOR * np.abs(response.poles))] / (2 * math.pi)
    x = np.asarray(model.input_positions, dtype=float)[:, 0]
    delay = float(np.ptp(x)) / case[1] if x.size else 0.0
    start, counts = _start_grid((fmin, fmax), points, frequency_hz, response.poles,
                                undamped[undamped > 0], delay)

    infos = {name: (asm.sensors.get(name) if asm is not None else None) for name in names}
    index = {name: model.sensors.index(name) for name in names}
    weightings: list[tuple[int, str]] = []
    for j, name in enumerate(names):
        if model.sensor_measures[index[name]] == "acceleration":
            info = infos[name]
            unit = model.sensor_units[index[name]]
            weightings.append((j, sensor_weighting(info) if info is not None else (
                "We" if unit.startswith("rad") else "Wk")))
    budget = _MAX_POINTS if response.method != "sparse" else _SPARSE_FACTOR * start.size
    result = adaptive_trapezoid(_integrand(response, spectrum, weightings), start, rtol=rtol,
                                max_points=max(budget, start.size + 2))
    return _result(model, asm, names, index, infos, weightings, result, response, case,
                   counts, rtol)


def _result(model: Any, asm: Any, names: list[str], index: dict[str, int],
            infos: dict[str, Any], weightings: list[tuple[int, str]], integral: Integral,
            response: _Response, case: tuple[str, float, float, str], counts: dict,
            rtol: float) -> RideResult:
    """The RideResult from the integrals (one column per sensor, then the weighted ones)."""
    ns = len(names)
    variance = np.clip(integral.value, 0.0, None)
    relative = 0.5 * integral.relative_error             # on the RMS: half the variance's
    weighted = {j: (ns + c, w) for c, (j, w) in enumerate(weightings)}
    static = _static_outputs(model)
    notes = []
    if static is None and "force" in model.sensor_measures:
        notes.append("the model has no static equilibrium under 1 g (singular stiffness): "
                     "no static loads or dynamic load ratios")
    out: dict[str, SensorRide] = {}
    for j, name in enumerate(names):
        i = index[name]
        unit, measure = model.sensor_units[i], model.sensor_measures[i]
        rms = math.sqrt(variance[j])
        kwargs: dict[str, Any] = {"rms_error": float(relative[j])}
        info = infos[name]
        if j in weighted:
            col, weighting = weighted[j]
            aw = math.sqrt(variance[col])
            person = getattr(info, "person", "") or ""
            kwargs.update(weighting=weighting, weighted_rms=aw,
                          weighted_rms_error=float(relative[col]), person=person)
            if person:
                k = comfort.INTERFACES[person].multiplier(getattr(info, "axis_name", "z"))
                kwargs["reactions"] = tuple(comfort.comfort_reactions(k * aw))
        elif measure == "force" and static is not None:
            kwargs["static"] = float(static[i])
            link = asm.links.get(info.target) if (asm is not None and info is not None) else None
            touches = link is not None and any(
                str(getattr(e, "node", "")).startswith("road.") for e in (link.a, link.b))
            kwargs["road_contact"] = touches
            if touches:
                load = abs(float(static[i]))
                kwargs["dynamic_load_ratio"] = rms / load if load > 0 else math.inf
        out[name] = SensorRide(name, unit, measure, integral.y[:, j].copy(), rms, **kwargs)
    cluster = _cluster_count(response.poles, integral.x[0], integral.x[-1])
    worst = int(np.argmax(relative)) if relative.size else 0
    labels = names + [f"{names[j]} weighted" for j, _ in weightings]
    information = {
        "points": int(integral.x.size), **counts, "modes": cluster,
        "refined_points": int(integral.x.size - integral.start),
        "rounds": integral.rounds, "method": response.method,
        "converged": bool(integral.converged), "rms_tolerance": 0.5 * rtol,
        "max_rms_error": float(relative.max()) if relative.size else 0.0,
        "worst": labels[worst] if labels else "",
    }
    road_class, v, waviness, tracks = case
    return RideResult(road_class, v, waviness, tracks, integral.x, out,
                      model_name=getattr(model, "name", ""), notes=tuple(notes),
                      points=_comfort_points(out, asm), integration=information)


def _cluster_count(poles: NDArray, fmin: float, fmax: float) -> int:
    fd = poles.imag / (2 * math.pi)
    b = -poles.real / (2 * math.pi)
    return int(np.sum((fd > 0) & (b > 0) & (fd >= fmin) & (fd <= fmax)
                      & (b <= 0.7 * np.abs(poles) / (2 * math.pi))))
