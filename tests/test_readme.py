"""Every `lumpgraph` command shown in README.md runs and succeeds, so the
documentation cannot rot (run in a temporary folder, files written there)."""

import re
import shlex
import shutil

import pytest
from conftest import ROOT


def readme_commands() -> list[str]:
    text = (ROOT / "README.md").read_text()
    blocks = re.findall(r"```sh\n(.*?)```", text, re.S)
    commands = []
    for block in blocks:
        joined = block.replace("\\\n", " ")
        for line in joined.splitlines():
            line = line.split(" #")[0].strip()
            if line.startswith("lumpgraph "):
                commands.append(line)
    return commands


COMMANDS = readme_commands()


def test_readme_has_the_two_setup_commands():
    text = (ROOT / "README.md").read_text()
    assert 'python3 -m pip install -e . && lumpgraph ladder assemblies/compact_car.yaml' in text
    assert 'python3 -m pip install -e ".[test]" && python3 -m pytest -q' in text
    assert 'python3 -m pip install -e ".[test]" && python3 -m pytest -q' in \
        (ROOT / ".ci" / "run").read_text()


@pytest.mark.parametrize("command", COMMANDS, ids=[c[:60] for c in COMMANDS])
def test_readme_command_runs(command, tmp_path, run_cli, monkeypatch):
    shutil.copytree(ROOT / "assemblies", tmp_path / "assemblies")
    monkeypatch.chdir(tmp_path)
    args = shlex.split(command)[1:]
    code, out, err = run_cli(*args)
    assert code == 0, err
    assert out.strip() or "wrote" in err or "written" in err


def shown_outputs() -> list[tuple[str, str]]:
    """README blocks marked ``<!-- output of: lumpgraph ... -->``: (command, block)."""
    text = (ROOT / "README.md").read_text()
    return re.findall(r"<!-- output of: (lumpgraph [^>]*?) -->\n```\n(.*?)```", text, re.S)


def test_readme_marks_the_outputs_it_shows():
    commands = [c for c, _ in shown_outputs()]
    assert any(c.startswith("lumpgraph modes") for c in commands)
    assert any(c.startswith("lumpgraph evaluate") for c in commands)
    assert any(c.startswith("lumpgraph update") for c in commands)


def excerpt_mismatch(shown: str, printed: str) -> str | None:
    """The first README line not printed, in order, by the command (None: all are).

    A shown line is a printed line (trailing spaces aside); one ending in
    "..." is the start of a longer printed line; "..." alone and blank lines
    stand for skipped lines.
    """
    lines = [line.rstrip() for line in printed.splitlines()]
    at = 0
    for line in shown.splitlines():
        want = line.rstrip()
        if want in ("", "..."):
            continue
        prefix = want.endswith("...")
        want = want[:-3].rstrip() if prefix else want
        for j in range(at, len(lines)):
            if lines[j] == want or (prefix and lines[j].startswith(want)):
                at = j + 1
                break
        else:
            return line
    return None


def test_excerpt_matching_can_fail():
    printed = "a  1.00\nb  2.00 and more\nc  3.00\n"
    assert excerpt_mismatch("a  1.00\nb  2.00 ...\n...\nc  3.00", printed) is None
    assert excerpt_mismatch("a  1.01", printed) == "a  1.01"            # a changed figure
    assert excerpt_mismatch("c  3.00\na  1.00", printed) == "a  1.00"   # out of order
    assert excerpt_mismatch("b  2.00", printed) == "b  2.00"            # cut without "..."


@pytest.mark.parametrize("command,shown", shown_outputs(),
                         ids=[c.split()[1] for c, _ in shown_outputs()])
def test_readme_output_is_what_the_command_prints(command, shown, run_cli, monkeypatch):
    # The figures the README shows are the ones the command prints today.
    monkeypatch.chdir(ROOT)
    code, out, err = run_cli(*shlex.split(command)[1:])
    assert code == 0, err
    missing = excerpt_mismatch(shown, out)
    assert missing is None, f"README shows {missing!r}, which `{command}` does not print"


def test_readme_seat_table_is_what_the_seat_plugin_prints(run_cli, monkeypatch):
    # The README's seat table (class C road, 60 km/h) against the plugin's own
    # printout, each figure to the digits the README shows.
    monkeypatch.chdir(ROOT)
    code, out, err = run_cli("plugin", "seat", "assemblies/compact_car_seat.yaml",
                             "--road", "C", "--speed", "60 km/h")
    assert code == 0, err
    printed = {}
    for line in out.split("half-sine bump")[0].splitlines():
        m = re.match(r"(.+?)\s{2,}([xyz]+)\s+([-\d.e]+) ", line)
        if m:
            printed[(m[1].strip(), m[2])] = float(m[3])
    text = (ROOT / "README.md").read_text()
    rows = {"floor weighted RMS": ("floor weighted RMS (Wd)", "floor weighted RMS (Wk)"),
            "seat surface weighted RMS": ("seat weighted RMS (Wd)", "seat weighted RMS (Wk)"),
            "SEAT value": ("SEAT value", "SEAT value"),
            "seat VDV, simulated 20 s": ("seat VDV over 20 s (simulated)",) * 2}
    for row, (name_x, name_z) in rows.items():
        cells = re.search(rf"^\| {re.escape(row)} \| ([\d.]+) [^|]*\| ([\d.]+) ", text, re.M)
        assert cells, row
        for shown, key in ((cells[1], (name_x, "x")), (cells[2], (name_z, "z"))):
            digits = len(shown.split(".")[1]) if "." in shown else 0
            assert abs(float(shown) - printed[key]) <= 0.5 * 10.0 ** -digits + 1e-12, (row, key)
