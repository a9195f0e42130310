"""Plausibility of a model's sizes: typos in a value or its unit, caught before any
analysis runs on them.

Each link gets an *implied frequency*: for the DOF it stiffens most relative to
that DOF's mass or inertia, ``sqrt(k_jj / M_jj) / (2 pi)`` (Hz), with k_jj the
link's own share of the stiffness diagonal. It is the frequency at which that
DOF would vibrate on this link alone, and it shows a rate that cannot belong
to a vehicle whatever the unit was meant to be:

- hopeless (InputError, exit 2): an implied frequency above
  :data:`HOPELESS_HZ` (a tyre of "260 kN/nm", 1e9 times too stiff, gives a
  wheel 430 kHz), a body whose mass or inertia is not a positive finite
  number or is below :data:`MASS_RATIO` times the largest (a 1e-300 kg wheel);
  such values leave no significant digit in the lowest modes;
- a loss factor above :data:`LOSS_FACTOR_LIMIT` is refused, above 1 warned about;
- suspicious (warning): a spring or bushing whose implied frequency is above
  :data:`LUMPED_HZ` (a road spring of "26 kN/mm" puts a 36 kg wheel at
  135 Hz; ride, mount, seat and tyre rates give 1 to 60 Hz), and links whose
  implied frequencies span more than :data:`SPREAD` (the lowest modes then
  keep only a few significant digits). Beams are not held to the lumped
  limit nor to the others (short segments of a finely divided body reach any
  frequency: it grows with the square of the division).

The limits are common practice for vehicle ride and NVH models, no source.
:func:`plausibility` returns the findings; :func:`require_plausible` raises
the first hopeless one and returns the warnings. ``assemble`` calls it, so
every analysis gets the check through one place.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
import scipy.sparse as sp

from .errors import InputError, Where


class LinearModel(Protocol):
    """What the checks read of a :class:`builder.linear.LinearModel` (this module
    sits below the assembler, which calls it, so it does not import it)."""

    assembly: Any
    dofs: tuple[str, ...]
    M: Any
    links: Mapping[str, Any]

    @property
    def n(self) -> int: ...

__all__ = ["Finding", "plausibility", "require_plausible", "HOPELESS_HZ", "LUMPED_HZ",
           "SPREAD", "MASS_RATIO", "LOSS_FACTOR_LIMIT"]

#: Implied frequency (Hz) beyond any lumped vehicle model: refused.
HOPELESS_HZ = 1.0e5
#: Implied frequency (Hz) above which a spring or bushing is reported as suspicious.
LUMPED_HZ = 100.0
#: Ratio of the highest to the lowest implied frequency reported as suspicious.
SPREAD = 1.0e6
#: A mass or inertia below this times the model's largest of its kind is refused.
MASS_RATIO = 1.0e-9
#: Loss factors above this are refused, above 1 warned about (elastomers and
#: structural damping treatments stay below about 1; common practice, no source).
LOSS_FACTOR_LIMIT = 10.0
_LUMPED_TYPES = ("spring", "bushing")
_LISTED = 3                 # links named one by one; the rest are counted


@dataclass(frozen=True)
class Finding:
    """One implausible value: ``hopeless`` ones stop the analysis."""

    hopeless: bool
    reason: str
    where: Where

    def __str__(self) -> str:
        prefix = self.where.prefix()
        return f"{prefix}: {self.reason}" if prefix else self.reason


def require_plausible(model: LinearModel) -> tuple[str, ...]:
    """Raise InputError for the first hopeless finding; else the warnings (lines)."""
    findings = plausibility(model)
    for f in findings:
        if f.hopeless:
            raise InputError(f.reason, f.where)
    return tuple(str(f) for f in findings)


def plausibility(model: LinearModel) -> tuple[Finding, ...]:
    """Every implausible mass, inertia, point or link rate of an unreduced model."""
    if model.assembly is None or model.n == 0:
        return ()
    with np.errstate(all="ignore"):
        return _findings(model)


def _findings(model: LinearModel) -> tuple[Finding, ...]:
    found = _masses(model) + _points(model) + _loss_factors(model)
    if any(f.hopeless for f in found):
        return tuple(found)
    names, omega2, dof = _implied(model)
    links = model.assembly.links
    # Beams are held to no frequency limit: the segments of a finely divided body
    # legitimately reach any frequency (it grows with the square of the division).
    lumped = np.array([links[n].type != "beam" for n in names], dtype=bool)
    hz = np.where(lumped, np.sqrt(omega2) / (2 * math.pi), 0.0)
    md = np.asarray(model.M.diagonal(), dtype=float)
    high = [i for i in np.argsort(-hz) if hz[i] > LUMPED_HZ
            and (hz[i] > HOPELESS_HZ or links[names[i]].type in _LUMPED_TYPES)]
    for i in high[:_LISTED]:
        link = links[names[i]]
        text = _rate_text(model, md, names[i], dof[i], hz[i])
        if hz[i] > HOPELESS_HZ:   # springs, bushings and plugin link types
            found.append(Finding(True, text + f", beyond any vehicle model (above "
                                 f"{HOPELESS_HZ:.0e} Hz): check the value and its unit",
                                 link.where))
        else:
            found.append(Finding(False, text + f", high for a {link.type} (vehicle ride, "
                                 f"mount and seat rates sit below about {LUMPED_HZ:.0f} Hz): "
                                 "check the value and its unit, or use a rigid link",
                                 link.where))
    if len(high) > _LISTED:
        found.append(Finding(False, f"{len(high) - _LISTED} more links have implied "
                             f"frequencies above {LUMPED_HZ:.0f} Hz (up to "
                             f"{_hz(hz[high[_LISTED]])})", links[names[high[_LISTED]]].where))
    positive = np.flatnonzero(hz > 0)
    if len(positive) > 1 and not any(f.hopeless for f in found):
        hi, lo = positive[np.argmax(hz[positive])], positive[np.argmin(hz[positive])]
        if hz[hi] > SPREAD * hz[lo]:
            found.append(Finding(False, f"implied frequencies span {hz[hi] / hz[lo]:.1e} "
                                 f"(link {names[lo]} {_hz(hz[lo])} to link {names[hi]} "
                                 f"{_hz(hz[hi])}): the lowest modes keep few significant "
                                 "digits; check both values", links[names[hi]].where))
    return tuple(sorted(found, key=lambda f: not f.hopeless))


def _loss_factors(model: LinearModel) -> list[Finding]:
    out = []
    for name, link in model.assembly.links.items():
        eta = link.props.get("loss_factor", 0.0) if isinstance(link.props, dict) else 0.0
        if not isinstance(eta, int | float) or eta <= 1.0:
            continue
        hopeless = not math.isfinite(eta) or eta > LOSS_FACTOR_LIMIT
        out.append(Finding(hopeless, f"loss factor {eta:.3g} of link {name} is "
                           + ("beyond any material (above 10)" if hopeless else
                              "above 1, more than elastomers or damping treatments give")
                           + ": check the value", link.where))
    return out


#: Link points farther than this from the origin (m) are refused.
_FAR = 1.0e5


def _points(model: LinearModel) -> list[Finding]:
    ends = [(link, end) for link in model.assembly.links.values() for end in (link.a, link.b)
            if getattr(end, "at", None) is not None]
    if not ends:
        return []
    try:
        points = np.array([end.at for _, end in ends], dtype=float).reshape(len(ends), -1)
    except ValueError:     # points of different lengths: one at a time
        points = None
    if points is not None:
        good = np.isfinite(points).all(axis=1) & (np.abs(points).max(axis=1, initial=0.0)
                                                  <= _FAR)
        bad = np.flatnonzero(~good)
        ends = [ends[int(bad[0])]] if len(bad) else []
    for link, end in ends:
        p = np.asarray(end.at, dtype=float)
        if not (np.all(np.isfinite(p)) and float(np.max(np.abs(p), initial=0.0)) <= _FAR):
            return [Finding(True, f"point {_vector(p)} m of end {end.node} lies beyond "
                            f"{_FAR:.0e} m: check the coordinates", link.where)]
    return []


def _vector(p: np.ndarray) -> str:
    return "[" + ", ".join(f"{v:.3g}" for v in np.ravel(p)) + "]"


def _where(model: LinearModel, body) -> Where:
    """A body's place, or at least the file and field for bodies a plugin made."""
    if body.where.file:
        return body.where
    return Where(model.assembly.source, 0, f"bodies.{body.name} (made by a plugin)")


def _masses(model: LinearModel) -> list[Finding]:
    out = []
    md = np.asarray(model.M.diagonal(), dtype=float)
    bodies = model.assembly.bodies
    split = [d.rsplit(".", 1) for d in model.dofs]
    rotational = np.array([p[-1] in ("rx", "ry", "rz") for p in split], dtype=bool)
    # body DOFs only: a superelement's interior coordinates carry its own given matrices
    on_body = np.array([p[0] in bodies for p in split], dtype=bool)
    for kind, mask, unit in (("mass", ~rotational & on_body, "kg"),
                             ("inertia", rotational & on_body, "kg m^2")):
        if not mask.any():
            continue
        values = md[mask]
        ok = np.isfinite(values) & (values > 0)
        largest = float(np.max(values[ok], initial=0.0))
        bad = np.flatnonzero(~ok | (values < MASS_RATIO * largest))
        if len(bad):
            dof = np.asarray(model.dofs)[mask][bad[0]]
            body = bodies[dof.rsplit(".", 1)[0]]
            v = float(values[bad[0]])
            why = ("is not a positive finite number" if not (math.isfinite(v) and v > 0) else
                   f"is below {MASS_RATIO:.0e} of the largest in the model ({largest:.3g} {unit})")
            out.append(Finding(True, f"{kind} {v:.3g} {unit} of {dof} {why}: check the value "
                               "and its unit", _where(model, body)))
    return out


def _implied(model: LinearModel) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Per link: name, largest k_jj / M_jj over its DOFs (rad^2/s^2), and that DOF."""
    names, share = _diagonal_shares(model)
    if not names:
        return [], np.zeros(0), np.zeros(0, dtype=int)
    md = np.asarray(model.M.diagonal(), dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        scaled = sp.csr_array(share @ sp.diags_array(1.0 / md))
    omega2 = np.zeros(len(names))
    dof = np.zeros(len(names), dtype=int)
    # each row's largest entry (the first of equal ones, NaN first as np.argmax takes it)
    counts = np.diff(scaled.indptr)
    rows = np.flatnonzero(counts)
    if len(rows):
        data = scaled.data[:scaled.indptr[-1]]
        top = np.maximum.reduceat(data, scaled.indptr[rows])
        row_of = np.repeat(np.arange(len(rows)), counts[rows])
        at_top = (data == top[row_of]) | (np.isnan(data) & np.isnan(top[row_of]))
        hits = np.flatnonzero(at_top)
        _, first = np.unique(row_of[hits], return_index=True)
        omega2[rows], dof[rows] = data[hits[first]], scaled.indices[hits[first]]
    return names, np.nan_to_num(omega2, nan=np.inf, posinf=np.inf), dof


def _diagonal_shares(model: LinearModel) -> tuple[list[str], sp.csr_array]:
    """Each link's share of the stiffness diagonal, sum_c k_c D_cj^2 (N/m, N m/rad):
    from the assembler's stacked maps when it has them, else link by link."""
    links = model.links
    names = list(links)
    if hasattr(links, "diagonal_shares"):
        return names, links.diagonal_shares()
    out = sp.lil_array((len(names), model.n))
    for i, name in enumerate(names):
        lm = links[name]
        out[[i], lm.cols] = (lm.stiffness[:, None] * lm.Dq ** 2).sum(axis=0)
    return names, sp.csr_array(out)


def _rate_text(model: LinearModel, md: np.ndarray, name: str, j: int, hz: float) -> str:
    lm = model.links[name]
    col = int(np.flatnonzero(lm.cols == j)[0]) if np.any(lm.cols == j) else 0
    shares = lm.stiffness * lm.Dq[:, col] ** 2 if lm.Dq.size else lm.stiffness
    c = int(np.argmax(shares)) if len(shares) else 0
    unit = "N/m" if lm.units[c] == "m" else "N m/rad"
    dof = model.dofs[j]
    mass = float(md[j])
    munit = "kg m^2" if dof.rsplit(".", 1)[-1] in ("rx", "ry", "rz") else "kg"
    what = "stiffness" if len(lm.components) == 1 else f"{lm.components[c]} stiffness"
    where = model.assembly.links[name].where
    if not where.field.endswith(name):     # a link a plugin made, or one built in code
        what = f"link {name}: {what}"
    implied = f"an implied frequency of {_hz(hz)}" if math.isfinite(hz) else \
        "an infinite implied frequency (an overflow)"
    return f"{what} {lm.stiffness[c]:.3g} {unit} gives {dof} ({mass:.3g} {munit}) {implied}"


def _hz(f: float) -> str:
    if f >= 1e4:
        return f"{f:.2e} Hz"
    return f"{f:.3g} Hz"
