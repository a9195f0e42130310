"""Benchmark: design sweeps of the 10-DOF compact car (assemblies/compact_car.yaml).

Targets (issue 8, design studies):

1. 10,000 variants of the model's modes through ``run_sweep`` (batched fast
   path, MAC tracking included, the probing loads of the file included) at
   least 20x faster than a loop that reloads and reassembles each variant
   through the public API (``load_assembly(path, overrides)``, ``assemble``,
   ``compute_modes``), measured side by side. The loop is timed on a subset
   (``--loop N``, default 300 variants, evenly spread over the design) and
   scaled to 10,000 by its per-variant time; ``--loop 10000`` runs it all.
2. The batched eigensolve (``batched_modes``: Cholesky whitening by M, one
   stacked ``numpy.linalg.eigh``, back-transformed mass-normalised shapes)
   within 3x of a bare ``numpy.linalg.eigh`` of the same stacked (10000, 10,
   10) stiffness matrices, the floor.
3. A 100,000-variant sweep on a 2-worker local Dask cluster (processes, on
   127.0.0.1) and on 2 local processes: throughput (variants/s) against
   in-process. Cluster start-up is timed apart. On a machine with fewer free
   cores than workers the ratio is below one; it is reported, not targeted.

Run: ``python3 benchmarks/bench_sweep.py`` (``--quick`` skips part 3).
Timings are best of ``--repeat`` runs; results are also checked: the fast
path's frequencies equal the reload loop's to 1e-9, and the three executors'
tables are identical.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from builder.analysis.modes import compute_modes  # noqa: E402
from builder.analysis.sampling import build_design, parse_vary  # noqa: E402
from builder.analysis.sweep import (  # noqa: E402
    ModesProblem,
    batched_modes,
    file_family,
    file_parameters,
    run_sweep,
)
from builder.linear import assemble  # noqa: E402
from builder.load import load_assembly  # noqa: E402
from builder.quantities import Quantity  # noqa: E402

FILE = Path(__file__).resolve().parent.parent / "assemblies" / "compact_car.yaml"


def best(fn, repeat: int) -> tuple[float, object]:
    out, t_best = None, float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        t_best = min(t_best, time.perf_counter() - t)
    return t_best, out


def fast_sweep(design):
    fam = file_family(FILE, design.names, design.nominal,
                      [np.ptp(design.values[:, j]) for j in range(len(design.names))])
    return run_sweep(ModesProblem(fam), design)


def reload_loop(design, rows, dims):
    out = []
    for i in rows:
        over = {n: Quantity(float(v), dims[n]) for n, v in zip(design.names, design.values[i],
                                                               strict=True)}
        modes = compute_modes(assemble(load_assembly(FILE, overrides=over)))
        out.append(modes.frequencies_hz)
    return np.array(out)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--loop", type=int, default=300, help="variants timed in the reload loop")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--quick", action="store_true", help="skip the 100,000-variant part")
    args = ap.parse_args()
    report: dict[str, object] = {}
    params = file_parameters(FILE)
    dims = {n: q.dim for n, q in params.items()}

    # 1. fast path against the reload loop ------------------------------------
    design = build_design([parse_vary("ks_front=15kN/m..30kN/m:100"),
                           parse_vary("kt=180kN/m..260kN/m:100")],
                          base={n: params[n].value for n in ("ks_front", "kt")})
    nv = len(design)
    t_fast, res = best(lambda: fast_sweep(design), args.repeat)
    rows = np.linspace(0, nv - 1, min(args.loop, nv)).astype(int)
    t_loop, loop_f = best(lambda: reload_loop(design, rows, dims), 1)
    per_variant = t_loop / len(rows)
    t_loop_all = per_variant * nv
    err = float(np.max(np.abs(res.sorted_frequencies()[rows] - loop_f) / loop_f))
    ratio1 = t_loop_all / t_fast
    report["sweep_10000"] = {"fast_s": t_fast, "reload_loop_per_variant_s": per_variant,
                             "reload_loop_10000_s": t_loop_all, "loop_variants_timed": len(rows),
                             "speedup": ratio1, "target": 20, "pass": ratio1 >= 20,
                             "max_rel_freq_diff": err}
    print(f"1. 10,000 variants: fast path {t_fast:.3f} s; reload loop {per_variant * 1e3:.2f} "
          f"ms/variant -> {t_loop_all:.1f} s; speed-up {ratio1:.0f}x (target >= 20x) "
          f"{'PASS' if ratio1 >= 20 else 'FAIL'}; max relative difference {err:.1e}")

    # 2. batched eigensolve against bare numpy eigh ---------------------------
    fam = file_family(FILE, design.names, design.nominal, [15e3, 80e3])
    K, M = fam.matrices(design.values)
    K = np.ascontiguousarray(K)
    t_ours, _ = best(lambda: batched_modes(K, M), args.repeat + 2)
    t_bare, _ = best(lambda: np.linalg.eigh(K), args.repeat + 2)
    ratio2 = t_ours / t_bare
    report["eigensolve_10000"] = {"batched_modes_s": t_ours, "bare_eigh_s": t_bare,
                                  "ratio": ratio2, "target": 3, "pass": ratio2 <= 3}
    print(f"2. batched eigensolve {t_ours * 1e3:.1f} ms vs bare numpy eigh {t_bare * 1e3:.1f} ms:"
          f" {ratio2:.2f}x (target <= 3x) {'PASS' if ratio2 <= 3 else 'FAIL'}")

    # 3. 100,000 variants: Dask and local processes ---------------------------
    if not args.quick:
        big = build_design([parse_vary("ks_front=15kN/m..30kN/m:100"),
                            parse_vary("kt=180kN/m..260kN/m:100"),
                            parse_vary("mount_z=150kN/m..350kN/m:10")],
                           base={n: params[n].value for n in ("ks_front", "kt", "mount_z")})
        bfam = file_family(FILE, big.names, big.nominal, [15e3, 80e3, 200e3])
        problem = ModesProblem(bfam)
        t_in, r_in = best(lambda: run_sweep(problem, big, chunk_size=2000), 1)
        t_proc, r_proc = best(lambda: run_sweep(problem, big, chunk_size=2000, workers=2), 1)
        from distributed import Client, LocalCluster
        t0 = time.perf_counter()
        with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                          dashboard_address=None) as cluster, Client(cluster) as client:
            t_start = time.perf_counter() - t0
            client.run(lambda: __import__("builder.analysis.sweep"))   # warm imports
            t_dask, r_dask = best(lambda: run_sweep(problem, big, chunk_size=2000,
                                                    cluster=client), 1)
        same = bool(np.array_equal(r_in.results, r_dask.results)
                    and np.array_equal(r_in.results, r_proc.results))
        n = len(big)
        report["sweep_100000"] = {
            "variants": n, "in_process_per_s": n / t_in, "processes_2_per_s": n / t_proc,
            "dask_2_workers_per_s": n / t_dask, "dask_vs_in_process": t_in / t_dask,
            "processes_vs_in_process": t_in / t_proc, "cluster_start_s": t_start,
            "identical_tables": same}
        print(f"3. 100,000 variants: in-process {n / t_in:,.0f}/s; 2 local processes "
              f"{n / t_proc:,.0f}/s ({t_in / t_proc:.2f}x); Dask 2 workers {n / t_dask:,.0f}/s "
              f"({t_in / t_dask:.2f}x; cluster start {t_start:.1f} s); identical tables: {same}")
    print(json.dumps(report, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
