"""Small shared matplotlib helpers: Agg figures, one house style, PNG through write_atomic.

matplotlib is imported inside the functions, never at module import, so a
command that does not draw never pays for it.

>>> fig, axes = figure(2)
>>> len(axes)
2
>>> close(fig)
"""

from __future__ import annotations

import io
from typing import Any

__all__ = ["pyplot", "figure", "style", "finish", "save_png", "close", "log_floor",
           "DPI", "LOG_DECADES"]

#: Resolution of the PNG files written (dots per inch).
DPI = 110

#: Decades below its largest value that a log axis shows (a PSD or FRF that falls
#: to round-off would otherwise stretch the axis over hundreds of decades, which
#: reads as nothing and takes matplotlib seconds to tick).
LOG_DECADES = 10


def pyplot() -> Any:
    """matplotlib.pyplot on the non-interactive Agg backend."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def figure(rows: int, width: float = 8.0, height: float = 2.6, sharex: bool = True) -> Any:
    """A figure of ``rows`` stacked panels (inches: ``width`` by ``height`` per panel).

    Returns ``(fig, axes)`` with ``axes`` a list of one Axes per row.
    """
    plt = pyplot()
    rows = max(1, int(rows))
    fig, axes = plt.subplots(rows, 1, figsize=(width, height * rows + 0.7), squeeze=False,
                             sharex=sharex)
    return fig, list(axes[:, 0])


def style(ax: Any, xlabel: str | None = None, ylabel: str | None = None,
          legend: bool = True) -> None:
    """Labels, a light grid on both major and minor ticks, and a small legend if any lines."""
    if xlabel:
        ax.set_xlabel(xlabel)
    if ylabel:
        ax.set_ylabel(ylabel)
    ax.grid(True, which="both", alpha=0.3, linewidth=0.6)
    if legend and ax.get_legend_handles_labels()[0]:
        handles = len(ax.get_legend_handles_labels()[0])
        ax.legend(fontsize=7 if handles <= 8 else 6, loc="best", ncol=1 if handles <= 8 else 2)


def finish(fig: Any, title: str = "") -> None:
    """A small title over the figure and a tight layout."""
    if title:
        fig.suptitle(title, fontsize=10)
    fig.tight_layout()


def log_floor(*curves: Any, decades: float = LOG_DECADES) -> float:
    """The lower limit of a log axis that shows ``curves`` down to ``decades`` below
    their largest finite value (1e-300 when every value is zero)."""
    import numpy as np

    peaks = [float(np.nanmax(np.abs(c), initial=0.0)) for c in curves if np.size(c)]
    top = max([p for p in peaks if np.isfinite(p)], default=0.0)
    return top * 10.0 ** -decades if top > 0 else 1e-300


def save_png(fig: Any, path: str) -> None:
    """Write the figure as PNG to ``path`` (temporary file and rename), then close it."""
    from .io import write_atomic

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI)
    write_atomic(path, buf.getvalue())
    close(fig)


def close(fig: Any) -> None:
    """Release a figure's memory."""
    pyplot().close(fig)
