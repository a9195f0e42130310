"""BLAS thread counts chosen for the size of a dense problem.

A threaded BLAS speeds up large dense products and factorisations, but on
the small dense problems of lumped vehicle models (tens to hundreds of DOFs)
its threads cost more in start-up and synchronisation than they save, and on
a machine whose cores are busy with other work they can make a solve many
times slower. So the library runs its dense kernels below
:data:`SMALL_DENSE` unknowns on one BLAS thread (through threadpoolctl),
whatever the machine's default; larger problems keep the default.

>>> with blas_threads_for(10):
...     pass
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from typing import Any

__all__ = ["SMALL_DENSE", "blas_threads_for", "one_blas_thread"]

#: Dense problems with at most this many unknowns run on one BLAS thread.
SMALL_DENSE = 1500

_controller: Any = None
_depth = 0


def _get_controller() -> Any:
    global _controller
    if _controller is None:
        try:
            from threadpoolctl import ThreadpoolController
            _controller = ThreadpoolController()
        except Exception:  # noqa: BLE001 (not installed or no BLAS found: keep the default)
            _controller = False
    return _controller


@contextlib.contextmanager
def blas_threads_for(size: int) -> Iterator[None]:
    """Run the block on one BLAS thread when ``size`` (unknowns of the largest
    dense matrix in it) is at most :data:`SMALL_DENSE`; nested uses cost nothing."""
    if size > SMALL_DENSE:
        yield
        return
    with one_blas_thread():
        yield


@contextlib.contextmanager
def one_blas_thread() -> Iterator[None]:
    """Run the block on one BLAS thread whatever its size (e.g. the model checks,
    whose dense kernels are small blocks and Lanczos vectors even for large
    models); nested uses cost nothing."""
    global _depth
    if _depth:
        yield
        return
    ctl = _get_controller()
    if not ctl:
        yield
        return
    _depth += 1
    try:
        with ctl.limit(limits=1, user_api="blas"):
            yield
    finally:
        _depth -= 1
