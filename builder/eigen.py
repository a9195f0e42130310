"""Lowest modes of the undamped problem K x = lambda M x.

One entry point, :func:`lowest_modes`, shared by the modes analysis and the
Craig-Bampton reduction. K is symmetric positive semi-definite (it may be
singular: a free-floating vehicle or component has rigid-body modes), M is
symmetric positive definite. Both may be dense arrays or scipy sparse.

Two paths:

- dense (``n <= DENSE_LIMIT`` DOFs, or when nearly all modes are asked for):
  :func:`scipy.linalg.eigh` on the generalised problem;
- sparse (larger): shift-invert Lanczos, :func:`scipy.sparse.linalg.eigsh`
  with ``sigma`` slightly below zero (:func:`default_shift`), so that
  ``K - sigma M`` is positive definite and can be factorised (sparse LU)
  even when K is singular. The start vector
  is a fixed pseudo-random vector, so repeated runs give identical results.

Either way the returned shapes are made M-orthonormal by a final Rayleigh-Ritz
step on the found subspace (``X^T M X = I``, ``X^T K X = diag(lambda)``) and
get a reproducible sign: the component of largest magnitude is positive
(the first such index on a tie). Shapes of repeated eigenvalues are any
M-orthonormal basis of their space.

>>> import numpy as np
>>> lam, x = lowest_modes(np.array([[2.0, -1.0], [-1.0, 2.0]]), np.eye(2), 2)
>>> [round(float(v), 12) for v in lam]
[1.0, 3.0]
"""

from __future__ import annotations

from typing import Any

__all__ = ["lowest_modes", "zero_frequency_modes", "DENSE_LIMIT", "DEFAULT_SHIFT", "default_shift",
           "sparse_factor", "natural_frequencies_hz"]

import numpy as np
import scipy.linalg
import scipy.sparse

from .errors import InputError
from .threads import blas_threads_for

#: Problems with at most this many DOFs are solved densely.
DENSE_LIMIT = 600

#: Least magnitude of the default shift of the sparse path, rad^2/s^2: about
#: -(0.16 Hz)^2, below the rigid-body modes (0) and far below any vehicle mode.
DEFAULT_SHIFT = -1.0

#: The default shift is also at least this many times the round-off level of
#: the eigenvalues, eps * max(K_jj / M_jj): below that, K - sigma M is
#: numerically as singular as K. (Fine chains of small segments have huge
#: K_jj / M_jj; their rigid-body eigenvalues come out at that round-off level.)
_NOISE_FACTOR = 100.0

#: Seed of the fixed start vector of the sparse path.
_START_SEED = 20_240_611


def _as_dense(a) -> np.ndarray:
    return a.toarray() if scipy.sparse.issparse(a) else np.asarray(a, dtype=float)


def _sign_convention(shapes: np.ndarray) -> np.ndarray:
    """Flip each column so that its component of largest magnitude is positive."""
    if shapes.size == 0:
        return shapes
    idx = np.argmax(np.abs(shapes), axis=0)
    signs = np.sign(shapes[idx, np.arange(shapes.shape[1])])
    signs[signs == 0] = 1.0
    return shapes * signs


def _rayleigh_ritz(K, M, basis: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Eigenpairs of K, M restricted to span(basis), M-orthonormal, ascending."""
    kb = np.asarray(K @ basis)
    mb = np.asarray(M @ basis)
    kr = basis.T @ kb
    mr = basis.T @ mb
    kr = 0.5 * (kr + kr.T)
    mr = 0.5 * (mr + mr.T)
    lam, y = scipy.linalg.eigh(kr, mr)
    return lam, basis @ y


def lowest_modes(K, M, count: int, sigma: float | None = None,
                 dense_limit: int = DENSE_LIMIT) -> tuple[np.ndarray, np.ndarray]:
    """The ``count`` lowest eigenpairs of K x = lambda M x.

    Parameters
    ----------
    K : (n, n) symmetric positive semi-definite stiffness (N/m, N m/rad, ...),
        dense or scipy sparse.
    M : (n, n) symmetric positive definite mass (kg, kg m^2, ...), same kinds.
    count : number of modes wanted, 1 <= count <= n.
    sigma : shift of the sparse path, rad^2/s^2 (default :func:`default_shift`,
        slightly negative; increased if K - sigma M proves singular); modes
        nearest it are found first. Must not be an eigenvalue.
    dense_limit : size up to which the dense solver is used.

    Returns
    -------
    eigenvalues : (count,) ascending, rad^2/s^2 (omega^2). Rigid-body modes come
        out as round-off values near zero, possibly slightly negative.
    shapes : (n, count) columns M-orthonormal (``X^T M X = I``), largest
        component of each positive.
    """
    n = K.shape[0]
    if K.shape != (n, n) or M.shape != (n, n):
        raise InputError(f"stiffness {K.shape} and mass {M.shape} must be square and alike")
    count = int(count)
    if count < 1 or count > n:
        raise InputError(f"asked for {count} modes of a model with {n} DOFs")
    _check_finite(K, "stiffness")
    _check_finite(M, "mass")
    if n <= dense_limit or count >= n - 1 or 2 * count >= n:
        return _dense_modes(_as_dense(K), _as_dense(M), count)
    return _sparse_modes(K, M, count, sigma)


def _check_finite(A, what: str) -> None:
    data = A.data if scipy.sparse.issparse(A) else np.asarray(A)
    if not np.all(np.isfinite(data)):
        raise InputError(f"the {what} matrix has non-finite entries (a value overflowed or is "
                         "not a number): check the sizes of the masses, inertias and rates")


def _dense_modes(k: np.ndarray, m: np.ndarray, count: int) -> tuple[np.ndarray, np.ndarray]:
    n = k.shape[0]
    try:
        with blas_threads_for(n), np.errstate(all="ignore"):
            lam, x = scipy.linalg.eigh(0.5 * (k + k.T), 0.5 * (m + m.T),
                                       subset_by_index=[0, count - 1])
    except (np.linalg.LinAlgError, ValueError) as exc:
        raise InputError("the mass matrix is not positive definite (a body without mass or "
                         "inertia in one of its DOFs, or values too far apart for double "
                         f"precision): {exc}") from None
    if not (np.all(np.isfinite(lam)) and np.all(np.isfinite(x))) or x.shape[1] != count:
        raise InputError("the eigen-solution is not finite: the masses or stiffnesses are too "
                         "far apart in size for double precision")
    return lam, _sign_convention(x)


def _sparse_modes(K, M, count: int, sigma: float | None) -> tuple[np.ndarray, np.ndarray]:
    import scipy.sparse.linalg

    n = K.shape[0]
    k = scipy.sparse.csc_array(K)
    m = scipy.sparse.csc_array(M)
    shift = default_shift(k, m) if sigma is None else float(sigma)
    tries = 1 if sigma is not None else 4
    for attempt in range(tries):
        try:
            lu = sparse_factor(k - shift * m)
            break
        except RuntimeError as exc:  # exactly singular factor
            if attempt == tries - 1:
                raise InputError(f"K - sigma M is singular at sigma = {shift:g} rad^2/s^2 "
                                 "(is M positive definite?)") from exc
            shift *= 100.0
    op = scipy.sparse.linalg.LinearOperator((n, n), matvec=lu.solve, dtype=float)
    v0 = np.random.default_rng(_START_SEED).standard_normal(n)
    # Shift-invert mode: the operator is (K - sigma M)^-1, given explicitly.
    ncv = min(n, max(2 * count + 1, 20))
    for attempt in range(2):
        try:
            _, x = scipy.sparse.linalg.eigsh(k, k=count, M=m, sigma=shift, which="LM",
                                             OPinv=op, v0=v0, ncv=ncv)
            break
        except scipy.sparse.linalg.ArpackNoConvergence as exc:
            if attempt == 1:
                raise InputError(f"the eigen-solution for the lowest {count} modes did not "
                                 "converge; ask for fewer modes") from exc
            ncv = min(n, 2 * ncv)
        except (scipy.sparse.linalg.ArpackError, ValueError) as exc:
            raise InputError(f"the eigen-solution failed ({exc}): the masses or stiffnesses "
                             "are too far apart in size for double precision") from None
    try:
        with blas_threads_for(count):
            lam, x = _rayleigh_ritz(k, m, x)
    except (np.linalg.LinAlgError, ValueError) as exc:
        raise InputError(f"the mass matrix is not positive definite: {exc}") from None
    if not (np.all(np.isfinite(lam)) and np.all(np.isfinite(x))):
        raise InputError("the eigen-solution is not finite: the masses or stiffnesses are too "
                         "far apart in size for double precision")
    return lam, _sign_convention(x)


def sparse_factor(A) -> Any:
    """Sparse LU of a square matrix, with a column ordering chosen for its shape.

    A matrix that is already banded in its own order (``bandwidth * n`` at most
    four times its number of non-zeros, as for a chain of segments numbered
    along the chain) keeps that order, whose factor is compact and fast to
    solve with; any other gets the COLAMD fill-reducing ordering. Returns a
    :class:`scipy.sparse.linalg.SuperLU`. Raises RuntimeError when the factor
    is exactly singular.
    """
    import scipy.sparse.linalg

    a = scipy.sparse.csc_array(A)
    coo = a.tocoo()
    n = a.shape[0]
    band = int(np.max(np.abs(coo.row - coo.col))) if coo.nnz else 0
    spec = "NATURAL" if band * n <= 4 * max(coo.nnz, 1) else "COLAMD"
    return scipy.sparse.linalg.splu(a, permc_spec=spec)


def default_shift(K, M) -> float:
    """The default (negative) shift of the sparse path, rad^2/s^2.

    ``-max(1, 100 eps max_j(K_jj / M_jj))``: slightly below zero, but clear of
    the round-off level of the eigenvalues, so that ``K - sigma M`` factorises
    even when K is singular.
    """
    kd = np.abs(np.asarray(K.diagonal(), dtype=float))
    md = np.abs(np.asarray(M.diagonal(), dtype=float))
    ratio = float(np.max(kd / np.where(md > 0, md, np.inf))) if kd.size else 0.0
    return -max(-DEFAULT_SHIFT, _NOISE_FACTOR * np.finfo(float).eps * ratio)


def natural_frequencies_hz(eigenvalues: np.ndarray) -> np.ndarray:
    """Natural frequencies, Hz, of eigenvalues omega^2 (rad^2/s^2); negatives give 0."""
    lam = np.asarray(eigenvalues, dtype=float)
    return np.sqrt(np.clip(lam, 0.0, None)) / (2.0 * np.pi)


#: A mode is zero-frequency when its eigenvalue is below this many times its own
#: round-off level (see :func:`zero_frequency_modes`) ... The dense solver's
#: rigid-body eigenvalues were seen up to 7 times that level (a free bar of 60
#: segments), the first elastic modes of fine chains 1e4 times above it and of
#: vehicle models 1e9 times and more: 100 sits between.
ROUNDOFF_FACTOR = 100.0

#: ... or below this omega^2 (rad^2/s^2): 0.001 Hz, far below any vehicle mode.
ZERO_FLOOR = (2 * np.pi * 1e-3) ** 2

#: Ratio of neighbouring eigenvalues that separates round-off from real modes.
JUMP = 100.0


def zero_frequency_modes(K, eigenvalues: np.ndarray, shapes: np.ndarray) -> np.ndarray:
    """Which computed modes are zero-frequency (rigid-body or mechanism), a bool mask.

    An eigenvalue omega^2 = phi^T K phi (phi M-normalised, rad^2/s^2) is computed
    with a round-off of about ``eps * |phi|^T |K| |phi|``: a mode whose eigenvalue
    is within a few times that of zero cannot be told from a motion that strains
    no link. The level is each mode's own, so that stiff short segments (large
    K_jj / M_jj) do not turn the real low modes of the rest into "rigid" ones,
    as a threshold on the largest K_jj / M_jj would. The one rule for every
    analysis (modes, checks, reductions). ``eigenvalues`` ascending.
    """
    lam = np.asarray(eigenvalues, dtype=float)
    out = np.zeros(lam.shape, dtype=bool)
    if lam.size == 0:
        return out
    a = np.abs(np.asarray(shapes, dtype=float))
    with np.errstate(over="ignore", invalid="ignore"):
        level = np.finfo(float).eps * np.einsum("ij,ij->j", a, np.asarray(abs(K) @ a))
    small = lam <= np.maximum(ROUNDOFF_FACTOR * np.nan_to_num(level, posinf=np.inf), ZERO_FLOOR)
    candidates = int(np.argmin(small)) if not small.all() else lam.size
    if candidates == 0:
        return out
    # Fine chains of stiff segments push the round-off level of their first elastic
    # modes close to those modes, or above them: being under the level is not
    # enough. Of the candidates, only the lowest up to the last jump of JUMP between
    # neighbours are zero (round-off values lie many decades below the first
    # elastic mode); candidates with no jump above them are real modes of a finely
    # split model (a car on its tyres: 1.2 to 4.6 Hz at 5,000 segments), unless
    # they are below ZERO_FLOOR.
    floor = np.maximum.accumulate(np.maximum(np.abs(lam[:candidates + 1]), ZERO_FLOOR * 1e-9))
    jumps = [k for k in range(1, min(candidates + 1, lam.size)) if lam[k] >= JUMP * floor[k - 1]]
    out[:jumps[-1] if jumps else 0] = True
    out[:candidates] |= lam[:candidates] <= ZERO_FLOOR
    return out
