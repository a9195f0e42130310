"""ISO 2631-1 evaluation of acceleration time histories, recorded or simulated.

One function, :func:`channel_figures`, turns a sampled acceleration into the
figures of ISO 2631-1:1997 clause 6, and both the measured records
(:func:`evaluate_record`, ``lumpgraph evaluate``) and the simulated ones
(:mod:`.transient`, ``lumpgraph bump``) go through it, so a test and the
model of it are evaluated alike:

- the frequency weighting (Wk, Wd, We, Wc, Wj or Wf, or none), applied by
  the causal filter of :func:`.comfort.weighted_time_history` (``method="iir"``,
  the Annex A definition discretised by the bilinear transform);
- the weighted RMS ``a_w`` over the record (clause 6.1), the peak of the
  weighted signal and the crest factor (peak over ``a_w``, clause 6.2);
- the running RMS with 1 s linear integration and its maximum, the MTVV
  (clause 6.3.1), and the vibration dose value ``VDV = (integral a_w^4 dt)^(1/4)``
  (clause 6.3.2);
- the check of clause 6.3.3 that tells when the basic method (the weighted
  RMS) is not sufficient: a crest factor above 9 calls for the additional
  methods, and ``MTVV / a_w > 1.5`` or ``VDV / (a_w T^(1/4)) > 1.75`` means the
  basic method underestimates the vibration and the additional figure
  should be reported beside it (the limits as the standard states them;
  from memory).

A measured channel has its mean removed first (a DC-coupled accelerometer
sees gravity; the weighting's 0.4 Hz high-pass would remove it in the steady
state, but a causal filter started from rest would ring on the step); a
simulated history starts at rest in static equilibrium, its true zero, and
is taken as it is.

Channels at one point, named ``PREFIX_x``, ``PREFIX_y``, ``PREFIX_z`` (and
``PREFIX_rx`` ...), form a point; at a person (a prefix that starts with
``seat``, or an interface given for the prefix) the point gets the vector sum
of clause 8.2 with the multipliers of its interface and the comfort words
of Annex C (:data:`.comfort.INTERFACES`), and at a seat surface also the
health vector sum (clause 7.2.3) and the total VDV
``(sum (k VDV)^4)^(1/4)`` (from memory). The one-third-octave band spectrum
of every channel (band centres ``10^(k/10)`` Hz, unweighted and weighted
band RMS from the record's discrete Fourier transform, the weighting exact
at every frequency) shows where the vibration lies.

These are screening figures (see :data:`.comfort.CAUTION`).
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import InputError, Where
from . import comfort

__all__ = ["BASIC_METHOD_LIMITS", "WEIGHTING_CHOICES", "ChannelFigures", "ChannelTrace",
           "PointFigures", "BandSpectrum", "RecordEvaluation", "channel_figures",
           "default_weighting", "band_spectrum", "third_octave_centres", "evaluate_record",
           "weighting_band"]

#: Limits of ISO 2631-1 clause 6.3.3 beyond which the basic method is not sufficient.
BASIC_METHOD_LIMITS = {"crest_factor": 9.0, "mtvv_ratio": 1.5, "vdv_ratio": 1.75}
#: Weightings a channel may take ("none": the unweighted acceleration).
WEIGHTING_CHOICES = ("Wk", "Wd", "We", "Wc", "Wj", "Wf", "none")
_AXES = ("x", "y", "z", "rx", "ry", "rz")
_SUFFIX = re.compile(r"^(?P<prefix>.+)_(?P<axis>r?[xyz])$")
_TRACE_POINTS = 2000


def weighting_band(weighting: str) -> tuple[float, float]:
    """The frequency range (Hz) the standard evaluates a weighting over: 0.1 to
    0.5 Hz for motion sickness (Wf), 0.5 to 80 Hz for the others."""
    return (0.1, 0.5) if weighting == "Wf" else (0.5, 80.0)


def default_weighting(name: str, unit: str = "m/s^2") -> str:
    """The weighting of a channel by its name: ``_z`` Wk, ``_x``/``_y`` Wd, a
    rotation (``_rx`` ..., or a rad/s^2 unit) We; "none" otherwise."""
    m = _SUFFIX.match(name)
    axis = m.group("axis") if m else ""
    if unit.startswith("rad") or axis.startswith("r"):
        return "We"
    return {"z": "Wk", "x": "Wd", "y": "Wd"}.get(axis, "none")


def _check_weighting(weighting: str, where: Where) -> str:
    for choice in WEIGHTING_CHOICES:
        if weighting.strip().lower() == choice.lower():
            return choice
    raise InputError(f'unknown weighting "{weighting}": choose {", ".join(WEIGHTING_CHOICES)}',
                     where)


# ------------------------------------------------------------- channels --

@dataclass(frozen=True)
class ChannelFigures:
    """ISO 2631-1 figures of one channel (SI; m/s^2, or rad/s^2 for We).

    ``rms`` and ``peak`` are of the acceleration as measured (mean removed
    when ``mean`` is not None); ``weighted_rms``, ``weighted_peak``,
    ``crest_factor``, ``vdv`` (m/s^1.75), ``mtvv`` (NaN when the record is
    shorter than 1 s) and ``mtvv_time_s`` (end of the 1 s window) of the
    weighted one. ``person`` is the interface of the point the channel is at
    ("" for none) and ``reactions`` the Annex C words of its own contribution.
    """

    name: str
    unit: str
    weighting: str
    rate_hz: float
    samples: int
    rms: float
    peak: float
    weighted_rms: float
    weighted_peak: float
    crest_factor: float
    vdv: float
    mtvv: float
    mtvv_time_s: float
    mean: float | None = None
    person: str = ""
    reactions: tuple[str, ...] = ()
    clipped: bool = False

    @property
    def duration_s(self) -> float:
        return self.samples / self.rate_hz

    @property
    def mtvv_ratio(self) -> float:
        """MTVV over the weighted RMS (clause 6.3.3, equation 9)."""
        return self.mtvv / self.weighted_rms if self.weighted_rms > 0 else math.nan

    @property
    def vdv_ratio(self) -> float:
        """VDV over ``a_w T^(1/4)`` (clause 6.3.3, equation 10)."""
        scale = self.weighted_rms * self.duration_s ** 0.25
        return self.vdv / scale if scale > 0 else math.nan

    @property
    def basic_method_reasons(self) -> tuple[str, ...]:
        """Why the basic method (weighted RMS alone) is not sufficient; empty when it is."""
        out = []
        limits = BASIC_METHOD_LIMITS
        if self.crest_factor > limits["crest_factor"]:
            out.append(f"crest factor {self.crest_factor:.3g} above {limits['crest_factor']:g}")
        if self.mtvv_ratio > limits["mtvv_ratio"]:
            out.append(f"MTVV/a_w {self.mtvv_ratio:.3g} above {limits['mtvv_ratio']:g}")
        if self.vdv_ratio > limits["vdv_ratio"]:
            out.append(f"VDV/(a_w T^1/4) {self.vdv_ratio:.3g} above {limits['vdv_ratio']:g}")
        return tuple(out)

    @property
    def vdv_unit(self) -> str:
        return "rad/s^1.75" if self.unit.startswith("rad") else "m/s^1.75"

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready figures (the format's ``evaluate --json`` keys and more)."""
        out: dict[str, Any] = {
            "unit": self.unit, "weighting": self.weighting, "weighted_rms": self.weighted_rms,
            "vdv": self.vdv, "vdv_unit": self.vdv_unit, "mtvv": self.mtvv,
            "mtvv_time_s": self.mtvv_time_s, "crest_factor": self.crest_factor,
            "weighted_peak": self.weighted_peak, "rms": self.rms, "peak": self.peak,
            "mtvv_ratio": self.mtvv_ratio, "vdv_ratio": self.vdv_ratio,
            "basic_method_sufficient": not self.basic_method_reasons,
            "basic_method_reasons": list(self.basic_method_reasons),
            "duration_s": self.duration_s, "samples": self.samples, "clipped": self.clipped}
        if self.mean is not None:
            out["mean_removed"] = self.mean
        if self.person:
            out["person"] = self.person
            out["comfort"] = list(self.reactions)
        return out


@dataclass(frozen=True, eq=False)
class ChannelTrace:
    """A channel's histories for a picture, reduced to at most a few thousand points:
    the min and max of the acceleration and of the weighted one in each time bucket,
    and the running RMS at the bucket ends (s, SI units)."""

    time_s: NDArray
    low: NDArray
    high: NDArray
    weighted_low: NDArray
    weighted_high: NDArray
    running_time_s: NDArray
    running_rms: NDArray


def _envelope(x: NDArray, buckets: int) -> tuple[NDArray, NDArray, NDArray]:
    """(bucket index of the first sample, min, max) over ``buckets`` equal buckets."""
    n = x.size
    if n <= 2 * buckets:
        return np.arange(n), x.copy(), x.copy()
    edges = np.linspace(0, n, buckets + 1).astype(int)
    return edges[:-1], np.minimum.reduceat(x, edges[:-1]), np.maximum.reduceat(x, edges[:-1])


def _trace(a: NDArray, aw: NDArray, running: NDArray, rate: float, start: float,
           window: int) -> ChannelTrace:
    first, low, high = _envelope(a, _TRACE_POINTS)
    _, wlow, whigh = _envelope(aw, _TRACE_POINTS)
    step = max(1, running.size // _TRACE_POINTS)
    rt = (np.arange(0, running.size, step) + window - 1) / rate + start
    return ChannelTrace(first / rate + start, low, high, wlow, whigh, rt, running[::step].copy())


def channel_figures(a: ArrayLike, rate_hz: float, weighting: str = "Wk", *, name: str = "",
                    unit: str = "m/s^2", remove_mean: bool = True, start_s: float = 0.0,
                    trace: bool = False) -> tuple[ChannelFigures, ChannelTrace | None]:
    """ISO 2631-1 figures of one acceleration history ``a`` (SI) sampled at ``rate_hz``.

    ``weighting`` one of :data:`WEIGHTING_CHOICES`; ``remove_mean`` for a
    measured channel (see the module notes). With ``trace`` also the reduced
    histories for a picture.
    """
    rate = float(rate_hz)
    if not math.isfinite(rate) or rate <= 0:
        raise InputError(f"the rate must be a positive frequency, not {rate_hz!r} Hz",
                         Where(field="rate"))
    x = np.asarray(a, dtype=float).reshape(-1)
    if x.size < 4:
        raise InputError(f"{name or 'a channel'} needs at least four samples",
                         Where(field="samples"))
    weighting = _check_weighting(weighting, Where(field="weighting"))
    x = np.array(x, dtype=float, order="C")           # a contiguous copy, changed in place
    mean = float(np.mean(x)) if remove_mean else None
    if mean is not None:
        x -= mean
    if weighting == "none":
        aw = x
    else:
        aw = comfort.weighted_at_rate(x, rate, weighting)
    window = int(round(comfort.RUNNING_RMS_S * rate))
    running = comfort.running_rms(aw, rate)
    peak_w = float(max(aw.max(), -aw.min()))
    squares = aw * aw
    aw_rms = math.sqrt(float(np.mean(squares)))
    np.multiply(squares, squares, out=squares)        # a_w^4, for the dose
    dose = float(np.sum(squares) / rate) ** 0.25
    del squares
    if running.size:
        k = int(np.argmax(running))
        mtvv, mtvv_time = float(running[k]), start_s + (k + window) / rate
    else:
        mtvv, mtvv_time = math.nan, math.nan
    figures = ChannelFigures(
        name=name, unit=unit, weighting=weighting, rate_hz=rate, samples=int(x.size),
        rms=math.sqrt(float(np.dot(x, x)) / x.size), peak=float(max(x.max(), -x.min())),
        weighted_rms=aw_rms, weighted_peak=peak_w,
        crest_factor=peak_w / aw_rms if aw_rms > 0 else 0.0,
        vdv=dose, mtvv=mtvv, mtvv_time_s=mtvv_time, mean=mean)
    return figures, (_trace(x, aw, running, rate, start_s, window) if trace else None)


# ---------------------------------------------------------------- bands --

def third_octave_centres(fmin: float, fmax: float) -> NDArray[np.float64]:
    """Exact one-third-octave band centres ``10^(k/10)`` Hz (base-ten bands, as the
    standard's tables) from the band holding ``fmin`` to the one holding ``fmax``."""
    k0 = math.floor(10 * math.log10(fmin) + 0.5)
    k1 = math.floor(10 * math.log10(fmax) + 0.5)
    return 10.0 ** (np.arange(k0, k1 + 1) / 10.0)


def _nominal(f: float) -> str:
    """The nominal (ISO 266 style) label of an exact band centre."""
    preferred = (1.0, 1.25, 1.6, 2.0, 2.5, 3.15, 4.0, 5.0, 6.3, 8.0)
    decade = math.floor(math.log10(f) + 1e-9)
    mantissa = f / 10**decade
    near = min(preferred + (10.0,), key=lambda p: abs(math.log(mantissa / p)))
    value = near * 10**decade
    return f"{value:g}"


@dataclass(frozen=True, eq=False)
class BandSpectrum:
    """One-third-octave band RMS (SI) per channel: ``rms[name]`` unweighted and
    ``weighted[name]`` weighted, at the exact centres ``centre_hz``."""

    centre_hz: NDArray
    rms: dict[str, NDArray]
    weighted: dict[str, NDArray]
    weightings: dict[str, str]

    @property
    def nominal(self) -> list[str]:
        return [_nominal(f) for f in self.centre_hz]

    def to_dict(self) -> dict[str, Any]:
        return {"centre_hz": self.centre_hz.tolist(), "nominal_hz": self.nominal,
                "channels": {n: {"rms": self.rms[n].tolist(),
                                 "weighted_rms": self.weighted[n].tolist(),
                                 "weighting": self.weightings[n]} for n in self.rms}}


def band_spectrum(a: ArrayLike, rate_hz: float, weighting: str,
                  centres: ArrayLike) -> tuple[NDArray, NDArray]:
    """Band RMS (unweighted, weighted) of ``a`` in one-third-octave bands at ``centres``.

    From the discrete Fourier transform of the record (its mean left out): the
    mean square in a band is the sum of the one-sided bin powers whose
    frequency lies within ``fc 10^(-1/20)`` to ``fc 10^(1/20)``; weighted, each
    bin is multiplied by ``|W(f)|^2`` first. By Parseval the bands sum to the
    signal's variance over their range.
    """
    from scipy import fft

    x = np.asarray(a, dtype=float)
    n = x.size
    fc = np.asarray(centres, dtype=float)
    edges = np.concatenate([fc * 10 ** -0.05, fc[-1:] * 10 ** 0.05])
    spectrum = fft.rfft(x, workers=-1)
    f = np.fft.rfftfreq(n, 1.0 / float(rate_hz))
    top = int(np.searchsorted(f, edges[-1], side="right"))
    spectrum, f = spectrum[:top], f[:top]                   # only the bins the bands need
    power = (spectrum.real**2 + spectrum.imag**2) * (2.0 / n**2)
    power[0] = 0.0                                           # the mean: no vibration
    if n % 2 == 0 and top == n // 2 + 1:
        power[-1] /= 2.0
    index = np.searchsorted(edges, f, side="left")
    inside = (index >= 1) & (index <= fc.size)
    cum = np.bincount(index[inside] - 1, weights=power[inside], minlength=fc.size)
    if weighting == "none":
        wcum = cum
    else:
        w2 = comfort.weighting_magnitude(weighting, f[inside]) ** 2
        wcum = np.bincount(index[inside] - 1, weights=power[inside] * w2, minlength=fc.size)
    return np.sqrt(cum), np.sqrt(wcum)


# --------------------------------------------------------------- points --

@dataclass(frozen=True)
class PointFigures:
    """The channels at one point (``PREFIX_x`` ...) combined for a person.

    ``vector_sum`` uses the comfort multipliers of the interface (clause 8.2),
    ``vector_sum_health`` the health ones at a seat surface (clause 7.2.3;
    None elsewhere), ``vdv_total`` ``(sum (k VDV)^4)^(1/4)`` with the comfort
    multipliers (from memory); ``reactions`` the Annex C words of the vector sum.
    """

    place: str
    interface: str
    channels: dict[str, str]
    weighted_rms: dict[str, float]
    multipliers: dict[str, float]
    vector_sum: float
    vector_sum_health: float | None
    vdv_total: float
    reactions: tuple[str, ...]

    def to_dict(self) -> dict[str, Any]:
        return {"place": self.place, "interface": self.interface,
                "channels": dict(self.channels), "weighted_rms": dict(self.weighted_rms),
                "multipliers": dict(self.multipliers), "vector_sum": self.vector_sum,
                "vector_sum_health": self.vector_sum_health, "vdv_total": self.vdv_total,
                "comfort": list(self.reactions)}


def _groups(names: Sequence[str]) -> dict[str, dict[str, str]]:
    out: dict[str, dict[str, str]] = {}
    for name in names:
        m = _SUFFIX.match(name)
        if m:
            out.setdefault(m.group("prefix"), {})[m.group("axis")] = name
    return out


def _point(prefix: str, interface: comfort.Interface, axes: dict[str, str],
           figures: Mapping[str, ChannelFigures]) -> PointFigures:
    axes = {a: axes[a] for a in _AXES if a in axes}
    values = {a: figures[n].weighted_rms for a, n in axes.items()}
    k = {a: interface.multiplier(a) for a in axes}
    total = math.sqrt(sum((k[a] * values[a]) ** 2 for a in axes))
    health = None
    if interface.health is not None and set(axes) & {"x", "y", "z"}:
        health = math.sqrt(sum((interface.health["xyz".index(a)] * values[a]) ** 2
                               for a in axes if a in ("x", "y", "z")))
    dose = sum((k[a] * figures[n].vdv) ** 4 for a, n in axes.items()) ** 0.25
    return PointFigures(prefix, interface.name, axes, values, k, total, health, dose,
                        tuple(comfort.comfort_reactions(total)))


def _interfaces(names: Sequence[str], persons: Mapping[str, str] | None
                ) -> dict[str, comfort.Interface]:
    groups = _groups(names)
    out = {}
    for prefix, person in (persons or {}).items():
        if prefix not in groups:
            known = ", ".join(groups) or "none (name channels PREFIX_x, PREFIX_y, PREFIX_z)"
            raise InputError(f'no channels "{prefix}_x", "{prefix}_y" or "{prefix}_z" '
                             f"(points: {known})", Where(field="person"))
        if person not in comfort.INTERFACES:
            raise InputError(f'unknown interface "{person}": choose '
                             f'{", ".join(comfort.INTERFACES)}', Where(field="person"))
        out[prefix] = comfort.INTERFACES[person]
    for prefix in groups:
        if prefix not in out and prefix.lower().startswith("seat"):
            out[prefix] = comfort.INTERFACES["seat"]
    return out


# --------------------------------------------------------------- record --

@dataclass(frozen=True, eq=False)
class RecordEvaluation:
    """ISO 2631-1 figures of every channel of a record, its points and band spectra."""

    source: str
    rate_hz: float
    samples: int
    start_s: float
    channels: dict[str, ChannelFigures]
    points: tuple[PointFigures, ...] = ()
    bands: BandSpectrum | None = None
    traces: dict[str, ChannelTrace] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    caution: str = comfort.CAUTION

    @property
    def duration_s(self) -> float:
        return self.samples / self.rate_hz

    def to_dict(self, bands: bool = True) -> dict[str, Any]:
        """JSON-ready figures: ``channels`` (the format's keys), ``points``, ``bands``."""
        out: dict[str, Any] = {
            "source": self.source, "rate_hz": self.rate_hz, "samples": self.samples,
            "duration_s": self.duration_s, "start_s": self.start_s,
            "channels": {n: c.to_dict() for n, c in self.channels.items()},
            "points": [p.to_dict() for p in self.points],
            "basic_method_limits": dict(BASIC_METHOD_LIMITS),
            "warnings": list(self.warnings), "notes": list(self.notes),
            "caution": self.caution}
        if bands and self.bands is not None:
            out["bands"] = self.bands.to_dict()
        return out

    def table(self) -> str:
        """Readable table: per channel the figures, per point the vector sum and words."""
        head = (f"{self.source}: {len(self.channels)} channel"
                f"{'s' if len(self.channels) != 1 else ''}, {self.duration_s:.6g} s at "
                f"{self.rate_hz:.6g} Hz")
        width = max([8, *(len(n) for n in self.channels)])
        lines = [head, "",
                 f"{'channel':<{width}} {'wt':<4} {'a_w':>9} {'MTVV':>9} {'VDV':>9} "
                 f"{'crest':>6} {'MTVV/a_w':>8} {'VDV ratio':>9}  basic method"]
        for c in self.channels.values():
            check = "sufficient" if not c.basic_method_reasons else \
                "not sufficient: " + "; ".join(c.basic_method_reasons)
            mt = f"{c.mtvv:9.4g}" if math.isfinite(c.mtvv) else f"{'-':>9}"
            ratio = f"{c.mtvv_ratio:8.3g}" if math.isfinite(c.mtvv_ratio) else f"{'-':>8}"
            lines.append(f"{c.name:<{width}} {c.weighting:<4} {c.weighted_rms:9.4g} {mt} "
                         f"{c.vdv:9.4g} {c.crest_factor:6.3g} {ratio} {c.vdv_ratio:9.3g}  "
                         f"{check}")
        units = sorted({c.unit for c in self.channels.values()})
        lines.append(f"units: a_w and MTVV in {', '.join(units)}; VDV in "
                     f"{', '.join(sorted({c.vdv_unit for c in self.channels.values()}))}")
        if self.points:
            lines += ["", "comfort at a person (ISO 2631-1 vector sum with the multipliers of "
                      "the interface, clause 8.2; words of Annex C):"]
        for p in self.points:
            words = comfort.INTERFACES[p.interface].words
            k = ", ".join(f"{a} {p.multipliers[a]:g}" for a in p.channels)
            line = (f"  {p.place} ({words}; {k}): {p.vector_sum:.3g} m/s^2, "
                    f"{', '.join(p.reactions)}; total VDV {p.vdv_total:.3g} m/s^1.75")
            if p.vector_sum_health is not None:
                line += f"; health vector sum {p.vector_sum_health:.3g} m/s^2 (1.4, 1.4, 1)"
            lines.append(line)
        lines += [""] + [f"warning: {w}" for w in self.warnings]
        lines += [f"note: {n}" for n in self.notes] + [self.caution]
        return "\n".join(lines)

    def plot(self, path: str | None = None) -> Any:
        """Time histories, one panel per channel: the acceleration (light), the
        weighted one (dark) and the 1 s running RMS with its maximum, the MTVV."""
        from .. import plots

        names = [n for n in self.channels if n in self.traces]
        fig, axes = plots.figure(len(names), height=2.0)
        for ax, name in zip(axes, names, strict=True):
            tr, c = self.traces[name], self.channels[name]
            ax.fill_between(tr.time_s, tr.low, tr.high, color="0.75", linewidth=0,
                            label="measured", step="post")
            if c.weighting != "none":
                ax.fill_between(tr.time_s, tr.weighted_low, tr.weighted_high, color="tab:blue",
                                alpha=0.6, linewidth=0, label=f"weighted ({c.weighting})",
                                step="post")
            if tr.running_rms.size:
                ax.plot(tr.running_time_s, tr.running_rms, color="tab:red", linewidth=1.0,
                        label="running RMS (1 s)")
            if math.isfinite(c.mtvv):
                ax.plot([c.mtvv_time_s], [c.mtvv], "v", color="tab:red", markersize=5,
                        label=f"MTVV {c.mtvv:.3g}")
            ax.axhline(c.weighted_rms, color="k", linestyle=":", linewidth=0.8,
                       label=f"a_w {c.weighted_rms:.3g}")
            plots.style(ax, ylabel=f"{name} ({c.unit})")
        axes[-1].set_xlabel("time (s)")
        t0, t1 = self.start_s, self.start_s + self.duration_s
        axes[-1].set_xlim(t0, t1)
        plots.finish(fig, f"{self.source}: ISO 2631-1 evaluation")
        if path is not None:
            plots.save_png(fig, path)
        return fig

    def plot_bands(self, path: str | None = None) -> Any:
        """One-third-octave band RMS of every channel, measured and weighted."""
        from .. import plots

        if self.bands is None:
            raise InputError("this evaluation holds no band spectrum", Where(field="bands"))
        fig, axes = plots.figure(2, height=3.0)
        b = self.bands
        for name in b.rms:
            axes[0].loglog(b.centre_hz, np.maximum(b.rms[name], 1e-12), "o-", markersize=3,
                           linewidth=1.0, label=name)
            axes[1].loglog(b.centre_hz, np.maximum(b.weighted[name], 1e-12), "o-",
                           markersize=3, linewidth=1.0,
                           label=f"{name} ({b.weightings[name]})")
        plots.style(axes[0], ylabel="band RMS, measured")
        plots.style(axes[1], xlabel="one-third-octave band centre (Hz)",
                    ylabel="band RMS, weighted")
        for ax in axes:
            ax.axvspan(0.5, 80.0, color="0.94", zorder=0)
        plots.finish(fig, f"{self.source}: one-third-octave band spectrum (SI units)")
        if path is not None:
            plots.save_png(fig, path)
        return fig


def _rate_notes(weightings: set[str], rate: float, duration: float
                ) -> tuple[list[str], list[str]]:
    """(warnings, notes) on the rate and length of a record for its weightings."""
    out: list[str] = []
    notes: list[str] = []
    for w in sorted(weightings - {"none"}):
        low, high = weighting_band(w)
        if rate / 2 <= high:
            out.append(f"the record's Nyquist frequency {rate / 2:.4g} Hz is below the top "
                       f"of the {w} band ({high:g} Hz): vibration above it is not in the "
                       "record, and the weighted figures may be low")
            continue
        deviation = comfort.filter_deviation(w, rate, high)
        if abs(deviation) > 0.02:
            (out if abs(deviation) > 0.1 else notes).append(
                f"the {w} filter at {rate:.6g} Hz (bilinear transform) is "
                f"{100 * abs(deviation):.2g} % {'low' if deviation < 0 else 'high'} at "
                f"{high:g} Hz; sample faster for content near the top of the band")
        if duration < 1.0 / low:
            out.append(f"the record ({duration:.3g} s) is shorter than one period of the "
                       f"lowest {w} band ({low:g} Hz)")
    return out, notes


def evaluate_record(record: Any, weightings: Mapping[str, str] | None = None,
                    persons: Mapping[str, str] | None = None, *, bands: bool = True,
                    traces: bool = False) -> RecordEvaluation:
    """ISO 2631-1 figures of every channel of a :class:`builder.records.Record`.

    ``weightings`` maps channel names to a weighting (else
    :func:`default_weighting`, or the interface's weighting of the axis at a
    point given in ``persons``); ``persons`` maps point prefixes to an
    interface (seat, back, feet, floor; prefixes starting with "seat" are a
    seat surface unless given). ``traces`` keeps the reduced histories for
    :meth:`RecordEvaluation.plot`.
    """
    names = list(record.names)
    chosen = {}
    for key, value in (weightings or {}).items():
        if key not in names:
            raise InputError(f'unknown channel "{key}" (channels: {", ".join(names)})',
                             Where(field="weighting"))
        chosen[key] = _check_weighting(value, Where(field="weighting"))
    interfaces = _interfaces(names, persons)
    where_of = {n: (m.group("prefix"), m.group("axis")) for n in names
                if (m := _SUFFIX.match(n))}
    warnings = list(record.warnings)
    figures: dict[str, ChannelFigures] = {}
    kept: dict[str, ChannelTrace] = {}
    rate = float(record.rate_hz)
    for k, name in enumerate(names):
        unit = record.units[k]
        prefix, axis = where_of.get(name, ("", ""))
        interface = interfaces.get(prefix)
        if name in chosen:
            w = chosen[name]
        elif interface is not None and axis in interface.weightings and (persons or {}).get(
                prefix):
            w = interface.weightings[axis]
        else:
            w = default_weighting(name, unit)
        fig, tr = channel_figures(record.data[:, k], rate, w, name=name, unit=unit,
                                  start_s=record.start_s, trace=traces)
        if interface is not None and axis:
            reactions = tuple(comfort.comfort_reactions(
                interface.multiplier(axis) * fig.weighted_rms))
            fig = _replace(fig, person=interface.name, reactions=reactions)
        if name in record.clipped:
            clip = record.clipped[name]
            fig = _replace(fig, clipped=True)
            warnings.append(f"{name} looks clipped at {clip.level:.4g} {unit} ({clip.samples} "
                            f"samples, first at {clip.first}): its peak, crest factor, MTVV "
                            "and VDV are lower bounds")
        if fig.rms == 0.0:
            warnings.append(f"{name} is constant: no vibration (a dead channel?)")
        elif fig.mean is not None and abs(fig.mean) > 0.1 * fig.rms and abs(fig.mean) > 1e-3:
            warnings.append(f"{name}: a mean of {fig.mean:.4g} {unit} was removed before "
                            "weighting (a DC-coupled accelerometer sees gravity)")
        figures[name] = fig
        if tr is not None:
            kept[name] = tr
    if record.samples < comfort.RUNNING_RMS_S * rate:
        warnings.append("the record is shorter than the 1 s of the running RMS: no MTVV")
    rate_warnings, rate_notes = _rate_notes({f.weighting for f in figures.values()}, rate,
                                            record.duration_s)
    warnings += rate_warnings
    points = tuple(_point(prefix, interfaces[prefix], axes, figures)
                   for prefix, axes in _groups(names).items() if prefix in interfaces)
    spectrum = None
    if bands:
        spectrum = _bands(record, figures, rate)
    notes = ["weighting by the causal ISO 2631-1 Annex A filter (bilinear transform); running "
             "RMS by 1 s linear integration; the mean of each channel removed first", *rate_notes]
    return RecordEvaluation(str(record.source), rate, int(record.samples),
                            float(record.start_s), figures, points, spectrum, kept,
                            tuple(warnings), tuple(notes))


def _bands(record: Any, figures: Mapping[str, ChannelFigures], rate: float) -> BandSpectrum:
    low = 0.1 if any(f.weighting == "Wf" for f in figures.values()) else 0.5
    top = min(80.0, 0.45 * rate)
    low = max(low, 2.0 / record.duration_s)
    if top <= low:
        centres = third_octave_centres(top, top)
    else:
        centres = third_octave_centres(low, top)
    rms, weighted = {}, {}
    for k, name in enumerate(record.names):
        rms[name], weighted[name] = band_spectrum(record.data[:, k], rate,
                                                  figures[name].weighting, centres)
    return BandSpectrum(centres, rms, weighted,
                        {n: f.weighting for n, f in figures.items()})


def _replace(fig: ChannelFigures, **changes: Any) -> ChannelFigures:
    from dataclasses import replace

    return replace(fig, **changes)
