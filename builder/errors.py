"""Exceptions with the one-line messages the command line prints.

Every error a user can cause by writing a bad file or a bad option is a
:class:`InputError`. Its ``str()`` is one line, ``FILE:LINE: field: reason``
when the place is known, and the command line prints exactly that and exits
with status 2.

Whatever a file holds reaches the terminal only through :func:`printable`
(control characters, ANSI escapes and line breaks written as escapes) and,
for values echoed back, :func:`shown` (also cut to :data:`MAX_SHOWN`
characters), so a message is always one short, inert line.
"""

from __future__ import annotations

__all__ = ["LumpgraphError", "InputError", "Where", "printable", "shown", "clip", "MAX_SHOWN"]

from typing import NamedTuple

#: Longest value (characters) echoed back in a message; longer ones are cut.
MAX_SHOWN = 60
#: Longest field path and reason (characters) in one message.
MAX_FIELD = 120
MAX_REASON = 600

_ESCAPES = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def printable(text: str) -> str:
    """``text`` with every non-printing character escaped (``\\n``, ``\\x1b``,
    ``\\u202e``), so that nothing a file holds moves the cursor, colours the
    terminal or breaks the line."""
    if text.isprintable():
        return text
    out = []
    for c in text:
        if c.isprintable():
            out.append(c)
        elif c in _ESCAPES:
            out.append(_ESCAPES[c])
        else:
            code = ord(c)
            out.append(f"\\x{code:02x}" if code < 0x100 else
                       f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}")
    return "".join(out)


def clip(text: str, limit: int = MAX_SHOWN) -> str:
    """``text`` cut to ``limit`` characters, ending in ``...`` when cut."""
    return text if len(text) <= limit else text[:max(limit - 3, 1)] + "..."


def shown(value: object, limit: int = MAX_SHOWN) -> str:
    """A value echoed in a message: strings quoted, everything escaped and cut.

    >>> shown("21 kN/m")
    '"21 kN/m"'
    >>> shown("\\x1b[31mred")
    '"\\\\x1b[31mred"'
    """
    if isinstance(value, int) and value.bit_length() > 4 * limit:
        return f"a number of about {int(value.bit_length() * 0.30103) + 1} digits"
    text = printable(value if isinstance(value, str) else repr(value))
    text = clip(text, limit)
    return f'"{text}"' if isinstance(value, str) else text


class Where(NamedTuple):
    """A place in an input file: file name, 1-based line and dotted field path.

    A named tuple (immutable, and cheap: a file of 10,000 bodies makes
    hundreds of thousands of them).
    """

    file: str = ""
    line: int = 0
    field: str = ""

    def child(self, key: str | int, line: int | None = None) -> Where:
        """The place of a sub-field ``key`` (on ``line`` when known)."""
        name = f"{self.field}[{key}]" if isinstance(key, int) else (
            f"{self.field}.{key}" if self.field else str(key))
        return Where(self.file, self.line if line is None else line, name)

    def prefix(self) -> str:
        parts = []
        if self.file:
            name = printable(self.file)
            parts.append(f"{name}:{self.line}" if self.line else name)
        if self.field:
            parts.append(clip(printable(self.field), MAX_FIELD))
        return ": ".join(parts)


class LumpgraphError(Exception):
    """Base class of every error lumpgraph raises on purpose."""


class InputError(LumpgraphError):
    """Bad input (file content or command-line option), reported in one line."""

    def __init__(self, message: str, where: Where | None = None):
        self.reason = clip(printable(" ".join(str(message).split())), MAX_REASON)
        self.where = where or Where()
        super().__init__(self.reason)

    def __str__(self) -> str:
        prefix = self.where.prefix()
        return f"{prefix}: {self.reason}" if prefix else self.reason
