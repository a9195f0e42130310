"""Benchmark: ``update`` of 6 parameters against 10 measured modes.

Targets (issue: measured modes, correlation and updating):

- the 70-DOF flexible demo car (assemblies/compact_car_flexible.yaml):
  under 2 s;
- the same car with its body split into 5,000 segments (30,000 DOFs):
  under 30 s.

The "measured" modes are invented: the model with six rates changed by
-8 % to +10 %, taken at 24 point-directions. Each update starts from the
file's values. Times are wall-clock, best of three for the small case and
one run for the large one, with the machine's default BLAS threading and
with one thread (threadpoolctl); each is also given as a ratio to a
baseline measured in the same run: one ``compute_modes`` of the 70-DOF
model, and for the large one the solve for its lowest 20 undamped modes
(``builder.eigen.lowest_modes``; ``compute_modes`` there spends most of
its time on the split body's mode labels). The test modes are the lowest
ten the model does not count as zero-frequency. The recovered parameters are checked
against the known changes.

Run: ``python3 benchmarks/bench_update.py`` (``--quick``: the small case only).
"""

from __future__ import annotations

import argparse
import re
import sys
import tempfile
import time
from pathlib import Path

from threadpoolctl import threadpool_limits

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_core import best_of  # noqa: E402  (same folder)

from builder.analysis.correlation import simulate_test  # noqa: E402
from builder.analysis.modes import compute_modes  # noqa: E402
from builder.analysis.updating import update  # noqa: E402
from builder.eigen import lowest_modes  # noqa: E402
from builder.linear import assemble  # noqa: E402
from builder.load import load_assembly  # noqa: E402
from builder.quantities import STIFFNESS, Quantity  # noqa: E402

FILE = ROOT / "assemblies" / "compact_car_flexible.yaml"
NOMINAL = {"ks_front": 24e3, "ks_rear": 21e3, "kt": 220e3, "mount_z": 250e3,
           "kx_susp": 600e3, "ky_susp": 400e3}
CHANGE = {"ks_front": 1.08, "ks_rear": 0.94, "kt": 1.05, "mount_z": 0.92, "kx_susp": 1.10,
          "ky_susp": 0.95}
POINTS = {f"b{i}": ("body", [x, y, z]) for i, (x, y, z) in enumerate(
    [(0.6, 0.6, 0.5), (0.6, -0.6, 0.5), (-0.5, 0.7, 0.4), (-0.5, -0.7, 0.4),
     (-1.6, 0.7, 0.4), (-1.6, -0.7, 0.4), (-2.8, 0.6, 0.5), (-2.8, -0.6, 0.5),
     (-1.2, 0.0, 1.3)])}
POINTS.update({"e1": ("engine", [0.45, 0.25, 0.75]), "e2": ("engine", [0.1, -0.2, 0.7]),
               "w1": ("wheel_fl", [0, 0.74, 0.3]), "w2": ("wheel_fr", [0, -0.74, 0.3]),
               "w3": ("wheel_rl", [-2.6, 0.73, 0.3]), "w4": ("wheel_rr", [-2.6, -0.73, 0.3])})
CHANNELS = [(p, "z") for p in POINTS] + [("b0", "x"), ("b6", "x"), ("b2", "y"), ("b7", "y"),
                                          ("b8", "y"), ("e1", "x"), ("e1", "y"), ("e2", "y"),
                                          ("b4", "x")]


def flexible(segments: int) -> Path:
    text = FILE.read_text()
    if segments != 10:
        text = re.sub(r"segments: \d+", f"segments: {segments}", text)
        text = text.split("\ndepths:")[0] + "\n"
    path = Path(tempfile.mkdtemp()) / f"flex_{segments}.yaml"
    path.write_text(text)
    return path


def case(segments: int, repeat: int) -> None:
    path = flexible(segments)
    true = {k: NOMINAL[k] * CHANGE[k] for k in NOMINAL}
    model = assemble(load_assembly(path, overrides={k: Quantity(v, STIFFNESS)
                                                    for k, v in true.items()}))
    from builder.analysis.correlation import plain_modes
    elastic = [m.number for m in plain_modes(model, 30).modes if not m.rigid][:10]
    test = simulate_test(model, POINTS, CHANNELS, elastic, title="invented")
    bounds = {k: (0.6 * v, 1.5 * v) for k, v in NOMINAL.items()}
    print(f"{model.n} DOFs, {len(test)} test modes at {len(test.channels)} channels, "
          f"6 parameters")
    for threads in (None, 1):
        with threadpool_limits(limits=threads):
            base = best_of(lambda m=model: (compute_modes(m) if m.n <= 600 else
                                            lowest_modes(m.K, m.M, 20)), repeat)
            out = {}

            def run(out=out):
                out["r"] = update(path, test, bounds)
            t = best_of(run, repeat)
        res = out["r"]
        err = max(abs(res.final[k] / true[k] - 1.0) for k in true)
        label = "default threads" if threads is None else "one thread"
        what = "compute_modes" if model.n <= 600 else "20-mode solve"
        print(f"  {label:15s}: update {t:7.2f} s  ({t / base:5.1f} x one {what} of "
              f"{base:.2f} s); largest parameter error {err:.1e}; "
              f"{res.evaluations} evaluations")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true")
    args = ap.parse_args()
    print("update, target under 2 s:")
    start = time.perf_counter()
    case(10, 3)
    if not args.quick:
        print("update on 5,000 segments, target under 30 s:")
        case(5000, 1)
    print(f"total {time.perf_counter() - start:.1f} s")


if __name__ == "__main__":
    main()
