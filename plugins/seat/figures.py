"""All seat figures of one assembly at once: for the command line and the report.

:func:`seat_figures` gathers, for every seat of an assembly, the occupant
model's rigid-seat response, the random-road seat figures, the bump figures
and (with a stroke) the cushion tuning, as one :class:`SeatFigures` with
``to_dict()``, ``table()`` and ``report_tables()`` (title, rows) pairs.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from .analysis import (
    CushionTuning,
    OccupantResponse,
    SeatBump,
    SeatRide,
    occupant_response,
    seat_bump,
    seat_ride,
    tune_cushion,
)
from .build import SeatSpec, seat_names

__all__ = ["SeatFigures", "SeatFiguresList", "seat_figures"]


@dataclass(frozen=True, eq=False)
class SeatFigures:
    """Figures of one seat (SI; see :mod:`plugins.seat.analysis`)."""

    spec: SeatSpec
    occupant: OccupantResponse
    ride: SeatRide | None
    bump: SeatBump | None
    tuning: CushionTuning | None

    def to_dict(self) -> dict:
        return {
            "seat": self.spec.name,
            "occupant": self.occupant.to_dict(),
            "ride": None if self.ride is None else self.ride.to_dict(),
            "bump": None if self.bump is None else self.bump.to_dict(),
            "cushion_tuning": None if self.tuning is None else self.tuning.to_dict(),
        }

    def table(self) -> str:
        parts = [f"== seat {self.spec.name} ==", self.occupant.table()]
        for part in (self.ride, self.bump, self.tuning):
            if part is not None:
                parts.append(part.table())
        return "\n\n".join(parts)

    def report_tables(self) -> list[tuple[str, list[list[Any]]]]:
        """(title, rows with the header first) for the HTML report."""
        s = self.spec.name
        occ = self.occupant
        rows: list[tuple[str, list[list[Any]]]] = [(
            f"Seat {s}: occupant on a rigid seat",
            [["quantity", "value", "unit"],
             ["model", occ.model.title, ""],
             ["body mass", occ.model.body_mass, "kg"],
             ["seated (static apparent) mass", occ.model.seated_mass, "kg"],
             ["apparent mass resonance", occ.resonance_hz, "Hz"],
             ["peak apparent mass", occ.resonance_apparent_mass, "kg"],
             *([["seat-to-head transmissibility peak", occ.head_peak, "-"],
                ["at", occ.head_resonance_hz, "Hz"]] if occ.head_peak is not None else [])])]
        if self.ride is not None:
            r = self.ride
            rows.append((f"Seat {s}: class {r.road_class} road at {r.speed_m_s * 3.6:.3g} km/h",
                         [["quantity", "axis", "value", "unit"], *r.rows(),
                          ["ISO 2631-1 comfort", "xyz", ", ".join(r.comfort.reactions), ""]]))
        if self.bump is not None:
            b = self.bump
            rows.append((f"Seat {s}: {b.shape} {b.height_m * 1000:.0f} mm x {b.length_m:.2f} m at "
                         f"{b.speed_m_s * 3.6:.3g} km/h",
                         [["quantity", "value", "unit"], *b.rows()]))
        if self.tuning is not None:
            rows.append((f"Seat {s}: cushion tuning (stroke {self.tuning.stroke_m * 1000:.0f} mm)",
                         [["quantity", "start", "optimum", "unit"], *self.tuning.rows()]))
        return rows


class SeatFiguresList(list):
    """The figures of several seats; ``table()``, ``to_dict()`` and ``report_tables()``
    join theirs."""

    def table(self) -> str:
        return "\n\n".join(f.table() for f in self) or "no seat in this model"

    def to_dict(self) -> dict:
        return {"seats": [f.to_dict() for f in self]}

    def report_tables(self) -> list[tuple[str, list[list[Any]]]]:
        return [pair for f in self for pair in f.report_tables()]


def seat_figures(assembly: Any, model: Any, spec: SeatSpec, *, road_class: str | None = "C",
                 speed_m_s: float = 60 / 3.6, tracks: str = "coherent",
                 bump_speed_m_s: float | None = None, bump_height_m: float = 0.05,
                 bump_length_m: float = 0.5, bump_shape: str = "bump",
                 stroke_m: float | None = None,
                 points: int = 1500) -> SeatFigures:
    """Figures of the seat ``spec`` in ``model`` (assembled from ``assembly``).

    ``road_class=None`` skips the road figures; ``bump_speed_m_s`` None skips
    the bump (0.5 of the road speed is a common choice, no source); a
    ``stroke_m`` (m) adds the cushion tuning on the same road.
    """
    names = seat_names(spec)
    occ = occupant_response(spec.occupant, spec.occupant_mass)
    ride = tuning = bump = None
    if road_class is not None and model.inputs:
        ride = seat_ride(model, names, road_class, speed_m_s, assembly=assembly, tracks=tracks,
                         points=points)
        if stroke_m is not None:
            tuning = tune_cushion(assembly, names, road_class, speed_m_s, stroke_m,
                                  tracks=tracks)
    if bump_speed_m_s is not None and model.inputs:
        bump = seat_bump(model, names, bump_speed_m_s, bump_height_m, bump_length_m,
                         shape=bump_shape, assembly=assembly)
    return SeatFigures(spec, occ, ride, bump, tuning)
