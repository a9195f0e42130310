"""``lumpgraph update FILE --measured TEST.csv --vary NAME=LOW..HIGH ... [options]``.

The named file parameters are changed within their bounds to match the
measured modes: the weighted frequency errors of the paired modes
(``--weight TEST=W``), optionally plus ``--mac-weight W`` times 1 - MAC,
by bounded least squares with analytic sensitivities, the pairs found anew
by MAC at every step. Prints the start and final values, the pair tables
before and after, the residual and which parameter combinations the test
can identify; ``--write-parameters OUT.yaml`` writes the final values as a
``parameters:`` snippet, ``--plot OUT.png`` the before-and-after picture,
``--json`` the format page's object.
"""

from __future__ import annotations

import argparse
import math
import sys

from ..analysis.sampling import parse_vary
from ..analysis.updating import update
from ..errors import InputError, Where
from ..io import output_path, write_atomic, writing
from ..measured_files import read_measured
from ._common import add_file_option, print_json
from ._measured import add_measured_option, parse_threshold

HELP = "change file parameters within bounds to match measured modes"

#: fields of the library's errors -> the options that set them
_OPTIONS = {"vary": "--vary", "weight": "--weight", "measured": "--measured",
            "threshold": "--threshold"}


def configure(parser: argparse.ArgumentParser) -> None:
    add_file_option(parser)
    add_measured_option(parser)
    parser.add_argument("--vary", action="append", default=[], metavar="NAME=LOW..HIGH",
                        help="a file parameter and its bounds, e.g. ks_front=18kN/m..32kN/m "
                        "(repeatable)")
    parser.add_argument("--weight", action="append", default=[], metavar="TEST=W",
                        help="weight of a test mode's frequency error (default 1; 0 leaves "
                        "it out); repeatable")
    parser.add_argument("--mac-weight", default=None, metavar="W",
                        help="also minimise W * (1 - MAC) of each pair (default 0)")
    parser.add_argument("--write-parameters", default=None, metavar="OUT.yaml",
                        help="write the final values as a parameters: snippet")
    parser.add_argument("--plot", default=None, metavar="OUT.png",
                        help="write a PNG of the errors before and after and the changes")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def _weights(items: list[str]) -> dict[int, float]:
    out: dict[int, float] = {}
    for text in items:
        mode, eq, value = text.partition("=")
        try:
            k, w = int(mode), float(value)
        except ValueError:
            raise InputError(f'expected TEST=W (e.g. 3=2), got "{text}"',
                             Where(field="--weight")) from None
        if not eq or not math.isfinite(w) or w < 0:
            raise InputError(f'expected TEST=W with W >= 0, got "{text}"',
                             Where(field="--weight"))
        out[k] = w
    return out


def _mac_weight(text: str | None) -> float:
    if text is None:
        return 0.0
    try:
        v = float(text)
    except ValueError:
        v = math.nan
    if not math.isfinite(v) or v < 0:
        raise InputError(f'must be a number >= 0, got "{text}"', Where(field="--mac-weight"))
    return v


def run(args: argparse.Namespace) -> int:
    if not args.vary:
        raise InputError("name the parameters to update with --vary NAME=LOW..HIGH",
                         Where(field="--vary"))
    specs = [parse_vary(v, need_count=False) for v in args.vary]
    names = [s.name for s in specs]
    if len(set(names)) != len(names):
        raise InputError("a parameter is named twice", Where(field="--vary"))
    threshold = parse_threshold(args.threshold)
    weights = _weights(args.weight)
    mac_weight = _mac_weight(args.mac_weight)
    out_yaml = output_path(args.write_parameters, [".yaml", ".yml"], "--write-parameters") \
        if args.write_parameters else None
    plot = output_path(args.plot, [".png"], "--plot") if args.plot else None
    measured = read_measured(args.measured)
    _check_dims(args.file, specs)
    try:
        result = update(args.file, measured, {s.name: (s.low, s.high) for s in specs},
                        weights=weights, mac_weight=mac_weight, threshold=threshold,
                        progress=None if args.json else _progress)
    except InputError as exc:      # the library's terms to this command's options
        if exc.where.field in _OPTIONS and not exc.where.file:
            raise InputError(exc.reason, Where(field=_OPTIONS[exc.where.field])) from None
        raise
    if out_yaml:
        write_atomic(out_yaml, result.parameters_yaml())
    if plot:
        with writing("--plot"):
            result.plot(plot)
    if args.json:
        print_json(result)
        return 0
    print(result.table())
    for path in (out_yaml, plot):
        if path:
            print(f"wrote {path}")
    return 0


def _check_dims(path: str, specs: list) -> None:
    from ..analysis.sweep import file_parameters
    from ..quantities import NONE, dimension_text
    params = file_parameters(path)
    for s in specs:
        if s.name in params and s.dim != NONE and s.dim != params[s.name].dim:
            raise InputError(f'"{s.name}" is {dimension_text(params[s.name].dim)} in the '
                             f"file, the bounds give {dimension_text(s.dim)}",
                             Where(field="--vary"))


def _progress(line: str) -> None:
    print(f"  ... {line}", file=sys.stderr, flush=True)
