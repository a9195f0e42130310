"""ISO 8608 road roughness against the standard's class table and analytic results."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, signal, special

from builder.analysis import road
from builder.errors import InputError

# ISO 8608:2016 class table, G_d(n0) in 1e-6 m^3 at n0 = 0.1 cycles/m, w = 2:
# lower bound, geometric mean, upper bound (from memory).
ISO_8608_TABLE = {
    "A": (None, 16, 32), "B": (32, 64, 128), "C": (128, 256, 512), "D": (512, 1024, 2048),
    "E": (2048, 4096, 8192), "F": (8192, 16384, 32768), "G": (32768, 65536, 131072),
    "H": (131072, 262144, None),
}


@pytest.mark.parametrize("letter", list(ISO_8608_TABLE))
def test_class_table(letter):
    # Source: ISO 8608:2016 table of road classes (from memory).
    lower, mean, upper = ISO_8608_TABLE[letter]
    assert road.class_value(letter) == pytest.approx(mean * 1e-6, rel=1e-12)
    assert road.spatial_psd([0.1], letter)[0] == pytest.approx(mean * 1e-6, rel=1e-12)
    lo, _, hi = road.CLASSES[letter]
    if lower is not None:
        assert lo == pytest.approx(lower * 1e-6)
        assert road.classify(lower * 1e-6 * 1.0001) == letter
    if upper is not None:
        assert hi == pytest.approx(upper * 1e-6)
        assert road.classify(upper * 1e-6 * 0.9999) == letter
    assert road.classify(mean * 1e-6) == letter


def test_psd_slope_and_lowercase_class():
    # Analytic: G_d(n) = G_d(n0) (n/n0)^-w; doubling n divides by 2^w.
    g = road.spatial_psd([0.2, 0.4], "c", waviness=2.5)
    assert g[0] == pytest.approx(256e-6 * 2**-2.5)
    assert g[1] / g[0] == pytest.approx(2**-2.5)


@pytest.mark.parametrize("w", [2.0, 1.5, 3.0])
def test_band_integral_against_closed_form(w):
    # Analytic: integral_(a)^(b) G0 (n/n0)^-w dn = G0 n0^w (b^(1-w) - a^(1-w)) / (1 - w).
    a, b, g0 = 0.05, 2.0, 256e-6
    closed = g0 * 0.1**w * (b ** (1 - w) - a ** (1 - w)) / (1 - w)
    numeric, _ = integrate.quad(lambda n: road.spatial_psd([n], "C", w)[0], a, b, limit=200)
    assert numeric == pytest.approx(closed, rel=1e-8)


def test_temporal_conversion_preserves_variance():
    # Analytic: with f = v n, integral G(f) df over [v a, v b] equals integral G_d(n) dn
    # over [a, b] (change of variable).
    a, b, v = 0.02, 3.0, 25.0
    spatial, _ = integrate.quad(lambda n: road.spatial_psd([n], "D")[0], a, b, limit=200)
    temporal, _ = integrate.quad(lambda f: road.temporal_psd([f], v, "D")[0], v * a, v * b,
                                 limit=200)
    assert temporal == pytest.approx(spatial, rel=1e-8)
    # and for w = 2 the velocity PSD (2 pi f)^2 G(f) is white: (2 pi n0)^2 G_d(n0) v
    f = np.array([0.5, 5.0, 50.0])
    velocity = (2 * np.pi * f) ** 2 * road.temporal_psd(f, v, "D")
    np.testing.assert_allclose(velocity, (2 * np.pi * 0.1) ** 2 * 1024e-6 * v, rtol=1e-12)


def test_class_from_rms_inverts_the_closed_form():
    # Analytic: RMS over [a, b] of a class-E mean road from the closed-form integral.
    a, b = 0.011, 2.83
    rms = math.sqrt(4096e-6 * 0.1**2 * (1 / a - 1 / b))
    assert road.class_from_rms(rms, a, b) == "E"
    assert road.class_from_rms(rms / 2, a, b) == "D"  # a quarter of the variance
    assert road.class_from_rms(rms / 3, a, b) == "C"  # a ninth: 455e-6 m^3


def test_realisation_variance_and_welch_psd():
    # Variance: Parseval over one period, exact for deterministic amplitudes
    # (analytic). PSD: scipy.signal.welch (independent library) against the
    # target in bands of 0.1 to 2 cycles/m. Statistical tolerance: with random
    # phases and fixed amplitudes the Welch estimate averaged over a band of
    # many bins scatters by a few percent; 15 % is generous (about 5 sigma).
    length, dx = 20000.0, 0.05
    x, z = road.road_profile(length, dx, "C", seed=8608)
    assert x.size == z.size == 400000
    assert x[1] - x[0] == pytest.approx(dx)
    count = x.size
    n = np.fft.rfftfreq(count, dx)[1:-1]
    expected = np.sum(road.spatial_psd(n, "C")) / (count * dx)
    assert np.var(z) == pytest.approx(expected, rel=1e-9)
    freq, estimate = signal.welch(z, fs=1 / dx, nperseg=8192)
    for lo, hi in [(0.1, 0.2), (0.2, 0.5), (0.5, 1.0), (1.0, 2.0)]:
        sel = (freq >= lo) & (freq < hi)
        ratio = np.mean(estimate[sel]) / np.mean(road.spatial_psd(freq[sel], "C"))
        assert ratio == pytest.approx(1.0, abs=0.15)


def test_realisation_band_and_seed():
    x, z1 = road.road_profile(1000.0, 0.1, "B", seed=1, band=(0.011, 2.83))
    _, z2 = road.road_profile(1000.0, 0.1, "B", seed=1, band=(0.011, 2.83))
    np.testing.assert_array_equal(z1, z2)
    spectrum = np.abs(np.fft.rfft(z1))
    n = np.fft.rfftfreq(x.size, 0.1)
    assert np.all(spectrum[(n > 2.9) | (n < 0.01)] < 1e-12 * spectrum.max())


def test_cross_spectrum_on_one_track_is_a_pure_delay():
    # Analytic: a point d behind the front point sees the same profile d / v later:
    # S_rear,front = S exp(-2 pi i f d / v), S_front,rear its conjugate.
    f = np.linspace(0.5, 30.0, 50)
    v, d = 20.0, 2.6
    positions = [[0.0, 0.76], [-d, 0.76]]
    s = road.road_cross_spectrum(f, v, positions, "B", tracks="independent")
    g = road.temporal_psd(f, v, "B")
    np.testing.assert_allclose(s[:, 0, 0], g, rtol=1e-12)
    np.testing.assert_allclose(s[:, 1, 1], g, rtol=1e-12)
    np.testing.assert_allclose(s[:, 1, 0], g * np.exp(-2j * np.pi * f * d / v), rtol=1e-12)
    np.testing.assert_allclose(s[:, 0, 1], np.conj(s[:, 1, 0]), rtol=1e-12)


def _coherence(s):
    return np.abs(s[:, 0, 1]) / np.sqrt(np.real(s[:, 0, 0] * s[:, 1, 1]))


def test_track_models_coherence():
    # Analytic: identical tracks are fully coherent, independent ones not at all.
    f = np.array([0.5, 2.0, 10.0])
    left_right = [[0.0, 0.76], [0.0, -0.76]]
    identical = road.road_cross_spectrum(f, 15.0, left_right, "C", tracks="identical")
    independent = road.road_cross_spectrum(f, 15.0, left_right, "C", tracks="independent")
    np.testing.assert_allclose(_coherence(identical), 1.0, rtol=1e-12)
    np.testing.assert_allclose(_coherence(independent), 0.0, atol=1e-15)
    coherent = road.road_cross_spectrum(f, 15.0, left_right, "C", tracks="coherent")
    c = _coherence(coherent)
    assert np.all(np.diff(c) < 0) and 0 < c[-1] < c[0] < 1


@pytest.mark.parametrize("w", [2.0, 2.5])
def test_isotropic_coherence_against_direct_integration(w):
    # Analytic (Dodds and Robson 1973 isotropic surface, from memory): the ratio of
    # integral S2(sqrt(n^2 + m^2)) cos(2 pi m b) dm to integral S2(...) dm with
    # S2(k) = k^-(w+1), integrated here numerically (scipy.integrate.quad, QAWF).
    b = 1.5

    def s2(m, n):
        return (n * n + m * m) ** (-(w + 1) / 2)

    for n in (0.02, 0.1, 0.4):
        auto, _ = integrate.quad(s2, 0, np.inf, args=(n,))
        cross, _ = integrate.quad(s2, 0, np.inf, args=(n,), weight="cos", wvar=2 * np.pi * b)
        assert road.isotropic_coherence([n], b, w)[0] == pytest.approx(cross / auto, rel=1e-6)
    # and for w = 2 the closed form z K1(z) (scipy.special)
    z = 2 * np.pi * 0.3 * b
    assert road.isotropic_coherence([0.3], b)[0] == pytest.approx(z * special.k1(z), rel=1e-12)


def test_coherent_tracks_use_lateral_distance_and_delay():
    # Analytic: cross term of front-left and rear-right is G gamma(f/v, b) exp(-i phase).
    f = np.array([1.0, 4.0])
    v, wheelbase, track = 10.0, 2.5, 1.5
    pos = [[0.0, 0.75], [0.0, -0.75], [-wheelbase, 0.75], [-wheelbase, -0.75]]
    s = road.road_cross_spectrum(f, v, pos, "A", tracks="coherent")
    g = road.temporal_psd(f, v, "A")
    gamma = (2 * np.pi * f / v * track) * special.k1(2 * np.pi * f / v * track)
    np.testing.assert_allclose(s[:, 3, 0], g * gamma * np.exp(-2j * np.pi * f * wheelbase / v),
                               rtol=1e-12)
    np.testing.assert_allclose(s[:, 2, 0], g * np.exp(-2j * np.pi * f * wheelbase / v),
                               rtol=1e-12)
    # Hermitian at every frequency
    np.testing.assert_allclose(s, np.conj(np.transpose(s, (0, 2, 1))), atol=1e-20)


def test_bad_input_is_one_line_input_error():
    with pytest.raises(InputError, match="--road: unknown road class 'Z'"):
        road.temporal_psd([1.0], 10.0, "Z")
    with pytest.raises(InputError, match="--speed: speed must be positive"):
        road.temporal_psd([1.0], -3.0, "A")
    with pytest.raises(InputError, match="--speed"):
        road.road_cross_spectrum([1.0], 0.0, [[0, 0]], "A")
    with pytest.raises(InputError, match="--tracks"):
        road.road_cross_spectrum([1.0], 5.0, [[0, 0]], "A", tracks="twisted")
    with pytest.raises(InputError, match="--waviness"):
        road.spatial_psd([1.0], "A", waviness=-1)
    with pytest.raises(InputError) as info:
        road.class_value("q")
    assert "\n" not in str(info.value)


def test_time_inputs_delay_and_variance():
    # Analytic: the rear point on one track sees the front history d / v later
    # (a whole number of samples here), and by Parseval the variance of the
    # periodic record is the sum of G(f_k) df over its harmonics.
    v, dt, duration = 20.0, 0.0005, 100.0
    t, r, rd = road.road_time_inputs(duration, dt, v, [[0.0, 0.0], [-2.4, 0.0]], "C",
                                     seed=5, band_hz=(0.5, 50.0))
    lag = int(round(2.4 / v / dt))
    np.testing.assert_allclose(r[:, 1], np.roll(r[:, 0], lag), atol=1e-12)
    f = np.fft.rfftfreq(t.size, dt)
    inside = (f >= 0.5) & (f <= 50.0)
    expected = np.sum(road.temporal_psd(f[inside], v, "C")) / duration
    assert np.var(r[:, 0]) == pytest.approx(expected, rel=1e-9)
    # Analytic: r_dot is the time derivative; check by central differences, whose
    # relative error at f is (2 pi f dt)^2 / 6; for the white road velocity of
    # waviness 2 up to 50 Hz the RMS error is sqrt(1/5) (2 pi 50 dt)^2 / 6 = 0.18 %.
    central = (np.roll(r[:, 0], -1) - np.roll(r[:, 0], 1)) / (2 * dt)
    assert np.std(central - rd[:, 0]) < 0.005 * np.std(rd[:, 0])


def test_time_inputs_track_coherence_against_welch():
    # Independent library: scipy.signal.csd and welch estimate the normalised
    # cross-spectrum of the left and right histories; it must follow the
    # isotropic coherence (coherent), 1 (identical) and 0 (independent).
    # Statistical tolerance: band averages of a Welch estimate over about 190
    # segments scatter by about 0.01 (observed over seeds); 0.04 allowed.
    v, dt, duration, b = 15.0, 0.01, 2000.0, 1.5
    pos = [[0.0, b / 2], [0.0, -b / 2]]
    for tracks, expected in (("identical", lambda n: 1.0 + 0 * n), ("independent", lambda n: 0 * n),
                             ("coherent", lambda n: road.isotropic_coherence(n, b))):
        _, r, _ = road.road_time_inputs(duration, dt, v, pos, "D", seed=11, tracks=tracks,
                                        band_hz=(0.2, 40.0))
        f, sxy = signal.csd(r[:, 0], r[:, 1], fs=1 / dt, nperseg=2048)
        _, sxx = signal.welch(r[:, 0], fs=1 / dt, nperseg=2048)
        _, syy = signal.welch(r[:, 1], fs=1 / dt, nperseg=2048)
        for lo, hi in [(0.5, 1.0), (1.0, 2.0), (2.0, 4.0), (4.0, 8.0)]:
            sel = (f >= lo) & (f < hi)
            ratio = np.mean(sxy[sel].real) / np.sqrt(np.mean(sxx[sel]) * np.mean(syy[sel]))
            weight = road.temporal_psd(f[sel], v, "D")        # the ratio of band sums
            target = np.sum(weight * expected(f[sel] / v)) / np.sum(weight)
            assert ratio == pytest.approx(target, abs=0.04), (tracks, lo)
