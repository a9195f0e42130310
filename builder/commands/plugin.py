"""``lumpgraph plugin NAME FILE [options]``: a plugin's own analyses on a file.

Common options: ``--depth``/``--keep`` (model depth), ``--road CLASS`` and
``--speed V`` (passed to the plugin as ``road_class`` and ``speed_m_s``),
``--json``. A plugin may add options of its own (``configure_cli``);
``lumpgraph plugin NAME FILE --help`` lists them, and so does
``lumpgraph plugins``.
"""

from __future__ import annotations

import argparse

from ..errors import InputError, Where
from ..options import argtype, quantity
from ..plugin import get_plugin
from ._common import load_model, print_json

HELP = "run a plugin's own analyses on a file"

#: Options every plugin run takes (the rest are the plugin's own).
COMMON = ("--depth", "--keep", "--road", "--speed", "--json", "--help")


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("plugin_name", metavar="NAME", help="installed plugin (lumpgraph plugins)")
    parser.add_argument("file", metavar="FILE", help="assembly file that uses the plugin")
    parser.add_argument("options", nargs=argparse.REMAINDER,
                        help="--depth NAME, --keep LIST, --road CLASS, --speed V, --json, "
                             "and the plugin's own options")
    parser.epilog = ("A plugin's own options: 'lumpgraph plugin NAME FILE --help' "
                     "(or 'lumpgraph plugins', which lists every plugin's).")


def _options_parser(plugin: object) -> argparse.ArgumentParser:
    from ..cli import _Parser
    name = getattr(plugin, "name", "")
    p = _Parser(prog=f"lumpgraph plugin {name} FILE",
                description=f"{name}: {getattr(plugin, 'summary', '')}".strip(": "))
    group = p.add_mutually_exclusive_group()
    group.add_argument("--depth", metavar="NAME", help="analyse a depth of the file's ladder")
    group.add_argument("--keep", metavar="LIST",
                       help="analyse an ad hoc depth: DOFs or patterns, comma-separated")
    p.add_argument("--road", metavar="CLASS", help="ISO 8608 road class A..H")
    p.add_argument("--speed", metavar="V", type=argtype(quantity, "--speed", "speed"),
                   help='vehicle speed, e.g. "60 km/h" (bare: m/s)')
    p.add_argument("--json", action="store_true", help="print the result as JSON")
    if callable(getattr(plugin, "configure_cli", None)):
        plugin.configure_cli(p)
    return p


def plugin_options(plugin: object) -> list[dict[str, str]]:
    """The plugin's own command-line options (beside :data:`COMMON`): flags, metavar,
    help and default, as ``lumpgraph plugins`` lists them."""
    out = []
    for action in _options_parser(plugin)._actions:
        flags = [f for f in action.option_strings if f.startswith("--")]
        if not flags or flags[0] in COMMON:
            continue
        metavar = "" if action.nargs == 0 else str(action.metavar or action.dest.upper())
        default = action.default if action.default not in (None, False,
                                                            argparse.SUPPRESS) else None
        out.append({"option": ", ".join(flags), "metavar": metavar,
                    "help": action.help or "", "default": "" if default is None else
                    str(default)})
    return out


def run(args: argparse.Namespace) -> int:
    from ..analysis import road

    plugin = get_plugin(args.plugin_name, Where(field="NAME"))
    if not callable(getattr(plugin, "analyse", None)):
        raise InputError(f'plugin "{plugin.name}" has no analyses of its own', Where(field="NAME"))
    opts = _options_parser(plugin).parse_args(args.options)   # --help prints and exits 0
    if opts.road is not None:
        road.class_value(opts.road)
    opts.file = args.file
    assembly, model = load_model(opts)
    if not any(getattr(u, "use", None) == plugin.name for u in assembly.plugins):
        raise InputError(f'the file does not use the plugin "{plugin.name}"', Where(args.file))
    options = {k: v for k, v in vars(opts).items()
               if k not in ("depth", "keep", "json", "file", "road", "speed") and v is not None}
    if opts.road is not None:
        options["road_class"] = opts.road
    if opts.speed is not None:
        options["speed_m_s"] = opts.speed
    from ..io import writing
    with writing("--plot"):              # a plugin's own plot is its --plot
        result = plugin.analyse(model, assembly=assembly, **options)
    if opts.json:
        print_json(result)
    else:
        print(result.table() if callable(getattr(result, "table", None)) else result)
    return 0
