"""Comfort at the seat: occupant response, SEAT value, ride and bump figures, cushion tuning.

- :func:`occupant_response`: apparent mass and seat-to-head transmissibility
  of an occupant model on a rigid seat, with the resonances (plot with
  ``.plot(path)``).
- :func:`seat_value`: the SEAT value (Seat Effective Amplitude
  Transmissibility) in %: ``100 a_w,seat / a_w,floor``, the ratio of the
  ISO 2631-1 weighted RMS accelerations at the seat surface and at the floor
  under the same road input; from the two PSDs, or from the floor PSD and a
  seat transmissibility (:func:`seat_value_from_transmissibility`).
- :func:`seat_ride`: for an ISO 8608 road class and speed, the weighted RMS
  at seat surface (x: Wd, z: Wk), floor and head, the SEAT value per axis,
  the comfort vector sum and the ISO 2631-1 Annex C comfort reactions at the
  seat surface, and the RMS cushion travel.
- :func:`seat_bump`: seat figures for one road event (half-sine bump,
  pothole or ramp step) crossed at a speed, from the exact transient of
  :mod:`builder.analysis.transient`: VDV (m/s^1.75), weighted RMS over the
  record, peak weighted acceleration and crest factor, peak cushion travel.
- :func:`tune_cushion`: cushion stiffness and damping that minimise the
  vertical weighted RMS at the seat surface on a road (scipy.optimize), with
  the cushion travel kept inside a given stroke.

The seat is a set of bodies, links and sensors named by
:class:`~plugins.seat.build.SeatNames` (see :mod:`plugins.seat.build`).
Units SI throughout (m/s^2, m, N/m, N s/m).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from builder.analysis import comfort
from builder.analysis.ride import frequency_grid, ride_response
from builder.assembly import Assembly
from builder.elements.spring import spring_props
from builder.errors import InputError, Where
from builder.linear import LinearModel, assemble

from .build import SeatNames
from .occupants import (
    OCCUPANT_MODELS,
    OccupantModel,
    apparent_mass,
    resonance,
    scaled,
    seat_to_head_transmissibility,
)

__all__ = [
    "OccupantResponse", "occupant_response", "seat_value", "seat_value_from_transmissibility",
    "SeatRide", "seat_ride", "SeatBump", "seat_bump", "CushionTuning",
    "tune_cushion", "with_cushion",
]


# ------------------------------------------------------------ occupant --
@dataclass(frozen=True, eq=False)
class OccupantResponse:
    """An occupant model on a rigid seat: responses over frequency and their peaks.

    ``apparent_mass`` in kg (complex), ``head_transmissibility`` dimensionless
    (complex) or None; resonance frequencies in Hz.
    """

    model: OccupantModel
    frequency_hz: NDArray
    apparent_mass: NDArray
    head_transmissibility: NDArray | None
    resonance_hz: float
    resonance_apparent_mass: float
    head_resonance_hz: float | None
    head_peak: float | None

    def to_dict(self) -> dict:
        """Peaks and the model's data (the curves are left out)."""
        return {
            "model": self.model.key, "citation": self.model.citation,
            "body_mass_kg": self.model.body_mass, "seated_mass_kg": self.model.seated_mass,
            "resonance_hz": self.resonance_hz,
            "peak_apparent_mass_kg": self.resonance_apparent_mass,
            "peak_normalised_apparent_mass": self.resonance_apparent_mass
            / self.model.seated_mass,
            "head_resonance_hz": self.head_resonance_hz,
            "peak_seat_to_head_transmissibility": self.head_peak,
            "provenance": self.model.provenance,
        }

    def table(self) -> str:
        m = self.model
        lines = [f"{m.title}", f"  {m.citation}",
                 f"  body mass {m.body_mass:.1f} kg, seated (static apparent) mass "
                 f"{m.seated_mass:.1f} kg",
                 f"  apparent mass peak {self.resonance_apparent_mass:.1f} kg "
                 f"({self.resonance_apparent_mass / m.seated_mass:.2f} x static) at "
                 f"{self.resonance_hz:.2f} Hz"]
        if self.head_peak is not None:
            lines.append(f"  seat-to-head transmissibility peak {self.head_peak:.2f} at "
                         f"{self.head_resonance_hz:.2f} Hz")
        lines.append(f"  note: {m.provenance}")
        return "\n".join(lines)

    def plot(self, path: str | None = None) -> Any:
        """Apparent mass (kg) and seat-to-head transmissibility against frequency,
        resonances marked. Returns the figure; writes a PNG to ``path`` when given."""
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        rows = 2 if self.head_transmissibility is not None else 1
        fig, axes = plt.subplots(rows, 1, figsize=(7, 2.8 * rows + 0.5), squeeze=False,
                                 sharex=True)
        f = self.frequency_hz
        ax = axes[0, 0]
        ax.plot(f, np.abs(self.apparent_mass), label="apparent mass")
        ax.axvline(self.resonance_hz, color="0.5", ls="--",
                   label=f"resonance {self.resonance_hz:.2f} Hz")
        ax.set_ylabel("apparent mass (kg)")
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=8)
        if self.head_transmissibility is not None:
            ax = axes[1, 0]
            ax.plot(f, np.abs(self.head_transmissibility), color="tab:red",
                    label="seat-to-head transmissibility")
            ax.axvline(self.head_resonance_hz, color="0.5", ls="--",
                       label=f"peak {self.head_resonance_hz:.2f} Hz")
            ax.set_ylabel("|head / seat| (-)")
            ax.grid(True, alpha=0.3)
            ax.legend(fontsize=8)
        axes[-1, 0].set_xlabel("frequency (Hz)")
        fig.suptitle(f"{self.model.title}, {self.model.body_mass:.0f} kg", fontsize=9)
        fig.tight_layout()
        if path is not None:
            _save_png(fig, path)
            plt.close(fig)
        return fig


def _save_png(fig: Any, path: str) -> None:
    import io

    from builder.io import write_atomic

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110)
    write_atomic(path, buf.getvalue())


def occupant_response(model: OccupantModel | str, body_mass: float | None = None,
                      frequency_hz: ArrayLike | None = None) -> OccupantResponse:
    """Rigid-seat response of an occupant model (or its key), scaled to ``body_mass`` kg.

    Default grid: 0.5 to 20 Hz, 0.05 Hz apart.
    """
    if isinstance(model, str):
        if model not in OCCUPANT_MODELS:
            raise InputError(f'unknown occupant model "{model}" '
                             f'(models: {", ".join(OCCUPANT_MODELS)})', Where(field="occupant"))
        model = OCCUPANT_MODELS[model]
    if body_mass is not None:
        model = scaled(model, body_mass)
    f = np.arange(0.5, 20.0 + 1e-9, 0.05) if frequency_hz is None else np.asarray(
        frequency_hz, dtype=float).reshape(-1)
    am = apparent_mass(model, f)
    f_am, peak_am = resonance(model)
    head = f_head = peak_head = None
    if model.head is not None:
        head = seat_to_head_transmissibility(model, f)
        f_head, peak_head = resonance(model, "head")
    return OccupantResponse(model, f, am, head, f_am, peak_am, f_head, peak_head)


# ---------------------------------------------------------------- SEAT --
def seat_value(frequency_hz: ArrayLike, floor_psd: ArrayLike, seat_psd: ArrayLike,
               weighting: str = "Wk") -> float:
    """SEAT value (%) from the floor and seat-surface acceleration PSDs ((m/s^2)^2/Hz).

    ``100 sqrt(int |W|^2 G_seat df / int |W|^2 G_floor df)`` on the grid
    (trapezoidal rule, via :func:`builder.analysis.comfort.weighted_rms_from_psd`).
    """
    floor = comfort.weighted_rms_from_psd(frequency_hz, floor_psd, weighting)
    if floor <= 0.0:
        raise InputError("the floor has no weighted vibration: SEAT is undefined",
                         Where(field="floor"))
    return 100.0 * comfort.weighted_rms_from_psd(frequency_hz, seat_psd, weighting) / floor


def seat_value_from_transmissibility(frequency_hz: ArrayLike, floor_psd: ArrayLike,
                                     transmissibility: ArrayLike, weighting: str = "Wk"
                                     ) -> float:
    """SEAT value (%) of a seat with the (complex or magnitude) floor-to-seat
    transmissibility, for a floor acceleration PSD ((m/s^2)^2/Hz)."""
    g = np.asarray(floor_psd, dtype=float)
    t2 = np.abs(np.asarray(transmissibility)) ** 2
    return seat_value(frequency_hz, g, t2 * g, weighting)


# ---------------------------------------------------------------- ride --
@dataclass(frozen=True, eq=False)
class SeatRide:
    """Seat comfort figures on a random road (SI; SEAT in %).

    ``seat`` and ``floor`` map axis (x, z) to weighted RMS (m/s^2, Wd for x,
    Wk for z); ``seat_value`` maps axis to SEAT %; ``head`` is the head's
    vertical weighted RMS (Wk) or None; ``comfort`` the ISO 2631-1 evaluation
    at the seat surface (comfort multipliers 1, 1, 1; y not modelled, 0).
    """

    seat_name: str
    road_class: str
    speed_m_s: float
    seat: dict[str, float]
    floor: dict[str, float]
    seat_value: dict[str, float]
    head: float | None
    comfort: comfort.ComfortEvaluation
    travel_rms: float
    notes: tuple[str, ...] = field(default_factory=tuple)
    vdv_duration_s: float | None = None
    vdv: dict[str, float] = field(default_factory=dict)

    @property
    def estimated_vdv(self) -> dict[str, float]:
        """eVDV = 1.4 a_w T^(1/4) (m/s^1.75) per axis over ``vdv_duration_s``
        (ISO 2631-1's estimate for steady vibration; empty without a duration)."""
        if not self.vdv_duration_s:
            return {}
        return {a: 1.4 * self.seat[a] * self.vdv_duration_s ** 0.25 for a in self.seat}

    def to_dict(self) -> dict:
        return {
            "seat": self.seat_name, "road": self.road_class, "speed_m_s": self.speed_m_s,
            "seat_weighted_rms": dict(self.seat), "floor_weighted_rms": dict(self.floor),
            "seat_value_percent": dict(self.seat_value), "head_weighted_rms": self.head,
            "vector_sum": self.comfort.total, "comfort": list(self.comfort.reactions),
            "travel_rms_m": self.travel_rms, "vdv_duration_s": self.vdv_duration_s,
            "vdv": dict(self.vdv), "estimated_vdv": self.estimated_vdv,
            "notes": list(self.notes), "caution": self.comfort.caution,
        }

    def rows(self) -> list[list[Any]]:
        """Table rows: quantity, axis, value, unit."""
        out: list[list[Any]] = []
        for axis in ("x", "z"):
            w = "Wd" if axis == "x" else "Wk"
            out.append([f"floor weighted RMS ({w})", axis, self.floor[axis], "m/s^2"])
            out.append([f"seat weighted RMS ({w})", axis, self.seat[axis], "m/s^2"])
            out.append(["SEAT value", axis, self.seat_value[axis], "%"])
        if self.head is not None:
            out.append(["head weighted RMS (Wk)", "z", self.head, "m/s^2"])
        out.append(["seat vector sum (comfort, y not modelled)", "xyz", self.comfort.total,
                    "m/s^2"])
        out.append(["cushion travel RMS", "z", self.travel_rms, "m"])
        evdv = self.estimated_vdv
        for axis, value in self.vdv.items():
            out.append([f"seat VDV over {self.vdv_duration_s:g} s (simulated)", axis, value,
                        "m/s^1.75"])
            out.append([f"seat eVDV = 1.4 a_w T^1/4 over {self.vdv_duration_s:g} s", axis,
                        evdv[axis], "m/s^1.75"])
        return out

    def table(self) -> str:
        lines = [f"seat {self.seat_name}: ISO 8608 class {self.road_class} road at "
                 f"{self.speed_m_s * 3.6:.3g} km/h", ""]
        lines += [f"{q:<44} {a:<4} {v:>10.4g} {u}" for q, a, v, u in self.rows()]
        lines.append(f"{'ISO 2631-1 comfort (Annex C)':<44} {'':<4} "
                     f"{', '.join(self.comfort.reactions) or '-'}")
        lines += [f"note: {n}" for n in self.notes] + [self.comfort.caution]
        return "\n".join(lines)


def _seat_sensors(names: SeatNames) -> list[str]:
    out = [names.seat_z, names.seat_x, names.floor_z, names.floor_x, names.travel]
    return out + ([names.head_z] if names.head_z else [])


def seat_ride(model: LinearModel, names: SeatNames, road_class: str, speed_m_s: float, *,
              assembly: Assembly | None = None, tracks: str = "coherent",
              frequency_hz: ArrayLike | None = None, points: int = 1500,
              vdv_duration_s: float | None = 20.0, seed: int = 1) -> SeatRide:
    """Seat figures on an ISO 8608 road of ``road_class`` at ``speed_m_s`` (m/s).

    Uses :func:`builder.analysis.ride.ride_response` for the sensor PSDs. The
    seat VDV (m/s^1.75) comes from one realisation of the road over
    ``vdv_duration_s`` (s; random generator ``seed``) through
    :func:`builder.analysis.transient.random_road_response`; None skips it.
    """
    f = frequency_grid(points=points) if frequency_hz is None else frequency_hz
    result = ride_response(model, road_class, speed_m_s, tracks=tracks, frequency_hz=f,
                           assembly=assembly, sensors=_seat_sensors(names))
    s = result.sensors
    grid = result.frequency_hz
    seat = {"x": s[names.seat_x].weighted_rms, "z": s[names.seat_z].weighted_rms}
    floor = {"x": s[names.floor_x].weighted_rms, "z": s[names.floor_z].weighted_rms}
    value, notes = {}, []
    for axis, seat_name, floor_name, w in (("x", names.seat_x, names.floor_x, "Wd"),
                                           ("z", names.seat_z, names.floor_z, "Wk")):
        if floor[axis] > 0.0:
            value[axis] = seat_value(grid, s[floor_name].psd, s[seat_name].psd, w)
        else:
            value[axis] = math.nan
            notes.append(f"no {axis} vibration at the floor: SEAT {axis} undefined")
    head = s[names.head_z].weighted_rms if names.head_z else None
    vdv: dict[str, float] = {}
    if vdv_duration_s:
        from builder.analysis.transient import random_road_response

        history = random_road_response(model, road_class, speed_m_s, vdv_duration_s,
                                       seed=seed, tracks=tracks, assembly=assembly,
                                       sensors=[names.seat_x, names.seat_z])
        vdv = {"x": history.vdv[names.seat_x], "z": history.vdv[names.seat_z]}
    evaluation = comfort.evaluate_comfort({"x": seat["x"], "z": seat["z"]},
                                          comfort.COMFORT_SEAT, vdv)
    notes.append("lateral (y) seat vibration is not modelled")
    return SeatRide(names.seat, result.road_class, result.speed_m_s,
                    seat, floor, value, head, evaluation, s[names.travel].rms, tuple(notes),
                    float(vdv_duration_s) if vdv_duration_s else None, vdv)


# ---------------------------------------------------------------- bump --
@dataclass(frozen=True, eq=False)
class SeatBump:
    """Seat figures over one road event: per place (seat x, seat z, floor z, head z)
    VDV (m/s^1.75), weighted RMS over the record (m/s^2), peak weighted
    acceleration (m/s^2) and crest factor; peak cushion travel (m, absolute)."""

    seat_name: str
    speed_m_s: float
    shape: str
    height_m: float
    length_m: float
    duration_s: float
    vdv: dict[str, float]
    weighted_rms: dict[str, float]
    peak: dict[str, float]
    crest_factor: dict[str, float]
    travel_peak: float
    response: Any = field(repr=False, default=None)
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        return {"seat": self.seat_name, "speed_m_s": self.speed_m_s, "shape": self.shape,
                "height_m": self.height_m, "length_m": self.length_m,
                "duration_s": self.duration_s, "vdv": dict(self.vdv),
                "weighted_rms": dict(self.weighted_rms), "peak_weighted": dict(self.peak),
                "crest_factor": dict(self.crest_factor), "travel_peak_m": self.travel_peak,
                "notes": list(self.notes)}

    def rows(self) -> list[list[Any]]:
        out: list[list[Any]] = []
        for place in self.vdv:
            out.append([f"{place} VDV", self.vdv[place], "m/s^1.75"])
            out.append([f"{place} weighted RMS", self.weighted_rms[place], "m/s^2"])
            out.append([f"{place} peak weighted", self.peak[place], "m/s^2"])
            out.append([f"{place} crest factor", self.crest_factor[place], "-"])
        out.append(["cushion travel peak", self.travel_peak, "m"])
        return out

    def table(self) -> str:
        lines = [f"seat {self.seat_name}: half-sine {self.shape} {self.height_m * 1000:.0f} mm, "
                 f"{self.length_m:.2f} m long, at {self.speed_m_s * 3.6:.3g} km/h "
                 f"({self.duration_s:.1f} s record)", ""]
        lines += [f"{q:<30} {v:>10.4g} {u}" for q, v, u in self.rows()]
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)


def seat_bump(model: LinearModel, names: SeatNames, speed_m_s: float, height_m: float = 0.05,
              length_m: float = 0.5, *, shape: str = "bump", assembly: Assembly | None = None,
              rate_hz: float = 1000.0) -> SeatBump:
    """Seat figures for a road event (``shape`` bump, pothole or step of
    :func:`builder.analysis.transient.road_event`) crossed at ``speed_m_s`` (m/s).

    The response is the exact transient of
    :func:`builder.analysis.transient.event_response`, sampled at ``rate_hz``;
    accelerations are weighted by the causal ISO 2631-1 filters (x: Wd, z: Wk).
    """
    from builder.analysis.transient import event_response, road_event

    event = road_event(shape, height_m, length_m)
    places = {"seat x": names.seat_x, "seat z": names.seat_z, "floor z": names.floor_z}
    if names.head_z:
        places["head z"] = names.head_z
    res = event_response(model, event, speed_m_s, rate_hz=rate_hz, assembly=assembly,
                         sensors=[*places.values(), names.travel])
    vdv = {p: res.vdv[n] for p, n in places.items()}
    rms = {p: res.weighted_rms[n] for p, n in places.items()}
    crest = {p: res.crest_factor[n] for p, n in places.items()}
    peak = {p: crest[p] * rms[p] for p in places}
    return SeatBump(names.seat, float(speed_m_s), shape, float(height_m), float(length_m),
                    float(res.time_s[-1] - res.time_s[0]), vdv, rms, peak, crest,
                    float(res.peak[names.travel]), res, tuple(res.notes))


# -------------------------------------------------------------- tuning --
def with_cushion(assembly: Assembly, names: SeatNames, stiffness: float,
                 damping: float) -> Assembly:
    """The assembly with the vertical cushion stiffness (N/m) and damping (N s/m) replaced."""
    link = assembly.links[names.cushion]
    props = spring_props(link.props["axis"], stiffness, damping,
                         link.props.get("loss_factor", 0.0))
    links = dict(assembly.links)
    links[names.cushion] = replace(link, props=props)
    return assembly.replace(links=links)


@dataclass(frozen=True, eq=False)
class CushionTuning:
    """Result of :func:`tune_cushion` (SI): start and optimum cushion, seat z
    weighted RMS (m/s^2), RMS and ``travel_sigma`` x RMS cushion travel (m)
    against the stroke (m)."""

    road_class: str
    speed_m_s: float
    stroke_m: float
    travel_sigma: float
    start: dict[str, float]
    optimum: dict[str, float]
    converged: bool
    message: str
    evaluations: int
    notes: tuple[str, ...] = ()

    @property
    def within_stroke(self) -> bool:
        return self.optimum["travel_estimate_m"] <= self.stroke_m * (1 + 1e-6)

    def to_dict(self) -> dict:
        return {"road": self.road_class, "speed_m_s": self.speed_m_s, "stroke_m": self.stroke_m,
                "travel_sigma": self.travel_sigma, "start": dict(self.start),
                "optimum": dict(self.optimum), "within_stroke": self.within_stroke,
                "converged": self.converged, "message": self.message,
                "evaluations": self.evaluations, "notes": list(self.notes)}

    def rows(self) -> list[list[Any]]:
        keys = (("stiffness_N_per_m", "cushion stiffness", "N/m"),
                ("damping_N_s_per_m", "cushion damping", "N s/m"),
                ("seat_z_weighted_rms", "seat z weighted RMS (Wk)", "m/s^2"),
                ("travel_rms_m", "cushion travel RMS", "m"),
                ("travel_estimate_m", f"cushion travel {self.travel_sigma:g} x RMS", "m"))
        return [[label, self.start[k], self.optimum[k], unit] for k, label, unit in keys]

    def table(self) -> str:
        lines = [f"cushion tuning on a class {self.road_class} road at "
                 f"{self.speed_m_s * 3.6:.3g} km/h, stroke {self.stroke_m * 1000:.0f} mm", "",
                 f"{'':<32} {'start':>11} {'optimum':>11}"]
        lines += [f"{q:<32} {a:>11.4g} {b:>11.4g} {u}" for q, a, b, u in self.rows()]
        lines.append(f"travel within stroke: {'yes' if self.within_stroke else 'no'}; "
                     f"{self.message} ({self.evaluations} evaluations)")
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)


def tune_cushion(assembly: Assembly, names: SeatNames, road_class: str, speed_m_s: float,
                 stroke_m: float, *, travel_sigma: float = 3.0,
                 stiffness_bounds: tuple[float, float] = (1.0e4, 3.0e5),
                 damping_bounds: tuple[float, float] = (50.0, 5.0e3),
                 tracks: str = "coherent", points: int = 600) -> CushionTuning:
    """Cushion stiffness (N/m) and damping (N s/m) minimising the seat's vertical
    weighted RMS on an ISO 8608 road, subject to ``travel_sigma`` x RMS cushion
    travel <= ``stroke_m`` (the travel available from the static position, m).

    ``travel_sigma = 3`` is exceeded about 0.3 % of the time by Gaussian travel
    (common practice, no source for the choice). Search: SLSQP over the
    logarithms of stiffness and damping inside the bounds, started at the
    assembly's own cushion (clipped into the bounds). The full model is
    re-assembled at each evaluation.
    """
    from scipy.optimize import minimize

    if not math.isfinite(stroke_m) or stroke_m <= 0:
        raise InputError(f"stroke must be positive, got {stroke_m:g} m", Where(field="--stroke"))
    f = frequency_grid(points=points)
    cache: dict[tuple[float, float], tuple[float, float]] = {}

    def figures(z: NDArray) -> tuple[float, float]:
        key = (round(float(z[0]), 12), round(float(z[1]), 12))
        if key not in cache:
            k, c = math.exp(z[0]), math.exp(z[1])
            model = assemble(with_cushion(assembly, names, k, c))
            res = ride_response(model, road_class, speed_m_s, tracks=tracks, frequency_hz=f,
                                assembly=assembly, sensors=[names.seat_z, names.travel])
            cache[key] = (res.sensors[names.seat_z].weighted_rms,
                          res.sensors[names.travel].rms)
        return cache[key]

    link = assembly.links[names.cushion]
    k0 = float(np.clip(link.props["stiffness"], *stiffness_bounds))
    c0 = float(np.clip(link.props["damping"], *damping_bounds))
    z0 = np.log([k0, c0])
    aw0, tr0 = figures(z0)
    scale = aw0 if aw0 > 0 else 1.0
    result = minimize(
        lambda z: figures(z)[0] / scale, z0, method="SLSQP",
        bounds=[tuple(np.log(stiffness_bounds)), tuple(np.log(damping_bounds))],
        constraints=[{"type": "ineq",
                      "fun": lambda z: 1.0 - travel_sigma * figures(z)[1] / stroke_m}],
        options={"ftol": 1e-7, "maxiter": 100})
    aw, tr = figures(result.x)
    notes = []
    for value, (lo, hi), what in ((result.x[0], stiffness_bounds, "stiffness"),
                                  (result.x[1], damping_bounds, "damping")):
        if abs(value - math.log(lo)) < 1e-3:
            notes.append(f"the optimum {what} is at its lower bound {lo:g}: the bounds, "
                         "not the stroke, stop the search there")
        elif abs(value - math.log(hi)) < 1e-3:
            notes.append(f"the optimum {what} is at its upper bound {hi:g}")
    if travel_sigma * tr >= 0.999 * stroke_m:
        notes.append("the stroke limits the optimum (travel constraint active)")

    def entry(k: float, c: float, a: float, t: float) -> dict[str, float]:
        return {"stiffness_N_per_m": k, "damping_N_s_per_m": c, "seat_z_weighted_rms": a,
                "travel_rms_m": t, "travel_estimate_m": travel_sigma * t}

    return CushionTuning(str(road_class).upper(), float(speed_m_s), float(stroke_m),
                         float(travel_sigma), entry(k0, c0, aw0, tr0),
                         entry(math.exp(result.x[0]), math.exp(result.x[1]), aw, tr),
                         bool(result.success), str(result.message), len(cache), tuple(notes))
