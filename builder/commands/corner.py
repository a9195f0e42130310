"""``lumpgraph corner FILE``: suspension figures of each corner from the linkage."""

from __future__ import annotations

import argparse

from ..analysis.suspension import suspension_figures
from ..linear import assemble
from ..load import load_assembly
from ._common import add_file_option, print_json

HELP = ("suspension figures per corner: motion ratios, wheel, ride rates, unsprung mass, "
        "instant, roll and pitch centres")


def configure(parser: argparse.ArgumentParser) -> None:
    add_file_option(parser)
    parser.add_argument("--json", action="store_true", help="print the figures as JSON (SI)")


def run(args: argparse.Namespace) -> int:
    figures = suspension_figures(assemble(load_assembly(args.file)))
    if args.json:
        print_json(figures)
    else:
        print(figures.table())
    return 0
