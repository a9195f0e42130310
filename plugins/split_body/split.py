"""Replace a rigid body by a chain of rigid segments joined by beam elements.

A rigid body hides the body's own bending and torsion modes. Splitting it
along an axis into N segments (six DOFs each), joined by N-1 ``beam`` links
between neighbouring segment centres, brings them into the model.

Geometry. The axis (unit vector ``a``, default global x) runs through the
body's cg. A point p has the axial coordinate ``s = p . a``. The span
[start, end] is cut at N+1 stations (equal lengths by default, or a table);
segment j holds [s_j, s_j+1]. The default span is the body's ``shape`` box
along the axis when the axis is x, y or z, otherwise (or without a shape) the
extent of the points attached to the body (link ends, sensors) and its cg.

Mass. Segment j gets mass ``m_j = M w_j / sum(w)`` with ``w_j`` the weight
of its length: uniform (``w_j`` = segment length) or a table of relative
mass per length at stations (piecewise linear, integrated over the
segment). Segment cgs lie on the axis line through the body cg, at the
segment mid-points all shifted by the same ``delta`` along the axis so that
the combined cg is the body's. The segments' parallel-axis share
``Q = sum m_j t_j^2 (I - a a^T)`` (t_j: axial offset from the cg) is taken
from the body's inertia and the rest, ``J - Q``, shared in proportion to
mass, so the segments together have exactly the body's mass, cg and inertia
tensor (checked). If ``J - Q`` is not a physical inertia (a body whose
transverse moments are too small for its span), the split is refused.

Stiffness. Beam j joins the centre of segment j to that of segment j+1 (on
the axis line through the cg). Its section properties EA, EIy, EIz, GJ and
optional shear stiffness are constants or interpolated (piecewise linear in
s) from a section table at the beam's mid-point. Local beam axes: x along the
axis, section z from ``z_axis`` (default global z, or global x for a
vertical axis).

Links and sensors that named the body are moved to the segment whose span
holds their point (points before the span go to the first segment, points
after it to the last).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from builder.assembly import (
    Assembly,
    Body,
    End,
    Link,
    Sensor,
    combined_mass_properties,
    inertia_is_physical,
)
from builder.elements.beam import beam_props, default_section_axis
from builder.errors import InputError, Where
from builder.kinematics import DOF_NAMES

__all__ = ["SplitSpec", "SectionTable", "split_body", "segment_names", "SplitLayout",
           "layout", "uniform_bar", "SegmentChain"]

SECTION_KEYS = ("EA", "EIy", "EIz", "GJ", "shear_y", "shear_z")


@dataclass(frozen=True)
class SectionTable:
    """Section properties at stations along the axis (m), piecewise linear between.

    ``values`` maps EA (N), EIy, EIz, GJ (N m^2), shear_y, shear_z (N) to arrays
    of the stations' length; a missing shear key means Euler-Bernoulli.
    """

    at: np.ndarray
    values: Mapping[str, np.ndarray]

    def __call__(self, s: float) -> dict[str, float | None]:
        out: dict[str, float | None] = {}
        for key in SECTION_KEYS:
            v = self.values.get(key)
            out[key] = None if v is None else float(np.interp(s, self.at, v))
        return out


@dataclass(frozen=True)
class SplitSpec:
    """What to split and how (SI units: m, N, N m^2).

    ``name`` prefixes the new segments (``NAME_s01`` ...) and beams
    (``NAME_beam01`` ...). ``stations`` (N+1 increasing axial coordinates)
    overrides ``segments``, ``start`` and ``end``. ``mass_table`` is
    (axial coordinates, relative mass per length) or None for uniform.
    ``section`` gives constant EA, EIy, EIz, GJ (and optional shear_y,
    shear_z); ``section_table`` overrides it along the length.
    """

    body: str
    name: str = ""
    segments: int = 10
    axis: tuple[float, float, float] = (1.0, 0.0, 0.0)
    start: float | None = None
    end: float | None = None
    stations: tuple[float, ...] | None = None
    section: Mapping[str, float | None] = field(default_factory=dict)
    section_table: SectionTable | None = None
    mass_table: tuple[tuple[float, ...], tuple[float, ...]] | None = None
    z_axis: tuple[float, float, float] | None = None
    loss_factor: float = 0.0
    where: Where = field(default_factory=Where)


@dataclass(frozen=True, eq=False)
class SplitLayout:
    """Where the segments are: stations (N+1), centres (N), cg offset delta (m)."""

    axis: np.ndarray
    stations: np.ndarray
    centres: np.ndarray
    masses: np.ndarray
    cgs: np.ndarray
    inertias: np.ndarray
    delta: float


@dataclass(frozen=True, eq=False)
class SegmentChain:
    """What a split body became: its segments and where each holds (for
    :meth:`builder.assembly.Assembly.body_at`, so that plugins after the split
    find the segment carrying a point of the old body)."""

    names: tuple[str, ...]
    axis: np.ndarray
    stations: np.ndarray
    #: the body's own ``shape`` from the file (drawn as the chain's skin), or None
    shape: dict | None = None

    def body_at(self, point: np.ndarray) -> str:
        """The segment whose span holds ``point`` (m; before the span: the first)."""
        return self.names[_segment_of(float(np.asarray(point, float) @ self.axis), self.stations)]


def segment_names(prefix: str, count: int) -> list[str]:
    """``PREFIX_s01`` ... (zero-padded to the count's width, at least two digits)."""
    width = max(2, len(str(count)))
    return [f"{prefix}_s{j + 1:0{width}d}" for j in range(count)]


def _unit(v: Sequence[float], where: Where) -> np.ndarray:
    a = np.asarray(v, dtype=float).reshape(3)
    n = float(np.linalg.norm(a))
    if not np.isfinite(n) or n == 0.0:
        raise InputError("the split axis must be a non-zero vector", where)
    return a / n


def _attached_points(assembly: Assembly, body: str) -> list[np.ndarray]:
    pts = [lk.a.at for lk in assembly.links.values() if lk.a.node == body]
    pts += [lk.b.at for lk in assembly.links.values() if lk.b.node == body]
    pts += [s.at for s in assembly.sensors.values() if s.kind == "body" and s.target == body
            and s.at is not None]
    return [np.asarray(p, float) for p in pts if np.all(np.isfinite(p))]


def _stations(spec: SplitSpec, b: Body, a: np.ndarray, assembly: Assembly) -> np.ndarray:
    w = spec.where
    if spec.stations is not None:
        st = np.asarray(spec.stations, dtype=float)
        if st.size < 3 or np.any(np.diff(st) <= 0):
            raise InputError("stations must be at least three increasing axial positions "
                             "(two segments)", w)
        return st
    if spec.segments < 2:
        raise InputError(f"segments must be at least 2, got {spec.segments}", w)
    s_cg = float(b.cg @ a)
    lo = hi = None
    axis_index = [i for i in range(3) if abs(abs(a[i]) - 1.0) < 1e-12]
    if b.shape and b.shape.get("kind") == "box" and axis_index:
        half = 0.5 * float(b.shape["size"][axis_index[0]])
        lo, hi = s_cg - half, s_cg + half
    else:
        s = [float(p @ a) for p in _attached_points(assembly, b.name)] + [s_cg]
        lo, hi = min(s), max(s)
    lo = lo if spec.start is None else float(spec.start)
    hi = hi if spec.end is None else float(spec.end)
    if not hi > lo:
        raise InputError(f"the split span must have end > start, got {lo:g} to {hi:g} m "
                         "(give start and end)", w)
    return np.linspace(lo, hi, spec.segments + 1)


def _weights(spec: SplitSpec, st: np.ndarray) -> np.ndarray:
    if spec.mass_table is None:
        return np.diff(st)
    at, density = (np.asarray(v, dtype=float) for v in spec.mass_table)
    if at.size < 2 or at.size != density.size or np.any(np.diff(at) <= 0):
        raise InputError("mass_table needs at least two increasing stations, each with a "
                         "relative mass per length", spec.where)
    if np.any(density < 0):
        raise InputError("mass_table mass per length must not be negative", spec.where)
    # Integrate the piecewise linear density exactly over each segment.
    out = np.zeros(st.size - 1)
    for j in range(st.size - 1):
        xs = np.unique(np.concatenate([[st[j], st[j + 1]],
                                       at[(at > st[j]) & (at < st[j + 1])]]))
        ys = np.interp(xs, at, density)
        out[j] = float(np.sum(0.5 * (ys[1:] + ys[:-1]) * np.diff(xs)))   # exact: linear
    if np.any(out <= 0):
        raise InputError("mass_table gives a segment no mass; every segment needs some",
                         spec.where)
    return out


def layout(assembly: Assembly, spec: SplitSpec) -> SplitLayout:
    """Stations, segment masses, cgs and inertias (kg, m, kg m^2) of a split."""
    if spec.body not in assembly.bodies:
        chain = assembly.replaced.get(spec.body)
        if chain is not None:
            raise InputError(f'body "{spec.body}" is already replaced by {chain.names[0]} ... '
                             f"{chain.names[-1]}: split one of those, or split it once",
                             spec.where)
        known = ", ".join(assembly.bodies)
        raise InputError(f'unknown body "{spec.body}" (bodies: {known})', spec.where)
    b = assembly.bodies[spec.body]
    a = _unit(spec.axis, spec.where)
    st = _stations(spec, b, a, assembly)
    centres = 0.5 * (st[:-1] + st[1:])
    w = _weights(spec, st)
    masses = b.mass * w / w.sum()
    s_cg = float(b.cg @ a)
    delta = s_cg - float(masses @ centres) / b.mass
    offsets = centres + delta - s_cg                   # axial offsets from the body cg
    cgs = b.cg[None, :] + offsets[:, None] * a[None, :]
    q = float(masses @ offsets ** 2)
    rest = b.inertia - q * (np.eye(3) - np.outer(a, a))
    reason = inertia_is_physical(rest)
    if reason:
        raise InputError(
            f'cannot split body "{b.name}": after the segments\' parallel-axis share '
            f"({q:.4g} kg m^2 about the transverse axes) its inertia is not physical: "
            f"{reason}; shorten the span or put more mass near the cg", spec.where)
    inertias = (masses / b.mass)[:, None, None] * rest[None, :, :]
    return SplitLayout(a, st, centres, masses, cgs, inertias, delta)


def _section(spec: SplitSpec, s: float) -> dict[str, float | None]:
    if spec.section_table is not None:
        return spec.section_table(s)
    return {k: spec.section.get(k) for k in SECTION_KEYS}


def _segment_of(s: float, stations: np.ndarray) -> int:
    return int(np.clip(np.searchsorted(stations, s, side="right") - 1, 0, stations.size - 2))


def split_body(assembly: Assembly, spec: SplitSpec) -> Assembly:
    """A new Assembly with ``spec.body`` replaced by segments and beams.

    The segments have six DOFs each; together their mass, cg and inertia are
    the body's (checked to 1e-9 relative). Links and sensors on the body are
    moved to the segment holding their point.
    """
    lay = layout(assembly, spec)
    b = assembly.bodies[spec.body]
    prefix = spec.name or spec.body
    names = segment_names(prefix, lay.masses.size)
    clash = [n for n in names if n in assembly.bodies or n in assembly.links]
    if clash:
        raise InputError(f'the split would make "{clash[0]}", which already exists; '
                         "choose another name", spec.where)
    inertias = 0.5 * (lay.inertias + lay.inertias.transpose(0, 2, 1))   # exactly symmetric
    segments = [Body(n, m, cg, j, DOF_NAMES, None, b.where)
                for n, m, cg, j in zip(names, lay.masses.tolist(), lay.cgs.copy(), inertias)]
    _check_mass_properties(b, segments, spec.where)

    bodies: dict[str, Body] = {}
    for name, body in assembly.bodies.items():
        if name == spec.body:
            bodies.update({s.name: s for s in segments})
        else:
            bodies[name] = body

    def end(e: End) -> End:
        if e.node != spec.body:
            return e
        return End(names[_segment_of(float(np.asarray(e.at) @ lay.axis), lay.stations)], e.at)

    links = {n: Link(lk.name, lk.type, end(lk.a), end(lk.b), lk.props, lk.where)
             if spec.body in (lk.a.node, lk.b.node) else lk
             for n, lk in assembly.links.items()}
    s_cg = float(b.cg @ lay.axis)
    line = b.cg - s_cg * lay.axis                      # a point of the axis line, at s = 0
    z_hint = default_section_axis(line, line + lay.axis) if spec.z_axis is None \
        else np.asarray(spec.z_axis, float)          # every beam runs along the axis
    width = max(2, len(str(lay.masses.size - 1)))
    for j in range(lay.masses.size - 1):
        pa = line + lay.centres[j] * lay.axis
        pb = line + lay.centres[j + 1] * lay.axis
        sec = _section(spec, 0.5 * (lay.centres[j] + lay.centres[j + 1]))
        missing = [k for k in ("EA", "EIy", "EIz", "GJ") if sec.get(k) is None]
        if missing:
            raise InputError(f"the section needs {', '.join(missing)}", spec.where)
        name = f"{prefix}_beam{j + 1:0{width}d}"
        if name in links or name in bodies:
            raise InputError(f'the split would make link "{name}", which already exists',
                             spec.where)
        props = beam_props(pa, pb, sec["EA"], sec["EIy"], sec["EIz"], sec["GJ"],
                           sec["shear_y"], sec["shear_z"],
                           z_axis=z_hint,
                           loss_factor=spec.loss_factor, where=spec.where)
        links[name] = Link(name, "beam", End(names[j], pa), End(names[j + 1], pb), props,
                           spec.where)

    sensors = {}
    for n, s in assembly.sensors.items():
        if s.kind == "body" and s.target == spec.body:
            at = b.cg if s.at is None else np.asarray(s.at, float)
            s = _replace_target(s, names[_segment_of(float(at @ lay.axis), lay.stations)])
        sensors[n] = s
    chain = SegmentChain(tuple(names), lay.axis.copy(), lay.stations.copy(), b.shape)
    return assembly.replace(bodies=bodies, links=links, sensors=sensors,
                            replaced={**assembly.replaced, spec.body: chain})


def _replace_target(sensor: Sensor, target: str) -> Sensor:
    return replace(sensor, target=target)


def _check_mass_properties(body: Body, segments: list[Body], where: Where) -> None:
    mass, cg, inertia = combined_mass_properties(segments)
    scale = max(float(np.abs(body.inertia).max()), 1e-300)
    length = max(float(np.linalg.norm(body.cg)), 1.0)
    if (abs(mass - body.mass) > 1e-9 * body.mass
            or np.abs(cg - body.cg).max() > 1e-9 * length
            or np.abs(inertia - body.inertia).max() > 1e-9 * scale):
        raise InputError(f'split of body "{body.name}" does not keep its mass properties '
                         "(internal error)", where)


def uniform_bar(segments: int, length: float, mass_per_length: float,
                polar_inertia_per_length: float, section: Mapping[str, float | None],
                name: str = "bar") -> Assembly:
    """A free-free uniform bar along x from 0 to ``length`` (m), split into segments.

    One rigid body of mass ``mass_per_length * length`` (kg/m, m), section
    rotary inertia ``polar_inertia_per_length`` (kg m, shared equally by the
    two transverse axes, as for a round or square section) and the thin-rod
    inertia m L^2/12, then split into ``segments`` equal segments joined by
    beams of the given ``section`` (EA, EIy, EIz, GJ in N, N m^2), recorded
    as a use of the split_body plugin. Used by the benchmark and tests as the
    textbook free-free beam.
    """
    from builder.plugin import PluginUse

    m = mass_per_length * length
    ip = polar_inertia_per_length * length
    inertia = np.diag([ip, m * length ** 2 / 12 + ip / 2, m * length ** 2 / 12 + ip / 2])
    bar = Body(name, m, np.array([length / 2, 0.0, 0.0]), inertia, DOF_NAMES)
    asm = Assembly(name, "spatial", {name: bar})
    spec = SplitSpec(name, segments=segments, start=0.0, end=length, section=dict(section))
    # Recorded as a use of the installed plugin, as a file's would be, so that
    # labels name the bar.
    return split_body(asm, spec).replace(plugins=(PluginUse("split_body", name, spec,
                                                            Where()),))
