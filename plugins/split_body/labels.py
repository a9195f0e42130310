"""Mode labels of a split body: its segments are named as the body they replaced.

The plugin's hook ``label_units`` gives the core labeller
(:mod:`builder.analysis.labels`) one :class:`ChainUnit` per split block,
named after the block (``body`` for ``body_s01 ... body_s10``). In a mode
the chain's motion over the DOFs the model keeps is split (mass-weighted)
into a rigid motion of the whole chain about its cg (which is the cg of the
body it replaced) and the deformation left over:

- mostly rigid: the body's bounce, pitch, roll ... from the kinetic energy
  of each rigid direction about that cg (the same words and rule as the
  rigid body, so the rigid and the split model of a car name their modes
  alike); a rigid direction that the kept DOFs cannot tell from another
  (one segment's bounce cannot show pitch) is not named;
- mostly deformation: the kind with most kinetic energy among vertical
  bending (translation along the section's vertical and rotation about its
  lateral axis), lateral bending, torsion (rotation about the chain's axis)
  and axial motion, counted by the core labeller (``body first torsion``,
  ``body second vertical bending``) and given with its nodes, where the
  deflection changes sign (from a cubic Hermite interpolation of the segment
  deflections and slopes; a free-free body's first bending shape has two
  nodes, its first torsion and axial shapes one). A bending mode whose
  segments rotate against the slope of their own bending line (the upper
  branch of a chain of rigid segments, about one mode per segment, with no
  counterpart in the continuous body: the split is too coarse to follow
  it) is a ``vertical segment rocking`` mode, counted on its own.

:func:`beam_chains` finds every chain of bodies joined by beam links (for
the plugin's analysis and Craig-Bampton reduction).
"""

from __future__ import annotations

import re
from typing import Any

import networkx as nx
import numpy as np

from builder.analysis.labels import LabelUnit, Motion, UnitMotion, rigid_motion
from builder.kinematics import DOF_NAMES, point_map_all

__all__ = ["beam_chains", "ChainUnit", "split_units", "ELASTIC_FAMILIES"]

#: Families of a chain's own elastic modes (segment rocking is not one of them).
ELASTIC_FAMILIES = ("vertical bending", "lateral bending", "torsion", "axial")
_RANK = 1e-8          # relative eigenvalue below which a rigid direction is not observable


def beam_chains(assembly: Any) -> dict[str, list[str]]:
    """Chains of bodies joined by beam links: name -> segment body names (by position)."""
    g = nx.Graph()
    for lk in assembly.links.values():
        if lk.type == "beam" and lk.a.kind == "body" and lk.b.kind == "body":
            g.add_edge(lk.a.node, lk.b.node)
    out: dict[str, list[str]] = {}
    for comp in nx.connected_components(g):
        members = sorted(comp)
        if len(members) < 2:
            continue
        name = _common_name(members)
        out[name if name not in out else "+".join(members[:2])] = _ordered(assembly, members)
    return out


def _common_name(names: list[str]) -> str:
    stems = {re.sub(r"_s\d+$", "", n) for n in names}
    if len(stems) == 1:
        return stems.pop()
    prefix = names[0]
    for n in names[1:]:
        while not n.startswith(prefix):
            prefix = prefix[:-1]
    return prefix.rstrip("_-") or names[0]


def _ordered(assembly: Any, members: list[str]) -> list[str]:
    cgs = np.array([assembly.bodies[m].cg for m in members], dtype=float)
    axis = _axis(cgs)
    return [members[i] for i in np.argsort(cgs @ axis, kind="stable")]


def _axis(cgs: np.ndarray) -> np.ndarray:
    """The line of the segment cgs (principal direction), pointing to +x (else +y, +z)."""
    if len(cgs) < 2:
        return np.array([1.0, 0.0, 0.0])
    _, _, vt = np.linalg.svd(cgs - cgs.mean(axis=0), full_matrices=False)
    axis = vt[0]
    lead = next(i for i in range(3) if abs(axis[i]) > 1e-9)
    return axis if axis[lead] > 0 else -axis


def split_units(assembly: Any, spec: Any) -> list[ChainUnit]:
    """The label unit of one split block: its segments ``NAME_sNN`` as ``NAME``."""
    prefix = getattr(spec, "name", "") or getattr(spec, "body", "")
    pattern = re.compile(rf"{re.escape(prefix)}_s\d+")
    members = [b for b in assembly.bodies if pattern.fullmatch(b)]
    if len(members) < 2:
        return []
    return [ChainUnit(prefix, assembly, members)]


class ChainUnit(LabelUnit):
    """Segments joined by beams, labelled as one body (see the module notes)."""

    def __init__(self, name: str, assembly: Any, members: list[str]):
        bodies = [assembly.bodies[m] for m in members]
        cgs = np.array([b.cg for b in bodies], dtype=float)
        axis = _axis(cgs)
        order = np.argsort(cgs @ axis, kind="stable")
        super().__init__(name, [members[i] for i in order])
        bodies = [bodies[i] for i in order]
        self.masses = np.array([b.mass for b in bodies], dtype=float)
        self.cgs = cgs[order]
        self.centre = self.masses @ self.cgs / self.masses.sum()
        vertical = np.array([0.0, 0.0, 1.0]) - axis[2] * axis
        if np.linalg.norm(vertical) < 1e-6:
            vertical = np.array([1.0, 0.0, 0.0]) - axis[0] * axis
        self.axis = axis
        self.vertical = vertical / np.linalg.norm(vertical)
        self.lateral = np.cross(self.vertical, axis)
        self.s = (self.cgs - self.centre) @ axis
        self.start = float(self.s[0] - (self.s[1] - self.s[0]) / 2) if len(self.s) > 1 \
            else float(self.s[0])
        self.M6 = np.array([b.mass_matrix for b in bodies])
        # rigid motion about the centre -> each segment's motion at its cg
        self.R = np.zeros((len(self.cgs), 6, 6))
        self.R[:, :3, :] = point_map_all(self.cgs - self.centre)
        self.R[:, 3:, 3:] = np.eye(3)
        self.Mr = np.einsum("nji,njk,nkl->il", self.R, self.M6, self.R)
        inertias = np.array([b.inertia for b in bodies], dtype=float)
        self.inertia = {key: np.einsum("i,nij,j->n", v, inertias, v)
                        for key, v in (("axis", axis), ("vertical", self.vertical),
                                       ("lateral", self.lateral))}
        self._fits: dict[bytes, tuple[list[int], np.ndarray, np.ndarray, np.ndarray,
                                      np.ndarray]] = {}

    # -- the rigid fit over the observed DOFs, once per pattern of kept DOFs
    def _fit(self, observed: np.ndarray) -> tuple[list[int], np.ndarray, np.ndarray,
                                                  np.ndarray, np.ndarray]:
        key = observed.tobytes()
        if key not in self._fits:
            W = self.M6 * observed[:, :, None] * observed[:, None, :]
            selected: list[int] = []
            for k in range(6):
                trial = selected + [k]
                RS = self.R[:, :, trial]
                A = np.einsum("nji,njk,nkl->il", RS, W, RS)
                d = np.sqrt(np.clip(np.diag(A), 0.0, None))
                if d[-1] <= 0:
                    continue
                if np.linalg.eigvalsh(A / np.outer(d, d)).min() > _RANK:
                    selected = trial
            RS = self.R[:, :, selected]
            WR = np.einsum("njk,nkl->njl", W, RS)
            A = np.einsum("nji,njk->ik", RS, WR)
            self._fits[key] = (selected, RS, WR, A, W)
        return self._fits[key]

    def describe(self, bodies: UnitMotion) -> Motion | None:
        q, observed, _ = bodies.six()
        q = q * observed
        selected, RS, WR, A, W = self._fit(observed)
        c = np.linalg.solve(A, np.einsum("nji,nj->i", WR, q)) if selected else np.zeros(0)
        rigid_part = np.einsum("nij,j->ni", RS, c) if selected else np.zeros_like(q)
        d = (q - rigid_part) * observed
        e_def = float(np.einsum("ni,nij,nj->", d, W, d))
        e_rigid = float(c @ A @ c) if selected else 0.0
        total = e_def + e_rigid
        if total <= 0:
            return None
        c6 = np.zeros(6)
        c6[selected] = c
        rigid = rigid_motion(DOF_NAMES, c6 * (self.Mr @ c6), c6)
        kind, nodes, rocking = self._deformation(d, observed)
        if e_def > e_rigid or rigid is None:
            family = kind.replace("bending", "segment rocking") if rocking else kind
            words = f"{{order}} {family}"
            if rigid is not None and e_rigid >= 0.25 * total:
                words += " with " + rigid.words.split(" with ")[0]
            flat = d.ravel()
            shape = (flat, np.einsum("nij,nj->ni", W, d).ravel())
            return Motion(words, family=family, more=words, nodes=nodes, shape=shape)
        if e_def >= 0.25 * total:
            joint = " and " if " with " in rigid.words else " with "
            return Motion(rigid.words + joint + kind, rigid.direction, rigid.sign,
                          more=rigid.more + joint + kind)
        return rigid

    def _deformation(self, d: np.ndarray, observed: np.ndarray
                     ) -> tuple[str, tuple[float, ...], bool]:
        """(kind, node positions along the chain in m from its first end, rocking)."""
        t, r = d[:, :3], d[:, 3:]
        w, v, u = t @ self.vertical, t @ self.lateral, t @ self.axis
        twist = r @ self.axis
        slope_w, slope_v = -(r @ self.lateral), r @ self.vertical   # dw/ds, dv/ds
        dot = np.dot
        energy = {"vertical bending": dot(self.masses, w ** 2)
                  + dot(self.inertia["lateral"], slope_w ** 2),
                  "lateral bending": dot(self.masses, v ** 2)
                  + dot(self.inertia["vertical"], slope_v ** 2),
                  "torsion": dot(self.inertia["axis"], twist ** 2),
                  "axial": dot(self.masses, u ** 2)}
        kind = max(energy, key=energy.get)
        seen = observed.any(axis=1)
        if kind.endswith("bending"):
            value, slope = (w, slope_w) if kind.startswith("vertical") else (v, slope_v)
            plane = observed[:, [2, 4]] if kind.startswith("vertical") else observed[:, [1, 5]]
            full_plane = bool(plane.all()) and len(self.s) >= 2
            if full_plane:
                s, x = _hermite(self.s, value, slope)
                nodes = _crossings(s, x, floor=1e-3)
            else:
                nodes = _crossings(self.s[seen], value[seen])
            rocking = full_plane and len(self.s) >= 3 and _against(slope, np.gradient(value,
                                                                                       self.s))
        else:
            value = twist if kind == "torsion" else u
            nodes = _crossings(self.s[seen], value[seen])
            rocking = False
        return kind, tuple(float(p - self.start) for p in nodes), rocking


def _against(slope: np.ndarray, gradient: np.ndarray) -> bool:
    """True when the segments' rotation opposes the slope of their deflection line."""
    den = float(np.linalg.norm(slope) * np.linalg.norm(gradient))
    return den > 0 and float(np.dot(slope, gradient)) / den < 0.0


def _crossings(s: np.ndarray, values: np.ndarray, floor: float = 0.05) -> list[float]:
    """Where ``values`` (sampled at increasing ``s``) change sign, ignoring values
    below ``floor`` of the largest; linear between the samples."""
    if values.size < 2 or not np.abs(values).max() > 0:
        return []
    big = np.abs(values) >= floor * np.abs(values).max()
    s, x = s[big], values[big]
    out = []
    for k in np.flatnonzero(np.sign(x[1:]) != np.sign(x[:-1])):
        out.append(float(s[k] + (s[k + 1] - s[k]) * x[k] / (x[k] - x[k + 1])))
    return out


def _hermite(s: np.ndarray, w: np.ndarray, slope: np.ndarray, per: int = 16
             ) -> tuple[np.ndarray, np.ndarray]:
    """A deflection sampled along the chain by cubic Hermite interpolation of the
    segment centres' deflections and slopes (so that a coarse chain's higher
    bending shapes keep their nodes), extended to the chain's ends (half a
    spacing beyond the end centres). Returns (positions, deflections)."""
    d0, d1 = (s[1] - s[0]) / 2, (s[-1] - s[-2]) / 2
    s = np.concatenate([[s[0] - d0], s, [s[-1] + d1]])
    w = np.concatenate([[w[0] - d0 * slope[0]], w, [w[-1] + d1 * slope[-1]]])
    slope = np.concatenate([[slope[0]], slope, [slope[-1]]])
    t = np.linspace(0.0, 1.0, per, endpoint=False)[None, :]
    h00, h10 = 2 * t ** 3 - 3 * t ** 2 + 1, t ** 3 - 2 * t ** 2 + t
    h01, h11 = -2 * t ** 3 + 3 * t ** 2, t ** 3 - t ** 2
    d = np.diff(s)[:, None]
    pos = s[:-1, None] + t * d
    out = (h00 * w[:-1, None] + h10 * d * slope[:-1, None] + h01 * w[1:, None]
           + h11 * d * slope[1:, None])
    return np.append(pos.ravel(), s[-1]), np.append(out.ravel(), w[-1])
