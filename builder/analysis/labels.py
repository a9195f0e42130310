"""Mode labels in words: which parts of the vehicle move in a mode, how, in what phase.

One path labels every mode set the tool shows (``modes``, ``ladder``,
``plugin split_body``, ``render``, ``report`` and sweeps):
:func:`label_modes`, which :func:`builder.analysis.modes.compute_modes` calls.

Units. A label names *units*: a body of the file under its own name, or a
sub-model a plugin made, in the plugin's words (the segments of a split body
are the body they replaced, a powertrain on its mounts is "powertrain", a
seat adds "driver seat", "driver cushion" and the occupant "driver"). A
plugin declares its units through the hook ``label_units(assembly, spec)``
(see :mod:`builder.plugin`); each unit describes its own motion in a mode
(:class:`Motion`). Bodies no plugin claims are units of their own
(:class:`RigidUnit`).

Depth. Labels are built from the DOFs of the model shown. A reduced model's
shape is expanded to the full model only to read the DOFs it keeps and
those tied to them (a tie moves its group as one DOF), and, for a
generalised coordinate such as a Craig-Bampton mode, the DOFs it moves. A
body whose DOFs are all condensed away follows the kept ones statically
and is not named (its mass still counts in the frequencies), and a kept
body's condensed directions are not named either. The kinetic energy of
each DOF of the model, e_j = phi_j (M phi)_j with the model's (reduced)
mass matrix, so that what a kept DOF carries of the condensed bodies
counts, is shared over the full-model DOFs it stands for in proportion to
their own, and gives each unit its share of the mode (negative shares from
products of inertia are clipped to zero).

Words. The units are ranked by their share; the lead is always named, the
next ones while the named ones hold less than 80 % together and each holds
at least 10 % (three at most). A rigid unit's motion is its direction with
most kinetic energy, "with" the next one when that holds at least a
quarter as much ("body bounce with pitch"); a body linked straight to a
road point hops (z) and tramps (rx). A unit moving in the lead's direction
gets "(in phase)" or "(opposed)". Two units mirrored about the x-z plane
with the same motion make a pair: "front wheels hop, in phase".

Order words. A unit may give a family to its motion (a split body's
"torsion", "vertical bending", ...) with the shape of that motion. Going up
in frequency through the model's named modes of one unit and family, a
mode whose shape is that of an earlier one takes its order (one shape
shared by two modes, e.g. a torsion coupled with a powertrain's rotation,
in phase and opposed; "that shape" is a mass-weighted MAC of at least 0.3,
where distinct shapes of one family, nearly orthogonal, give about 0);
any other mode takes the next order: "first torsion", "second torsion", never a "second"
without a "first". The order of a mode depends only on the modes below
it, so the lowest N modes keep the labels they have in a longer set.

Unique. Modes are labelled in frequency order; a label that repeats an
earlier one gets more detail, in turn: every direction holding at least 5 %
of the unit's lead direction and the phase of every named unit against the
lead (through the links that join them: "in phase" when the motions relax
those links, phi_a^T K_ab phi_b < 0), then the next units down to 2 % of
the mode.
Only when nothing else differs is a count added: "(2)". Zero-frequency
modes keep the label ``rigid`` of the format: any mix of them is again a
zero-frequency mode, so they are not told apart.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.sparse as sp

from ..kinematics import DOF_NAMES
from ..linear import LinearModel

__all__ = ["Motion", "BodyMotion", "UnitMotion", "LabelUnit", "RigidUnit", "Part", "ModeLabel",
           "LabelContext", "label_modes", "describe_modes", "label_mode", "label_units",
           "vehicle_body", "rigid_motion", "ordinal", "DIRECTION_WORDS", "ORDINALS"]

#: Words of the six rigid-body directions.
DIRECTION_WORDS = {"x": "fore-aft", "y": "lateral", "z": "bounce", "rx": "roll", "ry": "pitch",
                   "rz": "yaw"}
#: A body linked straight to a road point: its bounce is wheel hop, its roll axle tramp.
_ON_ROAD_WORDS = {"z": "hop", "rx": "tramp"}
ORDINALS = ("first", "second", "third", "fourth", "fifth", "sixth", "seventh", "eighth",
            "ninth", "tenth")

_NAMED_TOTAL = 0.8      # units are named until they hold this share together ...
_NAMED_EACH = 0.1       # ... each holding at least this share
_NAMED_MAX = 3
_DETAIL_EACH = 0.02     # the extra units of a label made unique
_DETAIL_MAX = 4
_WITH = 0.25            # a second direction is named at this fraction of the first
_MORE = 0.05            # ... and, to tell two modes apart, down to this fraction


def ordinal(n: int) -> str:
    """``1 -> "first"`` ... ``10 -> "tenth"``, then ``11th``, ``21st``, ``22nd`` ..."""
    if 1 <= n <= len(ORDINALS):
        return ORDINALS[n - 1]
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


@dataclass(frozen=True)
class Motion:
    """What one unit does in one mode, in words.

    ``words`` follow the unit's name and may hold ``{order}``, replaced by
    the order word of the motion's ``family`` ("first", ...). ``direction``
    and ``sign`` compare the phase of units moving the same way (``"z"``
    for bounce and hop); ``more`` is the detailed wording used to tell two
    modes apart; ``nodes`` are node positions (m along the unit) where the
    unit knows them; ``shape`` is the family motion and its mass-weighted
    form (two vectors), to recognise the shape of an earlier mode.
    """

    words: str
    direction: str = ""
    sign: float = 1.0
    family: str = ""
    more: str = ""
    nodes: tuple[float, ...] = ()
    shape: tuple[np.ndarray, np.ndarray] | None = None


@dataclass(frozen=True, eq=False)
class BodyMotion:
    """One body's part of a mode over the DOFs it has in the full model.

    ``value`` is the shape (m, rad), ``observed`` which DOFs the model shown
    keeps (a condensed DOF's value is its static follow-up, not to be named),
    ``energy`` each DOF's share of the mode's kinetic energy (0 where not
    observed).
    """

    name: str
    body: Any
    dofs: tuple[str, ...]
    value: np.ndarray
    observed: np.ndarray
    energy: np.ndarray

    def six(self) -> tuple[np.ndarray, np.ndarray]:
        """(value, observed) over x, y, z, rx, ry, rz (0 and False for DOFs the body lacks)."""
        value, observed = np.zeros(6), np.zeros(6, dtype=bool)
        for d, v, o in zip(self.dofs, self.value, self.observed, strict=True):
            k = DOF_NAMES.index(d)
            value[k], observed[k] = v, o
        return value, observed


class UnitMotion(Sequence[BodyMotion]):
    """A unit's bodies in one mode: a sequence of :class:`BodyMotion` (made when
    asked for), and :meth:`six`, the same for all bodies at once as arrays."""

    def __init__(self, ctx: LabelContext, k: int, phi: np.ndarray, energy: np.ndarray):
        self._ctx, self._k, self._phi, self._energy = ctx, k, phi, energy
        self._made: dict[int, BodyMotion] = {}

    def __len__(self) -> int:
        return len(self._ctx.units[self._k].bodies)

    def __getitem__(self, i: Any) -> Any:
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        i = range(len(self))[i]
        if i not in self._made:
            rows, dofs = self._ctx.index[self._k][i]
            name = self._ctx.units[self._k].bodies[i]
            asm = self._ctx.full.assembly
            self._made[i] = BodyMotion(name, None if asm is None else asm.bodies.get(name),
                                       dofs, self._phi[rows], self._ctx.observed[rows],
                                       self._energy[rows])
        return self._made[i]

    @property
    def share(self) -> float:
        """The unit's share of the mode's kinetic energy."""
        return float(self._energy[self._ctx.rows[self._k]].sum())

    def six(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(value, observed, energy), each (bodies, 6) over x, y, z, rx, ry, rz
        (0 and False for DOFs a body lacks)."""
        at = self._ctx.six_rows[self._k]
        has = at >= 0
        value, energy = np.zeros(at.shape), np.zeros(at.shape)
        value[has], energy[has] = self._phi[at[has]], self._energy[at[has]]
        observed = np.zeros(at.shape, dtype=bool)
        observed[has] = self._ctx.observed[at[has]]
        return value, observed, energy


class LabelUnit:
    """A group of bodies named as one in labels (subclasses say how it moves).

    ``name`` is in words; ``bodies`` its body names; ``subsystem`` marks a
    plugin's sub-model (a powertrain, a seat), never taken for the vehicle
    body.
    """

    subsystem: bool = False

    def __init__(self, name: str, bodies: Sequence[str]):
        self.name = name
        self.bodies = tuple(bodies)

    def describe(self, bodies: UnitMotion) -> Motion | None:
        """The unit's motion (``bodies`` in the order of :attr:`bodies`), None if none."""
        raise NotImplementedError


class RigidUnit(LabelUnit):
    """One rigid body: the direction with most kinetic energy, then the next."""

    def __init__(self, name: str, body: str, on_road: bool = False, subsystem: bool = False,
                 words: Mapping[str, str] | None = None):
        super().__init__(name, (body,))
        self.on_road = on_road
        self.subsystem = subsystem
        self.words = dict(words or DIRECTION_WORDS)
        if on_road:
            self.words.update(_ON_ROAD_WORDS)

    def describe(self, bodies: UnitMotion) -> Motion | None:
        b = bodies[0]
        return rigid_motion(b.dofs, b.energy, b.value, self.words)


def rigid_motion(keys: Sequence[str], energy: np.ndarray, value: np.ndarray,
                 words: Mapping[str, str] | None = None) -> Motion | None:
    """Words for a rigid motion from its kinetic energy per direction.

    ``keys`` name the directions (``"z"``, ...; also the phase key),
    ``words`` give their words (default :data:`DIRECTION_WORDS`). The main
    direction is named, "with" the next when it holds at least a quarter of
    the main one's energy; ``more`` names every direction down to 5 %.
    """
    words = words or DIRECTION_WORDS
    e = np.clip(np.nan_to_num(np.asarray(energy, float)), 0.0, None)
    if e.size == 0 or e.max() <= 0:
        return None
    order = np.argsort(-e, kind="stable")
    main = int(order[0])

    def word(k: int) -> str:
        return words.get(keys[k], keys[k])

    text = word(main)
    second = [int(k) for k in order[1:] if e[k] >= _WITH * e[main]]
    if second:
        text += " with " + word(second[0])
    extra = [word(int(k)) for k in order[1:] if e[k] >= _MORE * e[main]][:3]
    more = word(main) + (" with " + _and(extra) if extra else "")
    return Motion(text, keys[main], float(np.sign(value[main]) or 1.0), more=more)


def _and(items: Sequence[str]) -> str:
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]


@dataclass(frozen=True, eq=False)
class Part:
    """A unit taking part in a mode: its share of the kinetic energy and its motion."""

    unit: LabelUnit
    share: float
    motion: Motion
    cg: np.ndarray | None = None


@dataclass(frozen=True, eq=False)
class ModeLabel:
    """A mode's label and what it was made of: every moving unit (by share), and
    the order word of each named part with a family."""

    text: str
    parts: tuple[Part, ...] = ()
    named: int = 0
    orders: dict[int, str] = field(default_factory=dict)


# --------------------------------------------------------------- units ----

def _plugin_uses(assembly: Any) -> list[Any]:
    return list(getattr(assembly, "plugins", ()) or ())


def _plugin_of(use: Any) -> Any:
    """The plugin object of a use: its own, or the installed one of that name."""
    plugin = getattr(use, "plugin", None)
    if plugin is None and getattr(use, "use", None):
        from ..errors import InputError
        from ..plugin import get_plugin
        try:
            plugin = get_plugin(use.use)
        except InputError:
            return None
    return plugin


def label_units(assembly: Any) -> tuple[LabelUnit, ...]:
    """Every body's label unit: the plugins' units (in plugin order; a body
    claimed twice stays with the first), then one :class:`RigidUnit` per body
    left, under its own name."""
    units: list[LabelUnit] = []
    claimed: set[str] = set()
    bodies = getattr(assembly, "bodies", {}) or {}
    for use in _plugin_uses(assembly):
        hook = getattr(_plugin_of(use), "label_units", None)
        if not callable(hook):
            continue
        for unit in hook(assembly, use.spec) or ():
            members = [b for b in unit.bodies if b in bodies]
            if members and len(members) == len(unit.bodies) and not claimed & set(members):
                units.append(unit)
                claimed.update(members)
    on_road = _on_road(assembly)
    for name in bodies:
        if name not in claimed:
            units.append(RigidUnit(name, name, on_road=name in on_road))
    return tuple(units)


def _on_road(assembly: Any) -> set[str]:
    out: set[str] = set()
    for lk in (getattr(assembly, "links", {}) or {}).values():
        if lk.b.kind == "road" and lk.a.kind == "body":
            out.add(lk.a.node)
        if lk.a.kind == "road" and lk.b.kind == "body":
            out.add(lk.b.node)
    return out


def vehicle_body(assembly: Any) -> LabelUnit | None:
    """The vehicle body: the heaviest label unit that is not a plugin's sub-system.

    The segments of a split body count together, as the body they replaced;
    a powertrain or a seat never counts, however heavy. None without bodies.
    """
    bodies = getattr(assembly, "bodies", {}) or {}
    units = [u for u in label_units(assembly) if not u.subsystem] or list(label_units(assembly))
    if not units:
        return None
    return max(units, key=lambda u: sum(bodies[b].mass for b in u.bodies))


# ------------------------------------------------------------- context ----

@dataclass(frozen=True, eq=False)
class LabelContext:
    """What labels need from a model, computed once per mode set.

    ``full`` is the unreduced model, ``expansion`` maps the model's shapes to
    it (None when the model is the full one), ``observed`` marks the full
    DOFs the model keeps, ``groups`` which of them each of the model's DOFs
    stands for and ``mass`` is the model's mass matrix.
    """

    full: LinearModel
    expansion: Any
    observed: np.ndarray
    groups: sp.csr_array | None
    mass: Any
    units: tuple[LabelUnit, ...]
    index: tuple[tuple[tuple[np.ndarray, tuple[str, ...]], ...], ...]
    rows: tuple[np.ndarray, ...]
    six_rows: tuple[np.ndarray, ...]
    cgs: tuple[np.ndarray | None, ...]
    cg_x: float
    legacy: tuple[Callable[..., Any], ...] = ()

    @staticmethod
    def of(model: LinearModel) -> LabelContext:
        full = model.parent if model.parent is not None else model
        expansion = model.expansion if model.parent is not None else None
        asm = full.assembly
        groups = _groups(model, full)
        observed = np.ones(full.n, dtype=bool) if groups is None else \
            np.asarray(groups.sum(axis=1)).ravel() > 0
        per_body: dict[str, tuple[list[int], list[str]]] = {}
        for j, d in enumerate(full.dofs):
            body, _, dof = d.rpartition(".")
            rows, names = per_body.setdefault(body, ([], []))
            rows.append(j)
            names.append(dof)
        if asm is not None:
            units = label_units(asm)
        else:
            units = tuple(RigidUnit(b, b) for b in per_body)
        index, rows, six_rows, cgs = [], [], [], []
        for u in units:
            entries = tuple((np.array(per_body.get(b, ([], []))[0], dtype=int),
                             tuple(per_body.get(b, ([], []))[1])) for b in u.bodies)
            index.append(entries)
            rows.append(np.concatenate([r for r, _ in entries]) if entries
                        else np.zeros(0, dtype=int))
            at = np.full((len(entries), 6), -1, dtype=int)
            for i, (r, dofs) in enumerate(entries):
                at[i, [DOF_NAMES.index(d) for d in dofs]] = r
            six_rows.append(at)
            cgs.append(_unit_cg(asm, u))
        cg_x = float(asm.mass_properties()[1][0]) if asm is not None and asm.bodies else 0.0
        plugins = [p for p in map(_plugin_of, _plugin_uses(asm)) if p is not None]
        legacy = tuple(p.label_mode for p in plugins
                       if not callable(getattr(p, "label_units", None))
                       and callable(getattr(p, "label_mode", None)))
        return LabelContext(full, expansion, observed, groups, model.M, units, tuple(index),
                            tuple(rows), tuple(six_rows), tuple(cgs), cg_x, legacy)


def _unit_cg(asm: Any, unit: LabelUnit) -> np.ndarray | None:
    if asm is None:
        return None
    bodies = [asm.bodies[b] for b in unit.bodies if b in asm.bodies]
    mass = sum(b.mass for b in bodies)
    if not bodies or mass <= 0:
        return None
    return sum(b.mass * np.asarray(b.cg, float) for b in bodies) / mass


def _groups(model: LinearModel, full: LinearModel) -> sp.csr_array | None:
    """Which full-model DOFs each DOF of the model stands for (full n x model n, 0/1):
    a kept DOF its own and those tied to it, a generalised coordinate (a DOF name
    the full model lacks, such as a Craig-Bampton mode) the DOFs it moves.
    None for a full model (each DOF stands for itself)."""
    if model.parent is None:
        return None
    where = {d: i for i, d in enumerate(full.dofs)}
    E = sp.csr_array(model.expansion)
    E.eliminate_zeros()
    Ec = E.tocsc()
    rows: list[int] = []
    cols: list[int] = []
    kept_col = {}
    for k, d in enumerate(model.dofs):
        i = where.get(d)
        if i is None:
            moved = Ec.indices[Ec.indptr[k]:Ec.indptr[k + 1]]
            rows.extend(int(r) for r in moved)
            cols.extend([k] * len(moved))
        else:
            rows.append(i)
            cols.append(k)
            kept_col[k] = (i, d.rpartition(".")[2])
    # A tie copies its survivor: a row of E that is exactly the unit row of a
    # kept DOF of the same direction (a condensed DOF's row comes from a solve).
    indptr, indices, data = E.indptr, E.indices, E.data
    for i in np.flatnonzero(np.diff(indptr) == 1):
        k = int(indices[indptr[i]])
        kept = kept_col.get(k)
        if data[indptr[i]] == 1.0 and kept and kept[0] != i \
                and kept[1] == full.dofs[i].rpartition(".")[2]:
            rows.append(int(i))
            cols.append(k)
    return sp.csr_array((np.ones(len(rows)), (rows, cols)), shape=(full.n, model.n))


def _energies(ctx: LabelContext, shapes: np.ndarray, full_shapes: np.ndarray) -> np.ndarray:
    """Kinetic energy per full-model DOF of each mode, on the DOFs the model keeps.

    A full model: e_j = phi_j (M phi)_j. A reduced one: each of its DOFs'
    energy (with the reduced mass matrix, so that what it carries of the
    condensed bodies counts) shared over the full DOFs it stands for, in
    proportion to their own energy (equally when they have none).
    """
    own = np.clip(full_shapes * np.asarray(ctx.full.M @ full_shapes), 0.0, None)
    A = ctx.groups
    if A is None:
        return own
    reduced = np.clip(shapes * np.asarray(ctx.mass @ shapes), 0.0, None)
    own = own * ctx.observed[:, None]
    held = np.asarray(A.T @ own)
    count = np.asarray(A.T @ np.ones(A.shape[0]))[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = np.where(held > 0, reduced / held, 0.0)
        equal = np.where(held > 0, 0.0, reduced / np.where(count > 0, count, 1.0))
    return own * np.asarray(A @ scale) + np.asarray(A @ equal)


# -------------------------------------------------------------- labels ----

def describe_modes(model: LinearModel, shapes: np.ndarray,
                   rigid: Sequence[bool] | None = None,
                   context: LabelContext | None = None) -> tuple[ModeLabel, ...]:
    """The labels of a set of modes of one model, with what they were made of.

    ``shapes`` (n, modes) over ``model.dofs``, sorted by frequency;
    ``rigid`` flags zero-frequency modes (labelled ``rigid``). See the
    module notes for the rules.
    """
    shapes = np.real(np.asarray(shapes, dtype=complex if np.iscomplexobj(shapes) else float))
    shapes = shapes.reshape(shapes.shape[0], -1)
    count = shapes.shape[1]
    rigid = [False] * count if rigid is None else [bool(r) for r in rigid]
    ctx = context or LabelContext.of(model)
    full_shapes = shapes if ctx.expansion is None else np.asarray(ctx.expansion @ shapes)
    energy = _energies(ctx, shapes, full_shapes)
    families: dict[tuple[int, str], list[tuple[int, Motion]]] = {}
    seen: dict[str, int] = {}
    out = []
    for i in range(count):
        if rigid[i]:
            out.append(ModeLabel("rigid"))
            continue
        parts = _parts(ctx, full_shapes[:, i], energy[:, i])
        named = _chosen(parts, 0)
        orders: dict[int, str] = {}
        for k in range(len(named)):
            motion = parts[k].motion
            if motion.family:
                earlier = families.setdefault((id(parts[k].unit), motion.family), [])
                order = _order(motion, earlier)
                earlier.append((order, motion))
                orders[k] = ordinal(order)
        legacy = _legacy(ctx, full_shapes[:, i], energy[:, i])
        text = _unique(parts, orders, ctx, seen, legacy,
                       functools.partial(_link_phase, ctx, full_shapes[:, i]))
        out.append(ModeLabel(text, tuple(parts), len(named), orders))
    return tuple(out)


def label_modes(model: LinearModel, shapes: np.ndarray,
                rigid: Sequence[bool] | None = None) -> tuple[str, ...]:
    """The label of every mode of a set (see :func:`describe_modes`)."""
    return tuple(m.text for m in describe_modes(model, shapes, rigid))


def label_mode(model: LinearModel, shape: np.ndarray) -> str:
    """The label of one mode on its own (a set of one: its order words are "first")."""
    return label_modes(model, np.asarray(shape).reshape(-1, 1))[0]


def _parts(ctx: LabelContext, phi: np.ndarray, energy: np.ndarray) -> list[Part]:
    e = np.where(ctx.observed, energy, 0.0)
    total = float(e.sum())
    if total <= 0:
        return []
    e = e / total
    parts = []
    for k, (unit, cg) in enumerate(zip(ctx.units, ctx.cgs, strict=True)):
        motions = UnitMotion(ctx, k, phi, e)
        share = motions.share
        if share <= 1e-9:
            continue
        motion = unit.describe(motions)
        if motion is not None:
            parts.append(Part(unit, share, motion, cg))
    parts.sort(key=lambda p: -p.share)
    return parts


def _legacy(ctx: LabelContext, phi: np.ndarray, energy: np.ndarray) -> str | None:
    for hook in ctx.legacy:
        text = hook(ctx.full, phi, energy)
        if text:
            return str(text)
    return None


def _order(motion: Motion, earlier: list[tuple[int, Motion]], same: float = 0.3) -> int:
    """The order of a family motion after the ``earlier`` ones (see the module notes)."""
    if motion.shape is not None:
        x, wx = motion.shape
        best, order = same, 0
        for k, m in earlier:
            if m.shape is None:
                continue
            y, wy = m.shape
            den = _dot(x, wx) * _dot(y, wy)
            mac = _dot(x, wy) ** 2 / den if den > 0 else 0.0
            if mac >= best:
                best, order = mac, k
        if order:
            return order
    return max((k for k, _ in earlier), default=0) + 1


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    # einsum, not BLAS: a threaded BLAS dot of long vectors stalls on a busy machine
    return float(np.einsum("i,i->", a, b))


def _link_phase(ctx: LabelContext, phi: np.ndarray, a: Part, b: Part) -> float:
    """phi_a^T K_ab phi_b over the two units' DOFs: < 0 when their motions relax the
    links between them (in phase), > 0 when they stretch them (opposed)."""
    ra = ctx.rows[ctx.units.index(a.unit)]
    rb = ctx.rows[ctx.units.index(b.unit)]
    if ra.size == 0 or rb.size == 0:
        return 0.0
    K = ctx.full.K.tocsr()
    block = K[ra][:, rb]
    value = _dot(phi[ra], block @ phi[rb])
    scale = _dot(np.abs(phi[ra]), abs(block) @ np.abs(phi[rb]))
    return value if scale > 0 and abs(value) > 1e-6 * scale else 0.0


def _chosen(parts: Sequence[Part], level: int) -> list[Part]:
    if not parts:
        return []
    chosen, held = [parts[0]], parts[0].share
    for p in parts[1:]:
        if level >= 2:
            if p.share < _DETAIL_EACH or len(chosen) >= _DETAIL_MAX:
                break
        elif held >= _NAMED_TOTAL or p.share < _NAMED_EACH or len(chosen) >= _NAMED_MAX:
            break
        chosen.append(p)
        held += p.share
    return chosen


def _unique(parts: Sequence[Part], orders: dict[int, str], ctx: LabelContext,
            seen: dict[str, int], legacy: str | None,
            phase: Callable[[Part, Part], float]) -> str:
    candidates = [legacy] if legacy else []
    candidates += [_compose(parts, orders, ctx, level, phase) for level in (0, 1, 2)]
    for text in candidates:
        if text not in seen:
            seen[text] = 1
            return text
    base = candidates[-1]
    seen[base] += 1
    text = f"{base} ({seen[base]})"
    while text in seen:
        seen[base] += 1
        text = f"{base} ({seen[base]})"
    seen[text] = 1
    return text


def _words(part: Part, order: str | None, level: int) -> str:
    words = part.motion.more if level >= 1 and part.motion.more else part.motion.words
    if "{order}" in words:
        words = words.replace("{order}", order) if order else words.replace("{order} ", "")
    return words.strip()


def _compose(parts: Sequence[Part], orders: dict[int, str], ctx: LabelContext,
             level: int, phase: Callable[[Part, Part], float] | None = None) -> str:
    chosen = _chosen(parts, level)
    if not chosen:
        return "no motion"
    words = [_words(p, orders.get(k), level) for k, p in enumerate(chosen)]
    lead = chosen[0]
    if len(chosen) >= 2 and words[0] == words[1] and _mirrored(chosen[0], chosen[1]):
        together = "in phase" if chosen[0].motion.sign == chosen[1].motion.sign else "opposed"
        where = "front" if chosen[0].cg[0] > ctx.cg_x else "rear"
        text = f"{where} {_pair_noun(chosen[0].unit.name, chosen[1].unit.name)} {words[0]}, " \
               f"{together}"
        rest = range(2, len(chosen))
    else:
        text = f"{lead.unit.name} {words[0]}"
        rest = range(1, len(chosen))
    for k in rest:
        p = chosen[k]
        text += f" + {p.unit.name} {words[k]}"
        if p.motion.direction and p.motion.direction == lead.motion.direction:
            text += " (in phase)" if p.motion.sign == lead.motion.sign else " (opposed)"
        elif level >= 1 and phase is not None:
            sign = phase(lead, p)
            text += " (in phase)" if sign < 0 else " (opposed)" if sign > 0 else ""
    return text


def _mirrored(a: Part, b: Part) -> bool:
    if a.cg is None or b.cg is None or a.motion.direction != b.motion.direction:
        return False
    c1, c2 = a.cg, b.cg
    return (abs(c1[0] - c2[0]) < 0.05 and abs(c1[1] + c2[1]) < 0.05 and abs(c1[1]) > 0.05
            and abs(c1[2] - c2[2]) < 0.05)


def _pair_noun(a: str, b: str) -> str:
    pa, pb = re.split(r"[_ ]", a), re.split(r"[_ ]", b)
    stem = []
    for x, y in zip(pa, pb):
        if x != y:
            break
        stem.append(x)
    return f"{' '.join(stem)}s" if stem else f"{a} and {b}"
