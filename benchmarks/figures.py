"""One figure of a benchmark against its target, gathered by ``run_all.py``.

Each benchmark script prints its figures as it always did and also calls
:func:`figure` for each one. When the environment variable
:data:`FIGURES_ENV` names a file, the figure is appended to it as one JSON
line (so that a run cut short still keeps what it measured); otherwise
:func:`figure` only returns whether the target was met.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

__all__ = ["FIGURES_ENV", "figure", "read_figures"]

#: Names the JSON-lines file that :func:`figure` appends to (set by run_all.py).
FIGURES_ENV = "LUMPGRAPH_BENCH_FIGURES"


def figure(name: str, target: str, measured: str, met: bool | None) -> bool:
    """Record one figure: what it is, its target and the measured value as text,
    and whether the target was met (None: reported only, no target).
    Returns ``met`` (True for a figure without target)."""
    path = os.environ.get(FIGURES_ENV)
    if path:
        row = {"figure": name, "target": target, "measured": measured,
               "met": None if met is None else bool(met)}
        with open(path, "a", encoding="utf-8") as out:
            out.write(json.dumps(row) + "\n")
    return True if met is None else bool(met)


def read_figures(path: Path) -> list[dict]:
    """The figures appended to ``path`` (an empty list when there is none)."""
    if not path.exists():
        return []
    return [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines()
            if line.strip()]
