"""The model ladder judged on responses: which depth answers the question?

A question is a set of response figures (:class:`Question`): the RMS and
ISO 2631-1 weighted RMS of sensors on an ISO 8608 road (``ride``), the peak
and VDV of sensors over a road event (``bump``), and the peak magnitude of
an FRF and its frequency (``frf``). Every depth's figures are computed the
same way as the full model's and compared with them:

    error = (depth value - full value) / |full value|

(a figure the full model leaves at zero, below 1e-9 of the largest figure
of its kind and unit, is compared with that scale instead). A depth is
*within* a tolerance when every figure's error is; the *recommended* depth
is the one within with the fewest DOFs, ties broken by the smaller worst
error. Per figure, the simplest depth within for that figure alone is named
too.

A reduced model carries the full model's sensors through its expansion
``q_full = T q + G r`` (:func:`builder.reduce.transform`), so a sensor on a
condensed or tied body has a value at every depth: the static follow-up of
the kept DOFs. Such sensors are listed per depth (``expanded``).

The ride integrals of a depth start from the full model's final frequency
grid (merged with the depth's own mode clusters and refined to the same
tolerance), so a depth that reproduces the full model exactly shows errors
at round-off level rather than at the integration tolerance.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.sparse as sp

from ..assembly import Depth
from ..errors import InputError, Where
from ..formatting import count, number, percent, text_table
from ..linear import LinearModel

__all__ = ["Question", "DepthFigures", "ResponseLadder", "response_figures", "Judge", "Candidate",
           "response_ladder", "expanded_sensors", "depth_yaml", "DEFAULT_TOLERANCE"]

#: Tolerance used when figures are asked for without one (5 %, the usual
#: engineering margin of a model choice; common practice, no source).
DEFAULT_TOLERANCE = 0.05
_ZERO = 1e-9            # a full value below this fraction of its kind's scale is "zero"


@dataclass(frozen=True)
class Question:
    """The response figures that judge a depth.

    ``ride``: (ISO 8608 class, speed m/s, tracks, band (fmin, fmax) Hz) or None;
    ``bump``: (:class:`~builder.analysis.transient.RoadEvent`, speed m/s,
    duration s or None, rate Hz) or None; ``frf``: (input, sensor) pairs,
    with ``frf_band`` (Hz) and ``frf_points``; ``sensors``: the sensors of
    the ride and bump figures (None: all).
    """

    ride: tuple[str, float, str, tuple[float, float]] | None = None
    bump: tuple[Any, float, float | None, float] | None = None
    frf: tuple[tuple[str, str], ...] = ()
    frf_band: tuple[float, float] = (0.5, 50.0)
    frf_points: int = 400
    sensors: tuple[str, ...] | None = None
    rtol: float = 1e-3

    @property
    def asked(self) -> bool:
        """True when at least one response figure is asked for."""
        return self.ride is not None or self.bump is not None or bool(self.frf)

    def describe(self) -> str:
        """The question in words."""
        parts = []
        if self.ride is not None:
            cls, v, tracks, band = self.ride
            parts.append(f"ISO 8608 class {cls} road at {v * 3.6:.3g} km/h (tracks {tracks}, "
                         f"{band[0]:g} to {band[1]:g} Hz)")
        if self.bump is not None:
            event, v, _, _ = self.bump
            parts.append(f"{event.describe()} at {v * 3.6:.3g} km/h")
        if self.frf:
            parts.append(f"FRF peaks {self.frf_band[0]:g} to {self.frf_band[1]:g} Hz")
        return "; ".join(parts)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready description of what was asked (SI)."""
        out: dict[str, Any] = {}
        if self.ride is not None:
            cls, v, tracks, band = self.ride
            out["ride"] = {"road": cls, "speed_m_s": v, "tracks": tracks, "band_hz": list(band)}
        if self.bump is not None:
            event, v, duration, rate = self.bump
            out["bump"] = {"shape": event.shape, "height_m": event.height_m,
                           "length_m": event.length_m, "speed_m_s": v,
                           "duration_s": duration, "rate_hz": rate}
        if self.frf:
            out["frf"] = {"pairs": [f"{a}:{b}" for a, b in self.frf],
                          "band_hz": list(self.frf_band), "points": self.frf_points}
        if self.sensors is not None:
            out["sensors"] = list(self.sensors)
        return out


@dataclass(frozen=True)
class _Figures:
    values: dict[str, float]
    units: dict[str, str]
    ride_grid: np.ndarray | None = None
    edges: tuple[str, ...] = ()         # FRF peaks found at a band edge


@dataclass(frozen=True, eq=False)
class DepthFigures:
    """One depth judged: its figures, their errors against the full model, and the verdict.

    ``errors`` are relative (0.05 is 5 %); ``expanded`` the sensors read
    through the depth's expansion (on condensed or tied DOFs); ``within`` is
    None when no tolerance applies; ``entry`` the depth as a ``depths:``
    YAML entry when lumpgraph built it (``source`` says where it came from).
    """

    name: str
    dofs: tuple[str, ...]
    values: dict[str, float]
    errors: dict[str, float]
    expanded: tuple[str, ...] = ()
    within: bool | None = None
    source: str = "file"
    entry: str = ""
    description: str = ""

    @property
    def worst(self) -> tuple[str, float]:
        """The figure with the largest |error|, and that error."""
        if not self.errors:
            return "", 0.0
        key = max(self.errors, key=lambda k: abs(self.errors[k]))
        return key, self.errors[key]

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready figures of the depth."""
        out: dict[str, Any] = {"name": self.name, "dofs": len(self.dofs),
                               "dof_labels": list(self.dofs), "values": dict(self.values),
                               "errors": dict(self.errors), "within": self.within,
                               "worst_error": abs(self.worst[1]) if self.errors else None,
                               "expanded_sensors": list(self.expanded), "source": self.source}
        if self.entry:
            out["entry"] = self.entry
        if self.description:
            out["description"] = self.description
        return out


@dataclass(frozen=True, eq=False)
class ResponseLadder:
    """Every depth's response figures against the full model's (see the module notes)."""

    model_name: str
    full_dofs: int
    question: Question
    full: dict[str, float]
    units: dict[str, str]
    depths: tuple[DepthFigures, ...]
    tolerance: float | None
    recommended: str | None
    simplest: dict[str, str | None]
    notes: tuple[str, ...] = ()
    searched: bool = False

    def depth(self, name: str) -> DepthFigures:
        """The figures of one depth by name."""
        for d in self.depths:
            if d.name == name:
                return d
        raise InputError(f'no depth "{name}" in the ladder', Where(field="--depth"))

    def to_dict(self) -> dict[str, Any]:
        """``ladder --json`` with response figures (see docs/format.md)."""
        out: dict[str, Any] = {
            "model": self.model_name, "question": self.question.to_dict(),
            "full": {"dofs": self.full_dofs, "values": dict(self.full),
                     "units": dict(self.units)},
            "tolerance": self.tolerance, "depths": [d.to_dict() for d in self.depths],
            "recommended": self.recommended, "simplest": dict(self.simplest),
            "searched": self.searched, "notes": list(self.notes)}
        rec = next((d for d in self.depths if d.name == self.recommended), None)
        if rec is not None and rec.entry:
            out["recommended_entry"] = rec.entry
        return out

    def _figure_rows(self, depths: Sequence[DepthFigures]) -> list[list[Any]]:
        rows = []
        for key in self.full:
            row: list[Any] = [key, f"{number(self.full[key], '.4g')} {self.units[key]}"]
            row += [percent(d.errors[key], 2, signed=True) for d in depths]
            rows.append(row)
        return rows

    def table(self) -> str:
        """The verdict per depth, the errors per figure, and the recommendation."""
        tol = self.tolerance
        lines = [f"{self.model_name}: {count(self.full_dofs, 'DOF')} in the full model; "
                 f"{self.question.describe()}"]
        if tol is not None:
            lines.append(f"tolerance {percent(tol, 1)} on every figure; a depth is within "
                         "when all its errors are")
        lines.append("")
        rows = []
        for d in self.depths:
            key, err = d.worst
            verdict = "-" if d.within is None else ("within" if d.within else "not within")
            rows.append([d.name, len(d.dofs), f"{percent(abs(err), 2)} ({key})", verdict,
                         d.source])
        lines.append(text_table(["depth", "DOFs", "worst error (figure)", "verdict", "from"],
                                rows, align="lrlll"))
        shown = list(self.depths)
        if len(shown) > 6:
            shown = [d for d in shown if d.name == self.recommended] or shown[-1:]
        lines += ["", "error against the full model (depth - full) / full:",
                  text_table(["figure", "full model", *[d.name for d in shown]],
                             self._figure_rows(shown), align="lr" + "r" * len(shown))]
        if tol is not None:
            lines += ["", f"simplest depth within {percent(tol, 1)} for each figure:"]
            for key, name in self.simplest.items():
                lines.append(f"  {key}: {name or 'none (only the full model)'}")
            lines.append("")
            if self.recommended is not None:
                rec = self.depth(self.recommended)
                worst = (f"worst {percent(abs(rec.worst[1]), 2)}, {rec.worst[0]}"
                         if rec.worst[1] else "no error")
                lines.append(f"recommended: {rec.name} ({count(len(rec.dofs), 'DOF')}), the "
                             f"simplest depth within {percent(tol, 1)} for every figure "
                             f"({worst})")
                if len(rec.dofs) >= self.full_dofs:
                    lines.append("  (it keeps every DOF: no simpler depth judged here answers "
                                 "this question; try --propose)")
                if rec.entry:
                    lines += ["paste into the file's depths: section:", rec.entry]
            else:
                lines.append(f"recommended: none of these depths is within {percent(tol, 1)} "
                             "for every figure; use the full model")
        expanded = [d for d in shown if d.expanded]
        if expanded:
            lines += ["", "sensors on condensed or tied DOFs, read through the depth's "
                      "expansion (the condensed DOFs following the kept ones statically, plus the "
                      "depth's fixed-interface modes where it has them):"]
            lines += [f"  {d.name}: {', '.join(d.expanded)}" for d in expanded]
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)

    def plot(self, path: str | None = None) -> Any:
        """|error| against DOF count: one marker per depth and figure (a colour per
        figure), the worst figure of the best depth of each size as a line, the
        tolerance and the recommended depth drawn.

        Returns the matplotlib figure; writes a PNG to ``path`` when given.
        """
        from matplotlib.ticker import MaxNLocator

        from .. import plots

        fig, axes = plots.figure(1, height=4.2)
        ax = axes[0]
        floor = 1e-6
        for k, key in enumerate(self.full):
            ax.semilogy([len(d.dofs) for d in self.depths],
                        [max(abs(d.errors[key]), floor) for d in self.depths], "o",
                        markersize=4, alpha=0.75, label=key, color=f"C{k % 10}")
        best: dict[int, float] = {}
        for d in self.depths:
            worst = max(abs(d.worst[1]), floor)
            best[len(d.dofs)] = min(best.get(len(d.dofs), math.inf), worst)
        if best:
            sizes = sorted(best)
            ax.semilogy(sizes, [best[n] for n in sizes], color="k", linewidth=1.2,
                        label="worst figure, best depth of each size")
        if self.tolerance is not None:
            ax.axhline(self.tolerance, color="k", linestyle="--", linewidth=1.0,
                       label=f"tolerance {percent(self.tolerance, 1)}")
        if self.recommended is not None:
            rec = self.depth(self.recommended)
            ax.axvline(len(rec.dofs), color="tab:green", alpha=0.35, linewidth=6,
                       label=f"recommended: {rec.name}")
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))
        plots.style(ax, xlabel="DOFs of the depth", ylabel="|error| against the full model")
        ax.legend(fontsize=7, loc="best")
        plots.finish(fig, f"{self.model_name}: depths judged on responses")
        if path is not None:
            plots.save_png(fig, path)
        return fig


# ------------------------------------------------------------ figures ----

def _sensor_names(model: LinearModel, question: Question) -> list[str]:
    if question.sensors is None:
        return list(model.sensors)
    for s in question.sensors:
        if s not in model.sensors:
            raise InputError(f'unknown sensor "{s}" (sensors: {", ".join(model.sensors)})',
                             Where(field="--sensors"))
    return list(question.sensors)


def _force_input(model: LinearModel, label: str) -> Any:
    """A DOF label of the full model as a force input of ``model`` (through its expansion)."""
    if model.parent is None or label in model.inputs:
        return label
    full = model.parent
    vec = np.zeros(full.n)
    vec[full.dof_index(label)] = 1.0
    unit = "N m" if label.rsplit(".", 1)[-1] in ("rx", "ry", "rz") else "N"
    return (label, np.asarray(model.expansion.T @ vec).ravel(), unit)


def _static_correction(model: LinearModel, label: str) -> np.ndarray | None:
    """The part of the full model's static response to a unit force on ``label`` that
    the depth's expansion E cannot give: g = K^-1 e - E (E^T K E)^-1 E^T e (zero when
    the force acts on a kept DOF; None when the full stiffness is singular)."""
    from scipy.sparse.linalg import splu

    full = model.parent
    e = np.zeros(full.n)
    e[full.dof_index(label)] = 1.0
    try:
        exact = splu(sp.csc_matrix(full.K)).solve(e)
        reduced = np.linalg.solve(model.K.toarray(), np.asarray(model.expansion.T @ e).ravel())
    except (RuntimeError, np.linalg.LinAlgError):
        return None
    g = exact - np.asarray(model.expansion @ reduced).ravel()
    return g if np.all(np.isfinite(g)) else None


def _frf(model: LinearModel, source: str, sensor: str, f: np.ndarray) -> np.ndarray:
    """Complex FRF (nf,) from ``source`` (a road input or a full-model DOF) to ``sensor``.

    A force on a DOF a depth does not keep enters through the expansion with
    its static correction g (as a road input on a condensed DOF does through
    G): q_full = E q + g u, the depth loaded by E^T (e - (i w C + i H) g)
    (E^T K g = 0) and the sensor reading g directly; its inertia is left out,
    as in any Guyan reduction. At zero frequency this is the full model's
    static response exactly.
    """
    from .frf import frequency_response

    inp = _force_input(model, source)
    if isinstance(inp, str):
        return frequency_response(model, f, inputs=[inp], sensors=[sensor]).H[:, 0, 0]
    g = _static_correction(model, source)
    if g is None or not np.any(g):
        return frequency_response(model, f, inputs=[inp], sensors=[sensor]).H[:, 0, 0]
    full = model.parent
    Et = model.expansion.T
    cg = np.asarray(Et @ (full.C @ g)).ravel()
    hg = np.asarray(Et @ (full.H @ g)).ravel()
    h = frequency_response(model, f, inputs=[inp, ("damping", cg), ("loss", hg)],
                           sensors=[sensor]).H[:, 0, :]
    row = full.sensors.index(sensor)
    w = 2 * np.pi * np.asarray(f, dtype=float)
    direct = (float((full.Sd @ g)[row]) + 1j * w * float((full.Sv @ g)[row])
              + 1j * float((full.Sh @ g)[row]))
    return h[:, 0] - 1j * w * h[:, 1] - 1j * h[:, 2] + direct


def _frf_peak(model: LinearModel, source: str, sensor: str, band: tuple[float, float],
              points: int) -> tuple[float, float]:
    """Largest |FRF| from ``source`` to ``sensor`` in the band, and its frequency (Hz):
    a log grid merged with clusters at the model's modes, then a bounded search."""
    from scipy.optimize import minimize_scalar

    from .frf import SPARSE_LIMIT, resolving_grid, system_poles

    poles = system_poles(model) if model.n <= SPARSE_LIMIT else np.zeros(0, complex)
    f = np.union1d(np.geomspace(band[0], band[1], points), resolving_grid(band, 2, poles))
    mag = np.abs(_frf(model, source, sensor, f))
    k = int(np.argmax(mag))
    lo, hi = f[max(k - 1, 0)], f[min(k + 1, f.size - 1)]
    if hi > lo:
        def neg(x: float) -> float:
            return -float(np.abs(_frf(model, source, sensor, np.array([x]))[0]))
        res = minimize_scalar(neg, bounds=(lo, hi), method="bounded",
                              options={"xatol": 1e-9 * hi})
        if -res.fun > mag[k]:
            return float(-res.fun), float(res.x)
    return float(mag[k]), float(f[k])


def response_figures(model: LinearModel, question: Question, *,
                     ride_grid: np.ndarray | None = None) -> _Figures:
    """The figures ``question`` asks for, of ``model`` (a full model or a depth).

    Keys are ``SENSOR.FIGURE`` with the figure names of ``ride --json``
    (``rms``, ``weighted_rms``) and ``bump --json`` (``peak``, ``vdv``), and
    ``INPUT:SENSOR.frf_peak`` / ``.frf_peak_hz`` for FRFs. ``ride_grid``
    (Hz) starts the ride integrals (see the module notes).
    """
    values: dict[str, float] = {}
    units: dict[str, str] = {}
    names = _sensor_names(model, question)
    grid = None
    edges = []
    if question.ride is not None:
        from .ride import ride_response

        cls, v, tracks, band = question.ride
        result = ride_response(model, cls, v, tracks=tracks, band=band,
                               frequency_hz=ride_grid, sensors=names, rtol=question.rtol)
        grid = result.frequency_hz
        for name, s in result.sensors.items():
            values[f"{name}.rms"], units[f"{name}.rms"] = s.rms, s.unit
            if s.weighted_rms is not None:
                values[f"{name}.weighted_rms"] = s.weighted_rms
                units[f"{name}.weighted_rms"] = s.unit
    if question.bump is not None:
        from .transient import event_response

        event, v, duration, rate = question.bump
        tr = event_response(model, event, v, duration, rate, sensors=names)
        peak = tr.peak
        for name, unit in zip(tr.sensors, tr.units, strict=True):
            values[f"{name}.peak"], units[f"{name}.peak"] = peak[name], unit
            if name in tr.vdv:
                values[f"{name}.vdv"] = tr.vdv[name]
                units[f"{name}.vdv"] = tr._vdv_unit(name)
    for source, sensor in question.frf:
        model.sensor_index(sensor)
        peak, at = _frf_peak(model, source, sensor, question.frf_band, question.frf_points)
        key = f"{source}:{sensor}"
        unit = model.sensor_units[model.sensors.index(sensor)]
        per = "m" if source in model.inputs else (
            "N m" if source.rsplit(".", 1)[-1] in ("rx", "ry", "rz") else "N")
        values[f"{key}.frf_peak"], units[f"{key}.frf_peak"] = peak, f"{unit} per {per}"
        values[f"{key}.frf_peak_hz"], units[f"{key}.frf_peak_hz"] = at, "Hz"
        if min(abs(at - question.frf_band[0]), abs(at - question.frf_band[1])) <= 1e-9 * at:
            edges.append(key)
    return _Figures(values, units, grid, tuple(edges))


def _errors(values: dict[str, float], full: dict[str, float],
            units: dict[str, str]) -> dict[str, float]:
    scale: dict[tuple[str, str], float] = {}
    for key, value in full.items():
        kind = (key.rsplit(".", 1)[-1], units[key])
        scale[kind] = max(scale.get(kind, 0.0), abs(value))
    out = {}
    for key, ref in full.items():
        floor = _ZERO * scale[(key.rsplit(".", 1)[-1], units[key])]
        denominator = max(abs(ref), floor)
        diff = values[key] - ref
        out[key] = 0.0 if diff == 0 else (diff / denominator if denominator > 0 else math.inf)
    return out


def expanded_sensors(depth_model: LinearModel, sensors: Sequence[str]) -> tuple[str, ...]:
    """The sensors whose full-model output reads a DOF the depth does not keep as itself
    (condensed, tied, or represented by modal coordinates)."""
    full = depth_model.parent
    if full is None:
        return ()
    kept = set(depth_model.dofs)
    reads = abs(full.Sd) + abs(full.Sv) + abs(full.Sa) + abs(full.Sh)
    reads = reads.tocsr()
    out = []
    for s in sensors:
        row = reads[[full.sensors.index(s)]]
        if any(full.dofs[j] not in kept for j in row.indices):
            out.append(s)
    return tuple(out)


def _figure_sensors(question: Question, model: LinearModel) -> list[str]:
    names = _sensor_names(model, question) if (question.ride or question.bump) else []
    return list(dict.fromkeys(names + [s for _, s in question.frf]))


def depth_yaml(depth: Depth, body_dofs: dict[str, Sequence[str]] | None = None) -> str:
    """A depth as one entry of a ``depths:`` section (indented two spaces), which loads
    back to the same depth. With ``body_dofs`` (body -> its DOF names) a body whose
    every DOF is kept is written ``BODY.*``."""
    import json

    def seq(items: Sequence[str]) -> str:
        return "[" + ", ".join(x if _plain(x) else json.dumps(x) for x in items) + "]"

    keep = list(depth.keep)
    for body, dofs in (body_dofs or {}).items():
        labels = [f"{body}.{d}" for d in dofs]
        if len(labels) > 1 and all(x in keep for x in labels):
            at = keep.index(labels[0])
            keep = [x for x in keep if x not in labels]
            keep.insert(at, f"{body}.*")
    parts = [f"keep: {seq(keep)}"]
    if depth.tie:
        parts.append("tie: [" + ", ".join(seq(g) for g in depth.tie) + "]")
    if depth.modes:
        parts.append("modes: {" + ", ".join(f"{json.dumps(p)}: {n}" for p, n in depth.modes)
                     + "}")
    body = "\n".join(f"    {p}" for p in parts)
    return f"  {depth.name}:\n{body}"


def _plain(text: str) -> bool:
    import re

    return re.fullmatch(r"[A-Za-z_][A-Za-z0-9_.\-]*", text) is not None


def _judge(name: str, reduced: LinearModel, values: _Figures, full: _Figures,
           tolerance: float | None, sensors: Sequence[str], source: str, entry: str,
           description: str) -> DepthFigures:
    errors = _errors(values.values, full.values, full.units)
    within = None if tolerance is None else all(abs(e) <= tolerance for e in errors.values())
    return DepthFigures(name, tuple(reduced.dofs), dict(values.values), errors,
                        expanded_sensors(reduced, sensors), within, source, entry, description)


def _verdict(depths: Sequence[DepthFigures], keys: Sequence[str],
             tolerance: float | None) -> tuple[str | None, dict[str, str | None]]:
    if tolerance is None:
        return None, {}

    def rank(d: DepthFigures) -> tuple[int, float]:
        return len(d.dofs), abs(d.worst[1])

    within = sorted((d for d in depths if d.within), key=rank)
    simplest: dict[str, str | None] = {}
    for key in keys:
        ok = sorted((d for d in depths if abs(d.errors[key]) <= tolerance),
                    key=lambda d: (len(d.dofs), abs(d.errors[key])))
        simplest[key] = ok[0].name if ok else None
    return (within[0].name if within else None), simplest


@dataclass(frozen=True)
class Candidate:
    """A depth to judge: the Depth, where it came from, and its words."""

    depth: Depth
    source: str = "file"
    description: str = ""
    dofs: int = 0
    entry: str = ""
    extra: dict[str, Any] = field(default_factory=dict)


class Judge:
    """The full model's figures, computed once; :meth:`judge` one depth against them."""

    def __init__(self, model: LinearModel, question: Question,
                 tolerance: float | None = DEFAULT_TOLERANCE,
                 reducer: Callable[[LinearModel, Depth], LinearModel] | None = None,
                 progress: Callable[[str], None] | None = None):
        from ..reduce import reduce_to_depth

        if not question.asked:
            raise InputError("give at least one response: --ride, --bump or --frf",
                             Where(field="ladder"))
        self.model = model.parent if model.parent is not None else model
        self.question = question
        self.tolerance = tolerance
        self.reducer = reducer or reduce_to_depth
        self.say = progress or (lambda _text: None)
        self.notes: list[str] = []
        self.say(f"full model ({count(self.model.n, 'DOF')})")
        self.full = response_figures(self.model, question)
        self.sensors = _figure_sensors(question, self.model)
        self._edge(self.full, "the full model")

    def judge(self, cand: Candidate) -> DepthFigures | None:
        """One depth's figures and errors; None (with a note) for a depth whose response
        has no figures (e.g. an undamped mode the depth leaves) or a proposed depth that
        cannot be reduced (a file's depth that cannot be reduced raises)."""
        depth = cand.depth
        try:
            reduced = self.reducer(self.model, depth)
        except InputError as err:
            if cand.source == "file":
                raise
            self.notes.append(f"candidate {depth.name} left out: {err.reason}")
            return None
        self.say(f"{depth.name} ({count(reduced.n, 'DOF')})")
        try:
            figures = response_figures(reduced, self.question, ride_grid=self.full.ride_grid)
        except InputError as err:
            what = "depth" if cand.source == "file" else "candidate"
            self.notes.append(f"{what} {depth.name} left out: its response has no figures "
                              f"({err.reason})")
            return None
        self._edge(figures, depth.name)
        return _judge(depth.name, reduced, figures, self.full, self.tolerance, self.sensors,
                      cand.source, cand.entry, cand.description)

    def _edge(self, figures: _Figures, who: str) -> None:
        if figures.edges:
            band = self.question.frf_band
            self.notes.append(f"{who}: the FRF {', '.join(figures.edges)} is largest at an "
                              f"edge of the band {band[0]:g} to {band[1]:g} Hz (still rising "
                              "there): its peak and peak frequency are the band's, not a "
                              "resonance's")

    def result(self, depths: Sequence[DepthFigures], search: bool = False,
               notes: Sequence[str] = ()) -> ResponseLadder:
        """The ladder of the judged depths, with the verdict."""
        notes = [*self.notes, *notes]
        tol = self.tolerance
        if search and tol is not None and not any(d.within for d in depths):
            notes.append(f"no candidate is within {percent(tol, 1)}: the full model is "
                         "needed for this question")
        recommended, simplest = _verdict(depths, list(self.full.values), tol)
        return ResponseLadder(getattr(self.model, "name", ""), self.model.n, self.question,
                              self.full.values, self.full.units, tuple(depths), tol,
                              recommended, simplest, tuple(notes), search)


def response_ladder(model: LinearModel, question: Question,
                    depths: dict[str, Depth] | Sequence[Candidate] | None = None, *,
                    tolerance: float | None = DEFAULT_TOLERANCE,
                    reducer: Callable[[LinearModel, Depth], LinearModel] | None = None,
                    progress: Callable[[str], None] | None = None) -> ResponseLadder:
    """Judge depths on the response figures of ``question`` against the full model.

    ``depths``: the file's (default), a mapping, or :class:`Candidate` s.
    ``tolerance``: relative (0.05 is 5 %), None for errors only.
    """
    full = model.parent if model.parent is not None else model
    if depths is None:
        depths = (full.assembly.depths if full.assembly is not None else {}) or {}
    candidates = ([Candidate(d) for d in depths.values()] if isinstance(depths, dict)
                  else list(depths))
    if not candidates:
        raise InputError("the file has no depths to judge: add a depths: section, or use "
                         "--propose", Where(field="depths"))
    judge = Judge(full, question, tolerance, reducer, progress)
    judged = [j for j in (judge.judge(c) for c in candidates) if j is not None]
    return judge.result(judged)
