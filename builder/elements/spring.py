"""``spring``: an axial spring and viscous damper between two points."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..errors import InputError, Where
from ..quantities import Quantity
from ..yamlnodes import Node
from . import ElementMatrices, parse_axis, register_link_type

__all__ = ["Spring", "spring_props"]


def spring_props(axis: np.ndarray, stiffness: float, damping: float = 0.0,
                 loss_factor: float = 0.0) -> dict[str, Any]:
    """Props of a spring: unit axis, stiffness (N/m), damping (N s/m), loss factor (-)."""
    axis = np.asarray(axis, dtype=float)
    return {"axis": axis / np.linalg.norm(axis), "stiffness": float(stiffness),
            "damping": float(damping), "loss_factor": float(loss_factor)}


class Spring:
    name = "spring"
    keys = ("axis", "stiffness", "damping", "loss_factor")
    required = ("stiffness",)

    def parse(self, fields: dict[str, Node], a: Any, b: Any,
              parameters: Mapping[str, Quantity], where: Where) -> dict[str, Any]:
        if "axis" in fields:
            axis = parse_axis(fields["axis"], parameters)
        else:
            d = np.asarray(b.at) - np.asarray(a.at)
            if np.linalg.norm(d) < 1e-9:
                raise InputError("the two ends are at the same point: give an axis", where)
            axis = d
        k = fields["stiffness"].quantity("stiffness", parameters, "nonnegative")
        c = fields["damping"].quantity("damping", parameters, "nonnegative") \
            if "damping" in fields else 0.0
        eta = fields["loss_factor"].quantity("dimensionless", parameters, "nonnegative") \
            if "loss_factor" in fields else 0.0
        return spring_props(axis, k, c, eta)

    def matrices(self, link: Any) -> ElementMatrices:
        p = link.props
        n = p["axis"]
        D = np.zeros((1, 12))
        D[0, 0:3], D[0, 6:9] = -n, n
        return ElementMatrices.from_components(
            (link.a.at, link.b.at), D, np.array([p["stiffness"]]), np.array([p["damping"]]),
            p["loss_factor"], ("axial",), ("m",))


register_link_type(Spring())
