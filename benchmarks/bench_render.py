"""Benchmark: mode pictures, animations and review sheets, off-screen on the CPU.

Targets (issues 7 and 18):

- one mode PNG at 1024 x 768 in under 2 s (scene built, rendered, encoded, written);
- a 36-frame GIF of one mode cycle (800 x 600) in under 10 s;
- a 12-mode review sheet (4 x 3 panels of 480 x 360) in under 10 s;
- the light van with a split body and a seat (tests/models/light_van_flexible.yaml,
  with ten body segments, 81 DOFs): any picture under 3 s with a fresh plotter, a further picture of
  the same scene (one renderer reused) well under that, the sheet of 12
  modes under 8 s, the whole report under 10 s;
- for information (no target): one mode PNG of a chain of 2,000 bodies
  joined by beams, the scale the split-body plugin reaches.

The model is a spatial car written below (invented data): body and engine
with six DOFs each, four wheels bouncing: 16 modes. Each figure is also given
as a ratio to a baseline measured in the same run (rendering a plain sphere
at 1024 x 768 in a fresh off-screen plotter), so runs on different machines
compare. Run: ``python3 benchmarks/bench_render.py``.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from builder.analysis.modes import compute_modes  # noqa: E402
from builder.linear import assemble  # noqa: E402
from builder.load import load_text  # noqa: E402
from builder.render import (  # noqa: E402
    build_scene,
    save_mode_animation,
    save_mode_image,
    save_sheet,
)
from builder.render.scene import import_pyvista  # noqa: E402

CAR = """
format: 1
name: Benchmark car (invented data)
motion: spatial
bodies:
  body: {mass: 1100 kg, cg: [-1.2, 0, 0.55], inertia: {xx: 420, yy: 1700, zz: 1900, xz: 30}}
  engine: {mass: 160 kg, cg: [0.3, 0.0, 0.55], inertia: {xx: 9, yy: 7, zz: 8}}
  wheel_fl: {mass: 36 kg, cg: [0, 0.74, 0.3], dofs: [z], gyradius: {x: 0.25, y: 0.2, z: 0.25}}
  wheel_fr: {mass: 36 kg, cg: [0, -0.74, 0.3], dofs: [z], gyradius: {x: 0.25, y: 0.2, z: 0.25}}
  wheel_rl: {mass: 32 kg, cg: [-2.6, 0.73, 0.3], dofs: [z], gyradius: {x: 0.25, y: 0.2, z: 0.25}}
  wheel_rr: {mass: 32 kg, cg: [-2.6, -0.73, 0.3], dofs: [z], gyradius: {x: 0.25, y: 0.2, z: 0.25}}
road:
  fl: {at: [0, 0.74, 0]}
  fr: {at: [0, -0.74, 0]}
  rl: {at: [-2.6, 0.73, 0]}
  rr: {at: [-2.6, -0.73, 0]}
links:
  susp_fl: {type: bushing, a: {body: body, at: [0, 0.74, 0.6]},
            b: {body: wheel_fl, at: [0, 0.74, 0.6]},
            stiffness: {x: 400 kN/m, y: 300 kN/m, z: 24 kN/m}, damping: {z: 1.8 kN s/m}}
  susp_fr: {type: bushing, a: {body: body, at: [0, -0.74, 0.6]},
            b: {body: wheel_fr, at: [0, -0.74, 0.6]},
            stiffness: {x: 400 kN/m, y: 300 kN/m, z: 24 kN/m}, damping: {z: 1.8 kN s/m}}
  susp_rl: {type: bushing, a: {body: body, at: [-2.6, 0.73, 0.6]},
            b: {body: wheel_rl, at: [-2.6, 0.73, 0.6]},
            stiffness: {x: 400 kN/m, y: 300 kN/m, z: 21 kN/m}, damping: {z: 1.5 kN s/m}}
  susp_rr: {type: bushing, a: {body: body, at: [-2.6, -0.73, 0.6]},
            b: {body: wheel_rr, at: [-2.6, -0.73, 0.6]},
            stiffness: {x: 400 kN/m, y: 300 kN/m, z: 21 kN/m}, damping: {z: 1.5 kN s/m}}
  tyre_fl: {type: spring, a: wheel_fl, b: road.fl, axis: z, stiffness: 220 kN/m}
  tyre_fr: {type: spring, a: wheel_fr, b: road.fr, axis: z, stiffness: 220 kN/m}
  tyre_rl: {type: spring, a: wheel_rl, b: road.rl, axis: z, stiffness: 220 kN/m}
  tyre_rr: {type: spring, a: wheel_rr, b: road.rr, axis: z, stiffness: 220 kN/m}
  mount_l: {type: bushing, a: {body: engine, at: [0.3, 0.35, 0.6]},
            b: {body: body, at: [0.3, 0.35, 0.6]},
            stiffness: {x: 120 kN/m, y: 90 kN/m, z: 250 kN/m}}
  mount_r: {type: bushing, a: {body: engine, at: [0.3, -0.35, 0.6]},
            b: {body: body, at: [0.3, -0.35, 0.6]},
            stiffness: {x: 120 kN/m, y: 90 kN/m, z: 250 kN/m}}
  mount_b: {type: bushing, a: {body: engine, at: [-0.1, 0.0, 0.4]},
            b: {body: body, at: [-0.1, 0.0, 0.4]},
            stiffness: {x: 300 kN/m, y: 60 kN/m, z: 200 kN/m}}
sensors:
  floor: {body: body, at: [-0.6, 0.38, 0.3], measure: acceleration, direction: z}
"""


def _timed(action) -> float:
    start = time.perf_counter()
    action()
    return time.perf_counter() - start


def _baseline() -> float:
    pv = import_pyvista()

    def draw() -> None:
        plotter = pv.Plotter(off_screen=True, window_size=(1024, 768))
        plotter.add_mesh(pv.Sphere())
        plotter.screenshot(None, return_img=True)
        plotter.close()

    draw()                    # the first one pays for the OpenGL context
    return min(_timed(draw) for _ in range(3))


def main() -> int:
    assembly = load_text(CAR, "benchmark-car.yaml")
    model = assemble(assembly)
    modes = compute_modes(model)
    vibrating = [m for m in modes.modes if m.frequency_hz > 0]
    print(f"{assembly.name}: {model.n} DOFs, {len(vibrating)} vibration modes")
    base = _baseline()
    print(f"baseline (plain sphere, 1024x768, fresh plotter): {base:.3f} s")
    results = []
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)

        def png() -> None:
            save_mode_image(build_scene(assembly), model.dofs, vibrating[1], folder / "m.png",
                            size=(1024, 768))

        def gif() -> None:
            save_mode_animation(build_scene(assembly), model.dofs, vibrating[0],
                                folder / "m.gif", frames=36, size=(800, 600))

        def sheet() -> None:
            save_sheet(build_scene(assembly), model.dofs, modes, folder / "s.png", 12)

        for name, action, target in (("mode PNG 1024x768", png, 2.0),
                                     ("36-frame GIF 800x600", gif, 10.0),
                                     ("12-mode sheet 1932x1088", sheet, 10.0)):
            seconds = _timed(action)
            results.append(seconds <= target)
            print(f"{name:<26} {seconds:7.2f} s   target < {target:4.1f} s   "
                  f"{seconds / base:7.1f} x baseline   {'ok' if seconds <= target else 'SLOW'}")
        results += _van(folder, base)
        seconds = _timed(lambda: _chain_png(folder / "chain.png", 2000))
        print(f"{'2000-body chain PNG':<26} {seconds:7.2f} s   (no target)      "
              f"{seconds / base:7.1f} x baseline")
    return 0 if all(results) else 1


def _van(folder: Path, base: float) -> list[bool]:
    """The 81-DOF light van: pictures from one scene, the sheet and the report."""
    from builder.render import ModeRenderer, encode_png, expanded_modes, render_mode
    from builder.render.modeshape import write_bytes
    from builder.report import write_report

    path = Path(__file__).resolve().parent.parent / "tests" / "models" / "light_van_flexible.yaml"
    # ten segments instead of eight: the 81-DOF van
    assembly = load_text(path.read_text().replace("segments: 8", "segments: 10"), str(path))
    model = assemble(assembly)
    modes = compute_modes(model)
    dofs, drawn = expanded_modes(model, modes)
    print(f"{assembly.name}: {model.n} DOFs")
    scene = build_scene(assembly)
    out = []

    def fresh() -> None:
        save_mode_image(scene, dofs, drawn[19], folder / "van.png", size=(1024, 768))

    renderer = ModeRenderer(scene, (1024, 768))

    def reused() -> None:
        for k in (6, 20, 21):
            write_bytes(folder / f"van{k}.png",
                        encode_png(render_mode(scene, dofs, drawn[k - 1], renderer=renderer)))

    def sheet() -> None:
        save_sheet(scene, dofs, drawn, folder / "van_sheet.png", 12)

    def report() -> None:
        write_report(assembly, model, folder / "van_report", modes=modes)

    renderer.draw(None, "warm-up", "iso")
    for name, action, target, count in (("van PNG, fresh plotter", fresh, 3.0, 1),
                                        ("van PNG, renderer reused", reused, 3.0, 3),
                                        ("van 12-mode sheet", sheet, 8.0, 1),
                                        ("van report (modes given)", report, 10.0, 1)):
        seconds = _timed(action) / count
        out.append(seconds <= target)
        print(f"{name:<26} {seconds:7.2f} s   target < {target:4.1f} s   "
              f"{seconds / base:7.1f} x baseline   {'ok' if seconds <= target else 'SLOW'}")
    renderer.close()
    ready = _page_ready(folder / "van_report" / "report.html")
    if ready is None:
        print("van report interactive     (no chromium and chromedriver: not measured)")
    else:
        out.append(ready <= 2.0)
        print(f"{'van report interactive':<26} {ready:7.2f} s   target <  2.0 s   "
              f"{ready / base:7.1f} x baseline   {'ok' if ready <= 2.0 else 'SLOW'}")
    return out


def _page_ready(page: Path) -> float | None:
    """Seconds from navigation start until the page's 3D view has drawn its first
    frames in headless Chromium (the page's own performance clock), or None."""
    import shutil

    chromium, driver = shutil.which("chromium"), shutil.which("chromedriver")
    if not chromium or not driver:
        return None
    from selenium import webdriver
    from selenium.webdriver.chrome.options import Options
    from selenium.webdriver.chrome.service import Service

    options = Options()
    for arg in ("--headless=new", "--no-sandbox", "--use-angle=swiftshader",
                "--enable-unsafe-swiftshader"):
        options.add_argument(arg)
    options.binary_location = chromium
    browser = webdriver.Chrome(options=options, service=Service(driver))
    try:
        browser.get(page.resolve().as_uri())
        for _ in range(300):
            if browser.execute_script("return window.lumpgraphView && "
                                      "window.lumpgraphView.frames > 0"):
                break
            time.sleep(0.05)
        return float(browser.execute_script("return window.lumpgraphView.readyAt")) / 1000.0
    finally:
        browser.quit()


def _chain_png(path: Path, count: int) -> None:
    import numpy as np

    from builder.assembly import Assembly, Body, End, Link

    step = 4.0 / count
    bodies = {f"s{i}": Body(f"s{i}", 1.0, np.array([-i * step, 0.0, 0.5]),
                            np.diag([2e-4, 1e-4, 1e-4])) for i in range(count)}
    links = {f"b{i}": Link(f"b{i}", "beam", End(f"s{i}", bodies[f"s{i}"].cg),
                           End(f"s{i + 1}", bodies[f"s{i + 1}"].cg), {})
             for i in range(count - 1)}
    chain = Assembly("chain", "spatial", bodies, links=links)
    dofs = tuple(f"s{i}.{d}" for i in range(count) for d in ("z", "ry"))
    x = np.arange(count) / (count - 1)
    shape = np.column_stack([np.sin(np.pi * x), np.pi * np.cos(np.pi * x) / 4]).ravel()
    mode = {"number": 1, "frequency_hz": 1.0, "damping_ratio": 0.0, "label": "bending",
            "shape": shape}
    save_mode_image(build_scene(chain), dofs, mode, path, size=(1024, 768), view="side")


if __name__ == "__main__":
    raise SystemExit(main())
