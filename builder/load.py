"""Assembly file (format 1) -> :class:`~builder.assembly.Assembly`.

Every field is validated before any analysis starts, and each problem is an
:class:`~builder.errors.InputError` naming file, line and field, e.g.
``car.yaml:12: bodies.body.mass: must be a positive mass, got "-3 kg"``.
The order is: top-level keys, parameters, bodies, road points, links,
sensors, plugin blocks (validated by each plugin's declaration), then the
plugins run, rigid links are merged, and depths are checked against the
final DOF list.

>>> from pathlib import Path
>>> car = load_assembly(Path(__file__).parent.parent / "assemblies" / "quarter_car.yaml")
>>> car.dof_labels
('body.z', 'wheel.z')
"""

from __future__ import annotations

import difflib
import fnmatch
import os
import re
from collections.abc import Mapping
from typing import Any

import numpy as np

from .assembly import (
    GROUND,
    MOTIONS,
    Assembly,
    Body,
    Depth,
    End,
    Link,
    RoadPoint,
    Sensor,
    inertia_is_physical,
    merge_rigid_links,
)
from .elements import LINK_TYPES, parse_axis
from .errors import InputError, Where, shown
from .kinematics import DOF_NAMES
from .quantities import Quantity, resolve_parameters
from .yamlnodes import Node, gc_paused, load_yaml, parse_yaml

__all__ = ["load_assembly", "load_text", "parse_assembly", "check_depths", "MEASURES",
           "match_dofs", "parse_inertia"]

TOP_KEYS = ("format", "name", "motion", "parameters", "bodies", "road", "links", "sensors",
            "plugins", "depths")
BODY_KEYS = ("mass", "cg", "inertia", "gyradius", "dofs", "shape")
MEASURES = {"displacement": "m", "velocity": "m/s", "acceleration": "m/s^2",
            "deflection": "m", "force": "N"}
_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_\-]*$")


def load_assembly(path: str | os.PathLike[str],
                  overrides: Mapping[str, object] | None = None) -> Assembly:
    """Load, validate and complete an assembly file (plugins applied, rigid links merged).

    ``overrides`` replaces values of the file's ``parameters:`` (a number,
    a string with a unit, or a :class:`~builder.quantities.Quantity`); a
    name the file does not define is an error.
    """
    root = load_yaml(path, str(path))
    with gc_paused():
        return parse_assembly(root, str(path), overrides)


def load_text(text: str, name: str = "<text>",
              overrides: Mapping[str, object] | None = None) -> Assembly:
    """Like :func:`load_assembly` for YAML text already in memory."""
    root = parse_yaml(text, name)
    with gc_paused():
        return parse_assembly(root, name, overrides)


def _check_name(node_where: Where, name: str, what: str) -> None:
    if not _NAME.match(name) or name in (GROUND, "road"):
        raise InputError(f'a {what} name must be letters, digits, "_" or "-" and not '
                         f'"ground" or "road", got {shown(name)}', node_where)


def parse_assembly(root: Node, source: str,
                   overrides: Mapping[str, object] | None = None) -> Assembly:
    """Validate a parsed file (a :class:`Node` tree) into an Assembly."""
    top = root.mapping(TOP_KEYS, required=("format",), what="a mapping of sections")
    fmt = top["format"]
    if fmt.value != 1 or isinstance(fmt.value, bool):
        raise fmt.error(f"only format 1 is understood, got {fmt.shown()}")
    name = top["name"].text("a name") if "name" in top else os.path.basename(source)
    motion = top["motion"].choice(MOTIONS) if "motion" in top else "spatial"
    params = _parameters(top.get("parameters"), overrides, source)
    bodies = _bodies(top.get("bodies"), MOTIONS[motion], params)
    road = _road(top.get("road"), params)
    links, warnings = _links(top.get("links"), bodies, road, params)
    sensors = _sensors(top.get("sensors"), bodies, links, params)
    asm = Assembly(name=name, motion=motion, bodies=bodies, road=road, links=links,
                   sensors=sensors, parameters=params, source=source, warnings=tuple(warnings))
    if "plugins" in top:
        from .plugin import apply_plugins, validate_plugin_uses
        uses = validate_plugin_uses(top["plugins"], params)
        asm = apply_plugins(asm.replace(plugins=tuple(uses)), uses)
    if not asm.bodies:
        node = top.get("bodies")
        raise InputError("the file defines no body and no plugin adds one: list bodies under "
                         "bodies:, or use a plugin that adds them (such as engine)",
                         node.where if node is not None else Where(source, 1, "bodies"))
    asm = merge_rigid_links(asm)
    depths = _depths(top.get("depths"), asm.dof_labels)
    return asm.replace(depths=depths)


# ---------------------------------------------------------------- pieces --

def _parameters(node: Node | None, overrides: Mapping[str, object] | None,
                source: str) -> dict[str, Quantity]:
    raw: dict[str, object] = {}
    places: dict[str, Where] = {}
    if node is not None:
        for key, val in node.mapping().items():
            if val.is_map or val.is_list:
                raise val.error("must be a number, a quantity or an expression")
            raw[key] = val.raw if isinstance(val.value, str) else val.value
            places[key] = val.where
    for key, val in (overrides or {}).items():
        if key not in raw:
            hint = difflib.get_close_matches(key, list(raw), n=1)
            tip = f' (did you mean "{hint[0]}"?)' if hint else ""
            raise InputError(f'the file {source} has no parameter "{key}"{tip}',
                             Where(field="--vary"))
        raw[key] = val
        places[key] = Where(field=f"override {key}")
    return resolve_parameters(raw, lambda k: places.get(k, Where(source)))


def parse_inertia(fields: dict[str, Node], mass: float, where: Where,
                  params: Mapping[str, Quantity]) -> np.ndarray:
    """The inertia tensor (kg m^2) of a mapping with ``inertia`` or ``gyradius``, checked."""
    if "inertia" in fields and "gyradius" in fields:
        raise InputError("give either inertia or gyradius, not both", where.child("gyradius"))
    if "inertia" in fields:
        f = fields["inertia"].mapping(("xx", "yy", "zz", "xy", "xz", "yz"))
        v = {k: (f[k].quantity("inertia", params, "nonnegative" if k in ("xx", "yy", "zz")
                               else "any") if k in f else 0.0)
             for k in ("xx", "yy", "zz", "xy", "xz", "yz")}
        tensor = np.array([[v["xx"], -v["xy"], -v["xz"]],
                           [-v["xy"], v["yy"], -v["yz"]],
                           [-v["xz"], -v["yz"], v["zz"]]])
        node = fields["inertia"]
    elif "gyradius" in fields:
        f = fields["gyradius"].mapping(("x", "y", "z"), required=("x", "y", "z"))
        r = [f[k].quantity("length", params, "positive") for k in ("x", "y", "z")]
        tensor = mass * np.diag(np.square(r))
        node = fields["gyradius"]
    else:
        raise InputError("missing required key \"inertia\" (or \"gyradius\"): a body with "
                         "rotation DOFs needs its moments of inertia", where)
    reason = inertia_is_physical(tensor)
    if reason:
        raise node.error(f"not a physical inertia: {reason}")
    return tensor


def _dofs(node: Node) -> tuple[str, ...]:
    items = node.items_list("a list of DOF names (x, y, z, rx, ry, rz)")
    out = []
    for item in items:
        d = item.choice(DOF_NAMES)
        if d in out:
            raise item.error(f'"{d}" is listed twice')
        out.append(d)
    if not out:
        raise node.error("must list at least one DOF")
    return tuple(d for d in DOF_NAMES if d in out)


def _shape(node: Node, params: Mapping[str, Quantity]) -> dict[str, Any]:
    f = node.mapping(("box", "ellipsoid"))
    if len(f) != 1:
        raise node.error("give one of box: [lx, ly, lz] or ellipsoid: [ax, ay, az] (m)")
    kind, val = next(iter(f.items()))
    size = val.vector("length", params)
    if min(size) <= 0:
        raise val.error("sizes must be positive lengths")
    return {"kind": kind, "size": np.array(size)}


def _bodies(node: Node | None, default_dofs: tuple[str, ...],
            params: Mapping[str, Quantity]) -> dict[str, Body]:
    """The ``bodies:`` section; empty or absent when plugins add the bodies.

    Inertia (or gyradius) is required only of a body with a rotation DOF;
    a body that only translates (``dofs: [z]``) is a point mass.
    """
    out: dict[str, Body] = {}
    if node is None or node.value is None:
        return out
    entries = node.mapping(what="a mapping of body names to bodies")
    for name, bnode in entries.items():
        where = bnode.where
        _check_name(where, name, "body")
        f = bnode.mapping(BODY_KEYS, required=("mass", "cg"))
        mass = f["mass"].quantity("mass", params, "positive")
        cg = np.array(f["cg"].vector("length", params))
        dofs = _dofs(f["dofs"]) if "dofs" in f else default_dofs
        if "inertia" in f or "gyradius" in f or any(d in _ROTATIONS for d in dofs):
            inertia = parse_inertia(f, mass, where, params)
        else:
            inertia = np.zeros((3, 3))
        shape = _shape(f["shape"], params) if "shape" in f else None
        out[name] = Body(name, mass, cg, inertia, dofs, shape, where)
    return out


_ROTATIONS = ("rx", "ry", "rz")


def _road(node: Node | None, params: Mapping[str, Quantity]) -> dict[str, RoadPoint]:
    out: dict[str, RoadPoint] = {}
    if node is None:
        return out
    for name, rnode in node.mapping(what="a mapping of road point names").items():
        _check_name(rnode.where, name, "road point")
        f = rnode.mapping(("at",), required=("at",))
        out[name] = RoadPoint(name, np.array(f["at"].vector("length", params)), rnode.where)
    return out


def _end(node: Node, bodies: Mapping[str, Body], road: Mapping[str, RoadPoint],
         params: Mapping[str, Quantity]) -> End:
    at_node = None
    if node.is_map:
        f = node.mapping(("body", "at"), required=("body",))
        target_node, at_node = f["body"], f.get("at")
    else:
        target_node = node
    target = target_node.text("a body name, ground or road.NAME")
    if target.startswith("road."):
        rp = target[5:]
        if rp not in road:
            raise target_node.error(_unknown("road point", rp, road))
        if at_node is not None:
            raise at_node.error("a road point end takes no at: (it is the road point)")
        return End(target, road[rp].at.copy())
    if target == GROUND:
        at = np.array(at_node.vector("length", params)) if at_node is not None else None
        return End(GROUND, at if at is not None else np.full(3, np.nan))
    if target not in bodies:
        raise target_node.error(_unknown("body", target, bodies))
    at = np.array(at_node.vector("length", params)) if at_node is not None \
        else bodies[target].cg.copy()
    return End(target, at)


def _unknown(what: str, name: str, known: Mapping[str, Any]) -> str:
    hint = difflib.get_close_matches(name, list(known), n=1) if len(name) < 100 else []
    tip = f' (did you mean "{hint[0]}"?)' if hint else (
        f" (known: {', '.join(list(known)[:12])})" if known else f" (no {what}s are defined)")
    return f"unknown {what} {shown(name)}{tip}"


def _links(node: Node | None, bodies: Mapping[str, Body], road: Mapping[str, RoadPoint],
           params: Mapping[str, Quantity]) -> tuple[dict[str, Link], list[str]]:
    out: dict[str, Link] = {}
    warnings: list[str] = []
    if node is None:
        return out, warnings
    for name, lnode in node.mapping(what="a mapping of link names to links").items():
        _check_name(lnode.where, name, "link")
        if name in bodies:
            raise lnode.error(f'"{name}" is already the name of a body')
        if not lnode.is_map:
            raise lnode.error(f"must be a mapping with type, a and b, got {lnode.shown()}")
        if "type" not in lnode:
            raise lnode.error('missing required key "type"')
        kind_name = lnode["type"].choice(LINK_TYPES)
        kind = LINK_TYPES[kind_name]
        f = lnode.mapping(("type", "a", "b", *kind.keys), required=("a", "b", *kind.required))
        a = _end(f["a"], bodies, road, params)
        b = _end(f["b"], bodies, road, params)
        _check_ends(a, b, f, kind_name)
        props = kind.parse(f, a, b, params, lnode.where)
        if props.get("warning"):
            warnings.append(props.pop("warning"))
        out[name] = Link(name, kind_name, a, b, props, lnode.where)
    return out, warnings


def _check_ends(a: End, b: End, f: dict[str, Node], kind: str) -> None:
    if a.node == b.node and a.kind == "body":
        raise f["b"].error(f'both ends are on body "{a.node}"')
    if a.kind != "body" and b.kind != "body":
        raise f["b"].error("at least one end must be a body")
    # A ground end without a point sits where the other end is.
    for e, other in ((a, b), (b, a)):
        if e.kind == "ground" and np.isnan(e.at).any():
            e.at[:] = other.at


def _direction(node: Node | None, params: Mapping[str, Quantity]) -> tuple[np.ndarray, str]:
    out = np.zeros(6)
    if node is None:
        out[2] = 1.0
        return out, "z"
    if isinstance(node.value, str) and node.value in ("rx", "ry", "rz"):
        out[3 + "xyz".index(node.value[1])] = 1.0
        return out, node.value
    try:
        out[:3] = parse_axis(node, params)
    except InputError:
        raise node.error("must be x, y, z, rx, ry, rz or a 3-vector, got "
                         f"{node.shown()}") from None
    return out, node.value if isinstance(node.value, str) else "vector"


def _sensors(node: Node | None, bodies: Mapping[str, Body], links: Mapping[str, Link],
             params: Mapping[str, Quantity]) -> dict[str, Sensor]:
    out: dict[str, Sensor] = {}
    if node is None:
        return out
    for name, snode in node.mapping(what="a mapping of sensor names").items():
        _check_name(snode.where, name, "sensor")
        if not snode.is_map:
            raise snode.error(f"must be a mapping, got {snode.shown()}")
        if "link" in snode:
            f = snode.mapping(("link", "measure", "direction"), required=("link", "measure"))
            target = f["link"].text("a link name")
            if target not in links:
                raise f["link"].error(_unknown("link", target, links))
            measure = f["measure"].choice(("deflection", "force"))
            link = links[target]
            if getattr(LINK_TYPES.get(link.type), "joint", False):
                raise f["link"].error(f'"{target}" is a {link.type} joint: it has no '
                                      "deflection; measure a body point or a compliant link")
            comp, axis = 0, "axial"
            if link.type == "bushing":
                comp, axis = 2, "z"
                if "direction" in f:
                    axis = f["direction"].choice(("x", "y", "z", "rx", "ry", "rz"))
                    comp = ("x", "y", "z", "rx", "ry", "rz").index(axis)
            elif "direction" in f:
                raise f["direction"].error("only bushing sensors take a direction "
                                           "(the component in the bushing frame)")
            out[name] = Sensor(name, "link", target, measure, component=comp, axis_name=axis,
                               where=snode.where)
            continue
        f = snode.mapping(("body", "at", "measure", "direction", "person"),
                          required=("body", "measure"))
        target = f["body"].text("a body name")
        if target not in bodies:
            raise f["body"].error(_unknown("body", target, bodies))
        measure = f["measure"].choice(("displacement", "velocity", "acceleration"))
        at = np.array(f["at"].vector("length", params)) if "at" in f else bodies[target].cg.copy()
        direction, axis = _direction(f.get("direction"), params)
        person = _person(f.get("person"), measure, axis)
        out[name] = Sensor(name, "body", target, measure, at=at, direction=direction,
                           axis_name=axis, where=snode.where, person=person)
    return out


#: Person interfaces a body acceleration sensor may be at (ISO 2631-1 clause 8).
PERSON_INTERFACES = ("seat", "back", "feet", "floor")


def _person(node: Node | None, measure: str, axis: str) -> str:
    """A sensor's ``person:`` (the interface of a person it is at), checked."""
    if node is None:
        return ""
    value = node.choice(PERSON_INTERFACES)
    if measure != "acceleration":
        raise node.error("only acceleration sensors can be at a person "
                         f"(ISO 2631-1 rates accelerations), not {measure}")
    if axis not in ("x", "y", "z", "rx", "ry", "rz") or (
            axis.startswith("r") and value != "seat"):
        raise node.error("a sensor at a person measures along x, y or z (or rx, ry, rz "
                         "on a seat surface)")
    return value


def match_dofs(pattern: str, dofs: tuple[str, ...]) -> list[str]:
    """DOF labels matching a name or wildcard pattern (``wheel_*.z``, ``engine.*``)."""
    return [d for d in dofs if fnmatch.fnmatchcase(d, pattern)]


def _depths(node: Node | None, dofs: tuple[str, ...]) -> dict[str, Depth]:
    out: dict[str, Depth] = {}
    if node is None:
        return out
    for name, dnode in node.mapping(what="a mapping of depth names").items():
        f = dnode.mapping(("keep", "tie", "modes"), required=("keep",))
        keep_nodes = f["keep"].items_list("a list of DOF names or patterns")
        keep = tuple(k.text("a DOF name or pattern") for k in keep_nodes)
        tie: list[tuple[str, ...]] = []
        if "tie" in f:
            for g in f["tie"].items_list("a list of groups of DOF names"):
                tie.append(tuple(x.text("a DOF name") for x in
                                 g.items_list("a list of DOF names to tie")))
        modes: list[tuple[str, int]] = []
        kept = {d for k in keep for d in match_dofs(k, dofs)} | {d for g in tie for d in g[1:]}
        taken: set[str] = set()
        for pattern, count_node in (f["modes"].mapping(
                what="a mapping of DOF patterns to mode counts").items() if "modes" in f else ()):
            n = count_node.integer(minimum=1, maximum=10_000)
            hits = match_dofs(pattern, dofs)
            if not hits:
                raise InputError(_unknown("DOF", pattern, dict.fromkeys(dofs)), count_node.where)
            free = [d for d in hits if d not in kept and d not in taken]
            if n > len(free):
                raise InputError(f"asks for {n} modes of {len(free)} condensed DOFs (those the "
                                 "pattern matches that the depth neither keeps nor ties "
                                 "away, nor an earlier pattern took)", count_node.where)
            taken.update(free)
            modes.append((pattern, n))
        depth = Depth(name, keep, tuple(tie), dnode.where, tuple(k.where for k in keep_nodes),
                      tuple(modes))
        check_depths(depth, dofs, f.get("tie"))
        out[name] = depth
    return out


def check_depths(depth: Depth, dofs: tuple[str, ...], tie_node: Node | None = None) -> None:
    """Refuse a depth whose names match no DOF or whose ties conflict."""
    tied: dict[str, str] = {}
    for gi, group in enumerate(depth.tie):
        gw = tie_node.value[gi].where if tie_node is not None else depth.where.child("tie")
        if len(group) < 2:
            raise InputError("a tie group needs at least two DOFs", gw)
        for d in group:
            if d not in dofs:
                raise InputError(_unknown("DOF", d, dict.fromkeys(dofs)), gw)
            if d in tied or d == group[0] and d in tied.values():
                raise InputError(f'"{d}" is in two tie groups', gw)
        for d in group[1:]:
            tied[d] = group[0]
    for pattern, where in zip(depth.keep, depth.keep_where or (depth.where,) * len(depth.keep)):
        hits = match_dofs(pattern, dofs)
        if not hits:
            raise InputError(_unknown("DOF", pattern, dict.fromkeys(dofs)), where)
        for h in hits:
            if h in tied and pattern == h:
                raise InputError(f'"{h}" is tied to "{tied[h]}"; keep "{tied[h]}" instead',
                                 where)
