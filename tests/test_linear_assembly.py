"""The assembler's two paths: stacked deflection maps for link types with ``batch``,
element matrices one by one for the others (plugin link types)."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from conftest import ASSEMBLIES

from builder.elements import LINK_TYPES
from builder.linear import assemble
from builder.load import load_assembly


class _OneByOne:
    """A link type that only has ``matrices``: a spring or bushing without ``batch``."""

    def __init__(self, inner):
        self.inner = inner
        self.name = f"plain_{inner.name}"
        self.keys, self.required = inner.keys, inner.required

    def parse(self, *args):
        return self.inner.parse(*args)

    def matrices(self, link):
        return self.inner.matrices(link)


@pytest.mark.parametrize("name", ["compact_car_flexible.yaml", "compact_car_seat.yaml",
                                  "engine_on_mounts.yaml"])
def test_element_path_equals_the_stacked_path(monkeypatch, name):
    # Independent check of the stacked path: the same model with every spring
    # and bushing assembled element by element, T^T (D^T diag(k) D) T summed
    # link by link, must give the same matrices, input maps and link maps.
    asm = load_assembly(ASSEMBLIES / name)
    for kind in ("spring", "bushing"):
        monkeypatch.setitem(LINK_TYPES, f"plain_{kind}", _OneByOne(LINK_TYPES[kind]))
    plain = asm.replace(links={n: replace(lk, type=f"plain_{lk.type}")
                               if lk.type in ("spring", "bushing") else lk
                               for n, lk in asm.links.items()})
    a, b = assemble(asm), assemble(plain)
    for key in ("M", "K", "C", "H", "Br", "Bv", "Bh", "Sd", "Sv", "Sh", "Dr", "Dv", "Dh"):
        x, y = getattr(a, key).toarray(), getattr(b, key).toarray()
        scale = max(np.abs(y).max(initial=0.0), 1e-300)
        assert np.abs(x - y).max(initial=0.0) <= 1e-13 * scale, key
    for key in ("M", "K", "C", "H"):
        A = getattr(a, key)
        assert abs(A - A.T).max() == 0.0, key          # exactly symmetric
    for link in asm.links:
        la, lb = a.links[link], b.links[link]
        np.testing.assert_allclose(la.q_rows().toarray(), lb.q_rows().toarray(), atol=1e-14)
        np.testing.assert_allclose(la.r_rows().toarray(), lb.r_rows().toarray(), atol=1e-14)
        assert la.components == lb.components and la.loss_factor == lb.loss_factor
