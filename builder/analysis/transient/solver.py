"""The exact solver: state-space matrices, the sample recurrence (Van Loan's
augmented exponential, modal filters), time grids. See :mod:`.` for the method."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
import scipy.linalg
from numpy.typing import NDArray

from ...errors import InputError, Where

#: Default output rate (Hz).
DEFAULT_RATE = 1000.0
#: Settling time added after the last road point has passed the event (s).
SETTLE_S = 3.0
#: Largest number of time samples of one response.
MAX_SAMPLES = 20_000_000
SNAP = 1e-9          # a change of input form this close to a sample (in dt) sits on it
_MODAL_CONDITION = 1e8


def _step_matrices(A: NDArray, B: NDArray, h: float, omega: float) -> tuple[NDArray, NDArray]:
    """e^{A h} and Gamma (4, N, m) for the input basis [1, tau, cos W tau, sin W tau].

    One exponential of the augmented generator (Van Loan): state
    [x, c, u, u', p, q] with x' = A x + B (c + u + p), u'' = 0, p' = -W q, q' = W p.
    """
    N, m = B.shape
    blocks = 5 if omega else 3
    L = np.zeros((N + blocks * m, N + blocks * m))
    c, u, ud, p, q = (N + k * m for k in range(5))
    eye = np.eye(m)
    L[:N, :N] = A
    L[:N, c:c + m] = B
    L[:N, u:u + m] = B
    L[u:u + m, ud:ud + m] = eye
    if omega:
        L[:N, p:p + m] = B
        L[p:p + m, q:q + m] = -omega * eye
        L[q:q + m, p:p + m] = omega * eye
    E = scipy.linalg.expm(L * h)
    gam = np.zeros((4, N, m))
    gam[0] = E[:N, c:c + m]
    gam[1] = E[:N, ud:ud + m]            # u(0) = 0, u'(0) = I: u = tau
    if omega:
        gam[2] = E[:N, p:p + m]          # p(0) = I, q(0) = 0: p = cos
        gam[3] = -E[:N, q:q + m]         # p(0) = 0, q(0) = -I: p = sin
    return E[:N, :N], gam


def hold_step(A: NDArray, B: NDArray, dt: float) -> tuple[NDArray, NDArray, NDArray]:
    """``(e^{A dt}, Gamma0, Gamma1)`` of one step ``dt`` (s) of an input that is a
    straight line on the step: ``x(dt) = e^{A dt} x(0) + Gamma0 u(0) + Gamma1 u'``."""
    Phi, gam = _step_matrices(A, B, dt, 0.0)
    return Phi, gam[0], gam[1]


def _recurrence(A: NDArray, Phi: NDArray, g: NDArray, dt: float, Cout: NDArray,
                nint: int) -> NDArray:
    """Outputs ``Cout x_i`` (nint + 1, ns) of x_0 = 0, x_{i+1} = Phi x_i + g_i.

    ``g`` holds the first ``len(g)`` forcing terms; every later one equals ``g[-1]``
    (the input keeps one constant form after the event), so that part is the closed
    form ``xi_p + mu^p (xi_0 - xi_p)`` per mode, with no recursion.
    """
    from scipy.signal import lfilter

    active, N = g.shape
    lam, V = np.linalg.eig(A)
    ok = np.all(np.isfinite(lam)) and np.linalg.cond(V) < _MODAL_CONDITION
    if ok:
        mu = np.exp(lam * dt)
        Vinv = np.linalg.inv(V)
        ok = np.allclose((V * mu) @ Vinv, Phi, rtol=1e-9, atol=1e-11 * np.abs(Phi).max())
    out = np.zeros((nint + 1, Cout.shape[0]))
    if not ok:
        x = np.zeros(N)
        states = np.empty((nint, N))
        for i in range(nint):
            x = Phi @ x + g[min(i, active - 1)]
            states[i] = x
        out[1:] = states @ Cout.T
        return out
    # A is real: its complex modes come in conjugate pairs (LAPACK returns exact
    # conjugates), so one of each pair, counted twice, gives the real output.
    keep = lam.imag >= 0
    weight = np.where(lam.imag[keep] > 0, 2.0, 1.0)
    mu, lam = mu[keep], lam[keep]
    h = np.ascontiguousarray(Vinv[keep] @ g.T)          # (modes, active)
    xi = np.empty((mu.size, nint), dtype=complex)
    for k in range(mu.size):
        xi[k, :active] = lfilter([1.0], [1.0, -mu[k]], h[k])
    if nint > active:
        tail = h[:, -1]
        steps = np.arange(1, nint - active + 1) * dt
        last = xi[:, active - 1]
        grows = np.abs(1.0 - mu) < 1e-13                  # a zero eigenvalue: xi grows linearly
        safe = np.where(grows, 1.0, 1.0 - mu)
        fixed = np.where(grows, 0.0, tail / safe)
        decay = np.exp(lam[:, None] * steps[None, :])
        xi[:, active:] = fixed[:, None] + decay * (last - fixed)[:, None]
        if grows.any():
            xi[grows, active:] = last[grows, None] + np.outer(tail[grows], steps / dt)
    out[1:] = ((Cout @ V[:, keep] * weight) @ xi).real.T
    return out


def simulate(A: NDArray, B: NDArray, Cout: NDArray, D: NDArray, dt: float, coef: NDArray,
              u_samples: NDArray, omega: float,
              splits: dict[int, list[tuple[float, NDArray]]] | None = None) -> NDArray:
    """Exact outputs at the samples, (nt, ns), for interval coefficients (k, 4, m).

    Intervals from ``k - 1`` on share the coefficients ``coef[-1]``; ``splits[i]``
    replaces interval i by sub-intervals ``(length, coef (4, m))``."""
    Phi, gam = _step_matrices(A, B, dt, omega)
    active, _, m = coef.shape
    g = coef.reshape(active, 4 * m) @ gam.transpose(0, 2, 1).reshape(4 * m, -1)
    cache: dict[float, tuple[NDArray, NDArray]] = {}
    for i, subs in (splits or {}).items():
        gi = np.zeros(A.shape[0])
        for h, c in subs:
            if h not in cache:
                cache[h] = _step_matrices(A, B, h, omega)
            Ph, Gh = cache[h]
            gi = Ph @ gi + np.einsum("bnm,bm->n", Gh, c)
        g[i] = gi
    return _recurrence(A, Phi, g, dt, Cout, u_samples.shape[0] - 1) + u_samples @ D.T


def time_grid(duration_s: float, rate_hz: float) -> tuple[float, int]:
    rate, dur = float(rate_hz), float(duration_s)
    if not math.isfinite(rate) or rate <= 0:
        raise InputError(f"rate must be a positive frequency, not {rate_hz!r} Hz",
                         Where(field="--rate"))
    if not math.isfinite(dur) or dur <= 0:
        raise InputError(f"duration must be positive, not {duration_s!r} s",
                         Where(field="--duration"))
    count = int(round(dur * rate)) + 1
    if count < 4:
        raise InputError(f"{dur:g} s at {rate:g} Hz gives fewer than four samples",
                         Where(field="--duration"))
    if count > MAX_SAMPLES:
        raise InputError(f"{dur:g} s at {rate:g} Hz gives {count} samples (at most "
                         f"{MAX_SAMPLES})", Where(field="--rate"))
    return 1.0 / rate, count


def state_space_rows(model: Any, sensors: Sequence[str] | None) -> tuple[NDArray, ...]:
    if model.n == 0:
        raise InputError("the model has no degrees of freedom", Where(field="--depth"))
    if not model.inputs:
        raise InputError("the model has no road points to excite", Where(field="road"))
    if isinstance(sensors, str):
        sensors = [sensors]
    rows = (list(range(len(model.sensors))) if sensors is None
            else [model.sensor_index(s) for s in sensors])
    if not rows:
        raise InputError("the model has no sensors to report", Where(field="sensors"))
    A, B, C, D = model.to_state_space()
    return A, B, C[rows], D[rows], np.array(rows, dtype=int)


def state_space(model: Any, sensors: Sequence[str] | None = None) -> tuple[NDArray, ...]:
    """``(A, B, C, D, rows)`` of the model for time responses: the outputs of ``sensors``
    (default all) and their rows in ``model.sensors``; errors for a model that has no
    DOFs, road inputs or sensors."""
    return state_space_rows(model, sensors)


def equivalent_viscous(model: Any) -> tuple[Any, str]:
    """The model with its hysteretic (loss-factor) damping H replaced by viscous damping
    equivalent at each mode's own frequency, and a note saying so ("" when H is zero).

    With mass-normalised undamped modes ``Phi`` (``K Phi = M Phi Omega^2``), the modal
    viscous damping ``Phi^T H Phi / omega_k`` (the loss factor's energy per cycle at
    ``omega_k``, the damping :mod:`.modes` reports) gives ``C_eq = M Phi diag(...)
    Phi^T M``; rigid-body modes add nothing. The road-side part ``Bh`` is left out.
    """
    import scipy.linalg
    import scipy.sparse as sp

    H = model.H.toarray() if hasattr(model.H, "toarray") else np.asarray(model.H)
    if not np.any(H):
        return model, ""
    M = model.M.toarray()
    w2, phi = scipy.linalg.eigh(model.K.toarray(), M)
    scale = float(np.abs(w2).max()) if w2.size else 0.0
    elastic = w2 > 1e-9 * scale
    omega = np.sqrt(w2[elastic])
    shapes = phi[:, elastic]
    modal = np.einsum("ik,ij,jk->k", shapes, H, shapes) / omega
    MP = M @ shapes
    C_eq = MP @ (modal[:, None] * MP.T)
    C = model.C.toarray() + 0.5 * (C_eq + C_eq.T)
    zero = sp.csr_array(H.shape)
    changed = model.with_matrices(C=sp.csr_array(C), H=zero,
                                  Bh=sp.csr_array(model.Bh.shape),
                                  Sh=sp.csr_array(model.Sh.shape),
                                  Dh=sp.csr_array(model.Dh.shape))
    return changed, ("the model's loss-factor damping enters as viscous damping equivalent at "
                     "each mode's frequency (the damping ratios of lumpgraph modes)")
