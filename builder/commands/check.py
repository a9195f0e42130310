"""``lumpgraph check FILE``: load a file and print the model checks."""

from __future__ import annotations

import argparse

from ..analysis.checks import check_model
from ..linear import assemble
from ..load import load_assembly
from ._common import add_file_option, print_json

HELP = "load a file and print the model checks"


def configure(parser: argparse.ArgumentParser) -> None:
    add_file_option(parser)
    parser.add_argument("--json", action="store_true", help="print the checks as JSON")
    parser.add_argument("--detail", action="store_true",
                        help="list every link, road point and warning (the summary shows "
                             "the largest)")


def run(args: argparse.Namespace) -> int:
    checks = check_model(assemble(load_assembly(args.file)))
    if args.json:
        print_json(checks)
    else:
        print(checks.table(detail=args.detail))
    return 0
