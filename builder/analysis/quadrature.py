"""Integrals over frequency with an error estimate: the adaptive trapezoidal rule.

A response variance is the integral of its PSD over the band. Take the grid
``x_0 < x_1 < ... < x_2m`` as ``m`` pairs of neighbouring intervals. On each
pair ``(x_2j, x_2j+1, x_2j+2)`` the trapezoidal rule over the two intervals
(``T_fine``) and over the single interval ``(x_2j, x_2j+2)`` (``T_coarse``)
differ by about three times the error of ``T_fine``: the rule's error falls
as ``h^2``, so halving ``h`` removes three quarters of it (Richardson). The
pair's error estimate is

    e_j = |T_fine - T_coarse| / 3,

and twice their sum is the stated error of the whole integral: the sum is
an upper bound of the global Richardson estimate ``|T_h - T_2h| / 3`` (in
which errors of opposite sign may cancel), and the factor :data:`SAFETY`
covers the higher-order terms the estimate leaves out (it is
asymptotically exact, so it can fall short by a hair). The sum of the
magnitudes is kept, not the signed sum, on purpose: across a sharp resonance
the pairs' errors change sign and the signed sum was seen to fall four times
short of the true error, while the sum of magnitudes is only pessimistic
(for a rippling integrand, whose errors cancel, it asks for more points
than needed). Pairs whose estimate
exceeds their share of the tolerance are halved (both intervals) and the
integrand is evaluated at the new points only, round after round, until every integral's estimate is
within the tolerance or the point budget is spent; a result that did not get
there says so (``converged``) instead of hiding it.

The estimate is only as good as the starting grid: a peak that falls
between two points of the starting grid is invisible to both rules. Callers
therefore start from a grid that resolves every peak they know of (see
:func:`builder.analysis.frf.resolving_grid`).

>>> import numpy as np
>>> r = adaptive_trapezoid(lambda x: np.exp(x)[:, None], np.linspace(0.0, 1.0, 5), rtol=1e-8)
>>> bool(abs(r.value[0] - (np.e - 1.0)) <= r.error[0] <= 1e-8 * r.value[0])
True
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = ["Integral", "adaptive_trapezoid", "pair_errors"]

#: Largest number of refinement rounds.
MAX_ROUNDS = 16
#: Factor on the summed Richardson estimates in the stated error.
SAFETY = 2.0


@dataclass(frozen=True, eq=False)
class Integral:
    """Integrals of ``nq`` integrands on the final grid ``x`` (nx,), values ``y`` (nx, nq).

    ``value`` and ``error`` (nq,) are the trapezoidal integrals and their
    estimated absolute errors (units of y times units of x); ``start`` is the
    number of points of the starting grid, ``rounds`` the refinement rounds
    run; ``converged`` is False when the point budget ran out first.
    """

    x: NDArray
    y: NDArray
    value: NDArray
    error: NDArray
    start: int
    rounds: int
    converged: bool

    @property
    def relative_error(self) -> NDArray[np.float64]:
        """``error / |value|`` per integrand (0 where both are 0, inf where only the value is)."""
        v = np.abs(self.value)
        with np.errstate(divide="ignore", invalid="ignore"):
            out = np.where(v > 0, self.error / np.where(v > 0, v, 1.0),
                           np.where(self.error > 0, np.inf, 0.0))
        return out


def _odd(x: NDArray) -> NDArray:
    """The grid with an odd number of points (whole pairs of intervals): the widest
    interval is halved when the count is even."""
    if x.size % 2 == 1:
        return x
    j = int(np.argmax(np.diff(x)))
    return np.insert(x, j + 1, 0.5 * (x[j] + x[j + 1]))


def pair_errors(x: NDArray, y: NDArray) -> tuple[NDArray, NDArray]:
    """Trapezoidal integrals (nq,) over an odd-sized grid and the Richardson error
    estimate of every pair of intervals (npairs, nq), both in units of y times x."""
    h1, h2 = x[1:-1:2] - x[0:-2:2], x[2::2] - x[1:-1:2]
    y0, y1, y2 = y[0:-2:2], y[1:-1:2], y[2::2]
    fine = 0.5 * (h1[:, None] * (y0 + y1) + h2[:, None] * (y1 + y2))
    coarse = 0.5 * (h1 + h2)[:, None] * (y0 + y2)
    return fine.sum(axis=0), np.abs(fine - coarse) / 3.0


def _split(out: Any) -> tuple[NDArray, NDArray | None]:
    if isinstance(out, tuple):
        return np.asarray(out[0], dtype=float), np.asarray(out[1], dtype=float)
    return np.asarray(out, dtype=float), None


def adaptive_trapezoid(evaluate: Callable[[NDArray], Any], x0: ArrayLike,
                       rtol: float = 1e-3, noise: float = 1e-10,
                       max_points: int = 100_000) -> Integral:
    """Integrate the columns of ``evaluate(x)`` (nx, nq) from ``x0[0]`` to ``x0[-1]``.

    ``x0``: increasing starting grid (at least 3 points); ``rtol``: relative
    tolerance on each integral; ``max_points``: the most grid points the
    refinement may use. ``evaluate`` may instead return a pair ``(y, g)``
    with ``g`` (nx, nq) a nonnegative scale of each integrand that round-off
    cannot cancel (e.g. a sum of squared magnitudes whose combination ``y``
    may cancel to nothing); an integral whose error is below ``noise``
    times the integral of its ``g`` then counts as converged, whatever its
    relative error: it is at the round-off level.
    """
    x = _odd(np.unique(np.asarray(x0, dtype=float)))
    if x.size < 3:
        raise ValueError("adaptive_trapezoid needs at least three distinct points")
    y, g = _split(evaluate(x))
    start = x.size
    rounds, converged = 0, False
    while True:
        value, err = pair_errors(x, y)
        err *= SAFETY
        floor = 0.0 if g is None else noise * pair_errors(x, g)[0]
        limit = np.maximum(rtol * np.abs(value), floor)
        total = err.sum(axis=0)
        over = total > limit
        if not over.any():
            converged = True
            break
        if rounds >= MAX_ROUNDS or x.size >= max_points:
            break
        # equidistribution: halve each pair whose error exceeds its share of the limit
        share = err[:, over] / np.maximum(limit[over] / err.shape[0], 1e-300)
        badness = share.max(axis=1)
        marked = np.flatnonzero(badness > 1.0)
        room = (max_points - x.size) // 2
        if marked.size > room:
            marked = marked[np.argsort(badness[marked])[::-1][:room]]
        if marked.size == 0:
            break
        j = 2 * np.sort(marked)
        new = np.concatenate([0.5 * (x[j] + x[j + 1]), 0.5 * (x[j + 1] + x[j + 2])])
        ynew, gnew = _split(evaluate(new))
        order = np.argsort(np.concatenate([x, new]), kind="stable")
        x = np.concatenate([x, new])[order]
        y = np.concatenate([y, ynew])[order]
        if g is not None and gnew is not None:
            g = np.concatenate([g, gnew])[order]
        rounds += 1
    return Integral(x, y, value, total, start, rounds, converged)
