"""Pictures of an assembly and its modes: pyvista scenes rendered off-screen.

Imported only by the commands that draw (pyvista is imported inside the
functions that need it). The workflow:

1. ``scene = build_scene(assembly)``: bodies as solids (split bodies as one skin,
   wheels as tyres, a seated figure), links as coils, blocks and tubes, road lanes;
2. ``save_mode_image(scene, model.dofs, mode, "mode.png", view="side")``;
3. ``save_mode_animation(scene, model.dofs, mode, "mode.gif")``;
4. ``save_sheet(scene, model.dofs, modeset, "sheet.png", count=12)``;
5. ``export_vtk(scene, model.dofs, modeset, "modes.vtm")`` for ParaView.
"""

from .export import export_vtk, scene_blocks
from .modeshape import (
    DEFAULT_SCALE,
    VIEWS,
    DrawnMode,
    ModeField,
    ModeRenderer,
    choose_view,
    encode_png,
    expanded_modes,
    mode_field,
    mode_title,
    mp4_available,
    parse_size,
    phase_normalised,
    render_mode,
    save_mode_animation,
    save_mode_image,
)
from .scene import PALETTE, Part, Scene, Term, body_motions, build_scene, mode_displacements
from .sheet import render_sheet, save_sheet, sheet_layout

__all__ = [
    "build_scene", "Scene", "Part", "Term", "PALETTE", "body_motions", "mode_displacements",
    "ModeField", "ModeRenderer", "mode_field", "mode_title", "choose_view", "phase_normalised",
    "render_mode", "save_mode_image", "save_mode_animation", "encode_png", "mp4_available",
    "parse_size", "VIEWS", "DEFAULT_SCALE", "render_sheet", "save_sheet", "sheet_layout",
    "export_vtk", "scene_blocks", "DrawnMode", "expanded_modes",
]
