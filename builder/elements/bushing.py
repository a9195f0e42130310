"""``bushing``: three translational and three rotational stiffnesses in a local frame.

The elastic element acts at end a's point: the relative motion of end b's
body and end a's body, both taken at that point, is resolved in the local
frame (rows of ``frame``), ``d = R6 (m_b - m_a)``; so K = D^T diag(k) D with
D = [-R6, R6] and the global stiffness is R^T K_local R, as the format says.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ..errors import Where
from ..quantities import Quantity
from ..yamlnodes import Node
from . import ComponentBatch, ElementMatrices, gap_warning, parse_frame, register_link_type

__all__ = ["Bushing", "bushing_props", "parse_six", "COMPONENTS", "STIFFNESS_DIMS",
           "DAMPING_DIMS"]

COMPONENTS = ("x", "y", "z", "rx", "ry", "rz")
#: Dimensions of the six stiffness and damping components (x, y, z, rx, ry, rz).
STIFFNESS_DIMS = ("stiffness",) * 3 + ("rotational_stiffness",) * 3
DAMPING_DIMS = ("damping",) * 3 + ("rotational_damping",) * 3


def bushing_props(frame: np.ndarray, stiffness: np.ndarray, damping: np.ndarray | None = None,
                  loss_factor: float = 0.0) -> dict[str, Any]:
    """Props of a bushing: frame (3x3, rows = local axes), six stiffnesses
    (N/m x3, N m/rad x3), six dampings (N s/m, N m s/rad), loss factor (-)."""
    return {"frame": np.asarray(frame, dtype=float),
            "stiffness": np.asarray(stiffness, dtype=float).reshape(6),
            "damping": np.zeros(6) if damping is None else np.asarray(damping, float).reshape(6),
            "loss_factor": float(loss_factor)}


def parse_six(node: Node, dims: tuple[str, ...], parameters: Mapping[str, Quantity]) -> np.ndarray:
    """Six components {x, y, z, rx, ry, rz} of a mapping (missing: 0), non-negative, SI."""
    f = node.mapping(COMPONENTS)
    return np.array([f[c].quantity(d, parameters, "nonnegative") if c in f else 0.0
                     for c, d in zip(COMPONENTS, dims)])


class Bushing:
    name = "bushing"
    keys = ("frame", "stiffness", "damping", "loss_factor")
    required = ("stiffness",)

    def parse(self, fields: dict[str, Node], a: Any, b: Any,
              parameters: Mapping[str, Quantity], where: Where) -> dict[str, Any]:
        frame = parse_frame(fields.get("frame"), parameters)
        k = parse_six(fields["stiffness"], STIFFNESS_DIMS, parameters)
        c = parse_six(fields["damping"], DAMPING_DIMS, parameters) if "damping" in fields \
            else np.zeros(6)
        eta = fields["loss_factor"].quantity("dimensionless", parameters, "nonnegative") \
            if "loss_factor" in fields else 0.0
        props = bushing_props(frame, k, c, eta)
        warning = gap_warning(a, b, where, "bushing")
        if warning:
            props["warning"] = warning
        return props

    def matrices(self, link: Any) -> ElementMatrices:
        return self.batch([link]).element(0)

    def batch(self, links: Sequence[Any]) -> ComponentBatch:
        """The six local components of each bushing (see :class:`ComponentBatch`)."""
        frames = np.array([lk.props["frame"] for lk in links], dtype=float).reshape(-1, 3, 3)
        D = np.zeros((len(links), 6, 12))
        for off in (0, 3):
            D[:, off:off + 3, off:off + 3] = -frames
            D[:, off:off + 3, 6 + off:9 + off] = frames
        pa = np.array([lk.a.at for lk in links], dtype=float).reshape(-1, 3)
        k = np.array([lk.props["stiffness"] for lk in links], dtype=float).reshape(-1, 6)
        c = np.array([lk.props["damping"] for lk in links], dtype=float).reshape(-1, 6)
        eta = np.array([lk.props["loss_factor"] for lk in links], dtype=float)
        return ComponentBatch(pa, pa.copy(), D, k, c, eta, COMPONENTS, ("m",) * 3 + ("rad",) * 3)


register_link_type(Bushing())
