"""Model checks: what an engineer looks at before trusting any result.

Total mass, combined cg and inertia (each physical mass once, see
:meth:`builder.assembly.Assembly.mass_properties`) and the mass each
translation DOF direction carries; DOF count; bodies not connected to ground
or road; zero-frequency (rigid-body or mechanism) modes; symmetry of M, K, C
and definiteness of M; the static corner and axle loads, tyre, wheel and ride
rates (:mod:`builder.analysis.corners`); summary lines that plugins add
(``check_summary``: the split body's first torsion and bending); and the
static deflection of every link under 1 g with the natural frequency it
implies, f = sqrt(g / delta) / (2 pi) (the static-deflection rule of a mass
on a spring).

Sign of deflections: a spring's deflection is positive in compression
(:mod:`builder.elements.spring`); a bushing's components are the motion of
end b relative to end a in its own axes.

Cost: everything here is linear in the model size except the sparse
factorisation of K (once, shared by the static solution and the lowest
modes); the smallest eigenvalue of M comes from its diagonal blocks, one per
body. The text summary fits one screen; :meth:`ModelChecks.table` with
``detail=True`` and :meth:`ModelChecks.to_dict` give every row.
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from ..eigen import DENSE_LIMIT, lowest_modes, natural_frequencies_hz, zero_frequency_modes
from ..formatting import count, number, percent, text_table
from ..linear import GRAVITY, LinearModel
from ..threads import one_blas_thread
from .corners import WHEEL_RATE_SOURCE, CornerFigures, corner_figures

__all__ = ["ModelChecks", "check_model", "SUMMARY_ROWS", "PLUGIN_MODES"]

#: Rows of a long table (static deflections, warnings) the summary shows ...
SUMMARY_ROWS = 12

#: ... and of the corner and axle tables.
_CORNER_ROWS, _AXLE_ROWS = 8, 6

#: Lowest modes the check computes first; when all are zero-frequency, it asks
#: for more (this many, then twice as many ...) until one is not.
_MODES = 12

#: ... and when an applied plugin has a ``check_summary`` hook, which gets them.
PLUGIN_MODES = 24

#: Largest relative gap between road loads and weight of a trustworthy static solution.
_BALANCE = 1e-6


def _lowest_modes(model: LinearModel, count: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The lowest ``count`` modes, and more until one is not zero-frequency (or all
    are computed): eigenvalues (rad^2/s^2), shapes and the zero-frequency mask.

    A vehicle on its tyres has no zero-frequency mode, so its lowest mode alone
    settles the count: the eigen-solution, the costliest part of the check for a
    model with many close modes, then stays small.
    """
    n = model.n
    count = min(n, max(1, count))
    while True:
        lam, shapes = lowest_modes(model.K, model.M, count)
        rigid = zero_frequency_modes(model.K, lam, shapes)
        if not rigid.all() or count == n:
            return lam, shapes, rigid
        count = min(n, max(_MODES, 2 * count))


def _smallest_mass_eigenvalue(M: Any) -> float:
    """Smallest eigenvalue of M (kg or kg m^2), from its independent diagonal blocks.

    M couples only the DOFs of one body, so its blocks are small: their
    eigenvalues come from one batched dense solve per block size, in time
    linear in the number of bodies.
    """
    n = M.shape[0]
    if n == 0:
        return 0.0
    coo = sp.coo_array(M)
    ncomp, labels = connected_components(sp.csr_array(M), directed=False)
    sizes = np.bincount(labels, minlength=ncomp)
    order = np.argsort(labels, kind="stable")
    local = np.empty(n, dtype=int)
    local[order] = np.arange(n) - np.repeat(np.cumsum(sizes) - sizes, sizes)
    smallest = math.inf
    for size in np.unique(sizes):
        comps = np.flatnonzero(sizes == size)
        if size > 600:   # a large coupled block (not one body's): iterative
            for c in comps:
                rows = np.flatnonzero(labels == c)
                block = sp.csr_array(M)[rows][:, rows]
                smallest = min(smallest, float(lowest_modes(
                    block, sp.identity(size, format="csr"), 1)[0][0]))
            continue
        slot = -np.ones(ncomp, dtype=int)
        slot[comps] = np.arange(comps.size)
        blocks = np.zeros((comps.size, size, size))
        sel = slot[labels[coo.row]] >= 0
        r, c = coo.row[sel], coo.col[sel]
        np.add.at(blocks, (slot[labels[r]], local[r], local[c]), coo.data[sel])
        smallest = min(smallest, float(np.linalg.eigvalsh(blocks).min()))
    return smallest


def _asymmetry(A) -> float:
    norm = abs(A).max() if A.nnz else 0.0
    return float(abs(A - A.T).max() / norm) if norm else 0.0


def _dof_masses(model: LinearModel) -> dict[str, float]:
    """Mass (kg) moving with each translation direction: the bodies that have that DOF."""
    out = dict.fromkeys(("x", "y", "z"), 0.0)
    for b in model.assembly.bodies.values():
        for d in out:
            if d in b.dofs:
                out[d] += float(b.mass)
    return out


def _static(model: LinearModel, q: np.ndarray) -> tuple[dict[str, Any], ...]:
    """The static deflection of every link in its load-carrying component (the one
    storing the most strain energy, k d^2 / 2), its force and the implied frequency."""
    out = []
    for name, lm in model.links.items():
        if not len(lm.stiffness):
            continue
        d = lm.Dq @ q[lm.cols]
        force = lm.stiffness * d
        c = int(np.argmax(force * d)) if np.any(force * d > 0) else int(np.argmax(np.abs(d)))
        delta = float(d[c])
        implied = math.sqrt(GRAVITY / abs(delta)) / (2 * math.pi) \
            if lm.units[c] == "m" and lm.stiffness[c] > 0 and abs(delta) > 1e-9 else None
        out.append({"link": name, "component": lm.components[c], "deflection": delta,
                    "unit": lm.units[c], "force": float(force[c]),
                    "implied_frequency_hz": implied})
    return tuple(out)


def _summary_hooks(model: LinearModel) -> list[tuple[str, Any]]:
    """(plugin name, hook) of every applied plugin with a ``check_summary`` hook, once."""
    out, seen = [], set()
    for use in model.assembly.plugins:
        plugin = getattr(use, "plugin", None)
        hook = getattr(plugin, "check_summary", None)
        if plugin is not None and id(plugin) not in seen and callable(hook):
            seen.add(id(plugin))
            out.append((str(getattr(use, "use", "")), hook))
    return out


def _plugin_summaries(model: LinearModel, eigenvalues: np.ndarray, shapes: np.ndarray
                      ) -> tuple[list[dict[str, Any]], list[str]]:
    """What applied plugins add to the check (their ``check_summary`` hook)."""
    out: list[dict[str, Any]] = []
    problems: list[str] = []
    for name, hook in _summary_hooks(model):
        try:
            for item in hook(model, eigenvalues, shapes) or ():
                out.append({"plugin": name, **dict(item)})
        except Exception as exc:  # a plugin's figures must not stop the checks
            problems.append(f'plugin "{name}" could not add its check figures: '
                            f"{type(exc).__name__}: {exc}")
    return out, problems


@dataclass(frozen=True, eq=False)
class ModelChecks:
    """Results of :func:`check_model`; masses kg, lengths m, inertia kg m^2, forces N."""

    name: str
    total_mass: float
    cg: np.ndarray
    inertia: np.ndarray
    dof_count: int
    dofs: tuple[str, ...]
    unconnected: tuple[str, ...]
    zero_modes: int
    zero_mode_note: str
    static: tuple[dict[str, Any], ...]
    asymmetry: dict[str, float]
    min_eigenvalue: dict[str, float]
    warnings: tuple[str, ...]
    counts: dict[str, int] = field(default_factory=dict)
    directional_parts: dict[str, tuple[str, ...]] = field(default_factory=dict)
    directional_mass: dict[str, float] = field(default_factory=dict)
    dof_mass: dict[str, float] = field(default_factory=dict)
    lowest_hz: tuple[float, ...] = ()
    corners: CornerFigures | None = None
    plugin_summaries: tuple[dict[str, Any], ...] = ()

    @property
    def ok(self) -> bool:
        return (not self.unconnected and self.zero_modes == 0 and
                max(self.asymmetry.values()) < 1e-12 and self.min_eigenvalue["M"] > 0)

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "total_mass_kg": self.total_mass, "cg_m": self.cg.tolist(),
                "inertia_kg_m2": self.inertia.tolist(), "dof_count": self.dof_count,
                "dofs": list(self.dofs), "counts": self.counts,
                "directional_parts": {k: list(v) for k, v in self.directional_parts.items()},
                "directional_mass_kg": self.directional_mass, "dof_mass_kg": self.dof_mass,
                "unconnected_bodies": list(self.unconnected),
                "zero_frequency_modes": self.zero_modes, "zero_mode_note": self.zero_mode_note,
                "lowest_frequencies_hz": list(self.lowest_hz),
                "corners": None if self.corners is None else self.corners.to_dict(),
                "plugin_summaries": list(self.plugin_summaries),
                "static_deflection": list(self.static), "asymmetry": self.asymmetry,
                "min_eigenvalue": self.min_eigenvalue, "warnings": list(self.warnings),
                "ok": self.ok}

    # -- text ---------------------------------------------------------------
    def _mass_lines(self) -> list[str]:
        i = self.inertia
        lines = [f"total mass: {self.total_mass:.1f} kg"]
        for part, holders in self.directional_parts.items():
            names = ", ".join(holders[:3]) + (f" and {len(holders) - 3} more"
                                              if len(holders) > 3 else "")
            lines += textwrap.wrap(
                f"counted once: {part} ({self.directional_mass[part]:.1f} kg) carries in its "
                f"own DOFs the mass of {names}", 96, initial_indent="  ",
                subsequent_indent="    ")
        moving = ", ".join(f"{d} {m:.1f} kg" for d, m in self.dof_mass.items())
        return lines + [
            "combined cg: [" + ", ".join(number(v, ".4f") for v in self.cg) + "] m",
            "inertia about the cg (kg m^2): " + "  ".join(
                f"{k} {number(v, '.1f')}" for k, v in (
                    ("xx", i[0, 0]), ("yy", i[1, 1]), ("zz", i[2, 2]), ("xy", -i[0, 1]),
                    ("xz", -i[0, 2]), ("yz", -i[1, 2]))),
            f"mass moving with the translation DOFs: {moving}"]

    def _model_lines(self) -> list[str]:
        zero = f"zero-frequency modes: {self.zero_modes}" + (
            f" ({self.zero_mode_note})" if self.zero_mode_note else "")
        lowest = ", ".join(f"{f:.3g}" for f in self.lowest_hz)
        m_min = self.min_eigenvalue["M"]
        return ["",
                zero + (f"; lowest natural frequenc{'y' if len(self.lowest_hz) == 1 else 'ies'}"
                        f" {lowest} Hz" if lowest else ""),
                "unconnected bodies: " + (", ".join(self.unconnected) or "none"),
                "symmetry |A - A^T| / |A|: " + "  ".join(f"{k} {v:.1e}"
                                                          for k, v in self.asymmetry.items()),
                f"M positive definite: {'yes' if m_min > 0 else 'NO'} "
                f"(smallest eigenvalue {m_min:.4g})"]

    def _counts_line(self) -> str:
        c = self.counts
        return ", ".join([count(self.dof_count, "DOF")] + [count(c[k], noun) for k, noun in (
            ("bodies", "body"), ("links", "link"), ("road", "road point"),
            ("sensors", "sensor")) if k in c])

    def _corner_lines(self, detail: bool) -> list[str]:
        cf = self.corners
        if cf is None:
            return []
        rows = [[c.road, c.axle, c.link, c.load, c.load / GRAVITY, c.tyre_rate / 1e3,
                 None if c.wheel_rate is None else c.wheel_rate / 1e3,
                 None if c.ride_rate is None else c.ride_rate / 1e3] for c in cf.corners]
        lines = ["", "static loads under 1 g and rates at the road points:"]
        shown = rows if detail or len(rows) <= 12 else rows[:_CORNER_ROWS]
        lines.append(text_table(["corner", "axle", "link", "load (N)", "load (kg)",
                                 "tyre (kN/m)", "wheel (kN/m)", "ride (kN/m)"], shown,
                                spec=".1f", indent="  "))
        if len(shown) < len(rows):
            lines.append(f"  ... {count(len(rows) - len(shown), 'more road point')} "
                         "(--detail lists all)")
        axles = [[a.name, a.x, len(a.corners), a.load, a.load / GRAVITY, percent(a.share)]
                 for a in cf.axles]
        shown = axles if detail or len(axles) <= _AXLE_ROWS else axles[:_AXLE_ROWS]
        lines.append(text_table(["axle", "x (m)", "road points", "load (N)", "load (kg)",
                                 "share"], shown, spec=["", ".3f", ".0f", ".1f", ".1f", ""],
                                indent="  ", align="lrrrrr"))
        if len(shown) < len(axles):
            lines.append(f"  ... {count(len(axles) - len(shown), 'more axle')} "
                         "(--detail lists all)")
        total = cf.road_load
        lines.append(f"  road points carry {total:.1f} N ({total / GRAVITY:.1f} kg)"
                     + (f"; {cf.other_supports:.1f} N go to ground links" if cf.grounded
                        else f", against a weight of {cf.weight:.1f} N on the vertical DOFs"))
        lines += textwrap.wrap(WHEEL_RATE_SOURCE, 96, initial_indent="  ",
                               subsequent_indent="    ")
        lines.extend(f"  note: {n}" for n in cf.notes)
        return lines

    def _static_lines(self, detail: bool) -> list[str]:
        if not self.static:
            return []
        rows = list(self.static)
        title = "static deflection under 1 g (springs: compression positive)"
        if not detail and len(rows) > 2 * SUMMARY_ROWS:
            rows = sorted(rows, key=lambda s: -abs(s["deflection"]) if s["unit"] == "m"
                          else 0.0)[:SUMMARY_ROWS]
            title += (f", the {SUMMARY_ROWS} largest of {len(self.static)} links "
                      "(--detail lists all)")
        table = [[s["link"], s["component"],
                  number(1000 * s["deflection"], ".2f")
                  + (" mm" if s["unit"] == "m" else " mrad"),
                  number(s["force"], ".1f") + (" N" if s["unit"] == "m" else " N m"),
                  s["implied_frequency_hz"]] for s in rows]
        return ["", title + ":", text_table(
            ["link", "component", "deflection", "force", "implied f (Hz)"], table,
            spec=".2f", indent="  ", align="llrrr")]

    def _summary_lines(self) -> list[str]:
        return [str(s.get("text", "")) for s in self.plugin_summaries if s.get("text")]

    def table(self, detail: bool = False) -> str:
        """The checks as text: a one-screen summary, or every row with ``detail``."""
        lines = [f"model: {self.name}", self._counts_line(), *self._mass_lines()]
        lines += self._corner_lines(detail)
        lines += self._model_lines()
        lines += self._summary_lines()
        lines += self._static_lines(detail)
        warnings = list(self.warnings)
        if warnings:
            lines.append("")
        shown = warnings if detail or len(warnings) <= SUMMARY_ROWS else warnings[:SUMMARY_ROWS]
        lines.extend(f"warning: {w}" for w in shown)
        if len(shown) < len(warnings):
            lines.append(f"... {count(len(warnings) - len(shown), 'more warning')} "
                         "(--detail lists all)")
        return "\n".join(lines)


def _corner_warnings(cf: CornerFigures) -> list[str]:
    """Road points that pull on the road under 1 g, and wheels that no link holds."""
    out = []
    lifted = [c for c in cf.corners if c.load < 0]
    if lifted:
        names = ", ".join(f"{c.road} ({c.load:.0f} N)" for c in lifted)
        out.append(f"the static load at {names} is negative: standing still, that wheel "
                   "would lift off the road (the linear model holds it down by pulling); "
                   "look at the springs and the cg")
    loose = [c.road for c in cf.corners if c.wheel_rate == 0]
    if loose:
        out.append(f"wheel rate 0 at {', '.join(loose)}: that wheel rises without deforming "
                   "a link (no suspension spring between it and the rest)")
    return out


def check_model(model: LinearModel) -> ModelChecks:
    """Run every model check on an (unreduced) model."""
    with one_blas_thread():
        return _check_model(model)


def _check_model(model: LinearModel) -> ModelChecks:
    asm = model.assembly
    mass, cg, inertia = asm.mass_properties()
    n = model.n
    lam, shapes = np.zeros(0), np.zeros((n, 0))
    zero = 0
    hooks = _summary_hooks(model)
    if n:
        lam, shapes, rigid = _lowest_modes(
            model, PLUGIN_MODES if hooks else (3 if n <= DENSE_LIMIT else 1))
        zero = int(np.sum(rigid))
        lam, shapes = lam[~rigid], shapes[:, ~rigid]
    anchored = any(lk.a.kind != "body" or lk.b.kind != "body" for lk in asm.links.values())
    note = ""
    if zero:
        note = ("mechanism: part of the model can move without deforming a link" if anchored
                else "rigid-body modes: the model is not attached to ground or road")
    warnings = list(asm.warnings)
    static: tuple[dict[str, Any], ...] = ()
    corners = None
    if zero:
        warnings.append("static deflection and loads not computed: the model has "
                        "zero-frequency modes")
    elif n:
        q = model.static_response(GRAVITY)
        if model.joints is not None:     # links read the body DOFs the joints expand to
            static = _static(model, np.asarray(model.expansion @ q).ravel())
            corners = None
            warnings.append("corner loads and rates of a jointed model: see lumpgraph corner "
                            "(the linkage's motion ratios, wheel and ride rates)")
        else:
            static = _static(model, q)
            corners = corner_figures(model, q)
        if corners is not None:
            warnings += _corner_warnings(corners)
        if corners is not None and corners.imbalance > _BALANCE:
            warnings.append(
                f"the static solution is inaccurate: the road points carry "
                f"{corners.road_load:.1f} N of a weight of {corners.weight:.1f} N "
                f"({percent(corners.imbalance, 2)} apart); the stiffness matrix is too "
                "ill-conditioned (very stiff links on light bodies, such as many short "
                "segments): fewer segments or softer joints give trustworthy loads")
    summaries, problems = _plugin_summaries(model, lam, shapes) if hooks else ([], [])
    warnings += problems
    parts = asm.directional_parts()
    return ModelChecks(
        asm.name, mass, cg, inertia, n, model.dofs, tuple(asm.unconnected_bodies()), zero, note,
        static, {"M": _asymmetry(model.M), "K": _asymmetry(model.K), "C": _asymmetry(model.C)},
        {"M": _smallest_mass_eigenvalue(model.M),
         "K": float(lam[0]) if len(lam) else 0.0},
        tuple(warnings),
        counts={"bodies": len(asm.bodies), "links": len(asm.links), "road": len(asm.road),
                "sensors": len(asm.sensors)},
        directional_parts=parts,
        directional_mass={p: float(asm.bodies[p].mass) for p in parts},
        dof_mass=_dof_masses(model),
        lowest_hz=tuple(float(f) for f in natural_frequencies_hz(lam[:3])),
        corners=corners, plugin_summaries=tuple(summaries))
