"""Speed of the frequency and time responses, each against its target.

    python benchmarks/bench_responses.py

1. FRF of the 10-DOF compact car, its 4 road inputs to all 7 sensors, on 5,000
   log-spaced frequencies: lumpgraph's ``frequency_response`` against
   python-control's ``frequency_response`` of the same state-space model
   (``to_state_space()``), measured side by side in this run (target: at
   least 10x faster). Both results are compared, so the speed is not bought
   with accuracy.
2. A 20 s half-sine bump transient of the same model at 1 kHz output rate,
   exact solution, all sensors with their peak, RMS and VDV (target: < 0.2 s).

BLAS runs single-threaded unless OPENBLAS_NUM_THREADS / OMP_NUM_THREADS are
set: on a small shared machine a threaded BLAS spends more time in thread
hand-over than in these 20 x 20 products. Both sides of comparison 1 use the
same setting. Times are the best of several runs after one warm-up call.
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import control  # noqa: E402
import numpy as np  # noqa: E402

from builder.analysis import comfort  # noqa: E402
from builder.analysis.frf import frequency_response  # noqa: E402
from builder.analysis.transient import event_response, road_event  # noqa: E402
from builder.linear import assemble  # noqa: E402
from builder.load import load_assembly  # noqa: E402


def best_of(fn, repeat: int = 5) -> float:
    fn()                                     # warm-up (imports, caches)
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def main() -> int:
    model = assemble(load_assembly(ROOT / "assemblies" / "compact_car.yaml"))
    nr = len(model.inputs)
    print(f"model: {model.name}, {model.n} DOFs, {nr} road inputs, "
          f"{len(model.sensors)} sensors; BLAS threads {os.environ['OPENBLAS_NUM_THREADS']}")

    # 1. FRF against python-control
    f = np.geomspace(0.5, 50.0, 5000)
    w = 2 * np.pi * f
    A, B, C, D = model.to_state_space()
    system = control.ss(A, B, C, D)

    def ours():
        return frequency_response(model, f)

    def theirs():
        g = control.frequency_response(system, w).complex
        g = np.moveaxis(np.asarray(g), 2, 0)
        return g[:, :, :nr] + 1j * w[:, None, None] * g[:, :, nr:]

    t_ours = best_of(ours, 7)
    t_theirs = best_of(theirs, 3)
    H, G = ours().H, theirs()
    error = np.max(np.abs(H - G) / np.abs(G).max(axis=(0, 2))[None, :, None])
    ratio = t_theirs / t_ours
    print(f"1. FRF, 4 road inputs x {len(model.sensors)} sensors x {f.size} frequencies: "
          f"lumpgraph {t_ours * 1e3:.2f} ms ({ours().method}), python-control "
          f"{t_theirs * 1e3:.1f} ms: {ratio:.1f}x faster (target >= 10x) "
          f"{'PASS' if ratio >= 10 else 'FAIL'}; largest difference {error:.1e} of each "
          "sensor's peak")

    # 2. 20 s bump at 1 kHz
    bump = road_event("bump", 0.04, 0.6)

    def transient():
        return event_response(model, bump, 30 / 3.6, duration_s=20.0, rate_hz=1000.0)

    t_bump = best_of(transient, 5)
    result = transient()
    accel = [s for s in result.sensors if s in result.vdv]

    def weighting_only():
        for s in accel:
            comfort.weighted_time_history(result.time_s, result.history(s),
                                          result.weighting[s], method="iir")

    t_weight = best_of(weighting_only, 5)
    print(f"2. 20 s bump transient at 1 kHz ({result.time_s.size} samples, "
          f"{len(result.sensors)} sensors, VDV of {len(result.vdv)}): {t_bump * 1e3:.1f} ms "
          f"(target < 200 ms) {'PASS' if t_bump < 0.2 else 'FAIL'}; of which the ISO 2631-1 "
          f"weighting filters (comfort.py) {t_weight * 1e3:.1f} ms")
    print(f"load average during the run: {', '.join(f'{x:.1f}' for x in os.getloadavg())} "
          f"on {os.cpu_count()} CPUs")
    return 0 if ratio >= 10 and t_bump < 0.2 else 1


if __name__ == "__main__":
    sys.exit(main())
