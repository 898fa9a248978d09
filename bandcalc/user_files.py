"""Reading a file the user names: a regular file only, its size checked before a byte is read.

A path may name something that never ends: ``/dev/zero`` reads for ever and a named pipe waits for
a writer that may never come.  Only a regular file is opened, without waiting (``O_NONBLOCK``, so a
pipe put in its place after the check cannot hold the reader either), and no more than the limit
is read even where the file grows meanwhile.
"""

from __future__ import annotations

import os
import stat

from bandcalc.errors import BandcalcError

__all__ = ["read_regular_file"]


def _refuse(path: str | os.PathLike, reason: str, error: type[BandcalcError]) -> BandcalcError:
    return error(f"{os.fsdecode(path)}: cannot read the file ({reason})")


def _kind(mode: int) -> str | None:
    """Why a file of this mode is not read, or None for a regular file."""
    if stat.S_ISREG(mode):
        return None
    if stat.S_ISDIR(mode):
        return "a directory, not a regular file"
    return "a device, pipe or socket, not a regular file; only regular files are read"


def read_regular_file(path: str | os.PathLike, limit: int,
                      error: type[BandcalcError] = BandcalcError) -> bytes:
    """The bytes of the regular file at ``path``, at most ``limit`` of them.

    Raises ``error`` (a :class:`~bandcalc.errors.BandcalcError`) naming the path and why: it does
    not exist or cannot be opened, it is not a regular file, or it holds more than ``limit`` bytes.
    """
    try:
        info = os.stat(path)
        reason = _kind(info.st_mode)
        if reason is None and info.st_size > limit:
            reason = f"{info.st_size:,} bytes; at most {limit:,} are read"
        if reason is not None:
            raise _refuse(path, reason, error)
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0))
    except OSError as exc:
        raise _refuse(path, exc.strerror or str(exc), error) from None
    with os.fdopen(fd, "rb") as fh:
        reason = _kind(os.fstat(fh.fileno()).st_mode)  # what was opened, should the path have changed
        if reason is not None:
            raise _refuse(path, reason, error)
        try:
            data = fh.read(limit + 1)
        except OSError as exc:
            raise _refuse(path, exc.strerror or str(exc), error) from None
    if len(data) > limit:
        raise _refuse(path, f"more than {limit:,} bytes; at most {limit:,} are read", error)
    return data
