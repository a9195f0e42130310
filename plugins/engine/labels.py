"""Mode-label words of the powertrain: its motion in crank-aligned axes."""

from __future__ import annotations

from builder.analysis.labels import LabelUnit, Motion, UnitMotion, rigid_motion

from . import analysis as an
from .params import EngineSpec

__all__ = ["PowertrainUnit"]

_WORDS = {"crank x": "motion along the crank", "crank y": "motion across the crank",
          "z": "bounce", "crank rx": "roll about the crank", "crank ry": "pitch",
          "crank rz": "yaw"}
_KEYS = ("crank x", "crank y", "z", "crank rx", "crank ry", "crank rz")


class PowertrainUnit(LabelUnit):
    """A powertrain block's body, named "powertrain" (with the block's name when a
    file has several), its motion in crank-aligned axes when the model keeps its
    six DOFs (in global words otherwise)."""

    subsystem = True

    def __init__(self, spec: EngineSpec, several: bool):
        super().__init__(f"powertrain {spec.name}" if several else "powertrain", (spec.name,))
        self.T = an.axes_transform(an.crank_aligned_axes(spec.crank_axis))
        self.Mp = self.T @ an.rigid_mass_matrix(spec.mass, spec.inertia) @ self.T.T

    def describe(self, bodies: UnitMotion) -> Motion | None:
        b = bodies[0]
        q, observed = b.six()
        if not observed.all():
            return rigid_motion(b.dofs, b.energy, b.value)
        p = self.T @ q
        return rigid_motion(_KEYS, p * (self.Mp @ p), p, _WORDS)
