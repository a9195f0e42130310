"""Superelements: reduced matrices joined to bodies reproduce the model they came from."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import scipy.linalg

from builder.analysis.modes import compute_modes
from builder.assembly import Assembly
from builder.errors import InputError
from builder.export import write_export
from builder.kinematics import motion_map
from builder.linear import assemble
from builder.load import load_assembly
from builder.superelement import BoundaryPoint, Superelement, read_superelement_matrices

ROOT = Path(__file__).resolve().parent.parent
PLUGIN_SOURCE = "from plugins.superelement import PLUGIN\n"


def test_split_body_beam_rebuilt_from_its_exported_matrices(tmp_path):
    # The flexible car's beam chain (split_body: ten segments, nine beams) exported as a
    # model of its own; the car rebuilt with the beams taken out and their exported
    # stiffness joined to the segments at their cgs as a superelement gives the same
    # modes (to round-off). The beams are massless elements (the segments carry the
    # mass), so the superelement's mass is the exported M less the segments' own.
    asm = load_assembly(ROOT / "assemblies" / "compact_car_flexible.yaml")
    beams = {n: lk for n, lk in asm.links.items() if lk.type == "beam"}
    segments = {n: b for n, b in asm.bodies.items() if n.startswith("body_s")}
    chain = Assembly(name="beam chain", motion=asm.motion, bodies=segments, links=beams)
    exported = assemble(chain)
    write_export(exported, str(tmp_path / "beam.npz"))
    mats = read_superelement_matrices(str(tmp_path / "beam.npz"), None)
    own = np.zeros_like(mats["M"])
    start = 0
    points = []
    for b in segments.values():
        k = len(b.dofs)
        sel = [("x", "y", "z", "rx", "ry", "rz").index(d) for d in b.dofs]
        own[start:start + k, start:start + k] = b.mass_matrix[np.ix_(sel, sel)]
        points.append(BoundaryPoint(b.name, tuple(b.cg), b.dofs))
        start += k
    assert np.abs(mats["M"] - own).max() < 1e-9 * np.abs(own).max()
    se = Superelement("beam", mats["M"] - own, mats["K"], mats["C"], mats["H"], tuple(points))
    rebuilt = asm.replace(links={n: lk for n, lk in asm.links.items() if n not in beams},
                          superelements={"beam": se})
    original, again = assemble(asm), assemble(rebuilt)
    assert again.dofs == original.dofs
    for key in ("M", "K", "C", "H"):
        a, b = getattr(again, key).toarray(), getattr(original, key).toarray()
        np.testing.assert_allclose(a, b, rtol=0, atol=1e-12 * np.abs(b).max())
    # the same modes: scipy.linalg.eigh of both (the model's own mode labels are slow on
    # 70 DOFs and not what is checked here)
    f0 = np.sqrt(np.abs(scipy.linalg.eigh(original.K.toarray(), original.M.toarray(),
                                          eigvals_only=True)))
    f1 = np.sqrt(np.abs(scipy.linalg.eigh(again.K.toarray(), again.M.toarray(),
                                          eigvals_only=True)))
    np.testing.assert_allclose(f1, f0, rtol=1e-10)


def _half_body_matrices(asm, point):
    """Half the deck's mass matrix over its DOFs (z, rx, ry), moved to ``point``.

    Analytic: the motion at the cg is motion_map(cg - p) times the motion at p, so the
    rigid mass matrix at p is Phi^T M_cg Phi (kinetic energy is the same)."""
    body = asm.bodies["deck"]
    sel = [2, 3, 4]
    Mcg = 0.5 * body.mass_matrix[np.ix_(sel, sel)]
    Phi = motion_map(body.cg - np.asarray(point))[np.ix_(sel, sel)]
    return Phi.T @ Mcg @ Phi


PLATFORM = """\
format: 1
name: Platform on four mounts (invented test data)
motion: vertical
parameters: {m: 800 kg, ixx: 300, iyy: 900}
bodies:
  deck: {mass: "${m}", cg: [0.1, 0.05, 0.6], inertia: {xx: "${ixx}", yy: "${iyy}", zz: 1000, xy: 12}}
links:
  m1: {type: spring, a: {body: deck, at: [1.2, 0.7, 0.4]}, b: ground, axis: z, stiffness: 90 kN/m, damping: 900 N s/m}
  m2: {type: spring, a: {body: deck, at: [1.2, -0.7, 0.4]}, b: ground, axis: z, stiffness: 80 kN/m, damping: 900 N s/m}
  m3: {type: spring, a: {body: deck, at: [-1.0, 0.7, 0.4]}, b: ground, axis: z, stiffness: 70 kN/m, damping: 900 N s/m}
  m4: {type: spring, a: {body: deck, at: [-1.0, -0.7, 0.4]}, b: ground, axis: z, stiffness: 75 kN/m, damping: 900 N s/m}
"""


def test_half_the_body_as_a_superelement_at_a_point(tmp_path, install_plugins, write_yaml):
    # A platform with half its mass and inertia, and a superelement at a point 0.4 m
    # ahead and 0.3 m above its cg carrying the other half (its rigid mass matrix moved
    # to that point), through the plugin in a file: the same mass matrix, modes and
    # static loads under gravity as the whole platform.
    install_plugins(superelement=("lg_superelement", PLUGIN_SOURCE))
    whole = load_assembly(write_yaml(PLATFORM, "whole.yaml"))
    body = whole.bodies["deck"]
    point = body.cg + np.array([0.4, 0.0, 0.3])
    np.savez(tmp_path / "half.npz", M=_half_body_matrices(whole, point), K=np.zeros((3, 3)))
    text = PLATFORM.replace("{m: 800 kg, ixx: 300, iyy: 900}", "{m: 400 kg, ixx: 150, iyy: 450}")
    text = text.replace("zz: 1000, xy: 12", "zz: 500, xy: 6")
    text += ("plugins:\n  - use: superelement\n    name: half\n    with:\n"
             "      matrices: half.npz\n      points:\n"
             f"        - {{body: deck, at: {point.tolist()}, dofs: [z, rx, ry]}}\n")
    rebuilt = assemble(load_assembly(write_yaml(text, "half.yaml")))
    model = assemble(whole)
    np.testing.assert_allclose(rebuilt.M.toarray(), model.M.toarray(), rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(compute_modes(rebuilt).frequencies_hz,
                               compute_modes(model).frequencies_hz, rtol=1e-10)
    np.testing.assert_allclose(rebuilt.static_load(), model.static_load(), rtol=1e-12,
                               atol=1e-9)


def test_interior_coordinates_become_dofs_and_gravity_reaches_them(tmp_path):
    # A two-mass chain as a superelement: boundary z of a point joined to the quarter
    # car's body, one interior coordinate (a 10 kg mass on a 40 kN/m spring under it).
    # Analytic: an added mass-spring on the body; its static deflection under 1 g is
    # m g / k below the body's (the interior coordinate's static response).
    asm = load_assembly(ROOT / "assemblies" / "quarter_car.yaml")
    k, m = 40e3, 10.0
    K = np.array([[k, -k], [-k, k]])
    M = np.diag([0.0, m])
    body = next(iter(asm.bodies.values()))
    se = Superelement("absorber", M, K, np.zeros((2, 2)), np.zeros((2, 2)),
                      (BoundaryPoint(body.name, tuple(body.cg), ("z",)),))
    model = assemble(asm.replace(superelements={"absorber": se}))
    assert model.dofs[-1] == "absorber.q01"
    q = model.static_response()
    zb = q[model.dofs.index(f"{body.name}.z")]
    assert q[-1] == pytest.approx(zb - m * 9.80665 / k, rel=1e-9)
    plain = assemble(asm)
    # the whole vehicle's static sink grows by the added weight on the same springs
    assert zb < plain.static_response()[plain.dofs.index(f"{body.name}.z")]


def test_bad_matrices_are_refused(tmp_path, install_plugins, write_yaml):
    install_plugins(superelement=("lg_superelement", PLUGIN_SOURCE))
    np.savez(tmp_path / "bad.npz", M=np.array([[1.0, 2.0], [0.0, 1.0]]), K=np.eye(2))
    text = PLATFORM + ("plugins:\n  - use: superelement\n    name: se\n    with:\n"
                       "      matrices: bad.npz\n"
                       "      points: [{body: deck, at: [0, 0, 0.5], dofs: [z]}]\n")
    with pytest.raises(InputError, match="M is not symmetric"):
        load_assembly(write_yaml(text))
    np.savez(tmp_path / "bad.npz", M=np.eye(2), K=np.eye(2))
    with pytest.raises(InputError, match="3 DOFs, but the matrices are 2 x 2"):
        load_assembly(write_yaml(text.replace("dofs: [z]", "dofs: [x, y, z]")))
    with pytest.raises(InputError, match="no such file"):
        load_assembly(write_yaml(text.replace("bad.npz", "none.npz")))
