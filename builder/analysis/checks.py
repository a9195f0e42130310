"""Model checks: what an engineer looks at before trusting any result.

Total mass, combined cg and inertia; DOF count; bodies not connected to
ground or road; zero-frequency (rigid-body or mechanism) modes; the static
deflection of every link under 1 g with the natural frequency it implies,
f = sqrt(g / delta) / (2 pi) (the static-deflection rule of a mass on a
spring); symmetry and definiteness of M and K.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..eigen import lowest_modes
from ..linear import GRAVITY, LinearModel
from .modes import RIGID_TOLERANCE

__all__ = ["ModelChecks", "check_model"]


@dataclass(frozen=True, eq=False)
class ModelChecks:
    """Results of :func:`check_model`; masses kg, lengths m, inertia kg m^2."""

    name: str
    total_mass: float
    cg: np.ndarray
    inertia: np.ndarray
    dof_count: int
    dofs: tuple[str, ...]
    unconnected: tuple[str, ...]
    zero_modes: int
    zero_mode_note: str
    static: tuple[dict[str, Any], ...]
    asymmetry: dict[str, float]
    min_eigenvalue: dict[str, float]
    warnings: tuple[str, ...]

    @property
    def ok(self) -> bool:
        return (not self.unconnected and self.zero_modes == 0 and
                max(self.asymmetry.values()) < 1e-12 and self.min_eigenvalue["M"] > 0)

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "total_mass_kg": self.total_mass, "cg_m": self.cg.tolist(),
                "inertia_kg_m2": self.inertia.tolist(), "dof_count": self.dof_count,
                "dofs": list(self.dofs), "unconnected_bodies": list(self.unconnected),
                "zero_frequency_modes": self.zero_modes, "zero_mode_note": self.zero_mode_note,
                "static_deflection": list(self.static), "asymmetry": self.asymmetry,
                "min_eigenvalue": self.min_eigenvalue, "warnings": list(self.warnings),
                "ok": self.ok}

    def table(self) -> str:
        i = self.inertia
        lines = [
            f"model: {self.name}",
            f"total mass: {self.total_mass:.2f} kg",
            "combined cg: [" + ", ".join(f"{v:.4f}" for v in self.cg) + "] m",
            f"inertia about cg (kg m^2): xx {i[0, 0]:.2f}  yy {i[1, 1]:.2f}  zz {i[2, 2]:.2f}"
            f"  xy {-i[0, 1]:.2f}  xz {-i[0, 2]:.2f}  yz {-i[1, 2]:.2f}",
            f"DOFs: {self.dof_count}",
            "unconnected bodies: " + (", ".join(self.unconnected) or "none"),
            f"zero-frequency modes: {self.zero_modes}"
            + (f" ({self.zero_mode_note})" if self.zero_mode_note else ""),
            "symmetry |A - A^T| / |A|: " + "  ".join(f"{k} {v:.1e}"
                                                     for k, v in self.asymmetry.items()),
            "smallest eigenvalue: M " + f"{self.min_eigenvalue['M']:.4g}"
            + f" (positive definite: {'yes' if self.min_eigenvalue['M'] > 0 else 'NO'}),"
            + f" K/M lowest {self.min_eigenvalue['K']:.4g} rad^2/s^2",
        ]
        if self.static:
            lines.append("static deflection under 1 g:")
            lines.append(f"  {'link':<18} {'component':>9} {'deflection':>12} {'force':>11} "
                         f"{'implied f':>10}")
            for s in self.static:
                f = "-" if s["implied_frequency_hz"] is None else \
                    f"{s['implied_frequency_hz']:.2f} Hz"
                unit = "mm" if s["unit"] == "m" else "mrad"
                lines.append(f"  {s['link']:<18} {s['component']:>9} "
                             f"{1000 * s['deflection']:>9.2f} {unit:<4}"
                             f"{s['force']:>9.0f}   {f:>10}")
        lines.extend(f"warning: {w}" for w in self.warnings)
        return "\n".join(lines)


def _asymmetry(A) -> float:
    norm = abs(A).max() if A.nnz else 0.0
    return float(abs(A - A.T).max() / norm) if norm else 0.0


def check_model(model: LinearModel) -> ModelChecks:
    """Run every model check on an (unreduced) model."""
    asm = model.assembly
    mass, cg, inertia = asm.mass_properties()
    n = model.n
    count = min(n, 12)
    lam, _ = lowest_modes(model.K, model.M, count) if n else (np.zeros(0), None)
    m_min = float(lowest_modes(model.M, _eye(n), 1)[0][0]) if n else 0.0
    Kd = np.abs(model.K.diagonal())
    scale = float(np.max(Kd / np.maximum(np.abs(model.M.diagonal()), 1e-300))) if n else 1.0
    zero = int(np.sum(lam < RIGID_TOLERANCE * max(scale, 1e-300)))
    anchored = any(lk.a.kind != "body" or lk.b.kind != "body" for lk in asm.links.values())
    note = ""
    if zero:
        note = ("mechanism: part of the model can move without deforming a link" if anchored
                else "rigid-body modes: the model is not attached to ground or road")
    static = _static(model) if zero == 0 else ()
    warnings = list(asm.warnings)
    if zero:
        warnings.append("static deflection not computed: the model has zero-frequency modes")
    return ModelChecks(
        asm.name, mass, cg, inertia, n, model.dofs, tuple(asm.unconnected_bodies()), zero, note,
        static, {"M": _asymmetry(model.M), "K": _asymmetry(model.K), "C": _asymmetry(model.C)},
        {"M": m_min, "K": float(lam[0]) if len(lam) else 0.0}, tuple(warnings))


def _eye(n: int):
    import scipy.sparse as sp
    return sp.identity(n, format="csr")


def _static(model: LinearModel) -> tuple[dict[str, Any], ...]:
    q = model.static_response(GRAVITY)
    out = []
    for name, lm in model.links.items():
        d = lm.deflection(q)
        if not len(d):
            continue
        trans = [i for i, u in enumerate(lm.units) if u == "m"]
        pick = trans if trans else list(range(len(d)))
        c = max(pick, key=lambda i: abs(d[i]))
        delta = float(d[c])
        force = float(lm.stiffness[c] * delta)
        implied = math.sqrt(GRAVITY / abs(delta)) / (2 * math.pi) \
            if lm.units[c] == "m" and abs(delta) > 1e-9 else None
        out.append({"link": name, "component": lm.components[c], "deflection": delta,
                    "unit": lm.units[c], "force": force, "implied_frequency_hz": implied})
    return tuple(out)
