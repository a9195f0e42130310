"""Adding the powertrain to an assembly: its body, one bushing per mount, three sensors."""

from __future__ import annotations

from typing import Any

import numpy as np

from builder.assembly import Body, End, Link, Sensor
from builder.errors import InputError
from builder.kinematics import DOF_NAMES

from .params import EngineSpec

__all__ = ["add_engine", "engine_specs"]


def add_engine(assembly: Any, spec: EngineSpec) -> Any:
    """A new Assembly with the powertrain body, its mounts and three sensors added."""
    from builder.elements.bushing import bushing_props

    if spec.name in assembly.bodies:
        raise InputError(f'a body "{spec.name}" already exists; give the engine block '
                         "another name", spec.where)
    bodies = dict(assembly.bodies)
    bodies[spec.name] = Body(spec.name, spec.mass, spec.cg.copy(), spec.inertia.copy(),
                             DOF_NAMES, None, spec.where)
    links = dict(assembly.links)
    for m in spec.mounts:
        # the body at the mount point: a body that a plugin listed before this one
        # replaced (split_body) is followed to the segment carrying the point
        body = m.body if m.body == "ground" else assembly.body_at(m.body, m.at)
        if body is None:
            known = ", ".join(assembly.bodies) or "none"
            raise InputError(f'mount "{m.name}" is fixed to unknown body "{m.body}" '
                             f"(bodies: {known}, or ground)", spec.where)
        link = spec.link_name(m)
        if link in links:
            raise InputError(f'a link "{link}" already exists', spec.where)
        links[link] = Link(link, "bushing", End(spec.name, m.at.copy()), End(body, m.at.copy()),
                           bushing_props(m.frame, m.stiffness, m.damping, m.loss_factor),
                           spec.where)
    sensors = dict(assembly.sensors)
    for axis in "xyz":
        direction = np.zeros(6)
        direction["xyz".index(axis)] = 1.0
        sname = f"{spec.name}_accel_{axis}"
        if sname not in sensors:
            sensors[sname] = Sensor(sname, "body", spec.name, "acceleration",
                                    at=spec.cg.copy(), direction=direction, axis_name=axis,
                                    where=spec.where)
    return assembly.replace(bodies=bodies, links=links, sensors=sensors)


def engine_specs(assembly: Any) -> list[EngineSpec]:
    """The :class:`EngineSpec` of every engine block the assembly went through."""
    return [u.spec for u in getattr(assembly, "plugins", ()) or ()
            if isinstance(getattr(u, "spec", None), EngineSpec)]
