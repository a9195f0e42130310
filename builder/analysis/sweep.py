"""Parameter sweeps: many variants of one model, solved in batches, anywhere.

A sweep is a :class:`~builder.analysis.sampling.Design` (one row of
parameter values per variant) and a *problem* that turns a chunk of rows into
results. Two kinds of problem:

- :class:`ModesProblem`: natural frequencies of a *family* of matrices,
  with modes tracked by MAC so that each result column follows one mode
  through crossings. The fast family, :class:`AffineFamily`, holds
  K(p) = K0 + sum_i (p_i - p0_i) dK_i and the same for M, found by probing
  the model (it is exact for rates and masses, the usual sweep parameters,
  and is checked at a random point before use). Variants then never touch
  the file again: a chunk is a stack of dense (k, n, n) matrices,
  Cholesky-whitened by M and solved by one batched ``numpy.linalg.eigh``.
  When a parameter enters non-linearly (a position, a product of two swept
  parameters), :class:`CallbackFamily` rebuilds each variant instead.
- :class:`FunctionProblem`: any scalar results of a picklable callable,
  variant by variant (a ride RMS, a plugin's figure).

Chunks are fixed slices of the design (``chunk_size`` rows), solved in-process,
on local processes (``workers=N``) or on a Dask cluster (``cluster=ADDRESS``
or a ``distributed.Client``). Each variant's result depends only on its own
row, so all three give bit-identical tables. Results are written to the CSV
a chunk at a time, in design order, flushed and synced, so an interrupted
sweep keeps every finished row and ``resume=True`` carries on from there.
"""

from __future__ import annotations

import contextlib
import csv
import io
import math
import os
import re
import sys
import time
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import Any, Protocol, TextIO

import numpy as np

from ..errors import InputError, Where
from ..formatting import engineering_unit_of, in_unit, text_table, unit_of_dimension
from ..io import write_failure
from ..plots import save_png
from .sampling import REF_NOMINAL, REF_NONE, Design
from .sensitivity import FrequencySensitivities, frequency_sensitivities
from .tracking import batch_match

__all__ = [
    "batched_modes", "AffineFamily", "CallbackFamily", "affine_family", "ModesProblem",
    "FunctionProblem", "SweepResult", "run_sweep", "Progress", "TargetResult",
    "find_parameters", "family_sensitivities", "DEFAULT_CHUNK", "FileModel", "FileRide",
    "file_parameters", "file_family", "file_sensitivities", "batched_guyan", "FilePlugin",
    "plugin_figure", "plugin_result",
]

#: variants per chunk; the same for every executor, so that results agree bit for bit
DEFAULT_CHUNK = 500

TWO_PI = 2.0 * math.pi


# ------------------------------------------------------------ eigensolve --

def batched_modes(K: np.ndarray, M: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Undamped modes of a stack of models: K (k, n, n) N/m; M (n, n) or (k, n, n) kg.

    Whitening by the Cholesky factor L of M (M = L L^T) turns K phi = lambda M phi
    into the standard symmetric problem (L^-1 K L^-T) v = lambda v, solved for the
    whole stack by one ``numpy.linalg.eigh``. Returns frequencies (k, n) in Hz,
    ascending (negative round-off clipped to 0), and mass-normalised shapes
    (k, n, n), modes as columns.
    """
    K = np.asarray(K, dtype=float)
    M = np.asarray(M, dtype=float)
    try:
        L = np.linalg.cholesky(M)
    except np.linalg.LinAlgError:
        raise InputError("the mass matrix is not positive definite (a DOF without mass): "
                         "sweep a depth that condenses it", Where(field="--vary")) from None
    n = K.shape[-1]
    Linv = np.linalg.solve(L, np.broadcast_to(np.eye(n), L.shape))
    A = Linv @ K @ np.swapaxes(Linv, -1, -2)
    A = 0.5 * (A + np.swapaxes(A, -1, -2))
    lam, V = np.linalg.eigh(A)
    shapes = np.swapaxes(Linv, -1, -2) @ V
    freqs = np.sqrt(np.clip(lam, 0.0, None)) / TWO_PI
    return freqs, shapes


# -------------------------------------------------------------- families --

class MatrixFamily(Protocol):
    """Anything that gives K and M (dense, SI) for rows of parameter values."""

    names: tuple[str, ...]

    def matrices(self, values: np.ndarray) -> tuple[np.ndarray, np.ndarray]: ...


@dataclass(frozen=True, eq=False)
class AffineFamily:
    """K(p) = K0 + sum_i (p_i - p0_i) dK[i], M likewise (dense, SI).

    ``dK[i]`` is in N/m per SI unit of parameter i; ``dM`` None when no
    parameter changes the mass. ``reduction`` optionally condenses each
    variant: (T_tie (n, nt), master indices into the tied DOFs) for a
    Guyan depth; ``dofs`` are the labels of the result.
    """

    names: tuple[str, ...]
    nominal: np.ndarray
    K0: np.ndarray
    dK: np.ndarray
    M0: np.ndarray
    dM: np.ndarray | None = None
    dofs: tuple[str, ...] = ()
    reduction: tuple[np.ndarray, np.ndarray] | None = None

    def full_matrices(self, values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Unreduced K (k, n, n) and M ((n, n) when constant, else (k, n, n))."""
        d = np.atleast_2d(np.asarray(values, dtype=float)) - self.nominal
        K = self.K0 + np.tensordot(d, self.dK, axes=1)
        M = self.M0 if self.dM is None else self.M0 + np.tensordot(d, self.dM, axes=1)
        return K, M

    def matrices(self, values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """K and M of each row, reduced to the family's depth when it has one."""
        K, M = self.full_matrices(values)
        if self.reduction is None:
            return K, M
        return batched_guyan(K, M, *self.reduction)


def batched_guyan(K: np.ndarray, M: np.ndarray, T_tie: np.ndarray, masters: np.ndarray
                  ) -> tuple[np.ndarray, np.ndarray]:
    """Tie then Guyan-condense a stack: q = T_tie q_t; q_t slaves = -Kss^-1 Ksm q_m.

    K (k, n, n), M (n, n) or (k, n, n); returns reduced K (k, m, m), M (k, m, m).
    """
    Kt = T_tie.T @ K @ T_tie
    Mt = T_tie.T @ M @ T_tie
    nt = Kt.shape[-1]
    slaves = np.setdiff1d(np.arange(nt), masters)
    if slaves.size == 0:
        order = np.asarray(masters)
        return (Kt[..., order[:, None], order],
                np.broadcast_to(Mt, Kt.shape)[..., order[:, None], order])
    Kss = Kt[..., slaves[:, None], slaves]
    Ksm = Kt[..., slaves[:, None], masters]
    X = -np.linalg.solve(Kss, Ksm)                       # (k, ns, nm)
    k = Kt.shape[0]
    T = np.zeros((k, nt, len(masters)))
    T[:, masters, np.arange(len(masters))] = 1.0
    T[:, slaves, :] = X
    Tt = np.swapaxes(T, -1, -2)
    return Tt @ Kt @ T, Tt @ Mt @ T


@dataclass(frozen=True, eq=False)
class CallbackFamily:
    """Rebuilds each variant: ``build(dict name -> SI value) -> (K, M)`` dense.

    ``build`` must be picklable (a module-level function or an instance of a
    module-level class) to run on other processes.
    """

    names: tuple[str, ...]
    build: Callable[[dict[str, float]], tuple[np.ndarray, np.ndarray]]
    nominal: np.ndarray | None = None

    def matrices(self, values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        Ks, Ms = [], []
        for row in np.atleast_2d(values):
            K, M = self.build(dict(zip(self.names, map(float, row), strict=True)))
            Ks.append(np.asarray(K, dtype=float))
            Ms.append(np.asarray(M, dtype=float))
        return np.stack(Ks), np.stack(Ms)


def affine_family(build: Callable[[dict[str, float]], tuple[np.ndarray, np.ndarray]],
                  names: Sequence[str], nominal: Sequence[float], spans: Sequence[float],
                  dofs: Sequence[str] = (), rtol: float = 1e-9, seed: int = 12345
                  ) -> AffineFamily | None:
    """Probe ``build`` for an affine dependence of K and M on the parameters.

    One build at the nominal point, one per parameter stepped by its span
    (SI), then a check at a point with every parameter moved at once (steps
    drawn from a fixed seed). Returns None when the check fails (the
    parameters enter non-linearly or interact), so the caller rebuilds each
    variant instead.
    """
    names = tuple(names)
    p0 = np.asarray(nominal, dtype=float)
    spans = np.asarray(spans, dtype=float)
    spans = np.where(spans != 0, spans, np.where(p0 != 0, 0.1 * np.abs(p0), 1.0))
    K0, M0 = (np.asarray(a, dtype=float) for a in build(dict(zip(names, p0, strict=True))))
    dK = np.zeros((len(names), *K0.shape))
    dM = np.zeros((len(names), *M0.shape))
    for i in range(len(names)):
        p = p0.copy()
        p[i] += spans[i]
        K1, M1 = build(dict(zip(names, p, strict=True)))
        if np.shape(K1) != K0.shape:
            return None
        dK[i] = (np.asarray(K1) - K0) / spans[i]
        dM[i] = (np.asarray(M1) - M0) / spans[i]
    mass_varies = bool(np.any(dM != 0))
    fam = AffineFamily(names, p0, K0, dK, M0, dM if mass_varies else None, tuple(dofs))
    rng = np.random.default_rng(seed)
    p = p0 + spans * rng.uniform(-0.7, 0.7, len(names))
    Kc, Mc = build(dict(zip(names, p, strict=True)))
    Kf, Mf = fam.full_matrices(p[None, :])
    if np.shape(Kc) != K0.shape:
        return None
    for got, want in ((Kf[0], Kc), (np.broadcast_to(Mf, Kf.shape)[0], Mc)):
        want = np.asarray(want, dtype=float)
        scale = max(float(np.max(np.abs(want))), 1e-300)
        if float(np.max(np.abs(got - want))) > rtol * scale:
            return None
    return fam


def family_sensitivities(family: AffineFamily, values: Sequence[float] | None = None
                         ) -> FrequencySensitivities:
    """df/dp of every mode of an affine family at ``values`` (default nominal).

    With a depth, dK and dM of the reduced model are taken by central
    differences of the batched reduction (the reduction is not affine).
    """
    p = family.nominal if values is None else np.asarray(values, dtype=float)
    if family.reduction is None:
        K, M = family.matrices(p[None, :])
        Mv = np.broadcast_to(M, K.shape)[0]
        dMs = list(family.dM) if family.dM is not None else None
        return frequency_sensitivities(K[0], Mv, list(family.dK), dMs, family.names, p)
    dKs, dMs = [], []
    K, M = family.matrices(p[None, :])
    for i in range(len(p)):
        h = 1e-6 * max(abs(p[i]), 1e-3)
        rows = np.stack([p, p])
        rows[0, i] += h
        rows[1, i] -= h
        Kp, Mp = family.matrices(rows)
        dKs.append((Kp[0] - Kp[1]) / (2 * h))
        dMs.append((Mp[0] - Mp[1]) / (2 * h))
    return frequency_sensitivities(K[0], M[0], dKs, dMs, family.names, p)


# -------------------------------------------------------------- problems --

class SweepProblem(Protocol):
    """What a sweep solves: result columns for chunks of parameter rows."""

    names: tuple[str, ...]

    def columns(self) -> tuple[str, ...]: ...

    def evaluate(self, values: np.ndarray, ref_pos: np.ndarray, k: int) -> dict[str, Any]: ...


@dataclass(frozen=True, eq=False)
class ModesProblem:
    """Natural frequencies (Hz) of the first ``n_modes`` tracked modes.

    Result columns ``mode1_hz`` ... in tracked order: curve j is the mode that
    was j-th by frequency at the start of the sweep (grids) or in the nominal
    design (random designs).
    """

    family: Any
    n_modes: int | None = None

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(self.family.names)

    def size(self) -> int:
        """Number of modes of the model."""
        K, _ = self.family.matrices(np.atleast_2d(self.family_nominal()))
        return int(K.shape[-1])

    def family_nominal(self) -> np.ndarray:
        return np.asarray(getattr(self.family, "nominal", np.zeros(len(self.names))))

    def columns(self, n: int | None = None) -> tuple[str, ...]:
        m = self.n_modes or n or self.size()
        return tuple(f"mode{j + 1}_hz" for j in range(m))

    def evaluate(self, values: np.ndarray, ref_pos: np.ndarray, k: int) -> dict[str, Any]:
        """Solve rows ``values`` (k + extra, nparams); rows k.. are references only.

        Returns ``sorted_hz`` (k, n) and ``match`` (k, n): for each mode of the
        reference (in its frequency order) the position of the same mode in
        this variant's frequency order (identity where ``ref_pos`` < 0).
        """
        K, M = self.family.matrices(values)
        freqs, shapes = batched_modes(K, M)
        n = freqs.shape[1]
        match = np.tile(np.arange(n), (k, 1))
        has = np.nonzero(ref_pos >= 0)[0]
        if has.size:
            Mk = M if M.ndim == 2 else M[has]
            match[has] = batch_match(shapes[ref_pos[has]], shapes[has], Mk)
        return {"sorted_hz": freqs[:k], "match": match}


@dataclass(frozen=True, eq=False)
class FunctionProblem:
    """Scalar results ``func(dict name -> SI value) -> {column: value}`` per variant."""

    names: tuple[str, ...]
    func: Callable[[dict[str, float]], Mapping[str, float]]
    result_columns: tuple[str, ...]

    def columns(self, n: int | None = None) -> tuple[str, ...]:
        return self.result_columns

    def evaluate(self, values: np.ndarray, ref_pos: np.ndarray, k: int) -> dict[str, Any]:
        out = np.full((k, len(self.result_columns)), np.nan)
        for i in range(k):
            res = self.func(dict(zip(self.names, map(float, values[i]), strict=True)))
            out[i] = [float(res[c]) for c in self.result_columns]
        return {"values": out}


# ---------------------------------------------------------------- result --

@dataclass(frozen=True, eq=False)
class SweepResult:
    """One row per variant: parameter values (SI) and results.

    ``labels`` (modes sweeps, optional) names each tracked curve by the mode it
    starts as. ``ranks`` (modes sweeps) holds, for each tracked mode, its 0-based place
    in the variant's frequency order, so ``sorted`` frequencies can be had back.
    """

    names: tuple[str, ...]
    values: np.ndarray
    columns: tuple[str, ...]
    results: np.ndarray
    kind: str = ""
    ranks: np.ndarray | None = None
    units: tuple[str, ...] = field(default=())
    labels: tuple[str, ...] = field(default=())

    def __len__(self) -> int:
        return int(self.values.shape[0])

    def column(self, name: str) -> np.ndarray:
        """A parameter's or a result's column by name."""
        if name in self.names:
            return self.values[:, self.names.index(name)]
        if name in self.columns:
            return self.results[:, self.columns.index(name)]
        raise KeyError(name)

    def sorted_frequencies(self) -> np.ndarray:
        """Frequencies (Hz) in ascending order per variant (modes sweeps)."""
        return np.sort(self.results, axis=1)

    def to_records(self) -> list[dict[str, float]]:
        """A list of dicts, one per variant, ready for ``pandas.DataFrame``."""
        out = []
        for i in range(len(self)):
            rec: dict[str, float] = {"variant": i}
            rec.update({n: float(v) for n, v in zip(self.names, self.values[i], strict=True)})
            rec.update({c: float(v) for c, v in zip(self.columns, self.results[i], strict=True)})
            out.append(rec)
        return out

    def to_pandas(self) -> Any:
        """A pandas DataFrame indexed by variant (pandas must be installed)."""
        try:
            import pandas as pd
        except ImportError:
            raise ImportError("to_pandas() needs pandas; use to_records() instead") from None
        return pd.DataFrame.from_records(self.to_records(), index="variant")

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form."""
        return {"kind": self.kind, "parameters": list(self.names), "results": list(self.columns),
                "rows": [[*map(float, self.values[i]), *map(float, self.results[i])]
                         for i in range(len(self))]}

    def display_unit(self, name: str) -> tuple[str, float]:
        """(engineering unit, SI value per unit) of a parameter, for text and plots:
        ``N/m`` parameters print in kN/m, ``m/s`` in km/h (CSV and JSON stay SI)."""
        si = self.units[self.names.index(name)] if self.units and name in self.names else ""
        if not si or si in ("SI", "-"):
            return si, 1.0
        unit = engineering_unit_of(si)
        try:
            return unit, in_unit(1.0, unit) / in_unit(1.0, si)
        except ValueError:
            return si, 1.0

    def heading(self, name: str) -> str:
        """A column's heading with its unit: ``ks_front (kN/m)``, ``mode 1 (Hz)``."""
        if name in self.names:
            unit, _ = self.display_unit(name)
            return f"{name} ({unit})" if unit else name
        match = re.fullmatch(r"mode(\d+)_hz", name)
        return f"mode {match.group(1)} (Hz)" if match else name

    def table(self, rows: int = 40) -> str:
        """The variants as text (parameters in engineering units), or for more than
        ``rows`` variants the range, mean and spread of every column."""
        scale = [self.display_unit(n)[1] for n in self.names]
        heads = [self.heading(n) for n in (*self.names, *self.columns)]
        values = self.values * np.array(scale) if self.names else self.values
        if len(self) <= rows:
            body = [[*map(float, values[i]), *map(float, self.results[i])]
                    for i in range(len(self))]
            return text_table(heads, body, spec=".6g", rule=False)
        stats = []
        for head, v in zip(heads, [*values.T, *self.results.T], strict=True):
            v = v[np.isfinite(v)]
            if v.size:
                sd = float(v.std(ddof=1)) if v.size > 1 else 0.0
                stats.append([head, float(v.min()), float(v.mean()), sd, float(v.max())])
        return text_table(["column", "min", "mean", "sd", "max"], stats, spec=".6g",
                          rule=False)

    def plot(self, path: str | os.PathLike[str], parameter: str | None = None) -> str:
        """Tracked results against one parameter (PNG at ``path``, matplotlib Agg).

        In a grid over several parameters, one line per combination of the
        others is drawn faintly; with scatter, a histogram per column instead
        (:meth:`histogram`).
        """
        if "scatter" in self.kind or "lhs" in self.kind:
            return self.histogram(path)
        import matplotlib
        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
        p = parameter or self.names[-1]
        x = self.column(p) * self.display_unit(p)[1]
        others = [j for j, n in enumerate(self.names) if n != p]
        keys = [tuple(row) for row in self.values[:, others]] if others else [()] * len(self)
        groups: dict[tuple, list[int]] = {}
        for i, key in enumerate(keys):
            groups.setdefault(key, []).append(i)
        fig, ax = plt.subplots(figsize=(7, 4.5), dpi=110)
        colours = plt.rcParams["axes.prop_cycle"].by_key()["color"]
        for g, rows in enumerate(groups.values()):
            rows = sorted(rows, key=lambda r: x[r])
            for c, col in enumerate(self.columns):
                short = re.sub(r"^mode(\d+)_hz$", r"mode \1", col)
                name = f"{short}: {self.labels[c]}" if c < len(self.labels) else short
                ax.plot(x[rows], self.results[rows, c], color=colours[c % len(colours)],
                        alpha=1.0 if len(groups) == 1 else 0.35, lw=1.6,
                        label=name if g == 0 else None)
        ax.set_xlabel(self.heading(p) if self.display_unit(p)[0] else f"{p} (SI)")
        ax.set_ylabel("frequency (Hz)" if self.columns[0].endswith("_hz") else "result")
        ax.set_title("tracked modes (MAC)" if self.ranks is not None else "sweep")
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=7, ncol=1 if self.labels else 2)
        fig.tight_layout()
        save_png(fig, os.fspath(path))
        return str(path)

    def histogram(self, path: str | os.PathLike[str], columns: Sequence[str] | None = None,
                  bins: int = 40) -> str:
        """Histograms of result columns (PNG, matplotlib Agg)."""
        import matplotlib
        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
        cols = list(columns or self.columns)
        ncol = min(3, len(cols))
        nrow = math.ceil(len(cols) / ncol)
        fig, axes = plt.subplots(nrow, ncol, figsize=(3.3 * ncol, 2.6 * nrow), dpi=110,
                                 squeeze=False)
        for ax in axes.flat[len(cols):]:
            ax.set_visible(False)
        for ax, c in zip(axes.flat, cols, strict=False):
            v = self.column(c) * (self.display_unit(c)[1] if c in self.names else 1.0)
            v = v[np.isfinite(v)]
            flat = v.size == 0 or np.ptp(v) <= 1e-12 * max(float(np.max(np.abs(v))), 1e-300)
            ax.hist(v, bins=1 if flat else bins, color="#4477aa")
            ax.set_title(f"{self.heading(c)}: mean {np.mean(v):.4g}, sd "
                         f"{np.std(v, ddof=1):.3g}" if len(v) > 1 else self.heading(c),
                         fontsize=8)
            ax.tick_params(labelsize=7)
        fig.tight_layout()
        save_png(fig, os.fspath(path))
        return str(path)


# -------------------------------------------------------------- progress --

class Progress:
    """A one-line progress bar on a stream (stderr), redrawn at most 5 times a second."""

    def __init__(self, total: int, label: str = "sweep", stream: TextIO | None = None,
                 enabled: bool = True, width: int = 30):
        self.total, self.label, self.width = max(int(total), 1), label, width
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = enabled
        self.done = 0
        self.start = time.monotonic()
        self._last = 0.0

    def update(self, n: int) -> None:
        """Count ``n`` more variants done."""
        self.done += n
        now = time.monotonic()
        if self.enabled and (now - self._last > 0.2 or self.done >= self.total):
            self._last = now
            frac = min(self.done / self.total, 1.0)
            bar = "#" * int(frac * self.width)
            rate = self.done / max(now - self.start, 1e-9)
            left = (self.total - self.done) / rate if rate > 0 else 0.0
            self.stream.write(f"\r{self.label} [{bar:<{self.width}}] {self.done}/{self.total} "
                              f"{100 * frac:3.0f}%  {rate:,.0f}/s  {left:5.1f} s left ")
            self.stream.flush()

    def close(self) -> None:
        """End the line."""
        if self.enabled:
            self.stream.write("\n")
            self.stream.flush()


# ------------------------------------------------------------- executors --

_WORKER_PROBLEM: Any = None


def _set_problem(problem: Any) -> None:
    global _WORKER_PROBLEM
    from ..interrupts import ignore_in_worker
    ignore_in_worker()          # Ctrl-C reaches the whole group: the parent stops workers
    _WORKER_PROBLEM = problem


def _evaluate(problem: Any, values: np.ndarray, ref_pos: np.ndarray, k: int) -> dict[str, Any]:
    return problem.evaluate(values, ref_pos, k)


@dataclass(frozen=True)
class _Chunk:
    start: int
    stop: int
    values: np.ndarray
    ref_pos: np.ndarray


def _chunks(design: Design, start: int, size: int) -> list[_Chunk]:
    out = []
    for a in range(start, len(design), size):
        b = min(a + size, len(design))
        ref = design.reference[a:b]
        extra: list[np.ndarray] = []
        pos = np.full(b - a, -1, dtype=int)
        slot: dict[int, int] = {}
        for i, r in enumerate(ref):
            if r == REF_NONE:
                continue
            if a <= r < b:
                pos[i] = r - a
                continue
            if r not in slot:
                slot[int(r)] = (b - a) + len(extra)
                extra.append(design.nominal if r == REF_NOMINAL else design.values[r])
            pos[i] = slot[int(r)]
        vals = design.values[a:b] if not extra else np.vstack([design.values[a:b], *extra])
        out.append(_Chunk(a, b, np.ascontiguousarray(vals), pos))
    return out


def _run_inprocess(problem: Any, chunks: list[_Chunk]) -> Iterator[dict[str, Any]]:
    for c in chunks:
        yield problem.evaluate(c.values, c.ref_pos, c.stop - c.start)


def _evaluate_chunk_in_worker(c: _Chunk) -> dict[str, Any]:
    return _WORKER_PROBLEM.evaluate(c.values, c.ref_pos, c.stop - c.start)


def _load_problem(path: str) -> None:
    """Worker initializer: the problem from the file the parent wrote (see _run_processes)."""
    import pickle
    with open(path, "rb") as fh:
        _set_problem(pickle.load(fh))


def _run_processes(problem: Any, chunks: list[_Chunk], workers: int) -> Iterator[dict[str, Any]]:
    """Chunks on ``workers`` spawned processes, results in order.

    The problem goes to the workers through a temporary file, so that starting
    a worker costs the parent only a fork and an exec: that short start runs
    with Ctrl-C held off and ignored (:func:`builder.interrupts.signals_held`),
    so a Ctrl-C reaching the process group never interrupts a worker's start-up
    with a traceback, and workers then ignore it. When the run ends early
    (Ctrl-C, SIGTERM, an error, the consumer stopping), pending chunks are
    cancelled and the workers terminated and joined at once, so no worker
    process outlives the command.
    """
    import multiprocessing
    import pickle
    import tempfile
    from concurrent.futures import ProcessPoolExecutor

    from ..interrupts import signals_held, stop_processes
    ctx = multiprocessing.get_context("spawn")
    fd, path = tempfile.mkstemp(prefix="lumpgraph-sweep-", suffix=".pickle")
    finished = False
    ex = None
    try:
        with os.fdopen(fd, "wb") as fh:
            pickle.dump(problem, fh, protocol=pickle.HIGHEST_PROTOCOL)
        ex = ProcessPoolExecutor(max_workers=workers, mp_context=ctx, initializer=_load_problem,
                                 initargs=(path,))
        with signals_held():
            futures = [ex.submit(_evaluate_chunk_in_worker, c) for c in chunks]
        for f in futures:
            yield f.result()
        finished = True
    finally:
        if ex is not None and finished:
            ex.shutdown(wait=True)
        elif ex is not None:
            processes = list((getattr(ex, "_processes", None) or {}).values())
            ex.shutdown(wait=False, cancel_futures=True)
            stop_processes(processes)
            ex.shutdown(wait=True)
        with contextlib.suppress(OSError):
            os.unlink(path)


def _run_dask(problem: Any, chunks: list[_Chunk], cluster: Any) -> Iterator[dict[str, Any]]:
    try:
        from distributed import Client
    except ImportError:
        raise InputError("--cluster needs the optional dependency dask[distributed] "
                         "(pip install 'lumpgraph[cluster]')", Where(field="--cluster")) from None
    own = isinstance(cluster, str)
    if own:
        try:
            client = Client(cluster, timeout=10)
        except (OSError, TimeoutError, ValueError) as exc:
            raise InputError(f"cannot reach the Dask scheduler at {cluster} ({exc})",
                             Where(field="--cluster")) from None
    else:
        client = cluster
    try:
        [pf] = client.scatter([problem], broadcast=True, hash=False)   # a key of its own
        futures = [client.submit(_evaluate, pf, c.values, c.ref_pos, c.stop - c.start,
                                 pure=False, priority=-i) for i, c in enumerate(chunks)]
        try:
            for f in futures:
                yield f.result()
                f.release()
        finally:
            client.cancel(futures)
    finally:
        if own:
            client.close()


# ------------------------------------------------------------------- csv --

def _fmt(x: float) -> str:
    return repr(float(x))


class _CsvSink:
    """Append-only CSV, a chunk at a time, synced; only whole rows ever stay in it.

    A chunk's rows go out in unbuffered writes; when one fails (a full disk,
    a file size limit) or is interrupted, the file is cut back to the end of
    the last whole chunk before the error goes on, so the file always ends
    with a complete row and ``--resume`` continues exactly.
    """

    def __init__(self, path: str, header: list[str]):
        self.path, self.header = path, header
        self.fd: int | None = None

    def read_done(self) -> list[list[str]]:
        """Complete rows of an earlier run (header checked); the file is rewritten
        without any half-written last line."""
        if not os.path.exists(self.path):
            return []
        with open(self.path, newline="") as fh:
            text = fh.read()
        if not text.strip():
            return []
        if not text.endswith("\n"):
            text = text[: text.rfind("\n") + 1]
        rows = list(csv.reader(io.StringIO(text)))
        if not rows or rows[0] != self.header:
            raise InputError(f"{self.path} was written by a different sweep (its columns "
                             "differ); remove it or drop --resume", Where(field="--resume"))
        good = [r for r in rows[1:] if len(r) == len(self.header)]
        _write_atomic(self.path, _csv_text([self.header, *good]))
        return good

    def open(self, fresh: bool) -> None:
        if fresh:
            _write_atomic(self.path, _csv_text([self.header]))
        try:
            self.fd = os.open(self.path, os.O_WRONLY | os.O_APPEND)
        except OSError as exc:
            raise write_failure(exc, self.path, "--csv") from None

    def write(self, rows: list[list[str]]) -> None:
        assert self.fd is not None
        data = _csv_text(rows).encode("utf-8")
        end = os.lseek(self.fd, 0, os.SEEK_END)
        try:
            view = memoryview(data)
            while view:
                view = view[os.write(self.fd, view):]
            os.fsync(self.fd)
        except BaseException as exc:
            with contextlib.suppress(OSError):
                os.ftruncate(self.fd, end)     # back to the last whole row
            if isinstance(exc, OSError):
                raise write_failure(exc, self.path, "--csv", "the file keeps the whole rows "
                                    "written before it; --resume continues") from None
            raise

    def close(self) -> None:
        if self.fd is not None:
            with contextlib.suppress(OSError):
                os.close(self.fd)
            self.fd = None


def _csv_text(rows: list[list[str]]) -> str:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    return buf.getvalue()


def _write_atomic(path: str, text: str) -> None:
    from ..io import write_atomic
    write_atomic(path, text)


# ----------------------------------------------------------------- sweep --

def run_sweep(problem: Any, design: Design, *, workers: int | None = None,
              cluster: Any = None, chunk_size: int = DEFAULT_CHUNK,
              csv_path: str | os.PathLike[str] | None = None, resume: bool = False,
              progress: Progress | bool | None = None,
              units: Sequence[str] = ()) -> SweepResult:
    """Solve every variant of ``design``; returns a :class:`SweepResult`.

    ``workers`` > 1 runs chunks on that many local processes; ``cluster``
    (a scheduler address ``tcp://host:port`` or a ``distributed.Client``) on
    Dask. ``csv_path`` receives the table as it is solved; with ``resume`` the
    rows an earlier run of the same sweep left there are kept and only the
    rest is solved. ``progress`` True draws a bar on stderr.
    """
    if workers is not None and cluster is not None:
        raise InputError("give --workers or --cluster, not both", Where(field="--workers"))
    if problem.names != design.names:
        raise ValueError("problem and design name different parameters")
    nv = len(design)
    modes = isinstance(problem, ModesProblem)
    cols = problem.columns()
    m = len(cols)
    header = ["variant", *design.names, *cols] + (["ranks"] if modes else [])
    results = np.full((nv, m), np.nan)
    ranks = np.zeros((nv, m), dtype=int) if modes else None
    done = 0
    sink = _CsvSink(os.fspath(csv_path), header) if csv_path is not None else None
    if sink is not None:
        existed = resume and os.path.exists(sink.path)
        if existed:
            done = _restore(sink.read_done(), design, results, ranks, m)
        sink.open(fresh=not existed)
    chunks = _chunks(design, done, chunk_size)
    if isinstance(progress, Progress):
        bar: Progress | None = progress
    elif progress:
        bar = Progress(nv)
    else:
        bar = None
    if bar is not None:
        bar.update(done)
    if cluster is not None:
        stream = _run_dask(problem, chunks, cluster)
    elif workers is not None and workers > 1:
        stream = _run_processes(problem, chunks, workers)
    else:
        stream = _run_inprocess(problem, chunks)
    try:
        for c, out in zip(chunks, stream, strict=True):
            _store(c, out, design, results, ranks, m)
            if sink is not None:
                sink.write(_rows(c.start, c.stop, design, results, ranks))
            if bar is not None:
                bar.update(c.stop - c.start)
    finally:
        if hasattr(stream, "close"):
            stream.close()
        if sink is not None:
            sink.close()
        if bar is not None:
            bar.close()
    return SweepResult(design.names, design.values, tuple(cols), results, design.kind, ranks,
                       tuple(units))


def _store(c: _Chunk, out: dict[str, Any], design: Design, results: np.ndarray,
           ranks: np.ndarray | None, m: int) -> None:
    if ranks is None:
        results[c.start:c.stop] = out["values"]
        return
    sorted_hz, match = out["sorted_hz"], out["match"]
    ref = design.reference[c.start:c.stop]
    if np.all(ref < 0):                      # no chain inside the chunk: vectorised
        perm = np.where((ref == REF_NONE)[:, None], np.arange(m)[None, :], match[:, :m])
        ranks[c.start:c.stop] = perm
        results[c.start:c.stop] = np.take_along_axis(sorted_hz, perm, axis=1)
        return
    for i in range(c.stop - c.start):
        v = c.start + i
        r = int(design.reference[v])
        if r == REF_NONE:
            perm = np.arange(m)
        elif r == REF_NOMINAL:
            perm = match[i][:m]
        else:
            perm = match[i][ranks[r]]
        ranks[v] = perm
        results[v] = sorted_hz[i][perm]


def _rows(a: int, b: int, design: Design, results: np.ndarray,
          ranks: np.ndarray | None) -> list[list[str]]:
    rows = []
    for v in range(a, b):
        row = [str(v), *map(_fmt, design.values[v]), *map(_fmt, results[v])]
        if ranks is not None:
            row.append(" ".join(str(int(x) + 1) for x in ranks[v]))
        rows.append(row)
    return rows


def _restore(rows: list[list[str]], design: Design, results: np.ndarray,
             ranks: np.ndarray | None, m: int) -> int:
    npar = len(design.names)
    for i, row in enumerate(rows):
        if i >= len(design) or row[0] != str(i):
            raise InputError(f"row {i + 1} of the CSV does not belong to this sweep",
                             Where(field="--resume"))
        vals = np.array([float(x) for x in row[1:1 + npar]])
        if not np.allclose(vals, design.values[i], rtol=1e-12, atol=0.0):
            raise InputError(f"variant {i} in the CSV has other parameter values than this "
                             "sweep (options or seed changed?)", Where(field="--resume"))
        results[i] = [float(x) for x in row[1 + npar:1 + npar + m]]
        if ranks is not None:
            ranks[i] = [int(x) - 1 for x in row[-1].split()]
    return len(rows)


# --------------------------------------------------------------- targets --

@dataclass(frozen=True)
class TargetResult:
    """Parameter values found by :func:`find_parameters` and what they achieve.

    ``values`` SI per parameter; ``achieved`` the tracked frequency (Hz) of
    each targeted mode (or the response minimised, under ``"objective"``).
    """

    names: tuple[str, ...]
    values: dict[str, float]
    targets: dict[str, float]
    achieved: dict[str, float]
    success: bool
    message: str
    evaluations: int
    units: dict[str, str] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"parameters": self.values, "targets": self.targets, "achieved": self.achieved,
                "success": self.success, "message": self.message,
                "evaluations": self.evaluations}

    def text(self) -> str:
        lines = ["parameters found:"]
        for n in self.names:
            unit = self.units.get(n, "")
            value = in_unit(self.values[n], unit) if unit else self.values[n]
            lines.append(f"  {n:<20} {value:.6g}{' ' + unit if unit else ''}")
        lines.append("achieved:")
        for key, got in self.achieved.items():
            want = self.targets.get(key)
            tail = f"  (target {want:.6g})" if want is not None else ""
            lines.append(f"  {key:<20} {got:.6g}{tail}")
        lines.append(("converged: " if self.success else "NOT converged: ") + self.message)
        return "\n".join(lines)


def find_parameters(family: Any, bounds: Mapping[str, tuple[float, float]],
                    targets: Mapping[int, float] | None = None,
                    objective: Callable[[dict[str, float]], float] | None = None,
                    start: Mapping[str, float] | None = None) -> TargetResult:
    """Parameter values within ``bounds`` (SI) that meet the targets.

    ``targets`` maps mode numbers (1-based, in the order of the family's
    nominal design, followed by MAC as the parameters move) to frequencies
    (Hz): solved as bounded least squares on f/target - 1
    (``scipy.optimize.least_squares``, trust-region reflective). Otherwise
    ``objective(dict name -> SI value)`` is minimised within the bounds
    (``scipy.optimize.minimize``, L-BFGS-B). Parameters not in ``bounds``
    stay at their nominal values. Variables are scaled to [0, 1] on their
    bounds.
    """
    import scipy.optimize as so
    names = tuple(bounds)
    all_names = tuple(family.names)
    unknown = [n for n in names if n not in all_names]
    if unknown:
        raise InputError(f"no parameter {unknown[0]!r} in the model", Where(field="--vary"))
    lo = np.array([bounds[n][0] for n in names], dtype=float)
    hi = np.array([bounds[n][1] for n in names], dtype=float)
    if np.any(hi <= lo):
        raise InputError("each bound needs LOW < HIGH", Where(field="--vary"))
    nominal = np.asarray(getattr(family, "nominal", np.zeros(len(all_names))), dtype=float)
    idx = [all_names.index(n) for n in names]
    x_start = np.array([(start or {}).get(n, nominal[i]) for n, i in zip(names, idx,
                                                                        strict=True)])
    u0 = np.clip((x_start - lo) / (hi - lo), 0.0, 1.0)
    K0, M0 = family.matrices(nominal[None, :])
    f0, ref_shapes = batched_modes(K0, M0)

    def full(u: np.ndarray) -> np.ndarray:
        p = nominal.copy()
        p[idx] = lo + np.asarray(u) * (hi - lo)
        return p

    def tracked(u: np.ndarray) -> np.ndarray:
        K, M = family.matrices(full(u)[None, :])
        f, shapes = batched_modes(K, M)
        match = batch_match(ref_shapes, shapes, M if M.ndim == 2 else M)
        return f[0][match[0]]

    if targets:
        modes = sorted(targets)
        for mode in modes:
            if not 1 <= mode <= f0.shape[1]:
                raise InputError(f"mode {mode} does not exist (the model has {f0.shape[1]})",
                                 Where(field="--target"))
        want = np.array([targets[mode] for mode in modes])
        sol = so.least_squares(lambda u: tracked(u)[np.array(modes) - 1] / want - 1.0,
                               u0, bounds=(0.0, 1.0), method="trf", x_scale=1.0,
                               xtol=1e-12, ftol=1e-12, gtol=1e-12)
        u, nfev, ok, msg = sol.x, sol.nfev, bool(sol.success), str(sol.message)
        f = tracked(u)
        achieved = {f"mode{mode}_hz": float(f[mode - 1]) for mode in modes}
        tg = {f"mode{mode}_hz": float(targets[mode]) for mode in modes}
    elif objective is not None:
        def fun(u: np.ndarray) -> float:
            return float(objective(dict(zip(all_names, full(u), strict=True))))
        sol = so.minimize(fun, u0, method="L-BFGS-B", bounds=[(0.0, 1.0)] * len(names))
        u, nfev, ok, msg = sol.x, sol.nfev, bool(sol.success), str(sol.message)
        achieved = {"objective": fun(u)}
        tg = {}
    else:
        raise InputError("give targets or an objective", Where(field="--target"))
    p = full(u)
    return TargetResult(names, {n: float(p[i]) for n, i in zip(names, idx, strict=True)},
                        tg, achieved, ok, msg, int(nfev))


# ----------------------------------------------------------- file sweeps --

@dataclass(frozen=True)
class FileModel:
    """An assembly file at given parameter values: picklable, so workers rebuild it.

    Calling it with ``{name: SI value}`` loads the file with those parameter
    overrides (in the dimension the file gives each parameter), assembles it,
    reduces it to ``depth`` (a name in the file) or ``keep`` (patterns), and
    returns dense (K, M).
    """

    path: str
    dims: tuple[tuple[str, tuple[int, int, int]], ...] = ()
    depth: str | None = None
    keep: tuple[str, ...] = ()

    def assembly(self, values: Mapping[str, float]) -> Any:
        """The Assembly at these parameter values (SI)."""
        from ..load import load_assembly
        from ..quantities import Quantity
        dims = dict(self.dims)
        over = {n: Quantity(float(v), dims.get(n, (0, 0, 0))) for n, v in values.items()}
        return load_assembly(self.path, overrides=over)

    def model(self, values: Mapping[str, float], assembly: Any = None) -> Any:
        """The LinearModel at these parameter values (SI), at the depth."""
        from ..linear import assemble
        from ..reduce import reduce_keep, reduce_to_depth
        asm = self.assembly(values) if assembly is None else assembly
        model = assemble(asm)
        if self.depth:
            if self.depth not in asm.depths:
                known = ", ".join(asm.depths) or "none in this file"
                raise InputError(f'unknown depth "{self.depth}" (depths: {known})',
                                 Where(field="--depth"))
            model = reduce_to_depth(model, asm.depths[self.depth])
        elif self.keep:
            model = reduce_keep(model, list(self.keep))
        return model

    def __call__(self, values: Mapping[str, float]) -> tuple[np.ndarray, np.ndarray]:
        model = self.model(values)
        return model.K.toarray(), model.M.toarray()

    def unreduced(self, values: Mapping[str, float]) -> tuple[np.ndarray, np.ndarray]:
        """Dense (K, M) of the full model, before any depth."""
        return FileModel(self.path, self.dims)(values)


def file_parameters(path: str | os.PathLike[str]) -> dict[str, Any]:
    """The file's ``parameters:`` as Quantities (SI value and dimension)."""
    from ..load import load_assembly
    return dict(load_assembly(path).parameters)


def _check_names(params: Mapping[str, Any], names: Sequence[str],
                 dims: Sequence[tuple[int, int, int]] = ()) -> None:
    from ..quantities import NONE
    from ..quantities import dimension_text as _dim_text
    for i, n in enumerate(names):
        if n not in params:
            import difflib
            hint = difflib.get_close_matches(n, list(params), n=1)
            tip = f' (did you mean "{hint[0]}"?)' if hint else ""
            known = ", ".join(params) or "none"
            raise InputError(f'the file has no parameter "{n}"{tip}; its parameters: {known}',
                             Where(field="--vary"))
        if i < len(dims) and dims[i] != NONE and dims[i] != params[n].dim:
            raise InputError(f'"{n}" is {_dim_text(params[n].dim)} in the file, the sweep '
                             f"gives {_dim_text(dims[i])}", Where(field="--vary"))


def file_family(path: str | os.PathLike[str], names: Sequence[str],
                nominal: Sequence[float] | None = None, spans: Sequence[float] | None = None,
                depth: str | None = None, keep: Sequence[str] = (),
                dims: Sequence[tuple[int, int, int]] = ()) -> AffineFamily | CallbackFamily:
    """The matrix family of a file over some of its parameters.

    Tries the fast path first: the unreduced K and M probed for an affine
    dependence (:func:`affine_family`), the depth applied by the batched tie
    and Guyan reduction, and both checked against the core's own reduction
    at the nominal point. When that fails, every variant is rebuilt from the
    file (:class:`CallbackFamily` over :class:`FileModel`).
    """
    from ..linear import assemble
    from ..load import load_assembly, match_dofs
    from ..reduce import reduce_keep, reduce_to_depth, tie_map
    path = os.fspath(path)
    asm = load_assembly(path)
    params = dict(asm.parameters)
    names = tuple(names)
    _check_names(params, names, dims)
    pdims = tuple((n, params[n].dim) for n in params)
    p0 = np.array([params[n].value for n in names]) if nominal is None else \
        np.asarray(nominal, dtype=float)
    spans = np.asarray(spans if spans is not None else 0.1 * np.abs(p0), dtype=float)
    fm = FileModel(path, pdims, depth, tuple(keep))
    slow = CallbackFamily(names, fm, p0)
    full = assemble(asm)
    fam = affine_family(fm.unreduced, names, p0, spans, full.dofs)
    if fam is None:
        return slow
    if depth or keep:
        if depth:
            if depth not in asm.depths:
                known = ", ".join(asm.depths) or "none in this file"
                raise InputError(f'unknown depth "{depth}" (depths: {known})',
                                 Where(field="--depth"))
            d = asm.depths[depth]
            reduced = reduce_to_depth(full, d)
            patterns, ties = d.keep, d.tie
        else:
            reduced = reduce_keep(full, list(keep))
            patterns, ties = tuple(keep), ()
        T_tie, tied_dofs = tie_map(full.dofs, [list(g) for g in ties])
        T = T_tie.toarray()
        mset = {x for p in patterns for x in match_dofs(p, tied_dofs)}
        masters = np.array([i for i, x in enumerate(tied_dofs) if x in mset], dtype=int)
        fam = AffineFamily(names, fam.nominal, fam.K0, fam.dK, fam.M0, fam.dM,
                           reduced.dofs, (T, masters))
        Kr, Mr = fam.matrices(p0[None, :])
        want_K, want_M = reduced.K.toarray(), reduced.M.toarray()
        for got, want in ((Kr[0], want_K), (Mr[0], want_M)):
            if got.shape != want.shape or not np.allclose(
                    got, want, rtol=1e-9, atol=1e-9 * float(np.max(np.abs(want)))):
                return slow
    return fam


def file_sensitivities(path: str | os.PathLike[str], names: Sequence[str] | None = None,
                       depth: str | None = None, keep: Sequence[str] = (),
                       rel_step: float = 1e-6) -> FrequencySensitivities:
    """df/dp of every mode of a file's model with respect to its parameters
    (default: all of them), at the file's values.

    dK/dp and dM/dp come from central differences of the assembled matrices
    (step ``rel_step`` of each value); the frequency derivative is then the
    eigenvalue-derivative formula of :mod:`.sensitivity`.
    """
    params = file_parameters(path)
    names = tuple(names) if names is not None else tuple(params)
    _check_names(params, names)
    fm = FileModel(os.fspath(path), tuple((n, params[n].dim) for n in params), depth,
                   tuple(keep))
    p0 = {n: params[n].value for n in names}
    K0, M0 = fm(p0)
    dKs, dMs = [], []
    for n in names:
        h = rel_step * (abs(p0[n]) if p0[n] != 0 else 1.0)
        Kp, Mp = fm({**p0, n: p0[n] + h})
        Km, Mm = fm({**p0, n: p0[n] - h})
        if Kp.shape != K0.shape or Km.shape != K0.shape:
            raise InputError(f'changing "{n}" changes the model\'s DOFs', Where(field="--vary"))
        dKs.append((Kp - Km) / (2 * h))
        dMs.append((Mp - Mm) / (2 * h))
    sens = frequency_sensitivities(K0, M0, dKs, dMs, names, [p0[n] for n in names])
    return replace(sens, units=tuple(unit_of_dimension(params[n].dim) for n in names))


@dataclass(frozen=True)
class FileRide:
    """Ride figures of sensors on an ISO 8608 road, per variant of a file.

    Returns ``{SENSOR_rms: ..., SENSOR_weighted_rms: ...}`` (the weighted one
    for acceleration sensors), SI units of each sensor.
    """

    model: FileModel
    sensors: tuple[str, ...]
    road_class: str
    speed_m_s: float
    points: int = 400

    def columns(self) -> tuple[str, ...]:
        """Result column names, given the sensors' measures in the nominal file."""
        from ..load import load_assembly
        asm = load_assembly(self.model.path)
        cols: list[str] = []
        for s in self.sensors:
            if s not in asm.sensors:
                known = ", ".join(asm.sensors) or "none"
                raise InputError(f'unknown sensor "{s}" (sensors: {known})',
                                 Where(field="--result"))
            cols.append(f"{s}_rms")
            if asm.sensors[s].measure == "acceleration":
                cols.append(f"{s}_weighted_rms")
        return tuple(cols)

    def __call__(self, values: Mapping[str, float]) -> dict[str, float]:
        from ..analysis.ride import ride_response
        model = self.model.model(values)
        res = ride_response(model, self.road_class, self.speed_m_s, points=self.points,
                            sensors=list(self.sensors))
        out: dict[str, float] = {}
        for s in self.sensors:
            r = res.sensors[s]
            out[f"{s}_rms"] = float(r.rms)
            if r.weighted_rms is not None:
                out[f"{s}_weighted_rms"] = float(r.weighted_rms)
        return out


def _dig(data: Any, path: str, option: str) -> float:
    """The number at a dotted ``path`` (keys, or list positions from 0) of a
    JSON-like result; InputError naming what is there otherwise."""
    node = data
    done: list[str] = []
    for part in [p for p in path.split(".") if p]:
        if isinstance(node, Mapping) and part in node:
            node = node[part]
        elif isinstance(node, list | tuple) and part.isdigit() and int(part) < len(node):
            node = node[int(part)]
        else:
            here = ".".join(done) or "the result"
            if isinstance(node, Mapping):
                have = ", ".join(map(str, node)) or "nothing"
            elif isinstance(node, list | tuple):
                have = f"positions 0..{len(node) - 1}"
            else:
                have = "a single value"
            raise InputError(f'no "{part}" in {here} (it has {have})', Where(field=option))
        done.append(part)
    if isinstance(node, bool) or not isinstance(node, int | float):
        raise InputError(f'"{path}" is not a number (got {type(node).__name__})',
                         Where(field=option))
    return float(node)


def plugin_result(assembly: Any, model: Any, use: str,
                  options: Mapping[str, Any] | None = None) -> Any:
    """The JSON form (``to_dict()``) of ``plugin.analyse(model)`` for the plugin
    entry ``use`` (its ``use:`` or ``name:`` in the file)."""
    from ..commands._common import to_jsonable
    for u in getattr(assembly, "plugins", ()):
        if use in (getattr(u, "use", None), getattr(u, "name", None)):
            plugin = getattr(u, "plugin", None)
            if plugin is None or not callable(getattr(plugin, "analyse", None)):
                raise InputError(f'plugin "{use}" has no analysis of its own',
                                 Where(field="--result"))
            return to_jsonable(plugin.analyse(model, assembly=assembly, **dict(options or {})))
    known = ", ".join(str(getattr(u, "use", "?")) for u in getattr(assembly, "plugins", ()))
    raise InputError(f'the file applies no plugin "{use}" (plugins: {known or "none"})',
                     Where(field="--result"))


def plugin_figure(assembly: Any, model: Any, use: str, path: str,
                  options: Mapping[str, Any] | None = None) -> float:
    """One number from a plugin's own analysis, read at the dotted ``path`` of
    its JSON form (keys, or list positions from 0), e.g. ``seats.0.ride.vector_sum``."""
    return _dig(plugin_result(assembly, model, use, options), path, "--result")


@dataclass(frozen=True)
class FilePlugin:
    """Plugin figures per variant of a file: ``figures`` are (use, dotted path)
    pairs, columns ``USE:PATH``. Each plugin's analysis runs once per variant."""

    model: FileModel
    figures: tuple[tuple[str, str], ...]

    def columns(self) -> tuple[str, ...]:
        return tuple(f"{u}:{p}" for u, p in self.figures)

    def __call__(self, values: Mapping[str, float]) -> dict[str, float]:
        asm = self.model.assembly(values)
        model = self.model.model(values, asm)
        results: dict[str, Any] = {}
        out = {}
        for u, p in self.figures:
            if u not in results:
                results[u] = plugin_result(asm, model, u)
            out[f"{u}:{p}"] = _dig(results[u], p, "--result")
        return out
