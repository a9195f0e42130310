"""``lumpgraph render FILE (--mode N | --sheet N) --out PATH [options]``.

What is written follows ``--out``'s suffix:

- ``.png`` with ``--mode N``: one frame of mode N; with ``--sheet N``: the
  review sheet of the lowest N modes; with neither: the undeformed scene;
- ``.gif`` (or ``.mp4`` when an ``ffmpeg`` program is found) with ``--mode``:
  one cycle of the mode;
- ``.vtm``: the scene and mode shapes for ParaView (mode N only with
  ``--mode``, else every mode).

``--depth NAME`` analyses a depth; its modes are expanded back to every body
(Guyan) before drawing.
"""

from __future__ import annotations

import argparse

from ..errors import InputError, Where
from ..io import output_path, writing
from ..options import argtype, ceiling, fraction, pixels, refuse_above, whole
from ._common import add_model_options, load_model

HELP = "3D picture or animation of a mode, or a review sheet"

_VIEWS = ("side", "front", "top", "iso")


def configure(parser: argparse.ArgumentParser) -> None:
    add_model_options(parser)
    what = parser.add_mutually_exclusive_group()
    what.add_argument("--mode", type=argtype(whole, "--mode", 1, 100_000), metavar="N",
                      help="draw mode N (1 = lowest)")
    what.add_argument("--sheet", type=argtype(whole, "--sheet", 1, ceiling_key="render --sheet"),
                      metavar="N",
                      help="review sheet of the lowest N modes (rigid-body modes left out)")
    parser.add_argument("--out", required=True, metavar="PATH",
                        help="output file: .png, .gif, .mp4 (needs ffmpeg) or .vtm")
    parser.add_argument("--view", choices=_VIEWS,
                        help="camera (default: side for pitch, front for roll, iso otherwise)")
    parser.add_argument("--scale", type=argtype(fraction, "--scale", 0.0, 10.0), default=None,
                        metavar="X",
                        help="largest drawn displacement as a fraction of the vehicle size "
                             "(default 0.08)")
    parser.add_argument("--size", metavar="WxH",
                        help="image size in pixels (default 1024x768; GIF 800x600; sheet "
                             "480x360 per panel)")
    parser.add_argument("--frames", type=argtype(whole, "--frames", 2,
                                                 ceiling_key="render --frames"),
                        default=36, metavar="N", help="frames in an animated cycle (default 36, "
                        f"at most {ceiling('render --frames').value:,})")
    parser.add_argument("--fps", type=argtype(fraction, "--fps", 0.0, 100.0, low_open=True),
                        default=18.0, help="animation frame rate (above 0, at most 100)")
    parser.add_argument("--solid", choices=("box", "ellipsoid"), default="box",
                        help="solid drawn for bodies without a shape (same mass and inertia)")


def run(args: argparse.Namespace) -> int:
    out = output_path(args.out, (".png", ".gif", ".mp4", ".vtm"), "--out")
    suffix = out.lower().rsplit(".", 1)[-1]
    if suffix in ("gif", "mp4") and args.mode is None:
        raise InputError("an animation needs --mode N", Where(field="--out"))
    if args.sheet is not None and suffix != "png":
        raise InputError("the review sheet is a .png", Where(field="--out"))
    animated = suffix in ("gif", "mp4")
    default_size = (800, 600) if animated else (1024, 768)
    size = pixels(args.size, "--size") if args.size else None
    if animated:
        w, h = size or default_size
        if suffix == "gif":
            refuse_above(w * h, "render GIF area", "--size", f"{w}x{h} =")
        refuse_above(w * h * args.frames, "render GIF frames x area", "--frames",
                     f"{args.frames} frames of {w}x{h} =")

    from ..analysis.modes import compute_modes
    from ..render import (
        DEFAULT_SCALE,
        build_scene,
        expanded_modes,
    )
    from ..render.scene import import_pyvista

    import_pyvista()
    assembly, model = load_model(args)
    modes = compute_modes(model)
    dofs, drawn = expanded_modes(model, modes)
    scale = DEFAULT_SCALE if args.scale is None else args.scale
    scene = build_scene(assembly, solid=args.solid)
    if args.mode is not None and not 1 <= args.mode <= len(drawn):
        raise InputError(f"mode {args.mode} does not exist: the model has {len(drawn)} modes",
                         Where(field="--mode"))
    chosen = drawn[args.mode - 1] if args.mode is not None else None

    with writing("--out"):
        _draw(args, suffix, scene, dofs, drawn, chosen, out, size, default_size, scale)
    print(f"wrote {out}")
    return 0


def _draw(args: argparse.Namespace, suffix: str, scene, dofs, drawn, chosen, out: str,
          size: tuple[int, int] | None, default_size: tuple[int, int], scale: float) -> None:
    from ..render import export_vtk, save_mode_animation, save_mode_image, save_sheet

    if suffix == "vtm":
        export_vtk(scene, dofs, [chosen] if chosen is not None else drawn, out)
    elif args.sheet is not None:
        save_sheet(scene, dofs, drawn, out, args.sheet, size=size, view=args.view, scale=scale)
    elif suffix == "png":
        size = size or default_size
        if chosen is None:
            _save_scene(scene, out, size, args.view or "iso")
        else:
            save_mode_image(scene, dofs, chosen, out, view=args.view, scale=scale, size=size)
    else:
        save_mode_animation(scene, dofs, chosen, out, frames=args.frames, fps=args.fps,
                            view=args.view, scale=scale, size=size or default_size)


def _save_scene(scene, out: str, size: tuple[int, int], view: str) -> None:
    from ..render import ModeRenderer, encode_png
    from ..render.modeshape import write_bytes

    with ModeRenderer(scene, size, scale=0.0, legend=False, plain=True) as renderer:
        image = renderer.draw(None, scene.name, view)
    write_bytes(out, encode_png(image))
