"""The split_body plugin's own analysis: the flexible body's modes in the vehicle.

:func:`flexible_body_modes` computes the vehicle's lowest modes with
:func:`builder.analysis.modes.compute_modes`, so that their labels are those
of ``lumpgraph modes``, and picks the body's elastic modes (bending,
torsion, axial: the modes the body leads with one of them). Optionally the body is first
Craig-Bampton reduced (:func:`~plugins.split_body.reduce.reduce_flexible_body`)
and the result compared with the full model.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from builder.analysis.labels import describe_modes
from builder.analysis.modes import compute_modes
from builder.eigen import lowest_modes, natural_frequencies_hz
from builder.errors import InputError, Where
from builder.linear import LinearModel

from .labels import ELASTIC_FAMILIES, beam_chains
from .reduce import reduce_flexible_body

__all__ = ["FlexibleBodyModes", "flexible_body_modes"]

@dataclass(frozen=True)
class FlexibleBodyModes:
    """Vehicle modes (Hz) with labels; the chain's elastic ones flagged."""

    chain: str
    segments: int
    frequencies_hz: np.ndarray
    labels: tuple[str, ...]
    elastic: tuple[bool, ...]
    reduced_dofs: int | None = None
    reduced_frequencies_hz: np.ndarray | None = None
    notes: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "chain": self.chain, "segments": self.segments,
            "modes": [{"number": i + 1, "frequency_hz": float(f), "label": lab,
                       "body_elastic": el}
                      for i, (f, lab, el) in enumerate(zip(self.frequencies_hz, self.labels,
                                                            self.elastic))],
            "notes": list(self.notes)}
        if self.reduced_frequencies_hz is not None:
            out["craig_bampton"] = {"dofs": self.reduced_dofs,
                                    "frequencies_hz": self.reduced_frequencies_hz.tolist()}
        return out

    def table(self) -> str:
        head = f"{'mode':>4}  {'f (Hz)':>9}"
        if self.reduced_frequencies_hz is not None:
            head += f"  {'CB (Hz)':>9}  {'diff %':>7}"
        lines = [f"flexible body {self.chain}: {self.segments} segments", head + "  label"]
        for i, (f, lab, el) in enumerate(zip(self.frequencies_hz, self.labels, self.elastic)):
            row = f"{i + 1:>4}  {f:9.3f}"
            if self.reduced_frequencies_hz is not None and i < len(self.reduced_frequencies_hz):
                g = self.reduced_frequencies_hz[i]
                diff = 100 * (g / f - 1) if f > 0 else 0.0
                row += f"  {g:9.3f}  {diff:7.3f}"
            elif self.reduced_frequencies_hz is not None:     # the reduced model has fewer
                row += f"  {'-':>9}  {'-':>7}"
            lines.append(f"{row}  {'* ' if el else ''}{lab}")
        lines.append("* the body's own elastic modes")
        lines.extend(f"note: {n}" for n in self.notes)
        return "\n".join(lines)


def flexible_body_modes(model: LinearModel, chain: str | None = None, count: int = 30,
                        craig_bampton_modes: int | None = None) -> FlexibleBodyModes:
    """The lowest ``count`` vehicle modes of a full model with a split body.

    ``chain`` defaults to the first beam chain; ``craig_bampton_modes`` also
    reduces the body to that many fixed-interface modes and compares.
    """
    chains = beam_chains(model.assembly)
    if not chains:
        raise InputError("the model has no split body (no chain of beam links)")
    name = chain or next(iter(chains))
    if name not in chains:
        raise InputError(f'no split body "{name}" (split bodies: {", ".join(chains)})',
                         Where(field="--chain"))
    modes = compute_modes(model, min(count, model.n))
    parts = describe_modes(model, modes.shapes, [m.rigid for m in modes.modes])
    elastic = tuple(bool(p.parts) and p.parts[0].unit.name == name
                    and p.parts[0].motion.family in ELASTIC_FAMILIES for p in parts)
    reduced_f = None
    reduced_n = None
    notes = []
    if any(p.parts and "segment rocking" in p.parts[0].motion.family for p in parts):
        notes.append(f"segment rocking: the segments rotate against the slope of their "
                     f"bending line, a mode of the {len(chains[name])}-segment chain with no "
                     "counterpart in the continuous body (split it finer to follow it)")
    if craig_bampton_modes:
        reduced, cb = reduce_flexible_body(model, name, craig_bampton_modes)
        lam_r, _ = lowest_modes(reduced.K, reduced.M, min(count, reduced.n))
        reduced_f = natural_frequencies_hz(lam_r)
        reduced_n = reduced.n
        if reduced.n < len(modes.frequencies_hz):
            notes.append(f"the Craig-Bampton model has {reduced.n} DOFs: modes above "
                         f"{reduced.n} have no counterpart in it (-)")
        notes.append(f"Craig-Bampton: {len(chains[name])} segments ({6 * len(chains[name])} "
                     f"DOFs) to {reduced.n - (model.n - 6 * len(chains[name]))} DOFs "
                     f"({cb.n_modes} fixed-interface modes up to "
                     f"{cb.frequencies_hz.max():.1f} Hz)")
    return FlexibleBodyModes(name, len(chains[name]), modes.frequencies_hz,
                             tuple(m.label for m in modes.modes), elastic, reduced_n, reduced_f,
                             tuple(notes))
