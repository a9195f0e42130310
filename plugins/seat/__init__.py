"""Seat and occupant plugin: a seat on rails with a published seated-human model.

In an assembly file::

    plugins:
      - use: seat
        name: driver
        with:
          body: body
          rails: [[-1.05, 0.25, 0.30], [-1.05, 0.50, 0.30], [-1.45, 0.25, 0.30]]
          cushion_stiffness: 60 kN/m
          occupant: boileau_rakheja_1998
          occupant_mass: 75 kg

adds the seat frame on its rails, the cushion, the occupant's segments and
the sensors ``driver_seat_z``, ``driver_seat_x``, ``driver_floor_z``,
``driver_floor_x``, ``driver_head_z`` (models with a head) and
``driver_travel``. See :mod:`plugins.seat.build` for the layout,
:mod:`plugins.seat.occupants` for the occupant models and
:mod:`plugins.seat.analysis` for the figures;
``lumpgraph plugin seat FILE --road C --speed "60 km/h"`` prints them.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import fields
from typing import Any

from builder.errors import InputError, Where
from builder.plugin import Parameter

from .build import SeatSpec, add_seat
from .occupants import OCCUPANT_MODELS

__all__ = ["PARAMETERS", "Parameter", "SeatPlugin", "PLUGIN", "parse_seat_spec", "seat_specs"]


_D = {f.name: f.default for f in fields(SeatSpec)}

#: The plugin's ``with:`` fields.
PARAMETERS: tuple[Parameter, ...] = (
    Parameter("body", "name", "body", "body the seat rails are fixed to"),
    Parameter("rails", "points", None,
              "rail fixing points on that body: a list of [x, y, z], m (required)"),
    Parameter("surface_height", "length", _D["surface_height"],
              "height of the cushion surface above the mean rail point, m"),
    Parameter("frame_mass", "mass", _D["frame_mass"], "seat frame mass, kg"),
    Parameter("rail_stiffness_x", "stiffness", _D["rail_stiffness_x"],
              "fore-aft stiffness of all rails together, N/m"),
    Parameter("rail_stiffness_z", "stiffness", _D["rail_stiffness_z"],
              "vertical stiffness of all rails together, N/m"),
    Parameter("rail_damping_x", "damping", _D["rail_damping_x"],
              "fore-aft damping of all rails together, N s/m"),
    Parameter("rail_damping_z", "damping", _D["rail_damping_z"],
              "vertical damping of all rails together, N s/m"),
    Parameter("cushion_mass", "mass", _D["cushion_mass"],
              "moving mass of the cushion top, kg"),
    Parameter("cushion_stiffness", "stiffness", _D["cushion_stiffness"],
              "vertical cushion stiffness (the seat suspension), N/m"),
    Parameter("cushion_damping", "damping", _D["cushion_damping"],
              "vertical cushion damping, N s/m"),
    Parameter("cushion_stiffness_x", "stiffness", _D["cushion_stiffness_x"],
              "fore-aft stiffness of cushion and backrest on the occupant, N/m"),
    Parameter("cushion_damping_x", "damping", _D["cushion_damping_x"],
              "fore-aft damping of cushion and backrest, N s/m"),
    Parameter("occupant", "choice", _D["occupant"],
              "occupant model: " + ", ".join(OCCUPANT_MODELS)),
    Parameter("occupant_mass", "mass", _D["occupant_mass"],
              "occupant body mass, kg (the model is scaled to it)"),
)

_POSITIVE = {"frame_mass", "occupant_mass", "surface_height"}


def parse_seat_spec(fields_: Mapping[str, Any], name: str,
                    parameters: Mapping[str, Any] | None, where: Where) -> SeatSpec:
    """A validated :class:`SeatSpec` from a ``with:`` block's fields (Nodes)."""
    known = {p.name: p for p in PARAMETERS}
    for key, node in fields_.items():
        if key not in known:
            raise node.error(f'unknown parameter "{key}" of seat '
                             f"(parameters: {', '.join(known)})")
    if "rails" not in fields_:
        raise InputError('seat needs "rails": the rail fixing points [x, y, z] on the body',
                         where)
    values: dict[str, Any] = {"body": "body"}
    for key, node in fields_.items():
        p = known[key]
        if p.dimension == "name":
            values[key] = node.text("a body name")
        elif p.dimension == "choice":
            values[key] = node.choice(OCCUPANT_MODELS)
        elif p.dimension == "points":
            items = node.items_list("a list of points [x, y, z]")
            if items and not items[0].is_list:      # a single point written flat
                items = [node]
            if not items:
                raise node.error("give at least one rail point")
            values[key] = tuple(tuple(i.vector("length", parameters)) for i in items)
        else:
            sign = "positive" if key in _POSITIVE else "nonnegative"
            values[key] = node.quantity(p.dimension, parameters, sign)
    places = {key: node.where for key, node in fields_.items()}
    return SeatSpec(name=name, where=where, places=places, **values)


def _suffixed(path: str, name: str) -> str:
    stem, dot, ext = path.rpartition(".")
    return f"{stem}_{name}.{ext}" if dot else f"{path}_{name}"


def _assembly_of(model: Any) -> Any:
    current = model
    while current is not None:
        asm = getattr(current, "assembly", None)
        if asm is not None:
            return asm
        current = getattr(current, "parent", None)
    return None


def seat_specs(assembly: Any) -> list[SeatSpec]:
    """The :class:`SeatSpec` of every seat block an assembly went through.

    Looks in ``assembly.plugins`` for the validated specs (the plugin uses
    hold what :meth:`SeatPlugin.validate` returned).
    """
    out: list[SeatSpec] = []
    for use in getattr(assembly, "plugins", ()) or ():
        candidates = [use]
        if isinstance(use, Mapping):
            candidates += list(use.values())
        elif hasattr(use, "__dict__") or hasattr(use, "__dataclass_fields__"):
            candidates += [getattr(use, f, None) for f in
                           getattr(use, "__dataclass_fields__", vars(use))]
        out += [c for c in candidates if isinstance(c, SeatSpec) and c not in out]
    return out


class SeatPlugin:
    """A seat on rails with cushion and a published occupant model; seat comfort figures."""

    name = "seat"
    summary = ("a seat on rails with a cushion and a published seated-human model; "
               "apparent mass, SEAT value, ISO 2631-1 comfort at the seat, cushion tuning")
    parameters = PARAMETERS

    def validate(self, fields: Mapping[str, Any], name: str, parameters: Mapping[str, Any],
                 where: Where) -> SeatSpec:
        """Check a ``with:`` block (before anything runs); returns the seat spec."""
        return parse_seat_spec(fields, name, parameters, where)

    def apply(self, assembly: Any, spec: SeatSpec) -> Any:
        """The new Assembly with the seat and occupant added."""
        return add_seat(assembly, spec)

    def configure_cli(self, parser: Any) -> None:
        """Options of ``lumpgraph plugin seat FILE`` beside --road and --speed."""
        from builder.options import argtype, choice, output_file
        from builder.options import quantity as read_quantity

        def quantity(dimension: str, option: str) -> Any:
            return argtype(read_quantity, option, dimension)

        parser.add_argument("--tracks", metavar="MODEL",
                            type=argtype(choice, "--tracks",
                                         ("identical", "independent", "coherent")),
                            help="left and right tracks: identical, independent or coherent "
                                 "(default)")
        parser.add_argument("--bump-speed", dest="bump_speed_m_s", metavar="V",
                            type=quantity("speed", "--bump-speed"),
                            help='speed over the bump (default "30 km/h")')
        parser.add_argument("--bump-height", dest="bump_height_m", metavar="H",
                            type=quantity("length", "--bump-height"),
                            help='half-sine bump height (default "50 mm")')
        parser.add_argument("--bump-length", dest="bump_length_m", metavar="L",
                            type=quantity("length", "--bump-length"),
                            help='bump length (default "0.5 m")')
        parser.add_argument("--bump-shape", dest="bump_shape", metavar="SHAPE",
                            type=argtype(choice, "--bump-shape", ("bump", "pothole", "step")),
                            help="road event: bump (default), pothole or step")
        parser.add_argument("--no-bump", dest="no_bump", action="store_true", default=None,
                            help="leave out the bump figures")
        parser.add_argument("--stroke", dest="stroke_m", metavar="S",
                            type=quantity("length", "--stroke"),
                            help='tune the cushion for the road, keeping 3 x RMS travel '
                                 'within this stroke (e.g. "30 mm")')
        parser.add_argument("--plot", dest="plot", metavar="OUT.png",
                            type=argtype(output_file, "--plot", (".png",)),
                            help="write the occupant's apparent mass and seat-to-head "
                                 "transmissibility plot (one file per seat: NAME added)")

    def analyse(self, model: Any, **options: Any) -> Any:
        """Seat figures of every seat in the model (a list of SeatFigures; each has
        ``table()``). ``options`` go to :func:`plugins.seat.figures.seat_figures`
        (default: class C road at 60 km/h, bump at 30 km/h); ``no_bump=True``
        leaves the bump out; ``plot=PATH`` writes the occupant plot."""
        from .figures import SeatFiguresList, seat_figures

        assembly = options.pop("assembly", None) or _assembly_of(model)
        plot = options.pop("plot", None)
        if options.pop("no_bump", None):
            options["bump_speed_m_s"] = None
        else:
            options.setdefault("bump_speed_m_s", 30 / 3.6)
        specs = seat_specs(assembly)
        result = SeatFiguresList([seat_figures(assembly, model, spec, **options)
                                  for spec in specs])
        for figures in result:
            if plot:
                path = plot if len(result) == 1 else _suffixed(plot, figures.spec.name)
                figures.occupant.plot(path)
        return result

    def label_units(self, assembly: Any, spec: SeatSpec) -> list[Any]:
        """The seat frame, the cushion and the occupant as label units, in words
        (``driver seat fore-aft``, ``driver whole-body vertical``)."""
        from .labels import seat_units
        return seat_units(assembly, spec)

    def tables(self, assembly: Any, model: Any, **options: Any) -> list[tuple[str, Any]]:
        """(title, rows) pairs of every seat, for the report."""
        options["assembly"] = assembly
        return self.analyse(model, **options).report_tables()


PLUGIN = SeatPlugin()
