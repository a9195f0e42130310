"""``lumpgraph correlate FILE --measured TEST.csv [--depth NAME] [options]``.

The model's modes (at a depth with ``--depth`` or ``--keep``) against the
measured modes of a modal test: MAC matrix, one-to-one pairs by MAC with
their frequency errors, unpaired modes on both sides, the test's auto-MAC
and COMAC per point. ``--json`` prints the format page's object, ``--csv``
the pair table, ``--plot OUT.png`` the MAC map and frequency agreement.
"""

from __future__ import annotations

import argparse
import sys

from ..analysis.correlation import correlate
from ..io import csv_text, output_path, writing
from ..measured_files import read_measured
from ._common import add_model_options, load_model, print_json
from ._measured import add_measured_option, parse_threshold

HELP = "hold the model's modes against measured modes: MAC, pairs, COMAC"


def configure(parser: argparse.ArgumentParser) -> None:
    add_model_options(parser)
    add_measured_option(parser)
    parser.add_argument("--count", type=int, default=None, metavar="N",
                        help="model modes to compute (default: all, or enough to pass the "
                        "test band for large models)")
    parser.add_argument("--plot", default=None, metavar="OUT.png",
                        help="write a PNG of the MAC map and the frequency agreement")
    out = parser.add_mutually_exclusive_group()
    out.add_argument("--json", action="store_true", help="print the correlation as JSON")
    out.add_argument("--csv", action="store_true", help="print the pair table as CSV")


def run(args: argparse.Namespace) -> int:
    threshold = parse_threshold(args.threshold)
    plot = output_path(args.plot, [".png"], "--plot") if args.plot else None
    measured = read_measured(args.measured)
    _, model = load_model(args)
    result = correlate(model, measured, threshold=threshold, mode_count=args.count)
    if plot:
        with writing("--plot"):
            result.plot(plot)
    if args.json:
        print_json(result)
    elif args.csv:
        sys.stdout.write(csv_text(result.csv_rows()))
    else:
        print(result.table())
        if plot:
            print(f"wrote {plot}")
    return 0



