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
