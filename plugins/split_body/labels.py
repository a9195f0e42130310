"""Mode labels for bodies split into beam-joined segments.

A chain is a set of at least two bodies joined by ``beam`` links (found from
the assembly's links, so any file that uses beams gets it, not only split
bodies). When a chain holds most of a mode's kinetic energy, the mode is
named after the chain (the segments' common name, ``body`` for
``body_s01 ... body_s10``) rather than after single segments:

- the chain's motion is split (M-orthogonally) into the rigid motion of the
  chain as a whole and the deformation relative to it;
- mostly rigid: ``body bounce``, ``body pitch`` ... (the dominant rigid
  direction, as for a rigid body);
- mostly deformation: the kind with most kinetic energy among vertical
  bending (motion along the section's vertical), lateral bending, torsion
  (rotation about the chain's axis) and axial motion, with its order from
  the number of nodes along the chain (free-free bending: 2 nodes for the
  first, 3 for the second; torsion and axial: 1 for the first):
  ``body first torsion``, ``body second vertical bending``.

A body outside the chain holding at least 20 % of the energy is added:
``body first torsion with engine roll``; when such a body leads and the chain
holds 20 to 50 %, the body comes first: ``engine lateral with body lateral``.
"""

from __future__ import annotations

import re
from typing import Any

import networkx as nx
import numpy as np

from builder.kinematics import DOF_NAMES, skew

__all__ = ["beam_chains", "flexible_body_label", "ORDINALS"]

ORDINALS = ("first", "second", "third", "fourth", "fifth", "sixth")
_RIGID_WORDS = {"x": "fore-aft", "y": "lateral", "z": "bounce", "rx": "roll", "ry": "pitch",
                "rz": "yaw"}


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
    cgs = np.array([assembly.bodies[m].cg for m in members])
    axis = cgs[-1] - cgs[0] if len(cgs) > 1 else np.array([1.0, 0, 0])
    if np.linalg.norm(axis) == 0:
        return members
    order = np.argsort(cgs @ axis)
    return [members[i] for i in order]


def _ordinal(n: int) -> str:
    return ORDINALS[n - 1] if 1 <= n <= len(ORDINALS) else f"{n}th"


def _nodes(values: np.ndarray, floor: float = 0.05) -> int:
    """Sign changes along the chain, ignoring values below ``floor`` of the largest."""
    big = np.abs(values) >= floor * np.abs(values).max()
    signs = np.sign(values[big])
    return int(np.sum(signs[1:] != signs[:-1]))


def _hermite(s: np.ndarray, w: np.ndarray, slope: np.ndarray, per: int = 16) -> np.ndarray:
    """A deflection sampled along the chain by cubic Hermite interpolation of
    the segment centres' deflections and slopes (so that a coarse chain's
    higher bending shapes keep their nodes), extended to the chain's ends."""
    # The end segments reach half a spacing beyond their centres: extend linearly.
    d0, d1 = (s[1] - s[0]) / 2, (s[-1] - s[-2]) / 2
    s = np.concatenate([[s[0] - d0], s, [s[-1] + d1]])
    w = np.concatenate([[w[0] - d0 * slope[0]], w, [w[-1] + d1 * slope[-1]]])
    slope = np.concatenate([[slope[0]], slope, [slope[-1]]])
    t = np.linspace(0.0, 1.0, per, endpoint=False)
    h00, h10 = 2 * t ** 3 - 3 * t ** 2 + 1, t ** 3 - 2 * t ** 2 + t
    h01, h11 = -2 * t ** 3 + 3 * t ** 2, t ** 3 - t ** 2
    out = []
    for i in range(len(s) - 1):
        d = s[i + 1] - s[i]
        out.append(h00 * w[i] + h10 * d * slope[i] + h01 * w[i + 1] + h11 * d * slope[i + 1])
    out.append(np.array([w[-1]]))
    return np.concatenate(out)


def flexible_body_label(model: Any, shape: np.ndarray, energy: np.ndarray) -> str | None:
    """A label for a mode in which a beam chain takes part, or None.

    ``model`` is a full (not reduced) LinearModel with its assembly; ``shape``
    and ``energy`` (kinetic-energy share per DOF) are over ``model.dofs``.
    None when no chain holds at least 20 % of the energy (the ordinary
    rigid-body labels then apply).
    """
    asm = getattr(model, "assembly", None)
    if asm is None:
        return None
    chains = beam_chains(asm)
    if not chains:
        return None
    index = {d: i for i, d in enumerate(model.dofs)}
    e = np.clip(np.asarray(energy, float), 0.0, None)
    total = e.sum() or 1.0
    owner = {m: name for name, members in chains.items() for m in members}
    units: dict[str, float] = {}
    for d, i in index.items():
        body = d.rsplit(".", 1)[0]
        unit = owner.get(body, body)
        units[unit] = units.get(unit, 0.0) + e[i] / total
    chain_units = [u for u in units if u in chains]
    if not chain_units:
        return None
    best = max(chain_units, key=lambda u: units[u])
    members = chains[best]
    if units[best] < 0.2 or any(asm.bodies[m].dofs != DOF_NAMES for m in members):
        return None
    chain_words = _chain_label(asm, members, shape, index, best)
    others = sorted((u for u in units if u != best), key=lambda u: -units[u])

    def word_of(body: str) -> str:
        dofs = [d for d in index if d.rsplit(".", 1)[0] == body]
        main = max(dofs, key=lambda d: e[index[d]]).rsplit(".", 1)[1]
        return f"{body} {_RIGID_WORDS.get(main, main)}"

    if units[best] >= 0.5:
        if others and units[others[0]] >= 0.2:
            other = others[0]
            part = _chain_label(asm, chains[other], shape, index, other) \
                if other in chains else word_of(other)
            return f"{chain_words} with {part}"
        return chain_words
    lead = others[0]
    if lead in chains:
        return f"{_chain_label(asm, chains[lead], shape, index, lead)} with {chain_words}"
    return f"{word_of(lead)} with {chain_words}"


def _chain_label(asm: Any, members: list[str], shape: np.ndarray, index: dict[str, int],
                 name: str) -> str:
    n = len(members)
    q = np.array([[shape[index[f"{m}.{d}"]] for d in DOF_NAMES] for m in members])  # n x 6
    mass = [asm.bodies[m].mass_matrix for m in members]
    cgs = np.array([asm.bodies[m].cg for m in members])
    masses = np.array([asm.bodies[m].mass for m in members])
    centre = masses @ cgs / masses.sum()
    # Rigid motions of the chain about its centre, at each segment cg (6n x 6).
    rigid = np.zeros((6 * n, 6))
    for i, c in enumerate(cgs):
        rigid[6 * i:6 * i + 3, :3] = np.eye(3)
        rigid[6 * i:6 * i + 3, 3:] = -skew(c - centre)
        rigid[6 * i + 3:6 * i + 6, 3:] = np.eye(3)
    big_m = np.zeros((6 * n, 6 * n))
    for i, m6 in enumerate(mass):
        big_m[6 * i:6 * i + 6, 6 * i:6 * i + 6] = m6
    x = q.ravel()
    mr = rigid.T @ big_m @ rigid
    coords = np.linalg.solve(mr, rigid.T @ big_m @ x)
    rigid_part = rigid @ coords
    deform = x - rigid_part
    e_rigid = float(rigid_part @ big_m @ rigid_part)
    e_def = float(deform @ big_m @ deform)
    if e_rigid >= e_def:
        shares = coords ** 2 * np.diag(mr)
        return f"{name} {_RIGID_WORDS[DOF_NAMES[int(np.argmax(shares))]]}"
    axis = cgs[-1] - cgs[0]
    axis = axis / np.linalg.norm(axis)
    vertical = np.array([0.0, 0.0, 1.0]) - axis[2] * axis
    if np.linalg.norm(vertical) < 1e-6:
        vertical = np.array([1.0, 0.0, 0.0]) - axis[0] * axis
    vertical /= np.linalg.norm(vertical)
    lateral = np.cross(vertical, axis)
    d = deform.reshape(n, 6)
    parts = {"vertical bending": d[:, :3] @ vertical, "lateral bending": d[:, :3] @ lateral,
             "axial": d[:, :3] @ axis, "torsion": d[:, 3:] @ axis}
    inertia_axis = np.array([axis @ asm.bodies[m].inertia @ axis for m in members])
    energies = {k: float(masses @ v ** 2) for k, v in parts.items() if k != "torsion"}
    energies["torsion"] = float(inertia_axis @ parts["torsion"] ** 2)
    kind = max(energies, key=energies.get)
    if kind.endswith("bending"):
        # slope of the deflection: w' = theta . (axis x vertical), v' = theta . (axis x lateral)
        along = np.cross(axis, vertical if kind.startswith("vertical") else lateral)
        s_pos = cgs @ axis
        # The smooth interpolant keeps small end lobes: a low floor suffices.
        nodes = _nodes(_hermite(s_pos, parts[kind], d[:, 3:] @ along), floor=1e-3)
    else:
        nodes = _nodes(parts[kind])
    order = max(1, nodes - 1) if kind.endswith("bending") else max(1, nodes)
    return f"{name} {_ordinal(order)} {kind}"
