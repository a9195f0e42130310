"""The ``split_body`` plugin: replace a rigid body by beam-joined segments.

Registered through the entry-point group ``lumpgraph.plugins`` (see
pyproject.toml). Its parameters are declared in
:mod:`plugins.split_body.params`; the graph transform is
:func:`plugins.split_body.split.split_body`; its own analysis (the vehicle's
modes with the body's bending and torsion picked out, optionally with the
body Craig-Bampton reduced) is :func:`plugins.split_body.analysis.flexible_body_modes`.
"""

from __future__ import annotations

import argparse
from collections.abc import Mapping
from typing import Any

from builder.assembly import Assembly
from builder.errors import InputError, Where
from builder.options import argtype, whole
from builder.quantities import Quantity
from builder.yamlnodes import Node

from .params import PARAMETERS, parse_split_spec
from .split import SplitSpec, split_body

__all__ = ["SplitBodyPlugin", "PLUGIN"]


class SplitBodyPlugin:
    """Split a rigid body into N segments (six DOFs each) joined by N-1 beams."""

    name = "split_body"
    summary = ("split a rigid body into beam-joined segments, so that its bending and "
               "torsion modes appear")
    parameters = PARAMETERS

    def validate(self, fields: Mapping[str, Node], name: str,
                 parameters: Mapping[str, Quantity], where: Where) -> SplitSpec:
        """Check a ``with:`` block (before anything runs); returns the split spec."""
        return parse_split_spec(fields, name, parameters, where)

    def apply(self, assembly: Assembly, spec: SplitSpec) -> Assembly:
        """The new Assembly with the body split."""
        return split_body(assembly, spec)

    def configure_cli(self, parser: argparse.ArgumentParser) -> None:
        """Options of ``lumpgraph plugin split_body FILE``."""
        parser.add_argument("--count", metavar="N", type=argtype(whole, "--count", 1, 10_000),
                            default=30, help="number of vehicle modes (default 30)")
        parser.add_argument("--craig-bampton", metavar="MODES",
                            type=argtype(whole, "--craig-bampton", 1, 10_000),
                            help="also reduce the body to MODES fixed-interface modes "
                                 "and compare")
        parser.add_argument("--chain", metavar="NAME",
                            help="the split body to analyse (default: the first)")

    def analyse(self, model: Any, **options: Any) -> Any:
        """The flexible body's modes in the vehicle (a FlexibleBodyModes result).

        Options: ``count``, ``craig_bampton`` (modes), ``chain``; a reduced
        model (a depth) is analysed in full, since the body's own modes live
        in the condensed DOFs.
        """
        from builder.reduce import full_model

        from .analysis import flexible_body_modes
        count = options.get("count")
        count = 30 if count is None else int(count)
        cb = options.get("craig_bampton")
        if count < 1 or (cb is not None and cb < 1):
            raise InputError("--count and --craig-bampton must be positive whole numbers",
                             Where(field="--count"))
        return flexible_body_modes(full_model(model), chain=options.get("chain"),
                                   count=count, craig_bampton_modes=cb)

    def tables(self, assembly: Any, model: Any, **options: Any) -> list[tuple[str, Any]]:
        """The flexible body's modes, for the report."""
        from builder.plugin import Table
        from builder.reduce import full_model

        from .analysis import flexible_body_modes
        result = flexible_body_modes(full_model(model), count=30)
        rows = tuple((i + 1, float(f), lab, "yes" if el else "")
                     for i, (f, lab, el) in enumerate(zip(result.frequencies_hz, result.labels,
                                                          result.elastic)))
        title = f"Flexible body {result.chain}: vehicle modes ({result.segments} segments)"
        return [(title, Table(title, ("mode", "f (Hz)", "label", "body elastic"), rows,
                              result.notes))]

    def check_summary(self, model: Any, eigenvalues: Any, shapes: Any) -> list[dict[str, Any]]:
        """For ``lumpgraph check``: each split body's first torsion and bending (Hz)."""
        from .summary import check_summary
        return check_summary(model, eigenvalues, shapes)

    def label_units(self, assembly: Assembly, spec: SplitSpec) -> list[Any]:
        """The split body's segments as one label unit, named as the block."""
        from .labels import split_units
        return split_units(assembly, spec)


PLUGIN = SplitBodyPlugin()
