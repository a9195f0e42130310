"""Natural frequencies, mode shapes, damping and labels of a LinearModel.

Undamped modes solve the generalised symmetric problem K phi = omega^2 M phi
(shapes mass-normalised, phi^T M phi = 1), in one eigensolve. The damped
roots s of (s^2 M + s (C + H/|s|) + K) x = 0 come from that modal basis
(:mod:`builder.analysis.damped`), each undamped mode paired with one root,
once: a damping ratio zeta = -Re(s)/|s| and a damped frequency
|Im(s)|/(2 pi). An overdamped mode has two real roots s1, s2 instead,
reported with zeta = -(s1 + s2) / (2 sqrt(s1 s2)) > 1. A loss factor
(hysteretic H) counts as the equivalent viscous H/|s| at the root's own
natural frequency |s|: one DOF gets zeta = eta/2 exactly. Where the damping
is not proportional it couples the undamped modes, and a damped frequency
can then lie above the undamped one; the ModeSet's notes say so.

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

from ..eigen import DENSE_LIMIT, lowest_modes, zero_frequency_modes
from ..errors import InputError, Where
from ..linear import LinearModel
from ..threads import blas_threads_for
from .damped import DampedModes, damped_modes
from .labels import label_mode, label_modes

__all__ = ["Mode", "ModeSet", "compute_modes", "mac", "mac_matrix", "label_mode",
           "zero_frequency", "check_matrices", "DEFAULT_COUNT", "RIGID_TOLERANCE"]

#: Modes computed by default for large models (all modes for small ones).
DEFAULT_COUNT = 20

#: A mode is zero-frequency (rigid-body or mechanism) when omega^2 is below this
#: fraction of the largest K_ii / M_ii of the model: about 500 times the
#: round-off of the eigenvalues (rigid-body modes come out near 1e-16 of it),
#: so that a genuine slow mode next to one very stiff link is not taken for
#: rigid motion (builder.plausibility warns about such links).
RIGID_TOLERANCE = 1e-13


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
    """Undamped and damped modes of a model (all for small models, else ``count``).

    The damping comes from the modes of a basis at least as large as the
    modes reported: every mode for a model solved densely, ``count`` plus a
    margin for a large one (see :mod:`builder.analysis.damped`).
    """
    n = model.n
    if n == 0:
        return ModeSet(model, (), ("the model has no DOFs",))
    if count is not None and int(count) < 1:
        raise InputError(f"the number of modes must be at least 1, got {count}",
                         Where(field="--count"))
    count = n if (count is None and n <= DENSE_LIMIT) else min(int(count or DEFAULT_COUNT), n)
    check_matrices(model)
    damped_model = model.C.nnz > 0 or model.H.nnz > 0
    basis = n if n <= DENSE_LIMIT else (
        min(n, count + max(count, DEFAULT_COUNT)) if damped_model else count)
    with blas_threads_for(n):
        lam, shapes = lowest_modes(model.K, model.M, basis)
        rigid = zero_frequency(model, lam, shapes)
        damped = damped_modes(model, shapes, lam, rigid)
    lam, shapes, rigid = lam[:count], shapes[:, :count], rigid[:count]
    omega = np.sqrt(np.clip(lam, 0.0, None))
    omega[rigid] = 0.0
    energies = shapes * np.asarray(model.M @ shapes)
    damping = damped.modes[:count]
    labels = label_modes(model, shapes, rigid)
    modes = []
    for i in range(count):
        energy = {d: float(e) for d, e in zip(model.dofs, energies[:, i])}
        zeta, fd, over, roots = damping[i]
        label = labels[i]
        modes.append(Mode(i + 1, float(omega[i] / (2 * math.pi)), zeta, fd, label,
                          shapes[:, i].copy(), energy, bool(rigid[i]), over, roots))
    root = model
    while root.parent is not None:
        root = root.parent
    notes = [f"warning: {w}" for w in root.warnings]
    nr = int(rigid.sum())
    if nr:
        notes.append(_rigid_note(model, nr))
    notes.extend(_damping_notes(modes, damped, len(lam), n))
    return ModeSet(model, tuple(modes), tuple(notes))


def zero_frequency(model: LinearModel, eigenvalues: np.ndarray, shapes: np.ndarray
                   ) -> np.ndarray:
    """Which of the modes (eigenvalues omega^2 in rad^2/s^2, M-normalised shapes)
    of ``model`` are zero-frequency: :func:`builder.eigen.zero_frequency_modes`."""
    return zero_frequency_modes(model.K, eigenvalues, shapes)


def _stiffness_scale(model: LinearModel) -> tuple[float, int]:
    """The largest K_jj / M_jj (rad^2/s^2) and its DOF index."""
    kd = np.abs(model.K.diagonal())
    md = np.abs(model.M.diagonal())
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ratio = np.where(md > 0, kd / np.where(md > 0, md, 1.0), 0.0)
    j = int(np.argmax(ratio)) if ratio.size else 0
    return (float(ratio[j]) if ratio.size else 0.0), j


def check_matrices(model: LinearModel) -> None:
    """InputError naming the first DOF whose mass or stiffness is not finite, or whose
    mass is not positive (the eigen-solution needs M positive definite)."""
    for name, A in (("mass", model.M), ("stiffness", model.K), ("damping", model.C),
                    ("loss-factor stiffness", model.H)):
        coo = A.tocoo()
        bad = ~np.isfinite(coo.data)
        if bad.any():
            dof = model.dofs[int(coo.row[bad][0])]
            raise InputError(f"the {name} on {dof} is not a finite number (a value overflowed): "
                             "check the sizes of the masses, inertias and rates there",
                             Where(field=dof))
    md = model.M.diagonal()
    if np.any(md <= 0):
        dof = model.dofs[int(np.flatnonzero(md <= 0)[0])]
        raise InputError(f"{dof} has no mass or inertia: every DOF needs a positive one",
                         Where(field=dof))


def _rigid_note(model: LinearModel, count: int) -> str:
    anchored = model.assembly is not None and (
        any(lk.a.kind != "body" or lk.b.kind != "body"
            for lk in model.assembly.links.values()))
    what = "mechanism (unrestrained) modes" if anchored else "rigid-body modes"
    text = (f"{count} zero-frequency {what}: the model can move without deforming any link"
            + ("; check for a missing link or a DOF without stiffness" if anchored else ""))
    scale, j = _stiffness_scale(model)
    resolution = math.sqrt(RIGID_TOLERANCE * scale) / (2 * math.pi)
    if resolution > 0.01:
        text += (f" (here modes below {resolution:.2g} Hz cannot be told from zero in double "
                 f"precision, because {model.dofs[j]} is so stiff for its mass: "
                 f"{math.sqrt(scale) / (2 * math.pi):.3g} Hz)")
    return text


def _damping_notes(modes: list[Mode], damped: DampedModes, count: int, n: int) -> list[str]:
    """How the damping figures were obtained, where that is not obvious."""
    notes = []
    if damped.hysteretic:
        notes.append("loss factors count as the viscous damping eta k / |s| at each root's own "
                     "natural frequency |s| (one DOF: zeta = eta/2, fd = f sqrt(1 - eta^2/4))")
    above = [m.number for m in modes if m.damped_frequency_hz is not None
             and m.damped_frequency_hz > m.frequency_hz * (1 + 1e-9)]
    if above:
        listed = ", ".join(str(k) for k in above[:8]) + (", ..." if len(above) > 8 else "")
        which = "mode" if len(above) == 1 else "modes"
        notes.append(f"fd above f ({which} {listed}): the damping is not proportional, so it "
                     "couples the undamped modes, and the coupling can raise a damped frequency "
                     "above the undamped one")
    error = damped.error(count)
    if damped.basis < n and damped.basis_error(count) > 0:
        notes.append(f"damping from the lowest {damped.basis} of {n} undamped modes: estimated "
                     f"relative error of the roots up to {error:.1e}")
    elif error > 1e-6:
        notes.append(f"damped roots from modal subspaces: estimated relative error up to "
                     f"{error:.1e}")
    return notes
