"""The universal-file reader (optional extra ``[uff]``) on small files written by
pyuff itself, the general-purpose library that reads them (an independent writer)."""

from __future__ import annotations

import numpy as np
import pytest
import pyuff

from builder.errors import InputError
from builder.measured_files import read_measured

NODES = [101, 102, 205]
XYZ = np.array([[-400.0, 600.0, 500.0], [-400.0, -600.0, 500.0], [300.0, 0.0, 650.0]])  # mm
FREQS = [1.21, 1.52]
SHAPES = [np.array([[0.0, 0.0, 0.83], [0.0, 0.0, 0.80], [0.10, 0.0, 0.30]]),
          np.array([[0.0, 0.0, -0.41], [0.0, 0.0, 0.41], [0.0, 0.0, 0.05]])]


def _write(path, complex_modes=False):
    uff = pyuff.UFF(str(path))
    uff.write_sets(pyuff.prepare_164(units_code=2, units_description="mm", temp_mode=2,
                                     length=1000.0, force=1.0, temp=1.0, temp_offset=273.15),
                   "add")
    uff.write_sets(pyuff.prepare_2411(node_nums=NODES, def_cs=[0] * 3, disp_cs=[0] * 3,
                                      color=[1] * 3, x=XYZ[:, 0], y=XYZ[:, 1], z=XYZ[:, 2]),
                   "add")
    for i, (f, sh) in enumerate(zip(FREQS, SHAPES, strict=True)):
        common = dict(model_type=1, id1="invented", id2="NONE", id3="NONE", id4="NONE",
                      id5="NONE", data_ch=2, spec_data_type=8, n_data_per_node=3,
                      node_nums=NODES, load_case=1, mode_n=i + 1)
        if complex_modes:
            w = 2 * np.pi * f
            z = 0.2
            eig = complex(-z * w, w * np.sqrt(1 - z * z))
            data = pyuff.prepare_55(analysis_type=3, data_type=5, r1=sh[:, 0] + 0j,
                                    r2=sh[:, 1] + 0j, r3=sh[:, 2] * (1 + 0.1j), eig=eig,
                                    modal_a=0j, modal_b=0j, **common)
        else:
            data = pyuff.prepare_55(analysis_type=2, data_type=2, r1=sh[:, 0], r2=sh[:, 1],
                                    r3=sh[:, 2], modal_m=0.0, freq=f, modal_damp_vis=0.03,
                                    modal_damp_his=0.0, **common)
        uff.write_sets(data, "add")


MAP = """# invented mapping block for a test
universal: t.unv
body: body
nodes:
  101: {point: sill_l}
  102: {point: sill_r}
  205: {point: eng, body: engine}
"""


def test_normal_modes_through_a_mapping_block(tmp_path):
    _write(tmp_path / "t.unv")
    (tmp_path / "t.yaml").write_text(MAP)
    m = read_measured(tmp_path / "t.yaml")
    assert m.numbers == (1, 2)
    assert np.allclose(m.frequencies_hz, FREQS) and np.allclose(m.damping_ratios, 0.03)
    assert np.allclose(m.points["sill_l"].at, [-0.4, 0.6, 0.5])       # dataset 164: mm
    assert m.points["eng"].body == "engine"
    # zero directions (y everywhere, x of the sills) are not measured: left out
    assert m.labels == ("sill_l.z", "sill_r.z", "eng.x", "eng.z")
    assert np.allclose(m.shapes[:, 0].real, [0.83, 0.80, 0.10, 0.30])


def test_complex_modes_and_every_node(tmp_path):
    _write(tmp_path / "t.unv", complex_modes=True)
    (tmp_path / "t.yaml").write_text("universal: t.unv\nbody: body\nlength_unit: mm\n")
    m = read_measured(tmp_path / "t.yaml")
    assert set(m.points) == {"n101", "n102", "n205"}
    assert np.allclose(m.frequencies_hz, FREQS, rtol=1e-5)   # E13.5 fields
    assert np.allclose(m.damping_ratios, 0.2, rtol=1e-5)
    assert np.allclose(m.shapes[0, 0], 0.83 * (1 + 0.1j))


@pytest.mark.parametrize("text, words", [
    (MAP.replace("t.unv", "none.unv"), "no such file"),
    (MAP.replace("  101: {point: sill_l}", "  999: {point: sill_l}"), "node 999"),
    (MAP.replace("body: body\n", ""), "no body"),
    ("universal: t.unv\n", '"body"'),
    (MAP + "length_unit: kg\n", "length"),
    (MAP.replace("universal:", "univ:"), "unknown key"),
])
def test_mapping_block_errors(tmp_path, text, words):
    _write(tmp_path / "t.unv")
    (tmp_path / "t.yaml").write_text(text)
    with pytest.raises(InputError) as exc:
        read_measured(tmp_path / "t.yaml")
    assert words in str(exc.value) and "\n" not in str(exc.value)


def test_garbage_universal_file(tmp_path):
    (tmp_path / "t.unv").write_text("    -1\n    55\nnot a dataset\n")
    (tmp_path / "t.yaml").write_text(MAP)
    with pytest.raises(InputError, match="universal file"):
        read_measured(tmp_path / "t.yaml")
