"""Writing output files safely: nothing is left half-written.

:func:`write_atomic` writes to a temporary file beside the target and
renames it into place, so a crash or a bad option never leaves a truncated
file where a good one was expected.
"""

from __future__ import annotations

import csv
import io
import os
import tempfile
from collections.abc import Iterable, Sequence
from typing import Any

from .errors import InputError, Where

__all__ = ["write_atomic", "csv_text", "output_path"]


def write_atomic(path: str | os.PathLike[str], data: bytes | str) -> None:
    """Write ``data`` to ``path`` through a temporary file and a rename."""
    path = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise InputError(f"the folder {folder} does not exist", Where(field=path))
    raw = data.encode("utf-8") if isinstance(data, str) else data
    fd, tmp = tempfile.mkstemp(prefix=".lumpgraph-", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(raw)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o666 & ~_umask())   # mkstemp makes 0600; give the usual file mode
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def csv_text(rows: Iterable[Sequence[Any]]) -> str:
    """Rows (the first a header) as CSV text; floats written with full precision."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    for row in rows:
        w.writerow(["" if v is None else repr(v) if isinstance(v, float) else v for v in row])
    return buf.getvalue()


def output_path(path: str, suffixes: Sequence[str], option: str) -> str:
    """Check an output file name's suffix (e.g. ``.png``) and folder before work starts."""
    if not any(path.lower().endswith(s) for s in suffixes):
        raise InputError(f"must end in {' or '.join(suffixes)}, got \"{path}\"",
                         Where(field=option))
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise InputError(f"the folder {folder} does not exist", Where(field=option))
    return path
