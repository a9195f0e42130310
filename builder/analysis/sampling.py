"""Designs of experiments for sweeps: grids, Latin hypercubes, Monte Carlo scatter.

A *design* is a table of parameter values, one row per variant, in SI units.
It is built from the command-line grammar

- ``--vary NAME=LOW..HIGH:COUNT`` (``ks_front=15kN/m..30kN/m:16``): COUNT
  evenly spaced values from LOW to HIGH inclusive. Several ``--vary`` give
  the full grid (the first one varies slowest), or, with ``--lhs N``, a Latin
  hypercube sample of N variants over the same ranges (COUNT is then not
  needed).
- ``--scatter NAME=normal:MEAN,SD`` or ``NAME=uniform:LOW,HIGH`` with
  ``--samples N --seed S``: Monte Carlo scatter. SD may be written as a
  percentage of the mean (``normal:20kN/m,5%``). With ``--vary`` as well,
  every grid point gets the same N scatter samples (common random numbers,
  so that grid points compare without sampling noise).

Every random draw comes from one ``numpy.random.Generator`` seeded with the
given seed, in a fixed order, so the same options give the same design on
any machine and with any executor.

Each row also names the variant its modes are tracked against (see
:mod:`builder.analysis.tracking`): in a grid the neighbour one step back
along the innermost varying axis, so that curves are followed through the
grid step by step; in random designs the nominal design.
"""

from __future__ import annotations

import itertools
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, Where
from ..quantities import NONE, Quantity, _dim_text, parse_quantity

__all__ = [
    "VarySpec", "ScatterSpec", "Design", "parse_vary", "parse_scatter", "full_grid",
    "latin_hypercube", "monte_carlo", "build_design", "REF_NONE", "REF_NOMINAL",
]

#: reference index meaning "no reference: the variant starts its own curves"
REF_NONE = -2
#: reference index meaning "track against the nominal design"
REF_NOMINAL = -1

_NAME = re.compile(r"[A-Za-z_][A-Za-z_0-9]*")


@dataclass(frozen=True)
class VarySpec:
    """One ``--vary`` range: ``count`` values from ``low`` to ``high`` (SI).

    ``count`` is 0 when the option gave none (allowed with ``--lhs``).
    """

    name: str
    low: float
    high: float
    count: int
    dim: tuple[int, int, int] = NONE
    text: str = ""

    def values(self) -> np.ndarray:
        """The grid values, SI."""
        return np.linspace(self.low, self.high, self.count)


@dataclass(frozen=True)
class ScatterSpec:
    """One ``--scatter`` distribution, SI: ``normal`` (a=mean, b=SD) or
    ``uniform`` (a=low, b=high)."""

    name: str
    kind: str
    a: float
    b: float
    dim: tuple[int, int, int] = NONE
    text: str = ""

    @property
    def centre(self) -> float:
        """The mean of the distribution, SI."""
        return self.a if self.kind == "normal" else 0.5 * (self.a + self.b)


@dataclass(frozen=True)
class Design:
    """Parameter values of every variant of a sweep.

    ``values`` is (nvariants, nparameters), SI; ``nominal`` (nparameters,)
    the base design; ``reference[i]`` the variant whose modes variant ``i`` is
    tracked against, or :data:`REF_NOMINAL` / :data:`REF_NONE`.
    """

    names: tuple[str, ...]
    values: np.ndarray
    nominal: np.ndarray
    reference: np.ndarray
    kind: str
    dims: tuple[tuple[int, int, int], ...] = field(default=())

    def __len__(self) -> int:
        return int(self.values.shape[0])


def _opt_error(option: str, text: str, reason: str) -> InputError:
    return InputError(f"{option} {text!r}: {reason}", Where(field=option))


def _quantity(option: str, text: str, part: str) -> Quantity:
    try:
        return parse_quantity(part.strip())
    except ValueError as exc:
        raise _opt_error(option, text, f"{part.strip()!r} is not a quantity ({exc})") from None


def _common_dim(option: str, text: str, qs: Sequence[Quantity]) -> tuple[int, int, int]:
    dims = {q.dim for q in qs if q.dim != NONE}
    if len(dims) > 1:
        a, b = sorted(dims)[:2]
        raise _opt_error(option, text, f"{_dim_text(a)} and {_dim_text(b)} do not mix")
    return dims.pop() if dims else NONE


def _split_name(option: str, text: str) -> tuple[str, str]:
    name, eq, rest = text.partition("=")
    name = name.strip()
    if not eq or not _NAME.fullmatch(name):
        raise _opt_error(option, text, "expected NAME=... with NAME a parameter name")
    return name, rest


def parse_vary(text: str, need_count: bool = True) -> VarySpec:
    """Read ``NAME=LOW..HIGH:COUNT`` (units allowed, e.g. ``15kN/m``).

    Raises InputError naming ``--vary`` on any mistake.
    """
    option = "--vary"
    name, rest = _split_name(option, text)
    body, colon, count_text = rest.rpartition(":")
    if not colon:
        body, count_text = rest, ""
    low_text, dots, high_text = body.partition("..")
    if not dots or not low_text.strip() or not high_text.strip():
        raise _opt_error(option, text, "expected NAME=LOW..HIGH:COUNT")
    low = _quantity(option, text, low_text)
    high = _quantity(option, text, high_text)
    dim = _common_dim(option, text, (low, high))
    if count_text.strip():
        digits = count_text.strip()
        if not (digits.isascii() and digits.isdigit() and len(digits) <= 18) \
                or int(digits) < 1:
            raise _opt_error(option, text, f"COUNT must be a whole number >= 1, got {count_text!r}")
        count = int(count_text)
    elif need_count:
        raise _opt_error(option, text, "missing :COUNT (the number of values)")
    else:
        count = 0
    if count > 1 and low.value == high.value:
        raise _opt_error(option, text, "LOW and HIGH are equal")
    return VarySpec(name, low.value, high.value, count, dim, text)


def parse_scatter(text: str) -> ScatterSpec:
    """Read ``NAME=normal:MEAN,SD`` (SD may be ``5%`` of the mean) or
    ``NAME=uniform:LOW,HIGH``. Raises InputError naming ``--scatter``."""
    option = "--scatter"
    name, rest = _split_name(option, text)
    kind, colon, args = rest.partition(":")
    kind = kind.strip().lower()
    if kind not in ("normal", "uniform") or not colon:
        raise _opt_error(option, text, "expected NAME=normal:MEAN,SD or NAME=uniform:LOW,HIGH")
    parts = args.split(",")
    if len(parts) != 2 or not all(p.strip() for p in parts):
        raise _opt_error(option, text, f"{kind} takes two values separated by a comma")
    a = _quantity(option, text, parts[0])
    if kind == "normal" and parts[1].strip().endswith("%"):
        b = Quantity(abs(a.value) * _quantity(option, text, parts[1]).value, a.dim)
    else:
        b = _quantity(option, text, parts[1])
    dim = _common_dim(option, text, (a, b))
    if kind == "normal" and not b.value > 0:
        raise _opt_error(option, text, "SD must be positive")
    if kind == "uniform" and not b.value > a.value:
        raise _opt_error(option, text, "HIGH must be above LOW")
    return ScatterSpec(name, kind, a.value, b.value, dim, text)


def full_grid(specs: Sequence[VarySpec]) -> tuple[np.ndarray, np.ndarray]:
    """All combinations of the ranges (first spec slowest): (values, reference).

    The reference of a grid point is its neighbour one step back along the
    innermost axis whose index is not zero; the first point has none.
    """
    axes = [s.values() for s in specs]
    shape = tuple(len(a) for a in axes)
    index = np.array(list(itertools.product(*[range(n) for n in shape])), dtype=int)
    index = index.reshape(-1, len(specs))
    values = np.column_stack([axes[j][index[:, j]] for j in range(len(specs))])
    reference = np.full(len(index), REF_NONE, dtype=int)
    strides = np.array([int(np.prod(shape[j + 1:])) for j in range(len(shape))], dtype=int)
    for i, idx in enumerate(index):
        nz = np.nonzero(idx)[0]
        if nz.size:
            reference[i] = i - strides[nz[-1]]
    return values, reference


def latin_hypercube(specs: Sequence[VarySpec], n: int, rng: np.random.Generator) -> np.ndarray:
    """``n`` points over the ranges, one in each of ``n`` equal strata per
    parameter, strata paired at random (McKay, Beckman and Conover 1979)."""
    cols = []
    for s in specs:
        u = (rng.permutation(n) + rng.random(n)) / n
        cols.append(s.low + u * (s.high - s.low))
    return np.column_stack(cols) if cols else np.empty((n, 0))


def monte_carlo(specs: Sequence[ScatterSpec], n: int, rng: np.random.Generator) -> np.ndarray:
    """``n`` random samples of each distribution, (n, len(specs)), SI."""
    cols = []
    for s in specs:
        if s.kind == "normal":
            cols.append(rng.normal(s.a, s.b, n))
        else:
            cols.append(rng.uniform(s.a, s.b, n))
    return np.column_stack(cols) if cols else np.empty((n, 0))


def build_design(vary: Sequence[VarySpec] = (), scatter: Sequence[ScatterSpec] = (),
                 lhs: int | None = None, samples: int | None = None, seed: int = 0,
                 base: Mapping[str, float] | None = None) -> Design:
    """The design the sweep options describe.

    ``base`` gives the nominal value of each parameter (SI); a parameter
    without one takes the middle of its range or the centre of its
    distribution. Raises InputError for contradictory options.
    """
    names = [s.name for s in vary] + [s.name for s in scatter]
    if not names:
        raise InputError("give at least one --vary or --scatter", Where(field="--vary"))
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise InputError(f"parameter {dup[0]!r} is varied twice", Where(field="--vary"))
    if scatter and not samples:
        raise InputError("--scatter needs --samples N", Where(field="--samples"))
    if samples is not None and samples < 1:
        raise InputError("must be at least 1", Where(field="--samples"))
    if lhs is not None and lhs < 1:
        raise InputError("must be at least 1", Where(field="--lhs"))
    if lhs is not None and not vary:
        raise InputError("--lhs samples the --vary ranges; give at least one", Where(field="--lhs"))
    if lhs is None:
        for s in vary:
            if s.count < 1:
                raise _opt_error("--vary", s.text, "missing :COUNT (the number of values)")
    from ..options import refuse_above
    if lhs is not None:
        refuse_above(lhs, "sweep --lhs", "--lhs")
    if samples is not None:
        refuse_above(samples, "sweep --samples", "--samples")
    grid_size = lhs if lhs is not None else math.prod(max(s.count, 1) for s in vary)
    option = "--lhs" if lhs is not None else "--vary" if vary else "--samples"
    refuse_above(grid_size * (samples if scatter and samples else 1), "sweep variants", option,
                 "the design's variants:")
    if not 0 <= seed < 2**63:
        raise InputError(f"must be a whole number from 0 to 2^63 - 1, got {seed}",
                         Where(field="--seed"))
    rng = np.random.default_rng(seed)
    base = dict(base or {})
    nominal = np.array([base.get(s.name, 0.5 * (s.low + s.high)) for s in vary]
                       + [base.get(s.name, s.centre) for s in scatter], dtype=float)
    if vary and lhs is None:
        grid, gref = full_grid(vary)
        kind = "grid"
    elif vary:
        grid = latin_hypercube(vary, lhs, rng)
        gref = np.full(len(grid), REF_NOMINAL, dtype=int)
        kind = "lhs"
    else:
        grid, gref = np.empty((1, 0)), np.array([REF_NOMINAL])
        kind = "scatter"
    if scatter:
        mc = monte_carlo(scatter, int(samples), rng)
        values = np.hstack([np.repeat(grid, len(mc), axis=0), np.tile(mc, (len(grid), 1))])
        reference = np.full(len(values), REF_NOMINAL, dtype=int)
        kind = "scatter" if not vary else kind + "+scatter"
    else:
        values, reference = grid, gref
    dims = tuple(s.dim for s in vary) + tuple(s.dim for s in scatter)
    return Design(tuple(names), np.ascontiguousarray(values, dtype=float), nominal,
                  reference, kind, dims)
