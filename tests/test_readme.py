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
