"""Mode labels of a seat and its occupant, in words (the plugin's ``label_units``).

A seat block ``NAME`` adds three label units (see :mod:`plugins.seat.build`
for the bodies):

- ``NAME seat``: the seat frame on its rails (fore-aft, bounce, roll, pitch,
  yaw, as any rigid body);
- ``NAME cushion``: the cushion surface (bounce);
- ``NAME``: the occupant, one person although the model splits it into a
  fore-aft mass and a vertical chain of segments. Fore-aft when the fore-aft
  mass holds most of the occupant's kinetic energy; otherwise
  ``whole-body vertical`` when every segment that moves moves in phase, or
  the two segments that move most against each other:
  ``driver head against upper torso``.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from builder.analysis.labels import LabelUnit, Motion, RigidUnit, UnitMotion

from .build import SeatSpec, seat_names

__all__ = ["seat_units", "OccupantUnit"]

#: Words of the occupant models' segment names.
SEGMENT_WORDS = {"thighs_pelvis": "pelvis and thighs", "lower_torso": "lower torso",
                 "upper_torso": "upper torso", "upper_body": "upper body",
                 "lower_body": "lower body", "head": "head", "body": "body"}


def seat_units(assembly: Any, spec: SeatSpec) -> list[LabelUnit]:
    """The label units of one seat block (seat frame, cushion, occupant)."""
    names = seat_names(spec)
    frame = RigidUnit(f"{spec.name} seat", names.frame, subsystem=True)
    cushion = RigidUnit(f"{spec.name} cushion", names.surface, subsystem=True)
    segments = {body: SEGMENT_WORDS.get(seg, seg.replace("_", " "))
                for seg, body in names.segments.items()}
    occupant = OccupantUnit(spec.name, names.occupant_x, segments)
    return [frame, cushion, occupant]


class OccupantUnit(LabelUnit):
    """The occupant: its fore-aft mass and its vertical segments, named as one person."""

    subsystem = True

    def __init__(self, name: str, fore_aft: str, segments: dict[str, str]):
        super().__init__(name, (fore_aft, *segments))
        self.segment_words = list(segments.values())

    def describe(self, bodies: UnitMotion) -> Motion | None:
        fore_aft, segments = bodies[0], bodies[1:]
        e_x = float(fore_aft.energy.sum())
        e = np.array([float(s.energy.sum()) for s in segments])
        z = np.array([float(s.value[0]) if s.observed.all() else 0.0 for s in segments])
        if e_x <= 0 and e.sum() <= 0:
            return None
        if e_x >= e.sum():
            sign = float(np.sign(fore_aft.value[0]) or 1.0) if fore_aft.value.size else 1.0
            more = "fore-aft" + (" with whole-body vertical" if e.sum() >= 0.05 * e_x else "")
            return Motion("fore-aft", "x", sign, more=more)
        moving = e >= 0.05 * e.max()
        signs = np.sign(z[moving])
        lead = int(np.argmax(e))
        extra = " with fore-aft" if e_x >= 0.05 * e.sum() else ""
        if np.all(signs == signs[0]):
            more = f"whole-body vertical, {self.segment_words[lead]} most{extra}"
            return Motion("whole-body vertical", "z", float(np.sign(z[lead]) or 1.0),
                          more=more)
        against = [k for k in np.argsort(-e) if moving[k] and np.sign(z[k]) != np.sign(z[lead])]
        words = f"{self.segment_words[lead]} against {self.segment_words[int(against[0])]}"
        return Motion(words, more=words + extra)
