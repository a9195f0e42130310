"""Command options (issue 12, classes 2 to 4): every bad option value or output path is one
line naming the option, exit 2, no traceback; size-like options stop at documented ceilings;
values outside physical sense are refused rather than printed as results.

The reproducers are the command lines the options fuzzer found crashing (see
benchmarks/fuzz_options.py). The ceilings are derived from memory and time (their
reasoning is checked to be printed and listed in docs/format.md); the contract itself is the
project's (DEVELOPERS.md, "Rules of the house"), so the checks here are of behaviour, not of
numbers from an outside source.
"""

import os
import re

import pytest
from conftest import ASSEMBLIES, ROOT

from builder.errors import InputError
from builder.options import CEILINGS, choice, fraction, pixels, quantity, whole

QUARTER = str(ASSEMBLIES / "quarter_car.yaml")
COMPACT = str(ASSEMBLIES / "compact_car.yaml")
ENGINE = str(ASSEMBLIES / "compact_car_engine.yaml")
SEAT = str(ASSEMBLIES / "compact_car_seat.yaml")
LONG = "L" * 300


def _one_line(code: int, err: str, option: str) -> str:
    assert code == 2, err
    assert "Traceback" not in err, err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith(f"{option}:") or f": {option}:" in lines[0], lines[0]
    return lines[0]


# ------------------------------------------------------------------ readers --

def test_whole_reads_digits_and_refuses_the_rest():
    assert whole("12", "--n", 1, 20) == 12
    assert whole(" +3 ", "--n", 1, 20) == 3
    for text, words in [("1e20", "write it out in digits"), ("x", "whole number"),
                        ("2.5", "whole number"), ("٣", "whole number"), ("9" * 5000, "whole"),
                        ("0", "1 to 20"), ("21", "1 to 20")]:
        with pytest.raises(InputError, match=re.escape(words)) as e:
            whole(text, "--n", 1, 20)
        assert str(e.value).startswith("--n: ")
        assert len(str(e.value)) < 300


def test_ceiling_refusal_says_which_and_why():
    top = CEILINGS["ride --points"]
    assert whole(str(top.value), "--points", 2, ceiling_key="ride --points") == top.value
    with pytest.raises(InputError) as e:
        whole(str(top.value + 1), "--points", 2, ceiling_key="ride --points")
    text = str(e.value)
    assert f"{top.value:,}" in text and "GB" in text and text.startswith("--points:")


def test_quantity_choice_fraction_pixels():
    assert quantity("36 km/h", "--speed", "speed") == pytest.approx(10.0)
    for bad in ["${0**-1}", "${10**400}", "1e308m", "-5", "0", "nan", "5 km^999"]:
        with pytest.raises(InputError, match=r"^--speed: "):
            quantity(bad, "--speed", "speed")
    assert choice(" Coherent ", "--tracks", ("identical", "coherent")) == "coherent"
    with pytest.raises(InputError, match="identical or coherent"):
        choice("x", "--tracks", ("identical", "coherent"))
    assert fraction("0.5", "--scale", 0, 10) == 0.5
    for bad in ["nan", "inf", "-1", "11", "x"]:
        with pytest.raises(InputError, match="^--scale: "):
            fraction(bad, "--scale", 0, 10)
    assert pixels("320x240") == (320, 240)
    for bad in ["0x0", "tiny", "8193x16", "8192x8192", "1" * 40 + "x2"]:
        with pytest.raises(InputError, match="^--size: "):
            pixels(bad)


# ------------------------------------------------ class 2: the reproducers --

@pytest.mark.parametrize("args, option", [
    (["ride", QUARTER, "--road", "C", "--speed", "20", "--points", "99999999999999999999"],
     "--points"),
    (["ride", QUARTER, "--road", "C", "--speed", "20", "--points", "1e20"], "--points"),
    (["ride", QUARTER, "--road", "C", "--speed", "${10**400}"], "--speed"),
    (["ride", QUARTER, "--road", "C", "--speed", "20", "--tracks", "sideways"], "--tracks"),
    (["ride", QUARTER, "--road", "C", "--speed", "20", "--waviness", "1e308"], "--waviness"),
    (["bump", QUARTER, "--height", "40mm", "--length", "1e308m", "--speed", "20"], "--length"),
    (["bump", QUARTER, "--height", "40mm", "--length", "0.6m", "--speed", "${0**-1}"],
     "--speed"),
    (["bump", QUARTER, "--height", "5km^999", "--length", "0.6m", "--speed", "20"], "--height"),
    (["bump", QUARTER, "--road", "C", "--speed", "20", "--seed", "-5"], "--seed"),
    (["sweep", COMPACT, "--vary", "ks_front=15kN/m..30kN/m:3", "--seed", "-5"], "--seed"),
    (["sweep", COMPACT, "--vary", "ks_front=15kN/m..30kN/m:3", "--workers", "0"], "--workers"),
    (["sweep", COMPACT, "--vary", "ks_front=15kN/m..30kN/m:3", "--plot-against", "nope",
      "--plot", "{TMP}/p.png"], "--plot-against"),
    (["plugin", "engine", ENGINE, "--plot", "{TMP}/x.txt"], "--plot"),
    (["plugin", "engine", ENGINE, "--plot", "{TMP}"], "--plot"),
    (["plugin", "engine", ENGINE, "--target-roll", "x", "--target-bounce", "9"],
     "--target-roll"),
    (["plugin", "seat", SEAT, "--speed", "1e-300"], "--speed"),
    (["plugin", "seat", SEAT, "--tracks", "x"], "--tracks"),
    (["render", QUARTER, "--mode", "1", "--out", "{TMP}/x.png", "--scale", "1e308"],
     "--scale"),
    (["render", QUARTER, "--mode", "1", "--out", "{TMP}/x.gif", "--fps", "0"], "--fps"),
    (["report", QUARTER, "--out", "{TMP}/r", "--sheet", "0"], "--sheet"),
    (["report", QUARTER, "--out", "{TMP}/r", "--road", "Z"], "--road"),
])
def test_bad_option_values_are_one_line(args, option, run_cli, tmp_path):
    code, _, err = run_cli(*[a.replace("{TMP}", str(tmp_path)) for a in args])
    _one_line(code, err, option)
    assert not [p for p in os.listdir(tmp_path) if p != "r"], os.listdir(tmp_path)


def test_split_body_chain_and_few_craig_bampton_modes(run_cli):
    flexible = str(ASSEMBLIES / "compact_car_flexible.yaml")
    code, _, err = run_cli("plugin", "split_body", flexible, "--chain", "bogus")
    assert "split bodies: body" in _one_line(code, err, "--chain")
    # one fixed-interface mode: a reduced model smaller than the mode count is shown as
    # "-" past its size (it raised an IndexError)
    code, out, err = run_cli("plugin", "split_body", flexible, "--craig-bampton", "1",
                             "--count", "40")
    assert code == 0, err
    assert "no counterpart" in out and re.search(r"\s-\s+-\s", out)


@pytest.mark.parametrize("make, option_args", [
    ("folder", ["ride", COMPACT, "--road", "C", "--speed", "20", "--plot", "{P}"]),
    ("long", ["ride", COMPACT, "--road", "C", "--speed", "20", "--plot", "{P}"]),
    ("proc", ["bump", QUARTER, "--height", "40mm", "--length", "0.6m", "--speed", "20",
              "--csv", "{P}"]),
    ("long", ["report", QUARTER, "--out", "{P}"]),
    ("proc", ["report", QUARTER, "--out", "{P}"]),
    ("folder", ["render", QUARTER, "--mode", "1", "--out", "{P}"]),
    ("folder", ["sweep", COMPACT, "--vary", "ks_front=15kN/m..30kN/m:3", "--plot", "{P}"]),
    ("long", ["sweep", COMPACT, "--vary", "ks_front=15kN/m..30kN/m:3", "--plot", "{P}"]),
    ("folder", ["sweep", COMPACT, "--vary", "ks_front=15kN/m..30kN/m:3", "--resume",
                "--csv", "{P}"]),
    ("missing", ["frf", COMPACT, "--plot", "{P}"]),
])
def test_bad_output_paths_are_one_line(make, option_args, run_cli, tmp_path):
    suffix = {"ride": ".png", "bump": ".csv", "render": ".png", "frf": ".png"}.get(
        option_args[0], ".csv" if "--csv" in option_args else ".png")
    if option_args[0] == "report":
        suffix = ""
    path = {"folder": tmp_path / f"a_folder{suffix}", "long": tmp_path / (LONG + suffix),
            "proc": f"/proc/x{suffix}", "missing": tmp_path / "no" / f"x{suffix}"}[make]
    if make == "folder":
        os.mkdir(path)
    option = option_args[option_args.index("{P}") - 1]
    code, _, err = run_cli(*[str(path) if a == "{P}" else a for a in option_args])
    _one_line(code, err, option)
    assert sorted(os.listdir(tmp_path)) == ([f"a_folder{suffix}"] if make == "folder" else [])


# ------------------------------------------------------ class 3: ceilings --

@pytest.mark.parametrize("args, option, ceiling", [
    (["ride", QUARTER, "--road", "C", "--speed", "20", "--points", "10000000"], "--points",
     "ride --points"),
    (["frf", QUARTER, "--points", "1000001"], "--points", "frf --points"),
    (["sweep", COMPACT, "--vary", "ks_front=1..2:100000", "--vary", "ks_rear=1..2:100000"],
     "--vary", "sweep variants"),
    (["sweep", COMPACT, "--vary", "ks_front=1..2", "--lhs", "100000000"], "--lhs",
     "sweep --lhs"),
    (["sweep", COMPACT, "--scatter", "ks_front=normal:24kN/m,5%", "--samples", "1000000000"],
     "--samples", "sweep --samples"),
    (["render", QUARTER, "--mode", "1", "--out", "{TMP}/x.gif", "--frames", "100000"],
     "--frames", "render --frames"),
    (["render", QUARTER, "--mode", "1", "--out", "{TMP}/x.png", "--size", "8192x8192"],
     "--size", "render --size area"),
    (["render", QUARTER, "--mode", "1", "--out", "{TMP}/x.gif", "--size", "2000x2000"],
     "--size", "render GIF area"),
    (["render", QUARTER, "--mode", "1", "--out", "{TMP}/x.gif", "--size", "1280x960",
      "--frames", "200"], "--frames", "render GIF frames x area"),
    (["render", QUARTER, "--sheet", "65", "--out", "{TMP}/x.png"], "--sheet",
     "render --sheet"),
])
def test_size_like_options_stop_at_their_ceiling(args, option, ceiling, run_cli, tmp_path):
    code, _, err = run_cli(*[a.replace("{TMP}", str(tmp_path)) for a in args])
    line = _one_line(code, err, option)
    assert f"ceiling of {CEILINGS[ceiling].value:,}" in line
    assert CEILINGS[ceiling].why[:30] in line
    assert os.listdir(tmp_path) == []


def test_every_ceiling_is_documented():
    text = (ROOT / "docs" / "format.md").read_text()
    section = text[text.index("## Limits of the command options"):]
    for key, top in CEILINGS.items():
        assert f"{top.value:,}" in section, key
        assert key.split(" ")[-1].strip("-") in section, key


# ------------------------------------------------ class 4: silent nonsense --

@pytest.mark.parametrize("args, option", [
    (["bump", QUARTER, "--height", "40mm", "--length", "1e-300m", "--speed", "20"],
     "--length"),
    (["bump", QUARTER, "--height", "1e-300m", "--length", "0.6m", "--speed", "20"],
     "--height"),
    (["ride", QUARTER, "--road", "C", "--speed", "1e300"], "--speed"),
    (["ride", QUARTER, "--road", "C", "--speed", "1e-300"], "--speed"),
])
def test_values_beyond_physical_sense_are_refused(args, option, run_cli):
    code, out, err = run_cli(*args)
    _one_line(code, err, option)
    assert out == ""


def test_extreme_accepted_values_print_no_nan(run_cli):
    """At the smallest and largest accepted sizes every printed figure is finite."""
    for args in (["bump", QUARTER, "--height", "1e-9 m", "--length", "1e-9 m", "--speed",
                  "1e-9"],
                 ["bump", QUARTER, "--height", "1e5 m", "--length", "1e5 m", "--speed", "1e4",
                  "--duration", "2"],
                 ["ride", QUARTER, "--road", "H", "--speed", "1e4"],
                 ["ride", QUARTER, "--road", "A", "--speed", "1e-9"]):
        code, out, err = run_cli(*args)
        assert code in (0, 2), err
        assert "Traceback" not in err
        assert not re.search(r"\b(nan|inf)\b", out, re.IGNORECASE), out
