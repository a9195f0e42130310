"""Failing writes and interrupts (issue 12, classes 7 and 8), on real subprocesses.

A write failure is made with a file size limit (RLIMIT_FSIZE: the kernel refuses the write
with EFBIG part-way, as a full disk would) and with a folder the user cannot write to (the
run as the unprivileged user "nobody" when the tests run as root, since root writes
anywhere). Interrupts are real signals: SIGINT to the process group, as a terminal sends
Ctrl-C, and SIGTERM to the process. The contract (DEVELOPERS.md): exit 2 with one line for a
failed write and every output complete or absent; exit 130 / 143 without a traceback for an
interrupt, no process left, a sweep CSV of whole rows that --resume completes exactly.
"""

import os
import resource
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from conftest import ASSEMBLIES, ROOT

QUARTER = str(ASSEMBLIES / "quarter_car.yaml")
COMPACT = str(ASSEMBLIES / "compact_car.yaml")
SWEEP = ["sweep", QUARTER, "--vary", "ks=15kN/m..30kN/m:120", "--chunk", "7"]


def _env() -> dict[str, str]:
    env = dict(os.environ, MPLBACKEND="Agg", PYVISTA_OFF_SCREEN="true")
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def _run(args, fsize=None, user=None, cwd=None):
    def limits():
        if fsize is not None:
            resource.setrlimit(resource.RLIMIT_FSIZE, (fsize, fsize))
        if user is not None:
            os.setgid(user.pw_gid)
            os.setuid(user.pw_uid)
    return subprocess.run([sys.executable, "-m", "builder.cli", *map(str, args)],
                          capture_output=True, text=True, env=_env(), cwd=cwd or ROOT,
                          preexec_fn=limits, timeout=300)


def _failed_one_line(done) -> str:
    assert done.returncode == 2, done.stderr
    assert "Traceback" not in done.stderr
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1, done.stderr
    return lines[0]


def _all_files(folder: Path) -> list[str]:
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


# ------------------------------------------------------------------ writes --

def test_vtm_export_under_a_write_failure_leaves_nothing(tmp_path):
    done = _run(["render", QUARTER, "--mode", "1", "--out", tmp_path / "x.vtm"], fsize=20_000)
    assert "cannot write" in _failed_one_line(done)
    assert _all_files(tmp_path) == []          # no partial multiblock, no staging folder
    done = _run(["render", QUARTER, "--mode", "1", "--out", tmp_path / "x.vtm"])
    assert done.returncode == 0, done.stderr
    assert (tmp_path / "x.vtm").read_text().rstrip().endswith("</VTKFile>")


def test_a_failed_plot_keeps_the_good_one(tmp_path):
    png = tmp_path / "s.png"
    assert _run([*SWEEP, "--plot", png]).returncode == 0
    good = png.read_bytes()
    done = _run([*SWEEP, "--plot", png], fsize=4_000)
    assert "--plot" in _failed_one_line(done) or "s.png" in done.stderr
    assert png.read_bytes() == good
    assert _all_files(tmp_path) == ["s.png"]


def test_sweep_csv_under_a_write_failure_keeps_whole_rows_and_resumes_exactly(tmp_path):
    part, fresh = tmp_path / "part.csv", tmp_path / "fresh.csv"
    done = _run([*SWEEP, "--csv", part], fsize=3_000)
    line = _failed_one_line(done)
    assert line.startswith("--csv:") and "--resume continues" in line
    text = part.read_text()
    assert text.endswith("\n")
    widths = {len(r.split(",")) for r in text.splitlines()}
    assert len(widths) == 1, "a half row was left"
    assert 1 < len(text.splitlines()) < 121
    assert _run([*SWEEP, "--csv", part, "--resume"]).returncode == 0
    assert _run([*SWEEP, "--csv", fresh]).returncode == 0
    assert part.read_text() == fresh.read_text()


def test_report_under_a_write_failure_leaves_no_folder(tmp_path):
    done = _run(["report", QUARTER, "--out", tmp_path / "rep", "--sheet", "2"], fsize=5_000)
    _failed_one_line(done)
    assert _all_files(tmp_path) == []


def test_read_only_folder_is_refused_before_the_work(tmp_path, monkeypatch, run_cli):
    """A folder that takes no new file (as a read-only one does for a user; root writes
    anywhere, so the refusal of the kernel is stood in for at tempfile.mkstemp, the probe
    output_path makes) is refused naming the option, before any work."""
    import errno
    import tempfile

    folder = tmp_path / "ro"
    folder.mkdir()
    real = tempfile.mkstemp

    def refuse(*args, dir=None, **kwargs):
        if dir is not None and os.path.abspath(dir) == str(folder):
            raise PermissionError(errno.EACCES, "Permission denied", dir)
        return real(*args, dir=dir, **kwargs)

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    for args, option in [
            (["frf", COMPACT, "--from", "road.fl", "--to", "floor_front", "--plot",
              folder / "x.png"], "--plot"),
            (["report", QUARTER, "--out", folder / "r"], "--out"),
            (["render", QUARTER, "--mode", "1", "--out", folder / "x.vtm"], "--out"),
            ([*SWEEP, "--csv", folder / "x.csv"], "--csv")]:
        code, _, err = run_cli(*args)
        assert code == 2 and len(err.strip().splitlines()) == 1, err
        assert err.startswith(f"{option}:") and "permission denied" in err, err
    assert os.listdir(folder) == []


# -------------------------------------------------------------- interrupts --

def _maps_hold(pid: int, text: str) -> bool:
    try:
        return text in Path(f"/proc/{pid}/maps").read_text()
    except OSError:
        return False


def _live_in_session(sid: int) -> list[int]:
    out = []
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                stat = Path(f"/proc/{entry}/stat").read_text()
            except OSError:
                continue
            fields = stat[stat.rfind(")") + 2:].split()
            if int(fields[3]) == sid and fields[0] != "Z":
                out.append(int(entry))
    return out


def _interrupt(args, signum, wait_for=None, delay=0.0, cwd=None):
    """Start lumpgraph ARGS in a session of its own, signal it once ``wait_for`` shows
    in its memory map (a library being loaded) and ``delay`` seconds have passed."""
    proc = subprocess.Popen([sys.executable, "-m", "builder.cli", *map(str, args)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                            env=_env(), cwd=cwd or ROOT, start_new_session=True)
    deadline = time.monotonic() + 60
    while wait_for and not _maps_hold(proc.pid, wait_for) and time.monotonic() < deadline:
        time.sleep(0.01)
    time.sleep(delay)
    sent = time.monotonic()
    if signum == signal.SIGINT:
        os.killpg(proc.pid, signum)
    else:
        os.kill(proc.pid, signum)
    err = proc.communicate(timeout=30)[1]
    took = time.monotonic() - sent
    time.sleep(0.3)
    left = _live_in_session(proc.pid)
    for pid in left:
        os.kill(pid, signal.SIGKILL)
    return proc.returncode, err, took, left


def test_ctrl_c_during_start_up_exits_130_without_traceback():
    # the command's imports (numpy and scipy load while the command is being set up)
    code, err, took, left = _interrupt(["modes", COMPACT], signal.SIGINT, wait_for="numpy")
    assert (code, err.strip()) == (130, "lumpgraph: interrupted"), err
    assert took < 5 and left == []


def test_sigterm_during_work_exits_143():
    code, err, took, left = _interrupt(["ride", COMPACT, "--road", "C", "--speed", "60 km/h"],
                                       signal.SIGTERM, wait_for="scipy", delay=0.5)
    assert code == 143 and "Traceback" not in err, err
    assert err.strip().splitlines()[-1] == "lumpgraph: terminated"
    assert took < 5 and left == []


@pytest.mark.parametrize("signum", [signal.SIGTERM, signal.SIGINT])
def test_sweep_workers_leave_no_process_and_resume_exactly(signum, tmp_path):
    # 60,000 variants: far longer than the 4 s before the signal, even on a quiet machine
    args = ["sweep", COMPACT, "--vary", "ks_front=15kN/m..30kN/m:60000", "--chunk", "25",
            "--csv", tmp_path / "w.csv"]
    code, err, took, left = _interrupt([*args, "--workers", "2"], signum, wait_for="scipy",
                                       delay=4.0)
    assert code == 128 + signum, err
    assert "Traceback" not in err, err
    assert left == [], f"processes left: {left}"
    assert took < 10
    if (tmp_path / "w.csv").exists():
        text = (tmp_path / "w.csv").read_text()
        assert text.endswith("\n") and len({len(r.split(",")) for r in text.splitlines()}) == 1


def test_render_honours_ctrl_c(tmp_path):
    code, err, took, left = _interrupt(["render", QUARTER, "--mode", "1", "--out",
                                        tmp_path / "a.gif", "--frames", "2000", "--size",
                                        "160x120"], signal.SIGINT, wait_for="vtkRendering",
                                       delay=2.0)
    assert code == 130 and err.strip() == "lumpgraph: interrupted", err
    assert took < 10 and left == []
    assert _all_files(tmp_path) == []
