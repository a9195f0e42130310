"""Model depths: tie constraints and Guyan (static) condensation.

A depth keeps some DOFs as masters and condenses the rest statically:
with the masters m and slaves s,

    q_s = -K_ss^-1 K_sm q_m + K_ss^-1 Br_s r          (Guyan, 1965)

so q = T q_m + G r, and the reduced matrices are T^T M T, T^T C T, T^T K T.
Road inputs acting on condensed DOFs are carried through G (the static part
of their effect); the inertia of that quasi-static motion is dropped, as in
any Guyan reduction. Ties (``tie: [[a, b], ...]``) first force each group
to move as one, the first named surviving.

>>> import numpy as np
>>> from pathlib import Path
>>> from builder.load import load_assembly
>>> from builder.linear import assemble
>>> car = load_assembly(Path(__file__).parent.parent / "assemblies" / "quarter_car.yaml")
>>> small = reduce_to_depth(assemble(car), car.depths["bounce"])
>>> float(small.K.toarray()[0, 0])      # 21 kN/m in series with 210 kN/m
19090.909090909092
"""

from __future__ import annotations

import fnmatch
from collections.abc import Iterable, Sequence

import numpy as np
import scipy.sparse as sp

from .assembly import Depth
from .errors import InputError, Where
from .linear import LinearModel
from .load import check_depths, match_dofs

__all__ = ["transform", "tie", "tie_map", "guyan", "component_modes", "modal_name",
           "reduce_to_depth", "reduce_keep", "full_model"]


def transform(model: LinearModel, T: sp.csr_array, G: sp.csr_array | None,
              dofs: Sequence[str]) -> LinearModel:
    """The model in new coordinates q_new, with q = T q_new + G r.

    The result's ``parent`` is the model's root (unreduced) model, so that a
    chain of reductions expands in one step.
    """
    T = sp.csr_array(T)
    nr = len(model.inputs)
    G = sp.csr_array((model.n, nr)) if G is None else sp.csr_array(G)
    Tt = T.T.tocsr()

    def congruent(A: sp.csr_array) -> sp.csr_array:
        out = (Tt @ A @ T).tocsr()
        return ((out + out.T) * 0.5).tocsr()

    parent = model.parent if model.parent is not None else model
    base = model if model.parent is None or model.joints is not None else model.base
    if model.parent is not None:
        expansion = sp.csr_array(model.expansion @ T)
        expansion_input = sp.csr_array(model.expansion @ G + model.expansion_input)
    else:
        expansion, expansion_input = T, G
    return model.with_matrices(
        dofs=tuple(dofs), M=congruent(model.M), C=congruent(model.C), K=congruent(model.K),
        H=congruent(model.H),
        Br=sp.csr_array(Tt @ (model.Br - model.K @ G)),
        Bv=sp.csr_array(Tt @ (model.Bv - model.C @ G)),
        Bh=sp.csr_array(Tt @ (model.Bh - model.H @ G)),
        Sd=sp.csr_array(model.Sd @ T), Sv=sp.csr_array(model.Sv @ T),
        Sa=sp.csr_array(model.Sa @ T), Sh=sp.csr_array(model.Sh @ T),
        Dr=sp.csr_array(model.Dr + model.Sd @ G), Dv=sp.csr_array(model.Dv + model.Sv @ G),
        Dh=sp.csr_array(model.Dh + model.Sh @ G),
        parent=parent, expansion=expansion, expansion_input=expansion_input,
        base=base, joints=None)


def tie(model: LinearModel, groups: Iterable[Sequence[str]]) -> LinearModel:
    """Force each group of DOFs to move as one (the first named survives)."""
    groups = [list(g) for g in groups]
    if not groups:
        return model
    T, keep = tie_map(model.dofs, groups)
    return transform(model, T, None, keep)


def tie_map(dofs: Sequence[str], groups: Iterable[Sequence[str]]
            ) -> tuple[sp.csr_array, list[str]]:
    """The 0/1 map q = T q_tied of tie groups over ``dofs`` and the surviving DOFs."""
    survivor = {d: g[0] for g in groups for d in g[1:]}
    keep = [d for d in dofs if d not in survivor]
    col = {d: i for i, d in enumerate(keep)}
    rows = np.arange(len(dofs))
    cols = np.array([col[survivor.get(d, d)] for d in dofs], dtype=int)
    return sp.csr_array((np.ones(len(dofs)), (rows, cols)), shape=(len(dofs), len(keep))), keep



def _static_basis(model: LinearModel, masters: Sequence[str]
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None:
    """Guyan's T (n, masters) and G (n, inputs), and the master and slave indices;
    None when nothing is condensed."""
    mset = set(masters)
    m_idx = np.array([i for i, d in enumerate(model.dofs) if d in mset], dtype=int)
    s_idx = np.array([i for i, d in enumerate(model.dofs) if d not in mset], dtype=int)
    if len(m_idx) == 0:
        raise InputError("a depth must keep at least one DOF", Where(field="keep"))
    if len(s_idx) == 0:
        return None
    K = sp.csc_array(model.K)
    Kss = K[s_idx][:, s_idx]
    Ksm = K[s_idx][:, m_idx].toarray()
    Bs = model.Br.tocsr()[s_idx].toarray()
    X = None if _singular(Kss) else _solve(Kss, np.hstack([Ksm, Bs]))
    if X is None:
        raise InputError(
            "cannot condense: with the kept DOFs held, the condensed DOFs "
            f"({_short(model.dofs, s_idx)}) are free to move (a mechanism); keep them",
            Where(field="keep"))
    nm = len(m_idx)
    T = np.zeros((model.n, nm))
    T[m_idx, np.arange(nm)] = 1.0
    T[s_idx] = -X[:, :nm]
    G = np.zeros((model.n, Bs.shape[1]))
    G[s_idx] = X[:, nm:]
    return T, G, m_idx, s_idx


def guyan(model: LinearModel, masters: Sequence[str]) -> LinearModel:
    """Static condensation onto the master DOFs (kept in model order)."""
    basis = _static_basis(model, masters)
    if basis is None:
        return model
    T, G, m_idx, _ = basis
    return transform(model, sp.csr_array(T), sp.csr_array(G), [model.dofs[i] for i in m_idx])


def modal_name(pattern: str, k: int) -> str:
    """Label of the k-th (1-based) modal coordinate of a ``modes:`` pattern:
    ``body_s*.*`` -> ``body_s.mode1``."""
    stem = pattern.split(".", 1)[0].translate(str.maketrans("", "", "*?[]")).strip("_")
    return f"{stem or 'modal'}.mode{k}"


def component_modes(model: LinearModel, masters: Sequence[str],
                    modes: Sequence[tuple[str, int]], where: Where | None = None
                    ) -> LinearModel:
    """Craig-Bampton depth: Guyan condensation onto ``masters`` plus, for each
    (pattern, count), the ``count`` lowest fixed-interface modes of the condensed
    DOFs matching the pattern (every other DOF held), as extra coordinates
    named by :func:`modal_name`.

    With q = T_g q_m + Phi eta + G r the static constraint modes of the masters
    are exact at zero frequency and the modes add the components' own dynamics
    (Craig and Bampton, 1968); with no modes this is Guyan's reduction.
    """
    from .eigen import lowest_modes

    at = (where or Where()).child("modes")
    basis = _static_basis(model, masters)
    if basis is None:
        return model
    T, G, m_idx, s_idx = basis
    slaves = [model.dofs[i] for i in s_idx]
    columns, names, used = [T], [model.dofs[i] for i in m_idx], set()
    K, M = sp.csr_array(model.K), sp.csr_array(model.M)
    for pattern, count in modes:
        inner = np.array([i for i, d in zip(s_idx, slaves, strict=True)
                          if fnmatch.fnmatchcase(d, pattern) and i not in used], dtype=int)
        if inner.size == 0:
            raise InputError(f'"{pattern}" matches no condensed DOF: its modes would be '
                             "empty", at)
        if count > inner.size:
            raise InputError(f'"{pattern}" asks for {count} modes of {inner.size} condensed '
                             "DOFs", at)
        used.update(inner.tolist())
        _, phi = lowest_modes(K[inner][:, inner], M[inner][:, inner], count)
        block = np.zeros((model.n, count))
        block[inner] = phi
        columns.append(block)
        names += [modal_name(pattern, k + 1) for k in range(count)]
    if len(set(names)) != len(names):
        raise InputError("two modes: patterns give the same coordinate names; name the "
                         "bodies apart", at)
    return transform(model, sp.csr_array(np.hstack(columns)), sp.csr_array(G), names)


def _singular(Kss: sp.csc_array) -> bool:
    """True when K_ss has a zero eigenvalue (relative 1e-10); checked densely when small."""
    if Kss.shape[0] > 400:
        return False
    ev = np.linalg.eigvalsh(Kss.toarray())
    return bool(ev[0] <= 1e-10 * max(abs(ev[-1]), 1e-300))


def _solve(Kss: sp.csc_array, rhs: np.ndarray) -> np.ndarray | None:
    from scipy.sparse.linalg import splu  # here: not needed by every command at start-up

    try:
        X = splu(sp.csc_matrix(Kss)).solve(rhs)
    except RuntimeError:
        return None
    return X if np.all(np.isfinite(X)) else None


def _short(dofs: Sequence[str], idx: np.ndarray) -> str:
    names = [dofs[i] for i in idx[:6]]
    return ", ".join(names) + (", ..." if len(idx) > 6 else "")


def reduce_keep(model: LinearModel, keep: Sequence[str],
                ties: Sequence[Sequence[str]] = ()) -> LinearModel:
    """Tie, then condense onto the DOFs matching ``keep`` (names or wildcards)."""
    depth = Depth("ad hoc", tuple(keep), tuple(tuple(g) for g in ties), Where(field="--keep"))
    return reduce_to_depth(model, depth)


def reduce_to_depth(model: LinearModel, depth: Depth) -> LinearModel:
    """The model at a depth: ties applied, then Guyan condensation to ``keep`` (with
    the depth's fixed-interface ``modes``, :func:`component_modes`)."""
    _refuse_dependent(model, depth)
    check_depths(depth, model.dofs)
    tied = tie(model, depth.tie)
    masters: list[str] = []
    for pattern in depth.keep:
        masters.extend(d for d in match_dofs(pattern, tied.dofs) if d not in masters)
    out = (component_modes(tied, masters, depth.modes, depth.where) if depth.modes
           else guyan(tied, masters))
    return out.with_matrices(name=f"{model.name} [{depth.name}]")


def _refuse_dependent(model: LinearModel, depth: Depth) -> None:
    """A depth that keeps a DOF the joints made dependent: say so, with the coordinates
    that remain independent on that body."""
    if model.parent is None or full_model(model).joints is None:
        return
    wheres = depth.keep_where or (depth.where,) * len(depth.keep)
    for pattern, where in zip(depth.keep, wheres):
        if match_dofs(pattern, model.dofs) or not match_dofs(pattern, model.parent.dofs):
            continue
        body = pattern.rpartition(".")[0]
        own = [d for d in model.dofs if d.rpartition(".")[0] == body]
        tip = f"; {body}'s independent coordinates: {', '.join(own)}" if own else ""
        raise InputError(f'"{pattern}" is fixed by the joints (a dependent coordinate of '
                         f"the linkage), so a depth cannot keep it{tip}", where)


def full_model(model: LinearModel) -> LinearModel:
    """The unreduced model a reduced one came from (itself if not reduced); for a
    jointed assembly the constrained model (its joints eliminated), not the
    unconstrained ``parent``."""
    if model.parent is None or model.joints is not None:
        return model
    return model.base if model.base is not None else model.parent
