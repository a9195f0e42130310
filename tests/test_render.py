"""Tests of the 3D scene, mode-shape frames, review sheet and VTK export.

Rendering runs off-screen on the CPU (Mesa); these tests run in CI, never skipped.
"""

from __future__ import annotations

import io
import math

import numpy as np
import pytest
import pyvista as pv
import sympy as sp
from PIL import Image

from builder.analysis.modes import compute_modes
from builder.assembly import End, Link
from builder.errors import InputError
from builder.linear import assemble
from builder.load import load_text
from builder.render import (
    build_scene,
    choose_view,
    export_vtk,
    mode_field,
    phase_normalised,
    render_mode,
    render_sheet,
    save_mode_animation,
    save_mode_image,
    sheet_layout,
)
from builder.render.modeshape import ModeRenderer, parse_size
from builder.render.scene import point_maps
from builder.render.shapes import box_dimensions, ellipsoid_semi_axes, helix, solid_size

pv.OFF_SCREEN = True

CAR = """
format: 1
name: Render test car (invented data)
motion: vertical
bodies:
  body:
    mass: 1250 kg
    cg: [-1.3, 0.0, 0.55]
    inertia: {xx: 480, yy: 1850, zz: 2100, xz: 35}
  wheel_fl: {mass: 36 kg, cg: [0.0, 0.76, 0.31], dofs: [z], gyradius: {x: 0.25, y: 0.2, z: 0.25}}
  wheel_fr: {mass: 36 kg, cg: [0.0, -0.76, 0.31], dofs: [z], gyradius: {x: 0.25, y: 0.2, z: 0.25}}
  wheel_rl: {mass: 32 kg, cg: [-2.6, 0.76, 0.31], dofs: [z], gyradius: {x: 0.25, y: 0.2, z: 0.25}}
  wheel_rr: {mass: 32 kg, cg: [-2.6, -0.76, 0.31], dofs: [z], gyradius: {x: 0.25, y: 0.2, z: 0.25}}
road:
  fl: {at: [0.0, 0.76, 0.0]}
  fr: {at: [0.0, -0.76, 0.0]}
  rl: {at: [-2.6, 0.76, 0.0]}
  rr: {at: [-2.6, -0.76, 0.0]}
links:
  susp_fl: {type: spring, a: {body: body, at: [0.0, 0.76, 0.6]}, b: wheel_fl, axis: z,
            stiffness: 22 kN/m, damping: 1.6 kN s/m}
  susp_fr: {type: spring, a: {body: body, at: [0.0, -0.76, 0.6]}, b: wheel_fr, axis: z,
            stiffness: 22 kN/m, damping: 1.6 kN s/m}
  susp_rl: {type: spring, a: {body: body, at: [-2.6, 0.76, 0.6]}, b: wheel_rl, axis: z,
            stiffness: 20 kN/m, damping: 1.4 kN s/m}
  susp_rr: {type: spring, a: {body: body, at: [-2.6, -0.76, 0.6]}, b: wheel_rr, axis: z,
            stiffness: 20 kN/m, damping: 1.4 kN s/m}
  tyre_fl: {type: spring, a: wheel_fl, b: road.fl, axis: z, stiffness: 210 kN/m}
  tyre_fr: {type: spring, a: wheel_fr, b: road.fr, axis: z, stiffness: 210 kN/m}
  tyre_rl: {type: spring, a: wheel_rl, b: road.rl, axis: z, stiffness: 210 kN/m}
  tyre_rr: {type: spring, a: wheel_rr, b: road.rr, axis: z, stiffness: 210 kN/m}
sensors:
  floor: {body: body, at: [-0.6, 0.38, 0.30], measure: acceleration, direction: z}
"""

# A spatial frame on four corner bushings with an engine on two mounts and a
# beam to a small mass: every DOF moves, every drawn kind appears.
FRAME = """
format: 1
name: Render test frame (invented data)
motion: spatial
bodies:
  frame:
    mass: 400 kg
    cg: [0.0, 0.0, 0.5]
    inertia: {xx: 60, yy: 220, zz: 250, xy: 4, xz: -9, yz: 2}
  engine:
    mass: 150 kg
    cg: [0.3, 0.1, 0.8]
    inertia: {xx: 8, yy: 6, zz: 7, xz: 0.5}
  tip:
    mass: 20 kg
    cg: [-1.4, 0.0, 0.6]
    gyradius: {x: 0.1, y: 0.12, z: 0.14}
links:
  c1: {type: bushing, a: {body: frame, at: [1.0, 0.5, 0.3]}, b: {body: ground, at: [1.0, 0.5, 0.3]},
       stiffness: {x: 50 kN/m, y: 60 kN/m, z: 90 kN/m}}
  c2: {type: bushing, a: {body: frame, at: [1.0, -0.5, 0.3]},
       b: {body: ground, at: [1.0, -0.5, 0.3]},
       stiffness: {x: 50 kN/m, y: 60 kN/m, z: 90 kN/m}}
  c3: {type: bushing, a: {body: frame, at: [-1.0, 0.5, 0.3]},
       b: {body: ground, at: [-1.0, 0.5, 0.3]},
       stiffness: {x: 50 kN/m, y: 60 kN/m, z: 90 kN/m}}
  c4: {type: bushing, a: {body: frame, at: [-1.0, -0.5, 0.3]},
       b: {body: ground, at: [-1.0, -0.5, 0.3]}, stiffness: {x: 50 kN/m, y: 60 kN/m, z: 90 kN/m}}
  m1: {type: spring, a: {body: engine, at: [0.3, 0.4, 0.7]}, b: {body: frame, at: [0.3, 0.4, 0.5]},
       stiffness: 200 kN/m}
  m2: {type: spring, a: {body: engine, at: [0.3, -0.2, 0.7]},
       b: {body: frame, at: [0.3, -0.2, 0.5]},
       stiffness: 200 kN/m}
  m3: {type: bushing, a: {body: engine, at: [0.6, 0.1, 0.8]}, b: {body: frame, at: [0.6, 0.1, 0.8]},
       stiffness: {x: 80 kN/m, y: 80 kN/m, z: 80 kN/m}}
  arm: {type: bushing, a: {body: tip, at: [-1.4, 0.0, 0.6]}, b: {body: frame, at: [-1.4, 0.0, 0.6]},
        stiffness: {x: 90 kN/m, y: 40 kN/m, z: 50 kN/m, rx: 2 kN m/rad, ry: 3 kN m/rad,
                    rz: 3 kN m/rad}}
sensors:
  seat: {body: frame, at: [-0.2, 0.3, 0.7], measure: acceleration, direction: z}
"""


@pytest.fixture(scope="module")
def car():
    assembly = load_text(CAR, "car.yaml")
    model = assemble(assembly)
    return assembly, model, build_scene(assembly)


@pytest.fixture(scope="module")
def frame():
    assembly = load_text(FRAME, "frame.yaml")
    model = assemble(assembly)
    # Drawn only: a beam from the frame to the tip, to check beam points too
    # (the model's stiffness comes from the bushing "arm" above).
    beam = Link("rod", "beam", End("frame", np.array([-0.8, 0.0, 0.6])),
                End("tip", np.array([-1.4, 0.0, 0.6])), {})
    drawn = assembly.replace(links={**assembly.links, "rod": beam})
    return drawn, model, compute_modes(model)


def _png(data: bytes) -> np.ndarray:
    return np.asarray(Image.open(io.BytesIO(data)).convert("RGB"))


# ------------------------------------------------------------- geometry

def test_equivalent_box_has_the_body_inertia():
    # Independent check: sympy integrates a uniform box of the drawn edge
    # lengths (I_xx = rho * integral of y^2 + z^2 dV) and the rotated tensor
    # must give back the body's tensor.
    tensor = np.array([[480.0, 0.0, -35.0], [0.0, 1850.0, 0.0], [-35.0, 0.0, 2100.0]])
    mass = 1250.0
    lengths, axes = box_dimensions(mass, tensor)
    x, y, z = sp.symbols("x y z", real=True)
    a, b, c = (sp.Float(v, 30) / 2 for v in lengths)
    rho = mass / float(lengths.prod())
    moments = [float(rho * sp.integrate(f, (x, -a, a), (y, -b, b), (z, -c, c)))
               for f in (y**2 + z**2, x**2 + z**2, x**2 + y**2)]
    rebuilt = axes @ np.diag(moments) @ axes.T
    np.testing.assert_allclose(rebuilt, tensor, rtol=1e-10, atol=1e-9)
    assert np.linalg.det(axes) == pytest.approx(1.0)
    assert abs(axes[0, 0]) > 0.99   # first axis stays fore and aft


def test_equivalent_ellipsoid_has_the_body_inertia():
    # Independent check: with x = a u etc. the ellipsoid integral of y^2 dV is
    # a b c b^2 times the unit-ball integral of v^2, which sympy evaluates in
    # spherical coordinates (4 pi / 15).
    tensor = np.diag([12.0, 20.0, 25.0])
    mass = 90.0
    semi, axes = ellipsoid_semi_axes(mass, tensor)
    r, th, ph = sp.symbols("r theta phi", positive=True)
    ball_v2 = sp.integrate((r * sp.sin(th) * sp.sin(ph)) ** 2 * r**2 * sp.sin(th),
                           (r, 0, 1), (th, 0, sp.pi), (ph, 0, 2 * sp.pi))
    assert sp.simplify(ball_v2 - 4 * sp.pi / 15) == 0
    volume = 4.0 / 3.0 * math.pi * semi.prod()
    rho = mass / volume
    a, b, c = semi
    second = [rho * a * b * c * s**2 * float(ball_v2) for s in semi]   # integral of x^2, ...
    moments = [second[1] + second[2], second[0] + second[2], second[0] + second[1]]
    np.testing.assert_allclose(axes @ np.diag(moments) @ axes.T, tensor, rtol=1e-10)


def test_point_mass_gets_a_visible_cube():
    # A mass with no rotary inertia: a cube of volume m / 1000 kg/m^3
    # (the nominal density; common practice, no source).
    half, _ = solid_size(27.0, np.zeros((3, 3)))
    np.testing.assert_allclose(2 * half, [0.3, 0.3, 0.3], rtol=1e-12)


def test_point_maps_move_points_rigidly():
    # Independent check: u + theta x r by numpy's cross product.
    rng = np.random.default_rng(3)
    arms = rng.normal(size=(5, 3))
    q = rng.normal(size=6)
    expected = q[:3] + np.cross(q[3:], arms)
    np.testing.assert_allclose(point_maps(arms) @ q, expected, atol=1e-15)


def test_helix_runs_end_to_end():
    a, b = np.array([0.0, 0.0, 0.3]), np.array([0.1, 0.0, 0.9])
    pts, s = helix(a, b, 0.05, 5)
    np.testing.assert_allclose(pts[0], a)
    np.testing.assert_allclose(pts[-1], b)
    assert np.all(np.diff(s) >= 0) and s[0] == 0 and s[-1] == 1
    # Coil points sit at the coil radius from the axis (analytic: distance to a line).
    axis = (b - a) / np.linalg.norm(b - a)
    rel = pts[1:-1] - a
    off = rel - np.outer(rel @ axis, axis)
    np.testing.assert_allclose(np.linalg.norm(off, axis=1), 0.05, rtol=1e-12)


def test_scene_has_every_kind(car):
    _, _, scene = car
    kinds = {p.kind for p in scene.parts}
    assert {"body", "spring", "road", "ground", "tyre", "sensor"} <= kinds
    names = {p.name for p in scene.parts}
    # tyre links are drawn as tyres (no coil), the wheel bodies as their rims
    assert {"body:wheel_fl", "spring:susp_fl", "tyre:tyre_rr", "road:fl"} <= names
    assert "spring:tyre_rr" not in names
    # The vehicle size is its largest extent: the body box length, from its
    # inertia: l_x^2 = 6 (Iyy + Izz - Ixx) / m (uniform box, see shapes.py).
    lengths, _ = box_dimensions(1250.0, [[480, 0, -35], [0, 1850, 0], [-35, 0, 2100]])
    assert scene.size >= lengths[0] - 1e-9


# ------------------------------------------------------------- images

def test_png_has_requested_size_and_is_not_blank(car, tmp_path):
    assembly, model, scene = car
    modes = compute_modes(model)
    out = save_mode_image(scene, model.dofs, modes[0], tmp_path / "m.png", size=(320, 240))
    image = np.asarray(Image.open(out).convert("RGB"))
    assert image.shape == (240, 320, 3)
    assert image.reshape(-1, 3).std(axis=0).max() > 10.0
    assert len(np.unique(image.reshape(-1, 3), axis=0)) > 200


def _display_x(renderer: ModeRenderer, point) -> float:
    ren = renderer.plotter.renderer
    ren.SetWorldPoint(*point, 1.0)
    ren.WorldToDisplay()
    return ren.GetDisplayPoint()[0]


def test_front_wheel_hop_leaves_the_rear_unchanged(car):
    # A pure front-left wheel hop (only wheel_fl.z moves): in the side view the
    # deformed frame differs from the undeformed one around the front axle and
    # not behind the car's middle (a rigid-motion argument: nothing there moves).
    _, model, scene = car
    shape = np.array([1.0 if d == "wheel_fl.z" else 0.0 for d in model.dofs])
    field = mode_field(scene, model.dofs, shape)
    with ModeRenderer(scene, (480, 320)) as renderer:
        moved = renderer.draw(field, "hop", "side", phase=0.0).astype(int)
        still = renderer.draw(field, "hop", "side", phase=math.pi / 2).astype(int)
        x_front = _display_x(renderer, (0.0, 0.76, 0.31))
        x_mid = _display_x(renderer, (-1.3, 0.0, 0.31))
    assert x_front < x_mid          # side view: the front is on the left
    changed = np.abs(moved - still).max(axis=2) > 12
    columns = np.arange(moved.shape[1])
    rear = columns > x_mid
    front = np.abs(columns - x_front) < 0.25 * abs(x_mid - x_front)
    assert changed[:, rear].mean() < 1e-4
    assert changed[:, front].mean() > 0.01


def test_frames_follow_the_cycle(car):
    # Phase pi shows the mirror image of phase 0: the drawn points move by
    # -u (Re(u e^{i pi}) = -u), the undeformed frame (pi/2) sits between.
    _, model, scene = car
    shape = np.array([1.0 if d == "body.ry" else 0.0 for d in model.dofs])
    field = mode_field(scene, model.dofs, shape)
    factor = field.factor(scene, 0.08)
    with ModeRenderer(scene, (200, 150)) as renderer:
        renderer.set_mode(field)
        base = scene.part("body:body").mesh.points
        renderer.set_phase(0.0)
        up = renderer.points_of("body:body")
        renderer.set_phase(math.pi)
        down = renderer.points_of("body:body")
        renderer.set_phase(math.pi / 2)
        still = renderer.points_of("body:body")
    np.testing.assert_allclose(still, base, atol=1e-12)
    # Each drawn point moves by the factor times its rigid displacement.
    k = [p.name for p in scene.parts].index("body:body")
    np.testing.assert_allclose(up - base, factor * field.displacements[k], atol=1e-12)
    np.testing.assert_allclose(up - base, -(down - base), atol=1e-12)
    # The largest drawn displacement is the set fraction of the vehicle size.
    peak = max(np.linalg.norm(u, axis=1).max() for u in field.displacements if u is not None)
    assert peak * factor == pytest.approx(0.08 * scene.size, rel=1e-12)


def test_gif_is_a_cycle(car, tmp_path):
    _, model, scene = car
    modes = compute_modes(model)
    out = save_mode_animation(scene, model.dofs, modes[1], tmp_path / "m.gif", frames=6,
                              size=(160, 120))
    gif = Image.open(out)
    assert gif.n_frames == 6 and gif.size == (160, 120)
    frames = []
    for k in range(6):
        gif.seek(k)
        frames.append(np.asarray(gif.convert("RGB"), dtype=int))
    assert np.abs(frames[0] - frames[3]).max() > 30   # opposite ends of the swing


def test_mp4_without_encoder_is_an_input_error(car, tmp_path, monkeypatch):
    _, model, scene = car
    modes = compute_modes(model)
    monkeypatch.setattr("builder.render.modeshape.shutil.which", lambda name: None)
    with pytest.raises(InputError, match="ffmpeg"):
        save_mode_animation(scene, model.dofs, modes[0], tmp_path / "m.mp4", frames=4)


def test_sheet_size_layout_and_views(car):
    _, model, scene = car
    modes = compute_modes(model)
    # Views follow the motion: the core labels say which mode is which.
    views = {m.label: choose_view(scene, model.dofs, m) for m in modes.modes}
    assert views["body pitch"] == "side" and views["body roll"] == "front"
    assert views["body bounce"] == "iso"
    assert sheet_layout(12) == (3, 4) and sheet_layout(1) == (1, 1) and sheet_layout(4) == (2, 2)
    assert sheet_layout(8) == (2, 4) and sheet_layout(6) == (2, 3)
    for n in range(1, 30):
        rows, cols = sheet_layout(n)
        assert cols <= 4 and rows * cols >= n > (rows - 1) * cols
    image = render_sheet(scene, model.dofs, modes, 3, size=(604, 300))
    assert image.shape == (300, 604, 3)
    rows, cols = sheet_layout(3)
    pw = (604 - (cols - 1) * 4) // cols
    first, second = image[:140, :pw], image[:140, pw + 4:2 * pw + 4]
    assert np.abs(first.astype(int) - second.astype(int)).max() > 30


def test_bad_options_are_input_errors(car):
    _, model, scene = car
    modes = compute_modes(model)
    with pytest.raises(InputError):
        render_mode(scene, model.dofs, modes[0], view="under", size=(64, 48))
    with pytest.raises(InputError):
        parse_size("big", (1, 1))
    assert parse_size("640x480", (1, 1)) == (640, 480)


def test_complex_shapes_are_phase_normalised():
    shape = np.array([0.2 + 0.1j, -1.0 + 1.0j, 0.3j])
    turned = phase_normalised(shape * np.exp(0.7j))
    k = int(np.argmax(np.abs(shape)))
    assert turned[k].imag == pytest.approx(0.0, abs=1e-15) and turned[k].real > 0
    # Relative phases are kept (only a common factor of modulus 1 is removed).
    np.testing.assert_allclose(turned / turned[k], shape / shape[k], rtol=1e-12)


# ------------------------------------------------------------- VTK export

def _rigid(q, arms):
    return q[:3] + np.cross(q[3:], arms)


def test_vtk_export_reloads_with_the_mode_shapes(frame, tmp_path):
    # The mode point data must equal the model's mode shapes mapped to the
    # drawn points, computed here from the reloaded points with the rigid
    # small motion u + theta x (p - cg) (numpy cross product) to 1e-12.
    assembly, model, modes = frame
    scene = build_scene(assembly)
    path = export_vtk(scene, model.dofs, modes, tmp_path / "modes.vtm")
    blocks = pv.read(path)
    assert isinstance(blocks, pv.MultiBlock)
    names = list(blocks.keys())
    assert "body:frame" in names and "beam:rod" in names and "bushing:c1" in names
    assert "spring:m1" in names and "ground" in names

    def q_of(mode, body):
        return np.array([mode.shape[model.dofs.index(f"{body}.{d}")]
                         for d in ("x", "y", "z", "rx", "ry", "rz")])

    checked = 0
    for mode in modes.modes:
        key = f"mode_{mode.number}"
        for name in ("frame", "engine", "tip"):
            mesh = blocks[f"body:{name}"]
            cg = assembly.bodies[name].cg
            expected = _rigid(q_of(mode, name), np.asarray(mesh.points) - cg)
            np.testing.assert_allclose(mesh.point_data[key], expected, rtol=0, atol=1e-12)
            checked += 1
        for link_name in ("m1", "rod", "m3", "c2", "arm"):
            link = assembly.links[link_name]
            mesh = blocks[[n for n in names if n.endswith(f":{link_name}")][0]]
            s = np.asarray(mesh.point_data["s"])[:, None]
            ends = []
            for end in (link.a, link.b):
                if end.node in assembly.bodies:
                    ends.append(_rigid(q_of(mode, end.node), end.at - assembly.bodies[end.node].cg))
                else:
                    ends.append(np.zeros(3))
            expected = (1 - s) * ends[0] + s * ends[1]
            np.testing.assert_allclose(mesh.point_data[key], expected, rtol=0, atol=1e-12)
            checked += 1
    assert checked == 8 * len(modes.modes)
    # Static parts carry no mode data; the modes' frequencies ride along.
    assert "mode_1" not in blocks["ground"].point_data
    np.testing.assert_allclose(blocks["body:frame"].field_data["frequency_hz"],
                               [m.frequency_hz for m in modes.modes], rtol=1e-12)


def test_vtk_export_needs_vtm(frame, tmp_path):
    assembly, model, modes = frame
    with pytest.raises(InputError, match="vtm"):
        export_vtk(build_scene(assembly), model.dofs, modes, tmp_path / "modes.vtk")


# ------------------------------------------------------------- depths and the command

def test_reduced_modes_are_expanded_to_every_body():
    # Guyan (1965) static condensation, recomputed here with numpy: with the
    # kept DOFs m and the rest s, q_s = -K_ss^-1 K_sm q_m.
    from pathlib import Path

    from builder.load import load_assembly
    from builder.reduce import reduce_to_depth
    from builder.render import expanded_modes

    car = load_assembly(Path(__file__).parent.parent / "assemblies" / "compact_car.yaml")
    full = assemble(car)
    small = reduce_to_depth(full, car.depths["bounce_pitch"])
    modes = compute_modes(small)
    dofs, drawn = expanded_modes(small, modes)
    assert dofs == full.dofs
    K = full.K.toarray()
    m = [full.dofs.index(d) for d in small.dofs]
    s = [i for i in range(len(full.dofs)) if i not in m]
    for mode, shown in zip(modes.modes, drawn, strict=True):
        expected = np.zeros(len(full.dofs))
        expected[m] = mode.shape
        expected[s] = -np.linalg.solve(K[np.ix_(s, s)], K[np.ix_(s, m)] @ mode.shape)
        np.testing.assert_allclose(shown.shape, expected, rtol=1e-9, atol=1e-12)
        assert shown.frequency_hz == mode.frequency_hz and shown.label == mode.label


def test_render_command_writes_each_kind(run_cli, tmp_path):
    from pathlib import Path

    car = Path(__file__).parent.parent / "assemblies" / "compact_car.yaml"
    code, _, err = run_cli("render", car, "--mode", "2", "--out", tmp_path / "m.png",
                           "--size", "320x240", "--view", "side", "--depth", "half_car")
    assert code == 0, err
    assert Image.open(tmp_path / "m.png").size == (320, 240)
    code, _, err = run_cli("render", car, "--sheet", "4", "--out", tmp_path / "s.png",
                           "--size", "644x484")
    assert code == 0, err
    assert Image.open(tmp_path / "s.png").size == (644, 484)
    code, _, err = run_cli("render", car, "--mode", "1", "--out", tmp_path / "m.gif",
                           "--frames", "4", "--size", "96x72")
    assert code == 0, err
    assert Image.open(tmp_path / "m.gif").n_frames == 4
    code, _, err = run_cli("render", car, "--out", tmp_path / "all.vtm")
    assert code == 0, err
    assert "mode_10" in pv.read(tmp_path / "all.vtm")["body:body"].point_data


@pytest.mark.parametrize("args, words", [
    (("--mode", "99", "--out", "x.png"), "mode 99"),
    (("--sheet", "3", "--out", "x.gif"), "--out"),
    (("--out", "x.gif"), "--mode"),
    (("--mode", "1", "--out", "x.jpg"), ".png"),
    (("--mode", "1", "--out", "x.png", "--size", "tiny"), "--size"),
    (("--mode", "1", "--out", "x.png", "--scale", "-1"), "--scale"),
    (("--mode", "1", "--out", "x.gif", "--fps", "0"), "--fps"),
    (("--mode", "1", "--out", "x.gif", "--frames", "1"), "--frames"),
])
def test_render_command_refuses_bad_options(run_cli, tmp_path, monkeypatch, args, words):
    from pathlib import Path

    car = Path(__file__).parent.parent / "assemblies" / "quarter_car.yaml"
    monkeypatch.chdir(tmp_path)
    code, _, err = run_cli("render", car, *args)
    assert code == 2 and words in err and err.count("\n") == 1


def test_file_shapes_are_drawn_as_given():
    # The file's own shape wins over the equivalent solid: a box of the given
    # edge lengths (m) and an ellipsoid of the given semi-axes, about the cg.
    text = """
format: 1
name: Shapes (invented data)
motion: bounce
bodies:
  cab: {mass: 300 kg, cg: [0, 0, 1.0], gyradius: {x: 0.5, y: 0.6, z: 0.5},
        shape: {box: [2.0, 1.6, 1.2]}}
  tank: {mass: 80 kg, cg: [-2, 0, 0.8], gyradius: {x: 0.3, y: 0.3, z: 0.3},
         shape: {ellipsoid: [0.5, 0.4, 0.3]}}
links:
  k1: {type: spring, a: cab, b: {body: ground, at: [0, 0, 0]}, axis: z, stiffness: 50 kN/m}
  k2: {type: spring, a: tank, b: {body: ground, at: [-2, 0, 0]}, axis: z, stiffness: 50 kN/m}
"""
    scene = build_scene(load_text(text, "shapes.yaml"))
    cab = scene.part("body:cab").mesh.bounds
    np.testing.assert_allclose(cab, [-1.0, 1.0, -0.8, 0.8, 0.4, 1.6], atol=1e-12)
    tank = np.array(scene.part("body:tank").mesh.bounds)
    # Tessellated sphere: its poles reach the z semi-axis exactly, the equator
    # comes within cos(pi / 28) of the others (28 segments around).
    np.testing.assert_allclose(tank[4:], [0.5, 1.1], atol=1e-12)
    slack = np.array([0.5, 0.5, 0.4, 0.4]) * (1 - np.cos(np.pi / 28)) + 1e-12
    assert np.all(np.abs(tank[:4] - [-2.5, -1.5, -0.4, 0.4]) <= slack)


def test_complex_shape_frames_follow_re_u_exp_i_phase(car):
    # A damped (complex) shape: at phase phi every drawn body point sits at
    # p + factor * Re((u + theta x (p - cg)) e^{i phi}), with the shape first
    # turned so its largest entry is real (numpy cross product, analytic).
    _, model, scene = car
    rng = np.random.default_rng(7)
    shape = rng.normal(size=len(model.dofs)) + 1j * rng.normal(size=len(model.dofs))
    turned = phase_normalised(shape)
    field = mode_field(scene, model.dofs, shape)
    factor = field.factor(scene, 0.05)
    q = np.array([turned[model.dofs.index(f"body.{d}")] if f"body.{d}" in model.dofs else 0.0
                  for d in ("x", "y", "z", "rx", "ry", "rz")])
    base = scene.part("body:body").geometry.points
    cg = scene.cgs[scene.bodies.index("body")]
    with ModeRenderer(scene, (64, 48), scale=0.05) as renderer:
        renderer.set_mode(field)
        for phi in (0.0, 0.9, 2.5):
            renderer.set_phase(phi)
            u = q[:3] + np.cross(q[3:], base - cg)
            expected = base + factor * np.real(u * np.exp(1j * phi))
            np.testing.assert_allclose(renderer.points_of("body:body"), expected, atol=1e-12)


def test_title_carries_number_frequency_damping_and_label():
    from builder.render import mode_title

    title = mode_title({"number": 2, "frequency_hz": 1.4761, "damping_ratio": 0.3062,
                        "label": "body pitch | $x$"})
    first, second = title.split("\n")
    assert first.split() == ["Mode", "2", "1.48", "Hz", "damping", "30.6", "%"]
    # "|" and "$" would send VTK's text through its math-text renderer.
    assert "|" not in second and "$" not in second and second.startswith("body pitch")
    assert mode_title({"number": 1, "frequency_hz": 0.0, "damping_ratio": None,
                       "label": "rigid"}) == "Mode 1   0.00 Hz\nrigid"
