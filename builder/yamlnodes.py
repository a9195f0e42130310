"""Safe YAML loading that remembers where every value came from.

:func:`load_yaml` reads a file with PyYAML's safe composer and turns it into
a tree of :class:`Node` objects, each knowing its file, line and dotted field
path, so that a validation error can say ``car.yaml:12: bodies.body.mass:
must be a positive mass, got "-3 kg"``.

It refuses, each with a one-line :class:`~builder.errors.InputError`:
files over 5 MB, text that is not UTF-8 or holds characters YAML does not
allow (both with line and column), YAML syntax errors, explicit tags
(``!!python/...``, ``!custom``), duplicate keys, non-finite numbers
(``.inf``, ``.nan``), numbers written with hundreds of digits, several
documents in one file, nesting deeper than :data:`MAX_DEPTH` levels,
recursive aliases (``bodies: &r [*r]``), and aliases that expand to more
than :data:`MAX_ALIAS_NODES` values (the "billion laughs" bomb). Anchors,
aliases and ``<<`` merge keys within those limits work; a large file that
uses no alias is never refused for its size below :data:`MAX_BYTES`.

The events come from libyaml's parser when PyYAML has it (an order of
magnitude faster than the pure-Python one on a file of thousands of bodies)
and are composed here, without recursion, straight into :class:`Node`
trees, so that no input can exhaust the Python stack.
"""

from __future__ import annotations

import contextlib
import difflib
import gc
import math
import os
import re
from collections.abc import Iterable, Iterator, Mapping
from types import MappingProxyType
from typing import Any

import yaml

from .errors import InputError, Where, printable, shown
from .quantities import Quantity, to_si

__all__ = ["Node", "load_yaml", "parse_yaml", "gc_paused", "MAX_BYTES", "MAX_ALIAS_NODES",
           "MAX_DEPTH", "MAX_NUMBER_CHARS"]

#: Largest file read (bytes).
MAX_BYTES = 5 * 1024 * 1024
#: Most values reached through aliases (each value of an expanded alias counts once).
MAX_ALIAS_NODES = 200_000
#: Deepest nesting of mappings and lists (an assembly file needs fewer than ten).
MAX_DEPTH = 40
#: Longest number (characters) read as a number: far more than any float's 17 digits.
MAX_NUMBER_CHARS = 100


class Node:
    """One value of the file with its place; mappings and lists hold Nodes.

    ``where`` (file, line, dotted field) of a scalar read from a file is made
    only when asked for: most values of a large file never need it.
    """

    __slots__ = ("value", "_where", "key_lines", "raw", "_up", "_key", "_line")

    def __init__(self, value: Any, where: Where, key_lines: dict[str, int] | None = None,
                 raw: str | None = None):
        self.value = value
        self._where = where
        self.key_lines = key_lines or {}
        self.raw = raw

    @property
    def where(self) -> Where:
        """File, line and dotted field path of the value."""
        w = self._where
        if w is None:
            w = self._where = self._up.child(self._key, self._line)
        return w

    # -- shape ---------------------------------------------------------
    @property
    def is_map(self) -> bool:
        return isinstance(self.value, dict)

    @property
    def is_list(self) -> bool:
        return isinstance(self.value, list)

    @property
    def line(self) -> int:
        w = self._where
        return self._line if w is None else w.line

    def error(self, message: str) -> InputError:
        """An InputError at this node (raise it)."""
        return InputError(message, self.where)

    def shown(self) -> str:
        """The value as the user wrote it, for messages (escaped, cut when long)."""
        if self.is_map:
            return "a mapping"
        if self.is_list:
            return "a list"
        if self.raw is not None:
            return shown(self.raw) if isinstance(self.value, str) else shown(self.raw)[1:-1]
        return shown(self.value)

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
                    hint = difflib.get_close_matches(key, allowed, n=1) if len(key) < 100 else []
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
        """A non-empty string without control characters (line breaks, escapes)."""
        if not isinstance(self.value, str) or not self.value.strip():
            raise self.error(f"must be {what}, got {self.shown()}")
        if not self.value.isprintable():
            if not self.value.strip().isprintable():
                raise self.error(f"must be {what} without control characters or line breaks, "
                                 f"got {self.shown()}")
            return self.value.strip()
        return self.value

    def quantity(self, dimension: str, parameters: Mapping[str, Quantity] | None = None,
                 sign: str = "any") -> float:
        """An SI float of the named dimension (see :func:`builder.quantities.to_si`)."""
        value = self.value
        cls = value.__class__
        if cls is str:
            value = self.raw if self.raw is not None else value
        elif cls is dict or cls is list:
            value = self.shown()
        try:
            return to_si(value, dimension, None, parameters, sign)
        except InputError as exc:   # the place is made only for the message
            raise InputError(exc.reason, self.where) from None

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
            raise self.error(f"must be a whole number {rng}, got {shown(v)}")
        return v

    def boolean(self) -> bool:
        if not isinstance(self.value, bool):
            raise self.error(f"must be true or false, got {self.shown()}")
        return self.value

    def choice(self, options: Iterable[str]) -> str:
        options = list(options)
        if not isinstance(self.value, str) or self.value not in options:
            hint = (difflib.get_close_matches(self.value, options, n=1)
                    if isinstance(self.value, str) and len(self.value) < 100 else [])
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
        line, column = _line_column(data, exc.start)
        raise InputError(f"not UTF-8 text: byte 0x{data[exc.start]:02x} at column {column} "
                         "cannot be read (save the file as UTF-8)", Where(name, line)) from None
    return parse_yaml(text, name)


def _line_column(text: str | bytes, index: int) -> tuple[int, int]:
    """1-based line and column of position ``index`` (characters, or bytes of UTF-8)."""
    nl = "\n" if isinstance(text, str) else b"\n"
    start = text.rfind(nl, 0, index) + 1
    head = text[start:index]
    column = len(head.decode("utf-8", "replace")) if isinstance(head, bytes) else len(head)
    return text.count(nl, 0, index) + 1, column + 1


#: Characters YAML 1.1 does not allow in a stream (PyYAML's reader refuses the same set).
_NOT_ALLOWED = re.compile("[^\x09\x0a\x0d\x20-\x7e\x85\xa0-\ud7ff\ue000-\ufffd"
                          "\U00010000-\U0010ffff]")
_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


def parse_yaml(text: str, name: str = "<text>") -> Node:
    """Parse YAML text into a :class:`Node` tree (see module docstring)."""
    if not text.strip():
        raise InputError("the file is empty", Where(name, 1))
    bad = _NOT_ALLOWED.search(text)
    if bad:
        line, column = _line_column(text, bad.start())
        raise InputError(f"not valid YAML: the character {shown(bad.group())} at column "
                         f"{column} is not allowed", Where(name, line))
    loader = _LOADER(text)
    try:
        with gc_paused():
            return _Composer(name).run(_events(loader))
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line, column = (mark.line + 1, mark.column + 1) if mark else (0, 0)
        at = f" (column {column})" if column else ""
        raise InputError(f"not valid YAML: {exc.problem or exc.context}{at}", Where(name, line)) \
            from None
    except yaml.YAMLError as exc:
        raise InputError(f"not valid YAML: {exc}", Where(name)) from None
    finally:
        loader.dispose()


@contextlib.contextmanager
def gc_paused() -> Iterator[None]:
    """Pause Python's cycle collector while a large tree of objects is built.

    A file of 10,000 bodies makes about a million small objects, none in a
    reference cycle; the collector would scan them again and again as they
    are made (half the loading time), and frees nothing. Reference counting
    still frees everything as usual.
    """
    if not gc.isenabled():
        yield
        return
    gc.disable()
    try:
        yield
    finally:
        gc.enable()


def _events(loader: Any) -> Iterator[yaml.Event]:
    check, get = loader.check_event, loader.get_event
    while check():
        yield get()


_MERGE = object()  # the pending key of a mapping is a << merge key
_TAGS = "tag:yaml.org,2002:"
_RESOLVERS = yaml.resolver.Resolver.yaml_implicit_resolvers
_SAFE = yaml.SafeLoader("")
_CONSTRUCT = {_TAGS + t: getattr(_SAFE, f"construct_yaml_{t}") for t in
              ("null", "bool", "int", "float")}


class _Scalar(Node):
    """A scalar of a mapping or list read from a file; its Where is made when asked for."""

    __slots__ = ()

    def __init__(self, value: Any, raw: str, up: Where, key: str | int, line: int):
        self.value = value
        self.raw = raw
        self._where = None
        self._up = up
        self._key = key
        self._line = line
        self.key_lines = _NO_KEYS


_NO_KEYS: Mapping[str, int] = MappingProxyType({})
_MISSING = object()


class _Frame:
    """A mapping or list being composed."""

    __slots__ = ("is_map", "items", "where", "lines", "key", "key_line", "merges", "anchor",
                 "height")

    def __init__(self, is_map: bool, where: Where, anchor: str | None):
        self.is_map = is_map
        self.items: Any = {} if is_map else []
        self.where = where
        self.lines: dict[str, int] = {}
        self.key: Any = None
        self.key_line = 0
        self.merges: list[Node] = []
        self.anchor = anchor
        self.height = 1


class _Composer:
    """Events -> Node tree, with an explicit stack (no recursion) and the limits above."""

    def __init__(self, name: str):
        self.name = name
        self.stack: list[_Frame] = []
        self.anchors: dict[str, tuple[Node, int]] = {}
        self.open_anchors: set[str] = set()
        self.expanded = 0
        self.documents = 0
        self.root: Node | None = None
        self.cache: dict[str, Any] = {}

    def run(self, events: Iterable[yaml.Event]) -> Node:
        """Compose every event; the hot path (plain keys and scalar values of mappings and
        lists, nine events in ten of a large file) is kept inline."""
        scalar_event, alias_event = yaml.ScalarEvent, yaml.AliasEvent
        starts = (yaml.MappingStartEvent, yaml.SequenceStartEvent)
        ends = (yaml.MappingEndEvent, yaml.SequenceEndEvent)
        stack, cache = self.stack, self.cache
        frame: _Frame | None = None
        for event in events:
            cls = event.__class__
            if cls is scalar_event:
                if frame is None or event.anchor is not None or event.tag is not None:
                    self._scalar(event)
                    continue
                text = event.value
                line = event.start_mark.line + 1
                if frame.is_map:
                    key = frame.key
                    if key is None:
                        key = cache.get(text) if event.implicit[0] else None
                        if key.__class__ is str and key not in frame.items and key != "<<":
                            frame.key, frame.key_line = key, line
                        else:
                            self._key(frame, text, event.implicit[0], line)
                        continue
                    if key is _MERGE:
                        self._scalar(event)
                        continue
                    value = cache.get(text, _MISSING) if event.implicit[0] else text
                    if value is _MISSING:
                        value = self._value(text, True, frame.where.child(key, line))
                    frame.items[key] = _Scalar(value, text, frame.where, key, line)
                    frame.lines[key] = frame.key_line
                    frame.key = None
                else:
                    items = frame.items
                    value = cache.get(text, _MISSING) if event.implicit[0] else text
                    if value is _MISSING:
                        value = self._value(text, True, frame.where.child(len(items), line))
                    items.append(_Scalar(value, text, frame.where, len(items), line))
            elif cls in starts:
                self._start(event)
                frame = stack[-1]
            elif cls in ends:
                self._end(event)
                frame = stack[-1] if stack else None
            elif cls is alias_event:
                self._alias(event)
            elif cls is yaml.DocumentStartEvent:
                self._document(event)
        if self.root is None:
            raise InputError("the file holds no YAML document", Where(self.name, 1))
        return self.root

    # -- events ----------------------------------------------------------
    def _document(self, event: yaml.Event) -> None:
        self.documents += 1
        if self.documents > 1:
            raise InputError("the file holds several YAML documents; use one",
                             Where(self.name, event.start_mark.line + 1))

    def _scalar(self, event: yaml.ScalarEvent) -> None:
        line = event.start_mark.line + 1
        if event.tag is not None:
            self._refuse_tag(event, line)
        frame = self.stack[-1] if self.stack else None
        if frame is not None and frame.is_map and frame.key is None:
            self._key(frame, event.value, event.implicit[0], line)
            if event.anchor is not None:
                self.anchors[event.anchor] = (Node(event.value, Where(self.name, line),
                                                   raw=event.value), 0)
            return
        where = self._place(line, False)
        value = self._value(event.value, event.implicit[0], where)
        self._add(Node(value, where, raw=event.value), 0, event.anchor)

    def _start(self, event: yaml.CollectionStartEvent) -> None:
        line = event.start_mark.line + 1
        if event.tag is not None:
            self._refuse_tag(event, line)
        frame = self.stack[-1] if self.stack else None
        if frame is not None and frame.is_map and frame.key is None:
            raise InputError("a key must be a plain name, not a mapping or list",
                             Where(self.name, line, frame.where.field))
        if len(self.stack) >= MAX_DEPTH:
            raise self._too_deep(line)
        if event.anchor is not None:
            self.open_anchors.add(event.anchor)
        is_map = isinstance(event, yaml.MappingStartEvent)
        self.stack.append(_Frame(is_map, self._place(line, True), event.anchor))

    def _end(self, event: yaml.CollectionEndEvent) -> None:
        frame = self.stack.pop()
        if frame.is_map:
            for source in frame.merges:
                self._merge(frame, source)
            node = Node(frame.items, frame.where, frame.lines)
        else:
            node = Node(frame.items, frame.where)
        if frame.anchor is not None:
            self.open_anchors.discard(frame.anchor)
        self._add(node, frame.height, frame.anchor)

    def _alias(self, event: yaml.AliasEvent) -> None:
        line = event.start_mark.line + 1
        name = event.anchor
        field = self.stack[-1].where.field if self.stack else ""
        if name in self.open_anchors:
            raise InputError(f"the alias *{printable(name)} is used inside the value it names "
                             "(a recursive alias)", Where(self.name, line, field))
        if name not in self.anchors:
            raise InputError(f"unknown alias *{printable(name)} (no anchor &{printable(name)} "
                             "before it)", Where(self.name, line, field))
        node, height = self.anchors[name]
        frame = self.stack[-1] if self.stack else None
        if frame is not None and frame.is_map and frame.key is None:
            if node.is_map or node.is_list or node.raw is None:
                raise InputError("a key must be a plain name, not a mapping or list",
                                 Where(self.name, line, field))
            self._key(frame, node.raw, False, line)
            return
        if len(self.stack) + height > MAX_DEPTH:
            raise self._too_deep(line)
        where = self._place(line, node.is_map or node.is_list)
        self._add(self._copy(node, where), height, None)

    # -- pieces ----------------------------------------------------------
    def _refuse_tag(self, event: yaml.NodeEvent, line: int) -> None:
        tag = getattr(event, "tag", None)
        if tag is not None:
            tag = "!!" + tag[len(_TAGS):] if tag.startswith(_TAGS) else tag
            raise InputError(f"YAML tags are not allowed, got {shown(tag)[1:-1]}",
                             Where(self.name, line))

    def _too_deep(self, line: int) -> InputError:
        field = self.stack[-1].where.field if self.stack else ""
        return InputError(f"the file nests mappings and lists more than {MAX_DEPTH} levels "
                          "deep", Where(self.name, line, field))

    def _place(self, line: int, collection: bool) -> Where:
        """Where the next value of the innermost open mapping or list goes."""
        if not self.stack:
            return Where(self.name, line)
        frame = self.stack[-1]
        if not frame.is_map:
            return frame.where.child(len(frame.items), line)
        if frame.key is _MERGE:
            return frame.where
        # a block mapping or list starts on the next line; its key's line names it better
        return frame.where.child(frame.key, frame.key_line if collection else line)

    def _key(self, frame: _Frame, text: str, plain: bool, line: int) -> None:
        if plain and text == "<<":
            frame.key, frame.key_line = _MERGE, line
            return
        key = self.cache.get(text) if plain else text
        if key is None:
            key = self._value(text, plain, Where(self.name, line, frame.where.field))
        key = key if isinstance(key, str) else str(key)
        if key in frame.items:
            raise InputError(f"duplicate key {shown(key)} (first on line {frame.lines[key]})",
                             frame.where.child(key, line))
        frame.key, frame.key_line = key, line

    def _add(self, node: Node, height: int, anchor: str | None) -> None:
        if anchor is not None:
            self.anchors[anchor] = (node, height)
        if not self.stack:
            self.root = node
            return
        frame = self.stack[-1]
        if height >= frame.height:
            frame.height = height + 1
        if not frame.is_map:
            frame.items.append(node)
        elif frame.key is _MERGE:
            frame.merges.append(node)
            frame.key = None
        else:
            frame.items[frame.key] = node
            frame.lines[frame.key] = frame.key_line
            frame.key = None

    def _merge(self, frame: _Frame, source: Node) -> None:
        """Keys of a ``<<`` merge source the mapping does not set itself."""
        sources = [source] if source.is_map else source.value if source.is_list else None
        if sources is None or not all(s.is_map for s in sources):
            raise InputError("a << merge key takes a mapping or a list of mappings",
                             source.where)
        for src in sources:
            for key, value in src.value.items():
                if key in frame.items:
                    continue
                line = src.key_lines.get(key, src.line)
                where = frame.where.child(key, value.where.line)
                if value.where.field != where.field:
                    value = self._copy(value, where)
                frame.items[key], frame.lines[key] = value, line

    def _copy(self, node: Node, where: Where) -> Node:
        """A node reached through an alias, placed at ``where`` (counted against the limit)."""
        self.expanded += 1
        if self.expanded > MAX_ALIAS_NODES:
            raise InputError(f"aliases expand to more than {MAX_ALIAS_NODES} values (an alias "
                             "expansion bomb?)", where)
        if node.is_map:
            return Node({k: self._copy(v, where.child(k, v.where.line))
                         for k, v in node.value.items()}, where, dict(node.key_lines))
        if node.is_list:
            return Node([self._copy(v, where.child(i, v.where.line))
                         for i, v in enumerate(node.value)], where)
        return Node(node.value, where, raw=node.raw)

    def _value(self, text: str, plain: bool, where: Where) -> Any:
        """A scalar as Python: plain scalars resolved as YAML 1.1 does (null, bool, int,
        float; dates and the like stay as written); quoted ones are strings."""
        if not plain:
            return text
        try:
            return self.cache[text]
        except KeyError:
            pass
        value: Any = text
        for tag, pattern in _RESOLVERS.get(text[:1], ()):
            if pattern.match(text):
                if tag in _CONSTRUCT:
                    value = self._construct(tag, text, where)
                break
        self.cache[text] = value
        return value

    @staticmethod
    def _construct(tag: str, text: str, where: Where) -> Any:
        if tag.endswith(("int", "float")) and len(text) > MAX_NUMBER_CHARS:
            raise InputError(f"a number written with {len(text)} characters is beyond any "
                             f"physical quantity ({MAX_NUMBER_CHARS} at most)", where)
        value = _CONSTRUCT[tag](yaml.ScalarNode(tag, text))
        if isinstance(value, float) and not math.isfinite(value):
            raise InputError(f"must be a finite number, got {shown(text)[1:-1]}", where)
        return value
