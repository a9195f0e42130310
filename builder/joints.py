"""Joint constraints eliminated exactly: master-slave reduction of A q = 0.

Every joint (:mod:`builder.elements.joint`) contributes rows ``a^T q = 0``
over the body DOFs q (m, rad): the components of the relative motion of
its two end points that it forbids, linearised at the file's geometry.
Stacked, they are one sparse matrix A (constraints x DOFs). The constrained
motions are its null space, written in master-slave form:

    q = T q_m,   T = P [I; -A_s^-1 A_m]

with q_s the slave (dependent) DOFs, one per independent constraint, and
q_m the masters, which keep their names (``knuckle_fl.z``). So the
constrained model is M' = T^T M T, K' = T^T K T (exactly symmetric), and a
motion of q_m satisfies every joint to round-off (A T = 0).

The work is split by the connected groups of DOFs the rows tie together
(one suspension corner and the body it hangs from, say); each group is
dense and small. In a group:

1. the rows are taken in file order, each scaled to unit length; a row
   whose part outside the span of the rows already taken is below
   ``REDUNDANT`` (relative) repeats them: it is dropped and reported by
   name with the joints whose rows it repeats (the loop that
   over-constrains). Below ``NEARLY`` it is kept and reported as nearly
   redundant (the joints then lock a motion their geometry almost allows);
2. slaves are picked greedily from the DOFs least wanted as coordinates:
   first those no depth keeps, then of the lightest body, then rotations
   before translations; a DOF becomes a slave only when its column is well
   independent of the slaves already chosen (so A_s is well conditioned).

Zero-stiffness motions left after the elimination that are not rigid
motions of the whole model are mechanisms, reported with the bodies that
move in them (:func:`find_mechanisms`).
"""

from __future__ import annotations

import fnmatch
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp

from .elements.joint import constrained_directions, direction_text, is_joint

__all__ = ["Elimination", "Redundancy", "Mechanism", "joint_rows", "eliminate", "hub_dofs",
           "find_mechanisms", "REDUNDANT", "NEARLY"]

#: A unit constraint row whose part outside the span of earlier rows is below this
#: repeats them (redundant).
REDUNDANT = 1e-9
#: ... and below this it is nearly redundant (kept, reported).
NEARLY = 1e-5
#: A stand-in end for ground ends: no DOF columns.
_NOWHERE = type("_Nowhere", (), {"kind": "ground", "node": "ground"})()
#: A body moves in a mechanism when it holds this share of the motion's kinetic energy.
MOVING_SHARE = 0.01


@dataclass(frozen=True, eq=False)
class Redundancy:
    """A dropped constraint row: the joint and component, and the joints whose rows
    it repeats (with it, the loop that over-constrains)."""

    joint: str
    component: str
    loop: tuple[str, ...]

    def text(self) -> str:
        others = [j for j in self.loop if j != self.joint]
        return (f"joint {self.joint}: the constraint on {self.component} is redundant "
                f"(the loop {', '.join([*others, self.joint])} already fixes it); dropped")


@dataclass(frozen=True, eq=False)
class Mechanism:
    """A motion (root body DOFs) that joints allow and no link resists, and the bodies
    that move in it (with their shares of its kinetic energy)."""

    bodies: tuple[str, ...]
    shares: tuple[float, ...]
    shape: np.ndarray

    def text(self) -> str:
        moving = ", ".join(f"{b} ({100 * s:.0f}%)" for b, s in zip(self.bodies, self.shares))
        return (f"mechanism: a free motion that the joints allow and no link resists moves "
                f"{moving}; add a link (a bushing or a spring) or a joint that holds it")


@dataclass(frozen=True, eq=False)
class Elimination:
    """The constraint elimination: q_root = T q (T: root n x masters).

    ``rows`` names every constraint row (joint, component text); ``A`` holds the
    independent rows (sparse, constraints x root DOFs); ``slaves`` and ``masters``
    index the root DOFs."""

    T: sp.csr_array
    A: sp.csr_array
    masters: np.ndarray
    slaves: np.ndarray
    rows: tuple[tuple[str, str], ...]
    redundant: tuple[Redundancy, ...]
    nearly: tuple[str, ...]
    joints: tuple[str, ...]
    mechanisms: tuple[Mechanism, ...] = ()

    def warnings(self) -> tuple[str, ...]:
        """One line per joint with redundant constraints, per near redundancy and
        per mechanism."""
        by_joint: dict[str, list[Redundancy]] = {}
        for r in self.redundant:
            by_joint.setdefault(r.joint, []).append(r)
        lines = []
        for joint, items in by_joint.items():
            if len(items) == 1:
                lines.append(items[0].text())
                continue
            loop = list(dict.fromkeys(j for r in items for j in r.loop if j != joint))
            lines.append(f"joint {joint}: {len(items)} redundant constraints "
                         f"({', '.join(r.component for r in items)}): the loop "
                         f"{', '.join([*loop, joint])} already fixes them; dropped")
        return tuple(lines) + self.nearly + tuple(m.text() for m in self.mechanisms)

    def to_dict(self) -> dict[str, Any]:
        return {"joints": list(self.joints), "constraints": len(self.rows),
                "independent_constraints": int(self.A.shape[0]),
                "redundant": [{"joint": r.joint, "component": r.component,
                               "loop": list(r.loop)} for r in self.redundant],
                "mechanisms": [{"bodies": list(m.bodies), "shares": list(m.shares)}
                               for m in self.mechanisms]}


def joint_rows(assembly: Any, layout: Any, n: int
               ) -> tuple[sp.csr_array, list[tuple[str, str]]]:
    """The constraint rows of every joint of ``assembly`` over the root DOFs.

    ``layout`` is the assembler's DOF layout (``ends(ends, points)`` gives each end's
    DOF columns and 6 x 6 point-motion maps). A row over DOFs a body lacks (held at
    zero) only keeps its other entries; an all-zero row constrains nothing and is left
    out. ``n``: the model's DOF count. Returns (A, [(joint, component text) per row]).
    """
    rr: list[np.ndarray] = []
    cc: list[np.ndarray] = []
    vv: list[np.ndarray] = []
    names: list[tuple[str, str]] = []
    joints = [lk for lk in assembly.links.values() if is_joint(lk)]
    if not joints:
        return sp.csr_array((0, n)), names
    points = np.array([lk.a.at for lk in joints], dtype=float).reshape(-1, 3)
    ends = {}
    for side in ("a", "b"):
        es = [getattr(lk, side) for lk in joints]
        cols, maps, _ = layout.ends([e if e.kind == "body" else _NOWHERE for e in es], points)
        ends[side] = (cols, maps)
    for li, link in enumerate(joints):
        dirs = constrained_directions(link.type, link.props)
        E = np.zeros((len(dirs), 6))
        for i, (kind, d) in enumerate(dirs):
            E[i, :3] = d if kind == "t" else 0.0
            E[i, 3:] = d if kind == "r" else 0.0
        c_parts, v_parts = [], []
        for side, sign in (("a", -1.0), ("b", 1.0)):
            cols, maps = ends[side][0][li], ends[side][1][li]
            on = cols >= 0
            if on.any():
                c_parts.append(cols[on])
                v_parts.append(sign * (E @ maps)[:, on])
        if not c_parts:
            continue
        c = np.concatenate(c_parts)
        V = np.hstack(v_parts)
        for i, (kind, d) in enumerate(dirs):
            keep = np.abs(V[i]) > 0
            if not keep.any():
                continue
            rr.append(np.full(int(keep.sum()), len(names)))
            cc.append(c[keep])
            vv.append(V[i, keep])
            names.append((link.name, direction_text(kind, d)))
    if not names:
        return sp.csr_array((0, n)), names
    A = sp.csr_array((np.concatenate(vv), (np.concatenate(rr), np.concatenate(cc))),
                     shape=(len(names), n))
    A.sum_duplicates()
    return A, names


def slave_preference(assembly: Any, dofs: Sequence[str]) -> np.ndarray:
    """A sort key per root DOF, lowest = best slave: DOFs no depth keeps first, then
    those of lighter bodies, then rotations before translations."""
    keep = [p for d in assembly.depths.values() for p in d.keep]
    mass = {b.name: b.mass for b in assembly.bodies.values()}
    heaviest = max(mass.values(), default=1.0) or 1.0
    key = np.zeros(len(dofs))
    for i, label in enumerate(dofs):
        body, _, dof = label.rpartition(".")
        kept = any(fnmatch.fnmatchcase(label, p) for p in keep)
        key[i] = (10.0 if kept else 0.0) + 4.0 * min(mass.get(body, heaviest) / heaviest, 1.0) \
            + (0.0 if dof.startswith("r") else 0.5)
    return key


def eliminate(A: sp.csr_array, names: Sequence[tuple[str, str]],
              preference: np.ndarray, hub: np.ndarray | None = None) -> Elimination:
    """Master-slave elimination of A q = 0 (see the module notes).

    ``hub`` marks DOFs of bodies that many joints share (the sprung body of a car):
    groups are found without them, so that each corner is its own small dense
    problem, and a group takes its slaves among its own DOFs. A group that cannot
    (its rows need a hub DOF to be independent, or to be eliminated) is solved
    together with every other such group and the rows on hub DOFs alone.
    """
    from scipy.sparse.csgraph import connected_components

    A = sp.csr_array(A)
    c, n = A.shape
    joints = tuple(dict.fromkeys(j for j, _ in names))
    if c == 0:
        return Elimination(sp.eye_array(n, format="csr"), A, np.arange(n), np.zeros(0, int),
                           tuple(names), (), (), joints)
    hub = np.zeros(n, dtype=bool) if hub is None else np.asarray(hub, dtype=bool)
    Acsr = A.tocsr()
    local = sp.csr_array(Acsr @ sp.diags_array((~hub).astype(float)))
    local.eliminate_zeros()
    pattern = sp.csr_array((np.ones(local.nnz), local.indices, local.indptr), shape=A.shape)
    _, label = connected_components(pattern.T @ pattern, directed=False)
    has_local = np.diff(local.indptr) > 0
    row_comp = np.full(c, -1)
    row_comp[has_local] = label[local.indices[local.indptr[:-1][has_local]]]
    slaves: list[int] = []
    blocks: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []   # (slaves, masters, X)
    kept_rows: list[int] = []
    redundant: list[Redundancy] = []
    nearly: list[str] = []
    merged_rows = [np.flatnonzero(row_comp < 0)]
    order = np.argsort(row_comp, kind="stable")
    starts = np.searchsorted(row_comp[order], np.unique(row_comp[row_comp >= 0]))
    bounds = list(zip(starts, [*starts[1:], c]))
    for lo, hi in bounds:
        rows = np.sort(order[lo:hi])
        cols, B = _dense_block(Acsr, rows)
        own = cols[~hub[cols]]
        own_at = np.flatnonzero(~hub[cols])
        probe_red: list[Redundancy] = []
        probe_near: list[str] = []
        ind = _independent_rows(B[:, own_at], rows, names, probe_red, probe_near)
        if probe_red or probe_near:
            merged_rows.append(rows)             # needs the hub DOFs: solved together
            continue
        s_at = own_at[_pick_slaves(B[:, own_at], preference[own])]
        m_at = np.setdiff1d(np.arange(len(cols)), s_at)
        X = np.linalg.solve(B[:, s_at], B[:, m_at])
        blocks.append((cols[s_at], cols[m_at], _clean(X)))
        slaves.extend(cols[s_at])
        kept_rows.extend(rows[ind])
    rows = np.sort(np.concatenate(merged_rows))
    if rows.size:
        cols, B = _dense_block(Acsr, rows)
        ind = _independent_rows(B, rows, names, redundant, nearly)
        kept_rows.extend(rows[ind])
        Bi = B[ind]
        s_at = _pick_slaves(Bi, preference[cols])
        m_at = np.setdiff1d(np.arange(len(cols)), s_at)
        X = np.linalg.solve(Bi[:, s_at], Bi[:, m_at])
        blocks.append((cols[s_at], cols[m_at], _clean(X)))
        slaves.extend(cols[s_at])
    slave_arr = np.array(sorted(slaves), dtype=int)
    masters = np.setdiff1d(np.arange(n), slave_arr)
    # q = S q: masters map to themselves, slaves to -X over their group's other DOFs; a
    # group's hub DOF that the joint group took as a slave is itself resolved by S, so
    # S applied until no slave column is left (twice at most) gives T = S[:, masters]
    r, cl, v = [masters], [masters], [np.ones(len(masters))]
    for s_idx, m_idx, X in blocks:
        i, j = np.nonzero(X)
        r.append(s_idx[i])
        cl.append(m_idx[j])
        v.append(-X[i, j])
    S = sp.csr_array((np.concatenate(v), (np.concatenate(r), np.concatenate(cl))),
                     shape=(n, n))
    is_slave = np.zeros(n, dtype=bool)
    is_slave[slave_arr] = True
    for _ in range(4):
        if not np.any(is_slave[S.tocoo().col]):
            break
        S = sp.csr_array(S @ S)
    T = sp.csr_array(S[:, masters])
    T.eliminate_zeros()
    A_ind = Acsr[np.array(sorted(kept_rows), dtype=int)]
    return Elimination(T, sp.csr_array(A_ind), masters, slave_arr, tuple(names),
                       tuple(redundant), tuple(nearly), joints)


def _dense_block(A: sp.csr_array, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Rows of a CSR matrix as (the columns they use, dense rows x columns)."""
    starts, ends = A.indptr[rows], A.indptr[rows + 1]
    counts = ends - starts
    take = np.repeat(starts - np.cumsum(counts) + counts, counts) + np.arange(counts.sum())
    idx, data = A.indices[take], A.data[take]
    cols = np.unique(idx)
    out = np.zeros((len(rows), len(cols)))
    np.add.at(out, (np.repeat(np.arange(len(rows)), counts), np.searchsorted(cols, idx)), data)
    return cols, out


def _clean(X: np.ndarray) -> np.ndarray:
    """X with round-off entries (below 1e-14 of its largest) set to zero."""
    X[np.abs(X) < 1e-14 * max(1.0, float(np.abs(X).max(initial=0.0)))] = 0.0
    return X


def hub_dofs(assembly: Any, dofs: Sequence[str], joints_per_hub: int = 4) -> np.ndarray:
    """DOFs of the bodies more than ``joints_per_hub`` joints end on (a bool mask)."""
    count: dict[str, int] = {}
    for lk in assembly.links.values():
        if is_joint(lk):
            for e in (lk.a, lk.b):
                if e.kind == "body":
                    count[e.node] = count.get(e.node, 0) + 1
    return np.array([count.get(d.rpartition(".")[0], 0) > joints_per_hub for d in dofs])


def _independent_rows(B: np.ndarray, rows: np.ndarray, names: Sequence[tuple[str, str]],
                      redundant: list[Redundancy], nearly: list[str]) -> np.ndarray:
    """Rows of B (in order) independent of the earlier ones; the others reported.

    Each row is scaled to unit length; what it adds to the span of the rows before
    it is its residual after modified Gram-Schmidt in file order (each accepted row's
    direction projected out of all later rows at once, twice for round-off)."""
    U = B / np.linalg.norm(B, axis=1)[:, None]
    res = U.copy()
    size = np.zeros(len(U))
    for i in range(len(U)):
        size[i] = float(np.linalg.norm(res[i]))
        if size[i] >= REDUNDANT:
            q = res[i] / size[i]
            for _ in range(2):
                res[i + 1:] -= np.outer(res[i + 1:] @ q, q)
    keep: list[int] = []
    for i in range(len(U)):
        joint, comp = names[rows[i]]
        if size[i] < REDUNDANT:
            coef = np.linalg.lstsq(U[keep].T, U[i], rcond=None)[0] if keep else np.zeros(0)
            big = np.abs(coef) > 1e-8 * max(float(np.abs(coef).max(initial=0.0)), 1e-300)
            loop = tuple(dict.fromkeys([names[rows[keep[k]]][0] for k in np.flatnonzero(big)]
                                       + [joint]))
            redundant.append(Redundancy(joint, comp, loop))
            continue
        if size[i] < NEARLY:
            nearly.append(f"joint {joint}: the constraint on {comp} is nearly redundant "
                          f"(independent by {size[i]:.1e} only): the joints lock a motion "
                          "their geometry almost allows; check the axes and points")
        keep.append(i)
    return np.array(keep, dtype=int)


def _pick_slaves(B: np.ndarray, preference: np.ndarray) -> np.ndarray:
    """r columns of B (r x k, rank r) forming a well-conditioned square block, taken
    greedily in order of ``preference`` (lowest first): a column is taken when what
    it adds to the span of those taken is above the pass's threshold."""
    r = B.shape[0]
    norms = np.linalg.norm(B, axis=0)
    order = [j for j in np.argsort(preference, kind="stable") if norms[j] > 0]
    res = B[:, order] / norms[order]          # residuals against the columns taken
    chosen: list[int] = []
    taken = np.zeros(len(order), dtype=bool)
    for tol in (0.3, 1e-2, 1e-6, 1e-12):
        for k in range(len(order)):
            if len(chosen) == r:
                break
            if taken[k]:
                continue
            size = float(np.linalg.norm(res[:, k]))
            if size > tol:
                q = res[:, k] / size
                res = res - np.outer(q, q @ res)
                taken[k] = True
                chosen.append(order[k])
        if len(chosen) == r:
            break
    return np.array(chosen, dtype=int)


def find_mechanisms(K: sp.csr_array, M: sp.csr_array, T: sp.csr_array, A: sp.csr_array,
                    Kroot: Any, Mroot: Any, assembly: Any, layout: Any
                    ) -> tuple[Mechanism, ...]:
    """Zero-stiffness motions of the constrained model (K, M in the masters) that are
    not rigid motions of the whole model: each with the bodies that move in it.

    The rigid motions are those of all bodies together (restricted to the DOFs the
    bodies have) that the joints (rows ``A``) and links (``Kroot``, unconstrained)
    leave free; what is left of a zero-frequency mode outside their span
    (mass-weighted by ``Mroot``) is a mechanism.
    """
    from .eigen import lowest_modes, zero_frequency_modes

    m = K.shape[0]
    if m == 0:
        return ()
    count = min(m, 24)
    lam, Z = lowest_modes(K, M, count)
    zero = zero_frequency_modes(K, lam, Z)
    if not zero.any():
        return ()
    Y = np.asarray(T @ Z[:, zero])                       # root motions
    Mroot = sp.csr_array(Mroot)
    Rk = _free_rigid_motions(_rigid_columns(assembly, layout, T.shape[0]), A, Kroot)
    if Rk.shape[1]:
        W = Rk.T @ (Mroot @ Rk)
        Y = Y - Rk @ np.linalg.solve(W, Rk.T @ (Mroot @ Y))
    # orthonormal basis of what is left, in the mass metric
    G = Y.T @ (Mroot @ Y)
    ev, V = np.linalg.eigh(0.5 * (G + G.T))
    scale = float(np.max(np.diag(Z[:, zero].T @ (M @ Z[:, zero]))))
    out = []
    for k in np.flatnonzero(ev > 1e-8 * max(scale, 1e-300)):
        y = Y @ V[:, k] / np.sqrt(ev[k])
        energy = y * (Mroot @ y)
        shares = {}
        for name, (cols, _sel) in layout.offsets().items():
            shares[name] = float(energy[cols].sum())
        total = sum(shares.values()) or 1.0
        moving = sorted(((s / total, b) for b, s in shares.items() if s / total >= MOVING_SHARE),
                        reverse=True)
        out.append(Mechanism(tuple(b for _, b in moving), tuple(round(s, 3) for s, _ in moving),
                             y))
    return tuple(out)


def _free_rigid_motions(R: np.ndarray, A: sp.csr_array, Kroot: Any) -> np.ndarray:
    """The combinations of the rigid motions R (n x 6) that satisfy every constraint
    and strain no link: a basis (n x k)."""
    R = R[:, np.linalg.norm(R, axis=0) > 0]
    if R.shape[1] == 0:
        return R
    R = R / np.linalg.norm(R, axis=0)
    KR = np.asarray(Kroot @ R)
    kscale = float(np.abs(Kroot).max()) if Kroot.nnz else 1.0
    Q = np.vstack([np.asarray(A @ R), KR / max(kscale, 1e-300)])
    if Q.shape[0] == 0:
        return R
    _, sv, Vt = np.linalg.svd(Q)
    sv = np.r_[sv, np.zeros(R.shape[1] - len(sv))]
    return R @ Vt[sv < 1e-9].T


def _rigid_columns(assembly: Any, layout: Any, n: int) -> np.ndarray:
    """(n, 6): the six rigid motions of all bodies together about the origin, on the
    root DOFs (the components of DOFs a body lacks left out)."""
    from .kinematics import motion_map

    R = np.zeros((n, 6))
    for name, (cols, sel) in layout.offsets().items():
        cg = np.asarray(assembly.bodies[name].cg, dtype=float)
        # body motion for a rigid motion [u; theta] of the whole: u + theta x cg, theta
        R[cols] = motion_map(cg)[sel]
    return R
