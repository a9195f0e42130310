"""Mutation fuzzing of the command line, with time and memory watchdogs.

    python benchmarks/fuzz.py [--cases 10000] [--workers 2] [--timeout 30] [--memory-mb 4096]
                              [--seed 1] [--out DIR]

Cases (deterministic for a seed): mutated demo files (tests/mutations.py: numbers
to extremes, lines deleted or duplicated, strings garbled, deep nesting, anchors
and aliases) through ``modes`` (60 %), ``check``, ``frf`` and ``ride`` (the rest of
the file cases), and random option sets for every command on valid demo files
(--option-share of the cases, 20 % by default): good values, extremes, garbage and
awkward output paths (a folder, a missing folder, a 300-character name, /proc).

Each case runs in-process in one of ``--workers`` worker processes (the CLI's
``main``, stdout and stderr captured, in a fresh temporary folder). The parent
kills a worker that takes longer than ``--timeout`` seconds on a case and starts a
new one; each worker limits its address space with ``resource.setrlimit
(RLIMIT_AS)`` to ``--memory-mb``. The contract checked: exit status 0 or 2; on
exit 2 exactly one line on stderr and no traceback; no output file left behind
by a failed run and no staging file (``.lumpgraph-*``) ever.

Printed: the count per outcome (exit 0, exit 2, traceback by exception
signature, timeout, memory, worker died, broken contract), the time per case,
and where each failing case was written (``--out``, one folder per signature
with the input file, the command line and the captured stderr).
"""

from __future__ import annotations

import argparse
import contextlib
import io
import multiprocessing as mp
import os
import random
import re
import shutil
import sys
import tempfile
import time
import traceback
from collections import Counter
from multiprocessing.connection import wait
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from mutations import mutate_text, odd_value  # noqa: E402

ASSEMBLIES = ROOT / "assemblies"
FILE_COMMANDS = {"modes": 0.60, "check": 0.14, "frf": 0.13, "ride": 0.13}
#: Extra arguments that keep the file cases of a command short and valid.
FILE_ARGS = {"modes": [], "check": [], "frf": ["--points", "60"],
             "ride": ["--road", "C", "--speed", "60 km/h", "--points", "200"]}
#: Plausible option values by option name (the fuzzer mixes in extremes and garbage).
GOOD = {
    "--depth": ["bounce", "half_car", "nope"], "--keep": ["body.z", "body.*,wheel_*.z", "*"],
    "--count": ["3", "1", "0", "-1", "1e9"], "--from": ["road.fl", "body.z", "nope"],
    "--to": ["floor_front", "body_accel", "nope"], "--band": ["0.5:50", "1:2", "50:1", "0:0"],
    "--points": ["100", "2", "1", "0", "1e20"], "--road": ["A", "C", "H", "Z"],
    "--speed": ["60 km/h", "20", "0", "-5", "1e300", "1e-300", "${10**400}"],
    "--waviness": ["2", "0", "-1", "1e308"], "--tracks": ["coherent", "identical", "x"],
    "--sensor": ["body_accel", "nope"], "--height": ["40 mm", "0", "1e308m", "5km^999"],
    "--length": ["0.6 m", "1e-300m", "1e308m", "0"], "--shape": ["bump", "pothole", "step"],
    "--seed": ["1", "-5", "1e30"], "--duration": ["2", "0", "1e9"], "--rate": ["1000", "0", "1e9"],
    "--mode": ["1", "2", "99", "0"], "--sheet": ["4", "0", "1000"], "--view": ["side", "iso"],
    "--scale": ["0.1", "-1", "1e308"], "--size": ["320x240", "8192x8192", "0x0", "tiny"],
    "--frames": ["4", "1", "100000"], "--fps": ["10", "0", "-1"], "--solid": ["box", "ball"],
    "--vary": ["ks_front=15kN/m..30kN/m:3", "ks_front=1..2:1e10", "nope=1..2:3"],
    "--lhs": ["4", "1e8", "0"], "--scatter": ["ks_front=normal:24kN/m,5%", "x=bogus"],
    "--samples": ["5", "1e9", "0"], "--result": ["modes", "ride:body_accel", "plugin:x:y"],
    "--modes": ["3", "0", "-1"], "--workers": ["1", "2", "0"], "--chunk": ["10", "0"],
    "--target": ["1=1.3", "1=x"], "--plot-against": ["ks_front", "nope"],
    "--chain": ["body", "bogus"], "--craig-bampton": ["12", "1", "0"], "--count-modes": ["3"],
    "--target-roll": ["9", "0"], "--target-bounce": ["8", "-1"], "--stroke": ["50 mm", "0"],
}
_PATHS = ["{TMP}/out.png", "{TMP}/out.csv", "{TMP}/out.gif", "{TMP}/out.vtm", "{TMP}/report",
          "{TMP}/out.txt", "{TMP}", "{TMP}/missing/out.png", "/proc/out.png", "/proc/sys/out.csv",
          "{TMP}/" + "L" * 300 + ".png", "{TMP}/a_folder.png"]
GOOD.update({flag: _PATHS for flag in ("--plot", "--csv", "--out")})
#: A valid call of each command (after FILE) that an option case changes one or two options of.
BASE_ARGS = {
    "frf": ["--points", "50"], "ride": ["--road", "C", "--speed", "60 km/h", "--points", "200"],
    "bump": ["--height", "40 mm", "--length", "0.6 m", "--speed", "30 km/h"],
    "render": ["--mode", "1", "--out", "{TMP}/out.png", "--size", "160x120"],
    "report": ["--out", "{TMP}/report", "--sheet", "2"],
    "sweep": ["--vary", "{K}=15kN/m..30kN/m:3"],
}
#: Demo files a command's option cases run on.
OPTION_FILES = {"plugin": ["compact_car_engine.yaml", "compact_car_seat.yaml",
                           "compact_car_flexible.yaml"]}
PLUGIN_OF = {"compact_car_engine.yaml": "engine", "compact_car_seat.yaml": "seat",
             "compact_car_flexible.yaml": "split_body"}
SLOW = {"render", "report", "sweep", "ladder"}   # option cases on the small files only
#: Files whose full mode list takes tens of seconds: modes --count 12 on them.
LARGE = {"compact_car_flexible.yaml"}


# ------------------------------------------------------------------ cases --

def _options(command: str, plugin: str | None = None) -> list[tuple[str, bool]]:
    """(option, takes a value) of a command (or a plugin's ``plugin`` options)."""
    import importlib

    if command == "plugin":
        from builder.commands.plugin import _options_parser
        from builder.plugin import get_plugin
        parser = _options_parser(get_plugin(plugin))
    else:
        from builder.cli import COMMANDS
        parser = argparse.ArgumentParser()
        importlib.import_module(COMMANDS[command][0]).configure(parser)
    out = []
    for action in parser._actions:
        for flag in action.option_strings:
            if flag.startswith("--") and flag != "--help":
                out.append((flag, action.nargs != 0))
    return out


def make_cases(count: int, option_share: float, seed: int,
               extra: tuple[Path, ...] = ()) -> list[dict]:
    """The fuzz cases: ``argv`` with ``{FILE}``/``{TMP}`` placeholders and a file text."""
    from builder.cli import COMMANDS

    rng = random.Random(seed)
    demos = {p.name: p.read_text() for p in [*sorted(ASSEMBLIES.glob("*.yaml")), *extra]}
    names = list(demos)
    n_options = int(count * option_share)
    cases: list[dict] = []
    commands, weights = zip(*FILE_COMMANDS.items(), strict=True)
    for _ in range(count - n_options):
        command = rng.choices(commands, weights)[0]
        base = rng.choice(names)
        extra = ["--count", "12"] if command == "modes" and base in LARGE else []
        cases.append({"kind": "file", "command": command, "base": base,
                      "text": mutate_text(demos[base], rng),
                      "argv": [command, "{FILE}", *FILE_ARGS[command], *extra]})
    options_cache: dict[tuple[str, str | None], list[tuple[str, bool]]] = {}
    paths = {"folder": "{TMP}", "missing": "{TMP}/missing/out.png", "proc": "/proc/out.png",
             "long": "{TMP}/" + "L" * 300 + ".png", "png": "{TMP}/out.png",
             "csv": "{TMP}/out.csv", "gif": "{TMP}/out.gif", "vtm": "{TMP}/out.vtm",
             "dir": "{TMP}/report"}
    for _ in range(n_options):
        command = rng.choice(list(COMMANDS))
        files = OPTION_FILES.get(command) or (
            ["quarter_car.yaml", "compact_car.yaml"] if command in SLOW else names)
        base = rng.choice(files)
        plugin = PLUGIN_OF.get(base) if command == "plugin" else None
        key = (command, plugin)
        if key not in options_cache:
            options_cache[key] = _options(command, plugin)
        head = [command] + ([plugin, "{FILE}"] if command == "plugin" else
                            [] if command == "plugins" else ["{FILE}"])
        k = "ks_front" if "ks_front:" in demos[base] else "ks"
        options = _pairs([a.replace("{K}", k) for a in BASE_ARGS.get(command, [])])
        available = options_cache[key]
        for flag, takes_value in rng.sample(available, min(len(available), rng.randint(1, 2))):
            value = None
            if takes_value:
                value = (rng.choice(_PATHS) if flag in ("--plot", "--csv", "--out")
                         and rng.random() < 0.7 else odd_value(rng, GOOD.get(flag, []), paths))
            options[flag] = value
        argv = head + [a for flag, value in options.items()
                       for a in ([flag] if value is None else [flag, value])]
        cases.append({"kind": "options", "command": command, "base": base,
                      "text": demos[base], "argv": argv})
    rng.shuffle(cases)
    return cases


def _pairs(args: list[str]) -> dict[str, str | None]:
    """``["--a", "1", "--b"]`` as ``{"--a": "1", "--b": None}``."""
    out: dict[str, str | None] = {}
    for i, a in enumerate(args):
        if a.startswith("--"):
            nxt = args[i + 1] if i + 1 < len(args) else None
            out[a] = None if nxt is None or nxt.startswith("--") else nxt
    return out


# ----------------------------------------------------------------- worker --

def _signature(exc: BaseException) -> str:
    """``Type at path:line in function`` of the innermost project frame."""
    frames = traceback.extract_tb(exc.__traceback__)
    inside = [f for f in frames if f.filename.startswith(str(ROOT))] or frames
    f = inside[-1] if inside else None
    where = (f"{os.path.relpath(f.filename, ROOT)}:{f.lineno} in {f.name}" if f else "?")
    return f"traceback: {type(exc).__name__} at {where}"


def run_case(case: dict) -> dict:
    """Run one case in this process; the outcome and what was captured."""
    from builder.cli import main

    folder = tempfile.mkdtemp(prefix="lumpgraph-fuzz-")
    path = os.path.join(folder, "model.yaml")
    with open(path, "w", encoding="utf-8", errors="surrogatepass") as fh:
        fh.write(case["text"])
    argv = [a.replace("{FILE}", path).replace("{TMP}", folder) for a in case["argv"]]
    os.mkdir(os.path.join(folder, "a_folder.png"))   # an output path that is a folder
    before = set(os.listdir(folder))
    out, err = io.StringIO(), io.StringIO()
    outcome = ""
    home = os.getcwd()
    os.chdir(folder)   # relative output paths land in the case's folder, never elsewhere
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                code = main(argv)
            except SystemExit as exc:
                code = exc.code if isinstance(exc.code, int) else 2
    except MemoryError:
        outcome, code = "memory (MemoryError under the address-space limit)", None
    except RecursionError as exc:
        outcome, code = _signature(exc), None
        err.write(traceback.format_exc())
    except Exception as exc:   # the contract broken: record it
        outcome, code = _signature(exc), None
        err.write(traceback.format_exc())
    finally:
        os.chdir(home)
    stderr = err.getvalue()
    after = _files(folder) - before - {"a_folder.png/"}
    staging = [f for f in after if os.path.basename(f).startswith(".lumpgraph-")]
    if not outcome:
        lines = stderr.strip().splitlines()
        if code not in (0, 2):
            outcome = f"exit {code}"
        elif code == 2 and (len(lines) != 1 or "Traceback" in stderr):
            outcome = f"exit 2 with {len(lines)} lines on stderr"
        elif code == 2 and after:
            outcome = "exit 2 leaving output behind"
        elif staging:
            outcome = "staging file left behind"
        else:
            outcome = f"exit {code}"
    shutil.rmtree(folder, ignore_errors=True)
    return {"outcome": outcome, "stderr": stderr[-20_000:], "argv": argv}


def _files(folder: str) -> set[str]:
    out = set()
    for dirpath, dirnames, filenames in os.walk(folder):
        out.update(os.path.relpath(os.path.join(dirpath, n), folder) for n in filenames)
        out.update(os.path.relpath(os.path.join(dirpath, n), folder) + "/" for n in dirnames)
    return out


def worker(conn, memory_mb: int) -> None:
    """Take cases from ``conn`` until None; send back each result."""
    import resource

    os.environ.setdefault("MPLBACKEND", "Agg")
    os.environ.setdefault("PYVISTA_OFF_SCREEN", "true")
    limit = memory_mb * 2**20
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    import builder.cli  # noqa: F401  (imports once, before the first case)
    while True:
        case = conn.recv()
        if case is None:
            return
        conn.send(run_case(case))


# ----------------------------------------------------------------- parent --

class Pool:
    """Workers with a per-case deadline: a late worker is killed and replaced."""

    def __init__(self, n: int, memory_mb: int, timeout: float):
        self.ctx = mp.get_context("spawn")
        self.memory_mb, self.timeout = memory_mb, timeout
        self.slots = [self._start() for _ in range(n)]

    def _start(self) -> dict:
        parent, child = self.ctx.Pipe()
        proc = self.ctx.Process(target=worker, args=(child, self.memory_mb), daemon=True)
        proc.start()
        child.close()
        return {"proc": proc, "conn": parent, "case": None, "since": 0.0}

    def run(self, cases: list[dict], report) -> None:
        todo = list(enumerate(cases))[::-1]
        while todo or any(s["case"] is not None for s in self.slots):
            for s in self.slots:
                if s["case"] is None and todo:
                    s["case"] = todo.pop()
                    s["since"] = time.monotonic()
                    s["conn"].send(s["case"][1])
            busy = [s for s in self.slots if s["case"] is not None]
            left = min(s["since"] + self.timeout for s in busy) - time.monotonic()
            ready = wait([s["conn"] for s in busy], timeout=max(left, 0.05))
            for s in busy:
                index, case = s["case"]
                if s["conn"] in ready:
                    try:
                        result = s["conn"].recv()
                    except (EOFError, OSError):
                        code = s["proc"].exitcode if s["proc"].join(5) is None else None
                        result = {"outcome": f"worker died (exit {code}, memory or a crash "
                                  "in compiled code)", "stderr": "", "argv": case["argv"]}
                        self._replace(s)
                elif time.monotonic() - s["since"] > self.timeout:
                    result = {"outcome": f"timeout (> {self.timeout:g} s)", "stderr": "",
                              "argv": case["argv"]}
                    self._replace(s)
                else:
                    continue
                s["case"] = None
                report(index, case, result)

    def _replace(self, slot: dict) -> None:
        slot["proc"].kill()
        slot["proc"].join(5)
        slot.update(self._start())

    def close(self) -> None:
        for s in self.slots:
            with contextlib.suppress(OSError):
                s["conn"].send(None)
            s["proc"].join(5)
            if s["proc"].is_alive():
                s["proc"].kill()


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9._-]+", "_", text)[:120]


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", type=int, default=10_000)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--timeout", type=float, default=30.0, help="seconds per case")
    ap.add_argument("--memory-mb", type=int, default=4096, help="address space per worker")
    ap.add_argument("--option-share", type=float, default=0.2)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--out", default=os.path.join(tempfile.gettempdir(), "lumpgraph-fuzz"))
    ap.add_argument("--extra", nargs="*", default=[], metavar="FILE",
                    help="more valid assembly files to mutate beside assemblies/*.yaml")
    args = ap.parse_args()
    out = Path(args.out)
    shutil.rmtree(out, ignore_errors=True)
    out.mkdir(parents=True)
    cases = make_cases(args.cases, args.option_share, args.seed,
                       tuple(Path(f).resolve() for f in args.extra))
    counts: Counter[str] = Counter()
    by_command: Counter[tuple[str, str]] = Counter()
    saved: Counter[str] = Counter()
    start = time.monotonic()

    def report(index: int, case: dict, result: dict) -> None:
        outcome = result["outcome"]
        counts[outcome] += 1
        by_command[(f"{case['kind']} {case['command']}", "ok" if outcome in (
            "exit 0", "exit 2") else "broken")] += 1
        if outcome not in ("exit 0", "exit 2") and saved[outcome] < 5:
            saved[outcome] += 1
            folder = out / _slug(outcome) / f"case-{index:05d}"
            folder.mkdir(parents=True, exist_ok=True)
            (folder / "model.yaml").write_text(case["text"], errors="surrogatepass")
            argv = [a.replace("{FILE}", "model.yaml").replace("{TMP}", "TMP")
                    for a in case["argv"]]
            (folder / "argv.txt").write_text(" ".join(argv) + "\n")
            (folder / "stderr.txt").write_text(result["stderr"])
        done = sum(counts.values())
        if done % 500 == 0:
            rate = done / (time.monotonic() - start)
            print(f"  {done}/{len(cases)} cases, {rate:.1f}/s", file=sys.stderr, flush=True)

    pool = Pool(args.workers, args.memory_mb, args.timeout)
    try:
        pool.run(cases, report)
    finally:
        pool.close()
    elapsed = time.monotonic() - start
    total = sum(counts.values())
    print(f"{total} cases in {elapsed:.0f} s ({elapsed / max(total, 1) * args.workers:.2f} s "
          f"per case per worker, {args.workers} workers, seed {args.seed})")
    print(f"{'outcome':<88}{'count':>7}")
    for outcome, n in sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])):
        print(f"{outcome:<88}{n:>7}")
    print(f"\n{'cases':<30}{'ok':>7}{'broken':>8}")
    for kind in sorted({k for k, _ in by_command}):
        print(f"{kind:<30}{by_command[(kind, 'ok')]:>7}{by_command[(kind, 'broken')]:>8}")
    broken = total - counts["exit 0"] - counts["exit 2"]
    print(f"\ncontract broken in {broken} cases; examples written to {out}")
    return 0 if broken == 0 else 1


if __name__ == "__main__":
    sys.exit(main())
