"""``lumpgraph modes FILE [--depth NAME | --keep LIST] [--json | --csv]``."""

from __future__ import annotations

import argparse
import sys

from ..analysis.modes import compute_modes
from ..formatting import count
from ..io import csv_text
from ._common import add_model_options, load_model, print_json

HELP = "natural frequencies, damping and mode labels"


def configure(parser: argparse.ArgumentParser) -> None:
    add_model_options(parser)
    out = parser.add_mutually_exclusive_group()
    out.add_argument("--json", action="store_true", help="print the modes as JSON")
    out.add_argument("--csv", action="store_true", help="print the modes as CSV")
    parser.add_argument("--count", type=int, default=None, metavar="N",
                        help="number of lowest modes (default: all, or 20 for large models)")


def run(args: argparse.Namespace) -> int:
    _, model = load_model(args)
    modes = compute_modes(model, args.count)
    if args.json:
        print_json(modes)
    elif args.csv:
        sys.stdout.write(csv_text(modes.csv_rows()))
    else:
        print(f"{model.name}: {count(model.n, 'DOF')}")
        print(modes.table())
    return 0
