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

__all__ = ["LinearModel", "LinkMap", "assemble", "GRAVITY"]

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
        cols, T = self.body_point(body, at)
        rows, cc = np.nonzero(T)
        return sp.csr_array((T[rows, cc], (rows, cols[cc])), shape=(6, self.n))

    def body_point(self, body: str, at: np.ndarray | None = None
                   ) -> tuple[np.ndarray, np.ndarray]:
        """(DOF indices, 6 x k dense map) of a body point's motion in an unreduced model."""
        b = self.assembly.bodies[body]
        start = self._body_start[body]
        cols = np.arange(start, start + len(b.dofs))
        sel = [DOF_NAMES.index(d) for d in b.dofs]
        r = np.zeros(3) if at is None else np.asarray(at, float) - b.cg
        return cols, motion_map(r)[:, sel]

    @property
    def _body_start(self) -> dict[str, int]:
        starts, pos = {}, 0
        for b in self.assembly.bodies.values():
            starts[b.name] = pos
            pos += len(b.dofs)
        return starts

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
        starts = self._body_start
        for b in self.assembly.bodies.values():
            if "z" in b.dofs:       # a vertical force at the cg loads the z DOF alone
                out[starts[b.name] + b.dofs.index("z")] -= b.mass * g
        if self.assembly.superelements:
            out += self._superelement_gravity(g)
        return out

    def _superelement_gravity(self, g: float) -> np.ndarray:
        """-g T^T M e_z of every superelement (builder.superelement)."""
        from .superelement import dof_map, gravity_direction

        offsets, pos = {}, 0
        for b in self.assembly.bodies.values():
            offsets[b.name] = (np.arange(pos, pos + len(b.dofs)),
                               [DOF_NAMES.index(d) for d in b.dofs])
            pos += len(b.dofs)
        out = np.zeros(self.n)
        for se in self.assembly.superelements.values():
            T = dof_map(se, self.assembly.bodies, offsets, pos, self.n)
            out -= g * (T.T @ (se.M @ gravity_direction(se)))
            pos += len(se.interior)
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
        self.rows.append(np.repeat(rows, len(cols)))
        self.cols.append(np.tile(cols, len(rows)))
        self.vals.append(np.asarray(block, float).ravel())

    def matrix(self, symmetric: bool = False) -> sp.csr_array:
        """The summed sparse matrix; ``symmetric`` averages it with its transpose
        (exact symmetry, whatever the round-off of the element products)."""
        if not self.rows:
            return sp.csr_array(self.shape)
        r, c, v = (np.concatenate(x) for x in (self.rows, self.cols, self.vals))
        if symmetric:  # fold onto the upper triangle, averaging (i, j) and (j, i), then mirror
            v = np.where(r == c, v, 0.5 * v)
            r, c = np.minimum(r, c), np.maximum(r, c)
        m = sp.csr_array((v, (r, c)), shape=self.shape)
        m.sum_duplicates()
        if symmetric:
            m = (m + sp.triu(m, k=1).T).tocsr()
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
    link_maps: dict[str, LinkMap] = {}
    for link in assembly.links.values():
        if link.type not in LINK_TYPES:
            raise InputError(f'unknown link type "{link.type}"', link.where)
        em: ElementMatrices = LINK_TYPES[link.type].matrices(link)
        ends = (_end_map(link.a, em.points[0], assembly, offsets, inputs),
                _end_map(link.b, em.points[1], assembly, offsets, inputs))
        # one map from the element's 12 point motions to its ends' body DOFs
        cols = np.concatenate([ends[0].cols, ends[1].cols])
        T = np.zeros((12, len(cols)))
        T[:6, :len(ends[0].cols)] = ends[0].T
        T[6:, len(ends[0].cols):] = ends[1].T
        roads = [(6 * i, e.road) for i, e in enumerate(ends) if e.road >= 0]
        for key, E in (("K", em.K), ("C", em.C), ("H", em.H)):
            if not E.any():
                continue
            mats[key].add(cols, cols, T.T @ E @ T)
            for off, j in roads:
                bmat[key].add(cols, np.array([j]), -(T.T @ E[:, off:off + 6] @ _EZ)[:, None])
        link_maps[link.name] = LinkMap(
            cols, em.deflection @ T,
            np.array([j for _, j in roads], dtype=int),
            np.column_stack([em.deflection[:, off:off + 6] @ _EZ for off, _ in roads])
            if roads else np.zeros((em.deflection.shape[0], 0)),
            em.stiffness, em.damping, em.loss_factor, em.components, em.units, n, nr)

    _add_superelements(assembly, offsets, pos, n, M, mats)
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


def _add_superelements(assembly: Assembly, offsets: dict, start: int, n: int,
                       M: _Triplets, mats: dict[str, _Triplets]) -> None:
    """T^T X T of every superelement's matrices X (builder.superelement), its interior
    coordinates numbered from ``start`` after the bodies' DOFs."""
    from .superelement import dof_map

    for se in assembly.superelements.values():
        for p in se.points:
            if p.body != "ground" and p.body not in assembly.bodies:
                raise InputError(f'superelement "{se.name}": no body "{p.body}" to join at '
                                 f"{list(p.at)}", se.where)
        T = dof_map(se, assembly.bodies, offsets, start, n)
        cols = np.flatnonzero(np.any(T != 0, axis=0))
        Tc = T[:, cols]
        M.add(cols, cols, Tc.T @ se.M @ Tc)
        for key in ("K", "C", "H"):
            X = getattr(se, key)
            if X.any():
                mats[key].add(cols, cols, Tc.T @ X @ Tc)
        start += len(se.interior)


@dataclass(frozen=True, eq=False)
class LinkMap:
    """A link's deflection components d = Dq q[cols] + Dr r[roads] (m or rad) and the
    stiffness (N/m, N m/rad), damping and loss factor of each component."""

    cols: np.ndarray
    Dq: np.ndarray
    roads: np.ndarray
    Dr: np.ndarray
    stiffness: np.ndarray
    damping: np.ndarray
    loss_factor: float
    components: tuple[str, ...]
    units: tuple[str, ...]
    n: int
    nr: int

    def q_rows(self, rows: list[int] | None = None) -> sp.csr_array:
        """Deflection components (all, or ``rows``) as a sparse map on q."""
        D = self.Dq if rows is None else self.Dq[rows]
        r, c = np.nonzero(D)
        return sp.csr_array((D[r, c], (r, self.cols[c])), shape=(D.shape[0], self.n))

    def r_rows(self, rows: list[int] | None = None) -> sp.csr_array:
        """Deflection components as a sparse map on the road inputs."""
        D = self.Dr if rows is None else self.Dr[rows]
        r, c = np.nonzero(D)
        return sp.csr_array((D[r, c], (r, self.roads[c])), shape=(D.shape[0], self.nr))

    def deflection(self, q: np.ndarray) -> np.ndarray:
        """Deflection components for a DOF vector q (road at rest)."""
        return self.Dq @ np.asarray(q)[self.cols]


def _with_sensors(model: LinearModel, assembly: Assembly) -> LinearModel:
    """Add the output maps of the assembly's sensors (built from triplets, once)."""
    if not assembly.sensors:
        return model
    n, nr, ns = model.n, len(model.inputs), len(assembly.sensors)
    q_maps = {k: _Triplets((ns, n)) for k in ("Sd", "Sv", "Sa", "Sh")}
    r_maps = {k: _Triplets((ns, nr)) for k in ("Dr", "Dv", "Dh")}
    names, units, measures = [], [], []
    for i, s in enumerate(assembly.sensors.values()):
        row = np.array([i])
        if s.kind == "body":
            cols, T = model.body_point(s.target, s.at)
            key = {"displacement": "Sd", "velocity": "Sv", "acceleration": "Sa"}[s.measure]
            q_maps[key].add(row, cols, (s.direction @ T)[None, :])
            rotational = bool(np.any(s.direction[3:]))
        else:
            lm = model.links[s.target]
            c = s.component
            dq, dr = lm.Dq[[c]], lm.Dr[[c]]
            rotational = lm.units[c] == "rad"
            gains = ({"Sd": 1.0} if s.measure == "deflection" else
                     {"Sd": lm.stiffness[c], "Sv": lm.damping[c],
                      "Sh": lm.loss_factor * lm.stiffness[c]})
            for key, g in gains.items():
                if g:
                    q_maps[key].add(row, lm.cols, g * dq)
                    r_maps["D" + {"Sd": "r", "Sv": "v", "Sh": "h"}[key]].add(row, lm.roads,
                                                                             g * dr)
        names.append(s.name)
        units.append(_UNIT[(s.measure, rotational)])
        measures.append(s.measure)
    stacked = {k: t.matrix() for k, t in {**q_maps, **r_maps}.items()}
    return replace(model, sensors=tuple(names), sensor_units=tuple(units),
                   sensor_measures=tuple(measures), **stacked)
