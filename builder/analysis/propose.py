"""Depths built from the graph, searched for the simplest that answers a question.

The bodies fall into groups (:func:`body_groups`): the vehicle body (a
split body's segments together, see
:func:`~builder.analysis.labels.vehicle_body`), each plugin's sub-model (a
powertrain, a seat with its occupant), the bodies on the road (wheels,
axles), and every other body on its own. Each group has levels, from
nothing kept to everything kept:

- the vehicle body: bounce; bounce and pitch; bounce and roll; bounce, roll
  and pitch; all its DOFs (a split body: those of the segment nearest its
  cg), then (a split body) that segment with 2, 4, 8 ... (at most
  :data:`MAX_MODES`) fixed-interface modes of the other segments
  (Craig-Bampton), then every segment;
- the bodies on the road: condensed; left and right tied (a half car in
  side view: mirrored bodies move alike in x, z and pitch, the antisymmetric
  DOFs condensed); front and rear tied on each side (a half car in front
  view: bounce only); all kept;
- any other group: condensed (Guyan); 1, 2, 4 ... fixed-interface modes of
  its DOFs (modal truncation, Craig-Bampton); all kept.

A candidate depth is one level per group (left-right ties only with the
body's roll condensed, front-rear ties only with its pitch condensed; the
other combinations describe no symmetric motion). The combinations grow
quickly (hundreds for a car with a seat and a flexible body), so
:func:`search_depths` walks up from the smallest, one group one level at a
time, judging each step, and stops at the first depth within the
tolerance, then steps groups back down while the depth stays within; at
most :data:`MAX_CANDIDATES` are judged.
"""

from __future__ import annotations

import itertools
import math
import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..assembly import Assembly, Depth
from ..errors import InputError, Where
from ..linear import LinearModel
from ..load import match_dofs
from .labels import _plugin_of, _plugin_uses, vehicle_body
from .response_ladder import Candidate, DepthFigures, Judge, Question, ResponseLadder, depth_yaml

__all__ = ["BodyGroup", "Level", "body_groups", "group_levels", "candidate_depths",
           "search_depths", "MAX_CANDIDATES", "MAX_MODES"]

#: Most candidates judged by one search (each costs one response run).
MAX_CANDIDATES = 60
_SYMMETRIC = ("x", "z", "ry")          # DOFs alike on mirrored bodies in symmetric motion
_TOL = 0.01                            # m: mirrored positions agree to this


@dataclass(frozen=True)
class BodyGroup:
    """Bodies reduced together: ``kind`` is ``vehicle``, ``road``, ``plugin`` or ``body``."""

    name: str
    bodies: tuple[str, ...]
    kind: str


@dataclass(frozen=True)
class Level:
    """One way of keeping a group: kept DOFs, tie groups, modes, and its words."""

    words: str
    tag: str
    keep: tuple[str, ...] = ()
    tie: tuple[tuple[str, ...], ...] = ()
    modes: tuple[tuple[str, int], ...] = ()
    flags: frozenset[str] = frozenset()

    @property
    def dofs(self) -> int:
        return len(self.keep) + sum(n for _, n in self.modes)


def body_groups(assembly: Assembly) -> list[BodyGroup]:
    """The vehicle body, each plugin's sub-model, the bodies on the road, the rest."""
    bodies = assembly.bodies
    claimed: set[str] = set()
    groups: list[BodyGroup] = []
    unit = vehicle_body(assembly)
    if unit is not None:
        groups.append(BodyGroup(unit.name, tuple(unit.bodies), "vehicle"))
        claimed.update(unit.bodies)
    for use in _plugin_uses(assembly):
        hook = getattr(_plugin_of(use), "label_units", None)
        if not callable(hook):
            continue
        members = [b for u in (hook(assembly, use.spec) or ()) for b in u.bodies
                   if b in bodies and b not in claimed]
        if members:
            groups.append(BodyGroup(use.name, tuple(dict.fromkeys(members)), "plugin"))
            claimed.update(members)
    on_road = []
    for lk in assembly.links.values():
        for end, other in ((lk.a, lk.b), (lk.b, lk.a)):
            if end.kind == "body" and other.kind == "road" and end.node not in claimed:
                on_road.append(end.node)
    road = tuple(dict.fromkeys(on_road))
    if road:
        groups.append(BodyGroup("wheels", road, "road"))
        claimed.update(road)
    groups += [BodyGroup(b, (b,), "body") for b in bodies if b not in claimed]
    return groups


def _labels(assembly: Assembly, body: str, dofs: Sequence[str] | None = None) -> list[str]:
    own = assembly.bodies[body].dofs
    return [f"{body}.{d}" for d in (own if dofs is None else [d for d in dofs if d in own])]


def _pattern(assembly: Assembly, bodies: Sequence[str]) -> str | None:
    """One DOF pattern matching exactly these bodies' DOFs, or None."""
    if len(bodies) == 1:
        return f"{bodies[0]}.*"
    prefix = os.path.commonprefix(list(bodies))
    if not prefix:
        return None
    pattern = f"{prefix}*.*"
    hits = {d.split(".", 1)[0] for d in match_dofs(pattern, assembly.dof_labels)}
    return pattern if hits == set(bodies) else None


#: Most fixed-interface modes a proposed level keeps (a body needing more is kept whole).
MAX_MODES = 128


def _counts(limit: int, start: int) -> list[int]:
    out, n = [], start
    while n < min(limit, MAX_MODES + 1):
        out.append(n)
        n *= 2
    return out


def _vehicle_levels(asm: Assembly, group: BodyGroup) -> list[Level]:
    members = [asm.bodies[b] for b in group.bodies]
    cg = sum(b.mass * b.cg for b in members) / sum(b.mass for b in members)
    main = min(members, key=lambda b: float(np.linalg.norm(b.cg - cg)))
    levels = []
    for words, tag, dofs, flags in (
            ("bounce", "bounce", ("z",), ()),
            ("bounce and pitch", "bounce_pitch", ("z", "ry"), ("pitch",)),
            ("bounce and roll", "bounce_roll", ("z", "rx"), ("roll",)),
            ("bounce, roll and pitch", "bounce_roll_pitch", ("z", "rx", "ry"),
             ("roll", "pitch"))):
        keep = _labels(asm, main.name, dofs)
        if len(keep) == len(dofs):
            levels.append(Level(f"{group.name} {words}", tag, tuple(keep),
                                flags=frozenset(flags)))
    rigid = tuple(_labels(asm, main.name))
    if all(set(rigid) != set(lv.keep) for lv in levels):
        levels.append(Level(f"{group.name} rigid ({', '.join(main.dofs)})", "rigid", rigid,
                            flags=frozenset(("roll", "pitch"))))
    if len(members) > 1:
        every = tuple(d for b in group.bodies for d in _labels(asm, b))
        pattern = _pattern(asm, group.bodies)
        if pattern is not None:
            for n in _counts(len(every) - len(rigid), 2):
                levels.append(Level(f"{group.name}: {main.name} with {n} fixed-interface "
                                    f"modes of the other segments", f"flexible{n}", rigid,
                                    modes=((pattern, n),), flags=frozenset(("roll", "pitch"))))
        levels.append(Level(f"{group.name}: every segment", "flexible", every,
                            flags=frozenset(("roll", "pitch"))))
    return levels


def _mirror(asm: Assembly, a: str, b: str) -> bool:
    pa, pb = asm.bodies[a].cg, asm.bodies[b].cg
    return (abs(pa[0] - pb[0]) < _TOL and abs(pa[1] + pb[1]) < _TOL and abs(pa[2] - pb[2]) < _TOL
            and abs(pa[1]) >= _TOL and asm.bodies[a].dofs == asm.bodies[b].dofs)


def _road_levels(asm: Assembly, group: BodyGroup) -> list[Level]:
    names = list(group.bodies)
    every = tuple(d for b in names for d in _labels(asm, b))
    levels = [Level("wheels condensed", "", ())]
    # left and right: mirrored pairs tie on their symmetric DOFs; centred bodies keep them
    left = [b for b in names if asm.bodies[b].cg[1] >= _TOL]
    pairs = {}
    for a in left:
        match = [b for b in names if b not in left and _mirror(asm, a, b)]
        if match:
            pairs[a] = match[0]
    centred = [b for b in names if abs(asm.bodies[b].cg[1]) < _TOL]
    if len(pairs) * 2 + len(centred) == len(names) and pairs:
        keep, tie = [], []
        for a, b in pairs.items():
            for d in _SYMMETRIC:
                if d in asm.bodies[a].dofs:
                    keep.append(f"{a}.{d}")
                    tie.append((f"{a}.{d}", f"{b}.{d}"))
        for b in centred:
            keep += _labels(asm, b, _SYMMETRIC)
        if keep:
            levels.append(Level("wheels left and right tied", "wheels_tied_lr", tuple(keep),
                                tuple(tie), flags=frozenset(("lr",))))
    # front and rear on each side: bounce tied
    sides = [sorted((b for b in names if s * asm.bodies[b].cg[1] >= _TOL),
                    key=lambda b: -asm.bodies[b].cg[0]) for s in (1, -1)]
    if (all(len(s) == 2 for s in sides) and not centred
            and all("z" in asm.bodies[b].dofs for s in sides for b in s)):
        keep = tuple(f"{s[0]}.z" for s in sides)
        tie = tuple((f"{s[0]}.z", f"{s[1]}.z") for s in sides)
        levels.append(Level("wheels front and rear tied on each side", "wheels_tied_fr", keep,
                            tie, flags=frozenset(("fr",))))
    levels.append(Level("wheels kept", "wheels", every))
    return levels


def _group_levels(asm: Assembly, group: BodyGroup) -> list[Level]:
    every = tuple(d for b in group.bodies for d in _labels(asm, b))
    levels = [Level(f"{group.name} condensed", "", ())]
    pattern = _pattern(asm, group.bodies)
    if pattern is not None:
        for n in _counts(len(every), 1):
            levels.append(Level(f"{group.name} with {n} fixed-interface mode"
                                f"{'s' if n > 1 else ''}", f"{_tag(group.name)}{n}m",
                                modes=((pattern, n),)))
    levels.append(Level(f"{group.name} kept", _tag(group.name), every))
    return levels


def _tag(name: str) -> str:
    return "".join(c if c.isalnum() else "_" for c in name).strip("_") or "group"


def _consistent(choice: Sequence[Level]) -> bool:
    flags = set().union(*(lv.flags for lv in choice))
    return not ("lr" in flags and "roll" in flags) and not ("fr" in flags and "pitch" in flags)


def group_levels(assembly: Assembly) -> tuple[list[BodyGroup], list[list[Level]]]:
    """The body groups and each group's levels, from nothing kept to all."""
    groups = body_groups(assembly)
    options = []
    for g in groups:
        if g.kind == "vehicle":
            options.append(_vehicle_levels(assembly, g))
        elif g.kind == "road":
            options.append(_road_levels(assembly, g))
        else:
            options.append(_group_levels(assembly, g))
    return groups, options


def _candidate(choice: Sequence[Level], total: int,
               body_dofs: dict[str, Sequence[str]] | None = None) -> Candidate | None:
    if not _consistent(choice):
        return None
    keep = tuple(d for lv in choice for d in lv.keep)
    dofs = sum(lv.dofs for lv in choice)
    if not keep or dofs >= total:
        return None
    tie = tuple(t for lv in choice for t in lv.tie)
    modes = tuple(m for lv in choice for m in lv.modes)
    name = "_".join(lv.tag for lv in choice if lv.tag) or "depth"
    depth = Depth(name, keep, tie, Where(field=f"proposed {name}"), (), modes)
    return Candidate(depth, "proposed", "; ".join(lv.words for lv in choice), dofs,
                     depth_yaml(depth, body_dofs))


def candidate_depths(assembly: Assembly) -> list[Candidate]:
    """Every combination of the groups' levels (see the module notes), fewest DOFs
    first; :func:`search_depths` walks through them without judging them all."""
    _, options = group_levels(assembly)
    total = len(assembly.dof_labels)
    out = [c for c in (_candidate(ch, total) for ch in itertools.product(*options))
           if c is not None]
    return sorted(out, key=lambda c: c.dofs)


def _excess(d: DepthFigures, tol: float) -> float:
    """How far a depth is from the tolerance: the sum of its errors above it."""
    return sum(max(min(abs(e), 10.0) - tol, 0.0) for e in d.errors.values())


def search_depths(model: LinearModel, question: Question, tolerance: float, *,
                  progress: Callable[[str], None] | None = None,
                  limit: int = MAX_CANDIDATES) -> ResponseLadder:
    """``ladder --propose``: depths built from the graph, searched from the smallest up.

    The file's own depths are judged first. The search starts with every group
    at its smallest level (the body's bounce, all else condensed) and, while
    the depth is not within ``tolerance``, judges each one-level refinement of
    one group; it stops at the first refinement within (the fewest DOFs, then
    the smaller worst error), else moves to the refinement that removes most
    error above the tolerance per DOF added. At most ``limit`` depths are
    judged.
    """
    full = model.parent if model.parent is not None else model
    asm: Any = full.assembly
    if asm is None:
        raise InputError("the model has no assembly to build depths from",
                         Where(field="--propose"))
    judge = Judge(full, question, tolerance, progress=progress)
    judged: list[DepthFigures] = []
    for depth in asm.depths.values():
        result = judge.judge(Candidate(depth, "file"))
        if result is not None and len(result.dofs) < full.n:
            judged.append(result)
    _, options = group_levels(asm)
    total = full.n
    body_dofs = {name: b.dofs for name, b in asm.bodies.items()}
    seen: dict[tuple[int, ...], DepthFigures | None] = {}
    names = {d.name for d in judged}

    def evaluate(state: tuple[int, ...]) -> DepthFigures | None:
        if state not in seen:
            cand = _candidate([lv[i] for lv, i in zip(options, state, strict=True)], total,
                              body_dofs)
            seen[state] = None
            if cand is not None and cand.depth.name not in names and len(seen) <= limit:
                result = judge.judge(cand)
                seen[state] = result
                if result is not None:
                    judged.append(result)
        return seen[state]

    def step(state: tuple[int, ...], g: int, up: bool = True) -> tuple[int, ...] | None:
        levels = range(state[g] + 1, len(options[g])) if up else range(state[g] - 1, -1, -1)
        for i in levels:
            nxt = state[:g] + (i,) + state[g + 1:]
            if _candidate([lv[k] for lv, k in zip(options, nxt, strict=True)], total):
                return nxt
        return None

    notes: list[str] = []
    state = tuple(0 for _ in options)
    current = evaluate(state)
    while current is None or not current.within:
        moves = [s for s in (step(state, g) for g in range(len(options))) if s is not None]
        tried = [(s, evaluate(s)) for s in moves]
        tried = [(s, d) for s, d in tried if d is not None]
        if not tried:
            break
        inside = [(s, d) for s, d in tried if d.within]
        if inside:
            state, current = min(inside, key=lambda t: (len(t[1].dofs), abs(t[1].worst[1])))
            break
        base = _excess(current, tolerance) if current is not None else math.inf
        n0 = len(current.dofs) if current is not None else 0

        gains = [((base - _excess(d, tolerance)) / max(len(d.dofs) - n0, 1), -len(d.dofs))
                 for _, d in tried]
        state, current = tried[gains.index(max(gains))]
    first = current.name if current is not None and current.within else None
    while current is not None and current.within:
        # the way up may have refined a group more than the answer needs: step
        # each group down while the depth stays within
        downs = [s for s in (step(state, g, up=False) for g in range(len(options)))
                 if s is not None]
        tried = [(s, evaluate(s)) for s in downs]
        inside = [(s, d) for s, d in tried if d is not None and d.within]
        if not inside:
            break
        state, current = min(inside, key=lambda t: (len(t[1].dofs), abs(t[1].worst[1])))
    if first is not None and current is not None and current.name != first:
        notes.append(f"the first depth within on the way up was {first}; stepping its groups "
                     f"down while within gave {current.name}")
    if len(seen) > limit:
        notes.append(f"the search stopped after {limit} candidate depths")
    judged.sort(key=lambda d: (len(d.dofs), d.source != "file"))
    return judge.result(judged, search=True, notes=notes)
