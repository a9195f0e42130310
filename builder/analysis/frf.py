"""Frequency response functions (FRF) of a LinearModel: inputs to sensors.

For harmonic motion at ``w = 2 pi f`` the model (see :mod:`builder.linear`)

    (K + i H - w^2 M + i w C) q = F(w) u,
    y = (Sd + i Sh + i w Sv - w^2 Sa) q + D(w) u

gives the complex FRF matrix ``y / u`` at every frequency. Two kinds of input ``u``:

- a road input (``"road.fl"``), a vertical road displacement r (m), which
  enters as displacement and velocity: ``F = Br + i Bh + i w Bv`` and the
  sensors' direct term ``D = Dr + i Dh + i w Dv``; the FRF is in the sensor's
  unit per m (the transmissibility when the sensor is a displacement);
- a force input: a DOF label (``"engine.rz"``) is a unit generalised force
  on that DOF (1 N, or 1 N m on a rotation), or a pair ``(name, vector)``
  with the generalised force vector (n,), e.g. from
  ``model.force_input(body, at, direction)``; the FRF is per N (per N m for
  a moment on a rotation DOF). A force has no direct term.

Hysteretic (loss-factor) damping is honoured throughout (``K + iH``).

Three solution methods, chosen by ``method="auto"``:

- ``"modal"`` (small models, many frequencies): one eigendecomposition of
  the complex first-order matrix ``A = [[0, I], [-M^-1 (K + iH), -M^-1 C]]``,
  ``A = V diag(lambda) V^-1``, then for every frequency at once
  ``H(s) = C V diag(1/(s - lambda)) V^-1 (B0 + s B1) + D0 + s D1`` with
  ``s = i w`` (no loop over frequency). It is used only when ``V`` is well
  conditioned (1-norm condition number below 1e7, so that the round-off
  stays near 1e-9 relative) and a direct solve at the two ends of the grid
  agrees;
  otherwise (rigid-body modes without damping give a defective ``A``) the
  direct method is used;
- ``"direct"``: one batched ``numpy.linalg.solve`` of the ``(nf, n, n)``
  stack of dynamic stiffness matrices, in chunks of bounded memory;
- ``"sparse"`` (models above 500 DOFs): a sparse LU factorisation
  (``scipy.sparse.linalg.splu``) per frequency.

Phases are the principal values in (-180, 180] degrees; plots unwrap them.

>>> from pathlib import Path
>>> from builder.load import load_assembly
>>> from builder.linear import assemble
>>> model = assemble(load_assembly(Path(__file__).parents[2] / "assemblies" / "quarter_car.yaml"))
>>> fr = frequency_response(model, [1.0, 10.0], sensors=["travel", "body_accel"])
>>> fr.H.shape                          # (frequencies, sensors, inputs)
(2, 2, 1)
>>> fr.unit("body_accel", "road.contact")
'm/s^2 per m'
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import InputError, Where
from ..threads import blas_threads_for

__all__ = ["FrequencyResponse", "frequency_response", "resolve_inputs", "SPARSE_LIMIT",
           "DEFAULT_BAND", "DEFAULT_POINTS", "ModalForm", "modal_form", "system_poles",
           "resolving_grid"]

#: Default band of ``lumpgraph frf`` (Hz) and its number of log-spaced points.
DEFAULT_BAND = (0.5, 50.0)
DEFAULT_POINTS = 400

#: Models with more DOFs than this are solved by a sparse factorisation per frequency.
SPARSE_LIMIT = 500
_MODAL_MIN_FREQUENCIES = 64   # below this, the direct solve is cheaper than an eigensolve
_MODAL_CONDITION = 1e7
_CHUNK_BYTES = 64e6
_ROTATIONS = ("rx", "ry", "rz")


def _dense(a: Any) -> NDArray:
    return a.toarray() if hasattr(a, "toarray") else np.asarray(a)


@dataclass(frozen=True, eq=False)
class _Inputs:
    names: tuple[str, ...]
    units: tuple[str, ...]
    F0: NDArray            # n x ni complex, frequency-independent generalised force
    Fv: NDArray            # n x ni, multiplies i w
    D0: NDArray            # ns_all x ni, direct sensor term
    Dv: NDArray            # ns_all x ni, multiplies i w
    road: tuple[bool, ...]


def _force_unit(model: Any, label: str) -> str:
    return "N m" if label.rsplit(".", 1)[-1] in _ROTATIONS else "N"


def resolve_inputs(model: Any, inputs: Sequence[Any] | None = None) -> _Inputs:
    """Input maps of the named inputs (default: every road input of the model).

    Each entry is a road input name (``"road.fl"``), a DOF label of the model
    (``"engine.rz"``: unit generalised force), or ``(name, vector)`` /
    ``(name, vector, unit)`` with a generalised force vector of length n.
    """
    if isinstance(inputs, str):
        inputs = [inputs]
    entries = list(model.inputs) if inputs is None else list(inputs)
    n, ns = model.n, len(model.sensors)
    Br, Bv, Bh = _dense(model.Br), _dense(model.Bv), _dense(model.Bh)
    Dr, Dv, Dh = _dense(model.Dr), _dense(model.Dv), _dense(model.Dh)
    names, units, road, f0, fv, d0, dv = [], [], [], [], [], [], []
    zero_n, zero_s = np.zeros(n), np.zeros(ns)
    for entry in entries:
        if isinstance(entry, str) and entry in model.inputs:
            j = model.inputs.index(entry)
            names.append(entry)
            units.append("m")
            road.append(True)
            f0.append(Br[:, j] + 1j * Bh[:, j])
            fv.append(Bv[:, j])
            d0.append(Dr[:, j] + 1j * Dh[:, j])
            dv.append(Dv[:, j])
            continue
        if isinstance(entry, str) and entry in model.dofs:
            vec = np.zeros(n)
            vec[model.dofs.index(entry)] = 1.0
            name, unit = entry, _force_unit(model, entry)
        elif isinstance(entry, tuple | list) and len(entry) in (2, 3) and isinstance(entry[0], str):
            name = entry[0]
            vec = np.asarray(entry[1], dtype=float).reshape(-1)
            unit = str(entry[2]) if len(entry) == 3 else "N"
            if vec.shape != (n,):
                raise InputError(f'force input "{name}" needs a vector of {n} generalised '
                                 f"forces, got {vec.size}", Where(field="--from"))
        else:
            known = ", ".join(model.inputs) or "none"
            raise InputError(f'unknown input "{entry}" (road inputs: {known}; or a DOF label '
                             f"for a unit force, e.g. {model.dofs[0] if model.dofs else 'body.z'})",
                             Where(field="--from"))
        names.append(name)
        units.append(unit)
        road.append(False)
        f0.append(vec.astype(complex))
        fv.append(zero_n)
        d0.append(zero_s.astype(complex))
        dv.append(zero_s)
    if len(set(names)) != len(names):
        dup = next(x for x in names if names.count(x) > 1)
        raise InputError(f'input "{dup}" is named twice', Where(field="--from"))

    def cols(parts: list, rows: int, dtype: type) -> NDArray:
        return np.column_stack(parts).astype(dtype) if parts else np.zeros((rows, 0), dtype)

    return _Inputs(tuple(names), tuple(units), cols(f0, n, complex), cols(fv, n, float),
                   cols(d0, ns, complex), cols(dv, ns, float), tuple(road))


def _sensor_rows(model: Any, sensors: Sequence[str] | None) -> list[int]:
    if sensors is None:
        return list(range(len(model.sensors)))
    if isinstance(sensors, str):
        sensors = [sensors]
    rows = [model.sensor_index(s) for s in sensors]
    if len(set(rows)) != len(rows):
        dup = next(s for s in sensors if list(sensors).count(s) > 1)
        raise InputError(f'sensor "{dup}" is named twice', Where(field="--to"))
    return rows


@dataclass(frozen=True, eq=False)
class _System:
    """Second-order matrices of one FRF problem (dense or sparse)."""

    M: Any
    C: Any
    K: Any              # K + iH, complex
    F0: NDArray
    Fv: NDArray
    O0: NDArray         # Sd + i Sh (selected sensors)
    Ov: NDArray
    Oa: NDArray
    D0: NDArray
    Dv: NDArray


def _first_order(sy: _System) -> tuple[NDArray, ...]:
    """(A, B0, B1, Cq, D0, D1): H(s) = Cq (sI - A)^-1 (B0 + s B1) + D0 + s D1."""
    n = sy.M.shape[0]
    M = _dense(sy.M)
    Minv = np.linalg.inv(M)
    MK, MC = Minv @ _dense(sy.K), Minv @ _dense(sy.C)
    A = np.zeros((2 * n, 2 * n), dtype=complex)
    A[:n, n:] = np.eye(n)
    A[n:, :n] = -MK
    A[n:, n:] = -MC
    ni = sy.F0.shape[1]
    B0 = np.zeros((2 * n, ni), dtype=complex)
    B1 = np.zeros((2 * n, ni), dtype=complex)
    B0[n:] = Minv @ sy.F0
    B1[n:] = Minv @ sy.Fv
    Cq = np.hstack([sy.O0 - sy.Oa @ MK, sy.Ov - sy.Oa @ MC])
    D0 = sy.D0 + sy.Oa @ B0[n:]
    D1 = sy.Dv + sy.Oa @ B1[n:]
    return A, B0, B1, Cq, D0, D1


def _direct(sy: _System, w: NDArray) -> NDArray:
    """Batched dense solve over frequency, chunked to bound memory."""
    M, C, K = _dense(sy.M), _dense(sy.C), _dense(sy.K)
    n, ni, ns = M.shape[0], sy.F0.shape[1], sy.O0.shape[0]
    out = np.empty((w.size, ns, ni), dtype=complex)
    if ni == 0 or ns == 0:
        return out
    chunk = max(1, int(_CHUNK_BYTES // (16 * n * n + 1)))
    for a in range(0, w.size, chunk):
        ww = w[a:a + chunk, None, None]
        Z = K[None] - ww**2 * M[None] + 1j * ww * C[None]
        rhs = sy.F0[None] + 1j * ww * sy.Fv[None]
        try:
            q = np.linalg.solve(Z, rhs)
        except np.linalg.LinAlgError:
            raise _singular(w[a:a + chunk], Z) from None
        obs = sy.O0[None] + 1j * ww * sy.Ov[None] - ww**2 * sy.Oa[None]
        out[a:a + chunk] = obs @ q + sy.D0[None] + 1j * ww * sy.Dv[None]
    return out


def _singular(w: NDArray, Z: NDArray) -> InputError:
    bad = next((wi for wi, z in zip(w, Z, strict=True)
                if np.linalg.matrix_rank(z) < z.shape[0]), w[0])
    return InputError(f"the dynamic stiffness is singular at {bad / (2 * math.pi):g} Hz (an "
                      "undamped resonance, or a rigid-body mode at 0 Hz)", Where(field="--band"))


def _modal_form(sy: _System, sensors: tuple[str, ...] = (), inputs: tuple[str, ...] = ()
                ) -> ModalForm | None:
    """The modal superposition of one FRF problem, or None if ``V`` is ill-conditioned."""
    A, B0, B1, Cq, D0, D1 = _first_order(sy)
    lam, V = np.linalg.eig(A)
    if not np.all(np.isfinite(lam)):
        return None
    try:
        Vinv = np.linalg.inv(V)
    except np.linalg.LinAlgError:
        return None
    # condition number in the 1-norm, from the inverse at hand (no extra SVD)
    if not np.isfinite(Vinv).all() or (
            np.linalg.norm(V, 1) * np.linalg.norm(Vinv, 1) > _MODAL_CONDITION):
        return None
    R1 = Vinv @ B1
    Rt = Vinv @ B0 + lam[:, None] * R1           # s/(s - lam) = 1 + lam/(s - lam)
    n = sy.M.shape[0]
    return ModalForm(lam, Cq @ V, Rt, Cq @ B1 + D0, D1, V[:n], sensors, inputs)


def _modal(sy: _System, w: NDArray) -> NDArray | None:
    """Modal superposition over the complex first-order eigenproblem, or None if unsafe."""
    form = _modal_form(sy)
    if form is None:
        return None
    with np.errstate(all="ignore"):
        out = form.response(w / (2 * math.pi))
    if out.size == 0:
        return out
    if not np.all(np.isfinite(out)):
        return None
    ends = np.unique([0, w.size - 1])
    return out if _agrees(out[ends], _direct(sy, w[ends])) else None


def _agrees(modal: NDArray, direct: NDArray) -> bool:
    """Modal and direct FRFs agree within 1e-7 of each frequency's largest response."""
    scale = np.maximum(np.abs(direct).max(axis=(1, 2), keepdims=True), 1e-300)
    return bool(np.max(np.abs(modal - direct) / scale) <= 1e-7)


@dataclass(frozen=True, eq=False)
class ModalForm:
    """The FRF as a sum over the complex modes of the first-order form,

        H(f) = sum_k C[:, k] R[k, :] / (s - poles[k]) + E + s D1,   s = 2 pi i f,

    ``H`` (ns, ni) in sensor unit per input unit, ``poles`` (rad/s) the
    eigenvalues of ``A`` (both of each conjugate pair), ``shapes`` (n, 2n)
    the displacement part of each complex mode. One eigendecomposition gives
    the response at any number of frequencies, and the poles tell where the
    response peaks: damped frequency ``|Im p| / 2 pi`` and half-power
    half-width ``-Re p / 2 pi`` (Hz).
    """

    poles: NDArray
    C: NDArray
    R: NDArray
    E: NDArray
    D1: NDArray
    shapes: NDArray
    sensors: tuple[str, ...] = ()
    inputs: tuple[str, ...] = ()

    def response(self, frequency_hz: ArrayLike, drop: NDArray | None = None
                 ) -> NDArray[np.complex128]:
        """H (nf, ns, ni) at ``frequency_hz`` (Hz). ``drop`` (ns, number of poles), bool,
        leaves pole k out of sensor s where ``drop[s, k]``."""
        s = 2j * math.pi * np.asarray(frequency_hz, dtype=float).reshape(-1)
        ns, ni, k = self.C.shape[0], self.R.shape[1], self.poles.size
        out = np.empty((s.size, ns, ni), dtype=complex)
        if ni == 0 or ns == 0:
            return out
        # one matrix product over all frequencies: W[k, (s, i)] = C[s, k] R[k, i]
        W = self.C.T[:, :, None] * self.R[:, None, :]
        if drop is not None:
            W[np.asarray(drop, dtype=bool).T] = 0.0
        W = W.reshape(k, ns * ni)
        E, D1 = self.E.reshape(1, -1), self.D1.reshape(1, -1)
        chunk = max(1, int(_CHUNK_BYTES // (16 * (k + ns * ni)) + 1))
        for a in range(0, s.size, chunk):
            g = 1.0 / (s[a:a + chunk, None] - self.poles[None, :])           # (nf, k)
            block = g @ W
            block += E
            if D1.any():
                block += s[a:a + chunk, None] * D1
            out[a:a + chunk] = block.reshape(-1, ns, ni)
        return out


def _system(model: Any, inputs: Sequence[Any] | None, sensors: Sequence[str] | None,
            sparse: bool) -> tuple[_System, _Inputs, list[int]]:
    """The second-order matrices, input maps and sensor rows of one FRF problem."""
    spec = resolve_inputs(model, inputs)
    rows = _sensor_rows(model, sensors)
    Sd, Sh, Sv, Sa = (_dense(x)[rows] for x in (model.Sd, model.Sh, model.Sv, model.Sa))
    if sparse:
        K = (model.K + 1j * model.H)
        M, C = model.M, model.C
    else:
        K = _dense(model.K) + 1j * _dense(model.H)
        M, C = _dense(model.M), _dense(model.C)
    sy = _System(M, C, K, spec.F0, spec.Fv, Sd + 1j * Sh, Sv, Sa,
                 spec.D0[rows], spec.Dv[rows])
    return sy, spec, rows


def modal_form(model: Any, inputs: Sequence[Any] | None = None,
               sensors: Sequence[str] | None = None,
               check_hz: Sequence[float] = (1.0, 10.0)) -> ModalForm | None:
    """The :class:`ModalForm` of ``model`` from ``inputs`` (default: its road inputs)
    to ``sensors`` (default all), or None where it is unsafe: an ill-conditioned or
    defective eigenvector matrix (undamped rigid-body modes), or a disagreement
    with the direct solve at the frequencies ``check_hz`` (Hz) beyond 1e-7 of
    the largest response there. Dense models only (up to :data:`SPARSE_LIMIT` DOFs).
    """
    if model.n == 0 or model.n > SPARSE_LIMIT:
        return None
    sy, spec, rows = _system(model, inputs, sensors, sparse=False)
    form = _modal_form(sy, tuple(model.sensors[i] for i in rows), spec.names)
    if form is None:
        return None
    f = np.asarray(check_hz, dtype=float).reshape(-1)
    with np.errstate(all="ignore"):
        H = form.response(f)
    if H.size == 0:
        return form
    if not np.all(np.isfinite(H)):
        return None
    try:
        direct = _direct(sy, 2 * math.pi * f)
    except InputError:
        return None
    return form if _agrees(H, direct) else None


def system_poles(model: Any) -> NDArray[np.complex128]:
    """Every eigenvalue (rad/s) of the first-order form of a dense model (2n of
    them), whether or not its eigenvectors make a safe modal basis."""
    sy, _, _ = _system(model, [], [], sparse=False)
    return np.linalg.eigvals(_first_order(sy)[0])


#: Step of the cluster around each resolved mode, in the stretched variable ``u``
#: of :func:`resolving_grid` (``f = fd + b sinh(u)``): the spacing is ``MODE_STEP``
#: half-power half-widths at the peak and ``MODE_STEP`` relative to the distance
#: from it in the flanks.
MODE_STEP = 0.25
#: Modes damped more than this are left to the log grid (their peak is broad).
_CLUSTER_ZETA = 0.7


def resolving_grid(band: Sequence[float], points: int, poles: ArrayLike = (),
                   step: float = MODE_STEP) -> NDArray[np.float64]:
    """Frequencies (Hz) over ``band`` that resolve every damped mode's peak.

    ``points`` log-spaced frequencies, merged with a cluster around each pole
    ``p`` (rad/s, ``Im p > 0``, damping ratio below 0.7) whose peak lies in
    or near the band: ``f = fd + b sinh(u)`` for ``u`` evenly spaced by
    ``step`` out to ``|f - fd| = fd / 2``, where ``fd = Im p / 2 pi`` is the
    damped frequency and ``b = -Re p / 2 pi`` the half-power half-width (a
    light mode's -3 dB points lie at ``fd +- b``: its half-power bandwidth is
    ``2 b = 2 zeta f``). The spacing is ``step b`` at the peak, whatever the
    damping, and grows in proportion to the distance from the peak in the
    flanks, where the resonance ``1 / ((f - fd)^2 + b^2)`` varies on that
    scale; in ``u`` the resonance is the smooth ``sech(u) / b``, on which the
    trapezoidal rule converges fast. Undamped poles (``b = 0``) get no
    cluster: their peak has no width to resolve.
    """
    fmin, fmax = (float(x) for x in band)
    base = np.geomspace(fmin, fmax, max(int(points), 2))
    extra = []
    for p in np.asarray(poles, dtype=complex).reshape(-1):
        fd, b = p.imag / (2 * math.pi), -p.real / (2 * math.pi)
        if not (fd > 0 and b > 0 and math.isfinite(fd) and math.isfinite(b)):
            continue
        if b > _CLUSTER_ZETA * abs(p) / (2 * math.pi):
            continue
        half = 0.5 * fd
        if fd + half < fmin or fd - half > fmax:
            continue
        top = math.asinh(half / b)
        u = np.linspace(-top, top, 2 * max(int(math.ceil(top / step)), 1) + 1)
        extra.append(fd + b * np.sinh(u))
    if not extra:
        return base
    f = np.concatenate([base, *extra])
    f = np.unique(f[(f >= fmin) & (f <= fmax)])
    # merge points closer than 1e-12 relative (round-off twins)
    keep = np.concatenate([[True], np.diff(f) > 1e-12 * f[1:]])
    return f[keep]


def _sparse(sy: _System, w: NDArray) -> NDArray:
    """A sparse LU factorisation per frequency."""
    import scipy.sparse as sp
    from scipy.sparse.linalg import splu

    K, M, C = (sp.csc_matrix(x, dtype=complex) for x in (sy.K, sy.M, sy.C))
    ni, ns = sy.F0.shape[1], sy.O0.shape[0]
    O0, Ov, Oa = (sp.csr_matrix(x) for x in (sy.O0, sy.Ov, sy.Oa))
    out = np.empty((w.size, ns, ni), dtype=complex)
    if ni == 0 or ns == 0:
        return out
    for i, wi in enumerate(w):
        try:
            lu = splu((K - wi**2 * M + 1j * wi * C).tocsc())
        except RuntimeError:
            raise InputError(f"the dynamic stiffness is singular at {wi / (2 * math.pi):g} Hz",
                             Where(field="--band")) from None
        q = lu.solve(sy.F0 + 1j * wi * sy.Fv)
        out[i] = (O0 + (1j * wi) * Ov - wi**2 * Oa) @ q + sy.D0 + 1j * wi * sy.Dv
    return out


def frequency_response(model: Any, frequency_hz: ArrayLike, inputs: Sequence[Any] | None = None,
                       sensors: Sequence[str] | None = None,
                       method: str = "auto") -> FrequencyResponse:
    """Complex FRF matrices ``H (nf, ns, ni)`` of ``model`` at ``frequency_hz`` (Hz, >= 0).

    ``inputs``: road input names, DOF labels or ``(name, vector)`` force
    inputs (default: all road inputs); ``sensors``: sensor names (default
    all). ``method``: ``"auto"``, ``"modal"``, ``"direct"`` or ``"sparse"``
    (see the module notes). H is in each sensor's unit per m of road
    displacement, per N of force or per N m of moment.
    """
    f = np.asarray(frequency_hz, dtype=float).reshape(-1)
    if f.size == 0 or not np.all(np.isfinite(f)) or np.any(f < 0):
        raise InputError("frequencies must be finite and non-negative (Hz)", Where(field="--band"))
    if model.n == 0:
        raise InputError("the model has no degrees of freedom", Where(field="--depth"))
    if method not in ("auto", "modal", "direct", "sparse"):
        raise InputError(f'unknown FRF method "{method}": use auto, modal, direct or sparse',
                         Where(field="method"))
    large = model.n > SPARSE_LIMIT
    sy, spec, rows = _system(model, inputs, sensors,
                             sparse=method == "sparse" or (method == "auto" and large))
    w = 2 * math.pi * f
    H, used = None, method
    with blas_threads_for(2 * model.n):     # small dense problems: one BLAS thread
        if method == "sparse" or (method == "auto" and large):
            H, used = _sparse(sy, w), "sparse"
        elif method == "modal" or (method == "auto" and f.size >= _MODAL_MIN_FREQUENCIES):
            H, used = _modal(sy, w), "modal"
        if H is None:
            H, used = _direct(sy, w), "direct"
    if not np.all(np.isfinite(H)):
        bad = f[~np.all(np.isfinite(H), axis=(1, 2))][0]
        raise InputError(f"the response is unbounded at {bad:g} Hz (an undamped resonance, or "
                         "a rigid-body mode at 0 Hz)", Where(field="--band"))
    return FrequencyResponse(
        frequency_hz=f, inputs=spec.names, sensors=tuple(model.sensors[i] for i in rows),
        units=tuple(model.sensor_units[i] for i in rows), H=H, input_units=spec.units,
        measures=tuple(model.sensor_measures[i] for i in rows),
        model_name=getattr(model, "name", ""), method=used)


@dataclass(frozen=True, eq=False)
class FrequencyResponse:
    """Complex FRFs ``H[f, sensor, input]`` on a frequency grid (Hz).

    ``units`` are the sensors' units, ``input_units`` those of the inputs
    (``m`` for a road input, ``N`` or ``N m`` for forces); ``H`` is in
    sensor unit per input unit (:meth:`unit`).
    """

    frequency_hz: NDArray
    inputs: tuple[str, ...]
    sensors: tuple[str, ...]
    units: tuple[str, ...]
    H: NDArray
    input_units: tuple[str, ...] = ()
    measures: tuple[str, ...] = ()
    model_name: str = ""
    method: str = ""
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def magnitude(self) -> NDArray[np.float64]:
        """``|H|`` (nf, ns, ni), sensor unit per input unit."""
        return np.abs(self.H)

    @property
    def phase_deg(self) -> NDArray[np.float64]:
        """Phase of H in degrees, principal value in (-180, 180]."""
        return np.angle(self.H, deg=True)

    def _index(self, sensor: str, input_name: str) -> tuple[int, int]:
        if sensor not in self.sensors:
            raise InputError(f'unknown sensor "{sensor}" (in this response: '
                             f'{", ".join(self.sensors)})', Where(field="--to"))
        if input_name not in self.inputs:
            raise InputError(f'unknown input "{input_name}" (in this response: '
                             f'{", ".join(self.inputs)})', Where(field="--from"))
        return self.sensors.index(sensor), self.inputs.index(input_name)

    def unit(self, sensor: str, input_name: str) -> str:
        """Unit of one FRF, e.g. ``"m/s^2 per m"``."""
        s, i = self._index(sensor, input_name)
        return f"{self.units[s]} per {self.input_units[i] if self.input_units else 'm'}"

    def transmissibility(self, sensor: str, input_name: str) -> NDArray[np.complex128]:
        """Complex FRF (nf,) from one input to one sensor; ``abs()`` gives the magnitude.

        For a displacement sensor and a road input this is the displacement
        transmissibility (dimensionless, m per m).
        """
        s, i = self._index(sensor, input_name)
        return self.H[:, s, i]

    def pairs(self) -> list[tuple[str, str]]:
        """(input, sensor) pairs in output order: inputs outer, sensors inner."""
        return [(i, s) for i in self.inputs for s in self.sensors]

    def to_dict(self) -> dict[str, Any]:
        """``frf --json`` shape: ``{"frequency_hz": [...], "responses": [...]}``."""
        mag, ph = self.magnitude, self.phase_deg
        responses = []
        for i, name in enumerate(self.inputs):
            for s, sensor in enumerate(self.sensors):
                responses.append({"input": name, "sensor": sensor,
                                  "unit": self.unit(sensor, name),
                                  "magnitude": mag[:, s, i].tolist(),
                                  "phase_deg": ph[:, s, i].tolist()})
        return {"frequency_hz": self.frequency_hz.tolist(), "responses": responses}

    def to_csv_rows(self) -> list[list[Any]]:
        """Header and one row per frequency: magnitude and phase of every (input, sensor)."""
        header: list[Any] = ["frequency_hz"]
        for name, sensor in self.pairs():
            header += [f"{sensor} / {name} magnitude ({self.unit(sensor, name)})",
                       f"{sensor} / {name} phase (deg)"]
        mag, ph = self.magnitude, self.phase_deg
        rows: list[list[Any]] = [header]
        for k, f in enumerate(self.frequency_hz):
            row: list[Any] = [float(f)]
            for i in range(len(self.inputs)):
                for s in range(len(self.sensors)):
                    row += [float(mag[k, s, i]), float(ph[k, s, i])]
            rows.append(row)
        return rows

    def peaks(self) -> list[dict[str, Any]]:
        """Largest magnitude of each (input, sensor) FRF and its frequency (Hz)."""
        out = []
        mag = self.magnitude
        for i, name in enumerate(self.inputs):
            for s, sensor in enumerate(self.sensors):
                k = int(np.argmax(mag[:, s, i]))
                out.append({"input": name, "sensor": sensor, "unit": self.unit(sensor, name),
                            "peak": float(mag[k, s, i]),
                            "frequency_hz": float(self.frequency_hz[k]),
                            "first": float(mag[0, s, i]), "last": float(mag[-1, s, i])})
        return out

    def table(self) -> str:
        """Readable summary: the peak of every FRF and its values at the band edges."""
        f = self.frequency_hz
        lines = [f"{self.model_name}: frequency response, {f[0]:g} to {f[-1]:g} Hz, "
                 f"{f.size} points", "",
                 f"{'input':<14} {'sensor':<20} {'peak':>11} {'at Hz':>8} "
                 f"{'at ' + format(f[0], 'g') + ' Hz':>12} {'at ' + format(f[-1], 'g') + ' Hz':>12}"
                 "  unit"]
        for p in self.peaks():
            lines.append(f"{p['input']:<14} {p['sensor']:<20} {p['peak']:>11.4g} "
                         f"{p['frequency_hz']:>8.3g} {p['first']:>12.4g} {p['last']:>12.4g}  "
                         f"{p['unit']}")
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)

    def plot(self, path: str | None = None) -> Any:
        """Magnitude (log-log, one panel per unit) and unwrapped phase (deg) against Hz.

        Returns the matplotlib figure; writes a PNG to ``path`` when given.
        """
        from .. import plots

        pairs = self.pairs()
        units = list(dict.fromkeys(self.unit(s, i) for i, s in pairs))
        fig, axes = plots.figure(len(units) + 1, height=2.6)
        f = self.frequency_hz
        color = {pair: f"C{k % 10}" for k, pair in enumerate(pairs)}   # one colour per FRF
        for ax, unit in zip(axes[:-1], units, strict=True):
            for i, s in pairs:
                if self.unit(s, i) == unit:
                    a, b = self._index(s, i)
                    ax.loglog(f, np.maximum(np.abs(self.H[:, a, b]), 1e-300),
                              label=f"{s} / {i}", color=color[(i, s)])
            plots.style(ax, ylabel=f"|H| ({unit})")
        phase_ax = axes[-1]
        for i, s in pairs:
            a, b = self._index(s, i)
            phase_ax.semilogx(f, np.degrees(np.unwrap(np.angle(self.H[:, a, b]))),
                              label=f"{s} / {i}", color=color[(i, s)])
        plots.style(phase_ax, xlabel="frequency (Hz)", ylabel="phase (deg)", legend=False)
        if f[0] > 0:
            phase_ax.set_xlim(f[0], f[-1])
        plots.finish(fig, f"{self.model_name}: frequency response".strip(": "))
        if path is not None:
            plots.save_png(fig, path)
        return fig
