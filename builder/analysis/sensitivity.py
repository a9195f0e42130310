"""Derivatives of natural frequencies with respect to design parameters.

For the undamped problem K phi = lambda M phi with phi mass-normalised
(phi^T M phi = 1) and a distinct eigenvalue lambda = (2 pi f)^2, the first
derivative with respect to a parameter p is

    d lambda / dp = phi^T (dK/dp - lambda dM/dp) phi

and, since lambda = 4 pi^2 f^2, df/dp = (d lambda/dp) / (8 pi^2 f). The
derivative of a repeated eigenvalue is not defined this way (the pair splits
along directions the formula does not see); such modes are flagged.

The ranked table uses the *relative* sensitivity (p / f) df/dp, the percent
change of a frequency per percent change of a parameter, so that parameters
in different units compare: 0.5 for a spring acting alone on its mass,
-0.5 for that mass.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import scipy.linalg

from ..formatting import text_table
from ..quantities import parse_unit

__all__ = ["FrequencySensitivities", "eigenvalue_derivatives", "frequency_sensitivities"]


def _dense(a: object) -> np.ndarray:
    if hasattr(a, "toarray"):
        return np.asarray(a.toarray(), dtype=float)  # type: ignore[union-attr]
    return np.asarray(a, dtype=float)


def eigenvalue_derivatives(K: object, M: object, dK_list: Sequence[object],
                           dM_list: Sequence[object] | None = None
                           ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Eigenvalues, mass-normalised modes and eigenvalue derivatives.

    ``K``, ``M``: (n, n) stiffness (N/m) and mass (kg) matrices, dense or
    sparse; ``dK_list[p]``, ``dM_list[p]``: their derivatives with respect to
    parameter p (None or absent: zero). Returns (lambda (n,) in rad^2/s^2,
    phi (n, n), dlambda (nparams, n) in rad^2/s^2 per unit of the parameter).
    """
    Kd, Md = _dense(K), _dense(M)
    lam, phi = scipy.linalg.eigh(Kd, Md)
    dM_list = list(dM_list) if dM_list is not None else [None] * len(dK_list)
    if len(dM_list) != len(dK_list):
        raise ValueError("dK_list and dM_list differ in length")
    out = np.zeros((len(dK_list), len(lam)))
    for p, (dK, dM) in enumerate(zip(dK_list, dM_list, strict=True)):
        if dK is not None:
            out[p] += np.einsum("ij,ik,kj->j", phi, _dense(dK), phi)
        if dM is not None:
            out[p] -= lam * np.einsum("ij,ik,kj->j", phi, _dense(dM), phi)
    return lam, phi, out


@dataclass(frozen=True)
class FrequencySensitivities:
    """df/dp of each natural frequency.

    ``frequencies_hz`` (m,); ``derivatives`` (nparams, m) in Hz per SI unit
    of each parameter; ``names`` and ``values`` (SI) of the parameters when
    known (``values`` None: relative sensitivities are not available);
    ``repeated`` (m,) True for modes whose frequency is repeated (derivative
    not defined) and for rigid-body modes. ``units`` (optional, one per
    parameter): the engineering unit the table gives df/dp per (e.g. kN/m).
    """

    frequencies_hz: np.ndarray
    derivatives: np.ndarray
    names: tuple[str, ...]
    values: np.ndarray | None = None
    repeated: np.ndarray | None = None
    units: tuple[str, ...] = ()

    def relative(self) -> np.ndarray:
        """(p / f) df/dp, (nparams, m), dimensionless; NaN for rigid modes."""
        if self.values is None:
            raise ValueError("parameter values unknown: no relative sensitivities")
        with np.errstate(divide="ignore", invalid="ignore"):
            f = np.where(self.frequencies_hz > 0, self.frequencies_hz, np.nan)
            return self.values[:, None] * self.derivatives / f[None, :]

    def ranked(self, mode: int) -> list[tuple[str, float, float]]:
        """Rows (name, df/dp in Hz per SI unit, relative) for mode number
        ``mode`` (1-based), largest |relative| (or |df/dp|) first."""
        j = mode - 1
        rel = self.relative()[:, j] if self.values is not None else np.full(len(self.names),
                                                                            np.nan)
        key = np.abs(rel) if self.values is not None else np.abs(self.derivatives[:, j])
        order = np.argsort(-np.nan_to_num(key, nan=-1.0), kind="stable")
        return [(self.names[p], float(self.derivatives[p, j]), float(rel[p])) for p in order]

    def table(self, modes: Sequence[int] | None = None, top: int | None = None) -> str:
        """A plain-text ranked table, one block per mode."""
        modes = list(modes or range(1, len(self.frequencies_hz) + 1))
        lines = []
        for mode in modes:
            f = self.frequencies_hz[mode - 1]
            flag = ("  (repeated or rigid: derivative not defined)"
                    if self.repeated is not None and self.repeated[mode - 1] else "")
            lines.append(f"mode {mode}  {f:.4g} Hz{flag}")
            rows = []
            for name, d, r in self.ranked(mode)[:top]:
                unit = self.units[self.names.index(name)] if self.units else ""
                per = f"Hz per {unit}" if unit else "Hz per SI unit"
                rows.append([name, d * (parse_unit(unit)[0] if unit else 1.0), per, r])
            lines.append(text_table(["parameter", "df/dp", "unit", "(p/f) df/dp"], rows,
                                    spec=[".6g", ".6g", "", ".4f"], indent="  ", rule=False))
        return "\n".join(lines)

    def to_dict(self) -> dict:
        """JSON-ready form."""
        rel = self.relative() if self.values is not None else None
        return {"parameters": list(self.names),
                "modes": [{"number": j + 1, "frequency_hz": float(f),
                           "df_dp": {n: float(self.derivatives[p, j])
                                     for p, n in enumerate(self.names)},
                           "relative": None if rel is None else
                           {n: float(rel[p, j]) for p, n in enumerate(self.names)}}
                          for j, f in enumerate(self.frequencies_hz)]}


def frequency_sensitivities(K: object, M: object, dK_list: Sequence[object],
                            dM_list: Sequence[object] | None = None,
                            names: Sequence[str] | None = None,
                            values: Sequence[float] | None = None,
                            rtol_repeated: float = 1e-6) -> FrequencySensitivities:
    """Natural frequencies (Hz) and their derivatives df/dp (Hz per SI unit).

    ``dK_list[p]`` and ``dM_list[p]`` are dK/dp (N/m per unit) and dM/dp
    (kg per unit), None where a matrix does not depend on p. ``names`` and
    ``values`` label the parameters and give their current values (SI) for
    the relative table.
    """
    lam, _phi, dlam = eigenvalue_derivatives(K, M, dK_list, dM_list)
    scale = max(float(np.max(np.abs(lam))), 1e-300)
    lam = np.where(lam < 1e-12 * scale, 0.0, lam)
    f = np.sqrt(lam) / (2.0 * math.pi)
    with np.errstate(divide="ignore", invalid="ignore"):
        df = np.where(f > 0, dlam / (8.0 * math.pi**2 * np.where(f > 0, f, 1.0)), np.nan)
    gaps = np.diff(lam)
    close = np.zeros(len(lam), dtype=bool)
    near = gaps <= rtol_repeated * np.maximum(np.abs(lam[1:]), 1e-300)
    close[:-1] |= near
    close[1:] |= near
    close |= f == 0
    names = tuple(names) if names is not None else tuple(f"p{i + 1}" for i in range(len(dK_list)))
    vals = None if values is None else np.asarray(values, dtype=float)
    return FrequencySensitivities(f, df, names, vals, close)
