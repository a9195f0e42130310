"""Occupant models: responses against closed forms and published findings."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from plugins.seat.occupants import (
    OCCUPANT_MODELS,
    SEAT,
    Coupling,
    OccupantModel,
    Segment,
    apparent_mass,
    natural_frequencies,
    normalised_apparent_mass,
    resonance,
    scaled,
    seat_to_head_transmissibility,
    segment_transmissibility,
)

F = np.linspace(0.2, 25.0, 500)
KEYS = sorted(OCCUPANT_MODELS)


def _sdof_apparent_mass(m, k, c, f):
    # Analytic: a mass m on a spring k and damper c over a moving base has
    # F/a = m (k + i w c) / (k - w^2 m + i w c).
    w = 2 * np.pi * np.asarray(f)
    return m * (k + 1j * w * c) / (k - w**2 * m + 1j * w * c)


def test_one_dof_apparent_mass_matches_closed_form():
    model = OCCUPANT_MODELS["fairley_griffin_1989"]
    (seg,), (cpl,) = model.segments, model.couplings
    # Analytic closed form, plus the non-vibrating mass, which moves with the seat.
    expected = model.seat_mass + _sdof_apparent_mass(seg.mass, cpl.stiffness, cpl.damping, F)
    np.testing.assert_allclose(apparent_mass(model, F), expected, rtol=1e-12)


def test_one_dof_closed_form_from_sympy():
    # Independent library: sympy solves the base-excited equation of motion
    # -w^2 m X = (k + i w c)(U - X) and forms the seat force m (-w^2 X) / (-w^2 U).
    import sympy as sp
    m, k, c, w, U, X = sp.symbols("m k c w U X")
    x_sol = sp.solve(sp.Eq(-w**2 * m * X, (k + sp.I * w * c) * (U - X)), X)[0]
    am = sp.lambdify((m, k, c, w), sp.simplify(m * x_sol / U), "numpy")
    model = replace(OCCUPANT_MODELS["fairley_griffin_1989"], seat_mass=0.0)
    (seg,), (cpl,) = model.segments, model.couplings
    got = apparent_mass(model, F)
    np.testing.assert_allclose(got, am(seg.mass, cpl.stiffness, cpl.damping, 2 * np.pi * F),
                               rtol=1e-10)


def test_two_branch_model_is_sum_of_single_dof_branches():
    # Analytic: branches that each sit on the seat add their apparent masses.
    model = OCCUPANT_MODELS["wei_griffin_1998"]
    assert all(c.lower == SEAT for c in model.couplings)
    mass = {s.name: s.mass for s in model.segments}
    expected = model.seat_mass + sum(
        _sdof_apparent_mass(mass[c.upper], c.stiffness, c.damping, F) for c in model.couplings)
    np.testing.assert_allclose(apparent_mass(model, F), expected, rtol=1e-10)


def _chain_by_impedance(model: OccupantModel, f):
    # Analytic, independent of the matrix assembly: walk a chain from the top.
    # A body of apparent mass A on a coupling of dynamic stiffness D = k + i w c
    # has its base node move X = D U / (D - w^2 A); seen from below it is an
    # apparent mass A D / (D - w^2 A). The head's transmissibility is the
    # product of the ratios D / (D - w^2 A) down the chain.
    w = 2 * np.pi * np.asarray(f)
    mass = {s.name: s.mass for s in model.segments}
    below = {c.upper: c for c in model.couplings}
    order = [model.head]
    while below[order[-1]].lower != SEAT:
        order.append(below[order[-1]].lower)
    A = np.zeros_like(w, dtype=complex)
    ratio = np.ones_like(w, dtype=complex)
    for name in order:
        A = A + mass[name]
        c = below[name]
        D = c.stiffness + 1j * w * c.damping
        r = D / (D - w**2 * A)
        ratio = ratio * r
        A = A * r
    return model.seat_mass + A, ratio


def test_chain_model_matches_impedance_recursion():
    model = OCCUPANT_MODELS["boileau_rakheja_1998"]
    am, head = _chain_by_impedance(model, F)
    np.testing.assert_allclose(apparent_mass(model, F), am, rtol=1e-9)
    np.testing.assert_allclose(seat_to_head_transmissibility(model, F), head, rtol=1e-9)


@pytest.mark.parametrize("key", KEYS)
def test_static_limit_is_total_seated_mass(key):
    # Analytic: at 0 Hz every segment follows the seat, so the seat force per
    # unit acceleration is the whole seated mass.
    model = OCCUPANT_MODELS[key]
    np.testing.assert_allclose(apparent_mass(model, [1e-6]), [model.seated_mass], rtol=1e-9)
    np.testing.assert_allclose(segment_transmissibility(model, 1e-6), 1.0, atol=1e-9)
    total = model.seat_mass + sum(s.mass for s in model.segments)
    assert model.seated_mass == pytest.approx(total)


def test_resonance_of_base_excited_sdof_matches_textbook_peak():
    # Textbook (base-excitation transmissibility, e.g. Rao, Mechanical
    # Vibrations): |T| = sqrt((1 + (2 z r)^2) / ((1 - r^2)^2 + (2 z r)^2)) peaks
    # at r = sqrt(sqrt(1 + 8 z^2) - 1) / (2 z).
    m, k, zeta = 50.0, 50.0 * (2 * np.pi * 5.0) ** 2, 0.3
    c = 2 * zeta * np.sqrt(k * m)
    model = OccupantModel("sdof", "test", "", (Segment("m", m, 0.3),),
                          (Coupling(SEAT, "m", k, c),), 0.0, "m", m, "test")
    r = np.sqrt(np.sqrt(1 + 8 * zeta**2) - 1) / (2 * zeta)
    t_peak = np.sqrt((1 + (2 * zeta * r) ** 2) / ((1 - r**2) ** 2 + (2 * zeta * r) ** 2))
    f_peak, am_peak = resonance(model)
    assert f_peak == pytest.approx(5.0 * r, rel=1e-5)
    assert am_peak == pytest.approx(m * t_peak, rel=1e-8)
    f_head, t_head = resonance(model, "head")
    assert f_head == pytest.approx(5.0 * r, rel=1e-5)
    assert t_head == pytest.approx(t_peak, rel=1e-8)


@pytest.mark.parametrize("key", KEYS)
def test_peak_against_the_publication(key):
    # Each model's reported measured peak (ranges from memory: see
    # ReportedPeak.note of each model, which names the paper).
    model = OCCUPANT_MODELS[key]
    f_peak, magnitude = resonance(model)
    low, high = model.reported.frequency_hz
    assert low <= f_peak <= high, model.reported.note
    low, high = model.reported.normalised_magnitude
    assert low <= magnitude / model.seated_mass <= high, model.reported.note


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("body_mass", [55.0, 75.0, 98.0])
def test_vertical_apparent_mass_peaks_between_4_and_6_hz(key, body_mass):
    # Published finding: the vertical apparent mass of seated people peaks at
    # about 4-6 Hz (Fairley and Griffin 1989, J. Biomech. 22, 81-94; the
    # idealised ranges of ISO 5982:2001; both from memory).
    f_peak, magnitude = resonance(scaled(OCCUPANT_MODELS[key], body_mass))
    assert 4.0 <= f_peak <= 6.0
    assert magnitude > scaled(OCCUPANT_MODELS[key], body_mass).seated_mass


def test_seat_to_head_transmissibility_peaks_near_the_body_resonance():
    # Published finding: vertical seat-to-head transmissibility of seated people
    # has its principal peak at about 4-6 Hz with a magnitude above 1 (Paddan and
    # Griffin 1998, J. Sound Vib. 215, 863-882; from memory).
    f_peak, magnitude = resonance(OCCUPANT_MODELS["boileau_rakheja_1998"], "head")
    assert 4.0 <= f_peak <= 6.0
    assert 1.2 <= magnitude <= 2.5


@pytest.mark.parametrize("key", KEYS)
def test_scaling_keeps_frequencies_and_normalised_apparent_mass(key):
    # Analytic: multiplying m, k and c by one factor leaves sqrt(k/m) and
    # c / (2 sqrt(k m)) unchanged, so the normalised response is unchanged.
    model = OCCUPANT_MODELS[key]
    heavy = scaled(model, 1.3 * model.body_mass)
    assert heavy.body_mass == pytest.approx(1.3 * model.body_mass)
    assert heavy.seated_mass == pytest.approx(1.3 * model.seated_mass)
    np.testing.assert_allclose(normalised_apparent_mass(heavy, F),
                               normalised_apparent_mass(model, F), rtol=1e-10)
    np.testing.assert_allclose(natural_frequencies(heavy), natural_frequencies(model), rtol=1e-10)
    back = scaled(heavy, model.body_mass)
    np.testing.assert_allclose(apparent_mass(back, F), apparent_mass(model, F), rtol=1e-10)


def test_natural_frequency_of_one_dof_is_sqrt_k_over_m():
    # Analytic: f = sqrt(k / m) / (2 pi) on a fixed seat.
    model = OCCUPANT_MODELS["fairley_griffin_1989"]
    (seg,), (cpl,) = model.segments, model.couplings
    np.testing.assert_allclose(natural_frequencies(model),
                               [np.sqrt(cpl.stiffness / seg.mass) / (2 * np.pi)])


def test_models_carry_citations_and_provenance():
    for model in OCCUPANT_MODELS.values():
        assert any(str(y) in model.citation for y in range(1950, 2030))
        assert model.provenance and model.reported is not None
        assert model.to_dict()["seated_mass_kg"] == pytest.approx(model.seated_mass)
    multi = [m for m in OCCUPANT_MODELS.values() if len(m.segments) > 1]
    single = [m for m in OCCUPANT_MODELS.values() if len(m.segments) == 1]
    assert multi and single


def test_bad_use_is_refused():
    with pytest.raises(ValueError):
        seat_to_head_transmissibility(OCCUPANT_MODELS["fairley_griffin_1989"], F)
    with pytest.raises(ValueError):
        scaled(OCCUPANT_MODELS["fairley_griffin_1989"], -3.0)
    with pytest.raises(ValueError):
        resonance(OCCUPANT_MODELS["fairley_griffin_1989"], "pelvis")
