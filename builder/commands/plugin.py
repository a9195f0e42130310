"""``lumpgraph plugin NAME FILE [options]``: a plugin's own analyses on a file.

Common options: ``--depth``/``--keep`` (model depth), ``--road CLASS`` and
``--speed V`` (passed to the plugin as ``road_class`` and ``speed_m_s``),
``--json``. A plugin may add options of its own (``configure_cli``).
"""

from __future__ import annotations

import argparse

from ..errors import InputError, Where
from ..plugin import get_plugin
from ..quantities import to_si
from ._common import load_model, print_json

HELP = "run a plugin's own analyses on a file"


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("plugin_name", metavar="NAME", help="installed plugin (lumpgraph plugins)")
    parser.add_argument("file", metavar="FILE", help="assembly file that uses the plugin")
    parser.add_argument("options", nargs=argparse.REMAINDER,
                        help="--depth NAME, --keep LIST, --road CLASS, --speed V, --json, "
                             "and the plugin's own options")


def _options_parser(plugin: object) -> argparse.ArgumentParser:
    from ..cli import _Parser
    p = _Parser(prog=f"lumpgraph plugin {getattr(plugin, 'name', '')}", add_help=False)
    group = p.add_mutually_exclusive_group()
    group.add_argument("--depth", metavar="NAME")
    group.add_argument("--keep", metavar="LIST")
    p.add_argument("--road", metavar="CLASS", help="ISO 8608 road class A..H")
    p.add_argument("--speed", metavar="V", help='vehicle speed, e.g. "60 km/h"')
    p.add_argument("--json", action="store_true")
    if callable(getattr(plugin, "configure_cli", None)):
        plugin.configure_cli(p)
    return p


def run(args: argparse.Namespace) -> int:
    plugin = get_plugin(args.plugin_name, Where(field="NAME"))
    if not callable(getattr(plugin, "analyse", None)):
        raise InputError(f'plugin "{plugin.name}" has no analyses of its own', Where(field="NAME"))
    opts = _options_parser(plugin).parse_args(args.options)
    opts.file = args.file
    assembly, model = load_model(opts)
    if not any(getattr(u, "use", None) == plugin.name for u in assembly.plugins):
        raise InputError(f'the file does not use the plugin "{plugin.name}"', Where(args.file))
    options = {k: v for k, v in vars(opts).items()
               if k not in ("depth", "keep", "json", "file", "road", "speed") and v is not None}
    if opts.road is not None:
        options["road_class"] = opts.road
    if opts.speed is not None:
        options["speed_m_s"] = to_si(opts.speed, "speed", Where(field="--speed"), sign="positive")
    result = plugin.analyse(model, assembly=assembly, **options)
    if opts.json:
        print_json(result)
    else:
        print(result.table() if callable(getattr(result, "table", None)) else result)
    return 0
