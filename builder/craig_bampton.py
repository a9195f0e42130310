"""Craig-Bampton (fixed-interface component-mode) reduction of a component.

A component with stiffness K and mass M (n DOFs) is split into boundary DOFs
``b`` (where the rest of the model attaches, kept physically) and interior
DOFs ``i``. Its motion is approximated as

    q_i = Psi q_b + Phi eta,      Psi = -K_ii^-1 K_ib   (static constraint modes)
                                  Phi = lowest modes of (K_ii, M_ii)
                                        (fixed-interface normal modes)

so ``q = T [q_b; eta]`` with the transformation T of shape
(n, n_b + n_modes), rows in the original DOF order, columns the boundary DOFs
(in the order given) followed by the modal coordinates. The reduced matrices
are ``T^T K T`` and ``T^T M T``. With no modes this is Guyan (static)
condensation onto the boundary.

K_ii is factorised once by a sparse LU (:func:`builder.eigen.sparse_factor`);
nothing of size n x n is ever made dense. The boundary must hold the
component (K_ii non-singular), which it does whenever the boundary DOFs
restrain its rigid-body motions, e.g. all six DOFs of one attachment body.

Reference for the method: R. R. Craig and M. C. C. Bampton, "Coupling of
substructures for dynamic analyses", AIAA Journal 6(7), 1968 (from memory).
"""

from __future__ import annotations

__all__ = ["CraigBamptonResult", "craig_bampton"]

from dataclasses import dataclass

import numpy as np
import scipy.sparse
import scipy.sparse.linalg

from .eigen import lowest_modes, natural_frequencies_hz, sparse_factor
from .errors import InputError

#: A sparse LU pivot this small relative to the largest marks K_ii as singular
#: (round-off pivots of a free rigid-body motion are about 1e-16 and below;
#: a valid but stiff component stays far above).
_PIVOT_RATIO = 1e-14


@dataclass(frozen=True)
class CraigBamptonResult:
    """A Craig-Bampton reduced component.

    Attributes
    ----------
    K, M : (r, r) dense reduced stiffness and mass, r = n_b + n_modes; the first
        n_b coordinates are the boundary DOFs (SI units of those DOFs), the rest
        modal coordinates (mass-normalised: M block identity, K block
        diag(omega^2)).
    T : (n, r) dense transformation, full DOFs = T @ reduced coordinates.
    boundary, interior : index arrays into the full DOFs.
    frequencies_hz : (n_modes,) fixed-interface natural frequencies, Hz.
    """

    K: np.ndarray
    M: np.ndarray
    T: np.ndarray
    boundary: np.ndarray
    interior: np.ndarray
    frequencies_hz: np.ndarray

    @property
    def n_modes(self) -> int:
        """Number of fixed-interface modal coordinates."""
        return int(self.frequencies_hz.size)

    def expand(self, reduced: np.ndarray) -> np.ndarray:
        """Full DOF vector(s) of reduced coordinate vector(s): ``T @ reduced``."""
        return self.T @ np.asarray(reduced)


def craig_bampton(K, M, boundary, n_modes: int) -> CraigBamptonResult:
    """Reduce the component (K, M) to its boundary DOFs plus ``n_modes`` modes.

    Parameters
    ----------
    K, M : (n, n) symmetric stiffness and mass, dense or scipy sparse (SI).
    boundary : indices of the boundary DOFs, kept in the order given.
    n_modes : number of fixed-interface modes kept (0 gives Guyan condensation).

    Returns
    -------
    :class:`CraigBamptonResult`.
    """
    n = K.shape[0]
    if K.shape != (n, n) or M.shape != (n, n):
        raise InputError(f"stiffness {K.shape} and mass {M.shape} must be square and alike")
    b = np.asarray(boundary, dtype=np.int64).reshape(-1)
    if b.size == 0:
        raise InputError("Craig-Bampton needs at least one boundary DOF")
    if b.min() < 0 or b.max() >= n or np.unique(b).size != b.size:
        raise InputError("boundary DOF indices must be distinct and within the model")
    mask = np.ones(n, dtype=bool)
    mask[b] = False
    i = np.flatnonzero(mask)
    n_modes = int(n_modes)
    if n_modes < 0 or n_modes > i.size:
        raise InputError(f"asked for {n_modes} fixed-interface modes; the component has "
                         f"{i.size} interior DOFs")
    k = scipy.sparse.csc_array(K)
    m = scipy.sparse.csc_array(M)
    k_ii = k[i][:, i].tocsc()
    k_ib = k[i][:, b]
    m_ii = m[i][:, i].tocsc()
    psi = np.zeros((i.size, b.size))
    if i.size:
        try:
            lu = sparse_factor(k_ii)
        except RuntimeError as exc:
            raise InputError("the boundary DOFs do not hold the component: its interior "
                             "stiffness is singular") from exc
        pivots = np.abs(lu.U.diagonal())
        if pivots.min() <= _PIVOT_RATIO * pivots.max():
            raise InputError("the boundary DOFs do not hold the component: its interior "
                             "stiffness is singular (a free rigid-body motion)")
        psi = -lu.solve(np.asarray(k_ib.toarray()))
    if n_modes:
        lam, phi = lowest_modes(k_ii, m_ii, n_modes)
    else:
        lam, phi = np.zeros(0), np.zeros((i.size, 0))
    t = np.zeros((n, b.size + n_modes))
    t[b, np.arange(b.size)] = 1.0
    t[i, :b.size] = psi
    t[i, b.size:] = phi
    kr = t.T @ np.asarray(k @ t)
    mr = t.T @ np.asarray(m @ t)
    return CraigBamptonResult(K=0.5 * (kr + kr.T), M=0.5 * (mr + mr.T), T=t, boundary=b,
                              interior=i, frequencies_hz=natural_frequencies_hz(lam))
