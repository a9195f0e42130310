"""Link types: each turns a Link into 12 x 12 matrices on its ends' point motions.

An element sees only the motions of its two end points, each a six-vector
[translation (m), rotation (rad)] in global axes taken at ``points[0]`` and
``points[1]`` (see :func:`builder.kinematics.motion_map`). The assembler maps
those to body DOFs, to ground (fixed) or to road inputs. An element also says
how its deflection components are read from the point motions (rows of
``deflection``) and their stiffness and damping, which give link sensors.

Link types register in :data:`LINK_TYPES`; plugins may add their own. A
type whose element matrices are all of the form K = D^T diag(k) D,
C = D^T diag(c) D, H = eta K may also offer ``batch(links) ->
ComponentBatch`` (the D, k, c and eta of many links at once, stacked); the
assembler then builds the whole model from one sparse deflection map instead
of link by link. The built-in spring, bushing and beam do.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np

from ..errors import Where
from ..quantities import Quantity
from ..yamlnodes import Node

__all__ = ["ElementMatrices", "ComponentBatch", "LinkType", "LINK_TYPES", "register_link_type",
           "local_frame", "parse_frame", "parse_axis", "gap_warning"]


@dataclass(frozen=True, eq=False)
class ElementMatrices:
    """Matrices of one element on [motion of end a at points[0]; motion of end b at points[1]].

    ``deflection`` (m x 12) reads the element's m deflection components
    (m or rad) from the point motions; ``stiffness`` and ``damping`` (m,) and
    ``loss_factor`` give the force in each component,
    ``f = k d + c d' (+ i eta k d)``, so that ``K = D^T diag(k) D`` etc.
    """

    points: tuple[np.ndarray, np.ndarray]
    K: np.ndarray
    C: np.ndarray
    H: np.ndarray
    deflection: np.ndarray
    stiffness: np.ndarray
    damping: np.ndarray
    components: tuple[str, ...]
    units: tuple[str, ...]
    loss_factor: float = 0.0

    @staticmethod
    def from_components(points: tuple[np.ndarray, np.ndarray], deflection: np.ndarray,
                        stiffness: np.ndarray, damping: np.ndarray, loss_factor: float,
                        components: tuple[str, ...], units: tuple[str, ...]) -> ElementMatrices:
        """Build K = D^T diag(k) D, C = D^T diag(c) D, H = eta K (all symmetric)."""
        D = np.asarray(deflection, dtype=float)
        k = np.asarray(stiffness, dtype=float)
        c = np.asarray(damping, dtype=float)
        K = D.T @ (k[:, None] * D)
        C = D.T @ (c[:, None] * D)
        return ElementMatrices(points, _sym(K), _sym(C), _sym(loss_factor * K), D, k, c,
                               components, units, float(loss_factor))


@dataclass(frozen=True, eq=False)
class ComponentBatch:
    """The deflection components of L links of one type, stacked: link l's element
    matrices are K = D_l^T diag(k_l) D_l, C = D_l^T diag(c_l) D_l, H = eta_l K.

    ``points_a``, ``points_b`` (L, 3): the points (m) whose six-vector motions
    the element sees; ``deflection`` (L, m, 12); ``stiffness``, ``damping``
    (L, m); ``loss_factor`` (L,); ``components`` and ``units`` (m each).
    """

    points_a: np.ndarray
    points_b: np.ndarray
    deflection: np.ndarray
    stiffness: np.ndarray
    damping: np.ndarray
    loss_factor: np.ndarray
    components: tuple[str, ...]
    units: tuple[str, ...]

    def element(self, i: int) -> ElementMatrices:
        """The ElementMatrices of link ``i`` of the batch."""
        return ElementMatrices.from_components(
            (self.points_a[i], self.points_b[i]), self.deflection[i], self.stiffness[i],
            self.damping[i], float(self.loss_factor[i]), self.components, self.units)


def _sym(a: np.ndarray) -> np.ndarray:
    return 0.5 * (a + a.T)


class LinkType(Protocol):
    """What a link type provides. ``keys``: the fields it accepts besides type, a, b."""

    name: str
    keys: tuple[str, ...]
    required: tuple[str, ...]

    def parse(self, fields: dict[str, Node], a: Any, b: Any,
              parameters: Mapping[str, Quantity], where: Where) -> dict[str, Any]:
        """Validate the link's own fields; return its SI ``props``."""
        ...

    def matrices(self, link: Any) -> ElementMatrices:
        """The element matrices of a Link of this type."""
        ...


LINK_TYPES: dict[str, LinkType] = {}


def register_link_type(kind: LinkType) -> LinkType:
    """Add a link type (refusing a second one of the same name)."""
    if kind.name in LINK_TYPES and LINK_TYPES[kind.name] is not kind:
        raise ValueError(f"link type {kind.name!r} is registered twice")
    LINK_TYPES[kind.name] = kind
    return kind


_AXES = {"x": (1.0, 0.0, 0.0), "y": (0.0, 1.0, 0.0), "z": (0.0, 0.0, 1.0)}


def parse_axis(node: Node, parameters: Mapping[str, Quantity]) -> np.ndarray:
    """A unit direction: ``x``, ``y``, ``z`` (optionally signed, ``-z``) or a 3-vector."""
    if isinstance(node.value, str) and node.value.strip().lstrip("+-") in _AXES:
        sign = -1.0 if node.value.strip().startswith("-") else 1.0
        return sign * np.array(_AXES[node.value.strip().lstrip("+-")])
    v = np.array(node.vector("dimensionless", parameters))
    n = np.linalg.norm(v)
    if n == 0:
        raise node.error("must be x, y, z or a non-zero vector, got a zero vector")
    return v / n


def local_frame(x: np.ndarray | None, z: np.ndarray | None) -> np.ndarray:
    """Rows = local x, y, z unit axes in global coordinates.

    z is kept, x is made orthogonal to it, y = z cross x. A missing z is the
    global z (or y when x is along z) and a missing x the global x (or y).
    Raises ValueError when x and z are parallel.
    """
    if z is None:
        z = np.array([0.0, 0.0, 1.0])
        if x is not None and abs(np.dot(x, z)) > 0.999 * np.linalg.norm(x):
            z = np.array([0.0, 1.0, 0.0])
    z = np.asarray(z, dtype=float) / np.linalg.norm(z)
    if x is None:
        x = np.array([1.0, 0.0, 0.0]) if abs(z[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
    x = np.asarray(x, dtype=float)
    x = x - np.dot(x, z) * z
    nx_ = np.linalg.norm(x)
    if nx_ < 1e-9:
        raise ValueError("the frame's x and z axes are parallel")
    x = x / nx_
    return np.array([x, np.cross(z, x), z])


def parse_frame(node: Node | None, parameters: Mapping[str, Quantity]) -> np.ndarray:
    """A ``frame: {x: [...], z: [...]}`` field as a 3 x 3 rotation (rows = local axes)."""
    if node is None:
        return np.eye(3)
    f = node.mapping(("x", "z"))
    x = parse_axis(f["x"], parameters) if "x" in f else None
    z = parse_axis(f["z"], parameters) if "z" in f else None
    try:
        return local_frame(x, z)
    except ValueError as exc:
        raise node.error(str(exc)) from None


def gap_warning(a: Any, b: Any, where: Where, what: str) -> str:
    """The warning for link ends more than 1 mm apart ("" otherwise): ``what`` acts at
    end a's point."""
    with np.errstate(over="ignore", invalid="ignore"):
        gap = float(np.linalg.norm(np.asarray(a.at) - np.asarray(b.at)))
    if gap > 1e-3:
        return (f"{where.prefix()}: the ends are {gap * 1000:.0f} mm apart; "
                f"the {what} acts at end a's point")
    return ""


def _register_builtins() -> None:
    from . import beam, bushing, joint, rigid, spring  # noqa: F401  (they register themselves)


_register_builtins()
