"""Exported models read back by numpy, scipy.io and python-control give the same model."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import scipy.linalg
import scipy.sparse as sp

from builder.analysis.frf import frequency_response, system_poles
from builder.analysis.modes import compute_modes
from builder.export import (
    MATRIX_NAMES,
    read_matrices,
    read_modal_csv,
    read_state_space,
    write_export,
)
from builder.linear import assemble
from builder.load import load_assembly
from builder.reduce import reduce_to_depth

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def car():
    asm = load_assembly(ROOT / "assemblies" / "compact_car.yaml")
    return asm, assemble(asm)


def _frequencies(M: np.ndarray, K: np.ndarray) -> np.ndarray:
    """Undamped natural frequencies (Hz) by scipy.linalg.eigh, independently of lumpgraph."""
    w2 = scipy.linalg.eigh(K, M, eigvals_only=True)
    return np.sqrt(np.clip(w2, 0, None)) / (2 * np.pi)


@pytest.mark.parametrize("suffix", [".npz", ".mat", ".mtx"])
def test_matrices_read_back_give_the_same_modes(car, tmp_path, suffix):
    # Independent: scipy.linalg.eigh on the reloaded M and K against lumpgraph's modes,
    # to 1e-12; every array equal to the model's to the last bit.
    _, model = car
    path = tmp_path / f"car{suffix}"
    files = write_export(model, str(path), "matrices")
    back = read_matrices(files[-1] if suffix == ".mtx" else path)
    for name in MATRIX_NAMES:
        np.testing.assert_array_equal(back.arrays[name], getattr(model, name).toarray())
    assert back.names["dofs"] == model.dofs
    assert back.names["sensors"] == model.sensors
    assert back.names["inputs"] == model.inputs
    expected = compute_modes(model).frequencies_hz
    np.testing.assert_allclose(_frequencies(back["M"], back["K"]), expected, rtol=1e-12)


def test_a_depth_exports_its_reduced_matrices(car, tmp_path):
    asm, model = car
    half = reduce_to_depth(model, asm.depths["half_car"])
    write_export(half, str(tmp_path / "half.npz"))
    back = read_matrices(tmp_path / "half.npz")
    assert back.names["dofs"] == half.dofs and back["K"].shape == (half.n, half.n)
    np.testing.assert_allclose(_frequencies(back["M"], back["K"]),
                               compute_modes(half).frequencies_hz, rtol=1e-12)


def _viscous(model):
    """The model without its hysteretic part (the state space has no time-domain form of it)."""
    zero = {k: sp.csr_array(getattr(model, k).shape) for k in ("H", "Bh", "Sh", "Dh")}
    return model.with_matrices(**zero)


def _sorted(poles):
    """Poles in an order that round-off cannot change: by imaginary, then real part."""
    p = np.asarray(poles, dtype=complex)
    return p[np.lexsort((np.round(p.real, 6), np.round(p.imag, 6)))]


# scipy.signal.freqresp goes through a transfer function whose leading numerator
# coefficient is zero here (it warns while normalising); the values are checked below.
@pytest.mark.filterwarnings("ignore:divide by zero:RuntimeWarning",
                            "ignore:invalid value:RuntimeWarning")
@pytest.mark.parametrize("suffix", [".npz", ".mat"])
def test_state_space_loads_in_python_control_and_scipy_signal(car, tmp_path, suffix):
    # Independent libraries: control.ss and scipy.signal.StateSpace built from the
    # exported arrays give lumpgraph's poles and its FRFs from every road input.
    import control
    from scipy import signal

    asm, model = car
    model = _viscous(reduce_to_depth(model, asm.depths["half_car"]))
    path = tmp_path / f"ss{suffix}"
    write_export(model, str(path), "state-space")
    ss = read_state_space(path)
    A, B, C, D = (ss[k] for k in "ABCD")
    poles = _sorted(system_poles(model))
    sys_c = control.ss(A, B, C, D)
    np.testing.assert_allclose(_sorted(sys_c.poles()), poles, rtol=1e-9)
    f = np.array([0.7, 1.3, 4.0, 11.0, 30.0])
    w = 2 * np.pi * f
    G = sys_c.frequency_response(w).fresp           # (outputs, inputs [r; r'], nf)
    nr = len(model.inputs)
    from_control = G[:, :nr, :] + 1j * w[None, None, :] * G[:, nr:, :]
    ours = frequency_response(model, f).H           # (nf, ns, nr)
    np.testing.assert_allclose(np.moveaxis(from_control, 2, 0), ours, rtol=1e-8, atol=1e-12)
    # scipy.signal (single-input, single-output slices): road input 0 and its rate to
    # sensor 0, and the poles of the same A
    r = signal.StateSpace(A, B[:, :1], C[:1], D[:1, :1])
    rdot = signal.StateSpace(A, B[:, nr:nr + 1], C[:1], D[:1, nr:nr + 1])
    np.testing.assert_allclose(_sorted(r.poles), poles, rtol=1e-9)
    _, Hr = signal.freqresp(r, w)
    _, Hv = signal.freqresp(rdot, w)
    np.testing.assert_allclose(Hr + 1j * w * Hv, ours[:, 0, 0], rtol=1e-7)
    assert ss.names["states"][:model.n] == model.dofs
    assert ss.names["inputs"][nr] == f"{model.inputs[0]}_dot"


def test_modal_csv_reads_back_to_the_same_modes(car, tmp_path):
    asm, model = car
    modes = compute_modes(model)
    write_export(model, str(tmp_path / "modes.csv"), "modal", modes)
    rows = read_modal_csv(tmp_path / "modes.csv")
    body_sensors = [n for n in model.sensors if asm.sensors[n].kind == "body"]
    assert len(rows) == len(body_sensors) * len(modes)
    Sa = model.Sa.toarray()
    for row in rows:
        mode = modes[row["mode"] - 1]
        assert row["frequency_hz"] == pytest.approx(mode.frequency_hz, rel=1e-12)
        assert row["damping_ratio"] == pytest.approx(mode.damping_ratio, rel=1e-12)
        i = model.sensors.index(row["point"])
        assert row["real"] == pytest.approx(Sa[i] @ mode.shape, rel=1e-12, abs=1e-15)
    first = rows[0]
    assert (first["x"], first["y"], first["z"]) == tuple(asm.sensors[first["point"]].at)


def _cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "builder.cli", *args], capture_output=True,
                          text=True, cwd=ROOT, timeout=300)


def test_export_command_and_its_errors(tmp_path):
    out = _cli("export", "assemblies/compact_car.yaml", "--depth", "half_car", "--to",
               str(tmp_path / "half.mat"))
    assert out.returncode == 0, out.stderr
    assert "4 DOFs" in out.stdout and (tmp_path / "half.mat").exists()
    out = _cli("export", "assemblies/compact_car.yaml", "--form", "modal", "--to",
               str(tmp_path / "x.npz"))
    assert out.returncode == 2 and out.stderr.startswith("--form: the modal form is written as")
    out = _cli("export", "assemblies/compact_car.yaml", "--to", str(tmp_path / "no" / "x.npz"))
    assert out.returncode == 2 and "does not exist" in out.stderr
    out = _cli("export", "assemblies/compact_car.yaml", "--to", str(tmp_path / "x.txt"))
    assert out.returncode == 2 and out.stderr.startswith("--to:")
    out = _cli("export", "assemblies/compact_car.yaml", "--to", str(tmp_path / "m.npz"),
               "--modes", "3")
    assert out.returncode == 2 and "--modes" in out.stderr
    assert not list(tmp_path.glob("x.*")) and not (tmp_path / "m.npz").exists()
