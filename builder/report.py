"""The review report: one self-contained HTML page about a model.

:func:`report_html` gathers, for an assembly and its linear model:

1. the model summary (bodies, links, road points, sensors, plugins) and the
   model checks (:func:`builder.analysis.checks.check_model`);
2. the modes table (frequency, damping, label, kinetic-energy shares);
3. the ladder table (:func:`builder.analysis.ladder.compute_ladder`);
4. the review sheet of the lowest modes (:mod:`builder.render`);
5. where the file has road points and sensors: frequency responses from the
   road and the ride figures on an ISO 8608 road (:mod:`builder.analysis.ride`);
6. the depths judged on those ride figures
   (:mod:`builder.analysis.response_ladder`: errors against the full model, 5 %
   tolerance, the recommended depth; with no depths in the file, the search of
   ``ladder --propose``);
7. each plugin's own tables, when the plugin module offers them;

and the caution text. Every image is a PNG embedded as a ``data:`` URI, so
the page is one file that can be mailed or archived. A section whose
analysis is not available, or fails on this model, says so in one line
instead of stopping the report.

>>> from builder.load import load_text                # doctest: +SKIP
>>> write_report(assembly, model, "review/")           # doctest: +SKIP
PosixPath('review/report.html')
"""

from __future__ import annotations

import base64
import html
import io
import math
import os
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import InputError, LumpgraphError, Where
from .formatting import count, percent

if TYPE_CHECKING:
    from .assembly import Assembly
    from .linear import LinearModel

__all__ = ["CAUTION", "report_html", "write_report", "data_uri", "REPORT_NAME"]

REPORT_NAME = "report.html"

CAUTION = ("These figures are screening estimates from a linear lumped-parameter model "
           "with the data given in the file. Exposure limits and the acceptance of a "
           "design follow ISO 2631-1, local regulation and qualified engineering judgement.")

_STYLE = """
body { font-family: "DejaVu Sans", Helvetica, Arial, sans-serif; color: #23272e;
       background: #f6f3ec; margin: 0; }
main { max-width: 1180px; margin: 0 auto; padding: 1.2em 1.6em 3em; }
h1 { font-size: 1.6em; margin: 0.4em 0 0.1em; color: #2c3e57; }
h2 { font-size: 1.2em; margin-top: 1.8em; border-bottom: 2px solid #c9553a;
     padding-bottom: 0.2em; color: #2c3e57; }
h3 { font-size: 1.0em; margin-bottom: 0.3em; color: #4a5568; }
p.sub { color: #5d636b; margin-top: 0; }
table { border-collapse: collapse; margin: 0.4em 0 1em; font-size: 0.88em;
        background: #fffdf8; }
th, td { border: 1px solid #d6d9cf; padding: 0.25em 0.6em; text-align: right; }
th { background: #e7e3d8; }
td.l, th.l { text-align: left; }
img { max-width: 100%; border: 1px solid #bcc1b5; background: white; }
.caution { background: #fbeee4; border-left: 5px solid #c9553a; padding: 0.7em 1em;
           margin: 1.5em 0; }
.note { color: #6b5d4d; font-style: italic; }
.bar { display: inline-block; height: 0.7em; background: #3a8a8c; vertical-align: middle; }
ul.warn li { color: #8a3b22; }
pre { background: #fffdf8; border: 1px solid #d6d9cf; padding: 0.6em; overflow-x: auto; }
"""


# ---------------------------------------------------------------- small helpers

def _e(value: Any) -> str:
    return html.escape(str(value), quote=True)


def data_uri(png: bytes) -> str:
    """A PNG as a ``data:image/png;base64,...`` URI."""
    return "data:image/png;base64," + base64.b64encode(png).decode("ascii")


def _img(png: bytes, alt: str) -> str:
    return f'<img src="{data_uri(png)}" alt="{_e(alt)}">'


def _num(value: Any, digits: int = 4) -> str:
    if value is None:
        return "-"
    try:
        v = float(value)
    except (TypeError, ValueError):
        return _e(value)
    if not math.isfinite(v):
        return "-"
    return f"{v:.{digits}g}"


#: Longest table of bodies, links, road points or sensors before it is cut.
MAX_ROWS = 60


def _table(header: Sequence[str], rows: Sequence[Sequence[Any]], left: Sequence[int] = (0,),
           limit: int | None = None) -> str:
    """An HTML table; ``left`` lists the columns aligned left (text).

    With ``limit``, rows past it are left out and a last row says how many.
    """
    rows = list(rows)
    if limit is not None and len(rows) > limit:
        cut = len(rows) - limit
        rows = rows[:limit] + [[f"... and {cut} more"] + [""] * (len(header) - 1)]
    def cell(tag: str, k: int, v: Any) -> str:
        cls = ' class="l"' if k in left else ""
        return f"<{tag}{cls}>{v}</{tag}>"
    head = "".join(cell("th", k, _e(h)) for k, h in enumerate(header))
    body = "".join("<tr>" + "".join(cell("td", k, v) for k, v in enumerate(r)) + "</tr>"
                   for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _figure_png(fig: Any) -> bytes:
    import matplotlib.pyplot as plt

    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=100)
    plt.close(fig)
    return buffer.getvalue()


def _section(title: str, build: Callable[[], str], key: str = "") -> str:
    """A section; an analysis that is missing or fails leaves a one-line note."""
    try:
        content = build()
    except ImportError as exc:
        content = f'<p class="note">Not available in this installation ({_e(exc)}).</p>'
    except (LumpgraphError, ValueError, np.linalg.LinAlgError, RuntimeError) as exc:
        content = f'<p class="note">Not computed for this model: {_e(exc)}</p>'
    if not content:
        return ""
    ident = f' id="{_e(key)}"' if key else ""
    return f"<section{ident}><h2>{_e(title)}</h2>\n{content}\n</section>\n"


# ---------------------------------------------------------------- sections

def _summary(assembly: Any, model: Any) -> str:
    bodies = [[_e(b.name), _num(b.mass), _mm(b.cg), _e(" ".join(b.dofs)),
               _e((b.shape or {}).get("kind", "equivalent box") if b.shape else "equivalent box")]
              for b in assembly.bodies.values()]
    out = [f"<p>{count(len(assembly.bodies), 'body')}, {count(len(assembly.links), 'link')}, "
           f"{count(len(assembly.road), 'road point')}, "
           f"{count(len(assembly.sensors), 'sensor')}; model analysed: "
           f"<b>{_e(model.name)}</b> with {count(len(model.dofs), 'DOF')}.</p>",
           "<h3>Bodies</h3>",
           _table(["body", "mass (kg)", "cg (mm)", "DOFs", "drawn as"], bodies, left=(0, 3, 4),
                  limit=MAX_ROWS)]
    links = []
    for link in assembly.links.values():
        links.append([_e(link.name), _e(link.type), _e(link.a.node), _e(link.b.node),
                      _e(_props_text(link.props))])
    if links:
        out += ["<h3>Links</h3>", _table(["link", "type", "end a", "end b", "properties"],
                                         links, left=(0, 1, 2, 3, 4), limit=MAX_ROWS)]
    if assembly.road:
        out += ["<h3>Road points</h3>",
                _table(["road point", "at (mm)"],
                       [[_e(r.name), _mm(r.at)] for r in assembly.road.values()],
                       limit=MAX_ROWS)]
    if assembly.sensors:
        out += ["<h3>Sensors</h3>",
                _table(["sensor", "measures", "on"],
                       [[_e(s.name), _e(s.measure), _e(s.target)]
                        for s in assembly.sensors.values()], left=(0, 1, 2), limit=MAX_ROWS)]
    if assembly.plugins:
        out += ["<h3>Plugins applied</h3>",
                _table(["plugin", "named"], [[_e(_field(p, "use") or _plugin_name(p)),
                                              _e(_field(p, "name"))] for p in assembly.plugins],
                       left=(0, 1))]
    return "\n".join(out)


#: How each link property prints: its unit for translations and for rotations.
_PROP_UNITS = {
    "stiffness": ("kN/m", "kN m/rad"), "damping": ("N s/m", "N m s/rad"),
    "EA": ("MN", "MN"), "EIy": ("MN m^2", "MN m^2"), "EIz": ("MN m^2", "MN m^2"),
    "GJ": ("MN m^2", "MN m^2"), "shear_y": ("MN", "MN"), "shear_z": ("MN", "MN"),
}


def _eng(value: float, unit: str) -> str:
    """``value`` (SI) in ``unit``, three significant figures, never an exponent."""
    from .formatting import in_unit

    v = in_unit(value, unit)
    digits = max(0, 2 - int(np.floor(np.log10(abs(v))))) if v else 0
    return f"{v:.{digits}f} {unit}"

_COMPONENTS = ("x", "y", "z", "rx", "ry", "rz")


def _props_text(props: dict[str, Any]) -> str:
    """A link's properties in engineering units (kN/m, N s/m, kN m/rad, MN, MN m^2)."""
    parts = []
    for key, value in props.items():
        if key in ("frame", "axis", "z_axis") or value is None:
            continue
        units = _PROP_UNITS.get(key)
        if isinstance(value, int | float) and not isinstance(value, bool):
            if units is not None and (float(value) != 0.0 or key == "stiffness"):
                parts.append(f"{key} {_eng(float(value), units[0])}")
            elif units is None and float(value) != 0.0:
                parts.append(f"{key} {float(value):.3g}")
        elif isinstance(value, np.ndarray) and value.size == 6 and units is not None:
            entries = [f"{c} {_eng(float(v), units[k >= 3])}"
                       for k, (c, v) in enumerate(zip(_COMPONENTS, value.ravel(), strict=True))
                       if float(v) != 0.0]
            if entries:
                parts.append(f"{key} " + ", ".join(entries))
        elif isinstance(value, np.ndarray) and value.size <= 6:
            parts.append(f"{key} " + " ".join(f"{float(x):.3g}" for x in value.ravel()))
        elif isinstance(value, dict) and all(isinstance(v, int | float) for v in value.values()):
            parts.append(f"{key} " + " ".join(f"{k}={float(v):.3g}" for k, v in value.items()))
    return "; ".join(parts)


def _mm(v: Any) -> str:
    """A point (m) in mm."""
    return "[" + ", ".join(f"{1000 * float(x):.0f}" for x in np.asarray(v).ravel()) + "]"


def _plugin_name(spec: Any) -> str:
    return _field(spec, "name") or _field(spec, "use") or str(spec)


def _checks(model: Any) -> str:
    from .analysis.checks import check_model
    from .reduce import full_model

    checks = check_model(full_model(model))
    d = checks.to_dict()
    inertia = np.asarray(checks.inertia)
    rows = [
        ["total mass", f"{checks.total_mass:.2f} kg" + "".join(
            f"; {part} ({checks.directional_mass[part]:.1f} kg) counted once, in "
            f"{', '.join(holders)}" for part, holders in checks.directional_parts.items())],
        ["combined cg", _mm(checks.cg) + " mm"],
        ["inertia about cg", f"xx {inertia[0, 0]:.1f}, yy {inertia[1, 1]:.1f}, "
                             f"zz {inertia[2, 2]:.1f} kg m^2"],
        ["DOFs (full model)", str(checks.dof_count)],
        ["unconnected bodies", ", ".join(checks.unconnected) or "none"],
        ["zero-frequency modes", f"{checks.zero_modes}"
         + (f" ({checks.zero_mode_note})" if checks.zero_mode_note else "")],
        ["symmetry |A - A^T| / |A|", ", ".join(f"{k} {v:.1e}"
                                               for k, v in checks.asymmetry.items())],
        ["overall", "passed" if checks.ok else "NEEDS ATTENTION"],
    ]
    out = [_table(["check", "result"], [[_e(a), _e(b)] for a, b in rows], left=(0, 1))]
    if checks.corners is not None:
        from .analysis.corners import WHEEL_RATE_SOURCE
        from .linear import GRAVITY
        corners = [[_e(c.road), _e(c.axle), _e(c.link), _num(c.load), _num(c.load / GRAVITY),
                    _num(c.tyre_rate / 1e3), _num(None if c.wheel_rate is None
                                                  else c.wheel_rate / 1e3),
                    _num(None if c.ride_rate is None else c.ride_rate / 1e3)]
                   for c in checks.corners.corners]
        axles = [[_e(a.name), _num(a.x), _num(a.load), _num(a.load / GRAVITY),
                  _e(percent(a.share))] for a in checks.corners.axles]
        out += ["<h3>Static loads under 1 g and ride rates</h3>",
                _table(["road point", "axle", "link", "load (N)", "load (kg)", "tyre (kN/m)",
                        "wheel (kN/m)", "ride (kN/m)"], corners, left=(0, 1, 2),
                       limit=MAX_ROWS),
                _table(["axle", "x (m)", "load (N)", "load (kg)", "share"], axles,
                       limit=MAX_ROWS),
                f'<p class="note">{_e(WHEEL_RATE_SOURCE)}</p>']
    out += [f"<p>{_e(s['text'])}</p>" for s in checks.plugin_summaries if s.get("text")]
    if checks.static:
        static = [[_e(s["link"]), _e(s["component"]),
                   _num(1000 * s["deflection"]) + (" mm" if s["unit"] == "m" else " mrad"),
                   _num(s["force"]), _num(s["implied_frequency_hz"], 3)]
                  for s in d["static_deflection"]]
        out += ["<h3>Static deflection under 1 g (springs: compression positive)</h3>",
                _table(["link", "component", "deflection", "force (N or N m)",
                        "implied frequency (Hz)"], static, left=(0, 1))]
    out += [f'<p class="note">warning: {_e(w)}</p>' for w in checks.warnings]
    return "\n".join(out)


def _energy_text(energy: dict[str, float], limit: float = 0.05) -> str:
    shares = sorted(energy.items(), key=lambda kv: -abs(kv[1]))
    parts = [f"{_e(k)} {percent(v, 0)}" for k, v in shares if abs(v) >= limit][:5]
    return ", ".join(parts) or "-"


def _modes(modes: Any) -> str:
    rows = []
    for m in modes.modes:
        top = max((abs(v) for v in m.energy.values()), default=0.0)
        bar = f'<span class="bar" style="width:{int(round(60 * top))}px"></span>'
        rows.append([str(m.number), _num(m.frequency_hz), _num(m.damping_ratio, 3),
                     _num(getattr(m, "damped_frequency_hz", None)), _e(m.label),
                     f"{bar} {_energy_text(m.energy)}"])
    notes = "".join(f'<p class="note">{_e(n)}</p>' for n in getattr(modes, "notes", ()))
    return (_table(["mode", "f (Hz)", "damping ratio", "damped f (Hz)", "label",
                    "kinetic energy shares (largest first)"], rows, left=(4, 5)) + notes)


def _ladder(model: Any) -> str:
    from .analysis.ladder import compute_ladder
    from .reduce import full_model

    ladder = compute_ladder(full_model(model))
    out = []
    if ladder.proposed:
        out.append('<p class="note">The file has no depths: lumpgraph proposed these.</p>')
    for rung in ladder.rungs:
        rows = []
        for m, k, c, e in zip(rung.modes.modes, rung.match, rung.mac, rung.error, strict=True):
            ff = ladder.full.modes[k - 1].frequency_hz if k else None
            rows.append([str(m.number), _num(m.frequency_hz), str(k or "-"), _num(ff),
                         f"{c:.3f}", percent(e, 2, signed=True), _e(m.label)])
        out += [f"<h3>Depth {_e(rung.depth)}: {count(len(rung.dofs), 'DOF')} "
                f"({_e(', '.join(rung.dofs))})</h3>",
                _table(["mode", "f (Hz)", "full mode", "full f (Hz)", "MAC", "error", "label"],
                       rows, left=(6,))]
    return "\n".join(out)


def _response_ladder(model: Any, road_class: str, speed_m_s: float) -> str:
    """The depths judged on the ride figures of the report's road (the file's depths;
    with none, the search of ``ladder --propose``), 5 % tolerance."""
    if not model.inputs or not model.sensors:
        return ""
    from .analysis.response_ladder import DEFAULT_TOLERANCE, Question, response_ladder
    from .analysis.ride import DEFAULT_BAND
    from .reduce import full_model

    full = full_model(model)
    question = Question(ride=(road_class, speed_m_s, "coherent", DEFAULT_BAND))
    if full.assembly is not None and full.assembly.depths:
        result = response_ladder(full, question, tolerance=DEFAULT_TOLERANCE)
    else:
        from .analysis.propose import search_depths

        result = search_depths(full, question, DEFAULT_TOLERANCE)
    return (f"<pre>{_e(result.table())}</pre>"
            + _img(_figure_png(result.plot()), "error of each depth against its DOF count"))


def _sheet(assembly: Any, model: Any, modes: Any, count: int, scene: Any = None) -> str:
    from .render import build_scene, encode_png, expanded_modes, render_sheet

    dofs, drawn = expanded_modes(model, modes)
    if not any(float(m.frequency_hz or 0.0) > 0 for m in drawn):
        return '<p class="note">No vibration modes to draw (all modes are rigid).</p>'
    image = render_sheet(scene if scene is not None else build_scene(assembly), dofs, drawn,
                         count)
    return (_img(encode_png(image), "review sheet of the lowest modes")
            + '<p class="note">Each part pale at rest and deep where it moves most; rings: '
              "the path of each moving cg in one cycle; pale shadow: the rest position. "
              "Views: side for pitch, front for roll, from ahead and above otherwise.</p>")


def _frf(model: Any) -> str:
    if not model.inputs or not model.sensors:
        return ""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    f = np.geomspace(0.5, 50.0, 400)
    peaks = ""
    try:
        from .analysis.frf import frequency_response
    except ImportError:
        from .analysis.ride import road_frequency_response

        H = road_frequency_response(model, f)       # nf x ns x nr
    else:
        response = frequency_response(model, f)
        H = np.asarray(response.H)
        rows = [[_e(p["input"]), _e(p["sensor"]), _num(p["peak"]), _num(p["frequency_hz"], 3),
                 _e(p["unit"])] for p in response.peaks()]
        peaks = ("<h3>Peak of each response</h3>"
                 + _table(["road input", "sensor", "peak |H|", "at (Hz)", "unit"], rows,
                          left=(0, 1, 4), limit=MAX_ROWS))
    combined = np.abs(H.sum(axis=2))                # every road point in phase
    sensor_units = list(getattr(model, "sensor_units", ()) or ["-"] * len(model.sensors))
    units = list(dict.fromkeys(sensor_units))
    fig, axes = plt.subplots(len(units), 1, figsize=(8.5, 2.6 * len(units) + 0.6),
                             squeeze=False, sharex=True)
    from .plots import log_floor

    for ax, unit in zip(axes[:, 0], units, strict=True):
        columns = [j for j in range(len(model.sensors)) if sensor_units[j] == unit]
        floor = log_floor(*(combined[:, j] for j in columns))
        for j in columns:
            ax.loglog(f, np.maximum(combined[:, j], floor), label=model.sensors[j])
        ax.set_ylim(bottom=floor)
        ax.set_ylabel(f"|H| ({unit} per m)")
        ax.grid(True, which="both", alpha=0.3)
        ax.legend(fontsize=7, loc="best")
    axes[-1, 0].set_xlabel("frequency (Hz)")
    fig.suptitle(f"{model.name}: response to a unit road displacement at every road point "
                 "in phase", fontsize=10)
    fig.tight_layout()
    return _img(_figure_png(fig), "frequency responses from the road") + peaks


def _ride(model: Any, road_class: str, speed_m_s: float, result: Any = None) -> str:
    if not model.inputs or not model.sensors:
        return ""
    if result is None:
        from .analysis.ride import ride_response

        result = ride_response(model, road_class, speed_m_s)
    rows = []
    for s in result.sensors.values():
        rows.append([_e(s.name), _e(s.measure), _num(s.rms), _e(s.unit),
                     _num(s.weighted_rms), _e(s.weighting or "-"),
                     _e(", ".join(s.reactions) or "-"), _num(s.dynamic_load_ratio, 3)])
    table = _table(["sensor", "measure", "RMS", "unit", "weighted RMS", "weighting",
                    "comfort (ISO 2631-1 Annex C)", "dynamic load ratio"], rows,
                   left=(0, 1, 3, 5, 6))
    head = (f"<p>ISO 8608 class {_e(result.road_class)} road at "
            f"{speed_m_s * 3.6:.0f} km/h, {_e(result.tracks)} tracks, waviness "
            f"{result.waviness:g}.</p>")
    notes = "".join(f'<p class="note">{_e(n)}</p>' for n in result.notes)
    figure = _img(_figure_png(result.plot()), "ride response spectra")
    return head + table + notes + figure


def _plugins(assembly: Any, model: Any, **options: Any) -> str:
    """Each applied plugin's own analysis, as its tables.

    ``builder.plugin.plugin_tables(assembly, model, **options)`` (a list of
    ``(plugin, title, rows)``, rows with the header first, or a ``Table``) is
    used when the plugin module offers it, with the report's road class and
    speed as options; otherwise each plugin named in the file is found in the
    entry-point group ``lumpgraph.plugins`` and its ``analyse(model)`` result
    shown through its ``table()``.
    """
    if not assembly.plugins:
        return ""
    try:
        from . import plugin
    except ImportError:
        plugin = None
    tables = getattr(plugin, "plugin_tables", None)
    if tables is not None:
        try:
            found = list(tables(assembly, model, **options))
        except TypeError:      # a plugin that takes no options
            found = list(tables(assembly, model))
        pairs = [(item[-2], item[-1]) for item in found]   # (plugin,) title, rows
    else:
        pairs = _entry_point_tables(assembly, model)
    out = []
    for title, table in pairs:
        out.append(f"<h3>{_e(title)}</h3>")
        out.append(_any_table(table))
    return "\n".join(out) or '<p class="note">The plugins in this file add no tables.</p>'


def _entry_point_tables(assembly: Any, model: Any) -> list[tuple[str, Any]]:
    from importlib.metadata import entry_points

    found = {ep.name: ep for ep in entry_points(group="lumpgraph.plugins")}
    out: list[tuple[str, Any]] = []
    for use in assembly.plugins:
        kind = _field(use, "use") or _plugin_name(use)
        title = f"{kind}: {_field(use, 'name') or kind}"
        if kind not in found:
            continue
        try:
            obj = found[kind].load()
            analyse = getattr(obj, "analyse", None)
            if analyse is not None:
                out.append((title, analyse(model)))
        except (LumpgraphError, ValueError, RuntimeError, ImportError, TypeError) as exc:
            out.append((title, f"not computed: {exc}"))
    return out


def _field(spec: Any, name: str) -> str:
    value = spec.get(name) if isinstance(spec, dict) else getattr(spec, name, None)
    return str(value) if value else ""


def _any_table(table: Any) -> str:
    """A plugin's table: rows (first the header), a ``Table`` (``columns``, ``rows``,
    ``notes``), an object with ``table()``, or text."""
    if hasattr(table, "columns") and hasattr(table, "rows"):
        notes = "".join(f'<p class="note">{_e(n)}</p>' for n in getattr(table, "notes", ()))
        return _any_table([list(table.columns), *[list(r) for r in table.rows]]) + notes
    if isinstance(table, list | tuple) and table and isinstance(table[0], list | tuple):
        header, *rows = table
        return _table([str(h) for h in header],
                      [[_num(v) if isinstance(v, int | float) else _e(v) for v in r]
                       for r in rows], left=(0,))
    if hasattr(table, "table"):
        return f"<pre>{_e(table.table())}</pre>"
    return f"<pre>{_e(table)}</pre>"


def _correlation(model: Any, measured: Any, modes: Any, threshold: float | None) -> str:
    from .report_correlation import correlation_section
    return correlation_section(model, measured, modes, threshold)


# ---------------------------------------------------------------- findings first

#: Words that mark the split body's first elastic modes in the mode labels.
_FIRSTS = (("first torsion", "first torsion"), ("first vertical bending", "first vertical bending"),
           ("first lateral bending", "first lateral bending"))


def _findings(assembly: Any, model: Any, modes: Any, ride: Callable[[], Any]) -> str:
    """What the engineer decides on: the mode ladder, the body's first torsion and
    bending, the comfort figures and every warning, before any inventory."""
    vib = [m for m in modes.modes if float(m.frequency_hz or 0.0) > 0.0]
    rigid = len(modes.modes) - len(vib)
    out = []
    rows = []
    for m in vib[:12]:
        bar = f'<span class="bar" style="width:{int(round(min(m.frequency_hz, 60.0) * 4))}px">' \
              '</span>'
        rows.append([str(m.number), f"{m.frequency_hz:.2f}", _num(m.damping_ratio, 3),
                     f"{bar} {_e(m.label)}"])
    out.append("<h3>Mode ladder (lowest vibration modes)</h3>")
    out.append(_table(["mode", "f (Hz)", "damping ratio", "motion"], rows, left=(3,)))
    if rigid:
        out.append(f'<p class="note">{count(rigid, "rigid-body mode")} left out of the '
                   "ladder (zero frequency).</p>")
    firsts = []
    for words, title in _FIRSTS:
        found = next((m for m in vib if words in str(m.label)), None)
        if found is not None:
            firsts.append([_e(title), f"{found.frequency_hz:.2f}", str(found.number)])
    if firsts:
        out += ["<h3>Body's first elastic modes</h3>",
                _table(["mode kind", "f (Hz)", "mode"], firsts)]
    if model.inputs and model.sensors:
        try:
            result = ride()
        except (LumpgraphError, ValueError, np.linalg.LinAlgError, RuntimeError) as exc:
            out.append(f'<p class="note">Comfort not computed: {_e(exc)}</p>')
        else:
            points = list(getattr(result, "points", ()) or ())
            if points:
                rows = [[_e(p.title), f"{p.vector_sum:.3f}",
                         "-" if p.vector_sum_health is None else f"{p.vector_sum_health:.3f}",
                         _e(", ".join(p.reactions) or "-")] for p in points]
                out += [f"<h3>Comfort on an ISO 8608 class {_e(result.road_class)} road</h3>",
                        _table(["where", "vector sum (m/s^2)", "health sum (m/s^2)",
                                "ISO 2631-1 Annex C"], rows, left=(0, 3))]
    warnings = list(getattr(assembly, "warnings", ()) or ())
    try:
        from .analysis.checks import check_model
        from .reduce import full_model

        warnings += list(check_model(full_model(model)).warnings)
    except (LumpgraphError, ValueError, np.linalg.LinAlgError, RuntimeError, ImportError):
        pass
    warnings += [str(n) for n in getattr(modes, "notes", ())]
    out.append("<h3>Warnings</h3>")
    out.append("<ul class=\"warn\">" + "".join(f"<li>{_e(w)}</li>" for w in warnings) + "</ul>"
               if warnings else "<p>None.</p>")
    return "\n".join(out)


def _view(assembly: Any, model: Any, modes: Any, scene: Any = None) -> str:
    from .render import build_scene, expanded_modes
    from .report_view import view_payload, view_section

    dofs, drawn = expanded_modes(model, modes)
    vib = [m for m in drawn if float(m.frequency_hz or 0.0) > 0.0]
    payload = view_payload(scene if scene is not None else build_scene(assembly), dofs, vib)
    return ('<p class="sub">Choose a mode, drag to turn the view, wheel to zoom; the motion '
            "plays in a loop, parts pale at rest and deep where they move most.</p>"
            + view_section(payload))


# ---------------------------------------------------------------- the page

def report_html(assembly: Assembly, model: LinearModel, *, sheet: int = 12, road_class: str = "B",
                speed_m_s: float = 80.0 / 3.6, modes: Any = None, measured: Any = None,
                threshold: float | None = None) -> str:
    """The report page as HTML text (images embedded).

    ``sheet`` is the number of modes on the review sheet; ``road_class`` and
    ``speed_m_s`` (m/s) set the ISO 8608 road of the ride section; ``modes``
    the model's ModeSet if already computed; ``measured`` (measured modes or
    their file) adds the correlation section, pairs with MAC >= ``threshold``.
    """
    from .analysis.modes import compute_modes

    if modes is None:
        modes = compute_modes(model)
    title = assembly.name or "lumpgraph model"
    cache: dict[str, Any] = {}

    def ride() -> Any:
        if "ride" not in cache:
            from .analysis.ride import ride_response

            cache["ride"] = ride_response(model, road_class, speed_m_s)
        return cache["ride"]

    def scene() -> Any:
        if "scene" not in cache:
            from .render import build_scene

            cache["scene"] = build_scene(assembly)
        return cache["scene"]

    def ride_section() -> str:
        if not model.inputs or not model.sensors:
            return ""
        return _ride(model, road_class, speed_m_s, ride())

    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>{_e(title)}: review report</title>",
        f"<style>{_STYLE}</style></head><body><main>",
        f"<h1>{_e(title)}</h1>",
        f'<p class="sub">Review report by lumpgraph; source {_e(assembly.source or "-")}; '
        f"model {_e(model.name)} ({count(len(model.dofs), 'DOF')}). ISO 8855 axes "
        "(x forward, y left, z up); points in mm, stiffness in kN/m, damping in N s/m.</p>",
        f'<div class="caution">{_e(CAUTION)}</div>',
        _section("Findings", lambda: _findings(assembly, model, modes, ride), "findings"),
        _section("Modes in 3D", lambda: _view(assembly, model, modes, scene()), "view"),
        _section("Modes", lambda: _modes(modes)),
        _section("Model ladder", lambda: _ladder(model)),
        _section("Correlation with measured modes", lambda: _correlation(
            model, measured, modes, threshold)) if measured is not None else "",
        _section("Review sheet", lambda: _sheet(assembly, model, modes, sheet, scene())),
        _section("Frequency response from the road", lambda: _frf(model)),
        _section("Ride on a random road", ride_section),
        _section("Model ladder on the ride figures",
                 lambda: _response_ladder(model, road_class, speed_m_s)),
        _section("Plugin analyses", lambda: _plugins(assembly, model, road_class=road_class,
                                                     speed_m_s=speed_m_s)),
        _section("Model checks", lambda: _checks(model)),
        _section("Model summary", lambda: _summary(assembly, model), "inventory"),
        f'<div class="caution">{_e(CAUTION)}</div>',
        "</main></body></html>",
    ]
    return "\n".join(p for p in parts if p)


def write_report(assembly: Assembly, model: LinearModel, out_dir: str | os.PathLike,
                 **options: Any) -> Path:
    """Write ``out_dir/report.html`` (the folder is created if missing); returns its path."""
    import shutil

    from .io import write_atomic, write_failure

    folder = Path(out_dir)
    if folder.exists() and not folder.is_dir():
        raise InputError(f"{folder} is a file, not a folder", Where(field="--out"))
    html = report_html(assembly, model, **options)      # the folder appears only when done
    made = not folder.exists()
    try:
        folder.mkdir(parents=True, exist_ok=True)
        write_atomic(path := folder / REPORT_NAME, html, "--out")
    except OSError as exc:
        raise write_failure(exc, folder, "--out") from None
    except BaseException:
        if made:
            shutil.rmtree(folder, ignore_errors=True)
        raise
    return path
