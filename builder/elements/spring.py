"""``spring``: an axial spring and viscous damper between two points.

The spring acts along the line through end a's point in the direction
``axis`` (default: the line from a to b). End b is taken at the point of
that line nearest to b's given point, so the two end forces are collinear
and the element can carry no moment it cannot react; with the default axis
that is b's point itself. The tool warns when b's point lies more than
1 mm off the line.

Sign: the deflection (and the force k times it) is positive in compression,
the two ends moving towards each other along the line, whichever end is
named a. Where the two ends sit at one point of the line (a zero-length
spring, such as a seat cushion), end b counts as lying on the side of a that
``axis`` points to: positive is end b moving against ``axis`` relative to a.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ..errors import InputError, Where
from ..quantities import Quantity
from ..yamlnodes import Node
from . import ComponentBatch, ElementMatrices, parse_axis, register_link_type

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
        props = spring_props(axis, k, c, eta)
        off = _line_point(np.asarray(a.at), props["axis"], np.asarray(b.at)) - np.asarray(b.at)
        if np.linalg.norm(off) > 1e-3:
            props["warning"] = (f"{where.prefix()}: end b is {1000 * np.linalg.norm(off):.0f} mm "
                                "off the spring's line; it acts on that line")
        return props

    def matrices(self, link: Any) -> ElementMatrices:
        return self.batch([link]).element(0)

    def batch(self, links: Sequence[Any]) -> ComponentBatch:
        """The axial component of each spring (see :class:`ComponentBatch`)."""
        n = np.array([lk.props["axis"] for lk in links], dtype=float).reshape(-1, 3)
        pa = np.array([lk.a.at for lk in links], dtype=float).reshape(-1, 3)
        pb = _line_point(pa, n, np.array([lk.b.at for lk in links], dtype=float).reshape(-1, 3))
        # compression positive: n . (u_b - u_a) when b lies against n from a, else its negative
        sign = np.where(np.einsum("ij,ij->i", n, pb - pa) < -1e-9, 1.0, -1.0)[:, None]
        D = np.zeros((len(links), 1, 12))
        D[:, 0, 0:3], D[:, 0, 6:9] = -sign * n, sign * n
        props = np.array([[lk.props["stiffness"], lk.props["damping"], lk.props["loss_factor"]]
                          for lk in links], dtype=float).reshape(-1, 3)
        return ComponentBatch(pa, pb, D, props[:, :1], props[:, 1:2], props[:, 2],
                              ("axial",), ("m",))


def _line_point(pa: np.ndarray, n: np.ndarray, pb: np.ndarray) -> np.ndarray:
    """The point of the line through pa along n nearest to pb (m); rows for many."""
    return pa + n * np.sum(n * (pb - pa), axis=-1, keepdims=True)


register_link_type(Spring())
