"""Models out: a LinearModel's matrices, state space and modes in files other tools read.

Three forms (the format description, "Command-line JSON", ``export``):

- **matrices** (``.npz``, ``.mat``, ``.mtx``): ``M``, ``C``, ``K``, ``H``
  (dense, SI, in the order of ``dofs``), the road input maps ``Br``, ``Bv``,
  ``Bh`` (generalised force ``Br r + Bv r' (+ i Bh r)``), the output maps
  ``Sd``, ``Sv``, ``Sa``, ``Sh``, ``Dr``, ``Dv``, ``Dh`` (``y = Sd q + Sv q' +
  Sa q'' + Dr r + Dv r' (+ i (Sh q + Dh r))``), and the string arrays
  ``dofs``, ``inputs``, ``sensors``, ``sensor_units``, ``sensor_measures``
  with ``input_positions`` (m). A ``.mat`` file holds the same names (the
  strings as cell arrays); ``.mtx`` writes one Matrix Market file per matrix,
  ``STEM.M.mtx`` ..., beside ``STEM.json`` with the names and the list of
  matrix files.
- **state-space** (``.npz`` or ``.mat``): ``A``, ``B``, ``C``, ``D`` of
  :meth:`LinearModel.to_state_space` (state ``[q; q']``, input ``[r; r']``,
  output the sensors; the hysteretic part left out), with ``states``,
  ``inputs`` and ``outputs`` (``_dot`` marks a rate) and ``output_units``:
  ``control.ss(A, B, C, D)`` and ``scipy.signal.StateSpace(A, B, C, D)``
  take the arrays as they are.
- **modal** (``.csv``): the modal model, one row per sensor point, direction
  and mode in the layout of measured modes (``point,body,x,y,z,direction,
  mode,frequency_hz,damping_ratio,real,imag``): undamped frequency, damping
  ratio of the paired damped mode, and the mass-normalised shape read by
  every body sensor (its point's motion along its direction, m or rad per
  unit modal coordinate).

Every file is written through :func:`builder.io.write_atomic`, with floats
at full precision, so reading it back gives the same numbers and the same
modes to round-off.
"""

from __future__ import annotations

import csv
import io
import json
import os
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .errors import InputError, Where
from .io import write_atomic

__all__ = ["MATRIX_NAMES", "NAME_ARRAYS", "FORMS", "SUFFIXES", "ExportedModel",
           "matrix_arrays", "state_space_arrays", "modal_rows", "write_export",
           "read_matrices", "read_state_space", "read_modal_csv", "output_files",
           "check_form"]

#: The matrices of the ``matrices`` form, in the order written.
MATRIX_NAMES = ("M", "C", "K", "H", "Br", "Bv", "Bh", "Sd", "Sv", "Sa", "Sh", "Dr", "Dv", "Dh")
#: The name arrays of the ``matrices`` form.
NAME_ARRAYS = ("dofs", "inputs", "sensors", "sensor_units", "sensor_measures")
FORMS = ("matrices", "state-space", "modal")
#: The file suffixes each form takes.
SUFFIXES = {"matrices": (".npz", ".mat", ".mtx"), "state-space": (".npz", ".mat"),
            "modal": (".csv",)}
MODAL_HEADER = ("point", "body", "x", "y", "z", "direction", "mode", "frequency_hz",
                "damping_ratio", "real", "imag")


def _dense(a: Any) -> NDArray[np.float64]:
    return np.asarray(a.toarray() if hasattr(a, "toarray") else a, dtype=float)


def matrix_arrays(model: Any) -> dict[str, NDArray]:
    """The ``matrices`` form of a model: dense SI matrices and the name arrays."""
    out: dict[str, NDArray] = {name: _dense(getattr(model, name)) for name in MATRIX_NAMES}
    out["dofs"] = np.array(model.dofs, dtype=str)
    out["inputs"] = np.array(model.inputs, dtype=str)
    out["sensors"] = np.array(model.sensors, dtype=str)
    out["sensor_units"] = np.array(model.sensor_units, dtype=str)
    out["sensor_measures"] = np.array(model.sensor_measures, dtype=str)
    out["input_positions"] = np.asarray(model.input_positions, dtype=float).reshape(-1, 3)
    return out


def state_space_arrays(model: Any) -> dict[str, NDArray]:
    """``A, B, C, D`` (state [q; q'], input [r; r']) with the state, input and output names."""
    A, B, C, D = model.to_state_space()
    return {"A": A, "B": B, "C": C, "D": D,
            "states": np.array([*model.dofs, *(f"{d}_dot" for d in model.dofs)], dtype=str),
            "inputs": np.array([*model.inputs, *(f"{r}_dot" for r in model.inputs)], dtype=str),
            "outputs": np.array(model.sensors, dtype=str),
            "output_units": np.array(model.sensor_units, dtype=str)}


def _assembly_of(model: Any) -> Any:
    current = model
    while current is not None:
        if getattr(current, "assembly", None) is not None:
            return current.assembly
        current = getattr(current, "parent", None)
    return None


def _direction_text(sensor: Any) -> str:
    if sensor.axis_name:
        return sensor.axis_name
    d = np.asarray(sensor.direction, dtype=float)
    return " ".join(repr(float(v)) for v in d[:3]) if not np.any(d[3:]) else \
        " ".join(repr(float(v)) for v in d)


def modal_rows(model: Any, modes: Any) -> list[list[Any]]:
    """Header and rows of the modal CSV: every body sensor and every mode of ``modes``."""
    asm = _assembly_of(model)
    rows: list[list[Any]] = [list(MODAL_HEADER)]
    maps = (_dense(model.Sd) + _dense(model.Sv) + _dense(model.Sa))
    shapes = modes.shapes
    for i, name in enumerate(model.sensors):
        sensor = asm.sensors.get(name) if asm is not None else None
        if sensor is None or sensor.kind != "body":
            continue
        at = sensor.at if sensor.at is not None else asm.bodies[sensor.target].cg \
            if sensor.target in asm.bodies else np.zeros(3)
        values = maps[i] @ shapes
        for k, mode in enumerate(modes.modes):
            rows.append([name, sensor.target, *(float(v) for v in np.asarray(at, float)),
                         _direction_text(sensor), mode.number, float(mode.frequency_hz),
                         "" if mode.damping_ratio is None else float(mode.damping_ratio),
                         float(values[k]), 0.0])
    return rows


def check_form(path: str, form: str | None, where: Where) -> str:
    """The export form for ``path`` (``form`` or by suffix), checked against the suffix."""
    lower = path.lower()
    if form is None:
        form = "modal" if lower.endswith(".csv") else "matrices"
    if form not in FORMS:
        raise InputError(f'unknown form "{form}": choose {", ".join(FORMS)}', where)
    if not any(lower.endswith(s) for s in SUFFIXES[form]):
        raise InputError(f"the {form} form is written as {' or '.join(SUFFIXES[form])}, "
                         f'not "{os.path.basename(path)}"', where)
    return form


def output_files(path: str, form: str) -> list[str]:
    """Every file an export to ``path`` writes (several for ``.mtx``)."""
    if form == "matrices" and path.lower().endswith(".mtx"):
        stem = path[:-4]
        return [f"{stem}.{name}.mtx" for name in MATRIX_NAMES] + [f"{stem}.json"]
    return [path]


def _npz_bytes(arrays: Mapping[str, NDArray]) -> bytes:
    buf = io.BytesIO()
    np.savez(buf, **arrays)
    return buf.getvalue()


def _mat_bytes(arrays: Mapping[str, NDArray]) -> bytes:
    from scipy.io import savemat

    out = {}
    for key, value in arrays.items():
        out[key] = np.array(list(value), dtype=object) if value.dtype.kind == "U" else value
    buf = io.BytesIO()
    savemat(buf, out, do_compression=False, oned_as="column")
    return buf.getvalue()


def _mtx_bytes(matrix: NDArray) -> bytes:
    import scipy.sparse as sp
    from scipy.io import mmwrite

    buf = io.BytesIO()
    mmwrite(buf, sp.coo_array(matrix), comment="lumpgraph export, SI units")
    return buf.getvalue()


def write_export(model: Any, path: str, form: str = "matrices", modes: Any = None,
                 name: str = "") -> list[str]:
    """Write ``model`` in ``form`` to ``path``; returns the files written.

    ``modes`` (a :class:`~builder.analysis.modes.ModeSet`) is needed for the
    modal form. ``name`` goes into the JSON of a Matrix Market export.
    """
    form = check_form(path, form, Where(field=path))
    if form == "modal":
        if modes is None:
            raise InputError("the modal form needs the model's modes", Where(field=path))
        from .io import csv_text

        text = csv_text(modal_rows(model, modes))
        write_atomic(path, f"# lumpgraph modal model of {name or model.name}: shapes at the "
                     "body sensors, mass-normalised (m or rad per unit modal coordinate)\n"
                     + text)
        return [path]
    arrays = matrix_arrays(model) if form == "matrices" else state_space_arrays(model)
    lower = path.lower()
    if lower.endswith(".npz"):
        write_atomic(path, _npz_bytes(arrays))
        return [path]
    if lower.endswith(".mat"):
        write_atomic(path, _mat_bytes(arrays))
        return [path]
    files = output_files(path, form)
    for matrix_name, file in zip(MATRIX_NAMES, files[:-1], strict=True):
        write_atomic(file, _mtx_bytes(arrays[matrix_name]))
    names = {key: arrays[key].tolist() for key in NAME_ARRAYS}
    names["input_positions"] = arrays["input_positions"].tolist()
    names["model"] = name or model.name
    names["matrices"] = {m: os.path.basename(f) for m, f in zip(MATRIX_NAMES, files[:-1],
                                                                strict=True)}
    write_atomic(files[-1], json.dumps(names, indent=1) + "\n")
    return files


# ---------------------------------------------------------------- read --

@dataclass(frozen=True, eq=False)
class ExportedModel:
    """Arrays read back from an export: ``arrays[name]`` (SI) and ``names[name]`` (strings)."""

    arrays: dict[str, NDArray]
    names: dict[str, tuple[str, ...]]
    source: str = ""

    def __getitem__(self, key: str) -> Any:
        return self.arrays[key] if key in self.arrays else self.names[key]


def _strings(value: Any) -> tuple[str, ...]:
    a = np.asarray(value, dtype=object).reshape(-1)
    out = []
    for item in a:
        while isinstance(item, np.ndarray):
            item = item.reshape(-1)[0] if item.size else ""
        out.append(str(item))
    return tuple(out)


def _load_arrays(path: str, strings: tuple[str, ...]) -> ExportedModel:
    where = Where(path)
    lower = path.lower()
    try:
        if lower.endswith(".npz"):
            with np.load(path, allow_pickle=False) as data:
                raw = {k: data[k] for k in data.files}
        elif lower.endswith(".mat"):
            from scipy.io import loadmat

            raw = {k: v for k, v in loadmat(path).items() if not k.startswith("__")}
        else:
            raise InputError("not an .npz or .mat file", where)
    except (OSError, ValueError) as exc:
        raise InputError(f"cannot read the file: {exc}", where) from None
    arrays, names = {}, {}
    for key, value in raw.items():
        if key in strings:
            names[key] = () if np.size(value) == 0 else _strings(value)
        else:
            arrays[key] = np.asarray(value, dtype=float)
    return ExportedModel(arrays, names, path)


def read_matrices(path: str | os.PathLike[str]) -> ExportedModel:
    """Read a ``matrices`` export (.npz, .mat, or the .json of a Matrix Market set)."""
    path = os.fspath(path)
    if path.lower().endswith((".json", ".mtx")):
        return _read_mtx(path)
    out = _load_arrays(path, NAME_ARRAYS)
    _require(out, ("M", "K"), path)
    return out


def _read_mtx(path: str) -> ExportedModel:
    from scipy.io import mmread

    index = path[:-4] + ".json" if path.lower().endswith(".mtx") else path
    try:
        with open(index, encoding="utf-8") as fh:
            names = json.load(fh)
    except (OSError, ValueError) as exc:
        raise InputError(f"cannot read the names of a Matrix Market export: {exc}",
                         Where(index)) from None
    folder = os.path.dirname(index)
    arrays = {}
    for key, file in dict(names.get("matrices", {})).items():
        full = os.path.join(folder, file)
        try:
            m = mmread(full)
        except (OSError, ValueError) as exc:
            raise InputError(f"cannot read the matrix {key}: {exc}", Where(full)) from None
        arrays[key] = np.asarray(m.toarray() if hasattr(m, "toarray") else m, dtype=float)
    if "input_positions" in names:
        arrays["input_positions"] = np.asarray(names["input_positions"], float).reshape(-1, 3)
    out = ExportedModel(arrays, {k: tuple(names.get(k, ())) for k in NAME_ARRAYS}, index)
    _require(out, ("M", "K"), index)
    return out


def read_state_space(path: str | os.PathLike[str]) -> ExportedModel:
    """Read a ``state-space`` export (.npz or .mat)."""
    path = os.fspath(path)
    out = _load_arrays(path, ("states", "inputs", "outputs", "output_units"))
    _require(out, ("A", "B", "C", "D"), path)
    return out


def _require(model: ExportedModel, keys: tuple[str, ...], path: str) -> None:
    missing = [k for k in keys if k not in model.arrays]
    if missing:
        raise InputError(f"no {', '.join(missing)} in the file (arrays: "
                         f"{', '.join(model.arrays) or 'none'})", Where(path))


def read_modal_csv(path: str | os.PathLike[str]) -> list[dict[str, Any]]:
    """Rows of a modal CSV as dictionaries (numbers as floats, mode as int)."""
    path = os.fspath(path)
    with open(path, encoding="utf-8") as fh:
        lines = [line for line in fh if not line.startswith("#")]
    reader = csv.DictReader(lines)
    out = []
    for row in reader:
        item: dict[str, Any] = dict(row)
        for key in ("x", "y", "z", "frequency_hz", "real", "imag"):
            item[key] = float(row[key])
        item["damping_ratio"] = float(row["damping_ratio"]) if row["damping_ratio"] else None
        item["mode"] = int(row["mode"])
        out.append(item)
    return out
