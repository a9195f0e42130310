"""Mode labels in words: which bodies move in a mode, how, and in what phase.

Labels are built from a mode's kinetic energy per DOF: the bodies holding
most of it are named with their dominant motion; mirrored pairs are named
as a pair, in phase or opposed; a body on the road "hops". Plugins that
model a sub-system (engine, seat, split body) give labels of their own
through their ``label_mode`` hook, asked first.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..linear import LinearModel

__all__ = ["LabelContext", "label_mode", "plugin_label"]


_WORDS = {"x": "fore-aft", "y": "lateral", "z": "bounce", "rx": "roll", "ry": "pitch",
          "rz": "yaw"}


def plugin_label(model: LinearModel, shape: np.ndarray, energy: np.ndarray) -> str | None:
    """A label from the first applied plugin that has words for this mode."""
    if model.assembly is None:
        return None
    for use in model.assembly.plugins:
        labeller = getattr(getattr(use, "plugin", None), "label_mode", None)
        if callable(labeller):
            label = labeller(model, shape, energy)
            if label:
                return label
    return None


@dataclass(frozen=True)
class LabelContext:
    """What labels need from a model, computed once per mode set."""

    per_body: dict[str, list[int]]
    on_road: frozenset[str]
    cg_x: float

    @staticmethod
    def of(model: LinearModel) -> LabelContext:
        per_body: dict[str, list[int]] = {}
        for j, d in enumerate(model.dofs):
            per_body.setdefault(d.rsplit(".", 1)[0], []).append(j)
        on_road: set[str] = set()
        cg_x = 0.0
        if model.assembly is not None:
            for lk in model.assembly.links.values():
                if lk.b.kind == "road":
                    on_road.add(lk.a.node)
                if lk.a.kind == "road":
                    on_road.add(lk.b.node)
            cg_x = float(model.assembly.mass_properties()[1][0])
        return LabelContext(per_body, frozenset(on_road), cg_x)


def label_mode(model: LinearModel, shape: np.ndarray, energy: np.ndarray,
               context: LabelContext | None = None) -> str:
    """A short description of a mode from its dominant DOFs and their phase.

    Energy is summed per body; the bodies holding most of it (80 %) are
    named with their dominant motion. Two bodies mirrored about the x-z
    plane with the same motion are described as a pair, "in phase" or
    "opposed"; a body whose DOF is linked straight to a road point "hops"
    rather than bounces.
    """
    dofs = model.dofs
    ctx = context or LabelContext.of(model)
    per_body = ctx.per_body
    e = np.clip(np.asarray(energy, float), 0.0, None)
    total = e.sum() or 1.0
    names = list(per_body)
    body_energy = np.array([e[per_body[b]].sum() for b in names])
    order = np.argsort(-body_energy, kind="stable")[:4]
    chosen, acc = [], 0.0
    for k in order:
        chosen.append(names[k])
        acc += body_energy[k] / total
        if acc >= 0.8:
            break
    parts = []
    for b in chosen:
        idx = sorted(per_body[b], key=lambda j: -e[j])
        main = idx[0]
        word = _word(ctx, b, dofs[main].rsplit(".", 1)[1])
        second = [j for j in idx[1:] if e[j] >= 0.25 * e[main]]
        if second:
            word += " with " + _word(ctx, b, dofs[second[0]].rsplit(".", 1)[1])
        parts.append((b, dofs[main], word, float(np.sign(shape[main]) or 1.0)))
    if len(parts) == 1:
        return f"{parts[0][0]} {parts[0][2]}"
    pair = _pair_words(model, ctx, parts[:2]) if len(parts) >= 2 else None
    if pair and len(parts) == 2:
        return pair
    words = [f"{b} {w}" for b, _, w, _ in parts]
    signs = [s for *_, s in parts]
    phase = "in phase" if all(s == signs[0] for s in signs) else \
        "opposed" if len(parts) == 2 else "mixed phase"
    if pair:
        return f"{pair}; with {', '.join(words[2:])}"
    return f"{' + '.join(words)} ({phase})"


def _word(ctx: LabelContext, body: str, dof: str) -> str:
    if dof == "z" and body in ctx.on_road:
        return "hop"
    return _WORDS.get(dof, dof)


def _pair_words(model: LinearModel, ctx: LabelContext,
                parts: list[tuple[str, str, str, float]]) -> str | None:
    (b1, d1, w1, s1), (b2, d2, w2, s2) = parts
    if w1 != w2 or d1.rsplit(".", 1)[1] != d2.rsplit(".", 1)[1] or model.assembly is None:
        return None
    bodies = model.assembly.bodies
    if b1 not in bodies or b2 not in bodies:
        return None
    c1, c2 = bodies[b1].cg, bodies[b2].cg
    mirrored = abs(c1[0] - c2[0]) < 0.05 and abs(c1[1] + c2[1]) < 0.05 and abs(c1[1]) > 0.05
    if not mirrored:
        return None
    where = "front" if c1[0] > ctx.cg_x else "rear"
    common = _common_stem(b1, b2)
    noun = f"{common}s" if common else f"{b1}/{b2}"
    phase = "in phase" if s1 == s2 else "opposed"
    return f"{where} {noun} {w1}, {phase}"


def _common_stem(a: str, b: str) -> str:
    pa, pb = a.split("_"), b.split("_")
    stem = []
    for x, y in zip(pa, pb):
        if x != y:
            break
        stem.append(x)
    return "_".join(stem)
