"""Run the speed benchmarks one after the other and print one summary table.

    python3 benchmarks/run_all.py            # every figure (35 minutes on a loaded 2-core machine)
    python3 benchmarks/run_all.py --quick    # the same targets, fewer rounds and sizes (17 minutes)
    python3 benchmarks/run_all.py --only core check
    python3 benchmarks/run_all.py --markdown  # the table in Markdown too, for the README

Each benchmark runs in its own process, exactly as when run by hand, with its
output kept in a log (``--logs FOLDER``, else a temporary folder, printed on a
failure). Every figure it records (see ``figures.py``) becomes one row of the
table: figure, target, measured value, met or missed. The machine (CPUs,
BLAS and its default thread count, load average before and after) and the
date head the table, since on a shared machine the figures move with the
load; the benchmarks themselves give ratios to baselines measured side by
side in the same run and the best of several runs.

Exit code 0 when every target was met, 1 otherwise, 2 when a benchmark
failed to run.
"""

from __future__ import annotations

import argparse
import datetime
import os
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from bench_load import calibration  # noqa: E402
from figures import FIGURES_ENV, read_figures  # noqa: E402

from builder.formatting import text_table  # noqa: E402

#: name -> (script, what it measures); in the order they run.
BENCHMARKS = {
    "core": ("bench_core.py", "start-up, modes 70 / 10 DOFs, BLAS-thread independence"),
    "split": ("bench_split_body.py", "assembly and modes of 5,000 and 10,000 segments"),
    "check": ("bench_check.py", "check of 10,000 and 20,000 DOFs, one-screen summary"),
    "responses": ("bench_responses.py", "ride / modes of the van and seat car, FRF, bump"),
    "load": ("bench_load.py", "load + assemble of 10,000 bodies"),
}


def machine() -> str:
    """CPUs, BLAS libraries and their default thread counts."""
    try:
        import numpy  # noqa: F401  (threadpoolctl sees only loaded libraries)
        from threadpoolctl import threadpool_info
        blas = ", ".join(sorted({f"{p.get('internal_api')} {p.get('version') or ''} "
                                 f"({p.get('num_threads')} threads)".replace("  ", " ")
                                 for p in threadpool_info() if p.get("user_api") == "blas"}))
    except Exception:  # noqa: BLE001 (threadpoolctl missing: say so)
        blas = "unknown (threadpoolctl not available)"
    return (f"{os.cpu_count()} CPUs, {platform.machine()}, Python {platform.python_version()}, "
            f"numpy's BLAS: {blas}")


def load_average() -> str:
    one, five, fifteen = os.getloadavg()
    return f"{one:.2f}, {five:.2f}, {fifteen:.2f} (1, 5, 15 min)"


def markdown(rows: list[list[str]]) -> str:
    """The summary rows as a Markdown table (figure, target, measured, result)."""
    lines = ["| figure | target | measured | result |", "|---|---|---|---|"]
    lines += [f"| {r[1]} | {r[2]} | {r[3]} | {r[4]} |" for r in rows]
    return "\n".join(lines)


def run(name: str, quick: bool, logs: Path) -> tuple[list[dict], int, float]:
    """Run one benchmark; its figures, exit code and wall time (s)."""
    script, _ = BENCHMARKS[name]
    figures = logs / f"{name}.jsonl"
    figures.unlink(missing_ok=True)
    env = {**os.environ, FIGURES_ENV: str(figures)}
    cmd = [sys.executable, str(HERE / script)] + (["--quick"] if quick else [])
    start = time.perf_counter()
    with open(logs / f"{name}.log", "w", encoding="utf-8") as log:
        code = subprocess.run(cmd, stdout=log, stderr=subprocess.STDOUT, env=env,
                              cwd=HERE.parent).returncode
    return read_figures(figures), code, time.perf_counter() - start


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="each benchmark's --quick")
    ap.add_argument("--only", nargs="+", choices=sorted(BENCHMARKS), metavar="NAME",
                    help=f"run only these ({', '.join(BENCHMARKS)})")
    ap.add_argument("--logs", type=Path, help="keep each benchmark's output in this folder")
    ap.add_argument("--markdown", action="store_true",
                    help="print the table in Markdown too (as in the README)")
    args = ap.parse_args(argv)
    names = [n for n in BENCHMARKS if not args.only or n in args.only]
    folder = None if args.logs else tempfile.TemporaryDirectory()
    logs = args.logs or Path(folder.name)
    logs.mkdir(parents=True, exist_ok=True)
    date = datetime.datetime.now(datetime.UTC).strftime("%d %B %Y %H:%M UTC")
    before = load_average()
    print(f"{date}; {machine()}")
    print(f"load average before: {before}; calibration loop (10M additions): "
          f"{calibration():.2f} s CPU (about 0.4 s on an idle recent machine)", flush=True)
    rows, broken = [], []
    for name in names:
        print(f"  {BENCHMARKS[name][0]} ({BENCHMARKS[name][1]}) ...", end=" ", flush=True)
        figures, code, wall = run(name, args.quick, logs)
        print(f"{wall:.0f} s", flush=True)
        if code not in (0, 1) or not figures:
            broken.append(name)
            print(f"    failed (exit {code}); its output:\n"
                  + (logs / f"{name}.log").read_text(encoding="utf-8")[-3000:])
        rows += [[name, f["figure"], f["target"], f["measured"],
                  "-" if f["met"] is None else ("met" if f["met"] else "MISSED")]
                 for f in figures]
    print(f"load average after: {load_average()}\n")
    print(text_table(["bench", "figure", "target", "measured", "result"], rows))
    if args.markdown:
        print("\n" + markdown(rows))
    missed = sum(r[4] == "MISSED" for r in rows)
    print(f"\n{len(rows)} figures, {missed} missed"
          + (f"; did not run: {', '.join(broken)}" if broken else "")
          + (f"; logs in {logs}" if args.logs else ""))
    if folder is not None:
        folder.cleanup()
    return 2 if broken else (1 if missed else 0)


if __name__ == "__main__":
    raise SystemExit(main())
