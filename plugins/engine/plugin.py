"""The engine plugin object: the hooks the core calls."""

from __future__ import annotations

import argparse
from collections.abc import Mapping
from typing import Any

from builder.errors import InputError, Where

from .build import add_engine, engine_specs
from .figures import plot_campbell
from .labels import PowertrainUnit
from .params import PARAMETERS, EngineSpec, parse_engine_spec
from .report import EngineReports, engine_report

__all__ = ["EnginePlugin", "PLUGIN"]


class EnginePlugin:
    """A powertrain on elastic mounts: decoupling, torque roll axis, idle shake."""

    name = "engine"
    summary = ("a powertrain as one rigid body on elastic mounts; decoupling table, torque "
               "roll axis, idle-shake margin, roll-torque mount forces, rate scaling")
    parameters = PARAMETERS

    def validate(self, fields: Mapping[str, Any], name: str, parameters: Mapping[str, Any],
                 where: Where) -> EngineSpec:
        """Check a ``with:`` block (before anything runs); returns the engine spec."""
        return parse_engine_spec(fields, name, parameters, where)

    def apply(self, assembly: Any, spec: EngineSpec) -> Any:
        """The new Assembly with the powertrain and its mounts added."""
        return add_engine(assembly, spec)

    def configure_cli(self, parser: argparse.ArgumentParser) -> None:
        from builder.options import argtype, choice, output_file, quantity

        parser.add_argument("--axes", type=argtype(choice, "--axes", ("crank", "principal")),
                            default="crank", metavar="AXES",
                            help="axes of the decoupling table: crank (default) or principal")
        parser.add_argument("--target-roll", metavar="HZ",
                            type=argtype(quantity, "--target-roll", "frequency", high=1000.0,
                                         unit="Hz"),
                            help="target roll frequency for mount-rate scaling (Hz)")
        parser.add_argument("--target-bounce", metavar="HZ",
                            type=argtype(quantity, "--target-bounce", "frequency", high=1000.0,
                                         unit="Hz"),
                            help="target bounce frequency for mount-rate scaling (Hz)")
        parser.add_argument("--detail", action="store_true",
                            help="also print the energy matrices (mode x direction), the axis "
                            "table and the idle-shake table")
        parser.add_argument("--plot", metavar="OUT.png",
                            type=argtype(output_file, "--plot", (".png",)),
                            help="write the order plot (PNG)")

    def label_units(self, assembly: Any, spec: EngineSpec) -> list[Any]:
        """The powertrain as one label unit, in its crank-aligned words (roll = about
        the crankshaft), e.g. ``"powertrain roll about the crank with bounce"``."""
        return [PowertrainUnit(spec, len(engine_specs(assembly)) > 1)]

    def analyse(self, model: Any, **options: Any) -> Any:
        """An :class:`EngineReport` per engine block (a list with ``table()``)."""
        assembly = options.get("assembly")
        if assembly is None:
            raise InputError("the engine analyses need the assembly")
        roll, bounce = options.get("target_roll"), options.get("target_bounce")
        if (roll is None) != (bounce is None):
            raise InputError("give both --target-roll and --target-bounce")
        for v, flag in ((roll, "--target-roll"), (bounce, "--target-bounce")):
            if v is not None and not v > 0:
                raise InputError(f"must be a positive frequency in Hz, got {v}",
                                 Where(field=flag))
        reports = [engine_report(s, model, options.get("axes", "crank"),
                                 target_roll_hz=roll, target_bounce_hz=bounce,
                                 detail=bool(options.get("detail")))
                   for s in engine_specs(assembly)]
        if options.get("plot"):
            for s in engine_specs(assembly):
                path = options["plot"]
                if len(reports) > 1:
                    stem, _, ext = path.rpartition(".")
                    path = f"{stem}_{s.name}.{ext}" if stem else f"{path}_{s.name}"
                plot_campbell(s, path)
        return EngineReports(reports)

    def tables(self, assembly: Any, model: Any, **options: Any) -> list[tuple[str, Any]]:
        """(title, Table) pairs of every engine block, for the report."""
        out = []
        for s in engine_specs(assembly):
            for t in engine_report(s, model).tables:
                out.append((t.title, t))
        return out


PLUGIN = EnginePlugin()
