"""Natural frequencies, mode shapes, damping and labels of a LinearModel.

Undamped modes solve the generalised symmetric problem K phi = omega^2 M phi
(shapes mass-normalised, phi^T M phi = 1). Damped modes come from the
state-space eigenproblem of [[0, I], [-M^-1 K, -M^-1 C]] and are paired with
the undamped ones by MAC on their displacement part; each pair gives a
damping ratio zeta = -Re(s)/|s| and a damped frequency |Im(s)|/(2 pi). An
overdamped mode has two real roots s1, s2 instead, reported with
zeta = -(s1 + s2) / (2 sqrt(s1 s2)) > 1. A loss factor (hysteretic H)
counts at each mode's own frequency, as the equivalent viscous H/omega.

Zero-frequency modes (rigid-body motion or a mechanism) are reported with
frequency 0 and label ``rigid``, never an error.

Each mode's kinetic energy is split over the DOFs, e_j = phi_j (M phi)_j,
summing to 1 (with inertia products a share can be slightly negative).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.linalg

from ..eigen import lowest_modes
from ..linear import LinearModel
from .labels import label_mode, label_modes

__all__ = ["Mode", "ModeSet", "compute_modes", "mac", "mac_matrix", "label_mode",
           "DEFAULT_COUNT", "RIGID_TOLERANCE"]

#: Modes computed by default for large models (all modes for small ones).
DEFAULT_COUNT = 20
_SMALL = 200  # models up to this size get exact damped modes per mode

#: A mode is zero-frequency (rigid-body or mechanism) when omega^2 is below this
#: fraction of the largest K_ii / M_ii of the model: far above round-off
#: (about 1e-16 of it) and far below any physical mode.
RIGID_TOLERANCE = 1e-11



@dataclass(frozen=True, eq=False)
class Mode:
    """One mode: frequencies in Hz, shape over the model's DOFs (mass-normalised)."""

    number: int
    frequency_hz: float
    damping_ratio: float | None
    damped_frequency_hz: float | None
    label: str
    shape: np.ndarray
    energy: dict[str, float]
    rigid: bool = False
    overdamped: bool = False
    roots: tuple[complex, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """The mode as in the format's ``modes --json``."""
        return {"number": self.number, "frequency_hz": self.frequency_hz,
                "damping_ratio": self.damping_ratio, "label": self.label,
                "energy": self.energy, "damped_frequency_hz": self.damped_frequency_hz,
                "overdamped": self.overdamped}


@dataclass(frozen=True, eq=False)
class ModeSet:
    """The modes of one model, sorted by undamped frequency."""

    model: LinearModel
    modes: tuple[Mode, ...]
    notes: tuple[str, ...] = field(default=())

    @property
    def frequencies_hz(self) -> np.ndarray:
        return np.array([m.frequency_hz for m in self.modes])

    @property
    def shapes(self) -> np.ndarray:
        """(n, nmodes) mass-normalised shapes."""
        return np.column_stack([m.shape for m in self.modes]) if self.modes else \
            np.zeros((self.model.n, 0))

    @property
    def rigid_count(self) -> int:
        return sum(m.rigid for m in self.modes)

    def __len__(self) -> int:
        return len(self.modes)

    def __getitem__(self, i: int) -> Mode:
        return self.modes[i]

    def to_dict(self) -> dict[str, Any]:
        return {"model": {"name": self.model.name, "dofs": list(self.model.dofs)},
                "modes": [m.to_dict() for m in self.modes], "notes": list(self.notes)}

    def table(self) -> str:
        """A plain-text table: number, frequency, damping, damped frequency, label."""
        lines = [f"{'mode':>4}  {'f (Hz)':>9}  {'zeta':>7}  {'fd (Hz)':>9}  label",
                 f"{'-' * 4}  {'-' * 9}  {'-' * 7}  {'-' * 9}  {'-' * 30}"]
        for m in self.modes:
            z = "-" if m.damping_ratio is None else f"{m.damping_ratio:7.3f}"
            fd = "-" if m.damped_frequency_hz is None else f"{m.damped_frequency_hz:9.3f}"
            lines.append(f"{m.number:>4}  {m.frequency_hz:9.3f}  {z:>7}  {fd:>9}  {m.label}")
        lines.extend(f"note: {n}" for n in self.notes)
        return "\n".join(lines)

    def csv_rows(self) -> list[list[Any]]:
        """Header and rows: number, frequency, damping, label, then energy per DOF."""
        dofs = list(self.model.dofs)
        rows: list[list[Any]] = [["number", "frequency_hz", "damping_ratio",
                                  "damped_frequency_hz", "label", *[f"energy:{d}" for d in dofs]]]
        for m in self.modes:
            rows.append([m.number, m.frequency_hz, m.damping_ratio, m.damped_frequency_hz,
                         m.label, *[m.energy[d] for d in dofs]])
        return rows


def mac(a: np.ndarray, b: np.ndarray) -> float:
    """Modal assurance criterion |a^H b|^2 / ((a^H a)(b^H b)), 0..1."""
    num = abs(np.vdot(a, b)) ** 2
    den = float(np.real(np.vdot(a, a) * np.vdot(b, b)))
    return float(num / den) if den > 0 else 0.0


def mac_matrix(A: np.ndarray, B: np.ndarray, mass: np.ndarray | None = None) -> np.ndarray:
    """MAC between every column of A (n, ma) and every column of B (n, mb), real or
    complex: |a^H W b|^2 / ((a^H W a)(b^H W b)) in [0, 1], W = ``mass`` or I."""
    A = np.asarray(A)
    B = np.asarray(B)
    WA = A if mass is None else np.asarray(mass @ A)
    WB = B if mass is None else np.asarray(mass @ B)
    num = np.abs(A.conj().T @ WB) ** 2
    den = np.outer(np.real(np.sum(A.conj() * WA, 0)), np.real(np.sum(B.conj() * WB, 0)))
    with np.errstate(invalid="ignore", divide="ignore"):
        out = np.where(den > 0, num / np.where(den > 0, den, 1.0), 0.0)
    return np.clip(out, 0.0, 1.0)


def compute_modes(model: LinearModel, count: int | None = None) -> ModeSet:
    """Undamped and damped modes of a model (all for small models, else ``count``)."""
    n = model.n
    if n == 0:
        return ModeSet(model, (), ("the model has no DOFs",))
    count = n if (count is None and n <= 600) else min(count or DEFAULT_COUNT, n)
    lam, shapes = lowest_modes(model.K, model.M, count)
    Kd = np.abs(model.K.diagonal())
    Md = np.abs(model.M.diagonal())
    scale = float(np.max(Kd / np.where(Md > 0, Md, 1.0))) if n else 1.0
    rigid = lam < RIGID_TOLERANCE * max(scale, 1e-300)
    omega = np.sqrt(np.clip(lam, 0.0, None))
    omega[rigid] = 0.0
    Mphi = np.asarray(model.M @ shapes)
    energies = shapes * Mphi
    damping = _damped(model, shapes, omega, rigid)
    labels = label_modes(model, shapes, rigid)
    modes = []
    for i in range(count):
        energy = {d: float(e) for d, e in zip(model.dofs, energies[:, i])}
        zeta, fd, over, roots = damping[i]
        label = labels[i]
        modes.append(Mode(i + 1, float(omega[i] / (2 * math.pi)), zeta, fd, label,
                          shapes[:, i].copy(), energy, bool(rigid[i]), over, roots))
    notes = []
    nr = int(rigid.sum())
    if nr:
        notes.append(_rigid_note(model, nr))
    return ModeSet(model, tuple(modes), tuple(notes))




def _rigid_note(model: LinearModel, count: int) -> str:
    anchored = model.assembly is not None and (
        any(lk.a.kind != "body" or lk.b.kind != "body"
            for lk in model.assembly.links.values()))
    what = "mechanism (unrestrained) modes" if anchored else "rigid-body modes"
    return (f"{count} zero-frequency {what}: the model can move without deforming any link"
            + ("; check for a missing link or a DOF without stiffness" if anchored else ""))


def _damped(model: LinearModel, shapes: np.ndarray, omega: np.ndarray, rigid: np.ndarray
            ) -> list[tuple[float | None, float | None, bool, tuple[complex, ...]]]:
    """(zeta, damped frequency Hz, overdamped, roots) for each undamped mode."""
    count = shapes.shape[1]
    no_damping = model.C.nnz == 0 and model.H.nnz == 0
    out: list[tuple[float | None, float | None, bool, tuple[complex, ...]]] = []
    if no_damping:
        for i in range(count):
            out.append((None, None, False, ()) if rigid[i] else
                       (0.0, float(omega[i] / (2 * math.pi)), False,
                        (1j * omega[i], -1j * omega[i])))
        return out
    if model.n > _SMALL:
        return [_modal_estimate(model, shapes[:, i], omega[i], rigid[i]) for i in range(count)]
    M, K, C, H = (m.toarray() for m in (model.M, model.K, model.C, model.H))
    cache: dict[float, tuple[np.ndarray, np.ndarray, dict[int, int]]] = {}
    has_h = model.H.nnz > 0
    for i in range(count):
        if rigid[i]:
            out.append((None, None, False, ()))
            continue
        key = float(omega[i]) if has_h else 0.0
        if key not in cache:
            s, psi = _state_roots(M, K, C + (H / omega[i] if has_h else 0.0))
            cache[key] = (s, psi, _assign(s, psi, shapes))
        s, psi, assigned = cache[key]
        out.append(_pair(i, s, psi, shapes, assigned[i]))
    return out


def _state_roots(M: np.ndarray, K: np.ndarray, C: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    n = M.shape[0]
    A = np.block([[np.zeros((n, n)), np.eye(n)],
                  [-np.linalg.solve(M, K), -np.linalg.solve(M, C)]])
    s, v = scipy.linalg.eig(A)
    return s, v[:n]


def _assign(s: np.ndarray, psi: np.ndarray, shapes: np.ndarray) -> dict[int, int]:
    """Mode index -> state-space root index, one-to-one by MAC (Hungarian assignment),
    over the roots with Im(s) >= 0 (one of each conjugate pair, and the real ones)."""
    from scipy.optimize import linear_sum_assignment

    tol = 1e-9 * max(np.abs(s).max(), 1e-300)
    cand = np.flatnonzero(s.imag >= -tol)
    macs = mac_matrix(shapes, psi[:, cand])
    rows, cols = linear_sum_assignment(1.0 - macs)
    return {int(r): int(cand[c]) for r, c in zip(rows, cols)}


def _pair(i: int, s: np.ndarray, psi: np.ndarray, shapes: np.ndarray, j: int
          ) -> tuple[float | None, float | None, bool, tuple[complex, ...]]:
    """Damping of undamped mode i from its assigned state-space root j."""
    tol = 1e-9 * max(np.abs(s).max(), 1e-300)
    root = s[j]
    if abs(root.imag) > tol:
        wn = abs(root)
        return (float(-root.real / wn), float(abs(root.imag) / (2 * math.pi)), False,
                (complex(root), complex(np.conj(root))))
    real = [k for k in np.flatnonzero(np.abs(s.imag) <= tol) if k != j]
    if not real:
        return (None, None, True, (complex(root),))
    k = max(real, key=lambda k: mac(shapes[:, i], psi[:, k]))
    s1, s2 = float(root.real), float(s[k].real)
    if s1 * s2 <= 0:
        return (None, None, True, (complex(s1), complex(s2)))
    wn = math.sqrt(s1 * s2)
    return (float(-(s1 + s2) / (2 * wn)), None, True, (complex(s1), complex(s2)))


def _modal_estimate(model: LinearModel, phi: np.ndarray, w: float, rigid: bool
                    ) -> tuple[float | None, float | None, bool, tuple[complex, ...]]:
    """Diagonal modal damping (large models): zeta = phi^T C phi/(2w) + phi^T H phi/(2w^2)."""
    if rigid or w <= 0:
        return (None, None, False, ())
    zeta = float(phi @ (model.C @ phi)) / (2 * w) + float(phi @ (model.H @ phi)) / (2 * w * w)
    if zeta >= 1.0:
        return (zeta, None, True, ())
    wd = w * math.sqrt(1 - zeta * zeta)
    s = complex(-zeta * w, wd)
    return (zeta, wd / (2 * math.pi), False, (s, s.conjugate()))
