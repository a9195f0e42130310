"""Speed of ``ladder --ride C --speed "60 km/h" --tolerance 5% --propose``.

    python benchmarks/bench_ladder.py [--large]

1. The 70-DOF flexible car (assemblies/compact_car_flexible.yaml): target
   under 5 s for the whole command in this process (load, assemble, the full
   model's ride, every candidate depth judged, printed).
2. ``--large``: the same car with its body split into 5,000 segments (30,000
   DOFs): target under 60 s.

Each time is reported with its ratio to a baseline measured in the same run:
one ``ride`` of the full model on the same file (the command's least
possible cost is one full-model ride, the reference every depth is judged
against), with the machine's default BLAS threading and with one thread.
"""

from __future__ import annotations

import contextlib
import io
import re
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from threadpoolctl import threadpool_limits  # noqa: E402

from builder.cli import main as lumpgraph  # noqa: E402

FLEXIBLE = ROOT / "assemblies" / "compact_car_flexible.yaml"
ROAD = ["--speed", "60 km/h"]


def timed(*args: str) -> float:
    """Wall time (s) of ``lumpgraph ARGS`` in this process; it must succeed."""
    start = time.perf_counter()
    with contextlib.redirect_stdout(io.StringIO()):
        code = lumpgraph([str(a) for a in args])
    if code != 0:
        raise SystemExit(f"lumpgraph {' '.join(map(str, args))} failed ({code})")
    return time.perf_counter() - start


def case(path: Path, target: float, label: str) -> bool:
    ok = True
    timed("ride", path, "--road", "C", *ROAD)            # warm-up: imports, caches
    for threads in (None, 1):
        limit = threadpool_limits(threads) if threads else contextlib.nullcontext()
        with limit:
            base = timed("ride", path, "--road", "C", *ROAD)
            t = timed("ladder", path, "--ride", "C", *ROAD, "--tolerance", "5%", "--propose")
        mode = "one BLAS thread" if threads else "default BLAS threads"
        passed = t < target
        ok &= passed
        print(f"{label} ({mode}): ladder --propose {t:.2f} s (target < {target:g} s: "
              f"{'met' if passed else 'MISSED'}); one full ride {base:.2f} s; ratio "
              f"{t / base:.1f}")
    return ok


def main() -> int:
    ok = case(FLEXIBLE, 5.0, "70-DOF flexible car")
    if "--large" in sys.argv:
        text = re.sub(r"segments: \d+", "segments: 5000", FLEXIBLE.read_text())
        text = text.split("\ndepths:")[0] + "\n"     # its depths name 10-segment DOFs
        with tempfile.TemporaryDirectory() as tmp:
            path = Path(tmp) / "split_car.yaml"
            path.write_text(text)
            ok &= case(path, 60.0, "30,000-DOF split car")
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
