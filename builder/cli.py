"""The ``lumpgraph`` command line: parse, call the library, print.

Each command lives in ``builder/commands/NAME.py`` with ``HELP``,
``configure(parser)`` and ``run(args) -> int``; it is imported only when
used, so ``lumpgraph modes`` never pays for plotting or rendering imports.
Errors the user can fix print one line on stderr and exit with status 2.
"""

from __future__ import annotations

import argparse
import importlib
import signal
import sys
from collections.abc import Sequence

from .errors import LumpgraphError

__all__ = ["main", "COMMANDS"]

#: command name -> (module, one-line help)
COMMANDS: dict[str, tuple[str, str]] = {
    "check": ("builder.commands.check", "load a file and print the model checks"),
    "modes": ("builder.commands.modes", "natural frequencies, damping and mode labels"),
    "corner": ("builder.commands.corner",
               "suspension figures per corner: motion ratios, wheel and ride rates, "
               "unsprung mass, instant, roll and pitch centres"),
    "ladder": ("builder.commands.ladder", "compare every depth of the model with the full one"),
    "frf": ("builder.commands.frf", "frequency response from road inputs to sensors"),
    "ride": ("builder.commands.ride", "response to an ISO 8608 road at a speed, ISO 2631-1"),
    "bump": ("builder.commands.bump", "transient response to a bump, pothole or step"),
    "evaluate": ("builder.commands.evaluate", "ISO 2631-1 evaluation of recorded acceleration"),
    "export": ("builder.commands.export", "write the model's matrices, state space or modes"),
    "plugins": ("builder.commands.plugins", "list the installed plugins and their parameters"),
    "plugin": ("builder.commands.plugin", "run a plugin's own analyses on a file"),
    "render": ("builder.commands.render", "3D picture or animation of a mode, or a review sheet"),
    "report": ("builder.commands.report", "self-contained HTML review report"),
    "sweep": ("builder.commands.sweep", "sweeps, scatter and sensitivities of file parameters"),
    "correlate": ("builder.commands.correlate",
                  "hold the model's modes against measured modes: MAC, pairs, COMAC"),
    "update": ("builder.commands.update",
               "change file parameters within bounds to match measured modes"),
    "format": ("builder.commands.format", "print the description of the assembly file format"),
}

#: Where the main help sends readers for the file format.
EPILOG = ("The assembly file format (format 1) and how lumpgraph reads it: run "
          "'lumpgraph format' to print it, 'lumpgraph format --path' for the installed file "
          "(docs/format.md in the source).")


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # one line, exit 2 (argparse's own code too)
        self.exit(2, f"{self.prog}: error: {message}\n")


def _build(argv: Sequence[str]) -> tuple[argparse.ArgumentParser, object]:
    parser = _Parser(prog="lumpgraph", description="Lumped vehicle ride, comfort and NVH "
                     "models from one assembly file.", epilog=EPILOG)
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    wanted = next((a for a in argv if not a.startswith("-")), None)
    module = None
    for name, (mod, help_text) in COMMANDS.items():
        p = sub.add_parser(name, help=help_text, description=help_text)
        if name == wanted:
            try:
                module = importlib.import_module(mod)
            except ModuleNotFoundError as exc:
                if exc.name != mod:
                    raise
                parser.exit(2, f"lumpgraph: error: the command {name} is not available "
                            "in this version\n")
            module.configure(p)
    return parser, module


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``lumpgraph`` command; returns the exit status.

    0 done, 2 bad input or an output that cannot be written (one line on
    stderr), 130 interrupted by Ctrl-C, 143 by SIGTERM (see
    :mod:`builder.interrupts`).
    """
    from .interrupts import Terminated, exit_status, handled, pending, stderr_line

    program = argv is None          # run as the program, not called from Python
    argv = list(sys.argv[1:] if argv is None else argv)
    try:
        with handled():
            try:
                parser, module = _build(argv)
                args = parser.parse_args(argv)
                if module is None:
                    parser.print_help()
                    return 0 if not argv else 2
                return int(module.run(args) or 0)
            except Exception:
                signum = pending()
                if not signum:
                    raise
                raise (KeyboardInterrupt() if signum == signal.SIGINT
                       else Terminated(signum)) from None
    except LumpgraphError as exc:
        print(str(exc), file=sys.stderr)
        return 2
    except (KeyboardInterrupt, Terminated) as exc:
        stderr_line("lumpgraph: interrupted" if isinstance(exc, KeyboardInterrupt)
                    else "lumpgraph: terminated")
        if program:
            # the run is over and cleaned up: leave now with exactly this status. The
            # interpreter's own exit would turn an interrupt that once passed through
            # code a C extension ran at import (CPython's unhandled-KeyboardInterrupt
            # flag) into death by SIGINT, and a further signal could change the status.
            from .interrupts import exit_now
            exit_now(exit_status(exc))
        return exit_status(exc)
    except BrokenPipeError:
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
