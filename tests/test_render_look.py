"""Pictures a review can read: the split-body skin, tyres, seated figure, caption band.

Checked by pixel facts and by the drawn points (rendering off-screen on the
CPU through Mesa; run in CI, never skipped).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from builder.analysis.modes import compute_modes
from builder.linear import assemble
from builder.load import load_assembly, load_text
from builder.render import build_scene, mode_field, render_sheet
from builder.render.look import Caption, hex_rgb
from builder.render.modeshape import ModeRenderer
from builder.render.scene import PALETTE
from builder.render.vehicle import catmull_rom_weights

VAN = Path(__file__).parent / "models" / "light_van_flexible.yaml"

# A long box body split into six segments on four corner springs (invented data).
BEAM = """
format: 1
name: Split box (invented data)
motion: spatial
bodies:
  hull: {mass: 1200 kg, cg: [0, 0, 1.0], inertia: {xx: 500, yy: 3000, zz: 3100},
         shape: {box: [4.0, 1.6, 1.2]}}
links:
  k1: {type: bushing, a: {body: hull, at: [1.8, 0.7, 0.4]}, b: {body: ground, at: [1.8, 0.7, 0.4]},
       stiffness: {x: 50 kN/m, y: 50 kN/m, z: 80 kN/m}}
  k2: {type: bushing, a: {body: hull, at: [1.8, -0.7, 0.4]},
       b: {body: ground, at: [1.8, -0.7, 0.4]}, stiffness: {x: 50 kN/m, y: 50 kN/m, z: 80 kN/m}}
  k3: {type: bushing, a: {body: hull, at: [-1.8, 0.7, 0.4]},
       b: {body: ground, at: [-1.8, 0.7, 0.4]}, stiffness: {x: 50 kN/m, y: 50 kN/m, z: 80 kN/m}}
  k4: {type: bushing, a: {body: hull, at: [-1.8, -0.7, 0.4]},
       b: {body: ground, at: [-1.8, -0.7, 0.4]}, stiffness: {x: 50 kN/m, y: 50 kN/m, z: 80 kN/m}}
plugins:
  - use: split_body
    name: hull
    with: {body: hull, segments: 6, EA: 1e9 N, EIy: 1e7 N m^2, EIz: 1e7 N m^2, GJ: 4e6 N m^2}
"""


@pytest.fixture(scope="module")
def hull():
    assembly = load_text(BEAM, "hull.yaml")
    model = assemble(assembly)
    return assembly, model, build_scene(assembly)


def _skin_points(scene, renderer=None):
    parts = [p for p in scene.parts if p.kind == "skin"]
    if renderer is None:
        return np.vstack([p.geometry.points for p in parts])
    return np.vstack([renderer.points_of(p.name) for p in parts])


def test_catmull_rom_weights_sum_to_one_and_interpolate():
    # Partition of unity keeps rigid motions rigid; interpolation puts the
    # skin through each node's motion (the defining properties of the basis).
    nodes = np.array([-2.0, -1.1, 0.0, 0.7, 2.0])
    s = np.linspace(-3.0, 3.0, 101)
    w = catmull_rom_weights(s, nodes)
    np.testing.assert_allclose(w.sum(axis=1), 1.0, atol=1e-12)
    np.testing.assert_allclose(catmull_rom_weights(nodes, nodes), np.eye(5), atol=1e-12)
    assert np.all(w[s < -2.0, 0] == 1.0) and np.all(w[s > 2.0, -1] == 1.0)


def test_split_body_is_one_skin_of_the_given_shape(hull):
    assembly, _, scene = hull
    kinds = [p.kind for p in scene.parts]
    # no segment slabs and no inner beams: one skin (pieces between nodes) and ribs
    assert not any(p.name.startswith("body:hull_") for p in scene.parts)
    assert "beam" not in kinds and kinds.count("rib") == 6
    pts = _skin_points(scene)
    # the file's box, 4.0 x 1.6 x 1.2 m about the cg, swept over the split span
    np.testing.assert_allclose(pts.min(axis=0), [-2.0, -0.8, 0.4], atol=1e-9)
    np.testing.assert_allclose(pts.max(axis=0), [2.0, 0.8, 1.6], atol=1e-9)


def test_rigid_chain_motion_moves_the_skin_rigidly(hull):
    # Every segment with the same rigid motion (u, theta) about the hull cg:
    # each skin point moves by u + theta x (p - cg) (small-motion kinematics).
    assembly, model, scene = hull
    u, theta = np.array([0.01, -0.02, 0.03]), np.array([0.02, 0.01, -0.015])
    cg = np.array([0.0, 0.0, 1.0])
    shape = np.zeros(len(model.dofs))
    for k, dof in enumerate(model.dofs):
        body, _, d = dof.rpartition(".")
        seg = assembly.bodies[body].cg
        i = "x y z rx ry rz".split().index(d)
        # a segment's cg motion in the same rigid field
        shape[k] = (u + np.cross(theta, seg - cg))[i] if i < 3 else theta[i - 3]
    field = mode_field(scene, model.dofs, shape)
    pts = _skin_points(scene)
    moved = np.vstack([field.displacements[k] for k, p in enumerate(scene.parts)
                       if p.kind == "skin"])
    np.testing.assert_allclose(moved, u + np.cross(theta, pts - cg), atol=1e-12)


def _front_top_rows(image: np.ndarray) -> tuple[int, int]:
    paper = hex_rgb(PALETTE["paper"])
    ink = np.abs(image.astype(float) - paper).max(axis=2) > 40
    w = image.shape[1]
    rows = np.arange(image.shape[0])

    def top(cols: slice) -> int:
        hit = ink[:, cols].any(axis=1)
        return int(rows[hit].min())

    return top(slice(int(0.2 * w), int(0.4 * w))), top(slice(int(0.6 * w), int(0.8 * w)))


def test_pure_torsion_moves_the_skin_edges_opposite(hull):
    # A pure twist about x growing from the rear to the front: seen from ahead,
    # the front section turns, so one upper edge of the skin rises and the other
    # stays at the rear section's height; half a cycle later the sides swap.
    # (Rigid rotation of the section: z = theta * y, opposite signs at +y and -y.)
    assembly, model, scene = hull
    shape = np.zeros(len(model.dofs))
    for k, dof in enumerate(model.dofs):
        body, _, d = dof.rpartition(".")
        if d == "rx":
            shape[k] = float(assembly.bodies[body].cg[0]) + 2.0
    field = mode_field(scene, model.dofs, shape)
    with ModeRenderer(scene, (400, 340), tracks=False, shadow=False, legend=False) as r:
        rest = _front_top_rows(r.draw(None, "rest", "front")[:-r.band])
        up = _front_top_rows(r.draw(field, "twist", "front", 0.0)[:-r.band])
        down = _front_top_rows(r.draw(field, "twist", "front", math.pi)[:-r.band])
        # the drawn points: left (+y) and right (-y) top edges at the front move opposite
        r.set_phase(0.0)
        pts, base = _skin_points(scene, r), _skin_points(scene)
    front = (base[:, 0] > 1.9) & (base[:, 2] > 1.5)
    dz = pts[front, 2] - base[front, 2]
    y = base[front, 1]
    assert np.all(dz[y > 0.5] > 0.01) and np.all(dz[y < -0.5] < -0.01)
    # image: column quarters left and right of the middle (from ahead, +y is on the right)
    assert up[1] < rest[1] - 3 and abs(up[0] - rest[0]) <= 1
    assert down[0] < rest[0] - 3 and abs(down[1] - rest[1]) <= 1


@pytest.fixture(scope="module")
def van():
    assembly = load_assembly(VAN)
    model = assemble(assembly)
    return assembly, model, build_scene(assembly)


def _display(renderer: ModeRenderer, point) -> tuple[int, int]:
    ren = renderer.plotter.renderer
    ren.SetWorldPoint(*point, 1.0)
    ren.WorldToDisplay()
    x, y, _ = ren.GetDisplayPoint()
    return int(round(x)), int(round(renderer.view_size[1] - 1 - y))


def test_a_tyre_sits_on_each_wheel_centre(van):
    assembly, _, scene = van
    tyres = [p for p in scene.parts if p.kind == "tyre"]
    assert len(tyres) == 4
    centres = {"tyre_fl": (0, 0.82), "tyre_fr": (0, -0.82), "tyre_rl": (-3.3, 0.8),
               "tyre_rr": (-3.3, -0.8)}
    for part in tyres:
        lo, hi = part.geometry.points.min(axis=0), part.geometry.points.max(axis=0)
        x, y = centres[part.name[5:]]
        # centred on the wheel centre (0.33 m up), radius = its height over the road
        np.testing.assert_allclose(0.5 * (lo + hi), [x, y, 0.33], atol=1e-9)
        assert hi[2] == pytest.approx(0.66, abs=1e-9) and lo[2] == pytest.approx(0.0, abs=1e-9)
    # Pixel fact: seen from the left in plain colours, the tread of the left
    # tyres is drawn at 0.9 of the radius above each centre, in the tyre's colour.
    tyre = hex_rgb(PALETTE["tyre"])
    with ModeRenderer(scene, (640, 480), plain=True, legend=False) as r:
        image = r.draw(None, "scene", "side")
        for x in (0.0, -3.3):
            col, row = _display(r, (x, 1.2, 0.33 + 0.9 * 0.33))
            patch = image[row - 1:row + 2, col - 1:col + 2].reshape(-1, 3).astype(float)
            assert np.abs(patch - tyre).max(axis=1).min() < 40


def test_seat_and_occupant_are_a_seated_figure(van):
    assembly, model, scene = van
    names = {p.name for p in scene.parts}
    assert {"body:driver_frame", "body:driver_surface", "body:driver_head",
            "body:driver_upper_torso", "figure:driver_thighs_pelvis:shins"} <= names
    head = scene.part("body:driver_head").geometry.points
    cushion = scene.part("body:driver_surface").geometry.points
    assert head[:, 2].min() > cushion[:, 2].max() + 0.4      # sitting up
    # the couplings inside the person are not drawn as blocks: the figure shows them
    assert not any(n.startswith("bushing:driver_occ") for n in names)
    # a head-only motion moves the head and nothing else of the figure
    shape = np.array([1.0 if d == "driver_head.z" else 0.0 for d in model.dofs])
    field = mode_field(scene, model.dofs, shape)
    for k, part in enumerate(scene.parts):
        moved = field.displacements[k]
        if moved is None:
            continue
        if part.name == "body:driver_head":
            np.testing.assert_allclose(moved[:, 2], 1.0)
        elif part.name.startswith(("body:driver", "figure:driver")):
            assert np.abs(moved).max() == 0.0


def test_caption_band_and_not_blank(van):
    assembly, model, scene = van
    modes = compute_modes(model)
    mode = modes.modes[19]
    field = mode_field(scene, model.dofs, mode.shape)
    with ModeRenderer(scene, (640, 480)) as r:
        image = r.draw(field, Caption("20", mode.frequency_hz, mode.damping_ratio, mode.label),
                       "iso")
        band = r.band
    assert image.shape == (480, 640, 3)
    strip = image[-band:].reshape(-1, 3).astype(float)
    # mostly the band's ink, the accent tile at its left, light text on it
    assert (np.abs(strip - hex_rgb(PALETTE["band"])).max(axis=1) < 10).mean() > 0.6
    tile = image[-band // 2, 4:band // 2].astype(float)
    assert (np.abs(tile - hex_rgb(PALETTE["accent"])).max(axis=1) < 10).mean() > 0.5
    view = image[:-band]
    assert view.reshape(-1, 3).std(axis=0).max() > 10.0
    assert len(np.unique(view.reshape(-1, 3), axis=0)) > 200
    # the stock layout is not used: no colour bar column at the right
    right = view[:, -int(0.12 * 640):].reshape(-1, 3).astype(float)
    assert (np.abs(right - hex_rgb(PALETTE["paper"])).max(axis=1) < 6).mean() > 0.9


def test_sheet_has_bands_and_one_legend(van):
    assembly, model, scene = van
    modes = compute_modes(model)
    image = render_sheet(scene, model.dofs, modes, 4, size=(644, 520))
    assert image.shape == (520, 644, 3)
    ink = hex_rgb(PALETTE["band"])
    rows = (np.abs(image.astype(float) - ink).max(axis=2) < 10).mean(axis=1)
    # two rows of panels, each ending in its band, then the legend strip
    assert rows[-5] > 0.6 and (rows > 0.6).sum() > 0.18 * 520
