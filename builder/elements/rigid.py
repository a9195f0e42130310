"""``rigid``: the two bodies move as one; merged before assembly."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..errors import InputError, Where
from ..quantities import Quantity
from ..yamlnodes import Node
from . import ElementMatrices, register_link_type

__all__ = ["Rigid"]


class Rigid:
    name = "rigid"
    keys: tuple[str, ...] = ()
    required: tuple[str, ...] = ()

    def parse(self, fields: dict[str, Node], a: Any, b: Any,
              parameters: Mapping[str, Quantity], where: Where) -> dict[str, Any]:
        if a.kind == "road" or b.kind == "road":
            raise InputError("a rigid link cannot end on a road point", where)
        return {}

    def matrices(self, link: Any) -> ElementMatrices:
        raise RuntimeError("rigid links are merged by builder.assembly.merge_rigid_links")


register_link_type(Rigid())
