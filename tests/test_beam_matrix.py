"""Beam element stiffness and beam chains of lumped rigid segments.

Every expected value here comes from outside the code under test: the
textbook beam stiffness matrix written out entry by entry, the analytic
deflections of an end-loaded cantilever, and the analytic natural frequencies
of uniform beams and shafts. Chains are assembled directly with numpy and
scipy.sparse (six DOFs per segment at its centre, global axes), independently
of the core assembler.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.optimize
import scipy.sparse

from builder.eigen import lowest_modes
from builder.elements.beam_matrix import (
    beam_global_stiffness,
    beam_local_stiffness,
    beam_rotation,
)
from builder.errors import InputError

# ---------------------------------------------------------------- the element


def textbook_euler_bernoulli(L, EA, EIy, EIz, GJ, phi_y=0.0, phi_z=0.0):
    """The 12x12 space-frame element matrix, entries written out by hand.

    Source: J. S. Przemieniecki, "Theory of Matrix Structural Analysis",
    McGraw-Hill 1968, the uniform beam element in local axes with the shear
    deformation parameters Phi_y, Phi_z (Phi = 0: Euler-Bernoulli); entries
    and sign pattern from memory, order [u1 v1 w1 tx1 ty1 tz1 u2 ... tz2].
    Here phi_y belongs to bending in the x-y plane (EIz, shear along y).
    """
    k = np.zeros((12, 12))
    a = EA / L
    t = GJ / L
    by = EIz / ((1 + phi_y) * L ** 3)   # x-y plane
    bz = EIy / ((1 + phi_z) * L ** 3)   # x-z plane
    up = {
        (0, 0): a, (0, 6): -a,
        (1, 1): 12 * by, (1, 5): 6 * L * by, (1, 7): -12 * by, (1, 11): 6 * L * by,
        (2, 2): 12 * bz, (2, 4): -6 * L * bz, (2, 8): -12 * bz, (2, 10): -6 * L * bz,
        (3, 3): t, (3, 9): -t,
        (4, 4): (4 + phi_z) * L ** 2 * bz, (4, 8): 6 * L * bz, (4, 10): (2 - phi_z) * L ** 2 * bz,
        (5, 5): (4 + phi_y) * L ** 2 * by, (5, 7): -6 * L * by, (5, 11): (2 - phi_y) * L ** 2 * by,
        (6, 6): a,
        (7, 7): 12 * by, (7, 11): -6 * L * by,
        (8, 8): 12 * bz, (8, 10): 6 * L * bz,
        (9, 9): t,
        (10, 10): (4 + phi_z) * L ** 2 * bz,
        (11, 11): (4 + phi_y) * L ** 2 * by,
    }
    for (i, j), v in up.items():
        k[i, j] = k[j, i] = v
    return k


PROPS = dict(EA=2.0e9, EIy=3.0e6, EIz=4.5e6, GJ=1.2e6)


def test_local_matrix_matches_textbook_euler_bernoulli():
    # Przemieniecki 1968 (from memory), Euler-Bernoulli element.
    L = 0.7
    k = beam_local_stiffness(L, **PROPS)
    expected = textbook_euler_bernoulli(L, **PROPS)
    np.testing.assert_allclose(k, expected, rtol=1e-12, atol=1e-12 * np.abs(expected).max())


def test_local_matrix_matches_textbook_timoshenko():
    # Przemieniecki 1968 (from memory): shear parameter Phi = 12 EI/(k G A L^2).
    L, sy, sz = 0.4, 4.0e8, 2.5e8
    k = beam_local_stiffness(L, **PROPS, shear_y=sy, shear_z=sz)
    phi_y = 12 * PROPS["EIz"] / (sy * L ** 2)
    phi_z = 12 * PROPS["EIy"] / (sz * L ** 2)
    expected = textbook_euler_bernoulli(L, **PROPS, phi_y=phi_y, phi_z=phi_z)
    np.testing.assert_allclose(k, expected, rtol=1e-12, atol=1e-12 * np.abs(expected).max())


def _oblique_beam():
    pa = np.array([0.3, -1.2, 0.8])
    d = np.array([0.6, 0.48, -0.64])  # unit vector
    pb = pa + 1.3 * d
    return pa, pb, np.array([0.1, 0.2, 1.0])


def test_global_matrix_exactly_symmetric_with_six_rigid_null_vectors():
    pa, pb, hint = _oblique_beam()
    k = beam_global_stiffness(pa, pb, hint, **PROPS, shear_y=3e8, shear_z=5e8)
    assert np.array_equal(k, k.T)
    # Analytic rigid motions of two points: translation t (both points move t,
    # no rotation) and rotation w about the origin (u = w x p, rotation w).
    for axis in np.eye(3):
        trans = np.concatenate([axis, np.zeros(3), axis, np.zeros(3)])
        rot = np.concatenate([np.cross(axis, pa), axis, np.cross(axis, pb), axis])
        for motion in (trans, rot):
            force = k @ motion
            assert np.linalg.norm(force) <= 1e-12 * np.abs(k).max() * np.linalg.norm(motion) * 12
    # ... and exactly six: the other six eigenvalues are clearly positive.
    eig = np.linalg.eigvalsh(k)
    assert np.sum(eig > 1e-9 * eig.max()) == 6


def test_rotation_axes_and_refusals():
    pa, pb, hint = _oblique_beam()
    r = beam_rotation(pa, pb, hint)
    np.testing.assert_allclose(r @ r.T, np.eye(3), atol=1e-14)
    assert np.linalg.det(r) == pytest.approx(1.0)           # right-handed
    np.testing.assert_allclose(r[0], (pb - pa) / np.linalg.norm(pb - pa), atol=1e-15)
    assert np.cross(r[0], hint) @ np.cross(r[0], r[2]) > 0  # z in the plane of x and hint
    with pytest.raises(InputError, match="parallel"):
        beam_rotation(pa, pb, pb - pa)
    with pytest.raises(InputError, match="coincide"):
        beam_rotation(pa, pa, hint)
    with pytest.raises(InputError, match="EIy"):
        beam_local_stiffness(1.0, EA=1.0, EIy=0.0, EIz=1.0, GJ=1.0)


def _cantilever_tip(k12, load6):
    """Tip motion of end b with end a clamped, under the 6-vector load at b."""
    return np.linalg.solve(k12[6:, 6:], load6)


@pytest.mark.parametrize("shear", [None, 2.0e8])
def test_cantilever_tip_deflection_and_rotation(shear):
    # Analytic (Timoshenko & Gere, "Mechanics of Materials", end-loaded
    # cantilever): w = P L^3/(3 EI) + P L/(k G A), slope P L^2/(2 EI).
    L, P = 1.8, 1.5e3
    pa, _, hint = _oblique_beam()
    x = np.array([0.6, 0.48, -0.64])
    pb = pa + L * x
    k = beam_global_stiffness(pa, pb, hint, **PROPS, shear_y=shear, shear_z=shear)
    r = beam_rotation(pa, pb, hint)
    y, z = r[1], r[2]
    extra = 0.0 if shear is None else P * L / shear
    # Load along local z: bending about local y (EIy).
    tip = _cantilever_tip(k, np.concatenate([P * z, np.zeros(3)]))
    assert tip[:3] @ z == pytest.approx(P * L ** 3 / (3 * PROPS["EIy"]) + extra, rel=1e-10)
    assert abs(tip[3:] @ y) == pytest.approx(P * L ** 2 / (2 * PROPS["EIy"]), rel=1e-10)
    # Load along local y: bending about local z (EIz).
    tip = _cantilever_tip(k, np.concatenate([P * y, np.zeros(3)]))
    assert tip[:3] @ y == pytest.approx(P * L ** 3 / (3 * PROPS["EIz"]) + extra, rel=1e-10)
    # Torque and axial force: theta = T L/GJ, u = N L/EA (analytic).
    tip = _cantilever_tip(k, np.concatenate([np.zeros(3), P * x]))
    assert tip[3:] @ x == pytest.approx(P * L / PROPS["GJ"], rel=1e-10)
    tip = _cantilever_tip(k, np.concatenate([P * x, np.zeros(3)]))
    assert tip[:3] @ x == pytest.approx(P * L / PROPS["EA"], rel=1e-10)


# ------------------------------------------------------------------ chains


def chain_matrices(xs, masses, inertias, *, EA, EIy, EIz, GJ, shear=None):
    """K, M of rigid lumps at points (x, 0, 0) joined by beams between neighbours.

    ``inertias`` is (n, 3): Ixx, Iyy, Izz of each lump about its own centre,
    kg m^2. Six DOFs per lump [x y z rx ry rz] at its centre, global axes.
    """
    n = len(xs)
    rows, cols, vals = [], [], []
    for j in range(n - 1):
        ke = beam_global_stiffness([xs[j], 0, 0], [xs[j + 1], 0, 0], [0, 0, 1],
                                   EA, EIy, EIz, GJ, shear, shear)
        idx = np.r_[6 * j:6 * j + 12]
        rows.append(np.repeat(idx, 12))
        cols.append(np.tile(idx, 12))
        vals.append(ke.ravel())
    k = scipy.sparse.coo_array((np.concatenate(vals), (np.concatenate(rows),
                                np.concatenate(cols))), shape=(6 * n, 6 * n)).tocsr()
    diag = np.column_stack([masses, masses, masses, np.asarray(inertias)]).ravel()
    return k, scipy.sparse.diags_array(diag).tocsr()


def segment_chain(N, L, rho_a, rho_ip, **props):
    """A uniform beam of length L cut into N equal rigid segments (centres)."""
    d = L / N
    xs = (np.arange(N) + 0.5) * d
    m = np.full(N, rho_a * d)
    inertia = np.column_stack([np.full(N, rho_ip * d), m * d ** 2 / 12, m * d ** 2 / 12])
    return chain_matrices(xs, m, inertia, **props)


def classify(k, m, lam, x):
    """Dominant kinetic-energy DOF kind (0..5 = x y z rx ry rz) of each mode."""
    energy = x * (m @ x)
    kinds = np.array([energy[j::6].sum(axis=0) for j in range(6)])
    return np.argmax(kinds, axis=0), lam


BEAM = dict(EA=1.0e8, EIy=1.0e4, EIz=2.5e4, GJ=8.0e3)
LENGTH, RHO_A, RHO_IP = 2.0, 10.0, 0.02
FREE_FREE = np.array([4.7300, 7.8532, 10.9956])  # beta L, Euler-Bernoulli free-free


def bending_z_frequencies(N, count=3):
    k, m = segment_chain(N, LENGTH, RHO_A, RHO_IP, **BEAM)
    lam, x = lowest_modes(k, m, min(6 * N, 6 + 6 * count + 6))
    kind, _ = classify(k, m, lam, x)
    elastic = lam > 1e-6 * lam.max()
    picked = lam[elastic & (kind == 2)][:count]
    return np.sqrt(picked)


def test_free_free_bending_converges_to_analytic(capsys):
    # Analytic Euler-Bernoulli free-free beam: omega = (beta L)^2 sqrt(EI/(rho A L^4)),
    # beta L = 4.7300, 7.8532, 10.9956 (e.g. Blevins, "Formulas for Natural
    # Frequency and Mode Shape", table 8-1; values from memory, also the roots of
    # cos(bL) cosh(bL) = 1, checked below).
    # The four-digit table values limit a comparison to about 2e-5, so the roots
    # are refined from the frequency equation and checked against the table.
    roots = np.array([scipy.optimize.brentq(lambda b: np.cos(b) * np.cosh(b) - 1.0,
                                            r - 0.01, r + 0.01) for r in FREE_FREE])
    np.testing.assert_allclose(roots, FREE_FREE, atol=6e-5)
    exact = roots ** 2 * np.sqrt(BEAM["EIy"] / (RHO_A * LENGTH ** 4))
    table = []
    for N in (10, 20, 40, 80, 160):
        table.append((N, bending_z_frequencies(N) / exact - 1.0))
    with capsys.disabled():
        print("\nfree-free bending, lumped segments: relative error vs beta L")
        print("   N      mode 1       mode 2       mode 3")
        for N, err in table:
            print(f"{N:4d}  " + "  ".join(f"{e:+.3e}" for e in err))
    errors = np.abs(np.array([e for _, e in table]))
    assert np.all(errors[-1] < 1e-3)
    assert np.all(np.diff(errors, axis=0) < 0)          # monotone convergence
    order = np.log2(errors[-2] / errors[-1])            # about second order in 1/N
    assert np.all((order > 1.7) & (order < 2.3))


def test_free_free_torsion_and_axial():
    # Analytic uniform shaft/rod, free-free: f_n = n/(2L) sqrt(GJ/(rho Ip)) and
    # f_n = n/(2L) sqrt(EA/(rho A)). The discrete chain of N equal lumps and N-1
    # equal springs has exactly omega_n = 2 sqrt(k/J) sin(n pi/(2N)) (standard
    # lattice result, modes cos(n pi (j + 1/2)/N)); both are checked.
    N = 200
    k, m = segment_chain(N, LENGTH, RHO_A, RHO_IP, **BEAM)
    lam, x = lowest_modes(k, m, 60)
    kind, _ = classify(k, m, lam, x)
    elastic = lam > 1e-6 * lam.max()
    d = LENGTH / N
    n = np.arange(1, 4)
    for dof, stiff, inertia in ((3, BEAM["GJ"], RHO_IP), (0, BEAM["EA"], RHO_A)):
        omega = np.sqrt(lam[elastic & (kind == dof)][:3])
        discrete = 2 * np.sqrt(stiff / d / (inertia * d)) * np.sin(n * np.pi / (2 * N))
        np.testing.assert_allclose(omega, discrete, rtol=1e-8)
        f = omega / (2 * np.pi)
        np.testing.assert_allclose(f, n / (2 * LENGTH) * np.sqrt(stiff / inertia), rtol=1e-4)


def test_cantilever_first_frequency():
    # Analytic Euler-Bernoulli cantilever: beta L = 1.8751 (root of
    # cos(bL) cosh(bL) = -1; Blevins table 8-1, from memory).
    assert np.cos(1.8751) * np.cosh(1.8751) == pytest.approx(-1.0, abs=1e-3)
    N = 160
    d = LENGTH / N
    xs = np.r_[0.0, (np.arange(N) + 0.5) * d]          # wall point, then centres
    mass = np.r_[1.0, np.full(N, RHO_A * d)]
    inertia = np.column_stack([np.r_[1.0, np.full(N, RHO_IP * d)],
                               mass * d ** 2 / 12, mass * d ** 2 / 12])
    k, m = chain_matrices(xs, mass, inertia, **BEAM)
    free = np.arange(6, 6 * (N + 1))
    k, m = k[free][:, free], m[free][:, free]
    lam, x = lowest_modes(k, m, 4)
    kind, _ = classify(k, m, lam, x)
    omega = np.sqrt(lam[kind == 2][0])
    exact = 1.8751 ** 2 * np.sqrt(BEAM["EIy"] / (RHO_A * LENGTH ** 4))
    assert omega == pytest.approx(exact, rel=1e-3)


def simply_supported_xz(N, L, E, G, kappa, rho, b, h, shear: bool):
    """x-z plane DOFs (w, ry) of an N-element nodal chain, pinned at both ends.

    Returns K, M and a mask of the kept DOFs that are deflections w.
    """
    area, second = b * h, b * h ** 3 / 12
    d = L / N
    xs = np.arange(N + 1) * d
    w = np.full(N + 1, d)
    w[[0, -1]] = d / 2
    mass = rho * area * w
    rotary = rho * second * w                          # Rayleigh rotary inertia
    inertia = np.column_stack([rotary, rotary, rotary])
    k, m = chain_matrices(xs, mass, inertia, EA=E * area, EIy=E * second, EIz=E * second,
                          GJ=G * second, shear=kappa * G * area if shear else None)
    keep = np.sort(np.r_[np.arange(N + 1) * 6 + 2, np.arange(N + 1) * 6 + 4])
    keep = keep[(keep != 2) & (keep != 6 * N + 2)]     # w = 0 at both supports
    return k[keep][:, keep], m[keep][:, keep], keep % 6 == 2


def test_timoshenko_lowers_frequencies_of_short_deep_beam():
    # Published trend (S. Timoshenko, Phil. Mag. 1921; Han, Benaroya & Wei, J. Sound
    # Vib. 225, 1999 -- from memory): shear deformation and rotary inertia lower
    # the bending frequencies of short deep beams below Euler-Bernoulli. Checked
    # against the analytic simply supported Timoshenko frequency equation
    #   rhoA rhoI w^4 - [rhoA (EI k^2 + kGA) + rhoI kGA k^2] w^2 + kGA EI k^4 = 0,
    # k = n pi/L (from the Timoshenko equations with w ~ sin kx, psi ~ cos kx),
    # and the Rayleigh beam w^2 = EI k^4/(rhoA + rhoI k^2).
    L, E, G, kappa, rho, b, h = 1.0, 210e9, 81e9, 5.0 / 6.0, 7850.0, 0.1, 0.2   # L/h = 5
    area, second = b * h, b * h ** 3 / 12
    kga, ei, ra, ri = kappa * G * area, E * second, rho * area, rho * second
    wave = np.arange(1, 4) * np.pi / L
    qa = ra * ri
    qb = ra * (ei * wave ** 2 + kga) + ri * kga * wave ** 2
    qc = kga * ei * wave ** 4
    timoshenko = np.sqrt((qb - np.sqrt(qb ** 2 - 4 * qa * qc)) / (2 * qa))
    rayleigh = np.sqrt(ei * wave ** 4 / (ra + ri * wave ** 2))
    euler = np.sqrt(ei * wave ** 4 / ra)
    assert np.all(timoshenko < rayleigh) and np.all(rayleigh < euler)
    assert timoshenko[0] / euler[0] < 0.95                 # a sizeable effect at L/h = 5

    N = 240
    results = {}
    for shear in (False, True):
        k, m, is_w = simply_supported_xz(N, L, E, G, kappa, rho, b, h, shear)
        lam, x = lowest_modes(k, m, 6)
        w_share = (x * (m @ x))[is_w].sum(axis=0)   # kinetic energy in w
        results[shear] = np.sqrt(lam[w_share > 0.5][:3])
    np.testing.assert_allclose(results[True], timoshenko, rtol=2e-4)
    np.testing.assert_allclose(results[False], rayleigh, rtol=2e-4)
    assert np.all(results[True] < results[False])
