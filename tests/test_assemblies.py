"""Every example in assemblies/ loads, passes its checks and gives its modes.

The examples are invented data; what is checked here is that they stay
loadable and physically sensible (positive-definite mass, exactly symmetric
matrices, no unexpected zero-frequency mode, energy shares summing to 1).
"""

import json

import numpy as np
import pytest
from conftest import ASSEMBLIES

from builder.analysis.checks import check_model
from builder.analysis.ladder import compute_ladder
from builder.analysis.modes import compute_modes
from builder.linear import assemble
from builder.load import load_assembly

FILES = sorted(ASSEMBLIES.glob("*.yaml"))


@pytest.mark.parametrize("path", FILES, ids=[p.name for p in FILES])
def test_example_loads_and_checks(path):
    asm = load_assembly(path)
    assert "invented" in path.read_text().lower()      # demo data say so
    model = assemble(asm)
    checks = check_model(model)
    assert checks.min_eigenvalue["M"] > 0
    assert max(checks.asymmetry.values()) < 1e-12
    assert checks.zero_modes == 0 and not checks.unconnected
    modes = compute_modes(model)
    for m in modes.modes:
        assert sum(m.energy.values()) == pytest.approx(1.0, abs=1e-9)
        assert m.frequency_hz > 0 and m.label


@pytest.mark.parametrize("path", FILES, ids=[p.name for p in FILES])
def test_example_ladder(path):
    # Every depth is a Ritz projection q = T q' of the full model (ties and
    # Guyan condensation alike), so by the Rayleigh-Ritz (Courant-Fischer
    # minimax) theorem its k-th natural frequency is at or above the full
    # model's k-th one.
    ladder = compute_ladder(assemble(load_assembly(path)))
    full = np.sort(ladder.full.frequencies_hz)
    for rung in ladder.rungs:
        reduced = np.sort(rung.modes.frequencies_hz)
        assert len(reduced) <= len(full)
        assert np.all(reduced >= full[:len(reduced)] * (1 - 1e-9)), rung.depth


def test_compact_car_ladder_depths_have_the_stated_sizes():
    asm = load_assembly(ASSEMBLIES / "compact_car.yaml")
    assert len(asm.dof_labels) == 10
    ladder = compute_ladder(assemble(asm))
    sizes = {r.depth: len(r.dofs) for r in ladder.rungs}
    assert sizes == {"bounce": 1, "bounce_pitch": 2, "half_car": 4, "half_car_engine": 5,
                     "full": 10}
    full = [r for r in ladder.rungs if r.depth == "full"][0]
    # the full depth is the model itself: MAC 1 and no error (identity check)
    assert np.allclose(full.mac, 1.0) and np.allclose(full.error, 0.0, atol=1e-12)


def test_modes_json_follows_the_format(run_cli):
    code, out, err = run_cli("modes", ASSEMBLIES / "compact_car.yaml", "--json")
    assert code == 0, err
    data = json.loads(out)
    assert set(data) >= {"model", "modes"}
    assert data["model"]["name"] == "Compact car (invented data)"
    assert len(data["model"]["dofs"]) == 10
    freqs = [m["frequency_hz"] for m in data["modes"]]
    assert freqs == sorted(freqs)
    for m in data["modes"]:
        assert set(m) >= {"number", "frequency_hz", "damping_ratio", "label", "energy"}
        assert set(m["energy"]) == set(data["model"]["dofs"])


def test_modes_csv_and_depth_options(run_cli):
    code, out, _ = run_cli("modes", ASSEMBLIES / "compact_car.yaml", "--depth", "half_car",
                           "--csv")
    assert code == 0
    rows = out.strip().splitlines()
    assert rows[0].startswith("number,frequency_hz,damping_ratio")
    assert len(rows) == 5
    code, out, _ = run_cli("modes", ASSEMBLIES / "compact_car.yaml", "--keep", "body.z,body.ry")
    assert code == 0 and "2 DOFs" in out


def test_ladder_and_check_commands(run_cli):
    code, out, _ = run_cli("ladder", ASSEMBLIES / "compact_car.yaml", "--json")
    assert code == 0 and json.loads(out)["depths"]
    code, out, _ = run_cli("check", ASSEMBLIES / "compact_car.yaml")
    assert code == 0 and "static deflection under 1 g" in out
