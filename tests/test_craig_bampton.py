"""Lowest-modes solver and Craig-Bampton reduction.

Checks: the analytic eigenvalues of a free-free spring-mass chain (singular K,
sparse shift-invert path), the dense path against the same formula, and
Craig-Bampton reduced beams against their full models and against the
method's defining properties (R. R. Craig and M. C. C. Bampton, AIAA Journal
6(7), 1968, from memory): reduced modal block diag(omega^2) and identity,
no stiffness coupling between boundary and modal coordinates, and
Rayleigh-Ritz upper bounds on the full model's eigenvalues.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse

from builder.craig_bampton import craig_bampton
from builder.eigen import lowest_modes
from builder.elements.beam_matrix import beam_global_stiffness
from builder.errors import InputError


def spring_chain(n, k=1.0e4, m=2.0):
    """Free-free chain of n equal masses and n-1 equal springs (singular K)."""
    main = np.full(n, 2 * k)
    main[[0, -1]] = k
    stiff = scipy.sparse.diags_array([main, np.full(n - 1, -k), np.full(n - 1, -k)],
                                     offsets=[0, 1, -1]).tocsr()
    return stiff, scipy.sparse.diags_array(np.full(n, m)).tocsr()


@pytest.mark.parametrize("n", [50, 3000])          # dense path, sparse path
def test_lowest_modes_of_free_free_chain(n):
    # Analytic: lambda_j = (4 k/m) sin^2(j pi/(2n)), j = 0..n-1 (uniform free-free
    # lattice, modes cos(j pi (i + 1/2)/n); standard result, derivable by substitution).
    k, m = spring_chain(n)
    lam, x = lowest_modes(k, m, 8)
    j = np.arange(8)
    exact = 4 * 1.0e4 / 2.0 * np.sin(j * np.pi / (2 * n)) ** 2
    np.testing.assert_allclose(lam, exact, rtol=1e-9, atol=1e-8 * exact[1])
    np.testing.assert_allclose(x.T @ (m @ x), np.eye(8), atol=1e-10)
    np.testing.assert_allclose(x.T @ (k @ x), np.diag(lam), atol=1e-8 * lam.max())
    # Sign convention: the component of largest magnitude is positive.
    big = np.argmax(np.abs(x), axis=0)
    assert np.all(x[big, np.arange(8)] > 0)
    # The mode shape is the analytic cosine (up to the normalisation).
    shape = np.cos(3 * np.pi * (np.arange(n) + 0.5) / n)
    assert abs(shape @ x[:, 3]) / (np.linalg.norm(shape) * np.linalg.norm(x[:, 3])) \
        == pytest.approx(1.0, abs=1e-9)


def test_lowest_modes_deterministic_and_refusals():
    k, m = spring_chain(2000)
    a = lowest_modes(k, m, 5)
    b = lowest_modes(k, m, 5)
    assert np.array_equal(a[0], b[0]) and np.array_equal(a[1], b[1])
    with pytest.raises(InputError):
        lowest_modes(k, m, 0)
    with pytest.raises(InputError):
        lowest_modes(k, m[:10, :10], 3)


def beam(N, L=3.0, rho_a=12.0, rho_ip=0.05):
    """Free-free spatial beam of N rigid segments (6 DOFs each) joined by beams."""
    d = L / N
    rows, cols, vals = [], [], []
    for j in range(N - 1):
        ke = beam_global_stiffness([j * d, 0, 0], [(j + 1) * d, 0, 0], [0, 0, 1],
                                   EA=5e8, EIy=2e5, EIz=3e5, GJ=1e5)
        idx = np.r_[6 * j:6 * j + 12]
        rows.append(np.repeat(idx, 12))
        cols.append(np.tile(idx, 12))
        vals.append(ke.ravel())
    k = scipy.sparse.coo_array((np.concatenate(vals), (np.concatenate(rows),
                                np.concatenate(cols))), shape=(6 * N, 6 * N)).tocsr()
    m = rho_a * d
    diag = np.tile([m, m, m, rho_ip * d, m * d * d / 12, m * d * d / 12], N)
    return k, scipy.sparse.diags_array(diag).tocsr()


@pytest.mark.parametrize("N, boundary_segments, modes",
                         [(60, (0, 59), 40), (500, (0, 250, 499), 60)])
def test_craig_bampton_reproduces_lowest_modes(N, boundary_segments, modes):
    k, m = beam(N)
    boundary = np.concatenate([np.arange(6 * s, 6 * s + 6) for s in boundary_segments])
    cb = craig_bampton(k, m, boundary, modes)
    full, full_shapes = lowest_modes(k, m, 20)
    reduced, shapes = lowest_modes(cb.K, cb.M, 20)
    elastic = slice(6, 20)                             # six rigid-body modes first
    np.testing.assert_allclose(full[:6], 0, atol=1e-6 * full[6])
    np.testing.assert_allclose(reduced[:6], 0, atol=1e-6 * full[6])
    np.testing.assert_allclose(np.sqrt(reduced[elastic]), np.sqrt(full[elastic]), rtol=1e-3)
    # Rayleigh-Ritz: a reduced model never lies below the full one.
    assert np.all(reduced[elastic] >= full[elastic] * (1 - 1e-10))
    # Method's structure: modal block diag(omega^2) / identity, no K coupling.
    nb = boundary.size
    omega2 = (2 * np.pi * cb.frequencies_hz) ** 2
    np.testing.assert_allclose(cb.K[nb:, nb:], np.diag(omega2), atol=1e-8 * omega2.max())
    np.testing.assert_allclose(cb.M[nb:, nb:], np.eye(modes), atol=1e-9)
    assert np.abs(cb.K[:nb, nb:]).max() <= 1e-8 * np.abs(cb.K).max()
    np.testing.assert_array_equal(cb.T[boundary], np.eye(nb, nb + modes))
    # Expanded reduced mode shapes match the full ones: MAC (modal assurance
    # criterion, Allemang & Brown 1982, from memory) above 0.999.
    for j in range(6, 20):
        x = cb.expand(shapes[:, j])
        mac = (x @ full_shapes[:, j]) ** 2 / ((x @ x) * (full_shapes[:, j] @ full_shapes[:, j]))
        assert mac > 0.999


def test_guyan_is_an_upper_bound_and_more_modes_converge():
    k, m = beam(80)
    boundary = np.r_[0:6, 6 * 79:6 * 80]
    full, _ = lowest_modes(k, m, 10)
    errors = []
    for modes in (0, 4, 12, 30, 60):
        cb = craig_bampton(k, m, boundary, modes)
        lam, _ = lowest_modes(cb.K, cb.M, 10)
        assert np.all(lam[6:] >= full[6:] * (1 - 1e-10))
        errors.append(np.max(lam[6:] / full[6:] - 1))
    assert errors == sorted(errors, reverse=True) and errors[-1] < 5e-5


def test_craig_bampton_refusals():
    k, m = beam(10)
    with pytest.raises(InputError, match="hold"):
        craig_bampton(k, m, [0], 2)                    # one DOF cannot hold a free beam
    with pytest.raises(InputError, match="interior"):
        craig_bampton(k, m, np.arange(6), 1000)
    with pytest.raises(InputError, match="distinct"):
        craig_bampton(k, m, [0, 0], 1)


def test_lowest_modes_takes_dense_arrays_and_an_explicit_shift():
    # Same analytic chain as above, given as dense arrays beyond the dense limit
    # (sparse path), and with a shift inside the spectrum (modes nearest it).
    n = 700
    k, m = spring_chain(n)
    lam, _ = lowest_modes(k.toarray(), m.toarray(), 6)
    j = np.arange(6)
    exact = 4 * 1.0e4 / 2.0 * np.sin(j * np.pi / (2 * n)) ** 2
    np.testing.assert_allclose(lam, exact, rtol=1e-9, atol=1e-8 * exact[1])
    j = np.arange(n)
    spectrum = 4 * 1.0e4 / 2.0 * np.sin(j * np.pi / (2 * n)) ** 2
    sigma = spectrum[50] * 1.0001
    near = np.sort(spectrum[np.argsort(np.abs(spectrum - sigma))[:5]])
    lam, _ = lowest_modes(k, m, 5, sigma=sigma)
    np.testing.assert_allclose(np.sort(lam), near, rtol=1e-9)
