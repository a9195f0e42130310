"""LinearModel and :func:`assemble`: an Assembly as sparse symmetric M, C, K.

The equations of motion about static equilibrium are

    M q'' + C q' + (K + i H) q = Br r + Bv r' (+ i Bh r)

with q the active body DOFs (m, rad), r the vertical road displacements at
the road points (m) and H the hysteretic (loss-factor) part, used in the
frequency domain only. Sensors read y = Sd q + Sv q' + Sa q'' + Dr r + Dv r'
(+ i (Sh q + Dh r) for the hysteretic part of link forces).

>>> from pathlib import Path
>>> from builder.load import load_assembly
>>> path = Path(__file__).parent.parent / "assemblies" / "quarter_car.yaml"
>>> model = assemble(load_assembly(path))
>>> model.dofs, model.inputs
(('body.z', 'wheel.z'), ('road.contact',))
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import scipy.sparse as sp

from .assembly import Assembly
from .elements import LINK_TYPES, ElementMatrices
from .errors import InputError, Where
from .kinematics import DOF_NAMES, motion_map

__all__ = ["LinearModel", "assemble", "GRAVITY"]

GRAVITY = 9.80665  # m/s^2, standard gravity

_UNIT = {("displacement", False): "m", ("displacement", True): "rad",
         ("velocity", False): "m/s", ("velocity", True): "rad/s",
         ("acceleration", False): "m/s^2", ("acceleration", True): "rad/s^2",
         ("deflection", False): "m", ("deflection", True): "rad",
         ("force", False): "N", ("force", True): "N m"}


@dataclass(frozen=True, eq=False)
class LinearModel:
    """A linear spatial model: matrices (SI), labels, input and output maps.

    ``parent`` and ``expansion`` link a reduced model back to the model it
    came from: ``q_parent = expansion @ q + expansion_input @ r``.
    """

    dofs: tuple[str, ...]
    M: sp.csr_array
    C: sp.csr_array
    K: sp.csr_array
    H: sp.csr_array
    inputs: tuple[str, ...]
    input_positions: np.ndarray
    Br: sp.csr_array
    Bv: sp.csr_array
    Bh: sp.csr_array
    sensors: tuple[str, ...]
    sensor_units: tuple[str, ...]
    sensor_measures: tuple[str, ...]
    Sd: sp.csr_array
    Sv: sp.csr_array
    Sa: sp.csr_array
    Sh: sp.csr_array
    Dr: sp.csr_array
    Dv: sp.csr_array
    Dh: sp.csr_array
    assembly: Assembly | None = None
    links: dict[str, Any] = field(default_factory=dict)
    parent: LinearModel | None = None
    expansion: Any = None
    expansion_input: Any = None
    name: str = ""

    @property
    def n(self) -> int:
        """Number of DOFs."""
        return len(self.dofs)

    def dof_index(self, label: str) -> int:
        """Position of a DOF label; InputError naming the known ones otherwise."""
        try:
            return self.dofs.index(label)
        except ValueError:
            raise InputError(f'unknown DOF "{label}" (model DOFs: {", ".join(self.dofs)})',
                             Where(field="dof")) from None

    def sensor_index(self, name: str) -> int:
        try:
            return self.sensors.index(name)
        except ValueError:
            known = ", ".join(self.sensors) or "none"
            raise InputError(f'unknown sensor "{name}" (sensors: {known})',
                             Where(field="--to")) from None

    def input_index(self, name: str) -> int:
        try:
            return self.inputs.index(name)
        except ValueError:
            known = ", ".join(self.inputs) or "none"
            raise InputError(f'unknown input "{name}" (road inputs: {known})',
                             Where(field="--from")) from None

    # -- maps -------------------------------------------------------------
    def body_map(self, body: str, at: np.ndarray | None = None) -> sp.csr_array:
        """6 x n map from q to the motion [translation (m), rotation (rad)] of a body
        point (default: its cg). For a reduced model the map goes through the
        expansion to the full model."""
        if self.parent is not None:
            return sp.csr_array(self.parent.body_map(body, at) @ self.expansion)
        b = self.assembly.bodies[body]
        cols = [self.dofs.index(f"{body}.{d}") for d in b.dofs]
        sel = [DOF_NAMES.index(d) for d in b.dofs]
        r = np.zeros(3) if at is None else np.asarray(at, float) - b.cg
        T = motion_map(r)[:, sel]
        rows, cc = np.nonzero(T)
        return sp.csr_array((T[rows, cc], (rows, np.asarray(cols)[cc])), shape=(6, self.n))

    def force_input(self, body: str, at: np.ndarray | None, direction: Any) -> np.ndarray:
        """Generalised force (n,) of a unit force along ``direction`` (3-vector, N)
        at point ``at`` of ``body``, or a unit moment (N m) when direction is
        ``"rx"``, ``"ry"`` or ``"rz"`` (or a 3-vector with ``moment=True``)."""
        T = self.body_map(body, at).toarray()
        f = np.zeros(6)
        if isinstance(direction, str):
            f[{"x": 0, "y": 1, "z": 2, "rx": 3, "ry": 4, "rz": 5}[direction]] = 1.0
        else:
            d = np.asarray(direction, float)
            f[: len(d)] = d / np.linalg.norm(d)
        return T.T @ f

    def static_load(self, g: float = GRAVITY) -> np.ndarray:
        """DOF loads (N, N m) of gravity, g downward (-z), on every body."""
        if self.parent is not None:
            return np.asarray(self.expansion.T @ self.parent.static_load(g)).ravel()
        out = np.zeros(self.n)
        for b in self.assembly.bodies.values():
            out += self.force_input(b.name, None, "z") * (-b.mass * g)
        return out

    def static_response(self, g: float = GRAVITY) -> np.ndarray:
        """Static displacement q (m, rad) under gravity; NaN where K is singular."""
        from scipy.sparse.linalg import splu
        try:
            return splu(sp.csc_matrix(self.K)).solve(self.static_load(g))
        except RuntimeError:
            return np.full(self.n, np.nan)

    def to_state_space(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Dense (A, B, C, D): state [q; q'] (m, rad, m/s, rad/s), input [r; r'] (m, m/s),
        output the sensors. The hysteretic part H has no time-domain form and is left out."""
        n, nr = self.n, len(self.inputs)
        M = self.M.toarray()
        Minv_K = np.linalg.solve(M, self.K.toarray())
        Minv_C = np.linalg.solve(M, self.C.toarray())
        Minv_B = np.linalg.solve(M, np.hstack([self.Br.toarray(), self.Bv.toarray()])) \
            if nr else np.zeros((n, 0))
        A = np.block([[np.zeros((n, n)), np.eye(n)], [-Minv_K, -Minv_C]])
        B = np.vstack([np.zeros((n, 2 * nr)), Minv_B])
        Sa = self.Sa.toarray()
        Cout = np.hstack([self.Sd.toarray() - Sa @ Minv_K, self.Sv.toarray() - Sa @ Minv_C])
        D = np.hstack([self.Dr.toarray(), self.Dv.toarray()]) + Sa @ Minv_B
        return A, B, Cout, D

    def with_matrices(self, **changes: Any) -> LinearModel:
        """A copy with some fields replaced."""
        return replace(self, **changes)


# --------------------------------------------------------------- assemble --

class _Triplets:
    def __init__(self, shape: tuple[int, int]):
        self.shape = shape
        self.rows: list[np.ndarray] = []
        self.cols: list[np.ndarray] = []
        self.vals: list[np.ndarray] = []

    def add(self, rows: np.ndarray, cols: np.ndarray, block: np.ndarray) -> None:
        if len(rows) == 0 or len(cols) == 0:
            return
        r, c = np.meshgrid(rows, cols, indexing="ij")
        self.rows.append(r.ravel())
        self.cols.append(c.ravel())
        self.vals.append(np.asarray(block, float).ravel())

    def matrix(self, symmetric: bool = False) -> sp.csr_array:
        if self.rows:
            m = sp.coo_array((np.concatenate(self.vals),
                              (np.concatenate(self.rows), np.concatenate(self.cols))),
                             shape=self.shape).tocsr()
        else:
            m = sp.csr_array(self.shape)
        if symmetric:
            m = ((m + m.T) * 0.5).tocsr()
        m.eliminate_zeros()
        return m


@dataclass(frozen=True, eq=False)
class _EndMap:
    """How one element end's 6-motion depends on q (cols, T) or on a road input."""

    cols: np.ndarray
    T: np.ndarray          # 6 x len(cols)
    road: int = -1         # road input index, or -1


def _end_map(end: Any, point: np.ndarray, asm: Assembly, offsets: dict[str, tuple],
             inputs: dict[str, int]) -> _EndMap:
    if end.kind == "ground":
        return _EndMap(np.zeros(0, int), np.zeros((6, 0)))
    if end.kind == "road":
        return _EndMap(np.zeros(0, int), np.zeros((6, 0)), inputs[end.node])
    body = asm.bodies[end.node]
    cols, sel = offsets[end.node]
    return _EndMap(cols, motion_map(np.asarray(point) - body.cg)[:, sel])


_EZ = np.array([0.0, 0.0, 1.0, 0.0, 0.0, 0.0])


def assemble(assembly: Assembly) -> LinearModel:
    """Build the sparse LinearModel of an Assembly (rigid links already merged)."""
    dofs = assembly.dof_labels
    n = len(dofs)
    offsets: dict[str, tuple[np.ndarray, list[int]]] = {}
    pos = 0
    for b in assembly.bodies.values():
        k = len(b.dofs)
        offsets[b.name] = (np.arange(pos, pos + k), [DOF_NAMES.index(d) for d in b.dofs])
        pos += k
    inputs = {f"road.{r}": i for i, r in enumerate(assembly.road)}
    nr = len(inputs)

    M = _Triplets((n, n))
    for b in assembly.bodies.values():
        cols, sel = offsets[b.name]
        M.add(cols, cols, b.mass_matrix[np.ix_(sel, sel)])

    mats = {"K": _Triplets((n, n)), "C": _Triplets((n, n)), "H": _Triplets((n, n))}
    bmat = {"K": _Triplets((n, nr)), "C": _Triplets((n, nr)), "H": _Triplets((n, nr))}
    link_maps: dict[str, Any] = {}
    for link in assembly.links.values():
        if link.type not in LINK_TYPES:
            raise InputError(f'unknown link type "{link.type}"', link.where)
        em: ElementMatrices = LINK_TYPES[link.type].matrices(link)
        ends = (_end_map(link.a, em.points[0], assembly, offsets, inputs),
                _end_map(link.b, em.points[1], assembly, offsets, inputs))
        for key, E in (("K", em.K), ("C", em.C), ("H", em.H)):
            if not E.any():
                continue
            for i, ei in enumerate(ends):
                if not len(ei.cols):
                    continue
                for j, ej in enumerate(ends):
                    blk = E[6 * i:6 * i + 6, 6 * j:6 * j + 6]
                    if len(ej.cols):
                        mats[key].add(ei.cols, ej.cols, ei.T.T @ blk @ ej.T)
                    elif ej.road >= 0:
                        bmat[key].add(ei.cols, np.array([ej.road]),
                                      -(ei.T.T @ blk @ _EZ)[:, None])
        link_maps[link.name] = _link_deflection(em, ends, n, nr)

    K = mats["K"].matrix(True)
    model_inputs = tuple(inputs)
    positions = np.array([assembly.road[r].at for r in assembly.road]).reshape(-1, 3)
    base = LinearModel(
        dofs=dofs, M=M.matrix(True), C=mats["C"].matrix(True), K=K, H=mats["H"].matrix(True),
        inputs=model_inputs, input_positions=positions,
        Br=bmat["K"].matrix(), Bv=bmat["C"].matrix(), Bh=bmat["H"].matrix(),
        sensors=(), sensor_units=(), sensor_measures=(),
        Sd=sp.csr_array((0, n)), Sv=sp.csr_array((0, n)), Sa=sp.csr_array((0, n)),
        Sh=sp.csr_array((0, n)), Dr=sp.csr_array((0, nr)), Dv=sp.csr_array((0, nr)),
        Dh=sp.csr_array((0, nr)), assembly=assembly, links=link_maps, name=assembly.name)
    return _with_sensors(base, assembly)


def _link_deflection(em: ElementMatrices, ends: tuple[_EndMap, _EndMap], n: int,
                     nr: int) -> dict[str, Any]:
    """Deflection components of a link as maps on q (m x n) and r (m x nr)."""
    m = em.deflection.shape[0]
    Q = _Triplets((m, n))
    R = _Triplets((m, nr))
    rows = np.arange(m)
    for i, e in enumerate(ends):
        Di = em.deflection[:, 6 * i:6 * i + 6]
        if len(e.cols):
            Q.add(rows, e.cols, Di @ e.T)
        elif e.road >= 0:
            R.add(rows, np.array([e.road]), (Di @ _EZ)[:, None])
    return {"q": Q.matrix(), "r": R.matrix(), "stiffness": em.stiffness, "damping": em.damping,
            "loss_factor": em.loss_factor,
            "components": em.components, "units": em.units}


def _with_sensors(model: LinearModel, assembly: Assembly) -> LinearModel:
    n, nr = model.n, len(model.inputs)
    rows = {k: [] for k in ("Sd", "Sv", "Sa", "Sh", "Dr", "Dv", "Dh")}
    names, units, measures = [], [], []

    def zero(width: int) -> sp.csr_array:
        return sp.csr_array((1, width))

    for s in assembly.sensors.values():
        row = {k: zero(n) for k in ("Sd", "Sv", "Sa", "Sh")}
        row.update({k: zero(nr) for k in ("Dr", "Dv", "Dh")})
        if s.kind == "body":
            T = model.body_map(s.target, s.at)
            q = sp.csr_array(s.direction[None, :] @ T)
            row[{"displacement": "Sd", "velocity": "Sv", "acceleration": "Sa"}[s.measure]] = q
            rotational = bool(np.any(s.direction[3:]))
        else:
            lm = model.links[s.target]
            c = s.component
            q, r = lm["q"][[c], :], lm["r"][[c], :]
            rotational = lm["units"][c] == "rad"
            if s.measure == "deflection":
                row["Sd"], row["Dr"] = q, r
            else:
                k, d = lm["stiffness"][c], lm["damping"][c]
                eta = lm["loss_factor"]
                row["Sd"], row["Dr"] = q * k, r * k
                row["Sv"], row["Dv"] = q * d, r * d
                row["Sh"], row["Dh"] = q * (eta * k), r * (eta * k)
        for k, v in row.items():
            rows[k].append(sp.csr_array(v))
        names.append(s.name)
        units.append(_UNIT[(s.measure, rotational)])
        measures.append(s.measure)
    if not names:
        return model
    stacked = {k: sp.vstack(v).tocsr() for k, v in rows.items()}
    return replace(model, sensors=tuple(names), sensor_units=tuple(units),
                   sensor_measures=tuple(measures), **stacked)
