"""Options shared by ``correlate``, ``update`` and ``report``: the measured modes."""

from __future__ import annotations

import argparse
import math

from ..analysis.correlation import PAIR_THRESHOLD
from ..errors import InputError, Where

__all__ = ["add_measured_option", "parse_threshold"]


def add_measured_option(parser: argparse.ArgumentParser, required: bool = True) -> None:
    """``--measured TEST.csv|.json|.yaml`` and ``--threshold MAC``."""
    parser.add_argument("--measured", required=required, metavar="TEST.csv",
                        help="measured modes: the CSV or JSON layout of the format "
                        "description, or a .yaml block mapping a universal file's nodes")
    parser.add_argument("--threshold", default=None, metavar="MAC",
                        help=f"least MAC of a test-model pair (default {PAIR_THRESHOLD})")


def parse_threshold(text: str | None) -> float:
    """The MAC threshold, 0 < MAC <= 1."""
    if text is None:
        return PAIR_THRESHOLD
    where = Where(field="--threshold")
    try:
        v = float(text)
    except ValueError:
        raise InputError(f'must be a MAC value above 0 and at most 1, got "{text}"',
                         where) from None
    if not math.isfinite(v) or not 0.0 < v <= 1.0:
        raise InputError(f"must be a MAC value above 0 and at most 1, got {text}", where)
    return v
