"""Joint elimination at scale, against targets and a baseline measured in the same run.

    python benchmarks/bench_joints.py [--quick]

An invented test structure: a frame on four bushings carries C chains of five
bodies; the first body of a chain hangs from the frame, each next one from
the one before, through joints of every type in turn (revolute, universal,
spherical, cylindrical, planar, prismatic), and every body has a soft bushing
to ground (so that nothing is a mechanism). C = 200 gives 1,000 joints on
6,006 DOFs.

1. Constraint elimination (assemble with the joints, less assemble with the
   joints left out: the baseline, same bodies and bushings) and the lowest 20
   modes of the jointed model: target < 1 s together; peak memory (traced)
   < 500 MB.
2. Elimination time at twice the joints (C = 400) against C = 200: < 2.5x.

Each figure is the best of a few rounds, with default BLAS threading and
with one BLAS thread (threadpoolctl).
"""

from __future__ import annotations

import sys
import time
import tracemalloc
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402

from builder.analysis.modes import compute_modes  # noqa: E402
from builder.assembly import Assembly, Body, End, Link  # noqa: E402
from builder.elements.bushing import bushing_props  # noqa: E402
from builder.linear import assemble  # noqa: E402

KINDS = [("revolute", {"axis": np.array([0.0, 1.0, 0.0])}),
         ("universal", {"axes": (np.array([1.0, 0, 0]), np.array([0, 1.0, 0]))}),
         ("spherical", {}),
         ("cylindrical", {"axis": np.array([1.0, 0.0, 0.0])}),
         ("planar", {"axis": np.array([0.0, 0.0, 1.0])}),
         ("prismatic", {"axis": np.array([0.0, 0.0, 1.0])})]


def structure(chains: int, joints: bool = True) -> Assembly:
    """The invented frame with ``chains`` chains of five bodies (see the notes)."""
    inertia = np.diag([0.02, 0.03, 0.04])
    bodies = {"frame": Body("frame", 500.0, np.zeros(3), np.diag([100.0, 300.0, 350.0]))}
    links = {}
    rates = np.array([2e4, 2e4, 2e4, 200.0, 200.0, 200.0])
    for k, (x, y) in enumerate([(1, 1), (1, -1), (-1, 1), (-1, -1)]):
        p = np.array([x, y, 0.0])
        links[f"mount{k}"] = Link(f"mount{k}", "bushing", End("frame", p), End("ground", p),
                                  bushing_props(np.eye(3), np.array([1e6, 1e6, 1e6, 0, 0, 0])))
    count = 0
    for c in range(chains):
        parent, base = "frame", np.array([0.01 * c, 0.3 + 0.002 * c, 0.0])
        for k in range(5):
            name = f"b{c}_{k}"
            pivot = base + np.array([0.0, 0.0, -0.2 * k])
            mass = 2.0 * (1.0 + 0.37 * ((7 * c + k) % 11) / 11)    # no two chains alike
            bodies[name] = Body(name, mass, pivot + [0.0, 0.0, -0.1], inertia * mass / 2.0)
            kind, props = KINDS[count % len(KINDS)]
            count += 1
            if joints:
                links[f"j{c}_{k}"] = Link(f"j{c}_{k}", kind, End(name, pivot.copy()),
                                          End(parent, pivot.copy()), dict(props))
            links[f"s{c}_{k}"] = Link(f"s{c}_{k}", "bushing", End(name, pivot + [0, 0, -0.1]),
                                      End("ground", pivot + [0, 0, -0.1]),
                                      bushing_props(np.eye(3), rates * (1 + 0.01 * c)))
            parent = name
    return Assembly("joint benchmark (invented)", "spatial", bodies, links=links)


def best(fn, rounds: int) -> float:
    out = []
    for _ in range(rounds):
        t0 = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t0)
    return min(out)


def figures(chains: int, rounds: int) -> dict[str, float]:
    jointed, free = structure(chains), structure(chains, joints=False)
    t_free = best(lambda: assemble(free), rounds)
    t_joint = best(lambda: assemble(jointed), rounds)
    model = assemble(jointed)
    t_modes = best(lambda: compute_modes(model, 20), rounds)
    return {"dofs": model.parent.n, "independent": model.n, "joints": 5 * chains,
            "baseline_s": t_free, "jointed_s": t_joint,
            "elimination_s": t_joint - t_free, "modes_s": t_modes}


def main() -> int:
    quick = "--quick" in sys.argv
    rounds = 1 if quick else 3
    ok = True
    for label, limit in (("default threading", None), ("one BLAS thread", 1)):
        with threadpool_limits(limits=limit):
            one, two = figures(200, rounds), figures(400, rounds)
        total = one["elimination_s"] + one["modes_s"]
        ratio = two["elimination_s"] / max(one["elimination_s"], 1e-9)
        print(f"{label}: {one['joints']} joints, {one['dofs']} DOFs -> {one['independent']} "
              f"independent; assemble {one['baseline_s']:.3f} s without joints (baseline), "
              f"{one['jointed_s']:.3f} s with: elimination {one['elimination_s']:.3f} s "
              f"({one['jointed_s'] / one['baseline_s']:.2f}x the baseline), lowest 20 modes "
              f"{one['modes_s']:.3f} s; together {total:.3f} s (target < 1 s)")
        print(f"  {two['joints']} joints: elimination {two['elimination_s']:.3f} s, "
              f"{ratio:.2f}x (target < 2.5x)")
        ok &= total < 1.0 and ratio < 2.5
    tracemalloc.start()
    model = assemble(structure(200))
    compute_modes(model, 20)
    peak = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    print(f"peak traced memory, elimination and modes of 1,000 joints: {peak:.0f} MB "
          "(target < 500 MB)")
    ok &= peak < 500
    print("all targets met" if ok else "some targets missed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
