"""Property (issue 12, kept closed): whatever a mutated demo file or option value holds,
the command line ends with exit status 0 or 2, exactly one line on stderr when it fails,
no traceback, and no output file left behind by a failed run.

Mutations (tests/mutations.py): numbers to extremes or scaled by slips of a unit, lines
deleted or duplicated (missing and duplicate keys), strings garbled (control characters,
ANSI escapes, quotes, brackets), values nested deeply, anchors and aliases (recursive,
undefined, merge keys, an expansion bomb), indentation broken; and odd values of the
options that pick the model depth and the output. Derandomised and bounded to a few
seconds; benchmarks/fuzz.py runs the same mutations by the ten thousand.
"""

import os
import random
import re
import tempfile

from conftest import ASSEMBLIES
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from mutations import EXTREME_VALUES, mutate_text

# the split-body demo takes seconds per run: the fuzz benchmark covers it
DEMOS = {p.name: p.read_text() for p in sorted(ASSEMBLIES.glob("*.yaml"))
         if p.name != "compact_car_flexible.yaml"}
OPTION_VALUES = st.sampled_from(["bounce", "half_car", "body.z", "body.*,wheel_*.z", "*", "",
                                 "nope", "-1", "0", "3", "1e9"]
                                + [v.strip('"') for v in EXTREME_VALUES[:30]])

SETTINGS = settings(max_examples=30, deadline=None, derandomize=True, database=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture,
                                           HealthCheck.too_slow])


def _check_contract(code: int, err: str, folder: str, made: set[str]) -> None:
    assert code in (0, 2), err
    assert "Traceback" not in err, err
    if code == 2:
        assert len(err.strip().splitlines()) == 1, err
        assert not made, f"a failed run left {made}"
    assert not [f for f in made if f.startswith(".lumpgraph-")], made


@SETTINGS
@given(name=st.sampled_from(sorted(DEMOS)), rnd=st.randoms(use_true_random=False),
       command=st.sampled_from(["modes", "check", "frf"]))
def test_mutated_files_end_cleanly(name, rnd, command, run_cli):
    text = mutate_text(DEMOS[name], random.Random(rnd.random()))
    with tempfile.TemporaryDirectory() as folder:
        path = os.path.join(folder, "model.yaml")
        with open(path, "w", encoding="utf-8") as fh:
            fh.write(text)
        extra = ["--points", "30", "--plot", os.path.join(folder, "frf.png")] \
            if command == "frf" else []
        code, _, err = run_cli(command, path, *extra)
        made = set(os.listdir(folder)) - {"model.yaml"}
        _check_contract(code, err, folder, made)


@SETTINGS
@given(name=st.sampled_from(sorted(DEMOS)), option=st.sampled_from(["--depth", "--keep"]),
       value=OPTION_VALUES, count=st.one_of(st.none(), OPTION_VALUES),
       output=st.sampled_from(["--json", "--csv", None]))
def test_odd_model_options_end_cleanly(name, option, value, count, output, run_cli):
    args = ["modes", str(ASSEMBLIES / name), option, value]
    if count is not None:
        args += ["--count", count]
    if output:
        args.append(output)
    code, _, err = run_cli(*args)
    _check_contract(code, err, "", set())


# option values of the commands that compute (issue 12, class 2 to 4): a valid call with one
# or two options replaced by extremes, garbage, values at and past the documented ceilings
# (builder/options.py) or awkward output paths (a folder, a missing folder, a name too long,
# /proc, a wrong suffix)
QUARTER = str(ASSEMBLIES / "quarter_car.yaml")
BASE_CALLS = {
    "ride": ["ride", QUARTER, "--road", "C", "--speed", "60 km/h", "--points", "60"],
    "bump": ["bump", QUARTER, "--height", "40 mm", "--length", "0.6 m", "--speed", "30 km/h"],
    "frf": ["frf", QUARTER, "--points", "40"],
    "sweep": ["sweep", QUARTER, "--vary", "ks=15kN/m..30kN/m:3"],
}
ODD_NUMBERS = ["0", "-5", "1e20", "99999999999999999999", "nan", "inf", "-inf", "1e-300",
               "1e308", "${10**400}", "${0**-1}", "5 km^999", "x", "", " ", "0x10", "1_000",
               "\x1b[31m3", "3\n4", "9" * 400, "4294967296", "200001", "10000001"]
OPTION_VALUES_BY_COMMAND = {
    "ride": {"--points": ["2", "200000"], "--speed": ["1e4", "1e-9 m/s"],
             "--waviness": ["0.5", "5"], "--tracks": ["independent", "sideways"],
             "--band": ["1:2", "50:1", "0:0", "1:1e400"], "--rate": ["1000"],
             "--plot": ["{PATH}.png"]},
    "bump": {"--height": ["1e-9 m", "1e5 m"], "--length": ["1e-9 m", "1e5 m"],
             "--speed": ["1e4", "1e-9"], "--shape": ["step", "ramp"], "--seed": ["3"],
             "--duration": ["0.01", "1e9"], "--rate": ["1e9", "1e-9"],
             "--csv": ["{PATH}.csv"], "--plot": ["{PATH}.png"]},
    "frf": {"--points": ["2", "1000000"], "--band": ["1:2", "2:1"], "--plot": ["{PATH}.png"],
            "--from": ["road.fl", "nope"], "--to": ["nope"]},
    "sweep": {"--lhs": ["3", "10000000"], "--samples": ["2"], "--seed": ["0", "4294967295"],
              "--workers": ["1", "257"], "--chunk": ["1", "0"], "--modes": ["1", "10001"],
              "--csv": ["{PATH}.csv"], "--plot": ["{PATH}.png"],
              "--scatter": ["ks=normal:21kN/m,5%", "ks=bogus"],
              "--vary": ["ks=1..2:10000001", "ks=15kN/m..30kN/m:²"]},
}
PATHS = ["{TMP}/out", "{TMP}/no/out", "/proc/out", "{TMP}/" + "L" * 300, "{TMP}/a_folder",
         "{TMP}/out.txt#"]


@SETTINGS
@given(command=st.sampled_from(sorted(BASE_CALLS)), data=st.data())
def test_odd_option_values_end_cleanly(command, data, run_cli):
    table = OPTION_VALUES_BY_COMMAND[command]
    flags = data.draw(st.lists(st.sampled_from(sorted(table)), min_size=1, max_size=2,
                               unique=True))
    with tempfile.TemporaryDirectory() as folder:
        os.mkdir(os.path.join(folder, "a_folder"))
        os.mkdir(os.path.join(folder, "a_folder.png"))
        args = list(BASE_CALLS[command])
        for flag in flags:
            value = data.draw(st.sampled_from(table[flag] + ODD_NUMBERS))
            if "{PATH}" in value:
                path = data.draw(st.sampled_from(PATHS))
                value = value.replace("{PATH}", path) if not path.endswith("#") else \
                    path[:-1]
            value = value.replace("{TMP}", folder)
            if flag in args:
                args[args.index(flag) + 1] = value
            else:
                args += [flag, value]
        code, out, err = run_cli(*args)
        made = set(os.listdir(folder)) - {"a_folder", "a_folder.png"}
        _check_contract(code, err, folder, made)
        if code == 0:
            assert not re.search(r"(?<![\w.])(nan|inf)(?![\w.])", out, re.IGNORECASE), out
