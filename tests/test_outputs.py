"""Outputs that must read right: counts, signs, units and words in the printed tables.

Outside references: the SI unit definitions (1 kN/m = 1000 N/m, 1 rpm = 2 pi/60
rad/s); the static tyre load of the quarter car, (300 + 36) kg x g (statics).
"""

from __future__ import annotations

import csv
import math
import re
from pathlib import Path

import numpy as np
import pytest

from builder.analysis.transient import event_response, road_event
from builder.linear import assemble
from builder.load import load_assembly

ROOT = Path(__file__).resolve().parent.parent
CARS = ROOT / "assemblies"


def test_ladder_counts_one_dof_and_prints_no_negative_zero(run_cli):
    code, out, _ = run_cli("ladder", CARS / "compact_car.yaml")
    assert code == 0
    assert "depth bounce: 1 DOF (body.z)" in out and "1 DOFs" not in out
    assert not re.search(r"-0\.00\b", out)
    assert "+8.14 %" in out                    # signed error, with its unit


def test_bump_says_lift_off_instead_of_a_negative_load(run_cli):
    code, out, _ = run_cli("bump", CARS / "quarter_car.yaml", "--height", "120 mm",
                           "--length", "0.3 m", "--speed", "15 km/h")
    assert code == 0
    assert "lifts off at" in out and "% of static" not in out
    assert "lift-off:" in out and "not physical" in out
    model = assemble(load_assembly(CARS / "quarter_car.yaml"))
    result = event_response(model, road_event("bump", 0.12, 0.3), 15 / 3.6)
    static = result.static["tyre_load"]
    assert static == pytest.approx((300 + 36) * 9.80665, rel=1e-9)   # statics
    # lift-off: the first sample at which static + dynamic load is below zero
    total = static + result.history("tyre_load")
    first = result.time_s[np.flatnonzero(total < 0)[0]]
    assert result.lift_off_s("tyre_load") == pytest.approx(first)
    assert result.to_dict()["sensors"]["tyre_load"]["lift_off_s"] == pytest.approx(first)
    small = event_response(model, road_event("bump", 0.005, 1.0), 5.0)
    assert small.lift_off_s("tyre_load") is None
    assert re.search(r"least load \d+ % of static", small.table())


def test_sweep_prints_and_plots_in_engineering_units_and_writes_si_csv(run_cli, tmp_path):
    path = tmp_path / "sweep.csv"
    code, out, _ = run_cli("sweep", CARS / "compact_car.yaml", "--vary",
                           "ks_front=15kN/m..30kN/m:4", "--modes", "2", "--csv", path,
                           "--no-progress")
    assert code == 0
    lines = out.splitlines()
    head = next(i for i, line in enumerate(lines) if line.startswith("ks_front (kN/m)"))
    assert "mode 1 (Hz)" in lines[head]
    assert [float(r.split()[0]) for r in lines[head + 1:head + 5]] == [15, 20, 25, 30]
    rows = list(csv.reader(path.open()))
    column = rows[0].index("ks_front")
    assert [float(r[column]) for r in rows[1:]] == [15e3, 20e3, 25e3, 30e3]   # SI


def test_sweep_result_display_units():
    from builder.analysis.sweep import SweepResult
    res = SweepResult(("ks", "cs", "v"), np.array([[24e3, 1800.0, 60 / 3.6]]),
                      ("mode1_hz",), np.array([[1.2]]), "grid",
                      units=("N/m", "N s/m", "m/s"))
    assert res.display_unit("ks") == ("kN/m", pytest.approx(1e-3))
    assert res.display_unit("v") == ("km/h", pytest.approx(3.6))
    assert [res.heading(c) for c in ("ks", "cs", "v", "mode1_hz")] == [
        "ks (kN/m)", "cs (N s/m)", "v (km/h)", "mode 1 (Hz)"]
    row = res.table().splitlines()[1].split()
    assert [float(v) for v in row] == pytest.approx([24, 1800, 60, 1.2])


def test_plugins_show_defaults_in_the_declared_unit(run_cli):
    code, out, _ = run_cli("plugins")
    assert code == 0
    assert "idle_speed   [angular_speed; default 800 rpm]" in out
    assert "max_speed    [angular_speed; default 6000 rpm]" in out
    assert "rail_stiffness_x     [stiffness; default 600 kN/m]" in out
    assert "83.77" not in out and "628.31" not in out
    assert "default [0, 1, 0]" in out
    code, out, _ = run_cli("plugins", "--json")
    import json
    engine = next(p for p in json.loads(out)["plugins"] if p["name"] == "engine")
    idle = next(p for p in engine["parameters"] if p["name"] == "idle_speed")
    assert idle["default"] == pytest.approx(800 * 2 * math.pi / 60)      # SI, rad/s
    assert idle["default_text"] == "800 rpm"


def test_sensitivities_and_targets_print_per_engineering_unit(run_cli):
    # df/dp in Hz per kN/m is 1000 times df/dp in Hz per N/m (SI definition).
    code, out, _ = run_cli("sweep", CARS / "compact_car.yaml", "--vary",
                           "ks_front=15kN/m..30kN/m:2", "--sensitivity", "--modes", "1")
    assert code == 0 and "Hz per kN/m" in out and "SI unit" not in out
    code, js, _ = run_cli("sweep", CARS / "compact_car.yaml", "--vary",
                          "ks_front=15kN/m..30kN/m:2", "--sensitivity", "--json")
    import json
    si = json.loads(js)["modes"][0]["df_dp"]["ks_front"]
    row = next(line for line in out.splitlines() if line.strip().startswith("ks_front"))
    assert float(row.split()[1]) == pytest.approx(1000 * si, rel=1e-5)
    code, out, _ = run_cli("sweep", CARS / "compact_car.yaml", "--vary",
                           "ks_front=15kN/m..30kN/m:2", "--target", "1=1.1Hz")
    assert code == 0 and re.search(r"ks_front +\d+(\.\d+)? kN/m", out)


def test_ladder_leads_each_depth_with_its_decision_figures(run_cli):
    # the lead figures recomputed from the JSON rungs (pure arithmetic on to_dict())
    import json

    code, out, _ = run_cli("ladder", CARS / "compact_car.yaml")
    assert code == 0 and "  mode   f (Hz)" not in out          # pairs only with --detail
    code, text, _ = run_cli("ladder", CARS / "compact_car.yaml", "--json")
    data = json.loads(text)
    for depth in data["depths"]:
        modes = depth["modes"]
        worst = max(modes, key=lambda m: abs(m["frequency_error"]))
        low = min(modes, key=lambda m: m["mac"])
        good = {m["full_mode"] for m in modes
                if m["mac"] >= 0.9 and abs(m["frequency_error"]) <= 0.05}
        lead = out.split(f"depth {depth['depth']}: ")[1].splitlines()[1]
        assert lead.startswith(f"  {len(good)} of {len(modes)} mode")
        assert f"worst error {100 * worst['frequency_error']:+.2f} % on mode " \
               f"{worst['number']} ({worst['frequency_hz']:.3f} Hz" in lead
        assert f"lowest MAC {low['mac']:.3f} on mode {low['number']}" in lead
    code, detail, _ = run_cli("ladder", CARS / "compact_car.yaml", "--detail")
    assert code == 0 and detail.count("  mode   f (Hz)") == len(data["depths"])
    assert "+8.14 %  body bounce" in detail
    code, _, err = run_cli("ladder", CARS / "compact_car.yaml", "--detail", "--frf",
                           "road.fl:floor_front")
    assert code == 2 and "--detail" in err
