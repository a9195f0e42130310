"""Ideal kinematic joints: ``spherical``, ``revolute``, ``cylindrical``, ``prismatic``,
``universal`` and ``planar`` links.

A joint stiffens nothing: it forbids some components of the relative motion
of its two end points, ``m_b - m_a`` (six-vector [translation (m); rotation
(rad)] in global axes, taken at end a's point). Each forbidden component is
one linear constraint row ``e^T (m_b - m_a) = 0``; :mod:`builder.joints`
eliminates them all from the model's coordinates (master-slave, exactly).

Forbidden components per type ("normals": two unit vectors normal to the axis):

- spherical: translation x, y, z (three rotations left free);
- revolute: translation x, y, z and rotation about the normals (rotation
  about the axis free);
- cylindrical: translation and rotation about the normals (rotation about
  and translation along the axis free);
- prismatic: translation along the normals, rotation x, y, z (translation
  along the axis free);
- universal: translation x, y, z, rotation about axis1 x axis2 (rotations
  about the two axes free);
- planar: translation along the normal, rotation about two in-plane axes
  (in-plane translations and rotation about the normal free).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..errors import InputError, Where
from ..quantities import Quantity
from ..yamlnodes import Node
from . import ElementMatrices, gap_warning, local_frame, parse_axis, register_link_type

__all__ = ["JOINT_TYPES", "Joint", "is_joint", "constrained_directions", "direction_text"]

_I3 = np.eye(3)


def _normals(axis: np.ndarray) -> np.ndarray:
    """Two unit vectors normal to ``axis`` (rows), with the axis a right-handed set."""
    return local_frame(None, axis)[:2]


def direction_text(kind: str, d: np.ndarray) -> str:
    """``translation along x`` or ``rotation about [0.707, 0.707, 0]`` (global axes)."""
    word = "translation along" if kind == "t" else "rotation about"
    for i, name in enumerate("xyz"):
        if abs(abs(d[i]) - 1.0) < 1e-12:
            return f"{word} {'-' if d[i] < 0 else ''}{name}"
    return f"{word} [{', '.join(f'{v:.3g}' for v in d)}]"


def constrained_directions(kind: str, props: Mapping[str, Any]) -> list[tuple[str, np.ndarray]]:
    """The forbidden components of a joint: (``"t"`` translation or ``"r"`` rotation,
    unit direction in global axes), one per constraint row."""
    t = [("t", v) for v in _I3]
    r = [("r", v) for v in _I3]
    if kind == "spherical":
        return t
    if kind == "universal":
        n = np.cross(props["axes"][0], props["axes"][1])
        return t + [("r", n / np.linalg.norm(n))]
    axis = props["axis"]
    nn = [v for v in _normals(axis)]
    if kind == "revolute":
        return t + [("r", v) for v in nn]
    if kind == "cylindrical":
        return [("t", v) for v in nn] + [("r", v) for v in nn]
    if kind == "prismatic":
        return [("t", v) for v in nn] + r
    if kind == "planar":
        return [("t", axis)] + [("r", v) for v in nn]
    raise ValueError(kind)


class Joint:
    """One joint type: parses its axis keys; its rows come from
    :func:`constrained_directions`. ``joint = True`` tells the assembler to
    eliminate it instead of adding stiffness."""

    joint = True

    def __init__(self, name: str, keys: tuple[str, ...]):
        self.name = name
        self.keys = keys
        self.required = keys

    def parse(self, fields: dict[str, Node], a: Any, b: Any,
              parameters: Mapping[str, Quantity], where: Where) -> dict[str, Any]:
        """Axis (unit), or two axes; a warning when the ends are more than 1 mm apart."""
        if a.kind == "road" or b.kind == "road":
            raise InputError("a joint cannot end on a road point (the road is an input, "
                             "not a body)", where)
        props: dict[str, Any] = {}
        if "axis" in fields:
            props["axis"] = parse_axis(fields["axis"], parameters)
        if "normal" in fields:
            props["axis"] = parse_axis(fields["normal"], parameters)
        if "axes" in fields:
            node = fields["axes"]
            items = node.items_list("a list of two axes [[x, y, z], [x, y, z]]")
            if len(items) != 2:
                raise node.error(f"must list two axes, got {len(items)}")
            u1, u2 = (parse_axis(i, parameters) for i in items)
            c = float(np.dot(u1, u2))
            if abs(c) > 1e-3:
                angle = float(np.degrees(np.arccos(np.clip(c, -1, 1))))
                raise node.error(f"the two axes must be orthogonal (they are {angle:.1f} deg "
                                 "apart)")
            u2 = u2 - c * u1
            props["axes"] = (u1, u2 / np.linalg.norm(u2))
        warning = gap_warning(a, b, where, "joint")
        if warning:
            props["warning"] = warning
        return props

    def matrices(self, link: Any) -> ElementMatrices:
        raise RuntimeError("joints are eliminated by builder.joints, not assembled")


#: The joint types and their keys.
JOINT_TYPES: dict[str, Joint] = {
    name: register_link_type(Joint(name, keys)) for name, keys in (
        ("spherical", ()), ("revolute", ("axis",)), ("cylindrical", ("axis",)),
        ("prismatic", ("axis",)), ("universal", ("axes",)), ("planar", ("normal",)))}


def is_joint(link: Any) -> bool:
    """True for a link of a joint type."""
    return link.type in JOINT_TYPES
