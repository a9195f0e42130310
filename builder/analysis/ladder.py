"""The model ladder: every depth against the full model.

For each depth the reduced model's modes are expanded to the full DOFs
(through the Guyan transformation) and matched to the full model's modes by
MAC; the table gives each mode's frequency, the best-matching full mode, the
MAC and the frequency error. A depth whose modes match with MAC near 1 and
small errors is an adequate simpler model for those modes.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..assembly import Assembly, Depth
from ..errors import InputError, Where
from ..formatting import count, percent
from ..linear import LinearModel
from ..reduce import reduce_to_depth
from .labels import vehicle_body
from .modes import ModeSet, compute_modes, mac_matrix

__all__ = ["Rung", "Ladder", "compute_ladder", "proposed_depths", "REPRODUCED_ERROR",
           "REPRODUCED_MAC"]

# a depth reproduces a full-model mode when it matches it within both
# (common practice in test-analysis correlation, no source for the exact values)
REPRODUCED_ERROR = 0.05
REPRODUCED_MAC = 0.9


@dataclass(frozen=True, eq=False)
class Rung:
    """One depth: its modes and, per mode, the matching full mode, MAC and error."""

    depth: str
    dofs: tuple[str, ...]
    modes: ModeSet
    match: tuple[int, ...]          # full-model mode number matched (1-based), 0 if none
    mac: tuple[float, ...]
    error: tuple[float, ...]        # relative frequency error vs the matched full mode

    def worst_error(self) -> int | None:
        """Index of the mode with the largest absolute frequency error (None: no modes)."""
        return max(range(len(self.error)), key=lambda i: abs(self.error[i]), default=None)

    def lowest_mac(self) -> int | None:
        """Index of the mode with the lowest MAC (None: no modes)."""
        return min(range(len(self.mac)), key=lambda i: self.mac[i], default=None)

    def reproduced(self, error: float = REPRODUCED_ERROR,
                   mac: float = REPRODUCED_MAC) -> tuple[int, ...]:
        """Full-model mode numbers (1-based) this depth matches within ``error``
        (relative frequency error) and at or above ``mac``, each once."""
        return tuple(sorted({k for k, c, e in zip(self.match, self.mac, self.error,
                                                  strict=True)
                             if k and c >= mac and abs(e) <= error}))

    def lead(self) -> str:
        """One line: the depth, its size, how many full modes it reproduces, its worst
        frequency error (with the mode) and its lowest MAC."""
        head = f"depth {self.depth}: {count(len(self.dofs), 'DOF')} ({', '.join(self.dofs)})"
        w, lo = self.worst_error(), self.lowest_mac()
        if w is None or lo is None:
            return f"{head}: no modes"
        n = len(self.reproduced())
        worst = self.modes.modes[w]
        low = self.modes.modes[lo]
        return (f"{head}\n  {n} of {count(len(self.mac), 'mode')} reproduced (within "
                f"{percent(REPRODUCED_ERROR, 0)}, MAC {REPRODUCED_MAC:g}); worst error "
                f"{percent(self.error[w], 2, signed=True)} on mode {worst.number} "
                f"({worst.frequency_hz:.3f} Hz, {worst.label}); lowest MAC "
                f"{self.mac[lo]:.3f} on mode {low.number}")

    def to_dict(self) -> dict[str, Any]:
        return {"depth": self.depth, "dof_count": len(self.dofs), "dofs": list(self.dofs),
                "modes": [{"number": m.number, "frequency_hz": m.frequency_hz,
                           "label": m.label, "full_mode": k, "mac": c,
                           "frequency_error": e}
                          for m, k, c, e in zip(self.modes.modes, self.match, self.mac,
                                                self.error)]}


@dataclass(frozen=True, eq=False)
class Ladder:
    full: ModeSet
    rungs: tuple[Rung, ...]
    proposed: bool
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {"model": self.full.model.name, "proposed": self.proposed,
                "full": {"dof_count": self.full.model.n,
                         "frequencies_hz": self.full.frequencies_hz.tolist()},
                "depths": [r.to_dict() for r in self.rungs], "notes": list(self.notes)}

    def table(self, detail: bool = False) -> str:
        """Per depth its lead line (size, modes reproduced, worst frequency error,
        lowest MAC); with ``detail`` then each mode against its full-model match."""
        lines = [f"full model: {count(self.full.model.n, 'DOF')}"
                 + (" (depths proposed by lumpgraph: the file has none)" if self.proposed
                    else "")]
        for r in self.rungs:
            lines.append("")
            lines.append(r.lead())
            if not detail:
                continue
            lines.append(f"  {'mode':>4} {'f (Hz)':>8} {'full':>5} {'f full':>8} {'MAC':>6} "
                         f"{'error':>9}  label")
            for m, k, c, e in zip(r.modes.modes, r.match, r.mac, r.error):
                ff = self.full.modes[k - 1].frequency_hz if k else float("nan")
                lines.append(f"  {m.number:>4} {m.frequency_hz:8.3f} {k:>5} {ff:8.3f} "
                             f"{c:6.3f} {percent(e, 2, signed=True):>9}  {m.label}")
        if not detail and self.rungs:
            lines.append("")
            lines.append("each mode against its full-model match: --detail")
        lines.extend(f"note: {n}" for n in self.notes)
        return "\n".join(lines)


def proposed_depths(assembly: Assembly) -> dict[str, Depth]:
    """A ladder for a file without ``depths:``: the vehicle body's bounce, its
    bounce and pitch, the body with everything on the road, then (a split
    body) all its segments with everything on the road.

    The vehicle body is :func:`~builder.analysis.labels.vehicle_body`: the
    heaviest body that no plugin added as a sub-system (a powertrain or a seat
    never counts), the segments of a split body counting together. A split
    body's rigid depths keep the segment nearest the body's cg.
    """
    unit = vehicle_body(assembly)
    if unit is None:
        return {}
    members = [assembly.bodies[b] for b in unit.bodies]
    cg = sum(b.mass * b.cg for b in members) / sum(b.mass for b in members)
    main = min(members, key=lambda b: float(np.linalg.norm(b.cg - cg)))
    road_bodies = [lk.a.node if lk.b.kind == "road" else lk.b.node
                   for lk in assembly.links.values()
                   if (lk.a.kind == "road") != (lk.b.kind == "road")]
    wheels = [f"{b}.{d}" for b in dict.fromkeys(road_bodies) if b in assembly.bodies
              and b not in unit.bodies for d in assembly.bodies[b].dofs]
    labels = assembly.dof_labels
    out: dict[str, Depth] = {}

    def add(name: str, keep: list[str]) -> None:
        keep = [k for k in keep if k in labels]
        if keep and len(keep) < len(labels) and all(set(keep) != set(d.keep)
                                                     for d in out.values()):
            out[name] = Depth(name, tuple(keep), (), Where(field=f"proposed {name}"))

    add("main_bounce", [f"{main.name}.z"])
    add("main_bounce_pitch", [f"{main.name}.z", f"{main.name}.ry"])
    add("main_and_wheels", [f"{main.name}.{d}" for d in main.dofs] + wheels)
    if len(members) > 1:
        add("main_flexible_and_wheels",
            [f"{b.name}.{d}" for b in members for d in b.dofs] + wheels)
    return out


def compute_ladder(model: LinearModel, depths: dict[str, Depth] | None = None) -> Ladder:
    """Modes of every depth (the file's, or proposed ones) matched to the full model.

    A proposed depth that cannot be condensed (the DOFs it leaves out can move
    with it held: a mechanism) is left out, with a note; a file's depth is an
    error then.
    """
    asm = model.assembly
    proposed = not (depths or asm.depths)
    depths = depths or asm.depths or proposed_depths(asm)
    full = compute_modes(model)
    # shapes compared on the unreduced DOFs (a jointed model's body DOFs: its parent)
    full_shapes = np.asarray(model.expansion @ full.shapes) if model.parent is not None \
        else full.shapes
    rungs = []
    notes = []
    for depth in depths.values():
        try:
            reduced = reduce_to_depth(model, depth)
        except InputError as err:
            if not proposed:
                raise
            notes.append(f"proposed depth {depth.name} left out: {err.reason}")
            continue
        ms = compute_modes(reduced)
        expanded = np.asarray(reduced.expansion @ ms.shapes) if reduced.parent is not None \
            else ms.shapes
        macs = mac_matrix(expanded, full_shapes) if len(ms) else np.zeros((0, 0))
        match, mv, err = [], [], []
        for i, m in enumerate(ms.modes):
            k = int(np.argmax(macs[i])) if macs.shape[1] else -1
            match.append(k + 1)
            mv.append(float(macs[i, k]) if k >= 0 else 0.0)
            ff = full.modes[k].frequency_hz if k >= 0 else float("nan")
            err.append((m.frequency_hz - ff) / ff if ff > 0 else 0.0)
        rungs.append(Rung(depth.name, reduced.dofs, ms, tuple(match), tuple(mv), tuple(err)))
    return Ladder(full, tuple(rungs), proposed, tuple(notes))
