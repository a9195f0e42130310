"""Export of the scene and its mode shapes as VTK files that ParaView opens.

:func:`export_vtk` writes a multiblock ``NAME.vtm`` (XML) and a folder
``NAME/`` of ``.vtp`` pieces, one block per drawn part (``body:NAME``,
``spring:NAME``, ``road:NAME``, ``ground`` ...), points in metres in global
ISO 8855 axes, undeformed. Every moving block carries, per mode ``N``:

- ``mode_N``: point displacement vectors (n x 3) in the mode's own
  normalisation (the real part of the phase-normalised shape, see
  :func:`~builder.render.modeshape.phase_normalised`);
- ``mode_N_imag``: the imaginary part, only for complex shapes;
- ``mode_N_amplitude``: ``|u|`` per point over the mode's largest, 0..1;

and the field data ``mode_numbers``, ``frequency_hz``, ``damping_ratio``,
``mode_labels``. In ParaView, apply *Warp By Vector* with ``mode_N`` and
a scale factor to see a shape. Link blocks also carry ``s``, each point's
fraction of the way from end ``a`` to end ``b`` (its motion is
``(1 - s) u_a + s u_b``).
"""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError, Where, shown
from ..io import STAGING_PREFIX, OutputError, write_failure
from .modeshape import _get, mode_field
from .scene import Scene, import_pyvista
from .sheet import mode_list

__all__ = ["export_vtk", "scene_blocks"]


def _number(value: Any) -> float:
    return float("nan") if value is None else float(value)


def scene_blocks(scene: Scene, dofs: Sequence[str], modes: Any) -> Any:
    """The scene as a ``pyvista.MultiBlock`` with each mode's point data (see module doc)."""
    pv = import_pyvista()
    chosen = mode_list(modes)
    fields = [mode_field(scene, dofs, _get(m, "shape")) for m in chosen]
    numbers = np.array([int(_get(m, "number", k + 1)) for k, m in enumerate(chosen)])
    freqs = np.array([_number(_get(m, "frequency_hz")) for m in chosen])
    zetas = np.array([_number(_get(m, "damping_ratio")) for m in chosen])
    labels = [str(_get(m, "label", "")) for m in chosen]
    blocks = pv.MultiBlock()
    for k, part in enumerate(scene.parts):
        if part.kind == "axes":
            continue
        mesh = part.mesh.copy(deep=True)
        mesh.points_to_double()
        for name in list(mesh.point_data.keys()):
            if name != "s":
                mesh.point_data.remove(name)
        if part.moving:
            for number, field in zip(numbers, fields, strict=True):
                u = field.displacements[k]
                mesh.point_data[f"mode_{number}"] = np.ascontiguousarray(np.real(u))
                if np.iscomplexobj(u) and np.abs(np.imag(u)).max(initial=0.0) > 0.0:
                    mesh.point_data[f"mode_{number}_imag"] = np.ascontiguousarray(np.imag(u))
                mesh.point_data[f"mode_{number}_amplitude"] = field.amplitude[k]
            mesh.field_data["mode_numbers"] = numbers
            mesh.field_data["frequency_hz"] = freqs
            mesh.field_data["damping_ratio"] = zetas
            if labels:
                mesh.field_data["mode_labels"] = np.array(labels)
        blocks[part.name] = mesh
    return blocks


def _save_checked(blocks: Any, staged: Path, path: Path) -> None:
    """``blocks.save(staged)``, a VTK writer error raised as an OutputError (VTK's own
    log lines silenced), and the multiblock file checked to be there and complete."""
    pv = import_pyvista()
    from vtkmodules.vtkCommonCore import vtkLogger

    verbosity = vtkLogger.GetCurrentVerbosityCutoff()
    vtkLogger.SetStderrVerbosity(vtkLogger.VERBOSITY_OFF)
    try:
        with pv.VtkErrorCatcher(raise_errors=True, send_to_logging=False):
            blocks.save(str(staged), binary=True)
    except RuntimeError as exc:
        text = str(exc).lower()
        reason = ("no space left on the device or a file size limit" if "disk space" in text
                  else "the VTK writer failed")
        raise OutputError(f"cannot write {shown(str(path))}: {reason}; nothing was written",
                          Where(field="--out")) from None
    except OSError as exc:
        raise write_failure(exc, path, "--out") from None
    finally:
        vtkLogger.SetStderrVerbosity(verbosity)
    if not staged.is_file() or not staged.read_text(errors="replace").rstrip().endswith(
            "</VTKFile>"):
        raise OutputError(f"cannot write {shown(str(path))}: the multiblock file is "
                          "incomplete; nothing was written", Where(field="--out"))


def export_vtk(scene: Scene, dofs: Sequence[str], modes: Any, path: str | os.PathLike) -> Path:
    """Write the scene and mode shapes to ``path`` (``.vtm``) and its piece folder.

    The files are written in a temporary folder beside ``path`` and then
    moved into place, so a failed export leaves no half-written set: a VTK
    writer error (a full disk, a file size limit), which VTK only logs, is
    caught and becomes an :class:`~builder.io.OutputError`, and the staging
    folder is removed whatever happens.
    """
    path = Path(path)
    if path.suffix.lower() != ".vtm":
        raise InputError(f"--out: a VTK multiblock file ends in .vtm, got {path.name!r}")
    blocks = scene_blocks(scene, dofs, modes)
    parent = path.parent if str(path.parent) else Path(".")
    try:
        staging = tempfile.TemporaryDirectory(prefix=f"{STAGING_PREFIX}{path.stem}.", dir=parent)
    except OSError as exc:
        raise write_failure(exc, path, "--out") from None
    with staging as tmp:
        staged = Path(tmp) / path.name
        _save_checked(blocks, staged, path)
        pieces = Path(tmp) / path.stem
        target = parent / path.stem
        if pieces.is_dir():
            if target.is_dir():
                shutil.rmtree(target)
            os.replace(pieces, target)
        os.replace(staged, path)
    return path
