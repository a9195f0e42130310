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

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import cached_property
from typing import Any

import numpy as np
import scipy.sparse as sp

from .assembly import Assembly
from .elements import LINK_TYPES, ComponentBatch, ElementMatrices
from .errors import InputError, Where
from .kinematics import DOF_NAMES, motion_map, motion_map_all
from .plausibility import require_plausible
from .threads import blas_threads_for

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
    warnings: tuple[str, ...] = ()
    #: joint elimination (builder.joints.Elimination) of a jointed model: its DOFs are
    #: the independent coordinates, ``parent`` the unconstrained model, ``expansion`` T
    joints: Any = None
    #: the model depths start from when it differs from ``parent`` (the jointed model)
    base: LinearModel | None = None

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

    @cached_property
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
        with blas_threads_for(2 * self.n):    # small dense problems: one BLAS thread
            return self._state_space()

    def _state_space(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
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
    """Dense blocks at (rows, cols), summed into a sparse matrix. Blocks of one shape are
    expanded into COO triplets together (a few numpy calls per shape, not per block), then
    put back in the order they were added, so that sums round off as they always did."""

    def __init__(self, shape: tuple[int, int]):
        self.shape = shape
        self.count = 0
        self.blocks: dict[tuple[int, int], list[tuple[int, np.ndarray, np.ndarray, Any]]] = {}

    def add(self, rows: np.ndarray, cols: np.ndarray, block: np.ndarray) -> None:
        if len(rows) == 0 or len(cols) == 0:
            return
        self.blocks.setdefault((len(rows), len(cols)), []).append(
            (self.count, rows, cols, block))
        self.count += 1

    def _coo(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        rows, cols, vals, order, sizes = [], [], [], [], []
        for (nr, nc), items in self.blocks.items():
            n = len(items)
            r = np.array([it[1] for it in items], dtype=np.int64).reshape(n, nr, 1)
            c = np.array([it[2] for it in items], dtype=np.int64).reshape(n, 1, nc)
            rows.append(np.broadcast_to(r, (n, nr, nc)).ravel())
            cols.append(np.broadcast_to(c, (n, nr, nc)).ravel())
            vals.append(np.concatenate([np.asarray(it[3], dtype=float).ravel() for it in items]))
            order.append(np.array([it[0] for it in items]))
            sizes.append(np.full(n, nr * nc))
        r, c, v = np.concatenate(rows), np.concatenate(cols), np.concatenate(vals)
        seq, size = np.concatenate(order), np.concatenate(sizes)
        start = np.cumsum(size) - size                  # where each block sits now
        first = np.argsort(seq, kind="stable")           # blocks in the order added
        size, start = size[first], start[first]
        offset = np.cumsum(size) - size                  # where each block goes
        idx = np.repeat(start - offset, size) + np.arange(len(v))
        return r[idx], c[idx], v[idx]

    def matrix(self, symmetric: bool = False) -> sp.csr_array:
        """The summed sparse matrix; ``symmetric`` averages it with its transpose
        (exact symmetry, whatever the round-off of the element products)."""
        if not self.blocks:
            return sp.csr_array(self.shape)
        r, c, v = self._coo()
        if symmetric:  # fold onto the upper triangle, averaging (i, j) and (j, i), then mirror
            v = np.where(r == c, v, 0.5 * v)
            r, c = np.minimum(r, c), np.maximum(r, c)
        m = sp.csr_array((v, (r, c)), shape=self.shape)
        m.sum_duplicates()
        if symmetric:
            m = (m + sp.triu(m, k=1).T).tocsr()
        m.eliminate_zeros()
        return m


_EZ = np.array([0.0, 0.0, 1.0, 0.0, 0.0, 0.0])


@dataclass(frozen=True, eq=False)
class _Layout:
    """Where the six DOFs of each body sit in q (-1 where the body lacks that DOF),
    and the road inputs' columns."""

    index: dict[str, int]
    slots: np.ndarray       # (bodies, 6)
    cg: np.ndarray          # (bodies, 3)
    inputs: dict[str, int]
    n: int

    @staticmethod
    def of(assembly: Assembly) -> _Layout:
        bodies = list(assembly.bodies.values())
        slots = -np.ones((len(bodies), 6), dtype=int)
        pos = 0
        for i, b in enumerate(bodies):
            for d in b.dofs:
                slots[i, DOF_NAMES.index(d)] = pos
                pos += 1
        cg = np.array([b.cg for b in bodies], dtype=float).reshape(-1, 3)
        return _Layout({b.name: i for i, b in enumerate(bodies)}, slots, cg,
                       {f"road.{r}": i for i, r in enumerate(assembly.road)}, pos)

    def offsets(self) -> dict[str, tuple[np.ndarray, list[int]]]:
        """Body name -> (its DOF columns, the indices 0..5 of the DOFs it has)."""
        out = {}
        for name, i in self.index.items():
            sel = [d for d in range(6) if self.slots[i, d] >= 0]
            out[name] = (self.slots[i, sel], sel)
        return out

    def ends(self, ends: list[Any], points: np.ndarray) -> tuple[np.ndarray, np.ndarray,
                                                                  np.ndarray]:
        """For link ends and their points (L, 3): DOF columns (L, 6), the 6 x 6 maps
        from the body DOFs to the point's motion (L, 6, 6), road columns (L,) (-1: none)."""
        body = np.array([self.index[e.node] if e.kind == "body" else -1 for e in ends], int)
        road = np.array([self.inputs[e.node] if e.kind == "road" else -1 for e in ends], int)
        cols = -np.ones((len(ends), 6), dtype=int)
        maps = np.zeros((len(ends), 6, 6))
        on = body >= 0
        cols[on] = self.slots[body[on]]
        maps[on] = motion_map_all(points[on] - self.cg[body[on]])
        return cols, maps, road


def _symmetric(A: sp.csr_array) -> sp.csr_array:
    """(A + A^T)/2, exactly symmetric, explicit zeros dropped."""
    out = ((A + A.T) * 0.5).tocsr()
    out.eliminate_zeros()
    return out


def _mass_matrix(assembly: Assembly, layout: _Layout, n: int) -> sp.csr_array:
    bodies = list(assembly.bodies.values())
    if not bodies:
        return sp.csr_array((n, n))
    blocks = np.zeros((len(bodies), 6, 6))
    blocks[:, [0, 1, 2], [0, 1, 2]] = np.array([b.mass for b in bodies], float)[:, None]
    blocks[:, 3:, 3:] = np.array([b.inertia for b in bodies], dtype=float).reshape(-1, 3, 3)
    rows = np.broadcast_to(layout.slots[:, :, None], blocks.shape)
    cols = np.broadcast_to(layout.slots[:, None, :], blocks.shape)
    ok = (rows >= 0) & (cols >= 0) & (blocks != 0)
    return _symmetric(sp.csr_array((blocks[ok], (rows[ok], cols[ok])), shape=(n, n)))


class _Components:
    """The deflection components of every batched link, stacked: d = G q + R r, with
    stiffness k, damping c and loss-factor stiffness h = eta k per component."""

    def __init__(self, n: int, nr: int):
        self.n, self.nr, self.count = n, nr, 0
        self.g: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
        self.r: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
        self.k: list[np.ndarray] = []
        self.c: list[np.ndarray] = []
        self.h: list[np.ndarray] = []
        self.rows: dict[str, tuple[int, int, float, tuple[str, ...], tuple[str, ...]]] = {}

    def add(self, links: list[Any], batch: ComponentBatch, layout: _Layout) -> None:
        nl, m = batch.stiffness.shape
        rows = self.count + np.arange(nl * m).reshape(nl, m)
        for e, (ends, points) in enumerate((([lk.a for lk in links], batch.points_a),
                                            ([lk.b for lk in links], batch.points_b))):
            cols, maps, road = layout.ends(ends, np.asarray(points, float).reshape(-1, 3))
            part = batch.deflection[:, :, 6 * e:6 * e + 6]
            dt = part @ maps                                          # (L, m, 6)
            cc = np.broadcast_to(cols[:, None, :], dt.shape)
            rr = np.broadcast_to(rows[:, :, None], dt.shape)
            ok = (cc >= 0) & (dt != 0)
            self.g.append((rr[ok], cc[ok], dt[ok]))
            on = road >= 0
            if on.any():
                vals = part[on] @ _EZ                                 # (Lroad, m)
                self.r.append((rows[on].ravel(), np.repeat(road[on], m), vals.ravel()))
        k = np.asarray(batch.stiffness, float)
        self.k.append(k.ravel())
        self.c.append(np.asarray(batch.damping, float).ravel())
        self.h.append((np.asarray(batch.loss_factor, float)[:, None] * k).ravel())
        for i, lk in enumerate(links):
            self.rows[lk.name] = (self.count + i * m, m, float(batch.loss_factor[i]),
                                  batch.components, batch.units)
        self.count += nl * m

    def maps(self) -> tuple[sp.csr_array, sp.csr_array]:
        """G (components x n) and R (components x road inputs)."""
        def stack(parts, width):
            if not parts:
                return sp.csr_array((self.count, width))
            r, c, v = (np.concatenate(x) for x in zip(*parts))
            return sp.csr_array((v, (r, c)), shape=(self.count, width))
        return stack(self.g, self.n), stack(self.r, self.nr)

    def values(self, key: str) -> np.ndarray:
        parts = getattr(self, key)
        return np.concatenate(parts) if parts else np.zeros(0)


def assemble(assembly: Assembly) -> LinearModel:
    """Build the sparse LinearModel of an Assembly (rigid links already merged).

    Overflowing values give non-finite matrices, refused by the plausibility check
    with the link or body named (InputError); no floating-point warning is printed.
    """
    with np.errstate(all="ignore"):
        return _assemble(assembly)


def _assemble(assembly: Assembly) -> LinearModel:
    """:func:`assemble` itself.

    Links of the built-in types (and of any type with ``batch``) go in one
    sparse deflection map G: K = G^T diag(k) G, C = G^T diag(c) G,
    H = G^T diag(eta k) G and Br = -G^T diag(k) R for the road map R; links of
    other types are added element by element.
    """
    dofs = assembly.dof_labels
    layout = _Layout.of(assembly)
    n, nr = len(dofs), len(layout.inputs)     # superelement interiors after the bodies
    groups: dict[str, list[Any]] = {}
    for link in assembly.links.values():
        if link.type not in LINK_TYPES:
            raise InputError(f'unknown link type "{link.type}"', link.where)
        if getattr(LINK_TYPES[link.type], "joint", False):
            continue                          # eliminated below, no stiffness
        groups.setdefault(link.type, []).append(link)
    comps = _Components(n, nr)
    others = _ElementSum(n, nr)
    for kind, links in groups.items():
        lt = LINK_TYPES[kind]
        if hasattr(lt, "batch"):
            comps.add(links, lt.batch(links), layout)
        else:
            for link in links:
                others.add(link, lt.matrices(link), layout)
    G, R = comps.maps()
    Gt = G.T.tocsr()
    weighted = {key: Gt @ sp.diags_array(comps.values(key)) for key in ("k", "c", "h")}
    extra = _superelement_matrices(assembly, layout, n)
    mats = {key: _symmetric(weighted[key] @ G + others.mats[key].matrix(True) + extra[key])
            for key in ("k", "c", "h")}
    bmat = {key: (-(weighted[key] @ R) + others.bmat[key].matrix()).tocsr()
            for key in ("k", "c", "h")}
    for B in bmat.values():
        B.eliminate_zeros()
    elastic = [name for name, lk in assembly.links.items() if lk.type in groups]
    links = _LinkMaps(elastic, G, R, comps, others.link_maps, n, nr)
    positions = np.array([assembly.road[r].at for r in assembly.road]).reshape(-1, 3)
    base = LinearModel(
        dofs=dofs, M=_symmetric(_mass_matrix(assembly, layout, n) + extra["m"]),
        C=mats["c"], K=mats["k"], H=mats["h"],
        inputs=tuple(layout.inputs), input_positions=positions,
        Br=bmat["k"], Bv=bmat["c"], Bh=bmat["h"],
        sensors=(), sensor_units=(), sensor_measures=(),
        Sd=sp.csr_array((0, n)), Sv=sp.csr_array((0, n)), Sa=sp.csr_array((0, n)),
        Sh=sp.csr_array((0, n)), Dr=sp.csr_array((0, nr)), Dv=sp.csr_array((0, nr)),
        Dh=sp.csr_array((0, nr)), assembly=assembly, links=links, name=assembly.name)
    warnings = require_plausible(base)    # hopeless sizes: InputError naming the value
    if warnings:
        base = replace(base, warnings=warnings,
                       assembly=assembly.replace(warnings=assembly.warnings + warnings))
    base = _with_sensors(base, base.assembly)
    if len(elastic) < len(assembly.links):
        return _with_joints(base, layout)
    return base


def _with_joints(root: LinearModel, layout: _Layout) -> LinearModel:
    """The jointed model: the joints' constraints eliminated (builder.joints), q_root =
    T q. Its ``parent`` is the unconstrained ``root`` (so that body maps, sensors,
    pictures and labels expand through T as for any depth); redundancies and
    mechanisms are warnings of both."""
    from .joints import eliminate, find_mechanisms, hub_dofs, joint_rows, slave_preference
    from .reduce import transform

    asm = root.assembly
    A, names = joint_rows(asm, layout, root.n)
    elim = eliminate(A, names, slave_preference(asm, root.dofs), hub_dofs(asm, root.dofs))
    T = elim.T
    Tt = T.T.tocsr()
    Kc, Mc = _symmetric(Tt @ root.K @ T), _symmetric(Tt @ root.M @ T)
    elim = replace(elim, mechanisms=find_mechanisms(Kc, Mc, T, elim.A, root.K, root.M, asm, layout))
    notes = elim.warnings()
    if notes:
        root = replace(root, warnings=root.warnings + notes,
                       assembly=asm.replace(warnings=asm.warnings + notes))
    dofs = [root.dofs[i] for i in elim.masters]
    out = transform(root, T, None, dofs)
    return replace(out, joints=elim, base=None, name=root.name)


class _ElementSum:
    """Links of types without ``batch``: their 12 x 12 element matrices, one by one."""

    def __init__(self, n: int, nr: int):
        self.mats = {key: _Triplets((n, n)) for key in ("k", "c", "h")}
        self.bmat = {key: _Triplets((n, nr)) for key in ("k", "c", "h")}
        self.link_maps: dict[str, LinkMap] = {}
        self.n, self.nr = n, nr

    def add(self, link: Any, em: ElementMatrices, layout: _Layout) -> None:
        cols_a, maps_a, road_a = layout.ends([link.a], np.asarray(em.points[0], float)[None])
        cols_b, maps_b, road_b = layout.ends([link.b], np.asarray(em.points[1], float)[None])
        cols12 = np.concatenate([cols_a[0], cols_b[0]])
        T = np.zeros((12, 12))
        T[:6, :6], T[6:, 6:] = maps_a[0], maps_b[0]
        keep = cols12 >= 0
        cols, T = cols12[keep], T[:, keep]
        roads = [(6 * i, int(r[0])) for i, r in enumerate((road_a, road_b)) if r[0] >= 0]
        for key, E in (("k", em.K), ("c", em.C), ("h", em.H)):
            if not E.any():
                continue
            self.mats[key].add(cols, cols, T.T @ E @ T)
            for off, j in roads:
                self.bmat[key].add(cols, np.array([j]), -(T.T @ E[:, off:off + 6] @ _EZ)[:, None])
        self.link_maps[link.name] = LinkMap(
            cols, em.deflection @ T, np.array([j for _, j in roads], dtype=int),
            np.column_stack([em.deflection[:, off:off + 6] @ _EZ for off, _ in roads])
            if roads else np.zeros((em.deflection.shape[0], 0)),
            em.stiffness, em.damping, em.loss_factor, em.components, em.units, self.n, self.nr)


class _LinkMaps(Mapping):
    """``LinearModel.links``: each link's LinkMap, cut from the stacked deflection maps
    when first asked for."""

    def __init__(self, order: list[str], G: sp.csr_array, R: sp.csr_array,
                 comps: _Components, eager: dict[str, LinkMap], n: int, nr: int):
        self._order, self._G, self._R, self._eager = order, G, R, eager
        self._rows = comps.rows
        self._k, self._c = comps.values("k"), comps.values("c")
        self._n, self._nr = n, nr
        self._cache: dict[str, LinkMap] = {}

    def __iter__(self):
        return iter(self._order)

    def __len__(self) -> int:
        return len(self._order)

    def __contains__(self, name: object) -> bool:
        return name in self._eager or name in self._rows

    def __getitem__(self, name: str) -> LinkMap:
        if name in self._eager:
            return self._eager[name]
        if name not in self._cache:
            if name not in self._rows:
                raise KeyError(name)
            self._cache[name] = self._build(name)
        return self._cache[name]

    def diagonal_shares(self) -> sp.csr_array:
        """(links, n): each link's share of the stiffness diagonal, sum_c k_c D_cj^2."""
        index = {name: i for i, name in enumerate(self._order)}
        owner = np.zeros(self._G.shape[0], dtype=int)
        for name, (start, m, *_rest) in self._rows.items():
            owner[start:start + m] = index[name]
        squares = sp.diags_array(self._k) @ self._G.multiply(self._G)
        member = sp.csr_array((np.ones(len(owner)), (owner, np.arange(len(owner)))),
                              shape=(len(self._order), self._G.shape[0]))
        out = sp.lil_array(member @ squares)
        for name, lm in self._eager.items():
            out[[index[name]], lm.cols] = (lm.stiffness[:, None] * lm.Dq ** 2).sum(axis=0)
        return sp.csr_array(out)

    def _build(self, name: str) -> LinkMap:
        start, m, eta, components, units = self._rows[name]
        cols, Dq = _dense_rows(self._G, start, m)
        roads, Dr = _dense_rows(self._R, start, m)
        rows = slice(start, start + m)
        return LinkMap(cols, Dq, roads, Dr, self._k[rows].copy(), self._c[rows].copy(), eta,
                       components, units, self._n, self._nr)


def _dense_rows(A: sp.csr_array, start: int, m: int) -> tuple[np.ndarray, np.ndarray]:
    """Rows start..start+m of a CSR matrix as (columns used, dense m x len(columns))."""
    lo, hi = A.indptr[start], A.indptr[start + m]
    idx, data = A.indices[lo:hi], A.data[lo:hi]
    counts = np.diff(A.indptr[start:start + m + 1])
    cols = np.unique(idx)
    out = np.zeros((m, len(cols)))
    out[np.repeat(np.arange(m), counts), np.searchsorted(cols, idx)] = data
    return cols.astype(int), out


def _superelement_matrices(assembly: Assembly, layout: _Layout, n: int
                           ) -> dict[str, sp.csr_array]:
    """T^T X T of every superelement's matrices X = M, K, C, H (builder.superelement),
    keys m, k, c, h; its interior coordinates numbered after the bodies' DOFs."""
    out = {key: sp.csr_array((n, n)) for key in ("m", "k", "c", "h")}
    if not assembly.superelements:
        return out
    from .superelement import dof_map

    offsets = layout.offsets()
    start = layout.n
    for se in assembly.superelements.values():
        for p in se.points:
            if p.body != "ground" and p.body not in assembly.bodies:
                raise InputError(f'superelement "{se.name}": no body "{p.body}" to join at '
                                 f"{list(p.at)}", se.where)
        T = sp.csr_array(dof_map(se, assembly.bodies, offsets, start, n))
        for key, X in (("m", se.M), ("k", se.K), ("c", se.C), ("h", se.H)):
            if X.any():
                out[key] = out[key] + T.T @ sp.csr_array(X) @ T
        start += len(se.interior)
    return out


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
