"""``beam``: a straight elastic beam element from end a's point to end b's point.

Its length is the distance between the two points; each end's point is
rigidly tied to its body. Local x runs from a to b; ``frame: {z: [...]}``
gives the section's z axis (made orthogonal to the beam; default global z,
or global x for a beam within about 25 degrees of vertical); y = z cross x.
Fields (SI, units allowed): ``EA`` (N), ``EIy``, ``EIz``, ``GJ`` (N m^2),
optional ``shear_y``, ``shear_z`` (k G A, N: Timoshenko when given,
Euler-Bernoulli when absent) and ``loss_factor`` (structural damping,
H = eta K).

The stiffness is :func:`builder.elements.beam_matrix.beam_global_stiffness`.
Link sensors read the element's six natural deformations (local axes), each
with its own stiffness so that K = D^T diag(k) D:

=================  ========================================  ===================
component          deformation                               stiffness
=================  ========================================  ===================
``axial``          u_b - u_a (m)                             EA/L
``twist``          rx_b - rx_a (rad)                         GJ/L
``bend_y``         ry_b - ry_a (rad)                         EIy/L
``bend_y_anti``    ry_a + ry_b + 2 (w_b - w_a)/L (rad)       3 EIy/(L (1 + phi_z))
``bend_z``         rz_b - rz_a (rad)                         EIz/L
``bend_z_anti``    rz_a + rz_b - 2 (v_b - v_a)/L (rad)       3 EIz/(L (1 + phi_y))
=================  ========================================  ===================

(u, v, w local translations, phi = 12 EI/(k G A L^2)). A ``deflection`` or
``force`` sensor on a beam reads the axial component (m, N).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ..errors import InputError, Where
from ..quantities import Quantity
from ..yamlnodes import Node
from . import ComponentBatch, ElementMatrices, parse_axis, register_link_type
from .beam_matrix import (
    beam_global_stiffness,
    beam_rotation,  # noqa: F401  (re-exported, used by callers)
    beam_rotations,
    check_beam_axes,
)

__all__ = ["Beam", "beam_props", "default_section_axis", "natural_deformations",
           "natural_deformations_batch", "COMPONENTS"]

COMPONENTS = ("axial", "twist", "bend_y", "bend_y_anti", "bend_z", "bend_z_anti")
_UNITS = ("m", "rad", "rad", "rad", "rad", "rad")


def default_section_axis(pa: np.ndarray, pb: np.ndarray) -> np.ndarray:
    """Global z, or global x when the beam is within about 25 degrees of vertical."""
    d = (np.asarray(pb, dtype=float).reshape(3) - np.asarray(pa, dtype=float).reshape(3)).tolist()
    n = math.sqrt(d[0] ** 2 + d[1] ** 2 + d[2] ** 2)
    if n > 0 and abs(d[2]) > 0.9 * n:
        return np.array([1.0, 0.0, 0.0])
    return np.array([0.0, 0.0, 1.0])


def beam_props(pa: np.ndarray, pb: np.ndarray, EA: float, EIy: float, EIz: float, GJ: float,
               shear_y: float | None = None, shear_z: float | None = None,
               z_axis: np.ndarray | None = None, loss_factor: float = 0.0,
               where: Where | None = None) -> dict[str, Any]:
    """Validated props of a beam from ``pa`` to ``pb`` (m).

    EA (N), EIy, EIz, GJ (N m^2), shear_y, shear_z (k G A, N, or None),
    z_axis: section z hint (default :func:`default_section_axis`), loss
    factor (-). Raises InputError on coincident points, a z axis along the
    beam or non-positive stiffness.
    """
    pa = np.asarray(pa, dtype=float)
    pb = np.asarray(pb, dtype=float)
    hint = default_section_axis(pa, pb) if z_axis is None else np.asarray(z_axis, dtype=float)
    props = {"z_axis": hint, "EA": float(EA), "EIy": float(EIy), "EIz": float(EIz),
             "GJ": float(GJ), "shear_y": None if shear_y is None else float(shear_y),
             "shear_z": None if shear_z is None else float(shear_z),
             "loss_factor": float(loss_factor)}
    # Validate now (points, frame, positivity) so that errors carry the place.
    check_beam_axes(pa, pb, hint, where)
    for key in ("EA", "EIy", "EIz", "GJ", "shear_y", "shear_z"):
        v = props[key]
        if v is not None and not (math.isfinite(v) and v > 0):
            raise InputError(f"{key} must be a positive finite number, got {v!r}", where)
    return props


def natural_deformations(pa: np.ndarray, pb: np.ndarray, props: Mapping[str, Any]
                         ) -> tuple[np.ndarray, np.ndarray]:
    """(D, k): the 6 x 12 map from the point motions (global) to the natural
    deformations of :data:`COMPONENTS`, and their stiffnesses (N/m, N m/rad)."""
    D, k = natural_deformations_batch(np.asarray(pa, float)[None], np.asarray(pb, float)[None],
                                      [props])
    return D[0], k[0]


def natural_deformations_batch(pa: np.ndarray, pb: np.ndarray,
                               props: Sequence[Mapping[str, Any]]
                               ) -> tuple[np.ndarray, np.ndarray]:
    """:func:`natural_deformations` of L beams: (L, 3) end points and their props
    to D (L, 6, 12) and k (L, 6)."""
    r = beam_rotations(pa, pb, np.array([p["z_axis"] for p in props], dtype=float))
    length = np.linalg.norm(pb - pa, axis=1)
    nb = len(length)
    d = np.zeros((nb, 6, 12))          # on local [u_a, th_a, u_b, th_b]
    d[:, 0, 0], d[:, 0, 6] = -1.0, 1.0
    d[:, 1, 3], d[:, 1, 9] = -1.0, 1.0
    d[:, 2, 4], d[:, 2, 10] = -1.0, 1.0
    d[:, 3, 4], d[:, 3, 10], d[:, 3, 2], d[:, 3, 8] = 1.0, 1.0, -2.0 / length, 2.0 / length
    d[:, 4, 5], d[:, 4, 11] = -1.0, 1.0
    d[:, 5, 5], d[:, 5, 11], d[:, 5, 1], d[:, 5, 7] = 1.0, 1.0, 2.0 / length, -2.0 / length
    # d @ kron(I4, R): each local triple is R times the global one.
    D = np.einsum("lcti,lij->lctj", d.reshape(nb, 6, 4, 3), r).reshape(nb, 6, 12)
    EA, GJ, EIy, EIz = (np.array([p[key] for p in props], dtype=float)
                        for key in ("EA", "GJ", "EIy", "EIz"))
    sy = np.array([np.inf if p["shear_y"] is None else p["shear_y"] for p in props], float)
    sz = np.array([np.inf if p["shear_z"] is None else p["shear_z"] for p in props], float)
    phi_y = 12 * EIz / (sy * length ** 2)
    phi_z = 12 * EIy / (sz * length ** 2)
    k = np.column_stack([EA / length, GJ / length, EIy / length,
                         3 * EIy / (length * (1 + phi_z)), EIz / length,
                         3 * EIz / (length * (1 + phi_y))])
    return D, k


class Beam:
    name = "beam"
    keys = ("frame", "EA", "EIy", "EIz", "GJ", "shear_y", "shear_z", "loss_factor")
    required = ("EA", "EIy", "EIz", "GJ")

    def parse(self, fields: dict[str, Node], a: Any, b: Any,
              parameters: Mapping[str, Quantity], where: Where) -> dict[str, Any]:
        hint = None
        if "frame" in fields:
            f = fields["frame"].mapping(("z",), required=("z",),
                                        what="a mapping with the section axis z")
            hint = parse_axis(f["z"], parameters)
        values = {key: fields[key].quantity(dim, parameters, "positive")
                  for key, dim in (("EA", "force"), ("EIy", "flexural_rigidity"),
                                   ("EIz", "flexural_rigidity"), ("GJ", "flexural_rigidity"))}
        for key in ("shear_y", "shear_z"):
            values[key] = fields[key].quantity("force", parameters, "positive") \
                if key in fields else None
        eta = fields["loss_factor"].quantity("dimensionless", parameters, "nonnegative") \
            if "loss_factor" in fields else 0.0
        place = fields["frame"].where if "frame" in fields else where
        return beam_props(a.at, b.at, z_axis=hint, loss_factor=eta, where=place, **values)

    def batch(self, links: Sequence[Any]) -> ComponentBatch:
        """The six natural deformations of each beam (see :class:`ComponentBatch`)."""
        pa = np.array([lk.a.at for lk in links], dtype=float).reshape(-1, 3)
        pb = np.array([lk.b.at for lk in links], dtype=float).reshape(-1, 3)
        props = [lk.props for lk in links]
        D, k = natural_deformations_batch(pa, pb, props)
        eta = np.array([p.get("loss_factor", 0.0) for p in props], dtype=float)
        return ComponentBatch(pa, pb, D, k, np.zeros_like(k), eta, COMPONENTS, _UNITS)

    def matrices(self, link: Any) -> ElementMatrices:
        p = link.props
        pa, pb = np.asarray(link.a.at, float), np.asarray(link.b.at, float)
        k = beam_global_stiffness(pa, pb, p["z_axis"], p["EA"], p["EIy"], p["EIz"], p["GJ"],
                                  p["shear_y"], p["shear_z"], link.where)
        d, kd = natural_deformations(pa, pb, p)
        eta = p.get("loss_factor", 0.0)
        return ElementMatrices((pa, pb), k, np.zeros((12, 12)), eta * k, d, kd, np.zeros(6),
                               COMPONENTS, _UNITS, float(eta))


register_link_type(Beam())
