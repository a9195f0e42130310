"""Shared test helpers: load YAML text, run the command line in-process."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

os.environ.setdefault("PYVISTA_OFF_SCREEN", "true")
os.environ.setdefault("MPLBACKEND", "Agg")

ROOT = Path(__file__).resolve().parent.parent
ASSEMBLIES = ROOT / "assemblies"


@pytest.fixture
def run_cli(capsys):
    """Run ``lumpgraph ARGS`` in-process; returns (exit code, stdout, stderr)."""
    from builder.cli import main

    def run(*args: str) -> tuple[int, str, str]:
        try:
            code = main([str(a) for a in args])
        except SystemExit as exc:  # argparse errors
            code = exc.code if isinstance(exc.code, int) else 2
        out = capsys.readouterr()
        return code, out.out, out.err
    return run


@pytest.fixture
def write_yaml(tmp_path):
    """Write YAML text to a temporary file and return its path."""
    def write(text: str, name: str = "model.yaml") -> Path:
        path = tmp_path / name
        path.write_text(text)
        return path
    return write


def make_dist(root: Path, module: str, source: str, entry: str) -> None:
    """A tiny installed distribution in ``root``: a module and a ``*.dist-info`` with
    METADATA and an entry point in ``lumpgraph.plugins``, as pip would leave it."""
    import textwrap
    (root / f"{module}.py").write_text(textwrap.dedent(source))
    info = root / f"{module}-1.0.dist-info"
    info.mkdir()
    (info / "METADATA").write_text(f"Metadata-Version: 2.1\nName: {module}\nVersion: 1.0\n")
    (info / "entry_points.txt").write_text(f"[lumpgraph.plugins]\n{entry} = {module}:PLUGIN\n")


@pytest.fixture
def install_plugins(tmp_path, monkeypatch):
    """Install plugin distributions {entry: (module, source)} on sys.path for one test."""
    import sys

    from builder import plugin as plugin_mod
    modules: list[str] = []

    def install(**dists: tuple[str, str]) -> Path:
        for entry, (module, source) in dists.items():
            make_dist(tmp_path, module, source, entry)
            modules.append(module)
        monkeypatch.syspath_prepend(str(tmp_path))
        plugin_mod.clear_cache()
        return tmp_path
    yield install
    plugin_mod.clear_cache()
    for m in modules:
        sys.modules.pop(m, None)
