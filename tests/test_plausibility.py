"""Implausible sizes: hopeless values refused with one line naming the link or body,
suspicious ones warned about with their implied frequency."""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from conftest import ASSEMBLIES

from builder.analysis.modes import compute_modes
from builder.errors import InputError
from builder.linear import assemble
from builder.load import load_text

CAR = (ASSEMBLIES / "compact_car.yaml").read_text()


def _write(write_yaml, old: str, new: str, source: str = CAR):
    assert old in source
    return write_yaml(source.replace(old, new, 1))


def _one_clean_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err
    return lines[0]


def test_tyre_rate_typo_is_refused_with_the_link_and_its_frequency(write_yaml, run_cli):
    # "260 kN/nm" is 2.6e14 N/m, 1e9 times a tyre; on the 36 kg front wheel the
    # implied frequency is sqrt(k/m)/(2 pi) (analytic) = 4.3e5 Hz. Before, modes
    # called the body modes zero-frequency and ride ran on.
    path = _write(write_yaml, "kt: 220 kN/m", "kt: 260 kN/nm")
    for command in ("modes", "ride", "frf", "check"):
        extra = {"frf": ["--from", "road.fl", "--to", "floor_front"],
                 "ride": ["--road", "C", "--speed", "60 km/h"]}
        args = [command, path] + extra.get(command, [])
        code, out, err = run_cli(*args)
        assert code == 2, command
        line = _one_clean_line(err)
        assert "links.tyre_" in line and "2.6e+14 N/m" in line and "check the value" in line
    f_front = math.sqrt(2.6e14 / 36.0) / (2 * math.pi)
    f_rear = math.sqrt(2.6e14 / 32.0) / (2 * math.pi)
    assert f"{f_front:.2e} Hz" in line or f"{f_rear:.2e} Hz" in line


def test_road_spring_in_kn_per_mm_gets_a_warning_with_its_frequency(write_yaml, run_cli):
    # "26 kN/mm" is a plausible unit but 1000 times a road spring: the 36 kg wheel
    # on it alone would vibrate at sqrt(2.6e7 / 36)/(2 pi) = 135 Hz (analytic).
    path = _write(write_yaml, "ks_front: 24 kN/m", "ks_front: 26 kN/mm")
    code, out, err = run_cli("modes", path)
    assert code == 0
    f = math.sqrt(2.6e7 / 36.0) / (2 * math.pi)
    warned = [ln for ln in out.splitlines() if "warning" in ln and "links.susp_fl" in ln]
    assert warned and f"{f:.3g} Hz" in warned[0]
    code, out, err = run_cli("check", path)
    assert code == 0 and "links.susp_fl" in out


@pytest.mark.parametrize("old, new, field", [
    ("wheel_rr: {mass: 32 kg", "wheel_rr: {mass: 1e-300 kg", "bodies.wheel_rr"),
    ("wheel_rr: {mass: 32 kg", "wheel_rr: {mass: 1e-308 kg", "bodies.wheel_rr"),
])
def test_vanishing_mass_is_refused(write_yaml, run_cli, old, new, field):
    # Before: "inf Hz" for a 1e-308 kg mass, a 150-digit frequency for 1e-300 kg.
    code, out, err = run_cli("modes", _write(write_yaml, old, new))
    assert code == 2 and field in _one_clean_line(err)


def test_vanishing_plugin_mass_and_far_point_are_refused(write_yaml, run_cli):
    # Fuzz reproducers (an occupant of 1e-320 kg; a mount point at -1e308 m) used
    # to raise ValueError inside the eigen-solution.
    seat = (ASSEMBLIES / "compact_car_seat.yaml").read_text()
    code, _, err = run_cli("modes", _write(write_yaml, "occupant_mass: 75 kg",
                                           'occupant_mass: "1e-320"', seat))
    assert code == 2 and "occupant_mass" in _one_clean_line(err)   # refused by the loader
    mounts = (ASSEMBLIES / "engine_on_mounts.yaml").read_text()
    code, _, err = run_cli("modes", _write(write_yaml, "at: [0.02, -0.40, 0.10]",
                                           "at: [0.02, -0.40, -1e308]", mounts))
    assert code == 2 and "beyond" in _one_clean_line(err)


SLOW = """
format: 1
motion: bounce
bodies:
  heavy: {mass: 1000, cg: [0, 0, 0], gyradius: {x: 0.5, y: 0.5, z: 0.5}}
  light: {mass: 36, cg: [0, 0, 1], gyradius: {x: 0.1, y: 0.1, z: 0.1}}
links:
  soft: {type: spring, a: heavy, b: ground, axis: z, stiffness: %K%}
  stiff: {type: spring, a: light, b: heavy, axis: z, stiffness: 1e12}
"""


def test_slow_mode_next_to_a_very_stiff_link_is_not_called_rigid():
    # Analytic: with the two masses locked by the stiff link, the slow mode is
    # sqrt(k / (m1 + m2)) / (2 pi) = 0.02 Hz. Before, the zero-frequency tolerance
    # (relative to the stiff link's k/m) called it rigid "without deforming any link".
    f_slow = 0.02
    k = (2 * math.pi * f_slow) ** 2 * 1036.0
    model = assemble(load_text(SLOW.replace("%K%", repr(k))))
    modes = compute_modes(model)
    assert modes.rigid_count == 0
    assert modes[0].frequency_hz == pytest.approx(f_slow, rel=1e-3)
    assert any("links.stiff" in n and "rigid link" in n for n in modes.notes)


def test_hopeless_model_refused_by_assemble_itself():
    text = SLOW.replace("%K%", "100").replace("stiffness: 1e12", "stiffness: 1e15")
    with pytest.raises(InputError, match="links.stiff.*beyond any vehicle"):
        assemble(load_text(text, "slow.yaml"))


@pytest.mark.parametrize("segments", [60, 2000, 10000])
def test_finely_divided_free_beam_keeps_its_elastic_modes(segments):
    # Analytic: a free-free Euler-Bernoulli beam has six zero-frequency modes and
    # its first bending mode at (4.7300^2 / (2 pi)) sqrt(EI / (rho A L^4)) (beta L
    # from cos(bL) cosh(bL) = 1; from memory, checked by root finding in
    # test_beam_matrix); the segments' rotary inertia lowers it by about 2 %. In
    # 2,000 segments the largest K/M is 1e17, and a zero-frequency tolerance
    # relative to it called the first bending modes rigid.
    from plugins.split_body.split import uniform_bar
    section = dict(EA=2.0e9, EIy=3.0e6, EIz=4.5e6, GJ=1.2e6)
    modes = compute_modes(assemble(uniform_bar(segments, 4.0, 60.0, 2.0, section)), 8)
    assert modes.rigid_count == 6
    f1 = 4.7300 ** 2 / (2 * math.pi) * math.sqrt(3.0e6 / (60.0 * 4.0 ** 4))
    assert modes[6].frequency_hz == pytest.approx(f1, rel=0.03)


def test_absurd_loss_factor_is_refused(write_yaml, run_cli):
    # A loss factor of 1e12 printed "nan" damping for every mode of the van.
    van = (Path(__file__).parent / "models" / "light_van_flexible.yaml").read_text()
    path = _write(write_yaml, "loss_factor: 0.08}", "loss_factor: 1e12}", van)
    code, _, err = run_cli("modes", path)
    assert code == 2 and "links.leaf_l" in _one_clean_line(err) and "loss factor" in err
