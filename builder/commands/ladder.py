"""``lumpgraph ladder FILE [--json]``: every depth against the full model."""

from __future__ import annotations

import argparse

from ..analysis.ladder import compute_ladder
from ..linear import assemble
from ..load import load_assembly
from ._common import add_file_option, print_json

HELP = "compare every depth of the model with the full one"


def configure(parser: argparse.ArgumentParser) -> None:
    add_file_option(parser)
    parser.add_argument("--json", action="store_true", help="print the ladder as JSON")


def run(args: argparse.Namespace) -> int:
    ladder = compute_ladder(assemble(load_assembly(args.file)))
    if args.json:
        print_json(ladder)
    else:
        print(ladder.table())
    return 0
