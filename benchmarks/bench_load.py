"""Loading large files: figures against baselines measured in the same run.

    python benchmarks/bench_load.py [--bodies 10000]

The file is a generated chain of N bodies (invented data: N masses on
vertical springs to ground, each joined to the next by a bushing), the kind
of file a script writes from a larger model. For N = 5,000 and N (default
10,000) it times, best of a few runs (CPU time of this process):

1. ``yaml.safe_load`` of the same text (pure-Python PyYAML, the baseline the
   issue names), PyYAML's libyaml ``CSafeLoader``, and the libyaml parser's
   events alone (the floor of a loader that keeps lines, as lumpgraph's does);
2. ``parse_yaml``: the text into place-aware Nodes;
3. ``load_text``: Nodes validated into an Assembly;
4. ``assemble``: the sparse LinearModel.

Targets: load + assemble of 10,000 bodies well under 2 s on an idle
machine, below the bare ``yaml.safe_load`` of the same text, and linear
growth (10,000 over 5,000 bodies below 2.5). Also checks that 20,000 bodies
without any alias load (they were refused as an "alias bomb" after 28 s).

A calibration loop (10 million additions) is printed first: on a machine
shared with other work its time grows, and so do all the figures here.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import yaml  # noqa: E402
from figures import figure  # noqa: E402  (same folder)

from builder.linear import assemble  # noqa: E402
from builder.load import load_assembly, load_text  # noqa: E402
from builder.yamlnodes import parse_yaml  # noqa: E402


def chain_text(n: int) -> str:
    """YAML of n bodies (bounce, roll, pitch) on ground springs, joined by bushings."""
    out = ["format: 1", f"name: chain of {n} bodies (invented data)", "motion: vertical",
           "parameters:", "  k_ground: 20 kN/m", "  c_ground: 1.2 kN s/m",
           "  k_joint: 200 kN/m", "bodies:"]
    for i in range(n):
        out += [f"  b{i}:", f"    mass: {40 + i % 7} kg", f"    cg: [{-0.5 * i:.1f}, 0.0, 0.5]",
                "    gyradius: {x: 0.3, y: 0.4, z: 0.45}"]
    out.append("links:")
    for i in range(n):
        out.append(f"  g{i}: {{type: spring, a: b{i}, b: ground, axis: z, "
                   'stiffness: "${k_ground}", damping: "${c_ground}"}')
        if i:
            x = -0.5 * i + 0.25
            out.append(f"  j{i}: {{type: bushing, a: {{body: b{i}, at: [{x:.2f}, 0, 0.5]}}, "
                       f"b: {{body: b{i - 1}, at: [{x:.2f}, 0, 0.5]}}, "
                       'stiffness: {x: "${k_joint}", y: "${k_joint}", z: "${k_joint}", '
                       "rx: 5 kN m/rad}}")
    out += ["sensors:", f"  tail: {{body: b{n - 1}, measure: acceleration, direction: z}}"]
    return "\n".join(out) + "\n"


def stack_text(n: int) -> str:
    """YAML of n bouncing point masses in a column on springs (compact: 20,000 fit in 5 MB)."""
    out = ["format: 1", f"name: stack of {n} masses (invented data)", "motion: bounce",
           "bodies:"]
    out += [f"  m{i}: {{mass: {10 + i % 5}, cg: [0, 0, {0.1 * i:.1f}]}}" for i in range(n)]
    out.append("links:")
    out += [f"  s{i}: {{type: spring, a: m{i}, b: {f'm{i - 1}' if i else 'ground'}, axis: z, "
            "stiffness: 1e6}" for i in range(n)]
    return "\n".join(out) + "\n"


def cpu(fn, repeat: int) -> float:
    """Best CPU time (s) of ``repeat`` calls."""
    best = float("inf")
    for _ in range(repeat):
        t = time.process_time()
        fn()
        best = min(best, time.process_time() - t)
    return best


def events(text: str) -> int:
    """Only the libyaml parser's events of ``text`` (the floor of any loader built on
    PyYAML that keeps lines): their number."""
    loader = yaml.CSafeLoader(text)
    try:
        return sum(1 for _ in iter(loader.get_event, None))
    finally:
        loader.dispose()


def calibration() -> float:
    t = time.process_time()
    x = 0
    for i in range(10_000_000):
        x += i
    return time.process_time() - t


def figures(n: int, repeat: int, slow_baseline: bool) -> dict[str, float]:
    text = chain_text(n)
    out = {"MB": len(text) / 1e6}
    if slow_baseline:
        out["yaml.safe_load"] = cpu(lambda: yaml.safe_load(text), 1)
    out["CSafeLoader"] = cpu(lambda: yaml.load(text, Loader=yaml.CSafeLoader), repeat)
    out["libyaml events"] = cpu(lambda: events(text), repeat)
    out["parse_yaml"] = cpu(lambda: parse_yaml(text, "chain.yaml"), repeat)
    out["load_text"] = cpu(lambda: load_text(text, "chain.yaml"), repeat)
    asm = load_text(text, "chain.yaml")
    out["assemble"] = cpu(lambda: assemble(asm), repeat)
    out["load + assemble"] = out["load_text"] + out["assemble"]
    return out


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--bodies", type=int, default=10_000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--quick", action="store_true",
                    help="one run of each step; skip the 20,000-body file")
    args = ap.parse_args()
    if args.quick:
        args.repeat = 1
    print(f"calibration loop (10M additions): {calibration():.2f} s CPU "
          "(about 0.4 s on an idle recent machine)")
    small = figures(args.bodies // 2, args.repeat, slow_baseline=False)
    large = figures(args.bodies, args.repeat, slow_baseline=True)
    print(f"\n{'step (CPU s)':<18}{args.bodies // 2:>10}{args.bodies:>10}{'growth':>9}")
    for key in large:
        a, b = small.get(key), large[key]
        row = f"{key:<18}{'' if a is None else f'{a:10.3f}':>10}{b:10.3f}"
        print(row + (f"{b / a:9.2f}" if a else ""))
    total = large["load + assemble"]
    base = large["yaml.safe_load"]
    growth = total / small["load + assemble"]
    print(f"\nload + assemble of {args.bodies} bodies: {total:.2f} s CPU "
          f"(target well under 2 s on an idle machine)")
    print(f"  / bare yaml.safe_load of the same text: {total / base:.2f} (target < 1)")
    print(f"  / libyaml CSafeLoader load of the same text: "
          f"{total / large['CSafeLoader']:.2f}")
    print(f"  / the libyaml parser's events alone: {total / large['libyaml events']:.2f}")
    print(f"  growth {args.bodies} over {args.bodies // 2} bodies: {growth:.2f} "
          "(target < 2.5: linear)")
    ok = figure(f"load + assemble of {args.bodies:,} bodies (CPU)", "< 2 s",
                f"{total:.2f} s", total < 2.0)
    ok &= figure(f"load + assemble of {args.bodies:,} bodies / bare yaml.safe_load", "< 1",
                 f"{total / base:.2f}", total / base < 1)
    figure(f"load + assemble of {args.bodies:,} bodies / libyaml's events alone", "-",
           f"{total / large['libyaml events']:.2f} ({large['libyaml events']:.2f} s)", None)
    ok &= figure(f"load + assemble of {args.bodies:,} / {args.bodies // 2:,} bodies", "< 2.5",
                 f"{growth:.2f}", growth < 2.5)
    if args.quick:
        return 0 if ok else 1
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "stack.yaml"
        path.write_text(stack_text(2 * args.bodies))
        t = time.process_time()
        big = load_assembly(path)
        print(f"{2 * args.bodies} bodies without aliases ({path.stat().st_size / 1e6:.1f} MB "
              f"file): loaded, {len(big.bodies)} bodies, in {time.process_time() - t:.2f} s CPU "
              "(refused as an alias bomb after 28 s before)")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
