"""The displacement PSD of a measured road profile and its ISO 8608 class.

The PSD of each track is estimated by Welch's method
(:func:`scipy.signal.welch`: Hann-windowed segments, half overlapping, each
with its straight-line trend removed, so the road's grade does not count as
roughness), one-sided, in m^3 (m^2 per cycle/m) over the spatial frequency
``n`` in cycles/m. Segments are about 400 m long (2^k samples; a quarter of
the profile at most), so that four cycles of the ISO 8608 band's lower end,
0.011 cycles/m, fit in one, and a 10 km profile averages some 50 segments.

The class follows ISO 8608's way: the PSD is averaged in one-third-octave
bands of ``n`` over the classification band 0.011 to 2.83 cycles/m (as far
as the profile's length and spacing resolve it: from four cycles a segment,
clear of the window's leakage, to a quarter of the sampling rate), and the
power law
``G_d(n) = G_d(n0) (n / n0)^(-w)``, ``n0 = 0.1`` cycles/m, is fitted to the
band averages on log axes, every band weighted alike: once with ``w = 2``
(the standard's classification, giving ``G_d(n0)`` and the class letter of
:data:`builder.analysis.road.CLASSES`) and once with ``w`` free (the
profile's own waviness). Two tracks get a fit each and the profile that of
their mean PSD.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import InputError, Where
from . import road

__all__ = ["ISO_BAND", "SEGMENT_M", "TrackFit", "ProfileSpectrum", "profile_spectrum",
           "fit_power_law"]

#: The ISO 8608 classification band (cycles/m).
ISO_BAND = (0.011, 2.83)
#: Target Welch segment length (m).
SEGMENT_M = 400.0


@dataclass(frozen=True)
class TrackFit:
    """The power-law fits of one PSD: ``gd_n0`` (m^3, w = 2) and its class, and the
    free fit ``gd_n0_free`` (m^3) with ``waviness``; ``bands`` the fitted band count."""

    gd_n0: float
    road_class: str
    gd_n0_free: float
    waviness: float
    bands: int

    def to_dict(self) -> dict[str, Any]:
        return {"gd_n0_m3": self.gd_n0, "class": self.road_class,
                "gd_n0_free_m3": self.gd_n0_free, "waviness": self.waviness,
                "bands": self.bands}


def fit_power_law(n: NDArray, psd: NDArray, band: tuple[float, float]) -> TrackFit:
    """Fit ``G_d(n0) (n/n0)^-w`` to a PSD (m^3) at ``n`` (cycles/m) over ``band``,
    one-third-octave band averages on log axes (see the module notes)."""
    k0 = math.ceil(10 * math.log10(band[0]) - 1e-9)
    k1 = math.floor(10 * math.log10(band[1]) + 1e-9)
    centres, means = [], []
    for k in range(k0, k1 + 1):
        fc = 10 ** (k / 10)
        inside = (n >= fc * 10 ** -0.05) & (n < fc * 10 ** 0.05) & (psd > 0)
        if inside.sum() >= 1:
            # the frequency whose n^-2 is the band's mean of n^-2: exact for w = 2 however
            # few the bins in the band
            centres.append(float(np.mean(n[inside] ** -2.0) ** -0.5))
            means.append(float(np.mean(psd[inside])))
    if len(centres) < 2:
        raise InputError("the profile is too short or too coarse to resolve two bands of the "
                         "ISO 8608 range (0.011 to 2.83 cycles/m)", Where(field="--profile"))
    x = np.log(np.asarray(centres) / road.N0)
    y = np.log(np.asarray(means))
    g2 = float(np.exp(np.mean(y + 2.0 * x)))
    slope, intercept = np.polyfit(x, y, 1)
    return TrackFit(g2, road.classify(g2), float(np.exp(intercept)), float(-slope),
                    len(centres))


@dataclass(frozen=True, eq=False)
class ProfileSpectrum:
    """Welch PSDs (m^3) of a profile's tracks at ``n`` (cycles/m) and their ISO 8608 fits."""

    source: str
    step_m: float
    length_m: float
    n: NDArray
    psd: dict[str, NDArray]
    fits: dict[str, TrackFit]
    fit: TrackFit
    band: tuple[float, float]
    segment_m: float
    segments: int

    @property
    def road_class(self) -> str:
        return self.fit.road_class

    def to_dict(self, psd: bool = False) -> dict[str, Any]:
        out: dict[str, Any] = {
            "file": self.source, "step_m": self.step_m, "length_m": self.length_m,
            "class": self.fit.road_class, "gd_n0_m3": self.fit.gd_n0,
            "waviness": self.fit.waviness, "gd_n0_free_m3": self.fit.gd_n0_free,
            "fit_band_cycles_per_m": list(self.band), "segment_m": self.segment_m,
            "segments": self.segments,
            "tracks": {name: f.to_dict() for name, f in self.fits.items()}}
        if psd:
            out["n_cycles_per_m"] = self.n.tolist()
            out["psd_m3"] = {k: v.tolist() for k, v in self.psd.items()}
        return out

    def describe(self) -> str:
        """One line: the class, G_d(n0) and the waviness."""
        tracks = "" if len(self.fits) == 1 else " (" + ", ".join(
            f"{k} {f.road_class}" for k, f in self.fits.items()) + ")"
        return (f"measured profile {self.source}: {self.length_m:.6g} m at {self.step_m:.4g} m, "
                f"ISO 8608 class {self.fit.road_class}{tracks}, G_d(n0) "
                f"{self.fit.gd_n0 * 1e6:.4g}e-6 m^3 (w = 2 fit), own waviness "
                f"{self.fit.waviness:.3g} (Welch, {self.segments} segments of "
                f"{self.segment_m:.4g} m)")

    def plot(self, path: str | None = None) -> Any:
        """The track PSDs on log axes with the ISO 8608 class boundaries and the fits."""
        from .. import plots

        fig, axes = plots.figure(1, height=4.2)
        ax = axes[0]
        n = self.n[self.n > 0]
        for name, g in self.psd.items():
            ax.loglog(n, g[self.n > 0], linewidth=0.9, label=f"{name} (Welch)")
        line = np.geomspace(self.band[0], self.band[1], 50)
        for letter, (low, _, _) in road.CLASSES.items():
            if low > 0:
                ax.loglog(line, low * (line / road.N0) ** -2, color="0.6", linewidth=0.7,
                          linestyle="--")
                ax.text(line[-1], low * (line[-1] / road.N0) ** -2, f" {letter}/"
                        f"{chr(ord(letter) - 1)}", fontsize=7, color="0.4", va="center")
        ax.loglog(line, self.fit.gd_n0 * (line / road.N0) ** -2, color="k", linewidth=1.4,
                  label=f"fit w = 2: class {self.fit.road_class}")
        ax.loglog(line, self.fit.gd_n0_free * (line / road.N0) ** -self.fit.waviness,
                  color="tab:red", linewidth=1.0, label=f"fit w = {self.fit.waviness:.2f}")
        ax.axvspan(*self.band, color="0.95", zorder=0)
        plots.style(ax, xlabel="spatial frequency n (cycles/m)",
                    ylabel="displacement PSD G_d (m^3)")
        plots.finish(fig, f"{self.source}: ISO 8608 class {self.fit.road_class}")
        if path is not None:
            plots.save_png(fig, path)
        return fig


def _nperseg(samples: int, step: float) -> int:
    target = SEGMENT_M / step
    size = 2 ** max(4, int(round(math.log2(max(target, 16)))))
    while size > max(16, samples // 4):
        size //= 2
    return size


def profile_spectrum(profile: Any, band: tuple[float, float] = ISO_BAND) -> ProfileSpectrum:
    """Welch PSDs of a :class:`builder.profiles.RoadProfile` and its ISO 8608 class."""
    from scipy import signal

    step = float(profile.step_m)
    size = _nperseg(profile.samples, step)
    tracks = {"left": profile.left, "right": profile.right} if profile.two_tracks else \
        {"elevation": profile.left}
    psd = {}
    n = None
    for name, z in tracks.items():
        n, g = signal.welch(z, fs=1.0 / step, window="hann", nperseg=size,
                            noverlap=size // 2, detrend="linear", scaling="density")
        psd[name] = g
    segment = size * step
    low = max(band[0], 4.0 / segment)
    high = min(band[1], 0.25 / step)
    if not low < high:
        raise InputError(f"a profile of {profile.length_m:.4g} m at {step:.4g} m resolves no "
                         "part of the ISO 8608 band (0.011 to 2.83 cycles/m)",
                         Where(profile.source, 0, "distance"))
    fits = {name: fit_power_law(n, g, (low, high)) for name, g in psd.items()}
    mean = np.mean(list(psd.values()), axis=0)
    fit = fits[next(iter(fits))] if len(fits) == 1 else fit_power_law(n, mean, (low, high))
    segments = 1 + max(0, (profile.samples - size) // (size // 2))
    return ProfileSpectrum(str(profile.source), step, profile.length_m, n, psd, fits, fit,
                           (low, high), segment, segments)
