"""Core speed figures, each against its target and a baseline measured in the same run.

    python benchmarks/bench_core.py

1. ``lumpgraph modes`` on the compact car, whole process, against
   ``python -c "import numpy, scipy.linalg, networkx, yaml"`` (target: < 2x).
2. Assembly and modes of the 10-DOF model after loading (target: < 5 ms).
3. A chain of 4,000 bodies (24,000 DOFs) assembles in < 2.5x the time of
   2,000 bodies (no quadratic step), and its lowest 20 modes come from the
   sparse shift-invert path.
"""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402

from builder.analysis.modes import compute_modes  # noqa: E402
from builder.assembly import Assembly, Body, End, Link  # noqa: E402
from builder.eigen import DENSE_LIMIT  # noqa: E402
from builder.elements.bushing import bushing_props  # noqa: E402
from builder.linear import assemble  # noqa: E402
from builder.load import load_assembly  # noqa: E402


def best_of(fn, repeat: int = 5) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def process_time(cmd: list[str], repeat: int = 5) -> float:
    return best_of(lambda: subprocess.run(cmd, check=True, capture_output=True), repeat)


def chain(n: int) -> Assembly:
    """n bodies in a line, each joined to the next by a six-way bushing; one end grounded."""
    bodies, links = {}, {}
    props = bushing_props(np.eye(3), np.array([1e9, 1e9, 1e9, 1e7, 1e7, 1e7]))
    for i in range(n):
        cg = np.array([-0.1 * i, 0.0, 0.5])
        bodies[f"b{i}"] = Body(f"b{i}", 2.0, cg, np.diag([0.01, 0.02, 0.02]))
        if i:
            at = cg + np.array([0.05, 0, 0])
            links[f"j{i}"] = Link(f"j{i}", "bushing", End(f"b{i}", at), End(f"b{i-1}", at), props)
    links["root"] = Link("root", "bushing", End("b0", bodies["b0"].cg.copy()),
                         End("ground", bodies["b0"].cg.copy()), props)
    return Assembly(name=f"chain {n}", motion="spatial", bodies=bodies, links=links)


def main() -> int:
    car = ROOT / "assemblies" / "compact_car.yaml"
    base = process_time([sys.executable, "-c", "import numpy, scipy.linalg, networkx, yaml"])
    ours = process_time([sys.executable, "-m", "builder.cli", "modes", str(car)])
    print(f"1. lumpgraph modes process {ours * 1000:.0f} ms vs imports baseline "
          f"{base * 1000:.0f} ms: ratio {ours / base:.2f} (target < 2)")

    asm = load_assembly(car)
    t = best_of(lambda: compute_modes(assemble(asm)), 20)
    print(f"2. assemble + modes of the 10-DOF model: {t * 1000:.2f} ms (target < 5 ms)")

    c2, c4 = chain(2000), chain(4000)
    t2 = best_of(lambda: assemble(c2), 3)
    t4 = best_of(lambda: assemble(c4), 3)
    print(f"3. assembly of 2,000 bodies {t2:.3f} s, 4,000 bodies {t4:.3f} s: ratio "
          f"{t4 / t2:.2f} (target < 2.5)")
    model = assemble(c4)
    t = time.perf_counter()
    modes = compute_modes(model, 20)
    dt = time.perf_counter() - t
    path = "sparse shift-invert" if model.n > DENSE_LIMIT else "dense"
    print(f"   lowest 20 modes of {model.n} DOFs: {dt:.2f} s by the {path} path; "
          f"f20 = {modes[19].frequency_hz:.4f} Hz (a 400 m chain: its lowest modes are "
          "far below 0.01 Hz and count as zero-frequency)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
