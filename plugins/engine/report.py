"""Every analysis of one engine block as tables: mount-system modes and decoupling
(mounts grounded and in the vehicle), torque roll axis, idle shake, roll-torque
mount forces and body responses, mount-rate scaling (:class:`EngineReport`)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from builder.formatting import number, percent
from builder.kinematics import DOF_NAMES
from builder.plugin import Table

from . import analysis as an
from .labels import _KEYS, _WORDS
from .params import EngineSpec

__all__ = ["EngineReport", "EngineReports", "ModeMotion", "engine_report", "mode_motions",
           "direction_words"]


def direction_words(axes_kind: str) -> tuple[str, ...]:
    """The six table directions (x y z rx ry rz of the table's axes) in words."""
    if axes_kind == "principal":
        return (*(f"motion along principal axis {i}" for i in (1, 2, 3)),
                *(f"rotation about principal axis {i}" for i in (1, 2, 3)))
    return tuple(_WORDS[k] for k in _KEYS)


@dataclass(frozen=True)
class ModeMotion:
    """One mode's motion read from its kinetic-energy shares: the dominant
    direction and its share (the purity, 1 = fully decoupled), and the largest
    other direction and its share."""

    mode: int                 # 1-based
    frequency_hz: float
    dominant: str
    purity: float             # share of kinetic energy in the dominant direction, 0..1
    coupled: str
    coupled_share: float      # share of the largest other direction, 0..1

    def to_dict(self) -> dict[str, Any]:
        return {"mode": self.mode, "frequency_hz": self.frequency_hz,
                "dominant": self.dominant, "purity": self.purity,
                "coupled": self.coupled, "coupled_share": self.coupled_share}

    def line(self) -> str:
        coupling = ("uncoupled" if self.coupled_share < 5e-4 else  # prints as 0.0 %
                    f"coupled most with {self.coupled} {percent(self.coupled_share)}")
        return (f"  mode {self.mode:<2} {number(self.frequency_hz, '.2f'):>6} Hz  "
                f"{self.dominant}, {percent(self.purity)} pure; {coupling}")


def mode_motions(freqs: np.ndarray, energy: np.ndarray, words: tuple[str, ...],
                 numbers: Any = None) -> tuple[ModeMotion, ...]:
    """Each mode's :class:`ModeMotion` from its frequency (Hz) and its row of
    energy shares (rows sum to 1) over the six directions named by ``words``."""
    out = []
    for i, (f, row) in enumerate(zip(freqs, np.asarray(energy), strict=True)):
        order = np.argsort(-row, kind="stable")
        out.append(ModeMotion(int(numbers[i]) if numbers is not None else i + 1, float(f),
                              words[order[0]], float(row[order[0]]), words[order[1]],
                              float(row[order[1]])))
    return tuple(out)


@dataclass(frozen=True)
class EngineReport:
    """All figures of one engine block: lead lines (what the engineer decides on)
    and tables; the tables named in ``detail_only`` print only with ``detail``."""

    name: str
    tables: tuple[Table, ...]
    figures: dict[str, Any]
    lead: tuple[str, ...] = ()
    detail_only: tuple[str, ...] = ()
    detail: bool = False

    def table(self) -> str:
        shown = [t.text() for t in self.tables
                 if self.detail or t.title not in self.detail_only]
        tail = () if self.detail or not self.detail_only else (
            "  the energy matrices, axis and idle tables: --detail",)
        return "\n\n".join(["\n".join((*self.lead, *tail)), *shown])

    def to_dict(self) -> dict[str, Any]:
        return {"engine": self.name, "summary": list(self.lead), "figures": self.figures,
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


def _in_vehicle(model: Any, spec: EngineSpec, axes: np.ndarray, words: tuple[str, ...]
                ) -> tuple[Table | None, str, list[tuple[ModeMotion, float]]]:
    """Modes of the (reduced) vehicle model in which the powertrain moves most, and
    each one's motion with the powertrain's share of its kinetic energy."""
    import scipy.linalg

    labels = [f"{spec.name}.{d}" for d in DOF_NAMES]
    if model is None or not all(lab in model.dofs for lab in labels):
        return None, "the vehicle model does not keep all six powertrain DOFs", []
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
    motions = mode_motions(freqs, energy, words, [j + 1 for j in chosen])
    return table, "", [(m, float(share[j])) for m, j in zip(motions, chosen, strict=True)]


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
                  target_bounce_hz: float | None = None, detail: bool = False
                  ) -> EngineReport:
    """Every analysis of one engine block (mounts grounded, and in ``model`` when given);
    ``detail`` prints the energy matrices, axis and idle tables after the lead lines."""
    axes, axes_words = _axes(spec, axes_kind)
    M6 = an.rigid_mass_matrix(spec.mass, spec.inertia)
    K6, C6, _ = an.mount_matrices(spec.cg, spec.mounts)
    freqs, energy = an.decoupling_table(M6, K6, axes)
    tables = [_energy_table(
        f"{spec.name}: mount-system modes, mounts grounded (energy in {axes_words})",
        freqs, energy, ("kinetic-energy share of each mode in each direction; 100 % on "
                        "one direction is a fully decoupled mode",))]
    words = direction_words(axes_kind)
    vehicle, why, in_vehicle = _in_vehicle(model, spec, axes, words)
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
    motions = mode_motions(freqs, energy, words)
    worst = min(motions, key=lambda m: m.purity)
    figures["mount_modes"] = [m.to_dict() for m in motions]
    figures["worst_coupling"] = worst.to_dict()
    lead = [f"{spec.name}: mount modes, mounts grounded (energy in {axes_words})",
            *(m.line() for m in motions),
            f"  least pure: mode {worst.mode} ({number(worst.frequency_hz, '.2f')} Hz), "
            f"{worst.dominant} {percent(worst.purity)} with {worst.coupled} "
            f"{percent(worst.coupled_share)}",
            f"  idle shake: firing {number(idle.firing_hz, '.2f')} Hz at "
            f"{idle.idle_rpm:.0f} rpm is {idle.ratio:.2f} x the highest mount mode "
            f"({number(idle.highest_mode_hz, '.2f')} Hz): "
            + (f"isolates (above {idle.crossover:.3f} x)" if idle.isolates
               else f"does NOT isolate (needs above {idle.crossover:.3f} x)")
            + f", undamped transmissibility {idle.transmissibility:.3f}",
            f"  torque roll axis: the elastic roll axis is {angle_ea:.1f} deg from it; the "
            f"roll mode (mode {roll + 1}, {number(freqs[roll], '.2f')} Hz) turns about an "
            f"axis {angle_roll:.1f} deg from it, passing {1000 * offset:.0f} mm from it at "
            "the cg"]
    if in_vehicle:
        lead += ["", f"{spec.name}: modes in the vehicle with the most powertrain motion"]
        lead += [f"{m.line()}; powertrain {percent(sh)} of the mode"
                 for m, sh in in_vehicle]
    else:
        lead.append(f"  in-vehicle modes not shown: {why}")
    # the energy matrices, the axis table and the idle table: their figures lead above
    detail_only = tuple(t.title for t in tables[:4 if vehicle is not None else 3])
    return EngineReport(spec.name, tuple(tables), figures, tuple(lead), detail_only, detail)


class EngineReports(list):
    """The reports of every engine block of a model, printed and serialised together."""

    def table(self) -> str:
        return "\n\n".join(r.table() for r in self)

    def to_dict(self) -> dict[str, Any]:
        return {"engines": [r.to_dict() for r in self]}
