"""The code base is `ruff check` clean (the house lint rules in pyproject.toml)."""

import shutil
import subprocess
import sys

from conftest import ROOT


def test_ruff_check_is_clean():
    cmd = [shutil.which("ruff")] if shutil.which("ruff") else [sys.executable, "-m", "ruff"]
    proc = subprocess.run([*cmd, "check", "--output-format", "concise", str(ROOT)],
                          capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0, proc.stdout + proc.stderr
