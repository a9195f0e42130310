"""Time-response results: sensor histories with their ISO 2631-1 and contact-load
figures (:class:`TimeResponse`)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ...errors import InputError, Where
from ...formatting import percent, text_table
from .. import comfort
from ..evaluate import channel_figures
from ..ride import assembly_of, sensor_weighting


def time_response(model: Any, rows: NDArray, t: NDArray, r: NDArray, y: NDArray, *,
                  assembly: Any = None, speed_m_s: float = math.nan,
                  event: dict[str, Any] | None = None,
                  description: str = "road history") -> TimeResponse:
    """A :class:`TimeResponse` of sensor histories ``y`` (nt, len(rows)) at ``t`` (s) under
    road displacements ``r`` (nt, nr), with its ISO 2631-1 and load figures."""
    return result_of(model, assembly, np.asarray(rows), t, r, y, speed_m_s, event or {},
                   description, notes_of(model))


def notes_of(model: Any) -> list[str]:
    H = getattr(model, "H", None)
    dense = H.toarray() if hasattr(H, "toarray") else np.asarray(H if H is not None else 0.0)
    if np.any(dense != 0):
        return ["the model's hysteretic (loss-factor) damping has no time-domain form and is "
                "left out of this transient"]
    return []


def result_of(model: Any, assembly: Any, rows: NDArray, t: NDArray, r: NDArray, y: NDArray,
            v: float, event: dict, description: str, notes: list[str]) -> TimeResponse:
    asm = assembly_of(model, assembly)
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
        from ... import plots

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
