"""The engine block's fields and their validation: :class:`EngineSpec`, SI throughout."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from builder.errors import InputError, Where
from builder.plugin import Parameter

from . import analysis as an

__all__ = ["EngineSpec", "PARAMETERS", "MOUNT_FIELDS", "parse_engine_spec", "RPM"]

RPM = 2 * math.pi / 60.0     # rad/s per rev/min

#: Fields of one record of ``mounts:``.
MOUNT_FIELDS: tuple[Parameter, ...] = (
    Parameter("name", "name", None, "mount name (the link is NAME_<mount name>), required"),
    Parameter("at", "vector", None, "mount point [x, y, z], m, global, required"),
    Parameter("frame", "frame", None, "local axes {x: [...], z: [...]}; default global"),
    Parameter("stiffness", "stiffness", None,
              "{x, y, z} N/m and optionally {rx, ry, rz} N m/rad in the local axes, required"),
    Parameter("damping", "damping", None, "same keys, N s/m and N m s/rad; default none"),
    Parameter("loss_factor", "dimensionless", 0.0, "hysteretic loss factor of the mount"),
    Parameter("body", "name", None, "body on the far side (default: attach_to), or ground"),
)

#: The plugin's ``with:`` fields (SI defaults; None: required or optional, see help).
PARAMETERS: tuple[Parameter, ...] = (
    Parameter("mass", "mass", None, "powertrain mass, kg (required)"),
    Parameter("cg", "vector", None, "powertrain cg [x, y, z], m (required)"),
    Parameter("inertia", "inertia", None,
              "{xx, yy, zz, xy, xz, yz} about the cg in global axes, kg m^2 (or gyradius)"),
    Parameter("gyradius", "length", None, "{x, y, z} radii of gyration, m (or inertia)"),
    Parameter("crank_axis", "vector", (0.0, 1.0, 0.0),
              "crankshaft direction [x, y, z] (default transverse, along y)"),
    Parameter("cylinders", "integer", 4, "number of cylinders"),
    Parameter("strokes", "integer", 4, "4 (four-stroke) or 2 (two-stroke)"),
    Parameter("idle_speed", "angular_speed", 800 * RPM,
              "idle speed (write e.g. \"750 rpm\"; a bare number is rad/s)", unit="rpm"),
    Parameter("max_speed", "angular_speed", 6000 * RPM,
              "highest speed", unit="rpm"),
    Parameter("roll_torque", "torque", 100.0,
              "amplitude of the oscillating torque about the crank at firing frequency, N m"),
    Parameter("attach_to", "name", "body", "body the mounts are fixed to (or ground)"),
    Parameter("mounts", "records", None, "list of mounts (required), each with the fields:",
              fields=MOUNT_FIELDS),
)


@dataclass(frozen=True, eq=False)
class EngineSpec:
    """A validated engine block: everything SI."""

    name: str
    mass: float
    cg: np.ndarray
    inertia: np.ndarray
    crank_axis: np.ndarray
    cylinders: int
    strokes: int
    idle_rpm: float
    max_rpm: float
    roll_torque: float
    mounts: tuple[an.Mount, ...]
    where: Where

    def link_name(self, mount: an.Mount) -> str:
        return f"{self.name}_{mount.name}"


def _mount(node: Any, i: int, attach: str, parameters: Mapping[str, Any]) -> an.Mount:
    from builder.elements import parse_frame
    from builder.elements.bushing import DAMPING_DIMS as _DAMP
    from builder.elements.bushing import STIFFNESS_DIMS as _DIMS
    from builder.elements.bushing import parse_six as _six

    f = node.mapping([p.name for p in MOUNT_FIELDS], required=("name", "at", "stiffness"),
                     what="a mount {name, at, stiffness, ...}")
    name = f["name"].text("a mount name")
    if not name.replace("_", "a").replace("-", "a").isalnum():
        raise f["name"].error(f'a mount name must be letters, digits, "_" or "-", got "{name}"')
    at = np.array(f["at"].vector("length", parameters))
    frame = parse_frame(f.get("frame"), parameters)
    k = _six(f["stiffness"], _DIMS, parameters)
    if not np.all(k[:3] > 0):
        raise f["stiffness"].error("give positive x, y and z stiffnesses of the mount")
    c = _six(f["damping"], _DAMP, parameters) if "damping" in f else np.zeros(6)
    eta = (f["loss_factor"].quantity("dimensionless", parameters, "nonnegative")
           if "loss_factor" in f else 0.0)
    body = f["body"].text("a body name") if "body" in f else attach
    return an.Mount(name, at, frame, k, c, eta, body)


def parse_engine_spec(fields: Mapping[str, Any], name: str, parameters: Mapping[str, Any],
                      where: Where) -> EngineSpec:
    """A validated :class:`EngineSpec` from a ``with:`` block (field name -> Node)."""
    from builder.load import parse_inertia as _inertia

    for key in ("mass", "cg", "mounts"):
        if key not in fields:
            raise InputError(f'engine needs "{key}" ({_HELP[key]})', where)
    mass = fields["mass"].quantity("mass", parameters, "positive")
    cg = np.array(fields["cg"].vector("length", parameters))
    inertia = _inertia(dict(fields), mass, where, parameters)
    crank = np.array(PARAMETERS[4].default)
    if "crank_axis" in fields:
        from builder.elements import parse_axis
        crank = parse_axis(fields["crank_axis"], parameters)
    cyl = fields["cylinders"].integer(1, 24) if "cylinders" in fields else 4
    strokes = fields["strokes"].integer(2, 4) if "strokes" in fields else 4
    if strokes not in (2, 4):
        raise fields["strokes"].error(f"must be 4 (four-stroke) or 2 (two-stroke), got {strokes}")
    idle = (fields["idle_speed"].quantity("angular_speed", parameters, "positive")
            if "idle_speed" in fields else PARAMETERS[7].default)
    top = (fields["max_speed"].quantity("angular_speed", parameters, "positive")
           if "max_speed" in fields else PARAMETERS[8].default)
    if top <= idle:
        node = fields.get("max_speed") or fields.get("idle_speed")
        raise InputError("max_speed must be above idle_speed", node.where if node else where)
    torque = (fields["roll_torque"].quantity("torque", parameters, "positive")
              if "roll_torque" in fields else PARAMETERS[9].default)
    attach = fields["attach_to"].text("a body name") if "attach_to" in fields else "body"
    items = fields["mounts"].items_list("a list of mounts (- {name: ..., at: ..., ...})")
    if not items:
        raise fields["mounts"].error("give at least one mount")
    mounts = tuple(_mount(node, i, attach, parameters) for i, node in enumerate(items))
    seen: set[str] = set()
    for node, m in zip(items, mounts, strict=True):
        if m.name in seen:
            raise node.error(f'two mounts are named "{m.name}"')
        seen.add(m.name)
    K, _, _ = an.mount_matrices(cg, mounts)
    if not np.isfinite(K).all():
        raise fields["mounts"].error("the mount stiffnesses and points give a stiffness "
                                     "matrix that overflows (check their sizes and units)")
    if _rank(K) < 6:
        raise fields["mounts"].error(
            "the mounts do not hold all six motions of the powertrain (add a mount, or "
            "rotational stiffness)")
    return EngineSpec(name, mass, cg, inertia, crank, cyl, strokes, idle / RPM, top / RPM,
                      torque, mounts, where)


_HELP = {p.name: p.help for p in PARAMETERS}


def _rank(K: np.ndarray) -> int:
    """Numerical rank of the 6 x 6 mount stiffness, scaled first (SVD never fails on it)."""
    scale = float(np.abs(K).max())
    if scale == 0.0:
        return 0
    try:
        return int(np.linalg.matrix_rank(K / scale, tol=1e-9))
    except np.linalg.LinAlgError:
        return 0
