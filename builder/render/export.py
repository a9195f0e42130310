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


def _piece_text(mesh: Any) -> str:
    """One block as the text of a ``.vtp`` file (VTK's XML writer, base64 binary data,
    zlib-compressed), made in memory: VTK never writes to the disk, whose failures
    (a full disk, a file size limit) it only logs and can crash on."""
    from vtkmodules.vtkIOXML import vtkXMLPolyDataWriter

    writer = vtkXMLPolyDataWriter()
    writer.SetInputData(mesh)
    writer.SetDataModeToBinary()              # inline base64: the text is ASCII
    writer.SetCompressorTypeToZLib()
    writer.WriteToOutputStringOn()
    if not writer.Write():
        raise RuntimeError("the VTK writer failed")
    return writer.GetOutputString()


def _index_text(names: Sequence[str], folder: str) -> str:
    """The multiblock ``.vtm`` index of the pieces ``folder/folder_K.vtp``."""
    from xml.sax.saxutils import quoteattr

    rows = "".join(f'    <DataSet index="{k}" name={quoteattr(name)} '
                   f'file={quoteattr(f"{folder}/{folder}_{k}.vtp")}/>\n'
                   for k, name in enumerate(names))
    return ('<?xml version="1.0"?>\n<VTKFile type="vtkMultiBlockDataSet" version="1.0" '
            'byte_order="LittleEndian" header_type="UInt32" '
            'compressor="vtkZLibDataCompressor">\n  <vtkMultiBlockDataSet>\n'
            f"{rows}  </vtkMultiBlockDataSet>\n</VTKFile>\n")


def _save_staged(blocks: Any, staged: Path, path: Path) -> None:
    """The multiblock and its pieces written under ``staged`` (Python's own writes: a
    failure is an OSError, raised as a one-line OutputError naming ``--out``)."""
    pv = import_pyvista()
    folder = staged.stem
    names = list(blocks.keys())
    try:
        with pv.VtkErrorCatcher(raise_errors=True, send_to_logging=False):
            texts = [_piece_text(blocks[name]) for name in names]
    except RuntimeError:
        raise OutputError(f"cannot write {shown(str(path))}: the VTK writer failed; "
                          "nothing was written", Where(field="--out")) from None
    try:
        (staged.parent / folder).mkdir()
        for k, text in enumerate(texts):
            (staged.parent / folder / f"{folder}_{k}.vtp").write_text(text, encoding="ascii")
        staged.write_text(_index_text(names, folder), encoding="utf-8")
    except OSError as exc:
        raise write_failure(exc, path, "--out") from None


def export_vtk(scene: Scene, dofs: Sequence[str], modes: Any, path: str | os.PathLike) -> Path:
    """Write the scene and mode shapes to ``path`` (``.vtm``) and its piece folder.

    VTK's XML writer makes each piece in memory; Python writes the pieces and the
    index in a temporary folder beside ``path`` and then moves them into place,
    so a failed write (a full disk, a file size limit) is a one-line
    :class:`~builder.io.OutputError` and leaves no half-written set, and the
    staging folder is removed whatever happens. (VTK writing to a failing disk
    itself only logs the error, and was seen to crash.)
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
        _save_staged(blocks, staged, path)
        pieces = Path(tmp) / path.stem
        target = parent / path.stem
        if pieces.is_dir():
            if target.is_dir():
                shutil.rmtree(target)
            os.replace(pieces, target)
        os.replace(staged, path)
    return path
