"""The plugin mechanism with a third-party plugin installed from a temporary package.

The temporary package is a real distribution on sys.path (a module plus a
``*.dist-info`` folder with METADATA and entry_points.txt), found by
importlib.metadata exactly as an installed package would be.
"""


import numpy as np
import pytest

from builder import plugin as plugin_mod
from builder.analysis.modes import compute_modes
from builder.linear import assemble
from builder.load import load_text

GOOD_PLUGIN = '''
from dataclasses import replace
import numpy as np
from builder.assembly import Body, End, Link
from builder.elements.spring import spring_props
from builder.plugin import Parameter


class Damper:
    """A tuned mass on a spring under a body point (a dynamic absorber)."""
    name = "absorber"
    summary = "a tuned mass under a body point"
    parameters = (
        Parameter("body", "name", "body", "host body"),
        Parameter("at", "points", None, "attachment point, m"),
        Parameter("mass", "mass", 5.0, "absorber mass, kg"),
        Parameter("stiffness", "stiffness", 2.0e4, "absorber spring, N/m"),
    )

    def validate(self, fields, name, parameters, where):
        mass = fields["mass"].quantity("mass", parameters, "positive") if "mass" in fields else 5.0
        k = fields["stiffness"].quantity("stiffness", parameters, "positive") \\
            if "stiffness" in fields else 2.0e4
        at = np.array(fields["at"].vector("length", parameters))
        return {"name": name, "body": fields["body"].text() if "body" in fields else "body",
                "mass": mass, "k": k, "at": at}

    def apply(self, assembly, spec):
        b = Body(spec["name"], spec["mass"], spec["at"] - [0, 0, 0.1],
                 np.eye(3) * 1e-3, ("z",))
        link = Link(spec["name"] + "_spring", "spring", End(spec["body"], spec["at"]),
                    End(b.name, b.cg), spring_props([0, 0, 1], spec["k"]))
        return assembly.replace(bodies={**assembly.bodies, b.name: b},
                                links={**assembly.links, link.name: link})


PLUGIN = Damper()
'''

BROKEN_IMPORT = "raise ImportError('this plugin needs a library that is not installed')\n"
BAD_DECLARATION = "class P:\n    name = 'bad one'\n\nPLUGIN = P()\n"


@pytest.fixture
def third_party(install_plugins):
    return install_plugins(absorber=("lg_absorber", GOOD_PLUGIN),
                           broken=("lg_broken", BROKEN_IMPORT), bad=("lg_bad", BAD_DECLARATION))


CAR = """
format: 1
motion: bounce
bodies:
  body: {mass: 400, cg: [0, 0, 0.5], gyradius: {x: 0.5, y: 0.5, z: 0.5}}
links:
  s: {type: spring, a: body, b: ground, axis: z, stiffness: 40 kN/m}
plugins:
  - use: absorber
    name: tmd
    with: {at: [0, 0, 0.5], mass: 10 kg, stiffness: 1 kN/m}
"""


def test_third_party_plugin_is_found_and_applied(third_party):
    plugins, problems = plugin_mod.installed_plugins()
    assert "absorber" in plugins and "seat" in plugins and "split_body" in plugins
    asm = load_text(CAR)
    assert set(asm.bodies) == {"body", "tmd"}
    # Analytic: two-DOF main mass + absorber, roots of
    # m1 m2 w^4 - (m1 k2 + m2 (k1 + k2)) w^2 + k1 k2 = 0
    m1, k1, m2, k2 = 400.0, 40e3, 10.0, 1e3
    w2 = np.sort(np.roots([m1 * m2, -(m1 * k2 + m2 * (k1 + k2)), k1 * k2]).real)
    assert compute_modes(assemble(asm)).frequencies_hz == pytest.approx(np.sqrt(w2) / (2 * np.pi))


def test_broken_plugins_are_reported_by_name_and_do_not_stop_the_others(third_party, run_cli):
    plugins, problems = plugin_mod.installed_plugins()
    assert "absorber" in plugins
    assert any('"broken"' in p and "ImportError" in p for p in problems)
    assert any('"bad"' in p and "no valid name" in p for p in problems)
    code, out, _ = run_cli("plugins")
    assert code == 0
    assert "absorber: a tuned mass under a body point" in out
    assert "warning: plugin \"broken\"" in out


def test_plugin_block_errors_are_one_line(third_party, write_yaml, run_cli):
    bad_key = CAR.replace("mass: 10 kg,", "mas: 10 kg,")
    code, _, err = run_cli("modes", write_yaml(bad_key))
    assert code == 2 and 'did you mean "mass"' in err and "plugins[0].with.mas" in err
    bad_unit = CAR.replace("mass: 10 kg,", "mass: 10 m,")
    code, _, err = run_cli("modes", write_yaml(bad_unit, "b.yaml"))
    assert code == 2 and "plugins[0].with.mass: must be a mass" in err
    uses_broken = CAR.replace("use: absorber", "use: broken")
    code, _, err = run_cli("modes", write_yaml(uses_broken, "c.yaml"))
    assert code == 2 and "cannot be loaded" in err and len(err.strip().splitlines()) == 1
