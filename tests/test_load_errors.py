"""Malformed files: each gives exit code 2 and one line naming file, line and field."""

import pytest

GOOD = """format: 1
name: t
motion: vertical
parameters:
  k: 20 kN/m
bodies:
  body:
    mass: 1000 kg
    cg: [0, 0, 0.5]
    inertia: {xx: 400, yy: 1500, zz: 1600}
  wheel:
    mass: 30 kg
    cg: [0, 0.7, 0.3]
    dofs: [z]
    gyradius: {x: 0.2, y: 0.2, z: 0.2}
road:
  fl: {at: [0, 0.7, 0]}
links:
  susp:
    type: spring
    a: {body: body, at: [0, 0.7, 0.45]}
    b: wheel
    axis: z
    stiffness: ${k}
  tyre:
    type: spring
    a: wheel
    b: road.fl
    axis: z
    stiffness: 200 kN/m
  mount:
    type: bushing
    a: {body: body, at: [0.3, 0, 0.6]}
    b: ground
    frame: {x: [1, 0, 0], z: [0, 0, 1]}
    stiffness: {z: 1 kN/m}
sensors:
  acc: {body: body, measure: acceleration, direction: z}
depths:
  bounce: {keep: [body.z]}
"""

# (description, (old, new) replacement in GOOD, expected field, text that starts the
#  expected line (None: the new text), words expected in the message)
CASES = [
    ("negative mass", ("mass: 1000 kg", "mass: -3 kg"), "bodies.body.mass", None,
     'must be a positive mass, got "-3 kg"'),
    ("wrong unit", ("mass: 1000 kg", "mass: 1000 m"), "bodies.body.mass", None, "a length"),
    ("unknown unit", ("mass: 1000 kg", "mass: 1000 stone"), "bodies.body.mass", None,
     "unknown unit"),
    ("non-physical inertia", ("{xx: 400, yy: 1500, zz: 1600}", "{xx: 100, yy: 100, zz: 1600}"),
     "bodies.body.inertia", None, "triangle inequality"),
    ("negative principal moment", ("{xx: 400, yy: 1500, zz: 1600}",
                                   "{xx: 400, yy: 1500, zz: 1600, xy: 900}"),
     "bodies.body.inertia", None, "not all positive"),
    ("unknown body in a link", ("    b: wheel\n", "    b: wheal\n"), "links.susp.b", None,
     'unknown body "wheal" (did you mean "wheel"?)'),
    ("duplicate name", ("  wheel:\n    mass: 30 kg", "  body:\n    mass: 30 kg"), "bodies.body",
     "  body:\n    mass: 30 kg", "duplicate key"),
    ("parallel frame axes", ("frame: {x: [1, 0, 0], z: [0, 0, 1]}",
                             "frame: {x: [0, 0, 2], z: [0, 0, 1]}"), "links.mount.frame", None,
     "parallel"),
    ("bad expression", ("stiffness: ${k}", "stiffness: ${k *}"), "links.susp.stiffness", None,
     "ends too early"),
    ("unknown parameter", ("stiffness: ${k}", "stiffness: ${kk}"), "links.susp.stiffness", None,
     "unknown parameter"),
    ("unknown key", ("    axis: z\n    stiffness: ${k}", "    axis: z\n    stifness: ${k}"),
     "links.susp.stifness", "stifness", 'did you mean "stiffness"'),
    ("unknown top-level key", ("motion: vertical", "motion: vertical\nmotoin: spatial"),
     "motoin", "motoin", "unknown key"),
    ("unknown motion", ("motion: vertical", "motion: wobbly"), "motion", None, "must be one of"),
    ("format 2", ("format: 1", "format: 2"), "format", None, "only format 1"),
    ("unknown link type", ("type: bushing", "type: bushin"), "links.mount.type", None,
     'did you mean "bushing"'),
    ("unknown road point", ("b: road.fl", "b: road.fx"), "links.tyre.b", None,
     'unknown road point "fx"'),
    ("unknown DOF in depth", ("keep: [body.z]", "keep: [body.x]"), "depths.bounce.keep[0]", None,
     'unknown DOF "body.x"'),
    ("unknown dof name", ("dofs: [z]", "dofs: [q]"), "bodies.wheel.dofs[0]", None,
     "must be one of"),
    ("missing mass", ("    mass: 30 kg\n", ""), "bodies.wheel", "  wheel:", 'missing required key "mass"'),
    ("non-finite number", ("cg: [0, 0, 0.5]", "cg: [0, .inf, 0.5]"), "bodies.body.cg[1]", None,
     "finite"),
    ("yaml tag", ("mass: 1000 kg", "mass: !!python/object:os.system 1"), "", None, "tags"),
    ("custom yaml tag", ("mass: 1000 kg", "mass: !metric 1000"), "", None, "tags"),
    ("vector of two", ("cg: [0, 0, 0.5]", "cg: [0, 0.5]"), "bodies.body.cg", None,
     "list of 3 numbers"),
    ("sensor on unknown body", ("acc: {body: body,", "acc: {body: bodyy,"), "sensors.acc.body",
     None, 'unknown body "bodyy"'),
    ("sensor measure", ("measure: acceleration", "measure: jerk"), "sensors.acc.measure", None,
     "must be one of"),
    ("both ends on one body", ("    b: wheel\n", "    b: body\n"), "links.susp.b", None,
     "both ends are on body"),
    ("negative stiffness", ("stiffness: 200 kN/m", "stiffness: -200 kN/m"),
     "links.tyre.stiffness", None, "non-negative stiffness"),
    ("boolean where a number goes", ("mass: 1000 kg", "mass: yes"), "bodies.body.mass", None,
     "must be a positive mass, got true"),
    ("tie of one DOF", ("bounce: {keep: [body.z]}", "bounce: {keep: [body.z], tie: [[body.z]]}"),
     "depths.bounce", None, "at least two"),
    ("plugin name unknown", ("depths:", "plugins:\n  - use: no_such_plugin\n    name: x\ndepths:"),
     "plugins[0].use", "  - use", "no_such_plugin"),
]


@pytest.mark.parametrize("what, change, field, line, words", CASES, ids=[c[0] for c in CASES])
def test_malformed_file(what, change, field, line, words, write_yaml, run_cli):
    old, new = change
    assert old in GOOD, what
    text = GOOD.replace(old, new, 1)
    anchor = new if line is None else line  # the error's line starts with this text
    line = text[:text.index(anchor)].count("\n") + 1
    path = write_yaml(text)
    code, out, err = run_cli("modes", path)
    assert code == 2, err
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith(f"{path}:{line}: {field}" if field else f"{path}:{line}: "), err
    assert words in lines[0], err


def test_good_file_passes(write_yaml, run_cli):
    code, out, err = run_cli("modes", write_yaml(GOOD))
    assert code == 0, err
    assert "body bounce" in out


@pytest.mark.parametrize("text, words", [
    ("", "empty"),
    ("just a string", "must be a mapping"),
    ("format: 1\nbodies: [1, 2\n", "not valid YAML"),
    ("\x00\x01binary", "not valid YAML"),
    ("format: 1\n---\nformat: 1\n", "several YAML documents"),
])
def test_not_an_assembly(text, words, write_yaml, run_cli):
    code, _, err = run_cli("check", write_yaml(text))
    assert code == 2 and len(err.strip().splitlines()) == 1 and words in err, err


def test_alias_bomb_is_refused(write_yaml, run_cli):
    # The "billion laughs" pattern: nine levels of ten aliases each.
    lines = ['a: &a ["x","x","x","x","x","x","x","x","x","x"]']
    for i in range(1, 9):
        prev, cur = chr(ord("a") + i - 1), chr(ord("a") + i)
        lines.append(f"{cur}: &{cur} [{', '.join(['*' + prev] * 10)}]")
    code, _, err = run_cli("check", write_yaml("\n".join(lines) + "\n"))
    assert code == 2 and "alias" in err and len(err.strip().splitlines()) == 1


def test_huge_file_is_refused(write_yaml, run_cli):
    path = write_yaml("format: 1\n" + "# padding\n" * 600_000)
    code, _, err = run_cli("check", path)
    assert code == 2 and "limit is 5 MB" in err


def test_missing_file(run_cli, tmp_path):
    code, _, err = run_cli("check", tmp_path / "nope.yaml")
    assert code == 2 and "cannot read file" in err


def test_unknown_depth_option(run_cli):
    from conftest import ASSEMBLIES
    code, _, err = run_cli("modes", ASSEMBLIES / "compact_car.yaml", "--depth", "nope")
    assert code == 2 and err.startswith("--depth: unknown depth")


def test_no_traceback_from_a_real_process(write_yaml):
    # The installed command itself: one line on stderr, exit 2, nothing on stdout.
    import subprocess
    import sys
    path = write_yaml(GOOD.replace("mass: 1000 kg", "mass: -3 kg"))
    proc = subprocess.run([sys.executable, "-m", "builder.cli", "modes", str(path)],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    assert proc.stdout == "" and "Traceback" not in proc.stderr
    assert proc.stderr.strip() == (f'{path}:8: bodies.body.mass: must be a positive mass, '
                                   'got "-3 kg"')
