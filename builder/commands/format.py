"""``lumpgraph format``: print the description of the assembly file format.

The description is ``docs/format.md`` of the source tree; an installed
lumpgraph carries it as package data (``builder/docs/format.md``), so the
command works the same for an editable and a non-editable install.
``--path`` prints where the file is instead of its text.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..errors import InputError, Where

HELP = "print the description of the assembly file format (format 1)"


def format_path() -> Path | None:
    """The installed format description, or None when it is missing."""
    candidates = [Path(__file__).resolve().parent.parent / "docs" / "format.md",
                  Path(__file__).resolve().parents[2] / "docs" / "format.md"]
    return next((p for p in candidates if p.is_file()), None)


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--path", action="store_true",
                        help="print where the description is installed, not its text")


def run(args: argparse.Namespace) -> int:
    path = format_path()
    if path is None:
        raise InputError("the format description (docs/format.md) is not installed with "
                         "this lumpgraph", Where(field="format"))
    if args.path:
        print(path)
        return 0
    sys.stdout.write(path.read_text(encoding="utf-8"))
    return 0
