"""Mode tracking by the modal assurance criterion (MAC).

Across a sweep the modes come out of the eigensolver sorted by frequency.
When two modes cross, sorting swaps them, and a curve drawn through "mode 3"
of every variant jumps from one mode to the other. Tracking instead pairs
each mode of a variant with the mode of its reference variant (the previous
one in a grid) it resembles most, by the MAC

    MAC(a, b) = (a^T W b)^2 / ((a^T W a) (b^T W b))

(W the mass matrix, or the identity), solved as an assignment problem:
the pairing that minimises the sum of (1 - MAC), by the Hungarian method
(``scipy.optimize.linear_sum_assignment``).

Shortcut, exact: when the variant's shapes are a complete W-orthonormal set
(all modes of a model with W its mass matrix), each row of the MAC matrix sums
to one; if every row's largest entry exceeds 0.5, any other pairing loses on
every row it changes, so the row-wise argmax (when it is a permutation) is
the optimal assignment and the Hungarian step is skipped.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy.optimize import linear_sum_assignment

from .modes import mac_matrix

__all__ = ["mac_matrix", "match_modes", "track_modes", "apply_tracking", "batch_match"]


def _assign(mac: np.ndarray, complete: bool) -> np.ndarray:
    """For each row (reference mode) the column (new mode) it pairs with."""
    if complete and mac.shape[0] == mac.shape[1]:
        best = np.argmax(mac, axis=1)
        if (np.all(mac[np.arange(len(best)), best] > 0.5)
                and len(np.unique(best)) == len(best)):
            return best
    rows, cols = linear_sum_assignment(1.0 - mac)
    out = np.empty(mac.shape[0], dtype=int)
    out[rows] = cols
    return out


def match_modes(reference: np.ndarray, shapes: np.ndarray, mass: np.ndarray | None = None
                ) -> np.ndarray:
    """For each column of ``reference`` (n, m) the column of ``shapes`` (n, m2 >= m)
    it continues as (Hungarian assignment on 1 - MAC)."""
    mac = mac_matrix(reference, shapes, mass)
    return _assign(mac, complete=False)


def track_modes(shapes_per_variant: Sequence[np.ndarray],
                mass: np.ndarray | Sequence[np.ndarray] | None = None) -> list[np.ndarray]:
    """Follow modes through a sequence of variants.

    ``shapes_per_variant[v]`` is (n, m) with the variant's modes as columns in
    the solver's (frequency) order. Returns one permutation per variant:
    ``perm[v][j]`` is the column of variant ``v`` that continues curve ``j``
    (curve ``j`` starts as column ``j`` of variant 0). Each variant is matched
    to the previous one, already tracked. ``mass`` is one (n, n) matrix, one per
    variant, or None (unweighted MAC).
    """
    perms: list[np.ndarray] = []
    prev = None
    for v, shapes in enumerate(shapes_per_variant):
        shapes = np.asarray(shapes, dtype=float)
        if prev is None:
            perm = np.arange(shapes.shape[1])
        else:
            w = mass[v] if isinstance(mass, list | tuple) else mass
            perm = match_modes(prev, shapes, w)
        perms.append(perm)
        prev = shapes[:, perm]
    return perms


def apply_tracking(values: np.ndarray, perms: Sequence[np.ndarray]) -> np.ndarray:
    """Reorder per-variant values (nvariants, m) into tracked curves."""
    values = np.asarray(values)
    return np.stack([values[v][np.asarray(p)] for v, p in enumerate(perms)])


def batch_match(ref_shapes: np.ndarray, shapes: np.ndarray, mass: np.ndarray) -> np.ndarray:
    """Match many variants at once: for each variant k and each reference mode i,
    the mode of ``shapes[k]`` that continues ``ref_shapes[k][:, i]``.

    ``ref_shapes`` and ``shapes`` are (k, n, m) with complete sets of
    ``mass``-normalised modes of each variant; ``mass`` is (k, n, n) or (n, n),
    the variant's mass matrix. Returns (k, m) ints.
    """
    wb = mass @ shapes
    cross = np.swapaxes(ref_shapes, -1, -2) @ wb
    wa = mass @ ref_shapes
    na = np.sum(ref_shapes * wa, axis=1)
    nb = np.sum(shapes * wb, axis=1)
    denom = na[:, :, None] * nb[:, None, :]
    mac = np.clip(cross**2 / np.where(denom > 0, denom, 1.0), 0.0, 1.0)
    out = np.argmax(mac, axis=2)
    best = np.take_along_axis(mac, out[:, :, None], axis=2)[:, :, 0]
    if mac.shape[1] == mac.shape[2]:
        ok = np.all(best > 0.5, axis=1) & np.all(
            np.sort(out, axis=1) == np.arange(mac.shape[1])[None, :], axis=1)
    else:
        ok = np.zeros(len(mac), dtype=bool)
    for k in np.nonzero(~ok)[0]:
        out[k] = _assign(mac[k], complete=False)
    return out
