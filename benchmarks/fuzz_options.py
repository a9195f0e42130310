"""Fuzzing of command-line options, failing writes and interrupts, with watchdogs.

    python benchmarks/fuzz_options.py [--cases 3000] [--writes 120] [--interrupts 60]
                                      [--workers 2] [--timeout 60] [--memory-mb 4096]
                                      [--seed 1] [--out DIR]

Three sets of cases, deterministic for a seed:

1. ``--cases`` random option sets over every command on valid demo files (the
   option generator of ``benchmarks/fuzz.py``, with its share of option cases
   at 100 %, plus values at and just past every documented ceiling of
   :data:`builder.options.CEILINGS`), run in-process in worker processes by
   ``fuzz.py``'s pool: a case over ``--timeout`` seconds is killed, each worker
   has ``--memory-mb`` of address space. Contract: exit 0 or 2, on exit 2 one
   line on stderr and no traceback, no output left by a failed run, no staging
   file ever.
2. ``--writes`` commands that write files (PNG, GIF, VTK multiblock, report,
   sweep CSV and plot, bump CSV, export) run as subprocesses under a file size
   limit (``RLIMIT_FSIZE``, a few bytes to a few hundred kB, so that some
   writes fail part-way). Contract: exit 0 or 2 with one line; every output
   complete (a ``.vtm`` ends with ``</VTKFile>`` and its pieces exist, a CSV
   ends with a whole row) or absent; no staging file or folder.
3. ``--interrupts`` commands sent SIGINT (to the process group, as a terminal
   does) or SIGTERM after a random delay once the interpreter has started.
   Contract: exit 130/143 (or 0/2 when the run ended first) within 10 s of
   the signal, no traceback, no live process left in its session (workers,
   resource tracker), no staging file, a sweep CSV of whole rows that
   ``--resume`` completes to the same table as an uninterrupted run.

Printed: the count per outcome of each set and the time taken; failing cases
are written to ``--out``.
"""

from __future__ import annotations

import argparse
import concurrent.futures
import csv
import os
import random
import resource
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import fuzz  # noqa: E402

ASSEMBLIES = ROOT / "assemblies"
#: Values at and just past each documented ceiling, mixed into the option cases.
AT_CEILINGS = {
    "--points": ["200000", "200001", "1000001", "10000000"],
    "--frames": ["3600", "3601"], "--size": ["4096x4096", "4097x4097", "8192x16", "8193x16",
                                             "1280x960", "1281x960"],
    "--lhs": ["10000001", "100000000"], "--samples": ["10000001", "1000000000"],
    "--vary": ["{K}=15kN/m..30kN/m:10000001", "{K}=1..2:99999999999999999999"],
    "--sheet": ["64", "65"], "--seed": ["4294967295", "4294967296", "-5"],
    "--speed": ["${10**400}", "1e-10", "10001", "80 km/h"], "--scale": ["10", "10.5", "nan"],
    "--fps": ["100", "101", "0"], "--waviness": ["0.4", "5.1", "inf"],
}
#: (argv after FILE, demo file, outputs it writes: relative to the case folder)
WRITERS = [
    (["render", "{FILE}", "--mode", "1", "--out", "x.png", "--size", "320x240"],
     "quarter_car.yaml", ["x.png"]),
    (["render", "{FILE}", "--mode", "1", "--out", "x.gif", "--size", "160x120", "--frames",
      "6"], "quarter_car.yaml", ["x.gif"]),
    (["render", "{FILE}", "--mode", "1", "--out", "x.vtm"], "compact_car.yaml", ["x.vtm", "x"]),
    (["report", "{FILE}", "--out", "rep", "--sheet", "2"], "quarter_car.yaml", ["rep"]),
    (["sweep", "{FILE}", "--vary", "ks_front=15kN/m..30kN/m:400", "--chunk", "7", "--csv",
      "s.csv", "--plot", "s.png"], "compact_car.yaml", ["s.csv", "s.png"]),
    (["bump", "{FILE}", "--height", "40 mm", "--length", "0.6 m", "--speed", "30 km/h",
      "--csv", "b.csv", "--plot", "b.png"], "quarter_car.yaml", ["b.csv", "b.png"]),
    (["frf", "{FILE}", "--plot", "f.png"], "compact_car.yaml", ["f.png"]),
    (["export", "{FILE}", "--to", "m.npz"], "compact_car.yaml", ["m.npz"]),
]
#: Long enough runs to interrupt: (argv, demo file, csv written or None)
INTERRUPTED = [
    (["sweep", "{FILE}", "--vary", "ks_front=15kN/m..30kN/m:6000", "--chunk", "25",
      "--workers", "2", "--csv", "s.csv"], "compact_car.yaml", "s.csv"),
    (["sweep", "{FILE}", "--vary", "ks_front=15kN/m..30kN/m:6000", "--chunk", "25",
      "--csv", "s.csv"], "compact_car.yaml", "s.csv"),
    (["render", "{FILE}", "--mode", "1", "--out", "a.gif", "--frames", "600", "--size",
      "200x150"], "quarter_car.yaml", None),
    (["ride", "{FILE}", "--road", "C", "--speed", "60 km/h"], "compact_car.yaml", None),
    (["modes", "{FILE}"], "compact_car_flexible.yaml", None),
    (["report", "{FILE}", "--out", "rep"], "compact_car.yaml", None),
]


# -------------------------------------------------------------- option cases --

def option_cases(count: int, seed: int) -> list[dict]:
    """``fuzz.py``'s option cases, with values at the ceilings mixed in."""
    for flag, values in AT_CEILINGS.items():
        fuzz.GOOD[flag] = list(dict.fromkeys([*fuzz.GOOD.get(flag, []), *values]))
    cases = fuzz.make_cases(count, 1.0, seed)
    for case in cases:
        k = "ks_front" if "ks_front:" in case["text"] else "ks"
        case["argv"] = [a.replace("{K}", k) for a in case["argv"]]
    return cases


# ------------------------------------------------------------ subprocess runs --

def _limits(memory_mb: int, fsize: int | None):
    def apply() -> None:
        limit = memory_mb * 2**20
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
        if fsize is not None:
            resource.setrlimit(resource.RLIMIT_FSIZE, (fsize, fsize))
    return apply


def _env() -> dict[str, str]:
    env = dict(os.environ, MPLBACKEND="Agg", PYVISTA_OFF_SCREEN="true")
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def _argv(template: list[str], folder: str, base: str) -> list[str]:
    return [sys.executable, "-m", "builder.cli",
            *[a.replace("{FILE}", str(ASSEMBLIES / base)) for a in template]]


def _staging(folder: str) -> list[str]:
    return [os.path.relpath(os.path.join(d, n), folder) for d, dirs, files in os.walk(folder)
            for n in [*dirs, *files] if n.startswith(".lumpgraph-") or n.startswith(".x.")]


def _csv_whole(path: str) -> bool:
    """The CSV ends with a newline and every row has the header's width."""
    text = Path(path).read_text()
    if not text.endswith("\n"):
        return False
    rows = list(csv.reader(text.splitlines()))
    return all(len(r) == len(rows[0]) for r in rows)


def _complete(folder: str, outputs: list[str]) -> str:
    """"" when every output present is complete, else what is wrong."""
    for name in outputs:
        path = os.path.join(folder, name)
        if not os.path.exists(path):
            continue
        if name.endswith(".vtm"):
            text = Path(path).read_text(errors="replace").rstrip()
            if not text.endswith("</VTKFile>"):
                return f"partial {name}"
            import re
            for piece in re.findall(r'file="([^"]+)"', text):
                if not os.path.isfile(os.path.join(folder, piece)):
                    return f"{name} names a missing piece {piece}"
        elif name.endswith(".csv") and not _csv_whole(path):
            return f"{name} ends with a half row"
        elif name.endswith((".png", ".gif")) and os.path.getsize(path) == 0:
            return f"empty {name}"
    return ""


def write_case(case: dict, memory_mb: int, timeout: float) -> dict:
    """One command under a file size limit."""
    folder = tempfile.mkdtemp(prefix="lumpgraph-fuzzw-")
    try:
        t0 = time.monotonic()
        try:
            done = subprocess.run(_argv(case["argv"], folder, case["base"]), cwd=folder,
                                  env=_env(), capture_output=True, text=True, timeout=timeout,
                                  preexec_fn=_limits(memory_mb, case["fsize"]))
        except subprocess.TimeoutExpired:
            return {"outcome": f"timeout (> {timeout:g} s)", "stderr": ""}
        err = done.stderr
        lines = err.strip().splitlines()
        outcome = f"exit {done.returncode}"
        if done.returncode not in (0, 2):
            outcome = f"exit {done.returncode} (neither 0 nor 2)"
        elif "Traceback" in err or (done.returncode == 2 and len(lines) != 1):
            outcome = f"exit {done.returncode} with {len(lines)} lines on stderr"
        elif done.returncode == 0 and err.strip():
            outcome = "exit 0 with output on stderr"
        elif _staging(folder):
            outcome = "staging file left behind"
        else:
            problem = _complete(folder, case["outputs"])
            if problem:
                outcome = problem
            elif done.returncode == 2 and any(os.path.exists(os.path.join(folder, o))
                                              for o in case["outputs"]
                                              if not o.endswith(".csv")):
                outcome = "exit 2 leaving an output"
        return {"outcome": outcome, "stderr": err[-4000:], "seconds": time.monotonic() - t0}
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def _session_alive(sid: int) -> list[str]:
    """Live (not zombie) processes of session ``sid``."""
    out = []
    for pid in os.listdir("/proc"):
        if not pid.isdigit():
            continue
        try:
            stat = Path(f"/proc/{pid}/stat").read_text()
        except OSError:
            continue
        fields = stat[stat.rfind(")") + 2:].split()
        if int(fields[3]) == sid and fields[0] != "Z":
            out.append(pid)
    return out


def interrupt_case(case: dict, memory_mb: int, timeout: float) -> dict:
    """One command interrupted by SIGINT (to its group) or SIGTERM after a delay."""
    folder = tempfile.mkdtemp(prefix="lumpgraph-fuzzi-")
    try:
        proc = subprocess.Popen(_argv(case["argv"], folder, case["base"]), cwd=folder,
                                env=_env(), stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                                text=True, start_new_session=True,
                                preexec_fn=_limits(memory_mb, None))
        time.sleep(case["delay"])
        sent = time.monotonic()
        if proc.poll() is None:
            if case["signal"] == "SIGINT":
                os.killpg(proc.pid, signal.SIGINT)
            else:
                os.kill(proc.pid, signal.SIGTERM)
        try:
            err = proc.communicate(timeout=10)[1]
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.communicate()
            return {"outcome": "no exit within 10 s of the signal", "stderr": ""}
        took = time.monotonic() - sent
        time.sleep(0.3)
        alive = _session_alive(proc.pid)
        for pid in alive:
            os.kill(int(pid), signal.SIGKILL)
        code = proc.returncode
        if "Traceback" in err:
            outcome = "traceback on stderr"
        elif code not in (0, 2, 130, 143):
            outcome = f"exit {code}"
        elif alive:
            outcome = f"{len(alive)} processes left running"
        elif _staging(folder):
            outcome = "staging file left behind"
        elif case["csv"] and os.path.exists(os.path.join(folder, case["csv"])) \
                and not _csv_whole(os.path.join(folder, case["csv"])):
            outcome = "CSV ends with a half row"
        else:
            outcome = {130: "exit 130 (interrupted)", 143: "exit 143 (terminated)"}.get(
                code, f"exit {code} (ended before the signal)")
            if code in (130, 143) and case["csv"] and \
                    os.path.exists(os.path.join(folder, case["csv"])):
                outcome += _resume_check(case, folder, memory_mb, timeout)
        return {"outcome": outcome, "stderr": err[-4000:], "seconds": took}
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def _resume_check(case: dict, folder: str, memory_mb: int, timeout: float) -> str:
    """``--resume`` after the interrupt gives the table an uninterrupted run gives."""
    argv = [a for a in case["argv"] if a not in ("--workers", "2")]
    subprocess.run(_argv([*argv, "--resume"], folder, case["base"]), cwd=folder, env=_env(),
                   capture_output=True, timeout=timeout, preexec_fn=_limits(memory_mb, None))
    resumed = Path(folder, case["csv"]).read_text()
    fresh = [a.replace(case["csv"], "fresh.csv") for a in argv]
    subprocess.run(_argv(fresh, folder, case["base"]), cwd=folder, env=_env(),
                   capture_output=True, timeout=timeout, preexec_fn=_limits(memory_mb, None))
    same = resumed == Path(folder, "fresh.csv").read_text()
    return ", resumed exactly" if same else ", RESUME DIFFERS"


# -------------------------------------------------------------------- main --

def _report(title: str, counts: Counter, elapsed: float) -> None:
    total = sum(counts.values())
    print(f"\n{title}: {total} cases in {elapsed:.0f} s")
    for outcome, n in sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])):
        print(f"  {outcome:<86}{n:>6}")


GOOD_WRITE = ("exit 0", "exit 2")


def _good_interrupt(outcome: str) -> bool:
    return outcome.startswith(("exit 130", "exit 143", "exit 0 (", "exit 2 (")) and \
        "DIFFERS" not in outcome


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", type=int, default=3000)
    ap.add_argument("--writes", type=int, default=120)
    ap.add_argument("--interrupts", type=int, default=60)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--timeout", type=float, default=60.0, help="seconds per case")
    ap.add_argument("--memory-mb", type=int, default=4096, help="address space per worker")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--out", default=os.path.join(tempfile.gettempdir(),
                                                  "lumpgraph-fuzz-options"))
    args = ap.parse_args()
    out = Path(args.out)
    shutil.rmtree(out, ignore_errors=True)
    out.mkdir(parents=True)
    rng = random.Random(args.seed)
    broken = 0

    def keep(kind: str, index: int, argv: list[str], result: dict) -> None:
        folder = out / kind / fuzz._slug(result["outcome"]) / f"case-{index:05d}"
        folder.mkdir(parents=True, exist_ok=True)
        (folder / "argv.txt").write_text(" ".join(argv) + "\n")
        (folder / "stderr.txt").write_text(result.get("stderr", ""))

    if args.cases:
        cases = option_cases(args.cases, args.seed)
        counts: Counter[str] = Counter()
        start = time.monotonic()

        def report(index: int, case: dict, result: dict) -> None:
            counts[result["outcome"]] += 1
            if result["outcome"] not in GOOD_WRITE:
                keep("options", index, result["argv"], result)
            done = sum(counts.values())
            if done % 250 == 0:
                print(f"  {done}/{len(cases)} option cases", file=sys.stderr, flush=True)

        pool = fuzz.Pool(args.workers, args.memory_mb, args.timeout)
        try:
            pool.run(cases, report)
        finally:
            pool.close()
        _report("random option sets (in-process workers)", counts, time.monotonic() - start)
        broken += sum(n for o, n in counts.items() if o not in GOOD_WRITE)

    if args.writes:
        wcases = []
        for _ in range(args.writes):
            argv, base, outputs = rng.choice(WRITERS)
            wcases.append({"argv": argv, "base": base, "outputs": outputs,
                           "fsize": int(10 ** rng.uniform(1.5, 5.7))})
        counts = Counter()
        start = time.monotonic()
        with concurrent.futures.ThreadPoolExecutor(args.workers) as ex:
            results = list(ex.map(lambda c: write_case(c, args.memory_mb, args.timeout), wcases))
        for i, (c, r) in enumerate(zip(wcases, results, strict=True)):
            label = f"{c['argv'][0]} {Path(c['outputs'][0]).suffix or 'folder'}: {r['outcome']}"
            counts[label] += 1
            if r["outcome"] not in GOOD_WRITE:
                keep("writes", i, c["argv"] + [f"(RLIMIT_FSIZE {c['fsize']})"], r)
        _report("writes under a file size limit (subprocesses)", counts,
                time.monotonic() - start)
        broken += sum(n for o, n in counts.items() if o.rsplit(": ", 1)[-1] not in GOOD_WRITE)

    if args.interrupts:
        icases = []
        for _ in range(args.interrupts):
            argv, base, csv_name = rng.choice(INTERRUPTED)
            icases.append({"argv": argv, "base": base, "csv": csv_name,
                           "signal": rng.choice(["SIGINT", "SIGTERM"]),
                           "delay": rng.uniform(0.8, 8.0)})
        counts = Counter()
        start = time.monotonic()
        took = []
        with concurrent.futures.ThreadPoolExecutor(max(1, args.workers // 2)) as ex:
            results = list(ex.map(lambda c: interrupt_case(c, args.memory_mb, args.timeout),
                                  icases))
        for i, (c, r) in enumerate(zip(icases, results, strict=True)):
            counts[f"{c['argv'][0]} {c['signal']}: {r['outcome']}"] += 1
            took.append(r.get("seconds", 0.0))
            if not _good_interrupt(r["outcome"]):
                keep("interrupts", i, c["argv"] + [f"({c['signal']} after {c['delay']:.2f} s)"],
                     r)
        _report("interrupted runs (subprocesses, signal after 0.8 to 8 s)", counts,
                time.monotonic() - start)
        print(f"  exit after the signal: median {sorted(took)[len(took) // 2]:.2f} s, "
              f"longest {max(took):.2f} s")
        broken += sum(n for o, n in counts.items() if not _good_interrupt(o.split(": ", 1)[1]))

    print(f"\ncontract broken in {broken} cases; examples written to {out}")
    return 0 if broken == 0 else 1


if __name__ == "__main__":
    sys.exit(main())
