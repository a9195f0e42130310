"""``ladder --propose``: depths built from the graph, and the ``modes:`` of a depth.

Sources: Rayleigh-Ritz (a basis spanning the whole space gives the exact
eigenvalues; Craig and Bampton, 1968: static constraint modes plus every
fixed-interface mode span it), analytic symmetry, and independent ``ride``
runs of the proposed depth written into the file.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest
import scipy.linalg

from builder.analysis.propose import body_groups, group_levels, search_depths
from builder.analysis.response_ladder import Question
from builder.linear import assemble
from builder.load import load_assembly, load_text
from builder.reduce import reduce_to_depth

ROOT = Path(__file__).resolve().parent.parent
FLEXIBLE = ROOT / "assemblies" / "compact_car_flexible.yaml"
SYMMETRIC = ROOT / "tests" / "models" / "symmetric_car.yaml"
V = 60 / 3.6


def _eig(model):
    return scipy.linalg.eigh(model.K.toarray(), model.M.toarray(), eigvals_only=True)


def test_every_fixed_interface_mode_gives_the_full_model_exactly():
    # Rayleigh-Ritz: static constraint modes of the kept segment plus all the
    # fixed-interface modes of the others span the whole space
    asm = load_assembly(FLEXIBLE)
    model = assemble(asm)
    text = FLEXIBLE.read_text() + '  cb_all: {keep: ["body_s06.*", "wheel_*.z", "engine.*"], ' \
        'modes: {"body_s*.*": 54}}\n  cb_none: {keep: ["body_s06.*", "wheel_*.z", "engine.*"], ' \
        'modes: {"body_s*.*": 2}}\n  guyan: {keep: ["body_s06.*", "wheel_*.z", "engine.*"]}\n'
    asm2 = load_text(text, str(FLEXIBLE))
    full = _eig(model)
    cb_all = reduce_to_depth(model, asm2.depths["cb_all"])
    assert cb_all.n == model.n
    lam = _eig(cb_all)
    assert np.allclose(lam, full, rtol=1e-8, atol=1e-12 * full[-1])
    # fewer modes: each eigenvalue an upper bound (Rayleigh-Ritz), between Guyan and exact
    two = _eig(reduce_to_depth(model, asm2.depths["cb_none"]))
    guy = _eig(reduce_to_depth(model, asm2.depths["guyan"]))
    k = slice(6, 16)
    assert np.all(two[k] >= full[k] * (1 - 1e-9)) and np.all(guy[k] >= two[k] * (1 - 1e-9))
    assert "body_s.mode1" in reduce_to_depth(model, asm2.depths["cb_none"]).dofs


@pytest.mark.parametrize("entry, message", [
    ('{keep: [body_s06.z], modes: {"body_s*.*": 0}}', "between 1 and"),
    ('{keep: [body_s06.z], modes: {"nobody.*": 2}}', "nobody"),
    ('{keep: [body_s06.z], modes: [2]}', "mapping"),
    ('{keep: ["body_s06.*", "wheel_*.z"], modes: {"wheel_*.*": 2}}', "of 0 condensed DOFs"),
    ('{keep: [body_s06.z], modes: {"engine.*": 7}}', "of 6 condensed DOFs"),
])
def test_bad_modes_are_refused_at_their_line(entry, message, tmp_path, run_cli):
    path = tmp_path / "car.yaml"
    path.write_text(FLEXIBLE.read_text() + f"  bad: {entry}\n")
    code, _, err = run_cli("modes", path)
    assert code == 2 and message in err and re.match(r".*car\.yaml:\d+: ", err)


def test_body_groups_and_levels_of_a_van_with_seat_engine_and_split_body():
    asm = load_assembly(ROOT / "tests" / "models" / "light_van_flexible.yaml")
    groups = {g.name: g for g in body_groups(asm)}
    assert groups["body"].kind == "vehicle" and len(groups["body"].bodies) == 8
    assert groups["driver"].kind == "plugin" and "driver_head" in groups["driver"].bodies
    assert groups["wheels"].kind == "road" and "axle" in groups["wheels"].bodies
    _, options = group_levels(asm)
    for levels in options:
        sizes = [lv.dofs for lv in levels]
        assert sizes == sorted(sizes)
    vehicle = options[[g.kind for g in body_groups(asm)].index("vehicle")]
    assert any(lv.modes for lv in vehicle)      # Craig-Bampton of the split body


def test_symmetric_car_on_identical_tracks_the_search_finds_the_tied_half_car(write_yaml):
    # analytic symmetry: the first depth within is the side-view half car
    # (left and right wheels tied, roll condensed), exact for this question
    text = SYMMETRIC.read_text().split("depths:")[0]
    path = write_yaml(text)
    model = assemble(load_assembly(path))
    q = Question(ride=("C", V, "identical", (0.5, 80.0)))
    lad = search_depths(model, q, 0.01)
    rec = lad.depth(lad.recommended)
    assert rec.within and rec.source == "proposed"
    assert set(rec.dofs) == {"body.z", "body.ry", "wheel_fl.z", "wheel_rl.z"}
    assert max(abs(e) for e in rec.errors.values()) < 1e-5
    assert "tie:" in rec.entry


def test_the_proposed_entry_loads_back_and_ride_on_it_gives_its_figures(run_cli, tmp_path):
    code, out, err = run_cli("ladder", FLEXIBLE, "--ride", "C", "--speed", "60 km/h",
                             "--propose", "--json")
    assert code == 0, err
    data = json.loads(out)
    name = data["recommended"]
    rec = next(d for d in data["depths"] if d["name"] == name)
    assert rec["within"] and rec["source"] == "proposed"
    assert data["recommended_entry"] == rec["entry"]
    # nothing smaller judged is within; the search stopped well before the full model
    assert not any(d["within"] for d in data["depths"] if d["dofs"] < rec["dofs"])
    assert max(d["dofs"] for d in data["depths"]) < data["full"]["dofs"] / 2
    path = tmp_path / "car.yaml"
    path.write_text(FLEXIBLE.read_text() + rec["entry"] + "\n")
    asm = load_assembly(path)
    reduced = reduce_to_depth(assemble(asm), asm.depths[name])
    assert list(reduced.dofs) == rec["dof_labels"]
    code, out, err = run_cli("ride", path, "--road", "C", "--speed", "60 km/h", "--depth", name,
                             "--json")
    assert code == 0, err
    sensors = json.loads(out)["sensors"]
    for key, value in rec["values"].items():
        sensor, figure = key.rsplit(".", 1)
        assert sensors[sensor][figure] == pytest.approx(value, rel=2e-3), key
    code, out, _ = run_cli("ladder", path, "--ride", "C", "--speed", "60 km/h")
    assert code == 0 and name in out
