"""Damped (complex) modes of a model from its undamped modal basis.

The damped roots s of

    (s^2 M + s (C + H / |s|) + K) x = 0

are sought, where H is the hysteretic (loss-factor) part: a loss factor acts
as the equivalent viscous damping ``H / |s|`` at the root's own natural
frequency ``|s|`` (rad/s). For one DOF, ``|s|`` is exactly the undamped
natural frequency, so ``zeta = eta / 2`` and ``fd = f sqrt(1 - eta^2 / 4)``;
for a mode of a proportionally damped model the same holds mode by mode.

No eigensolve of the whole state space is needed, let alone one per mode:

1. In the M-orthonormal basis of the undamped modes (one symmetric
   eigensolve, done by the caller) the problem reads
   ``s^2 y + s (Cr + Hr / |s|) y + diag(lambda) y = 0`` with
   ``Cr = Phi^T C Phi`` and ``Hr = Phi^T H Phi``.
2. Modes that the damping couples strongly (first-order mixing above
   :data:`CLUSTER_COUPLING`, or equal frequencies) form clusters; each
   cluster's small state-space problem, with the loss factors taken at the
   modes' own frequencies (``Hr_jk / sqrt(w_j w_k)``), gives its roots, and
   the cluster's modes are paired with them one-to-one by MAC (an underdamped
   mode takes one conjugate pair, an overdamped mode two real roots).
3. The first-order change of each complex root from the modes outside its
   cluster (a Schur complement) is computed for all roots at once. A root
   that they change by less than :data:`SUBSPACE_TOLERANCE`, in a cluster of
   one mode or without loss factors, stands as it is; any other is refined by
   nonlinear inverse iteration with the Rayleigh functional (``|s|`` updated
   every step) in the subspace of its cluster and the modes with a share of
   the change. What the subspace leaves out is estimated the same way, as
   is, when only the lowest modes of a large model were computed, the
   coupling to the modes above them.

Repeated roots of distinct modes stay distinct; should two modes' refined
roots ever be the same root (same value and shape), the clustering is redone
with a lower coupling threshold, down to one cluster of all coupled modes.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np
import scipy.linalg

from ..linear import LinearModel

__all__ = ["DampedModes", "damped_modes", "CLUSTER_COUPLING", "SUBSPACE_TOLERANCE"]

#: Modes whose damping-induced mixing |s c_jk / (s^2 + c_kk s + w_k^2)| exceeds
#: this are solved together (one small state-space eigensolve per cluster).
CLUSTER_COUPLING = 0.05
#: A root whose modes outside its cluster change it, to first order, by less
#: than this (relative) in all is kept as its cluster gives it; otherwise it is
#: refined in a subspace with every mode whose share exceeds 1 % of this.
SUBSPACE_TOLERANCE = 1e-12
_SUBSPACE_CAP = 64          # at most this many extra modes per refined root
_ONE_CLUSTER = 40           # up to this many modes form a single cluster
_MAX_ITERATIONS = 60
_REAL_TOLERANCE = 1e-9      # |Im s| <= this * |s|: a real root

#: (damping ratio, damped frequency Hz, overdamped, roots) of one mode.
DampedMode = tuple[float | None, float | None, bool, tuple[complex, ...]]


@dataclass(frozen=True)
class DampedModes:
    """Damping of each undamped mode, with an estimate of the roots' error.

    ``errors``: per mode, the estimated relative error of its complex root
    from the modal subspace and the basis used (0 where exact); ``basis``: the
    number of undamped modes used; ``basis_errors``: the part of ``errors``
    due to the modes above them (all 0 when every mode was used).
    """

    modes: tuple[DampedMode, ...]
    errors: tuple[float, ...] = ()
    basis: int = 0
    basis_errors: tuple[float, ...] = ()
    hysteretic: bool = False

    def error(self, count: int | None = None) -> float:
        """Largest estimated relative error over the first ``count`` modes (all)."""
        return float(max(self.errors[:count], default=0.0))

    def basis_error(self, count: int | None = None) -> float:
        """Largest estimated relative error from the basis over the first ``count``."""
        return float(max(self.basis_errors[:count], default=0.0))


def damped_modes(model: LinearModel, shapes: np.ndarray, eigenvalues: np.ndarray,
                 rigid: np.ndarray) -> DampedModes:
    """Damping of the undamped modes ``shapes`` (n, m; M-orthonormal) with
    eigenvalues omega^2 (rad^2/s^2); ``rigid`` marks zero-frequency modes.
    A mode whose root cannot be computed in finite numbers gets no damping."""
    with np.errstate(all="ignore"):
        return _damped_modes(model, shapes, eigenvalues, rigid)


def _damped_modes(model: LinearModel, shapes: np.ndarray, eigenvalues: np.ndarray,
                  rigid: np.ndarray) -> DampedModes:
    m = shapes.shape[1]
    lam = np.where(rigid, 0.0, np.clip(np.asarray(eigenvalues, float), 0.0, None))
    if model.C.nnz == 0 and model.H.nnz == 0:
        return DampedModes(tuple(_undamped(lam[i], rigid[i]) for i in range(m)), (0.0,) * m, m,
                           (0.0,) * m)
    cr = _project(model.C, shapes)
    hr = _project(model.H, shapes)
    hr[rigid, :] = 0.0   # H is a sum of eta K_e: rigid motion strains no link
    hr[:, rigid] = 0.0
    if not (np.all(np.isfinite(cr)) and np.all(np.isfinite(hr))):
        return DampedModes(tuple((None, None, False, ()) for _ in range(m)), (math.inf,) * m,
                           m, (0.0,) * m, bool(model.H.nnz))
    problem = _Modal(lam, cr, hr, rigid)
    for threshold in (CLUSTER_COUPLING, 0.1 * CLUSTER_COUPLING, 0.0):
        slots = problem.solve(threshold)
        if not problem.duplicated(slots):
            break
    out = tuple(problem.report(i, slots[i]) for i in range(m))
    basis = _basis_errors(model, shapes, lam, problem, slots) if m < model.n else [0.0] * m
    errors = tuple(float(b + (sl.error if sl is not None else 0.0))
                   for b, sl in zip(basis, slots))
    return DampedModes(out, errors, m, tuple(float(b) for b in basis), bool(model.H.nnz))


def _undamped(lam: float, rigid: bool) -> DampedMode:
    if rigid:
        return (None, None, False, ())
    w = math.sqrt(lam)
    return (0.0, w / (2 * math.pi), False, (1j * w, -1j * w))


def _project(A, shapes: np.ndarray) -> np.ndarray:
    if A.nnz == 0:
        return np.zeros((shapes.shape[1],) * 2)
    out = shapes.T @ np.asarray(A @ shapes)
    return 0.5 * (out + out.T)


@dataclass
class _Slot:
    """The root(s) one mode is paired with: a complex root (upper half plane) and
    its modal vector over ``index``, or two real roots."""

    roots: tuple[complex, ...]
    index: np.ndarray | None = None
    vector: np.ndarray | None = None
    error: float = 0.0


class _Modal:
    """The damped problem in modal coordinates: s^2 y + s (cr + hr/|s|) y + lam y = 0."""

    def __init__(self, lam: np.ndarray, cr: np.ndarray, hr: np.ndarray, rigid: np.ndarray):
        self.lam, self.cr, self.hr, self.rigid = lam, cr, hr, rigid
        w = np.sqrt(lam)
        ws = np.where(w > 0, w, 1.0)
        # Loss factors at the modes' own frequencies (geometric mean off the diagonal).
        self.c0 = cr + hr / np.sqrt(np.outer(ws, ws))
        self.has_h = bool(np.any(hr))

    # -- clusters and their roots ------------------------------------------
    def coupling(self) -> np.ndarray:
        """g[j, k]: mixing of mode k into the diagonal roots of mode j (symmetrised)."""
        c, lam = self.c0, self.lam
        d = np.diag(c)
        disc = np.sqrt((0.25 * d * d - lam).astype(complex))
        g = np.zeros_like(c)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            for root in (-0.5 * d + disc, -0.5 * d - disc):
                s = root[None, :]                              # root of mode j (column)
                t = s * s + d[:, None] * s + lam[:, None]     # T_kk(s) (row k)
                gk = np.abs(s * c) / np.abs(t)
                g = np.maximum(g, np.nan_to_num(gk, nan=0.0, posinf=np.inf))
        np.fill_diagonal(g, 0.0)
        return np.maximum(g, g.T)

    def solve(self, threshold: float) -> list[_Slot | None]:
        m = len(self.lam)
        slots: list[_Slot | None] = [None] * m
        sizes = np.zeros(m, dtype=int)
        # A few modes are solved as one cluster: one small eigensolve, exact without
        # loss factors; larger sets split into clusters of strongly coupled modes.
        clusters = [np.arange(m)] if m <= _ONE_CLUSTER else \
            _components(self.coupling() > threshold)
        for idx in clusters:
            sizes[idx] = len(idx)
            for i, slot in zip(idx, self._cluster(idx)):
                slots[i] = slot
        complex_slots = [(i, sl) for i, sl in enumerate(slots)
                         if sl is not None and sl.vector is not None]
        if not complex_slots:
            return slots
        shares, y = self._shares([sl for _, sl in complex_slots])
        refined = []
        for j, (i, slot) in enumerate(complex_slots):
            total = float(shares[:, j].sum())
            if total <= SUBSPACE_TOLERANCE and (not self.has_h or sizes[i] == 1):
                slot.error = total            # decoupled enough: the cluster root stands
                continue
            keep = np.flatnonzero(shares[:, j] > 0.01 * SUBSPACE_TOLERANCE)
            keep = keep[np.argsort(-shares[keep, j])][:_SUBSPACE_CAP]
            if self._refine(slot, keep, y[keep, j]):
                refined.append(slot)
        if refined:   # what each refined root's subspace leaves out, to first order
            left, _ = self._shares(refined)
            for j, slot in enumerate(refined):
                slot.error = float(left[:, j].sum())
        return slots

    def _shares(self, slots: list[_Slot]) -> tuple[np.ndarray, np.ndarray]:
        """For each complex root (column) and each mode outside its cluster (row): the
        first-order relative change of the root from that mode, |r_k^2 / T_kk| /
        |x^T T'(s) x| / |s| (a Schur complement), and the mode's first-order
        component y_k = -r_k / T_kk, where r_k = s (C(|s|) x)_k."""
        m = len(self.lam)
        x = np.zeros((m, len(slots)), dtype=complex)
        inside = np.zeros((m, len(slots)), dtype=bool)
        for j, sl in enumerate(slots):
            x[sl.index, j] = sl.vector
            inside[sl.index, j] = True
        s = np.array([sl.roots[0] for sl in slots])
        w = np.abs(s)
        cx = self.cr @ x
        d = np.diag(self.cr)[:, None]
        if self.has_h:
            cx = cx + (self.hr @ x) / w
            d = d + np.diag(self.hr)[:, None] / w
        r = s * cx
        t = s * s + s * d + self.lam[:, None]
        dt = np.sum(x * (2 * s * x + cx), axis=0)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            y = np.where(t != 0, -r / np.where(t != 0, t, 1.0), 0.0)
            shares = np.abs(r * y) / (np.abs(dt) * w)
        shares = np.where(inside, 0.0, np.nan_to_num(shares, nan=0.0, posinf=np.inf))
        return shares, np.where(inside, 0.0, y)

    def _cluster(self, idx: np.ndarray) -> list[_Slot | None]:
        p = len(idx)
        A = np.zeros((2 * p, 2 * p))
        A[:p, p:] = np.eye(p)
        A[p:, :p] = -np.diag(self.lam[idx])
        A[p:, p:] = -self.c0[np.ix_(idx, idx)]
        s, v = scipy.linalg.eig(A)
        x = v[:p]
        norms = np.sum(np.abs(x) ** 2, axis=0)
        mac = np.abs(x) ** 2 / np.where(norms > 0, norms, 1.0)   # (mode, root)
        groups = _root_groups(s, x)
        weights = np.zeros((len(s), len(groups)))
        for k, g in enumerate(groups):
            weights[list(g), k] = 1.0 / len(g)
        score = mac @ weights                                      # (mode, group)
        chosen = _assignment(score)
        out: list[_Slot | None] = []
        for j in range(p):
            g = groups[chosen[j]] if chosen[j] >= 0 else ()
            if len(g) == 1 and s[g[0]].imag > 0:
                k = g[0]
                out.append(_Slot((complex(s[k]),), idx, x[:, k] / np.linalg.norm(x[:, k])))
            else:
                out.append(_Slot(tuple(complex(s[k].real) for k in g)))
        return out

    # -- refinement of one complex root --------------------------------------
    def _c(self, rows, cols, w: float) -> np.ndarray:
        c = self.cr[np.ix_(rows, cols)]
        return c + self.hr[np.ix_(rows, cols)] / w if self.has_h else c

    def _refine(self, slot: _Slot, extra: np.ndarray, y: np.ndarray) -> bool:
        """Iterate a cluster root in the subspace of its cluster and the modes ``extra``
        (first-order components ``y`` as the start); False if it did not converge."""
        s = slot.roots[0]
        sub = np.concatenate([slot.index, extra])
        x = np.concatenate([slot.vector, y])
        s_new, x_new, ok = self._iterate(s, sub, x)
        if not ok:   # keep the cluster's root; its distance to the last iterate is the error
            slot.error = max(slot.error, abs(s_new - s) / abs(s))
            return False
        order = np.argsort(sub)
        slot.roots = (s_new,)
        slot.index, slot.vector = sub[order], x_new[order]
        return True

    def _iterate(self, s: complex, sub, x) -> tuple[complex, np.ndarray, bool]:
        """Rayleigh-functional inverse iteration for T(s) = s^2 I + s C(|s|) + diag(lam)."""
        lam = self.lam[sub]
        cr = self.cr[np.ix_(sub, sub)]
        hr = self.hr[np.ix_(sub, sub)] if self.has_h else None
        diag = np.arange(len(sub))
        x = x / np.linalg.norm(x)
        for _ in range(_MAX_ITERATIONS):
            c = cr + hr / abs(s) if hr is not None else cr
            s_new = _rayleigh(x, c, lam, s)
            t = s_new * c
            t[diag, diag] += s_new * s_new + lam
            rhs = c @ x + 2 * s_new * x
            try:
                y = np.linalg.solve(t, rhs)
            except np.linalg.LinAlgError:   # exactly singular: s_new is the root
                return s_new, x, True
            if not np.all(np.isfinite(y)) or not np.any(y):
                return s_new, x, True
            y = y / np.linalg.norm(y)
            phase = np.vdot(y, x)
            if phase != 0:
                y = y * (phase / abs(phase))
            done = abs(s_new - s) <= 1e-13 * abs(s_new) and np.linalg.norm(y - x) < 1e-6
            s, x = s_new, y
            if done:
                return s, x, True
        c = cr + hr / abs(s) if hr is not None else cr
        res = np.linalg.norm(s * s * x + s * (c @ x) + lam * x)
        scale = abs(s) ** 2 + float(np.max(lam, initial=0.0))
        return s, x, bool(res <= 1e-10 * scale)

    # -- checks and results ----------------------------------------------------
    def duplicated(self, slots: list[_Slot | None]) -> bool:
        """Whether two modes hold the same complex root (same value and shape)."""
        m = len(self.lam)
        full = [sl for sl in slots if sl is not None and sl.vector is not None]
        for sa, sb in itertools.combinations(full, 2):
            ra, rb = sa.roots[0], sb.roots[0]
            if abs(ra - rb) > 1e-7 * abs(ra):
                continue
            va, vb = np.zeros(m, complex), np.zeros(m, complex)
            va[sa.index], vb[sb.index] = sa.vector, sb.vector
            if abs(np.vdot(va, vb)) ** 2 > 0.5 * np.vdot(va, va).real * np.vdot(vb, vb).real:
                return True
        return False

    def report(self, i: int, slot: _Slot | None) -> DampedMode:
        if self.rigid[i] or slot is None or not slot.roots or \
                not all(np.isfinite(r) for r in slot.roots):
            return (None, None, False, ())
        if slot.vector is not None:
            root = slot.roots[0]
            wn = abs(root)
            if wn == 0:
                return (None, None, False, ())
            return (float(-root.real / wn), float(abs(root.imag) / (2 * math.pi)), False,
                    (root, root.conjugate()))
        if len(slot.roots) < 2:
            return (None, None, True, slot.roots)
        s1, s2 = (r.real for r in slot.roots)
        if s1 * s2 <= 0:
            return (None, None, True, slot.roots)
        return (float(-(s1 + s2) / (2 * math.sqrt(s1 * s2))), None, True, slot.roots)


def _rayleigh(x: np.ndarray, c: np.ndarray, lam: np.ndarray, near: complex) -> complex:
    """Root nearest ``near`` of x^T T(s) x = 0 (T complex symmetric: no conjugates)."""
    a = x @ x
    b = x @ (c @ x)
    d = x @ (lam * x)
    if abs(a) < 1e-8:
        return near
    disc = np.sqrt(b * b - 4 * a * d + 0j)
    roots = ((-b + disc) / (2 * a), (-b - disc) / (2 * a))
    return complex(min(roots, key=lambda r: abs(r - near)))


def _components(adjacent: np.ndarray) -> list[np.ndarray]:
    """Connected components of a symmetric boolean adjacency matrix, each sorted."""
    m = adjacent.shape[0]
    label = -np.ones(m, dtype=int)
    out = []
    for start in range(m):
        if label[start] >= 0:
            continue
        label[start] = len(out)
        members, frontier = [start], [start]
        while frontier:
            nxt = np.flatnonzero(adjacent[frontier].any(axis=0) & (label < 0))
            label[nxt] = len(out)
            members.extend(nxt.tolist())
            frontier = nxt.tolist()
        out.append(np.array(sorted(members)))
    return out


def _root_groups(s: np.ndarray, x: np.ndarray) -> list[tuple[int, ...]]:
    """The roots of a real state matrix as one group per mode: each complex root of
    the upper half plane alone, the real roots in pairs of most alike shapes."""
    tol = _REAL_TOLERANCE * np.maximum(np.abs(s), 1e-300)
    real = [k for k in range(len(s)) if abs(s[k].imag) <= tol[k]]
    groups: list[tuple[int, ...]] = [(k,) for k in range(len(s)) if s[k].imag > tol[k]]
    if len(real) > 1:
        xr = x[:, real]
        norms = np.sum(np.abs(xr) ** 2, axis=0)
        sim = np.abs(xr.conj().T @ xr) ** 2 / np.where(np.outer(norms, norms) > 0,
                                                         np.outer(norms, norms), 1.0)
        np.fill_diagonal(sim, -1.0)
        left = set(range(len(real)))
        while len(left) > 1:
            pool = sorted(left)
            sub = sim[np.ix_(pool, pool)]
            a, b = np.unravel_index(int(np.argmax(sub)), sub.shape)
            groups.append((real[pool[a]], real[pool[b]]))
            left -= {pool[a], pool[b]}
        groups.extend((real[k],) for k in left)
    else:
        groups.extend((k,) for k in real)
    return groups


def _assignment(score: np.ndarray) -> list[int]:
    """Row -> column, one-to-one, maximising the summed score (-1: no column)."""
    p, q = score.shape
    if p > q:
        cols = _assignment(score.T)
        out = [-1] * p
        for c, r in enumerate(cols):
            if r >= 0:
                out[r] = c
        return out
    return hungarian(-np.asarray(score, dtype=float))


def hungarian(cost: np.ndarray) -> list[int]:
    """Least-cost assignment of each row of a (p, q) cost matrix, p <= q, to its own
    column (Kuhn-Munkres by shortest augmenting paths with potentials, O(p^2 q)).
    Written here rather than taken from scipy.optimize, whose import would cost
    every ``modes`` run a tenth of a second; tested against it."""
    p, q = cost.shape
    u, v = np.zeros(p + 1), np.zeros(q + 1)
    match = np.zeros(q + 1, dtype=int)       # match[j]: row (1-based) holding column j
    way = np.zeros(q + 1, dtype=int)
    for i in range(1, p + 1):
        match[0], j0 = i, 0
        minv = np.full(q + 1, np.inf)
        used = np.zeros(q + 1, dtype=bool)
        while True:
            used[j0] = True
            i0 = match[j0]
            free = ~used[1:]
            cur = cost[i0 - 1] - u[i0] - v[1:]
            better = free & (cur < minv[1:])
            minv[1:][better] = cur[better]
            way[1:][better] = j0
            cand = np.where(free, minv[1:], np.inf)
            j1 = int(np.argmin(cand)) + 1
            delta = cand[j1 - 1]
            held = np.flatnonzero(used)
            u[match[held]] += delta
            v[held] -= delta
            minv[1:][free] -= delta
            j0 = j1
            if match[j0] == 0:
                break
        while j0:
            j1 = way[j0]
            match[j0] = match[j1]
            j0 = j1
    out = [-1] * p
    for j in range(1, q + 1):
        if match[j]:
            out[match[j] - 1] = j - 1
    return out


def _basis_errors(model: LinearModel, shapes: np.ndarray, lam: np.ndarray, problem: _Modal,
                  slots: list[_Slot | None]) -> list[float]:
    """Per mode, the estimated relative change of its complex root from the modes
    above the basis: |ds| ~ ||R_perp||^2_{M^-1} / ((lam_hi - |s|^2) |x^T T'(s) x|), with
    R_perp the residual of the full problem outside the basis (first order in the
    coupling, as a Schur complement) and lam_hi the basis's highest eigenvalue, a
    lower bound of those left out."""
    import scipy.sparse.linalg as spla

    out = [0.0] * len(slots)
    lam_hi = float(np.max(lam, initial=0.0))
    if lam_hi <= 0:
        return out
    lu = spla.splu(model.M.tocsc())
    mphi = np.asarray(model.M @ shapes)
    for i, slot in enumerate(slots):
        if slot is None or slot.vector is None:
            continue
        s = slot.roots[0]
        w = abs(s)
        v = shapes[:, slot.index] @ slot.vector
        r = s * s * np.asarray(model.M @ v) + s * np.asarray(model.C @ v) \
            + s / w * np.asarray(model.H @ v) + np.asarray(model.K @ v)
        r_perp = r - mphi @ (shapes.T @ r)
        e = float(np.real(np.vdot(r_perp, lu.solve(r_perp.real) + 1j * lu.solve(r_perp.imag))))
        c = problem._c(slot.index, slot.index, w)
        dt = abs(slot.vector @ ((2 * s * np.eye(len(slot.index)) + c) @ slot.vector))
        gap = max(lam_hi - w * w, 1e-3 * lam_hi)
        out[i] = e / (gap * dt * w) if dt > 0 else math.inf
    return out
