"""Damped (complex) modes: each undamped mode paired with one root, once; loss factors
taken at each root's own natural frequency; checked against independent solutions."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.linalg
import scipy.optimize

from builder.analysis.damped import damped_modes
from builder.analysis.modes import compute_modes, zero_frequency
from builder.eigen import lowest_modes
from builder.linear import assemble
from builder.load import load_assembly, load_text

TWO_PI = 2 * math.pi
MODELS = Path(__file__).parent / "models"

# Two masses in a line, ground - k1 - m1 - k2 - m2, with a damper and loss
# factors in different links, so that the damping is not proportional.
TWO_DOF = """
format: 1
motion: bounce
bodies:
  m1: {{mass: {m1}, cg: [0, 0, 0], gyradius: {{x: 0.1, y: 0.1, z: 0.1}}}}
  m2: {{mass: {m2}, cg: [0, 0, 1], gyradius: {{x: 0.1, y: 0.1, z: 0.1}}}}
links:
  k1: {{type: spring, a: m1, b: ground, axis: z, stiffness: {k1}, damping: {c1}, loss_factor: {e1}}}
  k2: {{type: spring, a: m2, b: m1, axis: z, stiffness: {k2}, damping: {c2}, loss_factor: {e2}}}
"""


def _two_dof(m1=30.0, m2=8.0, k1=4e4, k2=2.5e4, c1=0.0, c2=0.0, e1=0.0, e2=0.0):
    text = TWO_DOF.format(m1=m1, m2=m2, k1=k1, k2=k2, c1=c1, c2=c2, e1=e1, e2=e2)
    M = np.diag([m1, m2])
    K = np.array([[k1 + k2, -k2], [-k2, k2]])
    C = np.array([[c1 + c2, -c2], [-c2, c2]])
    H = np.array([[e1 * k1 + e2 * k2, -e2 * k2], [-e2 * k2, e2 * k2]])
    return assemble(load_text(text)), M, K, C, H


def _upper_root(mode) -> complex:
    return max(mode.roots, key=lambda s: s.imag)


def _residual(M, K, C, H, s: complex) -> float:
    """Smallest singular value of s^2 M + s (C + H/|s|) + K, relative to its norm."""
    T = s * s * M + s * (C + H / abs(s)) + K
    sv = scipy.linalg.svdvals(T)
    return float(sv[-1] / sv[0])


def test_two_dof_proportional_loss_factor_matches_complex_eigenvalues():
    # Independent library: scipy.linalg.eigvals of K (1 + i eta) against M gives
    # w_i^2 (1 + i eta); with one loss factor everywhere the modes do not couple,
    # so zeta_i = Im/(2 Re) = eta/2 and f_i = sqrt(Re)/(2 pi), exactly.
    eta = 0.08
    model, M, K, _, _ = _two_dof(e1=eta, e2=eta)
    lam = np.sort_complex(scipy.linalg.eigvals(K * (1 + 1j * eta), M))
    modes = compute_modes(model)
    for mode, lm in zip(modes.modes, lam):
        assert mode.frequency_hz == pytest.approx(math.sqrt(lm.real) / TWO_PI, rel=1e-10)
        assert mode.damping_ratio == pytest.approx(lm.imag / (2 * lm.real), rel=1e-10)


def test_two_dof_roots_match_root_finding_on_the_determinant():
    # Independent solution: scipy.optimize.fsolve on Re and Im of
    # det(s^2 M + s (C + H/|s|) + K) = 0, started at each undamped i w_i; a damper
    # in one link and different loss factors in both: non-proportional damping.
    model, M, K, C, H = _two_dof(c1=150.0, e1=0.05, e2=0.25)
    w2 = np.sort(scipy.linalg.eigvalsh(K, M))

    def det(v):
        s = complex(v[0], v[1])
        d = np.linalg.det(s * s * M + s * (C + H / abs(s)) + K)
        return [d.real, d.imag]

    expected = []
    for w in np.sqrt(w2):
        sol, info, ok, msg = scipy.optimize.fsolve(det, [-0.01 * w, w], full_output=True,
                                                   xtol=1e-12)
        assert ok == 1, msg
        expected.append(complex(sol[0], sol[1]))
    got = [_upper_root(m) for m in compute_modes(model).modes]
    for g, e in zip(got, expected):
        assert g == pytest.approx(e, rel=1e-9)


def test_two_dof_non_proportional_loss_factor_near_the_complex_stiffness_figure():
    # Independent library: the modal loss factor Im/Re of the complex eigenvalues
    # of K + iH against M (scipy.linalg.eigvals). For light damping the root at
    # the equivalent viscous H/|s| and the complex-stiffness eigenvalue agree to
    # second order in the loss factors: zeta = eta_i/2 (1 + O(eta^2)).
    model, M, K, _, H = _two_dof(e1=0.02, e2=0.10)
    lam = np.sort_complex(scipy.linalg.eigvals(K + 1j * H, M))
    for mode, lm in zip(compute_modes(model).modes, lam):
        assert mode.damping_ratio == pytest.approx(lm.imag / (2 * lm.real), rel=2e-2)


def test_viscous_two_dof_roots_are_the_state_space_eigenvalues():
    # Independent library: scipy.linalg.eigvals of [[0, I], [-M^-1 K, -M^-1 C]]; every
    # root appears once among the modes.
    model, M, K, C, _ = _two_dof(c1=900.0, c2=40.0)
    A = np.block([[np.zeros((2, 2)), np.eye(2)],
                  [-np.linalg.solve(M, K), -np.linalg.solve(M, C)]])
    eig = np.sort_complex(scipy.linalg.eigvals(A))
    roots = np.sort_complex([r for m in compute_modes(model).modes for r in m.roots])
    assert roots == pytest.approx(eig, rel=1e-10)


def test_split_body_van_pairs_every_mode_with_its_own_root():
    # Regression (two modes were given the same complex root, one of them shown
    # with 112.7 % damping): in an invented light van with a split body, an
    # engine, a seat and loss factors, every underdamped mode has a distinct root,
    # and each root solves det(s^2 M + s (C + H/|s|) + K) = 0 (smallest singular
    # value, scipy.linalg.svdvals, at round-off).
    model = assemble(load_assembly(MODELS / "light_van_flexible.yaml"))
    modes = compute_modes(model)
    M, K, C, H = (a.toarray() for a in (model.M, model.K, model.C, model.H))
    roots = []
    for mode in modes.modes:
        if mode.overdamped or not mode.roots:
            continue
        s = _upper_root(mode)
        assert mode.damping_ratio < 1.0
        assert _residual(M, K, C, H, s) < 1e-10, mode.number
        roots.append(s)
    roots = np.array(roots)
    gaps = np.abs(roots[:, None] - roots[None, :]) + np.eye(len(roots)) * 1e9
    assert gaps.min() > 1e-6 * np.abs(roots).min()


def test_projection_on_the_lowest_modes_states_its_error():
    # Independent reference: the roots of the same model from the complete modal
    # basis (every mode) against those from a basis of its lowest 40 modes, whose
    # error estimate must cover the largest actual relative error of the lowest
    # 20 roots, and be of its size (within a factor of 100).
    model = assemble(load_assembly(MODELS / "light_van_flexible.yaml"))
    lam, shapes = lowest_modes(model.K, model.M, model.n)
    rigid = zero_frequency(model, lam, shapes)
    full = damped_modes(model, shapes, lam, rigid)
    part = damped_modes(model, shapes[:, :40], lam[:40], rigid[:40])
    assert part.basis == 40 and full.basis_error() == 0.0
    for k in range(20):
        a, b = part.modes[k], full.modes[k]
        if b[2] or not b[3]:
            continue
        actual = abs(a[3][0] - b[3][0]) / abs(b[3][0])
        assert actual <= part.errors[k] < 100 * actual + 1e-12, k


def test_assignment_matches_scipy_linear_sum_assignment():
    # Independent library: scipy.optimize.linear_sum_assignment gives the least
    # total cost; the pairing's own assignment must reach the same total.
    from builder.analysis.damped import hungarian
    rng = np.random.default_rng(7)
    for trial in range(200):
        p = int(rng.integers(1, 10))
        q = p + int(rng.integers(0, 4))
        cost = rng.random((p, q)) if trial % 2 else rng.integers(0, 3, (p, q)).astype(float)
        rows, cols = scipy.optimize.linear_sum_assignment(cost)
        ours = hungarian(cost)
        assert len(set(ours)) == p and min(ours) >= 0
        assert cost[np.arange(p), ours].sum() == pytest.approx(cost[rows, cols].sum(), abs=1e-12)


@pytest.mark.parametrize("change", ["K*1e-300", "C*1e300", "H*1e300", "M0"])
def test_extreme_matrices_end_in_results_or_one_input_error(change):
    # Robustness: scaled or singular matrices never raise anything but InputError
    # (a stiffness scaled by 1e-300 raised ZeroDivisionError in the damping).
    from builder.errors import InputError
    model = assemble(load_assembly(MODELS / "light_van_flexible.yaml"))
    if change == "M0":
        M = model.M.tolil()
        M[3, 3] = 0.0
        model = model.with_matrices(M=M.tocsr())
    else:
        key, factor = change.split("*")
        model = model.with_matrices(**{key: getattr(model, key) * float(factor)})
    try:
        modes = compute_modes(model)
    except InputError as exc:     # a massless DOF; loss-factor stiffness overflowing to inf
        assert {"M0": "mass", "H*1e300": "not a finite"}[change] in str(exc)
        return
    assert change in ("K*1e-300", "C*1e300")
    for m in modes.modes:
        assert math.isfinite(m.frequency_hz)
        assert m.damping_ratio is None or math.isfinite(m.damping_ratio)
