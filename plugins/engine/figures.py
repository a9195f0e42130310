"""Pictures of the engine block: the Campbell-style order plot."""

from __future__ import annotations

import math

import numpy as np

from . import analysis as an
from .params import EngineSpec

__all__ = ["plot_campbell"]


def plot_campbell(spec: EngineSpec, path: str) -> None:
    """Campbell-style order plot: firing order line over the speed range and the mount
    modes as horizontal lines (grounded), written to ``path`` (png, pdf, svg)."""
    import io

    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from builder.io import write_atomic

    M6 = an.rigid_mass_matrix(spec.mass, spec.inertia)
    K6, _, _ = an.mount_matrices(spec.cg, spec.mounts)
    freqs, _ = an.decoupling_table(M6, K6, an.crank_aligned_axes(spec.crank_axis))
    rpm = np.linspace(0.0, spec.max_rpm, 200)
    fig, ax = plt.subplots(figsize=(7, 4.5))
    order = an.firing_order(spec.cylinders, spec.strokes)
    for k, style in ((0.5, ":"), (1.0, "-"), (2.0, "--")):
        ax.plot(rpm, k * order * rpm / 60, style, color="C0",
                label=f"order {k * order:g}")
    for f in freqs:
        ax.axhline(f, color="C3", lw=0.8)
        ax.axhline(f * math.sqrt(2), color="C3", lw=0.5, ls=":")
    ax.axvline(spec.idle_rpm, color="k", lw=0.8, ls="--", label="idle")
    ax.set_xlabel("engine speed (rpm)")
    ax.set_ylabel("frequency (Hz)")
    ax.set_title(f"{spec.name}: firing orders and mount modes (dotted: x sqrt(2))")
    ax.set_ylim(0, max(freqs.max() * 3, order * spec.idle_rpm / 60 * 1.5))
    ax.legend(loc="upper left")
    buf = io.BytesIO()
    fig.savefig(buf, format=path.rsplit(".", 1)[-1] if "." in path else "png")
    plt.close(fig)
    write_atomic(path, buf.getvalue())
