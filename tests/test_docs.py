"""The project's own format description: present, installed, pointed to, and in step
with what the loader reads (its examples load; its tables match the code)."""

from __future__ import annotations

import re

import yaml
from conftest import ROOT

from builder.analysis import comfort
from builder.cli import COMMANDS
from builder.elements import LINK_TYPES
from builder.load import BODY_KEYS, PERSON_INTERFACES, TOP_KEYS, load_text

DOC = ROOT / "docs" / "format.md"


def _text() -> str:
    return DOC.read_text(encoding="utf-8")


def _blocks(language: str) -> list[str]:
    return re.findall(rf"```{language}\n(.*?)```", _text(), re.S)


def test_package_carries_the_description():
    # builder/docs/format.md is what a non-editable install ships (package data)
    packaged = ROOT / "builder" / "docs" / "format.md"
    assert packaged.read_bytes() == DOC.read_bytes()
    pyproject = (ROOT / "pyproject.toml").read_text()
    assert 'builder = ["docs/*.md"]' in pyproject


def test_format_command_prints_it(run_cli):
    code, out, err = run_cli("format")
    assert code == 0, err
    assert out == _text()
    code, out, _ = run_cli("format", "--path")
    assert code == 0 and out.strip().endswith("format.md")


def test_main_help_says_where_the_format_is(run_cli):
    for args in ((), ("--help",)):
        code, out, _ = run_cli(*args)
        assert code == 0
        assert "lumpgraph format" in out and "docs/format.md" in out
    assert "format" in COMMANDS


def test_readme_points_into_the_project():
    readme = (ROOT / "README.md").read_text()
    assert "docs/format.md" in readme
    assert "../shared" not in readme and "assembly-format.md" not in readme
    for path in [*ROOT.glob("*.md"), *(ROOT / "docs").glob("*.md"),
                 *(ROOT / "builder").rglob("*.py"), *(ROOT / "plugins").rglob("*.py")]:
        assert "/shared/" not in path.read_text(encoding="utf-8"), path


def test_every_yaml_example_is_yaml():
    blocks = _blocks("yaml")
    assert len(blocks) >= 10
    for block in blocks:
        yaml.safe_load(block)


def test_examples_make_a_file_that_loads():
    # the body, road, link and sensor examples, as written, make one loadable file
    blocks = _blocks("yaml")

    def block_with(key: str) -> str:
        return next(b for b in blocks if b.startswith(key))

    links = [b for b in blocks if b.startswith("links:") or b.startswith("  mount_left:")]
    text = "\n".join([
        "format: 1", "name: the examples of docs/format.md", "motion: vertical",
        "parameters: {ks_front: 24 kN/m}",
        block_with("bodies:"),
        "  engine: {mass: 150, cg: [0.1, 0.35, 0.62], inertia: {xx: 5, yy: 7, zz: 6}}",
        block_with("road:"), *links,
        "sensors:",
        "  floor_front: {body: body, at: [-0.6, 0.38, 0.30], measure: acceleration, "
        "direction: z}",
        "  seat_z: {body: body, at: [-1.2, 0.40, 0.55], measure: acceleration, direction: z, "
        "person: seat}",
        "  travel_fl: {link: susp_fl, measure: deflection}",
        "  mount_y: {link: mount_left, measure: deflection, direction: y}",
        "  wheel_fl_z: {body: wheel_fl, measure: displacement}",
    ])
    # A translation-only body needs no inertia (format 1; the loader's fix for that
    # is issue 11 item 8, on its own branch): give the wheel one until it lands.
    text = text.replace("    dofs: [z]                                         # translation",
                        "    gyradius: {x: 0.3, y: 0.3, z: 0.3}\n    dofs: [z]  # translation")
    asm = load_text(text, "docs.yaml")
    assert set(asm.bodies) == {"body", "wheel_fl", "engine"}
    assert asm.sensors["seat_z"].person == "seat"


def test_tables_match_the_code():
    text = _text()
    for key in TOP_KEYS:
        assert f"{key}:" in text, key
    for name, interface in comfort.INTERFACES.items():
        assert name in PERSON_INTERFACES
        row = next(line for line in text.splitlines() if line.startswith(f"| `{name}` |"))
        weights = ", ".join(interface.weightings[a] for a in "xyz")
        assert weights in row, (name, row)
        assert ", ".join(f"{k:g}" for k in interface.comfort) in row, (name, row)
    for name, kind in LINK_TYPES.items():          # every link type with all its keys
        rows = [line for line in text.splitlines() if line.startswith(f"| `{name}` |")]
        # a joint type may share its name with a motion setting (planar): its own row
        row = next((r for r in rows if all(f"`{k}`" in r for k in kind.keys)), rows[0])
        for key in kind.keys:
            assert f"`{key}`" in row, (name, key)
        for key in kind.required:
            assert f"`{key}` (required)" in row or f"`{key}`, " in row, (name, key)
    for key in BODY_KEYS:
        assert f"| `{key}` |" in text, key
    assert "planned" in text
