"""Test-model correlation: a model's modes held against measured modes.

The model's shapes are taken at the measured channels through the same
point kinematics as the sensors (a channel at point p on body B along the
unit vector d reads ``d . point_map(p - cg_B) q_B``, through a reduced
model's expansion when it is a depth), so a test on 20 point-directions is
compared with 20 numbers of each model mode.

- **MAC** (modal assurance criterion, Allemang and Brown 1982) between
  every test shape x and model shape a at the channels,
  ``|x^H a|^2 / ((x^H x)(a^H a))``: 1 for shapes that differ only by a
  (complex) factor, 0 for shapes orthogonal at the channels. Test modes are
  the rows, model modes the columns.
- **Pairing**: test and model modes are paired one-to-one, the assignment
  that maximises the summed MAC among the pairs at or above the threshold
  (``scipy.optimize.linear_sum_assignment``); no test mode is paired twice
  and no model mode either. The rest are listed as unpaired on both sides
  (the model modes only in the test's band, where the test could have seen
  them).
- **Auto-MAC** of the test set (each test shape against the others): large
  off-diagonal values say that the channels are too few or badly placed to
  tell those modes apart, whatever the model.
- **COMAC** per channel and per point (Lieven and Ewins 1988), over the
  paired modes, each pair's model shape scaled onto its test shape by the
  modal scale factor first: low values point at channels where model and
  test disagree (a wrong position, a local stiffness, a mislabelled sensor).
  Like the published definition it is insensitive to a sign flip at one
  channel.

The default threshold of 0.6 for a pair, and 0.3 above which an auto-MAC
value is flagged, are common practice, no source.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.sparse as sp

from ..eigen import DENSE_LIMIT
from ..errors import InputError, Where
from ..formatting import count, percent, text_table
from ..linear import LinearModel
from ..measured import MeasuredModes, resolve_channels
from ..measured_files import read_measured
from .modes import ModeSet, compute_modes, mac_matrix

__all__ = ["Pair", "Correlation", "correlate", "channel_map", "pair_by_mac", "comac",
           "simulate_test", "plain_modes", "mode_set",
           "PAIR_THRESHOLD", "AUTO_MAC_FLAG"]

#: Least MAC of a test-model pair (common practice, no source).
PAIR_THRESHOLD = 0.6

#: Off-diagonal test auto-MAC from which two test modes are flagged as hard to
#: tell apart with these channels (common practice, no source).
AUTO_MAC_FLAG = 0.3

#: Model modes are listed as unpaired when within this factor of the test's band.
BAND_MARGIN = 1.2


@dataclass(frozen=True)
class Pair:
    """A test mode and the model mode paired with it (numbers from 1)."""

    test: int
    model: int
    test_hz: float
    model_hz: float
    mac: float
    test_damping: float | None = None
    model_damping: float | None = None
    label: str = ""

    @property
    def error(self) -> float:
        """Relative frequency error (model - test) / test."""
        return self.model_hz / self.test_hz - 1.0

    def to_dict(self) -> dict[str, Any]:
        return {"test": self.test, "model": self.model, "test_hz": self.test_hz,
                "model_hz": self.model_hz, "error": self.error, "mac": self.mac,
                "test_damping_ratio": self.test_damping,
                "model_damping_ratio": self.model_damping, "label": self.label}


# ------------------------------------------------------------- the pieces --

def channel_map(model: LinearModel, measured: MeasuredModes) -> sp.csr_array:
    """(channels, n) map from the model's DOFs to the measured channels.

    Each row is ``d . [I, -skew(p - cg)]`` of the channel's body (a split
    body's segment that holds the point), through the expansion of a
    reduced model. InputError at the measured file's line for a point on no
    body of the model.
    """
    asm = model.assembly
    if asm is None:
        raise InputError("the model carries no assembly: its points cannot be located",
                         Where(field="model"))
    bodies = resolve_channels(measured, asm.bodies, asm.body_at)
    rows = []
    for ch, body in zip(measured.channels, bodies, strict=True):
        at = measured.points[ch.point].at
        T = model.body_map(body, at)
        rows.append(sp.csr_array(ch.direction[None, :] @ T[[0, 1, 2], :]))
    if not rows:
        raise InputError("the measured file has no channel", Where(measured.source))
    return sp.csr_array(sp.vstack(rows))


def pair_by_mac(mac: np.ndarray, threshold: float = PAIR_THRESHOLD) -> list[tuple[int, int]]:
    """One-to-one pairs (row, column), 0-based, with MAC >= ``threshold``: the
    assignment of largest summed MAC among the admissible pairs, by rows."""
    from scipy.optimize import linear_sum_assignment
    mac = np.asarray(mac, dtype=float)
    if mac.size == 0:
        return []
    ok = mac >= threshold
    score = np.where(ok, mac, 0.0)
    rows, cols = linear_sum_assignment(-score)
    return sorted((int(r), int(c)) for r, c in zip(rows, cols, strict=True) if ok[r, c])


def comac(test: np.ndarray, model: np.ndarray) -> np.ndarray:
    """COMAC of each channel (Lieven and Ewins 1988) over paired shapes.

    ``test`` and ``model`` (channels, pairs), column l of each a pair. Each
    test column is scaled to unit norm and its model column onto it by the
    modal scale factor ``(a^H x)/(a^H a)``; then
    ``COMAC_i = (sum_l |x_il| |a_il|)^2 / (sum_l |x_il|^2 sum_l |a_il|^2)``.
    NaN at a channel where either side is zero in every pair.
    """
    X, A = _aligned(test, model)
    num = np.sum(np.abs(X) * np.abs(A), axis=1) ** 2
    den = np.sum(np.abs(X) ** 2, axis=1) * np.sum(np.abs(A) ** 2, axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, num / np.where(den > 0, den, 1.0), np.nan)


def _aligned(test: np.ndarray, model: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Test columns scaled to unit norm, model columns scaled onto them by the
    modal scale factor (a^H x)/(a^H a)."""
    X = np.asarray(test, dtype=complex)
    A = np.asarray(model, dtype=complex)
    nx = np.linalg.norm(X, axis=0)
    X = X / np.where(nx > 0, nx, 1.0)
    aa = np.real(np.sum(A.conj() * A, axis=0))
    msf = np.where(aa > 0, np.sum(A.conj() * X, axis=0) / np.where(aa > 0, aa, 1.0), 0.0)
    return X, A * msf


# ------------------------------------------------------------- the result --

@dataclass(frozen=True, eq=False)
class Correlation:
    """Model modes against measured modes.

    ``mac`` (test modes, model modes) over the model's elastic modes
    ``model_numbers``; ``pairs`` one-to-one; ``auto_mac`` (test, test);
    ``comac`` per channel (NaN where undefined) and ``point_comac`` per
    point (all its channels together).
    """

    model_name: str
    measured: MeasuredModes
    modes: ModeSet
    model_numbers: tuple[int, ...]
    model_hz: np.ndarray
    mac: np.ndarray
    pairs: tuple[Pair, ...]
    threshold: float
    auto_mac: np.ndarray
    comac: np.ndarray
    point_comac: dict[str, float]
    model_shapes: np.ndarray = field(repr=False, default_factory=lambda: np.zeros((0, 0)))
    notes: tuple[str, ...] = ()

    # -- derived ------------------------------------------------------
    @property
    def unpaired_test(self) -> tuple[int, ...]:
        done = {p.test for p in self.pairs}
        return tuple(k for k in self.measured.numbers if k not in done)

    @property
    def unpaired_model(self) -> tuple[int, ...]:
        """Model modes in the test's band (widened by 20 %) that no test mode pairs with."""
        done = {p.model for p in self.pairs}
        lo = float(np.min(self.measured.frequencies_hz)) / BAND_MARGIN
        hi = float(np.max(self.measured.frequencies_hz)) * BAND_MARGIN
        return tuple(k for k, f in zip(self.model_numbers, self.model_hz, strict=True)
                     if k not in done and lo <= f <= hi)

    def auto_mac_flags(self, limit: float = AUTO_MAC_FLAG) -> list[tuple[int, int, float]]:
        """Pairs of test modes (numbers) whose auto-MAC is at least ``limit``."""
        out = []
        nums = self.measured.numbers
        for i in range(len(nums)):
            for j in range(i + 1, len(nums)):
                if self.auto_mac[i, j] >= limit:
                    out.append((nums[i], nums[j], float(self.auto_mac[i, j])))
        return out

    def _best(self, test: int) -> tuple[int, float]:
        i = self.measured.numbers.index(test)
        if self.mac.shape[1] == 0:
            return 0, 0.0
        j = int(np.argmax(self.mac[i]))
        return self.model_numbers[j], float(self.mac[i, j])

    def _mode(self, number: int) -> Any:
        return self.modes.modes[number - 1]

    # -- outputs ------------------------------------------------------
    def to_dict(self) -> dict[str, Any]:
        """The format's ``correlate --json`` (pairs, mac) and more, SI."""
        m = self.measured
        return {
            "model": self.model_name, "measured": m.source, "threshold": self.threshold,
            "pairs": [p.to_dict() for p in self.pairs],
            "mac": self.mac.tolist(),
            "test_modes": [{"number": k, "frequency_hz": float(m.frequencies_hz[i]),
                            "damping_ratio": None if math.isnan(m.damping_ratios[i])
                            else float(m.damping_ratios[i])}
                           for i, k in enumerate(m.numbers)],
            "model_modes": [{"number": k, "frequency_hz": float(f),
                             "label": self._mode(k).label}
                            for k, f in zip(self.model_numbers, self.model_hz, strict=True)],
            "unpaired_test": list(self.unpaired_test),
            "unpaired_model": list(self.unpaired_model),
            "auto_mac": self.auto_mac.tolist(),
            "comac": {c.label: _num(v) for c, v in zip(m.channels, self.comac, strict=True)},
            "point_comac": {k: _num(v) for k, v in self.point_comac.items()},
            "notes": list(self.notes)}

    def pair_rows(self) -> list[list[Any]]:
        """Rows of the pair table: test, f, zeta, model, f, zeta, error, MAC, label."""
        return [[p.test, p.test_hz, p.test_damping, p.model, p.model_hz, p.model_damping,
                 percent(p.error, 1, signed=True), p.mac, p.label] for p in self.pairs]

    def pair_table(self) -> str:
        heads = ["test", "f test (Hz)", "zeta test", "model", "f model (Hz)", "zeta model",
                 "error", "MAC", "model mode"]
        if not self.pairs:
            return "no pairs (no MAC at or above the threshold)"
        return text_table(heads, self.pair_rows(),
                          spec=[".0f", ".3f", ".3f", ".0f", ".3f", ".3f", "", ".3f", ""])

    def table(self, matrix: bool | None = None) -> str:
        """The correlation as an engineer reads it: pairs, unpaired modes,
        the test's auto-MAC, the lowest COMAC values and (for small sets) the
        MAC matrix."""
        m = self.measured
        lines = [f"{self.model_name}: test {m.source or '(in memory)'}: "
                 f"{count(len(m), 'mode')} at {count(len(m.channels), 'channel')} "
                 f"({count(len(m.points), 'point')})",
                 f"pairs: one-to-one by MAC, MAC >= {self.threshold:.2f} "
                 f"({len(self.pairs)} of {len(m)} test modes)", self.pair_table()]
        if self.pairs:
            errs = np.array([abs(p.error) for p in self.pairs])
            macs = np.array([p.mac for p in self.pairs])
            lines.append(f"mean |error| {percent(float(errs.mean()))}, largest "
                         f"{percent(float(errs.max()))}; mean MAC {macs.mean():.3f}, "
                         f"lowest {macs.min():.3f}")
        for k in self.unpaired_test:
            j, best = self._best(k)
            f = m.frequencies_hz[m.numbers.index(k)]
            tail = f" (best MAC {best:.2f}, with model mode {j})" if j else ""
            lines.append(f"unpaired test mode {k} at {f:.3f} Hz{tail}")
        um = self.unpaired_model
        if um:
            text = ", ".join(f"{k} ({self.model_hz[self.model_numbers.index(k)]:.2f} Hz, "
                             f"{self._mode(k).label})" for k in um[:8])
            lines.append(f"model modes in the test band that no test mode pairs with: {text}"
                         + (", ..." if len(um) > 8 else ""))
        flags = self.auto_mac_flags()
        if flags:
            worst = sorted(flags, key=lambda t: -t[2])[:6]
            lines.append("test auto-MAC: these channels hardly tell apart test modes "
                         + ", ".join(f"{a} and {b} ({v:.2f})" for a, b, v in worst))
        else:
            off = self.auto_mac - np.diag(np.diag(self.auto_mac))
            lines.append(f"test auto-MAC: largest off-diagonal value "
                         f"{float(off.max()) if off.size else 0.0:.2f} "
                         "(the channels tell the test modes apart)")
        low = sorted(((v, k) for k, v in self.point_comac.items() if not math.isnan(v)))[:5]
        if low:
            lines.append("COMAC per point, lowest: " + ", ".join(f"{k} {v:.2f}" for v, k in low))
        lines.extend(f"note: {n}" for n in self.notes)
        if matrix or (matrix is None and self.mac.shape[1] <= 14 and self.mac.shape[0] <= 20):
            lines.append("MAC (test modes as rows, model modes as columns):")
            heads = ["test", *[str(k) for k in self.model_numbers]]
            rows = [[k, *[float(v) for v in self.mac[i]]] for i, k in enumerate(m.numbers)]
            lines.append(text_table(heads, rows, spec=[".0f"] + [".2f"] * len(self.model_numbers)))
        return "\n".join(lines)

    def csv_rows(self) -> list[list[Any]]:
        """The pair table, SI: test, model, frequencies, error, MAC, damping."""
        rows: list[list[Any]] = [["test", "model", "test_hz", "model_hz", "error", "mac",
                                  "test_damping_ratio", "model_damping_ratio", "label"]]
        for p in self.pairs:
            rows.append([p.test, p.model, p.test_hz, p.model_hz, p.error, p.mac,
                         p.test_damping, p.model_damping, p.label])
        for k in self.unpaired_test:
            i = self.measured.numbers.index(k)
            rows.append([k, None, float(self.measured.frequencies_hz[i]), None, None, None,
                         _num(self.measured.damping_ratios[i]), None, ""])
        return rows

    def plot(self, path: str | os.PathLike[str], title: str | None = None) -> str:
        """MAC map and frequency agreement as a PNG; returns the path."""
        from .correlation_plot import plot_correlation
        return plot_correlation(self, os.fspath(path), title)


def _num(v: float) -> float | None:
    return None if v is None or math.isnan(float(v)) else float(v)


# ---------------------------------------------------------- the analysis --

def _model_modes(model: LinearModel, measured: MeasuredModes, count_: int | None,
                 plain: bool = False) -> ModeSet:
    """All modes of a small model; enough of a large one to pass the test's band
    (``plain``: without labels and damping, see :func:`plain_modes`)."""
    if count_ is not None or model.n <= DENSE_LIMIT:
        return compute_modes(model, count_)
    solve = plain_modes if plain else compute_modes
    want = min(model.n, max(20, 3 * len(measured)))
    top = float(np.max(measured.frequencies_hz)) * BAND_MARGIN
    while True:
        modes = solve(model, want)
        if want >= model.n or (len(modes) and modes.frequencies_hz[-1] >= top):
            return modes
        want = min(model.n, 2 * want)


def plain_modes(model: LinearModel, count: int) -> ModeSet:
    """The lowest ``count`` undamped modes without damping and labels (fast on large
    models, whose labels and damped roots cost far more than the eigensolve)."""
    from ..eigen import lowest_modes
    from ..threads import blas_threads_for
    with blas_threads_for(model.n):
        lam, shapes = lowest_modes(model.K, model.M, min(count, model.n))
    return mode_set(model, lam, shapes)


def mode_set(model: LinearModel, lam: np.ndarray, shapes: np.ndarray,
             note: str = "labels and damping not computed") -> ModeSet:
    """A ModeSet of given undamped eigenpairs (omega^2 in rad^2/s^2, M-normalised
    shapes), without damping and labels."""
    from ..eigen import zero_frequency_modes
    from .modes import Mode
    rigid = zero_frequency_modes(model.K, lam, shapes)
    f = np.where(rigid, 0.0, np.sqrt(np.clip(lam, 0.0, None))) / (2 * math.pi)
    modes = tuple(Mode(i + 1, float(f[i]), None, None, "rigid" if rigid[i] else "",
                       shapes[:, i].copy(), {}, bool(rigid[i])) for i in range(len(lam)))
    return ModeSet(model, modes, (note,) if note else ())


def correlate(model: LinearModel, measured: MeasuredModes | str | os.PathLike[str], *,
              threshold: float = PAIR_THRESHOLD, modes: ModeSet | None = None,
              mode_count: int | None = None, labels: bool = True) -> Correlation:
    """Correlate a model (any depth) with measured modes (an object or a file).

    ``threshold``: least MAC of a pair (0 < threshold <= 1); ``modes``: the
    model's modes when already computed; ``mode_count``: how many to compute
    (default all of a small model, else enough to pass the test band);
    ``labels=False`` leaves out labels and damping of models above
    :data:`builder.eigen.DENSE_LIMIT` DOFs (much faster there).
    """
    if not 0.0 < float(threshold) <= 1.0:
        raise InputError(f"the MAC threshold must be above 0 and at most 1, got {threshold}",
                         Where(field="threshold"))
    if not isinstance(measured, MeasuredModes):
        measured = read_measured(measured)
    obs = channel_map(model, measured)
    ms = modes if modes is not None else _model_modes(model, measured, mode_count,
                                                      plain=not labels)
    elastic = [m for m in ms.modes if not m.rigid]
    numbers = tuple(m.number for m in elastic)
    shapes = np.column_stack([m.shape for m in elastic]) if elastic else np.zeros((model.n, 0))
    at_channels = np.asarray(obs @ shapes)
    mac = mac_matrix(measured.shapes, at_channels)
    found = pair_by_mac(mac, threshold)
    pairs = tuple(_pair(measured, elastic[j], i, float(mac[i, j])) for i, j in found)
    auto = mac_matrix(measured.shapes, measured.shapes)
    idx_t = [i for i, _ in found]
    idx_m = [j for _, j in found]
    per_channel = comac(measured.shapes[:, idx_t], at_channels[:, idx_m]) if found else \
        np.full(len(measured.channels), np.nan)
    per_point = _point_comac(measured, measured.shapes[:, idx_t], at_channels[:, idx_m])
    notes = _notes(measured, obs)
    if ms.rigid_count:
        notes.append(f"{count(ms.rigid_count, 'zero-frequency model mode')} left out of the "
                     "pairing")
    return Correlation(model.name, measured, ms, numbers,
                       np.array([m.frequency_hz for m in elastic]), mac, pairs,
                       float(threshold), auto, per_channel, per_point, at_channels,
                       tuple(notes))


def _pair(measured: MeasuredModes, mode: Any, i: int, mac: float) -> Pair:
    z = measured.damping_ratios[i]
    return Pair(measured.numbers[i], mode.number, float(measured.frequencies_hz[i]),
                float(mode.frequency_hz), mac, None if math.isnan(z) else float(z),
                mode.damping_ratio, mode.label)


def _point_comac(measured: MeasuredModes, X: np.ndarray, A: np.ndarray) -> dict[str, float]:
    """COMAC of each point: its channels stacked as one (sums over channels and pairs)."""
    out: dict[str, float] = {}
    if X.shape[1] == 0:
        return {p: math.nan for p in measured.points}
    Xn, An = _aligned(X, A)
    for p in measured.points:
        rows = [i for i, c in enumerate(measured.channels) if c.point == p]
        x, a = np.abs(Xn[rows]), np.abs(An[rows])
        den = float(np.sum(x ** 2) * np.sum(a ** 2))
        out[p] = float(np.sum(x * a) ** 2 / den) if den > 0 else math.nan
    return out


def _notes(measured: MeasuredModes, obs: sp.csr_array) -> list[str]:
    notes = []
    dead = [measured.channels[i].label for i in range(obs.shape[0])
            if not np.any(obs[[i], :].toarray())]
    if dead:
        notes.append("the model cannot move at " + ", ".join(dead[:6])
                     + (", ..." if len(dead) > 6 else "")
                     + " (no DOF of its body moves the point in that direction): those "
                     "channels count as zero in every model shape")
    if len(measured.channels) < len(measured):
        notes.append(f"fewer channels ({len(measured.channels)}) than test modes "
                     f"({len(measured)}): the shapes cannot all be told apart")
    return notes


def simulate_test(model: LinearModel, points: dict[str, tuple[str, Any]],
                  channels: list[tuple[str, str]], modes: list[int] | None = None, *,
                  shape_noise: float = 0.0, frequency_noise: float = 0.0,
                  damping_noise: float = 0.0, seed: int = 0, title: str = "",
                  source: str = "") -> MeasuredModes:
    """Invented measured modes made from a model (for demonstrations and tests).

    ``points`` name -> (body, [x, y, z] m); ``channels`` (point, axis) with
    axis x, y, z or three numbers; ``modes`` the model's mode numbers to
    keep (default every elastic one), renumbered 1, 2, ... in that order.
    Noise, from a fixed ``seed``: complex Gaussian on the shapes with the
    standard deviation ``shape_noise`` times each mode's largest channel
    value; relative Gaussian on frequencies and damping ratios. Never a
    real test: say so in ``title``.
    """
    from ..measured import Channel, MeasuredPoint, parse_direction
    rng = np.random.default_rng(seed)
    pts = {n: MeasuredPoint(n, b, np.asarray(at, dtype=float), Where(source))
           for n, (b, at) in points.items()}
    chans = []
    for p, axis in channels:
        d, name = parse_direction(axis, Where(source, 0, "direction"))
        chans.append(Channel(p, d, name, Where(source)))
    empty = MeasuredModes(pts, tuple(chans), np.ones(1), np.full(1, np.nan),
                          np.ones((len(chans), 1), dtype=complex), (1,), source, title)
    obs = channel_map(model, empty)
    ms = compute_modes(model) if model.n <= DENSE_LIMIT else plain_modes(
        model, max(20, max(modes or [0]) + 5))
    elastic = [m for m in ms.modes if not m.rigid]
    if modes is None:
        chosen = elastic
    else:
        chosen = [ms.modes[k - 1] for k in modes]
        if any(m.rigid for m in chosen):
            raise InputError("a zero-frequency mode cannot be part of an invented test",
                             Where(field="modes"))
    shapes = np.asarray(obs @ np.column_stack([m.shape for m in chosen])).astype(complex)
    scale = np.max(np.abs(shapes), axis=0)
    noise = rng.normal(size=shapes.shape) + 1j * rng.normal(size=shapes.shape)
    shapes = shapes + shape_noise * scale * noise / math.sqrt(2.0)
    f = np.array([m.frequency_hz for m in chosen]) * (
        1.0 + frequency_noise * rng.normal(size=len(chosen)))
    z = np.array([m.damping_ratio if m.damping_ratio is not None else np.nan for m in chosen])
    z = np.clip(z * (1.0 + damping_noise * rng.normal(size=len(chosen))), 0.0, 0.99)
    return MeasuredModes(pts, tuple(chans), f, z, shapes, tuple(range(1, len(chosen) + 1)),
                         source, title, tuple(Where(source) for _ in chosen))
