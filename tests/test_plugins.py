"""Plugin declarations with records (lists of mappings with their own fields).

A third-party plugin is installed from a temporary distribution (module plus
``*.dist-info`` with entry_points.txt on sys.path, found by
importlib.metadata like any installed package). It declares a ``records``
parameter; the core checks every record's keys and quantities with the same
one-line errors as the rest of the format, lists the fields in
``lumpgraph plugins``, and reports a plugin whose record fields are declared
badly by name while the others keep working.
"""

import json

import numpy as np
import pytest

from builder.analysis.modes import compute_modes
from builder.linear import assemble
from builder.load import load_text

PADS = '''
import numpy as np
from builder.assembly import End, Link
from builder.elements.spring import spring_props
from builder.plugin import Parameter

FIELDS = (
    Parameter("at", "vector", None, "pad point [x, y, z], m"),
    Parameter("stiffness", "stiffness", None, "vertical rate, N/m"),
)


class Pads:
    name = "pads"
    summary = "vertical pads from a body to the ground"
    parameters = (Parameter("body", "name", "body", "body on the pads"),
                  Parameter("pads", "records", None, "the pads", fields=FIELDS))

    def validate(self, fields, name, parameters, where):
        body = fields["body"].text() if "body" in fields else "body"
        pads = [(np.array(p["at"].vector("length", parameters)),
                 p["stiffness"].quantity("stiffness", parameters, "positive"))
                for p in fields["pads"].items_list()]
        return name, body, pads

    def apply(self, assembly, spec):
        name, body, pads = spec
        links = dict(assembly.links)
        for i, (at, k) in enumerate(pads):
            links[f"{name}_{i}"] = Link(f"{name}_{i}", "spring", End(body, at),
                                        End("ground", at), spring_props([0, 0, 1], k))
        return assembly.replace(links=links)


PLUGIN = Pads()
'''

BAD_FIELDS = '''
from builder.plugin import Parameter


class P:
    name = "twice"
    parameters = (Parameter("r", "records", None, "x", fields=(
        Parameter("a", "length", None, ""), Parameter("a", "length", None, ""))),)

    def validate(self, *a):
        return None

    def apply(self, assembly, spec):
        return assembly


PLUGIN = P()
'''


@pytest.fixture
def installed(install_plugins):
    return install_plugins(pads=("lg_pads", PADS), twice=("lg_twice", BAD_FIELDS))


FILE = """
format: 1
motion: bounce
bodies:
  body: {mass: 500, cg: [0, 0, 0.5], gyradius: {x: 0.5, y: 0.5, z: 0.5}}
plugins:
  - use: pads
    with:
      pads:
        - {at: [0.5, 0, 0.2], stiffness: 30 kN/m}
        - {at: [-0.5, 0, 0.2], stiffness: 20 kN/m}
"""


def test_records_plugin_applies(installed):
    asm = load_text(FILE)
    # Analytic: one mass on two parallel springs, w^2 = (k1 + k2) / m
    f = compute_modes(assemble(asm)).frequencies_hz
    assert f == pytest.approx([np.sqrt(50e3 / 500) / (2 * np.pi)], rel=1e-12)


@pytest.mark.parametrize("old, new, message", [
    ("stiffness: 20 kN/m", "stifness: 20 kN/m",
     'plugins[0].with.pads[1].stifness: unknown key (did you mean "stiffness"?)'),
    ("stiffness: 20 kN/m", "stiffness: 20 kg", "plugins[0].with.pads[1].stiffness: "
     "must be a stiffness"),
    ("      pads:\n        - {at: [0.5, 0, 0.2], stiffness: 30 kN/m}\n",
     "      pads:\n        - 3\n", "plugins[0].with.pads[0]: must be a record {at, stiffness}"),
])
def test_record_errors_are_one_line_with_the_place(installed, write_yaml, run_cli, old, new,
                                                   message):
    code, _, err = run_cli("modes", write_yaml(FILE.replace(old, new)))
    assert code == 2
    assert message in err
    assert len(err.strip().splitlines()) == 1


def test_listing_shows_record_fields_and_reports_bad_declarations(installed, run_cli):
    code, out, _ = run_cli("plugins")
    assert code == 0
    assert "pads: vertical pads" in out
    assert "      stiffness  [stiffness; default none] vertical rate, N/m" in out
    assert "warning: plugin \"twice\"" in out and "record field 'a' twice" in out
    assert "engine:" in out                       # the built-ins keep working
    code, out, _ = run_cli("plugins", "--json")
    data = {p["name"]: p for p in json.loads(out)["plugins"]}
    pads = {p["name"]: p for p in data["pads"]["parameters"]}["pads"]
    assert [f["name"] for f in pads["fields"]] == ["at", "stiffness"]
