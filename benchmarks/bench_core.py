"""Core speed figures, each against its target and a baseline measured in the same run.

    python benchmarks/bench_core.py [--quick]

Whole-process figures are the best of several rounds, the cases of a round
run one after the other (interleaved) in both thread settings, so that
other load on a shared machine hits them alike. Their targets are judged on
CPU time (user + system of the process and all its threads: a threaded BLAS
that spins is charged for it), which the load of other work on a shared
machine moves far less than wall time; wall time is printed beside it.
Each is measured with the machine's default BLAS threading and with one
BLAS thread (``OPENBLAS_NUM_THREADS=1`` and
``OMP_NUM_THREADS=1`` in the subprocess).

1. Start-up: ``lumpgraph modes`` on the 10-DOF compact car against
   ``python -c "import numpy, scipy.linalg, networkx, yaml"`` (target < 1.5x).
2. ``lumpgraph modes`` on the 70-DOF flexible car against the 10-DOF car
   (target < 1.3x), default threading and one thread.
3. Thread independence: the in-process kernels (modes, assembly and FRFs
   of the 70-DOF car and of a 69-DOF van) with default threading against
   one thread, set by threadpoolctl and interleaved call by call, best of
   25 calls each (10 with --quick; target: within 20 %), judged on CPU time
   like the whole processes (a BLAS thread that spins on a small problem
   shows there; wall time is printed beside it).
4. Assembly and modes of the 10-DOF model after loading (target: < 5 ms CPU).
5. A chain of 4,000 bodies (24,000 DOFs) assembles in < 2.2x the time of
   2,000 bodies (no quadratic step), and its lowest 20 modes come from the
   sparse shift-invert path.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402
from figures import figure  # noqa: E402  (same folder)

from builder.analysis.modes import compute_modes  # noqa: E402
from builder.assembly import Assembly, Body, End, Link  # noqa: E402
from builder.eigen import DENSE_LIMIT  # noqa: E402
from builder.elements.bushing import bushing_props  # noqa: E402
from builder.linear import assemble  # noqa: E402
from builder.load import load_assembly  # noqa: E402

ONE_THREAD = {"OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


def best_of(fn, repeat: int = 5, clock=time.perf_counter) -> float:
    """Best time (s) of ``repeat`` calls by ``clock`` (wall time by default)."""
    times = []
    for _ in range(repeat):
        t = clock()
        fn()
        times.append(clock() - t)
    return min(times)


def _env(threads: str) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if k not in ONE_THREAD}
    return {**env, **ONE_THREAD} if threads == "one" else env


def run_timed(cmd: list[str], env: dict[str, str]) -> tuple[float, float]:
    """Wall time and CPU time (user + system, all its threads) of one process (s)."""
    t = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                            env=env, cwd=ROOT)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t
    proc.returncode = os.waitstatus_to_exitcode(status)
    if proc.returncode:
        raise SystemExit(f"{' '.join(cmd)} failed ({proc.returncode})")
    return wall, usage.ru_utime + usage.ru_stime


def interleaved(cases: dict[str, list[str]], rounds: int
                ) -> dict[str, dict[str, tuple[float, float]]]:
    """Best whole-process (wall, CPU) times of each command line over ``rounds``
    rounds, per BLAS setting ("default", "one"): each round runs every case in
    both settings. Wall and CPU time are each the best of the rounds."""
    best = {threads: {name: (float("inf"), float("inf")) for name in cases}
            for threads in ("default", "one")}
    for _ in range(rounds):
        for threads, times in best.items():
            env = _env(threads)
            for name, cmd in cases.items():
                wall, cpu = run_timed(cmd, env)
                times[name] = (min(times[name][0], wall), min(times[name][1], cpu))
    return best


def kernel_times(rounds: int) -> dict[str, dict[str, float]]:
    """Best time (s) of each in-process kernel with the default BLAS threading and
    with one thread (threadpoolctl), the two settings interleaved call by call."""
    from threadpoolctl import threadpool_limits

    from builder.analysis.frf import frequency_response

    files = [("flexible car (70 DOFs)", ROOT / "assemblies" / "compact_car_flexible.yaml"),
             ("light van (69 DOFs)", ROOT / "tests" / "models" / "light_van_flexible.yaml")]
    grid = np.linspace(0.5, 50.0, 400)
    kernels = {}
    for name, path in files:
        asm = load_assembly(path)
        model = assemble(asm)
        kernels[name + " modes"] = lambda m=model: compute_modes(m)
        kernels[name + " assemble"] = lambda a=asm: assemble(a)
        kernels[name + " FRF, 400 frequencies"] = lambda m=model: frequency_response(m, grid)
    best = {(threads, clock): dict.fromkeys(kernels, float("inf"))
            for threads in ("default", "one") for clock in ("wall", "cpu")}
    for fn in kernels.values():          # warm-up: imports and caches
        fn()
    for _ in range(rounds):
        for key, fn in kernels.items():
            for threads, limit in (("default", None), ("one", 1)):
                with threadpool_limits(limits=limit):
                    t, c = time.perf_counter(), time.process_time()
                    fn()
                    wall, cpu = time.perf_counter() - t, time.process_time() - c
                best[threads, "wall"][key] = min(best[threads, "wall"][key], wall)
                best[threads, "cpu"][key] = min(best[threads, "cpu"][key], cpu)
    return best


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
    quick = "--quick" in sys.argv
    rounds = 3 if quick else 7
    py = sys.executable
    car = str(ROOT / "assemblies" / "compact_car.yaml")
    flexible = str(ROOT / "assemblies" / "compact_car_flexible.yaml")
    cases = {"imports": [py, "-c", "import numpy, scipy.linalg, networkx, yaml"],
             "modes 10 DOFs": [py, "-m", "builder.cli", "modes", car],
             "modes 70 DOFs": [py, "-m", "builder.cli", "modes", flexible]}
    ok = True
    for threads, times in interleaved(cases, rounds).items():
        wall = {k: v[0] for k, v in times.items()}
        cpu = {k: v[1] for k, v in times.items()}
        start = cpu["modes 10 DOFs"] / cpu["imports"]
        size = cpu["modes 70 DOFs"] / cpu["modes 10 DOFs"]
        start_wall = wall["modes 10 DOFs"] / wall["imports"]
        size_wall = wall["modes 70 DOFs"] / wall["modes 10 DOFs"]
        ms = {k: f"{cpu[k] * 1000:.0f} ms" for k in cpu}
        setting = "default BLAS threads" if threads == "default" else "one BLAS thread"
        print(f"[{setting}] CPU time: imports {ms['imports']}, modes 10 DOFs "
              f"{ms['modes 10 DOFs']}, modes 70 DOFs {ms['modes 70 DOFs']}; wall time: "
              + ", ".join(f"{wall[k] * 1000:.0f} ms" for k in wall))
        print(f"1. start-up: modes 10 DOFs / imports = {start:.2f} in CPU time, "
              f"{start_wall:.2f} in wall time (target < 1.5)")
        print(f"2. size: modes 70 DOFs / modes 10 DOFs = {size:.2f} in CPU time, "
              f"{size_wall:.2f} in wall time (target < 1.3)")
        ok &= figure(f"start-up: modes 10 DOFs / bare imports, {setting}", "< 1.5",
                     f"{start:.2f} CPU ({ms['modes 10 DOFs']} / {ms['imports']}), "
                     f"{start_wall:.2f} wall", start < 1.5)
        ok &= figure(f"modes 70 DOFs / modes 10 DOFs, whole process, {setting}", "< 1.3",
                     f"{size:.2f} CPU ({ms['modes 70 DOFs']} / {ms['modes 10 DOFs']}), "
                     f"{size_wall:.2f} wall", size < 1.3)

    best = kernel_times(10 if quick else 25)
    print("3. kernels, default threading / one thread (threadpoolctl, interleaved; CPU time "
          "of all threads, wall time beside it; target within 20 %):")
    ratios = {}
    for k in best["default", "cpu"]:
        cpu = [best[th, "cpu"][k] for th in ("default", "one")]
        wall = [best[th, "wall"][k] for th in ("default", "one")]
        ratios[k] = cpu[0] / cpu[1]
        print(f"   {k:44s} CPU {cpu[0] * 1000:7.2f} ms / {cpu[1] * 1000:7.2f} ms = "
              f"{ratios[k]:.2f}; wall {wall[0] * 1000:7.2f} / {wall[1] * 1000:7.2f} ms = "
              f"{wall[0] / wall[1]:.2f}")
    worst = max(ratios, key=lambda k: abs(ratios[k] - 1.0))
    ok &= figure("kernels: default / one BLAS thread (6 kernels, 70 and 69 DOFs), CPU time",
                 "0.8 to 1.2", f"{min(ratios.values()):.2f} to {max(ratios.values()):.2f} "
                 f"(worst: {worst})", all(0.8 <= r <= 1.2 for r in ratios.values()))

    asm = load_assembly(car)
    t = best_of(lambda: compute_modes(assemble(asm)), 20, time.process_time)
    print(f"4. assemble + modes of the 10-DOF model: {t * 1000:.2f} ms CPU (target < 5 ms)")
    ok &= figure("assemble + modes of the 10-DOF car, in process", "< 5 ms",
                 f"{t * 1000:.1f} ms CPU", t < 0.005)

    c2, c4 = chain(2000), chain(4000)
    t2 = best_of(lambda: assemble(c2), 5, time.process_time)
    t4 = best_of(lambda: assemble(c4), 5, time.process_time)
    ok &= figure("assembly of a 4,000-body chain / 2,000 bodies (24,000 DOFs)", "< 2.2",
                 f"{t4 / t2:.2f} ({t4:.3f} / {t2:.3f} s)", t4 / t2 < 2.2)
    print(f"5. assembly of 2,000 bodies {t2:.3f} s, 4,000 bodies {t4:.3f} s CPU: ratio "
          f"{t4 / t2:.2f} (target < 2.2)")
    model = assemble(c4)
    t = time.perf_counter()
    modes = compute_modes(model, 20)
    dt = time.perf_counter() - t
    path = "sparse shift-invert" if model.n > DENSE_LIMIT else "dense"
    print(f"   lowest 20 modes of {model.n} DOFs: {dt:.2f} s by the {path} path; "
          f"f20 = {modes[19].frequency_hz:.4f} Hz (a 400 m chain held at one end)")
    print("all targets met" if ok else "some targets MISSED")
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
