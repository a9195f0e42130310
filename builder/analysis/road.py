"""Road roughness of ISO 8608:2016 as a base excitation: PSDs, cross-spectra, profiles.

A road class fixes the displacement PSD of the profile along one track,

    G_d(n) = G_d(n0) (n / n0)^(-w),   n0 = 0.1 cycles/m,

in m^3 (m^2 per cycle/m), with the waviness ``w = 2`` of the standard's
classification or a user value. :data:`CLASSES` holds the class table:
the geometric mean ``G_d(n0)`` of each class and its lower and upper bounds
(a factor 4 between classes). The standard classifies over
0.011 <= n <= 2.83 cycles/m; the functions here evaluate the power law at
any positive ``n`` and give zero at ``n = 0`` (the profile's mean carries no
roughness).

A vehicle at speed ``v`` (m/s) turns the spatial PSD into a temporal one,
``G(f) = G_d(f / v) / v`` (m^2/Hz), so that both integrate to the same
variance. A road point at longitudinal position ``x`` meets the profile with
the delay ``(x_front - x) / v`` behind the front-most point.

Left and right tracks (points with ``y > 0`` and ``y < 0``; ``y = 0`` a centre
track; a track lies at the mean ``y`` of its points) are related in one of
three ways:

- ``identical``: one profile under every point (pure delay between points);
- ``independent``: uncorrelated tracks with the same PSD;
- ``coherent``: the isotropic-surface model (Dodds and Robson, "The
  description of road surface roughness", J. Sound Vib. 31, 1973; from
  memory). A surface whose two-dimensional roughness depends only on the
  modulus of the wavenumber gives, between parallel tracks ``b`` metres
  apart, the real coherence function (ratio of cross to auto spectrum)

      gamma(n) = 2 / Gamma(w/2) (z/2)^(w/2) K_(w/2)(z),   z = 2 pi n b,

  with ``K`` the modified Bessel function of the second kind; for ``w = 2``
  this is ``z K_1(z)``. It is 1 for long wavelengths and falls to zero for
  wavelengths much shorter than the track width. It follows from the
  isotropic spectrum ``S(kx, ky) ~ |k|^-(w+1)`` by integrating across the
  track (see :func:`isotropic_coherence`).

:func:`road_profile` draws one track's profile along x and
:func:`road_time_inputs` the displacement and velocity histories under every
road point at speed ``v`` (for time-domain solvers), both by inverse FFT
with random phases.

The cross-spectral matrix follows the convention ``S_jk(f) = E[R_j R_k^*]``
for the Fourier amplitudes ``R`` of the point displacements, so a linear
response ``Y = H R`` has ``S_y = H S_r H^H``. One-sided throughout.

>>> round(float(spatial_psd(0.1, "C")), 9)
0.000256
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import InputError, Where

__all__ = [
    "N0", "CLASSES", "TRACK_MODELS", "class_value", "classify", "spatial_psd",
    "temporal_psd", "isotropic_coherence", "track_of", "road_cross_spectrum", "road_time_inputs",
    "road_profile", "class_from_rms", "check_speed",
]

#: Reference spatial frequency of ISO 8608, cycles/m.
N0 = 0.1

#: ISO 8608 road classes: (lower bound, geometric mean, upper bound) of G_d(n0)
#: in m^3 (the standard's table in 1e-6 m^3; from memory). Class A has no lower
#: bound and class H no upper bound.
CLASSES: dict[str, tuple[float, float, float]] = {
    letter: (0.0 if i == 0 else 32e-6 * 4 ** (i - 1), 16e-6 * 4**i,
             math.inf if i == 7 else 32e-6 * 4**i)
    for i, letter in enumerate("ABCDEFGH")
}

TRACK_MODELS = ("identical", "independent", "coherent")


def _road_error(message: str) -> InputError:
    return InputError(message, Where(field="--road"))


def class_value(road_class: str) -> float:
    """Geometric-mean ``G_d(n0)`` (m^3) of an ISO 8608 class letter (``"A"``..``"H"``)."""
    key = str(road_class).strip().upper()
    if key not in CLASSES:
        raise _road_error(f"unknown road class {road_class!r}: choose one of A, B, C, D, E, F, "
                          "G, H (ISO 8608)")
    return CLASSES[key][1]


def classify(gd_n0: float) -> str:
    """The ISO 8608 class letter whose bounds hold ``G_d(n0)`` (m^3)."""
    value = float(gd_n0)
    if not math.isfinite(value) or value <= 0:
        raise _road_error(f"G_d(n0) must be a positive number of m^3, not {gd_n0!r}")
    for letter, (lower, _, upper) in CLASSES.items():
        if lower <= value < upper:
            return letter
    return "H"  # pragma: no cover - the bounds cover (0, inf)


def _check_waviness(waviness: float) -> float:
    w = float(waviness)
    if not math.isfinite(w) or w <= 0:
        raise InputError(f"waviness must be a positive number, not {waviness!r}",
                         Where(field="--waviness"))
    return w


def check_speed(speed_m_s: float) -> float:
    """The speed as a float, or an InputError naming ``--speed`` unless it is positive."""
    v = float(speed_m_s)
    if not math.isfinite(v) or v <= 0:
        raise InputError(f"speed must be positive, not {speed_m_s!r} m/s",
                         Where(field="--speed"))
    return v


def _power_law(n: NDArray, gd_n0: float, w: float) -> NDArray:
    out = np.zeros_like(n, dtype=float)
    positive = n > 0
    out[positive] = gd_n0 * (n[positive] / N0) ** (-w)
    return out


def spatial_psd(n: ArrayLike, road_class: str | float, waviness: float = 2.0) -> NDArray:
    """One-sided displacement PSD ``G_d(n)`` in m^3 at spatial frequencies ``n`` (cycles/m).

    ``road_class`` is a class letter or a value of ``G_d(n0)`` in m^3. Zero at n <= 0.
    """
    gd = class_value(road_class) if isinstance(road_class, str) else float(road_class)
    return _power_law(np.asarray(n, dtype=float), gd, _check_waviness(waviness))


def temporal_psd(f_hz: ArrayLike, speed_m_s: float, road_class: str | float,
                 waviness: float = 2.0) -> NDArray:
    """One-sided displacement PSD ``G(f) = G_d(f / v) / v`` in m^2/Hz under a point at speed v."""
    v = check_speed(speed_m_s)
    return spatial_psd(np.asarray(f_hz, dtype=float) / v, road_class, waviness) / v


def isotropic_coherence(n: ArrayLike, track_width_m: float, waviness: float = 2.0) -> NDArray:
    """Real coherence of two parallel tracks ``b`` m apart on an isotropic road surface.

    ``gamma = 2 / Gamma(w/2) (z/2)^(w/2) K_(w/2)(z)``, ``z = 2 pi n b``,
    ``n`` in cycles/m. Derivation: with the isotropic spectrum
    ``S2(kappa) = A kappa^-(w+1)``, the track PSD is the integral over the
    lateral wavenumber ``m`` of ``S2(sqrt(n^2 + m^2))`` and the cross-spectrum
    the same integral weighted by ``cos(2 pi m b)``; both are standard
    integrals, and their ratio is the expression above (1 at ``z = 0``).
    """
    from scipy import special

    w = _check_waviness(waviness)
    nu = w / 2.0
    z = 2 * math.pi * np.abs(np.asarray(n, dtype=float)) * abs(float(track_width_m))
    out = np.ones_like(z)
    positive = z > 0
    zp = z[positive]
    out[positive] = 2.0 / special.gamma(nu) * (zp / 2.0) ** nu * special.kv(nu, zp)
    return np.nan_to_num(out, nan=0.0)


def track_of(y: float) -> int:
    """Track of a point by the sign of its lateral position: +1 left, -1 right, 0 centre."""
    return int(np.sign(y))


def _positions(positions: ArrayLike) -> NDArray:
    p = np.asarray(positions, dtype=float)
    if p.ndim != 2 or p.shape[1] < 2 or p.shape[0] < 1:
        raise InputError("road point positions must be an array of rows (x, y)",
                         Where(field="road"))
    return p[:, :2]


def _tracks(p: NDArray) -> tuple[NDArray, NDArray]:
    """Track index of every point (by sign of y) and each track's lateral position (mean y)."""
    side = np.sign(p[:, 1])
    labels, index = np.unique(side, return_inverse=True)
    lateral = np.array([p[index == i, 1].mean() for i in range(labels.size)])
    return index, lateral


def _track_coherence(n: NDArray, lateral: NDArray, tracks: str, waviness: float) -> NDArray:
    """Coherence (nf, nt, nt) between tracks at spatial frequencies ``n`` (cycles/m)."""
    nt = lateral.size
    out = np.ones((n.size, nt, nt))
    for a in range(nt):
        for b in range(nt):
            if a == b:
                continue
            if tracks == "independent":
                out[:, a, b] = 0.0
            elif tracks == "coherent":
                out[:, a, b] = isotropic_coherence(n, lateral[a] - lateral[b], waviness)
    return out


def _check_tracks(tracks: str) -> None:
    if tracks not in TRACK_MODELS:
        raise InputError(f"unknown track model {tracks!r}: choose identical, independent or "
                         "coherent", Where(field="--tracks"))


def road_cross_spectrum(frequency_hz: ArrayLike, speed_m_s: float, positions: ArrayLike,
                        road_class: str | float, tracks: str = "coherent",
                        waviness: float = 2.0) -> NDArray[np.complex128]:
    """Cross-spectral matrix of the road displacements under ``np`` points, (nf, np, np).

    ``positions`` holds one row ``(x, y)`` (m) per road point (extra columns
    ignored). Points are grouped into tracks by the sign of ``y`` (left,
    right, centre); a track's lateral position is the mean ``y`` of its
    points. Each point receives its track's profile delayed by
    ``(x_front - x) / v``; ``S_jk(f) = G(f) c_jk(f) exp(-2 pi i f (tau_j - tau_k))``
    with ``c_jk = 1`` on one track and, across tracks, 1 (``identical``), 0
    (``independent``) or the isotropic coherence at the tracks' lateral
    distance and ``n = f / v`` (``coherent``). Units m^2/Hz.
    """
    v = check_speed(speed_m_s)
    _check_tracks(tracks)
    f = np.asarray(frequency_hz, dtype=float).reshape(-1)
    p = _positions(positions)
    g = temporal_psd(f, v, road_class, waviness)
    delay = (p[:, 0].max() - p[:, 0]) / v
    phase = np.exp(-2j * np.pi * f[:, None] * delay[None, :])          # (nf, np)
    index, lateral = _tracks(p)
    coherence = _track_coherence(f / v, lateral, tracks, waviness)[:, index][:, :, index]
    return g[:, None, None] * coherence * phase[:, :, None] * np.conj(phase[:, None, :])


def road_time_inputs(duration_s: float, dt_s: float, speed_m_s: float, positions: ArrayLike,
                     road_class: str | float, seed: int | None = None,
                     tracks: str = "identical", waviness: float = 2.0,
                     band_hz: Sequence[float] | None = None
                     ) -> tuple[NDArray, NDArray, NDArray]:
    """Random road displacement and velocity under every point, ``(t, r, r_dot)``.

    ``N = round(duration / dt)`` samples; ``r`` and ``r_dot`` are (N, np) in
    m and m/s. The record is one period of a sum of harmonics at
    ``f_k = k / (N dt)`` with the deterministic amplitudes
    ``sqrt(2 G(f_k) df)`` of the temporal PSD and random phases (``seed``),
    built by inverse FFT; each point's delay is an exact phase shift, so the
    rear wheels see the front profile ``(x_front - x) / v`` later (wrapped
    around the period). Tracks: ``identical`` one profile, ``independent``
    one per track, ``coherent`` correlated harmonic by harmonic through the
    symmetric square root of the isotropic coherence matrix, so the
    realisation's cross-spectrum is that of :func:`road_cross_spectrum`.
    ``band_hz = (fmin, fmax)`` keeps only harmonics inside it.
    """
    v = check_speed(speed_m_s)
    _check_tracks(tracks)
    duration, dt = float(duration_s), float(dt_s)
    if not (math.isfinite(duration) and math.isfinite(dt)) or dt <= 0 or duration < 4 * dt:
        raise InputError(f"duration {duration_s!r} s must hold at least four steps of "
                         f"{dt_s!r} s", Where(field="--duration"))
    count = int(round(duration / dt))
    p = _positions(positions)
    f = np.fft.rfftfreq(count, dt)
    g = temporal_psd(f, v, road_class, waviness)
    g[0] = 0.0
    if count % 2 == 0:
        g[-1] = 0.0
    if band_hz is not None:
        fmin, fmax = (float(b) for b in band_hz)
        g[(f < fmin) | (f > fmax)] = 0.0
    amplitude = 0.5 * count * np.sqrt(2.0 * g / (count * dt))
    index, lateral = _tracks(p)
    rng = np.random.default_rng(seed)
    if tracks == "identical":
        unit = np.exp(1j * rng.uniform(0, 2 * np.pi, (f.size, 1))) * np.ones((1, lateral.size))
    else:
        base = np.exp(1j * rng.uniform(0, 2 * np.pi, (f.size, lateral.size)))
        c = _track_coherence(f / v, lateral, tracks, waviness)
        w, vec = np.linalg.eigh(c)
        root = vec * np.sqrt(np.clip(w, 0.0, None))[:, None, :] @ np.swapaxes(vec, 1, 2)
        unit = np.einsum("fab,fb->fa", root, base)
    delay = (p[:, 0].max() - p[:, 0]) / v
    spectrum = amplitude[:, None] * unit[:, index] * np.exp(-2j * np.pi * f[:, None] * delay)
    r = np.fft.irfft(spectrum, count, axis=0)
    r_dot = np.fft.irfft(2j * np.pi * f[:, None] * spectrum, count, axis=0)
    return np.arange(count) * dt, r, r_dot


def road_profile(length_m: float, dx_m: float, road_class: str | float, seed: int | None = None,
                 waviness: float = 2.0,
                 band: Sequence[float] | None = None) -> tuple[NDArray, NDArray]:
    """A random profile realisation ``(x, z)`` in m, by inverse FFT from the PSD.

    ``N = round(length / dx)`` samples at spacing ``dx``; harmonics at
    ``n_k = k / (N dx)`` with the deterministic amplitudes
    ``sqrt(2 G_d(n_k) dn)`` and independent uniform random phases (seeded by
    ``seed``), so the sample variance equals ``sum G_d(n_k) dn`` exactly. The
    zero and Nyquist harmonics are left out. ``band = (n_min, n_max)``
    (cycles/m) keeps only harmonics inside it (ISO 8608: 0.011 to 2.83). The
    profile is periodic over ``N dx``.
    """
    length, dx = float(length_m), float(dx_m)
    if not (math.isfinite(length) and math.isfinite(dx)) or dx <= 0 or length < 4 * dx:
        raise InputError(f"profile length {length_m!r} m must hold at least four steps of "
                         f"{dx_m!r} m", Where(field="--length"))
    count = int(round(length / dx))
    n = np.fft.rfftfreq(count, dx)
    dn = 1.0 / (count * dx)
    g = spatial_psd(n, road_class, waviness)
    g[0] = 0.0
    if count % 2 == 0:
        g[-1] = 0.0
    if band is not None:
        n_min, n_max = (float(b) for b in band)
        g[(n < n_min) | (n > n_max)] = 0.0
    rng = np.random.default_rng(seed)
    phases = rng.uniform(0.0, 2 * np.pi, n.size)
    amplitude = np.sqrt(2.0 * g * dn)
    z = np.fft.irfft(0.5 * count * amplitude * np.exp(1j * phases), count)
    return np.arange(count) * dx, z


def class_from_rms(rms_m: float, n_min: float, n_max: float, waviness: float = 2.0) -> str:
    """The ISO 8608 class of a profile with RMS ``rms_m`` (m) between n_min and n_max (cycles/m).

    Inverts the power law: ``rms^2 = G_d(n0) integral_(n_min)^(n_max) (n/n0)^-w dn``.
    """
    w = _check_waviness(waviness)
    if not 0 < n_min < n_max:
        raise InputError("spatial band needs 0 < n_min < n_max", Where(field="--band"))
    if abs(w - 1.0) < 1e-12:
        integral = N0 * math.log(n_max / n_min)
    else:
        integral = N0**w * (n_max ** (1 - w) - n_min ** (1 - w)) / (1 - w)
    return classify(float(rms_m) ** 2 / integral)
