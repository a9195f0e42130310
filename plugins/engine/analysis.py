"""Powertrain mount-system analyses: pure functions on 6x6 matrices about the powertrain cg.

Conventions: SI units; the six rigid-body DOFs are x, y, z (m) and rx, ry, rz
(rad, small rotations about global axes) at the powertrain cg, in global ISO
8855 axes unless a function says otherwise. A set of axes is a 3x3 array
whose rows are unit vectors in global coordinates.

What is computed
----------------
- :func:`mount_matrices`: stiffness, damping and hysteretic matrices of
  grounded mounts about the cg (each mount a bushing in its own frame).
- :func:`torque_roll_axis`: the direction the free body turns about under a
  torque about the crankshaft, ``J^-1 e_crank`` normalised.
- :func:`decoupling_table`: natural frequencies and the kinetic-energy
  distribution of each mode over the six rigid-body directions in chosen
  axes (principal axes of inertia, or crank-aligned axes).
- :func:`elastic_axis`: the screw axis of the static motion under a torque
  about the crankshaft; :func:`mode_axis`: the screw axis of a mode shape.
- :func:`firing_frequency`, :func:`transmissibility`,
  :func:`isolation_crossover_ratio`, :func:`idle_shake_margin`.
- :func:`roll_torque_response`: mount forces under an oscillating torque
  about the crankshaft at firing frequency over a speed range.
- :func:`scale_mount_rates`: two rate factors fitted with scipy.optimize
  to target roll and bounce frequencies.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np
import scipy.linalg

__all__ = [
    "Mount", "DIRECTIONS", "rigid_mass_matrix", "mount_matrices", "torque_roll_axis",
    "principal_axes", "crank_aligned_axes", "axes_transform", "decoupling_table",
    "elastic_axis", "mode_axis", "ScrewAxis", "firing_frequency", "firing_order",
    "transmissibility", "isolation_crossover_ratio", "idle_shake_margin", "IdleShake",
    "roll_torque_response", "RollTorqueResponse", "scale_mount_rates", "RateScaling",
    "angle_between_axes", "roll_mode_index", "bounce_mode_index",
]

#: Names of the six rigid-body directions of a decoupling table (in the chosen axes).
DIRECTIONS = ("x", "y", "z", "rx", "ry", "rz")


@dataclass(frozen=True, eq=False)
class Mount:
    """An elastic mount: point (m, global), frame (3x3, rows = local axes),
    six stiffnesses (N/m x3, N m/rad x3), six dampings (N s/m x3, N m s/rad x3),
    loss factor (-) and the body on its far side ("ground" when grounded)."""

    name: str
    at: np.ndarray
    frame: np.ndarray = field(default_factory=lambda: np.eye(3))
    stiffness: np.ndarray = field(default_factory=lambda: np.zeros(6))
    damping: np.ndarray = field(default_factory=lambda: np.zeros(6))
    loss_factor: float = 0.0
    body: str = "ground"


def _skew(r: np.ndarray) -> np.ndarray:
    return np.array([[0.0, -r[2], r[1]], [r[2], 0.0, -r[0]], [-r[1], r[0], 0.0]])


def _unit(v: Sequence[float]) -> np.ndarray:
    v = np.asarray(v, dtype=float)
    n = float(np.linalg.norm(v))
    if n == 0.0:
        raise ValueError("a direction must not be the zero vector")
    return v / n


def rigid_mass_matrix(mass: float, inertia_3x3: np.ndarray) -> np.ndarray:
    """6x6 mass matrix at the cg: diag(m, m, m) and the inertia tensor (kg, kg m^2)."""
    M = np.zeros((6, 6))
    M[:3, :3] = float(mass) * np.eye(3)
    M[3:, 3:] = np.asarray(inertia_3x3, dtype=float)
    return M


def _point_rows(cg: np.ndarray, mount: Mount) -> np.ndarray:
    """6x6 map from the cg motion to the mount point's motion in the mount's local axes."""
    T = np.eye(6)
    T[:3, 3:] = -_skew(np.asarray(mount.at, float) - np.asarray(cg, float))
    R6 = np.zeros((6, 6))
    R6[:3, :3] = R6[3:, 3:] = np.asarray(mount.frame, float)
    return R6 @ T


def mount_matrices(cg: Sequence[float], mounts: Sequence[Mount]
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(K, C, H) 6x6 about the cg of the mounts with their far side held fixed.

    K in N/m, N/rad, N m/rad; C likewise per m/s; H = sum of loss factor x K
    of each mount (the hysteretic part, K + iH).
    """
    K, C, H = np.zeros((6, 6)), np.zeros((6, 6)), np.zeros((6, 6))
    for m in mounts:
        D = _point_rows(np.asarray(cg, float), m)
        Km = D.T @ np.diag(np.asarray(m.stiffness, float)) @ D
        K += Km
        C += D.T @ np.diag(np.asarray(m.damping, float)) @ D
        H += m.loss_factor * Km
    return K, C, H


def torque_roll_axis(inertia_3x3: np.ndarray, crank_axis: Sequence[float]) -> np.ndarray:
    """Unit direction of the torque roll axis: ``J^-1 e`` normalised, ``e`` the crank axis.

    A free rigid body under a torque ``T e`` starts turning with angular
    acceleration ``J^-1 T e`` about an axis through its cg; that axis is the
    torque roll axis. Returned with a positive component along ``e``.
    """
    e = _unit(crank_axis)
    d = np.linalg.solve(np.asarray(inertia_3x3, float), e)
    d = d / np.linalg.norm(d)
    return d if np.dot(d, e) >= 0 else -d


def principal_axes(inertia_3x3: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(principal moments kg m^2, axes as rows) of an inertia tensor.

    Each axis is the eigenvector closest to global x, y, z in turn (sign
    chosen positive along it) and the set is right-handed, so the names
    x, y, z of a decoupling table stay recognisable.
    """
    J = np.asarray(inertia_3x3, dtype=float)
    w, V = np.linalg.eigh(0.5 * (J + J.T))
    order, free = [], [0, 1, 2]
    for g in range(3):
        best = max(free, key=lambda k: abs(V[g, k]))
        order.append(best)
        free.remove(best)
    axes = V[:, order].T.copy()
    for g in range(2):
        if axes[g, g] < 0:
            axes[g] = -axes[g]
    if np.dot(np.cross(axes[0], axes[1]), axes[2]) < 0:
        axes[2] = -axes[2]
    return w[order], axes


def crank_aligned_axes(crank_axis: Sequence[float], up: Sequence[float] = (0.0, 0.0, 1.0)
                       ) -> np.ndarray:
    """Axes with x along the crankshaft, z the ``up`` direction made normal to it, y = z x x."""
    x = _unit(crank_axis)
    z = np.asarray(up, float) - np.dot(up, x) * x
    if np.linalg.norm(z) < 1e-9:
        z = np.array([1.0, 0.0, 0.0]) - x[0] * x
    z = z / np.linalg.norm(z)
    return np.array([x, np.cross(z, x), z])


def axes_transform(axes: np.ndarray) -> np.ndarray:
    """6x6 map from global cg motions to motions along the given axes (rows)."""
    T = np.zeros((6, 6))
    T[:3, :3] = T[3:, 3:] = np.asarray(axes, float)
    return T


def decoupling_table(M6: np.ndarray, K6: np.ndarray, axes: np.ndarray | None = None
                     ) -> tuple[np.ndarray, np.ndarray]:
    """Natural frequencies (Hz, ascending) and the kinetic-energy decoupling table.

    ``energy[j, i]`` is the share of mode j's kinetic energy in direction i
    (x, y, z, rx, ry, rz along ``axes``; global axes when None):
    ``phi_i (M phi)_i / (phi^T M phi)`` with the mode shape and mass matrix
    expressed in those axes. Each row sums to 1; in principal axes of inertia
    every entry lies in [0, 1].
    """
    M6 = np.asarray(M6, float)
    K6 = np.asarray(K6, float)
    lam, phi = scipy.linalg.eigh(0.5 * (K6 + K6.T), 0.5 * (M6 + M6.T))
    freq = np.sqrt(np.clip(lam, 0.0, None)) / (2 * math.pi)
    T = np.eye(6) if axes is None else axes_transform(axes)
    phi_a = T @ phi
    M_a = T @ M6 @ T.T
    energy = (phi_a * (M_a @ phi_a)).T
    energy = energy / energy.sum(axis=1, keepdims=True)
    return freq, energy


@dataclass(frozen=True)
class ScrewAxis:
    """An axis of small rigid motion: unit ``direction``, a ``point`` on it (m,
    global; the point nearest the reference point) and the ``pitch`` (m/rad):
    translation along the axis per rotation about it."""

    direction: np.ndarray
    point: np.ndarray
    pitch: float


def _screw(motion6: np.ndarray, about: np.ndarray) -> ScrewAxis:
    u, th = np.asarray(motion6[:3], float), np.asarray(motion6[3:], float)
    t2 = float(th @ th)
    if t2 == 0.0:
        raise ValueError("the motion has no rotation, so it has no axis")
    point = np.asarray(about, float) + np.cross(th, u) / t2
    return ScrewAxis(th / math.sqrt(t2), point, float(th @ u) / t2)


def elastic_axis(K6: np.ndarray, cg: Sequence[float], crank_axis: Sequence[float]) -> ScrewAxis:
    """Screw axis of the static motion of the mounted body under a torque about the crank.

    The body on its mounts (K6 about the cg, full rank) is loaded by a pure
    torque along the crank axis; the static displacement ``K^-1 [0; e]`` is
    a small screw motion whose axis is the mount system's elastic roll axis.
    Its direction is oriented along the crank axis.
    """
    e = _unit(crank_axis)
    q = np.linalg.solve(np.asarray(K6, float), np.concatenate([np.zeros(3), e]))
    ax = _screw(q, np.asarray(cg, float))
    if ax.direction @ e < 0:
        ax = replace(ax, direction=-ax.direction)
    return ax


def mode_axis(shape6: np.ndarray, cg: Sequence[float],
              orient: Sequence[float] | None = None) -> ScrewAxis:
    """Screw axis of a mode shape (x, y, z, rx, ry, rz at the cg): the line the
    mode rotates about. ``orient`` flips the direction to point along it."""
    ax = _screw(np.asarray(shape6, float), np.asarray(cg, float))
    if orient is not None and ax.direction @ np.asarray(orient, float) < 0:
        ax = replace(ax, direction=-ax.direction)
    return ax


def angle_between_axes(a: Sequence[float], b: Sequence[float]) -> float:
    """Angle between two axis directions (rad, 0..pi/2: an axis has no sign)."""
    c = abs(float(np.dot(_unit(a), _unit(b))))
    return math.acos(min(1.0, c))


def roll_mode_index(energy: np.ndarray) -> int:
    """Index of the mode with the largest energy share in rx (roll about table axis x)."""
    return int(np.argmax(np.asarray(energy)[:, 3]))


def bounce_mode_index(energy: np.ndarray) -> int:
    """Index of the mode with the largest energy share in z (bounce)."""
    return int(np.argmax(np.asarray(energy)[:, 2]))


# ----------------------------------------------------------- excitation --

def firing_order(cylinders: int, strokes: int = 4) -> float:
    """Firing events per crankshaft revolution: cylinders/2 (four-stroke), cylinders (two)."""
    if strokes not in (2, 4):
        raise ValueError("strokes must be 2 or 4")
    if cylinders < 1:
        raise ValueError("cylinders must be at least 1")
    return cylinders * 2.0 / strokes


def firing_frequency(speed_rpm: float | np.ndarray, cylinders: int, strokes: int = 4
                     ) -> float | np.ndarray:
    """Firing frequency (Hz) at a crankshaft speed in rev/min:
    cylinders x rpm / 120 for a four-stroke engine, cylinders x rpm / 60 for a two-stroke."""
    return firing_order(cylinders, strokes) * np.asarray(speed_rpm, float) / 60.0


def transmissibility(ratio: float | np.ndarray, damping_ratio: float = 0.0) -> float | np.ndarray:
    """Force (or motion) transmissibility of a one-DOF viscously damped isolator at
    frequency ratio ``r = f / f_n``: sqrt((1 + (2 z r)^2) / ((1 - r^2)^2 + (2 z r)^2))."""
    r = np.asarray(ratio, float)
    two_zr = 2.0 * damping_ratio * r
    return np.sqrt((1.0 + two_zr**2) / ((1.0 - r**2) ** 2 + two_zr**2))


def isolation_crossover_ratio(damping_ratio: float = 0.0) -> float:
    """Frequency ratio where the transmissibility equals 1 (found numerically).

    Isolation (transmissibility below 1) starts above it. The result is
    sqrt(2) for any damping ratio.
    """
    import scipy.optimize  # here, not at import: plugin discovery is on every command's path

    return float(scipy.optimize.brentq(
        lambda r: float(transmissibility(r, damping_ratio)) - 1.0, 1.0 + 1e-9, 10.0))


@dataclass(frozen=True)
class IdleShake:
    """Idle-shake check: firing frequency at idle (Hz) against the highest mount mode (Hz)."""

    idle_rpm: float
    firing_hz: float
    highest_mode_hz: float
    ratio: float
    crossover: float
    isolates: bool
    transmissibility: float

    def to_dict(self) -> dict[str, float | bool]:
        return {"idle_rpm": self.idle_rpm, "firing_hz": self.firing_hz,
                "highest_mode_hz": self.highest_mode_hz, "ratio": self.ratio,
                "crossover_ratio": self.crossover, "isolates": self.isolates,
                "undamped_transmissibility": self.transmissibility}


def idle_shake_margin(idle_rpm: float, cylinders: int, strokes: int,
                      mode_frequencies_hz: Sequence[float]) -> IdleShake:
    """Firing frequency at idle over the highest mount-system mode, and whether the
    ratio exceeds sqrt(2) (the isolation crossover of a one-DOF isolator)."""
    f = float(firing_frequency(idle_rpm, cylinders, strokes))
    top = float(np.max(mode_frequencies_hz))
    ratio = f / top if top > 0 else math.inf
    cross = math.sqrt(2.0)
    return IdleShake(float(idle_rpm), f, top, ratio, cross, ratio > cross,
                     float(transmissibility(ratio)))


@dataclass(frozen=True)
class RollTorqueResponse:
    """Mount forces (N, amplitude of the force vector at each mount) under a torque
    ``amplitude`` (N m) about the crank at firing frequency, per speed (rpm)."""

    speeds_rpm: np.ndarray
    frequencies_hz: np.ndarray
    mount_names: tuple[str, ...]
    forces: np.ndarray          # (n_speeds, n_mounts), N
    amplitude: float


def roll_torque_response(M6: np.ndarray, cg: Sequence[float], mounts: Sequence[Mount],
                         crank_axis: Sequence[float], speeds_rpm: Sequence[float],
                         cylinders: int, strokes: int = 4, amplitude: float = 1.0
                         ) -> RollTorqueResponse:
    """Forces the grounded mounts transmit under ``amplitude * e_crank * cos(w t)``
    (N m) with w the firing frequency at each speed (rpm).

    Solves ``(K + i w C + i H - w^2 M) q = [0; T e]`` and takes each mount's
    force vector amplitude ``|(k + i w c + i eta k) d|`` over its three
    translational local components.
    """
    K, C, H = mount_matrices(cg, mounts)
    e = _unit(crank_axis)
    load = np.concatenate([np.zeros(3), amplitude * e]).astype(complex)
    speeds = np.asarray(speeds_rpm, float)
    freqs = np.asarray(firing_frequency(speeds, cylinders, strokes), float)
    forces = np.zeros((len(speeds), len(mounts)))
    maps = [_point_rows(np.asarray(cg, float), m) for m in mounts]
    for i, f in enumerate(freqs):
        w = 2 * math.pi * f
        q = np.linalg.solve(K + 1j * w * C + 1j * H - w * w * np.asarray(M6, float), load)
        for j, (m, D) in enumerate(zip(mounts, maps, strict=True)):
            d = D @ q
            k = np.asarray(m.stiffness, float) * (1 + 1j * m.loss_factor)
            force = (k + 1j * w * np.asarray(m.damping, float)) * d
            forces[i, j] = float(np.linalg.norm(force[:3]))
    return RollTorqueResponse(speeds, freqs, tuple(m.name for m in mounts), forces,
                              float(amplitude))


# ------------------------------------------------------------ rate tuning --

@dataclass(frozen=True)
class RateScaling:
    """Result of :func:`scale_mount_rates`: factors on the mounts' local-z rates and on
    their local x and y rates, the scaled mounts and the achieved roll and bounce (Hz)."""

    axial_factor: float
    shear_factor: float
    mounts: tuple[Mount, ...]
    roll_hz: float
    bounce_hz: float
    frequencies_hz: np.ndarray
    converged: bool


def _scaled(mounts: Sequence[Mount], axial: float, shear: float) -> tuple[Mount, ...]:
    out = []
    for m in mounts:
        k = np.asarray(m.stiffness, float).copy()
        k[:2] *= shear
        k[2] *= axial
        out.append(replace(m, stiffness=k))
    return tuple(out)


def scale_mount_rates(mass: float, cg: Sequence[float], inertia_3x3: np.ndarray,
                      mounts: Sequence[Mount], crank_axis: Sequence[float],
                      target_roll_hz: float, target_bounce_hz: float) -> RateScaling:
    """Two factors, one on every mount's local-z rate and one on the local x and y rates,
    fitted (scipy.optimize.least_squares on their logarithms) so that the grounded
    mount system's roll mode (largest energy in roll about the crank) and bounce mode
    (largest energy in vertical translation) reach the targets (Hz)."""
    M6 = rigid_mass_matrix(mass, inertia_3x3)
    axes = crank_aligned_axes(crank_axis)

    def modes(p: np.ndarray) -> tuple[float, float, np.ndarray]:
        K, _, _ = mount_matrices(cg, _scaled(mounts, math.exp(p[0]), math.exp(p[1])))
        f, energy = decoupling_table(M6, K, axes)
        return f[roll_mode_index(energy)], f[bounce_mode_index(energy)], f

    def residual(p: np.ndarray) -> np.ndarray:
        roll, bounce, _ = modes(p)
        return np.array([math.log(max(roll, 1e-12) / target_roll_hz),
                         math.log(max(bounce, 1e-12) / target_bounce_hz)])

    import scipy.optimize  # here, not at import: plugin discovery is on every command's path

    sol = scipy.optimize.least_squares(residual, np.zeros(2), xtol=1e-12, ftol=1e-12,
                                       gtol=1e-12, bounds=([-6, -6], [6, 6]))
    roll, bounce, f = modes(sol.x)
    ok = bool(np.max(np.abs(residual(sol.x))) < 1e-6)
    a, s = math.exp(sol.x[0]), math.exp(sol.x[1])
    return RateScaling(a, s, _scaled(mounts, a, s), float(roll), float(bounce), f, ok)
