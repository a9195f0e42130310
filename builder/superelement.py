"""A detailed-model superelement: reduced mass and stiffness matrices joined to bodies.

A superelement is a component of a finite element model (a subframe, a body
in white) reduced elsewhere, e.g. by Craig-Bampton, to matrices on

    u = [u_1, ..., u_p, eta]

where ``u_k`` are the motions of its boundary points (up to six each:
x, y, z, rx, ry, rz in global axes, m and rad, in the order given) and ``eta``
its interior coordinates (fixed-interface modes, or retained interior DOFs).
Each boundary point is joined rigidly to a body of the assembly at that
point (or to ``ground``): its motion is the body's point motion,
``u_k = S_k motion_map(p_k - cg) q_body`` with ``S_k`` picking the point's
DOFs (:func:`builder.kinematics.motion_map`, the one kinematics helper).
The interior coordinates become DOFs of the model, ``NAME.q01`` ...,
after every body's. With ``u = T q`` the model gains ``T^T M T``,
``T^T K T`` (and ``T^T C T``, ``T^T H T`` when given) exactly symmetric.

Gravity acts on the superelement's mass as on a body's: the load is
``-g T^T M e_z`` with ``e_z`` its motion in a unit upward translation
(boundary z DOFs 1, interior coordinates their static response, zero for
fixed-interface modes).

The matrices come from a ``.npz`` or ``.mat`` file with arrays ``M`` and
``K`` (optionally ``C``, ``H``), or the ``.json`` of a Matrix Market set, in
the layout ``lumpgraph export`` writes (:mod:`builder.export`), SI units.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from .errors import InputError, Where
from .kinematics import DOF_NAMES, motion_map

__all__ = ["BoundaryPoint", "Superelement", "read_superelement_matrices", "dof_map",
           "gravity_direction"]


@dataclass(frozen=True)
class BoundaryPoint:
    """A boundary point: the body it is joined to (or "ground"), where (m), its DOFs."""

    body: str
    at: tuple[float, float, float]
    dofs: tuple[str, ...] = DOF_NAMES


@dataclass(frozen=True, eq=False)
class Superelement:
    """Matrices (SI) on [boundary point DOFs; interior coordinates] and their joints."""

    name: str
    M: NDArray
    K: NDArray
    C: NDArray
    H: NDArray
    points: tuple[BoundaryPoint, ...]
    source: str = ""
    where: Where = field(default_factory=Where)

    @property
    def boundary_size(self) -> int:
        return sum(len(p.dofs) for p in self.points)

    @property
    def interior(self) -> tuple[str, ...]:
        """Labels of the interior coordinates, ``NAME.q01`` ..."""
        count = self.M.shape[0] - self.boundary_size
        width = max(2, len(str(count)))
        return tuple(f"{self.name}.q{k + 1:0{width}d}" for k in range(count))


def _symmetric(a: NDArray, name: str, where: Where) -> NDArray:
    a = np.asarray(a, dtype=float)
    if a.ndim != 2 or a.shape[0] != a.shape[1]:
        raise InputError(f"{name} must be a square matrix, got shape {a.shape}", where)
    if not np.all(np.isfinite(a)):
        raise InputError(f"{name} holds values that are not finite", where)
    scale = float(np.abs(a).max()) if a.size else 0.0
    if scale and np.abs(a - a.T).max() > 1e-8 * scale:
        raise InputError(f"{name} is not symmetric (largest asymmetry "
                         f"{np.abs(a - a.T).max() / scale:.2g} of its largest entry)", where)
    return 0.5 * (a + a.T)


def read_superelement_matrices(path: str, where: Where) -> dict[str, NDArray]:
    """M, K, C, H (dense, symmetric; C and H zero when absent) from an export-style file."""
    from .export import read_matrices

    if not os.path.isfile(path):
        raise InputError(f"no such file {path}", where)
    try:
        data = read_matrices(path)
    except InputError as exc:
        raise InputError(f"{path}: {exc.reason}", where) from None
    M = _symmetric(data.arrays["M"], "M", where)
    K = _symmetric(data.arrays["K"], "K", where)
    if K.shape != M.shape:
        raise InputError(f"M is {M.shape[0]} x {M.shape[0]} but K is {K.shape[0]} x "
                         f"{K.shape[0]}", where)
    out = {"M": M, "K": K}
    for key in ("C", "H"):
        value = data.arrays.get(key)
        out[key] = np.zeros_like(M) if value is None or value.size == 0 else \
            _symmetric(value, key, where)
        if out[key].shape != M.shape:
            raise InputError(f"{key} is not {M.shape[0]} x {M.shape[0]} like M", where)
    return out


def dof_map(se: Superelement, bodies: dict, offsets: dict[str, tuple[NDArray, list[int]]],
            interior_start: int, n: int) -> NDArray:
    """The dense map T (m, n) from the model's DOFs q to the superelement's u."""
    T = np.zeros((se.M.shape[0], n))
    row = 0
    for p in se.points:
        sel = [DOF_NAMES.index(d) for d in p.dofs]
        if p.body != "ground":
            body = bodies[p.body]
            cols, body_sel = offsets[p.body]
            full = motion_map(np.asarray(p.at, dtype=float) - body.cg)
            T[row:row + len(sel), cols] = full[np.ix_(sel, body_sel)]
        row += len(sel)
    count = se.M.shape[0] - row
    T[row:, interior_start:interior_start + count] = np.eye(count)
    return T


def gravity_direction(se: Superelement) -> NDArray:
    """The superelement's motion u in a unit upward translation (see the module notes)."""
    u = np.zeros(se.M.shape[0])
    row = 0
    for p in se.points:
        if "z" in p.dofs:
            u[row + p.dofs.index("z")] = 1.0
        row += len(p.dofs)
    if row < u.size:
        Kii, Kib = se.K[row:, row:], se.K[row:, :row]
        try:
            u[row:] = -np.linalg.solve(Kii, Kib @ u[:row])
        except np.linalg.LinAlgError:
            u[row:] = 0.0
    return u
