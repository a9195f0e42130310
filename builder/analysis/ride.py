"""Random road response: sensor PSDs and RMS, ISO 2631-1 comfort, travel and tyre load.

A vehicle runs at speed ``v`` over an ISO 8608 road (see :mod:`.road`). The
road displacements under the ``nr`` road points have the cross-spectral
matrix ``S_r(f)`` (nr x nr, m^2/Hz), each point seeing its track's profile
delayed by its distance behind the front-most point. With the frequency
response ``H(f)`` (ns x nr) from road displacement to the sensors, the
one-sided PSD of every sensor is the diagonal of

    S_y(f) = H(f) S_r(f) H(f)^H

and its RMS the square root of the integral of ``S_y`` over the band
(trapezoidal rule on the grid; default 0.5 to 80 Hz, log-spaced, the band of
the ISO 2631-1 weightings). The band matters: a displacement PSD of
waviness 2 grows as ``1/f^2`` towards zero frequency, so absolute
displacement RMS depends on ``f_min``.

Per sensor the result carries:

- acceleration sensors: the weighted RMS with the comfort weighting of
  their direction (z -> Wk, x and y -> Wd, rx ry rz -> We; a sensor along a
  general vector takes the weighting of its largest component), and the
  comfort reactions of ISO 2631-1 Annex C for translational ones; sensors
  along two or three of x, y, z at one body point are also combined into the
  vector sum with the seated comfort multipliers (:class:`ComfortPoint`);
- deflection sensors: the RMS suspension travel (m or rad);
- force sensors: the static force under 1 g (from the model's static
  response) and, when the link has an end on a road point, the dynamic tyre
  load ratio ``RMS dynamic force / |static force|``.

The frequency response comes from :mod:`builder.analysis.frf` when present;
otherwise from the dense solve below, vectorised over frequency for small
models and a sparse factorisation per frequency for large ones, with
hysteretic damping (``K + iH``, ``Br + iBh``, ``Sd + iSh``) honoured.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.integrate import trapezoid as _trapezoid

from ..errors import InputError, Where
from . import comfort, road

__all__ = [
    "DEFAULT_BAND", "DEFAULT_POINTS", "SensorRide", "ComfortPoint", "RideResult",
    "ride_response",
    "road_frequency_response", "response_psd", "frequency_grid", "sensor_weighting",
]

#: Default analysis band (Hz): that of the ISO 2631-1 comfort weightings.
DEFAULT_BAND = (0.5, 80.0)
#: Default number of log-spaced frequencies.
DEFAULT_POINTS = 2000

_DIRECTIONS = ("x", "y", "z", "rx", "ry", "rz")


def frequency_grid(band: Sequence[float] = DEFAULT_BAND, points: int = DEFAULT_POINTS,
                   option: str = "--band") -> NDArray[np.float64]:
    """``points`` log-spaced frequencies (Hz) from ``band[0]`` to ``band[1]``, checked."""
    fmin, fmax = (float(b) for b in band)
    if not (math.isfinite(fmin) and math.isfinite(fmax)) or fmin <= 0 or fmin >= fmax:
        raise InputError(f"band needs 0 < FMIN < FMAX, got {fmin:g}:{fmax:g} Hz",
                         Where(field=option))
    if int(points) < 2:
        raise InputError(f"needs at least 2 points, got {points}", Where(field="--points"))
    return np.geomspace(fmin, fmax, int(points))


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
    """Diagonal of ``H S_r H^H``: one-sided PSD (nf, ns) of every sensor."""
    return np.einsum("fsi,fij,fsj->fs", H, road_spectrum, np.conj(H)).real.clip(min=0.0)


def _rms(f: NDArray, psd: NDArray) -> float:
    return float(math.sqrt(max(float(_trapezoid(psd, f)), 0.0)))


def sensor_weighting(sensor: Any) -> str:
    """The ISO 2631-1 comfort weighting of a body acceleration sensor (Wk, Wd or We)."""
    axis = getattr(sensor, "axis_name", "") or ""
    if axis not in _DIRECTIONS:
        d = np.abs(np.asarray(getattr(sensor, "direction", None) if getattr(
            sensor, "direction", None) is not None else [0, 0, 1], dtype=float))
        axis = _DIRECTIONS[int(np.argmax(d))]
    return comfort.weighting_for_direction(axis)


@dataclass(frozen=True, eq=False)
class SensorRide:
    """Road response of one sensor: PSD (unit^2/Hz) on the grid, RMS and derived figures."""

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

    def to_dict(self) -> dict:
        """JSON-ready figures (the PSD itself is left out; see RideResult.to_dict)."""
        out: dict[str, Any] = {"rms": self.rms, "unit": self.unit, "measure": self.measure}
        if self.weighting is not None:
            out["weighting"] = self.weighting
            out["weighted_rms"] = self.weighted_rms
            if self.reactions:
                out["comfort"] = list(self.reactions)
        if self.measure == "force":
            out["static"] = self.static
            if self.road_contact:
                out["dynamic_load_ratio"] = self.dynamic_load_ratio
        return out


@dataclass(frozen=True, eq=False)
class ComfortPoint:
    """Acceleration sensors along x, y, z at one body point, combined for comfort.

    ``vector_sum`` uses the seated comfort multipliers on the seat surface
    (1, 1, 1, ISO 2631-1 clause 8.2.2); ``vector_sum_health`` the health ones
    (1.4, 1.4, 1.0, clause 7.2.3), for reference.
    """

    body: str
    at: tuple[float, float, float]
    sensors: dict[str, str]            # axis -> sensor name
    weighted_rms: dict[str, float]     # axis -> m/s^2
    vector_sum: float
    vector_sum_health: float
    reactions: tuple[str, ...]

    def to_dict(self) -> dict:
        """JSON-ready figures."""
        return {"body": self.body, "at": list(self.at), "sensors": dict(self.sensors),
                "weighted_rms": dict(self.weighted_rms), "vector_sum": self.vector_sum,
                "vector_sum_health": self.vector_sum_health, "comfort": list(self.reactions)}


def _comfort_points(sensors: dict[str, SensorRide], asm: Any) -> tuple[ComfortPoint, ...]:
    """Group translational acceleration sensors by body point (two or more axes)."""
    if asm is None:
        return ()
    groups: dict[tuple, dict[str, str]] = {}
    for name, s in sensors.items():
        info = asm.sensors.get(name)
        axis = getattr(info, "axis_name", "")
        if s.weighted_rms is None or info is None or axis not in ("x", "y", "z"):
            continue
        key = (info.target, *np.round(np.asarray(info.at, dtype=float), 4).tolist())
        groups.setdefault(key, {}).setdefault(axis, name)
    out = []
    for (body, *at), axes in groups.items():
        if len(axes) < 2:
            continue
        values = {axis: float(sensors[name].weighted_rms) for axis, name in axes.items()}
        xyz = [values.get(a, 0.0) for a in ("x", "y", "z")]
        total = comfort.vector_sum(*xyz, *comfort.COMFORT_SEAT)
        out.append(ComfortPoint(body, tuple(at), dict(axes), values, total,
                                comfort.vector_sum(*xyz, *comfort.HEALTH_SEAT),
                                tuple(comfort.comfort_reactions(total))))
    return tuple(out)


@dataclass(frozen=True, eq=False)
class RideResult:
    """Response of every sensor to an ISO 8608 road at one speed."""

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

    def table(self) -> str:
        """Readable text table of the figures."""
        lines = [
            f"{self.model_name}: ISO 8608 class {self.road_class} road (waviness "
            f"{self.waviness:g}, tracks {self.tracks}) at {self.speed_m_s:.3g} m/s "
            f"({self.speed_m_s * 3.6:.3g} km/h), {self.frequency_hz[0]:g} to "
            f"{self.frequency_hz[-1]:g} Hz",
            "",
            f"{'sensor':<20} {'measure':<13} {'RMS':>11} {'unit':<8} {'weighted RMS':>16}  "
            "comfort / load",
        ]
        for s in self.sensors.values():
            weighted, extra = "", ""
            if s.weighted_rms is not None:
                weighted = f"{s.weighted_rms:.3g} ({s.weighting})"
                extra = ", ".join(s.reactions)
            elif s.measure == "force" and s.static is not None:
                extra = f"static {s.static:.4g} {s.unit}"
                if s.road_contact and s.dynamic_load_ratio is not None:
                    extra += f", dynamic load ratio {s.dynamic_load_ratio:.3f}"
            lines.append(f"{s.name:<20} {s.measure:<13} {s.rms:>11.4g} {s.unit:<8} "
                         f"{weighted:>16}  {extra}".rstrip())
        for p in self.points:
            at = ", ".join(f"{c:g}" for c in p.at)
            axes = ", ".join(f"{a} {p.weighted_rms[a]:.3g}" for a in p.weighted_rms)
            lines.append(f"vector sum at {p.body} [{at}] m ({axes}): {p.vector_sum:.3g} m/s^2 "
                         f"comfort ({', '.join(p.reactions)}); {p.vector_sum_health:.3g} "
                         "with the health multipliers 1.4, 1.4, 1")
        notes = list(self.notes)
        if any(s.reactions for s in self.sensors.values()):
            notes.append("weighted RMS and comfort words describe a person only at a seat or "
                         "floor point where one sits or stands")
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
            for s in self.sensors.values():
                if s.unit == unit:
                    ax.loglog(f, np.maximum(s.psd, 1e-300), label=s.name)
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


def _assembly_of(model: Any, assembly: Any) -> Any:
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


def ride_response(model: Any, road_class: str, speed_m_s: float, *, waviness: float = 2.0,
                  tracks: str = "coherent", band: Sequence[float] = DEFAULT_BAND,
                  points: int = DEFAULT_POINTS, frequency_hz: ArrayLike | None = None,
                  assembly: Any = None, sensors: Sequence[str] | None = None) -> RideResult:
    """Response of every sensor (or of ``sensors``) to an ISO 8608 road at ``speed_m_s``.

    ``road_class`` ``"A"``..``"H"``; ``tracks`` identical, independent or
    coherent (see :mod:`.road`). The grid is ``frequency_hz`` if given, else
    ``points`` log-spaced frequencies over ``band`` (Hz). ``assembly`` gives
    sensor directions and which links touch the road (default: the model's own).
    """
    road_class = str(road_class).strip().upper()
    road.class_value(road_class)
    v = road.check_speed(speed_m_s)
    if frequency_hz is None:
        f = frequency_grid(band, points)
    else:
        f = np.asarray(frequency_hz, dtype=float).reshape(-1)
        if f.size < 2 or np.any(np.diff(f) <= 0) or f[0] <= 0:
            raise InputError("frequency grid must be positive and increasing",
                             Where(field="--band"))
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
    spectrum = road.road_cross_spectrum(f, v, np.asarray(model.input_positions)[:, :2],
                                        road_class, tracks, waviness)
    H = road_frequency_response(model, f)
    psd = response_psd(H, spectrum)
    asm = _assembly_of(model, assembly)
    static = _static_outputs(model)
    notes = []
    if static is None and "force" in model.sensor_measures:
        notes.append("the model has no static equilibrium under 1 g (singular stiffness): "
                     "no static loads or dynamic load ratios")
    out: dict[str, SensorRide] = {}
    for name in names:
        i = model.sensors.index(name)
        unit, measure = model.sensor_units[i], model.sensor_measures[i]
        rms = _rms(f, psd[:, i])
        kwargs: dict[str, Any] = {}
        info = asm.sensors.get(name) if asm is not None else None
        if measure == "acceleration":
            weighting = sensor_weighting(info) if info is not None else (
                "We" if unit.startswith("rad") else "Wk")
            aw = comfort.weighted_rms_from_psd(f, psd[:, i], weighting)
            kwargs.update(weighting=weighting, weighted_rms=aw,
                          reactions=tuple(comfort.comfort_reactions(aw))
                          if weighting != "We" else ())
        elif measure == "force" and static is not None:
            kwargs["static"] = float(static[i])
            link = asm.links.get(info.target) if (asm is not None and info is not None) else None
            touches = link is not None and any(
                str(getattr(e, "node", "")).startswith("road.") for e in (link.a, link.b))
            kwargs["road_contact"] = touches
            if touches:
                load = abs(float(static[i]))
                kwargs["dynamic_load_ratio"] = rms / load if load > 0 else math.inf
        out[name] = SensorRide(name, unit, measure, psd[:, i], rms, **kwargs)
    return RideResult(road_class, v, float(waviness), tracks, f, out,
                      model_name=getattr(model, "name", ""), notes=tuple(notes),
                      points=_comfort_points(out, asm))
