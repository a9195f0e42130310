"""The ``split_body`` plugin: replace a rigid body by beam-joined segments.

Registered through the entry-point group ``lumpgraph.plugins`` (see
pyproject.toml). Its parameters are declared in
:mod:`plugins.split_body.params`; the graph transform is
:func:`plugins.split_body.split.split_body`; its own analysis (the vehicle's
modes with the body's bending and torsion picked out, optionally with the
body Craig-Bampton reduced) is :func:`plugins.split_body.analysis.flexible_body_modes`.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from builder.assembly import Assembly
from builder.errors import Where
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

    def analyse(self, model: Any, **options: Any) -> Any:
        """The flexible body's modes in the vehicle (a FlexibleBodyModes result)."""
        from .analysis import flexible_body_modes
        return flexible_body_modes(model, **options)

    def label_mode(self, model: Any, shape: Any, energy: Any) -> str | None:
        """A label for modes in which a split body takes part (else None)."""
        from .labels import flexible_body_label
        return flexible_body_label(model, shape, energy)


PLUGIN = SplitBodyPlugin()
