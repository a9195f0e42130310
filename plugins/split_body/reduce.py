"""Craig-Bampton reduction of a split (beam-chain) body inside a vehicle model.

The segments of the chain that carry a link other than its own beams (the
attachment segments) keep their six DOFs each as boundary DOFs; every other
segment's DOFs are replaced by ``n_modes`` fixed-interface modal coordinates
(labelled ``CHAIN.mode01`` ...), see :func:`builder.craig_bampton.craig_bampton`.
The rest of the vehicle is untouched, so it sees a small flexible body:
a 5,000-segment body attached at six points becomes 36 + n_modes DOFs.

The result is an ordinary reduced :class:`~builder.linear.LinearModel`
(through :func:`builder.reduce.transform`): it expands back to the full
model, so sensors, mode labels and renders work on it unchanged.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from builder.craig_bampton import CraigBamptonResult, craig_bampton
from builder.errors import InputError, Where
from builder.linear import LinearModel
from builder.reduce import transform

from .labels import beam_chains

__all__ = ["attachment_segments", "reduce_flexible_body"]


def attachment_segments(assembly, segments: list[str]) -> list[str]:
    """The segments that carry a link other than the chain's own beams."""
    chain = set(segments)
    held = set()
    for lk in assembly.links.values():
        if lk.type == "beam" and lk.a.node in chain and lk.b.node in chain:
            continue
        held.update(n for n in (lk.a.node, lk.b.node) if n in chain)
    return [s for s in segments if s in held]


def reduce_flexible_body(model: LinearModel, chain: str, n_modes: int,
                         boundary_segments: list[str] | None = None
                         ) -> tuple[LinearModel, CraigBamptonResult]:
    """Craig-Bampton-reduce the beam chain ``chain`` of a full model.

    ``boundary_segments`` default to the attachment segments (or the first
    segment of a free chain). Returns the reduced model and the component
    reduction (its fixed-interface frequencies, Hz, in ``frequencies_hz``).
    """
    if model.parent is not None or model.assembly is None:
        raise InputError("Craig-Bampton reduction needs the full (unreduced) model",
                         Where(field="craig_bampton"))
    chains = beam_chains(model.assembly)
    if chain not in chains:
        known = ", ".join(chains) or "none"
        raise InputError(f'no beam chain "{chain}" (chains: {known})',
                         Where(field="craig_bampton"))
    segments = chains[chain]
    boundary = boundary_segments or attachment_segments(model.assembly, segments) \
        or segments[:1]
    index = {d: i for i, d in enumerate(model.dofs)}
    chain_dofs = [index[d] for d in model.dofs if d.rsplit(".", 1)[0] in set(segments)]
    bset = set(boundary)
    local_b = [j for j, i in enumerate(chain_dofs)
               if model.dofs[i].rsplit(".", 1)[0] in bset]
    idx = np.array(chain_dofs)
    cb = craig_bampton(model.K.tocsr()[idx][:, idx], model.M.tocsr()[idx][:, idx],
                       np.array(local_b), n_modes)
    # New coordinates: every DOF outside the chain, the boundary DOFs, the modes.
    outside = [i for i in range(model.n) if i not in set(chain_dofs)]
    b_global = [chain_dofs[j] for j in local_b]
    keep = sorted(outside + b_global)
    labels = [model.dofs[i] for i in keep] + [f"{chain}.mode{k + 1:02d}"
                                              for k in range(cb.n_modes)]
    col = {i: c for c, i in enumerate(keep)}
    rows, cols, vals = [], [], []
    for i in outside:
        rows.append(i)
        cols.append(col[i])
        vals.append(1.0)
    # Chain rows: T_chain columns are [boundary (in local_b order), modes].
    tcols = [col[chain_dofs[j]] for j in local_b] + \
        list(range(len(keep), len(keep) + cb.n_modes))
    t = cb.T
    nz = np.nonzero(t)
    rows.extend(idx[nz[0]].tolist())
    cols.extend(np.asarray(tcols)[nz[1]].tolist())
    vals.extend(t[nz].tolist())
    T = sp.csr_array((vals, (rows, cols)), shape=(model.n, len(labels)))
    reduced = transform(model, T, None, labels)
    return reduced.with_matrices(name=f"{model.name} [{chain}: Craig-Bampton, "
                                      f"{cb.n_modes} modes]"), cb
