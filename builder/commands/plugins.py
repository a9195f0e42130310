"""``lumpgraph plugins``: the installed plugins and their parameters."""

from __future__ import annotations

import argparse

from ..formatting import number, quantity_text
from ..plugin import installed_plugins
from ..quantities import DIMENSIONS
from ._common import print_json

HELP = "list the installed plugins and their parameters"


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="print the list as JSON")


def _default(q: object) -> str:
    """The default in the unit the plugin declares (else the dimension's engineering one)."""
    value = getattr(q, "default", None)
    dimension = getattr(q, "dimension", "")
    if isinstance(value, int | float) and not isinstance(value, bool) \
            and dimension in DIMENSIONS:
        return quantity_text(value, dimension, getattr(q, "unit", "") or None)
    if isinstance(value, tuple | list):
        return "[" + ", ".join(number(v, ".4g") if isinstance(v, int | float) else str(v)
                               for v in value) + "]"
    return quantity_text(value)


def _declared(q: object) -> dict[str, object]:
    d = getattr(q, "default", None)
    out: dict[str, object] = {
        "name": q.name, "dimension": q.dimension,
        "default": d if isinstance(d, int | float | str | type(None)) else str(d),
        "default_text": _default(q), "help": q.help}
    fields = getattr(q, "fields", ()) or ()
    if fields:
        out["fields"] = [_declared(f) for f in fields]
    return out


def _print_parameters(params: object, indent: str) -> None:
    width = max((len(q.name) for q in params), default=0)
    for q in params:
        print(f"{indent}{q.name:<{width}}  [{q.dimension}; default {_default(q)}] "
              f"{q.help}")
        fields = getattr(q, "fields", ()) or ()
        if fields:
            _print_parameters(fields, indent + "    ")


def _options(plugin: object) -> list[dict[str, str]]:
    from .plugin import plugin_options
    if not callable(getattr(plugin, "analyse", None)):
        return []
    return plugin_options(plugin)


def _print_options(plugin: object) -> None:
    options = _options(plugin)
    if not options:
        return
    print(f"  options of 'lumpgraph plugin {plugin.name} FILE' (beside --depth, --keep, "
          "--road, --speed, --json):")
    heads = [f"{o['option']} {o['metavar']}".strip() for o in options]
    width = max(len(h) for h in heads)
    for head, o in zip(heads, options, strict=True):
        print(f"    {head:<{width}}  {o['help']}")


def run(args: argparse.Namespace) -> int:
    plugins, problems = installed_plugins()
    if args.json:
        print_json({"plugins": [
            {"name": p.name, "summary": getattr(p, "summary", ""),
             "parameters": [_declared(q) for q in p.parameters],
             "options": _options(p)}
            for p in plugins.values()], "problems": problems})
        return 0
    for p in plugins.values():
        print(f"{p.name}: {getattr(p, 'summary', '')}")
        _print_parameters(p.parameters, "  ")
        _print_options(p)
        print()
    for problem in problems:
        print(f"warning: {problem}")
    if not plugins:
        print("no plugins are installed")
    return 0
