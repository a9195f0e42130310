"""``lumpgraph plugins``: the installed plugins and their parameters."""

from __future__ import annotations

import argparse

from ..plugin import installed_plugins
from ._common import print_json

HELP = "list the installed plugins and their parameters"


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="print the list as JSON")


def _default(value: object) -> str:
    return "none" if value is None else repr(value) if isinstance(value, str) else f"{value}"


def run(args: argparse.Namespace) -> int:
    plugins, problems = installed_plugins()
    if args.json:
        print_json({"plugins": [
            {"name": p.name, "summary": getattr(p, "summary", ""),
             "parameters": [{"name": q.name, "dimension": q.dimension,
                             "default": q.default if isinstance(q.default, int | float | str
                                                                | type(None)) else str(q.default),
                             "help": q.help} for q in p.parameters]}
            for p in plugins.values()], "problems": problems})
        return 0
    for p in plugins.values():
        print(f"{p.name}: {getattr(p, 'summary', '')}")
        width = max((len(q.name) for q in p.parameters), default=0)
        for q in p.parameters:
            print(f"  {q.name:<{width}}  [{q.dimension}; default {_default(q.default)}] {q.help}")
        print()
    for problem in problems:
        print(f"warning: {problem}")
    if not plugins:
        print("no plugins are installed")
    return 0
