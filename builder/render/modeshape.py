"""Mode shapes drawn on the scene: still frames (PNG) and cycles (GIF, MP4).

A mode's shape (over the model's DOF labels) moves every drawn point by
:func:`builder.render.scene.mode_displacements`. The drawing scale makes the
largest point amplitude ``scale`` times the vehicle's size (its largest
extent), so modes of any normalisation look alike. A complex shape is first
turned so its largest DOF entry is real and positive (a real one is used as
it is); frame ``k`` of a cycle of ``N`` shows ``Re(shape * exp(2 pi i k / N))``.
Each part is drawn in its own hue, pale where it stays still and deep where
it moves most (point amplitude over the largest, the same in every frame);
each moving cg leaves its one-cycle track, and the rest position is a flat
shadow behind the scene; the caption band runs under the view (see
:mod:`builder.render.look` and docs/look.md).

Cameras use parallel projection and a fixed zoom per view for a scene, so
frames and review-sheet panels are comparable. Views: ``side`` (from the
left, +y, front of the vehicle to the image's left), ``front`` (from ahead,
+x), ``top`` (from above, front up) and ``iso`` (from front-left, above).
"""

from __future__ import annotations

import io
import math
import os
import shutil
import subprocess
import tempfile
import textwrap
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import InputError
from ..interrupts import deferred, raise_pending
from .look import (
    Caption,
    band_height,
    caption_of,
    draw_band,
    fit_band,
    hex_rgb,
    motion_colours,
)
from .scene import PALETTE, SPATIAL, Scene, body_motions, import_pyvista, mode_displacements

__all__ = [
    "VIEWS", "DEFAULT_SCALE", "ModeField", "ModeRenderer", "mode_field", "mode_title",
    "choose_view", "phase_normalised", "render_mode", "save_mode_image", "save_mode_animation",
    "encode_png", "write_bytes", "mp4_available", "DrawnMode", "expanded_modes",
    "wrap_caption",
]

VIEWS = ("side", "front", "top", "iso")
#: Largest drawn displacement as a fraction of the vehicle size.
DEFAULT_SCALE = 0.08

_DIRECTIONS = {
    "side": ((0.0, 1.0, 0.0), (0.0, 0.0, 1.0)),
    "front": ((1.0, 0.0, 0.0), (0.0, 0.0, 1.0)),
    "top": ((0.0, 0.0, 1.0), (1.0, 0.0, 0.0)),
    "iso": ((0.78, 1.0, 0.72), (0.0, 0.0, 1.0)),
}


def write_bytes(path: str | os.PathLike, data: bytes | str) -> Path:
    """Write a file atomically (:func:`builder.io.write_atomic`) and return its path."""
    from ..io import write_atomic

    write_atomic(Path(path), data)
    return Path(path)


def phase_normalised(shape: ArrayLike) -> NDArray:
    """A complex shape turned so its largest-magnitude entry is real and positive.

    A real shape is returned unchanged (as floats), sign included.
    """
    shape = np.asarray(shape)
    if not np.iscomplexobj(shape):
        return shape.astype(float)
    if shape.size == 0:
        return shape.astype(complex)
    k = int(np.argmax(np.abs(shape)))
    value = shape[k]
    if value == 0:
        return shape.astype(complex)
    return shape.astype(complex) * (abs(value) / value)


@dataclass
class ModeField:
    """A mode laid on a scene: complex point displacements per part (shape units)."""

    displacements: list[NDArray | None]
    amplitude: list[NDArray | None]   # |u| per point over the largest, 0..1
    peak: float                       # the largest point amplitude (shape units)
    q: NDArray                        # body motions, nb x 6, complex

    def factor(self, scene: Scene, scale: float) -> float:
        """Drawing factor: the largest point moves ``scale * scene.size`` metres."""
        return scale * scene.size / self.peak if self.peak > 0 else 0.0


def mode_field(scene: Scene, dofs: Sequence[str], shape: ArrayLike) -> ModeField:
    """Lay a mode shape over ``dofs`` on the scene's points."""
    shape = phase_normalised(shape)
    disp = mode_displacements(scene, dofs, shape)
    amp = [None if u is None else np.sqrt((np.abs(u) ** 2).sum(axis=1)) for u in disp]
    peak = max((float(a.max()) for a in amp if a is not None and a.size), default=0.0)
    norm = [None if a is None else (a / peak if peak > 0 else np.zeros_like(a)) for a in amp]
    return ModeField(disp, norm, peak, body_motions(scene, dofs, shape))


@dataclass(frozen=True)
class DrawnMode:
    """A mode as drawn: its numbers and label, its shape over the drawn (full) DOFs."""

    number: int
    frequency_hz: float
    damping_ratio: float | None
    label: str
    shape: NDArray
    energy: dict[str, float]


def expanded_modes(model: Any, modes: Any) -> tuple[tuple[str, ...], list[DrawnMode]]:
    """The modes' shapes over every DOF of the unreduced model, for drawing.

    A model reduced to a depth carries ``parent`` and ``expansion`` (the Guyan
    transform, ``q_parent = expansion @ q`` with the road held still); each
    shape is expanded by it, so condensed bodies move too. An unreduced
    model's shapes are used as they are. Returns ``(dofs, modes)``.
    """
    from .sheet import mode_list

    chosen = mode_list(modes)
    dofs = tuple(model.dofs)
    expansion = getattr(model, "expansion", None)
    parent = getattr(model, "parent", None)
    if parent is not None and expansion is not None:
        dofs = tuple(parent.dofs)
    out = []
    for k, m in enumerate(chosen):
        shape = np.asarray(_get(m, "shape"))
        if parent is not None and expansion is not None:
            shape = np.asarray(expansion @ shape).reshape(-1)
        out.append(DrawnMode(int(_get(m, "number", k + 1)), _get(m, "frequency_hz"),
                             _get(m, "damping_ratio"), str(_get(m, "label", "") or ""), shape,
                             dict(_get(m, "energy", {}) or {})))
    return dofs, out


def _get(mode: Any, name: str, default: Any = None) -> Any:
    if isinstance(mode, Mapping):
        return mode.get(name, default)
    return getattr(mode, name, default)


def wrap_caption(text: str, columns: int | None) -> list[str]:
    """Caption lines of at most ``columns`` characters, broken between words (a word
    longer than a line is split). Nothing is cut: a long label takes more lines."""
    if not text:
        return []
    if columns is None:
        return [text]
    return textwrap.wrap(text, columns, break_on_hyphens=False) or [text]


def mode_title(mode: Any, columns: int | None = None) -> str:
    """``Mode 3   1.23 Hz   damping 21.0 %`` and the label below (plain ASCII).

    With ``columns`` (characters per line) both are wrapped to lines of
    at most that many characters, so that nothing is cut off at the picture's
    edge. (A ``|`` or ``$`` would send the text through VTK's math-text
    renderer.)
    """
    parts = [f"Mode {_get(mode, 'number', '?')}"]
    freq = _get(mode, "frequency_hz")
    if freq is not None:
        f = float(freq)
        parts.append(f"{f:.2f} Hz" if f < 10 else f"{f:.1f} Hz" if f < 100 else f"{f:.0f} Hz")
    zeta = _get(mode, "damping_ratio")
    if zeta is not None and np.isfinite(float(zeta)):
        parts.append(f"damping {100 * float(zeta):.1f} %")
    label = str(_get(mode, "label") or "").replace("|", "/").replace("$", "")
    head = "   ".join(parts)
    if columns is not None and len(head) > columns:
        head = "  ".join(parts)
    return "\n".join(wrap_caption(head, columns) + wrap_caption(label, columns))


def choose_view(scene: Scene, dofs: Sequence[str], mode: Any) -> str:
    """The view that shows a mode best: ``side`` for pitch, ``front`` for roll, else ``iso``.

    The motion kinds (x, y, z, roll, pitch, yaw) are ranked by their share of
    the mode's kinetic energy, summed over bodies: the mode's ``energy``
    shares when it has them, else ``m u^2`` and ``I_kk theta_k^2`` from the
    scene's masses and inertias.
    """
    share = dict.fromkeys(SPATIAL, 0.0)
    energy = _get(mode, "energy")
    if isinstance(energy, Mapping) and energy:
        for label, value in energy.items():
            dof = str(label).rpartition(".")[2]
            if dof in share:
                share[dof] += float(value)
    else:
        q = body_motions(scene, dofs, phase_normalised(_get(mode, "shape")))
        a = np.abs(q) ** 2
        for k, dof in enumerate(SPATIAL):
            weight = scene.masses if k < 3 else scene.inertias[:, k - 3, k - 3]
            share[dof] = float((weight * a[:, k]).sum())
    top = max(share, key=share.get)
    if share[top] <= 0:
        return "iso"
    if top == "rx" and any(p.kind == "skin" for p in scene.parts):
        return "iso"     # a twisted skin reads from ahead and above, not end on
    return {"ry": "side", "rx": "front"}.get(top, "iso")


def parse_size(text: str | Sequence[int] | None, default: tuple[int, int]) -> tuple[int, int]:
    """``"1024x768"`` -> (1024, 768) pixels; None gives ``default``."""
    if text is None:
        return default
    if not isinstance(text, str):
        w, h = text
        return int(w), int(h)
    try:
        w, h = (int(v) for v in text.lower().split("x"))
    except ValueError:
        raise InputError(f"--size: expected WIDTHxHEIGHT in pixels, got {text!r}") from None
    if not (16 <= w <= 8192 and 16 <= h <= 8192):
        raise InputError(f"--size: each side must be 16 to 8192 pixels, got {text!r}")
    return w, h


class _Group:
    """Several moving parts drawn as one mesh; ``slices`` locate each part's points."""

    def __init__(self, parts: Sequence[Any], members: Sequence[int]):
        from .scene import Geometry

        self.mesh = Geometry.merge([p.geometry for p in parts]).polydata()
        self.members = list(members)
        ends = np.cumsum([0] + [len(p.geometry.points) for p in parts])
        self.slices = [slice(int(a), int(b)) for a, b in zip(ends[:-1], ends[1:], strict=True)]
        self.base = np.array(self.mesh.points, dtype=float)
        self.colour = np.vstack([np.tile(hex_rgb(p.color), (len(p.geometry.points), 1))
                                 for p in parts]) if parts else np.zeros((0, 3))
        self.scaled: NDArray | None = None


#: Track samples around one cycle.
_TRACK_STEPS = 40
#: A body's track is drawn when its cg moves at least this share of the largest cg motion.
TRACK_SHARE = 0.12
#: At most this many tracks (the bodies that move most), so a long chain stays legible.
TRACK_MAX = 48


class ModeRenderer:
    """One off-screen plotter holding a scene, redrawn for any mode, view and phase.

    The picture is the 3D view over the caption band (:mod:`builder.render.look`);
    :meth:`draw` and :meth:`screenshot` return the whole picture of ``size``.
    Stills are multisampled (smooth edges); ``anti_aliasing=False`` renders
    about three times faster on a CPU renderer and suits animation frames.
    ``plain=True`` draws the parts in their own full colours (the undeformed
    scene). ``legend`` puts the amplitude cue's legend in the band (single
    pictures; a sheet carries it once); ``shadow`` draws the rest shadow and
    ``tracks`` the cg tracks.

    >>> with ModeRenderer(scene, (800, 600)) as r:   # doctest: +SKIP
    ...     image = r.draw(field, caption, "side", phase=0.0)
    """

    def __init__(self, scene: Scene, size: tuple[int, int] = (1024, 768), *,
                 scale: float = DEFAULT_SCALE, legend: bool = True, shadow: bool = True,
                 tracks: bool = True, anti_aliasing: bool = True, plain: bool = False,
                 band: int | None = None, sheet: bool = False):
        if not scale >= 0 or not math.isfinite(scale):
            raise InputError(f"--scale: expected a fraction >= 0, got {scale!r}")
        pv = import_pyvista()
        self.scene = scene
        self.size = (int(size[0]), int(size[1]))
        self.tile_cap = band_height(self.size, sheet)
        self.band = self.tile_cap if band is None else int(band)
        self.band = min(self.band, self.size[1] - 8)
        self.view_size = (self.size[0], self.size[1] - self.band)
        self.scale = float(scale)
        self.legend = legend
        self.plain = plain
        self.plotter = pv.Plotter(off_screen=True, window_size=self.view_size)
        if not anti_aliasing:    # multisampling triples the CPU render time of a frame
            self.plotter.disable_anti_aliasing()
        self.plotter.set_background(PALETTE["paper"])
        # Moving parts are merged into one mesh per opacity (one actor each, so a
        # model of thousands of bodies renders as fast as a small one), coloured
        # per point; static parts keep their own colours.
        self._groups: list[_Group] = []
        self._slices: dict[int, tuple[_Group, slice]] = {}
        moving = [k for k, p in enumerate(scene.parts) if p.moving]
        for opacity in sorted({scene.parts[k].opacity for k in moving}, reverse=True):
            members = [k for k in moving if scene.parts[k].opacity == opacity]
            group = _Group([scene.parts[k] for k in members], members)
            group.mesh.point_data["rgb"] = np.round(group.colour).astype(np.uint8)
            self.plotter.add_mesh(group.mesh, scalars="rgb", rgb=True, smooth_shading=False,
                                  specular=0.12, diffuse=0.8, ambient=0.25, opacity=opacity,
                                  show_scalar_bar=False)
            self._add_group(group)
        self._shadow = None
        solids = [p.geometry for p in scene.parts if p.moving and p.geometry.faces.size]
        if shadow and solids and not plain:
            from .scene import Geometry

            self._shadow = self.plotter.add_mesh(
                Geometry.merge(solids).polydata(), color=PALETTE["shadow"], ambient=1.0,
                diffuse=0.0, specular=0.0, show_scalar_bar=False)
        for part in scene.parts:
            if part.moving:
                continue
            self.plotter.add_mesh(part.mesh.copy(deep=True), color=part.color, ambient=0.35,
                                  diffuse=0.65, specular=0.0)
        self._tracks_on = tracks and not plain
        self._track_layer = None
        self._track_actor = None
        self._dot_actor = None
        self._track_data: tuple[NDArray, NDArray] | None = None
        self._caption: Caption = Caption()
        self._band_image: NDArray | None = None
        self._cameras = {view: self._camera(view) for view in VIEWS}
        self._view: str | None = None
        self._field: ModeField | None = None

    # -- cameras: parallel projection, zoom fixed per view for this scene
    def _camera(self, view: str) -> tuple[NDArray, NDArray, NDArray, float]:
        direction, up = (np.asarray(v, float) for v in _DIRECTIONS[view])
        direction /= np.linalg.norm(direction)
        up = up - direction * (up @ direction)
        up /= np.linalg.norm(up)
        right = np.cross(direction, up) * -1.0
        pts = np.vstack([p.geometry.points for p in self.scene.parts
                         if p.kind != "ground"])
        center = 0.5 * (pts.min(axis=0) + pts.max(axis=0))
        rel = pts - center
        half_w = np.abs(rel @ right).max()
        half_h = np.abs(rel @ up).max()
        aspect = self.view_size[0] / self.view_size[1]
        margin = self.scale * self.scene.size
        parallel = 1.08 * max(half_h + margin, (half_w + margin) / aspect)
        position = center + direction * 4.0 * self.scene.size
        return position, center, up, float(parallel)

    def set_view(self, view: str) -> None:
        """Point the camera for ``view`` (one of :data:`VIEWS`)."""
        if view not in VIEWS:
            raise InputError(f"--view: expected one of {', '.join(VIEWS)}, got {view!r}")
        if view == self._view:
            return
        position, focus, up, parallel = self._cameras[view]
        cam = self.plotter.camera
        cam.position = tuple(position)
        cam.focal_point = tuple(focus)
        cam.up = tuple(up)
        self.plotter.enable_parallel_projection()
        cam.parallel_scale = parallel
        if self._shadow is not None:
            # the rest shadow sits behind the scene, flat to the view: moved away
            # from the camera it keeps its place in the (parallel) picture
            direction = (np.asarray(position) - np.asarray(focus))
            direction /= np.linalg.norm(direction)
            self._shadow.SetPosition(*(-1.5 * self.scene.size * direction))
        self.plotter.renderer.ResetCameraClippingRange()
        self._view = view
        self._band_image = None

    def _add_group(self, group: _Group) -> None:
        self._groups.append(group)
        for k, part_slice in zip(group.members, group.slices, strict=True):
            self._slices[k] = (group, part_slice)

    def points_of(self, name: str) -> NDArray:
        """The current drawn points (n x 3, m) of the part called ``name``."""
        k = [p.name for p in self.scene.parts].index(name)
        if k not in self._slices:
            return np.array(self.scene.parts[k].geometry.points)
        group, part_slice = self._slices[k]
        return np.array(group.mesh.points[part_slice])

    def set_mode(self, field: ModeField | None, title: str | Caption = "") -> None:
        """Show ``field`` (None: the undeformed scene) with its caption (a :class:`Caption`
        or a plain text) in the band."""
        self._field = field
        factor = 0.0 if field is None else field.factor(self.scene, self.scale)
        for group in self._groups:
            n = group.mesh.n_points
            amp = np.zeros(n)
            disp = np.zeros((n, 3), dtype=complex)
            for k, part_slice in zip(group.members, group.slices, strict=True):
                if field is not None and field.displacements[k] is not None:
                    amp[part_slice] = field.amplitude[k]
                    disp[part_slice] = factor * field.displacements[k]
            group.scaled = disp if factor else None
            if self.plain or field is None:
                rgb = np.round(group.colour).astype(np.uint8)
            else:
                rgb = motion_colours(group.colour, amp)
            group.mesh.point_data["rgb"][:] = rgb
            group.mesh.point_data.Modified()
        self._caption = title if isinstance(title, Caption) else caption_of(str(title))
        self._band_image = None
        self._set_tracks(field, factor)

    def _set_tracks(self, field: ModeField | None, factor: float) -> None:
        if not self._tracks_on:
            return
        self._track_data = None
        if field is None or factor == 0.0:
            self._show_tracks(False)
            return
        motion = field.q[:, :3]
        size = np.sqrt((np.abs(motion) ** 2).sum(axis=1))
        keep = np.nonzero(size >= TRACK_SHARE * max(size.max(), 1e-300))[0] if size.size else []
        if len(keep) > TRACK_MAX:
            keep = np.sort(keep[np.argsort(-size[keep])[:TRACK_MAX]])
        if not len(keep):
            self._show_tracks(False)
            return
        self._track_data = (self.scene.cgs[keep], factor * motion[keep])
        self._show_tracks(True)

    def _overlay(self) -> Any:
        """The renderer drawn over the scene (tracks stay visible inside solids)."""
        if self._track_layer is None:
            from vtkmodules import vtkRenderingCore as vtk

            window = self.plotter.render_window
            layer = vtk.vtkRenderer()
            layer.SetLayer(1)
            layer.InteractiveOff()
            layer.SetActiveCamera(self.plotter.renderer.GetActiveCamera())
            window.SetNumberOfLayers(2)
            window.AddRenderer(layer)
            self._track_layer = layer
        return self._track_layer

    def _show_tracks(self, on: bool) -> None:
        for actor in (self._track_actor, self._dot_actor):
            if actor is not None:
                actor.SetVisibility(on)

    def _place_tracks(self, phase: float) -> None:
        if self._track_data is None:
            return
        pv = import_pyvista()
        cgs, motion = self._track_data
        phi = np.linspace(0.0, 2 * np.pi, _TRACK_STEPS, endpoint=False)
        turn = np.exp(1j * phi)
        rings = cgs[:, None, :] + np.real(motion[:, None, :] * turn[None, :, None])
        points = rings.reshape(-1, 3)
        n = len(cgs)
        lines = np.hstack([[_TRACK_STEPS + 1, *range(k * _TRACK_STEPS, (k + 1) * _TRACK_STEPS),
                            k * _TRACK_STEPS] for k in range(n)]).astype(np.int64)
        dots = cgs + np.real(motion * complex(math.cos(phase), math.sin(phase)))
        px = max(1.5, self.view_size[1] / 300.0)
        if self._track_actor is None:
            layer = self._overlay()
            self._track_mesh = pv.PolyData(points, lines=lines)
            self._dot_mesh = pv.PolyData(dots)
            mapper = vtk_mapper(self._track_mesh)
            self._track_actor = _actor(mapper, PALETTE["track"], line_width=px)
            layer.AddActor(self._track_actor)
            self._dot_actor = _actor(vtk_mapper(self._dot_mesh), PALETTE["accent"],
                                     point_size=3.2 * px)
            layer.AddActor(self._dot_actor)
        else:
            self._track_mesh.points = points
            self._track_mesh.lines = lines
            self._dot_mesh.points = dots
            self._dot_mesh.verts = np.hstack([[1, k] for k in range(n)]).astype(np.int64)
        self._show_tracks(True)

    def set_phase(self, phase: float) -> None:
        """Move the points to phase ``phase`` (rad) of the cycle: ``Re(u exp(i phase))``."""
        turn = complex(math.cos(phase), math.sin(phase))
        for group in self._groups:
            if group.scaled is None:
                group.mesh.points[:] = group.base
            else:
                group.mesh.points[:] = group.base + np.real(group.scaled * turn)
            group.mesh.GetPoints().Modified()
        self._place_tracks(phase)

    def render_view(self) -> NDArray:
        """Render the 3D view alone (h - band) x w x 3 uint8."""
        self.plotter.renderer.ResetCameraClippingRange()
        self.plotter.render()
        image = self.plotter.screenshot(None, return_img=True)
        return np.ascontiguousarray(image[:, :, :3])

    def screenshot(self) -> NDArray:
        """Render and return the picture: the view over the caption band (h x w x 3 uint8)."""
        view = self.render_view()
        if self._band_image is None:
            caption = self._caption
            if self._view and not caption.view:
                caption = Caption(caption.number, caption.frequency_hz, caption.damping_ratio,
                                  caption.label, self._view)
            self._band_image = draw_band(self.size[0], self.band, caption, self.legend,
                                         self.tile_cap)
        return np.vstack([view, self._band_image])

    def draw(self, field: ModeField | None, title: str | Caption, view: str,
             phase: float = 0.0) -> NDArray:
        """Set mode, view and phase, then render (h x w x 3 uint8)."""
        self.set_mode(field, title)
        self.set_view(view)
        self.set_phase(phase)
        return self.screenshot()

    def close(self) -> None:
        self.plotter.close()

    def __enter__(self) -> ModeRenderer:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def vtk_mapper(mesh: Any) -> Any:
    """A plain VTK poly-data mapper of ``mesh``."""
    from vtkmodules import vtkRenderingCore as vtk

    mapper = vtk.vtkPolyDataMapper()
    mapper.SetInputData(mesh)
    mapper.ScalarVisibilityOff()
    return mapper


def _actor(mapper: Any, color: str, line_width: float = 1.0, point_size: float = 1.0) -> Any:
    from vtkmodules import vtkRenderingCore as vtk

    actor = vtk.vtkActor()
    actor.SetMapper(mapper)
    prop = actor.GetProperty()
    prop.SetColor(*(hex_rgb(color) / 255.0))
    prop.SetLineWidth(line_width)
    prop.SetPointSize(point_size)
    prop.SetRenderPointsAsSpheres(True)
    prop.SetLighting(False)
    return actor


def _mode_inputs(scene: Scene, dofs: Sequence[str], mode: Any, view: str | None,
                 size: Sequence[int]) -> tuple[ModeField, Caption, str]:
    shape = _get(mode, "shape")
    if shape is None:
        raise InputError("mode has no shape to draw")
    field = mode_field(scene, dofs, shape)
    view = view or choose_view(scene, dofs, mode)
    return field, caption_of(mode, view), view


def render_mode(scene: Scene, dofs: Sequence[str], mode: Any, *, view: str | None = None,
                scale: float = DEFAULT_SCALE, size: tuple[int, int] = (1024, 768),
                phase: float = 0.0, renderer: ModeRenderer | None = None) -> NDArray:
    """One frame of ``mode`` (an object with ``number, frequency_hz, damping_ratio, label,
    shape`` over ``dofs``): image array (h x w x 3 uint8). Pass ``renderer`` (a
    :class:`ModeRenderer` of this scene and size) to reuse its plotter."""
    field, caption, view = _mode_inputs(scene, dofs, mode, view, size)
    if renderer is not None:
        return renderer.draw(field, caption, view, phase)
    band = fit_band(size, [caption], legend=True)
    with ModeRenderer(scene, size, scale=scale, band=band) as own:
        return own.draw(field, caption, view, phase)


def encode_png(image: NDArray) -> bytes:
    """PNG bytes of an RGB image array (h x w x 3 uint8)."""
    from PIL import Image

    buffer = io.BytesIO()
    # zlib level 3: a third of the time of the default level for a few % more bytes
    Image.fromarray(np.asarray(image, dtype=np.uint8)).save(buffer, format="PNG", compress_level=3)
    return buffer.getvalue()


def save_mode_image(scene: Scene, dofs: Sequence[str], mode: Any,
                    path: str | os.PathLike, **options: Any) -> Path:
    """Write one frame of ``mode`` as a PNG (options as :func:`render_mode`)."""
    return write_bytes(path, encode_png(render_mode(scene, dofs, mode, **options)))


def mp4_available() -> bool:
    """True when an ``ffmpeg`` program is on the PATH (MP4 output needs it; GIF does not)."""
    return shutil.which("ffmpeg") is not None


def save_mode_animation(scene: Scene, dofs: Sequence[str], mode: Any,
                        path: str | os.PathLike, *, frames: int = 36, fps: float = 18.0,
                        view: str | None = None, scale: float = DEFAULT_SCALE,
                        size: tuple[int, int] = (800, 600)) -> Path:
    """Write one cycle of ``mode`` (``frames`` frames) as an animated GIF, or MP4 by suffix.

    MP4 needs an ``ffmpeg`` program on the PATH (detected, never required);
    without one an MP4 request is an :class:`InputError`.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in (".gif", ".mp4"):
        raise InputError(f"--out: animations are .gif or .mp4, got {path.name!r}")
    if suffix == ".mp4" and not mp4_available():
        raise InputError("--out: MP4 needs an ffmpeg program on the PATH; write a .gif instead")
    if frames < 2:
        raise InputError(f"--frames: need at least 2 frames, got {frames}")
    field, caption, view = _mode_inputs(scene, dofs, mode, view, size)
    images = []
    band = fit_band(size, [caption], legend=True)
    with deferred(), ModeRenderer(scene, size, scale=scale, anti_aliasing=False,
                                  band=band) as renderer:
        renderer.set_mode(field, caption)
        renderer.set_view(view)
        for k in range(frames):
            raise_pending()         # a Ctrl-C, held off while VTK draws a frame
            renderer.set_phase(2.0 * math.pi * k / frames)
            images.append(renderer.screenshot())
    data = encode_gif(images, fps) if suffix == ".gif" else _encode_mp4(images, fps)
    return write_bytes(path, data)


def encode_gif(images: Sequence[NDArray], fps: float) -> bytes:
    """Animated GIF bytes (looping) of RGB frames at ``fps`` frames per second."""
    from PIL import Image

    first = Image.fromarray(images[0]).quantize(colors=255, method=Image.Quantize.MEDIANCUT)
    frames = [first] + [Image.fromarray(im).quantize(palette=first) for im in images[1:]]
    buffer = io.BytesIO()
    frames[0].save(buffer, format="GIF", save_all=True, append_images=frames[1:],
                   duration=int(round(1000.0 / fps)), loop=0, optimize=False)
    return buffer.getvalue()


def _encode_mp4(images: Sequence[NDArray], fps: float) -> bytes:
    h, w = images[0].shape[:2]
    w2, h2 = w - w % 2, h - h % 2
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "cycle.mp4"
        cmd = [shutil.which("ffmpeg") or "ffmpeg", "-loglevel", "error", "-y", "-f", "rawvideo",
               "-pix_fmt", "rgb24", "-s", f"{w2}x{h2}", "-r", f"{fps}", "-i", "-",
               "-pix_fmt", "yuv420p", "-vcodec", "libx264", str(out)]
        raw = b"".join(np.ascontiguousarray(im[:h2, :w2]).tobytes() for im in images)
        done = subprocess.run(cmd, input=raw, capture_output=True, check=False)
        if done.returncode != 0 or not out.exists():
            message = done.stderr.decode(errors="replace").strip().splitlines()
            raise InputError(f"ffmpeg failed: {message[-1] if message else 'no output'}")
        return out.read_bytes()
