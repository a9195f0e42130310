"""Model updating: file parameters changed within bounds to match measured modes.

The named parameters theta of an assembly file are moved, each within its
bounds, to minimise

    sum_i (w_i (f_i(theta) / f_test,i - 1))^2  +  sum_i (w_mac (1 - MAC_i(theta)))^2

over the paired test modes i (the second sum only when ``mac_weight`` > 0),
by bounded least squares (``scipy.optimize.least_squares``, trust-region
reflective) on the relative parameter changes theta / theta_start. The
Jacobian is analytic: the eigenvalue derivative d lambda/dp = phi^T (dK/dp
- lambda dM/dp) phi of :mod:`.sensitivity` for the frequencies, and for the
MAC the mode-shape derivative by modal expansion over every mode of the
problem solved (exact for distinct eigenvalues: Fox and Kapoor 1968;
Nelson 1976 gives the same vector). dK/dp and dM/dp come from the sweep
engine's affine family (:func:`.sweep.affine_family`: K and M
probed once, exact for rates and masses); a parameter that enters
non-linearly (a position) has its matrices differenced, and says so.

Pairs are found anew at every evaluation: each fitted test mode takes the
model mode of the one-to-one assignment of largest summed MAC, so that a
mode that crosses another is followed by its shape, not its place in the
frequency order. When the fit is done, the pairs are drawn again with the
threshold over every test mode; when that set of test modes has changed
(a mode that now pairs, or one that no longer does) the fit goes on with
the new set.

Models above :data:`builder.eigen.DENSE_LIMIT` DOFs are solved in a
subspace: the modes at the current point, enriched with the static
responses (K - sigma M)^-1 (dK/dp - lambda dM/dp) phi of every fitted mode
to every parameter, so that the Ritz frequencies are exact at the point
and accurate to second order around it; the subspace is renewed at the
solution (one block of inverse iteration) until the parameters stop
moving, and the final correlation is a full solve.

Identifiability: the singular values of the scaled sensitivity matrix
S_ip = w_i (theta_p / f_i) df_i/dtheta_p (the per cent change of a
frequency per per cent change of a parameter). A singular value sigma_k
says that a 1 % error in the frequencies moves the combination v_k of
relative parameter changes by 1/sigma_k %; its right singular vector v_k
names the combination. Combinations with sigma_k below 1e-6 sigma_1 are
not separable by the test at all (two springs in series: only their
combined rate enters), those with 1/sigma_k above 100 poorly determined
(common practice, no source).
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.linalg
import scipy.sparse as sp

from ..eigen import DENSE_LIMIT, default_shift, sparse_factor, zero_frequency_modes
from ..errors import InputError, Where
from ..formatting import in_unit, number, percent, text_table, unit_of_dimension
from ..measured import MeasuredModes
from ..measured_files import read_measured
from ..threads import blas_threads_for, one_blas_thread
from .correlation import (
    PAIR_THRESHOLD,
    Correlation,
    channel_map,
    correlate,
    mode_set,
    pair_by_mac,
)
from .modes import mac_matrix
from .sensitivity import eigenvalue_derivatives

__all__ = ["Combination", "UpdateResult", "update", "identifiability", "NOT_SEPARABLE",
           "POORLY_DETERMINED"]

#: sigma_k / sigma_1 below this: the combination is not separable at all.
NOT_SEPARABLE = 1e-6

#: 1 / sigma_k above this (per cent per per cent): poorly determined
#: (common practice, no source).
POORLY_DETERMINED = 100.0

TWO_PI = 2.0 * math.pi


# ------------------------------------------------------------- problems --

@dataclass(eq=False)
class _Dense:
    """K, M and their parameter derivatives, dense (m, m), at theta.

    ``matrices(theta)`` gives (K, M, dK list, dM list or None); ``obs``
    (channels, m) maps the problem's coordinates to the channels.
    """

    matrices: Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, list, list | None]]
    obs: np.ndarray
    differenced: tuple[str, ...] = ()
    basis: np.ndarray | None = None


def _affine_problem(family: Any, obs: np.ndarray) -> _Dense:
    """The problem of an affine family (K0 + sum (p - p0) dK, M likewise)."""
    dK = list(family.dK)
    dM = list(family.dM) if family.dM is not None else None

    def matrices(theta: np.ndarray) -> tuple[np.ndarray, np.ndarray, list, list | None]:
        K, M = family.full_matrices(theta[None, :])
        return K[0], np.broadcast_to(M, K.shape)[0], dK, dM
    return _Dense(matrices, obs)


def _rebuilt_problem(family: Any, obs: np.ndarray, names: Sequence[str]) -> _Dense:
    """A family rebuilt from the file at each point: matrices differenced
    (central, step 1e-6 of each value), as no analytic form is known."""
    def matrices(theta: np.ndarray) -> tuple[np.ndarray, np.ndarray, list, list | None]:
        rows = [theta]
        steps = 1e-6 * np.maximum(np.abs(theta), 1e-12)
        for p in range(len(theta)):
            for s in (1.0, -1.0):
                t = theta.copy()
                t[p] += s * steps[p]
                rows.append(t)
        K, M = family.matrices(np.array(rows))
        dK = [(K[1 + 2 * p] - K[2 + 2 * p]) / (2 * steps[p]) for p in range(len(theta))]
        dM = [(M[1 + 2 * p] - M[2 + 2 * p]) / (2 * steps[p]) for p in range(len(theta))]
        return K[0], M[0], dK, dM
    return _Dense(matrices, obs, tuple(names))


@dataclass(eq=False)
class _SparseFamily:
    """K(theta) = K0 + sum (theta - theta0)_p dK_p with sparse matrices (a large model)."""

    theta0: np.ndarray
    K0: sp.csr_array
    M0: sp.csr_array
    dK: list[sp.csr_array]
    dM: list[sp.csr_array | None]

    def at(self, theta: np.ndarray) -> tuple[sp.csr_array, sp.csr_array]:
        d = np.asarray(theta, float) - self.theta0
        K, M = self.K0.copy(), self.M0.copy()
        for p, x in enumerate(d):
            if x:
                K = K + x * self.dK[p]
                if self.dM[p] is not None:
                    M = M + x * self.dM[p]
        return sp.csr_array(K), sp.csr_array(M)


def _sparse_family(build: Callable[[np.ndarray], Any], names: Sequence[str],
                   theta0: np.ndarray, spans: np.ndarray, seed: int = 12345) -> _SparseFamily:
    """Probe the assembled (sparse) K and M for an affine dependence, as the sweep
    engine's affine family does for dense ones: one build at theta0, one per
    parameter, a check at a point with every parameter moved."""
    def km(theta: np.ndarray) -> tuple[sp.csr_array, sp.csr_array]:
        model = build(theta)
        return sp.csr_array(model.K), sp.csr_array(model.M)
    K0, M0 = km(theta0)
    dK, dM = [], []
    for p in range(len(names)):
        t = theta0.copy()
        t[p] += spans[p]
        K1, M1 = km(t)
        if K1.shape != K0.shape:
            raise InputError(f'changing "{names[p]}" changes the model\'s DOFs',
                             Where(field="vary"))
        dK.append(sp.csr_array((K1 - K0) / spans[p]))
        diff = sp.csr_array((M1 - M0) / spans[p])
        dM.append(diff if diff.count_nonzero() else None)
    fam = _SparseFamily(theta0, K0, M0, dK, dM)
    rng = np.random.default_rng(seed)
    t = theta0 + spans * rng.uniform(-0.7, 0.7, len(names))
    Kc, Mc = km(t)
    Kf, Mf = fam.at(t)
    for got, want in ((Kf, Kc), (Mf, Mc)):
        scale = max(float(abs(want).max()), 1e-300)
        if float(abs(got - want).max()) > 1e-9 * scale:
            raise InputError("a parameter enters the model non-linearly (a position, a product "
                             "of two varied parameters); models above "
                             f"{DENSE_LIMIT} DOFs are updated in rates and masses only",
                             Where(field="vary"))
    return fam


def _subspace_problem(fam: _SparseFamily, obs: sp.csr_array, theta: np.ndarray,
                      shapes: np.ndarray, lam: np.ndarray, fitted: np.ndarray) -> _Dense:
    """The family projected on the modes ``shapes`` (n, c) at theta, enriched with
    the static responses of the ``fitted`` modes (columns) to every parameter."""
    K, M = fam.at(theta)
    sigma = default_shift(K, M)
    lu = sparse_factor(sp.csc_array(K - sigma * M))
    extra = []
    for j in fitted:
        for p in range(len(fam.dK)):
            load = fam.dK[p] @ shapes[:, j]
            if fam.dM[p] is not None:
                load = load - lam[j] * (fam.dM[p] @ shapes[:, j])
            extra.append(lu.solve(np.asarray(load, dtype=float)))
    V = np.column_stack([shapes, *extra]) if extra else shapes
    V = _m_orthonormal(V, M)
    Kr0 = V.T @ (K @ V)
    Mr0 = V.T @ (M @ V)
    dKr = [V.T @ (d @ V) for d in fam.dK]
    dMr = [None if d is None else V.T @ (d @ V) for d in fam.dM]
    has_dm = any(d is not None for d in dMr)
    dMr_full = [np.zeros_like(Kr0) if d is None else d for d in dMr] if has_dm else None
    obs_r = np.asarray(obs @ V)

    def matrices(t: np.ndarray) -> tuple[np.ndarray, np.ndarray, list, list | None]:
        d = np.asarray(t, float) - theta
        Kr = Kr0 + sum(x * k for x, k in zip(d, dKr, strict=True))
        Mr = Mr0 if not has_dm else Mr0 + sum(x * m for x, m in zip(d, dMr_full, strict=True))
        return 0.5 * (Kr + Kr.T), 0.5 * (Mr + Mr.T), dKr, dMr_full
    return _Dense(matrices, obs_r, basis=V)


def _m_orthonormal(V: np.ndarray, M: Any, rtol: float = 1e-10) -> np.ndarray:
    """An M-orthonormal basis of the columns of V (near-dependent ones dropped);
    each column is first scaled to unit M-norm, so that none is lost for its size."""
    norms = np.sqrt(np.abs(np.einsum("ij,ij->j", V, np.asarray(M @ V))))
    V = V[:, norms > 0] / norms[norms > 0]
    G = V.T @ (M @ V)
    G = 0.5 * (G + G.T)
    w, U = np.linalg.eigh(G)
    keep = w > rtol * w.max()
    return V @ (U[:, keep] / np.sqrt(w[keep]))


# ------------------------------------------------------------ objective --

@dataclass(eq=False)
class _Point:
    """Modes at one parameter point and the pairing of the fitted test modes."""

    theta: np.ndarray
    f: np.ndarray                   # (m,) Hz, elastic modes only
    elastic: np.ndarray             # indices of elastic modes in the solution
    mac: np.ndarray                 # (tests, elastic)
    assign: np.ndarray              # fitted row -> elastic column
    residual: np.ndarray
    jacobian: np.ndarray            # d residual / d theta (SI)
    freq_jacobian: np.ndarray       # d f_paired / d theta (Hz per SI), (fitted, p)


class _Objective:
    """Residuals and analytic Jacobian over the fitted test modes, re-paired per call."""

    def __init__(self, problem: _Dense, measured: MeasuredModes, rows: np.ndarray,
                 weights: np.ndarray, mac_weight: float):
        self.problem = problem
        self.X = measured.shapes
        self.ft = measured.frequencies_hz
        self.rows = np.asarray(rows, dtype=int)
        self.w = np.asarray(weights, dtype=float)
        self.mac_weight = float(mac_weight)
        self._cache: dict[bytes, _Point] = {}
        self.evaluations = 0

    def point(self, theta: np.ndarray) -> _Point:
        key = np.asarray(theta, float).tobytes()
        if key not in self._cache:
            self.evaluations += 1
            self._cache = {key: self._solve(np.asarray(theta, float))}
        return self._cache[key]

    def _solve(self, theta: np.ndarray) -> _Point:
        from scipy.optimize import linear_sum_assignment
        K, M, dK, dM = self.problem.matrices(theta)
        lam, phi, dlam = eigenvalue_derivatives(K, M, dK, dM)
        elastic = np.flatnonzero(~zero_frequency_modes(K, lam, phi))
        if len(elastic) < len(self.rows):
            raise InputError(f"the model has {len(elastic)} elastic modes, fewer than the "
                             f"{len(self.rows)} test modes to fit", Where(field="measured"))
        A = self.problem.obs @ phi[:, elastic]
        mac = mac_matrix(self.X, A)
        r_idx, c_idx = linear_sum_assignment(-mac[self.rows])
        assign = np.empty(len(self.rows), dtype=int)
        assign[r_idx] = c_idx
        cols = elastic[assign]
        f_all = np.sqrt(np.clip(lam, 0.0, None)) / TWO_PI
        f = f_all[cols]
        ft = self.ft[self.rows]
        df = (dlam[:, cols] / (8.0 * math.pi ** 2 * f)).T            # (fitted, p)
        res = [self.w * (f / ft - 1.0)]
        jac = [(self.w / ft)[:, None] * df]
        if self.mac_weight > 0:
            m, dm = self._mac_terms(K, M, dK, dM, lam, phi, cols)
            res.append(self.mac_weight * (1.0 - m))
            jac.append(-self.mac_weight * dm)
        return _Point(theta, f_all[elastic], elastic, mac, assign, np.concatenate(res),
                      np.vstack(jac), df)

    def _mac_terms(self, K: np.ndarray, M: np.ndarray, dK: list, dM: list | None,
                   lam: np.ndarray, phi: np.ndarray, cols: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray]:
        """MAC of each pair and its derivative (fitted, p): the shape derivative by
        modal expansion over every mode of the problem (Fox and Kapoor 1968)."""
        obs = self.problem.obs
        X = self.X[:, self.rows]
        A = obs @ phi[:, cols]
        macs = np.empty(len(cols))
        out = np.zeros((len(cols), len(dK)))
        gaps = lam[None, :] - lam[:, None]                       # lam_k - lam_j at [j, k]
        for p in range(len(dK)):
            Pk = phi.T @ dK[p] @ phi
            Pm = phi.T @ dM[p] @ phi if dM is not None and dM[p] is not None else None
            for i, j in enumerate(cols):
                F = Pk[:, j] - (lam[j] * Pm[:, j] if Pm is not None else 0.0)
                with np.errstate(divide="ignore", invalid="ignore"):
                    c = np.where(np.abs(gaps[j]) > 1e-10 * max(abs(lam[j]), 1e-300),
                                 F / -gaps[j], 0.0)
                c[j] = -0.5 * Pm[j, j] if Pm is not None else 0.0
                da = obs @ (phi @ c)
                x, a = X[:, i], A[:, i]
                xa = np.vdot(x, a)
                xx = float(np.real(np.vdot(x, x)))
                aa = float(np.real(np.vdot(a, a)))
                macs[i] = abs(xa) ** 2 / (xx * aa)
                out[i, p] = (2.0 * float(np.real(np.conj(xa) * np.vdot(x, da))) / (xx * aa)
                             - macs[i] * 2.0 * float(np.real(np.vdot(a, da))) / aa)
        return macs, out


# --------------------------------------------------------------- result --

@dataclass(frozen=True)
class Combination:
    """A direction in the relative parameter changes and how well the test fixes it.

    ``weights`` name -> component of the unit right singular vector;
    ``sigma`` its singular value (per cent of frequency per per cent);
    ``verdict`` "not separable", "poorly determined" or "determined".
    """

    sigma: float
    weights: dict[str, float]
    verdict: str

    def text(self, cut: float = 0.1) -> str:
        terms = [f"{'+' if w >= 0 else '-'} {abs(w):.2f} {n}" for n, w in
                 sorted(self.weights.items(), key=lambda t: -abs(t[1])) if abs(w) >= cut]
        body = " ".join(terms).lstrip("+ ")
        return body if body else "(none)"

    def to_dict(self) -> dict[str, Any]:
        return {"singular_value": self.sigma, "combination": self.weights,
                "verdict": self.verdict}


@dataclass(frozen=True, eq=False)
class UpdateResult:
    """Start and final parameter values (SI), the correlation before and after,
    the residual, and the identifiability of the parameters."""

    names: tuple[str, ...]
    start: dict[str, float]
    final: dict[str, float]
    bounds: dict[str, tuple[float, float]]
    units: dict[str, str]
    before: Correlation
    after: Correlation
    residual_start: float
    residual_final: float
    singular_values: tuple[float, ...]
    combinations: tuple[Combination, ...]
    success: bool
    message: str
    evaluations: int
    fitted: tuple[int, ...]
    source: str = ""
    notes: tuple[str, ...] = field(default=())

    @property
    def at_bound(self) -> tuple[str, ...]:
        out = []
        for n in self.names:
            lo, hi = self.bounds[n]
            tol = 1e-6 * max(abs(hi - lo), 1e-300)
            if self.final[n] - lo <= tol or hi - self.final[n] <= tol:
                out.append(n)
        return tuple(out)

    def to_dict(self) -> dict[str, Any]:
        """The format's ``update --json`` (parameters, pairs after, singular_values)."""
        return {"parameters": {n: {"start": self.start[n], "final": self.final[n],
                                   "low": self.bounds[n][0], "high": self.bounds[n][1],
                                   "at_bound": n in self.at_bound} for n in self.names},
                "pairs": [p.to_dict() for p in self.after.pairs],
                "pairs_before": [p.to_dict() for p in self.before.pairs],
                "singular_values": list(self.singular_values),
                "combinations": [c.to_dict() for c in self.combinations],
                "residual": {"start": self.residual_start, "final": self.residual_final},
                "fitted_test_modes": list(self.fitted), "success": self.success,
                "message": self.message, "evaluations": self.evaluations,
                "notes": list(self.notes)}

    def _value(self, name: str, v: float) -> str:
        unit = self.units.get(name, "")
        return f"{number(in_unit(v, unit) if unit else v, '.5g')}{' ' + unit if unit else ''}"

    def table(self) -> str:
        rows = []
        for n in self.names:
            lo, hi = self.bounds[n]
            s, f = self.start[n], self.final[n]
            rows.append([n, self._value(n, s), self._value(n, f),
                         percent(f / s - 1.0, 1, signed=True) if s else "-",
                         f"{self._value(n, lo)} .. {self._value(n, hi)}",
                         "at bound" if n in self.at_bound else ""])
        lines = [f"{self.before.model_name}: update against {self.source or 'the test'} "
                 f"({len(self.fitted)} fitted test modes: "
                 f"{', '.join(map(str, self.fitted))})",
                 text_table(["parameter", "start", "final", "change", "bounds", "note"], rows),
                 f"residual {self.residual_start:.4g} -> {self.residual_final:.4g} "
                 f"({'converged' if self.success else 'NOT converged'}: {self.message}; "
                 f"{self.evaluations} evaluations)",
                 "", "before:", self.before.pair_table(), "", "after:",
                 self.after.pair_table()]
        for k in self.after.unpaired_test:
            lines.append(f"unpaired test mode {k} after updating")
        lines.append("")
        lines.append("identifiability: singular values of the scaled sensitivities (% of "
                     "frequency per % of parameter) and the combination of relative "
                     "parameter changes each one fixes")
        rows = [[c.sigma, "-" if c.sigma <= 0 else f"{1.0 / c.sigma:.3g} %", c.verdict,
                 c.text()] for c in self.combinations]
        lines.append(text_table(["sigma", "1 % error moves it", "verdict", "combination"],
                                rows, spec=[".3g", "", "", ""], indent="  "))
        for c in self.combinations:
            if c.verdict != "not separable":
                continue
            big = [n for n, v in c.weights.items() if abs(v) >= 0.1]
            if len(big) == 1:
                lines.append(f"  the test does not see {big[0]}: the fitted modes do not "
                             "depend on it")
            else:
                lines.append(f"  the test cannot separate {', '.join(big)}: along "
                             f"{c.text()} the fitted modes do not change")
        lines.extend(f"note: {n}" for n in self.notes)
        return "\n".join(lines)

    def parameters_yaml(self) -> str:
        """A ``parameters:`` snippet of the final values, in the file's units."""
        lines = [f"# updated by lumpgraph update against {self.source or 'a test'};",
                 "# paste over the same names in the file's parameters:", "parameters:"]
        for n in self.names:
            unit = self.units.get(n, "")
            v = self.final[n]
            text = f"{in_unit(v, unit):.6g} {unit}" if unit else f"{v:.6g}"
            lines.append(f"  {n}: {text}")
        return "\n".join(lines) + "\n"

    def plot(self, path: str | os.PathLike[str], title: str | None = None) -> str:
        """Frequency errors before and after, and the parameter changes (PNG)."""
        from .correlation_plot import plot_update
        return plot_update(self, os.fspath(path), title)


# ------------------------------------------------------- identifiability --

def identifiability(S: np.ndarray, names: Sequence[str]) -> tuple[np.ndarray,
                                                                  list[Combination]]:
    """Singular values of a scaled sensitivity matrix S (residuals, parameters)
    and the combination of each (zero singular values padded when there are
    fewer residuals than parameters)."""
    S = np.asarray(S, dtype=float)
    p = S.shape[1]
    _, s, Vt = np.linalg.svd(S, full_matrices=True)
    sig = np.zeros(p)
    sig[:len(s)] = s
    top = float(sig[0]) if p and sig[0] > 0 else 1.0
    combos = []
    for k in range(p):
        v = Vt[k]
        v = v * (1.0 if v[np.argmax(np.abs(v))] >= 0 else -1.0)
        if sig[k] <= NOT_SEPARABLE * top:
            verdict = "not separable"
        elif 1.0 / sig[k] > POORLY_DETERMINED:
            verdict = "poorly determined"
        else:
            verdict = "determined"
        combos.append(Combination(float(sig[k]), {n: float(x) for n, x in
                                                  zip(names, v, strict=True)}, verdict))
    return sig, combos


# ---------------------------------------------------------------- update --

def update(path: str | os.PathLike[str], measured: MeasuredModes | str | os.PathLike[str],
           vary: Mapping[str, tuple[float, float]], *, start: Mapping[str, float] | None = None,
           weights: Mapping[int, float] | None = None, mac_weight: float = 0.0,
           threshold: float = PAIR_THRESHOLD, progress: Callable[[str], None] | None = None
           ) -> UpdateResult:
    """Update the parameters ``vary`` (name -> (low, high), SI) of the file at
    ``path`` against measured modes.

    ``start``: starting values (default the file's, clipped into the bounds);
    ``weights``: test mode number -> weight of its frequency error (default
    1); ``mac_weight``: weight of 1 - MAC in the residual (default 0:
    frequencies only); ``threshold``: least MAC of a pair. ``progress``
    receives one line per stage.
    """
    from .sweep import CallbackFamily, affine_family
    say = progress or (lambda _line: None)
    if not isinstance(measured, MeasuredModes):
        measured = read_measured(measured)
    path = os.fspath(path)
    names = tuple(vary)
    if not names:
        raise InputError("name at least one parameter to vary", Where(field="vary"))
    builds = _FileBuilds(path)
    params = builds.parameters
    for n in names:
        if n not in params:
            import difflib
            hint = difflib.get_close_matches(n, list(params), n=1)
            tip = f' (did you mean "{hint[0]}"?)' if hint else ""
            raise InputError(f'the file has no parameter "{n}"{tip}; its parameters: '
                             f"{', '.join(params) or 'none'}", Where(field="vary"))
    lo = np.array([min(vary[n]) for n in names], dtype=float)
    hi = np.array([max(vary[n]) for n in names], dtype=float)
    if np.any(hi <= lo):
        bad = names[int(np.flatnonzero(hi <= lo)[0])]
        raise InputError(f"{bad}: needs LOW < HIGH", Where(field="vary"))
    file_values = np.array([params[n].value for n in names])
    theta_start = np.array([(start or {}).get(n, v) for n, v in zip(names, file_values,
                                                                    strict=True)])
    clipped = np.clip(theta_start, lo, hi)
    notes: list[str] = []
    for n, a, b in zip(names, theta_start, clipped, strict=True):
        if a != b:
            notes.append(f"{n}: the starting value {a:.6g} (SI) lies outside the bounds; "
                         f"started from {b:.6g}")
    theta_start = clipped
    scale = np.where(theta_start != 0, np.abs(theta_start), hi - lo)
    w_by_number = {k: 1.0 for k in measured.numbers}
    for k, w in (weights or {}).items():
        if k not in w_by_number:
            raise InputError(f"no test mode {k} (the test has "
                             f"{', '.join(map(str, measured.numbers))})", Where(field="weight"))
        if not (math.isfinite(w) and w >= 0):
            raise InputError(f"the weight of test mode {k} must be 0 or more, got {w}",
                             Where(field="weight"))
        w_by_number[k] = float(w)
    all_w = np.array([w_by_number[k] for k in measured.numbers])

    def model_at(theta: np.ndarray) -> Any:
        return builds.model(dict(zip(names, map(float, theta), strict=True)))

    say("correlation at the start")
    model0 = model_at(theta_start)
    before = correlate(model0, measured, threshold=threshold, labels=False)
    rows = np.array([measured.numbers.index(p.test) for p in before.pairs], dtype=int)
    if len(rows) == 0:
        raise InputError("no test mode pairs with a model mode at the start (no MAC at or "
                         f"above {threshold:.3g}): nothing to fit", Where(field="measured"))
    if mac_weight <= 0 and not np.any(all_w[rows] > 0):
        raise InputError("every paired test mode has weight 0: nothing to fit",
                         Where(field="weight"))
    obs = channel_map(model0, measured)
    spans = np.where(hi - lo > 0, hi - lo, scale)
    if model0.n <= DENSE_LIMIT:
        family = affine_family(builds.dense, names, theta_start, spans, model0.dofs)
        if family is None:
            family = CallbackFamily(names, builds.dense, theta_start)
        if hasattr(family, "full_matrices"):
            problem = _affine_problem(family, obs.toarray())
        else:
            problem = _rebuilt_problem(family, obs.toarray(), names)
            notes.append("a parameter enters the model non-linearly: dK/dp and dM/dp are "
                         "central differences of the rebuilt matrices")
        fit = _fit(problem, measured, rows, theta_start, lo, hi, scale, all_w, mac_weight,
                   threshold, say)
    else:
        say(f"probing {len(names)} parameters on {model0.n} DOFs")
        sfam = _sparse_family(model_at, names, theta_start, 0.1 * scale)
        fit = _fit_large(sfam, obs, measured, before, rows, theta_start, lo, hi, scale, all_w,
                         mac_weight, threshold, say)
    say("correlation after updating")
    model1 = model_at(fit.theta)
    if fit.modes is not None:     # the converged subspace's eigenpairs, checked
        lam, shapes, error = fit.modes
        notes.append(f"large model: modes after updating from the converged subspace "
                     f"(largest relative eigen-residual {error:.1e}); no labels or damping")
        after = correlate(model1, measured, threshold=threshold,
                          modes=mode_set(model1, lam, shapes))
    else:
        after = correlate(model1, measured, threshold=threshold, labels=False)
    point = fit.point
    S = point.jacobian * np.where(fit.theta != 0, np.abs(fit.theta), scale)[None, :]
    sig, combos = identifiability(S, names)
    units = {n: unit_of_dimension(params[n].dim) for n in names}
    return UpdateResult(names, dict(zip(names, map(float, theta_start), strict=True)),
                        dict(zip(names, map(float, fit.theta), strict=True)),
                        {n: (float(a), float(b)) for n, a, b in zip(names, lo, hi, strict=True)},
                        units, before, after, fit.residual_start,
                        float(np.linalg.norm(point.residual)),
                        tuple(float(s) for s in sig), tuple(combos), fit.success, fit.message,
                        fit.evaluations, tuple(measured.numbers[i] for i in fit.rows),
                        measured.source, tuple(notes))


class _FileBuilds:
    """The file parsed once (safe YAML), rebuilt at any parameter values (SI)."""

    def __init__(self, path: str):
        from ..load import parse_assembly
        from ..yamlnodes import load_yaml
        self.path = path
        self._root = load_yaml(path, path)
        self._parse = parse_assembly
        self.parameters = dict(parse_assembly(self._root, path).parameters)

    def model(self, values: Mapping[str, float]) -> Any:
        from ..linear import assemble
        from ..quantities import Quantity
        over = {n: Quantity(float(v), self.parameters[n].dim) for n, v in values.items()}
        return assemble(self._parse(self._root, self.path, over))

    def dense(self, values: Mapping[str, float]) -> tuple[np.ndarray, np.ndarray]:
        model = self.model(values)
        return model.K.toarray(), model.M.toarray()


@dataclass(eq=False)
class _Fit:
    theta: np.ndarray
    point: _Point
    success: bool
    message: str
    evaluations: int
    rows: np.ndarray
    residual_start: float
    modes: tuple[np.ndarray, np.ndarray, float] | None = None


def _least_squares(obj: _Objective, theta0: np.ndarray, lo: np.ndarray, hi: np.ndarray,
                   scale: np.ndarray) -> tuple[np.ndarray, bool, str]:
    from scipy.optimize import least_squares
    x0 = theta0 / scale
    sol = least_squares(lambda x: obj.point(x * scale).residual, x0,
                        jac=lambda x: obj.point(x * scale).jacobian * scale[None, :],
                        bounds=(lo / scale, hi / scale), method="trf", xtol=1e-12, ftol=1e-14,
                        gtol=1e-12, max_nfev=200)
    return sol.x * scale, bool(sol.success), str(sol.message).replace("`", "").rstrip(".")


def _fit(problem: _Dense, measured: MeasuredModes, rows: np.ndarray, theta0: np.ndarray,
         lo: np.ndarray, hi: np.ndarray, scale: np.ndarray, w: np.ndarray, mac_weight: float,
         threshold: float, say: Callable[[str], None]) -> _Fit:
    """Fit with the pair set renewed until it stays the same (at most 5 rounds)."""
    theta = theta0.copy()
    r0 = float(np.linalg.norm(_Objective(problem, measured, rows, w[rows], mac_weight)
                              .point(theta0).residual))
    with blas_threads_for(problem.obs.shape[1]):   # small dense solves: one BLAS thread
        return _fit_rounds(problem, measured, rows, theta, lo, hi, scale, w, mac_weight,
                           threshold, say, r0)


def _fit_rounds(problem: _Dense, measured: MeasuredModes, rows: np.ndarray, theta: np.ndarray,
                lo: np.ndarray, hi: np.ndarray, scale: np.ndarray, w: np.ndarray,
                mac_weight: float, threshold: float, say: Callable[[str], None], r0: float
                ) -> _Fit:
    evals = 0
    for _round in range(5):
        if mac_weight > 0:
            # frequencies first: the MAC of nearly repeated modes turns fast with the
            # parameters, and from far away its term can hold the fit in a local minimum
            obj = _Objective(problem, measured, rows, w[rows], 0.0)
            theta, _ok, _msg = _least_squares(obj, theta, lo, hi, scale)
            evals += obj.evaluations
        obj = _Objective(problem, measured, rows, w[rows], mac_weight)
        say(f"fitting {len(rows)} test modes")
        theta, ok, msg = _least_squares(obj, theta, lo, hi, scale)
        evals += obj.evaluations
        point = obj.point(theta)
        full = mac_matrix(measured.shapes, problem.obs @ _elastic_shapes(problem, theta))
        new_rows = np.array(sorted(i for i, _ in pair_by_mac(full, threshold)), dtype=int)
        if len(new_rows) == 0 or np.array_equal(new_rows, rows):
            break
        rows = new_rows
    return _Fit(theta, point, ok, msg, evals, rows, r0)


def _elastic_shapes(problem: _Dense, theta: np.ndarray) -> np.ndarray:
    K, M, _dK, _dM = problem.matrices(theta)
    lam, phi = scipy.linalg.eigh(K, M)
    return phi[:, ~zero_frequency_modes(K, lam, phi)]


def _fit_large(fam: _SparseFamily, obs: sp.csr_array, measured: MeasuredModes,
               before: Correlation, rows: np.ndarray, theta0: np.ndarray, lo: np.ndarray,
               hi: np.ndarray, scale: np.ndarray, w: np.ndarray, mac_weight: float,
               threshold: float, say: Callable[[str], None]) -> _Fit:
    """Subspace fits, the subspace renewed at each solution until theta settles."""
    shapes = before.modes.shapes
    lam = (TWO_PI * before.modes.frequencies_hz) ** 2
    fitted = np.array([p.model - 1 for p in before.pairs], dtype=int)
    theta = theta0.copy()
    evals = 0
    r0 = None
    fit = None
    count = shapes.shape[1]
    last = math.inf
    for it in range(10):
        problem = _subspace_problem(fam, obs, theta, shapes, lam, fitted)
        fit = _fit(problem, measured, rows, theta, lo, hi, scale, w, mac_weight, threshold,
                   say)
        r0 = fit.residual_start if r0 is None else r0
        evals += fit.evaluations
        step = float(np.max(np.abs(fit.theta - theta) / scale))
        say(f"subspace {it + 1} ({problem.obs.shape[1]} vectors): largest relative "
            f"parameter change {step:.1e}")
        theta, rows = fit.theta, fit.rows
        K, M = fam.at(theta)
        with one_blas_thread():          # tall, thin products: threads only contend
            shapes, lam = _inverse_iteration(K, M, problem.basis, count)
        A = np.asarray(obs @ shapes)
        from scipy.optimize import linear_sum_assignment
        _r, fitted = linear_sum_assignment(-mac_matrix(measured.shapes[:, rows], A))
        if step < 1e-9 or (it >= 2 and step > 0.5 * last):
            break      # converged, or settled at the model's own round-off level
        last = step
    assert fit is not None
    K, M = fam.at(theta)
    res = np.asarray(K @ shapes) - np.asarray(M @ shapes) * lam
    scale_k = np.linalg.norm(np.asarray(K @ shapes), axis=0)
    error = float(np.max(np.linalg.norm(res, axis=0)[fitted] / scale_k[fitted]))
    return _Fit(theta, fit.point, fit.success, fit.message, evals, rows, float(r0),
                (lam, shapes, error))


def _inverse_iteration(K: sp.csr_array, M: sp.csr_array, basis: np.ndarray, count: int,
                       steps: int = 4, tol: float = 1e-13) -> tuple[np.ndarray, np.ndarray]:
    """Block shift-invert iteration on the whole enriched basis with a Rayleigh-Ritz
    solve after each step, until the lowest ``count`` Ritz values settle (relative
    change below ``tol``); returns those Ritz pairs."""
    sigma = default_shift(K, M)
    lu = sparse_factor(sp.csc_array(K - sigma * M))
    V, old = basis, None
    for _ in range(steps):
        Y = _m_orthonormal(lu.solve(np.asarray(M @ V, dtype=float)), M)
        lam, U = scipy.linalg.eigh(Y.T @ (K @ Y), Y.T @ (M @ Y))
        V = Y @ U
        if old is not None and np.all(np.abs(lam[:count] - old) <= tol * np.abs(lam[:count])):
            break
        old = lam[:count]
    return V[:, :count], lam[:count]
