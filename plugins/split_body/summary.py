"""The split body's first torsion and bending frequencies, for ``lumpgraph check``.

Each beam chain's first torsion, first vertical bending and first lateral
bending are the lowest vehicle modes whose kinetic energy lies mostly (at
least :data:`CHAIN_SHARE`) in the chain and whose chain motion is mostly
deformation of one kind. The split into rigid motion of the chain and
deformation, and the kinds, are those of the mode labels
(:mod:`plugins.split_body.labels`): the deformation is what is left after
the chain's M-orthogonal rigid-body fit; vertical bending is its motion
along the section's vertical, lateral bending along the third axis, torsion
its rotation about the chain's axis. Every product runs segment by segment
(6 x 6 blocks), so the cost is linear in the number of segments.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from builder.eigen import lowest_modes, natural_frequencies_hz
from builder.kinematics import DOF_NAMES, skew

from .labels import beam_chains

__all__ = ["first_elastic_modes", "check_summary", "CHAIN_SHARE", "KINDS"]

#: Share of a mode's kinetic energy the chain must hold for the mode to be its own.
CHAIN_SHARE = 0.5

#: The kinds reported, in order.
KINDS = ("torsion", "vertical bending", "lateral bending")

#: The most vehicle modes searched for a chain's first modes.
_MAX_MODES = 60


def _chain_data(asm: Any, members: list[str]) -> dict[str, np.ndarray]:
    cgs = np.array([asm.bodies[m].cg for m in members], dtype=float)
    masses = np.array([asm.bodies[m].mass for m in members], dtype=float)
    mass6 = np.array([asm.bodies[m].mass_matrix for m in members])          # n x 6 x 6
    centre = masses @ cgs / masses.sum()
    rigid = np.zeros((len(members), 6, 6))                                   # per segment
    rigid[:, :3, :3] = np.eye(3)
    rigid[:, :3, 3:] = -np.array([skew(c - centre) for c in cgs])
    rigid[:, 3:, 3:] = np.eye(3)
    axis = cgs[-1] - cgs[0]
    axis = axis / np.linalg.norm(axis)
    vertical = np.array([0.0, 0.0, 1.0]) - axis[2] * axis
    if np.linalg.norm(vertical) < 1e-6:
        vertical = np.array([1.0, 0.0, 0.0]) - axis[0] * axis
    vertical /= np.linalg.norm(vertical)
    inertia_axis = np.array([axis @ asm.bodies[m].inertia @ axis for m in members])
    return {"masses": masses, "mass6": mass6, "rigid": rigid, "axis": axis,
            "vertical": vertical, "lateral": np.cross(vertical, axis),
            "inertia_axis": inertia_axis}


def _kind(chain: dict[str, np.ndarray], q: np.ndarray) -> str | None:
    """The deformation kind of a chain motion q (n x 6), or None if mostly rigid."""
    M6, R = chain["mass6"], chain["rigid"]
    MR = np.einsum("nij,njk->nik", M6, R)
    mr = np.einsum("nji,njk->ik", R, MR)
    coords = np.linalg.solve(mr, np.einsum("nji,nj->i", MR, q))
    rigid = np.einsum("nij,j->ni", R, coords)
    deform = q - rigid
    e_rigid = float(np.einsum("ni,nij,nj->", rigid, M6, rigid))
    e_def = float(np.einsum("ni,nij,nj->", deform, M6, deform))
    if e_def <= e_rigid:
        return None
    m = chain["masses"]
    energies = {
        "vertical bending": float(m @ (deform[:, :3] @ chain["vertical"]) ** 2),
        "lateral bending": float(m @ (deform[:, :3] @ chain["lateral"]) ** 2),
        "axial": float(m @ (deform[:, :3] @ chain["axis"]) ** 2),
        "torsion": float(chain["inertia_axis"] @ (deform[:, 3:] @ chain["axis"]) ** 2),
    }
    return max(energies, key=energies.get)


def first_elastic_modes(model: Any, eigenvalues: np.ndarray, shapes: np.ndarray
                        ) -> dict[str, dict[str, float | None]]:
    """Chain name -> {kind: frequency (Hz) of its first such mode, or None if not found}
    among the given modes (eigenvalues rad^2/s^2, shapes over ``model.dofs``)."""
    asm = model.assembly
    index = {d: i for i, d in enumerate(model.dofs)}
    freqs = natural_frequencies_hz(eigenvalues)
    energy = np.abs(shapes * np.asarray(model.M @ shapes))
    total = energy.sum(axis=0)
    out: dict[str, dict[str, float | None]] = {}
    for name, members in beam_chains(asm).items():
        if any(asm.bodies[m].dofs != DOF_NAMES for m in members):
            continue
        rows = np.array([[index[f"{m}.{d}"] for d in DOF_NAMES] for m in members])
        chain = _chain_data(asm, members)
        found: dict[str, float | None] = dict.fromkeys(KINDS)
        for i in range(shapes.shape[1]):
            share = energy[rows.ravel(), i].sum() / total[i] if total[i] > 0 else 0.0
            if share < CHAIN_SHARE:
                continue
            kind = _kind(chain, shapes[rows, i])
            if kind in found and found[kind] is None:
                found[kind] = float(freqs[i])
        out[name] = found
    return out


def _text(name: str, found: dict[str, float | None], searched_hz: float) -> str:
    parts = [f"first {k} {f:.1f} Hz" for k, f in found.items() if f is not None]
    missing = [k for k, f in found.items() if f is None]
    if missing:
        parts.append(f"no {' or '.join(missing)} below {searched_hz:.0f} Hz")
    return f"split body {name} in the vehicle: " + ", ".join(parts)


def check_summary(model: Any, eigenvalues: np.ndarray, shapes: np.ndarray
                  ) -> list[dict[str, Any]]:
    """One summary line per beam chain (its first torsion and bending frequencies).

    Uses the modes the check computed; when a kind is missing among them,
    solves for more vehicle modes (up to 60).
    """
    lam, x = np.asarray(eigenvalues), np.asarray(shapes)
    found = first_elastic_modes(model, lam, x)
    count = lam.size
    while (any(f is None for c in found.values() for f in c.values())
           and count < min(_MAX_MODES, model.n)):
        count = min(max(2 * count, 24), _MAX_MODES, model.n)
        lam, x = lowest_modes(model.K, model.M, count)
        found = first_elastic_modes(model, lam, x)
    top = float(natural_frequencies_hz(lam[-1:])[0]) if lam.size else 0.0
    return [{"text": _text(name, kinds, top), "chain": name,
             **{f"first_{k.replace(' ', '_')}_hz": f for k, f in kinds.items()}}
            for name, kinds in found.items()]
