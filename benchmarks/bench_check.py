"""``check`` at the size of real models: what the checks cost after loading.

    python3 benchmarks/bench_check.py            # add --quick to skip the 20,000-DOF cases

Targets (issue: speed at the size of real models):

1. ``check_model`` of a 10,000-DOF model in under 2 s, with the machine's
   default BLAS threading and with one thread;
2. no step worse than linear in size apart from the sparse factorisation:
   twice the DOFs in under 2.2 x the time;
3. a text summary that fits one screen (at most 60 lines; ``--detail`` and
   ``--json`` give every row).

Two models, both invented and built in memory (loading is not timed: the
loader has its own benchmark):

- ``flexible car``: the compact car with its body split into 1,660 beam
  segments (9,970 DOFs; 3,320 segments for twice the size), so that the
  split_body plugin's summary hook runs too;
- ``frame``: a row of six-DOF bodies joined by bushings, every fourth one on a
  bushing to ground and every tenth on a tyre spring to a road point.

Each time is also given as a ratio to a baseline measured in the same run
on the same model: one sparse LU factorisation and solve of its K, which any
static check must pay.
"""

from __future__ import annotations

import argparse
import re
import sys
from pathlib import Path

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu
from threadpoolctl import threadpool_limits

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from bench_core import best_of  # noqa: E402  (same folder)
from figures import figure  # noqa: E402

from builder.analysis.checks import check_model  # noqa: E402
from builder.assembly import Assembly, Body, End, Link, RoadPoint  # noqa: E402
from builder.elements.bushing import bushing_props  # noqa: E402
from builder.elements.spring import spring_props  # noqa: E402
from builder.linear import assemble  # noqa: E402
from builder.load import load_text  # noqa: E402

SCREEN = 60


def flexible_car(segments: int) -> Assembly:
    """The flexible demo car with its body split into ``segments`` segments."""
    text = (ROOT / "assemblies" / "compact_car_flexible.yaml").read_text()
    text = re.sub(r"segments: \d+", f"segments: {segments}", text)
    text = text.split("\ndepths:")[0] + "\n"          # its depths name 10-segment DOFs
    return load_text(text)


def frame(bodies: int) -> Assembly:
    """A row of six-DOF bodies on bushings, grounded every 3 to 5 bodies, on a tyre
    every tenth; masses and rates scattered (a fixed seed), as in a real structure,
    where no two parts are the same."""
    rng = np.random.default_rng(7)
    out, links, road = {}, {}, {}
    next_mount = 0
    for i in range(bodies):
        cg = np.array([-0.25 * i, 0.0, 0.6])
        out[f"b{i}"] = Body(f"b{i}", 8.0 * rng.uniform(0.6, 1.4), cg,
                            np.diag([0.05, 0.08, 0.08]) * rng.uniform(0.6, 1.4))
        if i:
            at = cg + np.array([0.125, 0, 0])
            joint = bushing_props(np.eye(3), rng.uniform(0.5, 1.5) * np.array(
                [2e7, 2e7, 2e7, 2e5, 2e5, 2e5]))
            links[f"j{i}"] = Link(f"j{i}", "bushing", End(f"b{i}", at), End(f"b{i - 1}", at),
                                  joint)
        if i == next_mount:
            mount = bushing_props(np.eye(3), rng.uniform(0.5, 1.5) * np.array(
                [5e5, 5e5, 5e5, 5e3, 5e3, 5e3]))
            links[f"g{i}"] = Link(f"g{i}", "bushing", End(f"b{i}", cg.copy()),
                                  End("ground", cg.copy()), mount)
            next_mount += int(rng.integers(3, 6))
        if i % 10 == 0:
            road[f"r{i}"] = RoadPoint(f"r{i}", np.array([cg[0], 0.0, 0.0]))
            links[f"t{i}"] = Link(f"t{i}", "spring", End(f"b{i}", cg.copy()),
                                  End(f"road.r{i}", np.array([cg[0], 0.0, 0.0])),
                                  spring_props(np.array([0, 0, 1.0]), 2e5))
    return Assembly(name=f"frame of {bodies} bodies", motion="spatial", bodies=out,
                    road=road, links=links)


def baseline(model) -> float:
    """One sparse LU of K and one solve (s): the floor of any static check."""
    f = model.static_load()
    return best_of(lambda: splu(sp.csc_matrix(model.K)).solve(f), 3)


def case(name: str, asm: Assembly) -> dict[str, float]:
    model = assemble(asm)
    base = baseline(model)
    out = {"dofs": model.n, "baseline": base}
    for label, threads in (("default", None), ("1 thread", 1)):
        with threadpool_limits(limits=threads):
            out[label] = best_of(lambda: check_model(model), 3)
    lines = len(check_model(model).table().splitlines())
    out["lines"] = lines
    print(f"  {name}: {model.n} DOFs, check {out['default']:.2f} s (default threads), "
          f"{out['1 thread']:.2f} s (1 thread); {out['default'] / base:.1f} x one sparse "
          f"LU + solve of K ({base:.3f} s); summary {lines} lines", flush=True)
    return out


def main() -> int:
    parser = argparse.ArgumentParser()
    parser.add_argument("--quick", action="store_true", help="skip the 20,000-DOF cases")
    args = parser.parse_args()
    print("check_model after loading (best of 3):")
    results = {}
    for name, make, sizes in (("flexible car", flexible_car, (1660, 3320)),
                              ("frame", frame, (1667, 3334))):
        results[name] = [case(f"{name} {s}", make(s)) for s in sizes[:1 if args.quick else 2]]
    failed = []
    for name, runs in results.items():
        small = runs[0]
        for label in ("default", "1 thread"):
            ok = figure(f"check of the {small['dofs']:,}-DOF {name}, {label}", "< 2 s",
                        f"{small[label]:.2f} s", small[label] < 2.0)
            failed += [] if ok else [f"{name} {label}"]
            print(f"1. {name}, {small['dofs']} DOFs, {label}: {small[label]:.2f} s "
                  f"(target < 2 s) {'ok' if ok else 'MISSED'}")
        if len(runs) > 1:
            ratio = runs[1]["default"] / small["default"]
            lu = runs[1]["baseline"] / small["baseline"]
            ok = figure(f"check of the {name}: {runs[1]['dofs']:,} / {small['dofs']:,} DOFs",
                        "< 2.2", f"{ratio:.2f} (LU of K: {lu:.2f})", ratio < 2.2)
            failed += [] if ok else [f"{name} growth"]
            print(f"2. {name}: {runs[1]['dofs']} / {small['dofs']} DOFs take {ratio:.2f} x "
                  f"(target < 2.2; the LU baseline grows {lu:.2f} x)"
                  f" {'ok' if ok else 'MISSED'}")
        lines = max(r["lines"] for r in runs)
        ok = figure(f"check summary of the {name}", f"<= {SCREEN} lines", f"{lines} lines",
                    lines <= SCREEN)
        failed += [] if ok else [f"{name} screen"]
        print(f"3. {name}: summary of {max(r['lines'] for r in runs)} lines "
              f"(target <= {SCREEN}) {'ok' if ok else 'MISSED'}")
    print("all targets met" if not failed else "missed: " + ", ".join(failed))
    return 0 if not failed else 1


if __name__ == "__main__":
    raise SystemExit(main())
