"""The split_body plugin's parameters: declaration and parsing of a ``with:`` block.

```yaml
plugins:
  - use: split_body
    name: body                   # segments body_s01 ..., beams body_beam01 ...
    with:
      body: body                 # the rigid body to split (required)
      segments: 10               # number of segments (default 10)
      axis: x                    # x, y, z or a vector (default x)
      start: -3.0 m              # span along the axis (default: the body's
      end: 0.8 m                 #   box, else its attached points)
      stations: [...]            # or: N+1 segment boundaries (overrides the three above)
      EA: 2.0e9 N                # section (constant along the length) ...
      EIy: 8.0e6 N m^2           #   bending about the section's y (vertical bending)
      EIz: 1.2e7 N m^2           #   bending about z (lateral bending)
      GJ: 4.3e6 N m^2            #   torsion
      shear_y: 5.0e8 N           # optional k G A (Timoshenko)
      shear_z: 5.0e8 N
      section_table:             # ... or varying: rows at stations, linear between
        - {at: -3.0 m, EA: ..., EIy: ..., EIz: ..., GJ: ...}
        - {at: 0.8 m, ...}
      mass: uniform              # or a table of relative mass per length:
      mass_table:                #   rows {at: position, weight: number}
        - {at: -3.0 m, weight: 1.2}
        - {at: 0.8 m, weight: 1.0}
      frame_z: [0, 0, 1]         # section z axis (default global z)
      loss_factor: 0.02          # structural damping of the beams (default 0)
```
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from builder.elements import parse_axis
from builder.errors import InputError, Where
from builder.plugin import Parameter
from builder.quantities import Quantity
from builder.yamlnodes import Node

from .split import SECTION_KEYS, SectionTable, SplitSpec

__all__ = ["PARAMETERS", "SECTION_FIELDS", "MASS_FIELDS", "parse_split_spec"]

_SECTION_DIMS = {"EA": "force", "EIy": "flexural_rigidity", "EIz": "flexural_rigidity",
                 "GJ": "flexural_rigidity", "shear_y": "force", "shear_z": "force"}


SECTION_FIELDS: tuple[Parameter, ...] = (
    Parameter("at", "length", None, "station along the axis, m"),
    Parameter("EA", "force", None, "axial rigidity, N"),
    Parameter("EIy", "flexural_rigidity", None, "bending rigidity about y, N m^2"),
    Parameter("EIz", "flexural_rigidity", None, "bending rigidity about z, N m^2"),
    Parameter("GJ", "flexural_rigidity", None, "torsional rigidity, N m^2"),
    Parameter("shear_y", "force", None, "shear rigidity k G A along y, N"),
    Parameter("shear_z", "force", None, "shear rigidity k G A along z, N"),
)

MASS_FIELDS: tuple[Parameter, ...] = (
    Parameter("at", "length", None, "station along the axis, m"),
    Parameter("weight", "dimensionless", None, "relative mass per length"),
)

PARAMETERS: tuple[Parameter, ...] = (
    Parameter("body", "name", None, "the rigid body to split (required)"),
    Parameter("segments", "integer", 10, "number of segments (at least 2)"),
    Parameter("axis", "direction", "x", "axis of the split: x, y, z or a vector"),
    Parameter("start", "length", None, "start of the span along the axis, m "
              "(default: the body's box, else its attached points)"),
    Parameter("end", "length", None, "end of the span along the axis, m"),
    Parameter("stations", "list of lengths", None,
              "segment boundaries along the axis, m (N+1 values; overrides segments, "
              "start, end)"),
    Parameter("EA", "force", None, "axial rigidity, N"),
    Parameter("EIy", "flexural_rigidity", None,
              "bending rigidity about the section's y axis (vertical bending), N m^2"),
    Parameter("EIz", "flexural_rigidity", None,
              "bending rigidity about the section's z axis (lateral bending), N m^2"),
    Parameter("GJ", "flexural_rigidity", None, "torsional rigidity, N m^2"),
    Parameter("shear_y", "force", None, "shear rigidity k G A along y, N (Timoshenko)"),
    Parameter("shear_z", "force", None, "shear rigidity k G A along z, N (Timoshenko)"),
    Parameter("section_table", "records", None,
              "section varying along the axis: rows {at, EA, EIy, EIz, GJ[, shear_y, "
              "shear_z]}, linear between rows", SECTION_FIELDS),
    Parameter("mass", "choice", "uniform", "mass distribution: uniform or table"),
    Parameter("mass_table", "records", None,
              "relative mass per length: rows {at, weight}, linear between rows", MASS_FIELDS),
    Parameter("frame_z", "direction", None, "section z axis (default global z)"),
    Parameter("loss_factor", "dimensionless", 0.0, "structural loss factor of the beams"),
)


def _rows(node: Node, keys: tuple[str, ...], required: tuple[str, ...],
          what: str) -> list[dict[str, Node]]:
    rows = [row.mapping(keys, required=required, what=what) for row in node.items_list(
        f"a list of rows ({what})")]
    if len(rows) < 2:
        raise node.error("a table needs at least two rows")
    return rows


def _increasing(values: list[float], node: Node) -> np.ndarray:
    a = np.array(values, dtype=float)
    if np.any(np.diff(a) <= 0):
        raise node.error("the table's at values must increase")
    return a


def parse_split_spec(fields: Mapping[str, Node], name: str,
                     parameters: Mapping[str, Quantity], where: Where) -> SplitSpec:
    """A validated :class:`SplitSpec` from the ``with:`` block's fields."""
    known = {p.name for p in PARAMETERS}
    for key, node in fields.items():
        if key not in known:
            raise node.error(f'unknown parameter "{key}" of split_body '
                             f"(parameters: {', '.join(sorted(known))})")
    if "body" not in fields:
        raise InputError('split_body needs "body": the body to split', where)
    body = fields["body"].text("a body name")
    segments = fields["segments"].integer(2, 100_000) if "segments" in fields else 10
    axis = tuple(parse_axis(fields["axis"], parameters)) if "axis" in fields else (1.0, 0, 0)
    start = fields["start"].quantity("length", parameters) if "start" in fields else None
    end = fields["end"].quantity("length", parameters) if "end" in fields else None
    stations = None
    if "stations" in fields:
        st = fields["stations"]
        vals = [n.quantity("length", parameters) for n in st.items_list("a list of lengths")]
        if len(vals) < 3:
            raise st.error("give at least three stations (two segments)")
        stations = tuple(_increasing(vals, st))
    section: dict[str, float | None] = {}
    for key in SECTION_KEYS:
        if key in fields:
            section[key] = fields[key].quantity(_SECTION_DIMS[key], parameters, "positive")
    table = None
    if "section_table" in fields:
        tn = fields["section_table"]
        if section:
            raise tn.error("give either a section_table or constant EA, EIy, EIz, GJ")
        rows = _rows(tn, ("at", *SECTION_KEYS), ("at", "EA", "EIy", "EIz", "GJ"),
                     "a section row {at, EA, EIy, EIz, GJ}")
        at = _increasing([r["at"].quantity("length", parameters) for r in rows], tn)
        values = {}
        for key in SECTION_KEYS:
            present = [key in r for r in rows]
            if any(present) and not all(present):
                raise tn.error(f"{key} must be given in every row or in none")
            if all(present):
                values[key] = np.array([r[key].quantity(_SECTION_DIMS[key], parameters,
                                                        "positive") for r in rows])
        table = SectionTable(at, values)
    else:
        missing = [k for k in ("EA", "EIy", "EIz", "GJ") if k not in section]
        if missing:
                raise InputError(f"split_body needs {', '.join(missing)} (or a section_table)",
                             where)
    mass = fields["mass"].choice(("uniform", "table")) if "mass" in fields else (
        "table" if "mass_table" in fields else "uniform")
    mass_table = None
    if mass == "table":
        if "mass_table" not in fields:
            raise fields["mass"].error("mass: table needs a mass_table")
        mn = fields["mass_table"]
        rows = _rows(mn, ("at", "weight"), ("at", "weight"), "a row {at, weight}")
        at = _increasing([r["at"].quantity("length", parameters) for r in rows], mn)
        weight = [r["weight"].quantity("dimensionless", parameters, "nonnegative")
                  for r in rows]
        mass_table = (tuple(at), tuple(weight))
    elif "mass_table" in fields:
        raise fields["mass_table"].error("a mass_table needs mass: table")
    z_axis = tuple(parse_axis(fields["frame_z"], parameters)) if "frame_z" in fields else None
    eta = fields["loss_factor"].quantity("dimensionless", parameters, "nonnegative") \
        if "loss_factor" in fields else 0.0
    return SplitSpec(body=body, name=name, segments=segments, axis=axis, start=start, end=end,
                     stations=stations, section=section, section_table=table,
                     mass_table=mass_table, z_axis=z_axis, loss_factor=eta, where=where)
