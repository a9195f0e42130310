"""Measured-modes layouts: round trips and one-line refusals of malformed data.

Sources: the layouts are the format description's section "Measured modes";
the round trip checks the writer against the reader at full precision; the
JSON form is also read by Python's own json module (an independent reader).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import ASSEMBLIES

from builder.analysis.correlation import simulate_test
from builder.errors import InputError
from builder.linear import assemble
from builder.load import load_assembly
from builder.measured import measured_csv_text, measured_json_text
from builder.measured_files import read_measured

HEAD = "point,body,x,y,z,direction,mode,frequency_hz,damping_ratio,real,imag\n"
GOOD = (HEAD + "p01,body,-0.40,0.60,0.50,z,1,1.21,0.24,0.83,0.01\n"
        "p01,body,-0.40,0.60,0.50,z,2,1.52,0.29,-0.41,\n"
        "p02,body,-1.40,-0.60,0.50,0 0 1,1,1.21,0.24,0.20,0\n"
        "p02,body,-1.40,-0.60,0.50,0 0 1,2,1.52,0.29,0.70,0\n")


def _test_set():
    model = assemble(load_assembly(ASSEMBLIES / "compact_car.yaml"))
    pts = {"a": ("body", [-0.2, 0.6, 0.4]), "b": ("engine", [0.4, 0.2, 0.7]),
           "c": ("wheel_rl", [-2.6, 0.73, 0.3])}
    return simulate_test(model, pts, [("a", "z"), ("a", "0.6 0 0.8"), ("b", "x"), ("c", "z")],
                         [1, 4, 8], shape_noise=0.05, seed=4, title="invented, for a test")


def test_round_trip_csv_and_json(tmp_path):
    m = _test_set()
    for suffix, text in ((".csv", measured_csv_text(m)), (".json", measured_json_text(m))):
        path = tmp_path / f"t{suffix}"
        path.write_text(text)
        back = read_measured(path)
        assert back.labels == m.labels and back.numbers == m.numbers
        assert np.array_equal(back.shapes, m.shapes)              # full precision
        assert np.array_equal(back.frequencies_hz, m.frequencies_hz)
        assert np.array_equal(back.damping_ratios, m.damping_ratios)
        for name, p in m.points.items():
            assert back.points[name].body == p.body and np.array_equal(back.points[name].at,
                                                                       p.at)
        assert back.title == m.title
    data = json.loads(measured_json_text(m))       # the contract's keys, by the json module
    assert set(data) >= {"points", "modes"} and set(data["modes"][0]) >= {
        "frequency_hz", "damping_ratio", "shape"}
    assert data["points"]["a"] == {"body": "body", "at": [-0.2, 0.6, 0.4]}


def test_units_directions_and_empty_fields(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("# invented\n" + GOOD.replace("x,y,z,", "x [mm],y [mm],z [cm],", 1)
                    .replace("-0.40,0.60,0.50", "-400,600,50"))
    m = read_measured(path)
    assert np.allclose(m.points["p01"].at, [-0.4, 0.6, 0.5])
    assert np.allclose(m.channels[1].direction, [0, 0, 1])
    assert m.shapes[0, 1] == -0.41 and m.title == "invented"


def test_json_with_units_and_real_values(tmp_path):
    path = tmp_path / "t.json"
    path.write_text(json.dumps({"points": {"p1": {"body": "body", "at": ["0 mm", "600 mm", 0.5]}},
                                "modes": [{"frequency_hz": 1.2, "damping_ratio": None,
                                           "shape": {"p1.z": 1.0, "p1.x": [0.2, 0.1]}}]}))
    m = read_measured(path)
    assert np.allclose(m.points["p1"].at, [0, 0.6, 0.5]) and np.isnan(m.damping_ratios[0])
    assert m.shapes[1, 0] == 0.2 + 0.1j


BAD_CSV = [
    (GOOD.replace("0.83,0.01", "nan,0.01"), 2, "real", "finite"),
    (GOOD.replace("0.83,0.01", "abc,0.01"), 2, "real", "number"),
    (GOOD.replace("2,1.52,0.29,0.70", "2,1.53,0.29,0.70"), 5, "frequency_hz", "mode 2"),
    (GOOD.replace("p02,body,-1.40,-0.60,0.50,0 0 1,2,1.52,0.29", "p02,body,-1.40,-0.60,0.50,"
                  "0 0 1,2,1.52,0.30"), 5, "damping_ratio", "damping"),
    (GOOD.replace("p01,body,-0.40,0.60,0.50,z,2", "p01,body,-0.40,0.61,0.50,z,2"), 3, "x",
     "point p01"),
    (GOOD.replace("p01,body,-0.40,0.60,0.50,z,2", "p01,engine,-0.40,0.60,0.50,z,2"), 3, "body",
     "point p01"),
    (GOOD.replace("x,y,z", "x [kg],y,z"), 1, "x", "length"),
    (GOOD.replace("frequency_hz", "frequency"), 1, "frequency", "frequency_hz"),
    (GOOD.replace(",real,imag", ",imag"), 1, "header", "real"),
    (GOOD.replace("0 0 1,1", "0 0 0,1"), 4, "direction", "zero"),
    (GOOD.replace(",z,1,", ",up,1,"), 2, "direction", "x, y, z"),
    (GOOD.replace(",z,1,", ",z,0,"), 2, "mode", "start at 1"),
    (GOOD.replace("1.21,0.24,0.83", "-1.21,0.24,0.83"), 2, "frequency_hz", "positive"),
    (GOOD + "p01,body,-0.40,0.60,0.50,z,1,1.21,0.24,0.5,0\n", 6, "real", "second value"),
    ("\n".join(GOOD.splitlines()[:-1]) + "\n", 3, "mode", "no value at p02"),
    (GOOD.replace(",0.83,0.01", ",,0.01"), 2, "real", "empty"),
    (GOOD.replace("0.20,0\n", "0.0,0\n").replace("0.83,0.01", "0,0"), 2, "mode", "zero"),
    (HEAD, None, "", "no mode"),
]


@pytest.mark.parametrize("text, line, field, words", BAD_CSV)
def test_malformed_csv_is_refused_in_one_line(tmp_path, text, line, field, words):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    with pytest.raises(InputError) as exc:
        read_measured(path)
    msg = str(exc.value)
    assert "\n" not in msg and words in msg
    if line is not None:
        assert msg.startswith(f"{path}:{line}: {field}")


BAD_JSON = [
    ('{"points": {"p1": {"body": "body", "at": [0, 0]}}, "modes": []}', "points.p1.at"),
    ('{"points": {"p1": {"body": "body", "at": [0, 0, 0]}}, "modes": [{"frequency_hz": 1, '
     '"shape": {"p2.z": 1}}]}', "p2"),
    ('{"points": {"p1": {"body": "body", "at": [0, 0, 0]}}, "modes": [{"frequency_hz": 1, '
     '"shape": {"p1.z": [1, 2, 3]}}]}', "real, imag"),
    ('{"points": {"p1": {"body": "body", "at": [0, 0, 0]}}, "modes": [{"frequency_hz": "2 kg", '
     '"shape": {"p1.z": 1}}]}', "frequency"),
    ('{"points": {"p1": {"body": "body", "at": [0, 0, 0]}}, "modes": [{"frequency_hz": 1, '
     '"shape": {"p1.z": 1}, "mac": 1}]}', "unknown key"),
    ('{"points": {"p1": {"body": "body", "at": [0, 0, 0]}}, "modes": [{"frequency_hz": 1, '
     '"shape": {"p1z": 1}}]}', "POINT.DIRECTION"),
    ('{"points": {"p1": {"body": "body", "at": [0, 0, 0]}}, "modes": [{"frequency_hz": 1, '
     '"shape": {"p1.z": 1}},}', "JSON"),
]


@pytest.mark.parametrize("text, words", BAD_JSON)
def test_malformed_json_is_refused_in_one_line(tmp_path, text, words):
    path = tmp_path / "bad.json"
    path.write_text(text)
    with pytest.raises(InputError) as exc:
        read_measured(path)
    msg = str(exc.value)
    assert "\n" not in msg and words in msg and msg.startswith(f"{path}:1")


def test_unknown_suffix_and_missing_file(tmp_path):
    with pytest.raises(InputError, match="csv or .json"):
        read_measured(tmp_path / "t.txt")
    with pytest.raises(InputError, match="cannot read"):
        read_measured(tmp_path / "none.csv")
