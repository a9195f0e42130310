"""Frequency sensitivities and Monte Carlo scatter, checked against outside results."""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.integrate
import scipy.linalg
import scipy.stats
import sympy

from builder.analysis.sampling import build_design, parse_scatter
from builder.analysis.sensitivity import eigenvalue_derivatives, frequency_sensitivities
from builder.analysis.sweep import (
    AffineFamily,
    ModesProblem,
    affine_family,
    batched_guyan,
    family_sensitivities,
    run_sweep,
)


def _random_spd(rng: np.random.Generator, n: int, scale: float) -> np.ndarray:
    a = rng.normal(size=(n, n))
    return scale * (a @ a.T + n * np.eye(n))


def test_eigenvalue_derivatives_match_central_differences():
    # Source: central finite differences of scipy.linalg.eigh eigenvalues
    # (an independent computation), for K and M that depend non-linearly on p.
    rng = np.random.default_rng(3)
    n = 6
    K0, K1, K2 = (_random_spd(rng, n, s) for s in (1e4, 2e3, 5e2))
    M0, M1 = _random_spd(rng, n, 10.0), _random_spd(rng, n, 1.0)

    def K(p):
        return K0 + p * K1 + p**2 * K2

    def M(p):
        return M0 + p * M1

    p, h = 0.7, 1e-5
    lam, _phi, dlam = eigenvalue_derivatives(K(p), M(p), [K1 + 2 * p * K2], [M1])
    fd = (scipy.linalg.eigh(K(p + h), M(p + h), eigvals_only=True)
          - scipy.linalg.eigh(K(p - h), M(p - h), eigvals_only=True)) / (2 * h)
    assert np.allclose(lam, scipy.linalg.eigh(K(p), M(p), eigvals_only=True))
    np.testing.assert_allclose(dlam[0], fd, rtol=1e-6)


def test_quarter_car_frequency_derivatives_match_closed_form():
    # Source: analytic. The 2-DOF quarter car (sprung mass ms on ks over
    # unsprung mu on tyre kt) has det(K - lambda M) = 0, i.e.
    # ms mu lambda^2 - (ks mu + (ks + kt) ms) lambda + ks kt = 0, whose roots
    # give f = sqrt(lambda)/(2 pi); differentiated symbolically by sympy.
    ms, mu, ks, kt, lam = sympy.symbols("ms mu ks kt lam", positive=True)
    roots = sympy.solve(ms * mu * lam**2 - (ks * mu + (ks + kt) * ms) * lam + ks * kt, lam)
    freqs = sorted(roots, key=lambda r: float(r.subs({ms: 300, mu: 40, ks: 20e3, kt: 200e3})))
    values = {ms: 300.0, mu: 40.0, ks: 20e3, kt: 200e3}
    syms = (ks, kt, ms, mu)
    want = np.array([[float(sympy.diff(sympy.sqrt(r) / (2 * sympy.pi), s).subs(values))
                      for r in freqs] for s in syms])
    want_f = np.array([float((sympy.sqrt(r) / (2 * sympy.pi)).subs(values)) for r in freqs])

    K = np.array([[20e3, -20e3], [-20e3, 220e3]])
    M = np.diag([300.0, 40.0])
    dK = [np.array([[1.0, -1.0], [-1.0, 1.0]]), np.array([[0.0, 0.0], [0.0, 1.0]]), None, None]
    dM = [None, None, np.diag([1.0, 0.0]), np.diag([0.0, 1.0])]
    sens = frequency_sensitivities(K, M, dK, dM, ("ks", "kt", "ms", "mu"),
                                   [20e3, 200e3, 300.0, 40.0])
    np.testing.assert_allclose(sens.frequencies_hz, want_f, rtol=1e-12)
    np.testing.assert_allclose(sens.derivatives, want, rtol=1e-9)
    # the bounce mode is ranked first by the suspension rate and the sprung
    # mass; the wheel-hop mode by the tyre and the unsprung mass
    assert {r[0] for r in sens.ranked(1)[:2]} == {"ks", "ms"}
    assert {r[0] for r in sens.ranked(2)[:2]} == {"kt", "mu"}
    assert "mode 1" in sens.table(top=2)


def test_one_dof_relative_sensitivities_are_one_half():
    # Source: analytic. f = sqrt(k/m)/(2 pi) gives (k/f) df/dk = 1/2 and
    # (m/f) df/dm = -1/2 exactly.
    sens = frequency_sensitivities([[5e4]], [[120.0]], [[[1.0]], None], [None, [[1.0]]],
                                   ("k", "m"), [5e4, 120.0])
    np.testing.assert_allclose(sens.relative()[:, 0], [0.5, -0.5], rtol=1e-12)


def _quarter_car(p: dict) -> tuple[np.ndarray, np.ndarray]:
    ks, kt = p["ks"], p["kt"]
    return (np.array([[ks, -ks], [-ks, ks + kt]]), np.diag([p["ms"], 40.0]))


def test_affine_probe_and_family_sensitivities():
    # Source: analytic derivative of the closed-form quarter-car frequencies
    # (as above, evaluated here with numpy), through the probed affine family.
    fam = affine_family(_quarter_car, ("ks", "kt", "ms"), (20e3, 200e3, 300.0),
                        (5e3, 20e3, 50.0))
    assert isinstance(fam, AffineFamily) and fam.dM is not None

    def closed(ks, kt, ms, mu=40.0):
        a, b, c = ms * mu, -(ks * mu + (ks + kt) * ms), ks * kt
        disc = math.sqrt(b * b - 4 * a * c)
        return np.sqrt(np.array([(-b - disc) / (2 * a), (-b + disc) / (2 * a)])) / (2 * math.pi)

    p0 = np.array([20e3, 200e3, 300.0])
    want = []
    for i in range(3):
        h = np.zeros(3)
        h[i] = 1e-5 * p0[i]
        want.append((closed(*(p0 + h)) - closed(*(p0 - h))) / (2 * h[i]))
    np.testing.assert_allclose(family_sensitivities(fam).derivatives, want, rtol=1e-6)


def test_affine_probe_refuses_non_linear_parameters():
    # Source: analytic. A rate that goes as the square of a lever ratio is not
    # affine in that ratio; the probe must notice and refuse the fast path.
    def build(p):
        k = 2e4 * p["ratio"] ** 2
        return np.array([[k]]), np.array([[300.0]])
    assert affine_family(build, ("ratio",), (0.7,), (0.2,)) is None


def test_batched_guyan_gives_the_series_rate():
    # Source: analytic. Condensing the wheel of a quarter car onto the body
    # leaves ks and kt in series: ks kt / (ks + kt) (static condensation).
    K = np.array([[[20e3, -20e3], [-20e3, 220e3]]])
    M = np.diag([300.0, 40.0])
    Kr, Mr = batched_guyan(K, M, np.eye(2), np.array([0]))
    assert Kr[0, 0, 0] == pytest.approx(20e3 * 200e3 / 220e3, rel=1e-12)
    # Guyan mass: ms + mu (kst/kt... ) = ms + mu * (ks/(ks+kt))^2 (static shape)
    assert Mr[0, 0, 0] == pytest.approx(300.0 + 40.0 * (20e3 / 220e3) ** 2, rel=1e-12)


def test_monte_carlo_frequency_scatter_matches_delta_method_and_exact_moments():
    # Source: analytic. f = sqrt(k/m)/(2 pi) with k ~ Normal(mu_k, sd_k).
    # Exact moments by numerical integration of f(k) times the normal density
    # (scipy.integrate.quad); exact distribution P(F <= x) = Phi((m (2 pi x)^2
    # - mu_k) / sd_k) for the Kolmogorov-Smirnov test; first-order (delta
    # method) prediction sd_f = |df/dk| sd_k with df/dk from the sensitivities.
    m, mu_k, sd_k, n = 250.0, 40e3, 2e3, 20000
    fam = AffineFamily(("k",), np.array([mu_k]), np.array([[mu_k]]), np.array([[[1.0]]]),
                       np.array([[m]]))
    design = build_design(scatter=[parse_scatter("k=normal:40kN/m,5%")], samples=n, seed=11)
    res = run_sweep(ModesProblem(fam), design)
    f = res.column("mode1_hz")

    def freq(k):
        return math.sqrt(max(k, 0.0) / m) / (2 * math.pi)

    pdf = scipy.stats.norm(mu_k, sd_k).pdf
    lo, hi = mu_k - 12 * sd_k, mu_k + 12 * sd_k
    mean = scipy.integrate.quad(lambda k: freq(k) * pdf(k), lo, hi, epsabs=0, epsrel=1e-12)[0]
    second = scipy.integrate.quad(lambda k: freq(k) ** 2 * pdf(k), lo, hi, epsabs=0,
                                  epsrel=1e-12)[0]
    sd = math.sqrt(second - mean**2)
    assert second == pytest.approx(mu_k / m / (4 * math.pi**2), rel=1e-9)  # E[k]/m/(2pi)^2
    assert abs(f.mean() - mean) < 4 * sd / math.sqrt(n)
    assert abs(f.std(ddof=1) - sd) < 4 * sd / math.sqrt(2 * n)
    sens = family_sensitivities(fam)
    sd_delta = abs(sens.derivatives[0, 0]) * sd_k
    assert sd_delta == pytest.approx(sd, rel=0.01)             # O(cv^2) error at cv = 5%
    assert sens.frequencies_hz[0] == pytest.approx(mean, rel=1e-3)
    cdf = scipy.stats.norm(mu_k, sd_k).cdf
    assert scipy.stats.kstest(f, lambda x: cdf(m * (2 * np.pi * x) ** 2)).pvalue > 1e-3
