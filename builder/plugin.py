"""Plugins: sub-models added to an Assembly, found through entry points.

A plugin is an object with

- ``name`` (str) and ``summary`` (one line);
- ``parameters``: a sequence of declarations, each with ``name``,
  ``dimension`` (a name from :data:`builder.quantities.DIMENSIONS`, or a kind
  such as ``"name"``, ``"integer"``, ``"choice"``, ``"points"``, ``"table"``),
  ``default`` and ``help`` (see :class:`Parameter`);
- ``validate(fields, name, parameters, where) -> spec``: check a file's
  ``with:`` block (a mapping of :class:`~builder.yamlnodes.Node`) and return
  whatever the plugin needs later; errors are
  :class:`~builder.errors.InputError` one-liners;
- ``apply(assembly, spec) -> Assembly``: data in, graph out;

and optionally

- ``analyse(model, **options)``: its own analyses, a result with ``table()``
  and ``to_dict()``, for ``lumpgraph plugin NAME FILE``;
- ``tables(assembly, model, **options) -> list[(title, rows)]`` for the report;
- ``configure_cli(parser)``: extra options of ``lumpgraph plugin NAME``;
- ``label_units(assembly, spec) -> list of LabelUnit``: the bodies it added,
  grouped and named in words, each describing its own motion in a mode
  (see :mod:`builder.analysis.labels`); an older plugin's
  ``label_mode(model, shape, energy) -> str | None`` is still asked for a
  mode's whole label when it has no ``label_units``.
- ``check_summary(model, eigenvalues, shapes) -> list[dict]``: figures for
  ``lumpgraph check``, each a dict with a one-line ``"text"`` and its values
  (SI, JSON-ready); it gets the lowest modes the check computed (at least
  :data:`builder.analysis.checks.PLUGIN_MODES` of them) and may solve more.

Plugins are registered in the entry-point group ``lumpgraph.plugins``; the
built-in ones in ``plugins/`` are registered the same way in this project's
pyproject.toml, so a third-party package adds one with::

    [project.entry-points."lumpgraph.plugins"]
    my_mount = "my_package.mount:PLUGIN"

A plugin that fails to import or declares itself badly is reported by name
(:func:`installed_plugins` returns the problems) and the others keep working.
The core checks a ``with:`` block's keys against the declaration (unknown
keys are errors with a "did you mean" hint; values of a declared physical
dimension must have it) before the plugin's own ``validate`` runs.
"""

from __future__ import annotations

import difflib
import importlib.metadata
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from .assembly import Assembly
from .errors import InputError, Where
from .quantities import DIMENSIONS, Quantity
from .yamlnodes import Node

__all__ = ["ENTRY_POINT_GROUP", "Parameter", "PluginUse", "Table", "installed_plugins",
           "get_plugin", "validate_plugin_uses", "apply_plugins", "plugin_tables",
           "declaration_problem", "clear_cache"]

ENTRY_POINT_GROUP = "lumpgraph.plugins"
_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


@dataclass(frozen=True)
class Parameter:
    """A plugin parameter: name, unit dimension or kind, SI default (None: none), help.

    ``unit`` is the unit the plugin states the parameter in (``"rpm"`` for an
    engine speed); ``lumpgraph plugins`` shows the default in it, or, when it
    is empty, in the engineering unit of the dimension
    (:data:`builder.formatting.ENGINEERING_UNITS`). Values are SI either way.

    A parameter of kind ``"records"`` is a list of mappings whose own keys are
    declared in ``fields`` (Parameters again), e.g. the mounts of a powertrain;
    the core refuses unknown keys of every record and checks the dimension of
    its scalar quantities, like the top-level ones.
    """

    name: str
    dimension: str
    default: Any = None
    help: str = ""
    fields: tuple[Parameter, ...] = ()
    unit: str = ""


@dataclass(frozen=True, eq=False)
class PluginUse:
    """One entry of a file's ``plugins:`` list, validated."""

    use: str
    name: str
    spec: Any
    where: Where
    plugin: Any = field(repr=False, default=None)


@dataclass(frozen=True)
class Table:
    """A small table a plugin contributes: title, column names, rows, notes."""

    title: str
    columns: tuple[str, ...]
    rows: tuple[tuple[Any, ...], ...]
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {"title": self.title, "columns": list(self.columns),
                "rows": [list(r) for r in self.rows], "notes": list(self.notes)}

    def text(self) -> str:
        """Title, the table (columns sized by content, text left, numbers right) and notes."""
        from .formatting import text_table
        lines = [self.title, text_table(self.columns, self.rows, spec=".4g")]
        lines.extend(f"note: {n}" for n in self.notes)
        return "\n".join(lines)


def declaration_problem(obj: Any) -> str:
    """Empty if ``obj`` declares itself as a plugin correctly, else the reason."""
    name = getattr(obj, "name", None)
    if not isinstance(name, str) or not _NAME.match(name):
        return "has no valid name"
    for attr in ("validate", "apply"):
        if not callable(getattr(obj, attr, None)):
            return f"has no {attr}() method"
    params = getattr(obj, "parameters", None)
    if params is None:
        return "declares no parameters"
    seen = set()
    for p in params:
        for attr in ("name", "dimension", "default", "help"):
            if not hasattr(p, attr):
                return f"parameter {getattr(p, 'name', p)!r} has no {attr}"
        if p.name in seen:
            return f"declares parameter {p.name!r} twice"
        seen.add(p.name)
        sub = getattr(p, "fields", ()) or ()
        if sub:
            inner = set()
            for f in sub:
                if not all(hasattr(f, a) for a in ("name", "dimension", "default", "help")):
                    return f"parameter {p.name!r} declares a record field badly"
                if f.name in inner:
                    return f"parameter {p.name!r} declares record field {f.name!r} twice"
                inner.add(f.name)
    return ""


_CACHE: tuple[dict[str, Any], list[str]] | None = None


def clear_cache() -> None:
    """Forget discovered plugins (after installing one at run time, in tests)."""
    global _CACHE
    _CACHE = None


def installed_plugins() -> tuple[dict[str, Any], list[str]]:
    """(plugins by name, problems) from the entry-point group; broken ones are skipped."""
    global _CACHE
    if _CACHE is not None:
        return _CACHE
    found: dict[str, Any] = {}
    problems: list[str] = []
    for ep in sorted(importlib.metadata.entry_points(group=ENTRY_POINT_GROUP),
                     key=lambda e: e.name):
        try:
            obj = ep.load()
            if isinstance(obj, type):
                obj = obj()
        except Exception as exc:  # a third-party plugin may fail in any way
            problems.append(f'plugin "{ep.name}" ({ep.value}) cannot be loaded: '
                            f"{type(exc).__name__}: {exc}")
            continue
        reason = declaration_problem(obj)
        if reason:
            problems.append(f'plugin "{ep.name}" ({ep.value}) {reason}')
            continue
        if obj.name in found:
            problems.append(f'plugin "{obj.name}" is registered twice; the first is used')
            continue
        found[obj.name] = obj
    _CACHE = (found, problems)
    return _CACHE


def get_plugin(name: str, where: Where | None = None) -> Any:
    """The installed plugin called ``name``; InputError listing the installed ones."""
    plugins, problems = installed_plugins()
    if name in plugins:
        return plugins[name]
    broken = [p for p in problems if p.startswith(f'plugin "{name}"')]
    if broken:
        raise InputError(f"{broken[0]}", where)
    hint = difflib.get_close_matches(name, list(plugins), n=1)
    tip = f' (did you mean "{hint[0]}"?)' if hint else ""
    raise InputError(f'unknown plugin "{name}"{tip}; installed: '
                     f"{', '.join(plugins) or 'none'}", where)


def _check_fields(plugin: Any, node: Node | None, parameters: Mapping[str, Quantity]
                  ) -> dict[str, Node]:
    declared = {p.name: p for p in plugin.parameters}
    if node is None:
        return {}
    fields = node.mapping(declared, what="a mapping of the plugin's parameters")
    for key, value in fields.items():
        _check_value(declared[key], value, parameters)
    return fields


def _check_value(p: Any, value: Node, parameters: Mapping[str, Quantity]) -> None:
    """Dimension of a scalar quantity; keys and fields of each record of a records list."""
    dim = p.dimension
    sub = getattr(p, "fields", ()) or ()
    if sub:
        declared = {f.name: f for f in sub}
        for item in value.items_list(f"a list of records ({', '.join(declared)})"):
            for key, v in item.mapping(declared, what="a record {"
                                       + ", ".join(declared) + "}").items():
                _check_value(declared[key], v, parameters)
    elif dim in DIMENSIONS and not (value.is_map or value.is_list):
        value.quantity(dim, parameters)


def validate_plugin_uses(node: Node, parameters: Mapping[str, Quantity]) -> list[PluginUse]:
    """Check a file's ``plugins:`` list (every block, before anything runs)."""
    uses: list[PluginUse] = []
    names: set[str] = set()
    for item in node.items_list("a list of plugin blocks (- use: NAME ...)"):
        f = item.mapping(("use", "name", "with"), required=("use",))
        use = f["use"].text("a plugin name")
        plugin = get_plugin(use, f["use"].where)
        name = f["name"].text("a name") if "name" in f else use
        if not _NAME.match(name):
            raise f["name"].error(f'must be letters, digits and "_", got "{name}"')
        if name in names:
            raise f["name"].error(f'two plugin blocks are named "{name}"')
        names.add(name)
        fields = _check_fields(plugin, f.get("with"), parameters)
        where = f["with"].where if "with" in f else item.where
        spec = plugin.validate(fields, name, parameters, where)
        uses.append(PluginUse(use, name, spec, item.where, plugin))
    return uses


def apply_plugins(assembly: Assembly, uses: Sequence[PluginUse]) -> Assembly:
    """Run the plugins in the order listed, each turning the graph into a new one."""
    for u in uses:
        try:
            out = u.plugin.apply(assembly, u.spec)
        except InputError as exc:
            if exc.where.file:
                raise
            raise InputError(exc.reason, _in_block(u.where, exc.where)) from None
        if not isinstance(out, Assembly):
            raise InputError(f'plugin "{u.use}" returned {type(out).__name__}, '
                             "not an Assembly", u.where)
        assembly = out
    return assembly.replace(plugins=tuple(uses))


def _in_block(block: Where, inner: Where) -> Where:
    """The place of a plugin's error that names no file: its block in the file (a plugin's
    fields are those of its ``with:`` mapping)."""
    field = f"{block.field}.with.{inner.field}" if inner.field else block.field
    return Where(block.file, block.line, field)


def plugin_tables(assembly: Assembly, model: Any, **options: Any) -> list[tuple[str, str, Any]]:
    """(plugin name, title, rows or Table) of every applied plugin that offers tables."""
    out: list[tuple[str, str, Any]] = []
    seen: set[str] = set()
    for u in assembly.plugins:
        plugin = getattr(u, "plugin", None)
        if plugin is None or u.use in seen or not callable(getattr(plugin, "tables", None)):
            continue
        seen.add(u.use)
        for title, rows in plugin.tables(assembly, model, **options):
            out.append((u.use, title, rows))
    return out
