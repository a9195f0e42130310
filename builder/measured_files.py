"""Measured modes from any of the files lumpgraph reads, chosen by suffix.

``.csv`` and ``.json``: the neutral layouts (:mod:`builder.measured`);
``.yaml``/``.yml``: a mapping block for a universal file
(:mod:`builder.measured_uff`, optional extra ``[uff]``).
"""

from __future__ import annotations

import os

from .errors import InputError, Where
from .measured import MeasuredModes, read_measured_csv, read_measured_json

__all__ = ["read_measured"]


def read_measured(path: str | os.PathLike[str]) -> MeasuredModes:
    """Measured modes from a ``.csv``, ``.json`` or a universal-file mapping
    block (``.yaml``/``.yml``)."""
    name = os.fspath(path)
    low = name.lower()
    if low.endswith(".csv"):
        return read_measured_csv(name)
    if low.endswith(".json"):
        return read_measured_json(name)
    if low.endswith((".yaml", ".yml")):
        from .measured_uff import read_uff_map
        return read_uff_map(name)
    raise InputError("measured modes must be a .csv or .json file, or a .yaml block that maps "
                     "a universal file's nodes to points", Where(name))
