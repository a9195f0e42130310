"""Pictures of a correlation and of an update (matplotlib, imported when drawing).

The MAC map is a flat grid, test modes down and model modes across, each
cell shaded from paper white to a deep slate by its MAC with the value
written in it; the pairs are framed. Beside it the frequency agreement:
model against test frequency for every pair, on a band of +-5 % and +-10 %
about the diagonal, each point shaded by its MAC. An update adds its
before-and-after picture: the frequency error of every pair before and
after, and the parameter changes.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..plots import finish, pyplot, save_png, style

__all__ = ["plot_correlation", "correlation_figure", "plot_update", "mac_colours"]

#: colour stops of the MAC shading, MAC 0 -> 1
_STOPS = ("#fbfaf7", "#d9dfe3", "#8fa3b3", "#44617a", "#172b3d")
_FRAME = "#d0782a"


def mac_colours() -> Any:
    """The MAC colour map (0 paper white, 1 deep slate)."""
    from matplotlib.colors import LinearSegmentedColormap
    return LinearSegmentedColormap.from_list("lumpgraph_mac", list(_STOPS))


def _mac_panel(ax: Any, result: Any, cmap: Any) -> Any:
    mac = result.mac
    nt, nm = mac.shape
    keep = _columns_shown(result)
    sub = mac[:, keep]
    im = ax.imshow(sub, cmap=cmap, vmin=0.0, vmax=1.0, aspect="auto", interpolation="nearest")
    for i in range(nt):
        for jj, j in enumerate(keep):
            v = mac[i, j]
            if v >= 0.05:
                text = f"{v:.2f}"
                ax.text(jj, i, text[1:] if text.startswith("0") else text, ha="center",
                        va="center",
                        fontsize=6.5 if len(keep) > 10 else 7.5,
                        color="white" if v > 0.55 else "#333333")
    pos = {j: jj for jj, j in enumerate(keep)}
    from matplotlib.patches import Rectangle
    for p in result.pairs:
        i = result.measured.numbers.index(p.test)
        j = result.model_numbers.index(p.model)
        if j in pos:
            ax.add_patch(Rectangle((pos[j] - 0.5, i - 0.5), 1, 1, fill=False, lw=1.8,
                                   edgecolor=_FRAME))
    ax.set_yticks(range(nt), [f"{k}  {f:.1f} Hz" for k, f in
                              zip(result.measured.numbers, result.measured.frequencies_hz,
                                  strict=True)], fontsize=7)
    ax.set_xticks(range(len(keep)), [f"{result.model_numbers[j]}\n{result.model_hz[j]:.1f}"
                                     for j in keep], fontsize=6.5)
    ax.set_xlabel("model mode (number, Hz)")
    ax.set_ylabel("test mode")
    ax.set_xticks(np.arange(-0.5, len(keep), 1), minor=True)
    ax.set_yticks(np.arange(-0.5, nt, 1), minor=True)
    ax.grid(which="minor", color="white", linewidth=1.0)
    ax.tick_params(which="minor", length=0)
    for s in ax.spines.values():
        s.set_visible(False)
    ax.set_title("MAC (framed: pairs)", fontsize=9, loc="left")
    return im


def _columns_shown(result: Any) -> list[int]:
    """Model modes up to a little past the test band, and every paired one."""
    top = float(np.max(result.measured.frequencies_hz)) * 1.3
    paired = {result.model_numbers.index(p.model) for p in result.pairs}
    keep = [j for j, f in enumerate(result.model_hz) if f <= top or j in paired]
    return keep or list(range(len(result.model_hz)))


def _frequency_panel(ax: Any, pairs: Any, cmap: Any) -> None:
    """Frequency error of each pair against the test frequency, on +-5 % and +-10 % bands."""
    if not pairs:
        ax.text(0.5, 0.5, "no pairs", ha="center", va="center", transform=ax.transAxes)
        return
    ft = np.array([p.test_hz for p in pairs])
    err = np.array([100.0 * p.error for p in pairs])
    lo, hi = 0.7 * ft.min(), 1.4 * ft.max()
    ax.axhspan(-10, 10, color="#eeeae2", lw=0, label="+-10 %")
    ax.axhspan(-5, 5, color="#ddd6c8", lw=0, label="+-5 %")
    ax.axhline(0.0, color="#8a8172", lw=0.8)
    ax.vlines(ft, 0.0, err, color="#8a8172", lw=0.8)
    ax.scatter(ft, err, c=[p.mac for p in pairs], cmap=cmap, vmin=0, vmax=1, s=42,
               edgecolors=_FRAME, linewidths=0.8, zorder=3)
    for p, e in zip(pairs, err, strict=True):
        ax.annotate(f"{p.test}-{p.model}", (p.test_hz, e), xytext=(4, 3),
                    textcoords="offset points", fontsize=7)
    ax.set_xscale("log")
    ax.set_xlim(lo, hi)
    span = max(12.0, 1.15 * float(np.max(np.abs(err))))
    ax.set_ylim(-span, span)
    style(ax, "test frequency (Hz)", "model - test (%)", legend=True)
    ax.set_title("frequency error of the pairs (test-model)", fontsize=9, loc="left")


def correlation_figure(result: Any, title: str | None = None) -> Any:
    """The matplotlib figure of :func:`plot_correlation` (the caller saves or closes it)."""
    plt = pyplot()
    cmap = mac_colours()
    nm = len(_columns_shown(result))
    fig, axes = plt.subplots(1, 2, figsize=(max(9.0, 5.0 + 0.42 * nm), 4.8),
                             gridspec_kw={"width_ratios": [max(1.2, nm / 7), 1]},
                             layout="constrained")
    im = _mac_panel(axes[0], result, cmap)
    _frequency_panel(axes[1], result.pairs, cmap)
    fig.colorbar(im, ax=axes[0], shrink=0.85, pad=0.02, label="MAC")
    fig.suptitle(title or f"{result.model_name}: correlation with {len(result.measured)} "
                 "test modes", fontsize=10)
    return fig


def plot_correlation(result: Any, path: str, title: str | None = None) -> str:
    """MAC map and frequency agreement of a :class:`Correlation`, PNG at ``path``."""
    save_png(correlation_figure(result, title), path)
    return path


def plot_update(result: Any, path: str, title: str | None = None) -> str:
    """Before and after: frequency error of each pair, and the parameter changes."""
    plt = pyplot()
    fig, axes = plt.subplots(1, 2, figsize=(10.0, 4.2), gridspec_kw={"width_ratios": [1.4, 1]})
    ax = axes[0]
    before = {p.test: p for p in result.before.pairs}
    after = {p.test: p for p in result.after.pairs}
    tests = sorted(set(before) | set(after))
    y = np.arange(len(tests))
    eb = [100 * before[k].error if k in before else np.nan for k in tests]
    ea = [100 * after[k].error if k in after else np.nan for k in tests]
    ax.barh(y + 0.2, eb, height=0.38, color="#c9c1b2", label="before")
    ax.barh(y - 0.2, ea, height=0.38, color="#2f4b63", label="after")
    ax.axvline(0, color="#555555", lw=0.8)
    ax.set_yticks(y, [f"test {k}" for k in tests], fontsize=7)
    ax.invert_yaxis()
    style(ax, "frequency error, model - test (%)", None)
    ax.set_title("paired modes", fontsize=9, loc="left")
    ax = axes[1]
    names = list(result.names)
    change = [100 * (result.final[n] / result.start[n] - 1) if result.start[n] else 0.0
              for n in names]
    yy = np.arange(len(names))
    ax.barh(yy, change, color=_FRAME, height=0.5)
    ax.axvline(0, color="#555555", lw=0.8)
    ax.set_yticks(yy, names, fontsize=7)
    ax.invert_yaxis()
    style(ax, "change from the file's value (%)", None, legend=False)
    ax.set_title("parameters", fontsize=9, loc="left")
    finish(fig, title or f"{result.before.model_name}: update against "
           f"{len(result.before.measured)} test modes")
    save_png(fig, path)
    return path
