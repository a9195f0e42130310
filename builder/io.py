"""Writing output files safely: nothing is left half-written.

:func:`write_atomic` writes to a temporary file beside the target and
renames it into place, so a crash, a full disk or a bad option never leaves
a truncated file where a good one was expected; a failed write is an
:class:`OutputError` (one line, exit 2), never a traceback.
:func:`output_path` and :func:`output_folder` check an output option before
any work starts: suffix, the name's length, a folder where a file is wanted,
and that the folder exists and takes a new file (probed by creating and
removing one, which also catches read-only file systems, ``/proc`` and
folders without write permission).
"""

from __future__ import annotations

import contextlib
import csv
import errno
import io
import os
import tempfile
from collections.abc import Iterable, Iterator, Sequence
from typing import Any

from .errors import MAX_SHOWN, InputError, Where, printable, shown

__all__ = ["write_atomic", "csv_text", "output_path", "output_folder", "OutputError",
           "write_failure", "writing", "shown_path", "STAGING_PREFIX"]

#: Name prefix of the temporary files and folders written beside an output.
STAGING_PREFIX = ".lumpgraph-"


class OutputError(InputError):
    """An output that cannot be written (a bad path, a full disk, no permission)."""


def _reason(exc: OSError) -> str:
    """An ``OSError`` in words a user acts on."""
    reason = exc.strerror or type(exc).__name__
    if exc.errno == errno.ENAMETOOLONG:
        reason = "the name is too long for the file system"
    elif exc.errno in (errno.ENOSPC, errno.EDQUOT):
        reason = "no space left on the device"
    elif exc.errno == errno.EFBIG:
        reason = "the file is larger than this system allows (file size limit)"
    elif exc.errno == errno.EROFS:
        reason = "the file system is read-only"
    elif exc.errno in (errno.EACCES, errno.EPERM):
        reason = "permission denied"
    elif exc.errno == errno.EISDIR:
        reason = "it is a folder"
    elif exc.errno == errno.ENOENT:
        reason = "the folder does not exist or takes no files"
    return reason


def shown_path(path: str | os.PathLike[str]) -> str:
    """A path echoed in a message: escaped, and cut at the front when long, so that the
    file's own name stays visible (``".../out/sweep.png"``)."""
    text = printable(os.fspath(path))
    return f'"{text}"' if len(text) <= MAX_SHOWN else f'"...{text[-(MAX_SHOWN - 3):]}"'


@contextlib.contextmanager
def writing(option: str) -> Iterator[None]:
    """Write failures inside the block that name no option are given ``option``."""
    try:
        yield
    except OutputError as exc:
        if exc.where.field or exc.where.file:
            raise
        raise OutputError(exc.reason, Where(field=option)) from None


def write_failure(exc: OSError, path: str | os.PathLike[str], option: str = "",
                  left: str = "nothing was written") -> OutputError:
    """The one-line error for an ``OSError`` met writing ``path`` (option named if known);
    ``left`` says what the failure left behind."""
    reason = _reason(exc)
    return OutputError(f"cannot write {shown_path(path)}: {reason}; {left}",
                       Where(field=option))


def write_atomic(path: str | os.PathLike[str], data: bytes | str, option: str = "") -> None:
    """Write ``data`` to ``path`` through a temporary file and a rename.

    Either the whole of ``data`` is at ``path`` afterwards, or ``path`` is as
    it was and an :class:`OutputError` (naming ``option`` when given) says why.
    """
    path = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise OutputError(f"the folder {shown(folder)} does not exist", Where(field=option or path))
    if os.path.isdir(path):
        raise OutputError(f"{shown(path)} is a folder: give a file name",
                          Where(field=option or path))
    raw = data.encode("utf-8") if isinstance(data, str) else data
    tmp = None
    try:
        fd, tmp = tempfile.mkstemp(prefix=STAGING_PREFIX, suffix=".tmp", dir=folder)
        with os.fdopen(fd, "wb") as fh:
            fh.write(raw)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o666 & ~_umask())   # mkstemp makes 0600; give the usual file mode
        os.replace(tmp, path)
        tmp = None
    except OSError as exc:
        raise write_failure(exc, path, option) from None
    finally:
        if tmp is not None:
            with contextlib.suppress(OSError):
                os.unlink(tmp)


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


def _check_name(path: str, option: str) -> str:
    """The absolute path, refused when empty or longer than the file system takes."""
    where = Where(field=option)
    if not path.strip():
        raise OutputError("needs a file name, got an empty one", where)
    if "\0" in path:
        raise OutputError("a file name cannot hold a NUL character", where)
    full = os.path.abspath(path)
    folder, name = os.path.split(full)
    try:
        name_max = os.pathconf(folder if os.path.isdir(folder) else "/", "PC_NAME_MAX")
        path_max = os.pathconf(folder if os.path.isdir(folder) else "/", "PC_PATH_MAX")
    except (OSError, ValueError):
        name_max, path_max = 255, 4096
    longest = max((len(os.fsencode(p)) for p in full.split(os.sep)), default=0)
    if longest > name_max:
        raise OutputError(f"a name in the path has {longest} bytes; the file system takes at "
                          f"most {name_max}", where)
    if len(os.fsencode(full)) >= path_max:
        raise OutputError(f"the path has {len(os.fsencode(full))} bytes; the system takes at "
                          f"most {path_max - 1}", where)
    return full


def _probe(folder: str, option: str) -> None:
    """Create and remove a file in ``folder``: an OutputError when that fails."""
    try:
        fd, tmp = tempfile.mkstemp(prefix=STAGING_PREFIX, suffix=".probe", dir=folder)
    except OSError as exc:
        raise OutputError(f"cannot write in the folder {shown(folder)}: "
                          f"{_reason(exc)}",
                          Where(field=option)) from None
    os.close(fd)
    with contextlib.suppress(OSError):
        os.unlink(tmp)


def output_path(path: str, suffixes: Sequence[str], option: str) -> str:
    """Check an output file name before work starts; returns it unchanged.

    Refused with an :class:`OutputError` naming ``option``: a suffix not in
    ``suffixes`` (e.g. ``.png``), a name too long for the file system, a path
    that is a folder, a folder that does not exist or takes no new file.
    """
    where = Where(field=option)
    if not any(path.lower().endswith(s) for s in suffixes):
        raise OutputError(f"must end in {' or '.join(suffixes)}, got {shown(path)}", where)
    full = _check_name(path, option)
    if os.path.isdir(full):
        raise OutputError(f"{shown(path)} is a folder: give a file name", where)
    folder = os.path.dirname(full)
    if not os.path.isdir(folder):
        raise OutputError(f"the folder {shown(folder)} does not exist", where)
    _probe(folder, option)
    return path


def output_folder(path: str, option: str) -> str:
    """Check an output folder (created later if missing, in an existing parent)."""
    where = Where(field=option)
    full = _check_name(path, option)
    if os.path.exists(full):
        if not os.path.isdir(full):
            raise OutputError(f"{shown(path)} is a file, not a folder", where)
        _probe(full, option)
        return path
    parent = os.path.dirname(full)
    if not os.path.isdir(parent):
        raise OutputError(f"the folder {shown(parent)} does not exist", where)
    _probe(parent, option)
    return path
