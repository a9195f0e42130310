"""The ``superelement`` plugin: a detailed model's reduced matrices joined to bodies.

```yaml
plugins:
  - use: superelement
    name: subframe
    with:
      matrices: subframe.npz         # M, K (C, H optional), SI; relative to this file
      points:                        # the boundary points, in the matrices' order
        - {body: body, at: [0.2, 0.45, 0.30]}            # six DOFs: x y z rx ry rz
        - {body: body, at: [0.2, -0.45, 0.30], dofs: [x, y, z]}
```

The matrices' first rows are the boundary points' DOFs (six each unless
``dofs`` says otherwise, in global axes), the rest interior coordinates
(e.g. fixed-interface modes of a Craig-Bampton reduction), which become
DOFs ``NAME.q01`` ... of the model. Each point is joined rigidly to its
body (or ``ground``) there; see :mod:`builder.superelement`. A file that
``lumpgraph export`` wrote (.npz, .mat, or the .json of a .mtx set) is
read as it is.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from typing import Any

import numpy as np

from builder.assembly import Assembly
from builder.errors import InputError, Where
from builder.kinematics import DOF_NAMES
from builder.plugin import Parameter
from builder.quantities import Quantity
from builder.superelement import BoundaryPoint, Superelement, read_superelement_matrices
from builder.yamlnodes import Node

__all__ = ["SuperelementPlugin", "PLUGIN"]

POINT_FIELDS = (
    Parameter("body", "name", None, "the body the point is joined to (or ground)"),
    Parameter("at", "vector", None, "the point, m (global axes)"),
    Parameter("dofs", "list", None, "its DOFs in the matrices' order (default x y z rx ry rz)"),
)

PARAMETERS = (
    Parameter("matrices", "name", None, "file of M and K (.npz, .mat or a .mtx set's .json), "
              "relative to the assembly file"),
    Parameter("points", "records", None, "the boundary points in the matrices' order",
              POINT_FIELDS),
)


class SuperelementPlugin:
    """Join a detailed model's reduced mass and stiffness matrices to bodies at points."""

    name = "superelement"
    summary = "a detailed model's reduced M and K (e.g. Craig-Bampton) joined to bodies"
    parameters = PARAMETERS

    def validate(self, fields: Mapping[str, Node], name: str,
                 parameters: Mapping[str, Quantity], where: Where) -> Superelement:
        """Read the matrices and the points; every size checked before anything runs."""
        for key in ("matrices", "points"):
            if key not in fields:
                raise InputError(f"missing {key}", where.child(key))
        path = fields["matrices"].text("a file name")
        if not os.path.isabs(path) and where.file:
            path = os.path.join(os.path.dirname(where.file), path)
        mats = read_superelement_matrices(path, fields["matrices"].where)
        points = []
        for item in fields["points"].items_list("a list of points {body, at, dofs}"):
            f = item.mapping(("body", "at", "dofs"), required=("body", "at"))
            dofs = DOF_NAMES
            if "dofs" in f:
                dofs = tuple(d.text("a DOF name") for d in f["dofs"].items_list("a DOF list"))
                for d in dofs:
                    if d not in DOF_NAMES or dofs.count(d) > 1:
                        raise f["dofs"].error(f"must be distinct DOFs of {', '.join(DOF_NAMES)}")
            at = tuple(float(v) for v in f["at"].vector("length", parameters))
            points.append(BoundaryPoint(f["body"].text("a body name"), at, dofs))
        size = mats["M"].shape[0]
        boundary = sum(len(p.dofs) for p in points)
        if boundary > size:
            raise fields["points"].error(f"{len(points)} points with {boundary} DOFs, but the "
                                         f"matrices are {size} x {size}")
        return Superelement(name, mats["M"], mats["K"], mats["C"], mats["H"], tuple(points),
                            path, where)

    def apply(self, assembly: Assembly, spec: Superelement) -> Assembly:
        """The assembly with the superelement; its points follow bodies other plugins split."""
        points = []
        for p in spec.points:
            body = p.body if p.body == "ground" else assembly.body_at(p.body, np.array(p.at))
            if body is None:
                known = ", ".join(assembly.bodies) or "none"
                raise InputError(f'no body "{p.body}" to join (bodies: {known})', spec.where)
            points.append(BoundaryPoint(body, p.at, p.dofs))
        se = Superelement(spec.name, spec.M, spec.K, spec.C, spec.H, tuple(points),
                          spec.source, spec.where)
        if spec.name in assembly.superelements:
            raise InputError(f'two superelements are called "{spec.name}"', spec.where)
        return assembly.replace(superelements={**assembly.superelements, spec.name: se})

    def analyse(self, model: Any, **options: Any) -> Any:
        """The model's modes (the superelement's interior coordinates among the DOFs)."""
        from builder.analysis.modes import compute_modes

        return compute_modes(model)


PLUGIN = SuperelementPlugin()
