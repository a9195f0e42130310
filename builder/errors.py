"""Exceptions with the one-line messages the command line prints.

Every error a user can cause by writing a bad file or a bad option is a
:class:`InputError`. Its ``str()`` is one line, ``FILE:LINE: field: reason``
when the place is known, and the command line prints exactly that and exits
with status 2.
"""

from __future__ import annotations

__all__ = ["LumpgraphError", "InputError", "Where"]

from dataclasses import dataclass


@dataclass(frozen=True)
class Where:
    """A place in an input file: file name, 1-based line and dotted field path."""

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
            parts.append(f"{self.file}:{self.line}" if self.line else self.file)
        if self.field:
            parts.append(self.field)
        return ": ".join(parts)


class LumpgraphError(Exception):
    """Base class of every error lumpgraph raises on purpose."""


class InputError(LumpgraphError):
    """Bad input (file content or command-line option), reported in one line."""

    def __init__(self, message: str, where: Where | None = None):
        self.reason = " ".join(str(message).split())
        self.where = where or Where()
        super().__init__(self.reason)

    def __str__(self) -> str:
        prefix = self.where.prefix()
        return f"{prefix}: {self.reason}" if prefix else self.reason
