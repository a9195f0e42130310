"""Engine plugin: a powertrain as one rigid body on elastic mounts, and its mount analyses.

In an assembly file::

    plugins:
      - use: engine
        name: engine
        with:
          mass: 165 kg
          cg: [0.30, 0.0, 0.55]
          inertia: {xx: 6.2, yy: 8.1, zz: 7.0, xz: -0.9}   # or gyradius: {x:, y:, z:}
          crank_axis: [0, 1, 0]          # transverse engine: crank along y
          cylinders: 4
          strokes: 4
          idle_speed: 800 rpm
          max_speed: 6000 rpm
          attach_to: body                # default far side of every mount
          mounts:
            - {name: left, at: [0.30, 0.42, 0.66], stiffness: {x: 90 kN/m, y: 60 kN/m,
               z: 220 kN/m}, frame: {z: [0, -0.34, 0.94]}, damping: {z: 250 N s/m}}
            - ...

adds the body ``NAME`` with all six DOFs (whatever the file's ``motion``),
one bushing ``NAME_MOUNT`` per mount (end a on the powertrain, end b on the
mount's ``body``, ``ground`` allowed) and the sensors ``NAME_accel_x``,
``NAME_accel_y`` and ``NAME_accel_z`` at the powertrain cg.

``lumpgraph plugin engine FILE`` prints the mount-system modes with the
kinetic-energy decoupling table (mounts grounded, and in the vehicle), the
torque roll axis and its angle to the elastic roll axis, the roll mode's
axis, the firing frequency over the speed range with the idle-shake margin,
and the mount forces under an oscillating roll torque. ``--axes principal``
gives the table in principal axes of inertia (default: crank-aligned axes);
``--target-roll HZ --target-bounce HZ`` scales the mount rates to targets;
``--plot FILE`` draws the Campbell-style order plot. See
:mod:`plugins.engine.analysis` for the formulas.
"""

from __future__ import annotations

import argparse
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from builder.analysis.labels import LabelUnit, Motion, UnitMotion, rigid_motion
from builder.assembly import Body, End, Link, Sensor
from builder.errors import InputError, Where
from builder.kinematics import DOF_NAMES
from builder.plugin import Parameter, Table

from . import analysis as an

__all__ = ["EngineSpec", "EnginePlugin", "PLUGIN", "PARAMETERS", "MOUNT_FIELDS",
           "engine_specs", "EngineReport", "engine_report"]

_RPM = 2 * math.pi / 60.0     # rad/s per rev/min

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
    Parameter("idle_speed", "angular_speed", 800 * _RPM,
              "idle speed (write e.g. \"750 rpm\"; a bare number is rad/s)", unit="rpm"),
    Parameter("max_speed", "angular_speed", 6000 * _RPM,
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


# ------------------------------------------------------------- validation --

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
    return EngineSpec(name, mass, cg, inertia, crank, cyl, strokes, idle / _RPM, top / _RPM,
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


# ------------------------------------------------------------------ apply --

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


# --------------------------------------------------------------- analyses --

@dataclass(frozen=True)
class EngineReport:
    """All figures of one engine block, as tables."""

    name: str
    tables: tuple[Table, ...]
    figures: dict[str, Any]

    def table(self) -> str:
        return "\n\n".join(t.text() for t in self.tables)

    def to_dict(self) -> dict[str, Any]:
        return {"engine": self.name, "figures": self.figures,
                "tables": [t.to_dict() for t in self.tables]}


def _axes(spec: EngineSpec, kind: str) -> tuple[np.ndarray, str]:
    if kind == "principal":
        return an.principal_axes(spec.inertia)[1], "principal axes of inertia"
    return an.crank_aligned_axes(spec.crank_axis), "crank-aligned axes (x along the crank)"


def _energy_table(title: str, freqs: np.ndarray, energy: np.ndarray, notes: tuple[str, ...],
                  first: str = "mode") -> Table:
    rows = tuple((i + 1, round(float(f), 3), *(round(100 * float(e), 1) for e in row))
                 for i, (f, row) in enumerate(zip(freqs, energy, strict=True)))
    return Table(title, (first, "Hz", *(f"{d} %" for d in an.DIRECTIONS)), rows, notes)


def _vec(v: np.ndarray, digits: int = 4) -> list[float]:
    return [round(float(x), digits) for x in v]


def _in_vehicle(model: Any, spec: EngineSpec, axes: np.ndarray) -> tuple[Table | None, str]:
    """Modes of the (reduced) vehicle model in which the powertrain moves most."""
    import scipy.linalg

    labels = [f"{spec.name}.{d}" for d in DOF_NAMES]
    if model is None or not all(lab in model.dofs for lab in labels):
        return None, "the vehicle model does not keep all six powertrain DOFs"
    M = model.M.toarray()
    K = model.K.toarray()
    lam, phi = scipy.linalg.eigh(0.5 * (K + K.T), 0.5 * (M + M.T))
    idx = [model.dofs.index(lab) for lab in labels]
    T = an.axes_transform(axes)
    total = np.einsum("ij,ij->j", phi, M @ phi)
    p = T @ phi[idx]
    Mp = T @ M[np.ix_(idx, idx)] @ T.T
    share = np.einsum("ij,ij->j", p, Mp @ p) / total
    chosen = sorted(np.argsort(-share)[:6])
    freqs = np.sqrt(np.clip(lam[chosen], 0, None)) / (2 * math.pi)
    energy = (p[:, chosen] * (Mp @ p[:, chosen])).T
    energy = energy / energy.sum(axis=1, keepdims=True)
    rows = tuple((int(j) + 1, round(float(f), 3), round(100 * float(share[j]), 1),
                  *(round(100 * float(e), 1) for e in row))
                 for j, f, row in zip(chosen, freqs, energy, strict=True))
    table = Table(f"{spec.name}: powertrain modes in the vehicle",
                  ("vehicle mode", "Hz", "powertrain share %",
                   *(f"{d} %" for d in an.DIRECTIONS)), rows,
                  ("the six vehicle modes with the largest share of kinetic energy in the "
                   "powertrain; the directions split that share",))
    return table, ""


def _vehicle_roll_response(model: Any, spec: EngineSpec, rpm: np.ndarray
                           ) -> tuple[Table | None, str]:
    """Body-side sensor responses of the vehicle model to the oscillating roll torque."""
    if model is None:
        return None, "no vehicle model"
    picked = [i for i, (n, m) in enumerate(zip(model.sensors, model.sensor_measures,
                                                strict=True))
              if m == "acceleration" and not n.startswith(f"{spec.name}_")][:6]
    if not picked:
        return None, "the file has no body acceleration sensors"
    try:
        load = sum(spec.roll_torque * float(c) * model.force_input(spec.name, None, d)
                   for c, d in zip(spec.crank_axis, ("rx", "ry", "rz"), strict=True))
    except Exception:  # a depth that condensed the powertrain away
        return None, "the vehicle model does not keep the powertrain"
    M, C, K, H = (np.asarray(a.toarray()) for a in (model.M, model.C, model.K, model.H))
    Sd, Sv, Sa, Sh = (np.asarray(a.toarray())[picked] for a in
                      (model.Sd, model.Sv, model.Sa, model.Sh))
    fire = an.firing_frequency(rpm, spec.cylinders, spec.strokes)
    rows = []
    for r, f in zip(rpm, fire, strict=True):
        w = 2 * math.pi * float(f)
        q = np.linalg.solve(K + 1j * H + 1j * w * C - w * w * M, np.asarray(load, complex))
        y = (Sd + 1j * Sh + 1j * w * Sv - w * w * Sa) @ q
        rows.append((round(float(r), 0), round(float(f), 2),
                     *(float(f"{abs(v):.4g}") for v in y)))
    names = [f"{model.sensors[i]} {model.sensor_units[i]}" for i in picked]
    return Table(f"{spec.name}: body-side response to a {spec.roll_torque:g} N m roll torque "
                 "at firing frequency (in the vehicle)", ("rpm", "firing Hz", *names),
                 tuple(rows), ("amplitudes of the body acceleration sensors",)), ""


def engine_report(spec: EngineSpec, model: Any = None, axes_kind: str = "crank",
                  speeds: int = 12, target_roll_hz: float | None = None,
                  target_bounce_hz: float | None = None) -> EngineReport:
    """Every analysis of one engine block (mounts grounded, and in ``model`` when given)."""
    axes, axes_words = _axes(spec, axes_kind)
    M6 = an.rigid_mass_matrix(spec.mass, spec.inertia)
    K6, C6, _ = an.mount_matrices(spec.cg, spec.mounts)
    freqs, energy = an.decoupling_table(M6, K6, axes)
    tables = [_energy_table(
        f"{spec.name}: mount-system modes, mounts grounded (energy in {axes_words})",
        freqs, energy, ("kinetic-energy share of each mode in each direction; 100 % on "
                        "one direction is a fully decoupled mode",))]
    vehicle, why = _in_vehicle(model, spec, axes)
    if vehicle is not None:
        tables.append(vehicle)

    tra = an.torque_roll_axis(spec.inertia, spec.crank_axis)
    ea = an.elastic_axis(K6, spec.cg, spec.crank_axis)
    import scipy.linalg
    _, phi = scipy.linalg.eigh(K6, M6)
    roll = an.roll_mode_index(energy)
    ra = an.mode_axis(phi[:, roll], spec.cg, orient=spec.crank_axis)
    angle_ea = math.degrees(an.angle_between_axes(tra, ea.direction))
    angle_roll = math.degrees(an.angle_between_axes(tra, ra.direction))
    offset = float(np.linalg.norm(np.cross(ra.point - spec.cg, tra)))
    tables.append(Table(f"{spec.name}: torque roll axis and mount-system axes", (
        "axis", "direction x", "direction y", "direction z", "point x m", "point y m",
        "point z m", "angle to TRA deg"), (
        ("torque roll axis", *_vec(tra), *_vec(spec.cg), 0.0),
        ("elastic roll axis", *_vec(ea.direction), *_vec(ea.point), round(angle_ea, 2)),
        (f"roll mode ({freqs[roll]:.2f} Hz)", *_vec(ra.direction), *_vec(ra.point),
         round(angle_roll, 2)),
    ), ("torque roll axis: direction of J^-1 e_crank through the cg",
        "elastic roll axis: axis of the static motion under a torque about the crank",
        f"the roll mode axis passes {1000 * offset:.0f} mm from the torque roll axis at the cg",
        ) + ((f"in-vehicle modes not shown: {why}",) if why else ())))

    idle = an.idle_shake_margin(spec.idle_rpm, spec.cylinders, spec.strokes, freqs)
    rpm = np.linspace(spec.idle_rpm, spec.max_rpm, max(2, speeds))
    fire = an.firing_frequency(rpm, spec.cylinders, spec.strokes)
    resp = an.roll_torque_response(M6, spec.cg, spec.mounts, spec.crank_axis, rpm,
                                   spec.cylinders, spec.strokes, spec.roll_torque)
    tables.append(Table(f"{spec.name}: idle shake", ("quantity", "value"), (
        ("idle speed rpm", round(idle.idle_rpm, 1)),
        ("firing frequency at idle Hz", round(idle.firing_hz, 3)),
        ("highest mount mode Hz", round(idle.highest_mode_hz, 3)),
        ("margin (firing / highest mode)", round(idle.ratio, 3)),
        ("isolation needs a margin above", round(idle.crossover, 4)),
        ("isolates", "yes" if idle.isolates else "NO"),
        ("undamped transmissibility", round(idle.transmissibility, 3)),
    ), (f"{spec.cylinders} cylinders, {spec.strokes}-stroke: firing order "
        f"{an.firing_order(spec.cylinders, spec.strokes):g} per revolution",
        "a one-DOF isolator transmits less than it receives only above a frequency "
        "ratio of sqrt(2)")))
    names = tuple(m.name for m in spec.mounts)
    tables.append(Table(
        f"{spec.name}: mount forces under a {spec.roll_torque:g} N m roll torque at firing "
        "frequency (mounts grounded)", ("rpm", "firing Hz", *(f"{n} N" for n in names)),
        tuple((round(float(r), 0), round(float(f), 2), *(round(float(x), 1) for x in row))
              for r, f, row in zip(rpm, fire, resp.forces, strict=True)),
        ("force amplitude of each mount's translational components",)))
    body_side, why_body = _vehicle_roll_response(model, spec, rpm)
    if body_side is not None:
        tables.append(body_side)
    figures: dict[str, Any] = {
        "frequencies_hz": _vec(freqs, 6), "energy": [_vec(r, 6) for r in energy],
        "axes": [_vec(a, 6) for a in axes], "torque_roll_axis": _vec(tra, 6),
        "elastic_axis": {"direction": _vec(ea.direction, 6), "point": _vec(ea.point, 6),
                         "angle_to_tra_deg": angle_ea},
        "roll_mode_axis": {"mode": roll + 1, "direction": _vec(ra.direction, 6),
                           "point": _vec(ra.point, 6), "angle_to_tra_deg": angle_roll},
        "idle_shake": idle.to_dict(),
        "roll_torque": {"rpm": _vec(rpm, 2), "firing_hz": _vec(fire, 4),
                        "mount_forces_n": {n: _vec(resp.forces[:, j], 3)
                                           for j, n in enumerate(names)}},
    }
    if target_roll_hz is not None and target_bounce_hz is not None:
        sc = an.scale_mount_rates(spec.mass, spec.cg, spec.inertia, spec.mounts,
                                  spec.crank_axis, target_roll_hz, target_bounce_hz)
        tables.append(Table(f"{spec.name}: mount rates scaled to targets", (
            "quantity", "target", "achieved"), (
            ("roll Hz", target_roll_hz, round(sc.roll_hz, 3)),
            ("bounce Hz", target_bounce_hz, round(sc.bounce_hz, 3)),
            ("factor on local z rates", "", round(sc.axial_factor, 4)),
            ("factor on local x, y rates", "", round(sc.shear_factor, 4)),
            ("all six modes Hz", "", ", ".join(f"{f:.2f}" for f in sc.frequencies_hz)),
        ), () if sc.converged else ("the targets could not both be met; closest shown",)))
        figures["rate_scaling"] = {"axial_factor": sc.axial_factor,
                                   "shear_factor": sc.shear_factor, "roll_hz": sc.roll_hz,
                                   "bounce_hz": sc.bounce_hz, "converged": sc.converged}
    return EngineReport(spec.name, tuple(tables), figures)


def plot_campbell(spec: EngineSpec, path: str) -> None:
    """Campbell-style order plot: firing order line over the speed range and the mount
    modes as horizontal lines (grounded), written to ``path`` (png, pdf, svg)."""
    import io

    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from builder.io import write_atomic

    M6 = an.rigid_mass_matrix(spec.mass, spec.inertia)
    K6, _, _ = an.mount_matrices(spec.cg, spec.mounts)
    freqs, _ = an.decoupling_table(M6, K6, an.crank_aligned_axes(spec.crank_axis))
    rpm = np.linspace(0.0, spec.max_rpm, 200)
    fig, ax = plt.subplots(figsize=(7, 4.5))
    order = an.firing_order(spec.cylinders, spec.strokes)
    for k, style in ((0.5, ":"), (1.0, "-"), (2.0, "--")):
        ax.plot(rpm, k * order * rpm / 60, style, color="C0",
                label=f"order {k * order:g}")
    for f in freqs:
        ax.axhline(f, color="C3", lw=0.8)
        ax.axhline(f * math.sqrt(2), color="C3", lw=0.5, ls=":")
    ax.axvline(spec.idle_rpm, color="k", lw=0.8, ls="--", label="idle")
    ax.set_xlabel("engine speed (rpm)")
    ax.set_ylabel("frequency (Hz)")
    ax.set_title(f"{spec.name}: firing orders and mount modes (dotted: x sqrt(2))")
    ax.set_ylim(0, max(freqs.max() * 3, order * spec.idle_rpm / 60 * 1.5))
    ax.legend(loc="upper left")
    buf = io.BytesIO()
    fig.savefig(buf, format=path.rsplit(".", 1)[-1] if "." in path else "png")
    plt.close(fig)
    write_atomic(path, buf.getvalue())


class EnginePlugin:
    """A powertrain on elastic mounts: decoupling, torque roll axis, idle shake."""

    name = "engine"
    summary = ("a powertrain as one rigid body on elastic mounts; decoupling table, torque "
               "roll axis, idle-shake margin, roll-torque mount forces, rate scaling")
    parameters = PARAMETERS

    def validate(self, fields: Mapping[str, Any], name: str, parameters: Mapping[str, Any],
                 where: Where) -> EngineSpec:
        """Check a ``with:`` block (before anything runs); returns the engine spec."""
        return parse_engine_spec(fields, name, parameters, where)

    def apply(self, assembly: Any, spec: EngineSpec) -> Any:
        """The new Assembly with the powertrain and its mounts added."""
        return add_engine(assembly, spec)

    def configure_cli(self, parser: argparse.ArgumentParser) -> None:
        from builder.options import argtype, choice, output_file, quantity

        parser.add_argument("--axes", type=argtype(choice, "--axes", ("crank", "principal")),
                            default="crank", metavar="AXES",
                            help="axes of the decoupling table: crank (default) or principal")
        parser.add_argument("--target-roll", metavar="HZ",
                            type=argtype(quantity, "--target-roll", "frequency", high=1000.0,
                                         unit="Hz"),
                            help="target roll frequency for mount-rate scaling (Hz)")
        parser.add_argument("--target-bounce", metavar="HZ",
                            type=argtype(quantity, "--target-bounce", "frequency", high=1000.0,
                                         unit="Hz"),
                            help="target bounce frequency for mount-rate scaling (Hz)")
        parser.add_argument("--plot", metavar="OUT.png",
                            type=argtype(output_file, "--plot", (".png",)),
                            help="write the order plot (PNG)")

    def label_units(self, assembly: Any, spec: EngineSpec) -> list[Any]:
        """The powertrain as one label unit, in its crank-aligned words (roll = about
        the crankshaft), e.g. ``"powertrain roll about the crank with bounce"``."""
        return [_PowertrainUnit(spec, len(engine_specs(assembly)) > 1)]

    def analyse(self, model: Any, **options: Any) -> Any:
        """An :class:`EngineReport` per engine block (a list with ``table()``)."""
        assembly = options.get("assembly")
        if assembly is None:
            raise InputError("the engine analyses need the assembly")
        roll, bounce = options.get("target_roll"), options.get("target_bounce")
        if (roll is None) != (bounce is None):
            raise InputError("give both --target-roll and --target-bounce")
        for v, flag in ((roll, "--target-roll"), (bounce, "--target-bounce")):
            if v is not None and not v > 0:
                raise InputError(f"must be a positive frequency in Hz, got {v}",
                                 Where(field=flag))
        reports = [engine_report(s, model, options.get("axes", "crank"),
                                 target_roll_hz=roll, target_bounce_hz=bounce)
                   for s in engine_specs(assembly)]
        if options.get("plot"):
            for s in engine_specs(assembly):
                path = options["plot"]
                if len(reports) > 1:
                    stem, _, ext = path.rpartition(".")
                    path = f"{stem}_{s.name}.{ext}" if stem else f"{path}_{s.name}"
                plot_campbell(s, path)
        return _Reports(reports)

    def tables(self, assembly: Any, model: Any, **options: Any) -> list[tuple[str, Any]]:
        """(title, Table) pairs of every engine block, for the report."""
        out = []
        for s in engine_specs(assembly):
            for t in engine_report(s, model).tables:
                out.append((t.title, t))
        return out


_WORDS = {"crank x": "motion along the crank", "crank y": "motion across the crank",
          "z": "bounce", "crank rx": "roll about the crank", "crank ry": "pitch",
          "crank rz": "yaw"}
_KEYS = ("crank x", "crank y", "z", "crank rx", "crank ry", "crank rz")


class _PowertrainUnit(LabelUnit):
    """A powertrain block's body, named "powertrain" (with the block's name when a
    file has several), its motion in crank-aligned axes when the model keeps its
    six DOFs (in global words otherwise)."""

    subsystem = True

    def __init__(self, spec: EngineSpec, several: bool):
        super().__init__(f"powertrain {spec.name}" if several else "powertrain", (spec.name,))
        self.T = an.axes_transform(an.crank_aligned_axes(spec.crank_axis))
        self.Mp = self.T @ an.rigid_mass_matrix(spec.mass, spec.inertia) @ self.T.T

    def describe(self, bodies: UnitMotion) -> Motion | None:
        b = bodies[0]
        q, observed = b.six()
        if not observed.all():
            return rigid_motion(b.dofs, b.energy, b.value)
        p = self.T @ q
        return rigid_motion(_KEYS, p * (self.Mp @ p), p, _WORDS)


class _Reports(list):
    def table(self) -> str:
        return "\n\n".join(r.table() for r in self)

    def to_dict(self) -> dict[str, Any]:
        return {"engines": [r.to_dict() for r in self]}


PLUGIN = EnginePlugin()
