"""Safe YAML loading that remembers where every value came from.

:func:`load_yaml` reads a file with PyYAML's safe composer and turns it into
a tree of :class:`Node` objects, each knowing its file, line and dotted field
path, so that a validation error can say ``car.yaml:12: bodies.body.mass:
must be a positive mass, got "-3 kg"``.

It refuses, each with a one-line :class:`~builder.errors.InputError`:
files over 5 MB, text that is not UTF-8, YAML syntax errors, explicit tags
(``!!python/...``, ``!custom``), duplicate keys, non-finite numbers
(``.inf``, ``.nan``), several documents in one file, and alias expansion
beyond :data:`MAX_NODES` nodes (the "billion laughs" bomb, recursive
aliases). Anchors, aliases and ``<<`` merge keys within that limit work.
"""

from __future__ import annotations

import difflib
import math
import os
from collections.abc import Iterable, Iterator, Mapping
from typing import Any

import yaml

from .errors import InputError, Where
from .quantities import Quantity, to_si

__all__ = ["Node", "load_yaml", "parse_yaml", "MAX_BYTES", "MAX_NODES"]

MAX_BYTES = 5 * 1024 * 1024
MAX_NODES = 200_000


class Node:
    """One value of the file with its place; mappings and lists hold Nodes."""

    __slots__ = ("value", "where", "key_lines", "raw")

    def __init__(self, value: Any, where: Where, key_lines: dict[str, int] | None = None,
                 raw: str | None = None):
        self.value = value
        self.where = where
        self.key_lines = key_lines or {}
        self.raw = raw

    # -- shape ---------------------------------------------------------
    @property
    def is_map(self) -> bool:
        return isinstance(self.value, dict)

    @property
    def is_list(self) -> bool:
        return isinstance(self.value, list)

    @property
    def line(self) -> int:
        return self.where.line

    def error(self, message: str) -> InputError:
        """An InputError at this node (raise it)."""
        return InputError(message, self.where)

    def shown(self) -> str:
        """The value as the user wrote it, for messages."""
        if self.is_map:
            return "a mapping"
        if self.is_list:
            return "a list"
        if self.raw is not None:
            return f'"{self.raw}"' if isinstance(self.value, str) else self.raw
        return repr(self.value)

    # -- mappings ------------------------------------------------------
    def mapping(self, allowed: Iterable[str] | None = None, required: Iterable[str] = (),
                what: str = "a mapping") -> dict[str, Node]:
        """The entries of a mapping, refusing unknown keys (with a hint)
        and reporting missing required ones."""
        if not self.is_map:
            raise self.error(f"must be {what}, got {self.shown()}")
        if allowed is not None:
            allowed = list(allowed)
            for key in self.value:
                if key not in allowed:
                    hint = difflib.get_close_matches(key, allowed, n=1)
                    tip = f' (did you mean "{hint[0]}"?)' if hint else (
                        f" (allowed: {', '.join(allowed)})" if len(allowed) <= 12 else "")
                    w = self.where.child(key, self.key_lines.get(key, self.line))
                    raise InputError(f"unknown key{tip}", w)
        for key in required:
            if key not in self.value:
                raise InputError(f'missing required key "{key}"', self.where)
        return self.value

    def get(self, key: str) -> Node | None:
        return self.value.get(key) if self.is_map else None

    def __getitem__(self, key: str) -> Node:
        return self.value[key]

    def __contains__(self, key: str) -> bool:
        return self.is_map and key in self.value

    def items(self) -> Iterator[tuple[str, Node]]:
        return iter(self.value.items()) if self.is_map else iter(())

    def items_list(self, what: str = "a list") -> list[Node]:
        if not self.is_list:
            raise self.error(f"must be {what}, got {self.shown()}")
        return self.value

    # -- scalars -------------------------------------------------------
    def text(self, what: str = "a name") -> str:
        if not isinstance(self.value, str) or not self.value.strip():
            raise self.error(f"must be {what}, got {self.shown()}")
        return self.value

    def quantity(self, dimension: str, parameters: Mapping[str, Quantity] | None = None,
                 sign: str = "any") -> float:
        """An SI float of the named dimension (see :func:`builder.quantities.to_si`)."""
        if self.is_map or self.is_list:
            return to_si(self.shown(), dimension, self.where, parameters, sign)
        return to_si(self.raw if isinstance(self.value, str) else self.value,
                     dimension, self.where, parameters, sign)

    def vector(self, dimension: str = "length", parameters: Mapping[str, Quantity] | None = None,
               length: int = 3) -> list[float]:
        """A list of ``length`` quantities, e.g. a point ``[x, y, z]`` in m."""
        if not self.is_list or len(self.value) != length:
            raise self.error(f"must be a list of {length} numbers, got {self.shown()}")
        return [n.quantity(dimension, parameters) for n in self.value]

    def number(self, sign: str = "any") -> float:
        return self.quantity("dimensionless", None, sign)

    def integer(self, minimum: int | None = None, maximum: int | None = None) -> int:
        v = self.value
        if isinstance(v, bool) or not isinstance(v, int):
            raise self.error(f"must be a whole number, got {self.shown()}")
        if (minimum is not None and v < minimum) or (maximum is not None and v > maximum):
            rng = f"at least {minimum}" if maximum is None else f"between {minimum} and {maximum}"
            raise self.error(f"must be a whole number {rng}, got {v}")
        return v

    def boolean(self) -> bool:
        if not isinstance(self.value, bool):
            raise self.error(f"must be true or false, got {self.shown()}")
        return self.value

    def choice(self, options: Iterable[str]) -> str:
        options = list(options)
        if not isinstance(self.value, str) or self.value not in options:
            hint = difflib.get_close_matches(str(self.value), options, n=1)
            tip = f' (did you mean "{hint[0]}"?)' if hint else ""
            raise self.error(f"must be one of {', '.join(options)}, got {self.shown()}{tip}")
        return self.value

    def to_python(self) -> Any:
        """The plain Python value (dicts, lists, scalars) without places."""
        if self.is_map:
            return {k: v.to_python() for k, v in self.value.items()}
        if self.is_list:
            return [v.to_python() for v in self.value]
        return self.value


def load_yaml(path: str | os.PathLike[str], display_name: str | None = None) -> Node:
    """Read and parse a YAML file safely into a :class:`Node` tree."""
    name = display_name or str(path)
    try:
        size = os.path.getsize(path)
        if size > MAX_BYTES:
            raise InputError(f"file is {size / 1e6:.1f} MB; the limit is {MAX_BYTES // 2**20} MB",
                             Where(name))
        with open(path, "rb") as fh:
            data = fh.read(MAX_BYTES + 1)
    except OSError as exc:
        raise InputError(f"cannot read file ({exc.strerror or exc})", Where(name)) from None
    if len(data) > MAX_BYTES:
        raise InputError(f"file is larger than the {MAX_BYTES // 2**20} MB limit", Where(name))
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(f"not UTF-8 text (byte {exc.start})", Where(name)) from None
    return parse_yaml(text, name)


def parse_yaml(text: str, name: str = "<text>") -> Node:
    """Parse YAML text into a :class:`Node` tree (see module docstring)."""
    if not text.strip():
        raise InputError("the file is empty", Where(name, 1))
    try:
        for tok in yaml.scan(text, Loader=yaml.SafeLoader):
            if isinstance(tok, yaml.TagToken):
                raise InputError(f"YAML tags are not allowed, got {tok.value[0]}{tok.value[1]}",
                                 Where(name, tok.start_mark.line + 1))
        docs = list(yaml.compose_all(text, Loader=yaml.SafeLoader))
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark else 0
        raise InputError(f"not valid YAML: {exc.problem or exc.context}", Where(name, line)) \
            from None
    except yaml.YAMLError as exc:
        raise InputError(f"not valid YAML: {exc}", Where(name)) from None
    docs = [d for d in docs if d is not None]
    if not docs:
        raise InputError("the file holds no YAML document", Where(name, 1))
    if len(docs) > 1:
        raise InputError("the file holds several YAML documents; use one",
                         Where(name, docs[1].start_mark.line + 1))
    return _Converter(name).convert(docs[0], Where(name, docs[0].start_mark.line + 1))


class _Converter:
    def __init__(self, name: str):
        self.name = name
        self.count = 0
        self.constructor = yaml.SafeLoader("")

    def convert(self, node: yaml.Node, where: Where) -> Node:
        self.count += 1
        if self.count > MAX_NODES:
            raise InputError(f"the file expands to more than {MAX_NODES} values "
                             "(alias expansion bomb or recursive alias?)", where)
        if isinstance(node, yaml.MappingNode):
            return self._mapping(node, where)
        if isinstance(node, yaml.SequenceNode):
            return Node([self.convert(v, where.child(i, v.start_mark.line + 1))
                         for i, v in enumerate(node.value)], where)
        return self._scalar(node, where)

    def _mapping(self, node: yaml.MappingNode, where: Where) -> Node:
        out: dict[str, Node] = {}
        lines: dict[str, int] = {}
        merged: list[Node] = []
        for knode, vnode in node.value:
            line = knode.start_mark.line + 1
            if knode.tag == "tag:yaml.org,2002:merge":
                src = self.convert(vnode, where)
                merged.extend([src] if src.is_map else [s for s in src.value if s.is_map])
                continue
            if not isinstance(knode, yaml.ScalarNode):
                raise InputError("a key must be a plain name", Where(self.name, line, where.field))
            key = str(self.constructor.construct_object(knode))
            if key in out:
                raise InputError(f'duplicate key "{key}" (first on line {lines[key]})',
                                 where.child(key, line))
            lines[key] = line
            # a block mapping or list starts on the next line; its key's line names it better
            vline = vnode.start_mark.line + 1
            if not isinstance(vnode, yaml.ScalarNode):
                vline = line
            out[key] = self.convert(vnode, where.child(key, vline))
        for src in merged:
            for k, v in src.value.items():
                if k not in out:
                    out[k], lines[k] = v, src.key_lines.get(k, src.line)
        return Node(out, where, lines)

    def _scalar(self, node: yaml.ScalarNode, where: Where) -> Node:
        value = self.constructor.construct_object(node)
        if isinstance(value, float) and not math.isfinite(value):
            raise InputError(f"must be a finite number, got {node.value}", where)
        if not isinstance(value, str | int | float | bool | type(None)):
            value = node.value  # dates and the like stay as written
        return Node(value, where, raw=node.value)
