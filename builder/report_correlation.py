"""The correlation section of the HTML report (``report --measured TEST``).

The pair table, unpaired modes, the test's auto-MAC and COMAC in words,
and the MAC map with the frequency errors as an embedded picture.
"""

from __future__ import annotations

import base64
import html
import io
from typing import Any

__all__ = ["correlation_section"]


def correlation_section(model: Any, measured: Any, modes: Any = None,
                        threshold: float | None = None) -> str:
    """HTML of the correlation of ``model`` with ``measured`` (a MeasuredModes or a file)."""
    from .analysis.correlation import PAIR_THRESHOLD, correlate
    from .analysis.correlation_plot import correlation_figure
    from .plots import close

    result = correlate(model, measured, modes=modes,
                       threshold=PAIR_THRESHOLD if threshold is None else threshold)
    fig = correlation_figure(result)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100)
    close(fig)
    picture = base64.b64encode(buf.getvalue()).decode("ascii")
    m = result.measured
    head = ["test", "f test (Hz)", "model", "f model (Hz)", "error", "MAC", "model mode"]
    rows = "".join(
        "<tr>" + "".join(f"<td>{html.escape(str(v))}</td>" for v in (
            p.test, f"{p.test_hz:.3f}", p.model, f"{p.model_hz:.3f}",
            f"{100 * p.error:+.1f} %", f"{p.mac:.3f}")) +
        f'<td class="l">{html.escape(p.label)}</td></tr>' for p in result.pairs)
    table = ("<table><thead><tr>" + "".join(f"<th>{h}</th>" for h in head) +
             f"</tr></thead><tbody>{rows}</tbody></table>")
    words = [line for line in result.table(matrix=False).splitlines()
             if line.startswith(("unpaired", "model modes in", "test auto-MAC", "COMAC",
                                 "mean |error|", "note:"))]
    title = m.title or "(no title line)"
    return (f"<p>Test {html.escape(m.source or '-')}: {html.escape(title)}; "
            f"{len(m)} modes at {len(m.channels)} channels. Pairs one-to-one by MAC, "
            f"MAC at least {result.threshold:.2f}.</p>\n{table}\n"
            + "".join(f"<p>{html.escape(w)}</p>" for w in words)
            + f'\n<img alt="MAC map" src="data:image/png;base64,{picture}">')
